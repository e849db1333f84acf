"""Measurements a design names: Touchstone files and far-field patterns, read and tied to its antennas."""

import os
import stat
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path, PurePosixPath

import numpy as np

from rules import farfield, sparams
from rules.design import Design, DesignError, FieldEnvironment, MeasurementRef, Problem
from rules.farfield import FarFieldError, FarFieldPattern, parse_far_field
from rules.touchstone import Network, TouchstoneError, parse_touchstone

# A passive network's S-matrix has no singular value above 1 (it can't return more power than it is fed).
# Up to 1.01 is taken as measurement noise (common practice: a calibrated VNA's trace noise and drift);
# above it the file is not trusted at that frequency.
PASSIVITY_LIMIT = 1.01


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
    def largest_singular_value(self) -> np.ndarray:
        """(F,): the largest singular value of S, the most power gain the measured network shows."""
        return sparams.largest_singular_value(self.network)

    @cached_property
    def passive(self) -> np.ndarray:
        """(F,): True where the data is passive within PASSIVITY_LIMIT."""
        return self.largest_singular_value <= PASSIVITY_LIMIT

    @cached_property
    def return_loss_db(self) -> np.ndarray:
        return sparams.return_loss_db(self.network)

    @cached_property
    def vswr(self) -> np.ndarray:
        return sparams.vswr(self.network)

    @cached_property
    def efficiency_bound_pct(self) -> np.ndarray:
        """Shape (F, N): the radiation-efficiency upper bound of every port, in percent; NaN (no verdict) where
        the data is not passive, since power conservation is what the bound rests on."""
        bound = np.stack([sparams.efficiency_upper_bound(self.network, port) for port in range(len(self.ports))],
                         axis=1) * 100.0
        bound[~self.passive] = np.nan
        return bound

    def isolation_db(self, i: int, j: int) -> np.ndarray:
        key = ("isolation", i, j)
        if key not in self._pair_arrays:
            self._pair_arrays[key] = sparams.isolation_db(self.network, i, j)
        return self._pair_arrays[key]

    def envelope_correlation(self, i: int, j: int) -> np.ndarray:
        """ECC from S-parameters (Blanch et al. 2003); NaN where the data is not passive: the formula's
        premise (power that is not returned is radiated) fails there, and clipping it to 1 would blame the
        antennas for the calibration."""
        key = ("ecc", i, j)
        if key not in self._pair_arrays:
            ecc = sparams.envelope_correlation(self.network, i, j)
            ecc[~self.passive] = np.nan
            self._pair_arrays[key] = ecc
        return self._pair_arrays[key]


@dataclass(frozen=True, eq=False)
class LoadedPattern:
    """A far-field pattern tied to its antenna, with the environment its ECC and MEG are computed in."""

    file: str
    antenna: str
    pattern: FarFieldPattern
    environment: FieldEnvironment = field(default_factory=FieldEnvironment)
    absolute: bool = False

    @property
    def frequencies_mhz(self) -> np.ndarray:
        return self.pattern.frequencies_mhz

    @cached_property
    def efficiency_pct(self) -> np.ndarray | None:
        """(F,): total efficiency in percent; None unless the file is absolute."""
        return farfield.total_efficiency(self.pattern) * 100.0 if self.absolute else None

    @cached_property
    def mean_effective_gain_db(self) -> np.ndarray | None:
        """(F,): mean effective gain in dB in the entry's environment; None unless the file is absolute."""
        if not self.absolute:
            return None
        with np.errstate(divide="ignore"):
            return 10.0 * np.log10(farfield.mean_effective_gain(self.pattern, self.environment))


class AttachedMeasurements(tuple[LoadedMeasurement, ...]):
    """A design's measurements as read: iterating gives the Touchstone files in order (what charts and the
    coverage budget read), and `far_fields` holds the far-field patterns."""

    far_fields: tuple[LoadedPattern, ...]

    def __new__(cls, touchstone: Iterable[LoadedMeasurement] = (),
                far_fields: Iterable[LoadedPattern] = ()) -> "AttachedMeasurements":
        attached = super().__new__(cls, tuple(touchstone))
        attached.far_fields = tuple(far_fields)
        return attached

    def __getnewargs__(self) -> tuple[tuple[LoadedMeasurement, ...], tuple[LoadedPattern, ...]]:
        return (tuple(self), self.far_fields)


def attach_measurements(design: Design, read_text: Callable[[str], str]) -> AttachedMeasurements:
    """Reads every measurement the design names through `read_text(file_name)` and checks that the port
    map fits the file, and that the far-field patterns of cellular antennas, which are compared pair by pair,
    share frequencies, grid and environment. Raises DesignError naming `measurements[i]` for every file that
    can't be used."""
    problems: list[Problem] = []
    loaded: list[LoadedMeasurement] = []
    patterns: list[tuple[int, LoadedPattern]] = []
    for index, reference in enumerate(design.measurements):
        path = f"measurements[{index}]"
        try:
            text = read_text(reference.file)
        except (OSError, UnicodeDecodeError, MeasurementPathError) as error:
            reason = error.strerror if isinstance(error, OSError) and error.strerror else str(error)
            problems.append(Problem(f"{path}.file", f"cannot read {reference.file}: {reason}"))
            continue
        if reference.kind == "far-field":
            pattern = _load_pattern(reference, text, path, problems)
            if pattern is not None:
                patterns.append((index, pattern))
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
    compared = [(index, item) for index, item in patterns if design.antenna(item.antenna).is_cellular]
    for index, item in compared[1:]:
        first_index, first = compared[0]
        difference = first.pattern.grid_difference(item.pattern)
        if difference is None and first.environment != item.environment:
            difference = (f"their environments differ ({farfield.environment_text(first.environment)} against "
                          f"{farfield.environment_text(item.environment)})")
            problems.append(Problem(f"measurements[{index}].environment", f"{item.file} is compared with "
                                    f"{first.file} (measurements[{first_index}]), but {difference}"))
        elif difference is not None:
            problems.append(Problem(f"measurements[{index}].file", f"{item.file} is compared with {first.file} "
                                    f"(measurements[{first_index}]), but their {difference}"))
    if problems:
        raise DesignError(problems)
    return AttachedMeasurements(loaded, (item for _, item in patterns))


def _load_pattern(reference: MeasurementRef, text: str, path: str, problems: list[Problem]) -> LoadedPattern | None:
    try:
        pattern = parse_far_field(text, source=reference.file)
    except FarFieldError as error:
        problems.append(Problem(f"{path}.file", str(error)))
        return None
    environment = reference.environment
    if environment.model == "taga" and environment.spread_deg < pattern.theta_step_deg:
        problems.append(Problem(f"{path}.environment.spread_deg", f"{reference.file}'s theta steps of "
                                f"{pattern.theta_step_deg:g}° can't resolve an elevation spread of "
                                f"{environment.spread_deg:g}°: expected a spread of at least one step"))
        return None
    return LoadedPattern(reference.file, reference.antenna or "", pattern, environment, reference.absolute)


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
