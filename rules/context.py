"""What every check sees: the parsed design, its measurements, and the quantities derived from both once."""

from collections.abc import Sequence
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any

import numpy as np

from rules import farfield
from rules.catalog import Band
from rules.design import Antenna, Design
from rules.measurements import LoadedMeasurement, LoadedPattern


def merge_ranges(ranges: Sequence[tuple[float, float]]) -> list[tuple[float, float]]:
    """Union of closed ranges, as sorted, non-overlapping ranges."""
    merged: list[tuple[float, float]] = []
    for low, high in sorted(ranges):
        if merged and low <= merged[-1][1]:
            merged[-1] = (merged[-1][0], max(merged[-1][1], high))
        else:
            merged.append((low, high))
    return merged


def uncovered_ranges(
    needed: Sequence[tuple[float, float]], available: Sequence[tuple[float, float]],
) -> list[tuple[float, float]]:
    """The parts of `needed` that no range of `available` covers."""
    missing: list[tuple[float, float]] = []
    cover = merge_ranges(available)
    for low, high in merge_ranges(needed):
        cursor = low
        for cover_low, cover_high in cover:
            if cover_high < cursor or cover_low > high:
                continue
            if cover_low > cursor:
                missing.append((cursor, cover_low))
            cursor = max(cursor, cover_high)
            if cursor >= high:
                break
        if cursor < high:
            missing.append((cursor, high))
    return missing


def ranges_to_serve(antenna: Antenna, band: Band) -> list[tuple[float, float]]:
    """What an antenna must work over in a band: a main antenna transmits and receives, a receive
    antenna only receives (for a TDD band both are the same range; an SDL band has only a downlink)."""
    return merge_ranges(list(band.ranges_mhz) if antenna.transmits else [band.dl_mhz])


@dataclass(frozen=True)
class CheckContext:
    design: Design
    measurements: tuple[LoadedMeasurement, ...] = ()  # Touchstone files
    far_fields: tuple[LoadedPattern, ...] = ()
    # Figures several rules ask for (a pair's measured correlation in a band), computed once per evaluation.
    memo: dict[Any, Any] = field(default_factory=dict, compare=False, repr=False)

    @cached_property
    def cellular_antennas(self) -> tuple[Antenna, ...]:
        """The cellular receive branches (main and receive antennas); GNSS and WLAN antennas serve other
        radios and count for none of the cellular rules."""
        return tuple(antenna for antenna in self.design.antennas if antenna.is_cellular)

    def pattern_of(self, antenna_name: str) -> LoadedPattern | None:
        return next((item for item in self.far_fields if item.antenna == antenna_name), None)

    @cached_property
    def pattern_correlations(self) -> dict[tuple[str, str], np.ndarray]:
        """Far-field ECC per frequency for every ordered pair of cellular antennas with patterns, computed
        for all pairs at once (one Gram matrix per frequency). attach_measurements() has checked that these
        patterns share frequencies, grid and environment."""
        cellular = [item for item in self.far_fields if self.design.antenna(item.antenna).is_cellular]
        if len(cellular) < 2:
            return {}
        matrix = farfield.correlation_matrix([item.pattern for item in cellular], cellular[0].environment)
        return {(first.antenna, second.antenna): matrix[:, i, j]
                for i, first in enumerate(cellular) for j, second in enumerate(cellular) if i != j}

    @cached_property
    def lowest_mhz(self) -> float:
        return self.design.lowest_mhz

    @cached_property
    def lowest_band(self) -> Band:
        return min(self.design.modem.bands, key=lambda band: band.lowest_mhz)

    @cached_property
    def rx_required(self) -> int:
        """Receive antennas the category needs; for RedCap the module decides (one or two branches)."""
        category = self.design.modem.category
        if category.single_antenna == "module":
            return self.design.modem.rx_ports or 1
        return category.rx_antennas

    @cached_property
    def rx_usable(self) -> int:
        """Receive paths the modem can use: its receive ports, or what the category is specified with."""
        modem = self.design.modem
        if modem.rx_ports is not None:
            return modem.rx_ports
        return 2 if modem.category.single_antenna == "module" else modem.category.rx_antennas

    @cached_property
    def rx_connected(self) -> int:
        """Cellular antennas that actually reach a receive port."""
        return min(len(self.cellular_antennas), self.rx_usable)
