"""What far-field patterns say: the envelope correlation of each pair of cellular antennas over each band's
downlink, integrated over the sphere in the entry's environment, and, for absolute patterns, each
antenna's total efficiency and mean effective gain."""

from collections.abc import Iterator
from itertools import combinations

import numpy as np

from rules import farfield, sparams
from rules.catalog import Band
from rules.checks.measured import (
    ECC_BLOCKER,
    ECC_WARNING,
    MRC_MODEL,
    correlation_impact,
    diversity_sentence,
    diversity_share,
)
from rules.context import CheckContext, ranges_to_serve
from rules.correlation import TAGA, VAUGHAN_ANDERSEN, MeasuredCorrelation, pattern_correlation
from rules.findings import Flag
from rules.measurements import LoadedPattern
from rules.registry import rule

MIN_EFFICIENCY_PCT = 25.0  # as for entered efficiency (design.md severity policy)


def _pattern_pairs(context: CheckContext) -> Iterator[tuple[LoadedPattern, LoadedPattern]]:
    cellular = [item for item in context.far_fields if context.design.antenna(item.antenna).is_cellular]
    yield from combinations(cellular, 2)


def _far_field(context: CheckContext, first: str, second: str, band: Band) -> MeasuredCorrelation | None:
    return pattern_correlation(context, first, second, band)


def _environment_words(item: LoadedPattern) -> str:
    return farfield.environment_text(item.environment)


@rule(
    id="ECC-003", added_in="2.0.0", topic="correlation", severities=("blocker", "warning"),
    title="Envelope correlation from far-field patterns above 0.5 in a band's downlink",
    rationale=(
        "Integrating both antennas' complex fields over the sphere gives their envelope correlation without "
        "assuming lossless antennas (Vaughan & Andersen 1987), in uniform 3-D multipath by default or in Taga's "
        f"outdoor model. Thresholds as for ECC from S-parameters: in the engine's diversity model ({MRC_MODEL}) "
        "0.5 still leaves most of the diversity gain and 0.7 much less; above 0.5 a warning, above 0.7 a blocker. "
        "Judged over each band's downlink (TDD: the band) at the pattern's frequencies inside it."
    ),
    product_impact=("Two antennas that receive nearly the same signal give the product little of the range and speed "
                    "a second antenna is there for."),
    sources=(VAUGHAN_ANDERSEN, TAGA, "common practice (ECC below 0.5 for LTE MIMO)"),
    needs=("measurements", "modem.bands", "antennas", "antennas[].ranges_mhz", "antennas[].efficiency_pct",
           "antennas[].efficiency_source"),
)
def high_pattern_correlation(context: CheckContext) -> Iterator[Flag]:
    for first, second in _pattern_pairs(context):
        for band in context.design.modem.bands:
            result = _far_field(context, first.antenna, second.antenna, band)
            if result is None or result.ecc is None or result.ecc <= ECC_WARNING:
                continue
            yield Flag(
                severity="blocker" if result.ecc > ECC_BLOCKER else "warning",
                title=f"{first.antenna}–{second.antenna} envelope correlation {result.ecc:.2f} in {band.name} (far-field)",
                explanation=(
                    f"Integrated over the sphere in {_environment_words(first)}, the patterns in {first.file} and "
                    f"{second.file} give an envelope correlation of {result.ecc:.2f} at {result.frequency_mhz:g} MHz, "
                    f"the worst of their frequencies in the downlink of {band.name} ({band.dl_mhz[0]:g}–"
                    f"{band.dl_mhz[1]:g} MHz). {diversity_sentence(result.ecc)}"
                ),
                action="Separate the antennas further or make their patterns or polarizations differ; measure again.",
                product_impact=correlation_impact("blocker" if result.ecc > ECC_BLOCKER else "warning", result.ecc,
                                                  band.name),
                subjects=(first.antenna, second.antenna, band.name),
                evidence={"band": band.name, "ports": [first.antenna, second.antenna], "ecc": result.ecc,
                          "frequency_mhz": result.frequency_mhz, "method": "far-field",
                          "files": [first.file, second.file], **farfield.environment_evidence(first.environment)},
                basis="measured",
            )


@rule(
    id="ECC-004", added_in="2.0.0", topic="correlation", severities=("note",),
    title="Envelope correlation from far-field patterns at most 0.5",
    rationale=(
        "Where the patterns of a pair show an envelope correlation of 0.5 or less in every band they reach, the "
        "figure is a trustworthy measurement of this product and outranks the spacing rule (SEP-001); this note "
        "records it, and names the bands the patterns do not reach."
    ),
    product_impact="A pattern measurement that shows the antennas working independently is the best evidence a layout can have.",
    sources=(VAUGHAN_ANDERSEN, TAGA),
    needs=("measurements", "modem.bands", "antennas", "antennas[].ranges_mhz", "antennas[].efficiency_pct",
           "antennas[].efficiency_source"),
)
def pattern_correlation_summary(context: CheckContext) -> Iterator[Flag]:
    for first, second in _pattern_pairs(context):
        judged: list[tuple[Band, MeasuredCorrelation]] = []
        missing: list[str] = []
        for band in context.design.modem.bands:
            result = _far_field(context, first.antenna, second.antenna, band)
            if result is None or result.ecc is None:
                missing.append(band.name)
            else:
                judged.append((band, result))
        if any((result.ecc or 0.0) > ECC_WARNING for _, result in judged):
            continue  # ECC-003 speaks for the pair
        environment = farfield.environment_evidence(first.environment)
        if not judged:
            yield Flag(
                severity="note",
                title=f"{first.antenna}–{second.antenna}: the far-field patterns reach no selected band's downlink",
                explanation=(f"{first.file} and {second.file} have no frequency inside the downlink of "
                             f"{', '.join(missing)}, so they say nothing about the pair's correlation there."),
                action="Measure or simulate the patterns at frequencies inside each band's downlink.",
                product_impact=("The pattern files miss the product's bands, so they neither prove nor disprove that the "
                                "antennas work well together; they need redoing at the right frequencies."),
                subjects=(first.antenna, second.antenna),
                evidence={"band": None, "ports": [first.antenna, second.antenna], "ecc": None, "method": "far-field",
                          "files": [first.file, second.file], "bands_not_covered": missing, **environment},
                basis="measured",
            )
            continue
        band, worst = max(judged, key=lambda item: item[1].ecc or 0.0)
        assert worst.ecc is not None
        not_reached = f" The patterns have no frequency in the downlink of {', '.join(missing)}." if missing else ""
        yield Flag(
            severity="note",
            title=f"{first.antenna}–{second.antenna} envelope correlation at most {worst.ecc:.2f} (far-field)",
            explanation=(
                f"Integrated over the sphere in {_environment_words(first)}, {first.file} and {second.file} give an "
                f"envelope correlation of at most {worst.ecc:.2f} over the downlink of "
                f"{', '.join(item[0].name for item in judged)} (worst in {band.name} at {worst.frequency_mhz:g} MHz). "
                f"{diversity_sentence(worst.ecc)}{not_reached}"
            ),
            action="None needed for correlation; keep the patterns with the design record.",
            product_impact=(f"Measured in this product, the two antennas work independently enough (correlation at most "
                            f"{worst.ecc:.2f}, keeping about {100 * diversity_share(worst.ecc):.0f} % of the second "
                            "antenna's benefit): good for range and speed. Keep the files with the record; a layout "
                            "change means measuring again."
                            + (f" Bands the patterns don't reach ({', '.join(missing)}) are unverified." if missing else "")),
            subjects=(first.antenna, second.antenna),
            evidence={"band": band.name, "ports": [first.antenna, second.antenna], "ecc": worst.ecc,
                      "frequency_mhz": worst.frequency_mhz, "method": "far-field", "files": [first.file, second.file],
                      "bands": [item[0].name for item in judged], "eccs": [item[1].ecc for item in judged],
                      "bands_not_covered": missing, **environment},
            basis="measured",
        )


@rule(
    id="EFF-004", added_in="2.0.0", topic="efficiency", severities=("warning", "note"),
    title="Efficiency and mean effective gain from an absolute far-field pattern",
    rationale=(
        "An absolute pattern (|E_theta|^2 + |E_phi|^2 is the realized gain) gives the antenna's total efficiency, "
        "its sphere average, and its mean effective gain in the chosen environment (Taga 1990): the power it "
        "receives there relative to an isotropic antenna taking both polarizations. A warning when the measured "
        "efficiency is below 25 % in a band, as for an entered one; otherwise a note with the figures."
    ),
    product_impact="A measured efficiency says how much of the product's power really leaves as radio waves.",
    sources=(TAGA, "common practice (25 % efficiency)"),
    needs=("measurements", "modem.bands", "antennas", "antennas[].ranges_mhz", "antennas[].efficiency_pct",
           "antennas[].efficiency_source"),
)
def pattern_efficiency(context: CheckContext) -> Iterator[Flag]:
    for item in context.far_fields:
        antenna = context.design.antenna(item.antenna)
        if not antenna.is_cellular or item.efficiency_pct is None or item.mean_effective_gain_db is None:
            continue
        rows = []
        for band in context.design.modem.bands:
            frequencies = item.frequencies_mhz
            inside = np.zeros(frequencies.shape, dtype=bool)
            for low, high in ranges_to_serve(antenna, band):
                inside |= (frequencies >= low - sparams.EDGE_TOLERANCE_MHZ) & (frequencies <= high + sparams.EDGE_TOLERANCE_MHZ)
            worst = sparams.worst_minimum(item.efficiency_pct, frequencies, inside)
            if worst is None:
                continue
            index = int(np.flatnonzero(frequencies == worst.frequency_mhz)[0])
            rows.append((band.name, worst.value, worst.frequency_mhz, float(item.mean_effective_gain_db[index])))
        if not rows:
            continue
        band_name, efficiency_pct, frequency_mhz, meg_db = min(rows, key=lambda row: row[1])
        low = efficiency_pct < MIN_EFFICIENCY_PCT
        shown = "; ".join(f"{row[0]} {row[1]:.0f} %, MEG {row[3]:.1f} dB" for row in rows)
        yield Flag(
            severity="warning" if low else "note",
            title=(f"{antenna.name} is {efficiency_pct:.0f} % efficient in {band_name} (far-field pattern), "
                   f"MEG {meg_db:.1f} dB"),
            explanation=(
                f"From the absolute pattern in {item.file}, {antenna.name}'s total efficiency (its gain averaged "
                f"over the sphere) and mean effective gain in {_environment_words(item)} are, at the worst frequency "
                f"of each band it serves: {shown}."
                + (f" Below {MIN_EFFICIENCY_PCT:g} % in {band_name}, most of the power is lost as heat or mismatch."
                   if low else "")
            ),
            action=("Improve the antenna's placement, ground or matching, or choose a more efficient antenna."
                    if low else "None needed; keep the pattern with the design record."),
            product_impact=(
                (f"Measured in this product, {antenna.name} turns only {efficiency_pct:.0f} % of its power into radio "
                 f"waves in {band_name}: expect shorter range in that band and a risk in the operators' over-the-air "
                 "tests.")
                if low else
                (f"Measured in this product, {antenna.name} radiates at least {efficiency_pct:.0f} % of its power in "
                 f"every band the pattern covers, above the {MIN_EFFICIENCY_PCT:g} % where this checklist starts to "
                 "warn: its efficiency is no concern. Keep the pattern with the record.")
            ),
            subjects=(antenna.name,),
            evidence={"band": band_name, "efficiency_pct": efficiency_pct, "frequency_mhz": frequency_mhz,
                      "mean_effective_gain_db": meg_db, "bands": [row[0] for row in rows],
                      "efficiencies_pct": [row[1] for row in rows], "mean_effective_gains_db": [row[3] for row in rows],
                      "file": item.file, **farfield.environment_evidence(item.environment)},
            basis="measured",
        )
