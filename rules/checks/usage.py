"""How the product is used near people: the RF exposure evaluation it will need."""

from collections.abc import Iterator

from rules.context import CheckContext
from rules.findings import Flag
from rules.registry import rule

EXPOSURE_DISTANCE_MM = 200.0  # common practice: evaluation usually needed within 20 cm in normal use

DEFERENCE = (
    "RF exposure limits and the evaluation method are set by the regulator of each market; the evaluation "
    "is done by a qualified test house. This checklist does not assess exposure."
)


@rule(
    id="RFX-001", topic="rf-exposure", severities=("note",),
    title="People within 200 mm in normal use: RF exposure evaluation",
    rationale=(
        "Within about 20 cm of a transmitting antenna most regulators require an RF exposure evaluation "
        "(SAR or power density) rather than a simple distance statement."
    ),
    product_impact=("A product used close to people usually needs an RF exposure evaluation before sale: a test with "
                    "its own time and cost, and limits set by each market's regulator."),
    sources=("common practice (20 cm exposure distance)", "local RF exposure regulation"),
    needs=("deployment.body_distance_mm",),
)
def people_close(context: CheckContext) -> Iterator[Flag]:
    distance_mm = context.design.deployment.body_distance_mm
    if distance_mm is None or distance_mm >= EXPOSURE_DISTANCE_MM:
        return
    yield Flag(
        severity="note",
        title=f"People within {distance_mm:g} mm in normal use: plan an RF exposure evaluation",
        explanation=(
            f"The product is used {distance_mm:g} mm from people, closer than {EXPOSURE_DISTANCE_MM:g} mm. "
            + DEFERENCE
        ),
        action=(
            "Plan an RF exposure evaluation with an accredited test house under the rules of each market; "
            "keep transmitting antennas as far from the body as the design allows."
        ),
        product_impact=(
            f"Because people come within {distance_mm:g} mm of the product, expect most markets to require an RF "
            "exposure evaluation before sale: plan its time and cost. Whether the product meets the limits is for the "
            "regulator and an accredited test house to decide; keeping the antenna away from where the body rests "
            "makes it easier."
        ),
        evidence={"body_distance_mm": distance_mm, "threshold_mm": EXPOSURE_DISTANCE_MM},
    )


@rule(
    id="RFX-002", topic="rf-exposure", severities=("note",),
    title="Distance to people not given: RF exposure undetermined",
    rationale="Whether an exposure evaluation is needed depends on how close people come in normal use.",
    product_impact="How close people come decides whether an RF exposure evaluation is on the plan before sale.",
    sources=("common practice", "local RF exposure regulation"),
    needs=("deployment.body_distance_mm",),
)
def distance_unknown(context: CheckContext) -> Iterator[Flag]:
    if context.design.deployment.body_distance_mm is None:
        yield Flag(
            severity="note",
            title="Closest distance to people not given",
            explanation="The design does not say how close people come in normal use. " + DEFERENCE,
            action="Enter the closest distance between the product and a person in normal use.",
            product_impact=("Whether the product needs an RF exposure evaluation before sale is still open: entering how "
                            "close people come in normal use settles whether that test belongs on the plan."),
            evidence={"body_distance_mm": None, "threshold_mm": EXPOSURE_DISTANCE_MM},
        )
