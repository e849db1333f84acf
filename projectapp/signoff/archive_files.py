"""The archive as a portable zip: every signed PDF plus a JSON manifest of hashes, signatures and revisions."""

import hashlib
import json
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from projectapp.signoff.models import SignedRecord, Supersession

MANIFEST = "manifest.json"
FORMAT = "earshot-archive/1"


def manifest_entry(record: SignedRecord, superseded: dict[int, int]) -> dict[str, Any]:
    revision = record.revision
    return {
        "file": f"records/{Path(record.pdf.name).name}",
        "sha256": record.sha256,
        "size_bytes": record.size_bytes,
        "fingerprint": record.fingerprint,
        "archived_at": record.created_at.isoformat(),
        "team": revision.product.team.name,
        "product": revision.product.name,
        "revision": revision.number,
        "category": (revision.evaluation or {}).get("design", {}).get("category"),
        "ruleset": revision.ruleset,
        "state": "superseded" if record.pk in superseded else "current",
        "superseded_by_revision": superseded.get(record.pk),
        "signatures": [{"role": s.role, "name": s.signer_name, "username": s.signer.get_username(),
                        "meaning": s.meaning, "signed_at": s.signed_at.isoformat()}
                       for s in revision.signatures.select_related("signer").order_by("id")],
    }


def export_archive(path: Path, records=None) -> int:
    records = records if records is not None else SignedRecord.objects.all()
    records = records.select_related("revision__product__team").order_by("id")
    superseded = {link.older_id: link.newer.revision.number
                  for link in Supersession.objects.select_related("newer__revision")}
    entries = []
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        for record in records:
            entry = manifest_entry(record, superseded)
            with record.pdf.open("rb") as handle:
                archive.writestr(entry["file"], handle.read())
            entries.append(entry)
        archive.writestr(MANIFEST, json.dumps({"format": FORMAT, "records": entries}, indent=2, ensure_ascii=False))
    return len(entries)


@dataclass
class ArchiveCheck:
    checked: int = 0
    problems: list[str] = field(default_factory=list)


def verify_archive(path: Path, *, against_database: bool = True) -> ArchiveCheck:
    """Every PDF in the zip must hash to its manifest entry, and (with the database) to an archived record."""
    result = ArchiveCheck()
    try:
        archive = zipfile.ZipFile(path)
    except (OSError, zipfile.BadZipFile) as error:
        result.problems.append(f"{path}: not a readable zip ({error})")
        return result
    with archive:
        try:
            manifest = json.loads(archive.read(MANIFEST))
        except (KeyError, ValueError) as error:
            result.problems.append(f"{path}: {MANIFEST} missing or not JSON ({error})")
            return result
        if manifest.get("format") != FORMAT:
            result.problems.append(f"{MANIFEST}: format expected {FORMAT}, got {manifest.get('format')!r}")
        listed = set()
        for entry in manifest.get("records", []):
            name = entry.get("file", "")
            listed.add(name)
            try:
                content = archive.read(name)
            except KeyError:
                result.problems.append(f"{name}: listed in the manifest but not in the zip")
                continue
            digest = hashlib.sha256(content).hexdigest()
            result.checked += 1
            if digest != entry.get("sha256"):
                result.problems.append(f"{name}: SHA-256 {digest} does not match the manifest's {entry.get('sha256')}")
            elif against_database and not SignedRecord.objects.filter(sha256=digest).exists():
                result.problems.append(f"{name}: not an archived record in this database")
        for name in archive.namelist():
            if name != MANIFEST and name not in listed:
                result.problems.append(f"{name}: in the zip but not in the manifest")
    return result
