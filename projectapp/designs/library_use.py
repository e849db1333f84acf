"""Using the team's parts library in a design document: filling an antenna or the modem from an entry, and
what a newer version of that entry would change.

The design stays self-contained: the entry's values are copied in, and a note names the entry and its version
(`antennas[i].library`, `modem.library`: `{"name": ..., "version": n}`), which the engine ignores. The values
stay editable; a later version of the entry reaches the design only when its author applies it.
"""

import copy
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from typing import Any

from projectapp.designs import questionnaire
from projectapp.library.forms import PART_FIELDS
from projectapp.library.models import Entry
from projectapp.library.parts import ANTENNA, MODULE, filled, part_keys

NOTE = "library"
MODEM = "modem"


def library_note(entry: Entry) -> dict[str, Any]:
    return {"name": entry.name, "version": entry.version}


def _module_values(modem: Mapping[str, Any], values: Mapping[str, Any]) -> dict[str, Any]:
    """A module's values as a design takes them: the design keeps the bands it selected that the module has
    (its bands are the product's choice), and takes the module's bands only when it selected none of them."""
    result = dict(values)
    chosen = modem.get("bands") if isinstance(modem.get("bands"), list) else []
    supported = values.get("bands") if isinstance(values.get("bands"), list) else None
    if supported is not None:
        kept = [band for band in chosen if band in supported]
        result["bands"] = kept or list(supported)
    return result


def fill_target(kind: str, target: Mapping[str, Any], entry: Entry, *,
                only: Iterable[str] | None = None) -> dict[str, Any]:
    """`target` (an antenna or the modem object) with the entry's values and the note of its version."""
    values = _module_values(target, entry.values) if kind == MODULE else entry.values
    result = filled(kind, target, values, only=only)
    result[NOTE] = library_note(entry)
    return result


def _document(document: Any) -> dict[str, Any]:
    return copy.deepcopy(document) if isinstance(document, dict) else {}


def fill_antenna(document: Any, index: int | None, entry: Entry) -> dict[str, Any]:
    """The document with antenna row `index` filled from `entry`; None adds a row (named like the questionnaire's
    new rows, main if there is none yet)."""
    updated = _document(document)
    antennas = updated.get("antennas") if isinstance(updated.get("antennas"), list) else []
    if index is None:
        role = "main" if not any(isinstance(a, dict) and a.get("role") == "main" for a in antennas) else "receive"
        antennas.append({"name": questionnaire.unique_antenna_name(antennas, "ANT"), "role": role})
        index = len(antennas) - 1
    row = antennas[index] if isinstance(antennas[index], dict) else {}
    antennas[index] = fill_target(ANTENNA, row, entry)
    updated["antennas"] = antennas
    return updated


def fill_modem(document: Any, entry: Entry) -> dict[str, Any]:
    updated = _document(document)
    modem = updated.get("modem") if isinstance(updated.get("modem"), dict) else {}
    updated["modem"] = fill_target(MODULE, modem, entry)
    return updated


# -- a newer version of a noted entry -------------------------------------------------------------------

@dataclass(frozen=True)
class FieldChange:
    key: str
    label: str
    now: Any  # in the draft
    after: Any  # once applied


@dataclass(frozen=True)
class Offer:
    """A part of the draft filled from a library entry that has a newer version since."""

    kind: str  # antenna or module
    antenna: str | None  # the antenna's name in the draft; None for the modem
    entry: Entry
    noted_version: int
    changes: tuple[FieldChange, ...]
    new_files: tuple[str, ...]  # files of the entry the draft doesn't keep

    @property
    def where(self) -> str:
        return f"antenna {self.antenna}" if self.antenna is not None else "the modem"


def _label(kind: str, key: str) -> str:
    return next((spec.label for spec in PART_FIELDS[kind] if spec.key == key), key)


def changes_from(kind: str, target: Mapping[str, Any], entry: Entry) -> list[FieldChange]:
    """What filling `target` from `entry` would change, field by field (the note aside)."""
    values = _module_values(target, entry.values) if kind == MODULE else entry.values
    after = filled(kind, target, values)
    keys = part_keys(kind, [*target, *after])
    return [FieldChange(key, _label(kind, key), target.get(key), after.get(key)) for key in keys
            if target.get(key) != after.get(key)]


def noted_parts(document: Any) -> list[tuple[str, str | None, Mapping[str, Any]]]:
    """(kind, antenna name or None for the modem, the object) of every part that carries a library note."""
    found: list[tuple[str, str | None, Mapping[str, Any]]] = []
    source = document if isinstance(document, dict) else {}
    modem = source.get("modem")
    if isinstance(modem, dict) and isinstance(modem.get(NOTE), dict):
        found.append((MODULE, None, modem))
    for antenna in source.get("antennas") if isinstance(source.get("antennas"), list) else []:
        if isinstance(antenna, dict) and isinstance(antenna.get(NOTE), dict) and isinstance(antenna.get("name"), str):
            found.append((ANTENNA, antenna["name"], antenna))
    return found


def noted_names(document: Any) -> list[str]:
    return [str(part[NOTE].get("name")) for _, _, part in noted_parts(document)]


def offers_for(document: Any, entries: Mapping[str, Entry], kept_files: Mapping[str, str]) -> list[Offer]:
    """The parts whose noted entry has a newer version than the note; `entries` by name (the team's),
    `kept_files` the draft's measurement files (name → SHA-256)."""
    found = []
    for kind, antenna, part in noted_parts(document):
        note = part[NOTE]
        entry = entries.get(note.get("name"))
        noted = note.get("version")
        if entry is None or entry.kind != kind or not isinstance(noted, int) or entry.version <= noted:
            continue
        new_files = tuple(stored.name for stored in entry.files.all() if kept_files.get(stored.name) != stored.sha256)
        found.append(Offer(kind, antenna, entry, noted, tuple(changes_from(kind, part, entry)),
                           new_files if kind == ANTENNA else ()))
    return found


def target_object(document: Any, kind: str, antenna: str | None) -> Mapping[str, Any] | None:
    for found_kind, name, part in noted_parts(document):
        if found_kind == kind and name == antenna:
            return part
    return None


def apply_offer(document: Any, kind: str, antenna: str | None, entry: Entry, keys: Iterable[str]) -> dict[str, Any]:
    """The document with the chosen fields of a part taken from the entry's current version, and its note
    moved to that version (what was not chosen stays as the draft has it)."""
    updated = _document(document)
    if kind == MODULE:
        updated["modem"] = fill_target(MODULE, updated.get("modem") or {}, entry, only=keys)
        return updated
    updated["antennas"] = [fill_target(ANTENNA, row, entry, only=keys)
                           if isinstance(row, dict) and row.get("name") == antenna else row
                           for row in updated.get("antennas") or []]
    return updated
