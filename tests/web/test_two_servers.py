"""Two servers, one database and the shared cache: what is saved through one is read through the other at once.

Two gunicorn processes with production settings (each its own folder for files it keeps to itself) share the
test's PostgreSQL database and the database cache (EARSHOT_CACHE=database), as two machines behind one load
balancer would. Each has drawn and kept the draft's page and the revision page before the change; then a
questionnaire save and the submission go through server A, and server B at once shows the new values, the new
checklist and the new state: every cached page is named by the revision's identity (its state and version, read
from the database on each request), never by something one server remembers.

It needs real servers on a real shared database, so it runs on PostgreSQL (CI's second pass, or
`DATABASE_URL=$(scripts/postgres.sh start) .venv/bin/python -m pytest tests/web/test_two_servers.py`).
"""

import re
import secrets
import subprocess
import sys
import urllib.parse
from pathlib import Path

import pytest
from django.core.management import call_command
from django.db import connection
from django.test import Client, override_settings

from benchmarks.load import FormFields, Session, server_environment, spare_port, start_server, stop_server
from projectapp.designs.models import Revision

pytestmark = pytest.mark.django_db(transaction=True)
ROOT = Path(__file__).resolve().parents[2]
SHARED_CACHE = {"default": {"BACKEND": "django.core.cache.backends.db.DatabaseCache", "LOCATION": "earshot_cache"}}


@pytest.fixture(autouse=True)
def on_postgresql():
    if connection.vendor != "postgresql":
        pytest.skip("two servers need one database both reach while the test writes to it: this runs on PostgreSQL "
                    "(SQLite's test database is a file of this process's test run)")


def database_url() -> str:
    db = connection.settings_dict  # the test database, which the servers must share with this test
    auth = urllib.parse.quote(db["USER"] or "", safe="")
    if db.get("PASSWORD"):
        auth += ":" + urllib.parse.quote(db["PASSWORD"], safe="")
    return f"postgres://{auth}@{db['HOST'] or '127.0.0.1'}:{db['PORT'] or 5432}/{db['NAME']}"


@pytest.fixture
def servers(tmp_path, settings):
    """Servers A and B (their ports), sharing the database, the database cache, the uploaded files and the
    collected static files; with the test's secret key, so a session made here is good on both."""
    settings.SECRET_KEY = secrets.token_urlsafe(50)
    with override_settings(CACHES=SHARED_CACHE):
        call_command("createcachetable", verbosity=0)
    base = {**server_environment(tmp_path / "unused"), "SECRET_KEY": settings.SECRET_KEY,
            "DATABASE_URL": database_url(), "EARSHOT_CACHE": "database", "DATABASE_CONN_MAX_AGE": "0",
            "EARSHOT_MEDIA_ROOT": str(tmp_path / "media"), "EARSHOT_STATIC_ROOT": str(tmp_path / "static")}
    subprocess.run([sys.executable, "manage.py", "collectstatic", "--no-input", "-v0"], cwd=ROOT, env=base,
                   check=True, timeout=300)
    started = []
    try:
        for name in ("a", "b"):
            env = {**base, "EARSHOT_VAR_DIR": str(tmp_path / name)}
            (tmp_path / name).mkdir()
            port = spare_port()
            started.append((start_server(env, port, workers=1, threads=1, log_path=tmp_path / f"{name}.log"), port))
        yield [port for _, port in started]
    finally:
        for server, _ in started:
            stop_server(server)


def signed_in(port: int, session_key: str) -> Session:
    session = Session(port)
    session.cookies["sessionid"] = session_key
    return session


def get(session: Session, path: str) -> str:
    status, _, body = session.request("GET", path)
    assert status == 200, (session.port, path, status)
    return body.decode()


def form_of(html: str, form_id: str) -> tuple[list[tuple[str, str]], str]:
    scan = FormFields(form_id)
    scan.feed(html)
    return scan.fields, scan.csrf


def version_on(html: str) -> str:
    return re.search(r'name="version" value="(\d+)" id="section-antennas-version"', html)[1]


def test_a_save_and_a_submission_through_one_server_show_on_the_other_at_once(servers, product, author):
    client = Client()
    client.force_login(author, backend="projectapp.teams.backends.CachedUserBackend")
    key = client.session.session_key
    a, b = signed_in(servers[0], key), signed_in(servers[1], key)
    draft_page = f"/products/{product.pk}/draft/"
    revision_page = f"/products/{product.pk}/revisions/1/"

    # both servers draw and keep the draft page and the revision page as they are now
    seen_a, seen_b = get(a, draft_page), get(b, draft_page)
    assert "SEP-001" in seen_a and "SEP-001" in seen_b  # the two antennas sit too close
    assert version_on(seen_a) == version_on(seen_b) == "2"
    assert "status-draft" in get(b, revision_page)

    fields, csrf = form_of(seen_a, "section-antennas")
    moved = [(name, {"antennas[1].position_mm[0]": "165", "antennas[1].position_mm[1]": "10",
                     "antennas[1].position_mm[2]": "12"}.get(name, value)) for name, value in fields]
    status, _, _ = a.request("POST", f"/products/{product.pk}/draft/antennas/",
                             [*moved, ("csrfmiddlewaretoken", csrf)])
    assert status == 302  # saved (the page without JavaScript goes back to the section)

    after = get(b, draft_page)  # server B, at once
    assert version_on(after) == "3"
    assert 'name="antennas[1].position_mm[0]" value="165"' in after
    assert "SEP-001" not in after  # the new checklist: beyond a quarter wave, the pair is no longer a blocker
    assert "SEP-001" not in get(b, revision_page) and "status-draft" in get(b, revision_page)

    _, csrf = form_of(get(a, draft_page), None)
    status, _, _ = a.request("POST", f"/products/{product.pk}/draft/submit/", [("csrfmiddlewaretoken", csrf)])
    assert status == 302
    assert Revision.objects.get(product=product, number=1).state == Revision.State.IN_REVIEW
    submitted = get(b, revision_page)
    assert "status-in-review" in submitted and "SEP-001" not in submitted
    assert "has no draft" in get(b, draft_page) or "Start a new draft" in get(b, draft_page)
