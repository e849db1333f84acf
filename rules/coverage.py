"""Uplink and downlink coverage, and what one receive branch fewer costs: path loss, target, range.

For each selected band the analysis budgets both directions at each direction's lowest frequency: the
category's coverage target (maximum coupling loss) for that direction, less the deployment's entry loss,
the main antenna's efficiency and cable loss, and for the uplink the power class's difference from the
23 dBm the targets assume. Losing a receive branch changes only the downlink. The direction with less
margin limits the coverage; when the uplink limits, a missing receive branch may cost no coverage at all.

Methods and their sources
- Path loss: 3GPP TR 38.901 Table 7.4.1-1, one family for every band: UMa, UMi street canyon and RMa, LOS
  or NLOS, with their breakpoint distances, default heights and validity ranges (frequency 0.5-100 GHz,
  0.5-30 GHz for RMa; 10 m to 5 km, 10 km for RMa LOS). Outside them the analysis refuses rather than
  extrapolating or falling back to another model.
- One receive branch fewer: the published single-receive-branch figures (coverage.toml [single_branch]:
  about 3 dB static, 3-5 dB in fading, 4 dB headline) scaled for a weaker second antenna, and beside them
  the bound of flat Rayleigh fading: maximal-ratio combining (MRC) of two branches, whose combined SNR is a
  sum of two independent exponentials with the eigenvalues of the branches' covariance as means, so its
  outage quantile has a closed-form CDF solved here by bisection.
- Coverage targets, power classes and entry losses: rules/data/coverage.toml and power_classes.toml, one
  source per row.

Frequencies are in MHz, distances in km (TR 38.901's formulas take metres and GHz), heights in m, losses
and gains in dB.
"""

import math
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from functools import cache
from typing import Any

from rules import sparams
from rules.catalog import DATA_DIR, Band, categories, power_classes
from rules.context import CheckContext
from rules.design import ENVIRONMENTS, Antenna, Design
from rules.findings import round_evidence
from rules.measurements import LoadedMeasurement

UMA = "uma"
UMI = "umi"
RMA = "rma"
SCENARIOS = (UMA, UMI, RMA)
TR_38_901 = "3GPP TR 38.901 Table 7.4.1-1"
SCENARIO_LABELS = {
    UMA: "TR 38.901 UMa (urban macro)",
    UMI: "TR 38.901 UMi (street-canyon micro)",
    RMA: "TR 38.901 RMa (rural macro)",
}
# TR 38.901 §7.2 / Table 7.4.1-1: base station heights (UMa and UMi fixed, RMa a range with 35 m default),
# user heights, and for RMa the average building height h and street width W with their defaults.
DEFAULT_BASE_HEIGHT_M = {UMA: 25.0, UMI: 10.0, RMA: 35.0}
DEFAULT_BUILDING_HEIGHT_M = 5.0
DEFAULT_STREET_WIDTH_M = 20.0
# Validity as Table 7.4.1-1 and its notes state it: parameter -> (low, high), edges included. UMa allows
# users up to 22.5 m, but above 13 m its effective environment height is drawn at random (note 1); the
# deterministic form here (h_E = 1 m) holds below 13 m, so that is where it stops.
VALIDITY: Mapping[str, Mapping[str, tuple[float, float]]] = {
    UMA: {"frequency_mhz": (500.0, 100_000.0), "distance_km": (0.01, 5.0), "base_height_m": (25.0, 25.0),
          "mobile_height_m": (1.5, 13.0)},
    UMI: {"frequency_mhz": (500.0, 100_000.0), "distance_km": (0.01, 5.0), "base_height_m": (10.0, 10.0),
          "mobile_height_m": (1.5, 22.5)},
    RMA: {"frequency_mhz": (500.0, 30_000.0), "distance_km": (0.01, 5.0), "base_height_m": (10.0, 150.0),
          "mobile_height_m": (1.0, 10.0), "building_height_m": (5.0, 50.0), "street_width_m": (5.0, 50.0)},
}
RMA_LOS_FARTHEST_KM = 10.0  # RMa LOS holds to 10 km, its NLOS form to 5 km
SPEED_OF_LIGHT_NOTE_M_PER_S = 3.0e8  # Table 7.4.1-1 notes 1 and 5 take c = 3.0 x 10^8 m/s for d_BP
REFERENCE_POWER_DBM = 23.0  # the UE power the MCL targets of TR 36.888 and TR 45.820 assume (from memory)
# Bisection stops when the bracket of log10(distance) or of the SNR quantile is this narrow.
_LOG_DISTANCE_TOLERANCE = 1e-12
_RELATIVE_QUANTILE_TOLERANCE = 1e-13


class OutsideValidity(ValueError):
    """A model asked about a case it was not fitted to; names the model, the parameter, its value and its
    range."""

    def __init__(
        self, model: str, parameter: str, value: float | str, valid: tuple[float, float] | tuple[str, ...],
    ):
        self.model = model
        self.parameter = parameter
        self.value = value
        self.valid = valid
        label = SCENARIO_LABELS.get(model, model)
        if isinstance(value, str):
            allowed = ", ".join(str(item) for item in valid)
            message = f"{label} does not cover {parameter} {value!r}; it covers {allowed}"
        else:
            low, high = valid
            span = f"{low:g}" if low == high else f"from {low:g} to {high:g}"
            message = f"{label} is valid for {parameter} {span}; got {value:g}"
        super().__init__(message)


class CoverageDataError(ValueError):
    """coverage.toml breaks its own rules (a missing category, environment or source)."""


# -- path loss: 3GPP TR 38.901 Table 7.4.1-1 ----------------------------------------------------------------

def free_space_loss_db(frequency_mhz: float, distance_km: float) -> float:
    """Basic transmission loss in free space, ITU-R P.525: 32.45 + 20 log f(MHz) + 20 log d(km). Not a
    coverage model (it ignores terrain and clutter); kept as the reference the TR 38.901 LOS forms start from."""
    if not (frequency_mhz > 0 and distance_km > 0):
        raise ValueError(f"free-space loss needs a positive frequency and distance; got "
                         f"{frequency_mhz:g} MHz, {distance_km:g} km")
    return 32.45 + 20.0 * math.log10(frequency_mhz) + 20.0 * math.log10(distance_km)


@dataclass(frozen=True)
class Geometry:
    """Heights and (RMa) surroundings of a link; None base height means the scenario's default."""

    scenario: str = UMA
    los: bool = False
    base_height_m: float | None = None
    mobile_height_m: float = 1.5
    building_height_m: float = DEFAULT_BUILDING_HEIGHT_M
    street_width_m: float = DEFAULT_STREET_WIDTH_M

    @property
    def base_m(self) -> float:
        return DEFAULT_BASE_HEIGHT_M[self.scenario] if self.base_height_m is None else self.base_height_m

    @property
    def label(self) -> str:
        return f"{SCENARIO_LABELS[self.scenario]} {'LOS' if self.los else 'NLOS'}"

    def distance_limits_km(self) -> tuple[float, float]:
        nearest_km, farthest_km = VALIDITY[self.scenario]["distance_km"]
        if self.scenario == RMA and self.los:
            farthest_km = RMA_LOS_FARTHEST_KM
        return nearest_km, farthest_km

    def check(self, frequency_mhz: float, distance_km: float | None = None) -> None:
        """Raises OutsideValidity for the first value outside Table 7.4.1-1's stated range."""
        if self.scenario not in SCENARIOS:
            raise ValueError(f"scenario should be one of {', '.join(SCENARIOS)}; got {self.scenario!r}")
        limits = VALIDITY[self.scenario]
        values: dict[str, float] = {"frequency_mhz": frequency_mhz, "base_height_m": self.base_m,
                                    "mobile_height_m": self.mobile_height_m}
        if self.scenario == RMA:
            values |= {"building_height_m": self.building_height_m, "street_width_m": self.street_width_m}
        for parameter, value in values.items():
            low, high = limits[parameter]
            if not (low - 1e-9 <= value <= high + 1e-9):
                raise OutsideValidity(self.scenario, parameter, value, (low, high))
        if distance_km is not None:
            low, high = self.distance_limits_km()
            if not (low - 1e-12 <= distance_km <= high + 1e-12):
                raise OutsideValidity(self.scenario, "distance_km", distance_km, (low, high))


def breakpoint_distance_m(frequency_mhz: float, geometry: Geometry) -> float:
    """Table 7.4.1-1 notes 1 and 5: RMa d_BP = 2 pi h_BS h_UT f_c / c; UMa and UMi d'_BP = 4 h'_BS h'_UT
    f_c / c with effective heights h' = h - h_E, h_E = 1 m (UMi always, UMa for users below 13 m)."""
    frequency_hz = frequency_mhz * 1e6
    if geometry.scenario == RMA:
        return 2.0 * math.pi * geometry.base_m * geometry.mobile_height_m * frequency_hz / SPEED_OF_LIGHT_NOTE_M_PER_S
    return (4.0 * (geometry.base_m - 1.0) * (geometry.mobile_height_m - 1.0) * frequency_hz
            / SPEED_OF_LIGHT_NOTE_M_PER_S)


def _rma_los_db(frequency_ghz: float, distance_3d_m: float, building_height_m: float) -> float:
    h = building_height_m
    return (20.0 * math.log10(40.0 * math.pi * distance_3d_m * frequency_ghz / 3.0)
            + min(0.03 * h**1.72, 10.0) * math.log10(distance_3d_m) - min(0.044 * h**1.72, 14.77)
            + 0.002 * math.log10(h) * distance_3d_m)


def _los_db(frequency_mhz: float, distance_2d_m: float, geometry: Geometry) -> float:
    fc = frequency_mhz / 1000.0
    height_difference_m = geometry.base_m - geometry.mobile_height_m
    distance_3d_m = math.hypot(distance_2d_m, height_difference_m)
    breakpoint_m = breakpoint_distance_m(frequency_mhz, geometry)
    if geometry.scenario == RMA:
        if distance_2d_m <= breakpoint_m:
            return _rma_los_db(fc, distance_3d_m, geometry.building_height_m)
        return (_rma_los_db(fc, breakpoint_m, geometry.building_height_m)
                + 40.0 * math.log10(distance_3d_m / breakpoint_m))
    near_slope, constant, far_term = (22.0, 28.0, 9.0) if geometry.scenario == UMA else (21.0, 32.4, 9.5)
    if distance_2d_m <= breakpoint_m:
        return constant + near_slope * math.log10(distance_3d_m) + 20.0 * math.log10(fc)
    return (constant + 40.0 * math.log10(distance_3d_m) + 20.0 * math.log10(fc)
            - far_term * math.log10(breakpoint_m**2 + height_difference_m**2))


def _nlos_prime_db(frequency_mhz: float, distance_2d_m: float, geometry: Geometry) -> float:
    fc = frequency_mhz / 1000.0
    h_bs, h_ut = geometry.base_m, geometry.mobile_height_m
    distance_3d_m = math.hypot(distance_2d_m, h_bs - h_ut)
    if geometry.scenario == UMA:
        return 13.54 + 39.08 * math.log10(distance_3d_m) + 20.0 * math.log10(fc) - 0.6 * (h_ut - 1.5)
    if geometry.scenario == UMI:
        return 35.3 * math.log10(distance_3d_m) + 22.4 + 21.3 * math.log10(fc) - 0.3 * (h_ut - 1.5)
    h, width = geometry.building_height_m, geometry.street_width_m
    return (161.04 - 7.1 * math.log10(width) + 7.5 * math.log10(h)
            - (24.37 - 3.7 * (h / h_bs) ** 2) * math.log10(h_bs)
            + (43.42 - 3.1 * math.log10(h_bs)) * (math.log10(distance_3d_m) - 3.0)
            + 20.0 * math.log10(fc) - (3.2 * math.log10(11.75 * h_ut) ** 2 - 4.97))


def path_loss_db(frequency_mhz: float, distance_km: float, geometry: Geometry = Geometry()) -> float:
    """Median path loss (no shadow fading) of TR 38.901 Table 7.4.1-1 at a 2D distance. NLOS is the larger
    of the LOS form and the NLOS form PL', as the table defines it. Raises OutsideValidity outside the
    table's frequency, distance, height and (RMa) building and street ranges."""
    geometry.check(frequency_mhz, distance_km)
    distance_2d_m = distance_km * 1000.0
    los_db = _los_db(frequency_mhz, distance_2d_m, geometry)
    if geometry.los:
        return los_db
    return max(los_db, _nlos_prime_db(frequency_mhz, distance_2d_m, geometry))


def distance_slope_db_per_decade(geometry: Geometry) -> float:
    """dB of extra loss per tenfold distance far from the mast: the NLOS forms' coefficients of log10(d3D)
    (UMa 39.08, UMi 35.3, RMa 43.42 - 3.1 log h_BS), or 40 beyond the LOS breakpoint."""
    if geometry.los:
        return 40.0
    if geometry.scenario == UMA:
        return 39.08
    if geometry.scenario == UMI:
        return 35.3
    return 43.42 - 3.1 * math.log10(geometry.base_m)


def max_range_km(frequency_mhz: float, allowed_loss_db: float, geometry: Geometry = Geometry()) -> float | None:
    """The 2D distance at which the path loss reaches `allowed_loss_db`, found by bisection on
    log10(distance). None when that distance lies outside the model's distances (below 10 m or beyond
    5 km, 10 km for RMa LOS). Raises OutsideValidity for a frequency or height the model does not cover."""
    nearest_km, farthest_km = geometry.distance_limits_km()
    if not path_loss_db(frequency_mhz, nearest_km, geometry) <= allowed_loss_db <= path_loss_db(
            frequency_mhz, farthest_km, geometry):
        return None
    low, high = math.log10(nearest_km), math.log10(farthest_km)
    # Every form of the table grows with distance (the NLOS max of two growing functions too), so the
    # bracket always holds the answer.
    while high - low > _LOG_DISTANCE_TOLERANCE:
        middle = (low + high) / 2.0
        if path_loss_db(frequency_mhz, 10.0**middle, geometry) < allowed_loss_db:
            low = middle
        else:
            high = middle
    return min(farthest_km, max(nearest_km, float(10.0 ** ((low + high) / 2.0))))


# -- second receive antenna ------------------------------------------------------------------------------

def _check_probability(outage_probability: float) -> None:
    if not 0.0 < outage_probability < 1.0:
        raise ValueError(f"outage probability should be between 0 and 1; got {outage_probability:g}")


def rayleigh_outage_snr_ratio(outage_probability: float) -> float:
    """SNR (relative to its mean) that one Rayleigh-fading branch falls below with the given probability:
    the exponential distribution's quantile, -ln(1 - p)."""
    _check_probability(outage_probability)
    return -math.log1p(-outage_probability)


def mrc_branch_eigenvalues(ecc: float, power_ratio: float) -> tuple[float, float]:
    """Means of the two independent exponential parts of the MRC output SNR, relative to branch 1's mean.

    The branches' complex gains have covariance [[1, rho sqrt(r)], [rho* sqrt(r), r]] with r the second
    branch's mean power relative to the first and |rho|^2 = ECC (the envelope correlation of Rayleigh
    branches is close to the squared magnitude of their complex correlation). MRC's output SNR is the
    sum of the covariance's eigenvalues, each times an independent unit exponential:
    lambda = (1 + r) / 2 +- sqrt(((1 - r) / 2)^2 + ECC r).
    """
    if not 0.0 <= ecc <= 1.0:
        raise ValueError(f"ECC should be between 0 and 1; got {ecc:g}")
    if not (power_ratio >= 0.0 and math.isfinite(power_ratio)):
        raise ValueError(f"the branch power ratio should be a finite number of at least 0; "
                         f"got {power_ratio:g}")
    mean = (1.0 + power_ratio) / 2.0
    spread = math.sqrt(((1.0 - power_ratio) / 2.0) ** 2 + ecc * power_ratio)
    return mean + spread, max(0.0, mean - spread)


def mrc_outage_cdf(snr_ratio: float, ecc: float = 0.0, power_ratio: float = 1.0) -> float:
    """P(MRC output SNR < snr_ratio x branch 1's mean SNR) for two Rayleigh branches.

    Distinct eigenvalues a > b: 1 - (a e^(-x/a) - b e^(-x/b)) / (a - b). Equal ones (independent branches
    of equal power): the gamma distribution of shape 2, 1 - e^(-x/a) (1 + x/a). b = 0 (fully correlated
    branches, or no second branch): the exponential, 1 - e^(-x/a).
    """
    if snr_ratio <= 0.0:
        return 0.0
    larger, smaller = mrc_branch_eigenvalues(ecc, power_ratio)
    if smaller <= 1e-12 * larger:
        return -math.expm1(-snr_ratio / larger)
    if larger - smaller <= 1e-6 * larger:
        # The two-exponential form cancels catastrophically here; the shape-2 gamma differs from it by
        # terms of the squared relative difference (below 1e-12).
        scaled = snr_ratio / ((larger + smaller) / 2.0)
        return -math.expm1(-scaled) - scaled * math.exp(-scaled)
    return 1.0 - (larger * math.exp(-snr_ratio / larger) - smaller * math.exp(-snr_ratio / smaller)) / (
        larger - smaller)


def mrc_outage_snr_ratio(outage_probability: float, ecc: float = 0.0, power_ratio: float = 1.0) -> float:
    """The SNR (relative to branch 1's mean) that two-branch MRC falls below with the given probability,
    found by bisection on the CDF of mrc_outage_cdf."""
    _check_probability(outage_probability)
    larger, _ = mrc_branch_eigenvalues(ecc, power_ratio)
    low, high = 0.0, larger * rayleigh_outage_snr_ratio(outage_probability)
    # The output SNR is at least the larger part alone, so its quantile is at least that part's; the
    # upper bound doubles until it holds the answer.
    while mrc_outage_cdf(high, ecc, power_ratio) < outage_probability:
        low, high = high, 2.0 * high
    while high - low > _RELATIVE_QUANTILE_TOLERANCE * high:
        middle = (low + high) / 2.0
        if mrc_outage_cdf(middle, ecc, power_ratio) < outage_probability:
            low = middle
        else:
            high = middle
    return (low + high) / 2.0


@dataclass(frozen=True)
class SecondAntennaGain:
    """What a second receive antenna adds at a given outage, split into its two parts.

    array_gain_db: the rise of the mean combined SNR, 10 log10(1 + eta2 / eta1); 3.01 dB for two equally
    efficient antennas, whatever their correlation. diversity_gain_db: the rest of the gain at the outage
    probability, from the combined signal fading less deeply; it is largest for uncorrelated branches and
    zero for fully correlated ones (ECC = 1) or a missing second branch. total_db = array + diversity.
    """

    outage_probability: float
    ecc: float
    efficiency_ratio: float
    array_gain_db: float
    diversity_gain_db: float

    @property
    def total_db(self) -> float:
        return self.array_gain_db + self.diversity_gain_db


def second_antenna_gain(
    outage_probability: float = 0.01, ecc: float = 0.0, efficiency_ratio: float = 1.0,
) -> SecondAntennaGain:
    """Gain of two-branch MRC over the first antenna alone at the same outage probability, in Rayleigh
    fading, with the branches' envelope correlation `ecc` and the second antenna's total efficiency
    relative to the first (`efficiency_ratio` = eta2 / eta1, the ratio of the branches' mean SNRs)."""
    single = rayleigh_outage_snr_ratio(outage_probability)
    combined = mrc_outage_snr_ratio(outage_probability, ecc, efficiency_ratio)
    total_db = 10.0 * math.log10(combined / single)
    array_db = 10.0 * math.log10(1.0 + efficiency_ratio)
    return SecondAntennaGain(outage_probability, ecc, efficiency_ratio, array_db, total_db - array_db)


def apparent_diversity_gain_rule_db(ecc: float) -> float:
    """The rule of thumb 10 sqrt(1 - ECC) dB for two-branch diversity at 1 % outage (common practice,
    with ECC the envelope correlation). Shown for comparison; the analysis uses second_antenna_gain."""
    if not 0.0 <= ecc <= 1.0:
        raise ValueError(f"ECC should be between 0 and 1; got {ecc:g}")
    return 10.0 * math.sqrt(1.0 - ecc)


def area_share_ratio(gain_db: float, slope_db_per_decade: float) -> float:
    """Area the weaker case covers as a share of the stronger one's, (r1 / r2)^2, where `gain_db` more
    allowed path loss stretches the range by 10^(gain / slope) at a model's distance slope."""
    if slope_db_per_decade <= 0.0:
        raise ValueError(f"the distance slope should be positive; got {slope_db_per_decade:g} dB per decade")
    return float(10.0 ** (-2.0 * gain_db / slope_db_per_decade))


# -- one receive branch fewer: the published figures and the fading bound -----------------------------------

@dataclass(frozen=True)
class SingleBranchCost:
    """What the downlink loses without the second receive branch, as a range with its assumptions.

    static_db: the array gain alone, 10 log10(1 + eta2 / eta1) (3 dB for equal antennas). low_db, high_db,
    headline_db: the published single-branch figures for equal branches (coverage.toml [single_branch]), less
    the array gain a weaker second antenna would not have brought, and never above the bound. bound_db: the
    flat-Rayleigh MRC gain at the outage probability (second_antenna_gain), the most a second branch adds
    when nothing else in the link fights fading.
    """

    static_db: float
    low_db: float
    headline_db: float
    high_db: float
    bound: SecondAntennaGain
    source: str

    @property
    def bound_db(self) -> float:
        return self.bound.total_db


def single_branch_cost(
    published: "PublishedSingleBranch", outage_probability: float = 0.01, ecc: float = 0.0,
    efficiency_ratio: float = 1.0,
) -> SingleBranchCost:
    bound = second_antenna_gain(outage_probability, ecc, efficiency_ratio)
    static_db = bound.array_gain_db
    shortfall_db = 10.0 * math.log10(2.0) - static_db  # array gain a weaker second antenna does not bring

    def scaled(figure_db: float) -> float:
        return max(0.0, min(bound.total_db, figure_db - shortfall_db))

    return SingleBranchCost(
        static_db=static_db,
        low_db=scaled(published.fading_low_db),
        headline_db=scaled(published.headline_db),
        high_db=scaled(published.fading_high_db),
        bound=bound,
        source=published.source,
    )


# -- data: coverage targets, entry losses, defaults -------------------------------------------------------

@dataclass(frozen=True)
class CoverageTarget:
    category: str
    ul_mcl_db: float
    dl_mcl_db: float
    dl_reference_rx_antennas: int
    ul_source: str
    dl_source: str


@dataclass(frozen=True)
class PublishedSingleBranch:
    static_db: float
    fading_low_db: float
    fading_high_db: float
    headline_db: float
    source: str


@dataclass(frozen=True)
class Enhancement:
    """The part of a category's coverage target that only coverage enhancement (repetition) reaches."""

    category: str
    legacy_mcl_db: float  # the coverage the target was set beyond
    feature: str  # what the operator must enable for the deepest of it
    source: str


@dataclass(frozen=True)
class EntryLoss:
    environment: str
    loss_db: float
    source: str


@dataclass(frozen=True)
class Assumptions:
    scenario: str
    los: bool
    mobile_height_m: float
    outage_probability: float
    reference_distance_km: float
    base_gain_db: float
    assumed_ecc: float
    assumed_efficiency_ratio: float
    sources: Mapping[str, str]


@dataclass(frozen=True)
class CoverageData:
    targets: Mapping[str, CoverageTarget]
    single_branch: PublishedSingleBranch
    entry_losses: Mapping[str, EntryLoss]
    assumptions: Assumptions
    enhancements: Mapping[str, Enhancement] = field(default_factory=dict)


def _number(table: Mapping[str, Any], key: str, where: str) -> float:
    value = table.get(key)
    if not isinstance(value, (int, float)) or isinstance(value, bool) or not math.isfinite(value):
        raise CoverageDataError(f"coverage.toml [{where}]: {key} should be a number, got {value!r}")
    return float(value)


def _text(table: Mapping[str, Any], key: str, where: str) -> str:
    value = table.get(key)
    if not isinstance(value, str) or not value.strip():
        raise CoverageDataError(f"coverage.toml [{where}]: {key} should be non-empty text, got {value!r}")
    return value


def parse_coverage_data(tables: Mapping[str, Any]) -> CoverageData:
    """Checks and types the decoded coverage.toml: every category has a target per direction and every
    environment an entry loss, each with a source."""
    targets: dict[str, CoverageTarget] = {}
    for category_id, table in tables.get("targets", {}).items():
        where = f"targets.{category_id}"
        rx_antennas = table.get("dl_reference_rx_antennas")
        if rx_antennas not in (1, 2) or isinstance(rx_antennas, bool):
            raise CoverageDataError(f"coverage.toml [{where}]: dl_reference_rx_antennas should be 1 or 2")
        targets[category_id] = CoverageTarget(
            category=category_id,
            ul_mcl_db=_number(table, "ul_mcl_db", where),
            dl_mcl_db=_number(table, "dl_mcl_db", where),
            dl_reference_rx_antennas=int(rx_antennas),
            ul_source=_text(table, "ul_source", where),
            dl_source=_text(table, "dl_source", where),
        )
    missing = sorted(set(categories()) - set(targets))
    if missing:
        raise CoverageDataError(f"coverage.toml: no coverage target for {', '.join(missing)}")

    branch = tables.get("single_branch", {})
    published = PublishedSingleBranch(
        **{name: _number(branch, name, "single_branch")
           for name in ("static_db", "fading_low_db", "fading_high_db", "headline_db")},
        source=_text(branch, "source", "single_branch"),
    )
    if not 0 <= published.fading_low_db <= published.headline_db <= published.fading_high_db:
        raise CoverageDataError("coverage.toml [single_branch]: expected fading_low_db <= headline_db <= "
                                "fading_high_db")

    losses: dict[str, EntryLoss] = {}
    for environment, table in tables.get("entry_loss", {}).items():
        where = f"entry_loss.{environment}"
        if environment not in ENVIRONMENTS:
            raise CoverageDataError(f"coverage.toml [{where}]: environment should be one of {ENVIRONMENTS}")
        loss_db = _number(table, "loss_db", where)
        if loss_db < 0:
            raise CoverageDataError(f"coverage.toml [{where}]: loss_db should be at least 0")
        losses[environment] = EntryLoss(environment, loss_db, _text(table, "source", where))
    missing = sorted(set(ENVIRONMENTS) - set(losses))
    if missing:
        raise CoverageDataError(f"coverage.toml: no entry loss for {', '.join(missing)}")

    enhancements: dict[str, Enhancement] = {}
    for category_id, table in tables.get("enhancement", {}).items():
        where = f"enhancement.{category_id}"
        if category_id not in targets:
            raise CoverageDataError(f"coverage.toml [{where}]: no coverage target for {category_id}")
        legacy_db = _number(table, "legacy_mcl_db", where)
        if legacy_db >= min(targets[category_id].ul_mcl_db, targets[category_id].dl_mcl_db):
            raise CoverageDataError(f"coverage.toml [{where}]: legacy_mcl_db should be below the category's targets")
        enhancements[category_id] = Enhancement(category_id, legacy_db, _text(table, "feature", where),
                                                _text(table, "source", where))

    defaults = tables.get("defaults", {})
    names = ("mobile_height_m", "outage_probability", "reference_distance_km", "base_gain_db", "assumed_ecc",
             "assumed_efficiency_ratio")
    numbers = {name: _number(defaults, name, "defaults") for name in names}
    source_keys = {"scenario": "scenario_source", "los": "los_source", "mobile_height_m": "mobile_height_source",
                   "outage_probability": "outage_source", "reference_distance_km": "reference_distance_source",
                   "base_gain_db": "base_gain_source", "assumed_ecc": "assumed_ecc_source",
                   "assumed_efficiency_ratio": "assumed_efficiency_ratio_source"}
    sources = {name: _text(defaults, key, "defaults") for name, key in source_keys.items()}
    scenario = _text(defaults, "scenario", "defaults")
    if scenario not in SCENARIOS:
        raise CoverageDataError(f"coverage.toml [defaults]: scenario should be one of {SCENARIOS}")
    los = defaults.get("los")
    if not isinstance(los, bool):
        raise CoverageDataError("coverage.toml [defaults]: los should be true or false")
    return CoverageData(targets, published, losses,
                        Assumptions(scenario=scenario, los=los, sources=sources, **numbers), enhancements)


@cache
def coverage_data() -> CoverageData:
    with (DATA_DIR / "coverage.toml").open("rb") as handle:
        return parse_coverage_data(tomllib.load(handle))


# -- the analysis ---------------------------------------------------------------------------------------

@dataclass(frozen=True)
class CoverageAnalysis:
    """One band's budget in both directions, with the downlink with one and with two receive antennas
    (see the module docstring). Allowed losses are path losses the link can take; margins are what is left
    at the reference distance; None ranges and margins mean the model does not cover the case (model_reason)."""

    band: str
    frequency_mhz: float  # the band's lowest downlink frequency
    ul_frequency_mhz: float | None  # the band's lowest uplink frequency; None for an SDL band
    geometry: Geometry
    model_reason: str | None  # why TR 38.901 refused this band (then no margin or range is given)
    target: CoverageTarget
    power_class: int
    max_output_dbm: float
    power_class_source: str
    base_gain_db: float
    environment: str
    environment_given: bool
    entry_loss_db: float
    entry_loss_source: str
    antenna_loss_db: float  # -10 log10(efficiency) of the main antenna in the band; 0 when not entered
    antenna_loss_source: str
    cable_loss_db: float  # the main antenna's feed
    cost: SingleBranchCost
    ecc_source: str
    efficiency_source: str
    fitted_rx_antennas: int  # receive antennas the design connects: 2 means the two-antenna case is real
    allowed_ul_db: float | None
    allowed_dl_one_db: float
    allowed_dl_two_db: float
    reference_distance_km: float
    path_loss_dl_reference_db: float | None
    path_loss_ul_reference_db: float | None
    range_one_km: float | None
    range_two_km: float | None
    range_note: str | None

    @property
    def modelled(self) -> bool:
        """True when TR 38.901 covers the band (margins, ranges and area shares then mean something)."""
        return self.model_reason is None

    @property
    def model_label(self) -> str:
        return self.geometry.label

    @property
    def distance_slope_db_per_decade(self) -> float:
        return distance_slope_db_per_decade(self.geometry)

    @property
    def margin_ul_db(self) -> float | None:
        if self.allowed_ul_db is None or self.path_loss_ul_reference_db is None:
            return None
        return self.allowed_ul_db - self.path_loss_ul_reference_db

    def margin_dl_db(self, antennas: int) -> float | None:
        if self.path_loss_dl_reference_db is None:
            return None
        allowed_db = self.allowed_dl_two_db if antennas >= 2 else self.allowed_dl_one_db
        return allowed_db - self.path_loss_dl_reference_db

    def limiting_direction(self, antennas: int) -> str:
        """"ul" when the uplink has less margin than the downlink with this many receive antennas, else "dl"
        (an SDL band has only a downlink; unmodelled bands compare allowed losses)."""
        if self.allowed_ul_db is None:
            return "dl"
        margin_ul, margin_dl = self.margin_ul_db, self.margin_dl_db(antennas)
        if margin_ul is None or margin_dl is None:
            allowed_dl = self.allowed_dl_two_db if antennas >= 2 else self.allowed_dl_one_db
            return "ul" if self.allowed_ul_db < allowed_dl else "dl"
        return "ul" if margin_ul < margin_dl else "dl"

    def margin_db(self, antennas: int) -> float | None:
        """Coverage margin at the reference distance: the smaller of the two directions'."""
        margins = [margin for margin in (self.margin_ul_db, self.margin_dl_db(antennas)) if margin is not None]
        if self.path_loss_dl_reference_db is None:
            return None
        return min(margins)

    @property
    def margin_one_db(self) -> float | None:
        return self.margin_db(1)

    @property
    def margin_two_db(self) -> float | None:
        return self.margin_db(2)

    def coverage_loss_db(self, branch_cost_db: float) -> float:
        """How much of a downlink loss of `branch_cost_db` reaches the coverage: none while the uplink
        still limits, all of it once the downlink does (margins compared at each direction's frequency)."""
        if self.allowed_ul_db is None:
            return branch_cost_db
        if self.margin_ul_db is not None and self.margin_dl_db(2) is not None:
            headroom_db = self.margin_dl_db(2) - self.margin_ul_db  # type: ignore[operator]
        else:
            headroom_db = self.allowed_dl_two_db - self.allowed_ul_db
        return max(0.0, branch_cost_db - max(0.0, headroom_db))

    def area_share_ratio_for(self, branch_cost_db: float) -> float:
        """Area a single receive antenna covers as a share of two antennas', from the coverage it loses at
        the model's distance slope far from the mast, (r1 / r2)^2."""
        return area_share_ratio(self.coverage_loss_db(branch_cost_db), self.distance_slope_db_per_decade)

    @property
    def area_share_ratio(self) -> float:
        return self.area_share_ratio_for(self.cost.headline_db)

    @property
    def area_share_pct(self) -> float:
        return 100.0 * self.area_share_ratio

    @property
    def area_share_bound_pct(self) -> float:
        return 100.0 * self.area_share_ratio_for(self.cost.bound_db)

    def as_dict(self) -> dict[str, Any]:
        """A row for JSON and templates: every key names its unit, numbers rounded as evidence is."""
        cost = self.cost
        row: dict[str, Any] = {
            "band": self.band,
            "frequency_mhz": self.frequency_mhz,
            "ul_frequency_mhz": self.ul_frequency_mhz,
            "model": self.geometry.scenario,
            "model_label": self.model_label,
            "model_source": TR_38_901,
            "model_reason": self.model_reason,
            "scenario": self.geometry.scenario,
            "los": self.geometry.los,
            "base_height_m": self.geometry.base_m,
            "mobile_height_m": self.geometry.mobile_height_m,
            "mcl_db": self.target.dl_mcl_db,
            "mcl_source": self.target.dl_source,
            "mcl_dl_db": self.target.dl_mcl_db,
            "mcl_dl_source": self.target.dl_source,
            "mcl_ul_db": self.target.ul_mcl_db if self.allowed_ul_db is not None else None,
            "mcl_ul_source": self.target.ul_source,
            "reference_rx_antennas": self.target.dl_reference_rx_antennas,
            "power_class": self.power_class,
            "max_output_dbm": self.max_output_dbm,
            "power_class_source": self.power_class_source,
            "base_gain_db": self.base_gain_db,
            "environment": self.environment,
            "environment_given": self.environment_given,
            "entry_loss_db": self.entry_loss_db,
            "entry_loss_source": self.entry_loss_source,
            "antenna_loss_db": self.antenna_loss_db,
            "antenna_loss_source": self.antenna_loss_source,
            "cable_loss_db": self.cable_loss_db,
            "outage_pct": 100.0 * cost.bound.outage_probability,
            "ecc": cost.bound.ecc,
            "ecc_source": self.ecc_source,
            "efficiency_ratio": cost.bound.efficiency_ratio,
            "efficiency_source": self.efficiency_source,
            "single_branch_cost_db": cost.headline_db,
            "single_branch_cost_range_db": [cost.low_db, cost.high_db],
            "single_branch_static_db": cost.static_db,
            "single_branch_source": cost.source,
            "fading_bound_db": cost.bound_db,
            "array_gain_db": cost.bound.array_gain_db,
            "diversity_gain_db": cost.bound.diversity_gain_db,
            "second_antenna_gain_db": cost.headline_db,
            "fitted_rx_antennas": self.fitted_rx_antennas,
            "allowed_ul_db": self.allowed_ul_db,
            "allowed_loss_one_db": self.allowed_dl_one_db,
            "allowed_loss_two_db": self.allowed_dl_two_db,
            "reference_distance_km": self.reference_distance_km,
            "margin_ul_db": self.margin_ul_db,
            "margin_dl_one_db": self.margin_dl_db(1),
            "margin_dl_two_db": self.margin_dl_db(2),
            "margin_one_db": self.margin_one_db,
            "margin_two_db": self.margin_two_db,
            "limiting_one": self.limiting_direction(1),
            "limiting_two": self.limiting_direction(2),
            "range_one_km": self.range_one_km,
            "range_two_km": self.range_two_km,
            "range_note": self.range_note,
            "distance_slope_db_per_decade": self.distance_slope_db_per_decade,
            "area_share_pct": self.area_share_pct if self.modelled else None,
            "area_share_bound_pct": self.area_share_bound_pct if self.modelled else None,
        }
        return {key: round_evidence(key, value) for key, value in row.items()}


# Columns of the coverage table: key of CoverageAnalysis.as_dict(), heading, unit.
TABLE_COLUMNS: tuple[tuple[str, str, str], ...] = (
    ("band", "Band", ""),
    ("frequency_mhz", "DL from", "MHz"),
    ("ul_frequency_mhz", "UL from", "MHz"),
    ("model_label", "Path-loss model", ""),
    ("mcl_dl_db", "DL target (MCL)", "dB"),
    ("mcl_ul_db", "UL target (MCL)", "dB"),
    ("entry_loss_db", "Entry loss", "dB"),
    ("single_branch_cost_db", "One receive branch fewer costs (DL)", "dB"),
    ("fading_bound_db", "Flat-Rayleigh bound", "dB"),
    ("limiting_one", "Limits with 1 antenna", ""),
    ("margin_one_db", "Margin at reference distance, 1 antenna", "dB"),
    ("margin_two_db", "Margin at reference distance, 2 antennas", "dB"),
    ("range_one_km", "Range, 1 antenna", "km"),
    ("range_two_km", "Range, 2 antennas", "km"),
    ("area_share_pct", "Area covered by 1 antenna, share of 2", "%"),
)


# The coverage table as the revision page's panel and the PDF record show it: one column per band, rows in
# groups by direction, each a key of CoverageAnalysis.as_dict(), a label and a unit.
TABLE_GROUPS: tuple[tuple[str, tuple[tuple[str, str, str], ...]], ...] = (
    ("Uplink: device to base station", (
        ("ul_frequency_mhz", "lowest uplink frequency", "MHz"),
        ("mcl_ul_db", "coverage target (maximum coupling loss)", "dB"),
        ("max_output_dbm", "device output at its power class", "dBm"),
        ("allowed_ul_db", "path loss the uplink can take", "dB"),
        ("margin_ul_db", "margin at the reference distance", "dB"),
    )),
    ("Downlink: base station to device", (
        ("frequency_mhz", "lowest downlink frequency", "MHz"),
        ("mcl_dl_db", "coverage target (maximum coupling loss)", "dB"),
        ("allowed_loss_two_db", "path loss it can take, 2 receive antennas", "dB"),
        ("allowed_loss_one_db", "path loss it can take, 1 receive antenna", "dB"),
        ("margin_dl_two_db", "margin at the reference distance, 2 antennas", "dB"),
        ("margin_dl_one_db", "margin at the reference distance, 1 antenna", "dB"),
    )),
    ("One receive branch fewer (downlink only)", (
        ("single_branch_cost_db", "cost: published single-branch figure", "dB"),
        ("single_branch_cost_range_db", "range of the published figures", "dB"),
        ("fading_bound_db", "bound: flat-Rayleigh MRC gain", "dB"),
    )),
    ("Losses and gains in both directions", (
        ("entry_loss_db", "entry loss of the environment", "dB"),
        ("antenna_loss_db", "main antenna's efficiency loss", "dB"),
        ("cable_loss_db", "main antenna's cable loss", "dB"),
        ("base_gain_db", "base station antenna gain", "dB"),
    )),
    ("Coverage", (
        ("limiting_two", "direction that limits, 2 antennas", ""),
        ("limiting_one", "direction that limits, 1 antenna", ""),
        ("range_two_km", "range, 2 receive antennas", "km"),
        ("range_one_km", "range, 1 receive antenna", "km"),
        ("area_share_pct", "area 1 antenna covers, share of 2", "%"),
    )),
)


def _main_and_second(design: Design) -> tuple[Antenna | None, Antenna | None]:
    """The antenna on the main port and the one a second receive path would use (the first other one,
    receive antennas before other main ones). GNSS and WLAN antennas are not receive branches."""
    cellular = [antenna for antenna in design.antennas if antenna.is_cellular]
    if not cellular:
        return None, None
    main = next((antenna for antenna in cellular if antenna.transmits), cellular[0])
    others = sorted((antenna for antenna in cellular if antenna is not main),
                    key=lambda antenna: antenna.transmits)
    return main, (others[0] if others else None)


def measured_ecc(
    measurements: Sequence[LoadedMeasurement], first: str, second: str, band: Band,
) -> tuple[float, str] | None:
    """The worst envelope correlation of two antennas over a band's downlink in any measurement that has
    both, with the file it came from; None when none measured the pair there."""
    worst: tuple[float, str] | None = None
    for measurement in measurements:
        i, j = measurement.port_of(first), measurement.port_of(second)
        if i is None or j is None:
            continue
        window = sparams.band_window(measurement.network, [band.dl_mhz])
        found = sparams.worst_maximum(measurement.envelope_correlation(i, j),
                                      measurement.network.frequencies_mhz, window.mask)
        if found is not None and (worst is None or found.value > worst[0]):
            worst = (found.value, measurement.file)
    return worst


def _range_note(geometry: Geometry, limiting: Sequence[tuple[str, float, float, float | None]]) -> str | None:
    """Why a range is missing: (label, frequency, allowed loss, range) for one and two antennas."""
    nearest_km, farthest_km = geometry.distance_limits_km()
    notes = []
    for label, frequency_mhz, allowed_db, range_km in limiting:
        if range_km is not None:
            continue
        if allowed_db < path_loss_db(frequency_mhz, nearest_km, geometry):
            notes.append(f"with {label} the link closes at less than {1000 * nearest_km:g} m, the model's "
                         "shortest distance")
        else:
            notes.append(f"with {label} the link would reach beyond {farthest_km:g} km, the model's longest "
                         "distance")
    if not notes:
        return None
    return "; ".join(notes).capitalize() + ". The area share still follows from the model's distance slope."


def analyse_coverage(
    design: Design | CheckContext,
    measurements: Sequence[LoadedMeasurement] = (),
    *,
    scenario: str | None = None,
    los: bool | None = None,
    base_height_m: float | None = None,
    mobile_height_m: float | None = None,
    outage_probability: float | None = None,
    reference_distance_km: float | None = None,
    entry_loss_db: Mapping[str, float] | None = None,
    base_gain_db: float | None = None,
    ecc: float | None = None,
    efficiency_ratio: float | None = None,
) -> list[CoverageAnalysis]:
    """The uplink and downlink budget of every selected band, at each direction's lowest frequency.

    Allowed path loss: the category's MCL target for the direction (a coupling loss between antenna
    connectors, so antenna gains count) plus the base station's net antenna gain, less the environment's
    entry loss and the main antenna's efficiency loss (when entered; the target's device antenna is taken
    as lossless) and cable loss; the uplink also gains or loses the power class's difference from 23 dBm.
    The downlink target holds for the category's reference receive antennas: with a one-antenna reference,
    two antennas add the single-branch cost; with a two-antenna reference, one antenna falls short by it.

    The single-branch cost uses, in this order: the worst ECC measured over the band's downlink for the
    design's two antennas, the `ecc` given here ("entered"), or the assumed default; and the ratio of the
    entered efficiencies (less cable losses) of both antennas in the band, the `efficiency_ratio` given
    here, or the assumed default. `entry_loss_db` overrides the loss of any environment; every other keyword
    overrides the default of coverage.toml. A band TR 38.901 does not cover is budgeted without a path loss,
    and says why.
    """
    if isinstance(design, CheckContext):
        measurements = measurements or design.measurements
        rx_connected = design.rx_connected
        design = design.design
    else:
        rx_connected = CheckContext(design).rx_connected
    data = coverage_data()
    defaults = data.assumptions
    geometry = Geometry(
        scenario=defaults.scenario if scenario is None else scenario,
        los=defaults.los if los is None else los,
        base_height_m=base_height_m,
        mobile_height_m=defaults.mobile_height_m if mobile_height_m is None else mobile_height_m,
    )
    if geometry.scenario not in SCENARIOS:
        raise ValueError(f"scenario should be one of {', '.join(SCENARIOS)}; got {geometry.scenario!r}")
    outage_probability = defaults.outage_probability if outage_probability is None else outage_probability
    reference_distance_km = (defaults.reference_distance_km if reference_distance_km is None
                             else reference_distance_km)
    base_gain_db = defaults.base_gain_db if base_gain_db is None else base_gain_db
    nearest_km, farthest_km = geometry.distance_limits_km()
    if not nearest_km <= reference_distance_km <= farthest_km:
        raise OutsideValidity(geometry.scenario, "reference_distance_km", reference_distance_km,
                              (nearest_km, farthest_km))

    environment_given = design.deployment.environment is not None
    environment = design.deployment.environment or "outdoor"
    overrides = dict(entry_loss_db or {})
    unknown = sorted(set(overrides) - set(ENVIRONMENTS))
    if unknown:
        raise ValueError(f"entry losses are given per environment ({', '.join(ENVIRONMENTS)}); got {unknown}")
    if environment in overrides:
        entry_db, entry_source = float(overrides[environment]), "entered"
    else:
        entry = data.entry_losses[environment]
        entry_db, entry_source = entry.loss_db, entry.source
    if not environment_given:
        entry_source = f"environment not given: taken as outdoor ({entry_source})"

    modem = design.modem
    power = power_classes()[modem.power_class]
    target = data.targets[modem.category.id]
    main, second = _main_and_second(design)
    main_cable_db = main.cable_loss_db if main else 0.0
    results = []
    for band in modem.bands:
        frequency_mhz = band.dl_mhz[0]
        ul_frequency_mhz = band.ul_mhz[0] if band.ul_mhz is not None else None
        reason = None
        try:
            for checked_mhz in (frequency_mhz, ul_frequency_mhz):
                if checked_mhz is not None:
                    geometry.check(checked_mhz)
        except OutsideValidity as refusal:
            reason = str(refusal)

        band_ecc, ecc_source = defaults.assumed_ecc, defaults.sources["assumed_ecc"]
        found = measured_ecc(measurements, main.name, second.name, band) if main and second else None
        if found is not None:
            band_ecc, ecc_source = found[0], f"measured (worst over the downlink, {found[1]})"
        elif ecc is not None:
            band_ecc, ecc_source = ecc, "entered"

        main_efficiency = main.efficiency_pct.get(band.name) if main else None
        second_efficiency = second.efficiency_pct.get(band.name) if second else None
        ratio, ratio_source = defaults.assumed_efficiency_ratio, defaults.sources["assumed_efficiency_ratio"]
        if main_efficiency and second_efficiency is not None and main and second:
            ratio = (second_efficiency / main_efficiency) * 10.0 ** ((main.cable_loss_db - second.cable_loss_db) / 10.0)
            ratio_source = "entered efficiencies" + (" and cable losses" if main.cable_loss_db or
                                                     second.cable_loss_db else "")
        elif efficiency_ratio is not None:
            ratio, ratio_source = efficiency_ratio, "entered"
        cost = single_branch_cost(data.single_branch, outage_probability, band_ecc, ratio)

        if main is not None and main_efficiency:
            antenna_db = -10.0 * math.log10(main_efficiency / 100.0)
            antenna_source = f"entered efficiency of {main.name}: {main_efficiency:g} %"
        elif main_efficiency == 0:
            antenna_db, antenna_source = 0.0, "entered efficiency 0 %: no budget closes; no loss counted"
        else:
            antenna_db, antenna_source = 0.0, "efficiency not entered: no antenna loss counted"

        device_db = base_gain_db - entry_db - antenna_db - main_cable_db
        allowed_ul_db = (None if ul_frequency_mhz is None
                         else target.ul_mcl_db + device_db + (power.max_output_dbm - REFERENCE_POWER_DBM))
        at_reference_db = target.dl_mcl_db + device_db
        if target.dl_reference_rx_antennas == 2:
            allowed_two_db, allowed_one_db = at_reference_db, at_reference_db - cost.headline_db
        else:
            allowed_one_db, allowed_two_db = at_reference_db, at_reference_db + cost.headline_db

        path_dl = path_ul = None
        ranges: list[float | None] = [None, None]
        note = reason
        if reason is None:
            path_dl = path_loss_db(frequency_mhz, reference_distance_km, geometry)
            if ul_frequency_mhz is not None:
                path_ul = path_loss_db(ul_frequency_mhz, reference_distance_km, geometry)
            limiting = []
            for index, (label, allowed_dl_db) in enumerate((("one antenna", allowed_one_db),
                                                             ("two antennas", allowed_two_db))):
                dl_range = max_range_km(frequency_mhz, allowed_dl_db, geometry)
                margin_dl = allowed_dl_db - path_dl
                if (allowed_ul_db is not None and path_ul is not None and ul_frequency_mhz is not None
                        and allowed_ul_db - path_ul < margin_dl):
                    limiting.append((label, ul_frequency_mhz, allowed_ul_db,
                                     max_range_km(ul_frequency_mhz, allowed_ul_db, geometry)))
                else:
                    limiting.append((label, frequency_mhz, allowed_dl_db, dl_range))
                ranges[index] = limiting[-1][3]
            note = _range_note(geometry, limiting)
        results.append(CoverageAnalysis(
            band=band.name,
            frequency_mhz=frequency_mhz,
            ul_frequency_mhz=ul_frequency_mhz,
            geometry=geometry,
            model_reason=reason,
            target=target,
            power_class=power.number,
            max_output_dbm=power.max_output_dbm,
            power_class_source=power.source,
            base_gain_db=base_gain_db,
            environment=environment,
            environment_given=environment_given,
            entry_loss_db=entry_db,
            entry_loss_source=entry_source,
            antenna_loss_db=antenna_db,
            antenna_loss_source=antenna_source,
            cable_loss_db=main_cable_db,
            cost=cost,
            ecc_source=ecc_source,
            efficiency_source=ratio_source,
            fitted_rx_antennas=min(rx_connected, 2),
            allowed_ul_db=allowed_ul_db,
            allowed_dl_one_db=allowed_one_db,
            allowed_dl_two_db=allowed_two_db,
            reference_distance_km=reference_distance_km,
            path_loss_dl_reference_db=path_dl,
            path_loss_ul_reference_db=path_ul,
            range_one_km=ranges[0],
            range_two_km=ranges[1],
            range_note=note,
        ))
    return results
