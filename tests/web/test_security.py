"""Security properties checked across the whole site rather than view by view.

- Every URL pattern, walked from the root URLconf: anonymous people are sent to the log-in page; a person
  from another team gets 404 for every object of this team (and 405 only for the method a view does not
  take), and pages without an object never show this team's names; nothing answers 500. The same ids
  work for a member of the team, so the 404s come from access control, not from ids that don't exist.
- CSRF is enforced on form posts, htmx posts and the log-in form.
- Uploads over the size limit, or of the wrong type, are refused with a message and nothing is stored.
- Password checks (log-in, admin, signing, password change) are throttled: tests/web/test_password_checks.py.
- With DEBUG off, errors show Earshot's own 404/403/500 pages, never a traceback.
- Pages keep to the content security policy: no inline scripts, event-handler attributes or <style>
  elements; a style attribute only inside the placement drawing's SVG.
"""

import re
from dataclasses import dataclass
from html.parser import HTMLParser
from pathlib import Path

import pytest
from django.core.exceptions import PermissionDenied
from django.db import transaction
from django.test import Client, override_settings
from django.urls import URLPattern, URLResolver, get_resolver, path, reverse

from projectapp.designs import questionnaire, services
from projectapp.designs.forms import MAX_DESIGN_FILE_BYTES
from projectapp.designs.models import Product, Revision
from projectapp.library import services as library
from projectapp.reviews.models import ProcessStep, ReviewItem
from projectapp.reviews.services import evidence_attach, revision_submit
from projectapp.teams.models import Role, Team
from tests.web.conftest import EXAMPLES, PASSWORD, make_user, signing_request

# -- a test-only URLconf: the real site plus views that fail on purpose ----------------------------------------
SECRET_DETAIL = "kestrel-7731 internal detail that must never reach a page"


def _raise_error(request):
    raise RuntimeError(SECRET_DETAIL)


def _raise_permission_denied(request):
    raise PermissionDenied(SECRET_DETAIL)


def _urlpatterns():
    from projectapp.urls import urlpatterns as site

    return [path("test-only/error/", _raise_error), path("test-only/denied/", _raise_permission_denied), *site]


urlpatterns = _urlpatterns()

# -- walking the URL patterns --------------------------------------------------------------------------------
SKIPPED = {
    "admin": "Django's admin has its own staff-only log-in; test_admin_refuses_people_who_are_not_staff covers it",
    "login": "the log-in page is public by design; test_password_checks.py and the CSRF test below cover it",
}
PUBLIC = {
    "healthz": "a load balancer polls it without logging in; it answers 'ok' and nothing else",
    "logout": "logging out needs no log-in: it only ends the session, if there is one",
}


@dataclass(frozen=True)
class Route:
    name: str
    route: str  # e.g. products/<int:product_id>/
    converters: tuple[str, ...]  # the names of its parameters, in order

    @property
    def has_object(self) -> bool:
        return bool(self.converters)


def walk(patterns, prefix: str = "", namespace: str = "") -> list[tuple[Route | None, str]]:
    """Every pattern as (Route, "") or (None, why it is skipped)."""
    found: list[tuple[Route | None, str]] = []
    for entry in patterns:
        if isinstance(entry, URLResolver):
            spot = entry.namespace or entry.app_name or ""
            if spot in SKIPPED:
                found.append((None, f"{prefix}{entry.pattern}: {SKIPPED[spot]}"))
                continue
            found += walk(entry.url_patterns, prefix + str(entry.pattern), spot or namespace)
        elif isinstance(entry, URLPattern):
            name = entry.name or ""
            if name in SKIPPED:
                found.append((None, f"{prefix}{entry.pattern}: {SKIPPED[name]}"))
                continue
            assert name, f"{prefix}{entry.pattern} has no name: name every URL so this test can cover it"
            route = Route(name=name, route=prefix + str(entry.pattern),
                          converters=tuple(getattr(entry.pattern, "converters", {}).keys()))
            found.append((route, ""))
    return found


def site_routes() -> list[Route]:
    return [route for route, _ in walk(get_resolver().url_patterns) if route is not None]


def test_the_walk_sees_the_whole_site_and_says_what_it_skips():
    walked = walk(get_resolver().url_patterns)
    names = {route.name for route, _ in walked if route}
    assert {"product_list", "product_detail", "draft_section_save", "design_import", "revision_export",
            "review_item_decide", "revision_review", "healthz", "password_change"} <= names
    reasons = [why for route, why in walked if route is None]
    assert any(why.startswith("admin/") for why in reasons), reasons
    assert any(why.startswith("accounts/login/") for why in reasons), reasons


# -- the data: this team's (the one being protected) and another team's -----------------------------------------
MINE = ("Tallow Creek Instruments", "Orchard soil probe", "Hive gateway", "Reed flex 2")  # names only this team's pages show


@dataclass
class Site:
    author: object
    outsider: object
    kwargs: dict
    submitted: Product
    draft_product: Product
    outsider_product: Product


def _signed_record(revision: Revision, user):
    """The revision signed and archived, through the sign-off service (the team asks only its author to sign)."""
    from projectapp.signoff.models import SignedRecord
    from projectapp.signoff.services import revision_sign

    team = revision.product.team
    team.signoff_roles = ["author"]
    team.save()
    revision_sign(revision=revision, user=user, role="author", password=PASSWORD, request=signing_request())
    return SignedRecord.objects.get(revision=revision)


@pytest.fixture
def site(db, team, author):
    other_team = Team.objects.create(name="Larchmere Metering")
    outsider = make_user("outsider", other_team, Role.AUTHOR, Role.REVIEWER, Role.APPROVER)
    make_user("reviewer", team, Role.REVIEWER)
    submitted = services.product_create(team=team, name="Orchard soil probe", user=author)
    services.design_import(product=submitted, text=(EXAMPLES / "orchard-probe.json").read_text(),
                           source="orchard-probe.json", user=author)
    revision = revision_submit(revision=submitted.draft, user=author)
    services.draft_get_or_start(product=submitted, user=author)  # revision 2: the questionnaire URLs work too
    draft_product = services.product_create(team=team, name="Hive gateway", user=author)
    services.design_import(product=draft_product, text=(EXAMPLES / "hive-gateway.json").read_text(),
                           source="hive-gateway.json", user=author)
    outsider_product = services.product_create(team=other_team, name="Larchmere water meter", user=outsider)
    item = ReviewItem.objects.filter(revision=revision).order_by("pk").first()
    assert item is not None, "the orchard probe's submitted revision should raise at least one item"
    entry = library.entry_create(team=team, kind="antenna", name="Reed flex 2", values={"peak_gain_dbi": 1.2},
                                 user=author)
    stored = library.entry_file_add(entry=entry, name="reed.s2p", content=(EXAMPLES / "field-router-revA.s2p")
                                    .read_bytes(), read_version=1, user=author)
    kwargs = {"product_id": submitted.pk, "number": revision.number, "item_id": item.pk,
              "section": questionnaire.SECTIONS[0].slug, "team_id": team.pk, "entry_id": entry.pk,
              "file_id": stored.pk, "step_id": ProcessStep.objects.filter(revision=revision).order_by("pk")[0].pk,
              "attachment_id": evidence_attach(user=author, name="lab.pdf", content=b"report", step=ProcessStep
                                               .objects.filter(revision=revision).order_by("pk")[0]).pk}
    record = _signed_record(revision, author)
    if record is not None:
        kwargs["record_id"] = record.pk
    return Site(author=author, outsider=outsider, kwargs=kwargs, submitted=submitted,
                draft_product=draft_product, outsider_product=outsider_product)


def url_of(route: Route, kwargs: dict) -> str:
    missing = [name for name in route.converters if name not in kwargs]
    assert not missing, (f"{route.route} ({route.name}) takes {missing}: add an object of the protected team "
                         "for it to the `site` fixture in tests/web/test_security.py")
    return reverse(route.name, kwargs={name: kwargs[name] for name in route.converters})


def body_of(response) -> bytes:
    """The whole body, streamed or not. Reading a download to the end lets the test client close it (and its
    file); closing a response again here would fire request_finished a second time, which closes the
    database connection in the middle of the test's transaction."""
    return b"".join(response.streaming_content) if response.streaming else response.content


def leaked_names(content: bytes) -> list[str]:
    text = content.decode("utf-8", errors="replace")
    return [name for name in MINE if name in text]


# -- anonymous -----------------------------------------------------------------------------------------------
def test_anonymous_people_are_sent_to_log_in_from_every_url(client, site):
    login = reverse("login")
    failures = []
    for route in site_routes():
        url = url_of(route, site.kwargs)
        for method in ("get", "post"):
            response = getattr(client, method)(url)
            body = body_of(response)
            if route.name in PUBLIC:
                if response.status_code >= 500 or leaked_names(body):
                    failures.append(f"{method.upper()} {url}: {response.status_code}")
                continue
            location = response.headers.get("Location", "")
            if response.status_code != 302 or not location.startswith(login + "?next="):
                failures.append(f"{method.upper()} {url}: expected a redirect to log in, got "
                                f"{response.status_code} {location}")
    assert not failures, "\n".join(failures)


def test_the_health_check_says_ok_and_nothing_else(client):
    response = client.get(reverse("healthz"))
    assert response.status_code == 200
    assert response.content == b"ok"
    assert "no-cache" in response.headers["Cache-Control"]


# -- another team's person --------------------------------------------------------------------------------------
def test_another_teams_person_gets_404_for_every_object_and_never_sees_its_names(client, site):
    failures = []
    query = f"?product={site.submitted.pk}&q=Orchard&assignee={site.author.pk}&signer={site.author.pk}"
    for route in site_routes():
        url = url_of(route, site.kwargs)
        statuses = {}
        for method in ("get", "post"):
            client.force_login(site.outsider)  # logging out (a POST) must not turn the rest anonymous
            response = getattr(client, method)(url + ("" if route.has_object else query))
            body = body_of(response)
            statuses[method] = response.status_code
            if leaked_names(body):
                failures.append(f"{method.upper()} {url}: shows {leaked_names(body)}")
            if route.has_object and response.status_code not in (404, 405):
                failures.append(f"{method.upper()} {url}: expected 404, got {response.status_code}")
            if response.status_code >= 500:
                failures.append(f"{method.upper()} {url}: {response.status_code}")
        if route.has_object and 404 not in statuses.values():
            failures.append(f"{url}: no method answered 404 ({statuses})")
    assert not failures, "\n".join(failures)


def test_list_pages_show_the_outsiders_own_data_but_not_the_other_teams(client, site):
    client.force_login(site.outsider)
    page = client.get(reverse("product_list"))
    assert page.status_code == 200
    assert site.outsider_product.name in page.content.decode()
    assert not leaked_names(page.content)


def test_the_same_ids_work_for_a_member_so_the_404s_are_access_control(client, site):
    failures = []
    for route in site_routes():
        if not route.has_object:
            continue
        url = url_of(route, site.kwargs)
        client.force_login(site.author)
        with transaction.atomic():  # what one request changes (a submitted draft) must not spoil the next
            response = client.get(url)
            if response.status_code == 405:  # a POST-only endpoint: an empty POST must find the object
                response = client.post(url)
            body_of(response)
            transaction.set_rollback(True)
        if response.status_code in (404, 405) or response.status_code >= 500:
            failures.append(f"{url}: a member got {response.status_code}")
    assert not failures, "\n".join(failures)


# Every parameter name a view or form here reads, each with a value that once gave a 500 somewhere (`²` passes
# isdigit() but not int(), a date that does not exist, a NUL, a 400-digit number, numbers beyond physics).
HOSTILE = {
    "product": "²", "assignee": "²", "severity": "\x00", "topic": "9" * 400, "state": "²", "q": "\x00",
    "category": "\x00", "signer": "9" * 400, "since": "2026-13-45", "until": "0000-00-00", "from": "²",
    "to": "9" * 400, "action": "remove:²", "preset": "\x00", "port_count": "two", "file": "\x00",
    "port-0": "\x00", "next": "\x00//example.com", "version": "²", "disposition": "\x00", "justification": "\x00",
    "text": "\x00", "role": "\x00", "password": "\x00", "team": "²", "name": "\x00", "description": "\x00",
    "product.name": "\x00", "modem.rx_ports": "9" * 400, "modem.gain_limits_dbi.B3\x00": "1e308",
    "ground_plane_mm[0]": "1e-308", "ground_plane_mm[1]": "1e-308", "antennas[0].name": "\x00",
    "antennas[0].position_mm[0]": "1e308", "deployment.body_distance_mm": "9" * 400,
    "owner": "²", "planned_on": "2026-02-30", "status": "\x00", "reference": "\x00" * 300,
}


def test_hostile_parameters_on_every_url_never_answer_500(site):
    client = Client(raise_request_exception=False)
    failures = []
    for route in site_routes():
        url = url_of(route, site.kwargs)
        for method, headers in (("get", {}), ("post", {}), ("post", {"HTTP_HX_REQUEST": "true"})):
            client.force_login(site.author)
            with transaction.atomic():  # each request starts from the same data
                response = getattr(client, method)(url, HOSTILE, **headers)
                body_of(response)
                transaction.set_rollback(True)
            if response.status_code >= 500:
                failures.append(f"{method.upper()} {url} {headers}: {response.status_code}")
    assert not failures, "\n".join(failures)


def test_admin_refuses_people_who_are_not_staff(client, site):
    client.force_login(site.outsider)
    response = client.get("/admin/")
    assert response.status_code == 302
    assert response.headers["Location"].startswith("/admin/login/")


# -- CSRF --------------------------------------------------------------------------------------------------------
def test_a_post_without_the_csrf_token_is_refused_and_changes_nothing(site):
    client = Client(enforce_csrf_checks=True)
    client.force_login(site.author)
    form = {"team": site.submitted.team_id, "name": "Culvert level sensor", "description": ""}
    response = client.post(reverse("product_create"), form)
    assert response.status_code == 403
    assert b"The form had expired" in response.content
    assert not Product.objects.filter(name="Culvert level sensor").exists()

    # the token the page's form carries is accepted
    page = client.get(reverse("product_create"))
    token = re.search(r'name="csrfmiddlewaretoken" value="([^"]+)"', page.content.decode()).group(1)
    response = client.post(reverse("product_create"), {**form, "csrfmiddlewaretoken": token})
    assert response.status_code == 302
    assert Product.objects.filter(name="Culvert level sensor").exists()


def test_pages_that_change_nothing_carry_no_csrf_token_and_logging_out_asks_first(site):
    client = Client(enforce_csrf_checks=True)
    client.force_login(site.author)
    for url in (reverse("product_list"), site.submitted.latest.get_absolute_url()):
        response = client.get(url)
        assert "csrfmiddlewaretoken" not in response.content.decode(), url
        assert "csrftoken" not in response.cookies, url
    page = client.get(reverse("logout"))  # the header's "Log out" link
    assert page.status_code == 200 and "_auth_user_id" in client.session
    token = re.search(r'name="csrfmiddlewaretoken" value="([^"]+)"', page.content.decode()).group(1)
    assert client.post(reverse("logout")).status_code == 403 and "_auth_user_id" in client.session
    response = client.post(reverse("logout"), {"csrfmiddlewaretoken": token})
    assert response.status_code == 302 and "_auth_user_id" not in client.session
    assert "not logged in" in client.get(reverse("logout")).content.decode()


def test_the_login_form_needs_the_csrf_token(site):
    client = Client(enforce_csrf_checks=True)
    response = client.post(reverse("login"), {"username": "author", "password": PASSWORD})
    assert response.status_code == 403
    assert "_auth_user_id" not in client.session


# -- uploads -----------------------------------------------------------------------------------------------------
def _upload(name: str, content: bytes):
    from django.core.files.uploadedfile import SimpleUploadedFile

    return SimpleUploadedFile(name, content, content_type="application/json")


def test_an_oversize_design_file_is_refused_with_a_message_and_nothing_is_stored(client, site):
    client.force_login(site.author)
    product = site.draft_product
    before = list(Revision.objects.filter(product=product).values_list("pk", "document"))
    padding = b" " * (MAX_DESIGN_FILE_BYTES + 1)
    big = (EXAMPLES / "hive-gateway.json").read_bytes()[:-2] + padding + b"}\n"
    response = client.post(reverse("design_import", args=[product.pk]), {"design_file": _upload("big.json", big)})
    assert response.status_code == 200
    assert f"expected at most {MAX_DESIGN_FILE_BYTES // 1000} kB" in response.content.decode()
    assert list(Revision.objects.filter(product=product).values_list("pk", "document")) == before


def test_a_design_file_that_is_not_json_is_refused_and_nothing_is_stored(client, site):
    client.force_login(site.author)
    product = site.draft_product
    before = list(Revision.objects.filter(product=product).values_list("pk", "document"))
    png = b"\x89PNG\r\n\x1a\n" + bytes(range(256)) * 4
    response = client.post(reverse("design_import", args=[product.pk]),
                           {"design_file": _upload("photo.json", png)})
    assert response.status_code == 400
    assert "photo.json: not valid JSON" in response.content.decode()
    assert list(Revision.objects.filter(product=product).values_list("pk", "document")) == before


# -- error pages with DEBUG off -------------------------------------------------------------------------------------
TRACEBACK_SIGNS = ("Traceback", "RuntimeError", SECRET_DETAIL, 'File "', "site-packages", "Request Method:",
                   "Using the URLconf")


@override_settings(ROOT_URLCONF=__name__, DEBUG=False)
def test_a_view_that_fails_shows_the_500_page_without_a_traceback(site, caplog):
    client = Client(raise_request_exception=False)
    client.force_login(site.author)
    response = client.get("/test-only/error/")
    assert response.status_code == 500
    text = response.content.decode()
    assert "Something went wrong" in text
    assert [sign for sign in TRACEBACK_SIGNS if sign in text] == []
    assert any(SECRET_DETAIL in record.getMessage() or (record.exc_info and SECRET_DETAIL in str(record.exc_info[1]))
               for record in caplog.records), "the error should be logged for the people who run Earshot"


@override_settings(ROOT_URLCONF=__name__, DEBUG=False)
def test_not_found_and_not_allowed_show_earshots_pages(client, site):
    client.force_login(site.author)
    missing = client.get("/products/999999/")
    assert missing.status_code == 404
    assert "it belongs to a team you are not in" in missing.content.decode()
    denied = client.get("/test-only/denied/")
    assert denied.status_code == 403
    assert "Your roles in this team don't allow that" in denied.content.decode()
    for response in (missing, denied):
        assert [sign for sign in TRACEBACK_SIGNS if sign in response.content.decode()] == []


def test_the_error_templates_stand_alone_where_they_must():
    templates = Path(__file__).parents[2] / "templates"
    for name in ("500.html", "403_csrf.html"):  # rendered without a request: no tags that need one
        text = (templates / name).read_text()
        assert "{%" not in text and "{{" not in text, name


# -- content security policy ------------------------------------------------------------------------------------
class PolicyScan(HTMLParser):
    """Collects what a strict script/style policy would block."""

    def __init__(self):
        super().__init__()
        self.problems: list[str] = []
        self.svg_depth = 0
        self.scripts_with_src: list[dict] = []

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        if tag == "svg":
            self.svg_depth += 1
        if tag == "script":
            if attributes.get("src"):
                self.scripts_with_src.append(attributes)
            else:
                self.problems.append("an inline <script>")
        if tag == "style":
            self.problems.append("a <style> element")
        for name, value in attrs:
            if name.startswith("on"):
                self.problems.append(f"an event-handler attribute {name} on <{tag}>")
            if name in ("href", "src", "action") and (value or "").strip().lower().startswith("javascript:"):
                self.problems.append(f"a javascript: URL on <{tag}>")
            if name == "style" and not self.svg_depth:
                self.problems.append(f"a style attribute on <{tag}> outside the drawing")

    def handle_endtag(self, tag):
        if tag == "svg" and self.svg_depth:
            self.svg_depth -= 1


def test_pages_keep_to_the_content_security_policy(client, site):
    client.force_login(site.author)
    pages = [reverse("product_list"), reverse("review_dashboard"), reverse("rule_list"),
             reverse("draft_edit", args=[site.draft_product.pk]),
             reverse("revision_detail", args=[site.submitted.pk, 1]),
             reverse("revision_review", args=[site.submitted.pk, 1]),
             reverse("review_item", args=[site.kwargs["item_id"]]), reverse("password_change"),
             reverse("library_list", args=[site.kwargs["team_id"]]),
             reverse("library_entry", args=[site.kwargs["entry_id"]]),
             reverse("library_antenna_create", args=[site.kwargs["team_id"]])]
    for url in pages:
        response = client.get(url)
        assert response.status_code == 200, url
        policy = response.headers["Content-Security-Policy"]
        assert "default-src 'self'" in policy and "object-src 'none'" in policy
        assert "frame-ancestors 'none'" in policy
        script_src = next(part for part in policy.split("; ") if part.startswith("script-src "))
        assert "'unsafe-inline'" not in script_src and "'unsafe-eval'" not in script_src
        scan = PolicyScan()
        scan.feed(response.content.decode())
        assert scan.problems == [], f"{url}: {scan.problems}"
        nonce = re.search(r"'nonce-([^']+)'", script_src)
        for script in scan.scripts_with_src:  # the htmx script carries this response's nonce
            assert script["src"].startswith("/static/"), script
            assert nonce and script.get("nonce") == nonce.group(1), (url, script)
    assert client.get(reverse("login")).headers["X-Frame-Options"] == "DENY"


def test_each_response_gets_its_own_nonce(client, site):
    client.force_login(site.author)
    first = client.get(reverse("product_list")).headers["Content-Security-Policy"]
    second = client.get(reverse("product_list")).headers["Content-Security-Policy"]
    assert re.search(r"'nonce-[^']+'", first) and first != second

