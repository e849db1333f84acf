"""Times the engine on a large design and prints the figures beside their targets.

The design: one main and seven receive antennas, twenty LTE bands, Cat 6 with eight receive ports,
and a four-port Touchstone file of 20,001 frequencies that measures four of the antennas.

Two comparisons:
- reading the Touchstone file with rules.touchstone against scikit-rf's `skrf.Network(path)`
  (target: ours takes at most half of scikit-rf's time), with the peak memory of our read;
- the whole-process wall time of `manage.py evaluate DESIGN --format json` against
  `manage.py check` (target: evaluate adds less than 50 % to Django's own start-up); the same design with
  the eight antennas' far-field patterns of benchmarks/far_field.py (81,900 rows each) is timed beside it,
  without a target, to show what reading them adds.

Run from the repository root: `.venv/bin/python benchmarks/engine.py [--repeats N]`.
Needs scikit-rf, a test dependency. This script prints figures; it asserts nothing.
"""

import argparse
import json
import statistics
import subprocess
import sys
import tempfile
import time
import tracemalloc
from collections.abc import Callable
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO_ROOT))  # run as a script, `benchmarks` and `rules` import from the root

from benchmarks.touchstone_data import write_four_port_file  # noqa: E402
from rules.catalog import bands  # noqa: E402
from rules.touchstone import read_touchstone  # noqa: E402

TOUCHSTONE_NAME = "tallow-creek-array.s4p"
# A small shipped example (two antennas, three bands, no measurement): separates start-up from work.
SMALL_DESIGN = REPO_ROOT / "rules" / "examples" / "hive-gateway.json"
POINTS = 20_001
PARSE_TARGET_RATIO = 0.5  # ours / scikit-rf
EVALUATE_TARGET_RATIO = 1.5  # evaluate / check: less than 50 % added to Django's start-up

# Twenty LTE bands a global Cat 6 router would carry; every one is in rules/data/lte_bands.csv.
SELECTED_BANDS = ["B1", "B2", "B3", "B4", "B5", "B7", "B8", "B12", "B13", "B14",
                  "B17", "B18", "B19", "B20", "B25", "B26", "B28", "B38", "B40", "B41"]
# Wide-band antennas that cover the low band (698-960 MHz) and mid/high band (1710-2690 MHz).
ANTENNA_RANGES_MHZ = [[698, 960], [1710, 2690]]
# Eight feed points around a 300 x 200 x 50 mm enclosure, field axes alternating so neighbours are crossed.
ANTENNA_PLACES = [
    ("MAIN", "main", [20, 20, 25], [1, 0, 0]),
    ("RX1", "receive", [280, 20, 25], [0, 1, 0]),
    ("RX2", "receive", [280, 180, 25], [1, 0, 0]),
    ("RX3", "receive", [20, 180, 25], [0, 1, 0]),
    ("RX4", "receive", [150, 20, 25], [0, 0, 1]),
    ("RX5", "receive", [150, 180, 25], [0, 0, 1]),
    ("RX6", "receive", [20, 100, 40], [1, 1, 0]),
    ("RX7", "receive", [280, 100, 40], [1, -1, 0]),
]


def design_document() -> dict:
    missing = [name for name in SELECTED_BANDS if name not in bands()]
    if missing:
        raise SystemExit(f"bands missing from the catalog: {', '.join(missing)}")
    antennas = []
    for index, (name, role, position_mm, polarization) in enumerate(ANTENNA_PLACES):
        antennas.append({
            "name": name,
            "role": role,
            "mounting": "internal",
            "position_mm": position_mm,
            "polarization": polarization,
            "ranges_mhz": ANTENNA_RANGES_MHZ,
            "peak_gain_dbi": 2.0 if role == "main" else 1.5,
            # Low bands are the hard ones for a small antenna: efficiency falls towards 700 MHz.
            "efficiency_pct": {band: (35 if bands()[band].lowest_mhz < 1000 else 55) - index for band in SELECTED_BANDS},
            "size_mm": [40, 10, 3],
        })
    return {
        "format": "earshot-design/1",
        "product": {"name": "Tallow Creek Instruments field router", "revision": "P1"},
        "modem": {
            "category": "cat-6",
            "bands": SELECTED_BANDS,
            "rx_ports": 8,
            "gain_limits_dbi": {band: 5.0 for band in SELECTED_BANDS},
            "operator_single_antenna_approval": False,
        },
        "enclosure": {"size_mm": [300, 200, 50], "material": "plastic"},
        "ground_plane_mm": [280, 180],
        "antennas": antennas,
        "deployment": {
            "environment": "outdoor",
            "required_dl_kbps": 50_000,
            "required_ul_kbps": 10_000,
            "body_distance_mm": 300,
        },
        "measurements": [{"file": TOUCHSTONE_NAME, "ports": ["MAIN", "RX1", "RX2", "RX3"]}],
    }


def best_of(repeats: int, action: Callable[[], object]) -> float:
    times = []
    for _ in range(repeats):
        started = time.perf_counter()
        action()
        times.append(time.perf_counter() - started)
    return min(times)


def parse_peak_memory_bytes(path: Path) -> int:
    tracemalloc.start()
    try:
        read_touchstone(path)
        return tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()


def run_manage(arguments: list[str]) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "manage.py", *arguments], cwd=REPO_ROOT,
                          capture_output=True, text=True, check=False)


def process_times(repeats: int, arguments: list[str], accept: Callable[[subprocess.CompletedProcess], bool]
                  ) -> tuple[list[float], subprocess.CompletedProcess]:
    """Wall times of `repeats` runs of manage.py after one warm-up, and the last run's result.

    Raises RuntimeError with the tail of stderr as soon as a run is not accepted."""
    times = []
    completed = run_manage(arguments)  # warm-up: bytecode caches, file system caches
    for attempt in range(repeats + 1):
        if not accept(completed):
            raise RuntimeError(f"manage.py {' '.join(arguments)} exited {completed.returncode}:\n"
                               f"{completed.stderr.strip()[-2000:]}")
        if attempt == repeats:
            break
        started = time.perf_counter()
        completed = run_manage(arguments)
        times.append(time.perf_counter() - started)
    return times, completed


def check_succeeded(completed: subprocess.CompletedProcess) -> bool:
    return completed.returncode == 0


def evaluate_succeeded(completed: subprocess.CompletedProcess) -> bool:
    """Exit 0 (no blocker) or 1 (a blocker) with one checklist on stdout; a crash also exits 1, without it."""
    if completed.returncode not in (0, 1):
        return False
    try:
        return json.loads(completed.stdout).get("format") == "earshot-checklist/1"
    except ValueError:
        return False


def print_table(rows: list[tuple[str, ...]]) -> None:
    widths = [max(len(row[column]) for row in rows) for column in range(len(rows[0]))]
    for index, row in enumerate(rows):
        cells = [cell.ljust(width) if column == 0 else cell.rjust(width)
                 for column, (cell, width) in enumerate(zip(row, widths, strict=True))]
        print("  ".join(cells).rstrip())
        if index == 0:
            print("  ".join("-" * width for width in widths))


def verdict(ratio: float, target: float, *, strictly_below: bool) -> str:
    met = ratio < target if strictly_below else ratio <= target
    return "met" if met else "NOT met"


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--repeats", type=int, default=5, help="timed runs of each measurement (default 5)")
    repeats = parser.parse_args().repeats

    import skrf  # a test dependency, imported here so its import time is not charged to any timing

    with tempfile.TemporaryDirectory(prefix="earshot-bench-") as folder:
        directory = Path(folder)
        touchstone_path = directory / TOUCHSTONE_NAME
        write_four_port_file(touchstone_path, points=POINTS)
        design_path = directory / "tallow-creek-router.json"
        design_path.write_text(json.dumps(design_document(), indent=2), encoding="utf-8")
        from benchmarks.far_field import write_files  # imports this module: here, not at the top

        patterns = write_files(directory)
        with_patterns = design_document()
        with_patterns["measurements"] += [{"kind": "far-field", "file": path.name, "antenna": name}
                                          for path, (name, *_rest) in zip(patterns, ANTENNA_PLACES, strict=True)]
        patterns_path = directory / "tallow-creek-router-patterns.json"
        patterns_path.write_text(json.dumps(with_patterns, indent=2), encoding="utf-8")

        ours = read_touchstone(touchstone_path)
        theirs = skrf.Network(str(touchstone_path))
        if ours.s.shape != theirs.s.shape:
            raise SystemExit(f"the readers disagree on the shape: ours {ours.s.shape}, scikit-rf {theirs.s.shape}")
        # Both readers must produce the same numbers, or the timing compares different work.
        largest_difference = float(abs(ours.s - theirs.s).max())

        ours_s = best_of(repeats, lambda: read_touchstone(touchstone_path))
        theirs_s = best_of(repeats, lambda: skrf.Network(str(touchstone_path)))
        peak_bytes = parse_peak_memory_bytes(touchstone_path)
        size_bytes = touchstone_path.stat().st_size

        print(f"Touchstone file: {POINTS:,} frequencies x 4 ports, {size_bytes / 1e6:.1f} MB; "
              f"best of {repeats}; largest |S| difference between the readers {largest_difference:.1e}")
        parse_ratio = ours_s / theirs_s
        print_table([
            ("read", "seconds", "ratio", "target", "verdict"),
            ("scikit-rf Network(path)", f"{theirs_s:.3f}", "1.00", "", ""),
            ("rules.touchstone.read_touchstone", f"{ours_s:.3f}", f"{parse_ratio:.2f}",
             f"<= {PARSE_TARGET_RATIO:.2f}", verdict(parse_ratio, PARSE_TARGET_RATIO, strictly_below=False)),
        ])
        print(f"peak memory of our read (tracemalloc): {peak_bytes / 1e6:.1f} MB "
              f"({peak_bytes / size_bytes:.1f} x the file size)")
        print()

        check_arguments = ["check"]
        evaluate_arguments = ["evaluate", str(design_path), "--format", "json"]
        try:
            check_times, _ = process_times(repeats, check_arguments, check_succeeded)
            evaluate_times, evaluated_run = process_times(repeats, evaluate_arguments, evaluate_succeeded)
            small_times, _ = process_times(repeats, ["evaluate", str(SMALL_DESIGN), "--format", "json"],
                                           evaluate_succeeded)
            pattern_times, _ = process_times(repeats, ["evaluate", str(patterns_path), "--format", "json"],
                                             evaluate_succeeded)
        except RuntimeError as error:
            print(f"process timing skipped: {error}")
            return 1
        evaluated = json.loads(evaluated_run.stdout)
        check_median = statistics.median(check_times)
        evaluate_median = statistics.median(evaluate_times)
        process_ratio = evaluate_median / check_median
        small_median = statistics.median(small_times)
        print(f"Whole process, {repeats} runs each after one warm-up (median, best): design with "
              f"{len(design_document()['antennas'])} antennas and {len(SELECTED_BANDS)} bands gave "
              f"{len(evaluated['findings'])} findings {evaluated['summary']}")
        print_table([
            ("process", "median s", "best s", "ratio", "target", "verdict"),
            ("manage.py check", f"{check_median:.3f}", f"{min(check_times):.3f}", "1.00", "", ""),
            (f"manage.py evaluate {SMALL_DESIGN.name} (start-up)", f"{small_median:.3f}",
             f"{min(small_times):.3f}", f"{small_median / check_median:.2f}", "", ""),
            ("manage.py evaluate --format json", f"{evaluate_median:.3f}", f"{min(evaluate_times):.3f}",
             f"{process_ratio:.2f}", f"< {EVALUATE_TARGET_RATIO:.2f}",
             verdict(process_ratio, EVALUATE_TARGET_RATIO, strictly_below=True)),
            ("  the same with 8 far-field patterns", f"{statistics.median(pattern_times):.3f}",
             f"{min(pattern_times):.3f}", f"{statistics.median(pattern_times) / check_median:.2f}", "", ""),
        ])
    return 0


if __name__ == "__main__":
    sys.exit(main())
