"""The terms list (rules/data/terms.toml): it loads and validates, covers the trade terms the pages use, and
its figures agree with physics and with the engine's own data."""

import math
import re
import tomllib

import pytest
from scipy.constants import c as SPEED_OF_LIGHT_M_PER_S  # reference library (SI definition)

from rules.catalog import power_classes
from rules.coverage import coverage_data
from rules.glossary import TERMS_FILE, GlossaryError, glossary, read_glossary, term, terms

# The terms a product manager meets on Earshot's pages (issue: "No explanations"), by their ids.
REQUIRED = (
    "ue-category", "band", "uplink-downlink", "duplex", "dbi", "db-dbm", "efficiency", "vswr-return-loss",
    "isolation", "ecc", "diversity-mimo", "receive-branch", "wavelength", "quarter-wave", "near-field",
    "ground-plane", "polarization", "mcl", "trp", "tis", "power-class", "conducted-sensitivity", "s-parameters",
    "touchstone", "far-field-pattern", "passivity", "mean-effective-gain", "coverage-enhancement", "gnss",
    "wlan-coexistence", "harmonic", "rf-exposure", "carrier-acceptance", "certification", "waiver", "basis",
)


def test_the_terms_file_loads_with_unique_ids_and_no_empty_text():
    everything = [item for group in glossary() for item in group.terms]
    assert len({item.id for item in everything}) == len(everything)
    assert len({item.anchor for item in everything}) == len(everything)
    for item in everything:
        assert item.term.strip() and item.plain.strip(), item.id
        assert all(text.strip() for text in item.also), item.id
    assert [group.id for group in glossary()] == list(tomllib.loads(TERMS_FILE.read_text())["groups"])


def test_it_explains_every_trade_term_the_pages_use():
    assert set(REQUIRED) <= set(terms())


def test_a_missing_term_is_named_with_the_ones_that_exist():
    with pytest.raises(KeyError, match="no term 'vswr'.*vswr-return-loss"):
        term("vswr")


def _file(**changes) -> dict:
    entry = {"id": "ecc", "term": "ECC", "group": "placement", "plain": "How alike two signals are."}
    entry.update(changes)
    return {"groups": {"placement": "Two antennas"}, "term": [entry]}


@pytest.mark.parametrize("changes, message", [
    ({"id": "Bad Id"}, "lowercase words joined by hyphens"),
    ({"plain": "  "}, "plain is empty"),
    ({"term": ""}, "term is empty"),
    ({"group": "elsewhere"}, "group 'elsewhere' is not one of"),
    ({"plain": "Below 0.5 is the usual aim."}, "names its source"),
    ({"why": "At 10 dB a tenth crosses over."}, "names its source"),
    ({"plain": "One. Two. Three. Four."}, "one to three sentences"),
    ({"colour": "red"}, "unknown field"),
    ({"also": ["", "x"]}, "also should be a list"),
])
def test_a_bad_entry_is_refused_with_what_is_wrong(changes, message):
    with pytest.raises(GlossaryError, match=message):
        read_glossary(_file(**changes))


def test_an_id_used_twice_is_refused():
    data = _file()
    data["term"].append(dict(data["term"][0]))
    with pytest.raises(GlossaryError, match="'ecc' is used twice"):
        read_glossary(data)


def test_a_number_with_its_source_is_accepted():
    [group] = read_glossary(_file(plain="Below 0.5 is the usual aim.", source="common practice"))
    assert group.terms[0].source == "common practice"


def _centimetres(text: str, frequency: str) -> float:
    return float(re.search(rf"about (\d+) cm at {frequency}", text).group(1))


def test_the_lengths_it_quotes_agree_with_the_speed_of_light():
    wavelength_700_cm = SPEED_OF_LIGHT_M_PER_S / 700e6 * 100  # 42.8 cm
    assert _centimetres(term("wavelength").plain, "700 MHz") == round(wavelength_700_cm)
    assert "about 15 cm at 2 GHz" in term("wavelength").plain  # 15.0 cm
    assert _centimetres(term("quarter-wave").plain, "700 MHz") == round(wavelength_700_cm / 4)  # 10.7 cm
    assert "4 cm at 1.8 GHz" in term("quarter-wave").plain  # 4.2 cm
    # Wheeler 1959: lambda / 2 pi = 6.8 cm at 700 MHz, "about a sixth of a wavelength" (1 / 2 pi = 0.159)
    assert _centimetres(term("near-field").plain, "700 MHz") == round(wavelength_700_cm / (2 * math.pi))
    assert abs(1 / (2 * math.pi) - 1 / 6) < 0.01


def test_the_decibel_figures_it_quotes_are_right():
    assert 10 ** (-6 / 10) == pytest.approx(0.25, abs=0.005)  # 6 dB return loss: "a quarter of the power"
    assert "6 dB, or VSWR 3:1, means a quarter" in term("vswr-return-loss").plain
    assert (1 + 0.5) / (1 - 0.5) == 3.0  # |S11| = 10^(-6/20) = 0.50 gives VSWR 3:1
    assert "At 10 dB a tenth" in term("isolation").plain  # 10^(-10/10) = 0.1
    assert 10 ** (23 / 10) / 1000 == pytest.approx(0.2, abs=0.001)  # 23 dBm = 0.2 W
    assert "23 dBm is 0.2 W" in term("db-dbm").plain
    assert 10 ** (3 / 10) == pytest.approx(2, abs=0.01)  # +3 dB: about twice the power
    assert -10 * math.log10(0.25) == pytest.approx(6.0, abs=0.03)  # 25 % efficiency: three quarters wasted


def test_the_power_classes_and_coverage_targets_it_quotes_are_the_engines():
    assert power_classes()[3].max_output_dbm == 23.0 and power_classes()[5].max_output_dbm == 20.0
    assert "Class 3, the usual one, is 23 dBm" in term("power-class").plain
    assert "class 5 is 20 dBm" in term("power-class").plain
    targets = coverage_data().targets
    assert round(targets["cat-m1"].ul_mcl_db) == 156 and targets["cat-nb1"].ul_mcl_db == 164.0  # TR 36.888, TR 45.820
    assert "about 156 dB for LTE-M and 164 dB for NB-IoT" in term("mcl").plain
