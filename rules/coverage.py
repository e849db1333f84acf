"""Downlink coverage with one and with two receive antennas: path loss, the second antenna's gain, range.

For each selected band, at its lowest downlink frequency, the analysis answers: how much path loss the
category's coverage target leaves once the deployment's entry loss and the antenna's efficiency are
paid, how much a second receive antenna adds to that, how far each case reaches by an empirical
path-loss model, and which share of the two-antenna area a single antenna covers.

Methods and their sources
- Free-space loss, ITU-R P.525: L = 32.45 + 20 log f(MHz) + 20 log d(km).
- Okumura-Hata: Hata, "Empirical formula for propagation loss in land mobile radio services", IEEE
  Trans. Veh. Technol. 29(3), 1980. Valid 150-1500 MHz, 1-20 km, base 30-200 m, mobile 1-10 m.
- COST-231 Hata: COST Action 231 final report, "Digital mobile radio towards future generation
  systems" (1999), section 4.4. Valid 1500-2000 MHz, same distances and heights.
- Second-antenna gain: maximal-ratio combining (MRC) of two branches in Rayleigh fading. The combined
  SNR is a sum of two independent exponentials whose means are the eigenvalues of the branches'
  covariance matrix, so its outage quantile has a closed-form CDF solved here by bisection.
- Coverage targets (maximum coupling loss, MCL) and entry losses: rules/data/coverage.toml, one source
  per row.

Frequencies are in MHz, distances in km, heights in m, losses and gains in dB.
"""

import math
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import cache
from typing import Any

from rules import sparams
from rules.catalog import DATA_DIR, Band, categories
from rules.context import CheckContext
from rules.design import ENVIRONMENTS, Antenna, Design
from rules.findings import round_evidence
from rules.measurements import LoadedMeasurement

FREE_SPACE = "free-space"
OKUMURA_HATA = "okumura-hata"
COST231_HATA = "cost231-hata"
MODELS = (FREE_SPACE, OKUMURA_HATA, COST231_HATA)
MODEL_LABELS = {
    FREE_SPACE: "free space (ITU-R P.525)",
    OKUMURA_HATA: "Okumura-Hata (Hata 1980)",
    COST231_HATA: "COST-231 Hata (COST 231 final report)",
}
MODEL_SOURCES = {
    FREE_SPACE: "ITU-R P.525",
    OKUMURA_HATA: "Hata, IEEE Trans. Veh. Technol. 29(3), 1980",
    COST231_HATA: "COST Action 231 final report (1999), section 4.4",
}

# Clutter classes. Okumura-Hata: "urban" is the small/medium city formula, "urban-large" the large city
# one, "suburban" and "open" Hata's corrections to the small/medium city formula. COST-231 Hata:
# "urban" and "suburban" both take Cm = 0 dB ("medium sized city and suburban centres"), "urban-large"
# Cm = 3 dB ("metropolitan centres"); the report gives no open-area form, so "open" is refused there.
AREAS = ("urban-large", "urban", "suburban", "open")
COST231_AREAS = ("urban-large", "urban", "suburban")

# Validity ranges as the models' authors state them: parameter -> (low, high), edges included.
HATA_VALIDITY: Mapping[str, tuple[float, float]] = {
    "frequency_mhz": (150.0, 1500.0),
    "distance_km": (1.0, 20.0),
    "base_height_m": (30.0, 200.0),
    "mobile_height_m": (1.0, 10.0),
}
COST231_VALIDITY: Mapping[str, tuple[float, float]] = {**HATA_VALIDITY, "frequency_mhz": (1500.0, 2000.0)}
MODEL_VALIDITY: Mapping[str, Mapping[str, tuple[float, float]]] = {
    OKUMURA_HATA: HATA_VALIDITY, COST231_HATA: COST231_VALIDITY,
}
# Hata gives the large-city mobile-height correction in one form up to 200 MHz and another from 400 MHz;
# between the two we switch at 300 MHz (common practice; ns-3 switches at 200 MHz). Every cellular band
# lies above 400 MHz, where the choice does not matter.
HATA_LARGE_CITY_SWITCH_MHZ = 300.0
# Free space holds at any distance in the far field; the range search stops at these bounds.
FREE_SPACE_SEARCH_KM = (1e-3, 1e5)
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
        if isinstance(value, str):
            allowed = ", ".join(str(item) for item in valid)
            message = f"{MODEL_LABELS[model]} does not cover {parameter} {value!r}; it covers {allowed}"
        else:
            low, high = valid
            message = (f"{MODEL_LABELS[model]} is valid for {parameter} from {low:g} to {high:g}; "
                       f"got {value:g}")
        super().__init__(message)


class CoverageDataError(ValueError):
    """coverage.toml breaks its own rules (a missing category, environment or source)."""


# -- path loss ---------------------------------------------------------------------------------------------

def free_space_loss_db(frequency_mhz: float, distance_km: float) -> float:
    """Basic transmission loss in free space, ITU-R P.525: 32.45 + 20 log f(MHz) + 20 log d(km)."""
    if not (frequency_mhz > 0 and distance_km > 0):
        raise ValueError(f"free-space loss needs a positive frequency and distance; got "
                         f"{frequency_mhz:g} MHz, {distance_km:g} km")
    return 32.45 + 20.0 * math.log10(frequency_mhz) + 20.0 * math.log10(distance_km)


def _check_area(model: str, area: str, allowed: Sequence[str]) -> None:
    if area not in AREAS:
        raise ValueError(f"area should be one of {', '.join(AREAS)}; got {area!r}")
    if area not in allowed:
        raise OutsideValidity(model, "area", area, tuple(allowed))


def check_validity(model: str, **values: float) -> None:
    """Raises OutsideValidity for the first value (frequency_mhz, distance_km, base_height_m,
    mobile_height_m) outside the model's stated range. Free space has no such limits."""
    limits = MODEL_VALIDITY.get(model, {})
    for parameter, value in values.items():
        if parameter in limits:
            low, high = limits[parameter]
            if not low <= value <= high:
                raise OutsideValidity(model, parameter, value, (low, high))


def _small_city_mobile_correction_db(frequency_mhz: float, mobile_height_m: float) -> float:
    """a(hm) for a small or medium city (Hata 1980): (1.1 log f - 0.7) hm - (1.56 log f - 0.8)."""
    log_f = math.log10(frequency_mhz)
    return (1.1 * log_f - 0.7) * mobile_height_m - (1.56 * log_f - 0.8)


def _large_city_mobile_correction_db(frequency_mhz: float, mobile_height_m: float) -> float:
    """a(hm) for a large city (Hata 1980): 8.29 (log 1.54 hm)^2 - 1.1 at low frequencies,
    3.2 (log 11.75 hm)^2 - 4.97 at high ones."""
    if frequency_mhz < HATA_LARGE_CITY_SWITCH_MHZ:
        return 8.29 * math.log10(1.54 * mobile_height_m) ** 2 - 1.1
    return 3.2 * math.log10(11.75 * mobile_height_m) ** 2 - 4.97


def hata_distance_slope_db_per_decade(base_height_m: float) -> float:
    """How many dB the Hata and COST-231 Hata losses grow per tenfold distance: 44.9 - 6.55 log hb."""
    return 44.9 - 6.55 * math.log10(base_height_m)


def okumura_hata_loss_db(
    frequency_mhz: float, distance_km: float, base_height_m: float = 30.0, mobile_height_m: float = 1.5,
    area: str = "urban",
) -> float:
    """Median path loss by Hata's formulas (IEEE Trans. Veh. Technol. 29(3), 1980).

    Urban: 69.55 + 26.16 log f - 13.82 log hb - a(hm) + (44.9 - 6.55 log hb) log d, with a(hm) of the
    small/medium city ("urban", also the base of "suburban" and "open") or of the large city
    ("urban-large"). Suburban: urban - 2 (log(f / 28))^2 - 5.4. Open: urban - 4.78 (log f)^2 +
    18.33 log f - 40.94. Raises OutsideValidity outside 150-1500 MHz, 1-20 km, hb 30-200 m, hm 1-10 m.
    """
    _check_area(OKUMURA_HATA, area, AREAS)
    check_validity(OKUMURA_HATA, frequency_mhz=frequency_mhz, distance_km=distance_km,
                   base_height_m=base_height_m, mobile_height_m=mobile_height_m)
    log_f = math.log10(frequency_mhz)
    if area == "urban-large":
        mobile_correction_db = _large_city_mobile_correction_db(frequency_mhz, mobile_height_m)
    else:
        mobile_correction_db = _small_city_mobile_correction_db(frequency_mhz, mobile_height_m)
    urban_db = (69.55 + 26.16 * log_f - 13.82 * math.log10(base_height_m) - mobile_correction_db
                + hata_distance_slope_db_per_decade(base_height_m) * math.log10(distance_km))
    if area == "suburban":
        return urban_db - 2.0 * math.log10(frequency_mhz / 28.0) ** 2 - 5.4
    if area == "open":
        return urban_db - 4.78 * log_f**2 + 18.33 * log_f - 40.94
    return urban_db


def cost231_hata_loss_db(
    frequency_mhz: float, distance_km: float, base_height_m: float = 30.0, mobile_height_m: float = 1.5,
    area: str = "urban",
) -> float:
    """Median path loss by COST-231 Hata (COST 231 final report, section 4.4).

    46.3 + 33.9 log f - 13.82 log hb - a(hm) + (44.9 - 6.55 log hb) log d + Cm, with Hata's a(hm): the
    small/medium city form and Cm = 0 dB for "urban" and "suburban" (the report's "medium sized city and
    suburban centres"), the large-city form and Cm = 3 dB for "urban-large" ("metropolitan centres").
    The report has no open-area form: "open" raises OutsideValidity, as do values outside 1500-2000 MHz,
    1-20 km, hb 30-200 m, hm 1-10 m.
    """
    _check_area(COST231_HATA, area, COST231_AREAS)
    check_validity(COST231_HATA, frequency_mhz=frequency_mhz, distance_km=distance_km,
                   base_height_m=base_height_m, mobile_height_m=mobile_height_m)
    return _cost231_formula_db(frequency_mhz, distance_km, base_height_m, mobile_height_m, area)


def _cost231_formula_db(
    frequency_mhz: float, distance_km: float, base_height_m: float, mobile_height_m: float, area: str,
) -> float:
    """COST-231 Hata's formula without its validity checks (tests compare it with values computed
    beyond 2000 MHz elsewhere; the engine always goes through cost231_hata_loss_db)."""
    if area == "urban-large":
        mobile_correction_db = _large_city_mobile_correction_db(frequency_mhz, mobile_height_m)
        metropolitan_db = 3.0
    else:
        mobile_correction_db = _small_city_mobile_correction_db(frequency_mhz, mobile_height_m)
        metropolitan_db = 0.0
    return (46.3 + 33.9 * math.log10(frequency_mhz) - 13.82 * math.log10(base_height_m) - mobile_correction_db
            + hata_distance_slope_db_per_decade(base_height_m) * math.log10(distance_km) + metropolitan_db)


def path_loss_db(
    frequency_mhz: float, distance_km: float, model: str, *, base_height_m: float = 30.0,
    mobile_height_m: float = 1.5, area: str = "urban",
) -> float:
    """Path loss by the named model (one of MODELS); heights and area are ignored by free space."""
    if model == FREE_SPACE:
        return free_space_loss_db(frequency_mhz, distance_km)
    if model == OKUMURA_HATA:
        return okumura_hata_loss_db(frequency_mhz, distance_km, base_height_m, mobile_height_m, area)
    if model == COST231_HATA:
        return cost231_hata_loss_db(frequency_mhz, distance_km, base_height_m, mobile_height_m, area)
    raise ValueError(f"model should be one of {', '.join(MODELS)}; got {model!r}")


def distance_slope_db_per_decade(model: str, base_height_m: float = 30.0) -> float:
    """dB of extra loss per tenfold distance: 20 in free space, 44.9 - 6.55 log hb for both Hata models."""
    if model == FREE_SPACE:
        return 20.0
    if model in MODEL_VALIDITY:
        return hata_distance_slope_db_per_decade(base_height_m)
    raise ValueError(f"model should be one of {', '.join(MODELS)}; got {model!r}")


def distance_limits_km(model: str) -> tuple[float, float]:
    """The distances a model answers for: its validity range, or the search bounds for free space."""
    if model == FREE_SPACE:
        return FREE_SPACE_SEARCH_KM
    return MODEL_VALIDITY[model]["distance_km"]


def max_range_km(
    frequency_mhz: float, allowed_loss_db: float, model: str, *, base_height_m: float = 30.0,
    mobile_height_m: float = 1.5, area: str = "urban",
) -> float | None:
    """The distance at which the model's path loss reaches `allowed_loss_db`, found by bisection on
    log10(distance). None when that distance lies outside the model's distance range (below 1 km or
    beyond 20 km for the Hata models). Raises OutsideValidity for a frequency, height or area the model
    does not cover."""

    def loss_at(distance_km: float) -> float:
        return path_loss_db(frequency_mhz, distance_km, model, base_height_m=base_height_m,
                            mobile_height_m=mobile_height_m, area=area)

    nearest_km, farthest_km = distance_limits_km(model)
    if not loss_at(nearest_km) <= allowed_loss_db <= loss_at(farthest_km):
        return None
    low, high = math.log10(nearest_km), math.log10(farthest_km)
    # Path loss grows with distance in every model here (the Hata slope stays above 29 dB per decade
    # for masts up to 200 m), so the bracket always holds the answer.
    while high - low > _LOG_DISTANCE_TOLERANCE:
        middle = (low + high) / 2.0
        if loss_at(10.0**middle) < allowed_loss_db:
            low = middle
        else:
            high = middle
    return min(farthest_km, max(nearest_km, float(10.0 ** ((low + high) / 2.0))))


@dataclass(frozen=True)
class ModelChoice:
    model: str
    reason: str | None  # why a preferred model was refused, None when an empirical model applies


def choose_model(
    frequency_mhz: float, *, area: str, base_height_m: float, mobile_height_m: float,
) -> ModelChoice:
    """Okumura-Hata up to 1500 MHz, COST-231 Hata from there to 2000 MHz; free space (which ignores
    terrain and clutter) when neither covers the frequency, heights or area, with the reasons."""
    refusals = []
    for model, function in ((OKUMURA_HATA, okumura_hata_loss_db), (COST231_HATA, cost231_hata_loss_db)):
        try:
            nearest_km = MODEL_VALIDITY[model]["distance_km"][0]
            function(frequency_mhz, nearest_km, base_height_m, mobile_height_m, area)
        except OutsideValidity as refusal:
            refusals.append(str(refusal))
            continue
        return ModelChoice(model, None)
    return ModelChoice(FREE_SPACE, "; ".join(refusals))


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


# -- data: coverage targets, entry losses, defaults -------------------------------------------------------

@dataclass(frozen=True)
class CoverageTarget:
    category: str
    reference_db: float
    improvement_db: float
    reference_rx_antennas: int
    source: str

    @property
    def mcl_db(self) -> float:
        return self.reference_db + self.improvement_db


@dataclass(frozen=True)
class EntryLoss:
    environment: str
    loss_db: float
    source: str


@dataclass(frozen=True)
class Assumptions:
    area: str
    base_height_m: float
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
    entry_losses: Mapping[str, EntryLoss]
    assumptions: Assumptions


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
    """Checks and types the decoded coverage.toml: every category has a target and every environment an
    entry loss, each with a source."""
    references = tables.get("references", {})
    targets: dict[str, CoverageTarget] = {}
    for category_id, table in tables.get("targets", {}).items():
        where = f"targets.{category_id}"
        reference_name = _text(table, "reference", where)
        if reference_name not in references:
            raise CoverageDataError(f"coverage.toml [{where}]: reference {reference_name!r} is not in "
                                    "[references]")
        rx_antennas = table.get("reference_rx_antennas")
        if rx_antennas not in (1, 2) or isinstance(rx_antennas, bool):
            raise CoverageDataError(f"coverage.toml [{where}]: reference_rx_antennas should be 1 or 2")
        _text(references[reference_name], "source", f"references.{reference_name}")
        targets[category_id] = CoverageTarget(
            category=category_id,
            reference_db=_number(references[reference_name], "mcl_db", f"references.{reference_name}"),
            improvement_db=_number(table, "improvement_db", where),
            reference_rx_antennas=int(rx_antennas),
            source=_text(table, "source", where),
        )
    missing = sorted(set(categories()) - set(targets))
    if missing:
        raise CoverageDataError(f"coverage.toml: no coverage target for {', '.join(missing)}")

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

    defaults = tables.get("defaults", {})
    names = ("base_height_m", "mobile_height_m", "outage_probability", "reference_distance_km",
             "base_gain_db", "assumed_ecc", "assumed_efficiency_ratio")
    numbers = {name: _number(defaults, name, "defaults") for name in names}
    source_keys = {"area": "area_source", "base_height_m": "base_height_source",
                   "mobile_height_m": "mobile_height_source", "outage_probability": "outage_source",
                   "reference_distance_km": "reference_distance_source", "base_gain_db": "base_gain_source",
                   "assumed_ecc": "assumed_ecc_source",
                   "assumed_efficiency_ratio": "assumed_efficiency_ratio_source"}
    sources = {name: _text(defaults, key, "defaults") for name, key in source_keys.items()}
    area = _text(defaults, "area", "defaults")
    if area not in AREAS:
        raise CoverageDataError(f"coverage.toml [defaults]: area should be one of {AREAS}")
    return CoverageData(targets, losses, Assumptions(area=area, sources=sources, **numbers))


@cache
def coverage_data() -> CoverageData:
    with (DATA_DIR / "coverage.toml").open("rb") as handle:
        return parse_coverage_data(tomllib.load(handle))


# -- the analysis ---------------------------------------------------------------------------------------

@dataclass(frozen=True)
class CoverageAnalysis:
    """One band's downlink budget with one and with two receive antennas (see module docstring)."""

    band: str
    frequency_mhz: float  # the band's lowest downlink frequency
    model: str
    model_reason: str | None  # why an empirical model was refused (then model is free space)
    area: str
    base_height_m: float
    mobile_height_m: float
    target: CoverageTarget
    base_gain_db: float  # net gain of the base station's antenna and feeder
    environment: str
    environment_given: bool
    entry_loss_db: float
    entry_loss_source: str
    antenna_loss_db: float  # -10 log10(efficiency) of the first antenna in the band; 0 when not entered
    antenna_loss_source: str
    gain: SecondAntennaGain
    ecc_source: str
    efficiency_source: str
    fitted_rx_antennas: int  # receive antennas the design connects: 2 means the two-antenna case is real
    allowed_loss_one_db: float
    allowed_loss_two_db: float
    reference_distance_km: float
    path_loss_reference_db: float
    range_one_km: float | None
    range_two_km: float | None
    range_note: str | None
    distance_slope_db_per_decade: float

    @property
    def empirical(self) -> bool:
        """True when an Okumura-Hata model applies (ranges and area share then mean something)."""
        return self.model != FREE_SPACE

    @property
    def second_antenna_gain_db(self) -> float:
        return self.gain.total_db

    @property
    def margin_one_db(self) -> float:
        return self.allowed_loss_one_db - self.path_loss_reference_db

    @property
    def margin_two_db(self) -> float:
        return self.allowed_loss_two_db - self.path_loss_reference_db

    @property
    def area_share_ratio(self) -> float:
        """Area a single antenna covers as a share of two antennas': (r1 / r2)^2. Computed from the
        distance slope, so it holds even where the ranges fall outside the model's distance range."""
        return area_share_ratio(self.gain.total_db, self.distance_slope_db_per_decade)

    @property
    def area_share_pct(self) -> float:
        return 100.0 * self.area_share_ratio

    def as_dict(self) -> dict[str, Any]:
        """A row for JSON and templates: every key names its unit, numbers rounded as evidence is."""
        row: dict[str, Any] = {
            "band": self.band,
            "frequency_mhz": self.frequency_mhz,
            "model": self.model,
            "model_label": MODEL_LABELS[self.model],
            "model_source": MODEL_SOURCES[self.model],
            "model_reason": self.model_reason,
            "area": self.area,
            "base_height_m": self.base_height_m,
            "mobile_height_m": self.mobile_height_m,
            "mcl_db": self.target.mcl_db,
            "mcl_source": self.target.source,
            "reference_rx_antennas": self.target.reference_rx_antennas,
            "base_gain_db": self.base_gain_db,
            "environment": self.environment,
            "environment_given": self.environment_given,
            "entry_loss_db": self.entry_loss_db,
            "entry_loss_source": self.entry_loss_source,
            "antenna_loss_db": self.antenna_loss_db,
            "antenna_loss_source": self.antenna_loss_source,
            "outage_pct": 100.0 * self.gain.outage_probability,
            "ecc": self.gain.ecc,
            "ecc_source": self.ecc_source,
            "efficiency_ratio": self.gain.efficiency_ratio,
            "efficiency_source": self.efficiency_source,
            "array_gain_db": self.gain.array_gain_db,
            "diversity_gain_db": self.gain.diversity_gain_db,
            "second_antenna_gain_db": self.gain.total_db,
            "fitted_rx_antennas": self.fitted_rx_antennas,
            "allowed_loss_one_db": self.allowed_loss_one_db,
            "allowed_loss_two_db": self.allowed_loss_two_db,
            "reference_distance_km": self.reference_distance_km,
            "path_loss_reference_db": self.path_loss_reference_db,
            "margin_one_db": self.margin_one_db,
            "margin_two_db": self.margin_two_db,
            "range_one_km": self.range_one_km,
            "range_two_km": self.range_two_km,
            "range_note": self.range_note,
            "distance_slope_db_per_decade": self.distance_slope_db_per_decade,
            "area_share_pct": self.area_share_pct,
        }
        return {key: round_evidence(key, value) for key, value in row.items()}

    def chart_series(self, points: int = 40) -> dict[str, Any]:
        """Data for a range chart: the model's path loss over its distance range (log-spaced), the allowed
        loss with one and with two antennas as horizontal lines, and where they cross (the ranges)."""
        if points < 2:
            raise ValueError("a chart needs at least 2 points")
        nearest_km, farthest_km = (distance_limits_km(self.model) if self.empirical
                                   else MODEL_VALIDITY[OKUMURA_HATA]["distance_km"])
        step = (math.log10(farthest_km) - math.log10(nearest_km)) / (points - 1)
        distances_km = [10.0 ** (math.log10(nearest_km) + index * step) for index in range(points - 1)]
        distances_km.append(farthest_km)
        losses_db = [path_loss_db(self.frequency_mhz, distance_km, self.model,
                                  base_height_m=self.base_height_m, mobile_height_m=self.mobile_height_m,
                                  area=self.area)
                     for distance_km in distances_km]
        return {
            "band": self.band,
            "model_label": MODEL_LABELS[self.model],
            "distance_km": [round(value, 4) for value in distances_km],
            "path_loss_db": [round(value, 2) for value in losses_db],
            "allowed_loss_one_db": round(self.allowed_loss_one_db, 2),
            "allowed_loss_two_db": round(self.allowed_loss_two_db, 2),
            "range_one_km": self.range_one_km,
            "range_two_km": self.range_two_km,
        }


# Columns of the coverage table: key of CoverageAnalysis.as_dict(), heading, unit.
TABLE_COLUMNS: tuple[tuple[str, str, str], ...] = (
    ("band", "Band", ""),
    ("frequency_mhz", "DL from", "MHz"),
    ("model_label", "Path-loss model", ""),
    ("mcl_db", "Coverage target (MCL)", "dB"),
    ("entry_loss_db", "Entry loss", "dB"),
    ("second_antenna_gain_db", "Second antenna adds", "dB"),
    ("margin_one_db", "Margin at reference distance, 1 antenna", "dB"),
    ("margin_two_db", "Margin at reference distance, 2 antennas", "dB"),
    ("range_one_km", "Range, 1 antenna", "km"),
    ("range_two_km", "Range, 2 antennas", "km"),
    ("area_share_pct", "Area covered by 1 antenna, share of 2", "%"),
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


def _range_note(
    analysis_model: str, ranges: tuple[float | None, float | None], allowed_db: tuple[float, float],
    limits_db: tuple[float, float],
) -> str | None:
    if analysis_model == FREE_SPACE:
        return ("No range is estimated: free space ignores terrain, buildings and clutter and would "
                "overstate it many times. The area share uses the free-space distance slope (20 dB per "
                "decade), which makes the single antenna's share smaller than a cluttered path would.")
    nearest_km, farthest_km = distance_limits_km(analysis_model)
    notes = []
    labels = ("one antenna", "two antennas")
    for label, range_km, allowed_loss_db in zip(labels, ranges, allowed_db, strict=True):
        if range_km is not None:
            continue
        if allowed_loss_db < limits_db[0]:
            notes.append(f"with {label} the link closes at less than {nearest_km:g} km, the model's shortest "
                         "distance")
        else:
            notes.append(f"with {label} the link would reach beyond {farthest_km:g} km, the model's longest "
                         "distance")
    if not notes:
        return None
    return ("; ".join(notes).capitalize() + ". The area share still follows from the model's distance slope.")


def analyse_coverage(
    design: Design | CheckContext,
    measurements: Sequence[LoadedMeasurement] = (),
    *,
    area: str | None = None,
    base_height_m: float | None = None,
    mobile_height_m: float | None = None,
    outage_probability: float | None = None,
    reference_distance_km: float | None = None,
    entry_loss_db: Mapping[str, float] | None = None,
    base_gain_db: float | None = None,
    ecc: float | None = None,
    efficiency_ratio: float | None = None,
) -> list[CoverageAnalysis]:
    """The downlink budget of every selected band, at its lowest downlink frequency.

    Allowed path loss: the category's MCL target (a coupling loss between antenna connectors, so antenna
    gains count) plus the base station's net antenna gain, less the environment's entry loss and the first
    antenna's efficiency loss (when entered; the target's device antenna is taken as lossless). The target
    holds for the category's reference receive antennas: with a one-antenna reference, two antennas add
    the second antenna's gain; with a two-antenna reference, one antenna falls short by it.

    The second antenna's gain uses, in this order: the worst ECC measured over the band's downlink for
    the design's two antennas, the `ecc` given here ("entered"), or the assumed default; and the ratio of
    the entered efficiencies of both antennas in the band, the `efficiency_ratio` given here, or the
    assumed default. `entry_loss_db` overrides the loss of any environment; every other keyword overrides
    the default of coverage.toml. A band no empirical model covers is analysed in free space, and says why.
    """
    if isinstance(design, CheckContext):
        measurements = measurements or design.measurements
        rx_connected = design.rx_connected
        design = design.design
    else:
        rx_connected = CheckContext(design).rx_connected
    data = coverage_data()
    defaults = data.assumptions
    area = defaults.area if area is None else area
    if area not in AREAS:
        raise ValueError(f"area should be one of {', '.join(AREAS)}; got {area!r}")
    base_height_m = defaults.base_height_m if base_height_m is None else base_height_m
    mobile_height_m = defaults.mobile_height_m if mobile_height_m is None else mobile_height_m
    outage_probability = defaults.outage_probability if outage_probability is None else outage_probability
    reference_distance_km = (defaults.reference_distance_km if reference_distance_km is None
                             else reference_distance_km)
    base_gain_db = defaults.base_gain_db if base_gain_db is None else base_gain_db
    nearest_km, farthest_km = HATA_VALIDITY["distance_km"]
    if not nearest_km <= reference_distance_km <= farthest_km:
        raise OutsideValidity(OKUMURA_HATA, "reference_distance_km", reference_distance_km,
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

    def loss_db(frequency_mhz: float, distance_km: float, model: str) -> float:
        return path_loss_db(frequency_mhz, distance_km, model, base_height_m=base_height_m,
                            mobile_height_m=mobile_height_m, area=area)

    def reach_km(frequency_mhz: float, allowed_loss_db: float, model: str) -> float | None:
        return max_range_km(frequency_mhz, allowed_loss_db, model, base_height_m=base_height_m,
                            mobile_height_m=mobile_height_m, area=area)

    target = data.targets[design.modem.category.id]
    main, second = _main_and_second(design)
    results = []
    for band in design.modem.bands:
        frequency_mhz = band.dl_mhz[0]
        choice = choose_model(frequency_mhz, area=area, base_height_m=base_height_m,
                              mobile_height_m=mobile_height_m)

        band_ecc, ecc_source = defaults.assumed_ecc, defaults.sources["assumed_ecc"]
        found = measured_ecc(measurements, main.name, second.name, band) if main and second else None
        if found is not None:
            band_ecc, ecc_source = found[0], f"measured (worst over the downlink, {found[1]})"
        elif ecc is not None:
            band_ecc, ecc_source = ecc, "entered"

        main_efficiency = main.efficiency_pct.get(band.name) if main else None
        second_efficiency = second.efficiency_pct.get(band.name) if second else None
        ratio, ratio_source = defaults.assumed_efficiency_ratio, defaults.sources["assumed_efficiency_ratio"]
        if main_efficiency and second_efficiency is not None:
            ratio, ratio_source = second_efficiency / main_efficiency, "entered efficiencies"
        elif efficiency_ratio is not None:
            ratio, ratio_source = efficiency_ratio, "entered"
        gain = second_antenna_gain(outage_probability, band_ecc, ratio)

        if main is not None and main_efficiency:
            antenna_db = -10.0 * math.log10(main_efficiency / 100.0)
            antenna_source = f"entered efficiency of {main.name}: {main_efficiency:g} %"
        elif main_efficiency == 0:
            antenna_db, antenna_source = 0.0, "entered efficiency 0 %: no budget closes; no loss counted"
        else:
            antenna_db, antenna_source = 0.0, "efficiency not entered: no antenna loss counted"

        at_reference_db = target.mcl_db + base_gain_db - entry_db - antenna_db
        if target.reference_rx_antennas == 2:
            allowed_two_db, allowed_one_db = at_reference_db, at_reference_db - gain.total_db
        else:
            allowed_one_db, allowed_two_db = at_reference_db, at_reference_db + gain.total_db

        ranges: tuple[float | None, float | None] = (None, None)
        limits_db = (0.0, 0.0)
        if choice.model != FREE_SPACE:
            ranges = (reach_km(frequency_mhz, allowed_one_db, choice.model),
                      reach_km(frequency_mhz, allowed_two_db, choice.model))
            limits_db = (loss_db(frequency_mhz, nearest_km, choice.model),
                         loss_db(frequency_mhz, farthest_km, choice.model))
        results.append(CoverageAnalysis(
            band=band.name,
            frequency_mhz=frequency_mhz,
            model=choice.model,
            model_reason=choice.reason,
            area=area,
            base_height_m=base_height_m,
            mobile_height_m=mobile_height_m,
            target=target,
            base_gain_db=base_gain_db,
            environment=environment,
            environment_given=environment_given,
            entry_loss_db=entry_db,
            entry_loss_source=entry_source,
            antenna_loss_db=antenna_db,
            antenna_loss_source=antenna_source,
            gain=gain,
            ecc_source=ecc_source,
            efficiency_source=ratio_source,
            fitted_rx_antennas=min(rx_connected, 2),
            allowed_loss_one_db=allowed_one_db,
            allowed_loss_two_db=allowed_two_db,
            reference_distance_km=reference_distance_km,
            path_loss_reference_db=loss_db(frequency_mhz, reference_distance_km, choice.model),
            range_one_km=ranges[0],
            range_two_km=ranges[1],
            range_note=_range_note(choice.model, ranges, (allowed_one_db, allowed_two_db), limits_db),
            distance_slope_db_per_decade=distance_slope_db_per_decade(choice.model, base_height_m),
        ))
    return results

