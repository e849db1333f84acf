"""What a single receive antenna costs in coverage when the modem could use two."""

from collections.abc import Iterator

from rules.context import CheckContext
from rules.coverage import (
    MODEL_LABELS,
    MODEL_SOURCES,
    CoverageAnalysis,
    analyse_coverage,
    hata_distance_slope_db_per_decade,
)
from rules.findings import Flag
from rules.registry import rule

# Warn when one antenna covers less than this share of the area two antennas cover. Covered area goes
# with the square of the range, so 70 % means about 1.43 times the base stations for the same area, or
# 30 % of the two-antenna area left uncovered (common practice: cell area ~ range^2). At the Hata distance
# slope for a 30 m mast (35.2 dB per decade) 70 % is 2.7 dB, just under the 3.0 dB array gain an equally
# efficient second antenna brings even without fading. So for such an antenna the warning stands on the
# array gain alone, whatever share of the fading diversity the channel coding recovers. Only a second
# antenna both much less efficient than the first and strongly correlated with it adds less.
AREA_SHARE_WARNING_RATIO = 0.70

MRC = "maximal-ratio combining of two Rayleigh-fading branches, exact outage with correlated branches"


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
    if analysis.range_one_km is not None and analysis.range_two_km is not None:
        return (f"By {MODEL_LABELS[analysis.model]} ({analysis.area}, {analysis.base_height_m:g} m mast, "
                f"device at {analysis.mobile_height_m:g} m) one antenna reaches about "
                f"{analysis.range_one_km:.1f} km against {analysis.range_two_km:.1f} km with two.")
    if not analysis.empirical:
        return analysis.range_note or ""
    model = MODEL_LABELS[analysis.model]
    return f"Path loss by {model} ({analysis.area}). {analysis.range_note or ''}".rstrip()


@rule(
    id="COV-001", topic="coverage", severities=("warning", "note"),
    title="One receive antenna where the modem can use two: the coverage it costs",
    rationale=(
        "A second receive antenna adds the array gain of maximal-ratio combining (3 dB for two equally "
        "efficient antennas) and a diversity gain against Rayleigh fading (several dB more at 1 % outage, "
        "less the more correlated the antennas are). The downlink budget of each band, from the category's "
        "coverage target through an Okumura-Hata path-loss model, turns that gain into range and covered "
        "area. A warning when one antenna covers less than 70 % of the two-antenna area: 1.43 times the "
        "base stations for the same area, and at the Hata distance slope for a 30 m mast (35.2 dB per "
        "decade) about 2.7 dB, just under the 3 dB array gain of an equally efficient second antenna "
        "alone, so the warning does not rest on the fading statistics. Otherwise, or where only free space "
        "applies (above 2000 MHz), a note. Only for categories or modules that can use two receive "
        "antennas; designs that fit two lose nothing."
    ),
    sources=(
        MODEL_SOURCES["okumura-hata"], MODEL_SOURCES["cost231-hata"], MODEL_SOURCES["free-space"],
        "3GPP TR 36.888 and TR 45.820 (coverage targets)", MRC,
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
    judged = [analysis for analysis in analyses if analysis.empirical]
    worst = min(judged or analyses, key=lambda analysis: analysis.area_share_ratio)
    warn = bool(judged) and worst.area_share_ratio < AREA_SHARE_WARNING_RATIO
    category = design.modem.category
    gain = worst.gain
    share_pct = worst.area_share_pct
    gain_text = (
        f"A second receive antenna would add {gain.total_db:.1f} dB in {worst.band} "
        f"({worst.frequency_mhz:g} MHz): {gain.array_gain_db:.1f} dB array gain and "
        f"{gain.diversity_gain_db:.1f} dB diversity gain at {100 * gain.outage_probability:g} % outage, "
        f"with envelope correlation {gain.ecc:.2f} ({worst.ecc_source}) and {gain.efficiency_ratio:.2f} "
        f"times the first antenna's efficiency ({worst.efficiency_source})."
    )
    basis = (
        f"The budget starts from the {worst.target.mcl_db:.1f} dB coverage target of {category.label} "
        f"({worst.target.source}), adds {worst.base_gain_db:g} dB of base-station antenna gain and takes off "
        f"{worst.entry_loss_db:g} dB entry loss for {worst.environment} use ({worst.entry_loss_source}). "
        "These are estimates for comparison, not a coverage prediction: the operator's network and its "
        "acceptance testing decide what the product gets."
    )
    if not judged:
        extra = (f" None of the bands lies where an Okumura-Hata model applies ({worst.model_reason}), so "
                 "this is only a note.")
    elif warn:
        extra = ""
    else:
        extra = f" That is above the {100 * AREA_SHARE_WARNING_RATIO:.0f} % this rule warns below."
    if worst.empirical:
        slope_db = hata_distance_slope_db_per_decade(worst.base_height_m)
        slope_note = (f" At {slope_db:.1f} dB per decade of distance the single antenna covers "
                      f"{share_pct:.0f} % of the two-antenna area.")
    else:
        slope_note = f" At that slope the single antenna covers {share_pct:.0f} % of the two-antenna area."
    yield Flag(
        severity="warning" if warn else "note",
        title=(f"One receive antenna covers about {share_pct:.0f} % of the two-antenna area "
               f"({worst.band}, {gain.total_db:.1f} dB less)"),
        explanation=(
            f"{category.label} can use two receive antennas; the design connects {context.rx_connected}. "
            f"{gain_text} {_range_text(worst)}{slope_note}{extra} {basis}"
        ),
        action=(
            "Fit the second receive antenna (spaced and polarized to keep the envelope correlation low), or "
            "accept the smaller coverage knowingly: confirm with each operator that it is acceptable, and "
            "plan for installations closer to the base station or with external antennas."
        ),
        evidence={
            "band": worst.band,
            "frequency_mhz": worst.frequency_mhz,
            "area_share_pct": share_pct,
            "range_one_km": worst.range_one_km,
            "range_two_km": worst.range_two_km,
            "second_antenna_gain_db": gain.total_db,
            "array_gain_db": gain.array_gain_db,
            "diversity_gain_db": gain.diversity_gain_db,
            "outage_pct": 100 * gain.outage_probability,
            "ecc": gain.ecc,
            "ecc_source": worst.ecc_source,
            "efficiency_ratio": gain.efficiency_ratio,
            "model": worst.model,
            "area": worst.area,
            "mcl_db": worst.target.mcl_db,
            "base_gain_db": worst.base_gain_db,
            "entry_loss_db": worst.entry_loss_db,
            "environment": worst.environment,
            "margin_one_db": worst.margin_one_db,
            "margin_two_db": worst.margin_two_db,
            "reference_distance_km": worst.reference_distance_km,
            "area_share_threshold_pct": 100 * AREA_SHARE_WARNING_RATIO,
            "bands": [analysis.band for analysis in analyses],
            "area_shares_pct": [analysis.area_share_pct for analysis in analyses],
        },
        references=(MODEL_SOURCES[worst.model], worst.target.source, MRC,
                    "common practice (70 % area share threshold)"),
    )
