"""Where the antennas sit: spacing and polarization between receive antennas, the ground plane they
work against, the enclosure around them, and the size-bandwidth limit of the whole device."""

from collections.abc import Iterator
from dataclasses import dataclass
from itertools import combinations
from typing import Any

from rules import physics
from rules.context import CheckContext, merge_ranges
from rules.correlation import BLANCH, VAUGHAN_ANDERSEN, pair_correlations, pair_isolations
from rules.design import Antenna
from rules.findings import Flag
from rules.registry import rule

WHEELER = "Wheeler, Proc. IRE 47(8), 1959 (radiansphere, lambda/2pi)"
CROSS_POLARIZED_DEG = 45.0  # axes at least this far apart count as cross-polarized (design.md policy)
ECC_LIMIT = 0.5  # design.md rule set 2: a measurement clears the spacing rule at ECC <= 0.5 ...
ISOLATION_LIMIT_DB = 10.0  # ... and, where S-parameters of the pair exist, isolation >= 10 dB
MIN_EFFICIENCY_PCT = 25.0  # ... and the ground-length rule at measured efficiency >= 25 %
ENCLOSURE_TOLERANCE_MM = 1.0  # a feed more than this outside the enclosure box is flagged (design.md)


def outside_enclosure_mm(context: CheckContext, antenna: Antenna) -> float:
    """How far an internal antenna's feed lies outside the enclosure box [0, size] (origin at a corner), beyond
    the 1 mm tolerance; 0 when inside, external, or when the position or the enclosure size is not given."""
    size = context.design.enclosure_size_mm
    if antenna.mounting != "internal" or antenna.position_mm is None or size is None:
        return 0.0
    excess = max(max(-coordinate, coordinate - extent) for coordinate, extent in zip(antenna.position_mm, size,
                                                                                      strict=True))
    return excess if excess > ENCLOSURE_TOLERANCE_MM else 0.0


@rule(
    id="SEP-001", changed_in="2.0.0", topic="separation", severities=("blocker", "warning", "note"),
    title="Receive antennas too close for the lowest frequency",
    rationale=(
        "Inside the reactive near field (lambda/2pi) of one antenna a second one is coupled through the "
        "stored field: isolation and correlation suffer and transmit power is lost into the other port. A "
        "quarter wave apart is the usual minimum. Orthogonal polarization decouples the pair, but that help "
        "fades when they are very close. Judged at the lowest frequency of operation, where the wavelength "
        "is longest. Geometry is a prediction: where a trustworthy measurement of the pair in the band that sets "
        "that frequency shows ECC of at most 0.5 over its downlink (and, where S-parameters of the pair exist, "
        "isolation of at least 10 dB), the measurement decides and the finding is a note."
    ),
    product_impact=(
        "Two receive antennas placed too close act partly as one: the product gets less of the range and speed the "
        "second antenna is there for, and operators' over-the-air tests get harder. Moving an antenna is a "
        "mechanical change, cheapest before the enclosure is fixed."
    ),
    sources=(WHEELER, "common practice (quarter-wave minimum spacing)", "3GPP TS 36.101 Table 5.5-1",
             "design.md rule set 2 (measurement outranks geometry)"),
    needs=("modem.category", "modem.rx_ports", "antennas", "modem.bands", "antennas[].position_mm",
           "antennas[].polarization", "antennas[].mounting", "enclosure.size_mm", "measurements",
           "antennas[].ranges_mhz", "antennas[].efficiency_pct"),
)
def receive_antennas_too_close(context: CheckContext) -> Iterator[Flag]:
    if context.rx_usable < 2:
        return
    frequency_mhz = context.lowest_mhz
    near_field_mm = physics.near_field_radius_mm(frequency_mhz)
    quarter_wave_mm = physics.quarter_wave_mm(frequency_mhz)
    for first, second, distance_mm, angle_deg, known in _placed_pairs(context):
        cross = angle_deg >= CROSS_POLARIZED_DEG
        if distance_mm < near_field_mm:
            severity = "warning" if cross else "blocker"
            zone = f"inside the reactive near field ({near_field_mm:.1f} mm = λ/2π)"
        elif distance_mm < quarter_wave_mm:
            severity = "note" if cross else "warning"
            zone = f"outside the near field but closer than a quarter wave ({quarter_wave_mm:.1f} mm)"
        else:
            continue
        polarization = (f"{angle_deg:.0f} degrees apart ({'cross' if cross else 'co'}-polarized)" if known
                        else "of unknown polarization, so taken as co-polarized")
        geometry = (
            f"At {frequency_mhz:g} MHz (lowest edge of {context.lowest_band.name}) the wavelength is "
            f"{physics.wavelength_mm(frequency_mhz):.1f} mm. The feed points are {distance_mm:.1f} mm apart, "
            f"{zone}, and the antennas are {polarization}."
        )
        outside = [antenna.name for antenna in (first, second) if outside_enclosure_mm(context, antenna) > 0]
        if outside:
            geometry += (f" {' and '.join(outside)}'s feed point lies outside the enclosure (see ENC-002), so the "
                         "distance itself is in doubt.")
        evidence = {
            "frequency_mhz": frequency_mhz,
            "distance_mm": distance_mm,
            "quarter_wave_mm": quarter_wave_mm,
            "near_field_mm": near_field_mm,
            "polarization_angle_deg": angle_deg,
            "polarization_known": known,
            "distance_wavelengths": distance_mm / physics.wavelength_mm(frequency_mhz),
        }
        verdict = _measured_verdict(context, first.name, second.name)
        if verdict.cleared:
            yield Flag(
                severity="note",
                title=(f"{first.name} and {second.name} are {distance_mm:.0f} mm apart at {frequency_mhz:g} MHz; "
                       "measured decorrelated"),
                explanation=(
                    f"{geometry} On geometry alone the spacing rule makes this a {severity}. {verdict.text} The "
                    "measurement outranks the spacing rule: measured in this product beats the geometry's "
                    "prediction."
                ),
                action=("Keep the measured layout: a change of antenna, position or enclosure needs a new "
                        "measurement."),
                product_impact=(f"Although the antennas are only {distance_mm:.0f} mm apart, a measurement of this "
                                "product shows they work independently enough: no loss of range is expected from their "
                                "spacing. Changing an antenna, its position or the enclosure means measuring again."),
                subjects=(first.name, second.name),
                evidence={**evidence, "design_severity": severity, **verdict.evidence},
                references=(WHEELER, "common practice (quarter-wave minimum spacing)", *verdict.references),
                basis="measured",
            )
            continue
        yield Flag(
            severity=severity,
            title=f"{first.name} and {second.name} are {distance_mm:.0f} mm apart at {frequency_mhz:g} MHz",
            explanation=geometry + (f" {verdict.text}" if verdict.text else ""),
            action=_spacing_action(quarter_wave_mm, frequency_mhz, angle_deg, known),
            product_impact=_spacing_impact(severity, distance_mm, quarter_wave_mm, cross, known, bool(outside)),
            subjects=(first.name, second.name),
            evidence=evidence,
        )


def _spacing_impact(severity: str, distance_mm: float, quarter_wave_mm: float, cross: bool, known: bool,
                    position_in_doubt: bool) -> str:
    apart = f"The antennas are {distance_mm:.0f} mm apart where at least {quarter_wave_mm:.0f} mm is usual"
    doubt = " (one position looks wrong, so check it first)" if position_in_doubt else ""
    if severity == "blocker":
        pointing = "point the same way" if known else "may point the same way (their directions are not entered)"
        return (f"{apart}{doubt}, and they {pointing}: they will act partly as one antenna. Expect shorter range at the "
                "edge of coverage, lower speeds, and a real risk of failing the operators' over-the-air tests. Moving "
                "or turning an antenna is a mechanical change, cheapest now.")
    if severity == "warning":
        helped = (" Pointing them different ways helps, but less at this distance." if cross else "")
        return (f"{apart}{doubt}.{helped} The second antenna will deliver only part of its benefit (range at the "
                "edge of coverage, speed): worth moving or turning one while the layout still allows, or measuring to "
                "show the pair works.")
    return (f"{apart}{doubt}, but they point different ways, which makes up for most of it: little effect on range is "
            "expected. Nothing to do unless the layout changes.")


def _spacing_action(quarter_wave_mm: float, frequency_mhz: float, angle_deg: float, known: bool) -> str:
    move = f"Move the antennas at least {quarter_wave_mm:.0f} mm apart (a quarter wave at {frequency_mhz:g} MHz)"
    prove = ("show by measurement that the pair is decorrelated (isolation of at least 10 dB and ECC of at most "
             "0.5 from S-parameters with both antennas at least 50 % efficient, or from far-field patterns)")
    if not known:
        return (f"{move}, or enter both antennas' polarization axes (an unknown pair is judged as co-polarized); "
                f"or {prove}.")
    if round(angle_deg) >= 90:
        return f"{move}: their polarization axes are already 90 degrees apart, so turning them gains nothing; or {prove}."
    return f"{move}, or turn one so their polarization axes are 90 degrees apart (now {angle_deg:.0f}); or {prove}."


def _placed_pairs(context: CheckContext) -> Iterator[tuple[Antenna, Antenna, float, float, bool]]:
    """Every pair of placed cellular antennas with its distance, polarization angle and whether both axes are known."""
    placed = [antenna for antenna in context.cellular_antennas if antenna.position_mm is not None]
    for first, second in combinations(placed, 2):
        distance_mm = physics.distance_mm(first.position_mm, second.position_mm)  # type: ignore[arg-type]
        known = first.polarization is not None and second.polarization is not None
        angle_deg = (physics.polarization_angle_deg(first.polarization, second.polarization)  # type: ignore[arg-type]
                     if known else 0.0)
        yield first, second, distance_mm, angle_deg, known


@dataclass(frozen=True)
class _Verdict:
    cleared: bool
    text: str
    evidence: dict[str, Any]
    references: tuple[str, ...] = ()


def _measured_verdict(context: CheckContext, first: str, second: str) -> _Verdict:
    """Whether measurements of the pair in the band that sets the judging frequency clear the spacing rule
    (design.md, rule set 2), with the words that say why or why not."""
    band = context.lowest_band
    correlations = [result for result in pair_correlations(context, first, second, band) if result.usable]
    isolations = list(pair_isolations(context, first, second, band))
    if not correlations and not isolations:
        return _Verdict(False, "", {})
    trusted = [result for result in correlations if result.can_clear]
    downlink = f"the downlink of {band.name} ({band.dl_mhz[0]:g}–{band.dl_mhz[1]:g} MHz)"
    reasons = []
    if not trusted:
        untrusted = [result for result in correlations if not result.can_clear]
        if untrusted:
            reasons.append(f"{untrusted[0].reason[0].upper()}{untrusted[0].reason[1:]}")
        else:
            reasons.append(f"No measurement of the pair gives its envelope correlation over {downlink}")
    worst = max(trusted, key=lambda result: result.ecc or 0.0) if trusted else None
    if worst is not None and (worst.ecc or 0.0) > ECC_LIMIT:
        reasons.append(f"{' and '.join(worst.files)} ({worst.method}) show ECC {worst.ecc:.2f} over {downlink}, "
                       f"above {ECC_LIMIT:g}")
    weakest = min(isolations, key=lambda item: item.isolation_db if item.isolation_db is not None else -1.0,
                  default=None)
    for item in isolations:
        if not item.covered or item.isolation_db is None:
            reasons.append(f"{item.file} does not cover all of {band.name}, so the pair's isolation there is unknown")
        elif not item.passive:
            reasons.append(f"{item.file} is not passive in {band.name}")
        elif item.isolation_db < ISOLATION_LIMIT_DB:
            reasons.append(f"{item.file} shows {item.isolation_db:.1f} dB isolation in {band.name}, below "
                           f"{ISOLATION_LIMIT_DB:g} dB")
    if reasons:
        return _Verdict(False, "The measurements do not clear it: " + "; ".join(reasons) + ".", {})
    assert worst is not None and worst.ecc is not None
    isolation_text = ""
    if weakest is not None and weakest.isolation_db is not None:
        isolation_text = f", and {weakest.file} shows at least {weakest.isolation_db:.1f} dB isolation in {band.name}"
    files = sorted({file for result in trusted for file in result.files}
                   | {item.file for item in isolations})
    text = (f"Measured in this product, {' and '.join(worst.files)} ({worst.method}: {worst.reason}) show an envelope "
            f"correlation of at most {worst.ecc:.2f} over {downlink}{isolation_text}.")
    references = (VAUGHAN_ANDERSEN,) if worst.method == "far-field" else (BLANCH,)
    return _Verdict(True, text, {
        "outranked_by": files, "measured_band": band.name, "measured_ecc": worst.ecc,
        "measured_method": worst.method,
        "measured_isolation_db": None if weakest is None else weakest.isolation_db,
    }, references)


@rule(
    id="SEP-002", changed_in="2.0.0", topic="separation", severities=("note",),
    title="Spacing can't be judged: feed position not given",
    rationale="Spacing rules need every receive antenna's feed point.",
    product_impact="Until every antenna's position is entered, antennas placed too close would go unnoticed.",
    sources=("common practice",),
    needs=("modem.category", "modem.rx_ports", "antennas", "modem.bands", "antennas[].position_mm"),
)
def position_unknown(context: CheckContext) -> Iterator[Flag]:
    if context.rx_usable < 2 or len(context.cellular_antennas) < 2:
        return
    for antenna in context.cellular_antennas:
        if antenna.position_mm is None:
            frequency_mhz = context.lowest_mhz
            yield Flag(
                severity="note",
                title=f"Position of {antenna.name} not given: spacing not checked",
                explanation=f"{antenna.name} has no feed-point position, so its spacing to the others is unknown.",
                action="Enter the feed point's x, y, z in mm from the mechanical drawing.",
                product_impact=(f"Whether {antenna.name} is far enough from the other antennas is unknown: a spacing "
                                "problem found after the enclosure is made means moving parts on the board."),
                subjects=(antenna.name,),
                evidence={
                    "frequency_mhz": frequency_mhz,
                    "distance_mm": None,
                    "quarter_wave_mm": physics.quarter_wave_mm(frequency_mhz),
                    "near_field_mm": physics.near_field_radius_mm(frequency_mhz),
                    "polarization_angle_deg": None,
                },
            )


@rule(
    id="SEP-003", added_in="2.0.0", topic="separation", severities=("note",),
    title="Spacing passes only on a feed position outside the enclosure",
    rationale=(
        "An internal antenna whose feed point lies outside the enclosure box was probably entered from the wrong "
        "origin, so a spacing that passes on it proves nothing. The pair is listed instead of passing silently."
    ),
    product_impact="A spacing check that passes on a wrongly entered position proves nothing about the product.",
    sources=("common practice",),
    needs=("modem.category", "modem.rx_ports", "antennas", "modem.bands", "antennas[].position_mm",
           "antennas[].polarization", "antennas[].mounting", "enclosure.size_mm"),
)
def spacing_rests_on_outside_position(context: CheckContext) -> Iterator[Flag]:
    if context.rx_usable < 2:
        return
    frequency_mhz = context.lowest_mhz
    quarter_wave_mm = physics.quarter_wave_mm(frequency_mhz)
    for first, second, distance_mm, angle_deg, known in _placed_pairs(context):
        outside = [antenna.name for antenna in (first, second) if outside_enclosure_mm(context, antenna) > 0]
        if distance_mm < quarter_wave_mm or not outside:
            continue
        yield Flag(
            severity="note",
            title=f"Spacing of {first.name} and {second.name} not confirmed: a feed point lies outside the enclosure",
            explanation=(
                f"{first.name} and {second.name} are {distance_mm:.1f} mm apart, more than a quarter wave "
                f"({quarter_wave_mm:.1f} mm) at {frequency_mhz:g} MHz, but {' and '.join(outside)} is internal and its "
                "feed point lies outside the enclosure box (see ENC-002). Until the position is corrected the spacing "
                "is not taken as passing."
            ),
            action="Correct the feed position from the mechanical drawing (measured from the enclosure's corner).",
            product_impact=(f"The spacing of {first.name} and {second.name} looks fine, but it rests on a position that "
                            "was probably measured from the wrong corner: don't rely on it until the position is "
                            "corrected. Most likely a data slip, not a design problem."),
            subjects=(first.name, second.name),
            evidence={"frequency_mhz": frequency_mhz, "distance_mm": distance_mm, "quarter_wave_mm": quarter_wave_mm,
                      "near_field_mm": physics.near_field_radius_mm(frequency_mhz),
                      "polarization_angle_deg": angle_deg, "polarization_known": known,
                      "outside_enclosure": outside},
        )


def _internal_cellular(context: CheckContext) -> list[Antenna]:
    return [antenna for antenna in context.cellular_antennas if antenna.mounting == "internal"]


@rule(
    id="GND-001", changed_in="2.0.0", topic="ground-plane", severities=("blocker", "warning", "note"),
    title="Ground plane short for the lowest frequency",
    rationale=(
        "An embedded antenna uses the board's ground as its counterpoise; the board then radiates too. "
        "Shorter than a quarter wave at the lowest frequency, efficiency and bandwidth fall quickly; "
        "shorter than an eighth wave, the low bands rarely work at all. That is a prediction from geometry: when "
        "every internal cellular antenna's efficiency in the band that sets the judging frequency is measured in "
        "this product (efficiency_source: measured) at 25 % or more, the measurement decides and the finding is a "
        "note."
    ),
    product_impact=(
        "A built-in antenna needs a long enough circuit board to work in the lowest bands, the ones that reach "
        "farthest and best into buildings; too short a board means weaker coverage there or a different antenna."
    ),
    sources=("common practice (quarter-wave ground length)", "design.md rule set 2 (measurement outranks geometry)"),
    needs=("antennas", "antennas[].mounting", "ground_plane_mm", "modem.bands", "antennas[].efficiency_pct",
           "antennas[].efficiency_source"),
)
def ground_plane_short(context: CheckContext) -> Iterator[Flag]:
    design = context.design
    internal = _internal_cellular(context)
    if design.ground_plane_mm is None or not internal:
        return
    names = [antenna.name for antenna in internal]
    frequency_mhz = context.lowest_mhz
    length_mm = max(design.ground_plane_mm)
    quarter_wave_mm = physics.quarter_wave_mm(frequency_mhz)
    eighth_wave_mm = physics.eighth_wave_mm(frequency_mhz)
    if length_mm >= quarter_wave_mm:
        return
    severity = "blocker" if length_mm < eighth_wave_mm else "warning"
    geometry = (
        f"The longest ground dimension is {length_mm:.1f} mm, "
        + (f"below an eighth wave ({eighth_wave_mm:.1f} mm)" if severity == "blocker"
           else f"between an eighth ({eighth_wave_mm:.1f} mm) and a quarter wave ({quarter_wave_mm:.1f} mm)")
        + f" at {frequency_mhz:g} MHz. Internal antennas ({', '.join(names)}) rely on it as counterpoise."
    )
    evidence = {
        "frequency_mhz": frequency_mhz,
        "length_mm": length_mm,
        "quarter_wave_mm": quarter_wave_mm,
        "eighth_wave_mm": eighth_wave_mm,
    }
    band = context.lowest_band
    measured = [(antenna.name, antenna.efficiency_pct.get(band.name)) for antenna in internal
                if antenna.efficiency_source == "measured"]
    if len(measured) == len(internal) and all(value is not None and value >= MIN_EFFICIENCY_PCT
                                               for _, value in measured):
        shown = ", ".join(f"{name} {value:g} %" for name, value in measured)
        lowest = min(value for _, value in measured if value is not None)
        yield Flag(
            severity="note",
            title=(f"Ground plane {length_mm:.0f} mm long, short for {frequency_mhz:g} MHz; measured efficiency "
                   f"{lowest:g} % or more in {band.name}"),
            explanation=(
                f"{geometry} On geometry alone the ground-length rule makes this a {severity}. Efficiency measured "
                f"in this product in {band.name}, the band that sets the judging frequency, is {shown}: at least "
                f"{MIN_EFFICIENCY_PCT:g} %. The measurement outranks the ground-length rule."
            ),
            action="Keep the measured board and antenna: a change to either needs a new efficiency measurement.",
            product_impact=(f"The board is short for {frequency_mhz:g} MHz, but the antenna measured in this product "
                            f"still radiates at least {lowest:g} % of its power in {band.name}: no loss of coverage is "
                            "expected from the board size while board and antenna stay as measured."),
            subjects=tuple(names),
            evidence={**evidence, "design_severity": severity, "measured_band": band.name,
                      "measured_efficiency_pct": lowest,
                      "outranked_by": [f"{name}.efficiency_pct (measured)" for name, _ in measured]},
            basis="measured",
        )
        return
    explanation = geometry
    if measured or any(antenna.efficiency_pct.get(band.name) is not None for antenna in internal):
        explanation += (f" Only efficiency measured in this product (efficiency_source: measured) of at least "
                        f"{MIN_EFFICIENCY_PCT:g} % in {band.name} for every internal antenna outranks this rule; the "
                        "entered figures do not meet that.")
    yield Flag(
        severity=severity,
        title=f"Ground plane {length_mm:.0f} mm long; a quarter wave at {frequency_mhz:g} MHz is {quarter_wave_mm:.0f} mm",
        explanation=explanation,
        action=(
            "Lengthen the ground (board, a ground extension or a metal part bonded to it), drop the lowest "
            "bands, or use an external antenna that does not need the board; ask the antenna maker for "
            "their minimum ground length, or measure the efficiency in the product."
        ),
        product_impact=(
            (f"The board ({length_mm:.0f} mm) is too short for the built-in antenna at {frequency_mhz:g} MHz: expect "
             "the product to work poorly or not at all in its lowest bands, which reach farthest and best into "
             "buildings. Fixing it changes the board, the antenna type or the bands, so it is cheapest now.")
            if severity == "blocker" else
            (f"The board ({length_mm:.0f} mm, where about {quarter_wave_mm:.0f} mm is usual) is on the short side "
             f"for {frequency_mhz:g} MHz: the built-in antenna will be less efficient in the lowest bands, so range "
             "and indoor coverage there suffer and the operators' over-the-air tests get harder. A measurement of "
             "the product shows how much.")
        ),
        subjects=tuple(names),
        evidence=evidence,
    )


@rule(
    id="GND-002", changed_in="2.0.0", topic="ground-plane", severities=("note",),
    title="Ground plane size not given",
    rationale="The ground length decides how well an embedded antenna works at low frequencies.",
    product_impact="Until the board size is entered, a board too short for the built-in antennas would go unnoticed.",
    sources=("common practice",),
    needs=("antennas", "antennas[].mounting", "ground_plane_mm", "modem.bands"),
)
def ground_plane_unknown(context: CheckContext) -> Iterator[Flag]:
    design = context.design
    internal = [antenna.name for antenna in _internal_cellular(context)]
    if design.ground_plane_mm is None and internal:
        frequency_mhz = context.lowest_mhz
        yield Flag(
            severity="note",
            title="Ground plane size not given: its length was not checked",
            explanation=f"The design has internal antennas ({', '.join(internal)}) but no ground-plane size.",
            action="Enter the main board's ground length and width from the mechanical drawing.",
            product_impact=("Nobody can yet tell whether the board is long enough for the built-in antennas to work in "
                            "the lowest bands; enter its size before the board layout is frozen."),
            subjects=tuple(internal),
            evidence={"frequency_mhz": frequency_mhz, "length_mm": None,
                      "quarter_wave_mm": physics.quarter_wave_mm(frequency_mhz)},
        )


LOW_BAND_CEILING_MHZ = 1000.0  # bands below this share one low-band match on a typical multiband antenna
DESIGN_VSWR = 3.0  # the matching threshold of the severity policy
# Real antennas and matching networks seldom come within a factor of about two of a physical bound, so the
# rule warns once the need passes half of it (common practice).
PRACTICAL_SHARE_OF_BOUND = 0.5


@rule(
    id="SIZ-001", changed_in="2.0.0", topic="device-size", severities=("warning",),
    title="Device too small, electrically, for the low-band bandwidth",
    rationale=(
        "A device radiates from its antenna and ground together, so the board's size bounds its radiation "
        "Q: for a flat board the planar bound of Gustafsson, Sohl and Kristensson (2007), Q >= 6 pi / "
        "(k^3 gamma) with gamma the board's high-contrast polarizability, is far tighter than McLean's "
        "sphere around it (both are computed; the larger Q holds). Bode-Fano then caps what any matching "
        "network can do at VSWR 3: bandwidth x efficiency <= pi / (Q ln 2), since a small antenna buys "
        "bandwidth with loss. A warning when the low bands' bandwidth times the efficiency expected of the "
        "antenna (entered, else 100 %) passes half of that cap: expect tuning, lost efficiency, or both."
    ),
    product_impact=(
        "A small device can't cover a wide spread of low frequencies with full efficiency: expect weaker coverage "
        "in part of the low bands, or a tunable antenna that adds cost and design time."
    ),
    sources=(
        "Gustafsson, Sohl, Kristensson, Proc. R. Soc. A 463, 2007",
        "McLean, IEEE Trans. Antennas Propag. 44(5), 1996",
        "Bode 1945; Fano, J. Franklin Inst. 249, 1950",
        "common practice (designs reach about half of the bound)",
    ),
    needs=("antennas", "antennas[].mounting", "ground_plane_mm", "modem.bands", "antennas[].efficiency_pct"),
)
def device_too_small_for_bandwidth(context: CheckContext) -> Iterator[Flag]:
    design = context.design
    if design.ground_plane_mm is None:
        return
    frequency_mhz = context.lowest_mhz
    if frequency_mhz < LOW_BAND_CEILING_MHZ:
        in_scope = [band for band in design.modem.bands if band.lowest_mhz < LOW_BAND_CEILING_MHZ]
    else:
        in_scope = [context.lowest_band]
    span = merge_ranges([pair for band in in_scope for pair in band.ranges_mhz])
    low_mhz, high_mhz = span[0][0], span[-1][1]
    length_mm, width_mm = max(design.ground_plane_mm), min(design.ground_plane_mm)
    radius_mm = physics.enclosing_sphere_radius_mm(design.ground_plane_mm)
    ka = physics.wavenumber_radius(frequency_mhz, radius_mm)
    q_sphere = physics.mclean_q_limit(ka)
    polarizability_mm3 = physics.rectangle_polarizability_mm3(length_mm, width_mm)
    q_planar = physics.planar_q_limit(frequency_mhz, polarizability_mm3)
    q_limit = max(q_sphere, q_planar)
    limit = physics.bode_fano_bandwidth(q_limit, DESIGN_VSWR)  # of bandwidth x efficiency
    threshold = PRACTICAL_SHARE_OF_BOUND * limit
    needed = physics.fractional_bandwidth(low_mhz, high_mhz)

    names = {band.name for band in in_scope}
    entered = [(antenna.efficiency_pct[name], antenna.name, name) for antenna in context.cellular_antennas
               if antenna.mounting == "internal" for name in names if name in antenna.efficiency_pct]
    if entered:
        efficiency_pct, antenna_name, band_name = min(entered)
        efficiency_source = f"lowest entered efficiency in the low bands: {antenna_name} in {band_name}"
    else:
        efficiency_pct, efficiency_source = 100.0, "no efficiency entered: a lossless antenna assumed"
    product = needed * efficiency_pct / 100.0
    if product <= threshold:
        return
    best_efficiency_pct = min(100.0, 100.0 * threshold / needed)
    bound_name = "planar bound (Gustafsson et al.)" if q_planar >= q_sphere else "McLean's sphere bound"
    yield Flag(
        severity="warning",
        title=(f"{low_mhz:g}–{high_mhz:g} MHz needs {needed:.1%} bandwidth; a {length_mm:g} × {width_mm:g} mm "
               f"board allows about {threshold:.1%} at {efficiency_pct:g} % efficiency"),
        explanation=(
            f"At {frequency_mhz:g} MHz the {length_mm:g} × {width_mm:g} mm ground plane has a high-contrast "
            f"polarizability of {polarizability_mm3 / 1000:.0f} cm³, so its radiation Q is at least "
            f"{q_planar:.1f} by the planar bound (McLean's sphere of radius {radius_mm:.1f} mm, ka = {ka:.3f}, "
            f"gives only {q_sphere:.1f}). With Q = {q_limit:.1f} ({bound_name}) Bode-Fano caps bandwidth × "
            f"efficiency at {limit:.1%} for VSWR {DESIGN_VSWR:g}:1, and designs reach about half of it, "
            f"{threshold:.1%}. The low bands span {needed:.1%}; at {efficiency_pct:g} % efficiency "
            f"({efficiency_source}) that is {product:.1%}. Over the whole span the antenna can be expected to "
            f"reach about {best_efficiency_pct:.0f} % efficiency at best."
        ),
        action=(
            "Plan for an antenna tuner or switched matching, accept lower efficiency at the band edges (and "
            "check it against the radiated targets), or make the ground plane longer."
        ),
        product_impact=(
            f"The device is physically small for the spread of low frequencies it must cover ({low_mhz:g}–"
            f"{high_mhz:g} MHz): across all of it the antenna can reach only about {best_efficiency_pct:.0f} % "
            "efficiency at best. Expect weaker coverage at the edges of the low bands, or plan a tunable antenna "
            "(extra parts and design time), or a larger board."
        ),
        evidence={
            "frequency_mhz": frequency_mhz,
            "span_mhz": [low_mhz, high_mhz],
            "length_mm": length_mm,
            "width_mm": width_mm,
            "sphere_radius_mm": radius_mm,
            "ka": ka,
            "q": q_limit,
            "q_sphere": q_sphere,
            "q_planar": q_planar,
            "polarizability_mm3": polarizability_mm3,
            "bandwidth_efficiency_limit_pct": limit * 100,
            "warning_threshold_pct": threshold * 100,
            "needed_fractional_bandwidth_pct": needed * 100,
            "efficiency_pct": efficiency_pct,
            "efficiency_source": efficiency_source,
            "best_efficiency_pct": best_efficiency_pct,
            "max_fractional_bandwidth_pct": min(100.0, threshold / (efficiency_pct / 100.0) * 100)
            if efficiency_pct > 0 else None,
            "vswr": DESIGN_VSWR,
        },
    )


@rule(
    id="ENC-001", topic="enclosure", severities=("blocker", "warning"),
    title="Internal antenna inside a metal or mixed enclosure",
    rationale=(
        "A closed metal enclosure is a shield: an antenna inside it cannot radiate out. Metal parts in a "
        "mixed enclosure detune a nearby antenna and block some directions."
    ),
    product_impact="An antenna inside metal can't reach the network well, or at all, whatever else is right.",
    sources=("common practice",),
    needs=("antennas", "antennas[].mounting", "enclosure.material"),
)
def internal_antenna_in_metal(context: CheckContext) -> Iterator[Flag]:
    design = context.design
    internal = tuple(antenna.name for antenna in design.antennas if antenna.mounting == "internal")
    if not internal or design.enclosure_material == "plastic":
        return
    metal = design.enclosure_material == "metal"
    yield Flag(
        severity="blocker" if metal else "warning",
        title=f"Internal antenna(s) in a {design.enclosure_material} enclosure",
        explanation=(
            f"{', '.join(internal)} sit inside an enclosure of {design.enclosure_material} material. "
            + ("A metal enclosure shields the antenna: little or nothing gets out." if metal else
               "Metal parts near an antenna detune it and shadow it.")
        ),
        action=(
            "Use an external antenna, or a radome/window of non-conductive material over the antenna "
            "with the clearance its maker specifies" + ("." if metal else ", and keep metal away from it.")
        ),
        product_impact=(
            ("An antenna inside a closed metal box can't reach the network: as designed the product would not "
             "connect. An external antenna or a plastic window changes the enclosure design, so decide now.")
            if metal else
            ("Metal parts near the antenna detune it and block some directions: range may be shorter than expected "
             "and change with how the product is placed. Keep the antenna area clear of metal.")
        ),
        subjects=internal,
        evidence={"material": design.enclosure_material},
    )


@rule(
    id="ENC-002", added_in="2.0.0", topic="enclosure", severities=("warning",),
    title="An internal antenna's feed lies outside the enclosure",
    rationale=(
        "Feed points are given in the enclosure's frame, from one corner along its edges. An internal antenna "
        "whose feed lies more than 1 mm outside that box was most likely entered from another origin (the board's, "
        "say); every spacing judged from it is then wrong too, so it is flagged rather than accepted."
    ),
    product_impact="An antenna position entered from the wrong corner makes the spacing checks unreliable.",
    sources=("common practice",),
    needs=("antennas", "antennas[].mounting", "antennas[].position_mm", "enclosure.size_mm"),
)
def feed_outside_enclosure(context: CheckContext) -> Iterator[Flag]:
    size = context.design.enclosure_size_mm
    if size is None:
        return
    for antenna in context.design.antennas:
        outside_mm = outside_enclosure_mm(context, antenna)
        if outside_mm <= 0 or antenna.position_mm is None:
            continue
        x, y, z = antenna.position_mm
        yield Flag(
            severity="warning",
            title=f"{antenna.name}'s feed lies {outside_mm:.0f} mm outside the enclosure",
            explanation=(
                f"{antenna.name} is mounted internal, but its feed point ({x:g}, {y:g}, {z:g}) mm lies {outside_mm:.1f} "
                f"mm outside the {size[0]:g} x {size[1]:g} x {size[2]:g} mm enclosure box (x 0–{size[0]:g}, "
                f"y 0–{size[1]:g}, z 0–{size[2]:g}). The position was probably measured from another origin; its "
                "spacing to the other antennas is not taken as passing until it is corrected (SEP-003)."
            ),
            action=("Measure the feed point from the enclosure's corner on the mechanical drawing, or set the "
                    "mounting to external if the antenna sits outside."),
            product_impact=(f"{antenna.name}'s position lies {outside_mm:.0f} mm outside the enclosure, so the "
                            "spacing checks that use it can't be trusted. Most likely a data slip (measured from "
                            "another corner), not a design problem, but correct it before relying on the checklist."),
            subjects=(antenna.name,),
            evidence={"position_mm": list(antenna.position_mm), "enclosure_size_mm": list(size),
                      "outside_by_mm": outside_mm, "tolerance_mm": ENCLOSURE_TOLERANCE_MM},
        )
