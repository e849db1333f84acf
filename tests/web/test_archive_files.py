"""`verify_archive` on archives that were damaged, shrunk or built to hurt: a message and a non-zero exit for
each, never a traceback or "All 0 records verify". Exit 1: records that don't verify; exit 2: a file that
isn't a readable Earshot archive (not a zip, a malformed manifest, a zip bomb)."""

import io
import json
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest
from django.core.management import call_command

from projectapp.reviews.services import revision_submit
from projectapp.signoff import archive_files
from projectapp.signoff.archive_files import FORMAT, export_archive, verify_archive
from tests.web.test_signoff import settle, sign_all

ROOT = Path(__file__).parents[2]
PDF = b"%PDF-1.4 a stand-in for a signed record\n"


def write_zip(path: Path, files: dict[str, bytes | str], compression=zipfile.ZIP_DEFLATED) -> Path:
    with zipfile.ZipFile(path, "w", compression=compression) as archive:
        for name, data in files.items():
            archive.writestr(name, data)
    return path


def run_command(*args: str) -> tuple[int, str, str]:
    """`manage.py verify_archive` in this process (the test database): exit status, stdout, stderr."""
    out, err = io.StringIO(), io.StringIO()
    try:
        call_command("verify_archive", *args, stdout=out, stderr=err)
        status = 0
    except SystemExit as stop:
        status = stop.code
    return status, out.getvalue(), err.getvalue()


@pytest.fixture
def signed(product, author, reviewer, approver):

    revision = revision_submit(revision=product.draft, user=author)
    settle(revision, reviewer, approver)
    return sign_all(revision, author, reviewer, approver)


@pytest.mark.parametrize(("manifest", "expected"), [
    ("[]", "manifest.json: expected an object"),
    (json.dumps([{"file": "records/a.pdf"}]), "manifest.json: expected an object, got a list"),
    (json.dumps({"format": FORMAT, "records": [None]}), "manifest.json: records[0]: expected an object, got null"),
    (json.dumps({"format": FORMAT, "records": [{"file": None, "sha256": 5}]}),
     "manifest.json: records[0].file: expected a file name"),
    (json.dumps({"format": FORMAT, "records": {"file": "records/a.pdf"}}),
     "manifest.json: records: expected a list"),
    ('{"format": "' + FORMAT + '", "records": ' + "[" * 100_000 + "]" * 100_000 + "}", "nested too deeply"),
    (b"\xff\xfe not text", "manifest.json: not JSON"),
])
def test_a_malformed_manifest_is_a_message_and_exit_2(tmp_path, db, manifest, expected):
    path = write_zip(tmp_path / "a.zip", {"manifest.json": manifest, "records/a.pdf": PDF})
    status, out, err = run_command(str(path), "--offline")
    assert status == 2, (status, err)
    assert expected in err and "Traceback" not in err and "verify" not in out


def test_a_zip_bomb_entry_is_refused_by_its_declared_size_before_it_is_inflated(tmp_path, db):
    path = tmp_path / "bomb.zip"
    manifest = {"format": FORMAT, "records": [{"file": "records/a.pdf", "sha256": "0" * 64}]}
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("manifest.json", json.dumps(manifest))
        with archive.open("records/a.pdf", "w", force_zip64=True) as entry:
            chunk = b"\0" * 1_000_000
            for _ in range(archive_files.MAX_RECORD_BYTES // len(chunk) + 1):
                entry.write(chunk)
    assert path.stat().st_size < 200_000  # 31 MB of zeros, compressed about 1000:1
    status, _, err = run_command(str(path), "--offline")
    assert status == 2 and "records/a.pdf: expected at most 30 MB uncompressed" in err


def test_a_highly_compressed_entry_is_refused_as_a_zip_bomb(tmp_path, db):
    manifest = {"format": FORMAT, "records": [{"file": "records/a.pdf", "sha256": "0" * 64}]}
    path = write_zip(tmp_path / "bomb.zip", {"manifest.json": json.dumps(manifest), "records/a.pdf": b"\0" * 5_000_000})
    status, _, err = run_command(str(path), "--offline")
    assert status == 2 and "records/a.pdf: compressed" in err and "like a zip bomb" in err


def test_a_zip_of_too_many_entries_is_refused_before_they_are_read(tmp_path, db, monkeypatch):
    monkeypatch.setattr(archive_files, "MAX_ENTRIES", 50)
    files = {"manifest.json": json.dumps({"format": FORMAT, "records": []})}
    files.update({f"junk/{index}": b"" for index in range(60)})
    path = write_zip(tmp_path / "many.zip", files, compression=zipfile.ZIP_STORED)
    status, _, err = run_command(str(path), "--offline")
    assert status == 2 and "61 entries; expected at most 50" in err


def test_a_flood_of_unlisted_entries_is_summed_up(tmp_path, db):
    files = {"manifest.json": json.dumps({"format": FORMAT, "records": []})}
    files.update({f"junk/{index}": b"" for index in range(archive_files.MAX_PROBLEMS_SHOWN + 50)})
    status, _, err = run_command(str(write_zip(tmp_path / "many.zip", files)), "--offline")
    assert status == 1 and "… and 51 more problem(s)" in err
    assert len(err.splitlines()) == archive_files.MAX_PROBLEMS_SHOWN + 2
    assert err.splitlines()[-1] == f"{archive_files.MAX_PROBLEMS_SHOWN + 51} problem(s) in 0 record(s) checked."


def test_an_archive_with_every_record_removed_does_not_verify(tmp_path, signed):
    exported = tmp_path / "archive.zip"
    export_archive(exported)
    with zipfile.ZipFile(exported) as archive:
        manifest = json.loads(archive.read("manifest.json"))
    manifest["records"] = []
    emptied = write_zip(tmp_path / "emptied.zip", {"manifest.json": json.dumps(manifest)})
    for args in ((str(emptied),), (str(emptied), "--offline")):
        status, out, err = run_command(*args)
        assert status == 1, (args, out, err)
        assert "All 0" not in out and "no signed record" in err
    status, _, err = run_command(str(emptied))
    assert f"{signed.revision.product.name} design revision {signed.revision.number}" in err
    assert "archived before this export but missing from it" in err


def test_a_record_removed_from_a_full_export_is_named(tmp_path, signed, author, reviewer, approver, product):
    from projectapp.designs import services as design_services

    draft = design_services.draft_get_or_start(product=product, user=author)
    second = revision_submit(revision=draft, user=author)
    for item in second.review_items.filter(kind="raised"):
        if item.is_carried_unconfirmed or item.severity in ("blocker", "warning"):
            from projectapp.reviews.services import review_item_decide

            review_item_decide(item=item, user=approver, disposition="waived" if item.severity == "blocker" else
                               "change", justification="Accepted for a 20-unit pilot", expected_version=item.version)
    sign_all(second, author, reviewer, approver)
    exported = tmp_path / "archive.zip"
    assert export_archive(exported) == 2
    with zipfile.ZipFile(exported) as archive:
        contents = {name: archive.read(name) for name in archive.namelist()}
    manifest = json.loads(contents["manifest.json"])
    removed = manifest["records"].pop(0)
    del contents[removed["file"]]
    contents["manifest.json"] = json.dumps(manifest).encode()
    shrunk = write_zip(tmp_path / "shrunk.zip", contents)
    assert verify_archive(exported).problems == []
    check = verify_archive(shrunk)
    assert check.checked == 1 and len(check.problems) == 1
    assert f"design revision {removed['revision']}" in check.problems[0] and "missing from it" in check.problems[0]


def test_a_file_that_is_not_a_zip_is_exit_2(tmp_path, db):
    path = tmp_path / "not.zip"
    path.write_bytes(b"PK\x03\x04 but nothing more")
    status, _, err = run_command(str(path))
    assert status == 2 and "not a readable zip" in err


def test_names_from_the_zip_are_printed_escaped(tmp_path, db):
    name = "records/\x1b[2Kfake\r.pdf"
    path = write_zip(tmp_path / "a.zip", {"manifest.json": json.dumps({"format": FORMAT, "records": []}),
                                          name: PDF})
    status, _, err = run_command(str(path), "--offline")
    assert status == 1 and "\x1b" not in err and "\r" not in err
    assert "records/\\x1b[2Kfake\\r.pdf: in the zip but not in the manifest" in err


def test_the_command_exits_2_on_a_manifest_that_is_a_list_without_a_traceback(tmp_path):
    path = write_zip(tmp_path / "a.zip", {"manifest.json": "[null]"})
    result = subprocess.run([sys.executable, "manage.py", "verify_archive", str(path), "--offline"], cwd=ROOT,
                            capture_output=True, text=True, timeout=120)
    assert result.returncode == 2 and "manifest.json: expected an object" in result.stderr
    assert "Traceback" not in result.stderr
