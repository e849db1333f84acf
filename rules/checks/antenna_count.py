"""How many antennas the category needs against how many the design fits."""

from collections.abc import Iterator

from rules.context import CheckContext
from rules.findings import Flag
from rules.registry import rule

TS_36_306 = "3GPP TS 36.306 Table 4.1-1"
TS_38_300 = "3GPP TS 38.300 §16.13"
REDCAP_1RX = "3GPP TS 38.331 cellBarredRedCap1Rx (Rel-17 SIB1)"


def _count(number: int, noun: str) -> str:
    return f"{number} {noun}" if number == 1 else f"{number} {noun}s"


@rule(
    id="CNT-001", changed_in="2.0.0", topic="antenna-count", severities=("blocker", "warning"),
    title="Fewer receive antennas than the category requires",
    rationale=(
        "Cat 1 is specified with two receive antennas (receive diversity) and Cat 4 and up with two for "
        "two-layer MIMO; a RedCap module declares one or two receive branches. With one antenna a Cat 1 "
        "device may run only where an operator has approved it, and it still loses the diversity gain; "
        "Cat 4 and up have no single-antenna exception."
    ),
    product_impact=(
        "A product with fewer antennas than its modem type expects either fails the operators' acceptance tests or "
        "hears the network less well at the edge of coverage; fitting an antenna late means new space in the "
        "enclosure and a board change."
    ),
    sources=(TS_36_306, TS_38_300, "3GPP TS 36.101 §7 (receiver requirements with two antenna ports)"),
    needs=("modem.category", "modem.rx_ports", "antennas", "modem.operator_single_antenna_approval"),
)
def too_few_receive_antennas(context: CheckContext) -> Iterator[Flag]:
    design = context.design
    category = design.modem.category
    required = context.rx_required
    fitted = context.rx_connected
    if fitted >= required:
        return
    approved = design.modem.operator_single_antenna_approval
    ports_note = ""
    if design.modem.rx_ports is not None and len(context.cellular_antennas) > fitted:
        ports_note = f" The module has {design.modem.rx_ports} receive port(s), so only {fitted} antenna(s) connect."
    evidence = {"required": required, "fitted": fitted, "operator_approval": approved}
    references = (category.reference,)
    if category.single_antenna == "operator" and approved and fitted == 1:
        yield Flag(
            severity="warning",
            title=f"{category.label} with one antenna, on an operator's approval",
            explanation=(
                f"{category.label} is specified with {required} receive antennas; the design fits {fitted}. "
                "An operator has approved single-antenna operation, so the device may be accepted on that "
                "network, but it loses receive diversity (about 3-5 dB of downlink at the cell edge in 3GPP's "
                "single-receive-branch evaluations) and another "
                f"operator may refuse it.{ports_note}"
            ),
            action=(
                "Keep the operator's written approval with the design record, and confirm each further "
                "operator's position before committing; fit the second antenna if any of them require it."
            ),
            product_impact=(
                "The product may launch on the operator that approved one antenna, but it hears the network about "
                "3-5 dB worse at the edge of coverage than a two-antenna device (more weak spots indoors and in "
                "basements), and each further operator may refuse it: that limits where it can be sold."
            ),
            evidence=evidence,
            references=references,
        )
        return
    if category.single_antenna == "never":
        reason = (f"{category.label} uses {category.dl_layers}-layer MIMO on the downlink and has no "
                  "single-antenna exception.")
        impact = (f"As designed the product can't pass operator acceptance: {category.label} is tested with "
                  f"{required} antennas and has no one-antenna exception, and with {fitted} it would not reach the "
                  "speeds the module is bought for. Fitting another antenna changes the enclosure and the board, so it "
                  "is cheapest now.")
    elif category.single_antenna == "operator":
        reason = ("No operator approval for single-antenna operation is recorded, and without one "
                  "carriers reject the device in acceptance testing.")
        impact = (f"As designed, operators will refuse the product in acceptance testing: {category.label} is "
                  f"tested with {required} antennas. Either fit the second antenna, get a written one-antenna "
                  "approval from each operator (the product then still hears the network less well), or choose a "
                  "one-antenna modem type.")
    elif category.single_antenna == "module":
        reason = "Each declared branch needs its own antenna."
        impact = (f"The module expects {required} receive antennas and the design has {fitted}: either the product "
                  "misses the module's rated performance, or the module is set up as a one-antenna device, which "
                  "some operators keep off their cells. Decide with the operators before the enclosure is fixed.")
    else:
        reason = "Every cellular device needs at least one antenna for transmit and receive."
        impact = "Without a cellular antenna the product can't connect to any network at all."
    other_radios = [antenna.name for antenna in design.antennas if not antenna.is_cellular]
    if other_radios:
        reason += (f" {', '.join(other_radios)} serve{'s' if len(other_radios) == 1 else ''} another radio "
                   "(GNSS or WLAN) and count for none of them.")
    if category.single_antenna == "module":
        specified = f"The {category.label} module declares {required} receive branch(es); the design fits {fitted}."
        remedy = (f"Add receive antenna(s) until {required} reach the module's receive ports, or configure the "
                  "module for one receive branch (RedCap with 1 Rx) if its coverage and throughput suffice; "
                  "operators may bar one-branch RedCap devices from a cell, so check with each.")
    else:
        specified = f"{category.label} is specified with {required} receive antenna(s)."
        remedy = (f"Add receive antenna(s) until {required} reach the module's receive ports, or choose a "
                  "single-receive category (Cat 1bis, LTE-M, NB-IoT) if the throughput allows it.")
    yield Flag(
        severity="blocker",
        title=f"{category.label} needs {required} receive antenna(s); {fitted} fitted",
        explanation=f"{specified} {reason}{ports_note}",
        action=remedy,
        product_impact=impact,
        evidence=evidence,
        references=references,
    )


@rule(
    id="CNT-002", changed_in="2.0.0", topic="antenna-count", severities=("blocker",),
    title="No main (transmit and receive) antenna",
    rationale="The module transmits through its main port; a design of only receive antennas cannot attach.",
    product_impact="Without an antenna on the modem's transmit port the product can't send anything to the network.",
    sources=(TS_36_306,),
    needs=("antennas",),
)
def no_main_antenna(context: CheckContext) -> Iterator[Flag]:
    antennas = context.cellular_antennas
    if antennas and not any(antenna.transmits for antenna in antennas):
        yield Flag(
            severity="blocker",
            title="No antenna has the main (transmit and receive) role",
            explanation=(
                "Every cellular antenna in the design is receive-only, so nothing is connected to the module's main "
                "port, which carries the uplink."
            ),
            action="Set the role of the antenna on the module's main port to 'main'.",
            product_impact=("As entered, the product could receive but never send, so it would not connect. This is "
                            "often only a role entered wrongly: check which antenna sits on the module's main port."),
            subjects=tuple(antenna.name for antenna in antennas),
            evidence={"required": 1, "fitted": 0},
        )


@rule(
    id="CNT-003", changed_in="2.0.0", topic="antenna-count", severities=("note",),
    title="Antennas the modem won't use",
    rationale=(
        "A single-receive category (NB-IoT, LTE-M, Cat 1bis) uses one antenna; a module uses as many as it "
        "has receive ports. Extra antennas cost space and money without improving the link. GNSS and WLAN "
        "antennas serve other radios and are not counted."
    ),
    product_impact="Antennas the modem can't use add cost, space and assembly steps without improving coverage.",
    sources=(TS_36_306,),
    needs=("modem.category", "modem.rx_ports", "antennas"),
)
def unused_antennas(context: CheckContext) -> Iterator[Flag]:
    antennas = context.cellular_antennas
    usable = context.rx_usable
    if len(antennas) <= usable:
        return
    extras = [antenna.name for antenna in antennas if not antenna.transmits][: len(antennas) - usable]
    category = context.design.modem.category
    yield Flag(
        severity="note",
        title=f"{len(antennas)} cellular antennas fitted; the modem uses {usable}",
        explanation=(
            f"{category.label} with this module uses {usable} receive path(s); the design fits "
            f"{len(antennas)} cellular antennas, so {', '.join(extras) or 'some of them'} will not be connected to a "
            "receive port."
        ),
        action="Remove the extra antenna(s), or record what else they serve (another radio, a future module).",
        product_impact=(f"{_count(len(antennas) - usable, 'antenna')} would sit unused: cost, space and assembly "
                        "without better coverage. Nothing here stands in the way of approval; it is a saving to "
                        "consider."),
        subjects=tuple(extras),
        evidence={"required": usable, "fitted": len(antennas)},
    )


@rule(
    id="CNT-004", added_in="2.0.0", topic="antenna-count", severities=("note",),
    title="RedCap with one receive branch: operators can bar such devices",
    rationale=(
        "A RedCap device tells the network how many receive branches it has, and each cell broadcasts whether it "
        "admits RedCap devices with one (TS 38.331 cellBarredRedCap1Rx): an operator may bar them while admitting two-"
        "branch ones, for the coverage and capacity a branch costs. Every RedCap design that runs one receive branch "
        "(a one-port module, or one cellular antenna connected) gets this note, whatever else it is flagged for."
    ),
    product_impact=("Operators decide whether one-antenna RedCap devices may use their cells, and some may keep them "
                    "off: a question to settle with each operator before committing to one antenna."),
    sources=(REDCAP_1RX, TS_38_300),
    needs=("modem.category", "modem.rx_ports", "antennas"),
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
        product_impact=("Each operator decides whether one-antenna RedCap devices may use its cells, and some may keep "
                        "them off where they admit two-antenna ones. Confirm with every target operator before committing "
                        "to one antenna; a second antenna removes the question."),
        evidence={"required": context.rx_required, "fitted": context.rx_connected, "rx_branches": 1,
                  "rx_ports": modem.rx_ports},
        references=(REDCAP_1RX, TS_38_300),
    )
