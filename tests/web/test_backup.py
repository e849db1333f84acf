"""scripts/backup.sh and scripts/restore.sh: back up a database with the demo data, a measurement file and a
signed PDF record, restore it into a fresh database and file folder, and compare everything that matters:
products, revisions with their frozen evaluations, review items, people (who can still log in), the
uploaded files byte for byte, and the signed records against their stored SHA-256.

The scripts run as an operator would run them, in their own processes with the app's environment variables.
SQLite always; PostgreSQL when the suite itself runs on PostgreSQL (DATABASE_URL=postgres://..., as in CI's
second pass), in two new databases on that server.
"""

import json
import os
import secrets
import subprocess
import sys
import tarfile
from pathlib import Path
from urllib.parse import urlsplit, urlunsplit

import pytest

ROOT = Path(__file__).parents[2]
PASSWORD = "restore-" + secrets.token_urlsafe(8)

# Runs inside the app's settings (a fresh interpreter). `build` loads the demo data, signs a ready revision
# (so a PDF is archived) and prints nothing; `fingerprint` prints what must survive a backup and restore.
SNIPPET = r'''
import hashlib, json, os, sys
import django
django.setup()
from io import StringIO
from django.conf import settings
from django.contrib.auth import get_user_model
from django.core.management import call_command
from projectapp.designs.models import MeasurementFile, Product, Revision
from projectapp.reviews.models import ReviewItem

def digest(data):
    return hashlib.sha256(data if isinstance(data, bytes) else json.dumps(data, sort_keys=True).encode()).hexdigest()

def sign_a_ready_revision(password):
    from django.test import RequestFactory
    from projectapp.signoff import services
    for revision in Revision.objects.exclude(state=Revision.State.DRAFT).order_by("pk"):
        if not services.readiness(revision).ready:
            continue
        team = revision.product.team
        for role in team.signoff_roles:
            signer = (get_user_model().objects.filter(memberships__team=team, memberships__role=role)
                      .exclude(pk__in=revision.signatures.values("signer")).first())
            services.revision_sign(revision=revision, user=signer, role=role, password=password,
                                   request=RequestFactory().post("/"))
        return
    raise SystemExit("no demo revision is ready to sign")

def signed_archive(password):
    """Each signed record: its stored PDF still matches the SHA-256 it was archived with, and the archive finds
    it by content. (Hook: when the sign-off app has its own whole-archive verification, call it here too.)"""
    try:
        from projectapp.signoff.models import SignedRecord
        from projectapp.signoff.services import find_record_by_content
    except ImportError:
        return None
    rows = []
    for record in SignedRecord.objects.order_by("pk").select_related("revision__product"):
        with record.pdf.open("rb") as handle:
            content = handle.read()
        found = find_record_by_content(content, records=SignedRecord.objects.all())
        rows.append([record.revision.product.name, record.revision.number, record.sha256, record.fingerprint,
                     digest(content) == record.sha256, found is not None and found.pk == record.pk])
    return rows

def archive_verification():
    """The whole archive exported as a zip and verified against this database (verify_archive)."""
    import tempfile
    from pathlib import Path

    from projectapp.signoff.archive_files import export_archive, verify_archive
    with tempfile.TemporaryDirectory() as folder:
        zip_path = Path(folder) / "archive.zip"
        exported = export_archive(zip_path)
        check = verify_archive(zip_path)
    return [exported, check.checked, check.problems]

mode, password = sys.argv[1], sys.argv[2]
if mode == "build":
    call_command("migrate", "--no-input", verbosity=0)
    call_command("seed_demo", "--password", password, stdout=StringIO())
    sign_a_ready_revision(password)
    raise SystemExit(0)
if mode == "migrate":
    call_command("migrate", "--no-input", verbosity=0)
    raise SystemExit(0)

media = settings.MEDIA_ROOT
files = {}
for folder, _, names in os.walk(media):
    for name in names:
        path = os.path.join(folder, name)
        files[os.path.relpath(path, media)] = digest(open(path, "rb").read())
User = get_user_model()
print(json.dumps({
    "products": sorted([p.team.name, p.name, p.description] for p in Product.objects.select_related("team")),
    "revisions": sorted([r.product.name, r.number, r.state, r.ruleset, digest(r.document), digest(r.evaluation),
                         r.evaluation is not None] for r in Revision.objects.select_related("product")),
    "review_items": sorted([i.revision.product.name, i.revision.number, i.rule_id, i.kind, i.severity,
                            i.disposition, i.justification, i.title]
                           for i in ReviewItem.objects.select_related("revision__product")),
    "measurements": sorted([m.name, m.sha256, m.size_bytes, digest(m.file.open("rb").read()) == m.sha256]
                           for m in MeasurementFile.objects.all()),
    "people": sorted([u.username, u.check_password(password)] for u in User.objects.all()),
    "files": files,
    "signed_archive": signed_archive(password),
    "archive_verification": archive_verification(),
}, sort_keys=True))
'''


def app_env(var_dir: Path, database_url: str | None) -> dict[str, str]:
    env = {key: value for key, value in os.environ.items()
           if not key.startswith(("EARSHOT_", "SECRET_KEY", "DATABASE_", "ALLOWED_HOSTS", "DJANGO_"))}
    env.update({"EARSHOT_VAR_DIR": str(var_dir), "DJANGO_SETTINGS_MODULE": "projectapp.settings"})
    if database_url:
        env["DATABASE_URL"] = database_url
    return env


def run(command: list[str], env: dict, expect_ok: bool = True) -> subprocess.CompletedProcess:
    done = subprocess.run(command, cwd=ROOT, env=env, capture_output=True, text=True, timeout=300)
    if expect_ok:
        assert done.returncode == 0, f"{command} failed:\n{done.stdout}\n{done.stderr}"
    return done


def snippet(env: dict, mode: str) -> str:
    return run([sys.executable, "-c", SNIPPET, mode, PASSWORD], env).stdout


@pytest.fixture(params=["sqlite", "postgresql"])
def two_databases(request, tmp_path):
    """(source URL or None for SQLite under the var folder, target URL or None)."""
    if request.param == "sqlite":
        yield None, None
        return
    url = os.environ.get("DATABASE_URL", "")
    if not url.startswith(("postgres://", "postgresql://")):
        pytest.skip("the PostgreSQL backup runs when the suite runs on PostgreSQL (DATABASE_URL=postgres://...; "
                    "scripts/postgres.sh start makes one)")
    import psycopg

    parts = urlsplit(url)
    names = [f"earshot_backup_{kind}_{secrets.token_hex(4)}" for kind in ("source", "target")]
    admin_url = urlunsplit(parts._replace(path="/postgres", query=""))
    with psycopg.connect(admin_url, autocommit=True) as admin:
        for name in names:
            admin.execute(f'CREATE DATABASE "{name}"')
    try:
        yield tuple(urlunsplit(parts._replace(path=f"/{name}")) for name in names)
    finally:
        with psycopg.connect(admin_url, autocommit=True) as admin:
            for name in names:
                admin.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


def test_backup_then_restore_into_a_fresh_database_brings_everything_back(tmp_path, two_databases):
    source_url, target_url = two_databases
    source = app_env(tmp_path / "source-var", source_url)
    target = app_env(tmp_path / "target-var", target_url)
    snippet(source, "build")
    before = json.loads(snippet(source, "fingerprint"))
    assert before["revisions"] and before["review_items"] and before["measurements"]
    assert any(row[6] for row in before["revisions"]), "a submitted revision carries its frozen evaluation"
    assert len(before["files"]) >= 2, "a measurement file and a signed PDF"
    if before["signed_archive"] is not None:
        assert before["signed_archive"] and all(row[4] and row[5] for row in before["signed_archive"])
    exported, checked, problems = before["archive_verification"]
    assert exported >= 1 and checked == exported and problems == [], "the archive verifies before the backup"

    backup = tmp_path / "backup"
    made = run(["scripts/backup.sh", str(backup)], source)
    assert "backed up to" in made.stdout
    manifest = json.loads((backup / "manifest.json").read_text())
    assert manifest["database"] == ("sqlite3" if source_url is None else "postgresql")
    assert manifest["counts"]["designs.Product"] == len(before["products"])
    with tarfile.open(backup / "media.tar.gz") as archive:
        assert sorted(member.name for member in archive.getmembers() if member.isfile()) == sorted(before["files"])

    done = run(["scripts/restore.sh", str(backup)], target)
    assert "restored the" in done.stdout
    after = json.loads(snippet(target, "fingerprint"))
    assert after == before
    assert all(ok for *_, ok in after["people"]), "people log in with the passwords they had"


def test_restore_refuses_a_database_with_data_unless_told_to_replace_it(tmp_path, two_databases):
    source_url, target_url = two_databases
    source = app_env(tmp_path / "source-var", source_url)
    snippet(source, "build")
    before = json.loads(snippet(source, "fingerprint"))
    backup = tmp_path / "backup"
    run(["scripts/backup.sh", str(backup)], source)

    refused = run(["scripts/restore.sh", str(backup)], source, expect_ok=False)
    assert refused.returncode != 0
    assert "the database already holds data" in refused.stderr

    again = run(["scripts/backup.sh", str(backup)], source, expect_ok=False)
    assert again.returncode != 0 and "is not empty" in again.stderr

    run(["scripts/restore.sh", "--replace", str(backup)], source)
    assert json.loads(snippet(source, "fingerprint")) == before
    media = tmp_path / "source-var"
    assert any(path.name.startswith("media.before-restore-") for path in media.iterdir())


def test_restore_refuses_a_damaged_backup_and_changes_nothing(tmp_path):
    source = app_env(tmp_path / "source-var", None)
    target = app_env(tmp_path / "target-var", None)
    snippet(source, "build")
    backup = tmp_path / "backup"
    run(["scripts/backup.sh", str(backup)], source)
    with (backup / "media.tar.gz").open("ab") as handle:
        handle.write(b"tampered")
    snippet(target, "migrate")
    refused = run(["scripts/restore.sh", str(backup)], target, expect_ok=False)
    assert refused.returncode != 0
    assert "media.tar.gz: its SHA-256 does not match the manifest" in refused.stderr
    assert json.loads(snippet(target, "fingerprint"))["products"] == []
