"""Writes a large, realistic 4-port Touchstone v1.1 file for timing Touchstone readers.

The network is four small antennas on one board: each port is a series RLC resonance seen through
50 ohm, and each pair couples through a path whose loss grows with frequency and whose phase turns
with the electrical distance between the feeds. The result is reciprocal and passive, so a reader
that gets the numbers right also gets physically sensible return loss, isolation and correlation.
"""

import os

import numpy as np

REFERENCE_OHM = 50.0
# Resonances in MHz, chosen across cellular bands (low band, mid band, two high-band feeds).
_RESONANCES_MHZ = (850.0, 1900.0, 2600.0, 3500.0)
# Loaded Q of each resonator: a handset antenna is small, so its Q is modest (common practice: 5..30).
_QUALITY_FACTORS = (8.0, 12.0, 15.0, 18.0)
# Feed-to-feed path lengths in mm for ports (1,2) (1,3) (1,4) (2,3) (2,4) (3,4).
_FEED_DISTANCES_MM = (40.0, 90.0, 120.0, 60.0, 85.0, 30.0)
_SPEED_OF_LIGHT_MM_PER_S = 299_792_458_000.0


def _four_port_s(frequencies_mhz: np.ndarray) -> np.ndarray:
    frequencies_hz = frequencies_mhz * 1e6
    ports = len(_RESONANCES_MHZ)
    s = np.zeros((frequencies_mhz.size, ports, ports), dtype=np.complex128)
    for port, (resonance_mhz, quality) in enumerate(zip(_RESONANCES_MHZ, _QUALITY_FACTORS, strict=True)):
        # Series RLC with R = 40 ohm so the match is good but not perfect at resonance.
        resistance_ohm = 40.0
        ratio = frequencies_mhz / resonance_mhz
        reactance_ohm = quality * resistance_ohm * (ratio - 1.0 / ratio)
        impedance_ohm = resistance_ohm + 1j * reactance_ohm
        s[:, port, port] = (impedance_ohm - REFERENCE_OHM) / (impedance_ohm + REFERENCE_OHM)
    pairs = [(i, j) for i in range(ports) for j in range(i + 1, ports)]
    for (i, j), distance_mm in zip(pairs, _FEED_DISTANCES_MM, strict=True):
        # Coupling falls off with distance and a little with frequency; a feed only couples the power
        # it accepts, so scale by the transmission factors of both ports to keep the network passive.
        magnitude = 0.25 * (30.0 / distance_mm) * (1.0 / (1.0 + frequencies_mhz / 10_000.0))
        accepted = np.sqrt((1.0 - np.abs(s[:, i, i]) ** 2) * (1.0 - np.abs(s[:, j, j]) ** 2))
        phase_rad = -2.0 * np.pi * frequencies_hz * distance_mm / _SPEED_OF_LIGHT_MM_PER_S
        coupling = magnitude * accepted * np.exp(1j * phase_rad)
        s[:, i, j] = coupling
        s[:, j, i] = coupling
    return s


def write_four_port_file(
    path: str | os.PathLike[str],
    points: int = 20001,
    *,
    data_format: str = "RI",
    start_mhz: float = 600.0,
    stop_mhz: float = 6000.0,
) -> None:
    """Write `points` frequencies as a v1.1 .s4p in MHz, `data_format` "RI" or "MA".

    Each frequency takes four lines, one matrix row per line (four pairs, the most the
    specification allows on a line), with the frequency only on the first.
    """
    if data_format not in ("RI", "MA"):
        raise ValueError(f"data_format must be 'RI' or 'MA', not {data_format!r}")
    if points < 1:
        raise ValueError("points must be at least 1")
    frequencies_mhz = np.linspace(start_mhz, stop_mhz, points)
    s = _four_port_s(frequencies_mhz)
    if data_format == "RI":
        first, second = s.real, s.imag
    else:
        first, second = np.abs(s), np.degrees(np.angle(s))
    # (F, 4 rows, 8 numbers): pairs interleaved row by row, S11 S12 S13 S14 on the first row.
    pairs = np.stack([first, second], axis=-1).reshape(points, 4, 8)
    row_format = " ".join(["{:.9e}"] * 8)
    lines = [
        "! Four-port antenna model written for timing Touchstone readers",
        f"# MHz S {data_format} R {REFERENCE_OHM:g}",
        "! Each frequency: four rows of the S matrix, four pairs per line",
    ]
    for index in range(points):
        rows = pairs[index]
        lines.append(f"{frequencies_mhz[index]:.6f} " + row_format.format(*rows[0]))
        for row in rows[1:]:
            lines.append("  " + row_format.format(*row))
    with open(path, "w", encoding="ascii", newline="\n") as handle:
        handle.write("\n".join(lines))
        handle.write("\n")
