"""The band and UE-category catalog checked against 3GPP tables and the formulas they publish.

Band edges and duplex modes are compared with nrarfcn, a general-purpose library that carries the
3GPP TS 36.101 Table 5.5-1 and TS 38.101-1 Table 5.2-1 band tables in machine-readable form. Category
figures are checked against TS 36.306 and the TS 38.306 §4.1.2 data-rate formula, recomputed here
from its published definition rather than from the engine's code.
"""

import re
import shutil

import nrarfcn
import pytest
from nrarfcn.api.lte import get_lte_duplex_mode, get_lte_frequency_range

from rules import catalog
from rules.catalog import CatalogError, bands, categories

# Satellite (NTN) bands come from TS 36.102 / TS 38.101-5, which nrarfcn does not carry; they are checked
# against the tables' values (from memory) further down.
# n105, n106 and n109 are newer than nrarfcn 2.6's tables: checked against the TS 38.101-1 values below.
NOT_IN_NRARFCN = {"n105", "n106", "n109"}
ALL_BANDS = [band for band in bands().values() if not band.satellite and band.name not in NOT_IN_NRARFCN]
SATELLITE_BANDS = [band for band in bands().values() if band.satellite]


def reference_band(name: str) -> tuple[tuple[float, float] | None, tuple[float, float], str]:
    """UL range (None for a supplemental-downlink band), DL range and duplex mode of a band as nrarfcn's
    3GPP tables give them. nrarfcn marks the uplink of an SDL band "N/A"; for LTE it calls such a band
    FDD, as TS 36.101 Table 5.5-1 does (with a note restricting it to carrier aggregation), for NR SDL."""
    if name.startswith("B"):
        ul = get_lte_frequency_range(name, "ul")
        dl = get_lte_frequency_range(name, "dl")
        duplex = get_lte_duplex_mode(name)
    else:
        ul = nrarfcn.get_frequency_range(name, "ul")
        dl = nrarfcn.get_frequency_range(name, "dl")
        duplex = nrarfcn.get_duplex_mode(name)
    if ul[0] == "N/A":
        return None, (float(dl[0]), float(dl[1])), "SDL"
    return (float(ul[0]), float(ul[1])), (float(dl[0]), float(dl[1])), duplex


# --- bands against the 3GPP tables (nrarfcn) -------------------------------------------------------


@pytest.mark.parametrize("band", ALL_BANDS, ids=[band.name for band in ALL_BANDS])
def test_it_matches_the_3gpp_table_for_every_band(band):
    # 3GPP TS 36.101 Table 5.5-1 / TS 38.101-1 Table 5.2-1, as carried by nrarfcn
    ul_mhz, dl_mhz, duplex = reference_band(band.name)
    if ul_mhz is None:
        assert band.ul_mhz is None
    else:
        assert band.ul_mhz == pytest.approx(ul_mhz, abs=1e-9)
    assert band.dl_mhz == pytest.approx(dl_mhz, abs=1e-9)
    assert band.duplex == duplex


@pytest.mark.parametrize("band", ALL_BANDS, ids=[band.name for band in ALL_BANDS])
def test_it_derives_lowest_and_highest_edges_and_number_from_the_table(band):
    # 3GPP TS 36.101 Table 5.5-1 / TS 38.101-1 Table 5.2-1, as carried by nrarfcn
    ul_mhz, dl_mhz, _ = reference_band(band.name)
    ranges = [dl_mhz] if ul_mhz is None else [ul_mhz, dl_mhz]
    assert band.lowest_mhz == pytest.approx(min(low for low, _ in ranges), abs=1e-9)
    assert band.highest_mhz == pytest.approx(max(high for _, high in ranges), abs=1e-9)
    assert band.number == int(band.name[1:])
    assert band.technology == ("LTE" if band.name.startswith("B") else "NR")


# The minimum set of bands the product has to know (a requirement, not a 3GPP value).
REQUIRED_LTE = [1, 2, 3, 4, 5, 7, 8, 12, 13, 14, 17, 18, 19, 20, 25, 26, 28, 38, 40, 41, 66, 71, 85]
REQUIRED_NR = [1, 2, 3, 5, 7, 8, 12, 13, 14, 20, 25, 26, 28, 41, 66, 71, 77, 78]


@pytest.mark.parametrize(
    "name", [f"B{number}" for number in REQUIRED_LTE] + [f"n{number}" for number in REQUIRED_NR]
)
def test_it_carries_every_band_of_the_required_set(name):
    assert name in bands()


def test_it_lists_lte_bands_first_each_technology_in_numeric_order():
    listed = list(bands().values())
    technologies = [band.technology for band in listed]
    assert technologies == sorted(technologies, key=lambda technology: technology != "LTE")
    for technology in ("LTE", "NR"):
        numbers = [band.number for band in listed if band.technology == technology]
        assert numbers == sorted(numbers)


def test_it_names_the_3gpp_table_each_band_comes_from():
    for band in bands().values():
        expected = {("LTE", False): "3GPP TS 36.101 Table 5.5-1", ("NR", False): "3GPP TS 38.101-1 Table 5.2-1",
                    ("LTE", True): "3GPP TS 36.102 Table 5.2-1",
                    ("NR", True): "3GPP TS 38.101-5 Table 5.2-1"}[(band.technology, band.satellite)]
        assert band.reference == expected


@pytest.mark.parametrize(
    ("name", "ul_mhz", "dl_mhz", "duplex"),
    [
        ("B12", (699, 716), (729, 746), "FDD"),  # 3GPP TS 36.101 Table 5.5-1
        ("B13", (777, 787), (746, 756), "FDD"),  # 3GPP TS 36.101 Table 5.5-1 (reverse duplex: UL above DL)
        ("B20", (832, 862), (791, 821), "FDD"),  # 3GPP TS 36.101 Table 5.5-1 (reverse duplex)
        ("B71", (663, 698), (617, 652), "FDD"),  # 3GPP TS 36.101 Table 5.5-1 (reverse duplex)
        ("B41", (2496, 2690), (2496, 2690), "TDD"),  # 3GPP TS 36.101 Table 5.5-1
        ("n71", (663, 698), (617, 652), "FDD"),  # 3GPP TS 38.101-1 Table 5.2-1
        ("n77", (3300, 4200), (3300, 4200), "TDD"),  # 3GPP TS 38.101-1 Table 5.2-1
        ("n78", (3300, 3800), (3300, 3800), "TDD"),  # 3GPP TS 38.101-1 Table 5.2-1
    ],
)
def test_it_holds_the_published_edges_of_well_known_bands(name, ul_mhz, dl_mhz, duplex):
    band = bands()[name]
    assert band.ul_mhz == ul_mhz
    assert band.dl_mhz == dl_mhz
    assert band.duplex == duplex


# Rule set 2 additions (issue 12), each compared with nrarfcn above as well.
RS2_LTE = ["B27", "B44", "B68", "B73", "B103", "B106"]
RS2_SDL = ["B29", "B32", "B67", "B75", "B76", "n75", "n76"]
RS2_NR = ["n100", "n101", "n105", "n106", "n109"]


@pytest.mark.parametrize("name", RS2_LTE + RS2_SDL + RS2_NR)
def test_it_carries_the_bands_added_for_rule_set_2(name):
    assert name in bands()


@pytest.mark.parametrize("name", ["B27", "B44", "B68", "B73", "B103", "B106", "n100", "n101"])
def test_the_added_bands_nrarfcn_carries_match_it(name):
    # 3GPP TS 36.101 Table 5.5-1 / TS 38.101-1 Table 5.2-1, as carried by nrarfcn 2.6
    ul_mhz, dl_mhz, duplex = reference_band(name)
    assert (bands()[name].ul_mhz, bands()[name].dl_mhz, bands()[name].duplex) == (ul_mhz, dl_mhz, duplex)


@pytest.mark.parametrize(
    ("name", "ul_mhz", "dl_mhz"),
    [
        ("n105", (663, 703), (612, 652)),  # 3GPP TS 38.101-1 Table 5.2-1 (Rel-17; from memory, not in nrarfcn)
        ("n106", (896, 901), (935, 940)),  # 3GPP TS 38.101-1 Table 5.2-1 (Rel-17; from memory, not in nrarfcn)
        ("n109", (703, 733), (1432, 1517)),  # 3GPP TS 38.101-1 Table 5.2-1 (Rel-18; from memory, not in nrarfcn)
    ],
)
def test_it_holds_the_nr_bands_nrarfcn_lacks(name, ul_mhz, dl_mhz):
    band = bands()[name]
    assert (band.ul_mhz, band.dl_mhz, band.duplex) == (ul_mhz, dl_mhz, "FDD")


def test_b106_and_n106_are_the_same_900_mhz_broadband_band():
    # 3GPP TS 36.101 Table 5.5-1 (B106, as in nrarfcn) and TS 38.101-1 Table 5.2-1 (n106, from memory)
    assert bands()["B106"].ul_mhz == bands()["n106"].ul_mhz == (896, 901)
    assert bands()["B106"].dl_mhz == bands()["n106"].dl_mhz == (935, 940)


@pytest.mark.parametrize("name", RS2_SDL)
def test_a_supplemental_downlink_band_has_no_uplink(name):
    # 3GPP TS 36.101 Table 5.5-1 / TS 38.101-1 Table 5.2-1: uplink "N/A" (nrarfcn agrees)
    band = bands()[name]
    assert band.ul_mhz is None and not band.has_uplink and band.duplex == "SDL"
    assert band.ranges_mhz == (band.dl_mhz,)
    assert band.lowest_mhz == band.dl_mhz[0] and band.highest_mhz == band.dl_mhz[1]


@pytest.mark.parametrize(
    ("name", "ul_mhz", "dl_mhz", "reference"),
    [
        # 3GPP TS 36.102 Table 5.2-1 (IoT over satellite, Rel-17; from memory): L band and S band
        ("B255", (1626.5, 1660.5), (1525, 1559), "3GPP TS 36.102 Table 5.2-1"),
        ("B256", (1980, 2010), (2170, 2200), "3GPP TS 36.102 Table 5.2-1"),
        # 3GPP TS 38.101-5 Table 5.2-1 (NR NTN; from memory)
        ("n254", (1610, 1626.5), (2483.5, 2500), "3GPP TS 38.101-5 Table 5.2-1"),
        ("n255", (1626.5, 1660.5), (1525, 1559), "3GPP TS 38.101-5 Table 5.2-1"),
        ("n256", (1980, 2010), (2170, 2200), "3GPP TS 38.101-5 Table 5.2-1"),
    ],
)
def test_it_holds_the_satellite_bands_and_marks_them(name, ul_mhz, dl_mhz, reference):
    band = bands()[name]
    assert (band.ul_mhz, band.dl_mhz, band.duplex, band.reference) == (ul_mhz, dl_mhz, "FDD", reference)
    assert band.satellite


def test_only_the_satellite_files_hold_satellite_bands():
    assert {band.name for band in SATELLITE_BANDS} == {"B255", "B256", "n254", "n255", "n256"}


def test_it_holds_the_power_classes_of_ts_36_101_and_ts_38_101_1():
    # 3GPP TS 36.101 Table 6.2.2-1 and TS 38.101-1 Table 6.2.1-1 (classes 1-3); classes 5 and 6 from
    # TS 36.101 Tables 6.2.2F-1 / 6.2.2G-1 (from memory)
    assert {number: power.max_output_dbm for number, power in catalog.power_classes().items()} == {
        1: 31.0, 2: 26.0, 3: 23.0, 5: 20.0, 6: 14.0}
    assert all(power.source for power in catalog.power_classes().values())


def test_it_takes_the_lowest_edge_of_a_reverse_duplex_band_from_its_downlink():
    # 3GPP TS 36.101 Table 5.5-1: B71 DL 617-652 MHz lies below its UL 663-698 MHz
    assert bands()["B71"].lowest_mhz == 617
    assert bands()["B71"].highest_mhz == 698


# --- UE categories ----------------------------------------------------------------------------------

CATEGORY_IDS = ["cat-nb1", "cat-nb2", "cat-m1", "cat-m2", "cat-1", "cat-1bis", "cat-4", "cat-6", "nr-redcap"]


@pytest.mark.parametrize("category_id", CATEGORY_IDS)
def test_it_knows_every_category_the_design_file_accepts(category_id):
    category = categories()[category_id]
    assert category.id == category_id
    assert category.technology == ("NR" if category_id == "nr-redcap" else "LTE")
    assert category.reference.startswith("3GPP TS")


@pytest.mark.parametrize(
    ("category_id", "rx_antennas", "dl_layers", "single_antenna"),
    [
        # Product policy ("What the rules must know") built on 3GPP TS 36.306 Table 4.1-1 (layers),
        # 4.1A-1 and 4.1C-1 (M and NB: one receive antenna), and TS 38.300 §16.13 (RedCap: 1 or 2 branches).
        ("cat-nb1", 1, 1, "allowed"),
        ("cat-nb2", 1, 1, "allowed"),
        ("cat-m1", 1, 1, "allowed"),
        ("cat-m2", 1, 1, "allowed"),
        ("cat-1bis", 1, 1, "allowed"),  # TS 36.306 Rel-13; one-antenna performance in TS 36.133 Annex A.3.22.2
        ("cat-1", 2, 1, "operator"),  # receive diversity; single antenna only with operator approval
        ("cat-4", 2, 2, "never"),  # TS 36.306 Table 4.1-1: 2 DL layers
        ("cat-6", 2, 2, "never"),  # TS 36.306 Table 4.1-1: at least 2 DL layers
        ("nr-redcap", 1, 2, "module"),  # TS 38.300 §16.13: one or two receive branches, per module
    ],
)
def test_it_records_receive_antennas_layers_and_single_antenna_policy(
    category_id, rx_antennas, dl_layers, single_antenna
):
    category = categories()[category_id]
    assert category.rx_antennas == rx_antennas
    assert category.dl_layers == dl_layers
    assert category.single_antenna == single_antenna


@pytest.mark.parametrize(
    ("category_id", "release"),
    [
        ("cat-1", 8),  # 3GPP TS 36.306 Rel-8 (from memory)
        ("cat-4", 8),  # 3GPP TS 36.306 Rel-8 (from memory)
        ("cat-6", 10),  # 3GPP TS 36.306 Rel-10, carrier aggregation (from memory)
        ("cat-1bis", 13),  # 3GPP TS 36.306 Rel-13 (check-sources: TS 36.133 Annex A.3.22.2)
        ("cat-m1", 13),  # 3GPP Rel-13 eMTC (from memory)
        ("cat-nb1", 13),  # 3GPP Rel-13 NB-IoT (from memory)
        ("cat-m2", 14),  # 3GPP Rel-14 feMTC (from memory)
        ("cat-nb2", 14),  # 3GPP Rel-14 eNB-IoT (from memory)
        ("nr-redcap", 17),  # 3GPP Rel-17, TS 38.300 §16.13
    ],
)
def test_it_records_the_release_that_introduced_each_category(category_id, release):
    assert categories()[category_id].release == release


@pytest.mark.parametrize(
    ("category_id", "dl_tbs_bits", "ul_tbs_bits"),
    [
        ("cat-1", 10_296, 5_160),  # 3GPP TS 36.306 Table 4.1-1 (DL) and Table 4.1-2 (UL)
        ("cat-1bis", 10_296, 5_160),  # 3GPP TS 36.306 Table 4.1-1: Cat 1bis has Cat 1 rates
        ("cat-4", 150_752, 51_024),  # 3GPP TS 36.306 Table 4.1-1 and Table 4.1-2
        ("cat-6", 301_504, 51_024),  # 3GPP TS 36.306 Table 4.1-1; UL Table 4.1-2 (from memory)
        ("cat-m1", 1_000, 1_000),  # 3GPP TS 36.306 Table 4.1A-1; UL Table 4.1A-2 (from memory)
        ("cat-m2", 4_008, 6_968),  # 3GPP TS 36.306 Table 4.1A-1 and 4.1A-2 (from memory)
        ("cat-nb1", 680, 1_000),  # 3GPP TS 36.306 Table 4.1C-1; UL Table 4.1C-2 (from memory)
        ("cat-nb2", 2_536, 2_536),  # 3GPP TS 36.306 Table 4.1C-1; UL Table 4.1C-2 (from memory)
    ],
)
def test_it_holds_the_transport_block_sizes_of_ts_36_306(category_id, dl_tbs_bits, ul_tbs_bits):
    category = categories()[category_id]
    assert category.dl_tbs_bits == dl_tbs_bits
    assert category.ul_tbs_bits == ul_tbs_bits


@pytest.mark.parametrize(
    ("category_id", "peak_dl_kbps", "peak_ul_kbps"),
    [
        # Bits per 1 ms TTI are kilobits per second: 3GPP TS 36.306 Table 4.1-1 / 4.1-2 per TTI.
        ("cat-1", 10_296, 5_160),
        ("cat-1bis", 10_296, 5_160),
        ("cat-4", 150_752, 51_024),
        ("cat-6", 301_504, 51_024),
        # LTE-M with a transport block every 1 ms subframe: the full-duplex upper bound, about the
        # commonly quoted 1 Mbps for Cat M1 (from memory).
        ("cat-m1", 1_000, 1_000),
        ("cat-m2", 4_008, 6_968),
    ],
)
def test_it_gives_lte_peak_rates_as_bits_per_1_ms_tti(category_id, peak_dl_kbps, peak_ul_kbps):
    category = categories()[category_id]
    assert category.peak_dl_kbps == pytest.approx(peak_dl_kbps)
    assert category.peak_ul_kbps == pytest.approx(peak_ul_kbps)


@pytest.mark.parametrize(
    ("category_id", "peak_dl_kbps", "peak_ul_kbps"),
    [
        # Commonly quoted NB-IoT peaks with one HARQ process (from memory): NB1 about 26 kbps DL and
        # 62.5 kbps UL; NB2 about 127 kbps DL and 158.5 kbps UL.
        ("cat-nb1", 26.2, 62.5),
        ("cat-nb2", 127.0, 158.5),
    ],
)
def test_it_gives_nb_iot_peaks_close_to_the_commonly_quoted_figures(category_id, peak_dl_kbps, peak_ul_kbps):
    category = categories()[category_id]
    assert category.peak_dl_kbps == pytest.approx(peak_dl_kbps, abs=0.5)
    assert category.peak_ul_kbps == pytest.approx(peak_ul_kbps, abs=0.5)


def test_it_halves_cat_4_downlink_to_the_largest_single_layer_block_with_one_branch():
    # 3GPP TS 36.213 Table 7.1.7.2.1-1: I_TBS 26 on 100 PRB is 75 376 bits, one layer's largest block
    # (from memory); two such layers make Cat 4's 150 752 bits per TTI (TS 36.306 Table 4.1-1).
    assert categories()["cat-4"].peak_dl_kbps_with(1) == pytest.approx(75_376)
    assert categories()["cat-4"].peak_dl_kbps_with(2) == pytest.approx(150_752)


def test_it_never_raises_a_peak_past_the_category_layers_or_below_one_layer():
    category = categories()["cat-1"]  # one DL layer (3GPP TS 36.306 Table 4.1-1)
    assert category.peak_dl_kbps_with(2) == pytest.approx(category.peak_dl_kbps)
    assert categories()["cat-6"].peak_dl_kbps_with(4) == pytest.approx(301_504)
    assert categories()["cat-6"].peak_dl_kbps_with(0) == pytest.approx(301_504 / 2)


def ts_38_306_approximate_rate_mbps(
    *, layers: int, bits_per_symbol: int, resource_blocks: int, scs_khz: int, overhead: float
) -> float:
    """3GPP TS 38.306 §4.1.2 for one carrier:

    data rate (Mbps) = 1e-6 * v * Qm * f * Rmax * (N_PRB * 12 / Ts_mu) * (1 - OH)

    with f = 1, Rmax = 948/1024, mu from 15 kHz * 2^mu and Ts_mu = 1e-3 / (14 * 2^mu) seconds.
    """
    mu = {15: 0, 30: 1, 60: 2}[scs_khz]
    scaling_factor = 1
    max_code_rate = 948 / 1024
    average_symbol_s = 1e-3 / (14 * 2**mu)
    return (
        1e-6 * layers * bits_per_symbol * scaling_factor * max_code_rate
        * (resource_blocks * 12 / average_symbol_s) * (1 - overhead)
    )


# 20 MHz channel at 30 kHz SCS carries 51 PRB (3GPP TS 38.101-1 Table 5.3.2-1); RedCap's FR1 maximum is
# 20 MHz (TS 38.300 §16.13). Overheads 0.14 DL and 0.08 UL for FR1 (TS 38.306 §4.1.2).
REDCAP_DL_256QAM_2_LAYERS_MBPS = ts_38_306_approximate_rate_mbps(
    layers=2, bits_per_symbol=8, resource_blocks=51, scs_khz=30, overhead=0.14
)
REDCAP_DL_256QAM_1_LAYER_MBPS = ts_38_306_approximate_rate_mbps(
    layers=1, bits_per_symbol=8, resource_blocks=51, scs_khz=30, overhead=0.14
)
REDCAP_UL_64QAM_1_LAYER_MBPS = ts_38_306_approximate_rate_mbps(
    layers=1, bits_per_symbol=6, resource_blocks=51, scs_khz=30, overhead=0.08
)


def test_it_computes_redcap_downlink_peak_with_the_ts_38_306_formula():
    redcap = categories()["nr-redcap"]
    assert redcap.peak_dl_kbps == pytest.approx(REDCAP_DL_256QAM_2_LAYERS_MBPS * 1000, rel=1e-12)
    # Worked out by hand from the same definition: 2 * 8 * 0.92578 * 51 * 12 * 28 000 * 0.86 = 218.3 Mbps
    assert redcap.peak_dl_kbps == pytest.approx(218_290, rel=1e-4)


def test_it_computes_redcap_uplink_peak_with_the_ts_38_306_formula():
    redcap = categories()["nr-redcap"]
    assert redcap.peak_ul_kbps == pytest.approx(REDCAP_UL_64QAM_1_LAYER_MBPS * 1000, rel=1e-12)
    # By hand: 1 * 6 * 0.92578 * 51 * 12 * 28 000 * 0.92 = 87.6 Mbps
    assert redcap.peak_ul_kbps == pytest.approx(87_560, rel=1e-3)


def test_it_gives_a_one_branch_redcap_module_one_downlink_layer():
    redcap = categories()["nr-redcap"]
    assert redcap.peak_dl_kbps_with(1) == pytest.approx(REDCAP_DL_256QAM_1_LAYER_MBPS * 1000, rel=1e-12)
    assert redcap.peak_dl_kbps_with(2) == pytest.approx(REDCAP_DL_256QAM_2_LAYERS_MBPS * 1000, rel=1e-12)


def test_it_leaves_transport_block_sizes_empty_for_the_formula_category():
    redcap = categories()["nr-redcap"]
    assert redcap.dl_tbs_bits is None
    assert redcap.ul_tbs_bits is None


# --- validation of the data files -------------------------------------------------------------------


@pytest.fixture
def data_copy(tmp_path, monkeypatch):
    """A private copy of the data files that DATA_DIR points at; the real catalog comes back afterwards."""
    for source in catalog.DATA_DIR.iterdir():
        if source.is_file():
            shutil.copy(source, tmp_path / source.name)
    bands.cache_clear()
    categories.cache_clear()
    monkeypatch.setattr(catalog, "DATA_DIR", tmp_path)
    yield tmp_path
    bands.cache_clear()
    categories.cache_clear()


def replace_line(path, starts_with: str, new_line: str) -> None:
    lines = path.read_text(encoding="utf-8").splitlines()
    matches = [index for index, line in enumerate(lines) if line.startswith(starts_with)]
    assert len(matches) == 1, f"{starts_with!r} should start exactly one line of {path.name}"
    lines[matches[0]] = new_line
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def csv_row_of(path, starts_with: str) -> int:
    """Line number of the first line starting with `starts_with`, counting every line of the file."""
    lines = path.read_text(encoding="utf-8").splitlines()
    return next(index for index, line in enumerate(lines, start=1) if line.startswith(starts_with))


def test_it_loads_an_untouched_copy_like_the_real_catalog(data_copy):
    assert catalog._read_band_file("LTE")["B12"].ul_mhz == (699.0, 716.0)
    assert set(bands()) >= {"B12", "n71"}
    assert "cat-4" in categories()


@pytest.mark.parametrize(
    ("technology", "file_name", "starts_with", "bad_line", "message"),
    [
        ("LTE", "lte_bands.csv", "B41,", "B41,2496,2690,2496,2600,TDD", "TDD band has one range"),
        ("NR", "nr_bands.csv", "n78,", "n78,3300,3800,3300,3700,TDD", "TDD band has one range"),
        ("LTE", "lte_bands.csv", "B12,", "B12,716,699,729,746,FDD", "0 < low < high"),
        ("LTE", "lte_bands.csv", "B12,", "B12,699,716,746,746,FDD", "0 < low < high"),
        ("NR", "nr_bands.csv", "n71,", "n71,663,698,652,617,FDD", "0 < low < high"),
        ("LTE", "lte_bands.csv", "B12,", "B12,-699,716,729,746,FDD", "0 < low < high"),
        ("LTE", "lte_bands.csv", "B12,", "B12,699,716,729,746,HDX", "duplex 'HDX'"),
        ("NR", "nr_bands.csv", "n77,", "n77,3300,4200,3300,4200,SDL", "SDL) band has no uplink"),
        ("NR", "nr_bands.csv", "n75,", "n75,,,1517,1432,SDL", "0 < low < high"),
        ("LTE", "lte_bands.csv", "B12,", "B12,699,716,729,seven,FDD", "band edges must be numbers"),
        ("LTE", "lte_bands.csv", "B12,", "n12,699,716,729,746,FDD", "should be B<number>"),
        ("NR", "nr_bands.csv", "n71,", "B71,663,698,617,652,FDD", "should be n<number>"),
    ],
)
def test_it_rejects_a_bad_band_row_naming_the_file_and_row(
    data_copy, technology, file_name, starts_with, bad_line, message
):
    path = data_copy / file_name
    replace_line(path, starts_with, bad_line)
    line = csv_row_of(path, bad_line)
    with pytest.raises(CatalogError) as raised:
        catalog._read_band_file(technology)
    assert f"{file_name} line {line}:" in str(raised.value)
    assert message in str(raised.value)
    with pytest.raises(CatalogError):
        bands()


def test_it_rejects_a_band_listed_twice(data_copy):
    path = data_copy / "lte_bands.csv"
    path.write_text(path.read_text(encoding="utf-8") + "B12,699,716,729,746,FDD\n", encoding="utf-8")
    last_line = len(path.read_text(encoding="utf-8").splitlines())
    with pytest.raises(CatalogError, match=rf"lte_bands\.csv line {last_line}: band B12 listed twice"):
        catalog._read_band_file("LTE")


def replace_in_table(path, table: str, old: str, new: str) -> None:
    """Replace `old` by `new` inside one [table] of a TOML file, leaving the other tables alone."""
    text = path.read_text(encoding="utf-8")
    begin = text.index(f"\n[{table}]\n")
    end = text.find("\n[", begin + 1)
    end = len(text) if end == -1 else end
    section = text[begin:end]
    assert section.count(old) == 1, f"{old!r} should occur exactly once in [{table}]"
    path.write_text(text[:begin] + section.replace(old, new) + text[end:], encoding="utf-8")


@pytest.mark.parametrize(
    ("table", "old", "new", "message"),
    [
        ("cat-4", 'single_antenna = "never"', 'single_antenna = "sometimes"', "single_antenna should be one of"),
        ("cat-1", 'single_antenna = "operator"', "single_antenna = 1", "single_antenna should be text"),
        ("cat-4", "dl_tbs_bits = 150752", 'dl_tbs_bits = "150752"', "dl_tbs_bits should be a whole number"),
        ("cat-4", "dl_layers = 2", "dl_layers = 4", "rx_antennas and dl_layers should be 1 or 2"),
        ("cat-4", "dl_layers = 2", "dl_layers = true", "dl_layers should be a whole number"),
        ("cat-m1", "rx_antennas = 1", "rx_antennas = 0", "rx_antennas should be a whole number of at least 1"),
        ("cat-1", 'label = "LTE Cat 1"\n', "", "label should be text, got None"),
        ("cat-nb1", "dl_cycle_ms = 26", "dl_cycle_ms = 0", "dl_cycle_ms should be a whole number of at least 1"),
        ("cat-m1", "ul_tbs_bits = 1000", "ul_tbs_bits = -1000", "ul_tbs_bits should be a whole number"),
        ("cat-m1", "rx_antennas = 1", "rx_antenas = 1", "unknown key(s) ['rx_antenas']"),
        ("nr-redcap", "scs_khz = 30", "scs_khz = 20", "formula.scs_khz should be one of (15, 30, 60)"),
        ("nr-redcap", ", ul_layers = 1 }", " }", "formula should be a table with exactly"),
    ],
)
def test_it_rejects_a_bad_category_field_naming_the_file_and_table(data_copy, table, old, new, message):
    replace_in_table(data_copy / "categories.toml", table, old, new)
    with pytest.raises(CatalogError, match=re.escape(f"categories.toml [{table}]: {message}")):
        categories()


def test_it_reads_the_real_catalog_again_once_a_bad_copy_is_gone():
    # Runs after the tests above in file order: the fixture cleared the caches on the way out.
    assert categories()["cat-4"].single_antenna == "never"
    assert bands()["B41"].dl_mhz == (2496.0, 2690.0)
