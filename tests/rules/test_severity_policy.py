"""One test per row of the severity policy (design.md), each named for the situation it covers.

Band edges: 3GPP TS 36.101 Table 5.5-1 (B3 UL 1710-1785 / DL 1805-1880, B8 UL 880-915 / DL 925-960,
B20 UL 832-862 / DL 791-821, B12 UL 699-716, B71 DL 617-652). Lengths from c = 299 792 458 m/s.
At 791 MHz (lowest edge of B3+B8+B20): lambda = 379.0 mm, lambda/4 = 94.7 mm, lambda/2pi = 60.3 mm.
"""

import math

import numpy as np
import pytest

from rules.catalog import Band
from rules.checks.coexistence import victims_of
from rules.coexistence import harmonic_hits, near_ranges
from rules.design import parse_design
from rules.measurements import LoadedMeasurement
from rules.touchstone import parse_touchstone
from tests.rules.design_builders import antenna, design, findings_of, run, severities_of

C_M_PER_S = 299_792_458.0  # SI definition
QUARTER_WAVE_791_MM = C_M_PER_S / 791e6 / 4 * 1000  # 94.7 mm
NEAR_FIELD_791_MM = C_M_PER_S / 791e6 / (2 * math.pi) * 1000  # 60.3 mm (Wheeler 1959)


def pair(distance_mm: float, second_polarization=(1, 0, 0), category: str = "cat-1") -> dict:
    return design(category, antennas=[
        antenna("A", "main", (20, 20, 10), (1, 0, 0)),
        antenna("B", "receive", (20 + distance_mm, 20, 10), second_polarization),
    ])


# -- antenna count ---------------------------------------------------------------------------------------

def test_it_blocks_cat1_with_one_antenna_and_no_operator_approval():
    evaluation = run(design("cat-1"))
    [finding] = findings_of(evaluation, "antenna-count")
    assert finding.severity == "blocker"
    assert finding.evidence["required"] == 2 and finding.evidence["fitted"] == 1


@pytest.mark.parametrize("category", ["cat-4", "cat-6"])
def test_it_blocks_cat4_and_up_with_one_antenna_even_with_operator_approval(category):
    evaluation = run(design(category, modem={"operator_single_antenna_approval": True}))
    assert severities_of(evaluation, "antenna-count") == ["blocker"]


def test_it_warns_on_cat1_with_one_antenna_and_recorded_operator_approval():
    evaluation = run(design("cat-1", modem={"operator_single_antenna_approval": True}))
    [finding] = findings_of(evaluation, "antenna-count")
    assert finding.severity == "warning"
    assert (finding.evidence["required"], finding.evidence["fitted"]) == (2, 1)


@pytest.mark.parametrize("category", ["cat-nb1", "cat-nb2", "cat-m1", "cat-m2", "cat-1bis"])
def test_it_accepts_one_antenna_for_single_receive_categories(category):
    # TS 36.306: NB1/NB2, M1/M2 and Cat 1bis are specified with one receive antenna.
    assert severities_of(run(design(category)), "antenna-count") == []


def test_it_blocks_redcap_module_with_two_branches_and_one_antenna():
    # TS 38.300 §16.13: a RedCap UE has one or two receive branches; the module says which.
    evaluation = run(design("nr-redcap", bands=["n3", "n8", "n20"], modem={"rx_ports": 2}))
    # ...and, running one branch as fitted, the note that operators can bar 1Rx RedCap devices (CNT-004)
    assert [(f.id, f.severity) for f in findings_of(evaluation, "antenna-count")] == [
        ("CNT-001", "blocker"), ("CNT-004", "note")]


def test_it_notes_extra_antennas_a_single_receive_category_wont_use():
    evaluation = run(design("cat-m1", antennas=[antenna("A"), antenna("B", "receive", (200, 20, 10))]))
    [finding] = findings_of(evaluation, "antenna-count")
    assert finding.severity == "note"
    assert finding.subjects == ("B",)
    assert (finding.evidence["required"], finding.evidence["fitted"]) == (1, 2)


def test_it_blocks_a_design_without_any_antenna():
    evaluation = run(design("cat-m1", antennas=[]))
    assert severities_of(evaluation, "antenna-count") == ["blocker"]
    assert evaluation.has_blocker


# -- band coverage ---------------------------------------------------------------------------------------

def test_it_blocks_a_main_antenna_that_misses_a_bands_uplink():
    # B20 uplink 832-862 MHz (TS 36.101); the antenna stops at 850.
    evaluation = run(design("cat-m1", antennas=[antenna("A", ranges_mhz=[[700, 850], [1700, 1900]])]))
    [finding] = [f for f in findings_of(evaluation, "band-coverage") if f.evidence["band"] == "B20"]
    assert finding.severity == "blocker"
    assert finding.evidence["missing_mhz"] == [[850.0, 862.0]]


def test_it_blocks_a_receive_antenna_that_misses_a_bands_downlink_but_not_its_uplink():
    # B8 DL 925-960 (TS 36.101). The receive antenna covers B8 UL only up to 930: the uplink gap is not its duty.
    receive = antenna("B", "receive", (200, 20, 10), (0, 1, 0), ranges_mhz=[[780, 930], [1700, 1900]])
    evaluation = run(design("cat-1", antennas=[antenna("A"), receive]))
    [finding] = findings_of(evaluation, "band-coverage")
    assert finding.severity == "blocker" and finding.subjects == ("B", "B8")
    assert finding.evidence["missing_mhz"] == [[930.0, 960.0]]


def test_it_notes_that_coverage_is_unknown_without_rated_ranges():
    evaluation = run(design("cat-m1", antennas=[antenna("A", ranges_mhz=None)]))
    assert severities_of(evaluation, "band-coverage") == ["note"]


# -- separation ------------------------------------------------------------------------------------------

def test_it_blocks_copolarized_pair_inside_near_field():
    [finding] = findings_of(run(pair(55)), "separation")
    assert finding.severity == "blocker"
    assert finding.evidence["frequency_mhz"] == 791
    assert finding.evidence["distance_mm"] == 55.0
    assert finding.evidence["quarter_wave_mm"] == pytest.approx(QUARTER_WAVE_791_MM, abs=0.05)
    assert finding.evidence["near_field_mm"] == pytest.approx(NEAR_FIELD_791_MM, abs=0.05)
    assert finding.evidence["polarization_angle_deg"] == 0.0


def test_it_warns_on_crosspolarized_pair_inside_near_field():
    assert severities_of(run(pair(55, (0, 1, 0))), "separation") == ["warning"]


def test_it_warns_on_copolarized_pair_between_near_field_and_quarter_wave():
    assert severities_of(run(pair(80)), "separation") == ["warning"]


def test_it_notes_crosspolarized_pair_between_near_field_and_quarter_wave():
    [finding] = findings_of(run(pair(80, (0, 0, 1))), "separation")
    assert finding.severity == "note"
    assert finding.evidence["polarization_angle_deg"] == 90.0


def test_it_treats_antiparallel_axes_as_copolarized():
    assert severities_of(run(pair(55, (-1, 0, 0))), "separation") == ["blocker"]


def test_it_counts_44_degrees_as_copolarized_and_45_as_crossed():
    tilt_44 = (math.cos(math.radians(44)), math.sin(math.radians(44)), 0)
    tilt_45 = (1, 1, 0)
    assert severities_of(run(pair(55, tilt_44)), "separation") == ["blocker"]
    assert severities_of(run(pair(55, tilt_45)), "separation") == ["warning"]


def test_it_accepts_a_pair_a_quarter_wave_apart():
    assert severities_of(run(pair(QUARTER_WAVE_791_MM + 0.5)), "separation") == []


def test_it_judges_spacing_at_the_lowest_edge_uplink_or_downlink():
    # B71 DL 617-652 MHz lies below its UL 663-698 (TS 36.101): judged at 617 MHz.
    evaluation = run(design("cat-1", bands=["B71", "B2"], antennas=[
        antenna("A", "main", (0, 0, 0)), antenna("B", "receive", (110, 0, 0))]))
    [finding] = findings_of(evaluation, "separation")
    assert finding.evidence["frequency_mhz"] == 617
    assert finding.evidence["quarter_wave_mm"] == pytest.approx(C_M_PER_S / 617e6 / 4 * 1000, abs=0.05)
    assert finding.severity == "warning"


# -- ground plane, enclosure, device size ---------------------------------------------------------------

def test_it_warns_on_ground_plane_shorter_than_a_quarter_wave():
    # 791 MHz: lambda/4 94.7 mm, lambda/8 47.4 mm
    [finding] = findings_of(run(design(ground_plane_mm=[80, 40])), "ground-plane")
    assert finding.severity == "warning"
    assert finding.evidence["length_mm"] == 80.0
    assert finding.evidence["quarter_wave_mm"] == pytest.approx(QUARTER_WAVE_791_MM, abs=0.05)


def test_it_blocks_ground_plane_shorter_than_an_eighth_wave():
    assert severities_of(run(design(ground_plane_mm=[45, 30])), "ground-plane") == ["blocker"]


def test_it_accepts_ground_plane_of_a_quarter_wave():
    assert severities_of(run(design(ground_plane_mm=[95, 30])), "ground-plane") == []


def test_it_blocks_internal_antenna_in_metal_enclosure():
    assert severities_of(run(design(enclosure={"material": "metal"})), "enclosure") == ["blocker"]


def test_it_warns_on_internal_antenna_in_mixed_enclosure():
    assert severities_of(run(design(enclosure={"material": "mixed"})), "enclosure") == ["warning"]


def test_it_accepts_external_antenna_on_metal_enclosure():
    evaluation = run(design(enclosure={"material": "metal"}, antennas=[antenna("A", mounting="external")]))
    assert severities_of(evaluation, "enclosure") == []


def test_it_warns_when_the_device_is_electrically_too_small_for_the_low_bands():
    # 40 x 30 mm board at 699 MHz: a = 25 mm, ka = 0.366, McLean Q = 23.1; at VSWR 3 that allows
    # FBW = 2 / (23.1 * sqrt 3) = 5.0 %, while B12 + B20 + B8 span 699-960 MHz (31.5 %).
    evaluation = run(design("cat-m1", bands=["B12", "B20", "B8"], ground_plane_mm=[40, 30]))
    [finding] = findings_of(evaluation, "device-size")
    assert finding.severity == "warning"
    assert finding.evidence["ka"] == pytest.approx(2 * math.pi * 25 / (C_M_PER_S / 699e6 * 1000), abs=1e-3)


def test_it_warns_for_a_100_by_50_mm_board_covering_698_to_960_mhz():
    # The case McLean's sphere alone missed: a = 55.9 mm, ka = 0.818 at 698 MHz, McLean Q = 3.05, single-tuned
    # FBW 37.9 % > 31.6 % needed. The planar bound (Gustafsson et al. 2007): gamma of a 2:1 plate ~ 0.63 l^3
    # (moment method, between the inscribed and circumscribed ellipses' 0.35 and 1.17 l^3), Q >= 6 pi /
    # (k^3 gamma) = 9.5; Bode-Fano at VSWR 3: B x efficiency <= pi / (9.5 ln 2) = 47 %, half of it 24 %.
    # B85 (698-746) with B20, B8: 698-960 MHz (3GPP TS 36.101 Table 5.5-1).
    evaluation = run(design("cat-m1", bands=["B85", "B20", "B8"], ground_plane_mm=[100, 50]))
    [finding] = findings_of(evaluation, "device-size")
    evidence = finding.evidence
    assert evidence["needed_fractional_bandwidth_pct"] == pytest.approx(100 * 262 / 829, abs=0.05)
    assert evidence["q_sphere"] == pytest.approx(3.05, abs=0.01)
    assert evidence["q_planar"] == pytest.approx(9.5, abs=0.15)
    assert evidence["bandwidth_efficiency_limit_pct"] == pytest.approx(47.5, abs=0.8)
    assert evidence["warning_threshold_pct"] == pytest.approx(evidence["bandwidth_efficiency_limit_pct"] / 2)
    assert evidence["efficiency_pct"] == 100.0


def test_it_accepts_the_same_board_when_the_entered_efficiency_pays_for_the_bandwidth():
    # Bandwidth x efficiency: 31.6 % x 0.5 = 15.8 %, under half the 47 % Bode-Fano cap.
    wide = antenna("A", efficiency_pct={"B85": 50, "B20": 55, "B8": 60})
    evaluation = run(design("cat-m1", bands=["B85", "B20", "B8"], ground_plane_mm=[100, 50], antennas=[wide]))
    assert severities_of(evaluation, "device-size") == []


def test_it_accepts_a_board_of_a_quarter_wave_for_the_eu_low_bands():
    # 130 x 80 mm at 791 MHz (B20 + B8: 791-960 MHz, 19.3 %): Q >= 2.6, Bode-Fano cap above 100 %.
    assert severities_of(run(design("cat-m1")), "device-size") == []


# -- gain limits, throughput ---------------------------------------------------------------------------

def test_it_blocks_antenna_gain_minus_cable_loss_above_the_approval_limit():
    document = design("cat-m1", modem={"gain_limits_dbi": {"B8": 2.0}},
                      antennas=[antenna("A", peak_gain_dbi=3.0, cable_loss_db=0.5)])
    [finding] = findings_of(run(document), "gain-limit")
    assert finding.severity == "blocker"
    assert (finding.evidence["band"], finding.evidence["gain_dbi"], finding.evidence["limit_dbi"]) == ("B8", 2.5, 2.0)


def test_it_accepts_gain_brought_under_the_limit_by_cable_loss():
    document = design("cat-m1", modem={"gain_limits_dbi": {"B8": 2.0}},
                      antennas=[antenna("A", mounting="external", peak_gain_dbi=3.0, cable_loss_db=1.0)])
    assert severities_of(run(document), "gain-limit") == []


def test_it_blocks_downlink_need_above_a_full_duplex_lte_m_modules_peak():
    # TS 36.306 Table 4.1A-1: Cat M1 carries at most 1 000 bits per 1 ms TTI on the downlink (FD-FDD).
    document = design("cat-m1", modem={"full_duplex": True}, deployment={"required_dl_kbps": 1500})
    [finding] = findings_of(run(document), "throughput")
    assert finding.severity == "blocker"
    assert finding.evidence == {"direction": "dl", "required_kbps": 1500.0, "peak_kbps": 1000.0,
                                "duplex_mode": "FD-FDD", "tdd_pattern": None}


def test_it_judges_an_lte_m_module_at_its_half_duplex_peak_unless_it_declares_full_duplex():
    # Rel-13 Cat M1 HD-FDD peaks: 300 kbps DL (3 blocks of 1 000 bits per 10 ms), 375 kbps UL (3 per 8 ms)
    # (from memory; block size from TS 36.306 Table 4.1A-1). 500 kbps passes full duplex, not half duplex.
    half = run(design("cat-m1", deployment={"required_dl_kbps": 500, "required_ul_kbps": 500}))
    assert {(f.evidence["direction"], f.evidence["peak_kbps"], f.evidence["duplex_mode"])
            for f in findings_of(half, "throughput")} == {("dl", 300.0, "HD-FDD"), ("ul", 375.0, "HD-FDD")}
    full = run(design("cat-m1", modem={"full_duplex": True},
                      deployment={"required_dl_kbps": 500, "required_ul_kbps": 500}))
    assert findings_of(full, "throughput") == []


def test_it_gives_redcap_on_a_tdd_band_its_share_of_the_tdd_pattern():
    # TS 38.306 §4.1.2 with 51 PRB at 30 kHz: 1 layer 256QAM DL 109.1 Mbps, 64QAM UL 87.6 Mbps; TDD DDDSU with
    # S = 10:2:2 (common practice, from memory): DL share (3 + 10/14) / 5 = 0.743, UL (1 + 2/14) / 5 = 0.229.
    document = design("nr-redcap", bands=["n78"], modem={"rx_ports": 1},
                      deployment={"required_dl_kbps": 100_000, "required_ul_kbps": 50_000})
    flagged = {f.evidence["direction"]: f for f in findings_of(run(document), "throughput")}
    assert set(flagged) == {"dl", "ul"}  # 100 Mbps DL fits FDD's 109 Mbps but not TDD's 81 Mbps
    assert flagged["dl"].evidence["peak_kbps"] == pytest.approx(109_145.6 * 0.742857, rel=1e-3)
    assert flagged["ul"].evidence["peak_kbps"] == pytest.approx(87_560 * 0.228571, rel=1e-3)
    assert flagged["ul"].evidence["tdd_pattern"] == "DDDSU with S = 10:2:2"
    fdd = run(design("nr-redcap", bands=["n8"], modem={"rx_ports": 1}, deployment={"required_dl_kbps": 100_000}))
    assert findings_of(fdd, "throughput") == []


def test_it_blocks_uplink_need_above_the_categorys_peak():
    # TS 36.306 Table 4.1-1: Cat 1 uplink 5 160 bits per TTI.
    document = design("cat-1", modem={"operator_single_antenna_approval": True},
                      deployment={"required_ul_kbps": 6000})
    [finding] = findings_of(run(document), "throughput")
    assert finding.evidence["direction"] == "ul" and finding.evidence["peak_kbps"] == 5160.0


# -- measurements ---------------------------------------------------------------------------------------

def measured(rows: dict[str, tuple[float, float]], step_mhz: int = 5) -> tuple[dict, tuple[LoadedMeasurement, ...]]:
    """A two-port measurement with S11 = S22 = a and S21 = S12 = b (real) per frequency block."""
    lines = ["# MHz S RI R 50"]
    for frequency in range(700, 2201, step_mhz):
        a, b = rows["low"] if frequency < 1000 else rows["high"]
        lines.append(f"{frequency} {a} 0 {b} 0 {b} 0 {a} 0")
    network = parse_touchstone("\n".join(lines) + "\n", source="pair.s2p")
    document = design("cat-1", antennas=[antenna("A", "main", (0, 0, 0)), antenna("B", "receive", (120, 0, 0), (0, 1, 0))],
                      measurements=[{"file": "pair.s2p", "ports": ["A", "B"]}])
    return document, (LoadedMeasurement("pair.s2p", network, ("A", "B")),)


def test_it_warns_on_return_loss_below_6_db():
    # |S11| = 0.6: RL = -20 log10 0.6 = 4.44 dB, VSWR = 1.6 / 0.4 = 4.0
    document, measurements = measured({"low": (0.6, 0.05), "high": (0.1, 0.05)})
    findings = [f for f in findings_of(run(document, measurements), "matching") if f.severity != "note"]
    assert {f.severity for f in findings} == {"warning"}
    assert {f.evidence["band"] for f in findings} == {"B8", "B20"}
    assert findings[0].evidence["return_loss_db"] == pytest.approx(-20 * math.log10(0.6), abs=0.01)
    assert findings[0].evidence["vswr"] == pytest.approx(4.0, abs=0.01)


def test_it_blocks_return_loss_below_3_5_db():
    document, measurements = measured({"low": (0.1, 0.05), "high": (0.75, 0.05)})  # 2.50 dB in B3
    findings = [f for f in findings_of(run(document, measurements), "matching") if f.severity != "note"]
    assert {(f.severity, f.evidence["band"]) for f in findings} == {("blocker", "B3")}


def test_it_warns_on_isolation_below_10_db_and_blocks_below_6_db():
    # |S21| = 0.4: 7.96 dB; |S21| = 0.55: 5.19 dB
    document, measurements = measured({"low": (0.1, 0.4), "high": (0.1, 0.55)})
    findings = findings_of(run(document, measurements), "isolation")
    assert {(f.severity, f.evidence["band"]) for f in findings} == {("warning", "B8"), ("warning", "B20"),
                                                                     ("blocker", "B3")}
    b8 = next(f for f in findings if f.evidence["band"] == "B8")
    assert b8.evidence["isolation_db"] == pytest.approx(-20 * math.log10(0.4), abs=0.01)
    assert b8.evidence["ports"] == [1, 2]


def test_it_warns_on_ecc_above_0_5_and_blocks_above_0_7():
    # Blanch et al. 2003, S11 = S22 = a, S21 = S12 = b: ECC = 4a^2 b^2 / (1 - a^2 - b^2)^2
    def ecc(a, b):
        return 4 * a**2 * b**2 / (1 - a**2 - b**2) ** 2
    low, high = (0.46, 0.46), (0.5, 0.5)  # ECC 0.538 and 1.0
    assert 0.5 < ecc(*low) <= 0.7 < ecc(*high)
    document, measurements = measured({"low": low, "high": high})
    findings = findings_of(run(document, measurements), "correlation")
    assert {(f.severity, f.evidence["band"]) for f in findings} == {("warning", "B8"), ("warning", "B20"),
                                                                     ("blocker", "B3")}
    b8 = next(f for f in findings if f.evidence["band"] == "B8")
    assert b8.evidence["ecc"] == pytest.approx(ecc(*low), abs=1e-3)
    assert "lossless" in b8.explanation


def test_it_says_when_a_measurement_does_not_cover_a_band():
    document, measurements = measured({"low": (0.1, 0.05), "high": (0.1, 0.05)})
    document["modem"]["bands"] = ["B3", "B7"]  # B7 UL 2500-2570 / DL 2620-2690: beyond the 2200 MHz sweep
    notes = [f for f in findings_of(run(document, measurements), "matching") if f.severity == "note"]
    assert {f.evidence["band"] for f in notes} == {"B7"}
    assert notes[0].evidence["missing_mhz"] == [[2500.0, 2570.0], [2620.0, 2690.0]]


def test_it_warns_on_entered_efficiency_below_25_percent():
    evaluation = run(design("cat-m1", antennas=[antenna("A", efficiency_pct={"B20": 22, "B8": 30})]))
    [finding] = findings_of(evaluation, "efficiency")
    assert finding.severity == "warning"
    assert (finding.evidence["band"], finding.evidence["efficiency_pct"]) == ("B20", 22.0)
    assert finding.basis == "datasheet" and finding.evidence["source"] == "datasheet"
    # -10 log10(0.22) = 6.6 dB, paid on uplink and downlink by a main antenna
    assert finding.evidence["loss_db"] == pytest.approx(6.58, abs=0.01)
    assert "uplink" in finding.explanation and "downlink" in finding.explanation


def test_it_warns_when_the_measured_efficiency_bound_is_below_25_percent():
    # |S11|^2 + |S21|^2 = 0.9^2 + 0.05^2 = 0.8125: at most 18.75 % can be radiated. The network is passive:
    # for S11 = S22 = a, S21 = S12 = b the singular values are |a + b| = 0.95 and |a - b| (linear algebra).
    document, measurements = measured({"low": (0.9, 0.05), "high": (0.1, 0.05)})
    findings = findings_of(run(document, measurements), "efficiency")
    assert {f.evidence["band"] for f in findings} == {"B8", "B20"}
    assert findings[0].evidence["efficiency_pct"] == pytest.approx(18.75, abs=0.06)  # shown to 0.1 %
    assert {f.basis for f in findings} == {"measured"}


# -- people and paperwork ------------------------------------------------------------------------------

def test_it_notes_rf_exposure_when_people_are_closer_than_200_mm():
    # common practice: exposure evaluation usually needed within 20 cm
    findings = findings_of(run(design(deployment={"body_distance_mm": 150})), "rf-exposure")
    assert [f.severity for f in findings] == ["note"]
    assert "regulator" in findings[0].explanation


def test_it_says_nothing_of_rf_exposure_at_200_mm_or_more():
    assert findings_of(run(design(deployment={"body_distance_mm": 200})), "rf-exposure") == []


def test_it_always_names_carrier_certification_and_regulatory_steps():
    evaluation = run(design())
    notes = findings_of(evaluation, "certification")
    assert {f.severity for f in notes} == {"note"}
    text = " ".join(f.title + " " + f.explanation for f in notes).lower()
    assert "carrier acceptance" in text and "certification" in text and "regulat" in text


def test_a_clean_design_raises_only_notes():
    evaluation = run(design("cat-m1", antennas=[antenna("A", efficiency_pct={"B3": 50, "B8": 40, "B20": 35})]))
    assert evaluation.summary["blocker"] == 0 and evaluation.summary["warning"] == 0
    assert np.all([f.severity == "note" for f in evaluation.findings])


# -- rule set 2 (design.md, "Rule set 2: what changes") ------------------------------------------------------
# B20 (TS 36.101 Table 5.5-1: UL 832-862, DL 791-821) has the lowest edge of B3+B8+B20, so it is the band that
# sets the judging frequency. Far-field patterns come from short dipoles (benchmarks/far_field_data.py).

from benchmarks.far_field_data import dipole_field, grid, pattern_text  # noqa: E402
from rules.coverage import second_antenna_gain  # noqa: E402
from rules.findings import BASES  # noqa: E402
from rules.measurements import attach_measurements  # noqa: E402

PATTERN_FREQUENCIES_MHZ = [800.0, 940.0, 1840.0]  # inside the downlinks of B20, B8 and B3 (TS 36.101)


def two_port(blocks: list[tuple[float, float, float, float]], step_mhz: int = 5) -> str:
    """Touchstone text of S11 = S22 = a, S21 = S12 = b (real), `blocks` of (from_mhz, to_mhz, a, b); outside
    every block a = 0.1, b = 0.05 (well matched, isolated)."""
    lines = ["# MHz S RI R 50"]
    for frequency in range(700, 2201, step_mhz):
        a, b = next(((a, b) for low, high, a, b in blocks if low <= frequency <= high), (0.1, 0.05))
        lines.append(f"{frequency} {a} 0 {b} 0 {b} 0 {a} 0")
    return "\n".join(lines) + "\n"


def dipole_file(axis, position_mm) -> str:
    theta, phi = grid(10.0)
    fields = dipole_field(PATTERN_FREQUENCIES_MHZ, theta, phi, axis, position_mm)
    return pattern_text(PATTERN_FREQUENCIES_MHZ, theta, phi, *fields)


def evaluate_with(document: dict, files: dict[str, str]):
    from rules.design import parse_design
    from rules.evaluate import evaluate

    parsed = parse_design(document)
    return evaluate(parsed, attach_measurements(parsed, files.__getitem__))


def close_pair(second_polarization=(0, 1, 0), efficiency=None, **extra) -> dict:
    """A and B 55 mm apart, inside the 60.3 mm near field at 791 MHz."""
    more = {"efficiency_pct": efficiency} if efficiency is not None else {}
    return design("cat-1", antennas=[antenna("A", "main", (20, 20, 10), (1, 0, 0), **more),
                                     antenna("B", "receive", (75, 20, 10), second_polarization, **more)], **extra)


FAR_FIELDS = [{"kind": "far-field", "file": "a.csv", "antenna": "A"},
              {"kind": "far-field", "file": "b.csv", "antenna": "B"}]


def test_every_finding_names_a_basis():
    evaluation = run(design("cat-1", antennas=[antenna("A", efficiency_pct={"B8": 20})]))
    assert {finding.basis for finding in evaluation.findings} <= set(BASES)
    assert all("basis" in finding.as_dict() for finding in evaluation.findings)


def test_a_close_pair_is_a_measured_note_when_far_field_patterns_show_ecc_at_most_0_5():
    # Crossed dipoles (x and y axes) displaced along x: uncorrelated by symmetry (Vaughan & Andersen 1987).
    files = {"a.csv": dipole_file((1, 0, 0), (20, 20, 10)), "b.csv": dipole_file((0, 1, 0), (75, 20, 10))}
    evaluation = evaluate_with(close_pair(measurements=FAR_FIELDS), files)
    [finding] = findings_of(evaluation, "separation")
    assert (finding.severity, finding.basis) == ("note", "measured")
    assert finding.evidence["design_severity"] == "warning"
    assert finding.evidence["outranked_by"] == ["a.csv", "b.csv"]
    assert finding.evidence["measured_method"] == "far-field" and finding.evidence["measured_band"] == "B20"
    assert finding.evidence["measured_ecc"] == pytest.approx(0.0, abs=1e-3)
    assert "outranks the spacing rule" in finding.explanation


def test_a_close_copolarized_pair_stays_a_blocker_when_its_patterns_are_correlated():
    # Parallel z dipoles 55 mm apart at 800 MHz: kd = 0.922, Jakes 1974 gives rho = 0.855, ECC 0.73.
    files = {"a.csv": dipole_file((0, 0, 1), (20, 20, 10)), "b.csv": dipole_file((0, 0, 1), (75, 20, 10))}
    evaluation = evaluate_with(close_pair((1, 0, 0), measurements=FAR_FIELDS), files)
    [finding] = findings_of(evaluation, "separation")
    assert (finding.severity, finding.basis) == ("blocker", "design")
    assert "do not clear it" in finding.explanation
    blocker = next(f for f in findings_of(evaluation, "correlation") if f.evidence["band"] == "B20")
    assert blocker.id == "ECC-003" and blocker.severity == "blocker" and blocker.evidence["method"] == "far-field"
    x = 2 * math.pi * 55 / (C_M_PER_S / 800e6 * 1000)
    rho = 1.5 * (math.sin(x) / x + math.cos(x) / x**2 - math.sin(x) / x**3)
    assert blocker.evidence["ecc"] == pytest.approx(rho**2, abs=1e-3)


def test_a_close_pair_is_a_measured_note_when_sparameters_of_efficient_antennas_show_low_ecc_and_isolation():
    # a = 0.1, b = 0.05: isolation 26.0 dB, ECC 4 a^2 b^2 / (1 - a^2 - b^2)^2 = 1.0e-4 (Blanch 2003)
    document = close_pair((1, 0, 0), efficiency={"B3": 60, "B8": 55, "B20": 50},
                          measurements=[{"file": "pair.s2p", "ports": ["A", "B"]}])
    evaluation = evaluate_with(document, {"pair.s2p": two_port([])})
    [finding] = findings_of(evaluation, "separation")
    assert (finding.severity, finding.basis) == ("note", "measured")
    assert finding.evidence["design_severity"] == "blocker"
    assert finding.evidence["measured_isolation_db"] == pytest.approx(-20 * math.log10(0.05), abs=0.01)
    assert finding.evidence["outranked_by"] == ["pair.s2p"]


def test_sparameter_ecc_of_lossy_antennas_clears_nothing_and_says_a_far_field_measurement_decides():
    document = close_pair((1, 0, 0), efficiency={"B3": 60, "B8": 45, "B20": 40},
                          measurements=[{"file": "pair.s2p", "ports": ["A", "B"]}])
    evaluation = evaluate_with(document, {"pair.s2p": two_port([])})
    [finding] = findings_of(evaluation, "separation")
    assert (finding.severity, finding.basis) == ("blocker", "design")
    assert "far-field" in finding.explanation
    [optimistic] = findings_of(evaluation, "correlation")
    assert (optimistic.id, optimistic.severity) == ("ECC-002", "note")
    assert optimistic.evidence["method"] == "s-parameters" and optimistic.evidence["trustworthy"] is False
    assert optimistic.evidence["bands"] == ["B8", "B20"]  # B3: both at 60 %, trusted
    assert "far-field" in optimistic.explanation


def test_sparameter_ecc_without_entered_efficiency_clears_nothing():
    document = close_pair((1, 0, 0), measurements=[{"file": "pair.s2p", "ports": ["A", "B"]}])
    evaluation = evaluate_with(document, {"pair.s2p": two_port([])})
    assert severities_of(evaluation, "separation") == ["blocker"]


def test_low_far_field_ecc_does_not_clear_a_pair_whose_measured_isolation_is_below_10_db():
    # b = 0.4 across B20: isolation 7.96 dB
    files = {"a.csv": dipole_file((1, 0, 0), (20, 20, 10)), "b.csv": dipole_file((0, 1, 0), (75, 20, 10)),
             "pair.s2p": two_port([(780, 870, 0.2, 0.4)])}
    document = close_pair(measurements=[*FAR_FIELDS, {"file": "pair.s2p", "ports": ["A", "B"]}])
    [finding] = findings_of(evaluate_with(document, files), "separation")
    assert (finding.severity, finding.basis) == ("warning", "design")
    assert "7.96 dB isolation" in finding.explanation or "8.0 dB isolation" in finding.explanation


def test_correlation_is_judged_over_the_downlink_not_the_uplink():
    # B13 (TS 36.101): UL 777-787, DL 746-756. a = b = 0.46 gives ECC 0.54 (Blanch 2003) at 770-795 MHz only.
    pair_design = design("cat-1", bands=["B13"], antennas=[
        antenna("A", "main", (0, 0, 0), efficiency_pct={"B13": 60}),
        antenna("B", "receive", (150, 0, 0), (0, 1, 0), efficiency_pct={"B13": 60})],
        measurements=[{"file": "pair.s2p", "ports": ["A", "B"]}])
    uplink_only = evaluate_with(pair_design, {"pair.s2p": two_port([(770, 795, 0.46, 0.46)])})
    assert [f.severity for f in findings_of(uplink_only, "correlation") if f.id == "ECC-001"] == []
    downlink = evaluate_with(pair_design, {"pair.s2p": two_port([(745, 760, 0.46, 0.46)])})
    [finding] = [f for f in findings_of(downlink, "correlation") if f.id == "ECC-001"]
    assert finding.severity == "warning" and finding.evidence["method"] == "s-parameters"
    assert 746 <= finding.evidence["frequency_mhz"] <= 756


def test_a_measurement_that_is_not_passive_is_a_measurement_warning_and_feeds_no_correlation_or_efficiency():
    # S11 = S22 = 0.6, S21 = S12 = 0.5 passes the column test (0.36 + 0.25 = 0.61 <= 1) but S has the singular
    # value 0.6 + 0.5 = 1.1 > 1 (symmetric 2x2: singular values |a + b|, |a - b|).
    document = close_pair((1, 0, 0), efficiency={"B3": 60, "B8": 60, "B20": 60},
                          measurements=[{"file": "pair.s2p", "ports": ["A", "B"]}])
    evaluation = evaluate_with(document, {"pair.s2p": two_port([(780, 870, 0.6, 0.5)])})
    [warning] = findings_of(evaluation, "measurement")
    assert (warning.id, warning.severity, warning.basis) == ("MEA-001", "warning", "measured")
    assert warning.evidence["file"] == "pair.s2p" and warning.evidence["problem"] == "not-passive"
    assert warning.evidence["largest_singular_value"] == pytest.approx(1.1, abs=1e-9)
    assert 780 <= warning.evidence["frequency_mhz"] <= 870
    assert warning.evidence["bands"] == ["B20"]  # B8 (880-960) lies outside the bad block
    assert [f for f in findings_of(evaluation, "correlation") if f.evidence["band"] == "B20"] == []
    assert [f for f in findings_of(evaluation, "efficiency") if f.evidence["band"] == "B20"] == []
    assert severities_of(evaluation, "separation") == ["blocker"]  # not passive in B20: can't clear


def test_a_short_ground_plane_is_a_measured_note_when_measured_efficiency_is_at_least_25_percent():
    # 45 mm: below an eighth wave at 791 MHz (47.4 mm), a blocker on geometry
    document = design(ground_plane_mm=[45, 30], antennas=[
        antenna("A", efficiency_pct={"B20": 30, "B8": 35}, efficiency_source="measured")])
    [finding] = findings_of(run(document), "ground-plane")
    assert (finding.severity, finding.basis) == ("note", "measured")
    assert finding.evidence["design_severity"] == "blocker" and finding.evidence["measured_efficiency_pct"] == 30
    assert finding.evidence["measured_band"] == "B20"


def test_a_short_ground_plane_stays_a_blocker_for_datasheet_efficiency_or_a_low_measured_one():
    datasheet = design(ground_plane_mm=[45, 30], antennas=[antenna("A", efficiency_pct={"B20": 30})])
    assert severities_of(run(datasheet), "ground-plane") == ["blocker"]
    low = design(ground_plane_mm=[45, 30], antennas=[
        antenna("A", efficiency_pct={"B20": 20, "B8": 40}, efficiency_source="measured")])
    assert severities_of(run(low), "ground-plane") == ["blocker"]
    # measured in another band than the one that sets the judging frequency (B20): not enough
    other_band = design(ground_plane_mm=[45, 30], antennas=[
        antenna("A", efficiency_pct={"B8": 40}, efficiency_source="measured")])
    assert severities_of(run(other_band), "ground-plane") == ["blocker"]


def test_an_internal_feed_outside_the_enclosure_is_a_warning_and_does_not_pass_the_spacing_rule():
    # x = 250 mm in a 150 mm long box: 100 mm outside
    document = design("cat-1", antennas=[antenna("A", "main", (20, 20, 10)),
                                         antenna("B", "receive", (250, 20, 10), (0, 1, 0))])
    evaluation = run(document)
    [warning] = findings_of(evaluation, "enclosure")
    assert (warning.id, warning.severity, warning.subjects) == ("ENC-002", "warning", ("B",))
    assert warning.evidence["outside_by_mm"] == 100.0
    [spacing] = findings_of(evaluation, "separation")
    assert spacing.id == "SEP-003" and spacing.evidence["outside_enclosure"] == ["B"]


def test_a_feed_within_1_mm_of_the_enclosure_wall_is_accepted():
    document = design("cat-m1", antennas=[antenna("A", "main", (150.9, -0.5, 30.5))])
    assert findings_of(run(document), "enclosure") == []


def test_peak_gain_per_band_blocks_only_the_bands_over_their_limit():
    document = design("cat-m1", modem={"gain_limits_dbi": {"B3": 2.0, "B8": 2.0, "B20": 2.0}},
                      antennas=[antenna("A", peak_gain_dbi={"B3": 3.5, "B8": 1.0})])
    evaluation = run(document)
    blockers = [f for f in findings_of(evaluation, "gain-limit") if f.severity == "blocker"]
    assert [(f.evidence["band"], f.evidence["gain_dbi"]) for f in blockers] == [("B3", 3.5)]
    assert blockers[0].basis == "datasheet"
    [unjudged] = [f for f in findings_of(evaluation, "gain-limit") if f.severity == "note"]
    assert unjudged.evidence["bands"] == ["B20"]


def test_gnss_and_wlan_antennas_are_not_cellular_receive_branches():
    gnss = antenna("G", "gnss", (30, 20, 10), ranges_mhz=[[1559, 1610]])
    wlan = antenna("W", "wlan", (40, 20, 10), ranges_mhz=[[2400, 2484]])
    cat1 = run(design("cat-1", antennas=[antenna("A"), gnss, wlan]))
    [count] = findings_of(cat1, "antenna-count")
    assert (count.severity, count.evidence["required"], count.evidence["fitted"]) == ("blocker", 2, 1)
    assert findings_of(cat1, "separation") == [] and findings_of(cat1, "band-coverage") == []
    single = run(design("cat-m1", antennas=[antenna("A"), gnss]))
    assert findings_of(single, "antenna-count") == []


def test_main_and_receive_efficiency_more_than_3_db_apart_costs_combining_gain():
    # 60 % against 20 %: 4.77 dB apart. The cost follows the engine's MRC model in rules/coverage.py at the
    # assumed ECC of 0.5 (coverage.toml) and 1 % outage.
    document = design("cat-1", antennas=[antenna("A", efficiency_pct={"B20": 60, "B8": 60}),
                                         antenna("B", "receive", (140, 20, 10), (0, 1, 0),
                                                 efficiency_pct={"B20": 20, "B8": 31})])
    [finding] = [f for f in findings_of(run(document), "efficiency") if f.id == "EFF-003"]
    assert finding.severity == "warning" and finding.evidence["band"] == "B20"  # B8: 2.87 dB apart
    assert finding.evidence["imbalance_db"] == pytest.approx(10 * math.log10(3), abs=0.01)
    expected = second_antenna_gain(0.01, 0.5, 1.0).total_db - second_antenna_gain(0.01, 0.5, 1 / 3).total_db
    assert finding.evidence["cost_db"] == pytest.approx(expected, abs=0.01)
    assert f"{expected:.1f} dB" in finding.explanation


def test_redcap_names_the_modules_declared_branches_and_a_one_branch_configuration():
    evaluation = run(design("nr-redcap", bands=["n3", "n8", "n20"], modem={"rx_ports": 2}))
    [finding] = [f for f in findings_of(evaluation, "antenna-count") if f.id == "CNT-001"]
    assert "module declares 2 receive branch" in finding.explanation
    assert "one receive branch" in finding.action and "Cat 1bis" not in finding.action


def test_a_pair_already_crossed_is_not_told_to_turn():
    [finding] = findings_of(run(pair(55, (0, 1, 0))), "separation")
    assert "already 90 degrees apart" in finding.action and "turn one" not in finding.action


# -- rule set 2: coexistence and radiated estimates (design.md, issue 12) -----------------------------------------

def gnss_antenna(ranges_mhz=((1559, 1610),)):
    return antenna("G", "gnss", (120, 70, 10), (0, 0, 1), ranges_mhz=[list(item) for item in ranges_mhz])


def wlan_antenna(ranges_mhz=((2400, 2484),)):
    return antenna("W", "wlan", (120, 70, 10), (0, 1, 0), ranges_mhz=[list(item) for item in ranges_mhz])


def test_a_gnss_antenna_and_a_band_whose_uplink_harmonic_overlaps_l1_is_a_coexistence_warning():
    # B13 UL 777-787 MHz (TS 36.101 Table 5.5-1): 2nd harmonic 1554-1574 MHz on L1/E1 1559-1610 (TR 36.816).
    [finding] = findings_of(run(design("cat-m1", bands=["B13"], antennas=[antenna("A"), gnss_antenna()])),
                            "coexistence")
    assert (finding.id, finding.severity, finding.evidence["order"]) == ("COX-001", "warning", 2)
    # Without the GNSS antenna nothing receives there.
    assert findings_of(run(design("cat-m1", bands=["B13"])), "coexistence") == []


def test_l5_e5a_is_judged_only_when_the_gnss_antenna_is_rated_for_it():
    # No catalog band's harmonic reaches 1164-1192 MHz (an uplink at 582-596 or 388-397.3 MHz would): a band with a
    # 585-590 MHz uplink doubles to 1170-1180 MHz.
    band = Band("X", "LTE", (585.0, 590.0), (600.0, 610.0), "FDD", "test")
    l1_only = parse_design(design(antennas=[antenna("A"), gnss_antenna()])).antennas[1]
    dual = parse_design(design(antennas=[antenna("A"), gnss_antenna(((1164, 1192), (1559, 1610)))])).antennas[1]
    assert [item.label for item in victims_of(l1_only) if harmonic_hits(band, item, [2, 3])] == []
    assert [item.label for item in victims_of(dual) if harmonic_hits(band, item, [2, 3])] == ["GNSS L5/E5a"]


def test_a_wlan_antenna_and_a_band_edge_within_20_mhz_of_the_ism_band_is_a_coexistence_warning():
    # B7 UL 2500-2570 MHz: 16.5 MHz above 2483.5 (TR 36.816); B38 2570-2620 MHz is 86.5 MHz away.
    found = findings_of(run(design("cat-4", bands=["B7", "B38"], antennas=[
        antenna("A", ranges_mhz=[[2400, 2700]]), antenna("B", "receive", (140, 20, 10), (0, 1, 0),
                                                         ranges_mhz=[[2400, 2700]]), wlan_antenna()])), "coexistence")
    assert [(f.id, f.severity, f.subjects, f.evidence["guard_mhz"]) for f in found] == [
        ("COX-002", "warning", ("A", "W", "B7"), 16.5)]


def test_5ghz_wlan_is_judged_only_when_the_wlan_antenna_is_rated_for_it():
    # No catalog band comes within 20 MHz of 5150-5895 MHz (n79 ends at 5000): a band at 5100-5140 MHz is 10 MHz away.
    band = Band("X", "NR", (5100.0, 5140.0), (5100.0, 5140.0), "TDD", "test")
    two_four = parse_design(design(antennas=[antenna("A"), wlan_antenna()])).antennas[1]
    dual = parse_design(design(antennas=[antenna("A"), wlan_antenna(((2400, 2484), (5150, 5895)))])).antennas[1]
    assert [item.label for item in victims_of(two_four) if near_ranges(band, item, 20.0)] == []
    assert [item.label for item in victims_of(dual) if near_ranges(band, item, 20.0)] == ["WLAN 5 GHz"]


def test_an_estimated_trp_below_the_teams_target_is_an_ota_warning():
    # 23 dBm (power class 3, TS 36.101 Table 6.2.2-1) + 10 log10(0.40) = 19.02 dBm, against 20 dBm.
    document = design(antennas=[antenna("A", efficiency_pct={"B3": 40})],
                      deployment={"radiated_targets_dbm": {"trp": {"B3": 20}}})
    [finding] = findings_of(run(document), "ota")
    assert (finding.id, finding.severity, finding.evidence["quantity"]) == ("OTA-001", "warning", "trp")
    assert finding.evidence["estimate_dbm"] == pytest.approx(23 + 10 * math.log10(0.4), abs=0.005)


def test_an_estimated_tis_worse_than_the_teams_target_is_an_ota_warning():
    # -102 dBm conducted - 10 log10(0.40) = -98.02 dBm, worse than -100 dBm.
    document = design(antennas=[antenna("A", efficiency_pct={"B3": 40})],
                      modem={"conducted_sensitivity_dbm": {"B3": -102}},
                      deployment={"radiated_targets_dbm": {"tis": {"B3": -100}}})
    [finding] = findings_of(run(document), "ota")
    assert (finding.id, finding.severity, finding.evidence["quantity"]) == ("OTA-002", "warning", "tis")
    assert finding.evidence["estimate_dbm"] == pytest.approx(-102 - 10 * math.log10(0.4), abs=0.005)


def test_redcap_with_one_receive_branch_gets_the_operator_barring_note():
    # TS 38.331 cellBarredRedCap1Rx: a one-port module, or one antenna on a module that could use two.
    for modem in ({"rx_ports": 1}, {}, {"rx_ports": 2}):
        [note] = [f for f in run(design("nr-redcap", bands=["n3", "n8", "n20"], modem=modem)).findings
                  if f.id == "CNT-004"]
        assert note.severity == "note" and "cellBarredRedCap1Rx" in note.explanation
    two = design("nr-redcap", bands=["n3"], antennas=[antenna("A"), antenna("B", "receive", (140, 20, 10), (0, 1, 0))])
    assert [f for f in run(two).findings if f.id == "CNT-004"] == []


def test_deep_indoor_lte_m_and_nb_iot_get_the_coverage_enhancement_note():
    # TR 36.888: 155.7 dB = 140.7 + 15 dB; TR 45.820: 164 dB = 144 + 20 dB (from memory), reached by repetition.
    for category, environment, enhancement_db in (("cat-m1", "deep-indoor", 15.0), ("cat-nb1", "underground", 20.0)):
        [note] = [f for f in run(design(category, deployment={"environment": environment})).findings
                  if f.id == "COV-002"]
        assert note.severity == "note" and note.evidence["enhancement_db"] == pytest.approx(enhancement_db)
        assert note.evidence["margin_without_enhancement_db"] == pytest.approx(
            note.evidence["margin_db"] - enhancement_db, abs=0.01)
    for category, environment in (("cat-m1", "indoor"), ("cat-1", "deep-indoor")):
        assert [f for f in run(design(category, deployment={"environment": environment})).findings
                if f.id == "COV-002"] == []
