"""The palette's contrast, computed with WCAG 2.2's own formula, and the stylesheet kept to the palette."""

import re
from pathlib import Path

import pytest

from projectapp import palette

CSS = Path(palette.__file__).parent / "designs" / "static" / "earshot" / "earshot.css"


def relative_luminance(colour: str) -> float:
    """WCAG 2.2, definition "relative luminance": sRGB channels linearized (0.04045 threshold), weighted
    0.2126 R + 0.7152 G + 0.0722 B."""
    channels = [int(colour[i:i + 2], 16) / 255 for i in (1, 3, 5)]
    linear = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
    return 0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2]


def contrast(one: str, other: str) -> float:
    """WCAG 2.2, definition "contrast ratio": (L1 + 0.05) / (L2 + 0.05), the lighter over the darker."""
    light, dark = sorted((relative_luminance(one), relative_luminance(other)), reverse=True)
    return (light + 0.05) / (dark + 0.05)


@pytest.mark.parametrize(("one", "other", "ratio"), [
    ("#000000", "#ffffff", 21.0),  # WCAG 2.2, "contrast ratio": ratios range from 1:1 to 21:1
    ("#ffffff", "#ffffff", 1.0),  # the same definition's lower end
    ("#767676", "#ffffff", 4.54),  # from memory: the lightest grey commonly quoted as passing 4.5:1 on white
    ("#777777", "#ffffff", 4.48),  # from memory: one step lighter, commonly quoted as just failing
])
def test_the_formula_gives_the_published_ratios(one, other, ratio):
    assert contrast(one, other) == pytest.approx(ratio, abs=0.01)


def test_every_pairing_the_app_draws_meets_wcag_22_aa():
    failing = [f"{where}: {fore} on {back} is {contrast(fore, back):.2f}:1, needs {needed}:1"
               for fore, back, needed, where in palette.PAIRINGS if contrast(fore, back) < needed]
    assert failing == []


def test_the_old_amber_failed_and_the_new_one_passes_as_text():
    assert contrast("#b26a00", palette.CARD) < palette.TEXT  # the amber that was replaced
    assert contrast("#b26a00", palette.WARNING_SOFT) < palette.TEXT
    assert contrast(palette.WARNING, palette.CARD) >= palette.TEXT
    assert contrast(palette.WARNING, palette.WARNING_SOFT) >= palette.TEXT


def test_the_stylesheet_root_colours_are_the_palettes():
    root = re.search(r":root\s*\{(.*?)\}", CSS.read_text(), re.S)
    assert root is not None
    declared = dict(re.findall(r"(--[a-z-]+):\s*(#[0-9a-fA-F]{6})\s*;", root[1]))
    assert {name: value.lower() for name, value in declared.items()} == palette.CSS_VARIABLES
