"""Every write to a team's parts library goes through these functions (keyword-only, `<entity>_<action>`).

Each change is checked (values through the design parser, files through their reader), bumps the entry's
version, and is recorded in the audit trail with the fields before and after. A change names the version it
was read at; if the entry changed since, EntryConflict says so and nothing is stored.
"""

import json
import re
from dataclasses import dataclass, field
from typing import Any

from django.core.files.base import ContentFile
from django.db import transaction
from django.utils import timezone

from projectapp.audit.models import AuditEvent
from projectapp.audit.services import audit_record
from projectapp.library.access import require_editor
from projectapp.library.models import Entry, EntryFile
from projectapp.library.parts import ANTENNA, MODULE, part_problems
from projectapp.teams.models import Team
from rules.design import Problem
from rules.farfield import FarFieldError, parse_far_field
from rules.touchstone import TouchstoneError, parse_touchstone

LIBRARY_FORMAT = "earshot-library/1"
NAME_MAX = 120
DESCRIPTION_MAX = 300
MAX_FILE_BYTES = 20_000_000  # as a draft's measurement files
TOUCHSTONE_SUFFIXES = (".s1p", ".s2p", ".s3p", ".s4p", ".s5p", ".s6p", ".s7p", ".s8p", ".ts")
FAR_FIELD_SUFFIXES = (".csv",)  # as a draft's far-field uploads (designs.services.PATTERN_SUFFIXES)
FILE_KINDS = (EntryFile.Kind.TOUCHSTONE, EntryFile.Kind.FAR_FIELD)
_CONTROL = re.compile(r"[\x00-\x1f\x7f]")


class PartInvalid(ValueError):
    """The change can't be stored; `problems` names every reason with its path. Nothing was stored."""

    def __init__(self, problems: list[Problem]):
        self.problems = problems
        super().__init__("\n".join(str(problem) for problem in problems))


class EntryConflict(Exception):
    """Someone changed the entry after the version this change was read at; nothing was stored."""

    def __init__(self, *, entry: Entry, read_version: int):
        self.entry, self.read_version = entry, read_version
        super().__init__(f"{entry.name} changed since version {read_version} (now version {entry.version})")


# -- what an entry holds, flat, for the audit trail's before and after ---------------------------------------

def _describe_file(stored: EntryFile) -> str:
    if stored.kind == EntryFile.Kind.FAR_FIELD:
        return (f"far-field pattern ({'absolute' if stored.absolute else 'relative'}), {stored.size_bytes} bytes, "
                f"SHA-256 {stored.sha256}")
    return f"{stored.size_bytes} bytes, SHA-256 {stored.sha256}"


def _state(entry: Entry) -> dict[str, Any]:
    state: dict[str, Any] = {"description": entry.description or None}
    state.update({f"values.{key}": value for key, value in (entry.values or {}).items()})
    if entry.pk is not None:
        state.update({f"file {stored.name}": _describe_file(stored) for stored in entry.files.all()})
    return state


def _changes(before: dict[str, Any], after: dict[str, Any]) -> dict[str, list[Any]]:
    return {key: [before.get(key), after.get(key)] for key in [*before, *(k for k in after if k not in before)]
            if before.get(key) != after.get(key)}


def _record(entry: Entry, *, user, action: str, summary: str, changes: dict[str, list[Any]] | None = None) -> None:
    audit_record(team=entry.team, subject=entry.audit_subject, actor=user, action=action, summary=summary,
                 changes=changes)


# -- checks ------------------------------------------------------------------------------------------------

def name_form_problems(name: Any, path: str = "name") -> list[Problem]:
    if not isinstance(name, str) or not name.strip():
        return [Problem(path, "required: expected the part's name, as the team calls it")]
    if len(name) > NAME_MAX or _CONTROL.search(name) or name != name.strip():
        return [Problem(path, f"expected at most {NAME_MAX} characters without line breaks, control characters "
                              "or spaces at either end")]
    return []


def name_problems(*, team: Team, name: Any, path: str = "name") -> list[Problem]:
    """A new entry's name: well formed and not taken in the team (retired entries keep theirs)."""
    problems = name_form_problems(name, path)
    if not problems and Entry.objects.filter(team=team, name=name).exists():
        problems.append(Problem(path, f"{team.name}'s library already has a part named {name!r}"))
    return problems


def description_problems(description: Any, path: str = "description") -> list[Problem]:
    if description is None:
        return []
    if not isinstance(description, str) or len(description) > DESCRIPTION_MAX or _CONTROL.search(description):
        return [Problem(path, f"expected one line of at most {DESCRIPTION_MAX} characters")]
    return []


MAX_VALUES_BYTES = 100_000  # a part's fields as JSON; a design file may hold at most 1 MB


def values_problems(kind: str, values: Any, path: str = "values") -> list[Problem]:
    """The design parser's problems with the part's values (paths under `path`), and a size bound: every design
    filled from the part carries a copy."""
    size = len(json.dumps(values, default=str)) if isinstance(values, dict) else 0
    if size > MAX_VALUES_BYTES:
        return [Problem(path, f"expected at most {MAX_VALUES_BYTES // 1000} kB of values, got {size // 1000} kB")]
    return [Problem(f"{path}.{p.path}" if p.path else path, p.message) for p in part_problems(kind, values)]


def _raise_if(problems: list[Problem]) -> None:
    if problems:
        raise PartInvalid(problems)


def _safe_file_name(name: str) -> str:
    base = name.replace("\\", "/").rsplit("/", 1)[-1].strip()
    return "".join(ch if ch.isalnum() or ch in "._-, " else "-" for ch in base)[:NAME_MAX]


def file_kind(name: str) -> str | None:
    """The kind of file a name says: its suffix, as for a draft's uploads (.s1p to .s8p and .ts are Touchstone,
    .csv a far-field pattern); None for any other name. The two sets of suffixes don't overlap."""
    lowered = name.lower()
    if lowered.endswith(TOUCHSTONE_SUFFIXES):
        return EntryFile.Kind.TOUCHSTONE
    if lowered.endswith(FAR_FIELD_SUFFIXES):
        return EntryFile.Kind.FAR_FIELD
    return None


EXPECTED_NAMES = {EntryFile.Kind.TOUCHSTONE: "a Touchstone file named .s1p to .s8p or .ts",
                  EntryFile.Kind.FAR_FIELD: "a far-field pattern file named .csv"}


def file_problems(*, name: str, content: bytes, path: str = "file", kind: str | None = None) -> list[Problem]:
    """Why a file can't describe a library antenna: its name, size, encoding or what its reader says (the
    engine's own: rules.touchstone or rules.farfield). `kind`, when given, is the kind the file must be."""
    found = file_kind(name)
    if found is None or (kind is not None and found != kind):
        expected = EXPECTED_NAMES.get(kind or "", f"{EXPECTED_NAMES[EntryFile.Kind.TOUCHSTONE]}, or "
                                                  f"{EXPECTED_NAMES[EntryFile.Kind.FAR_FIELD]}")
        return [Problem(path, f"{name or 'file'}: expected {expected}")]
    if len(content) > MAX_FILE_BYTES:
        return [Problem(path, f"{name}: expected at most {MAX_FILE_BYTES // 1_000_000} MB, "
                              f"got {len(content) / 1_000_000:.1f} MB")]
    words = "Touchstone files" if found == EntryFile.Kind.TOUCHSTONE else "far-field pattern files"
    try:
        text = content.decode("utf-8")
    except UnicodeDecodeError:
        return [Problem(path, f"{name}: expected text (UTF-8); {words} are plain text")]
    try:
        if found == EntryFile.Kind.TOUCHSTONE:
            parse_touchstone(text, source=name)
        else:
            parse_far_field(text, source=name)
    except (TouchstoneError, FarFieldError) as error:
        return [Problem(path, str(error))]
    return []


def absolute_problems(*, kind: str, absolute: Any, path: str = "absolute") -> list[Problem]:
    if not isinstance(absolute, bool):
        return [Problem(path, "expected true or false")]
    if absolute and kind != EntryFile.Kind.FAR_FIELD:
        return [Problem(path, "only a far-field pattern can be absolute (|E_theta|² + |E_phi|² the realized "
                              "gain); a Touchstone file holds S-parameters")]
    return []


def _with_kind(kind: str) -> str:
    if kind not in (ANTENNA, MODULE):
        raise PartInvalid([Problem("kind", f"expected {ANTENNA} or {MODULE}, got {kind!r}")])
    return kind


# -- entries -----------------------------------------------------------------------------------------------

@transaction.atomic
def entry_create(*, team: Team, kind: str, name: str, values: dict[str, Any], user,
                 description: str = "") -> Entry:
    require_editor(user, team)
    _with_kind(kind)
    _raise_if(name_problems(team=team, name=name) + description_problems(description) + values_problems(kind, values))
    entry = Entry.objects.create(team=team, kind=kind, name=name, description=description, values=values,
                                 created_by=user, updated_by=user)
    _record(entry, user=user, action=AuditEvent.Action.PART_CREATED,
            summary=f"Added {entry.get_kind_display().lower()} {name} (version 1) to the library",
            changes=_changes({}, _state(entry)))
    return entry


def _locked(entry: Entry, read_version: int | None) -> Entry:
    current = Entry.objects.select_for_update().select_related("team").get(pk=entry.pk)
    if read_version is not None and current.version != read_version:
        raise EntryConflict(entry=current, read_version=read_version)
    return current


def _bump(entry: Entry, *, before: dict[str, Any], user, action: str, summary: str) -> Entry:
    """Stores a change made to `entry` (already locked) as its next version, with its audit event; a change
    that leaves everything as it was writes nothing."""
    changes = _changes(before, _state(entry))
    if not changes:
        return entry
    entry.version += 1
    entry.updated_by = user
    entry.save()
    _record(entry, user=user, action=action, summary=f"{summary} (version {entry.version - 1} → {entry.version})",
            changes={**changes, "version": [entry.version - 1, entry.version]})
    return entry


@transaction.atomic
def entry_update(*, entry: Entry, values: dict[str, Any], description: str, read_version: int | None,
                 user) -> Entry:
    """Replaces an entry's values and description. None as `read_version` skips the check (scripts)."""
    require_editor(user, entry.team)
    current = _locked(entry, read_version)
    _raise_if(description_problems(description) + values_problems(current.kind, values))
    before = _state(current)
    current.values, current.description = values, description
    return _bump(current, before=before, user=user, action=AuditEvent.Action.PART_CHANGED,
                 summary=f"Changed {current.name}")


@transaction.atomic
def entry_duplicate(*, entry: Entry, name: str, user) -> Entry:
    """A new entry (version 1) with the values, description and files of `entry` under a new name."""
    require_editor(user, entry.team)
    _raise_if(name_problems(team=entry.team, name=name))
    copy = Entry.objects.create(team=entry.team, kind=entry.kind, name=name, description=entry.description,
                                values=json.loads(json.dumps(entry.values)), created_by=user, updated_by=user)
    for stored in entry.files.all():
        _keep_file(copy, name=stored.name, content=stored.read_bytes(), user=user, kind=stored.kind,
                   absolute=stored.absolute)
    _record(copy, user=user, action=AuditEvent.Action.PART_CREATED,
            summary=f"Added {name} (version 1) to the library, duplicated from {entry.name} version {entry.version}",
            changes=_changes({}, _state(copy)))
    return copy


@transaction.atomic
def entry_retire(*, entry: Entry, retired: bool, user) -> Entry:
    """Retires an entry (hidden from the pickers; designs that used it keep their values) or restores it.
    The values don't change, so neither does the version."""
    require_editor(user, entry.team)
    current = _locked(entry, None)
    if current.is_retired == retired:
        return current
    current.retired_at = timezone.now() if retired else None
    current.updated_by = user
    current.save(update_fields=["retired_at", "updated_by", "updated_at"])
    _record(current, user=user,
            action=AuditEvent.Action.PART_RETIRED if retired else AuditEvent.Action.PART_RESTORED,
            summary=f"{'Retired' if retired else 'Restored'} {current.name} (version {current.version})",
            changes={"retired": [not retired, retired]})
    return current


def _keep_file(entry: Entry, *, name: str, content: bytes, user, kind: str, absolute: bool) -> EntryFile:
    stored = EntryFile(entry=entry, name=name, kind=kind, absolute=absolute, size_bytes=len(content),
                       sha256=EntryFile.digest(content), uploaded_by=user)
    stored.file.save(name, ContentFile(content), save=False)
    stored.save()
    return stored


def _drop_file(stored: EntryFile) -> None:
    name, storage = stored.file.name, stored.file.storage
    stored.delete()
    transaction.on_commit(lambda: storage.delete(name))


@transaction.atomic
def entry_file_add(*, entry: Entry, name: str, content: bytes, read_version: int | None, user,
                   absolute: bool = False) -> EntryFile:
    """Keeps a file with an antenna entry; it must read as what its name says (file_kind: a Touchstone file or a
    far-field pattern). `absolute` is a far-field pattern's (its field is the realized gain). Raises
    PartInvalid."""
    require_editor(user, entry.team)
    name = _safe_file_name(name)
    current = _locked(entry, read_version)
    if current.kind != ANTENNA:
        raise PartInvalid([Problem("file", "files describe antennas; a module entry keeps none")])
    _raise_if(file_problems(name=name, content=content))
    kind = str(file_kind(name))
    _raise_if(absolute_problems(kind=kind, absolute=absolute))
    if current.files.filter(name=name).exists():
        raise PartInvalid([Problem("file", f"{name}: {current.name} already has a file of that name; remove it "
                                           "first")])
    before = _state(current)
    stored = _keep_file(current, name=name, content=content, user=user, kind=kind, absolute=absolute)
    _bump(current, before=before, user=user, action=AuditEvent.Action.PART_FILE_ADDED,
          summary=f"Added {name} to {current.name}")
    return stored


@transaction.atomic
def entry_file_remove(*, entry: Entry, name: str, read_version: int | None, user) -> Entry:
    require_editor(user, entry.team)
    current = _locked(entry, read_version)
    stored = current.files.filter(name=name).first()
    if stored is None:
        raise PartInvalid([Problem("file", f"{current.name} has no file named {name!r}")])
    before = _state(current)
    _drop_file(stored)
    return _bump(current, before=before, user=user, action=AuditEvent.Action.PART_FILE_REMOVED,
                 summary=f"Removed {name} from {current.name}")


# -- export and import --------------------------------------------------------------------------------------

def _canonical(value: Any) -> Any:
    """Objects with their keys sorted: the database may not keep key order (PostgreSQL's jsonb doesn't), and
    an export must read the same wherever it was made."""
    if isinstance(value, dict):
        return {key: _canonical(value[key]) for key in sorted(value)}
    if isinstance(value, list):
        return [_canonical(item) for item in value]
    return value


def library_export(*, team: Team) -> dict[str, Any]:
    """The whole library as `earshot-library/1`, retired entries included (designs may name them)."""
    entries = Entry.objects.filter(team=team).prefetch_related("files").order_by("name")
    document: dict[str, Any] = {"format": LIBRARY_FORMAT, "antennas": [], "modules": []}
    for entry in entries:
        item: dict[str, Any] = {"name": entry.name, "description": entry.description,
                                "retired": entry.is_retired, "values": _canonical(entry.values)}
        if entry.kind == ANTENNA:
            item["files"] = [_exported_file(stored) for stored in entry.files.all()]
        document["antennas" if entry.kind == ANTENNA else "modules"].append(item)
    return document


def _exported_file(stored: EntryFile) -> dict[str, Any]:
    exported: dict[str, Any] = {"name": stored.name, "kind": stored.kind}
    if stored.kind == EntryFile.Kind.FAR_FIELD:
        exported["absolute"] = stored.absolute
    return {**exported, "sha256": stored.sha256, "text": stored.read_bytes().decode("utf-8")}


def library_export_text(*, team: Team) -> str:
    return json.dumps(library_export(team=team), indent=2, ensure_ascii=False) + "\n"


@dataclass
class _Incoming:
    kind: str
    name: str
    description: str
    retired: bool
    values: dict[str, Any]
    files: dict[str, "_IncomingFile"] = field(default_factory=dict)


@dataclass(frozen=True)
class _IncomingFile:
    content: bytes
    kind: str
    absolute: bool

    def same_as(self, stored: EntryFile) -> bool:
        return (stored.sha256, stored.kind, stored.absolute) == (EntryFile.digest(self.content), self.kind,
                                                                 self.absolute)


@dataclass(frozen=True)
class ImportSummary:
    created: list[str]
    changed: list[str]
    unchanged: list[str]


def _read_incoming(document: Any, team: Team) -> tuple[list[_Incoming], list[Problem]]:
    problems: list[Problem] = []
    if not isinstance(document, dict):
        return [], [Problem("", f"expected an object with \"format\": \"{LIBRARY_FORMAT}\"")]
    if document.get("format") != LIBRARY_FORMAT:
        problems.append(Problem("format", f"expected {json.dumps(LIBRARY_FORMAT)}, got "
                                          f"{json.dumps(document.get('format'))[:40]}"))
    problems += [Problem(key, "not a field of a library file (expected format, antennas, modules)")
                 for key in document if key not in ("format", "antennas", "modules")]
    existing = dict(Entry.objects.filter(team=team).values_list("name", "kind"))
    seen: dict[str, str] = {}
    incoming: list[_Incoming] = []
    for list_key, kind in (("antennas", ANTENNA), ("modules", MODULE)):
        items = document.get(list_key, [])
        if not isinstance(items, list):
            problems.append(Problem(list_key, "expected a list of entries"))
            continue
        for index, item in enumerate(items):
            path = f"{list_key}[{index}]"
            if not isinstance(item, dict):
                problems.append(Problem(path, "expected an object with name and values"))
                continue
            allowed = ("name", "description", "retired", "values") + (("files",) if kind == ANTENNA else ())
            problems += [Problem(f"{path}.{key}", f"not a field of a library {kind} (expected "
                                                  f"{', '.join(allowed)})") for key in item if key not in allowed]
            name = item.get("name")
            problems += name_form_problems(name, f"{path}.name")  # an existing name is an entry to update
            if isinstance(name, str) and existing.get(name) not in (None, kind):
                problems.append(Problem(f"{path}.name", f"{name} is {_a(existing[name])} in this library, not "
                                                        f"{_a(kind)}"))
            if isinstance(name, str) and name in seen:
                problems.append(Problem(f"{path}.name", f"expected a unique name; {name!r} is also {seen[name]}"))
            elif isinstance(name, str):
                seen[name] = path
            description = item.get("description", "")
            problems += description_problems(description, f"{path}.description")
            retired = item.get("retired", False)
            if not isinstance(retired, bool):
                problems.append(Problem(f"{path}.retired", "expected true or false"))
            values = item.get("values")
            problems += values_problems(kind, values, f"{path}.values")
            files = _read_files(item.get("files", []), f"{path}.files", problems) if kind == ANTENNA else {}
            if isinstance(name, str) and isinstance(values, dict):
                incoming.append(_Incoming(kind, name, description if isinstance(description, str) else "",
                                          retired is True, values, files))
    return incoming, problems


def _a(kind: str) -> str:
    return f"an {kind}" if kind[:1] in "aeiou" else f"a {kind}"


def _read_files(value: Any, path: str, problems: list[Problem]) -> dict[str, _IncomingFile]:
    if not isinstance(value, list):
        problems.append(Problem(path, "expected a list of files"))
        return {}
    files: dict[str, _IncomingFile] = {}
    for index, item in enumerate(value):
        item_path = f"{path}[{index}]"
        if not isinstance(item, dict):
            problems.append(Problem(item_path, "expected an object with name and text"))
            continue
        problems += [Problem(f"{item_path}.{key}", "not a field of a library file (expected name, kind, absolute, "
                                                   "sha256, text)") for key in item
                     if key not in ("name", "kind", "absolute", "sha256", "text")]
        name, text = item.get("name"), item.get("text")
        if not isinstance(name, str) or _safe_file_name(name) != name or not name:
            problems.append(Problem(f"{item_path}.name", "expected a plain file name (letters, digits, . _ - , "
                                                         "and spaces)"))
            continue
        if name in files:
            problems.append(Problem(f"{item_path}.name", f"expected a unique file name; {name} is listed twice"))
            continue
        # Exports made before far-field files were kept name no kind: their files are Touchstone.
        kind = item.get("kind", EntryFile.Kind.TOUCHSTONE)
        if kind not in FILE_KINDS:
            problems.append(Problem(f"{item_path}.kind", f"expected {' or '.join(FILE_KINDS)}, got "
                                                         f"{json.dumps(kind)[:40]}"))
            continue
        absolute = item.get("absolute", False)
        found = absolute_problems(kind=kind, absolute=absolute, path=f"{item_path}.absolute")
        if found:
            problems += found
            continue
        if not isinstance(text, str):
            problems.append(Problem(f"{item_path}.text", "expected the file's text"))
            continue
        content = text.encode("utf-8")
        digest = item.get("sha256")
        if digest is not None and digest != EntryFile.digest(content):
            problems.append(Problem(f"{item_path}.sha256", f"the text's SHA-256 is {EntryFile.digest(content)}, "
                                                           "not the one given: the file was changed or cut"))
            continue
        if file_kind(name) != kind:
            problems.append(Problem(f"{item_path}.name", f"{name}: expected {EXPECTED_NAMES[kind]}, as its kind "
                                                         f"{kind} says"))
            continue
        found = file_problems(name=name, content=content, path=f"{item_path}.text", kind=kind)
        problems += found
        if not found:
            files[name] = _IncomingFile(content, kind, absolute)
    return files


@transaction.atomic
def library_import(*, team: Team, text: str | bytes, source: str, user) -> ImportSummary:
    """Makes the library hold the file's entries: new names are added, existing ones changed to match (their
    values, description, retirement and files); entries the file doesn't name stay as they are. Every problem
    is reported at once, each with its path, and then nothing is stored (PartInvalid)."""
    require_editor(user, team)
    try:
        document = json.loads(text)
    except (ValueError, RecursionError) as error:
        raise PartInvalid([Problem("", f"{source}: not valid JSON: {error}")]) from error
    Team.objects.select_for_update().filter(pk=team.pk).first()  # one import at a time per team
    incoming, problems = _read_incoming(document, team)
    _raise_if(problems)
    summary = ImportSummary([], [], [])
    for part in incoming:
        current = Entry.objects.select_for_update().filter(team=team, name=part.name).first()
        if current is None:
            created = Entry.objects.create(team=team, kind=part.kind, name=part.name, description=part.description,
                                           values=part.values, created_by=user, updated_by=user,
                                           retired_at=timezone.now() if part.retired else None)
            for name, incoming_file in part.files.items():
                _keep_file(created, name=name, content=incoming_file.content, user=user, kind=incoming_file.kind,
                           absolute=incoming_file.absolute)
            _record(created, user=user, action=AuditEvent.Action.PART_CREATED,
                    summary=f"Added {part.name} (version 1) to the library from {source[:120]}",
                    changes=_changes({}, _state(created)))
            summary.created.append(part.name)
            continue
        before = _state(current)
        current.values, current.description = part.values, part.description
        kept = {stored.name: stored for stored in current.files.all()}
        for name, stored in kept.items():
            if name not in part.files or not part.files[name].same_as(stored):
                _drop_file(stored)
        for name, incoming_file in part.files.items():
            if name not in kept or not incoming_file.same_as(kept[name]):
                _keep_file(current, name=name, content=incoming_file.content, user=user, kind=incoming_file.kind,
                           absolute=incoming_file.absolute)
        version, retired = current.version, current.is_retired
        _bump(current, before=before, user=user, action=AuditEvent.Action.PART_CHANGED,
              summary=f"Changed {part.name} from {source[:120]}")
        if retired != part.retired:
            entry_retire(entry=current, retired=part.retired, user=user)
        changed = current.version != version or retired != part.retired
        (summary.changed if changed else summary.unchanged).append(part.name)
    return summary
