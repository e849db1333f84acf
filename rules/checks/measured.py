"""What measured S-parameters say, band by band: match, isolation, envelope correlation, and the
radiation-efficiency bound the measurement implies."""

from collections.abc import Iterator
from itertools import combinations

import numpy as np

from rules import sparams
from rules.catalog import Band
from rules.context import CheckContext, merge_ranges, ranges_to_serve
from rules.findings import Flag
from rules.measurements import LoadedMeasurement
from rules.registry import rule

BLANCH = "Blanch, Romeu, Corbella, Electronics Letters 39(9), 2003"
LOSSLESS_CAVEAT = (
    "ECC from S-parameters assumes lossless antennas in uniform multipath; real losses make the true "
    "correlation lower than this estimate suggests is achievable, so confirm with radiated patterns."
)


def _port_label(port_index: int) -> int:
    return port_index + 1


@rule(
    id="MAT-001", topic="matching", severities=("blocker", "warning"),
    title="Measured return loss below 6 dB in a band",
    rationale=(
        "Return loss below 6 dB (VSWR above 3:1) reflects more than a quarter of the power; below 3.5 dB "
        "it is nearly half. The worst point over the frequencies the antenna must serve is what counts."
    ),
    sources=("common practice (VSWR 3:1 for embedded antennas)", "VSWR = (1 + |S_ii|) / (1 - |S_ii|)"),
)
def poor_match(context: CheckContext) -> Iterator[Flag]:
    for measurement in context.measurements:
        network = measurement.network
        return_loss = measurement.return_loss_db
        vswr = measurement.vswr
        for port_index, name in enumerate(measurement.ports):
            if name is None:
                continue
            antenna = context.design.antenna(name)
            for band in context.design.modem.bands:
                window = sparams.band_window(network, ranges_to_serve(antenna, band))
                worst = sparams.worst_minimum(return_loss[:, port_index], network.frequencies_mhz, window.mask)
                if worst is None or worst.value >= 6.0:
                    continue
                worst_vswr = float(vswr[int(np.searchsorted(network.frequencies_mhz, worst.frequency_mhz)), port_index])
                severity = "blocker" if worst.value < 3.5 else "warning"
                yield Flag(
                    severity=severity,
                    title=f"{name} (port {_port_label(port_index)}) return loss {worst.value:.1f} dB in {band.name}",
                    explanation=(
                        f"In {measurement.file}, port {_port_label(port_index)} ({name}) has its worst return loss "
                        f"in {band.name} at {worst.frequency_mhz:g} MHz: {worst.value:.1f} dB, VSWR {worst_vswr:.2f}:1 "
                        f"(over {worst.points} measured points)."
                    ),
                    action="Retune the matching network for this band, or revisit the antenna's clearance and ground.",
                    subjects=(name, band.name),
                    evidence={"band": band.name, "port": _port_label(port_index), "return_loss_db": worst.value,
                              "vswr": worst_vswr, "frequency_mhz": worst.frequency_mhz,
                              "file": measurement.file},
                )


@rule(
    id="MAT-002", topic="matching", severities=("note",),
    title="A measurement does not cover a band",
    rationale="A band the measurement does not span is unmeasured: nothing can be said about it from the file.",
    sources=("common practice",),
)
def measurement_misses_band(context: CheckContext) -> Iterator[Flag]:
    for measurement in context.measurements:
        network = measurement.network
        for port_index, name in enumerate(measurement.ports):
            if name is None:
                continue
            antenna = context.design.antenna(name)
            for band in context.design.modem.bands:
                window = sparams.band_window(network, ranges_to_serve(antenna, band))
                if window.covered:
                    continue
                shown = ", ".join(f"{low:g}–{high:g} MHz" for low, high in window.missing_mhz)
                measured = f"{network.frequencies_mhz[0]:g}–{network.frequencies_mhz[-1]:g} MHz"
                yield Flag(
                    severity="note",
                    title=f"{measurement.file} does not cover {band.name} for {name}",
                    explanation=(
                        f"{measurement.file} spans {measured}; {shown} of {band.name} that {name} must serve "
                        "is outside it, so match, isolation and correlation there are unmeasured."
                    ),
                    action=f"Measure again across all of {band.name}.",
                    subjects=(name, band.name),
                    evidence={"band": band.name, "port": _port_label(port_index), "return_loss_db": None,
                              "vswr": None, "missing_mhz": [list(pair) for pair in window.missing_mhz],
                              "file": measurement.file},
                )


PairWindow = tuple[LoadedMeasurement, tuple[int, str], tuple[int, str], Band, sparams.BandWindow]


def _pairs(context: CheckContext) -> Iterator[PairWindow]:
    """Each measured antenna pair with the band ranges either of them serves."""
    for measurement in context.measurements:
        mapped = [(index, name) for index, name in enumerate(measurement.ports) if name is not None]
        for (first_index, first), (second_index, second) in combinations(mapped, 2):
            for band in context.design.modem.bands:
                needed = merge_ranges(ranges_to_serve(context.design.antenna(first), band)
                                      + ranges_to_serve(context.design.antenna(second), band))
                window = sparams.band_window(measurement.network, needed)
                yield measurement, (first_index, first), (second_index, second), band, window


@rule(
    id="ISO-001", topic="isolation", severities=("blocker", "warning"),
    title="Measured isolation below 10 dB in a band",
    rationale=(
        "Below 10 dB isolation much of one antenna's power couples into the other: transmit power is lost "
        "and receive paths share noise. Below 6 dB the antennas behave almost as one."
    ),
    sources=("common practice (10 dB isolation)",),
)
def poor_isolation(context: CheckContext) -> Iterator[Flag]:
    for measurement, (i, first), (j, second), band, window in _pairs(context):
        isolation = measurement.isolation_db(i, j)
        worst = sparams.worst_minimum(isolation, measurement.network.frequencies_mhz, window.mask)
        if worst is None or worst.value >= 10.0:
            continue
        ports = [_port_label(i), _port_label(j)]
        yield Flag(
            severity="blocker" if worst.value < 6.0 else "warning",
            title=f"{first}–{second} isolation {worst.value:.1f} dB in {band.name}",
            explanation=(
                f"In {measurement.file}, ports {ports[0]} and {ports[1]} ({first}, {second}) are isolated by only "
                f"{worst.value:.1f} dB at {worst.frequency_mhz:g} MHz in {band.name}."
            ),
            action="Increase spacing, cross the polarizations, or add a decoupling structure; then measure again.",
            subjects=(first, second, band.name),
            evidence={"band": band.name, "ports": ports, "isolation_db": worst.value,
                      "frequency_mhz": worst.frequency_mhz, "file": measurement.file},
        )


@rule(
    id="ECC-001", topic="correlation", severities=("blocker", "warning"),
    title="Envelope correlation above 0.5 in a band",
    rationale=(
        "Diversity and MIMO need the two receive signals to fade independently; above 0.5 envelope "
        "correlation most of the diversity gain is gone, above 0.7 nearly all. " + LOSSLESS_CAVEAT
    ),
    sources=(BLANCH, "common practice (ECC below 0.5 for LTE MIMO)"),
)
def high_correlation(context: CheckContext) -> Iterator[Flag]:
    for measurement, (i, first), (j, second), band, window in _pairs(context):
        ecc = measurement.envelope_correlation(i, j)
        worst = sparams.worst_maximum(ecc, measurement.network.frequencies_mhz, window.mask)
        if worst is None or worst.value <= 0.5:
            continue
        ports = [_port_label(i), _port_label(j)]
        yield Flag(
            severity="blocker" if worst.value > 0.7 else "warning",
            title=f"{first}–{second} envelope correlation {worst.value:.2f} in {band.name}",
            explanation=(
                f"From the S-parameters in {measurement.file}, ports {ports[0]} and {ports[1]} ({first}, {second}) "
                f"have an envelope correlation coefficient of {worst.value:.2f} at {worst.frequency_mhz:g} MHz in "
                f"{band.name}. {LOSSLESS_CAVEAT}"
            ),
            action="Separate the antennas further or make their patterns or polarizations differ; measure again.",
            subjects=(first, second, band.name),
            evidence={"band": band.name, "ports": ports, "ecc": worst.value,
                      "frequency_mhz": worst.frequency_mhz, "assumes_lossless": True, "file": measurement.file},
        )


@rule(
    id="EFF-002", topic="efficiency", severities=("warning",),
    title="Measured radiation-efficiency bound below 25 % in a band",
    rationale=(
        "Power that is reflected back or coupled into other ports is not radiated, so "
        "1 - sum |S_ki|^2 bounds the radiation efficiency from above. If even the bound is below 25 %, the "
        "antenna can't be efficient whatever its losses."
    ),
    sources=("power conservation over the S-matrix (common practice)", "common practice (25 % efficiency)"),
)
def low_measured_efficiency_bound(context: CheckContext) -> Iterator[Flag]:
    for measurement in context.measurements:
        network = measurement.network
        for port_index, name in enumerate(measurement.ports):
            if name is None:
                continue
            bound = measurement.efficiency_bound_pct[:, port_index]
            antenna = context.design.antenna(name)
            for band in context.design.modem.bands:
                window = sparams.band_window(network, ranges_to_serve(antenna, band))
                worst = sparams.worst_minimum(bound, network.frequencies_mhz, window.mask)
                if worst is None or worst.value >= 25.0:
                    continue
                yield Flag(
                    severity="warning",
                    title=f"{name} radiates at most {worst.value:.0f} % in {band.name} (measured bound)",
                    explanation=(
                        f"In {measurement.file}, port {_port_label(port_index)} ({name}) reflects or couples away so "
                        f"much at {worst.frequency_mhz:g} MHz that at most {worst.value:.1f} % of the power can be "
                        "radiated, before any losses in the antenna itself."
                    ),
                    action="Improve the match and isolation in this band, then measure efficiency in a chamber.",
                    subjects=(name, band.name),
                    evidence={"band": band.name, "efficiency_pct": worst.value, "basis": "measured upper bound",
                              "frequency_mhz": worst.frequency_mhz, "port": _port_label(port_index),
                              "file": measurement.file},
                )
