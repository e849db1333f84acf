"""Reading what people type into the questionnaire and the library: datasheet habits (decimal commas, dashes,
units after numbers) read as design values; anything else kept as typed for the parser to name.

Conversions: 1 GHz = 1000 MHz, 1 cm = 10 mm, 1 Mbit/s = 1000 kbit/s (SI prefixes)."""

import pytest

from projectapp.typed_values import (
    is_ambiguous_grouping,
    read_band_numbers,
    read_number,
    read_numbers,
    read_ranges,
)


@pytest.mark.parametrize(("typed", "unit", "read"), [
    ("2,5", "", 2.5),
    ("2.5", "", 2.5),
    ("−3,5", "dBm", -3.5),  # U+2212, as datasheets print it
    ("35 mm", "mm", 35),
    ("35mm", "mm", 35),
    ("3,5 cm", "mm", 35),  # SI: 1 cm = 10 mm
    ("0.14 m", "mm", 140),
    ("2.5 dBi", "dBi", 2.5),
    ("38 %", "%", 38),
    ("900 MHz", "MHz", 900),
    ("0.9 GHz", "MHz", 900),  # SI: 1 GHz = 1000 MHz, exact
    ("2.7 GHz", "MHz", 2700),  # exact in decimal arithmetic (2.7 * 1000 in floats is 2700.0000000000005)
    ("2 Mbps", "kbps", 2000),
    ("10", "", 10),
    ("10.0", "", 10.0),
    ("1e3", "", 1000.0),
])
def test_a_number_is_read_as_datasheets_write_it(typed, unit, read):
    value = read_number(typed, unit)
    assert value == read and type(value) is type(read)


@pytest.mark.parametrize(("typed", "unit"), [
    ("6O", "mm"),  # a letter O for a zero
    ("2.5 dB", "dBi"),  # dB is not dBi: not converted, not guessed
    ("35 cm", "kbps"),  # a unit of another quantity
    ("35 mm", ""),  # a field without a unit takes none
    ("1,000", "kbps"),  # one thousand, or one? asked, not guessed
    ("2,500", ""),
    ("1e400", ""),  # not a finite float
    ("nan", ""),
    ("1e999999999 GHz", "MHz"),  # past what a Decimal multiplies
    ("9" * 500, ""),  # too long to read: kept as typed
])
def test_what_cannot_be_read_for_sure_is_kept_as_typed(typed, unit):
    assert read_number(typed, unit) == typed.strip()


def test_only_a_comma_before_three_digits_is_ambiguous():
    assert is_ambiguous_grouping("1,000") and is_ambiguous_grouping("12,500,000")
    assert not is_ambiguous_grouping("2,5") and not is_ambiguous_grouping("1,0000") and not is_ambiguous_grouping("1000")


@pytest.mark.parametrize(("typed", "read"), [
    ("698-960, 1710-2690", [[698, 960], [1710, 2690]]),
    ("698–960, 1710–2690", [[698, 960], [1710, 2690]]),  # en dash
    ("698—960", [[698, 960]]),  # em dash
    ("698 to 960", [[698, 960]]),
    ("698 TO 960 MHz", [[698, 960]]),
    ("0.7–2.7 GHz", [[700, 2700]]),  # one unit for both ends
    ("700 MHz - 2.7 GHz", [[700, 2700]]),
    ("698,5–960", [[698.5, 960]]),  # a decimal comma inside a range
    ("700-960,1700-2700", [[700, 960], [1700, 2700]]),  # commas without spaces separate when nothing else reads
    ("698 – 960 MHz; 1710 – 2690 MHz", [[698, 960], [1710, 2690]]),
])
def test_ranges_are_read_with_dashes_words_and_units(typed, read):
    assert read_ranges(typed) == read


@pytest.mark.parametrize("typed", ["698-", "698 960", "low to high", "698-960 kbps", "1,000-2,000"])
def test_a_range_that_cannot_be_read_is_kept_as_typed(typed):
    assert read_ranges(typed) == typed


def test_lists_and_band_figures_keep_their_separators_and_take_decimal_commas():
    assert read_numbers("40, 8, 3") == read_numbers("40,8,3") == read_numbers("40 x 8 x 3") == [40, 8, 3]
    assert read_numbers("2,5") == [2.5]
    assert read_band_numbers("B12: 38, B2: 55") == {"B12": 38, "B2": 55}
    assert read_band_numbers("B12: 2,5; B2: 3") == {"B12": 2.5, "B2": 3}
    assert read_band_numbers("B12: 2,5 dBi, B2: 3 dBi", "dBi") == {"B12": 2.5, "B2": 3}
