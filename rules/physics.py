"""Free-space physics the rules judge a layout by: wavelengths, near-field radius, geometry, small-antenna limits.

Every function states its unit in its name; frequencies are in MHz and lengths in mm because those are
the units datasheets and mechanical drawings use.
"""

import math
from collections.abc import Sequence

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
