"""Whether each antenna is rated for the frequencies it must serve in each selected band."""

from collections.abc import Iterator

from rules.context import CheckContext, ranges_to_serve, uncovered_ranges
from rules.findings import Flag
from rules.registry import rule


@rule(
    id="BND-001", changed_in="2.0.0", topic="band-coverage", severities=("blocker",),
    title="A selected band is outside an antenna's rated ranges",
    rationale=(
        "A main antenna transmits and receives, so it must cover a band's uplink and downlink; a receive "
        "antenna must cover the downlink (GNSS and WLAN antennas serve other radios). Outside its rated range an antenna's match and efficiency are "
        "unspecified and usually poor."
    ),
    product_impact=(
        "In a band its antenna is not made for, the product may connect poorly or not at all where customers expect "
        "it to work, and operators test every band the product claims."
    ),
    sources=("3GPP TS 36.101 Table 5.5-1", "3GPP TS 38.101-1 Table 5.2-1"),
    needs=("antennas", "antennas[].ranges_mhz", "modem.bands"),
)
def band_outside_rated_range(context: CheckContext) -> Iterator[Flag]:
    for antenna in context.cellular_antennas:
        if antenna.ranges_mhz is None:
            continue
        for band in context.design.modem.bands:
            missing = uncovered_ranges(ranges_to_serve(antenna, band), antenna.ranges_mhz)
            if not missing:
                continue
            shown = ", ".join(f"{low:g}–{high:g} MHz" for low, high in missing)
            duty = "uplink and downlink" if antenna.transmits else "downlink"
            if antenna.transmits:
                impact = (f"In {band.name} the product may connect poorly or not at all, because {antenna.name} is not "
                          f"made for {shown}. Operators test every band the product claims, so either the antenna "
                          f"changes or the product stops claiming {band.name} (and loses the networks that use it).")
            else:
                impact = (f"In {band.name} the extra receive antenna {antenna.name} is not made for {shown}, so the "
                          "second antenna the modem counts on is missing there: weaker reception in that band and a "
                          "risk in the operators' tests.")
            yield Flag(
                severity="blocker",
                title=f"{antenna.name} is not rated for all of {band.name}",
                explanation=(
                    f"{antenna.name} ({antenna.role}) must serve the {duty} of {band.name}; its rated ranges "
                    f"leave {shown} uncovered."
                ),
                action=(
                    f"Choose an antenna rated across {band.name}, or drop {band.name} from the modem's bands "
                    "if the product will not use it."
                ),
                product_impact=impact,
                subjects=(antenna.name, band.name),
                evidence={"band": band.name, "missing_mhz": [list(pair) for pair in missing],
                          "role": antenna.role},
                references=(band.reference,),
                basis="datasheet",
            )


@rule(
    id="BND-002", changed_in="2.0.0", topic="band-coverage", severities=("note",),
    title="Band coverage can't be checked: rated ranges not given",
    rationale="Without the antenna's rated frequency ranges the engine cannot tell whether it serves the bands.",
    product_impact="Until the antenna's frequency ranges are entered, an antenna that misses a band would go unnoticed.",
    sources=("common practice",),
    needs=("antennas", "antennas[].ranges_mhz", "modem.bands"),
)
def rated_ranges_unknown(context: CheckContext) -> Iterator[Flag]:
    for antenna in context.cellular_antennas:
        if antenna.ranges_mhz is None:
            yield Flag(
                severity="note",
                title=f"Rated ranges of {antenna.name} not given: band coverage not checked",
                explanation=(
                    f"{antenna.name} has no rated frequency ranges, so whether it covers "
                    f"{', '.join(band.name for band in context.design.modem.bands)} is unknown."
                ),
                action="Enter the frequency ranges from the antenna's datasheet.",
                product_impact=(f"Nobody can yet tell whether {antenna.name} works in the product's bands; an antenna "
                                "that misses one is found here in minutes, or months later in the operators' tests."),
                subjects=(antenna.name,),
                evidence={"band": None, "missing_mhz": []},
            )
