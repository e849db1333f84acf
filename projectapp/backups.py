"""What scripts/backup.sh and scripts/restore.sh share: file digests and the PostgreSQL client tools."""

import hashlib
import os
import shutil
from pathlib import Path


def sha256_of(path: Path) -> str:
    digest = hashlib.sha256()
    with path.open("rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def pg_tool(name: str) -> str | None:
    """pg_dump / pg_restore from EARSHOT_PG_BIN, Debian's PostgreSQL 15 folder or the PATH; None if absent."""
    for folder in (os.environ.get("EARSHOT_PG_BIN", ""), "/usr/lib/postgresql/15/bin"):
        if folder and os.access(os.path.join(folder, name), os.X_OK):
            return os.path.join(folder, name)
    return shutil.which(name)


def pg_env(db: dict) -> dict:
    """The environment that points libpq's tools at the Django database `db`."""
    env = dict(os.environ)
    for key, name in (("HOST", "PGHOST"), ("PORT", "PGPORT"), ("USER", "PGUSER"), ("PASSWORD", "PGPASSWORD"),
                      ("NAME", "PGDATABASE")):
        if db.get(key):
            env[name] = str(db[key])
    for key, name in (("sslmode", "PGSSLMODE"), ("sslrootcert", "PGSSLROOTCERT"), ("sslcert", "PGSSLCERT"),
                      ("sslkey", "PGSSLKEY")):
        if db.get("OPTIONS", {}).get(key):
            env[name] = str(db["OPTIONS"][key])
    return env
