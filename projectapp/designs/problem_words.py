"""The parser's problems in a person's words, for the questionnaire and the draft's checklist.

The parser (rules.design) names each problem by its document path, in the words the command line prints
(`antennas[1].position_mm: expected 3 numbers in mm; item 1 is "6O"`). On a page the same problem reads
with the question's label, counting from one and naming the antenna by its name: `Feed point position, y:
"6O" is not a number` beside the field, `DIV · Feed point position, y: ...` in the checklist. The wording
follows the parser's message templates (rules/design.py, `_Reader`); a message this module doesn't know
is shown as the parser wrote it, after the label, so nothing is ever hidden.
"""

import json
import re
from dataclasses import dataclass
from typing import Any

from projectapp.designs import questionnaire
from projectapp.typed_values import is_ambiguous_grouping
from rules.catalog import categories
from rules.design import Problem, parse_design_partial


@dataclass(frozen=True)
class Worded:
    """One problem (or unanswered question) as a page shows it."""

    path: str  # the parser's path, kept for the command line and for tests
    where: str  # the antenna or measurement it is about ("DIV"), or ""
    label: str  # the question's label, with the part ("Enclosure outer size, width")
    sentence: str  # what is wrong, in plain words
    anchor: str  # the id of the input to fix it in ("" if none)

    @property
    def beside_field(self) -> str:
        return f"{self.label}: {self.sentence}" if self.label else self.sentence

    @property
    def in_checklist(self) -> str:
        return " · ".join(part for part in (self.where, self.beside_field) if part)


@dataclass(frozen=True)
class _Place:
    question: questionnaire.Question | None
    field_name: str  # the question's input name for this path (antennas[1].position_mm)
    where: str
    part: str  # the part's label (a vector's item, a band's entry), or ""
    item_index: int | None  # the list item the rest of the path points at, if any


def _antenna_name(document: Any, index: int) -> str:
    antennas = document.get("antennas") if isinstance(document, dict) else None
    if isinstance(antennas, list) and index < len(antennas) and isinstance(antennas[index], dict):
        name = antennas[index].get("name")
        if isinstance(name, str) and name.strip():
            return name.strip()
    return f"Antenna {index + 1}"


def _place(path: str, document: Any) -> _Place:
    antenna = re.match(r"^antennas\[(\d+)\](?:\.(\w+)(.*))?$", path)
    if antenna:
        index = int(antenna.group(1))
        where = _antenna_name(document, index)
        key, rest = antenna.group(2), antenna.group(3) or ""
        question = next((q for q in questionnaire.ANTENNA_QUESTIONS if q.key == key), None)
        return _with_part(question, f"antennas[{index}].{key}" if key else f"antennas[{index}]", where, rest)
    measurement = re.match(r"^measurements\[(\d+)\](.*)$", path)
    if measurement:
        entries = document.get("measurements") if isinstance(document, dict) else None
        index = int(measurement.group(1))
        entry = entries[index] if isinstance(entries, list) and index < len(entries) else None
        name = entry.get("file") if isinstance(entry, dict) and isinstance(entry.get("file"), str) else None
        port = re.match(r"^\.ports\[(\d+)\]$", measurement.group(2))
        return _Place(None, f"measurements[{index}]", f"Measurement {name or index + 1}",
                      f"port {int(port.group(1)) + 1}" if port else "", None)
    for section in questionnaire.SECTIONS:
        if section is questionnaire.ANTENNAS:
            continue
        for question in section.questions:
            if path == question.key or path.startswith((question.key + "[", question.key + ".")):
                return _with_part(question, question.key, "", path[len(question.key):])
    return _Place(None, path, "", "", None)


def _with_part(question: questionnaire.Question | None, name: str, where: str, rest: str) -> _Place:
    item = re.match(r"^\[(\d+)\]", rest)
    band = re.match(r"^\.(\w+)$", rest)
    part = ""
    index = int(item.group(1)) if item else None
    if question is not None and index is not None:
        part = question.parts[index] if index < len(question.parts) else f"item {index + 1}"
        if question.kind == "ranges":
            part = f"range {index + 1}"
        elif question.kind == "bands":
            part = ""
    elif band:
        part = band.group(1)
    return _Place(question, name, where, part, index)


def label_of(path: str, document: Any) -> tuple[str, str]:
    """The (where, label) of a document path: `("DIV", "Feed point position, y")`."""
    place = _place(path, document)
    label = place.question.label if place.question else _fallback_label(place.field_name)
    return place.where, ", ".join(part for part in (label, place.part) if part)


def _fallback_label(name: str) -> str:
    last = re.sub(r"\[\d+\]", "", name).rsplit(".", 1)[-1]
    return {"format": "Format", "antennas": "Antennas", "modem": "Modem", "product": "Product",
            "measurements": "Measurements", "enclosure": "Enclosure", "deployment": "Deployment",
            "library": "Library note"}.get(last, last.replace("_", " ").capitalize() if name else "")


def anchor_of(path: str, document: Any) -> str:
    place = _place(path, document)
    if place.question is None:
        return ""
    base = questionnaire.input_id(place.field_name)
    kind = place.question.kind
    if kind in ("vector", "polarization"):  # ids of a vector's parts: -0, -1, -2 (_question.html)
        return f"{base}-{place.item_index or 0}" if kind == "vector" else base
    if kind == "band_numbers":
        return f"{base}-{place.part}" if place.part else f"{base}-label"
    if kind == "number_or_bands":  # the figure for every band, or a band's own (_question.html)
        return f"{base}-{place.part}" if place.part else base
    if kind == "bands":
        return f"{base}-label"
    return base


def _typed(document: Any, path: str) -> Any:
    return questionnaire.get_path(document, path)


def _quoted(value: Any) -> str:
    if isinstance(value, str):
        text = value if len(value) <= 40 else value[:39] + "…"
        return f'"{text}"'
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float) and value.is_integer():
        return f"{value:g}"
    return "nothing" if value is None else str(value)


def _not_a_number(value: Any, unit: str) -> str:
    if isinstance(value, str) and is_ambiguous_grouping(value):
        digits = value.replace(",", "")
        if value.count(",") > 1:
            return f"{_quoted(value)}: type {digits} without the commas"
        return (f"{_quoted(value)} is unclear: type {digits} without the comma, or "
                f"{value.replace(',', '.')} with a point if it is a decimal")
    typed_unit = re.match(r"^\s*[-+\u2212]?[\d.,]+\s*([A-Za-z%/]+)\s*$", value) if isinstance(value, str) else None
    if unit and unit != "any unit" and typed_unit and typed_unit.group(1).lower() in UNIT_WORDS:
        return f"{_quoted(value)} is not in {unit}: type the number in {unit}"
    return f"{_quoted(value)} is not a number" if value is not None else "not answered yet"


# Units people type after a number: one of these that is not the field's (or convertible into it, see
# typed_values.UNIT_FACTORS) is named as the wrong unit rather than as "not a number".
UNIT_WORDS = {"mm", "cm", "m", "in", "inch", "inches", "ft", "hz", "khz", "mhz", "ghz", "db", "dbi", "dbd", "dbm",
              "dbw", "w", "mw", "%", "bps", "kbps", "mbps", "gbps", "kbit/s", "mbit/s", "kb/s", "mb/s", "s", "ms"}


def _number_text(text: str) -> str:
    """A number from a message as people read it: 1e+07 as 10 000 000 (no comma: commas mean decimals to some)."""
    try:
        number = float(text)
    except ValueError:
        return text
    if number.is_integer() and 10_000 <= abs(number) < 1e15:
        return f"{int(number):,}".replace(",", "\u2009")
    return f"{number:g}"


def _in_unit(number: str, unit: str) -> str:
    number = _number_text(number)
    return f"{number} {unit}" if unit and unit not in ("any unit",) else number


def _category_label(category_id: str) -> str:
    category = categories().get(category_id)
    return category.label if category else category_id


def _sentence(problem: Problem, document: Any, place: _Place) -> str:
    message = problem.message
    value = _typed(document, problem.path)
    unit = place.question.unit if place.question else ""

    if match := re.match(r"^expected a number(?: in (?P<unit>[^,]+))?, got .*?(?:; or an object of band to dBi)?$",
                         message):
        return _not_a_number(value, match.group("unit") or unit)
    if match := re.match(r"^expected a number (?P<bounds>(?:at least|at most|above) \S+(?: and at most \S+)?), "
                         r"got (?P<got>\S+)$", message):
        return _out_of_range(match.group("got"), match.group("bounds"), "")
    if match := re.match(r"^expected a number (?P<bounds>.+?) (?P<unit>\S+), got (?P<got>\S+)$", message):
        return _out_of_range(match.group("got"), match.group("bounds"), match.group("unit"))
    if match := re.match(r"^expected a whole number from (\S+) to (\S+), got (.+)$", message):
        return f"{_quoted(value)} is not a whole number from {match.group(1)} to {match.group(2)}"
    if match := re.match(r"^expected (\d+) (positive )?numbers(?: in (?P<unit>[^;]+))?; item (\d+) is (.+)$",
                         message):
        item = _typed(document, f"{problem.path}[{match.group(4)}]")
        if match.group(2) and (isinstance(item, (int, float)) and not isinstance(item, bool)):
            return f"{_in_unit(str(item), match.group('unit') or '')} is not more than 0"
        return _not_a_number(item, match.group("unit") or unit) if item is not None else "not answered yet"
    if match := re.match(r"^expected (\d+) numbers from (\S+) to (\S+)(?: (\S+))?; item (\d+) is (\S+)$", message):
        low, high, shown_unit, number = match.group(2), match.group(3), match.group(4) or "", match.group(6)
        return (f"{_in_unit(number, shown_unit)} is out of range: expected {_number_text(low)} to "
                f"{_in_unit(high, shown_unit)}")
    if match := re.match(r"^expected (\d+) numbers, got (\d+)$", message):
        parts = place.question.parts if place.question else ()
        return (f"expected {match.group(1)} numbers ({', '.join(parts)}), got {match.group(2)}" if parts
                else f"expected {match.group(1)} numbers, got {match.group(2)}")
    if message.startswith("expected a direction"):
        return "has no direction: give at least one of x, y, z a value other than 0"
    if match := re.match(r"^expected one of (.+); got (.+)$", message):
        return f"{_quoted(value)} is not one of the choices ({match.group(1)})"
    if match := re.match(r"^expected at most (\d+) characters, got (\d+)$", message):
        return f"{match.group(2)} characters is too long: at most {match.group(1)}"
    if match := re.match(r"^expected a unique name; .* is also antennas\[(\d+)\]$", message):
        return f"{_quoted(value)} is already the name of antenna {int(match.group(1)) + 1}"
    if match := re.match(r"^unknown band (.+?); accepted: ", message):
        return f"{_band_named(problem.path, match.group(1), value)} is not a band Earshot knows (LTE bands are B1, " \
               "B3, …; NR bands n1, n78, …)"
    if match := re.match(r"^(\S+) is a satellite \(NTN\) band; set modem.ntn to true", message):
        return f"{match.group(1)} is a satellite (NTN) band: tick “{_label_of_key('modem.ntn')}” if it does"
    if match := re.match(r"^expected a UE power class \((.+)\), got (.+)$", message):
        return f"{_quoted(value)} is not a UE power class ({match.group(1)})"
    if match := re.match(r"^(.+?) (?:is an|are) (LTE|NR) bands?; category (\S+) uses (LTE|NR) bands", message):
        verb = "are" if "," in match.group(1) else "is an"
        return (f"{match.group(1)} {verb} {match.group(2)} band{'s' if verb == 'are' else ''}; "
                f"{_category_label(match.group(3))} uses {match.group(4)} bands "
                f"({'n1, n3, …' if match.group(4) == 'NR' else 'B1, B3, …'})")
    if match := re.match(r"^unknown category (.+?); accepted: ", message):
        return f"{_quoted(value)} is not a UE category Earshot knows"
    if re.match(r"^expected a list of \[low, high\] ranges in MHz, got", message):
        return f"{_quoted(value)} is not a list of ranges: write them as 698-960, 1710-2690 (MHz)"
    if match := re.match(r"^expected \[low, high\] with low below high, got \[(\S+), (\S+)\]$", message):
        return f"{match.group(1)}–{match.group(2)} MHz: the lower end comes first"
    if match := re.match(r"^expected an antenna name \((.*)\) or null, got (.+)$", message):
        return f"{_quoted(value)} is not an antenna of this design ({match.group(1)})"
    if message.startswith("required:"):
        return "not answered yet"
    if match := re.match(r"^expected an object, got (.+)$", message):
        return f"stored as {match.group(1)}, which the form can't show; answer it again"
    return message


def _band_named(path: str, shown: str, value: Any) -> str:
    """The unknown band as typed: the value at `path` (a band chosen), or the last key of the path when the
    band is an object's key (a per-band figure: `peak_gain_dbi.B99`), which the parser's message quotes."""
    try:
        name = json.loads(shown)
    except ValueError:
        name = None
    if isinstance(name, str) and path.endswith("." + name):
        return _quoted(name)
    return _quoted(value)


def _label_of_key(key: str) -> str:
    return next((question.label for section in questionnaire.SECTIONS for question in section.questions
                 if question.key == key), key)


def _out_of_range(got: str, bounds: str, unit: str) -> str:
    bounds = re.sub(r"-?[\d.]+(?:e[-+]?\d+)?", lambda match: _number_text(match.group()), bounds)
    return f"{_in_unit(got, unit)} is out of range: expected a number {bounds}{f' {unit}' if unit else ''}"


_OTHER_TECHNOLOGY = re.compile(r"^(\S+) is an (LTE|NR) band; (category \S+ uses (?:LTE|NR) bands.*)$")


def grouped(problems: list[Problem]) -> list[Problem]:
    """The problems with the bands of the wrong technology (a category switched from LTE to NR leaves every
    B-band ticked) said once for all of them, where the first of them was: one line, not eleven."""
    wrong = [(problem, match) for problem in problems
             if problem.path.startswith("modem.bands[") and (match := _OTHER_TECHNOLOGY.match(problem.message))]
    if len(wrong) < 2:
        return list(problems)
    first, match = wrong[0]
    names = ", ".join(item[1].group(1) for item in wrong)
    together = Problem("modem.bands", f"{names} are {match.group(2)} bands; {match.group(3)}")
    dropped = {item[0] for item in wrong}
    return [together if problem is first else problem for problem in problems
            if problem is first or problem not in dropped]


_ITEM = re.compile(r"; item (\d+) is ")


def worded(problem: Problem, document: Any) -> Worded:
    """A problem as the page words it. A list's item named in the message (`item 1 is "6O"`: the parser
    counts from zero) becomes the question's part (`width`), and the anchor that part's input."""
    place = _place(problem.path, document)
    item = _ITEM.search(problem.message)
    target = f"{problem.path}[{item.group(1)}]" if item and place.item_index is None else problem.path
    where, label = label_of(target, document)
    if problem.message.startswith("expected a unique name") and re.match(r"^antennas\[\d+\]", problem.path):
        where = f"Antenna {int(re.findall(r'\d+', problem.path)[0]) + 1}"
    return Worded(problem.path, where, label, _sentence(problem, document, place), anchor_of(target, document))


def unanswered(problem: Problem, document: Any) -> Worded:
    """A required value not given yet (or a list partly filled in) as a to-do item."""
    place = _place(problem.path, document)
    where, label = label_of(problem.path, document)
    sentence = "not answered yet"
    question = place.question
    if question is not None and question.kind == "vector" and question.parts:
        value = _typed(document, problem.path)
        if isinstance(value, list):
            blank = [part for index, part in enumerate(question.parts) if index >= len(value) or value[index] is None]
            sentence = f"{' and '.join(blank)} not answered yet"
    return Worded(problem.path, where, label, sentence, anchor_of(problem.path, document))


# What each input is called when checks wait for it.
INPUT_LABELS = {
    "format": "the design file's format", "product.name": "Product name", "product.revision": "Hardware revision",
    "modem.category": "UE category", "modem.bands": "Bands", "modem.rx_ports": "Receive antenna ports",
    "modem.gain_limits_dbi": "Gain limits of the module's approval",
    "modem.operator_single_antenna_approval": "Operator approval of one antenna",
    "modem.power_class": "Power class", "modem.conducted_sensitivity_dbm": "Conducted sensitivity",
    "modem.full_duplex": "Full duplex", "modem.ntn": "Satellite access", "modem.library": "Modem library note",
    "enclosure.size_mm": "Enclosure outer size", "enclosure.material": "Enclosure material",
    "ground_plane_mm": "Main board ground plane", "antennas": "the antennas (each one's name and role)",
    "antennas[].mounting": "Mounting", "antennas[].position_mm": "Feed point positions",
    "antennas[].polarization": "Polarization", "antennas[].ranges_mhz": "Rated frequency ranges",
    "antennas[].peak_gain_dbi": "Peak gain", "antennas[].efficiency_pct": "Total efficiency per band",
    "antennas[].size_mm": "Element size", "antennas[].cable_loss_db": "Cable loss",
    "antennas[].efficiency_source": "Efficiency source", "antennas[].library": "Antenna library notes",
    "deployment.environment": "Environment", "deployment.required_dl_kbps": "Sustained downlink need",
    "deployment.required_ul_kbps": "Sustained uplink need", "deployment.body_distance_mm": "Closest distance to people",
    "deployment.radiated_targets_dbm": "Radiated targets (TRP, TIS)",
    "measurements": "Measurements",
}


def input_label(name: str) -> str:
    """What an input is called where checks wait for it (tests check every input has words)."""
    return INPUT_LABELS.get(name, name)


@dataclass(frozen=True)
class Waiting:
    """An input that checks wait for, with how many and about what."""

    input: str
    label: str
    count: int
    topics: tuple[str, ...]


def todo(document: Any, checklist: dict[str, Any]) -> dict[str, list[Any]]:
    """What a draft's partial checklist still needs, worded: the questions to answer, the answers to fix and
    the inputs checks wait for (each input once, with the number of checks that need it)."""
    unanswered_items = [unanswered(Problem(item["path"], item["message"]), document)
                        for item in checklist.get("unanswered", ())]
    problem_items = [worded(problem, document) for problem in grouped(
        [Problem(item["path"], item["message"]) for item in checklist.get("problems", ())])]
    by_input: dict[str, list[str]] = {}
    for rule in checklist.get("waiting", ()):
        for name in rule["waiting_for"]:
            by_input.setdefault(name, []).append(rule["topic"])
    waiting = [Waiting(name, input_label(name), len(topics), tuple(dict.fromkeys(t.replace("-", " ") for t in topics)))
               for name, topics in by_input.items()]
    return {"unanswered": unanswered_items, "problems": problem_items, "waiting": waiting}


def still_to_do(document: dict) -> str:
    """What stands between a draft and submitting it, in the words of the checklist's to-do list."""
    partial = parse_design_partial(document)
    asked = [unanswered(problem, document).in_checklist for problem in partial.unanswered]
    parts = []
    if asked:
        shown = "; ".join(asked[:5]) + (f"; and {len(asked) - 5} more" if len(asked) > 5 else "")
        parts.append(f"{len(asked)} question{'s' if len(asked) != 1 else ''} to answer ({shown})")
    if partial.problems:
        count = len(partial.problems)
        parts.append(f"{count} answer{'s' if count != 1 else ''} to fix (beside the questions)")
    return " and ".join(parts) + "; the checklist's to-do list links to each." if parts else \
        "a measurement file can't be used; see the measurements."

