"""Far-field patterns from physics, as arrays or as files in the layout of design-file.md.

An ideal short (Hertzian) dipole with its moment along the unit vector u radiates a far field along the
transverse part of u, E ∝ u - (u·r̂) r̂, whose spherical components are E_theta = u·θ̂ and E_phi = u·φ̂
(Balanis, Antenna Theory, §4.2). Its directivity is 1.5 sin²ψ, ψ the angle from the axis, so a field
scaled by sqrt(1.5 η) is an absolute pattern of total efficiency η. A source at position r0 adds the
phase exp(j k r̂·r0), the phase reference being the origin. Benchmarks and tests share these builders.
"""

import io
from collections.abc import Sequence

import numpy as np

SPEED_OF_LIGHT_MM_PER_S = 299_792_458_000.0  # SI definition
HEADER = "frequency_mhz,theta_deg,phi_deg,e_theta_re,e_theta_im,e_phi_re,e_phi_im"
SHORT_DIPOLE_DIRECTIVITY = 1.5  # Balanis, Antenna Theory, §4.2


def grid(step_deg: float) -> tuple[np.ndarray, np.ndarray]:
    """Theta 0..180 inclusive and phi 0..<360 in steps of `step_deg` (which must divide 180)."""
    count = round(180.0 / step_deg)
    return np.linspace(0.0, 180.0, count + 1), np.arange(2 * count) * (360.0 / (2 * count))


def _directions(theta_deg: np.ndarray, phi_deg: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """r̂, θ̂, φ̂ on the grid, each (T, P, 3)."""
    theta, phi = np.meshgrid(np.radians(theta_deg), np.radians(phi_deg), indexing="ij")
    r_hat = np.stack([np.sin(theta) * np.cos(phi), np.sin(theta) * np.sin(phi), np.cos(theta)], axis=-1)
    theta_hat = np.stack([np.cos(theta) * np.cos(phi), np.cos(theta) * np.sin(phi), -np.sin(theta)], axis=-1)
    phi_hat = np.stack([-np.sin(phi), np.cos(phi), np.zeros_like(phi)], axis=-1)
    return r_hat, theta_hat, phi_hat


def position_phase(frequencies_mhz: Sequence[float], theta_deg: np.ndarray, phi_deg: np.ndarray,
                   position_mm: Sequence[float]) -> np.ndarray:
    """(F, T, P): exp(j k r̂·r0) for a source at `position_mm`."""
    r_hat, _, _ = _directions(theta_deg, phi_deg)
    wavenumbers = 2.0 * np.pi * np.asarray(frequencies_mhz, dtype=float) * 1e6 / SPEED_OF_LIGHT_MM_PER_S
    path_mm = r_hat @ np.asarray(position_mm, dtype=float)
    return np.exp(1j * wavenumbers[:, None, None] * path_mm[None, :, :])


def dipole_field(frequencies_mhz: Sequence[float], theta_deg: np.ndarray, phi_deg: np.ndarray,
                 axis: Sequence[float], position_mm: Sequence[float] = (0.0, 0.0, 0.0),
                 efficiency: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
    """(E_theta, E_phi), each (F, T, P): a short dipole along `axis` at `position_mm`, scaled so that
    |E_theta|^2 + |E_phi|^2 is its realized gain at total efficiency `efficiency`."""
    _, theta_hat, phi_hat = _directions(theta_deg, phi_deg)
    unit = np.asarray(axis, dtype=float) / np.linalg.norm(axis)
    amplitude = np.sqrt(SHORT_DIPOLE_DIRECTIVITY * efficiency)
    phase = position_phase(frequencies_mhz, theta_deg, phi_deg, position_mm)
    return amplitude * (theta_hat @ unit) * phase, amplitude * (phi_hat @ unit) * phase


def pattern_text(frequencies_mhz: Sequence[float], theta_deg: np.ndarray, phi_deg: np.ndarray,
                 e_theta: np.ndarray, e_phi: np.ndarray, *, comment: str = "", digits: int = 6) -> str:
    """The CSV text of a pattern: comment lines, the header, one row per point (frequency, then theta, then
    phi), fields in scientific notation with `digits` after the point."""
    frequencies, thetas, phis = np.meshgrid(np.asarray(frequencies_mhz, dtype=float), theta_deg, phi_deg,
                                            indexing="ij")
    table = np.column_stack([frequencies.ravel(), thetas.ravel(), phis.ravel(), e_theta.real.ravel(),
                             e_theta.imag.ravel(), e_phi.real.ravel(), e_phi.imag.ravel()])
    buffer = io.StringIO()
    for line in comment.splitlines():
        buffer.write(f"# {line}\n")
    buffer.write(HEADER + "\n")
    number = f"%.{digits}e"
    np.savetxt(buffer, table, fmt=["%g", "%g", "%g", number, number, number, number], delimiter=",")
    return buffer.getvalue()
