#!/usr/bin/env bash
# Backs up Earshot's database and uploaded files into OUT_DIR (a new or empty folder).
#
#   scripts/backup.sh OUT_DIR
#
# Uses the same settings as the app (the same environment variables: DATABASE_URL, EARSHOT_VAR_DIR,
# EARSHOT_MEDIA_ROOT, ...). It may run while the app serves:
# - SQLite: an online copy through SQLite's backup API (a consistent snapshot, even mid-write);
# - PostgreSQL: pg_dump in its custom format (one consistent snapshot);
# - files: a tar.gz of MEDIA_ROOT when files are on disk. With another storage (EARSHOT_FILE_STORAGE, an
#   object store) the files stay there: back them up with the store's own versioning or replication.
# OUT_DIR gets database.sqlite3 or database.pgdump, media.tar.gz and manifest.json (format, date, database
# kind, the latest migration of each app, row counts, and the SHA-256 of each file, which restore checks).
# Restore with scripts/restore.sh OUT_DIR.
set -euo pipefail
cd "$(dirname "$0")/.."
if [ $# -ne 1 ] || [ -z "$1" ]; then
  echo "usage: $0 OUT_DIR" >&2
  exit 2
fi
python="${EARSHOT_PYTHON_BIN:-.venv/bin/python}"
[ -x "$python" ] || python=$(command -v python3)
export DJANGO_SETTINGS_MODULE="${DJANGO_SETTINGS_MODULE:-projectapp.settings}"
exec "$python" - "$1" <<'PYTHON'
import json
import os
import sqlite3
import subprocess
import sys
import tarfile
import tempfile
from datetime import UTC, datetime
from pathlib import Path

sys.path.insert(0, os.getcwd())
import django  # noqa: E402

django.setup()
from projectapp import backups  # noqa: E402
from django.apps import apps  # noqa: E402
from django.conf import settings  # noqa: E402
from django.db import connection  # noqa: E402
from django.db.migrations.recorder import MigrationRecorder  # noqa: E402

out = Path(sys.argv[1]).resolve()


def fail(message: str) -> None:
    print(f"backup.sh: {message}", file=sys.stderr)
    sys.exit(1)


def pg_tool(name: str) -> str:
    found = backups.pg_tool(name)
    if not found:
        fail(f"{name} not found: install the PostgreSQL client (Debian: apt-get install postgresql-client-15)")
    return found


if out.exists() and any(out.iterdir()):
    fail(f"{out} is not empty: give a new or empty folder, so that one backup never mixes with another")
out.mkdir(parents=True, exist_ok=True)

db = settings.DATABASES["default"]
engine = db["ENGINE"].rsplit(".", 1)[-1]
files: dict[str, str] = {}
if engine == "sqlite3":
    if not Path(db["NAME"]).is_file():
        fail(f"the SQLite database {db['NAME']} does not exist")
    source = sqlite3.connect(db["NAME"], timeout=30)
    target = sqlite3.connect(out / "database.sqlite3")
    with target:
        source.backup(target)
    source.close()
    target.close()
    files["database.sqlite3"] = ""
elif engine == "postgresql":
    done = subprocess.run([pg_tool("pg_dump"), "--format=custom", "--no-owner", "--no-privileges",
                           "--file", str(out / "database.pgdump")],
                          env=backups.pg_env(db), capture_output=True, text=True)
    if done.returncode:
        fail(f"pg_dump failed: {done.stderr.strip()}")
    files["database.pgdump"] = ""
else:
    fail(f"no backup method for the database engine {db['ENGINE']}")

on_disk = settings.STORAGES["default"]["BACKEND"] == "django.core.files.storage.FileSystemStorage"
media_root = Path(settings.STORAGES["default"].get("OPTIONS", {}).get("location") or settings.MEDIA_ROOT)
media_count = 0
if on_disk:
    with tempfile.NamedTemporaryFile(dir=out, suffix=".part", delete=False) as part:
        with tarfile.open(fileobj=part, mode="w:gz") as archive:
            if media_root.is_dir():
                for path in sorted(media_root.rglob("*")):
                    if path.is_file():
                        archive.add(path, arcname=str(path.relative_to(media_root)), recursive=False)
                        media_count += 1
    os.replace(part.name, out / "media.tar.gz")
    files["media.tar.gz"] = ""

migrations: dict[str, str] = {}
for app, name in MigrationRecorder(connection).migration_qs.order_by("app", "name").values_list("app", "name"):
    migrations[app] = name
counts = {}
for label in ("designs.Product", "designs.Revision", "designs.MeasurementFile", "reviews.ReviewItem",
              "signoff.SignedRecord", "auth.User", "teams.Team"):
    try:
        counts[label] = apps.get_model(label).objects.count()
    except LookupError:
        pass
for name in files:
    files[name] = backups.sha256_of(out / name)
manifest = {
    "format": "earshot-backup/1",
    "created_at": datetime.now(UTC).isoformat(timespec="seconds"),
    "database": engine,
    "files_on_disk": on_disk,
    "media_files": media_count,
    "migrations": migrations,
    "counts": counts,
    "sha256": files,
}
(out / "manifest.json").write_text(json.dumps(manifest, indent=2) + "\n")
print(f"backup.sh: {engine} database and {media_count if on_disk else 'no'} uploaded file(s) backed up to {out}")
if not on_disk:
    print(f"backup.sh: uploaded files live in {settings.STORAGES['default']['BACKEND']}; back them up there")
print("backup.sh: " + ", ".join(f"{count} {label.split('.')[1]}" for label, count in counts.items()))
PYTHON
