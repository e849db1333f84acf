"""What measured S-parameters say, band by band: whether the data is passive, match, isolation, envelope
correlation, and the radiation-efficiency bound the measurement implies."""

from collections.abc import Iterator
from itertools import combinations

import numpy as np

from rules import sparams
from rules.catalog import Band
from rules.context import CheckContext, merge_ranges, ranges_to_serve
from rules.correlation import (
    BLANCH,
    HALLBJORNER,
    MeasuredCorrelation,
    band_scope,
    pair_correlations,
    sparameter_correlation,
)
from rules.coverage import second_antenna_gain
from rules.findings import Flag
from rules.measurements import PASSIVITY_LIMIT, LoadedMeasurement
from rules.registry import rule

# The engine's diversity model (rules/coverage.py): maximal-ratio combining of two Rayleigh-fading branches,
# exact outage with correlated branches, quoted at 1 % outage (common practice).
DIVERSITY_OUTAGE = 0.01
ECC_WARNING = 0.5
ECC_BLOCKER = 0.7
MRC_MODEL = "maximal-ratio combining of two Rayleigh-fading branches at 1 % outage, as in the coverage budget"


def diversity_share(ecc: float) -> float:
    """The share of the diversity gain of two uncorrelated, equally efficient antennas left at this ECC."""
    uncorrelated = second_antenna_gain(DIVERSITY_OUTAGE, 0.0, 1.0).diversity_gain_db
    return second_antenna_gain(DIVERSITY_OUTAGE, min(max(ecc, 0.0), 1.0), 1.0).diversity_gain_db / uncorrelated


def correlation_impact(severity: str, ecc: float, band: str, *, likely_worse: bool = False) -> str:
    """What a high envelope correlation means for the product, in a product manager's words."""
    share = f"{100 * diversity_share(ecc):.0f} %"
    worse = " The real figure is likely worse than this measurement shows." if likely_worse else ""
    if severity == "blocker":
        return (f"In {band} the two antennas receive nearly the same signal (correlation {ecc:.2f}): the second antenna "
                f"keeps only about {share} of its benefit, so the product loses range and speed where the signal is "
                f"weak, and operators may refuse it in their over-the-air tests.{worse}")
    return (f"In {band} the two antennas receive partly the same signal (correlation {ecc:.2f}): the second antenna "
            f"keeps about {share} of its benefit, so expect somewhat shorter range and lower speeds where the signal "
            f"is weak.{worse}")


def diversity_sentence(ecc: float) -> str:
    uncorrelated = second_antenna_gain(DIVERSITY_OUTAGE, 0.0, 1.0).diversity_gain_db
    left = second_antenna_gain(DIVERSITY_OUTAGE, min(max(ecc, 0.0), 1.0), 1.0).diversity_gain_db
    return (f"In the engine's diversity model ({MRC_MODEL}) ECC {ecc:.2f} leaves {left:.1f} dB of the "
            f"{uncorrelated:.1f} dB diversity gain of uncorrelated antennas ({100 * left / uncorrelated:.0f} %).")


LOSSY_CAVEAT = (
    "S-parameter ECC assumes lossless antennas in uniform multipath; losses in the antennas make it read low "
    "(optimistic), so the true correlation of lossy antennas is higher than this estimate."
)


def _port_label(port_index: int) -> int:
    return port_index + 1


def _cellular_ports(context: CheckContext, measurement: LoadedMeasurement) -> list[tuple[int, str]]:
    return [(index, name) for index, name in enumerate(measurement.ports)
            if name is not None and context.design.antenna(name).is_cellular]


@rule(
    id="MEA-001", added_in="2.0.0", topic="measurement", severities=("warning",),
    title="A measurement is not passive in a band",
    rationale=(
        "A passive network can't return more power than it is fed, for any combination of incident waves: no "
        f"singular value of its S-matrix exceeds 1. Above {PASSIVITY_LIMIT:g} (measurement noise allowed for) the "
        "fault is in the calibration or de-embedding, not in the antennas, so no correlation or efficiency "
        "figure is drawn from those frequencies. Testing each column (|S11|^2 + |S21|^2 <= 1) is not enough."
    ),
    product_impact="A faulty measurement file says nothing reliable about the product until the test is redone.",
    sources=("power conservation: a passive network's S-matrix has no singular value above 1",
             "common practice (1 % tolerance for measurement noise)"),
    needs=("measurements", "modem.bands"),
)
def not_passive(context: CheckContext) -> Iterator[Flag]:
    for measurement in context.measurements:
        network = measurement.network
        sigma = measurement.largest_singular_value
        in_scope = np.zeros(sigma.shape, dtype=bool)
        affected = []
        for band in context.design.modem.bands:
            mask = sparams.band_window(network, band_scope(band)).mask
            bad = mask & ~measurement.passive
            if bad.any():
                affected.append(band.name)
                in_scope |= bad
        if not affected:
            continue
        indices = np.flatnonzero(in_scope)
        worst = int(indices[np.argmax(sigma[indices])])
        worst_mhz = float(network.frequencies_mhz[worst])
        value = float(sigma[worst])
        shown = f"{value:.3f}" if np.isfinite(value) else "not finite"
        yield Flag(
            severity="warning",
            title=f"{measurement.file} is not passive in {', '.join(affected)}",
            explanation=(
                f"At {indices.size} measured point(s) in {', '.join(affected)}, {measurement.file} returns more power "
                f"than it is fed: the largest singular value of its S-matrix reaches {shown} at {worst_mhz:g} MHz, "
                f"where a passive network has none above 1 (tolerance {PASSIVITY_LIMIT:g}). The fault is in the "
                "measurement (calibration, de-embedding or port extension), not in the antennas. Envelope "
                "correlation and the efficiency bound are not drawn from those frequencies; return loss and "
                "isolation there are shown as measured."
            ),
            action="Check the calibration and de-embedding, measure again, and replace the file.",
            product_impact=(f"The measurement {measurement.file} is faulty in {', '.join(affected)} (it reports more power "
                            "coming back than was sent), so it can't show how well the antennas work together there. "
                            "The product may well be fine: the test needs redoing before its results count."),
            subjects=(measurement.file,),
            evidence={"file": measurement.file, "problem": "not-passive", "frequency_mhz": worst_mhz,
                      "largest_singular_value": value if np.isfinite(value) else None,
                      "limit": PASSIVITY_LIMIT, "bands": affected, "points": int(indices.size)},
            basis="measured",
        )


@rule(
    id="MAT-001", changed_in="2.0.0", topic="matching", severities=("blocker", "warning"),
    title="Measured return loss below 6 dB in a band",
    rationale=(
        "Return loss below 6 dB (VSWR above 3:1) reflects more than a quarter of the power; below 3.5 dB "
        "it is nearly half (45 %). The worst point over the frequencies the antenna must serve is what counts."
    ),
    product_impact="An antenna that sends much of its power back to the modem gives the product shorter range in that band.",
    sources=("common practice (VSWR 3:1 for embedded antennas)", "VSWR = (1 + |S_ii|) / (1 - |S_ii|)"),
    needs=("measurements", "modem.bands", "antennas", "antennas[].ranges_mhz", "antennas[].efficiency_pct"),
)
def poor_match(context: CheckContext) -> Iterator[Flag]:
    for measurement in context.measurements:
        network = measurement.network
        return_loss = measurement.return_loss_db
        vswr = measurement.vswr
        for port_index, name in _cellular_ports(context, measurement):
            antenna = context.design.antenna(name)
            for band in context.design.modem.bands:
                window = sparams.band_window(network, ranges_to_serve(antenna, band))
                worst = sparams.worst_minimum(return_loss[:, port_index], network.frequencies_mhz, window.mask)
                if worst is None or worst.value >= 6.0:
                    continue
                worst_vswr = float(vswr[int(np.searchsorted(network.frequencies_mhz, worst.frequency_mhz)), port_index])
                severity = "blocker" if worst.value < 3.5 else "warning"
                reflected_pct = 100.0 * 10.0 ** (-worst.value / 10.0)
                yield Flag(
                    severity=severity,
                    title=f"{name} (port {_port_label(port_index)}) return loss {worst.value:.1f} dB in {band.name}",
                    explanation=(
                        f"In {measurement.file}, port {_port_label(port_index)} ({name}) has its worst return loss "
                        f"in {band.name} at {worst.frequency_mhz:g} MHz: {worst.value:.1f} dB, VSWR {worst_vswr:.2f}:1 "
                        f"(over {worst.points} measured points): {reflected_pct:.0f} % of the power fed to it comes "
                        "back."
                    ),
                    action="Retune the matching network for this band, or revisit the antenna's clearance and ground.",
                    product_impact=(
                        (f"{name} sends about {reflected_pct:.0f} % of its power straight back in {band.name}: the "
                         "product will have noticeably shorter range in that band and may fail the operators' "
                         "over-the-air tests. The antenna's tuning needs rework before the design is frozen.")
                        if severity == "blocker" else
                        (f"{name} sends about {reflected_pct:.0f} % of its power back in {band.name}: some range is "
                         "lost in that band. Retuning the antenna's matching parts usually fixes it without a "
                         "mechanical change.")
                    ),
                    subjects=(name, band.name),
                    evidence={"band": band.name, "port": _port_label(port_index), "return_loss_db": worst.value,
                              "vswr": worst_vswr, "frequency_mhz": worst.frequency_mhz,
                              "file": measurement.file},
                    basis="measured",
                )


@rule(
    id="MAT-002", changed_in="2.0.0", topic="matching", severities=("note",),
    title="A measurement does not cover a band",
    rationale="A band the measurement does not span is unmeasured: nothing can be said about it from the file.",
    product_impact="A band the measurement does not reach is unverified: the product's behaviour there is unknown.",
    sources=("common practice",),
    needs=("measurements", "modem.bands", "antennas", "antennas[].ranges_mhz", "antennas[].efficiency_pct"),
)
def measurement_misses_band(context: CheckContext) -> Iterator[Flag]:
    for measurement in context.measurements:
        network = measurement.network
        for port_index, name in _cellular_ports(context, measurement):
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
                    product_impact=(f"The measurement says nothing about part of {band.name} for {name}: the product "
                                    "is unverified there until it is measured again across the whole band."),
                    subjects=(name, band.name),
                    evidence={"band": band.name, "port": _port_label(port_index), "return_loss_db": None,
                              "vswr": None, "missing_mhz": [list(pair) for pair in window.missing_mhz],
                              "file": measurement.file},
                    basis="measured",
                )


PairWindow = tuple[LoadedMeasurement, tuple[int, str], tuple[int, str], Band, sparams.BandWindow]


def _pairs(context: CheckContext) -> Iterator[PairWindow]:
    """Each measured pair of cellular antennas with the band ranges either of them serves."""
    for measurement in context.measurements:
        for (first_index, first), (second_index, second) in combinations(_cellular_ports(context, measurement), 2):
            for band in context.design.modem.bands:
                needed = merge_ranges(ranges_to_serve(context.design.antenna(first), band)
                                      + ranges_to_serve(context.design.antenna(second), band))
                window = sparams.band_window(measurement.network, needed)
                yield measurement, (first_index, first), (second_index, second), band, window


@rule(
    id="ISO-001", changed_in="2.0.0", topic="isolation", severities=("blocker", "warning"),
    title="Measured isolation below 10 dB in a band",
    rationale=(
        "Isolation is how much of the power fed to one antenna arrives at the other's port: below 10 dB more "
        "than a tenth of it, below 6 dB more than a quarter. That power is lost for radiation (a transmitting "
        "main antenna loses it into the receive port) and is a sign of strong coupling, which also raises the "
        "envelope correlation. Judged over every frequency either antenna serves in the band."
    ),
    product_impact=("Antennas that leak power into each other waste it: shorter range, and the second antenna helps "
                    "less."),
    sources=("common practice (10 dB isolation)", "coupled power = 10^(-isolation / 10)"),
    needs=("measurements", "modem.bands", "antennas", "antennas[].ranges_mhz", "antennas[].efficiency_pct"),
)
def poor_isolation(context: CheckContext) -> Iterator[Flag]:
    for measurement, (i, first), (j, second), band, window in _pairs(context):
        isolation = measurement.isolation_db(i, j)
        worst = sparams.worst_minimum(isolation, measurement.network.frequencies_mhz, window.mask)
        if worst is None or worst.value >= 10.0:
            continue
        ports = [_port_label(i), _port_label(j)]
        coupled_pct = 100.0 * 10.0 ** (-worst.value / 10.0)
        yield Flag(
            severity="blocker" if worst.value < 6.0 else "warning",
            title=f"{first}–{second} isolation {worst.value:.1f} dB in {band.name}",
            explanation=(
                f"In {measurement.file}, ports {ports[0]} and {ports[1]} ({first}, {second}) are isolated by only "
                f"{worst.value:.1f} dB at {worst.frequency_mhz:g} MHz in {band.name}: {coupled_pct:.0f} % of the "
                "power fed to one antenna arrives at the other's port instead of being radiated."
            ),
            action="Increase spacing, cross the polarizations, or add a decoupling structure; then measure again.",
            product_impact=(
                (f"About {coupled_pct:.0f} % of the power sent into one antenna ends up in the other in {band.name}: "
                 "the product loses range there and the two antennas act partly as one. Expect trouble in the "
                 "operators' over-the-air tests unless the layout changes.")
                if worst.value < 6.0 else
                (f"About {coupled_pct:.0f} % of the power sent into one antenna leaks into the other in {band.name}: "
                 "some range is lost there and the second antenna helps less than it could.")
            ),
            subjects=(first, second, band.name),
            evidence={"band": band.name, "ports": ports, "isolation_db": worst.value,
                      "frequency_mhz": worst.frequency_mhz, "coupled_pct": coupled_pct, "file": measurement.file},
            basis="measured",
        )


@rule(
    id="ECC-001", changed_in="2.0.0", topic="correlation", severities=("blocker", "warning"),
    title="Envelope correlation from S-parameters above 0.5 in a band's downlink",
    rationale=(
        "Diversity and MIMO need the two receive signals to fade independently. In the engine's diversity model "
        f"({MRC_MODEL}) ECC {ECC_WARNING:g} still leaves {100 * diversity_share(ECC_WARNING):.0f} % of the "
        f"diversity gain of uncorrelated antennas and {ECC_BLOCKER:g} leaves {100 * diversity_share(ECC_BLOCKER):.0f} "
        f"%: above {ECC_WARNING:g} is a warning, above {ECC_BLOCKER:g} a blocker (common practice for LTE MIMO). "
        "Judged over each band's downlink (TDD: the band), where both antennas receive. " + LOSSY_CAVEAT + " It is "
        "trusted only when both antennas are at least 50 % efficient in the band; otherwise it is judged when high "
        "but never clears anything, and a far-field measurement decides."
    ),
    product_impact=("Two antennas that receive nearly the same signal give the product little of the range and speed "
                    "a second antenna is there for."),
    sources=(BLANCH, HALLBJORNER, "common practice (ECC below 0.5 for LTE MIMO)", MRC_MODEL),
    needs=("measurements", "modem.bands", "antennas", "antennas[].ranges_mhz", "antennas[].efficiency_pct",
           "antennas[].efficiency_source"),
)
def high_correlation(context: CheckContext) -> Iterator[Flag]:
    for result, first, second, band in _sparameter_results(context):
        if result.ecc is None or result.ecc <= ECC_WARNING or result.ports is None:
            continue
        assert result.frequency_mhz is not None
        trust = (f"Both antennas are at least 50 % efficient in {band.name}, so the estimate is close to the "
                 "pattern correlation." if result.trustworthy else
                 f"{result.reason[0].upper()}{result.reason[1:]}: the true correlation is likely higher still.")
        yield Flag(
            severity="blocker" if result.ecc > ECC_BLOCKER else "warning",
            title=f"{first}–{second} envelope correlation {result.ecc:.2f} in {band.name} (S-parameters)",
            explanation=(
                f"From the S-parameters in {result.files[0]}, ports {result.ports[0]} and {result.ports[1]} ({first}, "
                f"{second}) have an envelope correlation coefficient of {result.ecc:.2f} at {result.frequency_mhz:g} "
                f"MHz, the worst over the downlink of {band.name} ({band.dl_mhz[0]:g}–{band.dl_mhz[1]:g} MHz), where "
                f"both antennas receive. {diversity_sentence(result.ecc)} {trust}"
            ),
            action=("Separate the antennas further or make their patterns or polarizations differ, then measure "
                    "again" + ("." if result.trustworthy else
                               "; a far-field (chamber or simulated pattern) measurement of both antennas decides.")),
            product_impact=correlation_impact("blocker" if result.ecc > ECC_BLOCKER else "warning", result.ecc,
                                              band.name, likely_worse=not result.trustworthy),
            subjects=(first, second, band.name),
            evidence={"band": band.name, "ports": list(result.ports), "ecc": result.ecc,
                      "frequency_mhz": result.frequency_mhz, "method": "s-parameters", "assumes_lossless": True,
                      "trustworthy": result.trustworthy, "file": result.files[0],
                      "diversity_gain_share_pct": 100 * diversity_share(result.ecc)},
            basis="measured",
        )


def _sparameter_results(context: CheckContext) -> Iterator[tuple[MeasuredCorrelation, str, str, Band]]:
    for measurement in context.measurements:
        for (i, first), (j, second) in combinations(_cellular_ports(context, measurement), 2):
            for band in context.design.modem.bands:
                yield sparameter_correlation(context, measurement, i, j, first, second, band), first, second, band


@rule(
    id="ECC-002", added_in="2.0.0", topic="correlation", severities=("note",),
    title="Low envelope correlation from S-parameters of lossy antennas: not shown to be low",
    rationale=(
        LOSSY_CAVEAT + " With either antenna below 50 % efficiency in a band, or no efficiency entered, a low "
        "S-parameter ECC can't show that the pair is decorrelated, so it clears nothing; a far-field measurement "
        "decides. Small IoT antennas at 20-50 % efficiency are where this matters most."
    ),
    product_impact=("A good-looking correlation from this kind of measurement is not proof for lossy antennas: it "
                    "settles nothing until a pattern measurement is made."),
    sources=(BLANCH, HALLBJORNER),
    needs=("measurements", "modem.bands", "antennas", "antennas[].ranges_mhz", "antennas[].efficiency_pct",
           "antennas[].efficiency_source"),
)
def optimistic_correlation(context: CheckContext) -> Iterator[Flag]:
    worst_by_pair: dict[tuple[str, str], list[tuple[MeasuredCorrelation, Band]]] = {}
    for result, first, second, band in _sparameter_results(context):
        if result.ecc is None or result.ecc > ECC_WARNING or result.trustworthy or not result.passive:
            continue
        if any(other.method == "far-field" and other.usable for other in pair_correlations(context, first, second, band)):
            continue  # the patterns decide in this band
        worst_by_pair.setdefault((first, second), []).append((result, band))
    for (first, second), results in worst_by_pair.items():
        result, band = max(results, key=lambda item: item[0].ecc or 0.0)
        assert result.ports is not None and result.ecc is not None
        bands = sorted({item[1].name for item in results}, key=[b.name for b in context.design.modem.bands].index)
        yield Flag(
            severity="note",
            title=f"{first}–{second}: S-parameter ECC of at most {result.ecc:.2f} reads optimistic",
            explanation=(
                f"From {result.files[0]} the pair's envelope correlation is at most {result.ecc:.2f} over the downlink "
                f"of {', '.join(bands)} (worst in {band.name} at {result.frequency_mhz:g} MHz). "
                f"{result.reason[0].upper()}{result.reason[1:]}."
            ),
            action=("Enter the antennas' efficiencies if they are known, or measure (or simulate) the far-field "
                    "pattern of each antenna with the other in place and add the files as far-field measurements."),
            product_impact=(f"The measurement makes {first} and {second} look independent, but for antennas this lossy "
                            "(or of unknown efficiency) it can read too good: treat the pair as unproven until a "
                            "pattern measurement settles it. Nothing is known to be wrong with the product."),
            subjects=(first, second),
            evidence={"band": band.name, "ports": list(result.ports), "ecc": result.ecc,
                      "frequency_mhz": result.frequency_mhz, "method": "s-parameters", "assumes_lossless": True,
                      "trustworthy": False, "bands": bands, "file": result.files[0]},
            basis="measured",
        )


@rule(
    id="EFF-002", changed_in="2.0.0", topic="efficiency", severities=("warning",),
    title="Measured radiation-efficiency bound below 25 % in a band",
    rationale=(
        "Power that is reflected back or coupled into other ports is not radiated, so "
        "1 - sum |S_ki|^2 bounds the radiation efficiency from above. If even the bound is below 25 %, the "
        "antenna can't be efficient whatever its losses. Frequencies where the data is not passive give no bound."
    ),
    product_impact="An antenna that can radiate only a small share of its power gives the product short range in that band.",
    sources=("power conservation over the S-matrix (common practice)", "common practice (25 % efficiency)"),
    needs=("measurements", "modem.bands", "antennas", "antennas[].ranges_mhz", "antennas[].efficiency_pct",
           "antennas[].efficiency_source"),
)
def low_measured_efficiency_bound(context: CheckContext) -> Iterator[Flag]:
    for measurement in context.measurements:
        network = measurement.network
        for port_index, name in _cellular_ports(context, measurement):
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
                    product_impact=(f"At most {worst.value:.0f} % of the power fed to {name} can leave the product in "
                                    f"{band.name}, even before losses in the antenna itself: expect shorter range in that "
                                    "band and a hard time in the operators' over-the-air tests."),
                    subjects=(name, band.name),
                    evidence={"band": band.name, "efficiency_pct": worst.value, "kind": "measured upper bound",
                              "frequency_mhz": worst.frequency_mhz, "port": _port_label(port_index),
                              "file": measurement.file},
                    basis="measured",
                )
