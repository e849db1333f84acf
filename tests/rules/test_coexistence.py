"""Coexistence with GNSS and WLAN (rules/coexistence.py, COX-001, COX-002) against band-edge arithmetic and the
published formulas.

Band edges: 3GPP TS 36.101 Table 5.5-1 and TS 38.101-1 Table 5.2-1 (and the satellite tables TS 36.102 / TS 38.101-5
for B255, B256, n254-n256). Victim bands: GNSS L1/E1 1559-1610 MHz (the RNSS band), L5/E5a 1164-1192 MHz (from memory),
the 2.4 GHz ISM band 2400-2483.5 MHz (ITU Radio Regulations No. 5.150), WLAN 5 GHz 5150-5895 MHz (from memory).
"""

import math

import pytest

from rules import coverage
from rules.catalog import Band, bands
from rules.checks.coexistence import victims_of
from rules.coexistence import (
    CELLULAR_TO_VICTIM,
    VICTIM_TO_CELLULAR,
    adjacent_budgets,
    coexistence_data,
    free_space_isolation,
    gap_mhz,
    harmonic_budget,
    harmonic_hits,
    mask_emission_dbm_per_mhz,
    near_ranges,
    parse_coexistence_data,
    wlan_emission_dbm_per_mhz,
)
from rules.design import parse_design
from rules.measurements import LoadedMeasurement
from rules.touchstone import parse_touchstone
from tests.rules.design_builders import antenna, design, findings_of, run

L1_MHZ = (1559.0, 1610.0)
L5_MHZ = (1164.0, 1192.0)
ISM_MHZ = (2400.0, 2483.5)
WLAN_5G_MHZ = (5150.0, 5895.0)
C_M_PER_S = 299_792_458.0  # SI definition

# Every catalog band whose uplink's 2nd or 3rd harmonic overlaps GNSS L1/E1, by arithmetic on the 3GPP edges:
#   B13 / n13 UL 777-787   x2 = 1554-1574  (overlap 1559-1574)
#   B14 / n14 UL 788-798   x2 = 1576-1596  (all inside)
#   B44 TDD 703-803        x2 = 1406-1606  (overlap 1559-1606)
#   B103 UL 787-788        x2 = 1574-1576  (all inside; Rel-16 IoT band)
# A 2nd harmonic needs an uplink in 779.5-805 MHz, a 3rd one in 519.7-536.7 MHz (no band has an uplink there).
# Near misses: B27 UL 807-824 doubles to 1614-1648, 4 MHz above L1; B28 UL 703-748 to 1406-1496.
EXPECTED_ON_L1 = {"B13": (2, (1559.0, 1574.0)), "n13": (2, (1559.0, 1574.0)), "B14": (2, (1576.0, 1596.0)),
                  "n14": (2, (1576.0, 1596.0)), "B44": (2, (1559.0, 1606.0)), "B103": (2, (1574.0, 1576.0))}
# L5/E5a needs an uplink in 582-596 MHz (2nd) or 388-397.3 MHz (3rd): the lowest uplinks are B87 410-415 and
# B88 412-417 (x3 = 1230-1251 MHz), B71 / n71 663-698 (x2 = 1326-1396 MHz). None.
EXPECTED_ON_L5: dict[str, tuple[int, tuple[float, float]]] = {}
# Every catalog band with an edge within 20 MHz of 2400-2483.5 MHz:
#   B40 / n40 TDD 2300-2400: touches (0 MHz); n53 TDD 2483.5-2495: touches; n254 DL 2483.5-2500: touches
#   B41 / n41 / n90 TDD 2496-2690: 2496 - 2483.5 = 12.5 MHz
#   B7 / n7 UL 2500-2570: 2500 - 2483.5 = 16.5 MHz (its DL, 2620-2690, is 136.5 MHz away)
# Near misses: B30 DL 2350-2360 (40 MHz), B38 / n38 2570-2620 (86.5 MHz).
EXPECTED_BESIDE_ISM = {"B40": ("tdd", 0.0), "n40": ("tdd", 0.0), "n53": ("tdd", 0.0), "n254": ("dl", 0.0),
                       "B41": ("tdd", 12.5), "n41": ("tdd", 12.5), "n90": ("tdd", 12.5), "B7": ("ul", 16.5),
                       "n7": ("ul", 16.5)}
# 5150-5895 MHz: the highest catalog band, n79 (4400-5000 MHz), ends 150 MHz below it.
EXPECTED_BESIDE_5G: dict[str, tuple[str, float]] = {}


def victim(key: str):
    return next(item for item in coexistence_data().victims if item.key == key)


def independent_overlap(uplink: tuple[float, float], order: int, target: tuple[float, float]):
    low, high = order * uplink[0], order * uplink[1]
    return (max(low, target[0]), min(high, target[1])) if low <= target[1] and high >= target[0] else None


@pytest.mark.parametrize("band", list(bands().values()), ids=list(bands()))
@pytest.mark.parametrize(("key", "target", "expected"), [("gnss-l1", L1_MHZ, EXPECTED_ON_L1),
                                                         ("gnss-l5", L5_MHZ, EXPECTED_ON_L5)])
def test_every_catalog_band_is_checked_for_harmonics_on_gnss(band, key, target, expected):
    hits = harmonic_hits(band, victim(key), [2, 3])
    arithmetic = [] if band.ul_mhz is None else [
        (order, overlap) for order in (2, 3) if (overlap := independent_overlap(band.ul_mhz, order, target))]
    assert hits == arithmetic
    assert (hits[0] if hits else None) == expected.get(band.name)


@pytest.mark.parametrize("band", list(bands().values()), ids=list(bands()))
@pytest.mark.parametrize(("key", "expected"), [("wlan-2g4", EXPECTED_BESIDE_ISM), ("wlan-5g", EXPECTED_BESIDE_5G)])
def test_every_catalog_band_is_checked_for_edges_beside_wlan(band, key, expected):
    near = near_ranges(band, victim(key), 20.0)
    assert ((near[0].kind, near[0].gap_mhz) if near else None) == expected.get(band.name)


def test_the_victim_bands_are_the_published_ones():
    assert victim("gnss-l1").range_mhz == L1_MHZ and victim("gnss-l5").range_mhz == L5_MHZ
    assert victim("wlan-2g4").range_mhz == ISM_MHZ and victim("wlan-5g").range_mhz == WLAN_5G_MHZ


def test_a_supplemental_downlink_band_has_no_harmonic():
    # B29 (TS 36.101 Table 5.5-1) is downlink only, 717-728 MHz: the device never transmits there.
    assert bands()["B29"].ul_mhz is None
    assert harmonic_hits(bands()["B29"], victim("gnss-l1"), [2, 3]) == []
    # Had it an uplink at 780-790 MHz, its 2nd harmonic would be on L1 (1560-1580 MHz).
    with_uplink = Band("X", "LTE", (780.0, 790.0), (717.0, 728.0), "FDD", "test")
    assert harmonic_hits(with_uplink, victim("gnss-l1"), [2, 3]) == [(2, (1560.0, 1580.0))]


@pytest.mark.parametrize(("edge_mhz", "near"), [
    (2380.0, True),  # 2400 - 2380 = 20 MHz exactly: within the 20 MHz
    (2379.9, False),  # 20.1 MHz
    (2400.0, True),  # touching
    (2503.5, True),  # 2503.5 - 2483.5 = 20 MHz exactly above the band
    (2503.6, False),
])
def test_the_adjacent_guard_counts_a_band_edge_exactly_20_mhz_away(edge_mhz, near):
    # Arithmetic on the ISM band's edges, 2400 and 2483.5 MHz (ITU RR No. 5.150); the guard from design.md's policy.
    if edge_mhz <= 2400.0:
        band = Band("X", "LTE", (edge_mhz - 50, edge_mhz), (edge_mhz - 50, edge_mhz), "TDD", "test")
    else:
        band = Band("X", "LTE", (edge_mhz, edge_mhz + 50), (edge_mhz, edge_mhz + 50), "TDD", "test")
    assert bool(near_ranges(band, victim("wlan-2g4"), 20.0)) is near
    assert gap_mhz(band.dl_mhz, ISM_MHZ) == pytest.approx(max(0.0, 2400.0 - edge_mhz, edge_mhz - 2483.5))


def test_an_fdd_band_is_near_by_the_range_that_is_near():
    # B7 (TS 36.101): UL 2500-2570 is 16.5 MHz from the ISM band, DL 2620-2690 is 136.5 MHz away.
    [near] = near_ranges(bands()["B7"], victim("wlan-2g4"), 20.0)
    assert near.range_mhz == (2500.0, 2570.0) and near.kind == "ul"
    assert gap_mhz(bands()["B7"].dl_mhz, ISM_MHZ) == pytest.approx(136.5)


# -- the budget ------------------------------------------------------------------------------------------------

def test_the_harmonic_budget_follows_from_the_noise_floor_and_the_spurious_limit():
    # kT at 290 K = -174 dBm/Hz, -114 dBm in 1 MHz; noise figure 2 dB (common practice); 1 dB desense means
    # I/N = 10 log10(10^0.1 - 1) = -5.87 dB (common practice). Spurious limit -30 dBm/MHz (TS 36.101 Table
    # 6.6.3.1-2, from memory).
    interference_to_noise_db = 10 * math.log10(10 ** 0.1 - 1)
    assert interference_to_noise_db == pytest.approx(-5.868, abs=1e-3)
    budget = harmonic_budget(coexistence_data(), victim("gnss-l1"), (1559.0, 1574.0))
    assert budget.tolerated_dbm_per_mhz == pytest.approx(-174 + 60 + 2 + interference_to_noise_db)
    assert budget.needed_isolation_db == pytest.approx(-30 - (-114 + 2 + interference_to_noise_db))
    assert budget.needed_isolation_db == pytest.approx(87.87, abs=0.01)
    assert budget.direction == CELLULAR_TO_VICTIM and budget.judged_mhz == (1559.0, 1574.0)


@pytest.mark.parametrize(("mask", "offset_mhz", "expected_dbm_per_mhz"), [
    # 3GPP TS 36.101 Table 6.6.2.1.1-1, 20 MHz channel: ±0-1 MHz -21 dBm in 30 kHz, ±1-5 -10 dBm, ±5-20 -13 dBm,
    # ±20-25 -25 dBm in 1 MHz; beyond, the spurious limit -30 dBm/MHz (from memory).
    ("lte-20", 0.5, -21 + 10 * math.log10(1 / 0.03)),
    ("lte-20", 3.0, -10.0),
    ("lte-20", 5.0, -10.0),  # a boundary takes the looser row
    ("lte-20", 12.5, -13.0),  # B41 beside the ISM band
    ("lte-20", 16.5, -13.0),  # B7's uplink beside the ISM band
    ("lte-20", 20.0, -13.0),
    ("lte-20", 22.0, -25.0),
    ("lte-20", 30.0, -30.0),
    # 1.4 MHz channel (Cat M1): ±1-2.5 -10 dBm, ±2.5-2.8 -25 dBm; past 2.8 MHz the spurious limit.
    ("lte-1-4", 2.6, -25.0),
    ("lte-1-4", 12.5, -30.0),
])
def test_the_cellular_emission_follows_the_3gpp_mask(mask, offset_mhz, expected_dbm_per_mhz):
    data = coexistence_data()
    assert mask_emission_dbm_per_mhz(data.masks[mask], offset_mhz, -30.0) == pytest.approx(expected_dbm_per_mhz)


def test_the_wlan_emission_follows_the_802_11_mask():
    # IEEE 802.11 20 MHz OFDM mask (from memory): 0 dBr to 9 MHz, -20 dBr at 11, -28 dBr at 20, -45 dBr at 30 MHz
    # (2.4 GHz), straight lines in dB between; 20 dBm over 18 MHz is 20 - 10 log10(18) = 7.45 dBm/MHz in band.
    data = coexistence_data()
    in_band = 20 - 10 * math.log10(18)
    assert wlan_emission_dbm_per_mhz(data, victim("wlan-2g4"), 5.0) == pytest.approx(in_band)
    assert wlan_emission_dbm_per_mhz(data, victim("wlan-2g4"), 10.0) == pytest.approx(in_band - 10.0)
    assert wlan_emission_dbm_per_mhz(data, victim("wlan-2g4"), 22.5) == pytest.approx(in_band - 28 - 17 * 0.25)
    assert wlan_emission_dbm_per_mhz(data, victim("wlan-2g4"), 40.0) == pytest.approx(in_band - 45)
    assert wlan_emission_dbm_per_mhz(data, victim("wlan-5g"), 40.0) == pytest.approx(in_band - 40)


def test_a_tdd_band_beside_wlan_is_budgeted_both_ways():
    # B41 TDD 2496-2690 (TS 36.101): its uplink disturbs the WLAN receiver and the WLAN transmitter its downlink.
    data = coexistence_data()
    near = near_ranges(bands()["B41"], victim("wlan-2g4"), 20.0)
    up, down = adjacent_budgets(data, "cat-4", victim("wlan-2g4"), near)
    assert (up.direction, down.direction) == (CELLULAR_TO_VICTIM, VICTIM_TO_CELLULAR)
    # Up: -13 dBm/MHz at 12.5 MHz (TS 36.101 Table 6.6.2.1.1-1) into a 5 dB noise figure WLAN receiver.
    assert up.needed_isolation_db == pytest.approx(-13 - (-114 + 5 + 10 * math.log10(10 ** 0.1 - 1)))
    assert up.judged_mhz == ISM_MHZ
    # Down: the WLAN channel's mask 10 + 12.5 MHz from its centre, into a 9 dB noise figure cellular receiver
    # (TS 36.101 §7.3, from memory), judged over the band itself.
    expected_emission = 20 - 10 * math.log10(18) - 28 - 17 * 0.25
    assert down.emission_dbm_per_mhz == pytest.approx(expected_emission)
    assert down.needed_isolation_db == pytest.approx(expected_emission - (-114 + 9 + 10 * math.log10(10 ** 0.1 - 1)))
    assert down.judged_mhz == (2496.0, 2690.0)


def test_an_fdd_uplink_beside_wlan_is_budgeted_one_way():
    near = near_ranges(bands()["B7"], victim("wlan-2g4"), 20.0)
    [budget] = adjacent_budgets(coexistence_data(), "cat-4", victim("wlan-2g4"), near)
    assert budget.direction == CELLULAR_TO_VICTIM


@pytest.mark.parametrize(("angle_deg", "polarization_db"), [
    (0.0, 0.0), (60.0, -20 * math.log10(0.5)), (90.0, 20.0), (None, 0.0)])
def test_the_free_space_estimate_is_friis_with_the_polarization_mismatch(angle_deg, polarization_db):
    # Friis between isotropic antennas: 20 log10(4 pi d / lambda); ITU-R P.525's 32.45 + 20 log f(MHz) + 20 log d(km)
    # is the same loss (checked through rules.coverage.free_space_loss_db). Polarization: -20 log10 |cos|, capped at
    # 20 dB (common practice); unknown axes are taken as co-polarized.
    estimate = free_space_isolation(coexistence_data(), 100.0, 1559.0, angle_deg)
    wavelength_mm = C_M_PER_S / 1559e6 * 1000
    assert estimate.path_loss_db == pytest.approx(20 * math.log10(4 * math.pi * 100.0 / wavelength_mm))
    assert estimate.path_loss_db == pytest.approx(coverage.free_space_loss_db(1559.0, 100e-6), abs=0.01)
    assert estimate.polarization_db == pytest.approx(polarization_db)
    assert estimate.isolation_db == pytest.approx(estimate.path_loss_db + polarization_db)
    assert estimate.polarization_known is (angle_deg is not None)


def test_no_free_space_estimate_inside_the_reactive_near_field():
    # lambda / 2 pi at 1559 MHz = 30.6 mm (Wheeler 1959): closer, Friis does not hold.
    estimate = free_space_isolation(coexistence_data(), 30.0, 1559.0, 0.0)
    assert estimate.near_field_mm == pytest.approx(C_M_PER_S / 1559e6 * 1000 / (2 * math.pi))
    assert estimate.isolation_db is None and estimate.path_loss_db is None


def test_the_data_file_is_checked_at_load():
    with pytest.raises(ValueError, match="no emission mask"):
        parse_coexistence_data({"budget": {"desense_db": 1.0}, "masks": {}})


# -- the findings ------------------------------------------------------------------------------------------------

def gnss(position=(120, 70, 10), ranges_mhz=((1559, 1610),), **extra):
    ranges = None if ranges_mhz is None else [list(item) for item in ranges_mhz]
    return antenna("G", "gnss", position, (0, 0, 1), ranges_mhz=ranges, **extra)


def wlan(position=(120, 70, 10), ranges_mhz=((2400, 2484),), **extra):
    return antenna("W", "wlan", position, (0, 1, 0), ranges_mhz=[list(item) for item in ranges_mhz], **extra)


@pytest.mark.parametrize(("band", "uplink", "harmonic", "overlap"), [
    ("B13", [777.0, 787.0], [1554.0, 1574.0], [1559.0, 1574.0]),  # TR 36.816: Band 13's 2nd harmonic on GPS L1
    ("B14", [788.0, 798.0], [1576.0, 1596.0], [1576.0, 1596.0]),  # TR 36.816: Band 14's 2nd harmonic on GPS L1
])
def test_tr_36_816_band_13_and_14_harmonics_on_gps_l1(band, uplink, harmonic, overlap):
    evaluation = run(design("cat-m1", bands=["B2", band], antennas=[antenna("A"), gnss()]))
    [finding] = findings_of(evaluation, "coexistence")
    assert finding.id == "COX-001" and finding.severity == "warning"
    assert finding.subjects == ("A", "G", band)
    evidence = finding.evidence
    assert (evidence["band"], evidence["victim"], evidence["mechanism"], evidence["order"]) == (
        band, "GNSS L1/E1", "harmonic", 2)
    assert evidence["aggressor_mhz"] == uplink and evidence["victim_mhz"] == [1559.0, 1610.0]
    assert evidence["harmonic_mhz"] == harmonic and evidence["overlap_mhz"] == overlap
    assert "TR 36.816" in finding.explanation


@pytest.mark.parametrize(("band", "guard_mhz", "cellular_range"), [
    ("B40", 0.0, "tdd"),  # TR 36.816: Band 40 (2300-2400 MHz) against the ISM band
    ("B41", 12.5, "tdd"),  # TR 36.816: Band 41 (2496-2690 MHz)
    ("B7", 16.5, "ul"),  # TR 36.816: Band 7's uplink (2500-2570 MHz)
])
def test_tr_36_816_bands_40_41_and_7_beside_the_ism_band(band, guard_mhz, cellular_range):
    evaluation = run(design("cat-4", bands=["B3", band], antennas=[
        antenna("A", ranges_mhz=[[1700, 2700]]), antenna("B", "receive", (130, 20, 10), (0, 1, 0)), wlan()]))
    found = findings_of(evaluation, "coexistence")
    main = next(finding for finding in found if finding.subjects == ("A", "W", band))
    assert main.id == "COX-002" and main.severity == "warning"
    evidence = main.evidence
    assert (evidence["victim"], evidence["mechanism"], evidence["guard_mhz"], evidence["cellular_range"]) == (
        "WLAN 2.4 GHz", "adjacent", guard_mhz, cellular_range)
    assert evidence["victim_mhz"] == [2400.0, 2483.5]
    # The receive antenna is a victim only where WLAN transmits next to a downlink (TDD), never of an uplink.
    receive = [finding for finding in found if finding.subjects == ("B", "W", band)]
    assert len(receive) == (1 if cellular_range == "tdd" else 0)
    if receive:
        assert receive[0].evidence["directions"] == ["victim-to-cellular"]


def test_eu_bands_beside_a_gnss_and_a_wlan_antenna_raise_nothing():
    # B3 UL 1710-1785 (x2 from 3420), B8 UL 880-915 (x2 1760-1830), B20 UL 832-862 (x2 1664-1724): none on L1;
    # none within 20 MHz of 2400 MHz.
    evaluation = run(design("cat-m1", antennas=[antenna("A"), gnss((120, 70, 10)), wlan((20, 70, 10))]))
    assert findings_of(evaluation, "coexistence") == []


def test_without_a_gnss_antenna_a_harmonic_on_l1_is_not_flagged():
    assert findings_of(run(design("cat-m1", bands=["B13"])), "coexistence") == []


def test_l5_is_a_victim_only_when_the_gnss_antenna_is_rated_for_it():
    single = parse_design(design(antennas=[antenna("A"), gnss()])).antennas[1]
    dual = parse_design(design(antennas=[antenna("A"), gnss(ranges_mhz=((1164, 1192), (1559, 1610)))])).antennas[1]
    unrated = parse_design(design(antennas=[antenna("A"), gnss(ranges_mhz=None)])).antennas[1]
    assert [item.label for item in victims_of(single)] == ["GNSS L1/E1"]
    assert [item.label for item in victims_of(dual)] == ["GNSS L1/E1", "GNSS L5/E5a"]
    assert [item.label for item in victims_of(unrated)] == ["GNSS L1/E1"]


def test_5ghz_wlan_is_a_victim_only_when_the_wlan_antenna_is_rated_for_it():
    single = parse_design(design(antennas=[antenna("A"), wlan()])).antennas[1]
    dual = parse_design(design(antennas=[antenna("A"), wlan(ranges_mhz=((2400, 2500), (5150, 5900)))])).antennas[1]
    assert [item.label for item in victims_of(single)] == ["WLAN 2.4 GHz"]
    assert [item.label for item in victims_of(dual)] == ["WLAN 2.4 GHz", "WLAN 5 GHz"]


def test_the_finding_shows_the_free_space_estimate_as_design_basis():
    # A at (20, 20, 10), G at (120, 70, 10): sqrt(100^2 + 50^2) = 111.8 mm; axes x and z: 90 degrees, capped 20 dB.
    [finding] = findings_of(run(design("cat-m1", bands=["B13"], antennas=[antenna("A"), gnss()])), "coexistence")
    distance_mm = math.hypot(100, 50)
    wavelength_mm = C_M_PER_S / 1559e6 * 1000
    expected_db = 20 * math.log10(4 * math.pi * distance_mm / wavelength_mm) + 20.0
    assert finding.basis == "design"
    assert finding.evidence["isolation_basis"] == "free-space estimate"
    assert finding.evidence["isolation_db"] == pytest.approx(expected_db, abs=0.01)
    assert finding.evidence["isolation_frequency_mhz"] == 1559.0
    assert finding.evidence["needed_isolation_db"] == pytest.approx(87.87, abs=0.01)
    assert finding.evidence["isolation_margin_db"] == pytest.approx(expected_db - 87.87, abs=0.02)
    assert f"{expected_db:.1f} dB" in finding.explanation and "estimate" in finding.explanation


def touchstone_pair(first_mhz: int, last_mhz: int, isolation_db: float) -> str:
    # Touchstone v1.1 (IBIS): "# MHz S DB R 50", 2-port rows N11 N21 N12 N22 as dB/angle pairs.
    rows = [f"{f} -15 0 {-isolation_db} 0 {-isolation_db} 0 -15 0" for f in range(first_mhz, last_mhz + 1, 5)]
    return "# MHz S DB R 50\n" + "\n".join(rows) + "\n"


def test_a_measurement_with_both_ports_over_the_victim_band_decides():
    network = parse_touchstone(touchstone_pair(1500, 1700, 27.5), source="ag.s2p")
    document = design("cat-m1", bands=["B13"], antennas=[antenna("A"), gnss()],
                      measurements=[{"file": "ag.s2p", "ports": ["A", "G"]}])
    [finding] = findings_of(run(document, (LoadedMeasurement("ag.s2p", network, ("A", "G")),)), "coexistence")
    assert finding.basis == "measured"
    assert finding.evidence["isolation_basis"] == "measured" and finding.evidence["file"] == "ag.s2p"
    assert finding.evidence["isolation_db"] == pytest.approx(27.5)  # |S21| in dB, as written
    assert finding.evidence["isolation_margin_db"] == pytest.approx(27.5 - 87.87, abs=0.01)
    assert finding.severity == "warning"


def test_a_measurement_that_misses_the_victim_frequencies_is_not_used():
    # The file stops at 1565 MHz; the harmonic lands on 1559-1574 MHz.
    network = parse_touchstone(touchstone_pair(1500, 1565, 27.5), source="ag.s2p")
    document = design("cat-m1", bands=["B13"], antennas=[antenna("A"), gnss()],
                      measurements=[{"file": "ag.s2p", "ports": ["A", "G"]}])
    [finding] = findings_of(run(document, (LoadedMeasurement("ag.s2p", network, ("A", "G")),)), "coexistence")
    assert finding.basis == "design" and finding.evidence["isolation_basis"] == "free-space estimate"
    assert "ag.s2p has both ports but does not span them" in finding.explanation


def test_a_pair_inside_the_near_field_gets_no_estimate():
    # 20 mm apart, inside lambda / 2 pi = 30.6 mm at 1559 MHz.
    document = design("cat-m1", bands=["B13"], antennas=[antenna("A"), gnss((40, 20, 10))])
    [finding] = findings_of(run(document), "coexistence")
    assert finding.evidence["isolation_db"] is None and finding.evidence["isolation_margin_db"] is None
    assert "reactive near field" in finding.explanation


def test_every_transmitting_antenna_and_every_gnss_antenna_make_a_pair():
    document = design("cat-m1", bands=["B13", "B14"], antennas=[
        antenna("A"), gnss(), antenna("H", "gnss", (120, 10, 10), (0, 0, 1), ranges_mhz=[[1559, 1610]])])
    subjects = sorted(finding.subjects for finding in findings_of(run(document), "coexistence"))
    assert subjects == [("A", "G", "B13"), ("A", "G", "B14"), ("A", "H", "B13"), ("A", "H", "B14")]


def test_an_external_antenna_gets_no_free_space_estimate():
    # An external antenna's position is its connector, not where it radiates.
    document = design("cat-m1", bands=["B13"], antennas=[antenna("A", mounting="external"), gnss()])
    [finding] = findings_of(run(document), "coexistence")
    assert finding.evidence["isolation_db"] is None and finding.evidence["isolation_basis"] is None
    assert "mounted externally" in finding.explanation


def test_without_a_main_antenna_the_victim_and_band_are_still_flagged():
    # design.md's policy row needs only the GNSS / WLAN antenna and the band; CNT-002 blocks the missing main.
    harmonic = run(design("cat-m1", bands=["B13"], antennas=[antenna("R", "receive"), gnss()]))
    [finding] = findings_of(harmonic, "coexistence")
    assert finding.subjects == ("G", "B13") and finding.evidence["cellular_antenna"] is None
    assert "no main (transmitting) antenna" in finding.explanation
    adjacent = run(design("cat-4", bands=["B7"], antennas=[antenna("R", "receive"), wlan()]))
    assert [item.subjects for item in findings_of(adjacent, "coexistence")] == [("W", "B7")]


def test_each_pair_and_band_is_one_finding_so_review_identities_stay_unique():
    # A finding's review identity is (rule id, subjects): two findings with the same would collide in the review.
    document = design("cat-4", bands=["B13", "B14", "B40", "B41", "B7"], antennas=[
        antenna("A", ranges_mhz=[[698, 2700]]), antenna("B", "receive", (140, 20, 10), (0, 1, 0)),
        gnss(ranges_mhz=((1164, 1192), (1559, 1610))), wlan((20, 70, 10), ranges_mhz=((2400, 2500), (5150, 5900)))])
    findings = run(document).findings
    assert len({finding.key for finding in findings}) == len(findings)
    assert len(findings_of(run(document), "coexistence")) == 2 + 3 + 2  # A-G x 2, A-W x 3, B-W x 2 (TDD)
