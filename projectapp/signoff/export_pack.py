"""The export pack of a signed revision, for an operator or a test house: one zip with the signed PDF, the design
file, the measurement files, the evidence files, the checklist as JSON and CSV, and manifest.json listing every
other file with its SHA-256 and size. `signoff.archive_files.verify_archive` reads and checks it."""

import csv
import hashlib
import io
import json
import zipfile
from pathlib import Path
from typing import Any

from django.utils import timezone

from projectapp.designs.services import document_export_text
from projectapp.reviews.models import EvidenceAttachment, ReviewItem
from projectapp.signoff.models import SignedRecord

PACK_FORMAT = "earshot-pack/1"
CHECKLIST_COLUMNS = ("rule_id", "topic", "severity", "subjects", "title", "disposition", "justification",
                     "decided_by")


def _checklist_rows(record: SignedRecord) -> list[dict[str, Any]]:
    items = (record.revision.review_items.filter(kind=ReviewItem.Kind.RAISED).select_related("decided_by")
             .order_by("id"))
    return [{"rule_id": item.rule_id, "topic": item.topic, "severity": item.severity,
             "subjects": "; ".join(item.subjects), "title": item.title, "disposition": item.disposition,
             "justification": item.justification,
             "decided_by": item.decided_by.get_username() if item.decided_by else ""} for item in items]


def pack_file_name(record: SignedRecord) -> str:
    return f"{Path(record.pdf.name).stem}-pack.zip"


def export_pack_build(record: SignedRecord) -> bytes:
    revision = record.revision
    files: list[tuple[str, str, bytes]] = []  # (name in the zip, role, content)
    with record.pdf.open("rb") as handle:
        files.append((f"record/{Path(record.pdf.name).name}", "signed-record", handle.read()))
    files.append(("design/design.json", "design-file", document_export_text(revision=revision).encode("utf-8")))
    for measurement in revision.measurement_files.order_by("name"):
        with measurement.file.open("rb") as handle:
            files.append((f"measurements/{measurement.name}", "measurement", handle.read()))
    for attachment in EvidenceAttachment.objects.filter(revision=revision).order_by("id"):
        with attachment.file.open("rb") as handle:
            files.append((f"evidence/{attachment.pk}-{attachment.name}", "evidence", handle.read()))
    rows = _checklist_rows(record)
    checklist = {"checklist": revision.evaluation, "decisions": rows}
    files.append(("checklist/checklist.json", "checklist",
                  (json.dumps(checklist, indent=2, ensure_ascii=False) + "\n").encode("utf-8")))
    text = io.StringIO()
    writer = csv.DictWriter(text, fieldnames=CHECKLIST_COLUMNS)
    writer.writeheader()
    # A cell a spreadsheet would run as a formula starts with a quote instead (titles and justifications are typed).
    writer.writerows({key: ("'" + value if isinstance(value, str) and value[:1] in "=+-@" else value)
                      for key, value in row.items()} for row in rows)
    files.append(("checklist/checklist.csv", "checklist", text.getvalue().encode("utf-8")))
    manifest = {
        "format": PACK_FORMAT, "exported_at": timezone.now().isoformat(),
        "product": revision.product.name, "team": revision.product.team.name, "revision": revision.number,
        "record_sha256": record.sha256, "fingerprint": record.fingerprint,
        "files": [{"file": name, "role": role, "sha256": hashlib.sha256(content).hexdigest(),
                   "size_bytes": len(content)} for name, role, content in files],
    }
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        for name, _role, content in files:
            archive.writestr(name, content)
        archive.writestr("manifest.json", json.dumps(manifest, indent=2, ensure_ascii=False))
    return buffer.getvalue()
