"""The cellular radio against the product's GNSS and WLAN receivers: harmonics on GNSS, band edges beside WLAN.

Each finding is one pair, (cellular antenna, GNSS or WLAN antenna, band), with the isolation the pair would need by
the budget of rules/coexistence.py beside the isolation it has: measured where an S-parameter file has both ports
over the victim's frequencies (basis `measured`), else a free-space estimate from spacing and polarization.
"""

from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

from rules import physics, sparams
from rules.catalog import Band
from rules.coexistence import (
    ADJACENT,
    CELLULAR_TO_VICTIM,
    FRIIS,
    HARMONIC,
    MEGAHERTZ_DB,
    TR_36_816,
    Budget,
    FreeSpaceEstimate,
    NearRange,
    Victim,
    adjacent_budgets,
    coexistence_data,
    free_space_isolation,
    harmonic_budget,
    harmonic_hits,
    near_ranges,
)
from rules.context import CheckContext
from rules.design import Antenna
from rules.findings import Flag
from rules.registry import rule

ORDINALS = {2: "2nd", 3: "3rd"}


def _mhz(range_mhz: tuple[float, float]) -> str:
    return f"{range_mhz[0]:g}–{range_mhz[1]:g} MHz"


def _ordinal(order: int) -> str:
    return ORDINALS.get(order, f"{order}th")


def victims_of(antenna: Antenna) -> list[Victim]:
    """The bands a GNSS or WLAN antenna receives in: those judged for every antenna of its role, and the others its
    rated ranges reach."""
    found = []
    for victim in coexistence_data().victims_for(antenna.role):
        reaches = any(low <= victim.high_mhz and high >= victim.low_mhz for low, high in antenna.ranges_mhz or ())
        if victim.always or reaches:
            found.append(victim)
    return found


def transmitters(context: CheckContext) -> list[Antenna]:
    """The cellular antennas that carry the uplink (role main)."""
    return [antenna for antenna in context.cellular_antennas if antenna.transmits]


@dataclass(frozen=True)
class PairIsolation:
    """What a pair's isolation is over a budget's victim frequencies, and how it is known."""

    isolation_db: float | None
    basis: str | None  # "measured", "free-space estimate", or None (unknown)
    file: str | None = None
    frequency_mhz: float | None = None  # where the measured worst is, or the frequency of the estimate
    estimate: FreeSpaceEstimate | None = None
    uncovering_files: tuple[str, ...] = ()  # files with both ports that do not span the victim's frequencies
    external: tuple[str, ...] = ()  # external antennas of the pair: their feed position is not where they radiate
    no_transmitter: bool = False  # the design has no main antenna to pair with

    def sentence(self, judged_mhz: tuple[float, float]) -> str:
        missed = ""
        if self.uncovering_files:
            missed = f" ({', '.join(self.uncovering_files)} has both ports but does not span them)"
        if self.basis == "measured":
            return (f"Measured in {self.file}: at least {self.isolation_db:.1f} dB over {_mhz(judged_mhz)} (worst at "
                    f"{self.frequency_mhz:g} MHz).")
        if self.no_transmitter:
            return "The design has no main (transmitting) antenna yet, so the pair's isolation can't be judged."
        none = f"No measurement has both ports over {_mhz(judged_mhz)}{missed}"
        estimate = self.estimate
        if self.external:
            return (f"{none}, and {' and '.join(self.external)} is mounted externally: its feed position says nothing "
                    "of where it radiates, so no free-space estimate is made.")
        if estimate is None:
            return f"{none}, and without both feed positions the isolation can't be estimated."
        if estimate.isolation_db is None:
            return (f"{none}; the feeds are {estimate.distance_mm:.1f} mm apart, inside the reactive near field at "
                    f"{estimate.frequency_mhz:g} MHz (λ/2π = {estimate.near_field_mm:.1f} mm), where no free-space "
                    "estimate holds.")
        polarization = (f"axes {estimate.polarization_angle_deg:.0f}° apart: {estimate.polarization_db:.1f} dB"
                        if estimate.polarization_known else "polarization not given, taken as co-polarized: 0 dB")
        wavelengths = estimate.distance_mm / physics.wavelength_mm(estimate.frequency_mhz)
        return (f"{none}; in free space at {estimate.frequency_mhz:g} MHz they would be isolated by about "
                f"{estimate.isolation_db:.1f} dB ({estimate.distance_mm:.1f} mm apart, {wavelengths:.2f} λ: "
                f"{estimate.path_loss_db:.1f} dB between isotropic antennas; {polarization}), an estimate that the "
                "enclosure and the board's currents usually make optimistic.")


def pair_isolation(context: CheckContext, cellular: Antenna, victim: Antenna,
                   judged_mhz: tuple[float, float]) -> PairIsolation:
    """The worst measured isolation of the pair over `judged_mhz` among the S-parameter files that have both ports and
    span those frequencies; without one, a free-space estimate at the lowest of them (the longest wavelength,
    the least loss)."""
    worst: tuple[float, str, float] | None = None
    uncovering = []
    for measurement in context.measurements:
        i, j = measurement.port_of(cellular.name), measurement.port_of(victim.name)
        if i is None or j is None:
            continue
        network = measurement.network
        window = sparams.band_window(network, [judged_mhz])
        found = sparams.worst_minimum(measurement.isolation_db(i, j), network.frequencies_mhz, window.mask)
        if not window.covered or found is None:
            uncovering.append(measurement.file)
            continue
        if worst is None or found.value < worst[0]:
            worst = (found.value, measurement.file, found.frequency_mhz)
    if worst is not None:
        return PairIsolation(worst[0], "measured", worst[1], worst[2])
    external = [antenna.name for antenna in (cellular, victim) if antenna.mounting == "external"]
    if external:
        return PairIsolation(None, None, uncovering_files=tuple(uncovering), external=tuple(external))
    if cellular.position_mm is None or victim.position_mm is None:
        return PairIsolation(None, None, uncovering_files=tuple(uncovering))
    angle_deg = (physics.polarization_angle_deg(cellular.polarization, victim.polarization)
                 if cellular.polarization is not None and victim.polarization is not None else None)
    estimate = free_space_isolation(coexistence_data(), physics.distance_mm(cellular.position_mm, victim.position_mm),
                                    judged_mhz[0], angle_deg)
    basis = "free-space estimate" if estimate.isolation_db is not None else None
    return PairIsolation(estimate.isolation_db, basis, None, estimate.frequency_mhz, estimate, tuple(uncovering))


def _budget_sentence(budget: Budget, first: str, second: str, aggressor: str, receiver: str) -> str:
    data = coexistence_data()
    return (f"{aggressor} may put {budget.emission_dbm_per_mhz:.1f} dBm per MHz there ({budget.emission_label}); "
            f"{receiver} with a {budget.noise_figure_db:g} dB noise figure tolerates {budget.tolerated_dbm_per_mhz:.1f} "
            f"dBm per MHz for {data.desense_db:g} dB of desensitization (thermal noise of "
            f"{data.thermal_noise_dbm_per_hz + MEGAHERTZ_DB:g} dBm per MHz plus the noise figure, the interference {-data.interference_to_noise_db:.1f} dB below it), so {first} and {second} need "
            f"{budget.needed_isolation_db:.1f} dB of isolation over {_mhz(budget.judged_mhz)}.")


def _margin_sentence(margin_db: float | None, remedy: str) -> str:
    if margin_db is None:
        return f"Until the isolation is known, {remedy} must supply all of it."
    if margin_db >= 0:
        return (f"That covers the budget by {margin_db:.1f} dB even at the 3GPP limit; the operator's and the GNSS or "
                "WLAN chipset's own tests still decide.")
    return f"That leaves {-margin_db:.1f} dB to {remedy}."


def _coexistence_impact(harm: str, margin_db: float | None, isolation: PairIsolation, fix: str, test: str) -> str:
    """What a coexistence finding means for the product, in a product manager's words: the harm, then how the
    isolation between the two antennas stands against what the budget needs."""
    if isolation.no_transmitter:
        standing = "Until the design has a main antenna, how much the two radios disturb each other can't be told."
    elif margin_db is None:
        standing = (f"How well the two antennas are kept apart is not known yet, so a measurement decides whether "
                    f"{fix} are needed.")
    elif margin_db >= 0:
        standing = (f"The isolation between the antennas covers the need by {margin_db:.1f} dB even at the standard's "
                    f"worst-case limit, so this should hold; {test} confirms it.")
    else:
        standing = (f"The antennas fall {-margin_db:.1f} dB short of the isolation needed at the standard's worst-case "
                    f"limit: {fix} must make up the difference, and {test} shows whether they do.")
    return f"{harm} {standing}"


def _isolation_evidence(isolation: PairIsolation, budget: Budget, cellular: Antenna | None,
                        victim: Antenna) -> dict[str, Any]:
    estimate = isolation.estimate
    return {
        "cellular_antenna": cellular.name if cellular else None,
        "victim_antenna": victim.name,
        "direction": budget.direction,
        # powers in the 1 MHz measurement bandwidth of the 3GPP limits above 1 GHz
        "emission_dbm": budget.emission_dbm_per_mhz,
        "tolerated_dbm": budget.tolerated_dbm_per_mhz,
        "measurement_bandwidth_mhz": 1.0,
        "victim_noise_figure_db": budget.noise_figure_db,
        "desense_db": coexistence_data().desense_db,
        "judged_mhz": list(budget.judged_mhz),
        "needed_isolation_db": budget.needed_isolation_db,
        "isolation_db": isolation.isolation_db,
        "isolation_basis": isolation.basis,
        "isolation_margin_db": (None if isolation.isolation_db is None
                                else isolation.isolation_db - budget.needed_isolation_db),
        "isolation_frequency_mhz": isolation.frequency_mhz,
        "file": isolation.file,
        "distance_mm": estimate.distance_mm if estimate else None,
        "polarization_angle_deg": estimate.polarization_angle_deg if estimate else None,
        "polarization_known": estimate.polarization_known if estimate else None,
    }


def _margin(isolation: PairIsolation, budget: Budget) -> float | None:
    return None if isolation.isolation_db is None else isolation.isolation_db - budget.needed_isolation_db


@rule(
    id="COX-001", added_in="2.0.0", topic="coexistence", severities=("warning",),
    title="A harmonic of the cellular uplink lands on a GNSS band",
    rationale=(
        "The transmitter's 2nd and 3rd harmonics are limited only to the general spurious-emission level, far above "
        "what a GNSS receiver, listening for signals below its own noise, can take: 3GPP TR 36.816 names Band 13 and "
        "14's uplink, whose 2nd harmonic falls on GPS L1. A warning for every selected band whose uplink's 2nd or 3rd "
        "harmonic overlaps GNSS L1/E1 (1559-1610 MHz) when the design has a GNSS antenna, and L5/E5a (1164-1192 MHz) "
        "too when that antenna is rated there. Beside it, the isolation the pair would need for 1 dB of GNSS "
        "desensitization at the 3GPP limit, against the measured isolation or a free-space estimate. Supplemental-"
        "downlink bands have no uplink and no harmonic."
    ),
    product_impact=("A harmonic of the cellular transmitter on the satellite-navigation frequencies can blind the "
                    "product's GNSS receiver while it transmits: slow or lost location fixes."),
    sources=(TR_36_816, "3GPP TS 36.101 Table 6.6.3.1-2 / TS 38.101-1 Table 6.5.3.1-2 (spurious emissions, from memory)",
             "3GPP TS 36.101 Table 5.5-1 / TS 38.101-1 Table 5.2-1 (band edges)",
             "common practice (1 dB desensitization allowance)", FRIIS),
    needs=("antennas", "modem.bands", "modem.category", "modem.power_class", "antennas[].position_mm",
           "antennas[].ranges_mhz", "antennas[].mounting", "antennas[].cable_loss_db", "antennas[].peak_gain_dbi",
           "antennas[].efficiency_pct", "antennas[].efficiency_source", "antennas[].polarization", "measurements"),
)
def harmonic_on_gnss(context: CheckContext) -> Iterator[Flag]:
    data = coexistence_data()
    aggressors: list[Antenna | None] = list(transmitters(context)) or [None]
    for gnss in (antenna for antenna in context.design.antennas if antenna.role == "gnss"):
        for band in context.design.modem.bands:
            # One finding per pair and band (its review identity): the first GNSS band hit, the others named in it.
            struck = [(victim, hits) for victim in victims_of(gnss)
                      if (hits := harmonic_hits(band, victim, data.harmonic_orders))]
            if not struck:
                continue
            victim, hits = struck[0]
            for cellular in aggressors:
                yield _harmonic_flag(context, band, victim, gnss, cellular, hits, [item[0] for item in struck[1:]])


def _harmonic_flag(context: CheckContext, band: Band, victim: Victim, gnss: Antenna, cellular: Antenna | None,
                   hits: list[tuple[int, tuple[float, float]]], also: list[Victim]) -> Flag:
    data = coexistence_data()
    assert band.ul_mhz is not None
    order, overlap = hits[0]
    harmonic = (order * band.ul_mhz[0], order * band.ul_mhz[1])
    budget = harmonic_budget(data, victim, overlap)
    named = band.number in (13, 14) and victim.key == "gnss-l1"
    landing = (f"The {_ordinal(order)} harmonic of {band.name}'s uplink ({_mhz(band.ul_mhz)}) falls at {_mhz(harmonic)}, "
               f"{_mhz(overlap)} of it inside {victim.label} ({_mhz(victim.range_mhz)}), where {gnss.name} receives"
               + (": the case 3GPP TR 36.816 names for Band 13 and 14 and GPS L1." if named else "."))
    others = [f"the {_ordinal(item[0])} at {_mhz(item[1])}" for item in hits[1:]]
    if others:
        landing += f" So does {' and '.join(others)}."
    if also:
        landing += f" Its harmonics also land on {' and '.join(item.label for item in also)}, which {gnss.name} receives too."
    remedy = (f"the module's real {_ordinal(order)}-harmonic level (its datasheet's figure is usually far below the "
              "3GPP limit), filtering (a harmonic filter at the module's output, a SAW filter ahead of the GNSS "
              "low-noise amplifier) and the layout")
    isolation = (pair_isolation(context, cellular, gnss, budget.judged_mhz) if cellular is not None
                 else PairIsolation(None, None, no_transmitter=True))
    subjects = (gnss.name, band.name) if cellular is None else (cellular.name, gnss.name, band.name)
    margin_db = _margin(isolation, budget)
    first = cellular.name if cellular else "the transmitting antenna"
    explanation = (f"{landing} Budget: {_budget_sentence(budget, first, gnss.name, 'the module', f'a {victim.label} receiver')} "
                   f"{isolation.sentence(budget.judged_mhz)} {_margin_sentence(margin_db, remedy)}")
    evidence: dict[str, Any] = {
        "band": band.name, "victim": victim.label, "mechanism": HARMONIC, "aggressor_mhz": list(band.ul_mhz),
        "victim_mhz": list(victim.range_mhz), "order": order, "orders": [item[0] for item in hits],
        "harmonic_mhz": list(harmonic), "overlap_mhz": list(overlap), "also_victims": [item.label for item in also],
    }
    evidence |= _isolation_evidence(isolation, budget, cellular, gnss)
    measure = ("" if isolation.basis == "measured" else
               f" measure the isolation between {first} and {gnss.name} over {_mhz(overlap)};")
    return Flag(
        severity="warning",
        title=(f"{band.name}'s {_ordinal(order)} uplink harmonic lands on {victim.label}"
               + (f" at {gnss.name}" if cellular is None else f": {cellular.name} to {gnss.name}")),
        explanation=explanation,
        action=(f"Ask the module maker for its {_ordinal(order)}-harmonic level in {band.name} at full power, plan "
                f"filtering on the GNSS input and keep {gnss.name} away from {first};{measure} then test GNSS "
                f"sensitivity (C/N0) with the cellular link transmitting at full power in {band.name}."),
        product_impact=_coexistence_impact(
            f"While the product transmits in {band.name}, the modem's {_ordinal(order)} harmonic lands where the "
            f"{victim.label} receiver listens: location fixes can slow down or fail during uplink traffic.",
            margin_db, isolation, "filtering, the module's real (usually lower) harmonic level and the layout",
            "a location test with the modem transmitting at full power"),
        subjects=subjects,
        evidence=evidence,
        references=(TR_36_816, budget.emission_source, victim.source, FRIIS),
        basis="measured" if isolation.basis == "measured" else "design",
    )


@rule(
    id="COX-002", added_in="2.0.0", topic="coexistence", severities=("warning",),
    title="A cellular band edge within 20 MHz of a WLAN band",
    rationale=(
        "Next to its channel a cellular transmitter is limited only by its spectrum emission mask, and a WLAN "
        "transmitter by its own; so close, neither radio's filters separate them and each desensitizes the other's "
        "receiver. 3GPP TR 36.816 names Bands 40 and 41 and Band 7's uplink beside the 2.4 GHz ISM band. A warning for "
        "every selected band with an edge within 20 MHz of 2400-2483.5 MHz when the design has a WLAN antenna, and of "
        "5150-5895 MHz too when that antenna is rated there; a band edge exactly 20 MHz away counts. Beside it, the "
        "isolation each direction would need for 1 dB of desensitization, from the emission masks, against the "
        "measured isolation or a free-space estimate."
    ),
    product_impact=("A cellular band right beside the Wi-Fi or Bluetooth band lets each radio disturb the other when "
                    "both run at once: slower Wi-Fi, weaker cellular reception."),
    sources=(TR_36_816, "3GPP TS 36.101 Table 6.6.2.1.1-1 / TS 38.101-1 Table 6.5.2.2-1 (spectrum emission masks)",
             "IEEE 802.11 transmit spectrum masks (from memory)", "common practice (1 dB desensitization allowance)",
             FRIIS),
    needs=("antennas", "modem.bands", "modem.category", "modem.power_class", "antennas[].position_mm",
           "antennas[].ranges_mhz", "antennas[].mounting", "antennas[].cable_loss_db", "antennas[].peak_gain_dbi",
           "antennas[].efficiency_pct", "antennas[].efficiency_source", "antennas[].polarization", "measurements"),
)
def band_edge_beside_wlan(context: CheckContext) -> Iterator[Flag]:
    data = coexistence_data()
    category_id = context.design.modem.category.id
    for wlan in (antenna for antenna in context.design.antennas if antenna.role == "wlan"):
        for band in context.design.modem.bands:
            # One finding per pair and band (its review identity): the first WLAN band beside it, the others named.
            beside = [(victim, near) for victim in victims_of(wlan) if (near := near_ranges(band, victim, data.guard_mhz))]
            if not beside:
                continue
            victim, near = beside[0]
            also = [item[0] for item in beside[1:]]
            budgets = adjacent_budgets(data, category_id, victim, near)
            for cellular in context.cellular_antennas:
                mine = [budget for budget in budgets if cellular.transmits or budget.direction != CELLULAR_TO_VICTIM]
                if mine:
                    yield _adjacent_flag(context, band, victim, wlan, cellular, near[0], mine, also)
            uplink = [budget for budget in budgets if budget.direction == CELLULAR_TO_VICTIM]
            if uplink and not transmitters(context):
                yield _adjacent_flag(context, band, victim, wlan, None, near[0], uplink, also)


def _adjacent_flag(context: CheckContext, band: Band, victim: Victim, wlan: Antenna, cellular: Antenna | None,
                   nearest: NearRange, budgets: list[Budget], also: list[Victim]) -> Flag:
    """One pair's finding; `cellular` None when the design has no main antenna to carry the uplink yet."""
    judged = [(budget, pair_isolation(context, cellular, wlan, budget.judged_mhz) if cellular is not None
               else PairIsolation(None, None, no_transmitter=True)) for budget in budgets]
    name = cellular.name if cellular is not None else "the transmitting antenna"

    def severity_key(item: tuple[Budget, PairIsolation]) -> tuple[int, float]:
        margin_db = _margin(item[1], item[0])
        return (0, -item[0].needed_isolation_db) if margin_db is None else (1, margin_db)

    budget, isolation = min(judged, key=severity_key)
    kind = {"ul": "uplink", "dl": "downlink", "tdd": "TDD band"}[nearest.kind]
    where = (f"{band.name}'s {kind} ({_mhz(nearest.range_mhz)}) "
             + ("touches" if nearest.gap_mhz == 0 else f"ends {nearest.gap_mhz:g} MHz from")
             + f" {victim.label} ({_mhz(victim.range_mhz)}), within the {coexistence_data().guard_mhz:g} MHz this rule "
             "judges")
    if band.number in (7, 40, 41) and victim.key == "wlan-2g4":
        where += ": one of the cases 3GPP TR 36.816 names beside the ISM band"
    if also:
        where += f"; it is also within the guard of {' and '.join(item.label for item in also)}"
    ways = []
    for item_budget, item_isolation in judged:
        if item_budget.direction == CELLULAR_TO_VICTIM:
            who, aggressor, receiver = (f"{name}'s uplink into the WLAN receiver at {wlan.name}",
                                        "the module", "a WLAN receiver")
        else:
            who, aggressor, receiver = (f"the WLAN transmitter at {wlan.name} into {band.name}'s downlink at "
                                        f"{name}", "the WLAN transmitter", "a cellular receiver")
        ways.append(f"{who}: {_budget_sentence(item_budget, name, wlan.name, aggressor, receiver)} "
                    f"{item_isolation.sentence(item_budget.judged_mhz)}")
    remedy = ("the radios' real emissions (their datasheets), coexistence filters on the WLAN path (and on the cellular "
              "path in a TDD band), the layout, and time-sharing between the radios where both run at once")
    if len(ways) == 1:
        ways_text = ways[0][0].upper() + ways[0][1:]
    else:
        ways_text = f"One way, {ways[0]} The other way, {ways[1]}"
    explanation = f"{where}. {ways_text} {_margin_sentence(_margin(isolation, budget), remedy)}"
    evidence: dict[str, Any] = {
        "band": band.name, "victim": victim.label, "mechanism": ADJACENT, "aggressor_mhz": list(nearest.range_mhz),
        "victim_mhz": list(victim.range_mhz), "guard_mhz": nearest.gap_mhz,
        "guard_limit_mhz": coexistence_data().guard_mhz, "cellular_range": nearest.kind,
        "directions": [item.direction for item in budgets], "also_victims": [item.label for item in also],
    } | _isolation_evidence(isolation, budget, cellular, wlan)
    measure = "" if isolation.basis == "measured" else (
        f" measure the isolation between {name} and {wlan.name} across {_mhz(budget.judged_mhz)};")
    return Flag(
        severity="warning",
        title=(f"{band.name} {'touches' if nearest.gap_mhz == 0 else f'is {nearest.gap_mhz:g} MHz from'} "
               f"{victim.label}: {name} and {wlan.name}"),
        explanation=explanation,
        action=(f"Plan a coexistence filter on the WLAN path and ask both radios' makers for their emissions at the "
                f"{band.name} edge;{measure} then test both radios running at once (WLAN throughput with {band.name} "
                "transmitting at full power, and the cellular downlink with WLAN transmitting)."),
        product_impact=_coexistence_impact(
            f"{band.name} sits {'right against' if nearest.gap_mhz == 0 else f'{nearest.gap_mhz:g} MHz from'} the "
            f"{victim.label} band: with both radios running at once, Wi-Fi or Bluetooth can slow down and cellular "
            "reception can weaken.",
            _margin(isolation, budget), isolation, "coexistence filters, the layout and time-sharing between the radios",
            "a test with both radios running at full power"),
        subjects=(wlan.name, band.name) if cellular is None else (cellular.name, wlan.name, band.name),
        evidence=evidence,
        references=(TR_36_816, *(item.emission_source for item in budgets), victim.source, FRIIS),
        basis="measured" if isolation.basis == "measured" else "design",
    )
