"""The cellular radio beside the product's own GNSS and WLAN receivers: which bands meet, and the isolation budget.

Two mechanisms (3GPP TR 36.816, in-device coexistence):
- harmonic: the 2nd or 3rd harmonic of a band's uplink lands in a GNSS band (Band 13's 777-787 MHz doubles to
  1554-1574 MHz, on GPS L1);
- adjacent: a cellular band edge within 20 MHz of a WLAN band (Band 40 ends at 2400 MHz, where the ISM band starts).

The budget, per MHz (the measurement bandwidth of the 3GPP emission limits above 1 GHz):
    needed isolation = emission at the aggressor's connector - interference the victim tolerates
    tolerated = kT (-174 dBm/Hz) + 60 dB (1 MHz) + victim noise figure + 10 log10(10^(desense / 10) - 1)
so a 1 dB desense allowance puts the interference 5.9 dB below the victim's noise. The emission is the 3GPP
limit the module must meet (spurious emissions for harmonics, the spectrum emission mask next to the band), not
what a particular module emits: its datasheet's figure, usually far lower, reduces the need by the difference.
Beside the need stands the isolation of the pair: measured (an S-parameter file with both ports, spanning the
victim's frequencies) or, without one, a free-space estimate from spacing and polarization.

Data and sources: rules/data/coexistence.toml. Frequencies in MHz, lengths in mm, powers in dBm per MHz.
"""

import math
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import cache
from typing import Any

from rules import physics
from rules.catalog import DATA_DIR, Band, categories

HARMONIC = "harmonic"
ADJACENT = "adjacent"
CELLULAR_TO_VICTIM = "cellular-to-victim"  # the cellular transmitter disturbs the GNSS / WLAN receiver
VICTIM_TO_CELLULAR = "victim-to-cellular"  # the WLAN transmitter disturbs the cellular receiver
TR_36_816 = "3GPP TR 36.816 (in-device coexistence: Band 13/14 harmonics on GPS L1; Bands 40, 41 and 7 beside ISM)"
FRIIS = "Friis free-space transmission, 20 log10(4 pi d / lambda), between isotropic antennas"
MEGAHERTZ_DB = 60.0  # 10 log10(1 MHz / 1 Hz)
EDGE_TOLERANCE_MHZ = 1e-9  # band edges are decimal numbers of MHz: 2400 - 20 must count as 20 MHz away


class CoexistenceDataError(ValueError):
    """coexistence.toml breaks its own rules."""


@dataclass(frozen=True)
class Victim:
    key: str
    role: str  # the antenna role that serves it: gnss or wlan
    label: str  # "GNSS L1/E1"
    low_mhz: float
    high_mhz: float
    always: bool  # judged for every antenna of the role, not only one rated for it
    source: str
    noise_figure_db: float
    noise_figure_source: str

    @property
    def range_mhz(self) -> tuple[float, float]:
        return (self.low_mhz, self.high_mhz)


@dataclass(frozen=True)
class EmissionMask:
    key: str
    label: str
    rows: tuple[tuple[float, float, float, float], ...]  # from, to (MHz off the channel edge), dBm, in MHz
    source: str


@dataclass(frozen=True)
class CoexistenceData:
    thermal_noise_dbm_per_hz: float
    thermal_noise_source: str
    desense_db: float
    desense_source: str
    victims: tuple[Victim, ...]
    cellular_noise_figure_db: float
    cellular_noise_figure_source: str
    harmonic_orders: tuple[int, ...]
    harmonic_emission_dbm_per_mhz: float
    harmonic_source: str
    guard_mhz: float
    guard_source: str
    masks: Mapping[str, EmissionMask]
    mask_of_category: Mapping[str, str]
    wlan_power_dbm: float
    wlan_power_source: str
    wlan_occupied_mhz: float
    wlan_occupied_source: str
    wlan_channel_mhz: float
    wlan_masks: Mapping[str, tuple[tuple[float, float], ...]]  # victim key -> (offset, dBr) points
    wlan_mask_source: str
    polarization_cap_db: float
    polarization_cap_source: str

    def victims_for(self, role: str) -> tuple[Victim, ...]:
        return tuple(victim for victim in self.victims if victim.role == role)

    @property
    def interference_to_noise_db(self) -> float:
        """How far below the noise the interference must stay for the desense allowance: 10 log10(10^(D/10) - 1)."""
        return 10.0 * math.log10(10.0 ** (self.desense_db / 10.0) - 1.0)

    def tolerated_dbm_per_mhz(self, noise_figure_db: float) -> float:
        """Interference in 1 MHz a receiver of this noise figure takes for the desense allowance."""
        return self.thermal_noise_dbm_per_hz + MEGAHERTZ_DB + noise_figure_db + self.interference_to_noise_db


def _number(table: Mapping[str, Any], key: str, where: str) -> float:
    value = table.get(key)
    if not isinstance(value, (int, float)) or isinstance(value, bool) or not math.isfinite(value):
        raise CoexistenceDataError(f"coexistence.toml [{where}]: {key} should be a number, got {value!r}")
    return float(value)


def _text(table: Mapping[str, Any], key: str, where: str) -> str:
    value = table.get(key)
    if not isinstance(value, str) or not value.strip():
        raise CoexistenceDataError(f"coexistence.toml [{where}]: {key} should be non-empty text, got {value!r}")
    return value


def _points(value: Any, width: int, where: str) -> tuple[tuple[float, ...], ...]:
    if not isinstance(value, list) or not value or not all(
            isinstance(row, list) and len(row) == width and all(
                isinstance(item, (int, float)) and not isinstance(item, bool) for item in row) for row in value):
        raise CoexistenceDataError(f"coexistence.toml [{where}]: expected a list of rows of {width} numbers")
    return tuple(tuple(float(item) for item in row) for row in value)


def parse_coexistence_data(tables: Mapping[str, Any]) -> CoexistenceData:
    """Checks and types the decoded coexistence.toml: every victim a range and a noise figure with sources, every
    mask's rows contiguous from the channel edge, every category a mask."""
    budget = tables.get("budget", {})
    victims = []
    for key, table in tables.get("victims", {}).items():
        where = f"victims.{key}"
        role = _text(table, "role", where)
        if role not in ("gnss", "wlan"):
            raise CoexistenceDataError(f"coexistence.toml [{where}]: role should be gnss or wlan")
        low, high = _number(table, "low_mhz", where), _number(table, "high_mhz", where)
        if not 0 < low < high:
            raise CoexistenceDataError(f"coexistence.toml [{where}]: expected 0 < low_mhz < high_mhz")
        if not isinstance(table.get("always"), bool):
            raise CoexistenceDataError(f"coexistence.toml [{where}]: always should be true or false")
        victims.append(Victim(key, role, _text(table, "label", where), low, high, table["always"],
                              _text(table, "source", where), _number(table, "noise_figure_db", where),
                              _text(table, "noise_figure_source", where)))
    masks: dict[str, EmissionMask] = {}
    mask_of_category: dict[str, str] = {}
    for key, table in tables.get("masks", {}).items():
        where = f"masks.{key}"
        rows = _points(table.get("rows"), 4, where)
        edge = 0.0
        for low, high, _, bandwidth in rows:
            if low != edge or high <= low or bandwidth <= 0:
                raise CoexistenceDataError(f"coexistence.toml [{where}]: rows should run on from 0 MHz without gaps, "
                                           "each with a positive measurement bandwidth")
            edge = high
        masks[key] = EmissionMask(key, _text(table, "label", where), rows, _text(table, "source", where))  # type: ignore[arg-type]
        for category_id in table.get("categories", []):
            if category_id in mask_of_category:
                raise CoexistenceDataError(f"coexistence.toml [{where}]: {category_id} already has a mask")
            mask_of_category[category_id] = key
    missing = sorted(set(categories()) - set(mask_of_category))
    if missing:
        raise CoexistenceDataError(f"coexistence.toml: no emission mask for {', '.join(missing)}")
    wlan = tables.get("wlan_transmitter", {})
    wlan_masks = {}
    for victim in victims:
        if victim.role == "wlan":
            name = "mask_2g4" if victim.low_mhz < 3000 else "mask_5g"
            points = _points(wlan.get(name), 2, f"wlan_transmitter.{name}")
            if any(later[0] <= earlier[0] or later[1] > earlier[1] for earlier, later in zip(points, points[1:], strict=False)):
                raise CoexistenceDataError(f"coexistence.toml [wlan_transmitter]: {name} should fall with offset")
            wlan_masks[victim.key] = points
    harmonic = tables.get("harmonic", {})
    orders = harmonic.get("orders")
    if not isinstance(orders, list) or not orders or not all(isinstance(order, int) and order >= 2 for order in orders):
        raise CoexistenceDataError("coexistence.toml [harmonic]: orders should be whole numbers of at least 2")
    adjacent = tables.get("adjacent", {})
    receiver = tables.get("cellular_receiver", {})
    free_space = tables.get("free_space", {})
    desense_db = _number(budget, "desense_db", "budget")
    if desense_db <= 0:
        raise CoexistenceDataError("coexistence.toml [budget]: desense_db should be positive")
    return CoexistenceData(
        thermal_noise_dbm_per_hz=_number(budget, "thermal_noise_dbm_per_hz", "budget"),
        thermal_noise_source=_text(budget, "thermal_noise_source", "budget"),
        desense_db=desense_db,
        desense_source=_text(budget, "desense_source", "budget"),
        victims=tuple(victims),
        cellular_noise_figure_db=_number(receiver, "noise_figure_db", "cellular_receiver"),
        cellular_noise_figure_source=_text(receiver, "noise_figure_source", "cellular_receiver"),
        harmonic_orders=tuple(orders),
        harmonic_emission_dbm_per_mhz=_number(harmonic, "emission_dbm_per_mhz", "harmonic"),
        harmonic_source=_text(harmonic, "source", "harmonic"),
        guard_mhz=_number(adjacent, "guard_mhz", "adjacent"),
        guard_source=_text(adjacent, "source", "adjacent"),
        masks=masks,
        mask_of_category=mask_of_category,
        wlan_power_dbm=_number(wlan, "power_dbm", "wlan_transmitter"),
        wlan_power_source=_text(wlan, "power_source", "wlan_transmitter"),
        wlan_occupied_mhz=_number(wlan, "occupied_mhz", "wlan_transmitter"),
        wlan_occupied_source=_text(wlan, "occupied_source", "wlan_transmitter"),
        wlan_channel_mhz=_number(wlan, "channel_mhz", "wlan_transmitter"),
        wlan_masks=wlan_masks,  # type: ignore[arg-type]
        wlan_mask_source=_text(wlan, "mask_source", "wlan_transmitter"),
        polarization_cap_db=_number(free_space, "polarization_cap_db", "free_space"),
        polarization_cap_source=_text(free_space, "polarization_cap_source", "free_space"),
    )


@cache
def coexistence_data() -> CoexistenceData:
    with (DATA_DIR / "coexistence.toml").open("rb") as handle:
        return parse_coexistence_data(tomllib.load(handle))


# -- which bands meet ----------------------------------------------------------------------------------------

def overlap_mhz(first: tuple[float, float], second: tuple[float, float]) -> tuple[float, float] | None:
    """The common part of two closed ranges (a single point when they touch), or None."""
    low, high = max(first[0], second[0]), min(first[1], second[1])
    return (low, high) if low <= high else None


def harmonic_mhz(uplink_mhz: tuple[float, float], order: int) -> tuple[float, float]:
    """Where the n-th harmonic of carriers anywhere in the uplink falls: n times each edge."""
    return (order * uplink_mhz[0], order * uplink_mhz[1])


def harmonic_hits(band: Band, victim: Victim, orders: Sequence[int]) -> list[tuple[int, tuple[float, float]]]:
    """(order, overlap) for each harmonic of the band's uplink that lands in the victim band; none for an SDL band,
    which has no uplink."""
    if band.ul_mhz is None:
        return []
    hits = []
    for order in orders:
        common = overlap_mhz(harmonic_mhz(band.ul_mhz, order), victim.range_mhz)
        if common is not None:
            hits.append((order, common))
    return hits


def gap_mhz(cellular_mhz: tuple[float, float], victim_mhz: tuple[float, float]) -> float:
    """Frequency between two ranges' nearest edges; 0 when they touch or overlap."""
    return max(0.0, victim_mhz[0] - cellular_mhz[1], cellular_mhz[0] - victim_mhz[1])


@dataclass(frozen=True)
class NearRange:
    """A range of a band whose edge lies within the guard of a victim band, and what it carries."""

    range_mhz: tuple[float, float]
    gap_mhz: float
    carries_uplink: bool
    carries_downlink: bool

    @property
    def kind(self) -> str:
        if self.carries_uplink and self.carries_downlink:
            return "tdd"
        return "ul" if self.carries_uplink else "dl"


def near_ranges(band: Band, victim: Victim, guard_mhz: float) -> list[NearRange]:
    """The band's ranges (uplink, downlink; one for TDD, the downlink alone for SDL) with an edge within
    `guard_mhz` of the victim band, nearest first."""
    found = []
    if band.duplex == "TDD":
        candidates = [(band.dl_mhz, True, True)]
    else:
        candidates = ([(band.ul_mhz, True, False)] if band.ul_mhz is not None else []) + [(band.dl_mhz, False, True)]
    for range_mhz, uplink, downlink in candidates:
        assert range_mhz is not None
        gap = gap_mhz(range_mhz, victim.range_mhz)
        if gap <= guard_mhz + EDGE_TOLERANCE_MHZ:
            found.append(NearRange(range_mhz, gap, uplink, downlink))
    return sorted(found, key=lambda near: near.gap_mhz)


# -- the budget ----------------------------------------------------------------------------------------------

def mask_emission_dbm_per_mhz(mask: EmissionMask, offset_mhz: float, spurious_dbm_per_mhz: float) -> float:
    """The emission limit in 1 MHz at `offset_mhz` from the channel edge: the mask row that holds it (a limit in a
    narrower measurement bandwidth scaled up to 1 MHz), the looser row at a boundary, the spurious limit beyond."""
    levels = [limit_dbm + 10.0 * math.log10(1.0 / bandwidth_mhz)
              for low, high, limit_dbm, bandwidth_mhz in mask.rows
              if low - EDGE_TOLERANCE_MHZ <= offset_mhz <= high + EDGE_TOLERANCE_MHZ]
    return max(levels) if levels else spurious_dbm_per_mhz


def wlan_emission_dbm_per_mhz(data: CoexistenceData, victim: Victim, offset_from_centre_mhz: float) -> float:
    """A WLAN transmitter's emission in 1 MHz at an offset from its channel centre: the in-band density (its power
    over the occupied bandwidth) less the mask's relative level, straight lines in dB between the mask's points."""
    points = data.wlan_masks[victim.key]
    in_band_dbm_per_mhz = data.wlan_power_dbm - 10.0 * math.log10(data.wlan_occupied_mhz)
    offsets = [point[0] for point in points]
    levels = [point[1] for point in points]
    relative_db = float(_interpolate(offset_from_centre_mhz, offsets, levels))
    return in_band_dbm_per_mhz + relative_db


def _interpolate(x: float, xs: Sequence[float], ys: Sequence[float]) -> float:
    if x <= xs[0]:
        return ys[0]
    for (x0, y0), (x1, y1) in zip(zip(xs, ys, strict=True), zip(xs[1:], ys[1:], strict=True), strict=False):
        if x <= x1:
            return y0 + (y1 - y0) * (x - x0) / (x1 - x0)
    return ys[-1]


@dataclass(frozen=True)
class Budget:
    """One direction of a pair's isolation budget."""

    direction: str  # CELLULAR_TO_VICTIM or VICTIM_TO_CELLULAR
    emission_dbm_per_mhz: float  # at the aggressor's connector, in the victim's band
    emission_label: str  # what the emission is, in a few words
    emission_source: str
    tolerated_dbm_per_mhz: float  # at the victim's connector, for the desense allowance
    noise_figure_db: float
    noise_figure_source: str
    judged_mhz: tuple[float, float]  # the victim frequencies the interference lands on: isolation is judged there

    @property
    def needed_isolation_db(self) -> float:
        return self.emission_dbm_per_mhz - self.tolerated_dbm_per_mhz


def harmonic_budget(data: CoexistenceData, victim: Victim, overlap: tuple[float, float]) -> Budget:
    return Budget(CELLULAR_TO_VICTIM, data.harmonic_emission_dbm_per_mhz,
                  "the 3GPP general spurious-emission limit, from memory", data.harmonic_source,
                  data.tolerated_dbm_per_mhz(victim.noise_figure_db), victim.noise_figure_db,
                  victim.noise_figure_source, overlap)


def adjacent_budgets(data: CoexistenceData, category_id: str, victim: Victim, near: Sequence[NearRange]) -> list[Budget]:
    """The cellular transmitter into the WLAN receiver, from the nearest range that carries an uplink (a carrier at
    the band edge, its emission mask at the gap), and the WLAN transmitter into the cellular receiver, from the
    nearest range that carries a downlink (a WLAN channel at its band's edge, its mask at the gap plus half a
    channel from its centre). A TDD band gives both; an FDD band those of its ranges that are near."""
    budgets = []
    uplink = next((item for item in near if item.carries_uplink), None)
    downlink = next((item for item in near if item.carries_downlink), None)
    if uplink is not None:
        mask = data.masks[data.mask_of_category[category_id]]
        inside = uplink.gap_mhz <= mask.rows[-1][1] + EDGE_TOLERANCE_MHZ
        budgets.append(Budget(
            CELLULAR_TO_VICTIM,
            mask_emission_dbm_per_mhz(mask, uplink.gap_mhz, data.harmonic_emission_dbm_per_mhz),
            (f"the {mask.label} emission mask {uplink.gap_mhz:g} MHz off a carrier at the band edge" if inside else
             f"the 3GPP spurious-emission limit {uplink.gap_mhz:g} MHz off a carrier at the band edge, past the "
             f"{mask.label} emission mask"),
            f"{mask.source}; beyond it {data.harmonic_source}",
            data.tolerated_dbm_per_mhz(victim.noise_figure_db), victim.noise_figure_db, victim.noise_figure_source,
            victim.range_mhz,
        ))
    if downlink is not None:
        offset_mhz = data.wlan_channel_mhz / 2.0 + downlink.gap_mhz
        budgets.append(Budget(
            VICTIM_TO_CELLULAR,
            wlan_emission_dbm_per_mhz(data, victim, offset_mhz),
            f"a {data.wlan_power_dbm:g} dBm WLAN channel at its band edge, {offset_mhz:g} MHz off its centre",
            (f"a WLAN channel at the band edge, {data.wlan_power_dbm:g} dBm ({data.wlan_power_source}) over "
             f"{data.wlan_occupied_mhz:g} MHz ({data.wlan_occupied_source}), {offset_mhz:g} MHz from its centre under "
             f"{data.wlan_mask_source}"),
            data.tolerated_dbm_per_mhz(data.cellular_noise_figure_db), data.cellular_noise_figure_db,
            data.cellular_noise_figure_source, downlink.range_mhz,
        ))
    return budgets


@dataclass(frozen=True)
class FreeSpaceEstimate:
    isolation_db: float | None  # None inside the reactive near field, where no far-field formula holds
    frequency_mhz: float
    distance_mm: float
    path_loss_db: float | None
    polarization_db: float
    polarization_angle_deg: float
    polarization_known: bool
    near_field_mm: float


def free_space_isolation(
    data: CoexistenceData, distance_mm: float, frequency_mhz: float, polarization_angle_deg: float | None,
) -> FreeSpaceEstimate:
    """Isolation of two isotropic antennas `distance_mm` apart at `frequency_mhz` (Friis, 20 log10(4 pi d /
    lambda)), plus their polarization mismatch, -20 log10 |cos angle|, capped. An unknown angle is taken as
    co-polarized (0 dB, the worst case). Inside the reactive near field (lambda / 2 pi) the antennas couple through
    stored energy, more strongly than Friis says: no estimate there."""
    known = polarization_angle_deg is not None
    angle_deg = polarization_angle_deg if polarization_angle_deg is not None else 0.0
    cosine = abs(math.cos(math.radians(angle_deg)))
    polarization_db = max(0.0, min(data.polarization_cap_db, -20.0 * math.log10(max(cosine, 1e-12))))
    near_field_mm = physics.near_field_radius_mm(frequency_mhz)
    if distance_mm < near_field_mm:
        return FreeSpaceEstimate(None, frequency_mhz, distance_mm, None, polarization_db, angle_deg, known,
                                 near_field_mm)
    path_db = 20.0 * math.log10(4.0 * math.pi * distance_mm / physics.wavelength_mm(frequency_mhz))
    return FreeSpaceEstimate(path_db + polarization_db, frequency_mhz, distance_mm, path_db, polarization_db,
                             angle_deg, known, near_field_mm)
