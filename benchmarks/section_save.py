"""Times a questionnaire section save of a design with eight antennas, as the server answers it, and prints the
figures beside the target.

The design is the engine benchmark's router (benchmarks/engine.py: one main and seven receive antennas around
a 300 x 200 x 50 mm enclosure, Cat 6 with eight receive ports) narrowed to the seven LTE bands a North American
build carries, as in benchmarks/pdf_record.py; --all-bands keeps the engine benchmark's twenty. Each save is
what htmx sends when a person changes an answer and leaves the field: the antenna section with every input,
one antenna's feed point moved by a millimetre (so every save is a new state of the draft and nothing comes
from the cache: the checklist, the placement drawing and the band table are computed afresh), answered with
the messages, the version and the panel (`answer=messages`). Three more kinds are timed the same way:

- `partial`: the same save while another antenna's position holds a typo, so the checklist is the partial one
  (rules.evaluate.evaluate_partial) with its to-do list;
- `section`: a row action's answer (the whole section redrawn, `answer=section`), here a duplicate and its
  removal in turn;
- `deployment`: a small section's save (the closest distance changes), which still redraws the panel.

A save's answer carries the checklist and the band table; the page then fetches the drawing, charts and
coverage of the new state with one more request (`draft_edit?part=figures`), so the checklist never waits for
the drawing. That request is timed too (`figures after the save`: a fresh state each time, nothing cached).

The time is measured around Django's test client in this process (no network, no gunicorn): the server's
work from the request to the response, in CPU time of this process (what a request costs a server core) and
in wall time (which on a shared machine also counts the time spent waiting for a core: the load average is
printed), after --warmup untimed saves. Target: p95 under 50 ms of server (CPU) time for the eight-antenna
save. The page stays usable while saves are in flight: an answer never redraws the inputs
(tests/browser/test_questionnaire_flow.py types on during slow saves).

Everything lives in a temporary folder (EARSHOT_VAR_DIR with a fresh SQLite database, an in-memory cache), so
the developer's database and files are never touched.

Run from the repository root: `.venv/bin/python benchmarks/section_save.py [--saves N] [--all-bands]
[--profile]`. It prints figures and asserts nothing.
"""

import argparse
import cProfile
import os
import pstats
import statistics
import sys
import tempfile
import time
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO_ROOT))

from benchmarks.engine import SELECTED_BANDS, design_document, print_table  # noqa: E402
from benchmarks.pdf_record import REGIONAL_BANDS, narrowed_document, start_django  # noqa: E402

P95_TARGET_MS = 50.0
PASSWORD = "bench-pass-8Qe!"


def page_form(document: dict) -> dict:
    """The antenna section's inputs as the page shows them, as a browser posts them (tests/web use it too)."""
    from projectapp.designs import questionnaire

    data: dict = {}
    for row in questionnaire.section_fields(questionnaire.ANTENNAS, document, []):
        for item in row:
            kind = item.question.kind
            if kind == "choice":
                data[item.name] = next((value for value, _, selected in item.options if selected), "")
            elif kind in ("vector", "band_numbers"):
                data.update({name: value for _, name, value in item.parts})
            elif kind == "polarization":
                data[item.name + ".words"] = item.described.words
                data[item.name + ".angle_deg"] = str(item.described.angle_deg or 0)
                data.update({name: value for _, name, value in item.parts})
            elif kind != "bool":
                data[item.name] = item.value
    return data


def percentile(values: list[float], share: float) -> float:
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, round(share * (len(ordered) - 1)))]


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--saves", type=int, default=60, help="timed saves of each kind (default 60)")
    parser.add_argument("--warmup", type=int, default=5, help="untimed saves first (default 5)")
    parser.add_argument("--all-bands", action="store_true", help="the engine benchmark's twenty bands")
    parser.add_argument("--profile", action="store_true", help="print cProfile's top costs of the 8-antenna save")
    options = parser.parse_args()

    with tempfile.TemporaryDirectory(prefix="earshot-bench-") as folder:
        start_django(Path(folder))
        import json

        from django.contrib.auth import get_user_model
        from django.test import Client
        from django.urls import reverse

        from projectapp.designs import services
        from projectapp.designs.models import Product
        from projectapp.teams.models import Membership, Role, Team

        team = Team.objects.create(name="Tallow Creek Instruments")
        author = get_user_model().objects.create_user(username="maren", password=PASSWORD)
        Membership.objects.create(team=team, user=author, role=Role.AUTHOR)
        product = services.product_create(team=team, name="Tallow Creek Instruments field router", user=author)
        document = design_document() if options.all_bands else narrowed_document(REGIONAL_BANDS)
        document.pop("measurements", None)  # the questionnaire's work, not a Touchstone file's
        services.design_import(product=product, text=json.dumps(document), source="router.json", user=author)
        client = Client()
        client.force_login(author)
        htmx = {"HTTP_HX_REQUEST": "true"}

        def draft():
            return Product.objects.get(pk=product.pk).draft

        def save(section: str, data: dict, answer: str) -> int:
            if section == "figures":
                response = client.get(reverse("draft_edit", args=[product.pk]) + "?part=figures", **htmx)
            else:
                response = client.post(reverse("draft_section_save", args=[product.pk, section]),
                                       {**data, "version": draft().version, "answer": answer}, **htmx)
            if response.status_code != 200:
                raise SystemExit(f"a request answered {response.status_code}: {response.content[:300]!r}")
            return len(response.content)

        step = {"n": 0}

        def move_one(typo: bool) -> tuple[str, dict, str]:
            step["n"] += 1  # a new position every time: a new state of the draft, nothing from the cache
            data = page_form(draft().document)
            data["antennas[3].position_mm[0]"] = str(100 + step["n"] / 10)
            if typo:
                data["antennas[5].position_mm[1]"] = "1O"
            return "antennas", data, "messages"

        def duplicate_or_remove() -> tuple[str, dict, str]:
            data = page_form(draft().document)
            rows = len(draft().document["antennas"])
            data["action"] = "duplicate:0" if rows == 8 else f"remove:{rows - 1}" if rows > 8 else "add"
            return "antennas", data, "section"

        def distance() -> tuple[str, dict, str]:
            step["n"] += 1
            return "deployment", {"deployment.environment": "indoor",
                                  "deployment.body_distance_mm": str(300 + step["n"] / 10)}, "messages"

        def figures_after_a_save() -> tuple[str, dict, str]:
            save(*move_one(False))  # untimed: the save whose figures the page then fetches
            return "figures", {}, ""

        kinds = {
            "8 antennas, one moved": lambda: move_one(False),
            "partial (a typo elsewhere)": lambda: move_one(True),
            "section redrawn (duplicate)": duplicate_or_remove,
            "deployment": distance,
            "figures after the save": figures_after_a_save,
        }
        rows = [("request", "runs", "CPU p50 ms", "CPU p95 ms", "CPU max ms", "wall p50 ms", "wall p95 ms",
                 "answer kB", "target")]
        figures = {}
        for name, make in kinds.items():
            for _ in range(options.warmup):
                save(*make())
            walls, cpus, sizes = [], [], []
            for _ in range(options.saves):
                section, data, answer = make()
                wall, cpu = time.perf_counter(), time.process_time()
                sizes.append(save(section, data, answer))
                walls.append((time.perf_counter() - wall) * 1000)
                cpus.append((time.process_time() - cpu) * 1000)
            figures[name] = cpus
            p95 = percentile(cpus, 0.95)
            target = (f"CPU p95 < {P95_TARGET_MS:g} ms: {'met' if p95 < P95_TARGET_MS else 'NOT met'}"
                      if name == "8 antennas, one moved" else "")
            rows.append((name, str(len(cpus)), f"{statistics.median(cpus):.1f}", f"{p95:.1f}", f"{max(cpus):.1f}",
                         f"{statistics.median(walls):.1f}", f"{percentile(walls, 0.95):.1f}",
                         f"{statistics.median(sizes) / 1000:.0f}", target))
        bands = SELECTED_BANDS if options.all_bands else REGIONAL_BANDS
        print(f"Section saves of a design with 8 antennas and {len(bands)} bands "
              f"(server time in this process, Django test client, SQLite, in-memory cache):")
        print_table(rows)
        load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
        print(f"load average over the last minute: {load:.2f} on {os.cpu_count()} cores (wall time includes the "
              "wait for a core)")
        if options.profile:
            profiler = cProfile.Profile()
            profiler.enable()
            for _ in range(20):
                save(*move_one(False))
            profiler.disable()
            pstats.Stats(profiler).sort_stats("cumulative").print_stats(r"projectapp|rules|template/base|loader_tags", 40)
    return 0


if __name__ == "__main__":
    os.environ.setdefault("PYTHONHASHSEED", "0")
    raise SystemExit(main())
