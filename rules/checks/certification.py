"""The steps no checklist replaces. Every design gets these notes."""

from collections.abc import Iterator

from rules.context import CheckContext
from rules.findings import Flag
from rules.registry import rule

REDCAP_1RX = "3GPP TS 38.331 cellBarredRedCap1Rx (Rel-17 SIB1)"
TS_38_300 = "3GPP TS 38.300 §16.13"


@rule(
    id="CRT-001", topic="certification", severities=("note",),
    title="Carrier acceptance still to do",
    rationale="Each operator runs its own acceptance on a device before it may join its network.",
    sources=("each operator's device acceptance requirements",),
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
    )


@rule(
    id="CRT-002", topic="certification", severities=("note",),
    title="Industry certification still to do",
    rationale="Operators usually require the device's industry certification (conformance testing) first.",
    sources=("3GPP TS 36.521-1 / TS 38.521-1 (UE conformance)", "the certification scheme of each region"),
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
    )


@rule(
    id="CRT-003", topic="certification", severities=("note",),
    title="Regulatory approval still to do",
    rationale="Each market's regulator must approve the product (radio, EMC, safety, RF exposure).",
    sources=("the radio regulation of each market",),
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
    )


@rule(
    id="CRT-004", added_in="2.0.0", topic="certification", severities=("note",),
    title="RedCap with one receive branch: operators can bar such devices",
    rationale=(
        "A RedCap device tells the network how many receive branches it has, and each cell broadcasts whether it "
        "admits RedCap devices with one (TS 38.331 cellBarredRedCap1Rx): an operator may bar them while admitting two-"
        "branch ones, for the coverage and capacity a branch costs. Every RedCap design that runs one receive branch "
        "(a one-port module, or one cellular antenna connected) gets this note, whatever else it is flagged for."
    ),
    sources=(REDCAP_1RX, TS_38_300),
)
def redcap_one_branch(context: CheckContext) -> Iterator[Flag]:
    modem = context.design.modem
    if modem.category.single_antenna != "module":
        return
    if modem.rx_ports != 1 and context.rx_connected != 1:
        return
    why = ("the module has one receive port" if modem.rx_ports == 1 else
           "one cellular antenna reaches the module's receive ports")
    yield Flag(
        severity="note",
        title="RedCap with one receive branch: operators can bar 1Rx devices from a cell",
        explanation=(
            f"The design runs {modem.category.label} with one receive branch ({why}). Each cell broadcasts whether it "
            f"admits RedCap devices with one receive branch ({REDCAP_1RX}); an operator may bar them where it admits "
            "two-branch ones, and a barred device can't camp on that cell at all."
        ),
        action=("Confirm with each target operator that it admits 1Rx RedCap devices on the bands and in the areas the "
                "product needs, or fit a second receive branch."),
        evidence={"rx_branches": 1, "rx_ports": modem.rx_ports, "cellular_antennas_connected": context.rx_connected},
        references=(REDCAP_1RX, TS_38_300),
    )
