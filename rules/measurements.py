"""Measurements a design names: Touchstone files read and tied to the design's antennas."""

import os
import stat
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path, PurePosixPath

import numpy as np

from rules import sparams
from rules.design import Design, DesignError, Problem
from rules.touchstone import Network, TouchstoneError, parse_touchstone


class MeasurementPathError(ValueError):
    """A file name or file that `read_beside` refuses to read; the message says why."""


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
        except (OSError, UnicodeDecodeError, MeasurementPathError) as error:
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


def read_beside(design_path: Path, *, max_bytes: int) -> Callable[[str], str]:
    """A reader for files named relative to the design file, as the contract says. It reads only regular files
    in the design file's folder or below it (no absolute path, no `..`, no symbolic link leading out) and at
    most `max_bytes` of each (the caller's upload limit), and it never waits on a pipe. A design file may
    come from someone else; naming /dev/zero, a FIFO or another folder's files must not hang, exhaust memory
    or read what lies elsewhere."""
    base = design_path.resolve().parent

    def read_text(file_name: str) -> str:
        data = _read_regular_file(_inside(base, file_name), max_bytes)
        return data.decode("utf-8", errors="replace")

    return read_text


def _inside(base: Path, file_name: str) -> Path:
    if not file_name:
        raise MeasurementPathError("the file name is empty")
    if "\x00" in file_name:
        raise MeasurementPathError("the file name contains a NUL character")
    relative = PurePosixPath(file_name)
    if relative.is_absolute():
        raise MeasurementPathError("an absolute path; name the file relative to the design file's folder")
    if ".." in relative.parts:
        raise MeasurementPathError("'..' leads out of the design file's folder; name a file in it or below it")
    target = (base / relative).resolve()
    if not target.is_relative_to(base):
        raise MeasurementPathError("a symbolic link to outside the design file's folder")
    return target


def _read_regular_file(path: Path, max_bytes: int) -> bytes:
    limit = f"expected at most {_size(max_bytes)}"
    if not stat.S_ISREG(os.stat(path).st_mode):  # before opening: opening a device or a FIFO can block
        raise MeasurementPathError("not a regular file")
    # O_NONBLOCK: should the path turn into a FIFO meanwhile, opening it returns at once instead of waiting.
    descriptor = os.open(path, os.O_RDONLY | os.O_NONBLOCK | getattr(os, "O_NOCTTY", 0))
    with os.fdopen(descriptor, "rb") as handle:
        info = os.fstat(handle.fileno())
        if not stat.S_ISREG(info.st_mode):
            raise MeasurementPathError("not a regular file")
        if info.st_size > max_bytes:
            raise MeasurementPathError(f"{limit}, got {_size(info.st_size)}")
        data = handle.read(max_bytes + 1)  # the file may grow after fstat
    if len(data) > max_bytes:
        raise MeasurementPathError(f"{limit}, got more")
    return data


def _size(count: int) -> str:
    if count >= 1_000_000:
        return f"{count / 1_000_000:g} MB" if count % 1_000_000 == 0 else f"{count / 1_000_000:.1f} MB"
    return f"{count / 1000:g} kB" if count % 1000 == 0 else f"{count / 1000:.1f} kB"
