"""Values typed into a form, read as design-document values (and shown back as they would be typed).

Shared by the design questionnaire and the parts library, so a number, a frequency range or a list of
per-band figures reads the same in both. Anything that can't be read as the expected kind is returned as
typed: the design parser (rules.design) then names the field and what it expected, and nothing typed is
silently dropped.

People copy figures from datasheets, so the reading takes what datasheets print (the design file itself
stays strict JSON numbers):
- a decimal comma (`2,5`), unless it could be a thousands separator (`1,000`, `2,500`): that is kept as
  typed and the form asks which was meant;
- the minus sign U+2212 (`−3.5`);
- a unit after the number when it is the field's unit (`35 mm`, `2.5 dBi`, `38 %`, `900 MHz`), or one that
  converts exactly into it: `cm` and `m` for millimetres, `GHz` for megahertz (`0.9 GHz` is 900 MHz),
  `Mbps` / `Mbit/s` for kbps. Any other unit is kept as typed, for the form to name;
- ranges with a hyphen, an en or em dash, `to` or `..` (`698–960`, `698 to 960 MHz`, `0.7–2.7 GHz`),
  separated by `,` or `;`.
"""

import re
from decimal import Decimal, InvalidOperation
from typing import Any

_NUMBER = r"[-+\u2212]?(?:\d+(?:\.\d*|,\d+)?|[.,]\d+)(?:[eE][-+]?\d+)?"
_UNIT = r"[A-Za-z%/]+"
_NUMBER_WITH_UNIT = re.compile(rf"^\s*({_NUMBER})\s*({_UNIT})?\s*$")
_RANGE_PATTERN = re.compile(
    rf"^\s*({_NUMBER})\s*({_UNIT})?\s*(?:-|\u2013|\u2014|\u2212|\bto\b|\.\.)\s*({_NUMBER})\s*({_UNIT})?\s*$",
    re.IGNORECASE)
_BAND_NUMBER_PATTERN = re.compile(r"^\s*([A-Za-z]+\d+)\s*[:=]\s*(\S.*?)\s*$")
_BAND_SEPARATOR = re.compile(r"[,;]\s*(?=[A-Za-z]+\d+\s*[:=])")
_THOUSANDS = re.compile(r"^[-+\u2212]?\d{1,3}(?:,\d{3})+$")  # 1,000 or 12,500,000: a decimal comma? or grouping?
MAX_TYPED_CHARS = 400  # longer text is kept as typed (the parser names it): no pattern runs on pages of it

# A unit typed after a number, by the field's unit: the factor into the field's unit (case-insensitive).
UNIT_FACTORS: dict[str, dict[str, Decimal]] = {
    "mm": {"mm": Decimal(1), "cm": Decimal(10), "m": Decimal(1000)},
    "MHz": {"mhz": Decimal(1), "ghz": Decimal(1000)},
    "kbps": {"kbps": Decimal(1), "kbit/s": Decimal(1), "mbps": Decimal(1000), "mbit/s": Decimal(1000)},
    "dBi": {"dbi": Decimal(1)},
    "dB": {"db": Decimal(1)},
    "dBm": {"dbm": Decimal(1)},
    "%": {"%": Decimal(1)},
}


def is_ambiguous_grouping(text: str) -> bool:
    """`1,000` or `2,500`: a thousands separator in one convention, a decimal comma in another."""
    return bool(_THOUSANDS.match(text.strip()))


def _decimal(number_text: str) -> Decimal | None:
    if is_ambiguous_grouping(number_text):
        return None
    try:
        return Decimal(number_text.replace("\u2212", "-").replace(",", "."))
    except InvalidOperation:
        return None


def _json_number(value: Decimal, *, whole: bool) -> Any:
    """A finite JSON number: an int where the typed number was whole (and stays whole), else a float."""
    try:
        number = float(value)
    except (OverflowError, ValueError):
        return None
    if number != number or number in (float("inf"), float("-inf")):
        return None
    if whole and value == value.to_integral_value():
        return int(value)
    return number


def _scaled(number_text: str, typed_unit: str | None, unit: str) -> Any:
    """The number in the field's unit, or None when it can't be read so (unknown unit, ambiguous comma)."""
    factor: Decimal | None = Decimal(1)
    if typed_unit:
        factor = UNIT_FACTORS.get(unit, {}).get(typed_unit.lower())
    if factor is None:
        return None
    value = _decimal(number_text)
    if value is None:
        return None
    try:
        scaled = value * factor
    except ArithmeticError:  # an exponent past what a Decimal holds
        return None
    typed_whole = not re.search(r"[.,eE]", number_text)
    return _json_number(scaled, whole=typed_whole or factor != 1)


def read_number(raw: str, unit: str = "") -> Any:
    """A typed number as a JSON number; anything else is kept as typed, for the parser to explain.
    `unit` is the field's unit: a number typed with it (or with one that converts into it) is read."""
    text = raw.strip()
    if text == "":
        return None
    if len(text) > MAX_TYPED_CHARS:
        return text
    match = _NUMBER_WITH_UNIT.match(text)
    if not match:
        return text
    number = _scaled(match.group(1), match.group(2), unit)
    return text if number is None else number


def _read_range(part: str, unit: str) -> list[Any] | None:
    match = _RANGE_PATTERN.match(part)
    if not match:
        return None
    low_text, low_unit, high_text, high_unit = match.groups()
    low_unit, high_unit = low_unit or high_unit, high_unit or low_unit  # "0.7–2.7 GHz": one unit for both
    low, high = _scaled(low_text, low_unit, unit), _scaled(high_text, high_unit, unit)
    return None if low is None or high is None else [low, high]


def read_ranges(raw: str, unit: str = "MHz") -> Any:
    """'698–960, 1710–2690' as [[698, 960], [1710, 2690]]. A comma followed by a space (or a semicolon)
    separates ranges, so '698,5–960' is one range with a decimal comma; failing that, every comma does
    ('700-960,1700-2700')."""
    text = raw.strip()
    if not text:
        return None
    if len(text) > MAX_TYPED_CHARS:
        return text
    for separator in (r";|,(?=\s)", r"[,;]"):
        parts = [part for part in re.split(separator, text) if part.strip()]
        ranges = [_read_range(part, unit) for part in parts]
        if parts and all(item is not None for item in ranges):
            return ranges
    return text


def read_numbers(raw: str, unit: str = "") -> Any:
    """'40, 8, 3' (or '40 x 8 x 3', '40; 8; 3', '40 8 3') as a list of numbers; an item that isn't one is kept
    as typed. A comma with a space after it separates; so do commas without spaces when there are several
    ('40,8,3'); a single comma between digits ('2,5') is a decimal comma."""
    text = raw.strip()
    if not text:
        return None
    if len(text) > MAX_TYPED_CHARS:
        return text
    if re.search(r",\s|;|\s[x×]\s|\s", text) or text.count(",") > 1:
        parts = re.split(r"\s*(?:[,;]|\s[x×]\s|\s)\s*", text)
    else:
        parts = [text]
    return [read_number(part, unit) for part in parts if part]


def read_band_numbers(raw: str, unit: str = "") -> Any:
    """'B12: 38, B2: 55' as {"B12": 38, "B2": 55} (decimal commas allowed: 'B12: 2,5; B2: 3'); text that
    isn't such a list is kept as typed."""
    text = raw.strip()
    if not text:
        return None
    if len(text) > MAX_TYPED_CHARS:
        return text
    result: dict[str, Any] = {}
    for part in _BAND_SEPARATOR.split(text):
        part = part.strip().rstrip(",;")
        if not part:
            continue
        match = _BAND_NUMBER_PATTERN.match(part)
        if not match:
            return text
        result[match.group(1)] = read_number(match.group(2), unit)
    return result


def read_band_list(raw: str) -> Any:
    """'B1, B3 B20' as ["B1", "B3", "B20"]."""
    text = raw.strip()
    if not text:
        return None
    return [part for part in re.split(r"[\s,;]+", text) if part]


def show_ranges(value: Any) -> str:
    if isinstance(value, list):
        parts = []
        for item in value:
            if isinstance(item, list) and len(item) == 2:
                parts.append(f"{item[0]}-{item[1]}")
            else:
                return str(value)
        return ", ".join(parts)
    return "" if value is None else str(value)


def show_number(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return str(value).lower()
    return str(value)


def show_numbers(value: Any) -> str:
    if isinstance(value, list):
        return ", ".join(show_number(item) for item in value)
    return show_number(value)


def show_band_numbers(value: Any) -> str:
    if isinstance(value, dict):
        return ", ".join(f"{band}: {show_number(number)}" for band, number in value.items())
    return show_number(value)
