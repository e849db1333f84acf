"""The steps no checklist replaces. Every design gets these notes."""

from collections.abc import Iterator

from rules.context import CheckContext
from rules.findings import Flag
from rules.registry import rule


@rule(
    id="CRT-001", topic="certification", severities=("note",),
    title="Carrier acceptance still to do",
    rationale="Each operator runs its own acceptance on a device before it may join its network.",
    product_impact="Each operator tests the product before letting it on its network: weeks of lab time and fees.",
    sources=("each operator's device acceptance requirements",),
    needs=("modem.bands",),
)
def carrier_acceptance(context: CheckContext) -> Iterator[Flag]:
    bands = ", ".join(band.name for band in context.design.modem.bands)
    yield Flag(
        severity="note",
        title="Carrier acceptance testing is still to do",
        explanation=(
            "Every operator whose network the product will use runs its own acceptance, usually including "
            f"radiated performance (TRP/TIS) on the bands it operates ({bands} here). This checklist does not "
            "replace it and cannot predict its result."
        ),
        action="Ask each target operator for its device acceptance requirements early, and budget the tests.",
        product_impact=("Before the product may join an operator's network, that operator tests it, including how well "
                        "it sends and receives over the air; plan the weeks and fees per operator in the schedule. The "
                        "operator decides, not this checklist."),
    )


@rule(
    id="CRT-002", topic="certification", severities=("note",),
    title="Industry certification still to do",
    rationale="Operators usually require the device's industry certification (conformance testing) first.",
    product_impact="Industry certification is a fixed step before launch, with lab time and fees of its own.",
    sources=("3GPP TS 36.521-1 / TS 38.521-1 (UE conformance)", "the certification scheme of each region"),
    needs=(),
)
def industry_certification(context: CheckContext) -> Iterator[Flag]:
    yield Flag(
        severity="note",
        title="Industry certification is still to do",
        explanation=(
            "The finished device needs industry certification under the scheme its markets and operators "
            "require, with conformance tests to the 3GPP specifications. A certified module does not certify "
            "the product: the antenna and enclosure are the product's own."
        ),
        action="Book certification with an authorized test lab once the antenna design is frozen.",
        product_impact=("The finished product needs its own industry certification before operators take it; the "
                        "module's certificate does not cover the product's antenna and enclosure. Book lab time once the "
                        "antenna design is frozen, since a later antenna change can mean testing again."),
    )


@rule(
    id="CRT-003", topic="certification", severities=("note",),
    title="Regulatory approval still to do",
    rationale="Each market's regulator must approve the product (radio, EMC, safety, RF exposure).",
    product_impact="The product can't be sold in a market before that market's regulator approves it.",
    sources=("the radio regulation of each market",),
    needs=(),
)
def regulatory_approval(context: CheckContext) -> Iterator[Flag]:
    yield Flag(
        severity="note",
        title="Regulatory approval in each market is still to do",
        explanation=(
            "The product needs regulatory approval in every market it is sold in (radio, EMC, electrical "
            "safety and RF exposure under local rules). Relying on a module's approval is possible only "
            "within its conditions, such as the antenna gain limits. Defer to the regulator, the carrier and "
            "licensed practice."
        ),
        action="Confirm the approval route for each market with a qualified regulatory test house.",
        product_impact=("Each market the product is sold in needs regulatory approval first; building on the module's "
                        "approval saves time only while the design stays within its conditions. The regulator and a "
                        "qualified test house decide the route."),
    )
