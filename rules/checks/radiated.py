"""Radiated estimates (TRP and TIS, rules/radiated.py) against the targets the team copied from its operators.

TRP and TIS are estimated on the main antenna: it carries the uplink, and it is the path a TIS is specified on
(operators test TIS per receive path, diversity off; from memory). A second receive branch is not credited, so
enter the main port's conducted sensitivity from the module's datasheet, not a figure with diversity combined.
"""

from collections.abc import Iterator
from dataclasses import dataclass

from rules.catalog import power_classes
from rules.context import CheckContext
from rules.design import Antenna
from rules.findings import Flag
from rules.radiated import TIS, TRP, efficiency_db, shortfall_db, tis_estimate_dbm, trp_estimate_dbm
from rules.registry import rule

OPERATOR_TEST = "the operator's over-the-air (TRP/TIS) acceptance test"
BUDGETARY = ("The estimate is budgetary: it leaves out what only a chamber shows (the module's and the product's own "
             "noise coupling into the antenna, the hand and head, the power actually delivered), and the operator's "
             "over-the-air test decides.")
EFFICIENCY_RULE = "radiated = conducted scaled by the antenna's total efficiency and the cable loss (common practice)"
WORDS = {TRP: "TRP", TIS: "TIS"}


@dataclass(frozen=True)
class Estimate:
    band: str
    quantity: str
    target_dbm: float
    antenna: Antenna
    conducted_dbm: float  # power class maximum (TRP) or conducted sensitivity (TIS)
    conducted_source: str
    efficiency_pct: float
    estimate_dbm: float | None  # None: 0 % efficient, nothing radiated

    @property
    def shortfall_db(self) -> float | None:
        return shortfall_db(self.quantity, self.estimate_dbm, self.target_dbm)

    @property
    def misses(self) -> bool:
        return self.estimate_dbm is None or (self.shortfall_db or 0.0) > 0.0


@dataclass(frozen=True)
class Missing:
    band: str
    quantity: str
    target_dbm: float
    reason: str


def main_antenna(context: CheckContext) -> Antenna | None:
    return next((antenna for antenna in context.cellular_antennas if antenna.transmits), None)


def estimates(context: CheckContext) -> tuple[list[Estimate], list[Missing]]:
    """Every radiated target the design gives, estimated, or with the reason it can't be (once per evaluation)."""
    if "radiated" not in context.memo:
        context.memo["radiated"] = _estimates(context)
    result: tuple[list[Estimate], list[Missing]] = context.memo["radiated"]
    return result


def _estimates(context: CheckContext) -> tuple[list[Estimate], list[Missing]]:
    design = context.design
    modem = design.modem
    selected = {band.name: band for band in modem.bands}
    main = main_antenna(context)
    power = power_classes()[modem.power_class]
    found: list[Estimate] = []
    missing: list[Missing] = []
    targets = ((TRP, design.deployment.trp_targets_dbm), (TIS, design.deployment.tis_targets_dbm))
    for quantity, by_band in targets:
        for band_name, target_dbm in by_band.items():
            band = selected.get(band_name)
            sensitivity_dbm = modem.conducted_sensitivity_dbm.get(band_name)
            efficiency_pct = main.efficiency_pct.get(band_name) if main else None
            if band is None:
                reason = "not a selected band"
            elif quantity == TRP and not band.has_uplink:
                reason = "a supplemental-downlink band: the product does not transmit in it"
            elif main is None:
                reason = "no main antenna"
            elif efficiency_pct is None:
                reason = f"{main.name}'s efficiency in {band_name} not entered"
            elif quantity == TIS and sensitivity_dbm is None:
                reason = "the module's conducted sensitivity not entered (modem.conducted_sensitivity_dbm)"
            else:
                reason = ""
            if reason:
                missing.append(Missing(band_name, quantity, target_dbm, reason))
                continue
            assert main is not None and efficiency_pct is not None
            if quantity == TRP:
                conducted_dbm, source = power.max_output_dbm, power.source
                estimate_dbm = trp_estimate_dbm(conducted_dbm, efficiency_pct, main.cable_loss_db)
            else:
                assert sensitivity_dbm is not None
                conducted_dbm, source = sensitivity_dbm, "the module's datasheet"
                estimate_dbm = tis_estimate_dbm(conducted_dbm, efficiency_pct, main.cable_loss_db)
            found.append(Estimate(band_name, quantity, target_dbm, main, conducted_dbm, source, efficiency_pct,
                                  estimate_dbm))
    return found, missing


def _efficiency_words(estimate: Estimate) -> str:
    antenna = estimate.antenna
    source = "measured in this product" if antenna.efficiency_source == "measured" else "from its datasheet"
    gain_db = efficiency_db(estimate.efficiency_pct)
    shown = f"{gain_db:+.1f} dB" if gain_db is not None else "nothing radiated"
    return (f"{antenna.name}'s total efficiency in {estimate.band} ({estimate.efficiency_pct:g} %, {shown}, {source}) "
            f"and its {antenna.cable_loss_db:g} dB cable loss")


def _evidence(estimate: Estimate) -> dict[str, object]:
    return {
        "band": estimate.band, "quantity": estimate.quantity, "estimate_dbm": estimate.estimate_dbm,
        "target_dbm": estimate.target_dbm, "shortfall_db": estimate.shortfall_db,
        "conducted_dbm": estimate.conducted_dbm, "efficiency_pct": estimate.efficiency_pct,
        "efficiency_db": efficiency_db(estimate.efficiency_pct), "efficiency_source": estimate.antenna.efficiency_source,
        "cable_loss_db": estimate.antenna.cable_loss_db, "antenna": estimate.antenna.name,
    }


def _basis(estimate: Estimate) -> str:
    return "measured" if estimate.antenna.efficiency_source == "measured" else "datasheet"


def _impact_met(quantity: str, met: list[Estimate]) -> str:
    least_db = min(-(item.shortfall_db or 0.0) for item in met)
    what = "sends" if quantity == TRP else "hears"
    return (f"By this estimate the product {what} well enough for the team's {WORDS[quantity]} targets in "
            f"{', '.join(item.band for item in met)}, with at least {least_db:.1f} dB to spare. The operator's chamber "
            "test still decides, and a change of antenna or enclosure can use up the margin.")


def _impact_missed(item: Estimate) -> str:
    if item.estimate_dbm is None:
        return (f"By this estimate the product {'sends' if item.quantity == TRP else 'hears'} nothing in {item.band} "
                f"(0 % antenna efficiency): it would fail the operator's {WORDS[item.quantity]} test there.")
    if item.quantity == TRP:
        harm = (f"the product sends {item.shortfall_db:.1f} dB less power than the operator's target in {item.band} "
                f"({item.estimate_dbm:.1f} dBm against {item.target_dbm:g} dBm): less uplink range there")
    else:
        harm = (f"the product hears {item.shortfall_db:.1f} dB less well than the operator's target in {item.band} "
                f"({item.estimate_dbm:.1f} dBm against {item.target_dbm:g} dBm): less downlink range there")
    return (f"By this estimate {harm}, and a risk of failing the operator's over-the-air test, which decides. Most of "
            "the fix is in the antenna's efficiency.")


def _summary_note(quantity: str, met: list[Estimate]) -> Flag:
    worst = max(met, key=lambda item: item.shortfall_db or 0.0)  # the least margin
    word = WORDS[quantity]
    listed = ", ".join(f"{item.band} {item.estimate_dbm:.1f} dBm against {item.target_dbm:g} dBm" for item in met)
    return Flag(
        severity="note",
        title=f"Estimated {word} meets the team's targets in {', '.join(item.band for item in met)}",
        explanation=(f"Estimated {word} on {worst.antenna.name}: {listed}; the least margin is "
                     f"{-(worst.shortfall_db or 0.0):.1f} dB in {worst.band}. {BUDGETARY}"),
        action=f"Keep the margins in mind when the antenna or enclosure changes; plan the chamber test before {OPERATOR_TEST}.",
        product_impact=_impact_met(quantity, met),
        subjects=(worst.antenna.name,),
        evidence=_evidence(worst) | {"bands": [item.band for item in met],
                                     "estimates_dbm": [item.estimate_dbm for item in met],
                                     "targets_dbm": [item.target_dbm for item in met]},
        references=(OPERATOR_TEST, EFFICIENCY_RULE, worst.conducted_source),
        basis="measured" if all(_basis(item) == "measured" for item in met) else "datasheet",
    )


def _warning(context: CheckContext, item: Estimate) -> Flag:
    """A band whose estimate misses its target, in the words of its quantity."""
    word = WORDS[item.quantity]
    antenna, band = item.antenna.name, item.band
    if item.estimate_dbm is None:
        verb = "radiates" if item.quantity == TRP else "receives"
        title = f"{antenna} {verb} nothing in {band}: {word} target {item.target_dbm:g} dBm missed"
        result = f"nothing at 0 % efficiency, against the {item.target_dbm:g} dBm target"
    else:
        title = f"Estimated {word} in {band}: {item.estimate_dbm:.1f} dBm against a {item.target_dbm:g} dBm target"
        result = (f"about {item.estimate_dbm:.1f} dBm, {item.shortfall_db:.1f} dB "
                  f"{'short of' if item.quantity == TRP else 'worse than'} the {item.target_dbm:g} dBm target")
    if item.quantity == TRP:
        explanation = (f"From the module's maximum conducted output ({item.conducted_dbm:g} dBm for power class "
                       f"{context.design.modem.power_class}), {_efficiency_words(item)}, the product radiates {result} "
                       f"the team copied from its operator's requirements for {band}. {BUDGETARY}")
        action = (f"Raise {antenna}'s efficiency in {band} (placement, ground clearance, matching) or shorten its "
                  f"feed, then measure TRP in a chamber before {OPERATOR_TEST}.")
        extra: dict[str, object] = {"power_class": context.design.modem.power_class}
    else:
        explanation = (f"From the module's conducted sensitivity in {band} ({item.conducted_dbm:g} dBm, "
                       f"{item.conducted_source}), {_efficiency_words(item)}, the product's sensitivity over the air is "
                       f"{result} the team copied from its operator's requirements. It is estimated on the main "
                       f"antenna's path alone, as TIS is specified (no diversity gain counted). {BUDGETARY}")
        action = (f"Raise {antenna}'s efficiency in {band}, shorten its feed, and look for the product's own noise near "
                  "the antenna (clocks, displays, switching supplies); then measure TIS in a chamber before "
                  f"{OPERATOR_TEST}.")
        extra = {}
    return Flag(
        severity="warning", title=title, explanation=explanation, action=action, product_impact=_impact_missed(item),
        subjects=(antenna, band),
        evidence=_evidence(item) | extra, references=(item.conducted_source, EFFICIENCY_RULE, OPERATOR_TEST),
        basis=_basis(item),
    )


def _judged(context: CheckContext, quantity: str) -> Iterator[Flag]:
    """A warning for every band of this quantity that misses its target, one note for those that meet theirs."""
    found = [item for item in estimates(context)[0] if item.quantity == quantity]
    for item in found:
        if item.misses:
            yield _warning(context, item)
    met = [item for item in found if not item.misses]
    if met:
        yield _summary_note(quantity, met)


@rule(
    id="OTA-001", added_in="2.0.0", topic="ota", severities=("warning", "note"),
    title="Estimated TRP below the team's target in a band",
    rationale=(
        "Total radiated power is what the operator measures of the uplink in a chamber. Estimated as the power "
        "class's maximum conducted output, plus 10 log10 of the main antenna's total efficiency in the band, less its "
        "cable loss: a warning for each band below the target the team copied from its operator's requirements, one "
        "note for the bands that meet theirs. Budgetary: the operator's over-the-air test decides."
    ),
    product_impact=("An estimated radiated power below the operator's target means a risk of failing its over-the-air "
                    "test and less uplink range; the chamber test decides."),
    sources=("3GPP TS 36.101 clause 6.2.2 / TS 38.101-1 clause 6.2.1 (power classes)", EFFICIENCY_RULE,
             OPERATOR_TEST),
    needs=("antennas", "modem.bands", "modem.category", "modem.power_class", "modem.conducted_sensitivity_dbm",
           "deployment.radiated_targets_dbm", "antennas[].efficiency_pct", "antennas[].efficiency_source",
           "antennas[].cable_loss_db", "measurements"),
)
def trp_below_target(context: CheckContext) -> Iterator[Flag]:
    yield from _judged(context, TRP)


@rule(
    id="OTA-002", added_in="2.0.0", topic="ota", severities=("warning", "note"),
    title="Estimated TIS worse than the team's target in a band",
    rationale=(
        "Total isotropic sensitivity is the weakest signal the product receives over the air, averaged over the "
        "sphere; lower is better. Estimated on the main antenna as the module's conducted sensitivity in the band, "
        "less 10 log10 of that antenna's total efficiency, plus its cable loss: a warning for each band above (worse "
        "than) the team's target, one note for the bands that meet theirs. TIS is specified on the main port (operators "
        "test it per receive path, diversity off; from memory), so no second branch is credited. The product's own "
        "noise coupling into the antenna (desense) only makes the measured TIS worse. Budgetary: the operator's "
        "over-the-air test decides."
    ),
    product_impact=("An estimated sensitivity worse than the operator's target means a risk of failing its over-the-air "
                    "test and less downlink range; the chamber test decides."),
    sources=("the module's datasheet (conducted sensitivity)", EFFICIENCY_RULE, OPERATOR_TEST),
    needs=("antennas", "modem.bands", "modem.category", "modem.power_class", "modem.conducted_sensitivity_dbm",
           "deployment.radiated_targets_dbm", "antennas[].efficiency_pct", "antennas[].efficiency_source",
           "antennas[].cable_loss_db", "measurements"),
)
def tis_above_target(context: CheckContext) -> Iterator[Flag]:
    yield from _judged(context, TIS)


@rule(
    id="OTA-003", added_in="2.0.0", topic="ota", severities=("note",),
    title="Radiated targets given, but not what the estimate needs",
    rationale=(
        "A TRP estimate needs the main antenna's efficiency in the band; a TIS estimate also the module's conducted "
        "sensitivity there. A target for a band that is not selected, or a TRP target for a supplemental-downlink "
        "band (nothing is transmitted in it), can't be judged."
    ),
    product_impact="A radiated target that can't be estimated leaves the operator's over-the-air test unforeseen there.",
    sources=("common practice",),
    needs=("antennas", "modem.bands", "modem.category", "modem.power_class", "modem.conducted_sensitivity_dbm",
           "deployment.radiated_targets_dbm", "antennas[].efficiency_pct", "antennas[].efficiency_source",
           "antennas[].cable_loss_db", "measurements"),
)
def radiated_inputs_missing(context: CheckContext) -> Iterator[Flag]:
    missing = estimates(context)[1]
    if not missing:
        return
    listed = "; ".join(f"{WORDS[item.quantity]} in {item.band}: {item.reason}" for item in missing)
    first = missing[0]
    yield Flag(
        severity="note",
        title=f"{len(missing)} radiated target(s) not estimated",
        explanation=f"The design gives radiated targets that can't be estimated: {listed}.",
        action=("Enter the main antenna's total efficiency per band and the module's conducted sensitivity per band "
                "(from their datasheets, or measured), or remove targets for bands the product does not use."),
        product_impact=(f"{len(missing)} of the radiated targets the team entered can't be checked yet, so how the "
                        "product would do in the operator's over-the-air test there is not foreseen."),
        evidence={"band": first.band, "quantity": first.quantity, "estimate_dbm": None, "target_dbm": first.target_dbm,
                  "missing": [[item.quantity, item.band, item.reason] for item in missing]},
    )
