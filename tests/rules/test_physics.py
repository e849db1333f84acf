"""Free-space physics checked against scipy's constants, numpy, and published formulas and values."""

import math

import numpy as np
import pytest
import scipy.constants
from hypothesis import given
from hypothesis import strategies as st

from rules.physics import (
    bandwidth_from_q,
    db_from_ratio,
    distance_mm,
    eighth_wave_mm,
    enclosing_sphere_radius_mm,
    fractional_bandwidth,
    mclean_q_limit,
    near_field_radius_mm,
    polarization_angle_deg,
    quarter_wave_mm,
    wavelength_mm,
    wavenumber_radius,
)

# Cellular and sub-6 GHz frequencies, from below the 410 MHz bands to above FR1's top.
frequencies_mhz = st.floats(min_value=100.0, max_value=7125.0, allow_nan=False, allow_infinity=False)


def reference_wavelength_mm(frequency_mhz: float) -> float:
    # scipy.constants.c: the SI speed of light, 299 792 458 m/s exactly
    return scipy.constants.c / (frequency_mhz * 1e6) * 1e3


# --- wavelengths --------------------------------------------------------------------------------------


@given(frequencies_mhz)
def test_it_agrees_with_scipy_speed_of_light_for_wavelength_and_its_fractions(frequency_mhz):
    reference_mm = reference_wavelength_mm(frequency_mhz)
    assert wavelength_mm(frequency_mhz) == pytest.approx(reference_mm, rel=1e-12)
    assert quarter_wave_mm(frequency_mhz) == pytest.approx(reference_mm / 4, rel=1e-12)
    assert eighth_wave_mm(frequency_mhz) == pytest.approx(reference_mm / 8, rel=1e-12)
    # Wheeler 1959: the radiansphere has radius lambda / 2 pi
    assert near_field_radius_mm(frequency_mhz) == pytest.approx(reference_mm / (2 * math.pi), rel=1e-12)


@pytest.mark.parametrize("frequency_mhz", [410, 617, 663, 699, 746, 791, 880, 1710, 1920, 2496, 3300, 4200, 5000])
def test_it_gives_the_wavelength_of_each_band_edge_from_the_si_speed_of_light(frequency_mhz):
    # SI definition of the metre: c = 299 792 458 m/s; scipy.constants.c carries the same exact value
    assert scipy.constants.c == 299_792_458.0
    assert wavelength_mm(frequency_mhz) == pytest.approx(299_792_458.0 / frequency_mhz / 1e3, rel=1e-12)


def test_it_gives_the_worked_values_at_699_mhz():
    # check-sources.md: lambda at 699 MHz = 428.9 mm (SI speed of light)
    assert round(wavelength_mm(699), 1) == 428.9
    # lambda / 4 = 107.2 mm (common practice: the usual minimum spacing between receive antennas)
    assert round(quarter_wave_mm(699), 1) == 107.2
    # Wheeler, "The Radiansphere around a Small Antenna", Proc. IRE 47(8), 1959: lambda / 2 pi = 68.3 mm
    assert round(near_field_radius_mm(699), 1) == 68.3


@given(frequencies_mhz)
def test_it_keeps_the_near_field_between_an_eighth_and_a_quarter_wave(frequency_mhz):
    # lambda / 2 pi is about a sixth of a wavelength (Wheeler 1959), so lambda/8 < lambda/2pi < lambda/4
    assert eighth_wave_mm(frequency_mhz) < near_field_radius_mm(frequency_mhz) < quarter_wave_mm(frequency_mhz)


@given(frequencies_mhz, st.floats(min_value=1.0001, max_value=10.0))
def test_it_shortens_the_wavelength_as_the_frequency_rises(frequency_mhz, factor):
    assert wavelength_mm(frequency_mhz * factor) < wavelength_mm(frequency_mhz)
    assert wavelength_mm(frequency_mhz * factor) == pytest.approx(wavelength_mm(frequency_mhz) / factor, rel=1e-12)


# --- small-antenna limits -----------------------------------------------------------------------------


@given(frequencies_mhz)
def test_it_gives_ka_of_one_on_the_radiansphere(frequency_mhz):
    # Wheeler 1959: the radiansphere radius lambda / 2 pi is where k a = 1
    radius_mm = near_field_radius_mm(frequency_mhz)
    assert wavenumber_radius(frequency_mhz, radius_mm) == pytest.approx(1.0, rel=1e-12)


@given(frequencies_mhz, st.floats(min_value=0.1, max_value=500.0))
def test_it_computes_ka_as_two_pi_radius_over_wavelength(frequency_mhz, radius_mm):
    # k = 2 pi / lambda, with lambda from scipy.constants.c
    expected = 2 * math.pi * radius_mm / reference_wavelength_mm(frequency_mhz)
    assert wavenumber_radius(frequency_mhz, radius_mm) == pytest.approx(expected, rel=1e-12)


def test_it_gives_mclean_q_of_ten_at_ka_one_half():
    # McLean, IEEE Trans. Antennas Propag. 44(5), 1996: ka = 0.5 gives Q = 8 + 2 = 10.0
    assert mclean_q_limit(0.5) == pytest.approx(10.0, rel=1e-12)


@pytest.mark.parametrize(
    ("ka", "q"),
    [
        # McLean 1996, Q = 1/(ka)^3 + 1/(ka), evaluated by hand
        (1.0, 2.0),
        (0.25, 68.0),
        (0.1, 1010.0),
        (2.0, 0.625),
    ],
)
def test_it_follows_the_mclean_formula_at_hand_computed_points(ka, q):
    assert mclean_q_limit(ka) == pytest.approx(q, rel=1e-12)


@given(st.floats(min_value=0.01, max_value=10.0))
def test_it_matches_the_mclean_formula_written_independently(ka):
    # McLean 1996: Q = 1/(ka)^3 + 1/(ka) = (1 + (ka)^2) / (ka)^3
    assert mclean_q_limit(ka) == pytest.approx((1 + ka**2) / ka**3, rel=1e-12)


@given(st.floats(min_value=0.01, max_value=10.0), st.floats(min_value=1.001, max_value=10.0))
def test_it_lowers_the_q_limit_as_the_antenna_grows(ka, growth):
    # McLean 1996 / Chu 1948: a larger enclosing sphere allows a lower Q
    assert mclean_q_limit(ka * growth) < mclean_q_limit(ka)


@pytest.mark.parametrize("ka", [0.0, -0.0, -0.5, -10.0])
def test_it_refuses_a_q_limit_for_a_sphere_without_size(ka):
    with pytest.raises(ValueError, match="ka must be positive"):
        mclean_q_limit(ka)


def test_it_gives_the_yaghjian_best_bandwidth_for_vswr_2_and_q_10():
    # Yaghjian & Best, IEEE TAP 53(4), 2005: FBW = (s - 1) / (Q sqrt(s)) = 1 / (10 * 1.41421) = 0.0707
    assert bandwidth_from_q(10.0, 2.0) == pytest.approx(0.0707107, rel=1e-6)


@pytest.mark.parametrize(
    ("q", "vswr", "fractional"),
    [
        # Yaghjian & Best 2005, FBW = (s - 1) / (Q sqrt(s)), evaluated by hand
        (10.0, 3.0, 2.0 / (10.0 * math.sqrt(3.0))),  # 0.1155
        (2.0, 2.0, 1.0 / (2.0 * math.sqrt(2.0))),  # 0.3536
        (68.0, 3.0, 2.0 / (68.0 * math.sqrt(3.0))),  # 0.0170
    ],
)
def test_it_follows_the_yaghjian_best_formula(q, vswr, fractional):
    assert bandwidth_from_q(q, vswr) == pytest.approx(fractional, rel=1e-12)


@given(st.floats(min_value=0.5, max_value=1e4), st.floats(min_value=1.01, max_value=10.0))
def test_it_narrows_the_bandwidth_as_q_rises(q, vswr):
    # Yaghjian & Best 2005: FBW is inversely proportional to Q
    assert bandwidth_from_q(2 * q, vswr) == pytest.approx(bandwidth_from_q(q, vswr) / 2, rel=1e-12)


@pytest.mark.parametrize(("q", "vswr"), [(0.0, 2.0), (-5.0, 2.0), (10.0, 1.0), (10.0, 0.5), (10.0, -2.0)])
def test_it_refuses_a_bandwidth_for_impossible_q_or_vswr(q, vswr):
    with pytest.raises(ValueError, match="Q must be positive and VSWR above 1"):
        bandwidth_from_q(q, vswr)


def test_it_chains_ka_to_q_to_bandwidth_for_a_small_low_band_antenna():
    # Worked by hand: an antenna inside a 40 x 8 x 3 mm box at 699 MHz has a = sqrt(1673) / 2 = 20.45 mm and
    # ka = 2 pi 20.45 / 428.9 = 0.2996; McLean 1996: Q = 1/ka^3 + 1/ka = 37.18 + 3.34 = 40.5;
    # Yaghjian & Best 2005 at VSWR 3: FBW = 2 / (40.52 sqrt 3) = 2.85 %.
    radius_mm = enclosing_sphere_radius_mm([40, 8, 3])
    ka = wavenumber_radius(699, radius_mm)
    q = mclean_q_limit(ka)
    assert radius_mm == pytest.approx(math.sqrt(40**2 + 8**2 + 3**2) / 2, rel=1e-12)
    assert ka == pytest.approx(2 * math.pi * radius_mm / (scipy.constants.c / 699e6 * 1e3), rel=1e-12)
    assert q == pytest.approx(1 / ka**3 + 1 / ka, rel=1e-12)
    assert round(ka, 4) == 0.2996
    assert round(q, 1) == 40.5
    assert round(bandwidth_from_q(q, 3.0) * 100, 2) == 2.85


# --- polarization -------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("a", "b", "angle_deg"),
    [
        ((1, 0, 0), (1, 0, 0), 0.0),  # parallel
        ((1, 0, 0), (-1, 0, 0), 0.0),  # antiparallel: the same field axis, co-polarized
        ((0, 0, 3), (0, 0, -0.5), 0.0),  # antiparallel, non-unit
        ((1, 0, 0), (0, 1, 0), 90.0),  # orthogonal
        ((0, 2, 0), (0, 0, 7), 90.0),  # orthogonal, non-unit
        ((1, 0, 0), (1, 1, 0), 45.0),  # 45 degrees
        ((5, 0, 0), (-3, 3, 0), 45.0),  # 135 degrees between arrows is 45 between axes
        ((1, 0, 0), (1, math.sqrt(3), 0), 60.0),  # cos 60 = 1/2
        ((0, 0, 2), (0, 1, math.sqrt(3)), 30.0),  # cos 30 = sqrt(3)/2
        ((1, 1, 1), (1, 0, 0), math.degrees(math.acos(1 / math.sqrt(3)))),  # body diagonal: 54.74 degrees
    ],
)
def test_it_measures_the_angle_between_field_axes(a, b, angle_deg):
    assert polarization_angle_deg(a, b) == pytest.approx(angle_deg, abs=1e-9)


coordinates = st.floats(min_value=-1e3, max_value=1e3, allow_nan=False, allow_infinity=False)
vectors = st.tuples(coordinates, coordinates, coordinates).filter(lambda v: math.hypot(*v) > 1e-3)


def reference_axis_angle_deg(a, b) -> float:
    """Angle between lines through numpy's cross and dot products: atan2(|a x b|, |a . b|)."""
    a_array, b_array = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    sine_part = np.linalg.norm(np.cross(a_array, b_array))
    cosine_part = abs(float(np.dot(a_array, b_array)))
    return math.degrees(math.atan2(sine_part, cosine_part))


@given(vectors, vectors)
def test_it_always_folds_the_angle_into_zero_to_ninety_degrees(a, b):
    angle = polarization_angle_deg(a, b)
    assert 0.0 <= angle <= 90.0
    assert angle == pytest.approx(reference_axis_angle_deg(a, b), abs=1e-5)


@given(vectors, vectors, st.floats(min_value=0.01, max_value=100.0), st.booleans())
def test_it_ignores_the_length_and_sign_of_either_vector(a, b, scale, flip):
    factor = -scale if flip else scale
    scaled = tuple(factor * x for x in a)
    assert polarization_angle_deg(scaled, b) == pytest.approx(polarization_angle_deg(a, b), abs=1e-5)
    assert polarization_angle_deg(b, a) == pytest.approx(polarization_angle_deg(a, b), abs=1e-9)


@pytest.mark.parametrize(("a", "b"), [((0, 0, 0), (1, 0, 0)), ((0, 1, 0), (0, 0, 0)), ((0, 0, 0), (0, 0, 0))])
def test_it_refuses_a_zero_polarization_vector(a, b):
    with pytest.raises(ValueError, match="non-zero vector"):
        polarization_angle_deg(a, b)


# --- geometry -----------------------------------------------------------------------------------------


@given(vectors, vectors)
def test_it_measures_distance_like_numpy(a, b):
    expected = float(np.linalg.norm(np.asarray(a) - np.asarray(b)))
    assert distance_mm(a, b) == pytest.approx(expected, rel=1e-12, abs=1e-9)


def test_it_measures_a_3_4_5_distance():
    # Pythagoras: 3, 4, 5
    assert distance_mm((0, 0, 0), (3, 4, 0)) == 5.0
    assert distance_mm((10, 20, 5), (13, 24, 5)) == 5.0


@pytest.mark.parametrize(
    ("dimensions_mm", "radius_mm"),
    [
        ((3, 4, 0), 2.5),  # a flat 3 x 4 board: half its 5 mm diagonal (Pythagoras)
        ((3, 4), 2.5),
        ((2, 3, 6), 3.5),  # 2^2 + 3^2 + 6^2 = 49, diagonal 7
        ((10, 10, 10), 5 * math.sqrt(3)),  # cube: half the body diagonal a sqrt(3)
    ],
)
def test_it_encloses_a_box_in_the_sphere_of_half_its_diagonal(dimensions_mm, radius_mm):
    assert enclosing_sphere_radius_mm(dimensions_mm) == pytest.approx(radius_mm, rel=1e-12)


@given(st.tuples(coordinates, coordinates, coordinates).map(lambda v: tuple(abs(x) for x in v)))
def test_it_gives_the_enclosing_radius_numpy_gives_for_half_the_diagonal(dimensions_mm):
    expected = float(np.linalg.norm(dimensions_mm)) / 2
    assert enclosing_sphere_radius_mm(dimensions_mm) == pytest.approx(expected, rel=1e-12, abs=1e-12)


def test_it_gives_the_fractional_bandwidth_of_the_low_band():
    # (high - low) / centre: 698-960 MHz is 262 / 829 = 0.3160 (computed by hand)
    assert fractional_bandwidth(698, 960) == pytest.approx(262 / 829, rel=1e-12)
    assert round(fractional_bandwidth(698, 960), 4) == 0.3160


@given(st.floats(min_value=100.0, max_value=6000.0), st.floats(min_value=0.1, max_value=3000.0))
def test_it_keeps_fractional_bandwidth_below_two(low_mhz, width_mhz):
    # (h - l) / ((h + l) / 2) < 2 for any positive l, and grows with the width
    value = fractional_bandwidth(low_mhz, low_mhz + width_mhz)
    assert 0.0 < value < 2.0
    assert fractional_bandwidth(low_mhz, low_mhz + 2 * width_mhz) > value


@pytest.mark.parametrize(
    ("ratio", "decibels"),
    [
        (2.0, 3.0103),  # 10 log10(2) = 3.0103 dB
        (1000.0, 30.0),
        (0.5, -3.0103),
        (1.0, 0.0),
    ],
)
def test_it_converts_a_power_ratio_to_decibels(ratio, decibels):
    assert db_from_ratio(ratio) == pytest.approx(decibels, abs=1e-4)


# -- rule set 2: planar bound and Bode-Fano (SIZ-001) ------------------------------------------------------

def _ellipse_polarizability(semi_major: float, semi_minor: float) -> float:
    """A thin perfectly conducting elliptic disk along its major axis: V / L with the thin-ellipsoid
    depolarization factor L = (c b / a^2) (K(e) - E(e)) / e^2 (Landau & Lifshitz, Electrodynamics of
    Continuous Media, §4; from memory), i.e. (4 pi / 3) a^3 e^2 / (K - E); scipy's complete elliptic integrals."""
    from scipy.special import ellipe, ellipk

    m = 1 - (semi_minor / semi_major) ** 2
    return 4 * math.pi / 3 * semi_major**3 * m / (ellipk(m) - ellipe(m))


def test_the_moment_method_gives_the_disks_16_a3_over_3():
    # Conducting disk of radius a: polarizability 16 a^3 / 3 (Landau & Lifshitz §4 / Jackson, from memory)
    import numpy as np

    from rules.physics import _polarizability_of_cells

    cells = 60
    step = 2.0 / cells
    centres = (np.arange(cells) + 0.5) * step - 1.0
    grid_x, grid_y = np.meshgrid(centres, centres, indexing="ij")
    inside = grid_x**2 + grid_y**2 <= 1.0
    value = _polarizability_of_cells(grid_x[inside], grid_y[inside], step, step)
    assert value == pytest.approx(16 / 3, rel=0.01)


@pytest.mark.parametrize("aspect", [0.1, 0.3, 0.5, 0.8, 1.0])
def test_a_rectangles_polarizability_lies_between_its_inscribed_and_circumscribed_ellipses(aspect):
    # High-contrast polarizability grows with the shape (Gustafsson, Sohl, Kristensson 2007: monotone in the
    # domain), so the rectangle l x w sits between the ellipses of semi-axes (l/2, w/2) and (l/sqrt2, w/sqrt2).
    from rules.physics import rectangle_polarizability_mm3

    length_mm = 100.0
    value = rectangle_polarizability_mm3(length_mm, aspect * length_mm)
    inner = _ellipse_polarizability(length_mm / 2, aspect * length_mm / 2) if aspect < 1 else 16 / 3 * 50**3
    outer = (_ellipse_polarizability(length_mm / math.sqrt(2), aspect * length_mm / math.sqrt(2)) if aspect < 1
             else 16 / 3 * (50 * math.sqrt(2)) ** 3)
    assert inner < value < outer


def test_the_polarizability_scales_with_the_cube_of_size_and_ignores_orientation():
    from rules.physics import rectangle_polarizability_mm3

    assert rectangle_polarizability_mm3(200, 100) == pytest.approx(8 * rectangle_polarizability_mm3(100, 50))
    assert rectangle_polarizability_mm3(50, 100) == rectangle_polarizability_mm3(100, 50)


def test_the_planar_bound_of_a_sphere_is_1_5_over_ka_cubed():
    # Gustafsson et al. 2007 with D = 1.5, eta = 1/2, gamma = 4 pi a^3: Q >= 1.5 / (ka)^3 (Thal 2006's
    # electric-dipole bound for a sphere; from memory)
    from rules.physics import planar_q_limit, wavenumber_radius

    radius_mm = 40.0
    ka = wavenumber_radius(800.0, radius_mm)
    assert planar_q_limit(800.0, 4 * math.pi * radius_mm**3) == pytest.approx(1.5 / ka**3, rel=1e-12)


def test_bode_fano_at_vswr_3_is_pi_over_q_ln_2():
    # Fano 1950: B <= pi / (Q ln(1/|Gamma|)); VSWR 3 is |Gamma| = 0.5
    from rules.physics import bode_fano_bandwidth

    assert bode_fano_bandwidth(10.0, 3.0) == pytest.approx(math.pi / (10 * math.log(2)), rel=1e-12)
    assert bode_fano_bandwidth(10.0, 3.0) / bandwidth_from_q(10.0, 3.0) == pytest.approx(3.92, abs=0.01)
