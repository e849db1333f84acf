"""Free-space physics the rules judge a layout by: wavelengths, near-field radius, geometry, small-antenna limits.

Every function states its unit in its name; frequencies are in MHz and lengths in mm because those are
the units datasheets and mechanical drawings use.
"""

import math
from collections.abc import Sequence
from functools import cache

import numpy as np

# SI definition of the metre (exact).
SPEED_OF_LIGHT_M_PER_S = 299_792_458.0


def wavelength_mm(frequency_mhz: float) -> float:
    return SPEED_OF_LIGHT_M_PER_S / (frequency_mhz * 1e6) * 1000.0


def quarter_wave_mm(frequency_mhz: float) -> float:
    return wavelength_mm(frequency_mhz) / 4.0


def eighth_wave_mm(frequency_mhz: float) -> float:
    return wavelength_mm(frequency_mhz) / 8.0


def near_field_radius_mm(frequency_mhz: float) -> float:
    """Radius of the reactive near field, lambda / 2 pi (Wheeler, "The Radiansphere around a Small
    Antenna", Proc. IRE 47(8), 1959). Inside it an antenna stores more energy than it radiates, so a
    second antenna there is coupled to the first through that stored field."""
    return wavelength_mm(frequency_mhz) / (2.0 * math.pi)


def distance_mm(a_mm: Sequence[float], b_mm: Sequence[float]) -> float:
    return math.dist(a_mm, b_mm)


def polarization_angle_deg(a: Sequence[float], b: Sequence[float]) -> float:
    """Angle between two antennas' dominant E-field axes, folded into 0..90 degrees.

    An axis has no sign (a dipole along +x radiates the same field as one along -x), so antiparallel
    vectors are co-polarized: the angle is taken between lines, not arrows.
    """
    norm_a = math.hypot(*a)
    norm_b = math.hypot(*b)
    if norm_a == 0.0 or norm_b == 0.0:
        raise ValueError("a polarization axis needs a non-zero vector")
    cosine = abs(sum(x * y for x, y in zip(a, b, strict=True))) / (norm_a * norm_b)
    return math.degrees(math.acos(min(1.0, cosine)))


def wavenumber_radius(frequency_mhz: float, radius_mm: float) -> float:
    """ka: the electrical size of a sphere of radius a at the given frequency."""
    return 2.0 * math.pi * radius_mm / wavelength_mm(frequency_mhz)


def mclean_q_limit(ka: float) -> float:
    """Lowest radiation Q of a linearly polarized antenna inside a sphere of electrical radius ka
    (McLean, IEEE Trans. Antennas Propag. 44(5), 1996, refining Chu 1948): Q = 1/(ka)^3 + 1/(ka)."""
    if ka <= 0.0:
        raise ValueError("ka must be positive")
    return 1.0 / ka**3 + 1.0 / ka


def bandwidth_from_q(q: float, vswr: float) -> float:
    """Fractional bandwidth an antenna of quality factor Q can be matched over at the given VSWR
    (Yaghjian & Best, IEEE Trans. Antennas Propag. 53(4), 2005): FBW = (s - 1) / (Q sqrt(s))."""
    if q <= 0.0 or vswr <= 1.0:
        raise ValueError("Q must be positive and VSWR above 1")
    return (vswr - 1.0) / (q * math.sqrt(vswr))


def enclosing_sphere_radius_mm(dimensions_mm: Sequence[float]) -> float:
    """Radius of the smallest sphere around a box (or a flat board) with the given edge lengths."""
    return math.hypot(*dimensions_mm) / 2.0


def fractional_bandwidth(low_mhz: float, high_mhz: float) -> float:
    """(high - low) / centre, the usual definition for matching bandwidth."""
    return (high_mhz - low_mhz) / ((high_mhz + low_mhz) / 2.0)


def db_from_ratio(power_ratio: float) -> float:
    return 10.0 * math.log10(power_ratio)


def reflection_from_vswr(vswr: float) -> float:
    """|Gamma| = (s - 1) / (s + 1)."""
    if vswr <= 1.0:
        raise ValueError("VSWR must be above 1")
    return (vswr - 1.0) / (vswr + 1.0)


def bode_fano_bandwidth(q: float, vswr: float) -> float:
    """The widest fractional bandwidth over which any lossless matching network can hold a load of quality
    factor Q below the given VSWR: B <= pi / (Q ln(1 / |Gamma|)) (Bode 1945, Fano, J. Franklin Inst. 249,
    1950, for a single-resonance RLC load). At VSWR 3 this is about 3.9 times the single-tuned
    bandwidth_from_q; real networks of two or three sections reach part of the way."""
    if q <= 0.0:
        raise ValueError("Q must be positive")
    return math.pi / (q * math.log(1.0 / reflection_from_vswr(vswr)))


def _polarizability_of_cells(x_mm: np.ndarray, y_mm: np.ndarray, cell_dx_mm: float, cell_dy_mm: float) -> float:
    """Static electric polarizability (mm^3, the free-space permittivity divided out) along x of a thin
    perfectly conducting plate made of equal rectangular cells centred at (x, y), by the method of moments:
    pulse charges per cell, the potential matched at the cell centres to that of a unit uniform field (x)
    plus one unknown constant, with zero total charge. The self term is the potential at the centre of a
    uniformly charged rectangle."""
    a, b = cell_dx_mm, cell_dy_mm
    diagonal = math.hypot(a, b)
    self_term = (2 * a * math.log((b + diagonal) / a) + 2 * b * math.log((a + diagonal) / b)) / (4 * math.pi * a * b)
    distance = np.hypot(x_mm[:, None] - x_mm[None, :], y_mm[:, None] - y_mm[None, :])
    np.fill_diagonal(distance, 1.0)
    coupling = 1.0 / (4.0 * math.pi * distance)
    np.fill_diagonal(coupling, self_term)
    count = x_mm.size
    system = np.zeros((count + 1, count + 1))
    system[:count, :count] = coupling
    system[:count, count] = -1.0
    system[count, :count] = 1.0
    charges = np.linalg.solve(system, np.concatenate([x_mm, [0.0]]))[:count]
    return float(charges @ x_mm)


def _rectangle_cells(length: float, width: float, cells_long: int) -> tuple[np.ndarray, np.ndarray, float, float]:
    cells_wide = max(4, round(cells_long * width / length))
    dx, dy = length / cells_long, width / cells_wide
    xs = (np.arange(cells_long) + 0.5) * dx - length / 2
    ys = (np.arange(cells_wide) + 0.5) * dy - width / 2
    grid_x, grid_y = np.meshgrid(xs, ys, indexing="ij")
    return grid_x.ravel(), grid_y.ravel(), dx, dy


@cache
def _unit_rectangle_polarizability(aspect: float) -> float:
    # Pulse-basis moments converge about as 1/N at the plate's edges; Richardson's step on 8 and 16 cells
    # along the length removes that term to within about 0.5 % of a 160-cell result in well under 10 ms
    # (checked against the disk's 16 a^3 / 3 and the inscribed and circumscribed ellipses in
    # tests/rules/test_physics.py). Hand-written: no library here computes plate polarizabilities.
    coarse = _polarizability_of_cells(*_rectangle_cells(1.0, aspect, 8))
    fine = _polarizability_of_cells(*_rectangle_cells(1.0, aspect, 16))
    return 2.0 * fine - coarse


def rectangle_polarizability_mm3(length_mm: float, width_mm: float) -> float:
    """High-contrast (perfectly conducting) electric polarizability of a thin rectangular plate along its
    length, in mm^3: the shape factor Gustafsson, Sohl and Kristensson (2007) bound antennas by. Computed
    for the aspect ratio rounded to 0.001 and scaled by length^3 (polarizability scales with volume)."""
    if not (length_mm > 0 and width_mm > 0):
        raise ValueError("a plate needs a positive length and width")
    length_mm, width_mm = max(length_mm, width_mm), min(length_mm, width_mm)
    aspect = max(0.02, round(width_mm / length_mm, 3))
    return _unit_rectangle_polarizability(aspect) * length_mm**3


def planar_q_limit(frequency_mhz: float, polarizability_mm3: float) -> float:
    """Lowest radiation Q of a small antenna whose currents stay inside a shape of the given high-contrast
    polarizability gamma: Q >= 6 pi / (k^3 gamma). This is the bound D/Q <= eta k^3 gamma / (2 pi) of
    Gustafsson, Sohl, Kristensson, Proc. R. Soc. A 463, 2007, with the small dipole's directivity D = 1.5
    and absorption efficiency eta = 1/2 (the same form as Yaghjian & Stuart, IEEE TAP 58(10), 2010). For a
    sphere (gamma = 4 pi a^3) it is 1.5 / (ka)^3; for a flat board it is far above McLean's sphere bound,
    because a board holds much less polarizability than the sphere around it."""
    if polarizability_mm3 <= 0.0:
        raise ValueError("polarizability must be positive")
    wavenumber_per_mm = 2.0 * math.pi / wavelength_mm(frequency_mhz)
    return 6.0 * math.pi / (wavenumber_per_mm**3 * polarizability_mm3)
