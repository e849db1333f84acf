"""The archive as a portable zip: every signed PDF plus a JSON manifest of hashes, signatures and revisions.

Verification reads a zip that may come from anywhere, so it refuses what could take it down before reading
it: more than MAX_ENTRIES entries (counted from the zip's end record, before the directory is loaded), an
entry larger than MAX_RECORD_BYTES (the manifest: MAX_MANIFEST_BYTES) or compressed more than
MAX_COMPRESSION_RATIO:1 (a signed PDF is mostly compressed already; a zip bomb is mostly zeros), entries
that overlap (another zip bomb's trick), and a manifest that is not an object of the expected shape. It
reads each PDF in chunks. With the database it also names every record archived before the export that
the archive lacks, so removing records (and their manifest entries) shows.
"""

import hashlib
import json
import struct
import zipfile
import zlib
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path
from typing import Any

from django.utils import timezone

from projectapp.signoff.forms import MAX_VERIFY_BYTES
from projectapp.signoff.models import SignedRecord, Supersession

MANIFEST = "manifest.json"
FORMAT = "earshot-archive/1"
PACK_FORMAT = "earshot-pack/1"  # one signed revision's export pack (signoff.export_pack): `files`, not `records`
MAX_ENTRIES = 100_000
MAX_RECORD_BYTES = MAX_VERIFY_BYTES  # what the Verify page accepts; a record is well under 1 MB
MAX_MANIFEST_BYTES = 100_000_000  # about 1 kB a record
MAX_COMPRESSION_RATIO = 100  # checked for entries over 1 MB
CHUNK_BYTES = 1 << 20
MAX_PROBLEMS_SHOWN = 200


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


def export_archive(path: Path) -> int:
    """Writes every signed record and the manifest; returns how many records it wrote."""
    records = SignedRecord.objects.select_related("revision__product__team").order_by("id")
    superseded = {link.older_id: link.newer.revision.number
                  for link in Supersession.objects.select_related("newer__revision")}
    entries = []
    exported_at = timezone.now()  # before the query: every record archived until now is in the export
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        for record in records:
            entry = manifest_entry(record, superseded)
            with record.pdf.open("rb") as handle:
                archive.writestr(entry["file"], handle.read())
            entries.append(entry)
        manifest = {"format": FORMAT, "exported_at": exported_at.isoformat(), "records": entries}
        archive.writestr(MANIFEST, json.dumps(manifest, indent=2, ensure_ascii=False))
    return len(entries)


class ArchiveRefused(ValueError):
    """The file is not a readable Earshot archive, or reading it could take the verifier down."""


@dataclass
class ArchiveCheck:
    checked: int = 0
    problems: list[str] = field(default_factory=list)
    refused: bool = False  # not a readable Earshot archive (exit 2), as opposed to records that don't verify
    problem_count: int = 0  # all of them; `problems` keeps the first MAX_PROBLEMS_SHOWN


def verify_archive(path: Path, *, against_database: bool = True) -> ArchiveCheck:
    """Every PDF in the zip must hash to its manifest entry, and (with the database) to an archived record;
    with the database, every record archived before the export must be in it."""
    result = ArchiveCheck()
    try:
        _check_entry_count(path)
        archive = zipfile.ZipFile(path)
    except ArchiveRefused as error:
        return _refused(result, str(error))
    except (OSError, zipfile.BadZipFile, zipfile.LargeZipFile, ValueError, EOFError) as error:
        return _refused(result, f"{path}: not a readable zip ({error})")
    with archive:
        try:
            infos = _checked_infos(archive)
            manifest = _read_manifest(archive, infos)
            entries = _manifest_entries(manifest)
        except ArchiveRefused as error:
            return _refused(result, str(error))
        listed: set[str] = set()
        is_pack = manifest.get("format") == PACK_FORMAT
        for index, entry in enumerate(entries):
            name = entry["file"]
            if name in listed:
                result.problems.append(f"{MANIFEST}: records[{index}]: {name} is listed twice")
                continue
            listed.add(name)
            if name not in infos:
                result.problems.append(f"{name}: listed in the manifest but not in the zip")
                continue
            try:
                digest = _sha256_of(archive, infos[name])
            except (zipfile.BadZipFile, zlib.error, NotImplementedError, RuntimeError, EOFError, OSError) as error:
                result.problems.append(f"{name}: can't be read from the zip ({error})")
                continue
            result.checked += 1
            if digest != entry["sha256"]:
                result.problems.append(f"{name}: SHA-256 {digest} does not match the manifest's {entry['sha256']:.80}")
            elif (against_database and (not is_pack or entry.get("role") == "signed-record")
                  and not SignedRecord.objects.filter(sha256=digest).exists()):
                result.problems.append(f"{name}: not an archived record in this database")
        for name in infos:
            if name != MANIFEST and name not in listed:
                result.problems.append(f"{name}: in the zip but not in the manifest")
        if is_pack and not any(entry.get("role") == "signed-record" for entry in entries):
            result.problems.append(f"{MANIFEST}: the pack lists no signed record")
        if not entries:
            result.problems.append(f"{MANIFEST}: the archive lists no signed record: nothing was verified")
        if against_database and not is_pack:
            result.problems += _missing_records(manifest, {entry["sha256"] for entry in entries})
    result.problem_count = len(result.problems)
    if len(result.problems) > MAX_PROBLEMS_SHOWN:
        more = len(result.problems) - MAX_PROBLEMS_SHOWN
        result.problems[MAX_PROBLEMS_SHOWN:] = [f"… and {more} more problem(s)"]
    return result


def _refused(result: ArchiveCheck, problem: str) -> ArchiveCheck:
    result.problems.append(problem)
    result.problem_count = len(result.problems)
    result.refused = True
    return result


def _check_entry_count(path: Path) -> None:
    """Counts the entries from the zip's end-of-central-directory record (and its ZIP64 form), before
    zipfile loads the whole directory into memory."""
    with path.open("rb") as handle:
        handle.seek(0, 2)
        size = handle.tell()
        tail_bytes = min(size, 22 + 65_535 + 20)
        handle.seek(size - tail_bytes)
        tail = handle.read()
    at = tail.rfind(b"PK\x05\x06")
    if at < 0 or len(tail) - at < 22:
        return  # zipfile will say it is not a zip
    total = struct.unpack("<H", tail[at + 10:at + 12])[0]
    locator = at - 20
    if locator >= 0 and tail[locator:locator + 4] == b"PK\x06\x07":
        offset = struct.unpack("<Q", tail[locator + 8:locator + 16])[0]
        with path.open("rb") as handle:
            handle.seek(offset)
            record = handle.read(56)
        if len(record) == 56 and record[:4] == b"PK\x06\x06":
            total = max(total, struct.unpack("<Q", record[32:40])[0])
    if total > MAX_ENTRIES:
        raise ArchiveRefused(f"{path}: {total} entries; expected at most {MAX_ENTRIES}")


def _checked_infos(archive: zipfile.ZipFile) -> dict[str, zipfile.ZipInfo]:
    """The entries by name, once each the sizes and ratios are known to be safe to read."""
    infos = archive.infolist()
    if len(infos) > MAX_ENTRIES:
        raise ArchiveRefused(f"the zip has {len(infos)} entries; expected at most {MAX_ENTRIES}")
    by_name: dict[str, zipfile.ZipInfo] = {}
    for info in infos:
        name = info.filename
        if name in by_name:
            raise ArchiveRefused(f"{name}: appears more than once in the zip")
        limit = MAX_MANIFEST_BYTES if name == MANIFEST else MAX_RECORD_BYTES
        if info.file_size > limit:
            raise ArchiveRefused(f"{name}: expected at most {limit // 1_000_000} MB uncompressed, "
                                 f"got {info.file_size / 1_000_000:,.0f} MB")
        if info.file_size > 1_000_000 and info.file_size > MAX_COMPRESSION_RATIO * max(1, info.compress_size):
            ratio = info.file_size / max(1, info.compress_size)
            raise ArchiveRefused(f"{name}: compressed {ratio:,.0f}:1, like a zip bomb; a signed record "
                                 f"compresses at most {MAX_COMPRESSION_RATIO}:1")
        by_name[name] = info
    ordered = sorted(infos, key=lambda info: info.header_offset)
    for first, second in zip(ordered, ordered[1:], strict=False):
        if first.header_offset + first.compress_size > second.header_offset:
            raise ArchiveRefused(f"{first.filename} and {second.filename} overlap in the zip, like a zip bomb")
    return by_name


def _read_manifest(archive: zipfile.ZipFile, infos: dict[str, zipfile.ZipInfo]) -> dict[str, Any]:
    if MANIFEST not in infos:
        raise ArchiveRefused(f"{MANIFEST}: missing from the zip")
    try:
        manifest = json.loads(archive.read(infos[MANIFEST]))
    except RecursionError:
        raise ArchiveRefused(f"{MANIFEST}: nested too deeply to be a manifest") from None
    except (ValueError, zipfile.BadZipFile, zlib.error, NotImplementedError, RuntimeError, EOFError) as error:
        raise ArchiveRefused(f"{MANIFEST}: not JSON ({error})") from None
    if not isinstance(manifest, dict):
        raise ArchiveRefused(f"{MANIFEST}: expected an object, got {_kind(manifest)}")
    if manifest.get("format") not in (FORMAT, PACK_FORMAT):
        raise ArchiveRefused(f"{MANIFEST}: format expected {FORMAT} or {PACK_FORMAT}, got {manifest.get('format')!r:.80}")
    return manifest


def _manifest_entries(manifest: dict[str, Any]) -> list[dict[str, Any]]:
    key = "files" if manifest.get("format") == PACK_FORMAT else "records"
    records = manifest.get(key)
    if not isinstance(records, list):
        raise ArchiveRefused(f"{MANIFEST}: {key}: expected a list, got {_kind(records)}")
    problems = []
    for index, entry in enumerate(records):
        where = f"{MANIFEST}: {key}[{index}]"
        if not isinstance(entry, dict):
            problems.append(f"{where}: expected an object, got {_kind(entry)}")
            continue
        if not isinstance(entry.get("file"), str) or not entry["file"]:
            problems.append(f"{where}.file: expected a file name, got {_kind(entry.get('file'))}")
        if not isinstance(entry.get("sha256"), str):  # a wrong digest is a mismatch, reported per record
            problems.append(f"{where}.sha256: expected a SHA-256 in hexadecimal, got {_kind(entry.get('sha256'))}")
        if len(problems) >= 20:
            break
    if problems:
        raise ArchiveRefused("; ".join(problems))
    return records


def _kind(value: Any) -> str:
    if value is None:
        return "null"
    if isinstance(value, (dict, list)):
        return "an object" if isinstance(value, dict) else "a list"
    return type(value).__name__ if not isinstance(value, str) else f"{value!r:.80}"


def _sha256_of(archive: zipfile.ZipFile, info: zipfile.ZipInfo) -> str:
    digest = hashlib.sha256()
    with archive.open(info) as handle:  # reads at most the declared size, checked above
        while chunk := handle.read(CHUNK_BYTES):
            digest.update(chunk)
    return digest.hexdigest()


def _missing_records(manifest: dict[str, Any], listed: set[str]) -> list[str]:
    """Records this database archived before the export that the manifest doesn't list (a listed one that
    fails to verify is reported as such)."""
    try:
        exported_at = datetime.fromisoformat(manifest["exported_at"])
    except (KeyError, TypeError, ValueError):
        return [f"{MANIFEST}: exported_at missing or not a time: can't tell whether records were removed"]
    if timezone.is_naive(exported_at):
        return [f"{MANIFEST}: exported_at has no time zone: can't tell whether records were removed"]
    archived = SignedRecord.objects.filter(created_at__lte=exported_at).values_list("sha256", flat=True)
    absent = [sha256 for sha256 in archived.iterator() if sha256 not in listed]  # compared here: no query of 100k ids
    missing = (SignedRecord.objects.filter(sha256__in=absent[:100]).select_related("revision__product")
               .order_by("created_at", "id"))
    more = [f"… and {len(absent) - 100} more archived before this export but missing from it"] if len(absent) > 100 else []
    return [f"{record.revision.product.name} design revision {record.revision.number} (archived "
            f"{record.created_at:%Y-%m-%d %H:%M} UTC, SHA-256 {record.sha256[:16]}…): archived before this export "
            "but missing from it" for record in missing] + more
