"""Drives a production-configured Earshot server with simulated people and prints what it measured.

What it does, all on this machine (the server listens on 127.0.0.1 only):

1. Makes a fresh SQLite database in a temporary folder (or uses DATABASE_URL when it is set: name a throwaway
   PostgreSQL database, for example the one `scripts/postgres.sh start` prints), runs `migrate`,
   `seed_demo --password ...` and `collectstatic`, and makes sure a signed PDF record exists to download.
2. Starts gunicorn with the production settings (EARSHOT_ENV=production; HTTPS redirect and secure cookies off,
   since this is plain HTTP on the loopback) on a spare port with --workers (2 to 4) processes.
3. Capacity: a closed loop of --connections clients with no pause, --capacity-seconds each, on /healthz/
   (a trivial Django view: the floor) and on the checklist pages of the submitted revisions, taking turns
   in --capacity-rounds rounds so that a busy spell on a shared machine weighs on both alike.
4. People: --users simulated people for --seconds, each with their own session (cookies), pausing up to
   --think seconds between requests: product lists, revision checklists, draft checklists, saving a
   questionnaire section as the author `maren` (with the CSRF token, as htmx sends it) and downloading a
   signed PDF record. The run stops at --seconds or after --max-requests, whichever comes first.

Targets it prints beside the figures: no errors, p95 under 200 ms in every scenario, and checklist
throughput at least half of the floor's. It asserts nothing and exits 0 unless the set-up fails.

Run from the repository root: `.venv/bin/python benchmarks/load.py [--users 50 --seconds 60]`.
"""

import argparse
import html.parser
import http.client
import http.cookies
import os
import random
import secrets
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time
import urllib.parse
from collections import defaultdict
from dataclasses import dataclass, field
from io import StringIO
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO_ROOT))

P95_TARGET_MS = 200.0
CAPACITY_TARGET_RATIO = 0.5  # checklist throughput / floor throughput
DEMO_TEAM = "Tallow Creek Instruments"
REQUEST_TIMEOUT_S = 30


# -- setting up the server ------------------------------------------------------------------------------------
def spare_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


def server_environment(var_dir: Path) -> dict[str, str]:
    env = dict(os.environ)
    env.update({
        "EARSHOT_ENV": "production",
        "SECRET_KEY": secrets.token_urlsafe(50),
        "ALLOWED_HOSTS": "127.0.0.1,localhost",
        "EARSHOT_VAR_DIR": str(var_dir),
        # plain HTTP on the loopback: no TLS to redirect to
        "SECURE_SSL_REDIRECT": "0",
        "SESSION_COOKIE_SECURE": "0",
        "CSRF_COOKIE_SECURE": "0",
        "DJANGO_SETTINGS_MODULE": "projectapp.settings",
    })
    for name in ("EARSHOT_DEBUG", "SECRET_KEY_FILE", "EARSHOT_MEDIA_ROOT", "EARSHOT_STATIC_ROOT",
                 "DJANGO_ALLOW_ASYNC_UNSAFE"):
        env.pop(name, None)
    return env


@dataclass
class Targets:
    """What the simulated people visit, found in the seeded database."""

    submitted: list[str]  # revision checklist URLs
    drafts: list[tuple[str, str, str]]  # (draft page URL, section save URL, section form id)
    download: str
    download_is_pdf: bool
    notes: list[str] = field(default_factory=list)
    sessions: dict[str, list[str]] = field(default_factory=dict)  # username → session keys


def prepare(password: str, people: dict[str, int]) -> Targets:
    """Migrates, seeds, collects static files and finds the pages to visit (runs in this process)."""
    import django

    django.setup()
    from django.core.management import call_command
    from django.db import connections
    from django.urls import NoReverseMatch, reverse

    from projectapp.designs.models import Product
    from projectapp.teams.models import Team

    call_command("migrate", "--no-input", verbosity=0)
    call_command("seed_demo", "--password", password, stdout=StringIO())
    call_command("collectstatic", "--no-input", verbosity=0)

    team = Team.objects.get(name=DEMO_TEAM)
    submitted, drafts = [], []
    for product in Product.objects.filter(team=team).order_by("name"):
        if product.latest_submitted is not None:
            submitted.append(product.latest_submitted.get_absolute_url())
        if product.draft is not None:
            section = "product"
            drafts.append((reverse("draft_edit", args=[product.pk]),
                           reverse("draft_section_save", args=[product.pk, section]), f"section-{section}"))
    notes = []
    try:
        reverse("record_download", args=[1])
    except NoReverseMatch:
        revision = Product.objects.filter(team=team).exclude(revisions=None).first().latest_submitted
        download, is_pdf = reverse("revision_export", args=[revision.product_id, revision.number]), False
        notes.append("the PDF step was replaced by the design-file export (no signed-record URL exists yet)")
    else:
        record, note = signed_record(team, password)
        if record is None:
            revision = Product.objects.filter(team=team).exclude(revisions=None).first().latest_submitted
            download, is_pdf = reverse("revision_export", args=[revision.product_id, revision.number]), False
            notes.append(f"the PDF step was replaced by the design-file export: {note}")
        else:
            download, is_pdf = reverse("record_download", args=[record.pk]), True
            if note:
                notes.append(note)
    sessions = open_sessions(people)
    connections.close_all()
    if not submitted or not drafts:
        raise SystemExit("seed_demo made no submitted revision or no draft to visit")
    return Targets(submitted=submitted, drafts=drafts, download=download, download_is_pdf=is_pdf, notes=notes,
                   sessions=sessions)


def open_sessions(people: dict[str, int]) -> dict[str, list[str]]:
    """Logged-in sessions made the way Django's own log-in makes them, without the deliberately slow password
    hash for each (one real log-in per person is timed separately): username → session keys."""
    from django.contrib.auth import get_user_model
    from django.test import Client

    sessions: dict[str, list[str]] = {}
    for username, count in people.items():
        user = get_user_model().objects.get(username=username)
        for _ in range(count):
            client = Client()
            client.force_login(user, backend="projectapp.teams.backends.CachedUserBackend")
            sessions.setdefault(username, []).append(client.session.session_key)
    return sessions


def signed_record(team, password: str):
    """The demo team's signed record, signing a ready revision through the sign-off service if none exists."""
    from django.contrib.auth import get_user_model
    from django.test import RequestFactory

    from projectapp.signoff import services
    from projectapp.signoff.models import SignedRecord

    record = SignedRecord.objects.filter(revision__product__team=team).first()
    if record is not None:
        return record, ""
    from projectapp.designs.models import Revision

    for revision in Revision.objects.filter(product__team=team).exclude(state=Revision.State.DRAFT):
        if not services.readiness(revision).ready:
            continue
        for role in team.signoff_roles:
            signer = (get_user_model().objects.filter(memberships__team=team, memberships__role=role)
                      .exclude(pk__in=revision.signatures.values("signer")).first())
            if signer is None:
                return None, f"nobody in {team.name} can sign as {role}"
            services.revision_sign(revision=revision, user=signer, role=role, password=password,
                                   request=RequestFactory().post("/"))
        return SignedRecord.objects.get(revision=revision), (
            f"signed {revision} through the sign-off service to have a PDF to download")
    return None, "no submitted demo revision is ready to sign"


def start_server(env: dict, port: int, workers: int, threads: int, log_path: Path) -> subprocess.Popen:
    command = [sys.executable, "-m", "gunicorn", "projectapp.wsgi:application", "--bind", f"127.0.0.1:{port}",
               "--workers", str(workers), "--log-level", "warning", "--timeout", "60"]
    if threads > 1:
        command += ["--worker-class", "gthread", "--threads", str(threads)]
    with log_path.open("w") as log:  # the server writes to its own copy of the file
        server = subprocess.Popen(command, cwd=REPO_ROOT, env=env, stdout=log, stderr=subprocess.STDOUT,
                                  start_new_session=True)
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        if server.poll() is not None:
            raise SystemExit(f"gunicorn exited ({server.returncode}); see {log_path}:\n{log_path.read_text()}")
        try:
            with socket.create_connection(("127.0.0.1", port), timeout=1):
                return server
        except OSError:
            time.sleep(0.2)
    stop_server(server)
    raise SystemExit(f"gunicorn did not listen on 127.0.0.1:{port} within 60 s; see {log_path}")


def stop_server(server: subprocess.Popen) -> None:
    if server.poll() is not None:
        return
    os.killpg(server.pid, signal.SIGTERM)  # gunicorn and its workers (their own session, started above)
    try:
        server.wait(timeout=30)
    except subprocess.TimeoutExpired:
        os.killpg(server.pid, signal.SIGKILL)
        server.wait()


# -- a simulated person -----------------------------------------------------------------------------------------
class FormFields(html.parser.HTMLParser):
    """The fields a browser would send for one form (by id), and the page's CSRF token."""

    def __init__(self, form_id: str | None = None):
        super().__init__()
        self.form_id = form_id
        self.inside = False
        self.fields: list[tuple[str, str]] = []
        self.csrf = ""
        self._select: str | None = None
        self._select_value: str | None = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "input" and a.get("name") == "csrfmiddlewaretoken" and not self.csrf:
            self.csrf = a.get("value") or ""
        if tag == "form":
            self.inside = self.form_id is not None and a.get("id") == self.form_id
        if not self.inside:
            return
        if tag == "input" and a.get("name") and a.get("name") != "csrfmiddlewaretoken":
            kind = (a.get("type") or "text").lower()
            if kind in ("checkbox", "radio"):
                if "checked" in a:
                    self.fields.append((a["name"], a.get("value") or "on"))
            elif kind not in ("submit", "button", "file"):
                self.fields.append((a["name"], a.get("value") or ""))
        elif tag == "select":
            self._select, self._select_value = a.get("name"), None
        elif tag == "option" and self._select is not None:
            if self._select_value is None or "selected" in a:
                self._select_value = a.get("value") or ""

    def handle_endtag(self, tag):
        if tag == "select" and self._select is not None:
            self.fields.append((self._select, self._select_value or ""))
            self._select = None
        elif tag == "form":
            self.inside = False


@dataclass
class Result:
    scenario: str
    started: float
    seconds: float
    ok: bool
    detail: str = ""


class Session:
    """One person's connection and cookies."""

    def __init__(self, port: int):
        self.port = port
        self.cookies: dict[str, str] = {}
        self.connection: http.client.HTTPConnection | None = None

    def request(self, method: str, path: str, body: dict | list | None = None,
                headers: dict | None = None) -> tuple[int, dict, bytes]:
        sent = {"Host": f"127.0.0.1:{self.port}", **(headers or {})}
        if self.cookies:
            sent["Cookie"] = "; ".join(f"{k}={v}" for k, v in self.cookies.items())
        data = None
        if body is not None:
            data = urllib.parse.urlencode(body).encode()
            sent["Content-Type"] = "application/x-www-form-urlencoded"
        for attempt in (1, 2):
            if self.connection is None:
                self.connection = http.client.HTTPConnection("127.0.0.1", self.port, timeout=REQUEST_TIMEOUT_S)
            try:
                self.connection.request(method, path, body=data, headers=sent)
                response = self.connection.getresponse()
                content = response.read()
                break
            except (http.client.RemoteDisconnected, ConnectionResetError, BrokenPipeError):
                self.close()  # the server closed a kept-alive connection between requests: reconnect once
                if attempt == 2:
                    raise
        if response.getheader("Connection", "").lower() == "close":
            self.close()
        for header, value in response.getheaders():
            if header.lower() == "set-cookie":
                for name, morsel in http.cookies.SimpleCookie(value).items():
                    self.cookies[name] = morsel.value
        return response.status, {k.lower(): v for k, v in response.getheaders()}, content

    def close(self) -> None:
        if self.connection is not None:
            self.connection.close()
            self.connection = None

    def log_in(self, username: str, password: str) -> None:
        status, _, page = self.request("GET", "/accounts/login/")
        scan = FormFields()
        scan.feed(page.decode())
        status, headers, _ = self.request("POST", "/accounts/login/", {
            "username": username, "password": password, "csrfmiddlewaretoken": scan.csrf, "next": "/"})
        if status != 302 or "sessionid" not in self.cookies:
            raise SystemExit(f"log-in as {username} failed: {status}")


@dataclass
class Person:
    username: str
    session: Session
    is_author: bool
    draft_index: int


def visit(person: Person, scenario: str, targets: Targets, rng: random.Random) -> list[Result]:
    """One step of a person; the results of its requests (saving a section first opens the draft page)."""
    started = time.perf_counter()
    ok, detail = True, ""
    before: list[Result] = []
    try:
        if scenario == "product list":
            status, _, body = person.session.request("GET", "/")
            ok = status == 200 and b"Orchard soil probe" in body
        elif scenario == "revision checklist":
            status, _, body = person.session.request("GET", rng.choice(targets.submitted))
            ok = status == 200 and b"Revision" in body
        elif scenario == "draft checklist":
            page, _, _ = targets.drafts[person.draft_index]
            status, _, body = person.session.request("GET", page)
            ok = status == 200 and b"section-product" in body
        elif scenario == "save a section":
            page, save, form_id = targets.drafts[person.draft_index]
            status, _, body = person.session.request("GET", page)  # the form, as a person would have it open
            scan = FormFields(form_id)
            scan.feed(body.decode())
            before.append(Result("draft checklist", started, time.perf_counter() - started,
                                 status == 200 and bool(scan.csrf), "" if status == 200 else f"status {status}"))
            started = time.perf_counter()
            status, _, body = person.session.request(
                "POST", save, scan.fields, headers={"HX-Request": "true", "X-CSRFToken": scan.csrf,
                                                    "Referer": f"http://127.0.0.1:{person.session.port}{page}"})
            ok = status == 200 and b"Saved" in body
        elif scenario in ("download the PDF", "download the design file"):
            status, headers, body = person.session.request("GET", targets.download)
            ok = status == 200 and (body.startswith(b"%PDF") if targets.download_is_pdf else body.startswith(b"{"))
        elif scenario == "floor (healthz)":
            status, _, body = person.session.request("GET", "/healthz/")
            ok = status == 200 and body == b"ok"
        else:
            raise ValueError(scenario)
        if not ok:
            detail = f"status {status}"
    except (OSError, http.client.HTTPException) as error:
        ok, detail = False, f"{type(error).__name__}: {error}"
        person.session.close()
    return [*before, Result(scenario, started, time.perf_counter() - started, ok, detail)]


AUTHOR_MIX = [("product list", 20), ("revision checklist", 30), ("draft checklist", 20), ("save a section", 20),
              ("download", 10)]
READER_MIX = [("product list", 30), ("revision checklist", 50), ("download", 20)]


def choose(mix, rng: random.Random, download_name: str) -> str:
    names, weights = zip(*mix, strict=True)
    name = rng.choices(names, weights)[0]
    return download_name if name == "download" else name


def run_threads(work: list[tuple], seconds: float) -> float:
    """Runs each (function, arguments) in a thread of its own, all at once; the seconds until all are done
    (a thread stuck past the run and one request's timeout is left behind)."""
    threads = [threading.Thread(target=target, args=args, daemon=True) for target, args in work]
    began = time.perf_counter()
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=seconds + REQUEST_TIMEOUT_S + 10)
    return time.perf_counter() - began


def run_people(people: list[Person], targets: Targets, seconds: float, max_requests: int, think: float,
               seed: int) -> tuple[list[Result], float]:
    results: list[Result] = []
    lock = threading.Lock()
    stop_at = time.perf_counter() + seconds
    budget = [max_requests]
    download_name = "download the PDF" if targets.download_is_pdf else "download the design file"

    def person_loop(person: Person, index: int) -> None:
        rng = random.Random(seed + index)
        time.sleep(rng.uniform(0, think))  # people don't all click at the same instant
        while time.perf_counter() < stop_at:
            with lock:
                if budget[0] <= 0:
                    return
                budget[0] -= 1
            scenario = choose(AUTHOR_MIX if person.is_author else READER_MIX, rng, download_name)
            step = visit(person, scenario, targets, rng)
            with lock:
                results.extend(step)
            time.sleep(rng.uniform(0, think))

    elapsed = run_threads([(person_loop, (person, i)) for i, person in enumerate(people)], seconds)
    return results, elapsed


def run_alone(person: Person, targets: Targets, repeats: int, download_name: str) -> list[Result]:
    """Each scenario a few times by one person with nobody else on the server: what a page costs by itself."""
    rng = random.Random(1)
    results: list[Result] = []
    for scenario in ("floor (healthz)", "product list", "revision checklist", "draft checklist", "save a section",
                     download_name):
        for _ in range(repeats):
            results += [result for result in visit(person, scenario, targets, rng) if result.scenario == scenario]
    return results


def run_closed_loop(port: int, scenario: str, paths: list[str], connections: int, seconds: float,
                    max_requests: int, cookies: dict[str, str]) -> tuple[list[Result], float]:
    """`connections` clients each requesting the paths in turn, without pause, until the time or budget ends."""
    results: list[Result] = []
    lock = threading.Lock()
    stop_at = time.perf_counter() + seconds
    budget = [max_requests]

    def loop(offset: int) -> None:
        session = Session(port)
        session.cookies = dict(cookies)
        turn = offset
        while time.perf_counter() < stop_at:
            path = paths[turn % len(paths)]
            turn += 1
            with lock:
                if budget[0] <= 0:
                    break
                budget[0] -= 1
            started = time.perf_counter()
            try:
                status, _, body = session.request("GET", path)
                ok, detail = status == 200, f"status {status}"
            except (OSError, http.client.HTTPException) as error:
                ok, detail = False, str(error)
                session.close()
            with lock:
                results.append(Result(scenario, started, time.perf_counter() - started, ok, "" if ok else detail))
        session.close()

    return results, run_threads([(loop, (index,)) for index in range(connections)], seconds)


# -- figures ------------------------------------------------------------------------------------------------------
def percentile(values: list[float], fraction: float) -> float:
    ordered = sorted(values)
    if not ordered:
        return float("nan")
    index = min(len(ordered) - 1, max(0, round(fraction * len(ordered) + 0.5) - 1))  # nearest rank
    return ordered[index]


def summarize(results: list[Result], elapsed: float | None) -> dict[str, dict]:
    """Figures per scenario; with no elapsed time, req/s is one process's rate: 1 / the mean time."""
    by_scenario: dict[str, list[Result]] = defaultdict(list)
    for result in results:
        by_scenario[result.scenario].append(result)
    table = {}
    for scenario, rows in by_scenario.items():
        times = [row.seconds * 1000 for row in rows]
        errors = [row for row in rows if not row.ok]
        rate = len(rows) / elapsed if elapsed else 1000 / statistics.fmean(times)
        table[scenario] = {"requests": len(rows), "per_second": rate, "p50": percentile(times, 0.50),
                           "p95": percentile(times, 0.95), "max": max(times), "mean": statistics.fmean(times),
                           "errors": len(errors), "first_error": errors[0].detail if errors else ""}
    return table


def print_table(title: str, table: dict[str, dict], check_p95: bool = True) -> bool:
    print(f"\n{title}")
    print(f"  {'scenario':<26}{'requests':>9}{'req/s':>9}{'p50 ms':>9}{'p95 ms':>9}{'max ms':>9}{'errors':>8}")
    met = True
    for scenario, row in table.items():
        flag = ""
        if check_p95 and row["p95"] >= P95_TARGET_MS:
            flag, met = "  p95 over target", False
        if row["errors"]:
            flag += f"  first error: {row['first_error']}"
            met = False
        print(f"  {scenario:<26}{row['requests']:>9}{row['per_second']:>9.1f}{row['p50']:>9.1f}{row['p95']:>9.1f}"
              f"{row['max']:>9.1f}{row['errors']:>8}{flag}")
    return met


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--users", type=int, default=50)
    parser.add_argument("--seconds", type=float, default=60.0, help="length of the people phase")
    parser.add_argument("--max-requests", type=int, default=60_000, help="a bound on requests in each phase")
    parser.add_argument("--think", type=float, default=1.0,
                        help="each person pauses a random 0..THINK seconds between requests")
    parser.add_argument("--workers", type=int, default=4, choices=(2, 3, 4))
    parser.add_argument("--threads", type=int, default=1, help="threads per worker (above 1: gthread workers)")
    parser.add_argument("--connections", type=int, default=8, help="clients in each capacity loop")
    parser.add_argument("--capacity-seconds", type=float, default=10.0)
    parser.add_argument("--capacity-rounds", type=int, default=3, help="alternate floor and checklist this often")
    parser.add_argument("--seed", type=int, default=7)
    args = parser.parse_args()
    if not 1 <= args.users <= 500 or not 1 <= args.seconds <= 600 or not 1 <= args.capacity_seconds <= 120:
        parser.error("keep --users within 1..500 and the phases within 600 s (capacity 120 s)")
    if not 1 <= args.capacity_rounds <= 10:
        parser.error("keep --capacity-rounds within 1..10")

    with tempfile.TemporaryDirectory(prefix="earshot-load-") as folder:
        var_dir = Path(folder) / "var"
        env = server_environment(var_dir)
        os.environ.update(env)  # this process prepares the same database the server will use
        password = "load-" + secrets.token_urlsafe(12)
        database = "PostgreSQL (DATABASE_URL)" if env.get("DATABASE_URL", "").startswith("postgres") else "SQLite"
        print(f"Earshot load benchmark: {database}, gunicorn with {args.workers} worker(s)"
              f"{f' x {args.threads} threads' if args.threads > 1 else ''} on 127.0.0.1, {os.cpu_count()} CPU(s)")
        began = time.perf_counter()
        authors = args.users * 2 // 5
        readers = args.users - authors
        targets = prepare(password, {"maren": authors, "tobias": readers - readers // 2, "ines": readers // 2})
        print(f"set-up (migrate, seed_demo, collectstatic, data): {time.perf_counter() - began:.1f} s")
        for note in targets.notes:
            print(f"note: {note}")

        port = spare_port()
        server = start_server(env, port, args.workers, args.threads, Path(folder) / "gunicorn.log")
        try:
            people = []
            for username, keys in targets.sessions.items():
                for key in keys:
                    session = Session(port)
                    session.cookies["sessionid"] = key
                    people.append(Person(username, session, username == "maren", len(people) % len(targets.drafts)))
            for username in targets.sessions:  # the log-in form itself, once per person, timed apart
                began = time.perf_counter()
                Session(port).log_in(username, password)
                print(f"log-in through the form as {username}: {(time.perf_counter() - began) * 1000:.0f} ms "
                      "(password hashing is deliberately slow)")
            print(f"{len(people)} simulated people, each with their own session: "
                  + ", ".join(f"{len(keys)} as {name}" for name, keys in targets.sessions.items()))

            cpu_before = time.process_time()
            download_name = "download the PDF" if targets.download_is_pdf else "download the design file"
            run_alone(people[0], targets, 2 * args.workers, download_name)  # warm every worker up; not counted
            alone = run_alone(people[0], targets, 10, download_name)
            print_table("Alone: one person, one request at a time, 10 of each (what a request costs by itself)",
                        summarize(alone, None), check_p95=False)
            print("  (req/s here is 1 / the mean time: one process's rate for that request)")
            # Floor and checklist take turns, so a busy spell on the machine falls on both alike.
            floor_results, checklist_results, rounds = [], [], []
            floor_elapsed = checklist_elapsed = 0.0
            checklist_name = f"revision checklists ({len(targets.submitted)})"
            for _ in range(args.capacity_rounds):
                results_1, elapsed_1 = run_closed_loop(port, "floor (healthz)", ["/healthz/"], args.connections,
                                                       args.capacity_seconds / args.capacity_rounds,
                                                       args.max_requests, {})
                results_2, elapsed_2 = run_closed_loop(port, checklist_name, targets.submitted, args.connections,
                                                       args.capacity_seconds / args.capacity_rounds,
                                                       args.max_requests, people[-1].session.cookies)
                floor_results += results_1
                checklist_results += results_2
                floor_elapsed += elapsed_1
                checklist_elapsed += elapsed_2
                rounds.append((len(results_2) / elapsed_2) / (len(results_1) / elapsed_1))
            floor = summarize(floor_results, floor_elapsed)
            checklist = summarize(checklist_results, checklist_elapsed)
            capacity = {**floor, **checklist}
            print_table(f"Capacity: {args.connections} clients without pause, {args.capacity_seconds:g} s each, "
                        f"in {args.capacity_rounds} alternating rounds", capacity, check_p95=False)
            print("  checklist / floor in each round: " + ", ".join(f"{ratio:.2f}" for ratio in rounds))
            floor_rate = next(iter(floor.values()))["per_second"]
            checklist_rate = next(iter(checklist.values()))["per_second"]
            ratio = checklist_rate / floor_rate if floor_rate else float("nan")
            print(f"  checklist / floor throughput: {ratio:.2f} (target at least {CAPACITY_TARGET_RATIO:.2f}: "
                  f"{'met' if ratio >= CAPACITY_TARGET_RATIO else 'NOT met'})")

            results, elapsed = run_people(people, targets, args.seconds, args.max_requests, args.think, args.seed)
            client_cpu = time.process_time() - cpu_before
            table = summarize(results, elapsed)
            total = sum(row["requests"] for row in table.values())
            errors = sum(row["errors"] for row in table.values())
            met = print_table(f"People: {len(people)} simulated people for {elapsed:.1f} s, pausing 0..{args.think:g} s "
                              f"({total} requests, {total / elapsed:.1f} req/s, {errors} errors)", table)
            all_times = [result.seconds * 1000 for result in results]
            print(f"  {'all':<26}{total:>9}{total / elapsed:>9.1f}{percentile(all_times, 0.5):>9.1f}"
                  f"{percentile(all_times, 0.95):>9.1f}{max(all_times, default=0):>9.1f}{errors:>8}")
            print(f"\nTargets: zero errors and p95 under {P95_TARGET_MS:.0f} ms in every scenario: "
                  f"{'met' if met else 'NOT met'}; checklist throughput at least half the floor: "
                  f"{'met' if ratio >= CAPACITY_TARGET_RATIO else 'NOT met'} ({ratio:.2f}).")
            print(f"(the load generator itself used {client_cpu:.1f} s of CPU in this process; it shares the "
                  f"machine's {os.cpu_count()} CPU(s) with the server)")
        finally:
            for person in locals().get("people", []):
                person.session.close()
            stop_server(server)
            log = (Path(folder) / "gunicorn.log").read_text(errors="replace").strip()
            if log:
                lines = log.splitlines()
                print(f"\nthe server logged {len(lines)} line(s); the last of them:")
                print("\n".join("  " + line for line in lines[-40:]))
    return 0


if __name__ == "__main__":
    sys.exit(main())
