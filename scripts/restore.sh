#!/usr/bin/env bash
# Restores a backup made by scripts/backup.sh into the database and file storage the settings name.
#
#   scripts/restore.sh IN_DIR             # into an empty database (a fresh one, or one only migrated)
#   scripts/restore.sh --replace IN_DIR   # over existing data: it is lost (files are moved aside, not deleted)
#
# Stop the app first. The files' SHA-256 sums are checked against the manifest before anything changes.
# The backup must come from the same kind of database (SQLite → SQLite, PostgreSQL → PostgreSQL).
# Uploaded files are unpacked into MEDIA_ROOT; with --replace the old folder is kept beside it as
# MEDIA_ROOT.before-restore-<time>. Afterwards `migrate` brings an older backup up to this code's schema,
# and the row counts are compared with the manifest's.
set -euo pipefail
cd "$(dirname "$0")/.."
replace=0
if [ "${1:-}" = "--replace" ]; then
  replace=1
  shift
fi
if [ $# -ne 1 ] || [ -z "$1" ]; then
  echo "usage: $0 [--replace] IN_DIR" >&2
  exit 2
fi
python="${EARSHOT_PYTHON_BIN:-.venv/bin/python}"
[ -x "$python" ] || python=$(command -v python3)
export DJANGO_SETTINGS_MODULE="${DJANGO_SETTINGS_MODULE:-projectapp.settings}"
exec "$python" - "$1" "$replace" <<'PYTHON'
import json
import os
import shutil
import sqlite3
import subprocess
import sys
import tarfile
from datetime import UTC, datetime
from pathlib import Path

sys.path.insert(0, os.getcwd())
import django  # noqa: E402

django.setup()
from projectapp import backups  # noqa: E402
from django.apps import apps  # noqa: E402
from django.conf import settings  # noqa: E402
from django.core.management import call_command  # noqa: E402
from django.db import connection, connections  # noqa: E402

source = Path(sys.argv[1]).resolve()
replace = sys.argv[2] == "1"


def fail(message: str) -> None:
    print(f"restore.sh: {message}", file=sys.stderr)
    sys.exit(1)


def pg_tool(name: str) -> str:
    found = backups.pg_tool(name)
    if not found:
        fail(f"{name} not found: install the PostgreSQL client (Debian: apt-get install postgresql-client-15)")
    return found


def holds_data() -> bool:
    """True when the database has tables with rows of Earshot's own (a migrated, empty one does not)."""
    tables = set(connection.introspection.table_names())
    for model in apps.get_models():
        if model._meta.app_label in ("audit", "library", "designs", "reviews", "signoff", "teams", "auth") \
                and model._meta.db_table in tables and model.objects.exists():
            return True
    return False


# -- check the backup before touching anything -------------------------------------------------------------
manifest_path = source / "manifest.json"
if not manifest_path.is_file():
    fail(f"{source} has no manifest.json: not a folder made by scripts/backup.sh")
manifest = json.loads(manifest_path.read_text())
if manifest.get("format") != "earshot-backup/1":
    fail(f"manifest.json: expected format earshot-backup/1, got {manifest.get('format')!r}")
for name, expected in manifest["sha256"].items():
    if not (source / name).is_file():
        fail(f"{name} is missing from {source}")
    if backups.sha256_of(source / name) != expected:
        fail(f"{name}: its SHA-256 does not match the manifest; the backup is damaged or was changed")

db = settings.DATABASES["default"]
engine = db["ENGINE"].rsplit(".", 1)[-1]
if engine != manifest["database"]:
    fail(f"the backup is of a {manifest['database']} database but the settings name a {engine} one; restore "
         "into the same kind (set DATABASE_URL accordingly)")
if holds_data() and not replace:
    fail("the database already holds data; restore into an empty one, or pass --replace to overwrite it")
on_disk = settings.STORAGES["default"]["BACKEND"] == "django.core.files.storage.FileSystemStorage"
media_root = Path(settings.STORAGES["default"].get("OPTIONS", {}).get("location") or settings.MEDIA_ROOT)
if manifest["files_on_disk"] and not on_disk:
    fail("the backup holds uploaded files but the settings keep files in "
         f"{settings.STORAGES['default']['BACKEND']}; copy media.tar.gz's content there yourself")
if on_disk and media_root.is_dir() and any(media_root.iterdir()) and not replace:
    fail(f"{media_root} already holds files; pass --replace to move them aside")
connections.close_all()

# -- the database ------------------------------------------------------------------------------------------
if engine == "sqlite3":
    Path(db["NAME"]).parent.mkdir(parents=True, exist_ok=True)
    backup = sqlite3.connect(f"file:{source / 'database.sqlite3'}?mode=ro", uri=True)
    target = sqlite3.connect(db["NAME"], timeout=30)
    with target:
        backup.backup(target)  # replaces the whole content of the target, page by page
    backup.close()
    target.close()
else:
    command = [pg_tool("pg_restore"), "--no-owner", "--no-privileges", "--single-transaction", "--exit-on-error",
               "--dbname", db["NAME"]]
    if replace:
        command += ["--clean", "--if-exists"]
    if not replace:  # a migrated but empty database: drop its empty tables so the backup's can be made
        with connection.cursor() as cursor:
            cursor.execute("DROP SCHEMA public CASCADE; CREATE SCHEMA public")
        connections.close_all()
    done = subprocess.run([*command, str(source / "database.pgdump")], env=backups.pg_env(db), capture_output=True,
                          text=True)
    if done.returncode:
        fail(f"pg_restore failed: {done.stderr.strip()}")

# -- the files ---------------------------------------------------------------------------------------------
restored_files = 0
if manifest["files_on_disk"]:
    staging = media_root.with_name(media_root.name + ".restoring")
    shutil.rmtree(staging, ignore_errors=True)
    staging.mkdir(parents=True)
    with tarfile.open(source / "media.tar.gz", "r:gz") as archive:
        archive.extractall(staging, filter="data")  # refuses absolute paths, .. and links out of the folder
        restored_files = sum(1 for member in archive.getmembers() if member.isfile())
    if media_root.exists():
        aside = media_root.with_name(f"{media_root.name}.before-restore-{datetime.now(UTC):%Y%m%dT%H%M%S}")
        media_root.rename(aside)
        print(f"restore.sh: the files that were in {media_root} are now in {aside}")
    staging.rename(media_root)

# -- bring the schema up to date and compare ---------------------------------------------------------------
call_command("migrate", "--no-input", verbosity=0)
differences = []
for label, expected in manifest["counts"].items():
    try:
        count = apps.get_model(label).objects.count()
    except LookupError:
        continue
    if count != expected:
        differences.append(f"{label}: {count} rows, the backup had {expected}")
if differences:
    fail("the restored database does not match the backup: " + "; ".join(differences))
print(f"restore.sh: restored the {engine} database and {restored_files} uploaded file(s) from {source} "
      f"(backup of {manifest['created_at']})")
print("restore.sh: " + ", ".join(f"{count} {label.split('.')[1]}" for label, count in manifest["counts"].items()))
PYTHON
