"""Times far-field patterns: reading eight antennas' files and the ECC of all their pairs; prints the figures.

The files: eight short dipoles at the feed points and axes of the large design in benchmarks/engine.py,
each on a 2° grid (91 theta x 180 phi) at 5 frequencies, 81,900 rows per file, fields written as
`%.6e` (what chamber software and field simulators typically export).

Two comparisons (targets from the issue that introduced far-field patterns):
- reading all eight files with rules.farfield (text read, strict parse, grid checks) against
  `numpy.loadtxt` on the same files (target: no longer). Beside them, without a target, the pure-numpy ways of
  parsing the same text from memory (the engine gets text, not a path): `numpy.loadtxt` on it, and
  `numpy.fromstring(sep=",")` on the body with its line ends made commas;
- the envelope correlation of all 28 pairs, as the engine computes it (one Gram matrix per frequency),
  against the reading time (target: under a tenth).

Run from the repository root: `.venv/bin/python benchmarks/far_field.py [--repeats N]`. It asserts nothing.
"""

import argparse
import io
import sys
import tempfile
from itertools import combinations
from pathlib import Path

import numpy as np

REPO_ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO_ROOT))

from benchmarks.engine import ANTENNA_PLACES, best_of, print_table, verdict  # noqa: E402
from benchmarks.far_field_data import dipole_field, grid, pattern_text  # noqa: E402
from rules.farfield import ISOTROPIC as ISOTROPIC_ENVIRONMENT  # noqa: E402
from rules.farfield import correlation_matrix, envelope_correlation, parse_far_field  # noqa: E402

FREQUENCIES_MHZ = [700.0, 800.0, 900.0, 1800.0, 2100.0]
STEP_DEG = 2.0
COMMENT_LINES = 2
READ_TARGET_RATIO = 1.0  # ours / numpy.loadtxt
ECC_TARGET_RATIO = 0.1  # ECC of all pairs / reading


def write_files(directory: Path) -> list[Path]:
    theta, phi = grid(STEP_DEG)
    paths = []
    for index, (name, _role, position_mm, axis) in enumerate(ANTENNA_PLACES):
        fields = dipole_field(FREQUENCIES_MHZ, theta, phi, axis, position_mm, efficiency=0.6 - 0.04 * index)
        path = directory / f"{name.lower()}.csv"
        path.write_text(pattern_text(FREQUENCIES_MHZ, theta, phi, *fields,
                                     comment=f"Tallow Creek Instruments router P1, {name}\nshort-dipole model"),
                        encoding="utf-8")
        paths.append(path)
    return paths


def read_ours(paths: list[Path]) -> list:
    return [parse_far_field(path.read_text(encoding="utf-8"), source=path.name) for path in paths]


def read_loadtxt(paths: list[Path]) -> list:
    return [np.loadtxt(path, delimiter=",", skiprows=COMMENT_LINES + 1) for path in paths]


def read_loadtxt_text(paths: list[Path]) -> list:
    return [np.loadtxt(io.StringIO(path.read_text(encoding="utf-8")), delimiter=",", skiprows=COMMENT_LINES + 1)
            for path in paths]


def read_fromstring(paths: list[Path]) -> list:
    tables = []
    for path in paths:
        body = path.read_text(encoding="utf-8").split("\n", COMMENT_LINES + 1)[-1]
        tables.append(np.fromstring(body.replace("\n", ","), sep=",").reshape(-1, 7))
    return tables


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--repeats", type=int, default=5, help="timed runs of each measurement (default 5)")
    repeats = parser.parse_args().repeats
    with tempfile.TemporaryDirectory(prefix="earshot-bench-") as folder:
        paths = write_files(Path(folder))
        patterns = read_ours(paths)
        rows = patterns[0].frequencies_mhz.size * patterns[0].theta_deg.size * patterns[0].phi_deg.size
        size_mb = sum(path.stat().st_size for path in paths) / 1e6
        # Both readers must produce the same numbers, or the timing compares different work.
        tables = read_loadtxt(paths)
        largest = max(float(np.abs(table[:, 3] + 1j * table[:, 4] - pattern.e_theta.ravel()).max())
                      for table, pattern in zip(tables, patterns, strict=True))

        # Interleave the two readers so that a busy machine slows both alike.
        ours_s, theirs_s, text_s, fromstring_s = [], [], [], []
        for _ in range(repeats):
            ours_s.append(best_of(1, lambda: read_ours(paths)))
            theirs_s.append(best_of(1, lambda: read_loadtxt(paths)))
            text_s.append(best_of(1, lambda: read_loadtxt_text(paths)))
            fromstring_s.append(best_of(1, lambda: read_fromstring(paths)))
        ours, theirs, from_text, from_string = min(ours_s), min(theirs_s), min(text_s), min(fromstring_s)
        matrix_s = best_of(repeats, lambda: correlation_matrix(patterns, ISOTROPIC_ENVIRONMENT))
        pairwise_s = best_of(repeats, lambda: [envelope_correlation(a, b) for a, b in combinations(patterns, 2)])
        matrix = correlation_matrix(patterns, ISOTROPIC_ENVIRONMENT)
        agreement = max(abs(float(matrix[0, i, j]) - float(envelope_correlation(patterns[i], patterns[j])[0]))
                        for i, j in combinations(range(len(patterns)), 2))

    print(f"Far-field files: {len(paths)} antennas x {rows:,} rows ({STEP_DEG:g}° grid, {len(FREQUENCIES_MHZ)} "
          f"frequencies), {size_mb:.1f} MB in all; best of {repeats}; largest |E_theta| difference between the "
          f"readers {largest:.1e}")
    read_ratio = ours / theirs
    print_table([
        ("read all files", "seconds", "ratio", "target", "verdict"),
        ("numpy.loadtxt(path)", f"{theirs:.3f}", "1.00", "", ""),
        ("rules.farfield.parse_far_field", f"{ours:.3f}", f"{read_ratio:.2f}", f"<= {READ_TARGET_RATIO:.2f}",
         verdict(read_ratio, READ_TARGET_RATIO, strictly_below=False)),
        ("numpy.loadtxt(StringIO(text)), no checks", f"{from_text:.3f}", f"{from_text / theirs:.2f}", "", ""),
        ("numpy.fromstring(body, sep=','), no checks", f"{from_string:.3f}", f"{from_string / theirs:.2f}", "", ""),
    ])
    print()
    pairs = len(paths) * (len(paths) - 1) // 2
    print(f"ECC of all {pairs} pairs at {len(FREQUENCIES_MHZ)} frequencies, isotropic environment (largest "
          f"difference between the two ways {agreement:.1e})")
    print_table([
        ("ECC", "seconds", "share of reading", "target", "verdict"),
        ("one Gram matrix per frequency (the engine)", f"{matrix_s:.4f}", f"{matrix_s / ours:.3f}",
         f"< {ECC_TARGET_RATIO:.2f}", verdict(matrix_s / ours, ECC_TARGET_RATIO, strictly_below=True)),
        (f"{pairs} separate envelope_correlation calls", f"{pairwise_s:.4f}", f"{pairwise_s / ours:.3f}", "", ""),
    ])
    return 0


if __name__ == "__main__":
    sys.exit(main())
