"""Measurements a design names: Touchstone files read and tied to the design's antennas."""

from collections.abc import Callable
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path

import numpy as np

from rules import sparams
from rules.design import Design, DesignError, Problem
from rules.touchstone import Network, TouchstoneError, parse_touchstone


@dataclass(frozen=True)
class LoadedMeasurement:
    file: str
    network: Network
    ports: tuple[str | None, ...]  # antenna on port 1..N, None for a port not tied to an antenna
    _pair_arrays: dict[tuple[str, int, int], np.ndarray] = field(default_factory=dict, compare=False, repr=False)

    def port_of(self, antenna_name: str) -> int | None:
        """0-based port index of an antenna, or None when this file did not measure it."""
        return self.ports.index(antenna_name) if antenna_name in self.ports else None

    # Each quantity is computed once over the whole sweep; checks then take per-band windows of it.
    @cached_property
    def return_loss_db(self) -> np.ndarray:
        return sparams.return_loss_db(self.network)

    @cached_property
    def vswr(self) -> np.ndarray:
        return sparams.vswr(self.network)

    @cached_property
    def efficiency_bound_pct(self) -> np.ndarray:
        """Shape (F, N): the radiation-efficiency upper bound of every port, in percent."""
        return np.stack([sparams.efficiency_upper_bound(self.network, port) for port in range(len(self.ports))],
                        axis=1) * 100.0

    def isolation_db(self, i: int, j: int) -> np.ndarray:
        key = ("isolation", i, j)
        if key not in self._pair_arrays:
            self._pair_arrays[key] = sparams.isolation_db(self.network, i, j)
        return self._pair_arrays[key]

    def envelope_correlation(self, i: int, j: int) -> np.ndarray:
        key = ("ecc", i, j)
        if key not in self._pair_arrays:
            self._pair_arrays[key] = sparams.envelope_correlation(self.network, i, j)
        return self._pair_arrays[key]


def attach_measurements(design: Design, read_text: Callable[[str], str]) -> tuple[LoadedMeasurement, ...]:
    """Reads every measurement the design names through `read_text(file_name)` and checks that the port
    map fits the file. Raises DesignError naming `measurements[i]` for every file that can't be used."""
    problems: list[Problem] = []
    loaded: list[LoadedMeasurement] = []
    for index, reference in enumerate(design.measurements):
        path = f"measurements[{index}]"
        try:
            text = read_text(reference.file)
        except (OSError, UnicodeDecodeError) as error:
            reason = error.strerror if isinstance(error, OSError) and error.strerror else str(error)
            problems.append(Problem(f"{path}.file", f"cannot read {reference.file}: {reason}"))
            continue
        try:
            network = parse_touchstone(text, source=reference.file)
        except TouchstoneError as error:
            problems.append(Problem(f"{path}.file", str(error)))
            continue
        if network.port_count != len(reference.ports):
            problems.append(Problem(f"{path}.ports", f"{reference.file} has {network.port_count} port(s); "
                                                     f"expected that many names, got {len(reference.ports)}"))
            continue
        loaded.append(LoadedMeasurement(reference.file, network, reference.ports))
    if problems:
        raise DesignError(problems)
    return tuple(loaded)


def read_beside(design_path: Path) -> Callable[[str], str]:
    """A reader for files named relative to the design file, as the contract says."""
    base = design_path.resolve().parent

    def read_text(file_name: str) -> str:
        return (base / file_name).read_text(encoding="utf-8", errors="replace")

    return read_text
