"""What the antennas and the category promise on paper: gain against the module's approval, entered
efficiency, and the throughput the product needs against the category's peak."""

import math
from collections.abc import Iterator
from dataclasses import dataclass

from rules.checks.measured import DIVERSITY_OUTAGE, MRC_MODEL
from rules.context import CheckContext
from rules.correlation import pair_correlations
from rules.coverage import coverage_data, second_antenna_gain
from rules.design import Antenna
from rules.findings import Flag
from rules.registry import rule

MIN_EFFICIENCY_PCT = 25.0  # design.md severity policy: a warning below a quarter of the power radiated
IMBALANCE_LIMIT_DB = 3.0  # common practice: diversity branches within 3 dB of each other


def efficiency_basis(antennas: list[Antenna]) -> str:
    """`measured` when every efficiency a finding rests on was measured in this product, else `datasheet`."""
    return "measured" if all(antenna.efficiency_source == "measured" for antenna in antennas) else "datasheet"


@rule(
    id="GAI-001", changed_in="2.0.0", topic="gain-limit", severities=("blocker",),
    title="Antenna gain above the module approval's limit",
    rationale=(
        "A module's radio approval is granted with a maximum antenna gain per band (it bounds the radiated "
        "power). A transmitting antenna whose peak gain in a band, less its cable loss, exceeds that band's "
        "limit is outside the approval and needs a new one; only the bands over are flagged. A gain given band by "
        "band is judged band by band, and a band missing from it is not judged. Receive-only antennas do not "
        "transmit and are not limited."
    ),
    product_impact=("An antenna stronger than the module's approval allows takes the product outside that approval: it "
                    "then needs its own, with months and test fees added."),
    sources=("the module's regulatory approval (grant or declaration of conformity)",),
    needs=("antennas", "modem.bands", "modem.gain_limits_dbi", "antennas[].peak_gain_dbi",
           "antennas[].cable_loss_db"),
)
def gain_above_approval(context: CheckContext) -> Iterator[Flag]:
    modem = context.design.modem
    for antenna in context.design.antennas:
        if not antenna.transmits:
            continue
        for band in modem.bands:
            peak_dbi = antenna.peak_gain_in(band.name)
            limit_dbi = modem.gain_limits_dbi.get(band.name)
            if peak_dbi is None or limit_dbi is None:
                continue
            net_gain_dbi = peak_dbi - antenna.cable_loss_db
            if net_gain_dbi <= limit_dbi:
                continue
            where = "" if antenna.peak_gain_dbi is not None else f" in {band.name}"
            yield Flag(
                severity="blocker",
                title=f"{antenna.name} in {band.name}: {net_gain_dbi:.1f} dBi against a {limit_dbi:.1f} dBi limit",
                explanation=(
                    f"{antenna.name} has {peak_dbi:.1f} dBi peak gain{where} and {antenna.cable_loss_db:.1f} dB "
                    f"cable loss, {net_gain_dbi:.1f} dBi at the module. The module's approval allows "
                    f"{limit_dbi:.1f} dBi in {band.name}, so the product would radiate more than was approved."
                ),
                action=(
                    "Choose a lower-gain antenna or a longer (lossier) feed, or plan a new or extended "
                    "regulatory approval; confirm with the module maker and your regulatory test house."
                ),
                product_impact=(
                    f"With this antenna the product is outside the module's radio approval in {band.name} "
                    f"({net_gain_dbi:.1f} dBi where {limit_dbi:.1f} dBi is allowed): it can't be sold on the module's "
                    "approval and would need an approval of its own, adding months and test fees. A lower-gain "
                    "antenna or a longer cable usually avoids that; the regulator and the test house have the final "
                    "word."
                ),
                subjects=(antenna.name, band.name),
                evidence={"band": band.name, "gain_dbi": net_gain_dbi, "limit_dbi": limit_dbi,
                          "peak_gain_dbi": peak_dbi, "cable_loss_db": antenna.cable_loss_db},
                basis="datasheet",
            )


@rule(
    id="GAI-002", changed_in="2.0.0", topic="gain-limit", severities=("note",),
    title="Gain limits given but an antenna's gain is not",
    rationale=("Without the transmitting antenna's peak gain in a band the approval limit there can't be checked; "
               "a per-band gain that leaves out a limited band leaves that band unjudged."),
    product_impact="Until the antenna's gain is entered, an antenna outside the module's approval would go unnoticed.",
    sources=("common practice",),
    needs=("antennas", "modem.bands", "modem.gain_limits_dbi", "antennas[].peak_gain_dbi"),
)
def gain_unknown(context: CheckContext) -> Iterator[Flag]:
    modem = context.design.modem
    limited = [band.name for band in modem.bands if band.name in modem.gain_limits_dbi]
    if not limited:
        return
    for antenna in context.design.antennas:
        if not antenna.transmits:
            continue
        unknown = [name for name in limited if antenna.peak_gain_in(name) is None]
        if not unknown:
            continue
        if antenna.gain_given:
            title = f"Peak gain of {antenna.name} not given for {', '.join(unknown)}: approval limit not checked there"
            explanation = (f"The module's approval limits gain in {', '.join(limited)}; {antenna.name}'s per-band "
                           f"peak gain leaves out {', '.join(unknown)}, so those bands are not judged.")
        else:
            title = f"Peak gain of {antenna.name} not given: approval limits not checked"
            explanation = f"The module's approval limits gain in {', '.join(limited)}; {antenna.name} has no peak gain."
        yield Flag(
            severity="note",
            title=title,
            explanation=explanation,
            action="Enter the peak gain from the antenna's datasheet, for every band or band by band.",
            product_impact=(f"Whether {antenna.name} keeps the product within the module's radio approval in "
                            f"{', '.join(unknown)} is unknown; an antenna over the limit would mean an approval of the "
                            "product's own, so enter its gain before the antenna is chosen for good."),
            subjects=(antenna.name,),
            evidence={"band": unknown[0], "gain_dbi": None, "limit_dbi": modem.gain_limits_dbi[unknown[0]],
                      "bands": unknown},
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
    id="THR-001", changed_in="2.0.0", topic="throughput", severities=("blocker",),
    title="Required throughput above the category's peak",
    rationale=(
        "A category's peak rate is the most its transport blocks can carry under ideal radio conditions; "
        "a sustained need above it can't be met anywhere in the network. LTE-M modules are taken as "
        "half-duplex (HD-FDD, the Rel-13 peaks of a few hundred kbps) unless the design declares full "
        "duplex; RedCap on a TDD band gets the downlink or uplink share of the TDD pattern."
    ),
    product_impact=("If the product needs more data than its modem type can ever carry, no antenna or network fixes it: "
                    "the modem or the product's data needs must change."),
    sources=("3GPP TS 36.306 Tables 4.1-1, 4.1A-1, 4.1C-1", "3GPP TS 38.306 §4.1.2",
             "3GPP TS 36.213 (LTE-M HD-FDD timing; peaks from memory)",
             "common practice (TDD pattern DDDSU, S = 10:2:2)"),
    needs=("modem.category", "modem.rx_ports", "antennas", "modem.bands", "modem.full_duplex",
           "deployment.required_dl_kbps", "deployment.required_ul_kbps"),
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
            product_impact=(f"The product can't move {required_kbps:g} kbps on the {word} "
                            f"({'receiving' if direction == 'dl' else 'sending'}): {category.label} peaks at "
                            f"{peak_kbps:g} kbps even in perfect conditions, and real links give a fraction of it. "
                            "The fix is a faster (and costlier) modem type or a smaller data need: fewer or smaller "
                            "reports, slower updates."),
            subjects=(direction,),
            evidence={"direction": direction, "required_kbps": required_kbps, "peak_kbps": peak_kbps,
                      "duplex_mode": peak.duplex_mode, "tdd_pattern": category.tdd_pattern
                      if peak.duplex_mode == "TDD" else None},
            references=(category.reference,),
        )


@rule(
    id="EFF-001", changed_in="2.0.0", topic="efficiency", severities=("warning",),
    title="Entered antenna efficiency below 25 % in a band",
    rationale=(
        "Below 25 % total efficiency an antenna loses more than 6 dB: three quarters of the power. A main "
        "antenna pays it twice, in radiated power on the uplink and in sensitivity on the downlink; a "
        "receive-only antenna pays it on the downlink only. Carriers' radiated tests (TRP/TIS) are often failed "
        "near there."
    ),
    product_impact="An inefficient antenna wastes most of the product's radio power: shorter range and harder operator tests.",
    sources=("common practice", "loss = -10 log10(efficiency)"),
    needs=("antennas", "modem.bands", "antennas[].efficiency_pct", "antennas[].efficiency_source"),
)
def low_entered_efficiency(context: CheckContext) -> Iterator[Flag]:
    selected = {band.name for band in context.design.modem.bands}
    for antenna in context.cellular_antennas:
        for band_name, efficiency_pct in antenna.efficiency_pct.items():
            if band_name in selected and efficiency_pct < MIN_EFFICIENCY_PCT:
                loss_db = -10.0 * math.log10(efficiency_pct / 100.0) if efficiency_pct > 0 else math.inf
                loss = f"{loss_db:.1f} dB" if math.isfinite(loss_db) else "everything"
                duty = ("on both the uplink (radiated power) and the downlink (sensitivity)" if antenna.transmits
                        else "on the downlink (it only receives)")
                source = ("measured in this product" if antenna.efficiency_source == "measured"
                          else "from the datasheet")
                if antenna.transmits:
                    impact = (f"{antenna.name} turns only {efficiency_pct:g} % of the power into radio waves in "
                              f"{band_name}: expect shorter range in that band both ways, more battery spent sending at "
                              "the edge of coverage, and a risk in the operators' over-the-air tests.")
                else:
                    impact = (f"{antenna.name}, the extra receive antenna, catches only {efficiency_pct:g} % of the "
                              f"signal in {band_name}, so it adds less to reception there than it could.")
                if antenna.efficiency_source != "measured":
                    impact += " The figure is the datasheet's; a measurement in the product tells for sure."
                yield Flag(
                    severity="warning",
                    title=f"{antenna.name} is {efficiency_pct:g} % efficient in {band_name}",
                    explanation=(
                        f"{antenna.name}'s total efficiency in {band_name} is {efficiency_pct:g} % ({source}), below "
                        f"{MIN_EFFICIENCY_PCT:g} %: it loses {loss} {duty}, as heat or mismatch."
                    ),
                    action="Improve the antenna's placement, ground or matching, or choose a more efficient antenna.",
                    product_impact=impact,
                    subjects=(antenna.name, band_name),
                    evidence={"band": band_name, "efficiency_pct": efficiency_pct,
                              "source": antenna.efficiency_source,
                              "loss_db": loss_db if math.isfinite(loss_db) else None},
                    basis=efficiency_basis([antenna]),
                )


@rule(
    id="EFF-003", added_in="2.0.0", topic="efficiency", severities=("warning",),
    title="Main and receive antenna efficiencies more than 3 dB apart in a band",
    rationale=(
        "Diversity gain is largest when both branches bring the same signal power. With maximal-ratio combining "
        "the weaker branch adds less array gain (10 log10(1 + eta2/eta1)) and less protection against fading, so "
        "branches more than 3 dB apart (common practice) give away part of what the second antenna is for. The "
        f"finding says how much, by the engine's diversity model ({MRC_MODEL}), at the pair's measured envelope "
        "correlation where a trustworthy measurement gives one, else the coverage analysis's assumed value."
    ),
    product_impact="Two antennas of very different quality give the product less of the benefit of having two.",
    sources=("common practice (diversity branches within 3 dB)", MRC_MODEL),
    needs=("modem.category", "modem.rx_ports", "antennas", "measurements", "modem.bands", "antennas[].ranges_mhz",
           "antennas[].efficiency_pct", "antennas[].efficiency_source"),
)
def efficiency_imbalance(context: CheckContext) -> Iterator[Flag]:
    if context.rx_connected < 2:
        return
    main = next((antenna for antenna in context.cellular_antennas if antenna.transmits), None)
    if main is None:
        return
    receivers = [antenna for antenna in context.cellular_antennas if not antenna.transmits][: context.rx_connected - 1]
    assumed = coverage_data().assumptions
    for receiver in receivers:
        for band in context.design.modem.bands:
            main_pct, receive_pct = main.efficiency_pct.get(band.name), receiver.efficiency_pct.get(band.name)
            if not main_pct or not receive_pct:
                continue
            imbalance_db = 10.0 * math.log10(main_pct / receive_pct)
            if abs(imbalance_db) <= IMBALANCE_LIMIT_DB:
                continue
            trusted = [result for result in pair_correlations(context, main.name, receiver.name, band)
                       if result.can_clear and result.ecc is not None]
            if trusted:
                worst = max(trusted, key=lambda result: result.ecc or 0.0)
                ecc, ecc_source = worst.ecc or 0.0, f"measured ({worst.method}, {' and '.join(worst.files)})"
            else:
                ecc, ecc_source = assumed.assumed_ecc, f"assumed ({assumed.sources['assumed_ecc']})"
            ratio = min(main_pct, receive_pct) / max(main_pct, receive_pct)
            actual = second_antenna_gain(DIVERSITY_OUTAGE, ecc, ratio)
            balanced = second_antenna_gain(DIVERSITY_OUTAGE, ecc, 1.0)
            cost_db = balanced.total_db - actual.total_db
            weaker, stronger = (receiver, main) if imbalance_db > 0 else (main, receiver)
            yield Flag(
                severity="warning",
                title=(f"{weaker.name} is {abs(imbalance_db):.1f} dB less efficient than {stronger.name} in "
                       f"{band.name}: {cost_db:.1f} dB less gain from combining"),
                explanation=(
                    f"In {band.name} {main.name} is {main_pct:g} % and {receiver.name} {receive_pct:g} % efficient, "
                    f"{abs(imbalance_db):.1f} dB apart (more than {IMBALANCE_LIMIT_DB:g} dB). By {MRC_MODEL}, with "
                    f"envelope correlation {ecc:.2f} ({ecc_source}), the pair gains {actual.total_db:.1f} dB over "
                    f"{stronger.name} alone ({actual.array_gain_db:.1f} dB array gain, {actual.diversity_gain_db:.1f} "
                    f"dB diversity gain), where two antennas as efficient as {stronger.name} would gain "
                    f"{balanced.total_db:.1f} dB: the imbalance costs {cost_db:.1f} dB."
                ),
                action=(f"Improve {weaker.name}'s placement, ground clearance or matching in {band.name}, or choose "
                        "a more efficient antenna for that branch."),
                product_impact=(f"{weaker.name} is much weaker than {stronger.name} in {band.name}, so the product gets "
                                f"{cost_db:.1f} dB less benefit from having two antennas: somewhat shorter range where the "
                                "signal is weak. Improving the weaker antenna recovers it."),
                subjects=(main.name, receiver.name, band.name),
                evidence={"band": band.name, "efficiency_pct": min(main_pct, receive_pct),
                          "efficiencies_pct": [main_pct, receive_pct], "imbalance_db": imbalance_db,
                          "ecc": ecc, "ecc_source": ecc_source, "outage_pct": 100 * DIVERSITY_OUTAGE,
                          "second_antenna_gain_db": actual.total_db, "balanced_gain_db": balanced.total_db,
                          "diversity_gain_db": actual.diversity_gain_db,
                          "balanced_diversity_gain_db": balanced.diversity_gain_db, "cost_db": cost_db},
                basis=efficiency_basis([main, receiver]),
            )
