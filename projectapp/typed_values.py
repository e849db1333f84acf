"""Values typed into a form, read as design-document values (and shown back as they would be typed).

Shared by the design questionnaire and the parts library, so a number, a frequency range or a list of
per-band figures reads the same in both. Anything that can't be read as the expected kind is returned as
typed: the design parser (rules.design) then names the field and what it expected, and nothing typed is
silently dropped.
"""

import re
from typing import Any

_RANGE_PATTERN = re.compile(r"^\s*(-?[\d.]+)\s*(?:-|–|—|to)\s*(-?[\d.]+)\s*$")
_BAND_NUMBER_PATTERN = re.compile(r"^\s*([A-Za-z]+\d+)\s*[:=]\s*(\S.*?)\s*$")


def read_number(raw: str) -> Any:
    """A typed number as a JSON number; anything else is kept as typed, for the parser to explain."""
    text = raw.strip()
    if text == "":
        return None
    try:
        number = float(text)
    except ValueError:
        return text
    if number != number or number in (float("inf"), float("-inf")):
        return text
    return int(number) if number.is_integer() and "." not in text and "e" not in text.lower() else number


def read_ranges(raw: str) -> Any:
    text = raw.strip()
    if not text:
        return None
    ranges = []
    for part in re.split(r"[,;]", text):
        if not part.strip():
            continue
        match = _RANGE_PATTERN.match(part)
        if not match:
            return text
        ranges.append([read_number(match.group(1)), read_number(match.group(2))])
    return ranges


def read_numbers(raw: str) -> Any:
    """'40, 8, 3' (or '40 x 8 x 3') as a list of numbers; an item that isn't one is kept as typed."""
    text = raw.strip()
    if not text:
        return None
    return [read_number(part) for part in re.split(r"\s*(?:[,;]|\s[x×]\s|\s)\s*", text) if part]


def read_band_numbers(raw: str) -> Any:
    """'B12: 38, B2: 55' as {"B12": 38, "B2": 55}; text that isn't such a list is kept as typed."""
    text = raw.strip()
    if not text:
        return None
    result: dict[str, Any] = {}
    for part in re.split(r"[,;]", text):
        if not part.strip():
            continue
        match = _BAND_NUMBER_PATTERN.match(part)
        if not match:
            return text
        result[match.group(1)] = read_number(match.group(2))
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
