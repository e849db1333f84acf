"""The design document (contract `earshot-design/1`): parse and validate it into typed objects.

One parser serves the command line, the web questionnaire and the import, so a problem reads the same
everywhere. It never stops at the first problem: it walks the whole document and reports every one
with its path (`antennas[1].position_mm`) and what was expected there.
"""

import json
import math
import re
import sys
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field, fields, replace
from functools import lru_cache
from typing import Any

from rules.catalog import DEFAULT_POWER_CLASS, Band, Category, bands, categories, power_classes
from rules.withheld import Withheld, is_withheld

FORMAT = "earshot-design/1"
ROLES = ("main", "receive", "gnss", "wlan")
CELLULAR_ROLES = ("main", "receive")  # the cellular receive branches; gnss and wlan antennas serve other radios
EFFICIENCY_SOURCES = ("datasheet", "measured")
MEASUREMENT_KINDS = ("s-parameters", "far-field")
FIELD_ENVIRONMENTS = ("isotropic", "taga")
MOUNTINGS = ("internal", "external")
MATERIALS = ("plastic", "metal", "mixed")
ENVIRONMENTS = ("outdoor", "indoor", "deep-indoor", "underground", "vehicle")


# -- limits ------------------------------------------------------------------------------------------------
# What the parser accepts, and why. Outside these ranges a value is physically impossible for a cellular
# product, or it can't be stored, drawn or printed; inside them every rule's arithmetic stays finite
# (a ground plane of 1e-308 mm squared is 0, a division by zero; 1e308 squared is infinite). They apply on
# top of the bounds a field states where it is read (efficiency 0-100 %, gain and limits within 30 dBi,
# cable loss 0-40 dB, receive ports 1-8). README.md ("The design file") shows the same table.
@dataclass(frozen=True)
class Limit:
    low: float
    high: float
    why: str
    least_magnitude: float = 0.0  # a direction: its largest component must be at least this in size


# By the unit a field's name ends in (the contract's names carry their units), so a field added later is
# bounded too; `PATH_LIMITS` overrides them for fields that need their own.
UNIT_LIMITS: Mapping[str, Limit] = {
    "_mm": Limit(-100_000.0, 100_000.0,
                 "100 m either way: beyond any product (a rail car or a shipping container included); squares of "
                 "such lengths stay far from float overflow"),
    "_mhz": Limit(1.0, 100_000.0,
                  "1 MHz to 100 GHz: every cellular band (FR2 ends at 71 GHz), GNSS and WLAN, with room; near 0 MHz a "
                  "wavelength has no finite length"),
    "_db": Limit(-300.0, 300.0,
                 "a power ratio of 10^30 either way, far past anything physical; 10^(x/10) stays a finite float"),
    "_dbi": Limit(-300.0, 300.0, "as for dB: 10^(x/10) stays a finite float; the fields themselves are tighter"),
    "_dbm": Limit(-300.0, 300.0,
                  "as for dB: a UE's output is at most about 33 dBm and sensitivities are above -150 dBm"),
    "_pct": Limit(0.0, 100.0, "a share of the power: 0 to 100 %"),
    "_kbps": Limit(0.0, 10_000_000.0,
                   "10 Gbit/s: above the peak rate of every UE category (LTE Cat 20 peaks near 2 Gbit/s)"),
}
SMALLEST_SIZE_MM = 0.01
PATH_LIMITS: Mapping[str, Limit] = {  # `[]` stands for any index
    "enclosure.size_mm": Limit(SMALLEST_SIZE_MM, 100_000.0,
                               "a size from 10 um (thinner than a board's thinnest copper, 12 um) to 100 m"),
    "ground_plane_mm": Limit(SMALLEST_SIZE_MM, 100_000.0,
                             "a size from 10 um (thinner than a board's thinnest copper, 12 um) to 100 m"),
    "antennas[].size_mm": Limit(SMALLEST_SIZE_MM, 100_000.0,
                                "a size from 10 um (a trace antenna's copper is 12-70 um thick) to 100 m"),
    "antennas[].polarization": Limit(-1e6, 1e6,
                                     "a direction in any unit: components within a million either way, the largest "
                                     "at least 0.001, so lengths and angles stay finite", least_magnitude=0.001),
    "deployment.radiated_targets_dbm.trp": Limit(
        -30.0, 40.0, "a total radiated power from -30 dBm (far below any operator's target, 10 to 23 dBm) to 40 dBm "
                     "(above power class 1's 31 dBm with any antenna gain)"),
    "deployment.radiated_targets_dbm.tis": Limit(
        -150.0, -50.0, "a total isotropic sensitivity from -150 dBm (beyond NB-IoT's deepest coverage) to -50 dBm "
                       "(worse than any operator accepts), the range of a conducted sensitivity"),
}
# Text: the longest each field may be. A name is stored in database columns and printed on the record:
# the product and file names match their columns (designs.Product.name, designs.MeasurementFile.name);
# an antenna name is a schematic label ("ANT1", "LTE main, top edge"), and 32 of them make a finding's
# subjects. Any other text field: DEFAULT_TEXT_CHARS.
TEXT_LIMITS: Mapping[str, int] = {
    "product.name": 120,
    "product.revision": 40,
    "antennas[].name": 64,
    "measurements[].file": 120,
}
DEFAULT_TEXT_CHARS = 200
# Far above any cellular product's antenna count (a 5G gateway with 4x4 MIMO, diversity, GNSS and WLAN has
# about a dozen), and what the placement drawing and the PDF can still show legibly: every antenna labelled,
# the pairs with findings drawn.
MAX_ANTENNAS = 32
LIST_LIMITS: Mapping[str, tuple[int, str]] = {"antennas": (MAX_ANTENNAS, "antennas")}
# The whole document. The contract's deepest value sits 5 levels down; 16 leaves room for what other tools
# add, and stays far below where Python's copying and encoding run out of recursion (about 300 levels).
# A design holds a few thousand values at most; the import form takes files up to 1 MB.
MAX_NESTING = 16
MAX_VALUES = 20_000
MAX_DOCUMENT_CHARS = 1_000_000
MAX_CHARACTER_PROBLEMS = 20  # one bad paste should not bury the other problems

# Characters no text in the document may hold: C0 and C1 controls other than tab, line feed and carriage
# return, and lone surrogates (half of a UTF-16 pair: not a character, and no database or UTF-8 file can
# hold one). The contract's own text fields are single-line names, so they refuse tab and line breaks too,
# U+FFFD (what a decoder leaves where a character could not be read) and the bidirectional controls that
# reorder what a reviewer reads. NUL and lone surrogates can't be stored at all (PostgreSQL refuses NUL).
_FREE_TEXT_REFUSED = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f\ud800-\udfff]")
_NAME_REFUSED = re.compile("[\x00-\x1f\x7f-\x9f\ud800-\udfff\ufffd\u202a-\u202e\u2066-\u2069]")
_KEY_REFUSED = re.compile("[\x00-\x1f\x7f-\x9f\ud800-\udfff]")
_UNSTORABLE = re.compile("[\x00\ud800-\udfff]")


@dataclass(frozen=True)
class Problem:
    path: str
    message: str

    def __str__(self) -> str:
        return f"{self.path}: {self.message}" if self.path else self.message


class DesignError(ValueError):
    """The document can't be evaluated; `problems` lists every reason, each with its path."""

    def __init__(self, problems: Sequence[Problem]):
        self.problems = list(problems)
        super().__init__("\n".join(str(problem) for problem in self.problems))


@dataclass(frozen=True)
class LibraryRef:
    """Which entry of the team's parts library the values were filled from, and its version then. The engine
    ignores it: the design carries the values themselves."""

    name: str
    version: int


@dataclass(frozen=True)
class Antenna:
    name: str
    role: str
    mounting: str = "internal"
    position_mm: tuple[float, float, float] | None = None
    polarization: tuple[float, float, float] | None = None
    ranges_mhz: tuple[tuple[float, float], ...] | None = None
    peak_gain_dbi: float | None = None  # one figure for every band
    efficiency_pct: Mapping[str, float] = field(default_factory=dict)
    size_mm: tuple[float, float, float] | None = None
    cable_loss_db: float = 0.0
    peak_gain_dbi_per_band: Mapping[str, float] = field(default_factory=dict)  # when given band by band
    efficiency_source: str = "datasheet"
    library: LibraryRef | None = None

    @property
    def transmits(self) -> bool:
        return self.role == "main"

    @property
    def is_cellular(self) -> bool:
        """A cellular antenna (main or receive); GNSS and WLAN antennas serve other radios."""
        return self.role in CELLULAR_ROLES

    @property
    def gain_given(self) -> bool:
        return self.peak_gain_dbi is not None or bool(self.peak_gain_dbi_per_band)

    def peak_gain_in(self, band_name: str) -> float | None:
        """The datasheet peak gain in a band: the one figure, or the band's entry (None when missing)."""
        if self.peak_gain_dbi is not None:
            return self.peak_gain_dbi
        return self.peak_gain_dbi_per_band.get(band_name)


@dataclass(frozen=True)
class Modem:
    category: Category
    bands: tuple[Band, ...]
    rx_ports: int | None = None
    gain_limits_dbi: Mapping[str, float] = field(default_factory=dict)
    operator_single_antenna_approval: bool = False
    power_class: int = DEFAULT_POWER_CLASS  # UE power class (TS 36.101 clause 6.2.2, TS 38.101-1 clause 6.2.1)
    conducted_sensitivity_dbm: Mapping[str, float] = field(default_factory=dict)  # datasheet, per band
    full_duplex: bool = False  # LTE-M only: the module runs FD-FDD; default half-duplex (HD-FDD), as most do
    ntn: bool = False  # the module supports satellite (non-terrestrial network) access
    library: LibraryRef | None = None

    @property
    def max_output_dbm(self) -> float:
        return power_classes()[self.power_class].max_output_dbm


@dataclass(frozen=True)
class Deployment:
    environment: str | None = None
    required_dl_kbps: float | None = None
    required_ul_kbps: float | None = None
    body_distance_mm: float | None = None
    # Radiated targets per band, copied by the team from its operators' requirements (deployment.
    # radiated_targets_dbm): total radiated power (at least) and total isotropic sensitivity (at most).
    trp_targets_dbm: Mapping[str, float] = field(default_factory=dict)
    tis_targets_dbm: Mapping[str, float] = field(default_factory=dict)


@dataclass(frozen=True)
class FieldEnvironment:
    """The multipath a far-field ECC and mean effective gain are computed in: uniform 3-D ("isotropic"),
    or Taga's model (uniform azimuth, Gaussian elevation about a mean with a spread, cross-polar ratio)."""

    model: str = "isotropic"
    mean_elevation_deg: float = 0.0
    spread_deg: float = 0.0
    xpr_db: float = 0.0


@dataclass(frozen=True)
class MeasurementRef:
    file: str
    ports: tuple[str | None, ...]  # far-field: the one antenna the pattern belongs to
    kind: str = "s-parameters"
    antenna: str | None = None  # far-field only
    environment: FieldEnvironment = field(default_factory=FieldEnvironment)  # far-field only
    absolute: bool = False  # far-field only: |E_theta|^2 + |E_phi|^2 is the realized gain (linear)


@dataclass(frozen=True)
class Design:
    product_name: str
    product_revision: str | None
    modem: Modem
    enclosure_size_mm: tuple[float, float, float] | None
    enclosure_material: str
    ground_plane_mm: tuple[float, float] | None
    antennas: tuple[Antenna, ...]
    deployment: Deployment
    measurements: tuple[MeasurementRef, ...]
    ignored_paths: tuple[str, ...] = ()  # keys the contract doesn't name; kept in the document, unused here

    def antenna(self, name: str) -> Antenna:
        return next(antenna for antenna in self.antennas if antenna.name == name)

    @property
    def lowest_mhz(self) -> float:
        """The lowest frequency of operation in scope: the lowest band edge, uplink or downlink."""
        return min(band.lowest_mhz for band in self.modem.bands)


def _kind(value: Any) -> str:
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return "a number"
    if isinstance(value, str):
        return "text"
    if isinstance(value, list):
        return f"a list of {len(value)}"
    if isinstance(value, dict):
        return "an object"
    return type(value).__name__


def _show(value: Any) -> str:
    if isinstance(value, int) and not isinstance(value, bool) and value.bit_length() > 10_000:
        return f"a number of about {int(value.bit_length() * math.log10(2))} digits"  # too long to print
    text = json.dumps(value) if isinstance(value, (str, int, float, bool, type(None))) else _kind(value)
    return text if len(text) <= 40 else text[:37] + "..."


def _is_number(value: Any) -> bool:
    """A JSON number that is a finite float (an integer of 400 digits is not: it overflows one)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return False
    if isinstance(value, int):
        return -sys.float_info.max <= value <= sys.float_info.max
    return math.isfinite(value)


def _character_problem(character: str) -> str:
    code = f"U+{ord(character):04X}"
    if "\ud800" <= character <= "\udfff":
        return f"lone surrogate {code} not allowed (half of a character: the text was cut or mis-encoded)"
    if character == "\ufffd":
        return (f"replacement character {code} not allowed: a character here could not be read or stored; "
                "retype the text")
    if "\u202a" <= character <= "\u202e" or "\u2066" <= character <= "\u2069":
        return f"bidirectional control {code} not allowed (it changes the order in which the text reads)"
    return f"control character {code} not allowed"


def _key_text(key: str) -> str:
    """A key as it appears in a path: characters that can't be shown escaped, and cut short if long."""
    if not key:
        return '""'
    shown = _NAME_REFUSED.sub(lambda match: f"\\u{ord(match.group()):04x}", key)
    return shown if len(shown) <= 40 else shown[:39] + "…"


@lru_cache(maxsize=4096)  # bounded: band keys come from the document
def _limit_for(path: str) -> Limit | None:
    """The limit of a numeric field: its own row in PATH_LIMITS, else the unit its name ends in; a value
    inside a field (a band's entry, a range's end) takes its field's limit."""
    normalized = re.sub(r"\[\d+\]", "[]", path)
    while normalized:
        if normalized in PATH_LIMITS:
            return PATH_LIMITS[normalized]
        name = normalized.rsplit(".", 1)[-1].removesuffix("[]")
        for suffix, limit in UNIT_LIMITS.items():
            if name.endswith(suffix):
                return limit
        normalized = normalized[:-2] if normalized.endswith("[]") else normalized.rpartition(".")[0]
    return None


def _text_limit(path: str) -> int:
    return TEXT_LIMITS.get(re.sub(r"\[\d+\]", "[]", path), DEFAULT_TEXT_CHARS)


def _scan(document: Any, problem: Callable[[str, str], None], *, refused: re.Pattern[str],
          keys_refused: re.Pattern[str], finite_numbers: bool) -> bool:
    """Walks the whole document without recursion: reports text holding `refused` characters, keys holding
    `keys_refused` ones, non-finite numbers (if asked) and lists longer than LIST_LIMITS; returns False, after
    reporting it, when the document nests deeper than MAX_NESTING or is larger than MAX_VALUES values or
    MAX_DOCUMENT_CHARS characters (then nothing more of it is read)."""
    stack: list[tuple[Any, str, int]] = [(document, "", 0)]
    values = characters = character_problems = 0

    def top(path: str) -> str:
        return re.split(r"[.\[]", path, maxsplit=1)[0] or path

    while stack:
        value, path, level = stack.pop()
        values += 1
        if values > MAX_VALUES:
            problem(top(path), f"too large: the document holds more than {MAX_VALUES} values (a design needs a "
                               "few thousand at most)")
            return False
        if isinstance(value, str):
            characters += len(value)
            found = refused.search(value)
            if found and character_problems < MAX_CHARACTER_PROBLEMS:
                character_problems += 1
                problem(path, _character_problem(found.group()))
        elif isinstance(value, float) and finite_numbers and not math.isfinite(value):
            problem(path, f"expected a finite number, got {_show(value)}")
        elif isinstance(value, (dict, list)):
            items = list(value.items()) if isinstance(value, dict) else list(enumerate(value))
            if items and level >= MAX_NESTING:
                problem(path, f"nested more than {MAX_NESTING} levels deep (the contract's deepest value is 5 "
                              "levels down)")
                return False
            normalized = re.sub(r"\[\d+\]", "[]", path)
            if isinstance(value, list) and normalized in LIST_LIMITS and len(value) > LIST_LIMITS[normalized][0]:
                most, what = LIST_LIMITS[normalized]
                problem(path, f"expected at most {most} {what}, got {len(value)}")
            children = []
            for key, item in items:
                if isinstance(key, str):
                    characters += len(key)
                    child = f"{path}.{_key_text(key)}" if path else _key_text(key)
                    found = keys_refused.search(key)
                    if found and character_problems < MAX_CHARACTER_PROBLEMS:
                        character_problems += 1
                        problem(child, _character_problem(found.group()))
                else:
                    child = f"{path}[{key}]"
                children.append((item, child, level + 1))
            stack.extend(reversed(children))  # problems come out in document order
        if characters > MAX_DOCUMENT_CHARS:
            problem(top(path), f"too large: the document holds more than {MAX_DOCUMENT_CHARS} characters of "
                               "text (the import takes files up to 1 MB)")
            return False
    return True


def storage_problems(document: Any) -> list[Problem]:
    """What keeps a document out of the database: NUL characters and lone surrogates anywhere (PostgreSQL
    and UTF-8 can't hold them), numbers that are not finite, nesting deeper than MAX_NESTING and a size
    beyond MAX_VALUES or MAX_DOCUMENT_CHARS. The questionnaire stores unreadable answers as typed, for the
    parser to explain; this is the little it can't store."""
    problems: list[Problem] = []
    _scan(document, lambda path, message: problems.append(Problem(path, message)), refused=_UNSTORABLE,
          keys_refused=_UNSTORABLE, finite_numbers=True)
    return problems


class _Reader:
    """Walks the document, collecting problems instead of raising at the first one."""

    def __init__(self) -> None:
        self.problems: list[Problem] = []
        self.ignored: list[str] = []
        self._reported: set[Problem] = set()
        # Problems that are an answer not given yet: a required value left out, a list of numbers partly filled
        # in. The contract reports them like any other; a partial design lists them as unanswered.
        self.missing: set[Problem] = set()

    def problem(self, path: str, message: str, *, missing: bool = False) -> None:
        reported = Problem(path, message)
        if reported not in self._reported:  # the scan and a field's reader may find the same thing
            self._reported.add(reported)
            self.problems.append(reported)
        if missing:
            self.missing.add(reported)

    def scan(self, document: Any) -> bool:
        """The whole document, every text and key in it: characters, size, nesting (see `_scan`)."""
        return _scan(document, self.problem, refused=_FREE_TEXT_REFUSED, keys_refused=_KEY_REFUSED,
                     finite_numbers=False)

    def object(self, value: Any, path: str, known: Sequence[str]) -> dict[str, Any] | None:
        if not isinstance(value, dict):
            self.problem(path, f"expected an object, got {_kind(value)}")
            return None
        prefix = f"{path}." if path else ""
        self.ignored.extend(f"{prefix}{_key_text(str(key))}" for key in value if key not in known)
        return value

    def text(self, value: Any, path: str, *, required: bool = False) -> str | None:
        if value is None:
            if required:
                self.problem(path, "required: expected text", missing=_normalized(path) in ANSWERS_REQUIRED)
            return None
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            value = str(value)
        if not isinstance(value, str):
            self.problem(path, f"expected text, got {_kind(value)}")
            return None
        if required and not value.strip():
            self.problem(path, "required: expected non-empty text", missing=_normalized(path) in ANSWERS_REQUIRED)
            return None
        longest = _text_limit(path)
        if len(value) > longest:
            self.problem(path, f"expected at most {longest} characters, got {len(value)}")
            return None
        found = _NAME_REFUSED.search(value)
        if found:
            self.problem(path, _character_problem(found.group()))
            return None
        return value

    def choice(self, value: Any, path: str, choices: Sequence[str], default: str | None) -> str | None:
        if value is None:
            return default
        if value not in choices:
            self.problem(path, f"expected one of {', '.join(choices)}; got {_show(value)}")
            return default
        return str(value)

    def number(
        self, value: Any, path: str, *, minimum: float | None = None, maximum: float | None = None,
        above: float | None = None, unit: str = "",
    ) -> float | None:
        if value is None:
            return None
        if not _is_number(value):
            self.problem(path, f"expected a number{f' in {unit}' if unit else ''}, got {_show(value)}")
            return None
        number = float(value)
        limit = _limit_for(path)
        if limit is not None:
            minimum = limit.low if minimum is None else max(minimum, limit.low)
            maximum = limit.high if maximum is None else min(maximum, limit.high)
        if above is not None and number <= above:
            self.problem(path, f"expected a number above {above:g}{f' {unit}' if unit else ''}, got {number:g}")
            return None
        if (minimum is not None and number < minimum) or (maximum is not None and number > maximum):
            low = "" if minimum is None else f"at least {minimum:g}"
            high = "" if maximum is None else f"at most {maximum:g}"
            bounds = " and ".join(part for part in (low, high) if part)
            self.problem(path, f"expected a number {bounds}{f' {unit}' if unit else ''}, got {number:g}")
            return None
        return number

    def integer(self, value: Any, path: str, *, minimum: int, maximum: int) -> int | None:
        if value is None:
            return None
        if not _is_number(value) or float(value) != int(value) or not minimum <= value <= maximum:
            self.problem(path, f"expected a whole number from {minimum} to {maximum}, got {_show(value)}")
            return None
        return int(value)

    def boolean(self, value: Any, path: str, default: bool) -> bool:
        if value is None:
            return default
        if not isinstance(value, bool):
            self.problem(path, f"expected true or false, got {_show(value)}")
            return default
        return value

    def vector(
        self, value: Any, path: str, length: int, *, positive: bool = False, unit: str = "mm",
    ) -> tuple[float, ...] | None:
        if value is None:
            return None
        if not isinstance(value, list):
            self.problem(path, f"expected {length} numbers, got {_kind(value)}")
            return None
        if len(value) != length:
            self.problem(path, f"expected {length} numbers, got {len(value)}")
            return None
        bad = [index for index, item in enumerate(value) if not _is_number(item) or (positive and item <= 0)]
        if bad:
            what = "positive numbers" if positive else "numbers"
            self.problem(path, f"expected {length} {what} in {unit}; item {bad[0]} is {_show(value[bad[0]])}",
                         missing=all(value[index] is None for index in bad))  # partly answered
            return None
        numbers = tuple(float(item) for item in value)
        limit = _limit_for(path)
        if limit is None:
            return numbers
        outside = [index for index, number in enumerate(numbers) if not limit.low <= number <= limit.high]
        if outside:
            shown_unit = f" {unit}" if unit != "any unit" else ""
            self.problem(path, f"expected {length} numbers from {limit.low:g} to {limit.high:g}{shown_unit}; "
                               f"item {outside[0]} is {numbers[outside[0]]:g}")
            return None
        if max(abs(number) for number in numbers) < limit.least_magnitude:
            shown = ", ".join(f"{number:g}" for number in numbers)
            self.problem(path, f"expected a direction: at least one component of {limit.least_magnitude:g} or "
                               f"more in size, got [{shown}]")
            return None
        return numbers

    def band(self, value: Any, path: str) -> Band | None:
        band = find_band(value)
        if band is None:
            self.problem(path, f"unknown band {_show(value)}; accepted: {', '.join(bands())}")
        return band

    def band_map(
        self, value: Any, path: str, read: Callable[[Any, str], float | None],
    ) -> dict[str, float]:
        if value is None:
            return {}
        if not isinstance(value, dict):
            self.problem(path, f"expected an object of band to number, got {_kind(value)}")
            return {}
        result = {}
        for key, item in value.items():
            item_path = f"{path}.{_key_text(str(key))}"
            band = self.band(key, item_path)
            number = read(item, item_path)
            if band is not None and number is not None:
                result[band.name] = number
        return result


def find_band(value: Any) -> Band | None:
    """Looks a band up by its name; `b12` and `N71` are read as `B12` and `n71`."""
    if not isinstance(value, str) or len(value) < 2:
        return None
    prefix = value[0].upper() if value[0] in "bB" else value[0].lower()
    return bands().get(prefix + value[1:].strip())


@dataclass
class _Parts:
    """What one walk of a document read: each part as far as it could be read. In a part with a problem, the
    value there is None or its default (a Modem without its category, say); the problems say which."""

    product_name: str | None
    product_revision: str | None
    modem: Modem | None
    antennas: list[Antenna] | None  # the antennas with a readable name and role
    antennas_complete: bool  # every entry of the list was an antenna with a readable name and role
    enclosure_size_mm: tuple[float, ...] | None
    enclosure_material: str | None
    ground_plane_mm: tuple[float, ...] | None
    deployment: Deployment
    measurements: tuple[MeasurementRef, ...]

    def design(self, ignored: Sequence[str]) -> Design:
        return Design(
            product_name=self.product_name,  # type: ignore[arg-type]  # None only beside a problem
            product_revision=self.product_revision,
            modem=self.modem,  # type: ignore[arg-type]
            enclosure_size_mm=self.enclosure_size_mm,  # type: ignore[arg-type]
            enclosure_material=self.enclosure_material or "plastic",
            ground_plane_mm=self.ground_plane_mm,  # type: ignore[arg-type]
            antennas=tuple(self.antennas or ()),
            deployment=self.deployment,
            measurements=self.measurements,
            ignored_paths=tuple(ignored),
        )


def _read(document: Any, *, lenient: bool) -> tuple[_Reader, _Parts | None]:
    """Walks the document once, collecting every problem. None for the parts when the document is not an object
    or is too deep or too large to read. `lenient` (partial parsing) ties measurements to the antennas that
    could be read; the strict walk, as the contract has always reported, ties them to none unless every antenna
    could be read."""
    reader = _Reader()
    if not reader.scan(document):  # too deep or too large: nothing more of it is read
        return reader, None
    root = reader.object(document, "", ("format", "product", "modem", "enclosure", "ground_plane_mm",
                                         "antennas", "deployment", "measurements"))
    if root is None:
        return reader, None

    if root.get("format") != FORMAT:
        reader.problem("format", f"expected {_show(FORMAT)}, got {_show(root.get('format'))}")

    product = reader.object(root.get("product"), "product", ("name", "revision")) or {}
    product_name = reader.text(product.get("name"), "product.name", required=True)
    product_revision = reader.text(product.get("revision"), "product.revision")

    modem = _parse_modem(reader, root.get("modem"))
    antennas, antennas_complete = _parse_antennas(reader, root.get("antennas"))

    enclosure_size = None
    enclosure_material: str | None = "plastic"
    if root.get("enclosure") is not None:
        enclosure = reader.object(root["enclosure"], "enclosure", ("size_mm", "material")) or {}
        enclosure_size = reader.vector(enclosure.get("size_mm"), "enclosure.size_mm", 3, positive=True)
        enclosure_material = reader.choice(enclosure.get("material"), "enclosure.material", MATERIALS, "plastic")
    ground_plane = reader.vector(root.get("ground_plane_mm"), "ground_plane_mm", 2, positive=True)

    deployment = Deployment()
    if root.get("deployment") is not None:
        raw = reader.object(root["deployment"], "deployment", ("environment", "required_dl_kbps",
                                                               "required_ul_kbps", "body_distance_mm",
                                                               "radiated_targets_dbm")) or {}
        trp_targets, tis_targets = _parse_radiated_targets(reader, raw.get("radiated_targets_dbm"))
        deployment = Deployment(
            environment=reader.choice(raw.get("environment"), "deployment.environment", ENVIRONMENTS, None),
            required_dl_kbps=reader.number(raw.get("required_dl_kbps"), "deployment.required_dl_kbps",
                                           minimum=0, unit="kbps"),
            required_ul_kbps=reader.number(raw.get("required_ul_kbps"), "deployment.required_ul_kbps",
                                           minimum=0, unit="kbps"),
            body_distance_mm=reader.number(raw.get("body_distance_mm"), "deployment.body_distance_mm",
                                           minimum=0, unit="mm"),
            trp_targets_dbm=trp_targets,
            tis_targets_dbm=tis_targets,
        )

    known = antennas if lenient or antennas_complete else None
    names = {antenna.name for antenna in known or ()}
    measurements = _parse_measurements(reader, root.get("measurements"), names)
    return reader, _Parts(product_name, product_revision, modem, antennas, antennas_complete, enclosure_size,
                          enclosure_material, ground_plane, deployment, measurements)


def parse_design(document: Any) -> Design:
    """Validates a decoded design document; raises DesignError listing every problem."""
    reader, parts = _read(document, lenient=False)
    if reader.problems or parts is None or parts.modem is None or parts.antennas is None:
        raise DesignError(reader.problems)
    return parts.design(reader.ignored)


# -- partial designs --------------------------------------------------------------------------------------
# The inputs a rule may need, named by their path in the document (`[]`: every antenna). A rule declares the
# ones it reads (`@rule(needs=...)`); a partial design withholds each input that is not answered yet or
# has a problem, and only the rules whose inputs are all there run on it.
MODEM_INPUTS = ("modem.category", "modem.bands", "modem.rx_ports", "modem.gain_limits_dbi",
                "modem.operator_single_antenna_approval", "modem.power_class", "modem.conducted_sensitivity_dbm",
                "modem.full_duplex", "modem.ntn", "modem.library")
ANTENNA_FIELD_INPUTS = ("antennas[].mounting", "antennas[].position_mm", "antennas[].polarization",
                        "antennas[].ranges_mhz", "antennas[].peak_gain_dbi", "antennas[].efficiency_pct",
                        "antennas[].size_mm", "antennas[].cable_loss_db", "antennas[].efficiency_source",
                        "antennas[].library")
INPUTS: tuple[str, ...] = (
    "format", "product.name", "product.revision", *MODEM_INPUTS,
    "enclosure.size_mm", "enclosure.material", "ground_plane_mm",
    "antennas",  # the list itself: how many, each one's name and role
    *ANTENNA_FIELD_INPUTS,
    "deployment.environment", "deployment.required_dl_kbps", "deployment.required_ul_kbps",
    "deployment.body_distance_mm", "deployment.radiated_targets_dbm",
    "measurements",  # the entries (files, port maps, patterns); they name antennas, so they need "antennas"
)
# The required values a person answers; their absence is "not answered yet" rather than a problem (so is a
# list of numbers with some left blank, such as an enclosure size with only its length).
ANSWERS_REQUIRED = ("product.name", "modem", "modem.category", "modem.bands", "antennas", "antennas[].name",
                    "antennas[].role")
_INPUT_FIELDS: Mapping[str, str] = {  # an input's attribute on Design, Modem, Antenna or Deployment
    "product.name": "product_name", "product.revision": "product_revision",
    "enclosure.size_mm": "enclosure_size_mm", "enclosure.material": "enclosure_material",
    "ground_plane_mm": "ground_plane_mm", "antennas": "antennas", "measurements": "measurements",
}


_DEPLOYMENT_FIELDS: Mapping[str, tuple[str, ...]] = {  # an input held in fields of other names
    "deployment.radiated_targets_dbm": ("trp_targets_dbm", "tis_targets_dbm"),
}


def _normalized(path: str) -> str:
    return re.sub(r"\[\d+\]", "[]", path)


@lru_cache(maxsize=4096)  # bounded: paths come from the document
def inputs_of(path: str) -> tuple[str, ...]:
    """The inputs a problem at `path` withholds: the input the path lies in (`antennas[2].position_mm[1]`:
    `antennas[].position_mm`; `antennas[2].name`: `antennas`), or every input inside it for a part that
    could not be read at all (`modem`: every modem input); the whole document for the root. A path the
    contract doesn't name (an unknown key) withholds nothing."""
    if not path:
        return INPUTS
    normalized = _normalized(path)
    inside = [name for name in INPUTS if normalized == name or normalized.startswith((name + ".", name + "["))]
    if inside:
        return (max(inside, key=len),)
    return tuple(name for name in INPUTS if name.startswith((normalized + ".", normalized + "[")))


@dataclass(frozen=True)
class PartialDesign:
    """A draft's design as far as it can be read. `design` holds every input that is there; an input that is
    not answered yet or has a problem is withheld (`rules.withheld.Withheld` in its place, everywhere it
    occurs). `missing` maps each withheld input to the document paths that withhold it; `unanswered` lists the
    required values not given yet (not errors: the questionnaire is not finished), `problems` everything
    else the full parser reports."""

    design: Design
    problems: tuple[Problem, ...]
    unanswered: tuple[Problem, ...]
    missing: Mapping[str, tuple[str, ...]]
    # The antennas with a readable name and role, each value of its own that has a problem None (or its
    # default): for drawing what there is, never for judging.
    identified_antennas: tuple[Antenna, ...] = ()

    @property
    def complete(self) -> bool:
        return not self.problems and not self.unanswered and not self.missing

    def has(self, input_name: str) -> bool:
        return input_name not in self.missing

    def waiting_for(self, needs: Sequence[str]) -> tuple[str, ...]:
        """Which of `needs` this design withholds."""
        return tuple(name for name in needs if name in self.missing)

    def without(self, input_name: str, problems: Sequence[Problem]) -> "PartialDesign":
        """The same design with one more input withheld because of `problems` found later (a measurement file
        that can't be read, say)."""
        missing = {**self.missing, input_name: tuple(dict.fromkeys(
            [*self.missing.get(input_name, ()), *(problem.path for problem in problems)]))}
        return replace(self, design=withhold(self.design, set(missing)),
                       problems=tuple(dict.fromkeys([*self.problems, *problems])), missing=missing)

    def shown(self) -> Design:
        """The design for drawing it: what is there, each withheld value as not given (None, or the contract's
        default), and every antenna that has a name and role with the values of its own that could be read (an
        antenna with a mistyped position is drawn as not placed; the others stay where they are). Never for
        judging: a rule needs to know a value is missing, and a pair rule needs every antenna's."""
        design = replace(self.design, antennas=self.identified_antennas)
        return replace(design, **{name: _shown_default(name) for name in _dataclass_fields(design)
                                  if name != "modem" and is_withheld(getattr(design, name))})


_SHOWN_DEFAULTS: Mapping[str, Any] = {"product_name": "", "enclosure_material": "plastic", "measurements": ()}


def _shown_default(name: str) -> Any:
    return _SHOWN_DEFAULTS.get(name)


def _dataclass_fields(value: Any) -> list[str]:
    return [item.name for item in fields(value)]


def withhold(design: Design, withheld: set[str]) -> Design:
    """`design` with every value of each withheld input replaced by a Withheld marker."""
    def marker(name: str) -> Any:
        return Withheld(name)

    modem = design.modem
    modem_changes = {name.removeprefix("modem."): marker(name) for name in MODEM_INPUTS if name in withheld}
    if modem_changes and not is_withheld(modem):
        modem = replace(modem, **modem_changes)
    antenna_changes = {name.removeprefix("antennas[]."): marker(name) for name in ANTENNA_FIELD_INPUTS
                       if name in withheld}
    if "antennas[].peak_gain_dbi" in withheld:
        antenna_changes["peak_gain_dbi_per_band"] = marker("antennas[].peak_gain_dbi")
    antennas: Any = design.antennas
    if "antennas" in withheld:
        antennas = marker("antennas")
    elif antenna_changes:
        antennas = tuple(replace(antenna, **antenna_changes) for antenna in design.antennas)
    deployment = design.deployment
    deployment_changes = {field_name: marker(name) for name in INPUTS if name.startswith("deployment.")
                          and name in withheld for field_name in _DEPLOYMENT_FIELDS.get(name, (name[11:],))}
    if deployment_changes:
        deployment = replace(deployment, **deployment_changes)
    changes: dict[str, Any] = {_INPUT_FIELDS[name]: marker(name) for name in _INPUT_FIELDS
                               if name in withheld and name != "antennas"}
    return replace(design, modem=modem, antennas=antennas, deployment=deployment, **changes)


def parse_design_partial(document: Any) -> PartialDesign:
    """A partial design, for a draft being filled in: never raises. What can be read is kept; each input that
    is not answered yet or has a problem is withheld and named, so the rules that need it wait while the others
    judge. The problems are those of the full parser (parse_design), except that a measurement is tied to the
    antennas that could be read; a complete, valid document gives exactly parse_design's design."""
    reader, parts = _read(document, lenient=True)
    unanswered = [problem for problem in reader.problems if problem in reader.missing]
    others = [problem for problem in reader.problems if problem not in unanswered]
    missing: dict[str, list[str]] = {}
    for problem in reader.problems:
        for name in inputs_of(problem.path):
            missing.setdefault(name, []).append(problem.path)
    if parts is None:  # nothing could be read: every input waits
        parts = _Parts(None, None, None, None, False, None, None, None, Deployment(), ())
        for name in INPUTS:
            missing.setdefault(name, [])
    if "antennas" in missing:  # measurements name antennas: with the list in doubt, so are they
        missing.setdefault("measurements", []).extend(missing["antennas"])
    base = parts.design(reader.ignored)
    if base.modem is None:
        base = replace(base, modem=Modem(None, ()))  # withheld just below
    identified = tuple(parts.antennas or ())
    design = withhold(base, set(missing))
    return PartialDesign(design, tuple(others), tuple(unanswered),
                         {name: tuple(dict.fromkeys(paths)) for name, paths in missing.items()}, identified)


def _parse_modem(reader: _Reader, value: Any) -> Modem | None:
    """The modem; without a category or bands its Modem holds None or no bands there, beside the problem that
    says so (parse_design refuses it; a partial design withholds them)."""
    if value is None:
        reader.problem("modem", "required: expected an object with category and bands", missing=True)
        return None
    raw = reader.object(value, "modem", ("category", "bands", "rx_ports", "gain_limits_dbi",
                                         "operator_single_antenna_approval", "power_class",
                                         "conducted_sensitivity_dbm", "full_duplex", "ntn", "library"))
    if raw is None:
        return None
    category_id = raw.get("category")
    category = categories().get(category_id) if isinstance(category_id, str) else None
    if category is None:
        got = "nothing" if raw.get("category") is None else _show(raw.get("category"))
        reader.problem("modem.category", f"unknown category {got}; accepted: {', '.join(categories())}",
                       missing=raw.get("category") is None)

    selected: list[Band] = []
    raw_bands = raw.get("bands")
    if not isinstance(raw_bands, list) or not raw_bands:
        what = "nothing" if raw_bands is None else _kind(raw_bands)
        reader.problem("modem.bands", f"expected a list of at least one band (B<n> or n<n>), got {what}",
                       missing=raw_bands is None or raw_bands == [])
    else:
        for index, item in enumerate(raw_bands):
            path = f"modem.bands[{index}]"
            band = reader.band(item, path)
            if band is None:
                continue
            if band in selected:
                reader.problem(path, f"band {band.name} is listed twice")
            elif category is not None and band.technology != category.technology:
                style = "n<number>" if category.technology == "NR" else "B<number>"
                reader.problem(path, f"{band.name} is an {band.technology} band; category {category.id} "
                                     f"uses {category.technology} bands ({style})")
            else:
                selected.append(band)

    rx_ports = reader.integer(raw.get("rx_ports"), "modem.rx_ports", minimum=1, maximum=8)
    gain_limits = reader.band_map(
        raw.get("gain_limits_dbi"), "modem.gain_limits_dbi",
        lambda item, path: reader.number(item, path, minimum=-30, maximum=30, unit="dBi"),
    )
    approval = reader.boolean(raw.get("operator_single_antenna_approval"),
                              "modem.operator_single_antenna_approval", False)
    power_class = DEFAULT_POWER_CLASS
    raw_class = raw.get("power_class")
    if raw_class is not None:
        if _is_number(raw_class) and float(raw_class) == int(raw_class) and int(raw_class) in power_classes():
            power_class = int(raw_class)
        else:
            accepted = ", ".join(str(number) for number in power_classes())
            reader.problem("modem.power_class", f"expected a UE power class ({accepted}), got {_show(raw_class)}")
    sensitivity = reader.band_map(
        raw.get("conducted_sensitivity_dbm"), "modem.conducted_sensitivity_dbm",
        lambda item, path: reader.number(item, path, minimum=-150, maximum=-50, unit="dBm"),
    )
    full_duplex = reader.boolean(raw.get("full_duplex"), "modem.full_duplex", False)
    if full_duplex and category is not None and category.id in ("cat-nb1", "cat-nb2"):
        reader.problem("modem.full_duplex", "NB-IoT is half-duplex only (3GPP TS 36.306); expected false or "
                                            "nothing")
    ntn = reader.boolean(raw.get("ntn"), "modem.ntn", False)
    library = _parse_library_ref(reader, raw.get("library"), "modem.library")
    for index, band in enumerate(selected):
        if band.satellite and not ntn:
            reader.problem(f"modem.bands[{index}]", f"{band.name} is a satellite (NTN) band; set modem.ntn to "
                                                    "true if the module supports satellite access")
    if selected and not any(band.has_uplink for band in selected):
        names = ", ".join(band.name for band in selected)
        reader.problem("modem.bands", f"{names}: supplemental-downlink (SDL) bands have no uplink and work only "
                                      "beside a band with one; expected at least one band with an uplink")
    return Modem(category, tuple(selected), rx_ports, gain_limits, approval, power_class,  # type: ignore[arg-type]
                 sensitivity, full_duplex, ntn, library)


def _parse_antennas(reader: _Reader, value: Any) -> tuple[list[Antenna] | None, bool]:
    """The antennas that have a readable name and role (a value with a problem is None or its default there,
    beside the problem), and whether every entry of the list read without a problem."""
    if not isinstance(value, list):
        what = "nothing" if value is None else _kind(value)
        reader.problem("antennas", f"expected a list of antennas (it may be empty), got {what}", missing=value is None)
        return None, False
    antennas: list[Antenna] = []
    seen: dict[str, int] = {}
    complete = True
    for index, item in enumerate(value):
        path = f"antennas[{index}]"
        raw = reader.object(item, path, ("name", "role", "mounting", "position_mm", "polarization", "ranges_mhz",
                                         "peak_gain_dbi", "efficiency_pct", "size_mm", "cable_loss_db",
                                         "efficiency_source", "library"))
        if raw is None:
            complete = False
            continue
        before = len(reader.problems)
        name = reader.text(raw.get("name"), f"{path}.name", required=True)
        if name is not None and name in seen:
            reader.problem(f"{path}.name", f"expected a unique name; {name!r} is also antennas[{seen[name]}]")
        elif name is not None:
            seen[name] = index
        if raw.get("role") is None:
            reader.problem(f"{path}.role", f"required: expected one of {', '.join(ROLES)}", missing=True)
            role = None
        else:
            role = reader.choice(raw.get("role"), f"{path}.role", ROLES, None)
        mounting = reader.choice(raw.get("mounting"), f"{path}.mounting", MOUNTINGS, "internal")
        position = reader.vector(raw.get("position_mm"), f"{path}.position_mm", 3)
        polarization = reader.vector(raw.get("polarization"), f"{path}.polarization", 3, unit="any unit")
        if polarization is not None and not any(polarization):
            reader.problem(f"{path}.polarization", "expected a direction; [0, 0, 0] has none")
        ranges = _parse_ranges(reader, raw.get("ranges_mhz"), f"{path}.ranges_mhz")
        gain, gain_per_band = _parse_gain(reader, raw.get("peak_gain_dbi"), f"{path}.peak_gain_dbi")
        efficiency = reader.band_map(
            raw.get("efficiency_pct"), f"{path}.efficiency_pct",
            lambda item, item_path: reader.number(item, item_path, minimum=0, maximum=100, unit="%"),
        )
        size = reader.vector(raw.get("size_mm"), f"{path}.size_mm", 3, positive=True)
        cable_loss = reader.number(raw.get("cable_loss_db"), f"{path}.cable_loss_db", minimum=0, maximum=40,
                                   unit="dB")
        efficiency_source = reader.choice(raw.get("efficiency_source"), f"{path}.efficiency_source",
                                          EFFICIENCY_SOURCES, "datasheet")
        library = _parse_library_ref(reader, raw.get("library"), f"{path}.library")
        if len(reader.problems) > before:
            complete = False
        if name is None or role is None:
            continue
        antennas.append(Antenna(
            name=name, role=role, mounting=mounting or "internal",
            position_mm=position, polarization=polarization,  # type: ignore[arg-type]
            ranges_mhz=ranges, peak_gain_dbi=gain, efficiency_pct=efficiency,
            size_mm=size, cable_loss_db=cable_loss or 0.0,  # type: ignore[arg-type]
            peak_gain_dbi_per_band=gain_per_band, efficiency_source=efficiency_source or "datasheet",
            library=library,
        ))
    return antennas, complete


RADIATED_QUANTITIES = ("trp", "tis")


def _parse_radiated_targets(reader: _Reader, value: Any) -> tuple[dict[str, float], dict[str, float]]:
    """`{"trp": {band: dBm}, "tis": {band: dBm}}`, either part optional; each band's target bounded by
    PATH_LIMITS (a TRP is at least, a TIS at most, what the operator asks)."""
    path = "deployment.radiated_targets_dbm"
    if value is None:
        return {}, {}
    raw = reader.object(value, path, RADIATED_QUANTITIES)
    if raw is None:
        return {}, {}
    trp, tis = (reader.band_map(raw.get(quantity), f"{path}.{quantity}",
                                lambda item, item_path: reader.number(item, item_path, unit="dBm"))
                for quantity in RADIATED_QUANTITIES)
    return trp, tis


def _parse_gain(reader: _Reader, value: Any, path: str) -> tuple[float | None, dict[str, float]]:
    """Peak gain as one number for every band, or an object of band to dBi."""
    if isinstance(value, dict):
        return None, reader.band_map(
            value, path, lambda item, item_path: reader.number(item, item_path, minimum=-30, maximum=30, unit="dBi"))
    if value is not None and not _is_number(value):
        reader.problem(path, f"expected a number in dBi, got {_show(value)}; or an object of band to dBi")
        return None, {}
    return reader.number(value, path, minimum=-30, maximum=30, unit="dBi"), {}


LIBRARY_VERSION_MAX = 2**31 - 1


def _parse_library_ref(reader: _Reader, value: Any, path: str) -> LibraryRef | None:
    """`{"name": ..., "version": n}`: the parts-library entry the values were filled from (a note, not values)."""
    if value is None:
        return None
    raw = reader.object(value, path, ("name", "version"))
    if raw is None:
        return None
    name = reader.text(raw.get("name"), f"{path}.name", required=True)
    if raw.get("version") is None:
        reader.problem(f"{path}.version", f"required: expected a whole number from 1 to {LIBRARY_VERSION_MAX}")
        return None
    version = reader.integer(raw.get("version"), f"{path}.version", minimum=1, maximum=LIBRARY_VERSION_MAX)
    if name is None or version is None:
        return None
    return LibraryRef(name, version)


def _parse_ranges(reader: _Reader, value: Any, path: str) -> tuple[tuple[float, float], ...] | None:
    if value is None:
        return None
    if not isinstance(value, list) or not value:
        reader.problem(path, f"expected a list of [low, high] ranges in MHz, got {_kind(value)}")
        return None
    ranges = []
    for index, item in enumerate(value):
        item_path = f"{path}[{index}]"
        pair = reader.vector(item, item_path, 2, positive=True, unit="MHz")
        if pair is None:
            continue
        if pair[0] >= pair[1]:
            reader.problem(item_path, f"expected [low, high] with low below high, got [{pair[0]:g}, {pair[1]:g}]")
            continue
        ranges.append((pair[0], pair[1]))
    return tuple(ranges)


def _parse_measurements(reader: _Reader, value: Any, antenna_names: set[str]) -> tuple[MeasurementRef, ...]:
    if value is None:
        return ()
    if not isinstance(value, list):
        reader.problem("measurements", f"expected a list of measurement files, got {_kind(value)}")
        return ()
    result = []
    patterns: dict[str, int] = {}
    for index, item in enumerate(value):
        path = f"measurements[{index}]"
        kind = reader.choice(item.get("kind") if isinstance(item, dict) else None, f"{path}.kind",
                             MEASUREMENT_KINDS, "s-parameters")
        if kind == "far-field":
            reference = _parse_far_field_ref(reader, item, path, antenna_names, patterns)
            if reference is not None:
                patterns[reference.antenna or ""] = index
                result.append(reference)
            continue
        raw = reader.object(item, path, ("file", "ports", "kind"))
        if raw is None:
            continue
        file_name = reader.text(raw.get("file"), f"{path}.file", required=True)
        ports = raw.get("ports")
        if not isinstance(ports, list) or not ports:
            reader.problem(f"{path}.ports", f"expected a list naming the antenna on each port (null for a "
                                            f"port not connected to one), got {_kind(ports)}")
            continue
        mapped: list[str | None] = []
        for port_index, name in enumerate(ports):
            port_path = f"{path}.ports[{port_index}]"
            if name is None:
                mapped.append(None)
            elif not isinstance(name, str) or name not in antenna_names:
                accepted = ", ".join(sorted(antenna_names)) or "no antennas are defined"
                reader.problem(port_path, f"expected an antenna name ({accepted}) or null, got {_show(name)}")
            elif name in mapped:
                reader.problem(port_path, f"antenna {name} is already on port {mapped.index(name) + 1}")
            else:
                mapped.append(name)
        if file_name is not None and len(mapped) == len(ports):
            result.append(MeasurementRef(file_name, tuple(mapped)))
    return tuple(result)


def _parse_far_field_ref(
    reader: _Reader, item: Any, path: str, antenna_names: set[str], patterns: dict[str, int],
) -> MeasurementRef | None:
    raw = reader.object(item, path, ("file", "kind", "antenna", "environment", "absolute"))
    if raw is None:
        return None
    file_name = reader.text(raw.get("file"), f"{path}.file", required=True)
    name = raw.get("antenna")
    if not isinstance(name, str) or name not in antenna_names:
        accepted = ", ".join(sorted(antenna_names)) or "no antennas are defined"
        reader.problem(f"{path}.antenna", f"expected the name of the antenna this pattern belongs to "
                                          f"({accepted}), got {'nothing' if name is None else _show(name)}")
        name = None
    elif name in patterns:
        reader.problem(f"{path}.antenna", f"antenna {name} already has a far-field pattern "
                                          f"(measurements[{patterns[name]}]); give one file per antenna")
        name = None
    if raw.get("ports") is not None:
        reader.problem(f"{path}.ports", "a far-field pattern belongs to one antenna: name it in `antenna`")
    environment = _parse_field_environment(reader, raw.get("environment"), f"{path}.environment")
    absolute = reader.boolean(raw.get("absolute"), f"{path}.absolute", False)
    if file_name is None or name is None or environment is None:
        return None
    return MeasurementRef(file_name, (name,), kind="far-field", antenna=name, environment=environment,
                          absolute=absolute)


def _parse_field_environment(reader: _Reader, value: Any, path: str) -> FieldEnvironment | None:
    """`{"model": "isotropic"}` (the default) or `{"model": "taga", "mean_elevation_deg": .., "spread_deg": ..,
    "xpr_db": ..}`; Taga's three parameters are required, since no one set suits every deployment."""
    if value is None:
        return FieldEnvironment()
    model = value.get("model") if isinstance(value, dict) else None
    known = ("model", "mean_elevation_deg", "spread_deg", "xpr_db") if model == "taga" else ("model",)
    raw = reader.object(value, path, known)
    if raw is None:
        return None
    if model not in FIELD_ENVIRONMENTS:
        reader.problem(f"{path}.model", f"expected one of {', '.join(FIELD_ENVIRONMENTS)}; got "
                                        f"{'nothing' if model is None else _show(model)}")
        return None
    if model == "isotropic":
        return FieldEnvironment()
    before = len(reader.problems)
    numbers = {}
    for key, low, high, unit in (("mean_elevation_deg", -90, 90, "degrees above the horizon"),
                                 ("spread_deg", 1, 90, "degrees"), ("xpr_db", -30, 30, "dB")):
        if raw.get(key) is None:
            reader.problem(f"{path}.{key}", f"required for the taga model: expected a number in {unit}")
            continue
        numbers[key] = reader.number(raw.get(key), f"{path}.{key}", minimum=low, maximum=high, unit=unit)
    if len(reader.problems) > before:
        return None
    return FieldEnvironment("taga", **numbers)  # type: ignore[arg-type]


def _reject_constant(name: str) -> None:
    raise ValueError(f"{name} is not a number JSON allows")


def decode_design_text(text: str | bytes, *, source: str = "design") -> Any:
    """Decodes JSON text, turning decoder errors into a DesignError that names line and column."""
    try:
        return json.loads(text, parse_constant=_reject_constant)
    except json.JSONDecodeError as error:
        raise DesignError([Problem("", f"{source}: not valid JSON: {error.msg} at line {error.lineno} "
                                       f"column {error.colno}")]) from error
    except (ValueError, UnicodeDecodeError, RecursionError) as error:
        raise DesignError([Problem("", f"{source}: not valid JSON: {error}")]) from error


def parse_design_text(text: str | bytes, *, source: str = "design") -> Design:
    return parse_design(decode_design_text(text, source=source))
