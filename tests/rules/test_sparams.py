"""Antenna figures from S-parameters, checked against published formulas and scikit-rf."""

import math
from pathlib import Path

import numpy as np
import pytest
import skrf
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays
from scipy.stats import unitary_group

from rules.sparams import (
    DB_CAP,
    BandWindow,
    WorstCase,
    band_window,
    efficiency_upper_bound,
    envelope_correlation,
    isolation_db,
    largest_singular_value,
    return_loss_db,
    vswr,
    worst_maximum,
    worst_minimum,
)
from rules.touchstone import Network, parse_touchstone, read_touchstone

SKRF_DATA = Path(skrf.__file__).parent / "data"


def network_of(s, frequencies_mhz=None) -> Network:
    s = np.asarray(s, dtype=np.complex128)
    if s.ndim == 2:
        s = s[None]
    if frequencies_mhz is None:
        frequencies_mhz = 1000.0 + 10.0 * np.arange(s.shape[0])
    return Network(
        source="constructed",
        version="1.1",
        frequencies_hz=np.asarray(frequencies_mhz, dtype=np.float64) * 1e6,
        s=s,
        reference_ohm=np.full(s.shape[1], 50.0),
        comments=(),
    )


def symmetric_two_port(a: complex, b: complex) -> Network:
    return network_of([[a, b], [b, a]])


# ------------------------------------------------------------------------- return loss and VSWR


def test_vswr_3_is_half_reflection_and_6_dB_return_loss():
    # VSWR = (1 + |G|)/(1 - |G|): |G| = 0.5 gives 3; return loss -20 log10 0.5 = 6.0206 dB.
    network = network_of([[0.5j]])
    assert vswr(network)[0, 0] == pytest.approx(3.0, rel=1e-15)
    assert return_loss_db(network)[0, 0] == pytest.approx(6.020599913279624, rel=1e-12)


def test_matched_port_return_loss_is_capped_and_vswr_is_one():
    network = network_of([[0.0, 0.3], [0.3, 0.0]])
    assert return_loss_db(network).tolist() == [[DB_CAP, DB_CAP]]
    assert vswr(network).tolist() == [[1.0, 1.0]]


def test_total_and_excess_reflection():
    network = network_of([[1.0, 0.0], [0.0, -1.2]])
    assert np.all(np.isinf(vswr(network)))
    # |S22| > 1: return loss goes negative, -20 log10 1.2 = -1.58 dB.
    assert return_loss_db(network)[0].tolist() == pytest.approx([0.0, -20.0 * math.log10(1.2)])


def test_return_loss_and_vswr_shapes_follow_the_ports():
    network = network_of(np.zeros((5, 3, 3)))
    assert return_loss_db(network).shape == (5, 3)
    assert vswr(network).shape == (5, 3)


def test_constructed_values_against_scikit_rf():
    rng = np.random.default_rng(7)
    s = (rng.uniform(0.05, 0.95, (11, 3, 3)) * np.exp(1j * rng.uniform(-np.pi, np.pi, (11, 3, 3))))
    ours = network_of(s)
    theirs = skrf.Network(frequency=skrf.Frequency.from_f(ours.frequencies_hz, unit="Hz"), s=s)
    np.testing.assert_allclose(return_loss_db(ours), -np.diagonal(theirs.s_db, axis1=1, axis2=2), rtol=1e-12)
    np.testing.assert_allclose(vswr(ours), np.diagonal(theirs.s_vswr, axis1=1, axis2=2), rtol=1e-12)
    worse_db = np.maximum(theirs.s_db[:, 0, 2], theirs.s_db[:, 2, 0])
    np.testing.assert_allclose(isolation_db(ours, 0, 2), -worse_db, rtol=1e-12)


@pytest.mark.parametrize("name", ["ntwk1.s2p", "ring slot.s2p", "tee.s3p", "short.s2p", "ind.s2p"])
def test_shipped_data_against_scikit_rf(name):
    ours = read_touchstone(SKRF_DATA / name)
    theirs = skrf.Network(str(SKRF_DATA / name))
    with np.errstate(divide="ignore"):  # skrf's own log of |S| = 0 is not under test
        s_db = theirs.s_db
    np.testing.assert_allclose(return_loss_db(ours), -np.diagonal(s_db, axis1=1, axis2=2), rtol=1e-9)
    np.testing.assert_allclose(vswr(ours), np.diagonal(theirs.s_vswr, axis1=1, axis2=2), rtol=1e-9)
    expected = -np.maximum(s_db[:, 0, 1], s_db[:, 1, 0])
    np.testing.assert_allclose(isolation_db(ours, 0, 1), np.minimum(expected, DB_CAP), rtol=1e-9)


# ------------------------------------------------------------------------------------- isolation


def test_isolation_of_s21_0_4_is_7_96_dB():
    # -20 log10 0.4 = 7.9588 dB.
    network = symmetric_two_port(0.1, 0.4)
    assert isolation_db(network, 0, 1)[0] == pytest.approx(7.958800173440752, rel=1e-12)
    assert isolation_db(network, 1, 0)[0] == pytest.approx(7.958800173440752, rel=1e-12)


def test_isolation_takes_the_worse_direction():
    network = network_of([[0.0, 0.1], [0.4j, 0.0]])
    assert isolation_db(network, 0, 1)[0] == pytest.approx(7.958800173440752, rel=1e-12)
    assert isolation_db(network, 1, 0)[0] == pytest.approx(7.958800173440752, rel=1e-12)


def test_isolated_ports_are_capped():
    assert isolation_db(network_of(np.zeros((2, 2))), 0, 1).tolist() == [DB_CAP]


def test_port_pairs_are_checked():
    network = network_of(np.zeros((2, 2)))
    with pytest.raises(ValueError, match="same port"):
        isolation_db(network, 1, 1)
    with pytest.raises(ValueError, match="port 2 does not exist"):
        envelope_correlation(network, 0, 2)
    with pytest.raises(ValueError, match="port -1 does not exist"):
        efficiency_upper_bound(network, -1)


# -------------------------------------------------------------------------- envelope correlation


@pytest.mark.parametrize(
    ("a", "b", "expected"),
    [
        # ECC = 4 a^2 b^2 / (1 - a^2 - b^2)^2 for S11 = S22 = a, S21 = S12 = b, real (Blanch, Romeu
        # and Corbella, Electronics Letters 39(9), 2003, their equation with these S substituted).
        (0.3, 0.2, 0.019024970273483946),
        (0.5, 0.4, 0.4596380350474003),
        (0.0, 0.5, 0.0),
        (0.5, 0.0, 0.0),
    ],
)
def test_ecc_of_a_symmetric_reciprocal_pair(a, b, expected):
    assert expected == pytest.approx(4 * a * a * b * b / (1 - a * a - b * b) ** 2, rel=1e-15, abs=0.0)
    assert envelope_correlation(symmetric_two_port(a, b), 0, 1)[0] == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(("a", "b"), [(0.1, 0.2), (0.4, 0.3), (0.7, 0.1), (0.2, 0.7)])
def test_ecc_closed_form_over_a_sweep(a, b):
    # Passive as long as the eigenvalues a + b and a - b stay inside the unit circle.
    network = network_of([[[a, b], [b, a]], [[b, a], [a, b]], [[-a, b], [b, -a]]])
    expected = 4 * a * a * b * b / (1 - a * a - b * b) ** 2
    np.testing.assert_allclose(envelope_correlation(network, 0, 1), [expected] * 3, rtol=1e-12)


def test_closed_form_above_one_means_non_passive_data():
    # a = 0.2, b = 0.9: the closed form gives 5.76, impossible for an ECC; the eigenvalue a + b = 1.1
    # says this "network" amplifies. Clipped to the worst case.
    assert 4 * 0.2**2 * 0.9**2 / (1 - 0.2**2 - 0.9**2) ** 2 == pytest.approx(5.76)
    assert envelope_correlation(symmetric_two_port(0.2, 0.9), 0, 1).tolist() == [1.0]


def test_matched_isolated_antennas_are_uncorrelated():
    assert envelope_correlation(network_of(np.zeros((3, 3))), 0, 2).tolist() == [0.0]


def test_quadrature_coupling_cancels_the_correlation():
    # S11 = S22 = a, S21 = S12 = jb: conj(S11) S12 + conj(S21) S22 = jab - jab = 0, so the Blanch
    # numerator vanishes although the ports are coupled.
    network = symmetric_two_port(0.3, 0.5j)
    assert envelope_correlation(network, 0, 1)[0] == pytest.approx(0.0, abs=1e-16)
    assert isolation_db(network, 0, 1)[0] == pytest.approx(6.020599913279624)


def test_lossless_network_is_reported_fully_correlated():
    # A lossless thru (S21 = S12 = 1) radiates nothing: 1 - |S11|^2 - |S21|^2 = 0 and the formula
    # is 0/0. Documented worst case: 1.0.
    assert envelope_correlation(network_of([[0.0, 1.0], [1.0, 0.0]]), 0, 1).tolist() == [1.0]
    # A 4-port from a random unitary matrix is lossless as a whole (S^H S = I).
    unitary = unitary_group.rvs(4, random_state=3)
    network = network_of(unitary)
    for i, j in [(0, 1), (1, 3), (2, 0)]:
        assert envelope_correlation(network, i, j).tolist() == [1.0]


def test_non_passive_data_is_reported_fully_correlated():
    network = network_of([[1.1, 0.2], [0.2, 0.3]])
    assert envelope_correlation(network, 0, 1).tolist() == [1.0]
    assert envelope_correlation(network, 1, 0).tolist() == [1.0]


def test_ecc_is_symmetric_in_its_ports():
    rng = np.random.default_rng(11)
    s = 0.3 * (rng.normal(size=(4, 3, 3)) + 1j * rng.normal(size=(4, 3, 3)))
    s /= np.linalg.svd(s, compute_uv=False).max() * 1.1
    network = network_of(s)
    np.testing.assert_allclose(envelope_correlation(network, 0, 2), envelope_correlation(network, 2, 0),
                               rtol=1e-12)


def test_ecc_of_a_shipped_two_port_equals_its_matrix_form():
    ours = read_touchstone(SKRF_DATA / "ring slot.s2p")
    expected = _ecc_from_dissipation_matrix(ours.s, 0, 1)
    assert 0.5 < expected.min() and expected.max() < 0.95  # a discriminating range, not all 0 or 1
    np.testing.assert_allclose(envelope_correlation(ours, 0, 1), expected, rtol=1e-9)


def _ecc_from_dissipation_matrix(s: np.ndarray, i: int, j: int) -> np.ndarray:
    """ECC written with the matrix I - S^H S, whose entries are the radiated-power overlaps of the
    ports of a lossless antenna system (Hallbjoerner, IEEE AWPL 4, 2005, from memory):
    ECC = |Q_ij|^2 / (Q_ii Q_jj)."""
    q = np.eye(s.shape[1]) - np.conj(s.transpose(0, 2, 1)) @ s
    return np.abs(q[:, i, j]) ** 2 / (q[:, i, i].real * q[:, j, j].real)


# ---------------------------------------------------------------------------- efficiency bound


def test_efficiency_bound_of_a_lossless_network_is_zero_at_every_port():
    # Columns of a unitary matrix have unit norm: sum_k |S_ki|^2 = 1, nothing left to radiate.
    unitary = unitary_group.rvs(3, size=4, random_state=5)
    network = network_of(unitary)
    for port in range(3):
        np.testing.assert_allclose(efficiency_upper_bound(network, port), np.zeros(4), atol=1e-12)


def test_efficiency_bound_of_a_matched_isolated_port_is_one():
    network = network_of([[0.0, 0.0], [0.0, 0.5]])
    assert efficiency_upper_bound(network, 0).tolist() == [1.0]
    assert efficiency_upper_bound(network, 1).tolist() == [0.75]


def test_efficiency_bound_subtracts_reflection_and_coupling():
    # |S11| = 0.5 and |S21| = 0.5: 1 - 0.25 - 0.25 = 0.5.
    network = network_of([[0.5, 0.0], [0.5j, 0.0]])
    assert efficiency_upper_bound(network, 0)[0] == pytest.approx(0.5, rel=1e-15)


def test_efficiency_bound_is_clipped_for_non_passive_data():
    assert efficiency_upper_bound(network_of([[1.5, 0.0], [0.0, 0.0]]), 0).tolist() == [0.0]


# ----------------------------------------------------------------------------------- band window


def sweep_700_to_2700_mhz() -> Network:
    frequencies_mhz = np.arange(700.0, 2701.0, 10.0)
    return network_of(np.zeros((frequencies_mhz.size, 1, 1)), frequencies_mhz)


def test_band_window_full_coverage():
    network = sweep_700_to_2700_mhz()
    window = band_window(network, [(824.0, 894.0), (1710.0, 1880.0)])
    assert isinstance(window, BandWindow)
    assert window.covered is True
    assert window.missing_mhz == []
    # 830..890 (7 points) and 1710..1880 (18 points, both edges measured and included).
    assert int(window.mask.sum()) == 7 + 18
    assert network.frequencies_mhz[window.mask][0] == 830.0
    assert 1710.0 in network.frequencies_mhz[window.mask]
    assert 1880.0 in network.frequencies_mhz[window.mask]


def test_band_window_partial_coverage():
    window = band_window(sweep_700_to_2700_mhz(), [(600.0, 750.0), (2600.0, 2800.0)])
    assert window.covered is False
    assert window.missing_mhz == [(600.0, 700.0), (2700.0, 2800.0)]
    assert int(window.mask.sum()) == 6 + 11


def test_band_window_no_coverage():
    window = band_window(sweep_700_to_2700_mhz(), [(3300.0, 3800.0), (450.0, 470.0)])
    assert window.covered is False
    assert window.missing_mhz == [(450.0, 470.0), (3300.0, 3800.0)]
    assert not window.mask.any()


def test_band_window_merges_overlapping_gaps():
    window = band_window(sweep_700_to_2700_mhz(), [(600.0, 650.0), (620.0, 720.0)])
    assert window.missing_mhz == [(600.0, 700.0)]


def test_band_edges_written_in_ghz_still_count():
    # 0.824 GHz is 823.9999999999999 MHz in binary floating point; the edge must still be inside.
    network = parse_touchstone("# GHz S RI R 50\n0.824 0.1 0\n0.86 0.2 0\n0.894 0.3 0\n", source="edges.s1p")
    window = band_window(network, [(824.0, 894.0)])
    assert window.covered is True
    assert window.mask.tolist() == [True, True, True]


def test_band_window_rejects_inverted_ranges():
    with pytest.raises(ValueError, match="low <= high"):
        band_window(sweep_700_to_2700_mhz(), [(900.0, 800.0)])


# ------------------------------------------------------------------------------------ worst case


def test_worst_minimum_and_maximum():
    values = np.array([5.0, 3.0, 3.0, 8.0, 1.0])
    frequencies_mhz = np.array([800.0, 810.0, 820.0, 830.0, 840.0])
    mask = np.array([True, True, True, True, False])
    # Ties go to the lowest frequency.
    assert worst_minimum(values, frequencies_mhz, mask) == WorstCase(value=3.0, frequency_mhz=810.0, points=4)
    assert worst_maximum(values, frequencies_mhz, mask) == WorstCase(value=8.0, frequency_mhz=830.0, points=4)


def test_worst_case_of_an_empty_window_is_none():
    values = np.array([1.0, 2.0])
    frequencies_mhz = np.array([1.0, 2.0])
    assert worst_minimum(values, frequencies_mhz, np.zeros(2, dtype=bool)) is None
    assert worst_maximum(values, frequencies_mhz, np.zeros(2, dtype=bool)) is None


def test_worst_case_skips_nan_and_keeps_inf():
    values = np.array([np.nan, 2.0, np.inf])
    frequencies_mhz = np.array([1.0, 2.0, 3.0])
    mask = np.ones(3, dtype=bool)
    assert worst_maximum(values, frequencies_mhz, mask) == WorstCase(value=math.inf, frequency_mhz=3.0,
                                                                     points=3)
    assert worst_minimum(values, frequencies_mhz, mask) == WorstCase(value=2.0, frequency_mhz=2.0, points=3)


def test_worst_case_checks_shapes():
    with pytest.raises(ValueError, match="one length"):
        worst_minimum(np.zeros(3), np.zeros(2), np.ones(3, dtype=bool))


def test_worst_return_loss_over_a_band_of_a_shipped_file():
    network = read_touchstone(SKRF_DATA / "ntwk1.s2p")
    window = band_window(network, [(2000.0, 3000.0)])
    worst = worst_minimum(return_loss_db(network)[:, 0], network.frequencies_mhz, window.mask)
    assert worst is not None
    in_band = return_loss_db(network)[window.mask, 0]
    assert worst.value == in_band.min()
    assert worst.points == in_band.size == 11  # ntwk1.s2p steps 0.1 GHz from 1 GHz
    assert 2000.0 <= worst.frequency_mhz <= 3000.0


# ------------------------------------------------------------------------------- property tests


@st.composite
def passive_networks(draw) -> Network:
    ports = draw(st.integers(min_value=2, max_value=4))
    frequencies = draw(st.integers(min_value=1, max_value=3))
    shape = (frequencies, ports, ports)
    parts = st.floats(min_value=-1.0, max_value=1.0, allow_nan=False, allow_subnormal=False)
    real = draw(arrays(np.float64, shape, elements=parts))
    imaginary = draw(arrays(np.float64, shape, elements=parts))
    s = real + 1j * imaginary
    largest = np.linalg.svd(s, compute_uv=False).max(axis=1)
    # Passive: every singular value below 1. The margin runs from barely (1e-6) to well inside.
    margin = draw(st.floats(min_value=1e-6, max_value=1.0))
    scale = np.where(largest > 0.0, 1.0 / (largest * (1.0 + margin) + 1e-300), 1.0)
    return network_of(s * scale[:, None, None])


@settings(max_examples=250, deadline=None)
@given(network=passive_networks(), data=st.data())
def test_passive_networks_give_bounded_figures(network, data):
    i = data.draw(st.integers(min_value=0, max_value=network.port_count - 1))
    j = data.draw(st.integers(min_value=0, max_value=network.port_count - 1).filter(lambda port: port != i))
    ecc = envelope_correlation(network, i, j)
    assert ecc.shape == (network.s.shape[0],)
    assert np.all((ecc >= 0.0) & (ecc <= 1.0))
    for port in (i, j):
        bound = efficiency_upper_bound(network, port)
        assert np.all((bound >= 0.0) & (bound <= 1.0))
    assert np.all(return_loss_db(network) > 0.0)
    assert np.all(vswr(network) >= 1.0)
    assert np.all(isolation_db(network, i, j) > 0.0)
    # Where the power left for radiation is not lost in rounding, the matrix form agrees.
    q_ii = efficiency_upper_bound(network, i)
    q_jj = efficiency_upper_bound(network, j)
    clear = (q_ii > 1e-6) & (q_jj > 1e-6)
    expected = np.minimum(_ecc_from_dissipation_matrix(network.s, i, j)[clear], 1.0)
    np.testing.assert_allclose(ecc[clear], expected, rtol=1e-6, atol=1e-9)


# -- passivity: the largest singular value of S -------------------------------------------------------------

def test_a_network_that_passes_the_column_test_can_still_be_active():
    # S11 = S22 = 0.6, S21 = S12 = 0.5: each column has |S11|^2 + |S21|^2 = 0.61 <= 1, but the symmetric
    # matrix has the eigenvector (1, 1) with eigenvalue 0.6 + 0.5 = 1.1: fed equally at both ports it returns
    # 1.21 times the power (linear algebra of a symmetric 2x2 matrix).
    network = network_of([[0.6, 0.5], [0.5, 0.6]])
    assert (np.abs(network.s[0]) ** 2).sum(axis=0).max() <= 1.0
    assert largest_singular_value(network)[0] == pytest.approx(1.1, abs=1e-12)


def test_a_resistive_three_port_divider_is_passive():
    # Equal-split resistive divider: S_ii = 0, S_ij = 1/2 (Pozar, Microwave Engineering, §7.2, from memory).
    # Its eigenvalues are 1 and -1/2 (twice): passive, with no power gain for any excitation.
    divider = network_of(0.5 * (np.ones((3, 3)) - np.eye(3)))
    assert largest_singular_value(divider)[0] == pytest.approx(1.0, abs=1e-12)


def test_a_lossless_network_has_every_singular_value_1():
    # A unitary S (scipy.stats.unitary_group) is lossless: all singular values are exactly 1.
    s = unitary_group.rvs(4, random_state=3)
    assert largest_singular_value(network_of(s))[0] == pytest.approx(1.0, abs=1e-12)


@pytest.mark.parametrize("path", sorted(SKRF_DATA.glob("*.s?p")), ids=lambda path: path.name)
def test_scikit_rf_shipped_files_are_passive_within_tolerance(path):
    # Every file scikit-rf ships is passive within the 1 % the engine allows (its largest singular value,
    # computed by numpy from scikit-rf's own S array, is at most 1.0 + rounding: 1.0000 for the calibration
    # standards and lines, 0.9995 for "ring slot.s2p", 0.92 for "ring slot measured.s1p").
    theirs = np.linalg.svd(skrf.Network(str(path)).s, compute_uv=False)[:, 0]
    ours = largest_singular_value(read_touchstone(path))
    assert ours == pytest.approx(theirs, abs=1e-9)
    assert ours.max() <= 1.01


def test_data_too_large_to_be_measured_is_not_passive():
    network = network_of([[[1e300, 0], [0, 0.1]], [[np.inf, 0], [0, 0.1]]])
    assert np.isinf(largest_singular_value(network)).all()
