"""Uplink and downlink coverage, one receive branch fewer (rules/coverage.py) and rule COV-001.

Check values and where they come from:
- Path loss: 3GPP TR 38.901 Table 7.4.1-1, its formulas written out again here, and ns-3's test suite
  src/propagation/test/three-gpp-propagation-loss-model-test-suite.cc (5 GHz, UMa h_BS 25 m, UMi 10 m,
  RMa 35 m, user 1.5 m, shadowing off; ns-3 computes them from the same table).
- Free space: ITU-R P.525 worked value (900 MHz, 1 km: 91.5 dB) and 20 log10(4 pi d f / c) with
  scipy.constants.c.
- Fading: scipy.stats (expon, gamma) quantiles, scipy.integrate / scipy.optimize for correlated branches,
  and a Monte Carlo simulation of correlated complex Gaussian branches with numpy.
- Coverage targets: 3GPP TR 36.888 (legacy LTE FDD: PUSCH 140.7 dB limits the uplink, PDSCH 145.4 dB the
  downlink with two receive antennas, coverage analysis Table 5.1-1, from memory; LTE-M 155.7 dB =
  140.7 + 15 dB), TR 45.820 (NB-IoT 164 dB = GPRS 144 + 20 dB).
- One receive branch fewer: TR 36.888 (LTE-M single-antenna UE) and TR 38.875 (RedCap 1Rx vs 2Rx): about
  3 dB static, 3-5 dB in fading (from memory: the reports were not at hand).
- Power classes: TS 36.101 Table 6.2.2-1 (class 3 23 dBm, class 1 31 dBm), class 5 20 dBm (Table 6.2.2F-1,
  from memory).
- Band edges: 3GPP TS 36.101 Table 5.5-1 (B1 UL 1920 / DL 2110, B2 UL 1850 / DL 1930, B3 UL 1710 / DL 1805,
  B8 UL 880 / DL 925, B20 UL 832 / DL 791, B29 DL 717-728 (SDL), B31 DL 462.5).
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import constants, integrate, optimize, stats

from rules import coverage
from rules.catalog import categories
from rules.checks.coverage import AREA_SHARE_WARNING_RATIO
from rules.coverage import (
    RMA,
    SCENARIOS,
    UMA,
    UMI,
    CoverageDataError,
    Geometry,
    OutsideValidity,
    analyse_coverage,
    apparent_diversity_gain_rule_db,
    area_share_ratio,
    breakpoint_distance_m,
    coverage_data,
    free_space_loss_db,
    max_range_km,
    mrc_outage_cdf,
    mrc_outage_snr_ratio,
    parse_coverage_data,
    path_loss_db,
    rayleigh_outage_snr_ratio,
    second_antenna_gain,
    single_branch_cost,
)
from rules.design import ENVIRONMENTS, parse_design
from rules.measurements import LoadedMeasurement
from rules.touchstone import parse_touchstone
from tests.rules.design_builders import antenna, design, findings_of, run

C_NOTE = 3.0e8  # TR 38.901 Table 7.4.1-1 notes 1 and 5: c = 3.0 x 10^8 m/s


# -- TR 38.901 path loss ------------------------------------------------------------------------------------

# ns-3 three-gpp-propagation-loss-model-test-suite.cc: received power for 0 dBm sent at 5 GHz, i.e. minus the
# path loss. (ns-3 adds only the first three UMi vectors to its own run; the rest are still the table's values.)
NS3_5GHZ = [
    (RMA, True, 10, 77.3784), (RMA, True, 100, 87.2965), (RMA, True, 1000, 108.5577), (RMA, True, 10000, 140.3896),
    (RMA, False, 10, 77.3784), (RMA, False, 100, 95.7718), (RMA, False, 1000, 133.5223),
    (RMA, False, 5000, 160.5169),
    (UMA, True, 10, 72.9380), (UMA, True, 100, 86.2362), (UMA, True, 1000, 109.7252), (UMA, True, 5000, 137.6794),
    (UMA, False, 10, 82.5131), (UMA, False, 100, 106.1356), (UMA, False, 1000, 144.7641),
    (UMA, False, 5000, 172.0753),
    (UMI, True, 10, 69.8591), (UMI, True, 100, 88.4122), (UMI, True, 1000, 119.3114), (UMI, True, 5000, 147.2696),
    (UMI, False, 10, 76.7563), (UMI, False, 100, 107.9432), (UMI, False, 1000, 143.1886),
    (UMI, False, 5000, 167.8617),
]


@pytest.mark.parametrize(("scenario", "los", "distance_m", "loss_db"), NS3_5GHZ)
def test_tr38901_path_loss_matches_ns3(scenario, los, distance_m, loss_db):
    assert path_loss_db(5000.0, distance_m / 1000, Geometry(scenario, los)) == pytest.approx(loss_db, abs=5e-3)


def _uma_written_out(fc_ghz, d2d_m, h_ut, los):
    # TR 38.901 Table 7.4.1-1, UMa: h_BS = 25 m, d'_BP = 4 h'_BS h'_UT f_c / c with h_E = 1 m
    h_bs = 25.0
    d3d = math.sqrt(d2d_m**2 + (h_bs - h_ut) ** 2)
    d_bp = 4 * (h_bs - 1) * (h_ut - 1) * fc_ghz * 1e9 / C_NOTE
    if d2d_m <= d_bp:
        pl_los = 28.0 + 22 * math.log10(d3d) + 20 * math.log10(fc_ghz)
    else:
        pl_los = (28.0 + 40 * math.log10(d3d) + 20 * math.log10(fc_ghz)
                  - 9 * math.log10(d_bp**2 + (h_bs - h_ut) ** 2))
    if los:
        return pl_los
    return max(pl_los, 13.54 + 39.08 * math.log10(d3d) + 20 * math.log10(fc_ghz) - 0.6 * (h_ut - 1.5))


def _rma_nlos_written_out(fc_ghz, d2d_m, h_bs, h_ut, h=5.0, w=20.0):
    # TR 38.901 Table 7.4.1-1, RMa NLOS: max(PL_LOS, PL'), PL' as printed; d_BP = 2 pi h_BS h_UT f_c / c
    d3d = math.sqrt(d2d_m**2 + (h_bs - h_ut) ** 2)

    def pl1(d):
        return (20 * math.log10(40 * math.pi * d * fc_ghz / 3) + min(0.03 * h**1.72, 10) * math.log10(d)
                - min(0.044 * h**1.72, 14.77) + 0.002 * math.log10(h) * d)

    d_bp = 2 * math.pi * h_bs * h_ut * fc_ghz * 1e9 / C_NOTE
    pl_los = pl1(d3d) if d2d_m <= d_bp else pl1(d_bp) + 40 * math.log10(d3d / d_bp)
    pl_nlos = (161.04 - 7.1 * math.log10(w) + 7.5 * math.log10(h) - (24.37 - 3.7 * (h / h_bs) ** 2) * math.log10(h_bs)
               + (43.42 - 3.1 * math.log10(h_bs)) * (math.log10(d3d) - 3) + 20 * math.log10(fc_ghz)
               - (3.2 * math.log10(11.75 * h_ut) ** 2 - 4.97))
    return max(pl_los, pl_nlos)


@pytest.mark.parametrize("frequency_mhz", [617.0, 791.0, 1805.0, 2110.0, 3300.0])
@pytest.mark.parametrize("distance_m", [10.0, 35.0, 300.0, 1200.0, 4999.0])
@pytest.mark.parametrize("h_ut", [1.5, 4.0, 12.0])
@pytest.mark.parametrize("los", [True, False])
def test_uma_follows_table_7_4_1_1_at_several_distances_and_heights(frequency_mhz, distance_m, h_ut, los):
    geometry = Geometry(UMA, los, mobile_height_m=h_ut)
    assert path_loss_db(frequency_mhz, distance_m / 1000, geometry) == pytest.approx(
        _uma_written_out(frequency_mhz / 1000, distance_m, h_ut, los), abs=1e-9)


@pytest.mark.parametrize("frequency_mhz", [617.0, 925.0, 2620.0])
@pytest.mark.parametrize("distance_m", [10.0, 500.0, 4000.0])
@pytest.mark.parametrize(("h_bs", "h_ut"), [(35.0, 1.5), (60.0, 3.0), (10.0, 1.0)])
def test_rma_nlos_follows_table_7_4_1_1_at_several_distances_and_heights(frequency_mhz, distance_m, h_bs, h_ut):
    geometry = Geometry(RMA, False, base_height_m=h_bs, mobile_height_m=h_ut)
    assert path_loss_db(frequency_mhz, distance_m / 1000, geometry) == pytest.approx(
        _rma_nlos_written_out(frequency_mhz / 1000, distance_m, h_bs, h_ut), abs=1e-9)


def test_the_breakpoint_distances_follow_the_tables_notes():
    # UMa at 2 GHz, user 1.5 m: 4 x 24 x 0.5 x 2e9 / 3e8 = 320 m; RMa 35 m / 1.5 m at 5 GHz: 5497.8 m
    assert breakpoint_distance_m(2000.0, Geometry(UMA)) == pytest.approx(320.0, abs=1e-9)
    assert breakpoint_distance_m(5000.0, Geometry(RMA)) == pytest.approx(2 * math.pi * 35 * 1.5 * 5e9 / 3e8)
    # UMi: h_BS 10 m, so 4 x 9 x 0.5 x f / c
    assert breakpoint_distance_m(3500.0, Geometry(UMI)) == pytest.approx(4 * 9 * 0.5 * 3.5e9 / 3e8)


@pytest.mark.parametrize("scenario", SCENARIOS)
def test_the_los_form_is_continuous_at_its_breakpoint(scenario):
    geometry = Geometry(scenario, True)
    breakpoint_km = breakpoint_distance_m(1800.0, geometry) / 1000
    below = path_loss_db(1800.0, breakpoint_km * (1 - 1e-9), geometry)
    above = path_loss_db(1800.0, breakpoint_km * (1 + 1e-9), geometry)
    # UMa/UMi: exact. RMa's PL2 = PL1(d_BP) + 40 log10(d3D / d_BP) takes d_BP as a 3D distance, so the table
    # itself steps by under a thousandth of a dB there.
    assert above == pytest.approx(below, abs=1e-4 if scenario != RMA else 1e-2)


@pytest.mark.parametrize(("geometry", "frequency_mhz", "distance_km", "parameter"), [
    (Geometry(UMA), 462.5, 1.0, "frequency_mhz"),  # B31 DL: below the table's 0.5 GHz
    (Geometry(UMA), 900.0, 6.0, "distance_km"),  # beyond 5 km
    (Geometry(UMA), 900.0, 0.005, "distance_km"),  # inside 10 m
    (Geometry(UMA, base_height_m=30.0), 900.0, 1.0, "base_height_m"),  # UMa is defined for 25 m
    (Geometry(UMI, base_height_m=25.0), 900.0, 1.0, "base_height_m"),  # UMi for 10 m
    (Geometry(UMA, mobile_height_m=1.0), 900.0, 1.0, "mobile_height_m"),  # UMa users from 1.5 m
    (Geometry(RMA), 31_000.0, 1.0, "frequency_mhz"),  # RMa up to 30 GHz (note 2, from memory)
    (Geometry(RMA, base_height_m=200.0), 900.0, 1.0, "base_height_m"),  # RMa masts 10-150 m
    (Geometry(RMA, False), 900.0, 8.0, "distance_km"),  # RMa NLOS to 5 km
])
def test_tr38901_refuses_cases_outside_its_validity_and_names_the_parameter(
        geometry, frequency_mhz, distance_km, parameter):
    with pytest.raises(OutsideValidity, match=parameter) as raised:
        path_loss_db(frequency_mhz, distance_km, geometry)
    assert raised.value.parameter == parameter


def test_rma_los_holds_to_10_km():
    assert path_loss_db(900.0, 10.0, Geometry(RMA, True)) > path_loss_db(900.0, 5.0, Geometry(RMA, True))


@pytest.mark.parametrize("scenario", SCENARIOS)
@pytest.mark.parametrize("los", [True, False])
@pytest.mark.parametrize("edge_mhz", [1500.0, 2000.0])
@pytest.mark.parametrize("distance_km", [0.5, 2.0, 5.0])
def test_each_environment_is_continuous_across_1500_and_2000_mhz(scenario, los, edge_mhz, distance_km):
    # One model family: across the old Hata / COST-231 / free-space seams the loss moves only by the table's
    # own frequency term (20 log10 f for UMa and RMa, 21.3 log10 f for UMi NLOS), a few thousandths of a dB
    # for +-1 MHz, where the old engine jumped 12.7 dB at 1500 MHz.
    geometry = Geometry(scenario, los)
    below = path_loss_db(edge_mhz - 1.0, distance_km, geometry)
    above = path_loss_db(edge_mhz + 1.0, distance_km, geometry)
    frequency_coefficient = 21.3 if (scenario == UMI and not los) else 20.0
    assert 0.0 < above - below <= frequency_coefficient * math.log10((edge_mhz + 1) / (edge_mhz - 1)) + 1e-9


def test_a_b3_gateway_and_its_b8_twin_differ_only_by_the_frequency_term():
    # The case: B3 DL 1805 vs B8 DL 925 MHz (TS 36.101). UMa NLOS: 20 log10(1805 / 925) = 5.81 dB.
    analyses = {a.band: a for a in analyse_coverage(parse_design(design("cat-1", bands=["B3", "B8"])))}
    difference_db = analyses["B8"].margin_dl_db(2) - analyses["B3"].margin_dl_db(2)
    assert difference_db == pytest.approx(20 * math.log10(1805 / 925), abs=1e-9)


@settings(max_examples=150, deadline=None)
@given(frequency_mhz=st.floats(500.0, 6000.0), scenario=st.sampled_from(SCENARIOS), los=st.booleans(),
       fraction=st.floats(0.0, 1.0))
def test_max_range_inverts_the_path_loss(frequency_mhz, scenario, los, fraction):
    geometry = Geometry(scenario, los)
    nearest_km, farthest_km = geometry.distance_limits_km()
    nearest_db = path_loss_db(frequency_mhz, nearest_km, geometry)
    farthest_db = path_loss_db(frequency_mhz, farthest_km, geometry)
    allowed_db = nearest_db + fraction * (farthest_db - nearest_db)
    range_km = max_range_km(frequency_mhz, allowed_db, geometry)
    assert range_km is not None and nearest_km <= range_km <= farthest_km
    assert path_loss_db(frequency_mhz, range_km, geometry) == pytest.approx(allowed_db, abs=1e-6)


def test_max_range_is_none_outside_the_models_distances():
    assert max_range_km(900.0, 40.0, Geometry()) is None  # closes inside 10 m
    assert max_range_km(900.0, 250.0, Geometry()) is None  # beyond 5 km


def test_free_space_matches_itu_r_p525_worked_value():
    assert free_space_loss_db(900.0, 1.0) == pytest.approx(91.5, abs=0.05)  # ITU-R P.525


@pytest.mark.parametrize(("frequency_mhz", "distance_km"), [(700.0, 0.5), (1800.0, 3.0), (3500.0, 10.0)])
def test_free_space_matches_friis_with_scipys_speed_of_light(frequency_mhz, distance_km):
    wavelength_m = constants.c / (frequency_mhz * 1e6)
    expected_db = 20 * math.log10(4 * math.pi * distance_km * 1000 / wavelength_m)
    # P.525's 32.45 dB is 20 log10(4 pi 1e9 / c) = 32.44 rounded
    assert free_space_loss_db(frequency_mhz, distance_km) == pytest.approx(expected_db, abs=0.01)


# -- fading and the second antenna ------------------------------------------------------------------------

OUTAGES = st.floats(1e-4, 0.5)


@given(OUTAGES)
def test_single_branch_outage_is_scipys_exponential_quantile(outage):
    # Rayleigh envelope: the branch SNR is exponential (scipy.stats.expon)
    assert rayleigh_outage_snr_ratio(outage) == pytest.approx(stats.expon.ppf(outage), rel=1e-12)


@given(OUTAGES)
def test_two_uncorrelated_equal_branches_are_scipys_gamma_of_shape_2(outage):
    # MRC of two independent unit exponentials: gamma with shape 2 (chi-square with 4 degrees of freedom / 2)
    assert mrc_outage_snr_ratio(outage) == pytest.approx(stats.gamma(a=2).ppf(outage), rel=1e-9)
    assert mrc_outage_snr_ratio(outage) == pytest.approx(stats.chi2(df=4).ppf(outage) / 2, rel=1e-9)


def test_second_antenna_gain_at_1_percent_outage_uncorrelated():
    # scipy.stats: 10 log10(gamma(2).ppf(0.01) / expon.ppf(0.01)) = 11.70 dB, of which 10 log10(2) = 3.01 dB
    # is array gain (maximal-ratio combining of equal branches).
    gain = second_antenna_gain(0.01, ecc=0.0, efficiency_ratio=1.0)
    expected_total_db = 10 * math.log10(stats.gamma(a=2).ppf(0.01) / stats.expon.ppf(0.01))
    assert gain.total_db == pytest.approx(expected_total_db, abs=1e-9)
    assert gain.array_gain_db == pytest.approx(10 * math.log10(2), abs=1e-12)
    assert gain.diversity_gain_db == pytest.approx(expected_total_db - 10 * math.log10(2), abs=1e-9)


@given(OUTAGES)
def test_fully_correlated_branches_keep_only_the_array_gain(outage):
    # ECC = 1: both branches fade together; MRC still adds their mean powers (exponential with mean 2).
    gain = second_antenna_gain(outage, ecc=1.0, efficiency_ratio=1.0)
    expected_db = 10 * math.log10(2 * stats.expon.ppf(outage) / stats.expon.ppf(outage))
    assert gain.total_db == pytest.approx(expected_db, abs=1e-9)
    assert gain.diversity_gain_db == pytest.approx(0.0, abs=1e-9)


@given(OUTAGES, st.floats(0.0, 1.0))
def test_a_second_antenna_that_receives_nothing_adds_nothing(outage, ecc):
    assert second_antenna_gain(outage, ecc=ecc, efficiency_ratio=0.0).total_db == pytest.approx(0.0, abs=1e-9)


def _hypoexponential_quantile(outage, larger, smaller):
    """P(X + Y < x) for independent exponentials of means `larger` and `smaller`, by numerical convolution
    of scipy.stats densities, solved for the outage with scipy.optimize."""
    def cdf(x):
        def integrand(t):
            return stats.expon(scale=larger).pdf(t) * stats.expon(scale=smaller).cdf(x - t)
        value, _ = integrate.quad(integrand, 0.0, x, epsabs=1e-14, epsrel=1e-12)
        return value
    return optimize.brentq(lambda x: cdf(x) - outage, 1e-9, 50.0 * larger, xtol=1e-14, rtol=1e-12)


@pytest.mark.parametrize(("outage", "ecc", "ratio"), [
    (0.01, 0.3, 1.0), (0.01, 0.5, 0.5), (0.05, 0.7, 2.0), (0.001, 0.1, 0.8), (0.1, 0.9, 1.0),
])
def test_correlated_unequal_branches_match_a_numerical_convolution(outage, ecc, ratio):
    larger, smaller = coverage.mrc_branch_eigenvalues(ecc, ratio)
    assert mrc_outage_snr_ratio(outage, ecc, ratio) == pytest.approx(
        _hypoexponential_quantile(outage, larger, smaller), rel=1e-6)


@pytest.mark.parametrize(("ecc", "ratio"), [(0.0, 1.0), (0.5, 1.0), (0.3, 0.5), (0.8, 1.5)])
def test_outage_quantile_matches_a_simulation_of_correlated_branches(ecc, ratio):
    # Two complex Gaussian branch gains with |rho|^2 = ECC and mean powers 1 and `ratio`; MRC output SNR is
    # |h1|^2 + |h2|^2. 400 000 draws put the 1 % quantile within about 2 % (0.1 dB).
    generator = np.random.default_rng(20240601)
    draws = 400_000

    def gaussian():
        return (generator.standard_normal(draws) + 1j * generator.standard_normal(draws)) / math.sqrt(2)

    rho = math.sqrt(ecc)
    first = gaussian()
    second = math.sqrt(ratio) * (rho * first + math.sqrt(1 - ecc) * gaussian())
    simulated = np.quantile(np.abs(first) ** 2 + np.abs(second) ** 2, 0.01)
    assert 10 * math.log10(mrc_outage_snr_ratio(0.01, ecc, ratio) / simulated) == pytest.approx(0.0, abs=0.15)


@given(OUTAGES, st.floats(0.0, 1.0), st.floats(0.0, 4.0))
def test_the_quantile_solves_the_cdf(outage, ecc, ratio):
    quantile = mrc_outage_snr_ratio(outage, ecc, ratio)
    assert mrc_outage_cdf(quantile, ecc, ratio) == pytest.approx(outage, rel=1e-7)


@given(OUTAGES, st.floats(0.0, 1.0), st.floats(0.0, 1.0), st.floats(0.05, 4.0))
def test_more_correlation_means_less_gain(outage, ecc_a, ecc_b, ratio):
    low, high = sorted((ecc_a, ecc_b))
    more_correlated_db = second_antenna_gain(outage, high, ratio).total_db
    assert more_correlated_db <= second_antenna_gain(outage, low, ratio).total_db + 1e-9


def test_the_10_db_rule_of_thumb_is_selection_combinings_gain_at_1_percent():
    # common practice: about 10 sqrt(1 - ECC) dB at 1 % outage; at ECC = 0 that is the gain of two-branch
    # selection combining, whose output CDF is expon.cdf^2 (scipy.stats): 10.2 dB.
    selection_db = 10 * math.log10(stats.expon.ppf(math.sqrt(0.01)) / stats.expon.ppf(0.01))
    assert apparent_diversity_gain_rule_db(0.0) == pytest.approx(selection_db, abs=0.3)
    assert apparent_diversity_gain_rule_db(1.0) == 0.0
    # MRC beats selection combining at the same correlation (our exact gain includes its array gain).
    assert second_antenna_gain(0.01, 0.0, 1.0).total_db > selection_db


@pytest.mark.parametrize("bad", [-0.1, 1.1])
def test_ecc_outside_0_to_1_is_refused(bad):
    with pytest.raises(ValueError, match="ECC"):
        second_antenna_gain(0.01, bad, 1.0)




# -- one receive branch fewer ------------------------------------------------------------------------------

PUBLISHED = coverage_data().single_branch


def test_the_published_single_branch_figures_are_carried_with_their_source():
    # TR 36.888 / TR 38.875 (from memory): about 3 dB static, 3-5 dB in fading; 4 dB headline
    assert (PUBLISHED.static_db, PUBLISHED.fading_low_db, PUBLISHED.fading_high_db, PUBLISHED.headline_db) == (
        3.0, 3.0, 5.0, 4.0)
    assert "TR 36.888" in PUBLISHED.source and "TR 38.875" in PUBLISHED.source and "from memory" in PUBLISHED.source


def test_for_two_equal_branches_the_cost_is_the_published_range_beside_the_rayleigh_bound():
    cost = single_branch_cost(PUBLISHED, 0.01, 0.5, 1.0)
    assert cost.static_db == pytest.approx(10 * math.log10(2), abs=1e-12)  # array gain alone
    assert (cost.low_db, cost.headline_db, cost.high_db) == (3.0, 4.0, 5.0)
    # The figure: flat-Rayleigh MRC at 1 % outage, ECC 0.5, about 10.3 dB; 2-3 times the headline.
    assert cost.bound_db == pytest.approx(second_antenna_gain(0.01, 0.5, 1.0).total_db)
    assert cost.bound_db == pytest.approx(10.3, abs=0.1)


def test_a_weaker_second_antenna_costs_less_to_lose():
    # Half as efficient: array gain 10 log10(1.5) = 1.76 dB, 1.25 dB less than equal branches'.
    cost = single_branch_cost(PUBLISHED, 0.01, 0.0, 0.5)
    shortfall_db = 10 * math.log10(2) - 10 * math.log10(1.5)
    assert cost.static_db == pytest.approx(10 * math.log10(1.5), abs=1e-12)
    assert cost.headline_db == pytest.approx(4.0 - shortfall_db, abs=1e-12)


def test_the_cost_never_exceeds_the_fading_bound():
    # Fully correlated branches (ECC 1) keep only the array gain: 3.01 dB, below the 4 dB headline.
    cost = single_branch_cost(PUBLISHED, 0.01, 1.0, 1.0)
    assert cost.headline_db == pytest.approx(10 * math.log10(2), abs=1e-9) == pytest.approx(cost.bound_db)
    assert cost.high_db <= cost.bound_db + 1e-12


# -- area share -----------------------------------------------------------------------------------------

@given(st.floats(0.0, 20.0), st.floats(0.0, 20.0), st.floats(20.0, 45.0))
def test_area_share_falls_as_the_gain_grows(gain_a, gain_b, slope):
    low, high = sorted((gain_a, gain_b))
    assert area_share_ratio(high, slope) <= area_share_ratio(low, slope) <= 1.0
    assert area_share_ratio(0.0, slope) == 1.0


def test_area_share_is_the_squared_range_ratio_far_from_the_mast():
    # UMa NLOS far from the mast: PL' grows 39.08 dB per decade of d3D (TR 38.901), d3D ~ d2D at km range.
    geometry = Geometry(UMA, False)
    one_km = max_range_km(800.0, 140.0, geometry)
    two_km = max_range_km(800.0, 144.0, geometry)
    assert area_share_ratio(4.0, 39.08) == pytest.approx((one_km / two_km) ** 2, rel=1e-4)


def test_the_warning_threshold_is_the_static_cost_at_the_uma_slope():
    # COV-001: 70 % of the area at UMa NLOS's 39.08 dB per decade is 3.03 dB, about the 3.01 dB array gain;
    # the 4 dB headline gives 62 %.
    threshold_db = -39.08 / 2 * math.log10(AREA_SHARE_WARNING_RATIO)
    assert threshold_db == pytest.approx(3.03, abs=0.01)
    assert area_share_ratio(4.0, 39.08) == pytest.approx(0.624, abs=0.001)


# -- data -----------------------------------------------------------------------------------------------

def test_every_category_has_a_target_per_direction_with_sources():
    data = coverage_data()
    assert set(data.targets) == set(categories())
    for target in data.targets.values():
        assert target.ul_source and target.dl_source


@pytest.mark.parametrize(("category", "ul_mcl_db", "dl_mcl_db", "reference_rx"), [
    ("cat-1", 140.7, 145.4, 2),  # TR 36.888 legacy LTE FDD: PUSCH limits the UL, PDSCH the DL (from memory)
    ("cat-4", 140.7, 145.4, 2),
    ("cat-m1", 155.7, 155.7, 1),  # TR 36.888: 140.7 + 15 dB, every channel, one receive antenna
    ("cat-m2", 155.7, 155.7, 1),
    ("cat-nb1", 164.0, 164.0, 1),  # TR 45.820: GPRS 144 + 20 dB
    ("cat-nb2", 164.0, 164.0, 1),
])
def test_coverage_targets_follow_the_3gpp_studies(category, ul_mcl_db, dl_mcl_db, reference_rx):
    target = coverage_data().targets[category]
    assert (target.ul_mcl_db, target.dl_mcl_db, target.dl_reference_rx_antennas) == (
        ul_mcl_db, dl_mcl_db, reference_rx)


def test_the_legacy_uplink_target_is_the_pusch_limit_not_a_downlink_one():
    target = coverage_data().targets["cat-1"]
    assert "PUSCH" in target.ul_source and "PDSCH" in target.dl_source
    assert target.dl_mcl_db > target.ul_mcl_db


def test_every_environment_has_an_entry_loss_with_a_source():
    data = coverage_data()
    assert set(data.entry_losses) == set(ENVIRONMENTS)
    assert all(entry.source for entry in data.entry_losses.values())


def test_the_data_loader_refuses_a_missing_category():
    import tomllib

    from rules.catalog import DATA_DIR
    tables = tomllib.loads((DATA_DIR / "coverage.toml").read_text(encoding="utf-8"))
    del tables["targets"]["cat-1"]
    with pytest.raises(CoverageDataError, match="cat-1"):
        parse_coverage_data(tables)


# -- the analysis ---------------------------------------------------------------------------------------

def _band(document, name, **keywords):
    return next(a for a in analyse_coverage(parse_design(document), **keywords) if a.band == name)


def test_each_direction_is_analysed_at_its_own_lowest_frequency_with_one_model():
    # TS 36.101: B3 UL 1710 / DL 1805, B8 UL 880 / DL 925, B7 UL 2500 / DL 2620 (above 2 GHz, still modelled)
    analyses = analyse_coverage(parse_design(design("cat-1", bands=["B3", "B8", "B7"])))
    assert [(a.band, a.frequency_mhz, a.ul_frequency_mhz, a.geometry.scenario, a.modelled) for a in analyses] == [
        ("B3", 1805.0, 1710.0, UMA, True), ("B8", 925.0, 880.0, UMA, True), ("B7", 2620.0, 2500.0, UMA, True)]


def test_both_directions_add_up():
    document = design("cat-1", antennas=[antenna("A", efficiency_pct={"B20": 50})],
                      deployment={"environment": "indoor"})
    b20 = _band(document, "B20")
    data = coverage_data()
    device_db = data.assumptions.base_gain_db - data.entry_losses["indoor"].loss_db - 10 * math.log10(2)
    assert b20.allowed_ul_db == pytest.approx(140.7 + device_db, abs=1e-9)  # power class 3: 23 dBm
    assert b20.allowed_dl_two_db == pytest.approx(145.4 + device_db, abs=1e-9)  # two-antenna reference
    assert b20.allowed_dl_one_db == pytest.approx(b20.allowed_dl_two_db - b20.cost.headline_db, abs=1e-9)
    # margins at 1 km, each at its own frequency (B20 UL 832, DL 791 MHz)
    assert b20.margin_ul_db == pytest.approx(b20.allowed_ul_db - path_loss_db(832.0, 1.0, Geometry()), abs=1e-9)
    assert b20.margin_dl_db(1) == pytest.approx(b20.allowed_dl_one_db - path_loss_db(791.0, 1.0, Geometry()))


def test_a_one_antenna_reference_puts_the_target_on_the_one_antenna_case():
    b20 = _band(design("cat-m1"), "B20")
    assert b20.allowed_dl_one_db == pytest.approx(155.7 + coverage_data().assumptions.base_gain_db)
    assert b20.allowed_dl_two_db - b20.allowed_dl_one_db == pytest.approx(b20.cost.headline_db)


def test_a_lower_power_class_shrinks_only_the_uplink():
    # TS 36.101: class 5 is 20 dBm, 3 dB below the 23 dBm the targets assume
    default, class_5 = _band(design("cat-m1"), "B8"), _band(design("cat-m1", modem={"power_class": 5}), "B8")
    assert default.allowed_ul_db - class_5.allowed_ul_db == pytest.approx(3.0)
    assert class_5.allowed_dl_one_db == default.allowed_dl_one_db
    assert class_5.max_output_dbm == 20.0


def test_an_external_antenna_on_a_5_db_cable_loses_5_db_both_ways():
    near = _band(design("cat-1", antennas=[antenna("A", mounting="external")]), "B8")
    far = _band(design("cat-1", antennas=[antenna("A", mounting="external", cable_loss_db=5.0)]), "B8")
    assert near.allowed_ul_db - far.allowed_ul_db == pytest.approx(5.0)
    assert near.allowed_dl_two_db - far.allowed_dl_two_db == pytest.approx(5.0)
    assert far.range_one_km < near.range_one_km


def test_a_supplemental_downlink_band_has_only_a_downlink_budget():
    b29 = _band(design("cat-6", bands=["B2", "B29"]), "B29")
    assert b29.ul_frequency_mhz is None and b29.allowed_ul_db is None and b29.margin_ul_db is None
    assert b29.limiting_direction(1) == b29.limiting_direction(2) == "dl"
    assert b29.coverage_loss_db(4.0) == 4.0


def test_a_band_below_500_mhz_is_refused_with_the_reason_and_no_invented_margin():
    b31 = _band(design("cat-1", bands=["B31"]), "B31")  # DL 462.5 MHz (TS 36.101)
    assert not b31.modelled and "frequency_mhz" in b31.model_reason
    assert b31.margin_one_db is None and b31.range_one_km is None
    row = b31.as_dict()
    assert row["margin_one_db"] is None and row["area_share_pct"] is None


def test_entry_losses_can_be_overridden_and_a_missing_environment_is_outdoor():
    document = design(deployment={"environment": "vehicle"})
    [default] = analyse_coverage(parse_design(document))[:1]
    [changed] = analyse_coverage(parse_design(document), entry_loss_db={"vehicle": 3.0})[:1]
    assert changed.entry_loss_db == 3.0 and changed.entry_loss_source == "entered"
    assert changed.allowed_dl_one_db - default.allowed_dl_one_db == pytest.approx(default.entry_loss_db - 3.0)
    unknown = design()
    unknown["deployment"] = {"body_distance_mm": 400}
    [first] = analyse_coverage(parse_design(unknown))[:1]
    assert first.environment == "outdoor" and first.entry_loss_db == 0.0
    assert "not given" in first.entry_loss_source
    with pytest.raises(ValueError, match="environment"):
        analyse_coverage(parse_design(document), entry_loss_db={"cellar": 3.0})


def test_the_scenario_and_heights_are_editable_and_checked():
    rural = _band(design("cat-1"), "B8", scenario=RMA, base_height_m=60.0)
    assert rural.geometry.scenario == RMA and rural.geometry.base_m == 60.0
    with pytest.raises(OutsideValidity, match="reference_distance_km"):
        analyse_coverage(parse_design(design()), reference_distance_km=8.0)
    with pytest.raises(ValueError, match="scenario"):
        analyse_coverage(parse_design(design()), scenario="suburban")


def _pair_measurement(a: float, b: float) -> tuple[dict, tuple[LoadedMeasurement, ...]]:
    """Two ports with S11 = S22 = a and S21 = S12 = b (real) from 700 to 2200 MHz."""
    lines = ["# MHz S RI R 50"] + [f"{f} {a} 0 {b} 0 {b} 0 {a} 0" for f in range(700, 2201, 5)]
    network = parse_touchstone("\n".join(lines) + "\n", source="pair.s2p")
    document = design("cat-1", antennas=[
        antenna("A", "main", (0, 0, 0), efficiency_pct={"B8": 60, "B20": 50}),
        antenna("B", "receive", (120, 0, 0), (0, 1, 0), efficiency_pct={"B8": 30})],
        measurements=[{"file": "pair.s2p", "ports": ["A", "B"]}])
    return document, (LoadedMeasurement("pair.s2p", network, ("A", "B")),)


def test_measured_ecc_and_entered_efficiencies_drive_the_single_branch_cost():
    # Blanch, Romeu, Corbella 2003: S11 = S22 = a, S21 = S12 = b real gives ECC = 4 a^2 b^2 / (1 - a^2 - b^2)^2
    a, b = 0.3, 0.4
    document, measurements = _pair_measurement(a, b)
    analyses = {x.band: x for x in analyse_coverage(parse_design(document), measurements)}
    expected_ecc = 4 * a**2 * b**2 / (1 - a**2 - b**2) ** 2
    b8 = analyses["B8"]
    assert b8.cost.bound.ecc == pytest.approx(expected_ecc, abs=1e-9)
    assert b8.ecc_source.startswith("measured")
    assert b8.cost.bound.efficiency_ratio == pytest.approx(30 / 60)
    assert b8.efficiency_source == "entered efficiencies"
    assert b8.cost.static_db == pytest.approx(10 * math.log10(1 + 30 / 60), abs=1e-12)
    assert analyses["B20"].efficiency_source.startswith("assumption")  # B has no B20 efficiency
    assert b8.fitted_rx_antennas == 2


def test_without_a_measurement_the_ecc_is_entered_or_assumed():
    document = parse_design(design("cat-1"))
    [assumed] = analyse_coverage(document)[:1]
    assert assumed.cost.bound.ecc == coverage_data().assumptions.assumed_ecc
    assert "common practice" in assumed.ecc_source
    [entered] = analyse_coverage(document, ecc=0.2)[:1]
    assert entered.cost.bound.ecc == 0.2 and entered.ecc_source == "entered"


def test_as_dict_names_units_and_is_plain_data():
    [row] = [a.as_dict() for a in analyse_coverage(parse_design(design("cat-1", bands=["B20"])))]
    unitless = {"band", "model", "model_label", "model_source", "model_reason", "scenario", "los", "mcl_source",
                "mcl_dl_source", "mcl_ul_source", "reference_rx_antennas", "power_class", "power_class_source",
                "environment", "environment_given", "entry_loss_source", "antenna_loss_source", "ecc",
                "ecc_source", "efficiency_ratio", "efficiency_source", "single_branch_source",
                "fitted_rx_antennas", "range_note", "limiting_one", "limiting_two"}
    suffixes = ("_mhz", "_m", "_km", "_db", "_dbm", "_pct", "_db_per_decade")
    assert all(key in unitless or key.endswith(suffixes) for key in row)
    assert all(isinstance(value, (str, int, float, bool, type(None), list)) for value in row.values())
    assert {key for key, _, _ in coverage.TABLE_COLUMNS} <= set(row)


# -- COV-001 --------------------------------------------------------------------------------------------

COV_EVIDENCE = ("direction", "limiting_direction", "band", "frequency_mhz", "area_share_pct", "range_one_km",
                "range_two_km", "single_branch_cost_db", "single_branch_cost_range_db", "fading_bound_db", "ecc",
                "model", "mcl_ul_db", "mcl_dl_db", "power_class", "cable_loss_db")


@pytest.mark.parametrize("document", [
    design("cat-1"),
    design("cat-1", modem={"operator_single_antenna_approval": True}),
    design("cat-4"),
    design("nr-redcap", bands=["n3", "n8", "n20"], modem={"rx_ports": 2}),
], ids=["cat-1", "cat-1 approved", "cat-4", "redcap with two branches"])
def test_cov001_notes_that_coverage_does_not_shrink_when_the_uplink_limits(document):
    # EU bands: UL 140.7 dB against DL 145.4 dB less 4 dB for one branch still leaves the uplink the limit
    # (B3: 0.7 dB - 20 log10(1805/1710) = 0.23 dB of downlink headroom left).
    [finding] = findings_of(run(document), "coverage")
    assert finding.id == "COV-001" and finding.severity == "note"
    assert all(key in finding.evidence for key in COV_EVIDENCE)
    evidence = finding.evidence
    assert evidence["direction"] == "dl" and evidence["limiting_direction"] == "ul"
    assert evidence["coverage_loss_db"] == 0.0 and evidence["area_share_pct"] == 100.0
    assert evidence["range_one_km"] == evidence["range_two_km"]
    assert "does not shrink" in finding.explanation
    assert evidence["area_share_bound_pct"] < 100 * AREA_SHARE_WARNING_RATIO  # the bound alone would warn


def test_cov001_warns_when_the_downlink_limits():
    # Cat 6 with an SDL carrier (B29 DL 717-728 MHz): no uplink absorbs the branch's 4 dB; UMa NLOS slope
    # 39.08 dB per decade: area share 10^(-8 / 39.08) = 62.4 %. Indoors, so both ranges stay within 5 km.
    document = design("cat-6", bands=["B2", "B29"], deployment={"environment": "indoor"})
    [finding] = findings_of(run(document), "coverage")
    evidence = finding.evidence
    assert finding.severity == "warning"
    assert (evidence["band"], evidence["direction"], evidence["limiting_direction"]) == ("B29", "dl", "dl")
    assert evidence["area_share_pct"] == pytest.approx(100 * 10 ** (-8 / 39.08), abs=0.1)
    assert evidence["single_branch_cost_range_db"] == [3.0, 5.0]
    assert evidence["range_one_km"] < evidence["range_two_km"]


def test_cov001_lets_a_strong_uplink_expose_the_downlink():
    # Power class 1 (31 dBm, TS 36.101 Table 6.2.2-1) lifts the uplink 8 dB: now the downlink limits.
    [finding] = findings_of(run(design("cat-4", bands=["B14"], modem={"power_class": 1})), "coverage")
    assert finding.evidence["limiting_direction"] == "dl" and finding.severity == "warning"


@pytest.mark.parametrize("category", ["cat-nb1", "cat-nb2", "cat-m1", "cat-m2", "cat-1bis"])
def test_cov001_is_silent_for_single_receive_categories(category):
    # TS 36.306: specified with one receive antenna; the coverage table still shows what a second would add.
    assert findings_of(run(design(category)), "coverage") == []


def test_cov001_is_silent_for_redcap_when_the_module_does_not_declare_two_branches():
    assert findings_of(run(design("nr-redcap", bands=["n3", "n8", "n20"])), "coverage") == []


def test_cov001_names_the_redcap_one_branch_barring():
    [finding] = findings_of(run(design("nr-redcap", bands=["n8"], modem={"rx_ports": 2})), "coverage")
    assert "cellBarredRedCap1Rx" in finding.explanation  # TS 38.331


def test_cov001_is_silent_when_two_receive_antennas_are_connected():
    document = design("cat-1", antennas=[antenna("A"), antenna("B", "receive", (200, 20, 10), (0, 1, 0))])
    assert findings_of(run(document), "coverage") == []


def test_cov001_only_notes_when_no_band_has_a_valid_model():
    # B31 DL 462.5 MHz (TS 36.101) lies below TR 38.901's 0.5 GHz.
    [finding] = findings_of(run(design("cat-1", bands=["B31"])), "coverage")
    assert finding.severity == "note" and finding.evidence["range_one_km"] is None
    assert "frequency_mhz" in finding.explanation


def test_cov001_gives_a_weak_second_antenna_a_small_cost():
    # A Cat 1 module with one receive port leaves the second antenna unconnected. Its entered efficiency
    # (3 % against 60 %) and measured correlation (S11 = S22 = S21 = 0.495: ECC 0.92 by Blanch et al. 2003)
    # make it worth 10 log10(1.05) = 0.21 dB of array gain: the headline falls to about 1.2 dB.
    a = b = 0.495
    expected_ecc = 4 * a**2 * b**2 / (1 - a**2 - b**2) ** 2
    lines = ["# MHz S RI R 50"] + [f"{f} {a} 0 {b} 0 {b} 0 {a} 0" for f in range(700, 2201, 5)]
    network = parse_touchstone("\n".join(lines) + "\n", source="pair.s2p")
    document = design("cat-6", bands=["B2", "B29"], modem={"rx_ports": 1},
                      measurements=[{"file": "pair.s2p", "ports": ["A", "B"]}],
                      antennas=[antenna("A", efficiency_pct={"B2": 60, "B29": 60}),
                                antenna("B", "receive", (200, 20, 10), (0, 1, 0), efficiency_pct={"B2": 3, "B29": 3})])
    [finding] = findings_of(run(document, (LoadedMeasurement("pair.s2p", network, ("A", "B")),)), "coverage")
    assert finding.severity == "note"
    assert finding.evidence["ecc"] == pytest.approx(expected_ecc, abs=1e-3)
    assert finding.evidence["array_gain_db"] == pytest.approx(10 * math.log10(1.05), abs=0.01)
    assert finding.evidence["single_branch_cost_db"] <= finding.evidence["fading_bound_db"]
    assert finding.evidence["area_share_pct"] >= 100 * AREA_SHARE_WARNING_RATIO


def test_even_a_weak_uncorrelated_second_antenna_adds_diversity_at_1_percent_outage():
    # At 1 % outage the first branch is 20 dB down; an uncorrelated branch with 5 % of its power is rarely
    # that deep at the same moment. Checked against the numerical convolution of scipy.stats densities.
    larger, smaller = coverage.mrc_branch_eigenvalues(0.0, 0.05)
    expected_db = 10 * math.log10(_hypoexponential_quantile(0.01, larger, smaller) / stats.expon.ppf(0.01))
    assert second_antenna_gain(0.01, 0.0, 0.05).total_db == pytest.approx(expected_db, abs=1e-4)
    assert expected_db > 10 * math.log10(2)


def test_a_clean_single_receive_design_still_raises_only_notes():
    efficiencies = {"B3": 50, "B8": 40, "B20": 35}
    evaluation = run(design("cat-m1", antennas=[antenna("A", efficiency_pct=efficiencies)]))
    assert evaluation.summary["warning"] == 0 and evaluation.summary["blocker"] == 0


@pytest.mark.parametrize(("extra", "basis"), [
    ({}, "design"),  # the category's targets and coverage.toml's assumptions only
    ({"efficiency_pct": {"B3": 50, "B8": 45, "B20": 40}}, "datasheet"),  # efficiency_source defaults to datasheet
    ({"efficiency_pct": {"B3": 50, "B8": 45, "B20": 40}, "efficiency_source": "measured"}, "measured"),
])
def test_cov001_rests_on_what_its_budget_used(extra, basis):
    # design-file.md, rule set 2: measured in this product > datasheet > design.
    [finding] = findings_of(run(design("cat-1", antennas=[antenna("A", **extra)])), "coverage")
    assert finding.id == "COV-001" and finding.basis == basis
