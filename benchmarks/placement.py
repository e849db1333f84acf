"""Times the placement drawing as the antenna count grows and prints the figures beside the target.

Each design is a Cat 6 router in a 400 x 300 x 60 mm enclosure: one main antenna and N - 1 receive
antennas on a jittered grid at two heights, field axes turning from one antenna to the next, so that
many pairs sit inside a quarter wave of each other and draw separation findings (the worst case for the
drawing: every pair a line, the close ones coloured). For each N the script evaluates the design once
(untimed), then times what a page pays for the drawing on the server: `placement_drawing` (layout and
label placement) and `placement_svg` (the same plus the SVG text), best and median of --repeats runs, in
CPU time of this process (what a request costs the server) and in wall time (which on a shared machine
also counts the time spent waiting for a core).

Target: the SVG of a 32-antenna design (the parser's cap, rules.design.MAX_ANTENNAS) in under 100 ms of
server (CPU) time, median. A last row draws the same 32 antennas with four of them GNSS and WLAN antennas and a
coexistence finding for every cellular antenna and each of them (112, of which the drawing shows the worst
MAX_COEXISTENCE_LINES as dashed lines): the target holds for it too.

Run from the repository root: `.venv/bin/python benchmarks/placement.py [--repeats N] [--counts 8,16,32]`.
This script prints figures; it asserts nothing.
"""

import argparse
import math
import statistics
import sys
import time
from collections.abc import Callable
from functools import partial
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO_ROOT))  # run as a script, `benchmarks` and `projectapp` import from the root

from benchmarks.engine import print_table  # noqa: E402
from projectapp.figures.placement import (  # noqa: E402
    coexistence_lines_from_findings,
    pair_severities_from_findings,
    placement_drawing,
    placement_svg,
)
from rules.design import parse_design  # noqa: E402
from rules.evaluate import evaluate  # noqa: E402

TARGET_COUNT = 32
TARGET_S = 0.100
COUNTS = (2, 8, 16, 20, 32)
AXES = ([1, 0, 0], [0, 1, 0], [0, 0, 1], [1, 1, 0], [1, -1, 0])


def router_document(count: int) -> dict:
    """A Cat 6 design with `count` antennas spread over the enclosure (deterministic)."""
    columns = max(1, math.ceil(math.sqrt(count * 4 / 3)))
    rows = math.ceil(count / columns)
    antennas = []
    for index in range(count):
        row, column = divmod(index, columns)
        jitter = ((index * 37) % 11 - 5) * 1.5  # a few mm, so no two pairs are exactly alike
        antennas.append({
            "name": "MAIN" if index == 0 else f"RX{index}",
            "role": "main" if index == 0 else "receive",
            "position_mm": [20 + column * 360 / max(1, columns - 1 or 1) + jitter,
                            20 + row * 260 / max(1, rows - 1 or 1) - jitter,
                            15 if index % 2 else 45],
            "polarization": AXES[index % len(AXES)],
            "ranges_mhz": [[698, 960], [1710, 2690]],
        })
    return {
        "format": "earshot-design/1",
        "product": {"name": "Tallow Creek field router", "revision": f"N{count}"},
        "modem": {"category": "cat-6", "bands": ["B2", "B4", "B12", "B13", "B66"], "rx_ports": 8},
        "enclosure": {"size_mm": [400, 300, 60], "material": "plastic"},
        "ground_plane_mm": [380, 280],
        "antennas": antennas,
    }


def with_radios(document: dict) -> tuple[dict, list[dict]]:
    """The design with its last four antennas made two GNSS and two WLAN antennas, and a coexistence finding
    (in the rules' shape: cellular antenna, victim antenna, band) for every cellular antenna and each of them."""
    antennas = document["antennas"]
    for index, antenna in enumerate(antennas[-4:]):
        antenna["role"] = "gnss" if index < 2 else "wlan"
        antenna["ranges_mhz"] = [[1559, 1610]] if index < 2 else [[2400, 2500]]
    victims = antennas[-4:]
    findings = [{"id": "COX-001", "topic": "coexistence", "severity": "warning" if (i + j) % 3 else "note",
                 "subjects": [cellular["name"], victim["name"], "B13"],
                 "evidence": {"band": "B13", "victim": "GNSS L1/E1" if victim["role"] == "gnss" else "WLAN 2.4 GHz"}}
                for i, cellular in enumerate(antennas[:-4]) for j, victim in enumerate(victims)]
    return document, findings


def timed(function: Callable[[], object], repeats: int) -> tuple[float, float, float]:
    """(best CPU, median CPU, median wall) seconds."""
    cpu, wall = [], []
    for _ in range(repeats):
        started_cpu, started_wall = time.process_time(), time.perf_counter()
        function()
        cpu.append(time.process_time() - started_cpu)
        wall.append(time.perf_counter() - started_wall)
    return min(cpu), statistics.median(cpu), statistics.median(wall)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--repeats", type=int, default=5, help="timed runs of each measurement (default 5)")
    parser.add_argument("--counts", default=",".join(str(count) for count in COUNTS),
                        help="antenna counts to draw, comma-separated (default %(default)s)")
    options = parser.parse_args()
    counts = [int(count) for count in options.counts.split(",")]

    rows = [("antennas", "cellular pairs", "coloured pairs", "drawing CPU ms", "svg CPU best ms", "svg CPU median ms",
             "svg wall median ms", "svg kB")]
    target_medians = []
    cases = [(str(count), router_document(count), []) for count in counts]
    if TARGET_COUNT in counts:
        cases.append((f"{TARGET_COUNT}, 4 GNSS/WLAN", *with_radios(router_document(TARGET_COUNT))))
    for label, document, extra_findings in cases:
        design = parse_design(document)
        findings = [finding.as_dict() for finding in evaluate(design).findings] + extra_findings
        severities = pair_severities_from_findings(findings)
        coexistence = coexistence_lines_from_findings(findings, design)
        options_ = {"pair_severities": severities, "frequency_mhz": design.lowest_mhz, "coexistence": coexistence}
        drawing = partial(placement_drawing, design, **options_)
        svg = partial(placement_svg, design, **options_)
        svg()  # warm up: fonts, imports
        _, drawing_median, _ = timed(drawing, options.repeats)
        svg_best, svg_median, svg_wall = timed(svg, options.repeats)
        size_kb = len(svg().encode()) / 1000
        count = len(design.antennas)
        if count == TARGET_COUNT:
            target_medians.append((label, svg_median))
        cellular = sum(antenna.is_cellular for antenna in design.antennas)
        rows.append((label, str(cellular * (cellular - 1) // 2), str(len(severities)),
                     f"{drawing_median * 1000:.1f}", f"{svg_best * 1000:.1f}", f"{svg_median * 1000:.1f}",
                     f"{svg_wall * 1000:.1f}", f"{size_kb:.0f}"))
    print_table(rows)
    print()
    if not target_medians:
        print(f"target: the SVG of {TARGET_COUNT} antennas in under {TARGET_S * 1000:.0f} ms "
              f"(not measured: add {TARGET_COUNT} to --counts)")
    for label, target_median in target_medians:
        verdict = "met" if target_median < TARGET_S else "NOT met"
        print(f"target: the SVG of {label} antennas in under {TARGET_S * 1000:.0f} ms of server time (CPU, "
              f"median): {target_median * 1000:.1f} ms — {verdict}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
