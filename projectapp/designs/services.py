"""Every write to products and revisions goes through these functions (keyword-only, `<entity>_<action>`)."""

import copy
import json
import re
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from django.core.exceptions import PermissionDenied
from django.core.files.base import ContentFile
from django.db import transaction

from projectapp.audit.models import AuditEvent
from projectapp.audit.services import audit_record
from projectapp.designs import library_use, lifecycle, questionnaire
from projectapp.designs.checklists import count_revision, measurement_reader
from projectapp.designs.document_changes import Changes, document_changes
from projectapp.designs.models import MeasurementFile, Product, Revision
from projectapp.library.models import Entry, EntryFile
from projectapp.library.parts import ANTENNA, MODULE
from projectapp.teams.access import has_role, require_role
from projectapp.teams.models import Role, Team
from rules.design import (
    CELLULAR_ROLES,
    FORMAT,
    DesignError,
    Problem,
    decode_design_text,
    parse_design,
    storage_problems,
)
from rules.farfield import parse_far_field
from rules.measurements import attach_measurements
from rules.touchstone import parse_touchstone


def blank_document(*, product_name: str) -> dict[str, Any]:
    """A new product's design: its name and nothing chosen for it. The category, the bands and the hardware
    revision are the author's answers (a new draft shows them as still to answer, not as errors)."""
    return {
        "format": FORMAT,
        "product": {"name": product_name},
        "modem": {},
        "antennas": [],
    }


class DraftConflict(Exception):
    """Someone changed this part of the draft after the version the change was read at; nothing was stored.

    `revision` is the draft as it is now; `edits` lists what others changed in the part since then
    (`DraftEdit`s, oldest first), for the person to see before they decide."""

    def __init__(self, *, revision: Revision, part: str, read_version: int, edits: list["DraftEdit"]):
        self.revision, self.part, self.read_version, self.edits = revision, part, read_version, edits
        self.title = questionnaire.PART_TITLES.get(part, "The draft")
        super().__init__(f"{questionnaire.PART_TITLES.get(part, 'the draft')} of {revision} changed since "
                         f"version {read_version} (now version {revision.version})")


class DraftGone(Exception):
    """The draft was submitted (and frozen) while the change was on its way."""

    def __init__(self, revision: Revision):
        self.revision = revision
        super().__init__(f"{revision} is no longer a draft")


class DraftEdit:
    """One change to a draft as a conflict shows it: who, when, which version, and the paths it changed."""

    def __init__(self, event: AuditEvent, changes: Changes):
        self.actor, self.at, self.version = event.actor, event.created_at, event.draft_version
        self.summary, self.changes = event.summary, changes


ALL_PARTS = ""  # a change of the whole document (an import)
FILE_KEY = "file"  # the audit path of a measurement file itself (its name, size and SHA-256)


def _locked_draft(revision: Revision) -> Revision:
    """The revision's row, locked until the transaction ends, read afresh: what this change builds on."""
    current = Revision.objects.select_for_update(no_key=True).get(pk=revision.pk)  # as designs.lifecycle locks
    if not current.is_draft:
        raise DraftGone(current)
    current.product = revision.product
    return current


def _edits_since(draft: Revision, version: int, part: str) -> list[DraftEdit]:
    roots: tuple[str, ...] | None = None  # the whole document
    if part != ALL_PARTS:
        roots = questionnaire.PARTS[part] + ((FILE_KEY,) if part == questionnaire.MEASUREMENTS_PART else ())
    edits = []
    events = AuditEvent.objects.filter(revision=draft, draft_version__gt=version).select_related("actor")
    for event in events.order_by("draft_version", "id"):
        changes = {path: pair for path, pair in event.changes.items()
                   if roots is None or path.split(".")[0].split("[")[0] in roots}
        if changes:
            edits.append(DraftEdit(event, changes))
    return edits


def _require_fresh(draft: Revision, part: str, read_version: int | None) -> None:
    """Raises DraftConflict when `part` (or, for ALL_PARTS, anything) changed after `read_version`.

    None skips the check: for callers that replace the document on purpose (scripts, the demo data)."""
    if read_version is None:
        return
    if part == ALL_PARTS:
        changed_at = draft.version if draft.version > 1 else 0  # version 1: as started, nothing edited yet
    else:
        changed_at = int((draft.section_versions or {}).get(part, 0))
    if changed_at > read_version:
        raise DraftConflict(revision=draft, part=part, read_version=read_version,
                            edits=_edits_since(draft, read_version, part))


def require_storable(document: Any) -> None:
    """Raises DesignError, nothing stored, for a document no database can hold (NUL, lone surrogates, nesting
    or size beyond the parser's limits): every write of a design document passes here, through _store()."""
    problems = storage_problems(document)
    if problems:
        raise DesignError(problems)


def _store(*, draft: Revision, document: dict[str, Any], user, action: str, summary: str,
           file_changes: Changes | None = None) -> Revision:
    """Writes a changed document (and records it): the next version, the parts it changed, one audit event
    with the paths before and after. An unchanged document and no file change write nothing at all."""
    require_storable(document)
    changes = {} if document == draft.document else document_changes(draft.document, document)
    if file_changes:
        changes = {**changes, **file_changes}
    if not changes:
        return draft
    parts = questionnaire.parts_changed(draft.document, document)
    if file_changes and questionnaire.MEASUREMENTS_PART not in parts:
        parts.append(questionnaire.MEASUREMENTS_PART)
    draft.version += 1
    draft.section_versions = {**(draft.section_versions or {}), **dict.fromkeys(parts, draft.version)}
    draft.document = document
    draft.save(update_fields=["document", "version", "section_versions", "updated_at"])
    audit_record(product=draft.product, revision=draft, actor=user, action=action, summary=summary,
                 changes=changes, draft_version=draft.version)
    return count_revision(draft)


def _describe_file(measurement: MeasurementFile) -> str:
    return f"{measurement.name}: {measurement.size_bytes} bytes, SHA-256 {measurement.sha256}"


@transaction.atomic
def product_create(*, team: Team, name: str, description: str = "", user) -> Product:
    require_role(user, team, Role.AUTHOR)
    product = Product.objects.create(team=team, name=name, description=description, created_by=user)
    draft = Revision.objects.create(product=product, number=1, document=blank_document(product_name=name),
                                    created_by=user)
    product.latest_revision = draft
    product.save(update_fields=["latest_revision"])
    audit_record(product=product, revision=draft, actor=user, action=AuditEvent.Action.DRAFT_STARTED,
                 summary=f"Created {name} with an empty draft revision 1", draft_version=draft.version)
    count_revision(draft)
    return product


def _copy_measurements(*, source: Revision, target: Revision, user) -> None:
    for measurement in source.measurement_files.all():
        with measurement.file.open("rb") as handle:
            content = handle.read()
        copy = MeasurementFile(revision=target, name=measurement.name, kind=measurement.kind, size_bytes=len(content),
                               sha256=MeasurementFile.digest(content), uploaded_by=measurement.uploaded_by or user)
        copy.file.save(measurement.name, ContentFile(content), save=False)
        copy.save()


class DraftExists(Exception):
    """A product has one draft at a time: a new one can't be started from another revision meanwhile."""

    def __init__(self, draft: Revision):
        self.draft = draft
        super().__init__(f"revision {draft.number} is already a draft: edit it, or submit it first")


@transaction.atomic
def draft_get_or_start(*, product: Product, user, source: Revision | None = None) -> Revision:
    """The product's draft; if there is none, a new one copied from `source` ("start a draft from it": any
    revision of the product that is not a draft) or else from the latest revision. A draft is born here (or in
    product_create), always under the product's row lock, which also keeps `Product.latest_revision` true.
    Raises DraftExists when `source` is given and the product already has a draft."""
    require_role(user, product.team, Role.AUTHOR)
    return _draft_start(product=product, user=user, source=source)


@transaction.atomic
def measurement_draft_start(*, revision: Revision, user) -> Revision:
    """The engineer's measurement path: a reviewer who measured a prototype starts a draft from the revision in
    review (or a signed one) to keep their measurement files with it, without the author. Reviewers change only a
    draft's measurements (require_measurement_role), so the design stays the author's; the draft's checklist
    re-judges with the files, and its page shows the author what changed against the revision it came from.
    Raises DraftExists when the product already has a draft (the reviewer adds files to that one)."""
    require_role(user, revision.product.team, Role.REVIEWER)
    return _draft_start(product=revision.product, user=user, source=revision, purpose="measurement draft")


def _draft_start(*, product: Product, user, source: Revision | None, purpose: str = "draft") -> Revision:
    product = Product.objects.select_for_update(no_key=True).get(pk=product.pk)  # as designs.lifecycle locks
    draft = product.draft
    if draft is not None:
        if source is not None:
            raise DraftExists(draft)
        return draft
    latest = product.latest
    if source is not None and (source.product_id != product.pk or source.is_draft):
        raise ValueError("from: expected a revision of this product that is not a draft")
    origin = source or latest
    number = latest.number + 1 if latest else 1
    document = json.loads(json.dumps(origin.document)) if origin else blank_document(product_name=product.name)
    draft = Revision.objects.create(product=product, number=number, document=document, based_on=origin,
                                    created_by=user)
    product.latest_revision = draft
    product.save(update_fields=["latest_revision"])
    if origin is not None:
        _copy_measurements(source=origin, target=draft, user=user)
    files = draft.measurement_files.count()
    audit_record(product=product, revision=draft, actor=user, action=AuditEvent.Action.DRAFT_STARTED,
                 summary=f"Started {purpose} design revision {number}"
                         + (f", copied from design revision {origin.number}"
                            + (f" with {files} measurement file(s)" if files else "") if origin else ""),
                 draft_version=draft.version)
    return count_revision(draft)


@transaction.atomic
def revision_withdraw(*, revision: Revision, user, reason: str = "") -> Revision:
    """Takes a revision out of review on its author's word (designs.lifecycle.withdraw); its checklist and
    decisions stay readable, and a later revision's review still carries them."""
    require_role(user, revision.product.team, Role.AUTHOR)
    return lifecycle.withdraw(revision=revision, user=user, reason=reason.strip()[:200])


@transaction.atomic
def draft_section_save(*, revision: Revision, section: questionnaire.Section, answers: Mapping[str, Any],
                       read_version: int, user) -> Revision:
    """Stores one posted questionnaire section into the draft, valid or not (nothing typed is dropped).

    An atomic read-modify-write of that section alone: the row is locked, the section's answers go into the
    document as it is now, and every other part stays as others left it. If someone changed this section
    after `read_version`, DraftConflict says what they changed and nothing is stored; a post that leaves the
    section as stored writes nothing (no new version, no audit event).
    """
    require_role(user, revision.product.team, Role.AUTHOR)
    draft = _locked_draft(revision)
    document = questionnaire.apply_answers(draft.document, section, answers)
    if questionnaire.part_content(document, section.slug) == questionnaire.part_content(draft.document,
                                                                                        section.slug):
        return draft
    _require_fresh(draft, section.slug, read_version)
    return _store(draft=draft, document=document, user=user, action=AuditEvent.Action.SECTION_SAVED,
                  summary=f"Saved {section.title} of draft design revision {draft.number}")


_REMOVED_ROW = re.compile(r"^antennas\[(\d+)\]$")


@dataclass(frozen=True)
class RemovedAntennas:
    """Antennas one change removed from a draft, as its audit event recorded them: what "Undo remove" restores."""

    event_id: int
    version: int
    rows: tuple[tuple[int, dict[str, Any]], ...]  # (row it was at, the antenna as it was)

    @property
    def names(self) -> list[str]:
        return [str(antenna.get("name") or f"antenna {index + 1}") for index, antenna in self.rows]


def _removed_by(event: AuditEvent) -> tuple[tuple[int, dict[str, Any]], ...]:
    rows = []
    for path, pair in (event.changes or {}).items():
        match = _REMOVED_ROW.match(path)
        if match and isinstance(pair, list) and len(pair) == 2 and isinstance(pair[0], dict) and pair[1] is None:
            rows.append((int(match.group(1)), pair[0]))
    return tuple(sorted(rows, key=lambda row: row[0]))


def _absent(document: Any, antenna: dict[str, Any]) -> bool:
    names = {row.get("name") for row in _list(document.get("antennas") if isinstance(document, dict) else None)
             if isinstance(row, dict)}
    return antenna.get("name") not in names


def draft_antennas_removed(*, revision: Revision) -> RemovedAntennas | None:
    """The antennas the draft's last change to its antennas removed, if that change removed any and they are
    not back: the page's "Undo remove" offer. Read from the audit trail, so it holds after a reload and names
    exactly what was stored."""
    version = int((revision.section_versions or {}).get(questionnaire.ANTENNAS.slug, 0))
    if not version:
        return None
    event = (AuditEvent.objects.filter(revision=revision, draft_version=version).order_by("-id")
             .only("id", "changes", "draft_version").first())
    rows = _removed_by(event) if event is not None else ()
    rows = tuple(row for row in rows if _absent(revision.document, row[1]))
    return RemovedAntennas(event.pk, version, rows) if event is not None and rows else None


@transaction.atomic
def draft_antennas_restore(*, revision: Revision, answers: Mapping[str, Any], event_id: int, read_version: int,
                           user) -> tuple[Revision, list[str]]:
    """Undo remove: puts back the antennas a change removed (its audit event `event_id`, of this draft), each at
    the row it had (or the end), with what was typed in the section meanwhile kept. One versioned, audited
    write like any save of the section; refused (DraftConflict) if the antennas changed after `read_version`,
    and (ValueError) when there is nothing of that change to put back (an antenna of that name is in the design
    again, or the event removed none)."""
    require_role(user, revision.product.team, Role.AUTHOR)
    draft = _locked_draft(revision)
    event = AuditEvent.objects.filter(revision=draft, pk=event_id).first()
    section = questionnaire.ANTENNAS
    document = questionnaire.apply_answers(draft.document, section, answers)
    rows = [row for row in (_removed_by(event) if event is not None else ()) if _absent(document, row[1])]
    if not rows:
        raise ValueError("nothing to restore: that change removed no antenna, or each one it removed is back "
                         "(an antenna of the same name is in the design)")
    _require_fresh(draft, section.slug, read_version)
    antennas = _list(document.get("antennas"))
    for index, antenna in rows:
        antennas.insert(min(index, len(antennas)), copy.deepcopy(antenna))
    document["antennas"] = antennas
    names = [str(antenna.get("name")) for _, antenna in rows]
    draft = _store(draft=draft, document=document, user=user, action=AuditEvent.Action.SECTION_SAVED,
                   summary=f"Restored antenna {', '.join(names)} (removed in version {event.draft_version}) in draft "
                           f"design revision {draft.number}")
    return draft, names


@transaction.atomic
def draft_save_document(*, revision: Revision, document: dict[str, Any], user,
                        read_version: int | None = None) -> Revision:
    """Replaces the draft's whole document (scripts and tests; people save sections or import)."""
    require_role(user, revision.product.team, Role.AUTHOR)
    draft = _locked_draft(revision)
    _require_fresh(draft, ALL_PARTS, read_version)
    return _store(draft=draft, document=document, user=user, action=AuditEvent.Action.SECTION_SAVED,
                  summary=f"Saved the design document of draft design revision {draft.number}")


@transaction.atomic
def design_import(*, product: Product, text: str | bytes, source: str, user,
                  read_version: int | None = None) -> Revision:
    """Puts an imported design file into the product's draft (starting one if needed).

    The file must be a valid design whose measurements name files the draft already has; otherwise
    DesignError lists every problem and nothing is stored. It replaces the whole document, so it refuses
    (DraftConflict) if the draft changed after `read_version` (0: the page showed no draft, or one as
    started); None skips that check (scripts).
    """
    document = decode_design_text(text, source=source)
    design = parse_design(document)
    draft = _locked_draft(draft_get_or_start(product=product, user=user))
    _require_fresh(draft, ALL_PARTS, read_version)
    attach_measurements(design, measurement_reader(draft))
    return _store(draft=draft, document=document, user=user, action=AuditEvent.Action.IMPORTED,
                  summary=f"Imported {source[:120]} into draft design revision {draft.number}")


def document_export_text(*, revision: Revision) -> str:
    """The revision's design file. Import of this text stores the same document, so export again is identical."""
    return json.dumps(revision.document, indent=2, ensure_ascii=False) + "\n"


MAX_MEASUREMENT_BYTES = 20_000_000
MEASUREMENT_SUFFIXES = (".s1p", ".s2p", ".s3p", ".s4p", ".s5p", ".s6p", ".s7p", ".s8p", ".ts")


def require_measurement_role(user, revision: Revision) -> None:
    """Authors and reviewers (the engineers who measure) may keep measurements with a draft."""
    team = revision.product.team
    if not (has_role(user, team, Role.AUTHOR) or has_role(user, team, Role.REVIEWER)):
        raise PermissionDenied("Adding measurements needs the author or reviewer role.")
    if not revision.is_draft:
        raise PermissionDenied("Measurements are added to a draft revision.")


def _safe_file_name(name: str) -> str:
    base = name.replace("\\", "/").rsplit("/", 1)[-1].strip()
    return "".join(ch if ch.isalnum() or ch in "._-, " else "-" for ch in base)[:120]


def measurement_add(*, revision: Revision, name: str, content: bytes, user) -> MeasurementFile:
    """Keeps a Touchstone file with a draft and maps its ports to the design's antennas in order.

    The file must parse; nothing is stored otherwise. Raises TouchstoneError (naming the file and line)
    or ValueError (naming what was expected) for a file that can't be kept.
    """
    require_measurement_role(user, revision)
    name = _upload_name(name, content, MEASUREMENT_SUFFIXES, "a Touchstone file named .s1p to .s8p or .ts")
    network = parse_touchstone(content.decode("utf-8", errors="replace"), source=name)
    with transaction.atomic():
        draft = _locked_draft(revision)  # adds to the document as it is now: nothing another save wrote is lost
        if draft.measurement_files.filter(name=name).exists():
            raise ValueError(f"{name}: a file of that name is already kept with this draft; remove it first")
        document = json.loads(json.dumps(draft.document))
        antennas = [a.get("name") for a in _list(document.get("antennas")) if isinstance(a, dict) and a.get("name")]
        ports = [antennas[index] if index < len(antennas) else None for index in range(network.port_count)]
        document["measurements"] = [*_list(document.get("measurements")), {"file": name, "ports": ports}]
        measurement = MeasurementFile(revision=draft, name=name, size_bytes=len(content),
                                      sha256=MeasurementFile.digest(content), uploaded_by=user)
        measurement.file.save(name, ContentFile(content), save=False)
        measurement.save()
        _store(draft=draft, document=document, user=user, action=AuditEvent.Action.FILE_ADDED,
               summary=f"Added {name} to draft design revision {draft.number}",
               file_changes={FILE_KEY: [None, _describe_file(measurement)]})
    return measurement


def _upload_name(name: str, content: bytes, suffixes: tuple[str, ...], expected: str) -> str:
    """The name an upload is kept under, once its suffix and size are what a measurement file may have."""
    name = _safe_file_name(name)
    if not name.lower().endswith(suffixes):
        raise ValueError(f"{name or 'file'}: expected {expected}")
    if len(content) > MAX_MEASUREMENT_BYTES:
        raise ValueError(f"{name}: expected at most {MAX_MEASUREMENT_BYTES // 1_000_000} MB, "
                         f"got {len(content) / 1_000_000:.1f} MB")
    return name


def _list(value: Any) -> list[Any]:
    return value if isinstance(value, list) else []


@transaction.atomic
def measurement_map_ports(*, revision: Revision, name: str, ports: list[str | None], user,
                          read_version: int | None = None) -> Revision:
    """Sets which antenna each port of a kept file measured (None: not connected to an antenna).

    Refuses (DraftConflict) if the measurements changed after `read_version`; None skips that check."""
    require_measurement_role(user, revision)
    draft = _locked_draft(revision)
    document = json.loads(json.dumps(draft.document))
    for entry in _list(document.get("measurements")):
        if isinstance(entry, dict) and entry.get("file") == name:
            entry["ports"] = ports
    if document == draft.document:
        return draft
    _require_fresh(draft, questionnaire.MEASUREMENTS_PART, read_version)
    return _store(draft=draft, document=document, user=user, action=AuditEvent.Action.FILE_MAPPED,
                  summary=f"Mapped the ports of {name} in draft design revision {draft.number}")


@transaction.atomic
def measurement_remove(*, revision: Revision, name: str, user, read_version: int | None = None) -> None:
    """Removes a kept file and its entry. Refuses (DraftConflict) if the measurements changed after
    `read_version`; None skips that check."""
    require_measurement_role(user, revision)
    draft = _locked_draft(revision)
    files = list(draft.measurement_files.filter(name=name))
    document = json.loads(json.dumps(draft.document))
    if isinstance(document.get("measurements"), list):
        document["measurements"] = [entry for entry in document["measurements"]
                                    if not (isinstance(entry, dict) and entry.get("file") == name)]
        if not document["measurements"]:
            del document["measurements"]
    if not files and document == draft.document:
        return
    _require_fresh(draft, questionnaire.MEASUREMENTS_PART, read_version)
    _store(draft=draft, document=document, user=user, action=AuditEvent.Action.FILE_REMOVED,
           summary=f"Removed {name} from draft design revision {draft.number}",
           file_changes={FILE_KEY: [_describe_file(files[0]), None]} if files else None)
    for measurement in files:
        stored = measurement.file.name
        measurement.delete()
        transaction.on_commit(lambda stored=stored, storage=measurement.file.storage: storage.delete(stored))


# -- far-field patterns -------------------------------------------------------------------------------------

PATTERN_SUFFIXES = (".csv",)
# The parts of a far-field entry a person sets, as form fields name them, with the words a message uses.
PATTERN_FIELDS = {"antenna": "antenna", "absolute": "absolute", "environment": "environment",
                  "environment.model": "environment", "environment.mean_elevation_deg": "mean elevation",
                  "environment.spread_deg": "elevation spread", "environment.xpr_db": "XPR"}


def pattern_entry(*, name: str, antenna: Any, absolute: bool, environment: Mapping[str, Any] | None) -> dict[str, Any]:
    """A far-field measurement entry as the design file holds it; the defaults (relative field, isotropic
    environment) are left out, as a hand-written file would."""
    entry: dict[str, Any] = {"kind": "far-field", "file": name, "antenna": antenna}
    if absolute:
        entry["absolute"] = True
    if environment is not None and environment.get("model") != "isotropic":
        entry["environment"] = dict(environment)
    return entry


def _entry_problems(document: dict[str, Any], indices: list[int], name: str) -> list[Problem]:
    """The parser's problems with the far-field entries at `indices` of `document`, each named by its field
    (`antenna`, `mean elevation (environment.mean_elevation_deg)`) for the form that set it; other parts of
    the draft may be incomplete, which is not this change's concern."""
    try:
        parse_design(document)
    except DesignError as error:
        problems = error.problems
    else:
        return []
    return _named_problems(problems, indices, suffix=f" ({name})")


def _named_problems(problems: list[Problem], indices: list[int], *, suffix: str = "") -> list[Problem]:
    """The problems at the entries `indices`, with the entry's path put in the words of the form's fields:
    `elevation spread (environment.spread_deg)` rather than `measurements[2].environment.spread_deg`."""
    found = []
    for index in indices:
        prefix = f"measurements[{index}]"
        for problem in problems:
            if problem.path == prefix or problem.path.startswith((prefix + ".", prefix + "[")):
                field = problem.path[len(prefix) + 1:]
                label = PATTERN_FIELDS.get(field, field or "entry")
                where = label if label == field or not field else f"{label} ({field})"
                found.append(Problem(where, problem.message + suffix))
    return found


def _comparison_problems(draft: Revision, document: dict[str, Any], indices: list[int],
                         extra: Mapping[str, str]) -> list[Problem]:
    """When the design is complete: whether the patterns at `indices` can be used beside the others
    (rules.measurements: the same frequencies, grid and environment as the other cellular antennas'
    patterns, an elevation spread the grid resolves). `extra` holds the text of files not kept yet."""
    try:
        design = parse_design(document)
    except DesignError:
        return []
    kept = measurement_reader(draft)

    def read_text(file_name: str) -> str:
        return extra[file_name] if file_name in extra else kept(file_name)

    try:
        attach_measurements(design, read_text)
    except DesignError as error:
        return _named_problems(error.problems, indices)
    return []


def _far_field_indices(document: dict[str, Any], *, cellular_only: bool) -> list[int]:
    roles = {a.get("name"): a.get("role") for a in _list(document.get("antennas")) if isinstance(a, dict)}
    return [index for index, entry in enumerate(_list(document.get("measurements")))
            if isinstance(entry, dict) and entry.get("kind") == "far-field"
            and (not cellular_only or roles.get(entry.get("antenna")) in CELLULAR_ROLES)]


def pattern_add(*, revision: Revision, name: str, content: bytes, antenna: str, absolute: bool,
                environment: Mapping[str, Any] | None, user) -> MeasurementFile:
    """Keeps one antenna's far-field pattern (rules.farfield's CSV) with a draft, with its entry in the design's
    measurements (`kind: far-field`, the antenna, whether the field is absolute, the environment).

    Nothing is stored unless the file parses (FarFieldError names the file and line), its entry passes the
    design parser (DesignError, each problem named by the form field: antenna, environment, mean elevation,
    elevation spread, XPR), and, when the design is complete, the pattern can be compared with the other
    cellular antennas' patterns (same frequencies, grid and environment). Raises ValueError for a wrong name
    or size, or a file of that name already kept."""
    require_measurement_role(user, revision)
    name = _upload_name(name, content, PATTERN_SUFFIXES, "a far-field pattern file named .csv")
    text = content.decode("utf-8", errors="replace")
    parse_far_field(text, source=name)
    with transaction.atomic():
        draft = _locked_draft(revision)
        if draft.measurement_files.filter(name=name).exists():
            raise ValueError(f"{name}: a file of that name is already kept with this draft; remove it first")
        document = json.loads(json.dumps(draft.document))
        entries = _list(document.get("measurements"))
        document["measurements"] = [*entries, pattern_entry(name=name, antenna=antenna, absolute=absolute,
                                                            environment=environment)]
        index = len(entries)
        problems = (_entry_problems(document, [index], name)
                    or _comparison_problems(draft, document, [index], {name: text}))
        if problems:
            raise DesignError(problems)
        measurement = MeasurementFile(revision=draft, name=name, kind=MeasurementFile.Kind.FAR_FIELD,
                                      size_bytes=len(content), sha256=MeasurementFile.digest(content),
                                      uploaded_by=user)
        measurement.file.save(name, ContentFile(content), save=False)
        measurement.save()
        _store(draft=draft, document=document, user=user, action=AuditEvent.Action.FILE_ADDED,
               summary=f"Added the far-field pattern {name} of {antenna} to draft design revision {draft.number}",
               file_changes={FILE_KEY: [None, _describe_file(measurement)]})
    return measurement


@transaction.atomic
def pattern_update(*, revision: Revision, name: str, antenna: str, absolute: bool,
                   environment: Mapping[str, Any] | None, user, read_version: int | None = None) -> list[str]:
    """Sets the antenna, `absolute` and environment of a kept far-field pattern. The cellular antennas'
    patterns are compared pair by pair in one environment, so a new environment is set on each of them
    (the files whose entries also changed are returned). Refuses, storing nothing: DesignError for an entry
    the parser or the comparison refuses (named by form field), DraftConflict if the measurements changed
    after `read_version` (None skips that check)."""
    require_measurement_role(user, revision)
    draft = _locked_draft(revision)
    document = json.loads(json.dumps(draft.document))
    entries = _list(document.get("measurements"))
    index = next((i for i, entry in enumerate(entries) if isinstance(entry, dict) and entry.get("file") == name
                  and entry.get("kind") == "far-field"), None)
    if index is None:
        raise ValueError(f"file: no far-field pattern named {name!r} is listed in the draft's measurements")
    old_environment = entries[index].get("environment")
    entries[index] = {**{key: value for key, value in entries[index].items()
                         if key not in ("antenna", "absolute", "environment")},
                      **pattern_entry(name=name, antenna=antenna, absolute=absolute, environment=environment)}
    changed = [index]
    new_environment = entries[index].get("environment")
    if new_environment != old_environment and index in _far_field_indices(document, cellular_only=True):
        for other in _far_field_indices(document, cellular_only=True):
            if other != index and entries[other].get("environment") != new_environment:
                entries[other] = {key: value for key, value in entries[other].items() if key != "environment"}
                if new_environment is not None:
                    entries[other]["environment"] = new_environment
                changed.append(other)
    if document == draft.document:
        return []
    _require_fresh(draft, questionnaire.MEASUREMENTS_PART, read_version)
    problems = _entry_problems(document, changed, name) or _comparison_problems(draft, document, changed, {})
    if problems:
        raise DesignError(problems)
    _store(draft=draft, document=document, user=user, action=AuditEvent.Action.FILE_MAPPED,
           summary=f"Set the antenna and environment of the far-field pattern {name} in draft design revision "
                   f"{draft.number}")
    return [entries[other]["file"] for other in changed if other != index]


# -- the team's parts library -----------------------------------------------------------------------------

class LibraryEntryChanged(Exception):
    """The library entry changed again after the version the author reviewed; nothing was stored."""

    def __init__(self, entry: Entry):
        self.entry = entry
        super().__init__(f"{entry.name} is now version {entry.version}")


def _usable_entry(entry: Entry, *, product: Product, kind: str) -> Entry:
    if entry.team_id != product.team_id or entry.kind != kind:
        raise PermissionDenied("That library entry is not one of this team's parts of that kind.")
    return entry


def _shared_environment(document: dict[str, Any], antenna: str) -> dict[str, Any] | None:
    """The environment a copied pattern of `antenna` is judged in: the cellular antennas' patterns are compared
    in one environment (pattern_update keeps them so), so a cellular antenna's pattern takes theirs; any other
    antenna's, and the first pattern of a design, the default (isotropic)."""
    roles = {a.get("name"): a.get("role") for a in _list(document.get("antennas")) if isinstance(a, dict)}
    if roles.get(antenna) not in CELLULAR_ROLES:
        return None
    entries = _list(document.get("measurements"))
    for index in _far_field_indices(document, cellular_only=True):
        if entries[index].get("antenna") != antenna and isinstance(entries[index].get("environment"), dict):
            return dict(entries[index]["environment"])
    return None


def _copy_library_files(*, draft: Revision, document: dict[str, Any], entry: Entry, antenna: str,
                        user) -> tuple[Changes, list[str]]:
    """Copies the entry's files the draft doesn't keep into its measurements, in the document and as files: a
    Touchstone file with port 1 measuring `antenna`, a far-field pattern as `antenna`'s (its `absolute` from the
    library, the environment the draft's other cellular patterns share). A different file of the same name in
    the draft, or a pattern the draft can't use beside its others (rules.measurements: frequencies, grid,
    environment), refuses the whole change (ValueError, naming the file and the field)."""
    kept = {measurement.name: measurement.sha256 for measurement in draft.measurement_files.all()}
    to_copy: list[tuple[EntryFile, bytes, str]] = []
    texts: dict[str, str] = {}  # what the copies hold, for the comparison before they are kept
    patterns: list[str] = []
    problems: list[Problem] = []
    for stored in entry.files.all():
        if kept.get(stored.name) == stored.sha256:
            continue
        if stored.name in kept:
            raise ValueError(f"{stored.name}: the draft already keeps a different file of that name; remove it from "
                             "the measurements first, then fill again")
        content = stored.read_bytes()
        text = texts[stored.name] = content.decode("utf-8", errors="replace")
        measurements = _list(document.get("measurements"))
        if stored.kind == EntryFile.Kind.FAR_FIELD:
            parse_far_field(text, source=stored.name)  # checked when kept; a reader grown stricter says so here
            patterns.append(stored.name)
            document["measurements"] = [*measurements, pattern_entry(
                name=stored.name, antenna=antenna, absolute=stored.absolute,
                environment=_shared_environment(document, antenna))]
            problems += _entry_problems(document, [len(measurements)], stored.name)
            to_copy.append((stored, content, MeasurementFile.Kind.FAR_FIELD))
        else:
            network = parse_touchstone(text, source=stored.name)
            document["measurements"] = [*measurements, {"file": stored.name,
                                                         "ports": [antenna] + [None] * (network.port_count - 1)}]
            to_copy.append((stored, content, MeasurementFile.Kind.S_PARAMETERS))
    if patterns and not problems:
        problems = _comparison_problems(draft, document, [
            index for index, listed in enumerate(_list(document.get("measurements")))
            if isinstance(listed, dict) and listed.get("file") in patterns], texts)
    if problems:  # before any file is written: nothing is half stored
        raise ValueError("; ".join(f"{problem.path}: {problem.message}" for problem in problems)
                         + f" (a far-field pattern of library part {entry.name})")
    copied: list[MeasurementFile] = []
    for stored, content, kind in to_copy:
        measurement = MeasurementFile(revision=draft, name=stored.name, kind=kind, size_bytes=len(content),
                                      sha256=MeasurementFile.digest(content), uploaded_by=user)
        measurement.file.save(stored.name, ContentFile(content), save=False)
        measurement.save()
        copied.append(measurement)
    keys = [FILE_KEY] if len(copied) == 1 else [f"{FILE_KEY}[{index}]" for index in range(len(copied))]
    return ({key: [None, _describe_file(measurement) + f", from library part {entry.name} version {entry.version}"]
             for key, measurement in zip(keys, copied, strict=True)}, [measurement.name for measurement in copied])


@transaction.atomic
def draft_library_fill(*, revision: Revision, section: questionnaire.Section, answers: Mapping[str, Any],
                       target: str, entry: Entry, read_version: int, user) -> tuple[Revision, list[str]]:
    """Saves a posted section with one of its parts filled from a library entry: an antenna row (`target` its
    index, or "new" for a new row) or the modem ("modem"). The values are copied in with a note of the entry's
    name and version, and an antenna entry's files are copied into the measurements. One versioned, audited
    write, refused (DraftConflict) if the section changed after `read_version`. Returns the draft and the names
    of the files copied."""
    require_role(user, revision.product.team, Role.AUTHOR)
    kind = MODULE if target == library_use.MODEM else ANTENNA
    _usable_entry(entry, product=revision.product, kind=kind)
    if entry.is_retired:
        raise ValueError(f"{entry.name} is retired in the library; restore it there to use it")
    draft = _locked_draft(revision)
    document = questionnaire.apply_answers(draft.document, section, answers)  # what was typed meanwhile stays
    if kind == MODULE:
        document = library_use.fill_modem(document, entry)
        where = "the modem"
    else:
        rows = _list(document.get("antennas"))
        index = None if target == "new" else int(target)
        if index is not None and not 0 <= index < len(rows):
            raise ValueError(f"antennas[{index}]: no such antenna row in the draft")
        document = library_use.fill_antenna(document, index, entry)
        filled_row = document["antennas"][len(rows) if index is None else index]
        where = f"antenna {filled_row.get('name')}"
    _require_fresh(draft, section.slug, read_version)
    file_changes, copied = ({}, [])
    if kind == ANTENNA:
        file_changes, copied = _copy_library_files(draft=draft, document=document, entry=entry,
                                                   antenna=str(filled_row.get("name")), user=user)
    draft = _store(draft=draft, document=document, user=user, action=AuditEvent.Action.LIBRARY_FILLED,
                   summary=f"Filled {where} from library part {entry.name} version {entry.version} in draft "
                           f"design revision {draft.number}" + (f", with {len(copied)} file(s)" if copied else ""),
                   file_changes=file_changes)
    return draft, copied


@transaction.atomic
def draft_library_apply(*, revision: Revision, kind: str, antenna: str | None, entry: Entry, entry_version: int,
                        keys: list[str], with_files: bool, read_version: int, user) -> Revision:
    """Applies a newer version of a library entry to the part of the draft that noted an older one: the chosen
    fields (`keys`) take the entry's values, the note moves to the entry's version, and (`with_files`) its new
    files are copied in. Refused, with nothing stored, if the entry changed after `entry_version`
    (LibraryEntryChanged) or the part's section changed after `read_version` (DraftConflict)."""
    require_role(user, revision.product.team, Role.AUTHOR)
    _usable_entry(entry, product=revision.product, kind=kind)
    current = Entry.objects.get(pk=entry.pk)
    if current.version != entry_version:
        raise LibraryEntryChanged(current)
    draft = _locked_draft(revision)
    part = library_use.target_object(draft.document, kind, antenna)
    if part is None or part[library_use.NOTE].get("name") != current.name:
        raise ValueError(f"{'the modem' if antenna is None else 'antenna ' + antenna} of the draft no longer notes "
                         f"library part {current.name}")
    section = questionnaire.PRODUCT if kind == MODULE else questionnaire.ANTENNAS
    _require_fresh(draft, section.slug, read_version)
    document = library_use.apply_offer(draft.document, kind, antenna, current, keys)
    file_changes: Changes = {}
    if with_files and kind == ANTENNA and antenna is not None:
        file_changes, _ = _copy_library_files(draft=draft, document=document, entry=current, antenna=antenna,
                                              user=user)
    noted = part[library_use.NOTE].get("version")
    where = "the modem" if antenna is None else f"antenna {antenna}"
    return _store(draft=draft, document=document, user=user, action=AuditEvent.Action.LIBRARY_APPLIED,
                  summary=f"Applied library part {current.name} version {noted} → {current.version} to {where} of "
                          f"draft design revision {draft.number}", file_changes=file_changes)
