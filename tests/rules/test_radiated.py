"""Radiated estimates (rules/radiated.py, OTA-001..003) from the formulas.

TRP = conducted output + 10 log10(efficiency) - cable loss; TIS = conducted sensitivity - 10 log10(efficiency) +
cable loss (over the sphere an antenna's gain averages to its total efficiency: common practice). Power classes:
3GPP TS 36.101 Table 6.2.2-1 (class 3, 23 dBm), Tables 6.2.2F-1 / 6.2.2G-1 (class 5, 20 dBm; from memory).
"""

import math

import pytest

from rules.radiated import TIS, TRP, efficiency_db, shortfall_db, tis_estimate_dbm, trp_estimate_dbm
from tests.rules.design_builders import antenna, design, findings_of, run


@pytest.mark.parametrize(("conducted_dbm", "efficiency_pct", "cable_db", "expected_dbm"), [
    (23.0, 100.0, 0.0, 23.0),
    (23.0, 50.0, 0.0, 23.0 + 10 * math.log10(0.5)),  # 19.99 dBm
    (23.0, 50.0, 1.5, 23.0 + 10 * math.log10(0.5) - 1.5),
    (20.0, 25.0, 0.0, 20.0 + 10 * math.log10(0.25)),  # class 5 at 25 %: 13.98 dBm
])
def test_trp_is_the_conducted_power_scaled_by_efficiency_less_the_cable(conducted_dbm, efficiency_pct, cable_db,
                                                                          expected_dbm):
    assert trp_estimate_dbm(conducted_dbm, efficiency_pct, cable_db) == pytest.approx(expected_dbm)


@pytest.mark.parametrize(("sensitivity_dbm", "efficiency_pct", "cable_db", "expected_dbm"), [
    (-100.0, 100.0, 0.0, -100.0),
    (-100.0, 50.0, 0.0, -100.0 - 10 * math.log10(0.5)),  # -96.99 dBm: half the power, 3 dB worse
    (-107.0, 40.0, 2.0, -107.0 - 10 * math.log10(0.4) + 2.0),
])
def test_tis_is_the_conducted_sensitivity_worsened_by_efficiency_and_cable(sensitivity_dbm, efficiency_pct, cable_db,
                                                                           expected_dbm):
    assert tis_estimate_dbm(sensitivity_dbm, efficiency_pct, cable_db) == pytest.approx(expected_dbm)


def test_an_antenna_of_zero_efficiency_radiates_nothing_and_has_no_finite_figure():
    assert efficiency_db(0.0) is None
    assert trp_estimate_dbm(23.0, 0.0, 0.0) is None and tis_estimate_dbm(-100.0, 0.0, 0.0) is None
    assert shortfall_db(TRP, None, 20.0) is None


def test_shortfall_is_positive_when_the_target_is_missed():
    assert shortfall_db(TRP, 18.0, 20.0) == pytest.approx(2.0)  # TRP: at least the target
    assert shortfall_db(TIS, -95.0, -98.0) == pytest.approx(3.0)  # TIS: at most the target
    assert shortfall_db(TIS, -100.0, -98.0) == pytest.approx(-2.0)


def ota_design(efficiency, targets, sensitivity=None, **modem):
    return design("cat-m1", antennas=[antenna("A", efficiency_pct=efficiency, cable_loss_db=1.0)],
                  modem={"conducted_sensitivity_dbm": sensitivity or {}, **modem},
                  deployment={"radiated_targets_dbm": targets})


def test_trp_below_the_target_warns_with_the_formulas_numbers():
    # Class 5: 20 dBm; 30 % is -5.23 dB; 1 dB cable: 13.77 dBm against 16 dBm.
    evaluation = run(ota_design({"B8": 30}, {"trp": {"B8": 16}}, power_class=5))
    [finding] = findings_of(evaluation, "ota")
    expected = 20 + 10 * math.log10(0.30) - 1.0
    assert (finding.id, finding.severity, finding.subjects) == ("OTA-001", "warning", ("A", "B8"))
    assert finding.evidence["quantity"] == "trp" and finding.evidence["target_dbm"] == 16.0
    assert finding.evidence["estimate_dbm"] == pytest.approx(expected, abs=0.005)
    assert finding.evidence["shortfall_db"] == pytest.approx(16 - expected, abs=0.005)
    assert finding.basis == "datasheet"
    assert "over-the-air test decides" in finding.explanation


def test_tis_above_the_target_warns_and_a_measured_efficiency_makes_it_measured():
    # -104 dBm conducted, 40 % (-3.98 dB), 1 dB cable: -99.02 dBm against -101 dBm.
    document = ota_design({"B3": 40}, {"tis": {"B3": -101}}, {"B3": -104})
    document["antennas"][0]["efficiency_source"] = "measured"
    [finding] = findings_of(run(document), "ota")
    expected = -104 - 10 * math.log10(0.40) + 1.0
    assert (finding.id, finding.severity) == ("OTA-002", "warning")
    assert finding.evidence["estimate_dbm"] == pytest.approx(expected, abs=0.005)
    assert finding.basis == "measured"
    assert "main antenna" in finding.explanation


def test_bands_that_meet_their_targets_share_one_note():
    # Class 3 (23 dBm) at 50 %: 19.99 dBm, less 1 dB cable: 18.99 against 18; at 60 %: 20.78 - 1 = 19.78 against 15.
    evaluation = run(ota_design({"B3": 50, "B20": 60}, {"trp": {"B3": 18, "B20": 15}}))
    [note] = findings_of(evaluation, "ota")
    assert (note.id, note.severity) == ("OTA-001", "note")
    assert note.evidence["bands"] == ["B3", "B20"]
    assert note.evidence["band"] == "B3"  # the least margin, 0.99 dB
    assert note.evidence["estimate_dbm"] == pytest.approx(23 + 10 * math.log10(0.5) - 1, abs=0.005)


def test_targets_without_their_inputs_get_a_note_naming_each():
    evaluation = run(ota_design({"B3": 50}, {"trp": {"B8": 20, "B1": 20}, "tis": {"B3": -100}}))
    [note] = findings_of(evaluation, "ota")
    assert (note.id, note.severity) == ("OTA-003", "note")
    reasons = {(quantity, band): reason for quantity, band, reason in note.evidence["missing"]}
    assert reasons[("trp", "B8")] == "A's efficiency in B8 not entered"
    assert reasons[("trp", "B1")] == "not a selected band"
    assert "conducted sensitivity not entered" in reasons[("tis", "B3")]


def test_a_trp_target_on_a_supplemental_downlink_band_is_not_judged():
    # B32 (TS 36.101 Table 5.5-1) is downlink only.
    document = design("cat-6", bands=["B3", "B32"], antennas=[antenna("A", efficiency_pct={"B32": 50}),
                                                               antenna("B", "receive", (200, 20, 10), (0, 1, 0))],
                      deployment={"radiated_targets_dbm": {"trp": {"B32": 18}}})
    [note] = findings_of(run(document), "ota")
    assert note.id == "OTA-003" and "supplemental-downlink" in note.evidence["missing"][0][2]


def test_zero_efficiency_misses_every_target_without_an_infinite_number():
    [finding] = findings_of(run(ota_design({"B3": 0}, {"trp": {"B3": 10}})), "ota")
    assert finding.severity == "warning" and finding.evidence["estimate_dbm"] is None


def test_no_targets_no_radiated_findings():
    assert findings_of(run(design("cat-m1")), "ota") == []
