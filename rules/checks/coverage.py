"""What a single receive antenna costs in coverage when the modem could use two."""

from collections.abc import Iterator

from rules.context import CheckContext
from rules.coverage import TR_38_901, CoverageAnalysis, analyse_coverage, coverage_data
from rules.findings import Flag
from rules.registry import rule

# Warn when one antenna covers less than this share of the area two antennas cover. Covered area goes
# with the square of the range, so 70 % means about 1.43 times the base stations for the same area, or
# 30 % of the two-antenna area left uncovered (common practice: cell area ~ range^2). At TR 38.901 UMa
# NLOS's distance slope (39.08 dB per decade) 70 % is 3.0 dB of lost downlink coverage: the static cost of a
# receive branch alone. So the headline single-branch cost (4 dB, 62 %) warns when the downlink limits, and
# a loss the uplink absorbs does not.
AREA_SHARE_WARNING_RATIO = 0.70

MRC = "maximal-ratio combining of two Rayleigh-fading branches, exact outage with correlated branches"
SINGLE_BRANCH = "3GPP TR 36.888 and TR 38.875 single-receive-branch evaluations (from memory)"
REDCAP_1RX = "3GPP TS 38.331 cellBarredRedCap1Rx"
DIRECTION_WORDS = {"dl": "downlink", "ul": "uplink"}


def could_use_two(context: CheckContext) -> bool:
    """The category is specified with two receive antennas (Cat 1, Cat 4 and up), or a RedCap module
    declares two receive branches. Single-receive categories (NB-IoT, LTE-M, Cat 1bis) are specified and
    tested with one antenna: what a second would add is shown in the coverage table, never flagged."""
    modem = context.design.modem
    category = modem.category
    if category.single_antenna == "module":
        return modem.rx_ports is not None and modem.rx_ports >= 2
    return category.rx_antennas >= 2


def _range_text(analysis: CoverageAnalysis) -> str:
    if not analysis.modelled:
        return ""
    where = (f"By {analysis.model_label} ({analysis.geometry.base_m:g} m mast, device at "
             f"{analysis.geometry.mobile_height_m:g} m)")
    if analysis.range_one_km is not None and analysis.range_two_km is not None:
        return (f"{where} one antenna reaches about {analysis.range_one_km:.2f} km against "
                f"{analysis.range_two_km:.2f} km with two.")
    return f"{where}: {analysis.range_note or ''}".rstrip()


def _direction_text(analysis: CoverageAnalysis) -> str:
    if analysis.allowed_ul_db is None:
        return (f"{analysis.band} is a supplemental-downlink band: its uplink runs on another band, so only "
                "the downlink is budgeted here.")
    limiting_one, limiting_two = analysis.limiting_direction(1), analysis.limiting_direction(2)
    margins = (f"margins at {analysis.reference_distance_km:g} km: uplink {analysis.margin_ul_db:+.1f} dB, "
               f"downlink {analysis.margin_dl_db(2):+.1f} dB with two antennas and "
               f"{analysis.margin_dl_db(1):+.1f} dB with one" if analysis.modelled else
               f"allowed losses: uplink {analysis.allowed_ul_db:.1f} dB, downlink {analysis.allowed_dl_two_db:.1f} "
               f"dB with two antennas and {analysis.allowed_dl_one_db:.1f} dB with one")
    if limiting_one == "ul":
        return (f"The uplink limits the coverage with one antenna as with two ({margins}), and losing a "
                "receive branch changes only the downlink: by this budget the cellular coverage does not "
                "shrink.")
    if limiting_two == "ul":
        return (f"With two antennas the uplink limits, with one the downlink ({margins}): part of the "
                f"branch's cost is absorbed, {analysis.coverage_loss_db(analysis.cost.headline_db):.1f} dB "
                "reaches the coverage.")
    return f"The downlink limits the coverage ({margins}), so the branch's whole cost reaches it."


def _coverage_impact(analysis: CoverageAnalysis, warn: bool, judged: bool, limiting: str) -> str:
    """What the missing receive antenna means for the product, in a product manager's words."""
    lost = f"about {analysis.cost.headline_db:.1f} dB weaker reception in {analysis.band}"
    decide = " These are estimates; the operators' networks and tests decide."
    if warn:
        return (f"With one receive antenna instead of two the product gets {lost}: one antenna covers about "
                f"{analysis.area_share_pct:.0f} % of the area two would, so more installations at the edge of coverage "
                "(indoors, basements) will struggle to connect." + decide)
    if not judged:
        return (f"With one receive antenna instead of two the product gets {lost}; no coverage estimate exists for "
                "this band, so how much area it costs is not known." + decide)
    if limiting == "ul":
        return (f"With one receive antenna instead of two the product gets {lost}, but its own sending limits the "
                "coverage anyway: by this estimate the area it covers does not shrink." + decide)
    return (f"With one receive antenna instead of two the product gets {lost}: one antenna still covers about "
            f"{analysis.area_share_pct:.0f} % of the area two would, a modest loss." + decide)


@rule(
    id="COV-001", changed_in="2.0.0", topic="coverage", severities=("warning", "note"),
    title="One receive antenna where the modem can use two: the coverage it costs",
    rationale=(
        "A second receive antenna helps only the downlink. 3GPP's single-receive-branch evaluations (TR "
        "36.888 for LTE-M, TR 38.875 for RedCap) put its loss at about 3 dB static and 3-5 dB in fading, "
        "because LTE and NR already get frequency, HARQ and coding diversity; that range (4 dB headline) is "
        "what the rule judges by, with the flat-Rayleigh MRC outage gain shown beside it as a bound. Both "
        "directions are budgeted from the category's coverage targets (TR 36.888's 140.7 dB legacy LTE "
        "target is the uplink PUSCH limit; its downlink limit is higher), through TR 38.901 path loss, with "
        "the power class, cable and antenna losses. Where the uplink limits, the downlink's loss may cost "
        "no coverage at all. A warning when one antenna covers less than 70 % of the two-antenna area (1.43 "
        "times the base stations for the same area); otherwise, or where no band has a valid path-loss "
        "model, a note. Only for categories or modules that can use two receive antennas."
    ),
    product_impact=("Leaving out a receive antenna the modem could use makes the product hear the network less well: "
                    "how much coverage that costs depends on whether sending or receiving runs out first."),
    sources=(
        TR_38_901, SINGLE_BRANCH, "3GPP TR 36.888 and TR 45.820 (coverage targets)", MRC,
        "common practice (70 % area share threshold; cell area grows with the square of its range)",
    ),
)
def single_antenna_coverage(context: CheckContext) -> Iterator[Flag]:
    design = context.design
    if not design.antennas or context.rx_connected >= 2 or not could_use_two(context):
        return
    analyses = analyse_coverage(context)
    if not analyses:
        return
    judged = [analysis for analysis in analyses if analysis.modelled]
    worst = min(judged or analyses, key=lambda analysis: analysis.area_share_ratio)
    warn = bool(judged) and worst.area_share_ratio < AREA_SHARE_WARNING_RATIO
    category = design.modem.category
    cost = worst.cost
    bound = cost.bound
    share_pct = worst.area_share_pct
    limiting = worst.limiting_direction(1)
    cost_text = (
        f"Without its second receive branch the downlink of {worst.band} ({worst.frequency_mhz:g} MHz) loses "
        f"about {cost.headline_db:.1f} dB ({cost.low_db:.1f}-{cost.high_db:.1f} dB in fading channels, "
        f"{cost.static_db:.1f} dB static: {cost.source}), against the flat-Rayleigh bound of "
        f"{cost.bound_db:.1f} dB ({bound.array_gain_db:.1f} dB array gain and {bound.diversity_gain_db:.1f} dB "
        f"diversity gain of MRC at {100 * bound.outage_probability:g} % outage, envelope correlation "
        f"{bound.ecc:.2f} ({worst.ecc_source}), second antenna {bound.efficiency_ratio:.2f} times as efficient "
        f"({worst.efficiency_source}))."
    )
    if worst.modelled:
        share_text = (f" One antenna then covers about {share_pct:.0f} % of the two-antenna area "
                      f"({worst.area_share_bound_pct:.0f} % at the fading bound), at "
                      f"{worst.distance_slope_db_per_decade:.1f} dB per decade of distance.")
    else:
        share_text = (f" No band lies where TR 38.901 applies ({worst.model_reason}), so this is only a note; at "
                      f"the model's slope one antenna would cover about {share_pct:.0f} % of the two-antenna area.")
    if judged and not warn and limiting == "dl":
        share_text += f" That is above the {100 * AREA_SHARE_WARNING_RATIO:.0f} % this rule warns below."
    basis = (
        f"The budget starts from the {category.label} targets (uplink {worst.target.ul_mcl_db:.1f} dB: "
        f"{worst.target.ul_source}; downlink {worst.target.dl_mcl_db:.1f} dB: {worst.target.dl_source}), adds "
        f"{worst.base_gain_db:g} dB of base-station antenna gain, {worst.max_output_dbm - 23.0:+g} dB for power "
        f"class {worst.power_class} ({worst.max_output_dbm:g} dBm) on the uplink, and takes off "
        f"{worst.entry_loss_db:g} dB entry loss for {worst.environment} use ({worst.entry_loss_source}), "
        f"{worst.antenna_loss_db:.1f} dB antenna efficiency and {worst.cable_loss_db:g} dB cable loss. These are "
        "estimates for comparison, not a coverage prediction: the operator's network and its acceptance "
        "testing decide what the product gets."
    )
    redcap = ""
    if category.single_antenna == "module":
        redcap = (" With one receive branch in use the device is a 1Rx RedCap UE, which an operator can bar from a "
                  f"cell ({REDCAP_1RX}): see CNT-004.")
    yield Flag(
        severity="warning" if warn else "note",
        product_impact=_coverage_impact(worst, warn, bool(judged), limiting) + (
            " Some operators keep one-antenna RedCap devices off their cells: ask them." if redcap else ""),
        title=(f"One receive antenna: about {cost.headline_db:.1f} dB less downlink in {worst.band}; "
               + (f"coverage {share_pct:.0f} % of the two-antenna area" if limiting == "dl" or not judged
                  else "the uplink limits, coverage unchanged")),
        explanation=(
            f"{category.label} can use two receive antennas; the design connects {context.rx_connected}. "
            f"{cost_text} {_direction_text(worst)}{share_text} {_range_text(worst)} {basis}{redcap}".replace("  ", " ")
        ),
        action=(
            "Fit the second receive antenna (spaced and polarized to keep the envelope correlation low), or "
            "accept the smaller downlink knowingly: confirm with each operator that it is acceptable, and "
            "plan for installations closer to the base station or with external antennas."
        ),
        evidence={
            "direction": "dl",
            "limiting_direction": limiting,
            "limiting_direction_two": worst.limiting_direction(2),
            "band": worst.band,
            "frequency_mhz": worst.frequency_mhz,
            "ul_frequency_mhz": worst.ul_frequency_mhz,
            "area_share_pct": share_pct,
            "area_share_bound_pct": worst.area_share_bound_pct,
            "range_one_km": worst.range_one_km,
            "range_two_km": worst.range_two_km,
            "single_branch_cost_db": cost.headline_db,
            "single_branch_cost_range_db": [cost.low_db, cost.high_db],
            "single_branch_static_db": cost.static_db,
            "fading_bound_db": cost.bound_db,
            "coverage_loss_db": worst.coverage_loss_db(cost.headline_db),
            "second_antenna_gain_db": cost.headline_db,
            "array_gain_db": bound.array_gain_db,
            "diversity_gain_db": bound.diversity_gain_db,
            "outage_pct": 100 * bound.outage_probability,
            "ecc": bound.ecc,
            "ecc_source": worst.ecc_source,
            "efficiency_ratio": bound.efficiency_ratio,
            "model": worst.geometry.scenario,
            "los": worst.geometry.los,
            "mcl_ul_db": worst.target.ul_mcl_db if worst.allowed_ul_db is not None else None,
            "mcl_dl_db": worst.target.dl_mcl_db,
            "mcl_db": worst.target.dl_mcl_db,
            "power_class": worst.power_class,
            "max_output_dbm": worst.max_output_dbm,
            "cable_loss_db": worst.cable_loss_db,
            "antenna_loss_db": worst.antenna_loss_db,
            "base_gain_db": worst.base_gain_db,
            "entry_loss_db": worst.entry_loss_db,
            "environment": worst.environment,
            "margin_ul_db": worst.margin_ul_db,
            "margin_dl_one_db": worst.margin_dl_db(1),
            "margin_dl_two_db": worst.margin_dl_db(2),
            "margin_one_db": worst.margin_one_db,
            "margin_two_db": worst.margin_two_db,
            "reference_distance_km": worst.reference_distance_km,
            "area_share_threshold_pct": 100 * AREA_SHARE_WARNING_RATIO,
            "bands": [analysis.band for analysis in analyses],
            "area_shares_pct": [analysis.area_share_pct for analysis in analyses],
            "limiting_directions": [analysis.limiting_direction(1) for analysis in analyses],
        },
        references=(TR_38_901, SINGLE_BRANCH, worst.target.ul_source, worst.target.dl_source, MRC,
                    "common practice (70 % area share threshold)")
        + ((REDCAP_1RX,) if redcap else ()),
        basis=coverage_basis(context, worst),
    )


def coverage_basis(context: CheckContext, analysis: CoverageAnalysis) -> str:
    """What a coverage finding rests on: `measured` when it used an ECC measured in this product or the main antenna's
    efficiency measured in it, `datasheet` when it used an efficiency from a datasheet, else `design` (the category's
    targets and the assumptions of coverage.toml)."""
    main = next((antenna for antenna in context.cellular_antennas if antenna.transmits), None)
    efficiency_used = main is not None and bool(main.efficiency_pct.get(analysis.band))
    if analysis.ecc_source.startswith("measured") or (efficiency_used and main is not None
                                                       and main.efficiency_source == "measured"):
        return "measured"
    return "datasheet" if efficiency_used else "design"


DEEP_ENVIRONMENTS = ("deep-indoor", "underground")


@rule(
    id="COV-002", added_in="2.0.0", topic="coverage", severities=("note",),
    title="Deep-indoor or underground LTE-M / NB-IoT relies on coverage enhancement the operator must enable",
    rationale=(
        "LTE-M's 155.7 dB and NB-IoT's 164 dB coverage targets lie 15 and 20 dB beyond the legacy coverage they were "
        "set against (TR 36.888, TR 45.820), and the extra comes from repeating transmissions: the deepest of it (CE "
        "mode B for LTE-M, the highest coverage-enhancement level for NB-IoT) only where the operator has enabled it. "
        "A deep-indoor or underground deployment counts on that depth, so it gets a note naming it, with the "
        "coverage budget's margin with and without the enhancement."
    ),
    product_impact=("Deep indoors or underground the product counts on the network repeating its messages, which each "
                    "operator must switch on, and which costs battery and speed."),
    sources=("3GPP TR 36.888 and TR 45.820 (coverage targets, from memory)", TR_38_901,
             "3GPP TS 36.331 (CE mode B, CE levels; from memory)"),
)
def relies_on_coverage_enhancement(context: CheckContext) -> Iterator[Flag]:
    design = context.design
    category = design.modem.category
    enhancement = coverage_data().enhancements.get(category.id)
    environment = design.deployment.environment
    if enhancement is None or environment not in DEEP_ENVIRONMENTS:
        return
    analyses = analyse_coverage(context)
    target_db = analyses[0].target.ul_mcl_db
    enhancement_db = target_db - enhancement.legacy_mcl_db
    judged = [analysis for analysis in analyses if analysis.margin_db(1) is not None]
    evidence: dict[str, object] = {
        "environment": environment, "entry_loss_db": analyses[0].entry_loss_db, "mcl_db": target_db,
        "legacy_mcl_db": enhancement.legacy_mcl_db, "enhancement_db": enhancement_db,
        "band": None, "margin_db": None, "margin_without_enhancement_db": None,
    }
    impact = (f"Used {environment}, the product counts on the network repeating its messages (coverage enhancement, "
              f"worth {enhancement_db:g} dB here) to be reached at all: each operator must have it switched on, and it "
              "makes every exchange slower and costs battery.")
    if judged:
        worst = min(judged, key=lambda analysis: analysis.margin_db(1) or 0.0)
        margin_db = worst.margin_db(1) or 0.0
        evidence |= {"band": worst.band, "margin_db": margin_db, "margin_without_enhancement_db": margin_db - enhancement_db,
                     "reference_distance_km": worst.reference_distance_km, "model": worst.geometry.scenario}
        margins = (f" At {worst.reference_distance_km:g} km by {worst.model_label}, after the {worst.entry_loss_db:g} dB "
                   f"entry loss, the budget leaves {margin_db:+.1f} dB in {worst.band} (the least of the selected bands) "
                   f"with the full target, and {margin_db - enhancement_db:+.1f} dB without the enhancement.")
        impact += (f" By this estimate the margin in {worst.band} is {margin_db:+.1f} dB with it and "
                   f"{margin_db - enhancement_db:+.1f} dB without. Ask the operators before promising deep coverage.")
    else:
        margins = " No selected band lies where TR 38.901 applies, so no margin is shown."
    yield Flag(
        severity="note",
        title=f"{environment.capitalize()} {category.label} relies on coverage enhancement the operator must enable",
        explanation=(
            f"The product is for {environment} use ({analyses[0].entry_loss_db:g} dB entry loss: "
            f"{analyses[0].entry_loss_source}). {category.label}'s {target_db:g} dB coverage target lies "
            f"{enhancement_db:g} dB beyond the {enhancement.legacy_mcl_db:g} dB it was set against ({enhancement.source}); "
            f"it is reached by repeating transmissions, and the deepest of it needs {enhancement.feature}, which the "
            f"operator must enable.{margins} Repetitions also cost battery and latency."
        ),
        action=(f"Ask each operator whether {enhancement.feature.split(' (')[0]} is enabled on the bands and areas the "
                "product needs, and budget battery life for the repetitions deep coverage takes."),
        product_impact=impact,
        evidence=evidence,
        references=(enhancement.source, TR_38_901, "3GPP TS 36.331 (CE mode B, CE levels; from memory)"),
    )
