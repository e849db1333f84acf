"""Times the lists a team opens all day, on a large generated team, with an empty cache, and prints the figures.

The team: 2,000 products, 10,000 revisions (five per product, in every state of the life cycle: superseded and
signed revisions with their records and signatures, withdrawn ones, revisions in review and being signed,
drafts) and 100,000 review items, made with bulk_create in a fresh database. Their designs and checklists are
the shipped examples', evaluated once by the engine; every revision stores the counts of its checklist. On
PostgreSQL the new rows are then ANALYZEd, as autovacuum does for a live database (a bulk load leaves the
planner without statistics, which no running team's database is).

Then, in this process (Django's test client, signed in as the reviewer), each list is asked for with the cache
emptied before every request (Django's cache and the page copies kept in memory): the product list, the review
dashboard and the archive, each plainly, filtered and at a deep page. Each URL is asked for once untimed (the
first request of a process compiles templates), then --repeats times; the median and the worst are printed
beside the target: under 200 ms each, on SQLite and on PostgreSQL.

Run from the repository root: `.venv/bin/python benchmarks/lists.py` (SQLite in a temporary folder), or with
`DATABASE_URL=$(scripts/postgres.sh start) .venv/bin/python benchmarks/lists.py` (a database of its own is
created on that server beside the one named, and dropped at the end; `scripts/postgres.sh stop` afterwards).
It prints figures and asserts nothing.
"""

import argparse
import hashlib
import json
import os
import statistics
import sys
import tempfile
import time
import urllib.parse
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO_ROOT))  # run as a script, `benchmarks` and `projectapp` import from the root

from benchmarks.engine import print_table  # noqa: E402

PRODUCTS = 2_000
REVISIONS_PER_PRODUCT = 5  # 10,000 revisions
REVIEW_ITEMS = 100_000
TARGET_MS = 200.0
EXAMPLES = ("orchard-probe.json", "hive-gateway.json", "pump-monitor.json")
KINDS = ("soil probe", "hive gateway", "pump monitor", "field router", "cold-chain tracker", "level sensor")
# Each product's five revisions, oldest first: one life per pattern (the life cycle's table, designs/lifecycle.py).
LIVES = (
    ("superseded", "signed", "withdrawn", "in-review", "draft"),
    ("superseded", "superseded", "signed", "withdrawn", "in-review"),
    ("withdrawn", "withdrawn", "superseded", "signed", "draft"),
    ("superseded", "withdrawn", "signed", "signing", "in-review"),
    ("superseded", "superseded", "superseded", "superseded", "signed"),
)
BATCH = 2_000
ENVIRONMENT_TO_CLEAR = ("EARSHOT_MEDIA_ROOT", "EARSHOT_STATIC_ROOT", "EARSHOT_FILE_STORAGE", "SECRET_KEY_FILE")


def start_django(var_dir: Path, database_url: str | None) -> None:
    os.environ.update({"DJANGO_SETTINGS_MODULE": "projectapp.settings", "EARSHOT_VAR_DIR": str(var_dir),
                       "EARSHOT_ENV": "development", "EARSHOT_DEBUG": "0", "EARSHOT_CACHE": "memory"})
    for name in ENVIRONMENT_TO_CLEAR:
        os.environ.pop(name, None)
    if database_url:
        os.environ["DATABASE_URL"] = database_url
    else:
        os.environ.pop("DATABASE_URL", None)
    import django

    django.setup()
    from django.core.management import call_command

    call_command("migrate", verbosity=0)


def bench_database(url: str) -> tuple[str, str]:
    """A fresh database beside the one `url` names (same server): (its URL, its name)."""
    import psycopg

    parts = urllib.parse.urlsplit(url)
    name = f"earshot_lists_bench_{os.getpid()}"
    with psycopg.connect(url, autocommit=True) as connection:
        connection.execute(f'CREATE DATABASE "{name}"')
    return urllib.parse.urlunsplit(parts._replace(path=f"/{name}")), name


def drop_database(url: str, name: str) -> None:
    import psycopg

    with psycopg.connect(url, autocommit=True) as connection:
        connection.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


def checklists_of_the_examples() -> list[tuple[dict, dict]]:
    from rules.design import parse_design
    from rules.evaluate import evaluate

    found = []
    for name in EXAMPLES:
        document = json.loads((REPO_ROOT / "rules" / "examples" / name).read_text())
        found.append((document, evaluate(parse_design(document)).as_dict()))
    return found


def generate() -> dict:
    """The team, made in bulk. Returns the counts of what was made and the time it took."""
    from django.contrib.auth import get_user_model
    from django.db import transaction

    from projectapp.designs.checklists import counts_of
    from projectapp.designs.models import Product, Revision
    from projectapp.reviews.models import Disposition, ReviewItem
    from projectapp.reviews.services import review_tallies_refresh
    from projectapp.signoff.models import MEANINGS, Signature, SignedRecord, Supersession
    from projectapp.teams.models import Membership, Role, Team

    began = time.perf_counter()
    examples = checklists_of_the_examples()
    User = get_user_model()
    with transaction.atomic():
        team = Team.objects.create(name="Tallow Creek Instruments")
        other = Team.objects.create(name="Larchmere Metering")
        people = {}
        for username, role in (("maren", Role.AUTHOR), ("tobias", Role.REVIEWER), ("ines", Role.APPROVER)):
            people[role] = User.objects.create_user(username=username, password=None)
            Membership.objects.create(team=team, user=people[role], role=role)
        outsider = User.objects.create_user(username="oskar", password=None)
        Membership.objects.create(team=other, user=outsider, role=Role.AUTHOR)
        products = Product.objects.bulk_create(
            [Product(team=team, name=f"{KINDS[index % len(KINDS)].capitalize()} {index:04d}",
                     description=f"Invented product {index} of the benchmark team", created_by=people[Role.AUTHOR])
             for index in range(PRODUCTS)]
            + [Product(team=other, name=f"Water meter {index:02d}", created_by=outsider) for index in range(20)],
            batch_size=BATCH)
        revisions = []
        for index, product in enumerate(products[:PRODUCTS]):
            life = LIVES[index % len(LIVES)]
            for number, state in enumerate(life, start=1):
                document, checklist = examples[(index + number) % len(examples)]
                submitted = state != "draft"
                revisions.append(Revision(
                    product=product, number=number, state=state, document=document,
                    evaluation=checklist if submitted else None, ruleset=checklist["ruleset"], version=3,
                    created_by=people[Role.AUTHOR], submitted_by=people[Role.AUTHOR] if submitted else None,
                    **counts_of(checklist)))
        Revision.objects.bulk_create(revisions, batch_size=BATCH)
        by_product: dict[int, list] = {}
        for revision in revisions:
            by_product.setdefault(revision.product_id, []).append(revision)
        for product in products[:PRODUCTS]:
            product.latest_revision = by_product[product.pk][-1]
        Product.objects.bulk_update(products[:PRODUCTS], ["latest_revision"], batch_size=BATCH)

        submitted = [revision for revision in revisions if revision.state != "draft"]
        per_revision, extra = divmod(REVIEW_ITEMS, len(submitted))
        in_review_dispositions = (Disposition.OPEN, Disposition.OPEN, Disposition.DISCUSSION, Disposition.CHANGE,
                                  Disposition.WAIVED, Disposition.NOT_APPLICABLE)
        assignees = (people[Role.REVIEWER], None, people[Role.APPROVER], None, None, people[Role.REVIEWER])
        items = []
        for position, revision in enumerate(submitted):
            findings = revision.evaluation["findings"]
            for index in range(per_revision + (1 if position < extra else 0)):
                finding = findings[index % len(findings)]
                copy = index // len(findings)
                subjects = "|".join(finding.get("subjects", [])) + (f"|again-{copy}" if copy else "")
                open_review = revision.state == "in-review"
                disposition = (in_review_dispositions[(position + index) % len(in_review_dispositions)]
                               if open_review else Disposition.WAIVED if finding["severity"] == "blocker"
                               else Disposition.CHANGE)
                items.append(ReviewItem(
                    revision=revision, rule_id=finding["id"], subjects_key=subjects, topic=finding["topic"],
                    severity=finding["severity"], title=finding["title"][:300], finding=finding,
                    disposition=disposition, justification="" if disposition == Disposition.OPEN else
                    "Accepted for the benchmark's invented team", assignee=assignees[(position + index) % 6],
                    decided_by=None if disposition == Disposition.OPEN else people[Role.APPROVER],
                    decided_in=None if disposition == Disposition.OPEN else revision,
                    decided_severity="" if disposition == Disposition.OPEN else finding["severity"]))
            if len(items) >= 10 * BATCH:
                ReviewItem.objects.bulk_create(items, batch_size=BATCH)
                items = []
        ReviewItem.objects.bulk_create(items, batch_size=BATCH)
        review_tallies_refresh(revision_ids=[revision.pk for revision in submitted])  # what the review writes keep

        signed = [revision for revision in revisions if revision.state in ("signed", "superseded")]
        records = SignedRecord.objects.bulk_create([SignedRecord(
            revision=revision, pdf=f"records/product-{revision.product_id}/rev{revision.number}.pdf",
            sha256=hashlib.sha256(f"record {revision.pk}".encode()).hexdigest(), size_bytes=180_000,
            fingerprint=hashlib.sha256(f"content {revision.pk}".encode()).hexdigest()) for revision in signed],
            batch_size=BATCH)
        signing = [revision for revision in revisions if revision.state == "signing"]
        Signature.objects.bulk_create(
            [Signature(revision=revision, role=role, signer=people[role], signer_name=people[role].username,
                       meaning=MEANINGS[role]) for revision in signed for role in (Role.AUTHOR, Role.REVIEWER,
                                                                                     Role.APPROVER)]
            + [Signature(revision=revision, role=Role.AUTHOR, signer=people[Role.AUTHOR], signer_name="maren",
                         meaning=MEANINGS[Role.AUTHOR]) for revision in signing], batch_size=BATCH)
        record_of = {record.revision_id: record for record in records}
        links = []
        for product_revisions in by_product.values():
            chain = [record_of[revision.pk] for revision in product_revisions if revision.pk in record_of]
            links += [Supersession(older=older, newer=chain[-1]) for older in chain[:-1]]
        Supersession.objects.bulk_create(links, batch_size=BATCH)
    return {"products": len(products), "revisions": len(revisions), "review items": ReviewItem.objects.count(),
            "signed records": len(records), "seconds": time.perf_counter() - began}


def time_pages(urls: list[tuple[str, str, str]], repeats: int) -> list[tuple[str, ...]]:
    """Per URL: wall time of the first request, median and worst of the others, and the median CPU time of this
    process (the view, the templates, and on SQLite the database too; the machine is shared, so wall time also
    carries other work), with the number of queries."""
    from django.contrib.auth import get_user_model
    from django.core.cache import cache
    from django.db import connection
    from django.test import Client
    from django.test.utils import CaptureQueriesContext

    from projectapp import fragments

    client = Client()
    client.force_login(get_user_model().objects.get(username="tobias"))
    rows = [("page", "url", "first (ms)", "median (ms)", "worst (ms)", "cpu (ms)", "queries", "target", "")]
    for label, url, expect in urls:
        timings, cpu, first, queries = [], [], 0.0, 0
        for attempt in range(repeats + 1):
            cache.clear()
            fragments.LOCAL.clear()
            with CaptureQueriesContext(connection) as captured:
                began, began_cpu = time.perf_counter(), time.process_time()
                response = client.get(url)
                elapsed_ms = (time.perf_counter() - began) * 1000
                cpu_ms = (time.process_time() - began_cpu) * 1000
            if response.status_code != 200 or expect.encode() not in response.content:
                raise SystemExit(f"{url}: answered {response.status_code} without {expect!r}")
            if attempt == 0:
                first = elapsed_ms
            else:
                timings.append(elapsed_ms)
                cpu.append(cpu_ms)
                queries = len(captured.captured_queries)
        median, worst = statistics.median(timings), max(timings)
        rows.append((label, url, f"{first:.0f}", f"{median:.1f}", f"{worst:.1f}", f"{statistics.median(cpu):.1f}",
                     str(queries), f"< {TARGET_MS:.0f}", "met" if worst < TARGET_MS else "NOT met"))
    return rows


URLS = [
    ("product list", "/", "Products"),
    ("product list, filtered", "/?state=in-review&raises=blocker", "Products"),
    ("product list, page 30", "/?page=30", "Products"),
    ("product list, name search", "/?q=probe", "Products"),
    ("review dashboard (open)", "/reviews/", "Review"),
    ("review dashboard, my queue", "/reviews/?assignee=me", "Review"),
    ("review dashboard, all, page 100", "/reviews/?state=all&page=100", "Review"),
    ("archive", "/archive/", "Archive of signed records"),
    ("archive, superseded, page 40", "/archive/?state=superseded&page=40", "Archive of signed records"),
    ("archive, search", "/archive/?q=level", "Archive of signed records"),
]


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--repeats", type=int, default=7, help="timed requests of each URL (default 7)")
    repeats = parser.parse_args().repeats
    given = os.environ.get("DATABASE_URL", "")
    created = None
    if given.startswith(("postgres://", "postgresql://")):
        url, name = bench_database(given)
        created = (given, name)
    elif given:
        raise SystemExit("DATABASE_URL: expected a PostgreSQL URL (a database is made beside it), or none (SQLite)")
    else:
        url = None
    try:
        with tempfile.TemporaryDirectory(prefix="earshot-lists-") as folder:
            start_django(Path(folder), url)
            from django.db import connection

            made = generate()
            engine = connection.vendor
            if engine == "postgresql":  # what autovacuum does in a live database after rows arrive: statistics
                with connection.cursor() as cursor:
                    cursor.execute("ANALYZE")
            print(f"Generated on {engine}: {made['products']:,} products, {made['revisions']:,} revisions, "
                  f"{made['review items']:,} review items, {made['signed records']:,} signed records "
                  f"in {made['seconds']:.1f} s")
            print(f"Each page asked for {repeats} times, the cache emptied before every request; target: every "
                  f"request under {TARGET_MS:.0f} ms.")
            print()
            print_table(time_pages(URLS, repeats))
            connection.close()
    finally:
        if created:
            drop_database(*created)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
