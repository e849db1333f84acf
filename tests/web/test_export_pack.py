"""The export pack: every file of a signed revision with a manifest of SHA-256 hashes, checked by the verifier."""

import csv
import hashlib
import io
import json
import zipfile

import pytest
from django.core.management import call_command
from django.urls import reverse

from projectapp.reviews.models import Disposition, ProcessStep
from projectapp.reviews.services import evidence_attach, review_item_decide, revision_submit
from projectapp.signoff import services as signoff
from projectapp.signoff.archive_files import verify_archive
from projectapp.signoff.models import SignedRecord
from tests.web.conftest import PASSWORD, signing_request

REPORT = b"test house report TH-7 body"


@pytest.fixture
def record(product, author, reviewer, approver):
    revision = revision_submit(revision=product.draft, user=author)
    step = ProcessStep.objects.filter(revision=revision).first()
    evidence_attach(user=reviewer, name="th-7.pdf", content=REPORT, step=step)
    for item in revision.review_items.filter(kind="raised", process_step__isnull=True).order_by("id"):
        if item.severity != "note":
            review_item_decide(item=item, user=approver, disposition=Disposition.WAIVED,
                               justification="=cmd|' /C calc'!A0", expected_version=item.version)
    for person, role in ((author, "author"), (reviewer, "reviewer"), (approver, "approver")):
        signoff.revision_sign(revision=revision, user=person, role=role, password=PASSWORD,
                              request=signing_request())
    return SignedRecord.objects.get(revision=revision)


def pack_of(client, user, record) -> zipfile.ZipFile:
    client.force_login(user)
    response = client.get(reverse("record_pack", args=[record.pk]))
    assert response.status_code == 200 and response["Content-Disposition"].startswith("attachment")
    return zipfile.ZipFile(io.BytesIO(response.content))


def test_the_pack_holds_every_file_and_the_manifest_hashes_them(client, record, author):
    pack = pack_of(client, author, record)
    manifest = json.loads(pack.read("manifest.json"))
    names = set(pack.namelist()) - {"manifest.json"}
    assert {entry["file"] for entry in manifest["files"]} == names
    for entry in manifest["files"]:
        content = pack.read(entry["file"])
        assert hashlib.sha256(content).hexdigest() == entry["sha256"] and len(content) == entry["size_bytes"]
    roles = {entry["role"] for entry in manifest["files"]}
    assert roles == {"signed-record", "design-file", "evidence", "checklist"}  # the hive gateway has no measurements
    [pdf] = [e["file"] for e in manifest["files"] if e["role"] == "signed-record"]
    assert hashlib.sha256(pack.read(pdf)).hexdigest() == record.sha256
    assert any(pack.read(name) == REPORT for name in names if name.startswith("evidence/"))
    rows = list(csv.DictReader(io.StringIO(pack.read("checklist/checklist.csv").decode())))
    assert len(rows) == len(json.loads(pack.read("checklist/checklist.json"))["decisions"]) > 0
    assert all(not row["justification"].startswith("=") for row in rows)  # no formula for a spreadsheet to run


def test_the_verifier_passes_the_pack_and_catches_a_tampered_file(tmp_path, client, record, author):
    pack = pack_of(client, author, record)
    path = tmp_path / "pack.zip"
    path.write_bytes(b"")
    with zipfile.ZipFile(path, "w") as copy:
        for name in pack.namelist():
            copy.writestr(name, pack.read(name))
    result = verify_archive(path)
    assert not result.problems and result.checked == len(pack.namelist()) - 1
    tampered = tmp_path / "tampered.zip"
    with zipfile.ZipFile(tampered, "w") as copy:
        for name in pack.namelist():
            content = pack.read(name)
            copy.writestr(name, content + b" " if name == "design/design.json" else content)
    result = verify_archive(tampered)
    assert any(problem.startswith("design/design.json: SHA-256") for problem in result.problems)


def test_the_command_writes_the_same_files(tmp_path, record, capsys):
    out = tmp_path / "out.zip"
    call_command("export_pack", str(record.revision.product_id), str(record.revision.number), str(out))
    assert "Wrote" in capsys.readouterr().out
    assert not verify_archive(out).problems


def test_another_team_gets_404_for_the_pack(client, record, outsider):
    client.force_login(outsider)
    assert client.get(reverse("record_pack", args=[record.pk])).status_code == 404
