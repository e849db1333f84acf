"""What the measurements of a design say about one antenna pair in one band, and how far each can be trusted.

Rule set 2 (design.md): envelope correlation is judged over a band's downlink (the band itself for TDD),
where both antennas receive. ECC from far-field patterns is trustworthy. ECC from S-parameters assumes
lossless antennas and reads low when they are lossy (Hallbjörner, IEEE Antennas Wireless Propag. Lett. 4,
2005, from memory), so it is trusted only when both antennas' entered efficiency in the band is at least
50 %; otherwise it is judged when high but never clears anything. S-parameter data that is not passive
in the band's scope can't be trusted at all there.
"""

from collections.abc import Iterator
from dataclasses import dataclass

from rules import sparams
from rules.catalog import Band
from rules.context import CheckContext, merge_ranges, ranges_to_serve
from rules.measurements import LoadedMeasurement

TRUSTED_EFFICIENCY_PCT = 50.0
HALLBJORNER = "Hallbjörner, IEEE Antennas Wireless Propag. Lett. 4, 2005 (from memory)"
VAUGHAN_ANDERSEN = "Vaughan & Andersen, IEEE Trans. Veh. Technol. 36(4), 1987"
BLANCH = "Blanch, Romeu, Corbella, Electronics Letters 39(9), 2003"
TAGA = "Taga, IEEE Trans. Veh. Technol. 39(2), 1990"


@dataclass(frozen=True)
class MeasuredCorrelation:
    """The worst ECC one measurement shows for a pair over a band's downlink."""

    method: str  # "s-parameters" or "far-field"
    files: tuple[str, ...]
    ecc: float | None  # None when the measurement has no usable point in the downlink
    frequency_mhz: float | None
    covered: bool  # spans the whole downlink (S-parameters) or has a frequency in it (far-field)
    passive: bool  # S-parameters: no point in the band's scope above the passivity limit
    trustworthy: bool
    reason: str  # why it is or is not trusted, in words for a finding
    ports: tuple[int, int] | None = None  # 1-based, S-parameters only

    @property
    def usable(self) -> bool:
        return self.ecc is not None and self.covered

    @property
    def can_clear(self) -> bool:
        return self.usable and self.trustworthy and self.passive


def downlink_ranges(band: Band) -> list[tuple[float, float]]:
    return [band.dl_mhz]


def band_scope(band: Band) -> list[tuple[float, float]]:
    """Every frequency of a band, uplink and downlink: what a measurement must be passive over."""
    return merge_ranges(list(band.ranges_mhz))


def efficiency_trust(context: CheckContext, first: str, second: str, band: Band) -> tuple[bool, str]:
    """Whether S-parameter ECC of the pair can be trusted in a band, and why (in words)."""
    efficiencies = [(name, context.design.antenna(name).efficiency_pct.get(band.name)) for name in (first, second)]
    missing = [name for name, value in efficiencies if value is None]
    low = [f"{name} ({value:g} %)" for name, value in efficiencies
           if value is not None and value < TRUSTED_EFFICIENCY_PCT]
    if not missing and not low:
        shown = " and ".join(f"{name} {value:g} %" for name, value in efficiencies)
        return True, (f"both antennas are at least {TRUSTED_EFFICIENCY_PCT:g} % efficient in {band.name} ({shown}), "
                      "so the lossless assumption of S-parameter ECC is close enough")
    parts = []
    if missing:
        parts.append(f"no efficiency is entered for {' and '.join(missing)} in {band.name}")
    if low:
        verb = "is" if len(low) == 1 else "are"
        parts.append(f"in {band.name} {' and '.join(low)} {verb} less than {TRUSTED_EFFICIENCY_PCT:g} % efficient")
    return False, ("; ".join(parts) + ". S-parameter ECC assumes lossless antennas and reads low (optimistic) "
                   "when they are lossy, so only a far-field measurement can show the correlation is low")


def sparameter_correlation(context: CheckContext, measurement: LoadedMeasurement, i: int, j: int,
                            first: str, second: str, band: Band) -> MeasuredCorrelation:
    network = measurement.network
    window = sparams.band_window(network, downlink_ranges(band))
    worst = sparams.worst_maximum(measurement.envelope_correlation(i, j), network.frequencies_mhz, window.mask)
    scope = sparams.band_window(network, band_scope(band)).mask
    passive = bool(measurement.passive[scope].all())
    trusted, reason = efficiency_trust(context, first, second, band)
    if not passive:
        reason = f"{measurement.file} is not passive in {band.name}, so its correlation is not used there"
    return MeasuredCorrelation(
        method="s-parameters", files=(measurement.file,), ecc=None if worst is None else worst.value,
        frequency_mhz=None if worst is None else worst.frequency_mhz, covered=window.covered and worst is not None,
        passive=passive, trustworthy=trusted, reason=reason, ports=(i + 1, j + 1),
    )


def pair_correlations(context: CheckContext, first: str, second: str, band: Band) -> list[MeasuredCorrelation]:
    """Every measurement of the pair, with its worst ECC over the band's downlink: S-parameter files that
    have both antennas on a port, and the far-field patterns of both (last). Computed once per evaluation."""
    key = ("pair_correlations", first, second, band.name)
    if key not in context.memo:
        found = []
        for measurement in context.measurements:
            i, j = measurement.port_of(first), measurement.port_of(second)
            if i is not None and j is not None:
                found.append(sparameter_correlation(context, measurement, i, j, first, second, band))
        pattern = pattern_correlation(context, first, second, band)
        if pattern is not None:
            found.append(pattern)
        context.memo[key] = found
    return list(context.memo[key])


def pattern_correlation(context: CheckContext, first: str, second: str, band: Band) -> MeasuredCorrelation | None:
    """The far-field ECC of the pair over the band's downlink, or None when either antenna has no pattern."""
    first_pattern, second_pattern = context.pattern_of(first), context.pattern_of(second)
    ecc = context.pattern_correlations.get((first, second))
    if first_pattern is None or second_pattern is None or ecc is None:
        return None
    frequencies = first_pattern.frequencies_mhz
    low, high = band.dl_mhz
    inside = (frequencies >= low - sparams.EDGE_TOLERANCE_MHZ) & (frequencies <= high + sparams.EDGE_TOLERANCE_MHZ)
    worst = sparams.worst_maximum(ecc, frequencies, inside)
    return MeasuredCorrelation(
        method="far-field", files=(first_pattern.file, second_pattern.file),
        ecc=None if worst is None else worst.value, frequency_mhz=None if worst is None else worst.frequency_mhz,
        covered=worst is not None, passive=True, trustworthy=True,
        reason="patterns give the correlation without assuming lossless antennas",
    )


@dataclass(frozen=True)
class MeasuredIsolation:
    file: str
    isolation_db: float | None
    frequency_mhz: float | None
    covered: bool
    passive: bool


def pair_isolations(context: CheckContext, first: str, second: str, band: Band) -> Iterator[MeasuredIsolation]:
    """Worst isolation of the pair in every S-parameter file that has both, over what either antenna serves in
    the band (as ISO-001 judges it), with whether the file spans that and is passive there."""
    needed = merge_ranges(ranges_to_serve(context.design.antenna(first), band)
                          + ranges_to_serve(context.design.antenna(second), band))
    for measurement in context.measurements:
        i, j = measurement.port_of(first), measurement.port_of(second)
        if i is None or j is None:
            continue
        network = measurement.network
        window = sparams.band_window(network, needed)
        worst = sparams.worst_minimum(measurement.isolation_db(i, j), network.frequencies_mhz, window.mask)
        scope = sparams.band_window(network, band_scope(band)).mask
        yield MeasuredIsolation(measurement.file, None if worst is None else worst.value,
                                None if worst is None else worst.frequency_mhz, window.covered and worst is not None,
                                bool(measurement.passive[scope].all()))
