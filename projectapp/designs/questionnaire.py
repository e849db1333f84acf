"""The design questionnaire: sections of questions, each bound to a path in the design document.

Inputs are named by their document path (`modem.category`, `antennas[0].position_mm[2]`), so reading a
form back is one generic step and the parser's problems (which carry the same paths) land beside the
right field. What a person typed is stored as typed when it can't be read as the expected kind: the
parser then explains it, and nothing is silently dropped.
"""

import copy
import math
import re
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from functools import cache
from pathlib import Path
from typing import Any, Protocol

from django.http import QueryDict

from projectapp.designs import polarization_words
from projectapp.typed_values import read_number, read_ranges, show_number, show_ranges
from rules.catalog import DEFAULT_POWER_CLASS, bands, categories, power_classes
from rules.design import EFFICIENCY_SOURCES, ENVIRONMENTS, MATERIALS, MOUNTINGS, ROLES, find_band
from rules.physics import quarter_wave_mm


@dataclass(frozen=True)
class Question:
    key: str  # path relative to the section's root (an antenna row for antenna questions)
    label: str
    # text, choice, bool, number, integer, vector, polarization, ranges, bands, band_numbers, number_or_bands
    kind: str
    help: str
    unit: str = ""
    choices: tuple[tuple[str, str], ...] = ()
    parts: tuple[str, ...] = ()  # labels of a vector's numbers
    blank_label: str = ""  # a choice question's "not given" option, if it may be left out
    default: str = ""  # what the parser assumes when the answer is left out (design-file.md defaults)
    reshapes: bool = False  # changing it changes which questions or options the section shows
    term: str = ""  # the trade term it asks about (rules/data/terms.toml id): a "what is this?" beside it
    whole_number: bool = False  # a choice stored as a JSON integer (the power class), not as text
    # Categories the question applies to (None: all). A question that doesn't apply is neither shown nor read,
    # so what is stored for it stays as it was.
    categories: tuple[str, ...] | None = None

    def applies_to(self, document: Any) -> bool:
        if self.categories is None:
            return True
        return get_path(document, "modem.category") in self.categories


@dataclass(frozen=True)
class Section:
    slug: str
    title: str
    intro: str
    questions: tuple[Question, ...]
    roots: tuple[str, ...]  # top-level paths this section owns


CATEGORY_CHOICES = tuple((category.id, f"{category.label}") for category in categories().values())
# Each class with the conducted output it stands for (rules/data/power_classes.toml), so a PM can match the
# datasheet's "Class 3 (23 dBm)" line.
POWER_CLASS_CHOICES = tuple(
    (str(number), f"class {number}: {power.max_output_dbm:g} dBm" + (" (most modules)" if number == DEFAULT_POWER_CLASS
                                                                    else ""))
    for number, power in sorted(power_classes().items()))
LTE_M = ("cat-m1", "cat-m2")
ROLE_CHOICES = (
    ("main", "main (sends and receives)"),
    ("receive", "receive (diversity, MIMO)"),
    ("gnss", "GNSS (satellite navigation)"),
    ("wlan", "WLAN (Wi-Fi, Bluetooth)"),
)
assert tuple(role for role, _ in ROLE_CHOICES) == ROLES, "every role the parser accepts, and only those"
EFFICIENCY_SOURCE_CHOICES = (
    ("datasheet", "antenna datasheet"),
    ("measured", "measured in this product"),
)
assert tuple(source for source, _ in EFFICIENCY_SOURCE_CHOICES) == EFFICIENCY_SOURCES

PRODUCT = Section(
    "product", "Product and modem",
    "What the product is and which cellular module it carries. The module's datasheet and its "
    "regulatory approval documents have most of these answers.",
    (
        Question("product.name", "Product name", "text", "The name the team uses for this product."),
        Question("product.revision", "Hardware revision", "text",
                 "The board or prototype revision this design describes (for example 'B' or 'EVT2')."),
        Question("modem.category", "UE category", "choice",
                 "The module's LTE or NR category, on the first page of its datasheet (for example 'Cat M1' or "
                 "'Cat 1bis'). It decides how many receive antennas the product needs.",
                 choices=CATEGORY_CHOICES, reshapes=True, term="ue-category"),
        Question("modem.bands", "Bands", "bands",
                 "The bands the product must work on: the intersection of what the module supports (datasheet, "
                 "'supported bands') and what the target operators use. Start from a region preset and trim.",
                 term="band"),
        Question("modem.rx_ports", "Receive antenna ports on the module", "integer",
                 "How many antenna connectors or pads the module has for receiving, main included (datasheet, "
                 "pin description: look for 'ANT_MAIN', 'ANT_DIV' or 'ANT_RX'). Leave empty if unsure.",
                 term="receive-branch"),
        Question("modem.operator_single_antenna_approval", "An operator approved one antenna", "bool",
                 "Tick only if an operator has approved in writing running this category with a single "
                 "antenna (relevant to Cat 1). Keep the approval with the design record.",
                 term="carrier-acceptance"),
        Question("modem.gain_limits_dbi", "Maximum antenna gain allowed by the module's approval", "band_numbers",
                 "The module's regulatory approval (grant or declaration) lists the highest antenna gain per band "
                 "it was approved with. Copy them here; leave a band empty if no limit is given.", unit="dBi",
                 term="regulatory-approval"),
        Question("modem.power_class", "UE power class", "choice",
                 "The module's maximum transmit power class, in its datasheet's RF characteristics (for example "
                 "'Class 3, 23 dBm'). Most modules are class 3; some LTE-M and NB-IoT modules are class 5 "
                 "(20 dBm). It sets the uplink budget and the radiated power estimate.",
                 choices=POWER_CLASS_CHOICES, default=str(DEFAULT_POWER_CLASS), whole_number=True,
                 term="power-class"),
        Question("modem.conducted_sensitivity_dbm", "Conducted receive sensitivity per band", "band_numbers",
                 "The module datasheet's reference sensitivity at the antenna pad, per band (a negative number "
                 "such as -101.5). Leave a band empty if the datasheet does not give it.", unit="dBm",
                 term="conducted-sensitivity"),
        Question("modem.full_duplex", "The module runs LTE-M in full duplex (FD-FDD)", "bool",
                 "Most LTE-M modules are half-duplex (HD-FDD): they send and receive in turn, which caps the "
                 "data rate. Tick only if the datasheet says full-duplex FDD.", categories=LTE_M, term="duplex"),
        Question("modem.ntn", "The module supports satellite (NTN) access", "bool",
                 "Tick if the module can connect through satellites (non-terrestrial networks, 3GPP Rel-17 and "
                 "later); only then can the satellite bands be chosen."),
    ),
    ("product", "modem"),
)

ENCLOSURE = Section(
    "enclosure", "Enclosure and ground plane",
    "The box around the electronics and the ground of the main board. The mechanical drawing has "
    "these numbers; use the same corner as origin for the antenna positions.",
    (
        Question("enclosure.size_mm", "Enclosure outer size", "vector",
                 "Length, width and height of the enclosure from the mechanical drawing.", unit="mm",
                 parts=("length", "width", "height")),
        Question("enclosure.material", "Enclosure material", "choice",
                 "What the enclosure is made of around the antennas. 'Mixed' means metal parts (a frame, a "
                 "plate, a coated surface) in an otherwise plastic box.",
                 choices=tuple((material, material) for material in MATERIALS), default="plastic"),
        Question("ground_plane_mm", "Main board ground plane", "vector",
                 "Length and width of the main board's copper ground (usually the board outline). Embedded "
                 "antennas use it as their counterpoise, so its length matters at low frequencies.", unit="mm",
                 parts=("length", "width"), term="ground-plane"),
    ),
    ("enclosure", "ground_plane_mm"),
)

ANTENNA_QUESTIONS = (
    Question("name", "Name", "text", "A short label, unique in the design (as on the schematic: ANT1, DIV)."),
    Question("role", "Role", "choice",
             "What the antenna is for. 'main' sits on the module's main port: it sends and receives. 'receive' is "
             "a second cellular path that only receives (diversity, MIMO). GNSS and WLAN antennas serve other "
             "radios: not counted as cellular, but checked for interference from the cellular ones.",
             choices=ROLE_CHOICES, term="antenna-role"),
    Question("mounting", "Mounting", "choice",
             "'internal' sits inside the enclosure (chip, flex, PCB trace); 'external' is outside on a "
             "connector or cable.", choices=tuple((mounting, mounting) for mounting in MOUNTINGS),
             default="internal"),
    Question("position_mm", "Feed point position", "vector",
             "Where the antenna's feed point is, measured from the enclosure's corner on the mechanical "
             "drawing.", unit="mm", parts=("x", "y", "z"), term="feed-point"),
    Question("polarization", "Polarization axis", "polarization",
             "Which way the antenna's main electric field points, along the enclosure's length, width or height "
             "(or at an angle in one of their planes). The antenna datasheet's radiation-pattern page or its "
             "maker can tell; for a chip or flex antenna it is usually along its long side. 'Another direction' "
             "takes x, y, z numbers (1, 0, 0 is along the length).", parts=("x", "y", "z"), term="polarization"),
    Question("ranges_mhz", "Rated frequency ranges", "ranges",
             "The ranges on the antenna datasheet, in MHz, separated by commas: '698-960, 1710-2690'.",
             unit="MHz"),
    Question("peak_gain_dbi", "Peak gain", "number_or_bands",
             "From the antenna datasheet's gain table: one figure for every band, or each band's own figure "
             "(datasheets list peak gain per band; the approval limits are per band too). A band left empty "
             "takes the figure for every band, if one is given.", unit="dBi", term="dbi"),
    Question("efficiency_pct", "Total efficiency per band", "band_numbers",
             "Total efficiency per band, in percent: from the antenna datasheet or a chamber measurement in "
             "this product.", unit="%", term="efficiency"),
    Question("efficiency_source", "Where the efficiency comes from", "choice",
             "A datasheet figure is measured on the maker's reference board and is usually better than in "
             "the product. Choose 'measured' only for figures measured with the antenna in this product: "
             "they then count as measured evidence in the checklist.", choices=EFFICIENCY_SOURCE_CHOICES,
             default="datasheet", term="basis"),
    Question("size_mm", "Element size", "vector", "The antenna element's bounding box from its datasheet.",
             unit="mm", parts=("length", "width", "height")),
    Question("cable_loss_db", "Cable loss", "number",
             "Loss of the cable or feed line between module and antenna (external antennas), from the cable's "
             "datasheet: loss per metre times length.", unit="dB", term="db-dbm"),
)

ANTENNAS = Section(
    "antennas", "Antennas",
    "Every antenna the product carries: the cellular ones, and GNSS or WLAN antennas that sit beside them. "
    "Add a row per antenna; positions and polarization let the checklist judge spacing.",
    ANTENNA_QUESTIONS,
    ("antennas",),
)

DEPLOYMENT = Section(
    "deployment", "Deployment",
    "Where and how the product is used.",
    (
        Question("deployment.environment", "Environment", "choice",
                 "Where the product usually sits: outdoors, inside a building, deep inside (basements, "
                 "cabinets), underground (meter pits, manholes), or in a vehicle.",
                 choices=tuple((environment, environment) for environment in ENVIRONMENTS),
                 blank_label="not given"),
        Question("deployment.required_dl_kbps", "Sustained downlink need", "number",
                 "The data rate the product must receive, sustained (firmware updates, commands).", unit="kbps"),
        Question("deployment.required_ul_kbps", "Sustained uplink need", "number",
                 "The data rate the product must send, sustained (reports, images).", unit="kbps"),
        Question("deployment.body_distance_mm", "Closest distance to people", "number",
                 "How close a person's body comes to the product in normal use (worn: 0; wall-mounted out of "
                 "reach: the distance to where people stand).", unit="mm", term="rf-exposure"),
        Question("deployment.radiated_targets_dbm.trp", "Radiated power target (TRP) per band", "band_numbers",
                 "The least total radiated power the operator requires, per band, copied from its device "
                 "requirements (for example 19 dBm). Leave empty where the operator sets none.", unit="dBm",
                 term="trp"),
        Question("deployment.radiated_targets_dbm.tis", "Radiated sensitivity target (TIS) per band",
                 "band_numbers",
                 "The weakest total isotropic sensitivity the operator accepts, per band, from the same "
                 "requirements (a negative number such as -98 dBm; the device must reach it or lower).",
                 unit="dBm", term="tis"),
    ),
    ("deployment",),
)

SECTIONS: tuple[Section, ...] = (PRODUCT, ENCLOSURE, ANTENNAS, DEPLOYMENT)
SECTIONS_BY_SLUG: Mapping[str, Section] = {section.slug: section for section in SECTIONS}

# The parts of a design document that change independently, each with the top-level keys it holds: the
# questionnaire's sections and the measurements (changed by the measurement files' forms). A save checks
# for changes by others only in its own part, so two people editing different parts both keep their work.
MEASUREMENTS_PART = "measurements"
PARTS: Mapping[str, tuple[str, ...]] = {**{section.slug: section.roots for section in SECTIONS},
                                        MEASUREMENTS_PART: ("measurements",)}
PART_TITLES: Mapping[str, str] = {**{section.slug: section.title for section in SECTIONS},
                                  MEASUREMENTS_PART: "Measurements"}


def part_content(document: Any, part: str) -> dict[str, Any]:
    source = document if isinstance(document, dict) else {}
    return {root: source.get(root) for root in PARTS[part]}


def parts_changed(before: Any, after: Any) -> list[str]:
    return [part for part in PARTS if part_content(before, part) != part_content(after, part)]


@dataclass(frozen=True)
class BandPreset:
    slug: str
    label: str
    bands: tuple[str, ...]


@cache
def band_presets() -> tuple[BandPreset, ...]:
    with (Path(__file__).parent / "band_presets.toml").open("rb") as handle:
        tables = tomllib.load(handle)
    presets = []
    for slug, table in tables.items():
        unknown = [name for name in table["bands"] if name not in bands()]
        if unknown:
            raise ValueError(f"band_presets.toml [{slug}]: unknown bands {unknown}")
        presets.append(BandPreset(slug, table["label"], tuple(table["bands"])))
    return tuple(presets)


# -- reading typed values back --------------------------------------------------------------------------

def get_path(document: Any, path: str) -> Any:
    """document['antennas'][0]['name'] for 'antennas[0].name'; None where the path leads nowhere."""
    node = document
    for token in re.findall(r"[^.\[\]]+|\[\d+\]", path):
        if token.startswith("["):
            index = int(token[1:-1])
            node = node[index] if isinstance(node, list) and index < len(node) else None
        else:
            node = node.get(token) if isinstance(node, dict) else None
        if node is None:
            return None
    return node


def _set(target: dict[str, Any], dotted: str, value: Any) -> None:
    """Sets target['a']['b'] for 'a.b', creating objects on the way; None removes the key, and an object
    below the top level that this leaves empty goes too ('deployment.radiated_targets_dbm' once both its
    questions are emptied)."""
    keys = dotted.split(".")
    if value is None:
        nodes = [target]
        for key in keys[:-1]:
            child = nodes[-1].get(key)
            if not isinstance(child, dict):
                return
            nodes.append(child)
        nodes[-1].pop(keys[-1], None)
        for depth in range(len(nodes) - 1, 1, -1):  # nodes[depth] is the object at keys[depth - 1]
            if nodes[depth]:
                break
            nodes[depth - 1].pop(keys[depth - 1], None)
        return
    node = target
    for key in keys[:-1]:
        if not isinstance(node.get(key), dict):
            node[key] = {}
        node = node[key]
    node[keys[-1]] = value


_UNSTORABLE = re.compile("[\x00\ud800-\udfff]")


def storable(raw: str) -> str:
    """What was typed, with the characters no database can hold (NUL, lone surrogates) replaced by U+FFFD,
    as a decoder marks what it could not read. Stored so, the parser names the field and asks for a retype."""
    return _UNSTORABLE.sub("\ufffd", raw)


def _read_question(question: Question, data: QueryDict, prefix: str) -> Any:
    name = prefix + question.key

    def get(key: str) -> str:
        return storable(data.get(key, ""))

    if question.kind == "text":
        text = get(name).strip()
        return text or None
    if question.kind == "choice":
        choice = get(name)
        if question.whole_number and choice.isdecimal() and len(choice) < 4:
            return int(choice)
        return choice or None
    if question.kind == "bool":
        return data.get(name) in ("on", "true", "1")
    if question.kind in ("number", "integer"):
        return read_number(get(name), question.unit)
    if question.kind == "ranges":
        return read_ranges(get(name), question.unit or "MHz")
    if question.kind == "vector":
        values = [read_number(get(f"{name}[{index}]"), question.unit) for index in range(len(question.parts))]
        return None if all(value is None for value in values) else values
    if question.kind == "bands":
        return [find_band(name_).name if find_band(name_) else name_ for name_ in map(storable, data.getlist(name))]
    if question.kind == "band_numbers":
        return _read_band_numbers(data, name, question.unit)
    if question.kind == "number_or_bands":
        # Band figures win; a figure for every band typed beside them fills the bands left empty, so that
        # nothing typed is dropped and the document holds one form (a number or an object of band to number).
        every_band = read_number(get(name), question.unit)
        per_band = _read_band_numbers(data, name, question.unit)
        if per_band is None:
            return every_band
        if every_band is not None:
            shown = [key[len(name) + 1:] for key in data if key.startswith(name + ".")]
            per_band = {**{storable(band): every_band for band in shown}, **per_band}
        return per_band
    raise ValueError(f"unknown question kind {question.kind}")


def _read_band_numbers(data: QueryDict, name: str, unit: str) -> dict[str, Any] | None:
    result = {}
    for key in data:
        if key.startswith(name + "."):
            value = read_number(storable(data.get(key, "")), unit)
            if value is not None:
                result[storable(key[len(name) + 1:])] = value
    return result or None


def _read_polarization(question: Question, data: QueryDict, name: str, stored: Any) -> Any:
    """The polarization from its words (`<name>.words`, `<name>.angle_deg`) or, for another direction, its x, y,
    z numbers. A choice that still names the stored vector keeps it as stored (an imported [2, 0, 0] is not
    rewritten to [1, 0, 0] by saving an untouched form); a post without the words (an older page) reads the
    numbers."""
    words = data.get(name + ".words")
    if words is None or words == polarization_words.CUSTOM:
        values = [read_number(storable(data.get(f"{name}[{index}]", "")), question.unit)
                  for index in range(len(question.parts))]
        return None if all(value is None for value in values) else values
    if words == "":
        return None
    if words not in polarization_words.AXES and words not in polarization_words.PLANES:
        return stored  # not one of the choices: nothing a person chose, so nothing changes
    typed_angle = data.get(name + ".angle_deg", "")
    angle = int(typed_angle) if typed_angle.isdecimal() and int(typed_angle) in polarization_words.ANGLES_DEG else 0
    now = polarization_words.describe(stored)
    if now.words == words and (words in polarization_words.AXES or now.angle_deg == angle):
        return stored
    return polarization_words.vector_for(words, angle)


def _is_shown_default(question: Question, value: Any, stored: Any) -> bool:
    """A left-out answer comes back as the default the form shows for it: it stays left out, so saving an
    untouched section stores nothing new."""
    if stored is not None:
        return False
    if question.kind == "bool":
        return value is False  # an unticked box the document never had stays out of it
    return bool(question.default) and value is not None and str(value) == question.default


def apply_section(document: Mapping[str, Any], section: Section, data: QueryDict) -> dict[str, Any]:
    """A copy of `document` with the section's answers from the posted form in place of the old ones.

    Keys the questionnaire doesn't ask about (other sections, fields other tools added) are kept.
    """
    updated = copy.deepcopy(dict(document))
    if section is ANTENNAS:
        updated["antennas"] = _read_antennas(updated.get("antennas"), data)
        return updated
    for question in section.questions:
        if not question.applies_to(document):  # not shown, so not posted: what is stored stays
            continue
        value = _read_question(question, data, "")
        if _is_shown_default(question, value, get_path(updated, question.key)):
            continue
        _set(updated, question.key, value)
    for root in section.roots:
        if isinstance(updated.get(root), dict) and not updated[root] and root not in ("product", "modem"):
            del updated[root]
    return updated


def apply_answers(document: Mapping[str, Any], section: Section, data: QueryDict) -> dict[str, Any]:
    """A copy of `document` with a posted section applied: its answers, then a region preset (the product
    section) or an antenna row action (add, remove:N, duplicate:N) if the post carries one. Nothing outside
    the section's roots changes."""
    updated = apply_section(document, section, data)
    preset = data.get("preset")
    if preset and "modem" in section.roots:
        chosen = next((item for item in band_presets() if item.slug == preset), None)
        if chosen is not None:
            updated = set_bands(updated, chosen.bands)
    action = data.get("action", "")
    if action == "drop-bands" and "modem" in section.roots:
        updated = set_bands(updated, tuple(name for name in get_path(updated, "modem.bands") or []
                                           if name not in bands_the_category_cannot_use(updated)))
    if section is ANTENNAS and action.startswith(("add", "remove:", "duplicate:")):
        verb, _, index = action.partition(":")
        updated = antennas_action(updated, verb, int(index) if index.isdecimal() and len(index) < 6 else None)
    return updated


def _read_antennas(existing: Any, data: QueryDict) -> list[dict[str, Any]]:
    rows = sorted({int(match.group(1)) for key in data
                   if (match := re.match(r"^antennas\[(\d+)\]\.", key))})
    old = existing if isinstance(existing, list) else []
    antennas = []
    for row in rows:
        prefix = f"antennas[{row}]."
        antenna = copy.deepcopy(old[row]) if row < len(old) and isinstance(old[row], dict) else {}
        for question in ANTENNA_QUESTIONS:
            if question.kind == "polarization":
                value = _read_polarization(question, data, prefix + question.key, antenna.get(question.key))
            else:
                value = _read_question(question, data, prefix)
            if _is_shown_default(question, value, antenna.get(question.key)):
                continue
            if value is None or (question.key == "cable_loss_db" and value == 0 and "cable_loss_db" not in antenna):
                antenna.pop(question.key, None)
            else:
                antenna[question.key] = value
        antennas.append(antenna)
    return antennas


def unique_antenna_name(antennas: list[Any], stem: str) -> str:
    taken = {antenna.get("name") for antenna in antennas if isinstance(antenna, dict)}
    number = 1
    while f"{stem}{number}" in taken:
        number += 1
    return f"{stem}{number}"


def antennas_action(document: Mapping[str, Any], action: str, index: int | None) -> dict[str, Any]:
    """Add, remove or duplicate an antenna row. A copy is placed a quarter wave from the original (not on top of
    it, which would be an instant spacing blocker) and, of the main antenna, takes the receive role."""
    updated = copy.deepcopy(dict(document))
    antennas = updated.get("antennas")
    if not isinstance(antennas, list):
        antennas = []
    if action == "add":
        role = "main" if not any(isinstance(a, dict) and a.get("role") == "main" for a in antennas) else "receive"
        antennas.append({"name": unique_antenna_name(antennas, "ANT"), "role": role, "mounting": "internal"})
    elif action == "remove" and index is not None and 0 <= index < len(antennas):
        antennas.pop(index)
    elif action == "duplicate" and index is not None and 0 <= index < len(antennas):
        twin = copy.deepcopy(antennas[index]) if isinstance(antennas[index], dict) else {}
        twin["name"] = unique_antenna_name(antennas, str(twin.get("name") or "ANT") + "-copy")
        if twin.get("role") == "main":  # the module has one main port: a copy is another receive path
            twin["role"] = "receive"
        moved = copy_position_mm(twin.get("position_mm"), get_path(updated, "enclosure.size_mm"),
                                 lowest_band_mhz(updated))
        if moved is not None:
            twin["position_mm"] = moved
        antennas.insert(index + 1, twin)
    updated["antennas"] = antennas
    return updated


def bands_the_category_cannot_use(document: Any) -> list[str]:
    """The chosen bands of the other technology than the chosen category's (B-bands under NR, n-bands under LTE),
    and those the catalog doesn't know: what a category change offers to drop."""
    category = categories().get(str(get_path(document, "modem.category")))
    chosen = get_path(document, "modem.bands")
    if category is None or not isinstance(chosen, list):
        return []
    return _unusable([str(name) for name in chosen], category.technology)


def _unusable(chosen: list[str], technology: str) -> list[str]:
    found = {name: find_band(name) for name in chosen}
    return [name for name, band in found.items() if band is None or band.technology != technology]


def lowest_band_mhz(document: Any) -> float:
    """The lowest band edge of the design's bands as they stand (those the catalog knows); with none chosen yet,
    the lowest edge of any terrestrial band in the catalog, so a copy placed by it is far enough apart for
    whatever bands come."""
    chosen = [find_band(name) for name in get_path(document, "modem.bands") or [] if isinstance(name, str)]
    known = [band for band in chosen if band is not None]
    return min(band.lowest_mhz for band in (known or [band for band in bands().values() if not band.satellite]))


def copy_position_mm(position: Any, enclosure_size: Any, lowest_mhz: float) -> list[float] | None:
    """Where a duplicated antenna goes: a quarter wave (rules.physics, at the lowest band edge) from the original
    along the first of +x, +y, -x, -y that stays inside the enclosure, else as far as the enclosure allows in the
    direction with the most room. Without an enclosure size, +x by a quarter wave. None when the original has no
    readable position (the copy keeps what it has)."""
    if not (isinstance(position, list) and len(position) == 3
            and all(isinstance(item, (int, float)) and not isinstance(item, bool) for item in position)):
        return None
    offset_mm = float(math.ceil(quarter_wave_mm(lowest_mhz)))
    size = enclosure_size if (isinstance(enclosure_size, list) and len(enclosure_size) == 3 and all(
        isinstance(item, (int, float)) and not isinstance(item, bool) and item > 0 for item in enclosure_size)) else None
    moves = [(0, 1.0), (1, 1.0), (0, -1.0), (1, -1.0)]
    if size is None:
        axis, sign, step = 0, 1.0, offset_mm
    else:
        room = {(axis, sign): (size[axis] - position[axis]) if sign > 0 else position[axis] for axis, sign in moves}
        fitting = [move for move in moves if room[move] >= offset_mm]
        axis, sign = fitting[0] if fitting else max(moves, key=lambda move: room[move])
        step = offset_mm if fitting else max(0.0, room[(axis, sign)])
    moved = [float(item) for item in position]
    moved[axis] = round(moved[axis] + sign * step, 1)
    return [int(item) if float(item).is_integer() else item for item in moved]


def set_bands(document: Mapping[str, Any], band_names: tuple[str, ...]) -> dict[str, Any]:
    updated = copy.deepcopy(dict(document))
    modem = updated.setdefault("modem", {}) if isinstance(updated.get("modem"), dict) else {}
    modem["bands"] = list(band_names)
    updated["modem"] = modem
    return updated


# -- presenting a section ---------------------------------------------------------------------------------

@dataclass
class Field:
    """One question as the template shows it: its input name(s), current value(s) and problems."""

    question: Question
    name: str
    value: Any
    errors: list[str] = field(default_factory=list)
    parts: list[tuple[str, str, str]] = field(default_factory=list)  # (label, input name, shown value)
    options: list[tuple[str, str, bool]] = field(default_factory=list)  # (value, label, selected)
    described: Any = None  # polarization: its words (polarization_words.Described)
    angles: list[tuple[int, bool]] = field(default_factory=list)  # polarization: the angle choices (selected)
    unusable: list[str] = field(default_factory=list)  # bands: chosen ones the category can't use

    @property
    def input_id(self) -> str:
        return input_id(self.name)


def input_id(name: str) -> str:
    """The id of a question's input (its first part's, for a vector: `-0` etc. appended)."""
    return "q-" + re.sub(r"[^A-Za-z0-9]+", "-", name).strip("-")


class WordedProblem(Protocol):
    """A parser problem as the page words it (projectapp.designs.problem_words.Worded)."""

    path: str

    @property
    def beside_field(self) -> str: ...

    @property
    def in_checklist(self) -> str: ...


def _covers(name: str, path: str) -> bool:
    return path == name or path.startswith((name + "[", name + "."))


def _errors_for(path: str, problems: Sequence[WordedProblem]) -> list[str]:
    return [problem.beside_field for problem in problems if _covers(path, problem.path)]


def _field(question: Question, name: str, value: Any, problems: Sequence[WordedProblem], selected_bands: list[str],
           technology: str | None) -> Field:
    item = Field(question, name, value, _errors_for(name, problems))
    if question.kind == "vector":
        values = value if isinstance(value, list) else []
        item.parts = [(label, f"{name}[{index}]", show_number(values[index]) if index < len(values) else "")
                      for index, label in enumerate(question.parts)]
        if value is not None and not isinstance(value, list):
            item.errors.append(f"stored value {value!r} is not a list")
    elif question.kind == "polarization":
        values = value if isinstance(value, list) else []
        item.parts = [(label, f"{name}[{index}]", show_number(values[index]) if index < len(values) else "")
                      for index, label in enumerate(question.parts)]
        item.described = polarization_words.describe(value)
        item.options = [("", "not given", item.described.words == "")] + [
            (choice, label, choice == item.described.words) for choice, label in polarization_words.CHOICES]
        item.angles = [(angle, angle == (item.described.angle_deg or 0)) for angle in polarization_words.ANGLES_DEG]
        if value is not None and not isinstance(value, list):
            item.errors.append(f"stored value {value!r} is not a list of x, y, z")
    elif question.kind == "choice":
        current = question.default if value is None else str(value)
        options = [(choice, label, choice == current) for choice, label in question.choices]
        if current and current not in dict(question.choices):
            options.insert(0, (current, f"{current} (not accepted)", True))
        if question.blank_label or not current:
            options.insert(0, ("", question.blank_label or "choose…", current == ""))
        item.options = options
    elif question.kind == "bands":
        chosen = [str(band) for band in value] if isinstance(value, list) else []
        if technology is not None:
            item.unusable = _unusable(chosen, technology)
        for band in bands().values():
            if technology is None or band.technology == technology or band.name in chosen:
                label = f"{band.name} ({band.duplex} {band.lowest_mhz:g}–{band.highest_mhz:g} MHz)"
                item.options.append((band.name, label, band.name in chosen))
        known = {option[0] for option in item.options}
        item.options += [(name_, f"{name_} (unknown)", True) for name_ in chosen if name_ not in known]
    elif question.kind == "band_numbers":
        values = value if isinstance(value, dict) else {}
        shown = list(dict.fromkeys([*selected_bands, *values]))
        item.parts = [(band, f"{name}.{band}", show_number(values.get(band))) for band in shown]
    elif question.kind == "number_or_bands":
        values = value if isinstance(value, dict) else {}
        shown = list(dict.fromkeys([*selected_bands, *values]))
        item.parts = [(band, f"{name}.{band}", show_number(values.get(band))) for band in shown]
        item.value = "" if isinstance(value, dict) else show_number(value)
    elif question.kind == "ranges":
        item.value = show_ranges(value)
    elif question.kind in ("number", "integer"):
        item.value = show_number(value)
    elif question.kind == "text":
        item.value = "" if value is None else str(value)
    return item


def section_fields(section: Section, document: Mapping[str, Any], problems: Sequence[WordedProblem]) -> Any:
    """The section's fields, each with its problems in words (problem_words); for the antenna section, one
    list of fields per antenna row."""
    selected = [str(name) for name in get_path(document, "modem.bands") or [] if isinstance(name, str)]
    category = categories().get(str(get_path(document, "modem.category")))
    technology = category.technology if category else None
    if section is ANTENNAS:
        antennas = document.get("antennas")
        rows = []
        for index, antenna in enumerate(antennas if isinstance(antennas, list) else []):
            source = antenna if isinstance(antenna, dict) else {}
            rows.append([_field(question, f"antennas[{index}].{question.key}", source.get(question.key), problems,
                                selected, technology) for question in ANTENNA_QUESTIONS])
        return rows
    return [_field(question, question.key, get_path(document, question.key), problems, selected, technology)
            for question in section.questions if question.applies_to(document)]


def section_problems(section: Section, problems: Sequence[WordedProblem], shown: list[Field]) -> list[str]:
    """Problems of this section that no field shows (for example 'antennas: expected a list')."""
    names = [item.name for item in shown]
    return [problem.in_checklist for problem in problems
            if problem.path.split(".")[0].split("[")[0] in section.roots
            and not any(_covers(name, problem.path) for name in names)]
