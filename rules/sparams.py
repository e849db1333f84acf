"""What a measured S-parameter file says about the antennas on its ports.

Return loss, VSWR, port-to-port isolation, envelope correlation and an upper bound on radiation
efficiency, plus the bookkeeping to judge them only over the frequency ranges that matter and to
say which part of those ranges the measurement does not reach. Ports are numbered from 0.
"""

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from rules.touchstone import Network

# A perfectly matched or perfectly isolated port has infinite return loss or isolation. Reported
# values stop here (|S| = 1e-10): far beyond anything a network analyser resolves, and finite, so
# sorting, averaging and printing never meet inf.
DB_CAP = 200.0
_MAGNITUDE_FLOOR = 10.0 ** (-DB_CAP / 20.0)
# A port that keeps less than this fraction of its input power for radiation (-90 dB) is lossless
# as far as the data can tell: 1 - sum |S_ki|^2 is then rounding noise of the file's digits and the
# correlation formula divides noise by noise.
RADIATED_FRACTION_FLOOR = 1e-9
# Band edges are compared with 1 Hz of slack so that 824 MHz written as 0.824 GHz (which is
# 823.9999999999999 MHz in binary) still counts as the band edge.
EDGE_TOLERANCE_MHZ = 1e-6


def _loss_db(magnitude: np.ndarray) -> np.ndarray:
    return -20.0 * np.log10(np.maximum(magnitude, _MAGNITUDE_FLOOR))


def _magnitudes(values: np.ndarray) -> np.ndarray:
    # |S| of absurd data (1e300 + 1e300j) overflows to inf; that is an answer, not a warning.
    with np.errstate(over="ignore"):
        return np.abs(values)


def _port(network: Network, port: int) -> int:
    if not 0 <= port < network.port_count:
        raise ValueError(
            f"port {port} does not exist: {network.source} has ports 0..{network.port_count - 1}")
    return port


def _port_pair(network: Network, i: int, j: int) -> tuple[int, int]:
    _port(network, i)
    _port(network, j)
    if i == j:
        raise ValueError(f"ports {i} and {j} are the same port; a pair of different ports is needed")
    return i, j


def _reflection_magnitudes(network: Network) -> np.ndarray:
    return _magnitudes(np.diagonal(network.s, axis1=1, axis2=2))


def return_loss_db(network: Network) -> np.ndarray:
    """(F, N): -20 log10 |S_ii|, capped at DB_CAP where |S_ii| is (nearly) zero. A port with
    |S_ii| > 1 (an active or mis-calibrated measurement) gets a negative return loss."""
    return _loss_db(_reflection_magnitudes(network))


def vswr(network: Network) -> np.ndarray:
    """(F, N): (1 + |S_ii|) / (1 - |S_ii|); inf where |S_ii| >= 1 (total or excess reflection)."""
    gamma = _reflection_magnitudes(network)
    result = np.full(gamma.shape, np.inf)
    below_one = gamma < 1.0
    np.divide(1.0 + gamma, 1.0 - gamma, out=result, where=below_one)
    return result


def isolation_db(network: Network, i: int, j: int) -> np.ndarray:
    """(F,): isolation between ports i and j, -20 log10 max(|S_ij|, |S_ji|).

    The larger coupling of the two directions is used so that a non-reciprocal or noisy
    measurement is judged by its worse side. Capped at DB_CAP like return loss.
    """
    i, j = _port_pair(network, i, j)
    coupling = np.maximum(_magnitudes(network.s[:, i, j]), _magnitudes(network.s[:, j, i]))
    return _loss_db(coupling)


def envelope_correlation(network: Network, i: int, j: int) -> np.ndarray:
    """(F,): envelope correlation coefficient of the antennas at ports i and j from S-parameters.

    Blanch, Romeu and Corbella, "Exact representation of antenna system diversity performance from
    input parameter description", Electronics Letters 39(9), 2003, extended to N ports:

        ECC = |sum_k conj(S_ki) S_kj|^2 / ((1 - sum_k |S_ki|^2) (1 - sum_k |S_kj|^2))

    It holds for lossless antennas in a uniform multipath environment; with lossy antennas it is
    an estimate. Where either factor of the denominator is <= RADIATED_FRACTION_FLOOR (about 0) the
    data says a port returns all (or more than all) the power fed into it, which no radiating,
    passive antenna does: the result there is 1.0, fully correlated, the worst case. Results are
    clipped to [0, 1] for the same reason.
    """
    i, j = _port_pair(network, i, j)
    column_i = network.s[:, :, i]
    column_j = network.s[:, :, j]
    result = np.ones(network.s.shape[0])
    # Absurdly large data overflows to inf or nan; both end as 1.0 below, so no warning is wanted.
    with np.errstate(over="ignore", invalid="ignore"):
        overlap = _magnitudes(np.sum(np.conj(column_i) * column_j, axis=1)) ** 2
        remaining_i = 1.0 - np.sum(_magnitudes(column_i) ** 2, axis=1)
        remaining_j = 1.0 - np.sum(_magnitudes(column_j) ** 2, axis=1)
        valid = (remaining_i > RADIATED_FRACTION_FLOOR) & (remaining_j > RADIATED_FRACTION_FLOOR)
        np.divide(overlap, remaining_i * remaining_j, out=result, where=valid)
    # Rounding can push the ratio of a tiny positive denominator past 1: clipped like non-passive data.
    result[np.isnan(result)] = 1.0
    return np.clip(result, 0.0, 1.0)


def efficiency_upper_bound(network: Network, i: int) -> np.ndarray:
    """(F,): 1 - sum_k |S_ki|^2, clipped to [0, 1].

    Of the power fed into port i, |S_ii|^2 comes back and |S_ki|^2 leaves by port k; only the rest
    can be radiated (or lost as heat), so this bounds the total radiation efficiency from above.
    """
    i = _port(network, i)
    with np.errstate(over="ignore"):
        remaining = 1.0 - np.sum(_magnitudes(network.s[:, :, i]) ** 2, axis=1)
    return np.clip(remaining, 0.0, 1.0)


def largest_singular_value(network: Network) -> np.ndarray:
    """(F,): the largest singular value of S at each frequency.

    A passive network can't deliver more power than it is fed, for any combination of incident waves, which
    is the condition that no singular value of S exceeds 1. Testing each column (|S11|^2 + |S21|^2 <= 1) is
    not enough: S11 = S22 = 0.6, S21 = S12 = 0.5 passes it (0.61) and still has a singular value of 1.1
    (0.6 + 0.5). Frequencies with data too large or not finite get inf.
    """
    s = network.s
    result = np.full(s.shape[0], np.inf)
    with np.errstate(over="ignore", invalid="ignore"):
        finite = np.isfinite(s).all(axis=(1, 2)) & (np.abs(s) < 1e150).all(axis=(1, 2))
    if finite.any():
        # The squared singular values are the eigenvalues of the Hermitian S^H S; eigvalsh on that is about
        # twice as fast as an SVD for the small matrices of antenna measurements, and as accurate here.
        chosen = s[finite]
        gram = np.conj(np.swapaxes(chosen, 1, 2)) @ chosen
        result[finite] = np.sqrt(np.maximum(np.linalg.eigvalsh(gram)[:, -1], 0.0))
    return result


@dataclass(frozen=True, eq=False)
class BandWindow:
    covered: bool
    missing_mhz: list[tuple[float, float]]
    mask: np.ndarray


def band_window(network: Network, ranges_mhz: Sequence[tuple[float, float]]) -> BandWindow:
    """The measured points inside any of `ranges_mhz` (edges included), and which parts of those
    ranges lie outside the measured span.

    `covered` is True when the measurement spans every range end to end. `missing_mhz` lists the
    uncovered parts, sorted and merged. A range inside the span but between two measured points
    is covered yet has no points in the mask: callers judge `mask` before trusting a worst case.
    """
    frequencies_mhz = network.frequencies_mhz
    mask = np.zeros(frequencies_mhz.shape, dtype=bool)
    missing: list[tuple[float, float]] = []
    if frequencies_mhz.size:
        lowest_mhz, highest_mhz = float(frequencies_mhz[0]), float(frequencies_mhz[-1])
    else:
        lowest_mhz, highest_mhz = np.inf, -np.inf
    for low_mhz, high_mhz in ranges_mhz:
        low_mhz, high_mhz = float(low_mhz), float(high_mhz)
        if not (np.isfinite(low_mhz) and np.isfinite(high_mhz)) or low_mhz > high_mhz:
            raise ValueError(f"a frequency range needs finite low <= high, got ({low_mhz}, {high_mhz}) MHz")
        inside = frequencies_mhz >= low_mhz - EDGE_TOLERANCE_MHZ
        inside &= frequencies_mhz <= high_mhz + EDGE_TOLERANCE_MHZ
        mask |= inside
        if high_mhz < lowest_mhz - EDGE_TOLERANCE_MHZ or low_mhz > highest_mhz + EDGE_TOLERANCE_MHZ:
            missing.append((low_mhz, high_mhz))
            continue
        if low_mhz < lowest_mhz - EDGE_TOLERANCE_MHZ:
            missing.append((low_mhz, lowest_mhz))
        if high_mhz > highest_mhz + EDGE_TOLERANCE_MHZ:
            missing.append((highest_mhz, high_mhz))
    return BandWindow(covered=not missing, missing_mhz=_merged(missing), mask=mask)


def _merged(intervals: list[tuple[float, float]]) -> list[tuple[float, float]]:
    merged: list[tuple[float, float]] = []
    for low, high in sorted(intervals):
        if merged and low <= merged[-1][1]:
            merged[-1] = (merged[-1][0], max(merged[-1][1], high))
        else:
            merged.append((low, high))
    return merged


@dataclass(frozen=True)
class WorstCase:
    value: float
    frequency_mhz: float
    points: int


def _worst(values: np.ndarray, frequencies_mhz: np.ndarray, mask: np.ndarray, *,
           largest: bool) -> WorstCase | None:
    values = np.asarray(values, dtype=np.float64)
    frequencies_mhz = np.asarray(frequencies_mhz, dtype=np.float64)
    mask = np.asarray(mask, dtype=bool)
    if not (values.ndim == 1 and values.shape == frequencies_mhz.shape == mask.shape):
        raise ValueError(
            f"values, frequencies and mask must be 1-D and of one length, got shapes "
            f"{values.shape}, {frequencies_mhz.shape} and {mask.shape}")
    # NaN carries no verdict; it is skipped rather than allowed to win or lose the comparison.
    usable = mask & ~np.isnan(values)
    if not usable.any():
        return None
    indices = np.flatnonzero(usable)
    chosen = values[indices]
    # argmax/argmin return the first of equal values: the lowest frequency.
    pick = int(np.argmax(chosen) if largest else np.argmin(chosen))
    index = int(indices[pick])
    return WorstCase(value=float(values[index]), frequency_mhz=float(frequencies_mhz[index]),
                     points=int(mask.sum()))


def worst_minimum(values: np.ndarray, frequencies_mhz: np.ndarray, mask: np.ndarray) -> WorstCase | None:
    """The smallest value inside `mask` (worst return loss, isolation or efficiency bound);
    None if the mask is empty."""
    return _worst(values, frequencies_mhz, mask, largest=False)


def worst_maximum(values: np.ndarray, frequencies_mhz: np.ndarray, mask: np.ndarray) -> WorstCase | None:
    """The largest value inside `mask` (worst VSWR or envelope correlation); None if the mask is empty."""
    return _worst(values, frequencies_mhz, mask, largest=True)
