"""Polarization as a person says it: "along the length", "in the length–width plane, 30° from the length".

The design file keeps the direction as an x, y, z vector (the enclosure's length, width and height); the
questionnaire offers words and reads them back into that vector. A vector that no choice names exactly
(an imported file's [0.3, 0.2, 0.9]) is shown as "custom" with the nearest words beside it, and kept as it
is until the person picks something else. This is form reading (like a unit after a number), not a
judgement: the rules compute angles between antennas from the vector (rules.physics).
"""

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

AXES = {"x": (1, 0, 0), "y": (0, 1, 0), "z": (0, 0, 1)}
AXIS_WORDS = {"x": "along the length (x)", "y": "along the width (y)", "z": "along the height (z, upright)"}
# A plane: its two axes; the angle runs from the first towards the second.
PLANES = {"xy": (0, 1), "xz": (0, 2), "yz": (1, 2)}
PLANE_WORDS = {"xy": "in the length–width plane", "xz": "in the length–height plane",
               "yz": "in the width–height plane"}
PLANE_CHOICE_WORDS = {"xy": "angled in the length–width plane (from the length)",
                      "xz": "angled in the length–height plane (from the length)",
                      "yz": "angled in the width–height plane (from the width)"}
FROM_WORDS = {"xy": "from the length towards the width", "xz": "from the length towards the height",
              "yz": "from the width towards the height"}
AXIS_NAMES = ("length", "width", "height")
CUSTOM = "custom"
ANGLE_STEP_DEG = 15
ANGLES_DEG = tuple(range(0, 180, ANGLE_STEP_DEG))  # a polarization axis has no sign: 0-165 covers every direction
TOLERANCE_DEG = 0.5  # a vector this close to a choice is that choice

CHOICES: tuple[tuple[str, str], ...] = (
    *((key, words) for key, words in AXIS_WORDS.items()),
    *PLANE_CHOICE_WORDS.items(),
    (CUSTOM, "another direction: x, y, z"),
)


@dataclass(frozen=True)
class Described:
    words: str  # "", an axis key, a plane key or CUSTOM
    angle_deg: int | None  # for a plane: one of ANGLES_DEG
    sentence: str  # the direction in words (for a custom vector: the nearest words)


def _unit(vector: Sequence[Any]) -> tuple[float, float, float] | None:
    if len(vector) != 3 or not all(isinstance(item, (int, float)) and not isinstance(item, bool) for item in vector):
        return None
    values = tuple(float(item) for item in vector)
    if not all(math.isfinite(item) for item in values):
        return None
    length = math.sqrt(sum(item * item for item in values))
    if not length or not math.isfinite(length):
        return None
    return values[0] / length, values[1] / length, values[2] / length


def _angle_between_axes_deg(first: Sequence[float], second: Sequence[float]) -> float:
    """The angle between two axes (directions without sign), 0-90 degrees."""
    cosine = min(1.0, abs(sum(a * b for a, b in zip(first, second, strict=True))))
    return math.degrees(math.acos(cosine))


def describe(value: Any) -> Described:
    """The choice that names a stored polarization, or CUSTOM with the nearest words."""
    if value is None:
        return Described("", None, "not given")
    unit = _unit(value) if isinstance(value, list) else None
    if unit is None:
        return Described(CUSTOM, None, "not a direction the form can name")
    for key, axis in AXES.items():
        if _angle_between_axes_deg(unit, axis) <= TOLERANCE_DEG:
            return Described(key, None, AXIS_WORDS[key])
    for key, (first, second) in PLANES.items():
        out = next(index for index in range(3) if index not in (first, second))
        if abs(math.degrees(math.asin(min(1.0, abs(unit[out]))))) > TOLERANCE_DEG:
            continue
        angle = math.degrees(math.atan2(unit[second], unit[first])) % 180.0
        step = round(angle / ANGLE_STEP_DEG) * ANGLE_STEP_DEG % 180
        if abs(angle - step) <= TOLERANCE_DEG or abs(angle - step - 180) <= TOLERANCE_DEG:
            return Described(key, step, f"{PLANE_WORDS[key]}, {step}° {FROM_WORDS[key]}")
        return Described(CUSTOM, None, f"{PLANE_WORDS[key]}, about {angle:.0f}° {FROM_WORDS[key]}")
    nearest, off = min(((key, _angle_between_axes_deg(unit, axis)) for key, axis in AXES.items()),
                       key=lambda item: item[1])
    return Described(CUSTOM, None, f"closest to {AXIS_WORDS[nearest]}, {off:.0f}° off it")


def vector_for(words: str, angle_deg: int | None) -> list[float | int] | None:
    """The vector a choice stands for (None for "not given" or CUSTOM: those are read elsewhere)."""
    if words in AXES:
        return list(AXES[words])
    if words in PLANES:
        first, second = PLANES[words]
        radians = math.radians(angle_deg or 0)
        vector: list[float | int] = [0, 0, 0]
        vector[first], vector[second] = _clean(math.cos(radians)), _clean(math.sin(radians))
        return vector
    return None


def _clean(number: float) -> float | int:
    rounded = round(number, 6)
    return int(rounded) if rounded.is_integer() else rounded
