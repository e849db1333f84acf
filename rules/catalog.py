"""The band and UE-category catalog, read once from the data files beside this module.

The files name their 3GPP sources at the top. Loading validates every row (edges ordered, duplex
known, TDD ranges equal, category fields present and typed), so a bad edit to a data file fails at
import time in tests rather than as a wrong finding later.
"""

import csv
import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache
from pathlib import Path

DATA_DIR = Path(__file__).parent / "data"
# SDL: supplemental downlink, a band with no uplink of its own that only adds downlink capacity to a
# carrier aggregation anchored on another band (TS 36.101 Table 5.5-1 note; TS 38.101-1 Table 5.2-1).
DUPLEX_MODES = ("FDD", "TDD", "SDL")
SINGLE_ANTENNA_POLICIES = ("allowed", "operator", "never", "module")


class CatalogError(ValueError):
    """A data file that breaks the catalog's own rules."""


@dataclass(frozen=True)
class Band:
    name: str  # "B12" or "n71"
    technology: str  # "LTE" or "NR"
    ul_mhz: tuple[float, float] | None  # None for a supplemental-downlink (SDL) band
    dl_mhz: tuple[float, float]
    duplex: str
    reference: str
    satellite: bool = False  # a non-terrestrial (NTN) band, served by satellites

    @property
    def number(self) -> int:
        return int(self.name[1:])

    @property
    def has_uplink(self) -> bool:
        return self.ul_mhz is not None

    @property
    def ranges_mhz(self) -> tuple[tuple[float, float], ...]:
        """The band's ranges, uplink first: one for SDL, two (equal for TDD) otherwise."""
        return (self.dl_mhz,) if self.ul_mhz is None else (self.ul_mhz, self.dl_mhz)

    @property
    def lowest_mhz(self) -> float:
        return min(low for low, _ in self.ranges_mhz)

    @property
    def highest_mhz(self) -> float:
        return max(high for _, high in self.ranges_mhz)


@dataclass(frozen=True)
class Category:
    id: str
    label: str
    release: int
    rx_antennas: int  # receive antennas the category is specified with
    dl_layers: int
    single_antenna: str  # one of SINGLE_ANTENNA_POLICIES
    peak_dl_kbps: float  # with the category's full receive chain
    peak_ul_kbps: float
    dl_tbs_bits: int | None
    ul_tbs_bits: int | None
    reference: str
    technology: str  # "LTE" or "NR"
    # LTE-M half-duplex (HD-FDD) peaks; None for categories without a half-duplex timeline here
    half_duplex_dl_kbps: float | None = None
    half_duplex_ul_kbps: float | None = None
    tdd_pattern: str | None = None  # e.g. "DDDSU with S = 10:2:2", the pattern the TDD shares assume
    tdd_dl_share: float | None = None  # share of the symbols that carry the downlink on a TDD band
    tdd_ul_share: float | None = None

    def peak_dl_kbps_with(self, rx_branches: int) -> float:
        """Downlink peak when only `rx_branches` receive paths are fitted (fewer layers, same per-layer rate)."""
        layers = max(1, min(self.dl_layers, rx_branches))
        return self.peak_dl_kbps * layers / self.dl_layers


# (file, reference, technology, satellite). Satellite (NTN) bands have tables of their own in 3GPP.
BAND_FILES = (
    ("lte_bands.csv", "3GPP TS 36.101 Table 5.5-1", "LTE", False),
    ("nr_bands.csv", "3GPP TS 38.101-1 Table 5.2-1", "NR", False),
    ("lte_ntn_bands.csv", "3GPP TS 36.102 Table 5.2-1", "LTE", True),
    ("nr_ntn_bands.csv", "3GPP TS 38.101-5 Table 5.2-1", "NR", True),
)
BAND_SOURCES = {technology: (file_name, reference) for file_name, reference, technology, satellite in BAND_FILES
                if not satellite}


BAND_COLUMNS = ("band", "ul_low_mhz", "ul_high_mhz", "dl_low_mhz", "dl_high_mhz", "duplex")


def _read_band_file(technology: str, satellite: bool = False) -> dict[str, Band]:
    file_name, reference = next((file_name, reference) for file_name, reference, kind, in_space in BAND_FILES
                                if kind == technology and in_space == satellite)
    prefix = "B" if technology == "LTE" else "n"
    path = DATA_DIR / file_name
    with path.open(encoding="utf-8") as handle:
        numbered = [(number, line) for number, line in enumerate(handle, start=1) if not line.startswith("#")]
    if not numbered:
        raise CatalogError(f"{file_name}: no header line")
    header_line, header = numbered[0]
    columns = tuple(cell.strip() for cell in next(csv.reader([header])))
    if columns != BAND_COLUMNS:
        raise CatalogError(f"{file_name} line {header_line}: columns should be {','.join(BAND_COLUMNS)}")
    bands: dict[str, Band] = {}
    for line_number, line in numbered[1:]:
        where = f"{file_name} line {line_number}"
        cells = next(csv.reader([line]), [])
        if len(cells) != len(BAND_COLUMNS):
            raise CatalogError(f"{where}: expected {len(BAND_COLUMNS)} columns, got {len(cells)}")
        name, ul_low, ul_high, dl_low, dl_high, duplex = (cell.strip() for cell in cells)
        if not name.startswith(prefix) or not name[1:].isdigit():
            raise CatalogError(f"{where}: band {name!r} should be {prefix}<number>")
        if duplex not in DUPLEX_MODES:
            raise CatalogError(f"{where}: duplex {duplex!r} should be one of {DUPLEX_MODES}")
        if duplex == "SDL" and (ul_low or ul_high):
            raise CatalogError(f"{where}: a supplemental-downlink (SDL) band has no uplink; leave its uplink "
                               "cells empty")
        try:
            ul = None if duplex == "SDL" else (float(ul_low), float(ul_high))
            dl = (float(dl_low), float(dl_high))
        except ValueError as error:
            raise CatalogError(f"{where}: band edges must be numbers ({error})") from error
        if not all(0 < low < high for low, high in (dl,) + ((ul,) if ul else ())):
            raise CatalogError(f"{where}: each range must have 0 < low < high")
        if duplex == "TDD" and ul != dl:
            raise CatalogError(f"{where}: a TDD band has one range for both directions")
        if name in bands:
            raise CatalogError(f"{where}: band {name} listed twice")
        bands[name] = Band(name, technology, ul, dl, duplex, reference, satellite)
    return bands


@cache
def bands() -> Mapping[str, Band]:
    """Every band the engine knows, LTE first, each in numeric order."""
    catalog: dict[str, Band] = {}
    for file_name, _, technology, satellite in BAND_FILES:
        for name, band in _read_band_file(technology, satellite).items():
            if name in catalog:
                raise CatalogError(f"{file_name}: band {name} is also listed in another band file")
            catalog[name] = band
    return dict(sorted(catalog.items(), key=lambda item: (item[1].technology != "LTE", item[1].number)))


def _nr_formula_peak_kbps(formula: Mapping[str, float], layers: int, direction: str) -> float:
    """3GPP TS 38.306 §4.1.2: rate = 1e-6 * v * Qm * f * Rmax * N_PRB * 12 / Ts_mu * (1 - OH) Mbps.

    One carrier, scaling factor f = 1, Rmax = 948/1024, and Ts_mu = 1e-3 / (14 * 2^mu) the average
    OFDM symbol duration for numerology mu (15 kHz * 2^mu subcarrier spacing).
    """
    mu = round(math.log2(formula["scs_khz"] / 15))
    symbol_duration_s = 1e-3 / (14 * 2**mu)
    bits_per_symbol = formula[f"{direction}_bits_per_symbol"]
    overhead = formula[f"{direction}_overhead"]
    rate_bps = layers * bits_per_symbol * (948 / 1024) * formula["resource_blocks"] * 12 / symbol_duration_s
    return rate_bps * (1 - overhead) / 1000


CATEGORY_KEYS = {"label", "release", "rx_antennas", "dl_layers", "single_antenna", "reference",
                 "dl_tbs_bits", "ul_tbs_bits", "dl_cycle_ms", "ul_cycle_ms", "formula", "half_duplex", "tdd"}
HALF_DUPLEX_KEYS = {"dl_blocks", "dl_cycle_ms", "ul_blocks", "ul_cycle_ms"}
TDD_KEYS = {"pattern", "special_dl_symbols", "special_guard_symbols", "special_ul_symbols"}
SYMBOLS_PER_SLOT = 14  # normal cyclic prefix (TS 38.211 §4.3.2)


def tdd_shares(pattern: str, special_dl: int, special_guard: int, special_ul: int) -> tuple[float, float]:
    """Shares of a TDD pattern's symbols that carry the downlink and the uplink: D slots are all downlink,
    U slots all uplink, an S slot splits its 14 symbols as downlink:guard:uplink."""
    if not pattern or set(pattern) - set("DSU"):
        raise ValueError(f"a TDD pattern is a string of D, S and U slots; got {pattern!r}")
    if special_dl + special_guard + special_ul != SYMBOLS_PER_SLOT or min(special_dl, special_guard, special_ul) < 0:
        raise ValueError(f"a special slot splits {SYMBOLS_PER_SLOT} symbols; got {special_dl}:{special_guard}:{special_ul}")
    slots = len(pattern)
    dl = pattern.count("D") + pattern.count("S") * special_dl / SYMBOLS_PER_SLOT
    ul = pattern.count("U") + pattern.count("S") * special_ul / SYMBOLS_PER_SLOT
    return dl / slots, ul / slots
FORMULA_KEYS = {"bandwidth_mhz", "scs_khz", "resource_blocks", "dl_bits_per_symbol", "ul_bits_per_symbol",
                "dl_overhead", "ul_overhead", "ul_layers"}
SUBCARRIER_SPACINGS_KHZ = (15, 30, 60)  # FR1 numerologies mu = 0, 1, 2 (TS 38.211 §4.2)


def _category_from_table(category_id: str, table: Mapping[str, object]) -> Category:
    where = f"categories.toml [{category_id}]"
    unknown = sorted(set(table) - CATEGORY_KEYS)
    if unknown:
        raise CatalogError(f"{where}: unknown key(s) {unknown}; expected some of {sorted(CATEGORY_KEYS)}")

    def text(name: str) -> str:
        value = table.get(name)
        if not isinstance(value, str) or not value:
            raise CatalogError(f"{where}: {name} should be text, got {value!r}")
        return value

    def whole(source: Mapping[str, object], name: str, *, minimum: int = 1) -> int:
        value = source.get(name)
        if not isinstance(value, int) or isinstance(value, bool) or value < minimum:
            raise CatalogError(f"{where}: {name} should be a whole number of at least {minimum}, got {value!r}")
        return value

    single = text("single_antenna")
    if single not in SINGLE_ANTENNA_POLICIES:
        raise CatalogError(f"{where}: single_antenna should be one of {SINGLE_ANTENNA_POLICIES}")
    rx_antennas = whole(table, "rx_antennas")
    dl_layers = whole(table, "dl_layers")
    if rx_antennas > 2 or dl_layers > 2:
        raise CatalogError(f"{where}: rx_antennas and dl_layers should be 1 or 2")
    if "formula" in table:
        formula = table["formula"]
        if not isinstance(formula, dict) or set(formula) != FORMULA_KEYS:
            raise CatalogError(f"{where}: formula should be a table with exactly {sorted(FORMULA_KEYS)}")
        for name in FORMULA_KEYS:
            value = formula[name]
            if not isinstance(value, (int, float)) or isinstance(value, bool) or value <= 0:
                raise CatalogError(f"{where}: formula.{name} should be a positive number, got {value!r}")
        if formula["scs_khz"] not in SUBCARRIER_SPACINGS_KHZ:
            raise CatalogError(f"{where}: formula.scs_khz should be one of {SUBCARRIER_SPACINGS_KHZ}")
        if not (formula["dl_overhead"] < 1 and formula["ul_overhead"] < 1):
            raise CatalogError(f"{where}: formula overheads should be fractions below 1")
        peak_dl = _nr_formula_peak_kbps(formula, dl_layers, "dl")
        peak_ul = _nr_formula_peak_kbps(formula, whole(formula, "ul_layers"), "ul")
        dl_tbs = ul_tbs = None
    else:
        dl_tbs = whole(table, "dl_tbs_bits")
        ul_tbs = whole(table, "ul_tbs_bits")
        # bits per millisecond are kilobits per second
        peak_dl = dl_tbs / whole(table, "dl_cycle_ms")
        peak_ul = ul_tbs / whole(table, "ul_cycle_ms")
    half_dl = half_ul = None
    if "half_duplex" in table:
        half = table["half_duplex"]
        if not isinstance(half, dict) or set(half) != HALF_DUPLEX_KEYS or dl_tbs is None or ul_tbs is None:
            raise CatalogError(f"{where}: half_duplex should be a table with exactly {sorted(HALF_DUPLEX_KEYS)}, "
                               "beside dl_tbs_bits and ul_tbs_bits")
        half_dl = dl_tbs * whole(half, "dl_blocks") / whole(half, "dl_cycle_ms")
        half_ul = ul_tbs * whole(half, "ul_blocks") / whole(half, "ul_cycle_ms")
    tdd_pattern = tdd_dl = tdd_ul = None
    if "tdd" in table:
        tdd = table["tdd"]
        if not isinstance(tdd, dict) or set(tdd) != TDD_KEYS or not isinstance(tdd["pattern"], str):
            raise CatalogError(f"{where}: tdd should be a table with exactly {sorted(TDD_KEYS)}")
        special = [whole(tdd, name, minimum=0) for name in
                   ("special_dl_symbols", "special_guard_symbols", "special_ul_symbols")]
        try:
            tdd_dl, tdd_ul = tdd_shares(tdd["pattern"], *special)
        except ValueError as error:
            raise CatalogError(f"{where}: tdd: {error}") from error
        tdd_pattern = f"{tdd['pattern']} with S = {special[0]}:{special[1]}:{special[2]}"
    return Category(
        id=category_id,
        label=text("label"),
        release=whole(table, "release", minimum=8),
        rx_antennas=rx_antennas,
        dl_layers=dl_layers,
        single_antenna=single,
        peak_dl_kbps=peak_dl,
        peak_ul_kbps=peak_ul,
        dl_tbs_bits=dl_tbs,
        ul_tbs_bits=ul_tbs,
        reference=text("reference"),
        technology="NR" if category_id.startswith("nr-") else "LTE",
        half_duplex_dl_kbps=half_dl,
        half_duplex_ul_kbps=half_ul,
        tdd_pattern=tdd_pattern,
        tdd_dl_share=tdd_dl,
        tdd_ul_share=tdd_ul,
    )


@cache
def categories() -> Mapping[str, Category]:
    with (DATA_DIR / "categories.toml").open("rb") as handle:
        tables = tomllib.load(handle)
    return {category_id: _category_from_table(category_id, table) for category_id, table in tables.items()}


@dataclass(frozen=True)
class PowerClass:
    number: int
    max_output_dbm: float  # nominal maximum conducted output at the antenna connector
    source: str


DEFAULT_POWER_CLASS = 3  # TS 36.101 / TS 38.101-1: the class a UE is unless it declares another


@cache
def power_classes() -> Mapping[int, PowerClass]:
    """The UE power classes of power_classes.toml, checked at load."""
    with (DATA_DIR / "power_classes.toml").open("rb") as handle:
        tables = tomllib.load(handle)
    classes: dict[int, PowerClass] = {}
    for key, table in tables.items():
        where = f"power_classes.toml [{key}]"
        if not key.isdigit():
            raise CatalogError(f"{where}: a power class is a whole number")
        power = table.get("max_output_dbm")
        source = table.get("source")
        if not isinstance(power, (int, float)) or isinstance(power, bool) or not 0 < power < 40:
            raise CatalogError(f"{where}: max_output_dbm should be a number of dBm between 0 and 40")
        if not isinstance(source, str) or not source:
            raise CatalogError(f"{where}: source should be text")
        classes[int(key)] = PowerClass(int(key), float(power), source)
    if DEFAULT_POWER_CLASS not in classes:
        raise CatalogError(f"power_classes.toml: the default power class {DEFAULT_POWER_CLASS} is missing")
    return classes
