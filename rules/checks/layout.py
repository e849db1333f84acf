"""Where the antennas sit: spacing and polarization between receive antennas, the ground plane they
work against, the enclosure around them, and the size-bandwidth limit of the whole device."""

from collections.abc import Iterator
from itertools import combinations

from rules import physics
from rules.context import CheckContext, merge_ranges
from rules.findings import Flag
from rules.registry import rule

WHEELER = "Wheeler, Proc. IRE 47(8), 1959 (radiansphere, lambda/2pi)"
CROSS_POLARIZED_DEG = 45.0  # axes at least this far apart count as cross-polarized (design.md policy)


@rule(
    id="SEP-001", topic="separation", severities=("blocker", "warning", "note"),
    title="Receive antennas too close for the lowest frequency",
    rationale=(
        "Inside the reactive near field (lambda/2pi) of one antenna a second one is coupled through the "
        "stored field: isolation and correlation suffer and transmit power is lost into the other port. A "
        "quarter wave apart is the usual minimum. Orthogonal polarization decouples the pair, but that help "
        "fades when they are very close. Judged at the lowest frequency of operation, where the wavelength "
        "is longest."
    ),
    sources=(WHEELER, "common practice (quarter-wave minimum spacing)", "3GPP TS 36.101 Table 5.5-1"),
)
def receive_antennas_too_close(context: CheckContext) -> Iterator[Flag]:
    if context.rx_usable < 2:
        return
    frequency_mhz = context.lowest_mhz
    near_field_mm = physics.near_field_radius_mm(frequency_mhz)
    quarter_wave_mm = physics.quarter_wave_mm(frequency_mhz)
    placed = [antenna for antenna in context.design.antennas if antenna.position_mm is not None]
    for first, second in combinations(placed, 2):
        distance_mm = physics.distance_mm(first.position_mm, second.position_mm)  # type: ignore[arg-type]
        known = first.polarization is not None and second.polarization is not None
        angle_deg = (physics.polarization_angle_deg(first.polarization, second.polarization)  # type: ignore[arg-type]
                     if known else 0.0)
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
        yield Flag(
            severity=severity,
            title=f"{first.name} and {second.name} are {distance_mm:.0f} mm apart at {frequency_mhz:g} MHz",
            explanation=(
                f"At {frequency_mhz:g} MHz (lowest edge of {context.lowest_band.name}) the wavelength is "
                f"{physics.wavelength_mm(frequency_mhz):.1f} mm. The feed points are {distance_mm:.1f} mm apart, "
                f"{zone}, and the antennas are {polarization}."
            ),
            action=(
                f"Move the antennas at least {quarter_wave_mm:.0f} mm apart (a quarter wave at "
                f"{frequency_mhz:g} MHz), or turn one so their polarization axes are 90 degrees apart, and "
                "confirm isolation and envelope correlation by measurement."
            ),
            subjects=(first.name, second.name),
            evidence={
                "frequency_mhz": frequency_mhz,
                "distance_mm": distance_mm,
                "quarter_wave_mm": quarter_wave_mm,
                "near_field_mm": near_field_mm,
                "polarization_angle_deg": angle_deg,
                "polarization_known": known,
                "distance_wavelengths": distance_mm / physics.wavelength_mm(frequency_mhz),
            },
        )


@rule(
    id="SEP-002", topic="separation", severities=("note",),
    title="Spacing can't be judged: feed position not given",
    rationale="Spacing rules need every receive antenna's feed point.",
    sources=("common practice",),
)
def position_unknown(context: CheckContext) -> Iterator[Flag]:
    if context.rx_usable < 2 or len(context.design.antennas) < 2:
        return
    for antenna in context.design.antennas:
        if antenna.position_mm is None:
            frequency_mhz = context.lowest_mhz
            yield Flag(
                severity="note",
                title=f"Position of {antenna.name} not given: spacing not checked",
                explanation=f"{antenna.name} has no feed-point position, so its spacing to the others is unknown.",
                action="Enter the feed point's x, y, z in mm from the mechanical drawing.",
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
    id="GND-001", topic="ground-plane", severities=("blocker", "warning"),
    title="Ground plane short for the lowest frequency",
    rationale=(
        "An embedded antenna uses the board's ground as its counterpoise; the board then radiates too. "
        "Shorter than a quarter wave at the lowest frequency, efficiency and bandwidth fall quickly; "
        "shorter than an eighth wave, the low bands rarely work at all."
    ),
    sources=("common practice (quarter-wave ground length)",),
)
def ground_plane_short(context: CheckContext) -> Iterator[Flag]:
    design = context.design
    internal = [antenna.name for antenna in design.antennas if antenna.mounting == "internal"]
    if design.ground_plane_mm is None or not internal:
        return
    frequency_mhz = context.lowest_mhz
    length_mm = max(design.ground_plane_mm)
    quarter_wave_mm = physics.quarter_wave_mm(frequency_mhz)
    eighth_wave_mm = physics.eighth_wave_mm(frequency_mhz)
    if length_mm >= quarter_wave_mm:
        return
    severity = "blocker" if length_mm < eighth_wave_mm else "warning"
    yield Flag(
        severity=severity,
        title=f"Ground plane {length_mm:.0f} mm long; a quarter wave at {frequency_mhz:g} MHz is {quarter_wave_mm:.0f} mm",
        explanation=(
            f"The longest ground dimension is {length_mm:.1f} mm, "
            + (f"below an eighth wave ({eighth_wave_mm:.1f} mm)" if severity == "blocker"
               else f"between an eighth ({eighth_wave_mm:.1f} mm) and a quarter wave ({quarter_wave_mm:.1f} mm)")
            + f" at {frequency_mhz:g} MHz. Internal antennas ({', '.join(internal)}) rely on it as counterpoise."
        ),
        action=(
            "Lengthen the ground (board, a ground extension or a metal part bonded to it), drop the lowest "
            "bands, or use an external antenna that does not need the board; ask the antenna maker for "
            "their minimum ground length."
        ),
        subjects=tuple(internal),
        evidence={
            "frequency_mhz": frequency_mhz,
            "length_mm": length_mm,
            "quarter_wave_mm": quarter_wave_mm,
            "eighth_wave_mm": eighth_wave_mm,
        },
    )


@rule(
    id="GND-002", topic="ground-plane", severities=("note",),
    title="Ground plane size not given",
    rationale="The ground length decides how well an embedded antenna works at low frequencies.",
    sources=("common practice",),
)
def ground_plane_unknown(context: CheckContext) -> Iterator[Flag]:
    design = context.design
    internal = [antenna.name for antenna in design.antennas if antenna.mounting == "internal"]
    if design.ground_plane_mm is None and internal:
        frequency_mhz = context.lowest_mhz
        yield Flag(
            severity="note",
            title="Ground plane size not given: its length was not checked",
            explanation=f"The design has internal antennas ({', '.join(internal)}) but no ground-plane size.",
            action="Enter the main board's ground length and width from the mechanical drawing.",
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
    id="SIZ-001", topic="device-size", severities=("warning",),
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
    sources=(
        "Gustafsson, Sohl, Kristensson, Proc. R. Soc. A 463, 2007",
        "McLean, IEEE Trans. Antennas Propag. 44(5), 1996",
        "Bode 1945; Fano, J. Franklin Inst. 249, 1950",
        "common practice (designs reach about half of the bound)",
    ),
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
    entered = [(antenna.efficiency_pct[name], antenna.name, name) for antenna in design.antennas
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
    sources=("common practice",),
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
        subjects=internal,
        evidence={"material": design.enclosure_material},
    )
