"""What the antennas and the category promise on paper: gain against the module's approval, entered
efficiency, and the throughput the product needs against the category's peak."""

from collections.abc import Iterator
from dataclasses import dataclass

from rules.context import CheckContext
from rules.findings import Flag
from rules.registry import rule

MIN_EFFICIENCY_PCT = 25.0  # design.md severity policy: a warning below a quarter of the power radiated


@rule(
    id="GAI-001", topic="gain-limit", severities=("blocker",),
    title="Antenna gain above the module approval's limit",
    rationale=(
        "A module's radio approval is granted with a maximum antenna gain per band (it bounds the radiated "
        "power). A transmitting antenna whose peak gain, less its cable loss, exceeds that limit is outside "
        "the approval and needs a new one. Receive-only antennas do not transmit and are not limited."
    ),
    sources=("the module's regulatory approval (grant or declaration of conformity)",),
)
def gain_above_approval(context: CheckContext) -> Iterator[Flag]:
    modem = context.design.modem
    for antenna in context.design.antennas:
        if not antenna.transmits or antenna.peak_gain_dbi is None:
            continue
        net_gain_dbi = antenna.peak_gain_dbi - antenna.cable_loss_db
        for band in modem.bands:
            limit_dbi = modem.gain_limits_dbi.get(band.name)
            if limit_dbi is None or net_gain_dbi <= limit_dbi:
                continue
            yield Flag(
                severity="blocker",
                title=f"{antenna.name} in {band.name}: {net_gain_dbi:.1f} dBi against a {limit_dbi:.1f} dBi limit",
                explanation=(
                    f"{antenna.name} has {antenna.peak_gain_dbi:.1f} dBi peak gain and {antenna.cable_loss_db:.1f} dB "
                    f"cable loss, {net_gain_dbi:.1f} dBi at the module. The module's approval allows "
                    f"{limit_dbi:.1f} dBi in {band.name}, so the product would radiate more than was approved."
                ),
                action=(
                    "Choose a lower-gain antenna or a longer (lossier) feed, or plan a new or extended "
                    "regulatory approval; confirm with the module maker and your regulatory test house."
                ),
                subjects=(antenna.name, band.name),
                evidence={"band": band.name, "gain_dbi": net_gain_dbi, "limit_dbi": limit_dbi,
                          "peak_gain_dbi": antenna.peak_gain_dbi, "cable_loss_db": antenna.cable_loss_db},
            )


@rule(
    id="GAI-002", topic="gain-limit", severities=("note",),
    title="Gain limits given but an antenna's gain is not",
    rationale="Without the transmitting antenna's peak gain the approval limit can't be checked.",
    sources=("common practice",),
)
def gain_unknown(context: CheckContext) -> Iterator[Flag]:
    modem = context.design.modem
    limited = [band.name for band in modem.bands if band.name in modem.gain_limits_dbi]
    if not limited:
        return
    for antenna in context.design.antennas:
        if antenna.transmits and antenna.peak_gain_dbi is None:
            yield Flag(
                severity="note",
                title=f"Peak gain of {antenna.name} not given: approval limits not checked",
                explanation=f"The module's approval limits gain in {', '.join(limited)}; {antenna.name} has no peak gain.",
                action="Enter the peak gain from the antenna's datasheet (the highest over the bands used).",
                subjects=(antenna.name,),
                evidence={"band": limited[0], "gain_dbi": None, "limit_dbi": modem.gain_limits_dbi[limited[0]]},
            )


@dataclass(frozen=True)
class Peak:
    """The highest rate a design's modem reaches in one direction, and how it was reached."""

    kbps: float
    duplex_mode: str  # "FD-FDD", "HD-FDD" or "TDD"
    band: str | None  # the selected band that reaches it (None when every band gives the same)
    basis: str


def design_peak(context: CheckContext, direction: str) -> Peak:
    """The category's peak for this design: LTE-M at its half-duplex (HD-FDD) peak unless the module
    declares full duplex; NR on a TDD band at its share of the symbols under the catalog's TDD pattern. The
    best selected band sets the peak (a sustained need above it can't be met on any of them)."""
    modem = context.design.modem
    category = modem.category
    if direction == "dl":
        full_kbps = category.peak_dl_kbps_with(max(1, context.rx_connected))
        half_kbps, tdd_share = category.half_duplex_dl_kbps, category.tdd_dl_share
    else:
        full_kbps = category.peak_ul_kbps
        half_kbps, tdd_share = category.half_duplex_ul_kbps, category.tdd_ul_share
    if half_kbps is not None and not modem.full_duplex:
        return Peak(half_kbps, "HD-FDD", None, "half-duplex (HD-FDD) timeline of Rel-13, as most LTE-M modules "
                                               "run; set modem.full_duplex for an FD-FDD module")
    candidates = [band for band in modem.bands if direction == "dl" or band.has_uplink]
    if tdd_share is not None and candidates and all(band.duplex == "TDD" for band in candidates):
        band = candidates[0]
        return Peak(full_kbps * tdd_share, "TDD", band.name,
                    f"TDD {category.tdd_pattern}: {100 * tdd_share:.1f} % of the symbols carry the "
                    f"{'downlink' if direction == 'dl' else 'uplink'} (common practice)")
    fdd = next((band.name for band in candidates if band.duplex != "TDD"), None)
    if fdd is None:
        # LTE categories on TDD bands keep their TS 36.306 figure (bits per TTI): no split is assumed here.
        return Peak(full_kbps, "TDD", None, "the category's figure per TTI, without a TDD split")
    return Peak(full_kbps, "FD-FDD", fdd, f"full duplex on {fdd}: a transport block every slot")


@rule(
    id="THR-001", topic="throughput", severities=("blocker",),
    title="Required throughput above the category's peak",
    rationale=(
        "A category's peak rate is the most its transport blocks can carry under ideal radio conditions; "
        "a sustained need above it can't be met anywhere in the network. LTE-M modules are taken as "
        "half-duplex (HD-FDD, the Rel-13 peaks of a few hundred kbps) unless the design declares full "
        "duplex; RedCap on a TDD band gets the downlink or uplink share of the TDD pattern."
    ),
    sources=("3GPP TS 36.306 Tables 4.1-1, 4.1A-1, 4.1C-1", "3GPP TS 38.306 §4.1.2",
             "3GPP TS 36.213 (LTE-M HD-FDD timing; peaks from memory)",
             "common practice (TDD pattern DDDSU, S = 10:2:2)"),
)
def throughput_above_peak(context: CheckContext) -> Iterator[Flag]:
    design = context.design
    category = design.modem.category
    needs = (("dl", design.deployment.required_dl_kbps), ("ul", design.deployment.required_ul_kbps))
    for direction, required_kbps in needs:
        if required_kbps is None:
            continue
        peak = design_peak(context, direction)
        peak_kbps = peak.kbps
        if required_kbps <= peak_kbps:
            continue
        word = "downlink" if direction == "dl" else "uplink"
        yield Flag(
            severity="blocker",
            title=f"{word.capitalize()} need of {required_kbps:g} kbps exceeds {category.label}'s {peak_kbps:g} kbps peak",
            explanation=(
                f"The product needs {required_kbps:g} kbps sustained on the {word}; {category.label} peaks at "
                f"{peak_kbps:g} kbps with this antenna count ({peak.basis}), and real links deliver a fraction "
                "of the peak."
            ),
            action="Choose a faster category, or reduce what the product sends and receives.",
            subjects=(direction,),
            evidence={"direction": direction, "required_kbps": required_kbps, "peak_kbps": peak_kbps,
                      "duplex_mode": peak.duplex_mode, "tdd_pattern": category.tdd_pattern
                      if peak.duplex_mode == "TDD" else None},
            references=(category.reference,),
        )


@rule(
    id="EFF-001", topic="efficiency", severities=("warning",),
    title="Entered antenna efficiency below 25 % in a band",
    rationale=(
        "Below 25 % total efficiency (-6 dB) an antenna gives away a quarter of the link budget in both "
        "directions; carriers' radiated tests (TRP/TIS) usually fail before that."
    ),
    sources=("common practice",),
)
def low_entered_efficiency(context: CheckContext) -> Iterator[Flag]:
    selected = {band.name for band in context.design.modem.bands}
    for antenna in context.design.antennas:
        for band_name, efficiency_pct in antenna.efficiency_pct.items():
            if band_name in selected and efficiency_pct < MIN_EFFICIENCY_PCT:
                yield Flag(
                    severity="warning",
                    title=f"{antenna.name} is {efficiency_pct:g} % efficient in {band_name}",
                    explanation=(
                        f"{antenna.name}'s total efficiency in {band_name} is {efficiency_pct:g} %, below "
                        f"{MIN_EFFICIENCY_PCT:g} %: most of the power is lost as heat or mismatch."
                    ),
                    action="Improve the antenna's placement, ground or matching, or choose a more efficient antenna.",
                    subjects=(antenna.name, band_name),
                    evidence={"band": band_name, "efficiency_pct": efficiency_pct, "basis": "entered"},
                )
