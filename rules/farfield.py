"""Far-field patterns: one antenna's complex radiated field over the sphere, and what two of them say.

A pattern file (design-file.md, "Far-field pattern files") holds E_theta and E_phi on a regular
theta/phi grid at one or more frequencies, its phase referred to the design's origin so that the
antennas' positions show in it. From two patterns this module computes the envelope correlation
coefficient by integrating the fields over the sphere in a multipath environment (Vaughan & Andersen,
"Antenna diversity in mobile communications", IEEE Trans. Veh. Technol. 36(4), 1987):

    rho_e = |R12|^2 / (R11 R22),  Rij = ∮ [XPR E_theta,i E*_theta,j P_theta + E_phi,i E*_phi,j P_phi] dΩ

with the environment's angular densities of incoming power P_theta, P_phi and cross-polar ratio XPR.
Two environments: uniform 3-D ("isotropic": P = 1/4π, XPR = 1, the common basis for comparing ECC)
and Taga's outdoor/urban model (Taga, "Analysis for mean effective gain of mobile antennas in land
mobile radio environments", IEEE Trans. Veh. Technol. 39(2), 1990): uniform in azimuth, Gaussian in
elevation about a mean elevation with a spread, the same for both polarizations, and XPR as given.
Where a file is absolute (|E_theta|^2 + |E_phi|^2 is the realized gain, linear) it also gives the
antenna's total efficiency, (1/4π) ∮ G dΩ, and its mean effective gain in that environment (Taga):

    MEG = ∮ [XPR/(1+XPR) G_theta P_theta + 1/(1+XPR) G_phi P_phi] dΩ

Quadrature. Over phi the grid is periodic, so the plain sum times the step is the exact rule for a
band-limited pattern. Over theta the grid includes both poles; after the phi sum, what is left of a
pattern on the sphere is a polynomial in cos(theta), which Clenshaw–Curtis quadrature on the points
cos(j π / N) integrates exactly up to degree N (Clenshaw & Curtis, Numer. Math. 2, 1960; weights as
in Waldvogel, BIT 46, 2006). It carries the sin(theta) of the surface element and gives the pole rows
the weight of their caps, so a coarse 10° grid stays accurate where a trapezoid in theta would not.
"""

import io
import math
import re
from collections.abc import Callable
from dataclasses import dataclass
from functools import cache

import numpy as np

from rules.design import FieldEnvironment
from rules.file_error import FileError

HEADER = "frequency_mhz,theta_deg,phi_deg,e_theta_re,e_theta_im,e_phi_re,e_phi_im"
COLUMNS = 7
MAX_STEP_DEG = 10.0
# Grid angles are compared after rounding to a micro-degree: exporters print 2.0 as 2 or 1.9999999.
GRID_DECIMALS = 6
GRID_TOLERANCE_DEG = 1e-6
FREQUENCY_TOLERANCE_MHZ = 1e-6
ISOTROPIC = FieldEnvironment()
# What each column may hold, checked row by row before the grid is built (column, low, high, in words).
# Field values are relative, but beyond 1e100 their squares would overflow the integrals.
MAX_FIELD = 1e100
MAX_FREQUENCY_MHZ = 1e6
_RANGES = (
    ("frequency_mhz", 1e-9, MAX_FREQUENCY_MHZ, f"a positive frequency up to {MAX_FREQUENCY_MHZ:g} MHz"),
    ("theta_deg", -GRID_TOLERANCE_DEG, 180.0 + GRID_TOLERANCE_DEG, "an angle from 0 to 180 degrees"),
    ("phi_deg", -GRID_TOLERANCE_DEG, 360.0 - 10 * GRID_TOLERANCE_DEG, "an angle from 0 to under 360 degrees"),
    *((column, -MAX_FIELD, MAX_FIELD, f"a field value of magnitude at most {MAX_FIELD:g}")
      for column in ("e_theta_re", "e_theta_im", "e_phi_re", "e_phi_im")),
)
_NUMBER = re.compile(r"[ \t]*[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?[ \t]*")


class FarFieldError(FileError):
    """A file that can't be read as a far-field pattern. str() gives 'NAME:LINE: message'."""


@dataclass(frozen=True, eq=False)
class FarFieldPattern:
    """One antenna's field on a regular grid. Arrays are read-only; fields have shape (F, T, P)."""

    source: str
    frequencies_mhz: np.ndarray  # (F,) increasing
    theta_deg: np.ndarray  # (T,) 0 .. 180 inclusive
    phi_deg: np.ndarray  # (P,) 0 .. < 360
    e_theta: np.ndarray
    e_phi: np.ndarray

    @property
    def theta_step_deg(self) -> float:
        return float(self.theta_deg[1] - self.theta_deg[0])

    @property
    def phi_step_deg(self) -> float:
        return float(self.phi_deg[1] - self.phi_deg[0])

    def grid_difference(self, other: "FarFieldPattern") -> str | None:
        """Why two patterns can't be compared point by point, or None when they share frequencies and grid."""
        if self.frequencies_mhz.shape != other.frequencies_mhz.shape or not np.allclose(
                self.frequencies_mhz, other.frequencies_mhz, rtol=0, atol=FREQUENCY_TOLERANCE_MHZ):
            return (f"frequencies differ ({_listed(self.frequencies_mhz)} MHz against "
                    f"{_listed(other.frequencies_mhz)} MHz)")
        for name, mine, theirs in (("theta", self.theta_deg, other.theta_deg), ("phi", self.phi_deg, other.phi_deg)):
            if mine.shape != theirs.shape or not np.allclose(mine, theirs, rtol=0, atol=GRID_TOLERANCE_DEG):
                return (f"{name} grids differ ({mine.size} points of {mine[1] - mine[0]:g}° against "
                        f"{theirs.size} points of {theirs[1] - theirs[0]:g}°)")
        return None


def _listed(values: np.ndarray) -> str:
    shown = ", ".join(f"{value:g}" for value in values[:6])
    return shown + (", ..." if values.size > 6 else "")


def _read_only(array: np.ndarray) -> np.ndarray:
    array.setflags(write=False)
    return array


class _Reader:
    def __init__(self, text: str, source: str) -> None:
        if "\r" in text:
            text = text.replace("\r\n", "\n").replace("\r", "\n")
        self.text = text
        self.source = source

    def error(self, message: str, line: int | None = None) -> FarFieldError:
        return FarFieldError(message, source=self.source, line=line)

    def read(self) -> FarFieldPattern:
        body_start, header_line = self._header()
        body = self.text[body_start:]
        table = _fast_table(body)
        row_lines: list[np.ndarray] = []
        if table is None:
            table, lines = self._careful_table(body, header_line + 1)
            row_lines.append(lines)
        if table.shape[0] == 0:
            raise self.error("no data rows after the header", header_line)

        def line_of(row: int) -> int:
            # Only an error needs a line: after the fast pass the careful one finds them (numpy skips blank lines).
            if not row_lines:
                row_lines.append(self._careful_table(body, header_line + 1)[1])
            return int(row_lines[0][row])

        return self._grid(table, line_of)

    def _header(self) -> tuple[int, int]:
        position, line = 0, 1
        while position < len(self.text):
            end = self.text.find("\n", position)
            end = len(self.text) if end < 0 else end
            content = self.text[position:end].strip()
            if content and not content.startswith("#"):
                if content.replace(" ", "") != HEADER:
                    shown = content if len(content) <= 80 else content[:77] + "..."
                    raise self.error(f"expected the header line {HEADER!r}, got {shown!r}", line)
                return end + 1, line
            position, line = end + 1, line + 1
        raise self.error(f"no header line: expected {HEADER!r} as the first line that is not a comment")

    def _careful_table(self, body: str, first_line: int) -> tuple[np.ndarray, np.ndarray]:
        """Line by line: the definition of what this reader accepts, and where errors get their line."""
        rows: list[list[float]] = []
        lines: list[int] = []
        for offset, content in enumerate(body.split("\n")):
            number = first_line + offset
            stripped = content.strip()
            if not stripped or stripped.startswith("#"):
                continue
            fields = content.split(",")
            if len(fields) != COLUMNS:
                raise self.error(f"expected {COLUMNS} comma-separated numbers ({HEADER}), got {len(fields)}", number)
            values = []
            for column, field in zip(HEADER.split(","), fields, strict=True):
                if not _NUMBER.fullmatch(field):
                    shown = field.strip() if len(field.strip()) <= 30 else field.strip()[:27] + "..."
                    raise self.error(f"{column}: expected a number, got {shown!r}", number)
                value = float(field)
                if not math.isfinite(value):
                    raise self.error(f"{column}: {field.strip()} is too large to be a number", number)
                values.append(value)
            rows.append(values)
            lines.append(number)
        return np.array(rows, dtype=np.float64).reshape(-1, COLUMNS), np.array(lines, dtype=np.int64)

    def _grid(self, table: np.ndarray, line_of: Callable[[int], int]) -> FarFieldPattern:
        frequency = table[:, 0]
        for column, low, high, what in _RANGES:
            values = table[:, HEADER.split(",").index(column)]
            bad = np.flatnonzero(~((values >= low) & (values <= high)))
            if bad.size:
                raise self.error(f"{column}: expected {what}, got {values[bad[0]]:g}", line_of(int(bad[0])))
        canonical = _canonical_grid(table)
        if canonical is not None:
            frequencies, thetas, phis = canonical
            self._check_axis("theta_deg", thetas, table[:, 1], line_of, closed=True)
            self._check_axis("phi_deg", phis, table[:, 2], line_of, closed=False)
            shape = (frequencies.size, thetas.size, phis.size)
            return FarFieldPattern(
                source=self.source, frequencies_mhz=_read_only(frequencies), theta_deg=_read_only(thetas),
                phi_deg=_read_only(phis),
                e_theta=_read_only((table[:, 3] + 1j * table[:, 4]).reshape(shape)),
                e_phi=_read_only((table[:, 5] + 1j * table[:, 6]).reshape(shape)),
            )
        frequencies, frequency_index = np.unique(frequency, return_inverse=True)
        thetas, theta_index = np.unique(np.round(table[:, 1], GRID_DECIMALS), return_inverse=True)
        phis, phi_index = np.unique(np.round(table[:, 2], GRID_DECIMALS), return_inverse=True)
        self._check_axis("theta_deg", thetas, table[:, 1], line_of, closed=True)
        self._check_axis("phi_deg", phis, table[:, 2], line_of, closed=False)
        counts = (frequencies.size, thetas.size, phis.size)
        if counts[0] * counts[1] * counts[2] > 4 * table.shape[0]:
            # Far more grid points than rows: not a full grid. Said without counting which points are missing.
            raise self.error(
                f"{table.shape[0]} rows can't fill {counts[0]} frequencies x {counts[1]} theta x {counts[2]} phi "
                "values: every frequency needs the same full grid", line_of(table.shape[0] - 1))
        flat = (frequency_index * counts[1] + theta_index) * counts[2] + phi_index
        seen = np.bincount(flat, minlength=counts[0] * counts[1] * counts[2])
        if (seen > 1).any():
            order = np.argsort(flat, kind="stable")
            repeated = order[1:][np.diff(flat[order]) == 0]
            row = int(repeated.min())
            raise self.error(f"the point theta {table[row, 1]:g}°, phi {table[row, 2]:g}° at {table[row, 0]:g} MHz "
                             "is given twice", line_of(row))
        if (seen == 0).any():
            missing = int(np.flatnonzero(seen == 0)[0])
            f, rest = divmod(missing, counts[1] * counts[2])
            t, p = divmod(rest, counts[2])
            first_row = int(np.flatnonzero(frequency_index == f)[0])
            raise self.error(
                f"{frequencies[f]:g} MHz lacks the point theta {thetas[t]:g}°, phi {phis[p]:g}°: every frequency "
                f"needs the same full grid ({counts[1]} theta x {counts[2]} phi values)", line_of(first_row))
        e_theta = np.empty(flat.size, dtype=np.complex128)
        e_phi = np.empty(flat.size, dtype=np.complex128)
        e_theta[flat] = table[:, 3] + 1j * table[:, 4]
        e_phi[flat] = table[:, 5] + 1j * table[:, 6]
        return FarFieldPattern(
            source=self.source,
            frequencies_mhz=_read_only(frequencies),
            theta_deg=_read_only(thetas),
            phi_deg=_read_only(phis),
            e_theta=_read_only(e_theta.reshape(counts)),
            e_phi=_read_only(e_phi.reshape(counts)),
        )

    def _check_axis(self, column: str, values: np.ndarray, raw: np.ndarray, line_of: Callable[[int], int], *,
                    closed: bool) -> None:
        span = "0 to 180 inclusive" if closed else "0 to under 360"

        def row_with(value: float) -> int:
            return line_of(int(np.flatnonzero(np.abs(raw - value) <= GRID_TOLERANCE_DEG * 10)[0]))

        if values.size < 2:
            raise self.error(f"{column}: a single value ({values[0]:g}); expected a regular grid from {span}",
                             row_with(values[0]))
        if abs(values[0]) > GRID_TOLERANCE_DEG:
            raise self.error(f"{column}: the grid starts at {values[0]:g}; expected {span}", row_with(values[0]))
        step = float(values[1] - values[0])
        if step > MAX_STEP_DEG + GRID_TOLERANCE_DEG:
            raise self.error(f"{column}: steps of {step:g}°; expected steps of at most {MAX_STEP_DEG:g}°",
                             row_with(values[1]))
        expected = np.arange(values.size) * step
        off = np.flatnonzero(np.abs(values - expected) > GRID_TOLERANCE_DEG * 10)
        if off.size:
            index = int(off[0])
            raise self.error(f"{column}: {values[index]:g} is off the regular grid of {step:g}° steps "
                             f"(expected {expected[index]:g})", row_with(values[index]))
        end = 180.0 if closed else 360.0
        last = values[-1] if closed else values[-1] + step
        if abs(last - end) > GRID_TOLERANCE_DEG * 10:
            what = (f"the grid ends at {values[-1]:g}; expected it to reach 180" if closed else
                    f"{step:g}° steps ending at {values[-1]:g} do not close the circle at 360")
            raise self.error(f"{column}: {what}", row_with(values[-1]))


def _canonical_grid(table: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """Frequencies, thetas and phis when the rows run in the order exporters write them (frequency, then
    theta, then phi, each increasing) over a full grid; None for any other order, which the general path
    sorts out. A handful of vectorized comparisons instead of three sorts."""
    frequency, theta, phi = table[:, 0], table[:, 1], table[:, 2]
    rows = table.shape[0]
    phi_points = int(np.argmax(theta != theta[0]))
    if phi_points < 2 or rows % phi_points:
        return None
    blocks = rows // phi_points
    starts = frequency[::phi_points]
    theta_points = int(np.argmax(starts != starts[0])) or blocks
    if blocks % theta_points:
        return None
    frequency_points = blocks // theta_points
    phis = phi[:phi_points]
    thetas = theta[: theta_points * phi_points: phi_points]
    frequencies = frequency[:: theta_points * phi_points]
    if not ((phi.reshape(blocks, phi_points) == phis).all()
            and (theta.reshape(frequency_points, theta_points, phi_points) == thetas[None, :, None]).all()
            and (frequency.reshape(frequency_points, -1) == frequencies[:, None]).all()):
        return None
    if (np.diff(phis) <= 0).any() or (np.diff(thetas) <= 0).any() or (np.diff(frequencies) <= 0).any():
        return None
    return frequencies.copy(), np.round(thetas, GRID_DECIMALS), np.round(phis, GRID_DECIMALS)


def _fast_table(body: str) -> np.ndarray | None:
    """The rows parsed by numpy's C reader when the body is plainly well formed; None means 'read carefully'.

    A comment line in the body makes numpy fail (comments are off), and the careful pass takes over; blank
    lines numpy skips, as the careful pass does. numpy accepts a superset of the careful pass only in nan and
    inf, which the finiteness check turns away, so whatever this returns the careful pass would have returned
    too."""
    if not body or body.isspace():
        return None
    try:
        table = np.loadtxt(io.StringIO(body), delimiter=",", comments=None, dtype=np.float64, ndmin=2)
    except ValueError:
        return None
    if table.shape[1] != COLUMNS or not np.isfinite(table).all():
        return None
    return table


def parse_far_field(text: str, *, source: str) -> FarFieldPattern:
    """Reads a far-field pattern file's text; raises FarFieldError naming the file and line of a problem."""
    return _Reader(text, source).read()


# -- quadrature and environments ----------------------------------------------------------------------------

@cache
def clenshaw_curtis_weights(intervals: int) -> np.ndarray:
    """Weights w_j for the points x_j = cos(j π / N), j = 0..N, with sum_j w_j g(x_j) ≈ ∫_{-1}^{1} g(x) dx,
    exact for polynomials of degree up to N (Waldvogel 2006). With x = cos(theta) this is
    ∫_0^π g(theta) sin(theta) dtheta on the theta grid 0, π/N, ..., π. The weights are positive and sum to 2."""
    if intervals < 1:
        raise ValueError("Clenshaw-Curtis quadrature needs at least one interval")
    n = intervals
    angles = np.pi * np.arange(n + 1) / n
    weights = np.zeros(n + 1)
    inner = np.ones(n - 1)
    if n % 2 == 0:
        weights[0] = weights[n] = 1.0 / (n * n - 1)
        for k in range(1, n // 2):
            inner -= 2.0 * np.cos(2 * k * angles[1:-1]) / (4 * k * k - 1)
        inner -= np.cos(n * angles[1:-1]) / (n * n - 1)
    else:
        weights[0] = weights[n] = 1.0 / (n * n)
        for k in range(1, (n - 1) // 2 + 1):
            inner -= 2.0 * np.cos(2 * k * angles[1:-1]) / (4 * k * k - 1)
    weights[1:-1] = 2.0 * inner / n
    weights.setflags(write=False)
    return weights


def sphere_weights(theta_points: int, phi_points: int) -> np.ndarray:
    """(T, 1) weights whose sum over the grid (times phi_points) integrates over the sphere: sum over theta
    and phi of w[t] f(theta_t, phi_p) ≈ ∮ f dΩ. Clenshaw–Curtis in theta, the periodic rule in phi."""
    return (clenshaw_curtis_weights(theta_points - 1) * (2.0 * np.pi / phi_points))[:, None]


@dataclass(frozen=True)
class Densities:
    """The environment on a grid: (T, 1) densities of incoming power for each polarization, each summing to 1
    over the sphere with sphere_weights, and the cross-polar ratio as a power ratio."""

    theta: np.ndarray
    phi: np.ndarray
    xpr: float


def densities(environment: FieldEnvironment, theta_deg: np.ndarray, phi_points: int) -> Densities:
    """Taga 1990: P(theta) ∝ exp(-(theta - (90° - mean elevation))^2 / (2 spread^2)), uniform in phi, for both
    polarizations; uniform over the sphere for "isotropic". Normalized with the grid's own quadrature, so that
    a pattern of constant gain G gets a mean effective gain of exactly G XPR / (1 + XPR) (theta) on any grid."""
    weights = sphere_weights(theta_deg.size, phi_points)
    if environment.model == "isotropic":
        shape = np.ones((theta_deg.size, 1))
        xpr = 1.0
    elif environment.model == "taga":
        centre_deg = 90.0 - environment.mean_elevation_deg
        shape = np.exp(-((theta_deg - centre_deg) ** 2) / (2.0 * environment.spread_deg**2))[:, None]
        xpr = 10.0 ** (environment.xpr_db / 10.0)
    else:
        raise ValueError(f"unknown environment model {environment.model!r}")
    total = float((shape * weights).sum() * phi_points)
    density = shape / total
    return Densities(theta=density, phi=density, xpr=xpr)


def _weighted_fields(pattern: FarFieldPattern, environment: FieldEnvironment) -> np.ndarray:
    """(F, 2 T P) vectors whose inner products are the correlation integrals R_ij of Vaughan & Andersen."""
    weights = sphere_weights(pattern.theta_deg.size, pattern.phi_deg.size)
    density = densities(environment, pattern.theta_deg, pattern.phi_deg.size)
    scale_theta = np.sqrt(density.xpr * density.theta * weights)
    scale_phi = np.sqrt(density.phi * weights)
    frequencies = pattern.frequencies_mhz.size
    return np.concatenate([(pattern.e_theta * scale_theta).reshape(frequencies, -1),
                           (pattern.e_phi * scale_phi).reshape(frequencies, -1)], axis=1)


def correlation_matrix(patterns: list[FarFieldPattern], environment: FieldEnvironment) -> np.ndarray:
    """(F, N, N) envelope correlation of every pair of N patterns that share frequencies and grid: one Gram
    matrix per frequency, |R_ij|^2 / (R_ii R_jj). A pattern with no field at a frequency correlates as NaN."""
    if not patterns:
        return np.zeros((0, 0, 0))
    for other in patterns[1:]:
        difference = patterns[0].grid_difference(other)
        if difference is not None:
            raise ValueError(f"{patterns[0].source} and {other.source} can't be compared: {difference}")
    stacked = np.stack([_weighted_fields(pattern, environment) for pattern in patterns], axis=1)  # (F, N, K)
    gram = stacked @ np.conj(stacked.transpose(0, 2, 1))
    power = np.real(np.diagonal(gram, axis1=1, axis2=2))  # (F, N)
    with np.errstate(divide="ignore", invalid="ignore"):
        ecc = np.abs(gram) ** 2 / (power[:, :, None] * power[:, None, :])
    return np.clip(ecc, 0.0, 1.0)


def envelope_correlation(first: FarFieldPattern, second: FarFieldPattern,
                         environment: FieldEnvironment = ISOTROPIC) -> np.ndarray:
    """(F,): the envelope correlation of two patterns at each frequency (Vaughan & Andersen 1987)."""
    return correlation_matrix([first, second], environment)[:, 0, 1]


def total_efficiency(pattern: FarFieldPattern) -> np.ndarray:
    """(F,): (1/4π) ∮ (|E_theta|^2 + |E_phi|^2) dΩ, the total efficiency of an absolute pattern (realized gain)."""
    weights = sphere_weights(pattern.theta_deg.size, pattern.phi_deg.size)
    power = np.abs(pattern.e_theta) ** 2 + np.abs(pattern.e_phi) ** 2
    return np.asarray((power * weights).sum(axis=(1, 2)) / (4.0 * np.pi))


def mean_effective_gain(pattern: FarFieldPattern, environment: FieldEnvironment = ISOTROPIC) -> np.ndarray:
    """(F,): Taga's mean effective gain of an absolute pattern, linear (isotropic environment: efficiency / 2)."""
    weights = sphere_weights(pattern.theta_deg.size, pattern.phi_deg.size)
    density = densities(environment, pattern.theta_deg, pattern.phi_deg.size)
    share_theta = density.xpr / (1.0 + density.xpr)
    integrand = (share_theta * np.abs(pattern.e_theta) ** 2 * density.theta
                 + (1.0 - share_theta) * np.abs(pattern.e_phi) ** 2 * density.phi)
    return np.asarray((integrand * weights).sum(axis=(1, 2)))


def environment_evidence(environment: FieldEnvironment) -> dict[str, float | str]:
    """The environment's parameters as finding evidence."""
    if environment.model == "isotropic":
        return {"environment": "isotropic", "xpr_db": 0.0}
    return {"environment": "taga", "mean_elevation_deg": environment.mean_elevation_deg,
            "elevation_spread_deg": environment.spread_deg, "xpr_db": environment.xpr_db}


def environment_text(environment: FieldEnvironment) -> str:
    if environment.model == "isotropic":
        return "uniform 3-D multipath (isotropic, XPR 0 dB)"
    return (f"Taga's outdoor model (uniform azimuth, elevation Gaussian about {environment.mean_elevation_deg:g}° "
            f"with {environment.spread_deg:g}° spread, XPR {environment.xpr_db:g} dB)")
