"""Times the signed PDF record of a large design and prints its figures beside their targets.

The design is the engine benchmark's router (benchmarks/engine.py: one main and seven receive antennas
around a 300 x 200 x 50 mm enclosure, Cat 6 with eight receive ports) narrowed to the seven LTE bands a
North American build would carry, with a four-port Touchstone file of 20,001 frequencies (a long VNA
sweep; --points changes it) measuring four of the antennas. That gives at least 40 findings and three
measurement charts. With --all-bands the router keeps the engine benchmark's twenty bands: two and a half
times the findings, for seeing how the record grows.

The whole product life runs through the services, as the app runs it: a team with an author, a reviewer
and an approver, a product, the measurement upload, the design import, submission, and a disposition on
every blocker and warning (the approver waives each with a justification). Then:

- the three signatures (`revision_sign`, timed once; it includes three password checks with Argon2, the
  first of PASSWORD_HASHERS, and a PDF build at every signature: the first two check that the record
  builds before the signature is accepted, the last one is archived);
- `build_record_pdf(revision, fingerprint=record_fingerprint(revision))` on the signed revision, one
  untimed first build (imports, fonts) and then best and median of --repeats runs.

Targets: the record builds in under 1 s (wall clock and CPU time of this process) and is under 1 MB
(1,000,000 bytes), fonts embedded. With --profile, or when the
time target is missed, cProfile's top costs of one build are printed.

Everything lives in a temporary folder (EARSHOT_VAR_DIR, set before Django starts, with a fresh SQLite
database), so the developer's database and files are never touched.

Run from the repository root: `.venv/bin/python benchmarks/pdf_record.py [--repeats N] [--points N]
[--all-bands] [--profile]`. This script prints figures; it asserts nothing.
"""

import argparse
import cProfile
import hashlib
import io
import json
import os
import pstats
import statistics
import sys
import tempfile
import time
from collections import Counter
from collections.abc import Callable
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO_ROOT))  # run as a script, `benchmarks` and `projectapp` import from the root

from benchmarks.engine import SELECTED_BANDS, TOUCHSTONE_NAME, design_document, print_table  # noqa: E402
from benchmarks.touchstone_data import write_four_port_file  # noqa: E402
from rules.catalog import bands  # noqa: E402

POINTS = 20_001
TIME_TARGET_S = 1.0
SIZE_TARGET_BYTES = 1_000_000  # 1 MB, decimal like the upload limit in designs.services
CHARTS_PER_FILE = 3  # return loss, isolation, envelope correlation
PASSWORD = "bench-pass-4Vw!"
# The LTE bands of a North American build, all inside the router's rated ranges and in the catalog.
REGIONAL_BANDS = ["B2", "B4", "B5", "B12", "B13", "B14", "B66"]
# Django settings that could point the benchmark at real data: cleared so the defaults under the
# temporary EARSHOT_VAR_DIR apply (SQLite, files on disk, in-memory cache).
ENVIRONMENT_TO_CLEAR = ("DATABASE_URL", "DATABASE_URL_FILE", "EARSHOT_MEDIA_ROOT", "EARSHOT_MEDIA_ROOT_FILE",
                        "EARSHOT_STATIC_ROOT", "EARSHOT_STATIC_ROOT_FILE", "EARSHOT_FILE_STORAGE",
                        "EARSHOT_FILE_STORAGE_FILE", "EARSHOT_FILE_STORAGE_OPTIONS",
                        "EARSHOT_FILE_STORAGE_OPTIONS_FILE", "EARSHOT_VAR_DIR_FILE")


def narrowed_document(band_names: list[str]) -> dict:
    """The engine benchmark's design with only `band_names` selected (and their per-band entries)."""
    document = design_document()
    document["modem"]["bands"] = list(band_names)
    document["modem"]["gain_limits_dbi"] = {band: 5.0 for band in band_names}
    for index, antenna in enumerate(document["antennas"]):
        # The engine design's efficiency figures: lower below 1 GHz, one point less per antenna.
        antenna["efficiency_pct"] = {band: (35 if bands()[band].lowest_mhz < 1000 else 55) - index
                                     for band in band_names}
    return document


def start_django(var_dir: Path) -> None:
    os.environ["DJANGO_SETTINGS_MODULE"] = "projectapp.settings"
    os.environ["EARSHOT_VAR_DIR"] = str(var_dir)
    os.environ["EARSHOT_ENV"] = "development"
    os.environ["EARSHOT_CACHE"] = "memory"
    for name in ENVIRONMENT_TO_CLEAR:
        os.environ.pop(name, None)
    import django

    django.setup()
    from django.conf import settings

    database = settings.DATABASES["default"]
    if database["ENGINE"] != "django.db.backends.sqlite3" or var_dir not in Path(database["NAME"]).parents \
            or var_dir not in Path(settings.MEDIA_ROOT).parents \
            or settings.STORAGES["default"]["BACKEND"] != "django.core.files.storage.FileSystemStorage":
        raise SystemExit(f"refusing to run: the database or the uploaded files would not be under {var_dir}")
    from django.core.management import call_command

    call_command("migrate", verbosity=0)


def timed(action: Callable[[], object]) -> tuple[float, object]:
    started = time.perf_counter()
    result = action()
    return time.perf_counter() - started, result


def justification_for(item) -> str:
    subjects = item.subjects_key.replace("|", ", ")
    return (f"Pilot build of 20 units for field trials: accepted for {subjects or 'the design'}; "
            f"{item.rule_id} is to be cleared by measurement before the production build.")


def build_scenario(*, directory: Path, points: int, band_names: list[str]):
    """Team, people, product, measurement, design, submission and dispositions: the submitted revision."""
    from django.contrib.auth import get_user_model

    from projectapp.designs import services as designs
    from projectapp.reviews.models import ReviewItem
    from projectapp.reviews.services import review_item_decide, revision_submit
    from projectapp.teams.models import Membership, Role, Team

    team = Team.objects.create(name="Tallow Creek Instruments")
    people = {}
    for role in (Role.AUTHOR, Role.REVIEWER, Role.APPROVER):
        user = get_user_model().objects.create_user(username=f"{role.value}-tallow", password=PASSWORD)
        Membership.objects.create(team=team, user=user, role=role)
        people[role.value] = user
    author, approver = people["author"], people["approver"]

    product = designs.product_create(team=team, name="Tallow Creek Instruments field router", user=author)
    touchstone_path = directory / TOUCHSTONE_NAME
    write_four_port_file(touchstone_path, points=points)
    content = touchstone_path.read_bytes()
    designs.measurement_add(revision=product.draft, name=TOUCHSTONE_NAME, content=content, user=author)
    document = narrowed_document(band_names)
    designs.design_import(product=product, text=json.dumps(document, indent=2), source="field-router.json",
                          user=author)
    revision = revision_submit(revision=product.draft, user=author)

    for item in revision.review_items.filter(kind=ReviewItem.Kind.RAISED, severity__in=["blocker", "warning"]):
        review_item_decide(item=item, user=approver, disposition="waived", justification=justification_for(item),
                           expected_version=item.version)
    return revision, people, len(content)


def sign_flow(revision, people) -> float:
    from django.test import RequestFactory

    from projectapp.signoff.services import revision_sign

    started = time.perf_counter()
    for role in ("author", "reviewer", "approver"):
        revision_sign(revision=revision, user=people[role], role=role, password=PASSWORD,
                      request=RequestFactory().post("/"))
    return time.perf_counter() - started


def chart_count(revision) -> int:
    """Drawings the record places: the three chart builders on every measurement file that loads."""
    from projectapp.designs.checklists import measurement_reader
    from projectapp.figures.charts import correlation_chart, isolation_chart, return_loss_chart
    from projectapp.signoff.pdf import FRAME_WIDTH
    from rules.design import parse_design
    from rules.measurements import attach_measurements

    design = parse_design(revision.document)
    count = 0
    for measurement in attach_measurements(design, measurement_reader(revision)):
        for build in (return_loss_chart, isolation_chart, correlation_chart):
            count += build(measurement, design, width_pt=FRAME_WIDTH, height_pt=200) is not None
    return count


def page_count(pdf: bytes) -> str:
    try:
        from pypdf import PdfReader
    except ImportError:
        return "pypdf not installed"
    return str(len(PdfReader(io.BytesIO(pdf)).pages))


# Parts of one build worth seeing on their own: (file name ending, function name, label).
PROFILED_PARTS = (
    ("signoff/services.py", "record_fingerprint", "record_fingerprint()"),
    ("figures/placement.py", "placement_drawing", "placement drawing"),
    ("figures/placement.py", "place", "  of which _Placer.place"),
    ("signoff/pdf.py", "_measurement_charts", "measurement charts section"),
    ("signoff/pdf.py", "_coverage", "coverage section"),
    ("rules/measurements.py", "attach_measurements", "  Touchstone read and parse (attach_measurements)"),
    ("platypus/doctemplate.py", "build", "reportlab layout and PDF writing (doc.build)"),
)


def print_profile(action: Callable[[], object], *, limit: int = 15) -> None:
    profiler = cProfile.Profile()
    profiler.enable()
    action()
    profiler.disable()
    stats = pstats.Stats(profiler)
    entries = stats.stats  # type: ignore[attr-defined]  # {(file, line, function): (cc, nc, tt, ct, callers)}
    total = max(cumulative for _, _, _, cumulative, _ in entries.values())
    rows = [("part of one build (cProfile)", "calls", "seconds", "share")]
    for suffix, function, label in PROFILED_PARTS:
        found = [(calls, cumulative) for (file, _, name), (_, calls, _, cumulative, _) in entries.items()
                 if name == function and file.replace(os.sep, "/").endswith(suffix)]
        if found:
            calls, cumulative = max(found, key=lambda pair: pair[1])
            rows.append((label, f"{calls:,}", f"{cumulative:.3f}", f"{cumulative / total:.0%}"))
    rows.append(("whole build under the profiler", "1", f"{total:.3f}", "100%"))
    print_table(rows)
    print()
    for order in ("cumulative", "tottime"):
        stream = io.StringIO()
        pstats.Stats(profiler, stream=stream).sort_stats(order).print_stats(limit)
        lines = stream.getvalue().splitlines()
        start = next(index for index, line in enumerate(lines) if line.lstrip().startswith("ncalls"))
        print(f"cProfile of one build, top {limit} by {order} (seconds include the profiler's overhead):")
        print("\n".join(line.replace(str(REPO_ROOT) + os.sep, "") for line in lines[start:] if line.strip()))
        print()


def accelerated() -> str:
    try:
        import _rl_accel  # noqa: F401 (reportlab uses it when it can import it)
    except ImportError:
        return "not installed, pure-Python fallbacks"
    return "installed"


def verdict(value: float, target: float) -> str:
    return "met" if value < target else "NOT met"


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--repeats", type=int, default=5, help="timed builds of the PDF (default 5)")
    parser.add_argument("--points", type=int, default=POINTS,
                        help=f"frequencies in the 4-port Touchstone file (default {POINTS:,})")
    parser.add_argument("--all-bands", action="store_true",
                        help="keep the engine benchmark's twenty bands instead of the seven regional ones")
    parser.add_argument("--profile", action="store_true", help="print cProfile's top costs of one build")
    arguments = parser.parse_args()
    band_names = SELECTED_BANDS if arguments.all_bands else REGIONAL_BANDS

    with tempfile.TemporaryDirectory(prefix="earshot-pdf-bench-") as folder:
        directory = Path(folder)
        start_django(directory / "var")
        try:
            return run(directory, arguments, band_names)
        finally:
            from django.db import connections

            connections.close_all()


def run(directory: Path, arguments: argparse.Namespace, band_names: list[str]) -> int:
    from projectapp.designs.models import Revision
    from projectapp.reviews.models import ReviewItem
    from projectapp.signoff.models import SignedRecord
    from projectapp.signoff.pdf import build_record_pdf
    from projectapp.signoff.services import readiness, record_fingerprint

    setup_s, (revision, people, touchstone_bytes) = timed(
        lambda: build_scenario(directory=directory, points=arguments.points, band_names=band_names))
    state = readiness(revision)
    if not state.ready:
        print("the revision can't be signed:\n  " + "\n  ".join(state.obstacles))
        return 1
    hash_s, _ = timed(lambda: people["author"].check_password(PASSWORD))
    sign_s = sign_flow(revision, people)
    archived = SignedRecord.objects.get(revision=revision)

    def fresh() -> Revision:  # as record_archive sees it: nothing cached from earlier builds
        return Revision.objects.select_related("product__team").get(pk=revision.pk)

    def build() -> bytes:
        signed = fresh()
        return build_record_pdf(signed, fingerprint=record_fingerprint(signed))

    first_s, pdf = timed(build)
    times, cpu_times = [], []
    for _ in range(arguments.repeats):
        cpu_started = time.process_time()
        elapsed, pdf = timed(build)
        cpu_times.append(time.process_time() - cpu_started)
        times.append(elapsed)
    best_s, median_s = min(times), statistics.median(times)

    evaluation = fresh().evaluation
    findings = evaluation["findings"]
    summary = evaluation["summary"]
    raised = fresh().review_items.filter(kind=ReviewItem.Kind.RAISED)
    dispositions = Counter(raised.values_list("disposition", flat=True))
    charts = chart_count(fresh())
    size = len(pdf)
    same_as_archive = hashlib.sha256(pdf).hexdigest() == archived.sha256

    design = fresh().document
    measured = ", ".join(port for port in design["measurements"][0]["ports"] if port)
    print(f"Design: {len(design['antennas'])} antennas (1 main, {len(design['antennas']) - 1} receive), "
          f"{len(band_names)} LTE bands ({', '.join(band_names)}), Cat 6 with 8 receive ports.")
    print(f"Measurement: {TOUCHSTONE_NAME}, 4 ports ({measured}), {arguments.points:,} frequencies, "
          f"{touchstone_bytes / 1e6:.1f} MB.")
    print(f"Review: {len(findings)} findings ({summary['blocker']} blockers, {summary['warning']} warnings, "
          f"{summary['note']} notes); dispositions: "
          + ", ".join(f"{count} {name}" for name, count in sorted(dispositions.items()))
          + f". Set-up through the services took {setup_s:.1f} s.")
    print(f"Machine: {os.cpu_count()} CPUs, load average {os.getloadavg()[0]:.1f} (1 min) after the runs; "
          f"reportlab C accelerator (rl_accel): {accelerated()}.")
    print(f"PDF: identical to the archived record (SHA-256): {'yes' if same_as_archive else 'NO'}; "
          f"first build in this process (imports, fonts) {first_s:.3f} s, not counted below.")
    print()
    print_table([
        ("figure", "value", "target", "verdict"),
        ("findings in the record", f"{len(findings)}", ">= 40", "met" if len(findings) >= 40 else "NOT met"),
        ("measurement charts", f"{charts} ({CHARTS_PER_FILE} per file)", "", ""),
        ("pages", page_count(pdf), "", ""),
        ("PDF size", f"{size:,} bytes ({size / 1000:.1f} kB)", "< 1 MB", verdict(size, SIZE_TARGET_BYTES)),
        (f"build time, best of {arguments.repeats}", f"{best_s:.3f} s", "< 1 s", verdict(best_s, TIME_TARGET_S)),
        (f"build time, median of {arguments.repeats}", f"{median_s:.3f} s", "< 1 s",
         verdict(median_s, TIME_TARGET_S)),
        (f"build CPU time of this process, median of {arguments.repeats}",
         f"{statistics.median(cpu_times):.3f} s", "< 1 s", verdict(statistics.median(cpu_times), TIME_TARGET_S)),
        (f"build CPU time of this process, best of {arguments.repeats}", f"{min(cpu_times):.3f} s", "", ""),
        ("sign flow, 3 x revision_sign (once)", f"{sign_s:.3f} s", "", ""),
        ("  of which each of its 3 password checks", f"{hash_s:.3f} s", "", ""),
    ])
    print()
    print("\n".join([
        "Build time: wall clock (time.perf_counter) of record_fingerprint() and build_record_pdf(), which reads",
        "and parses the Touchstone file for the charts; CPU time (time.process_time) is less affected by other",
        "load on the machine. The sign flow includes three password checks (Argon2), three PDF builds (one per",
        "signature), storing the last PDF and the audit rows.",
    ]))
    if arguments.profile or median_s >= TIME_TARGET_S:
        print()
        print_profile(build)
    return 0


if __name__ == "__main__":
    sys.exit(main())
