"""Pages served from the cache (projectapp.fragments): each reader gets their own CSRF token, name, messages
and CSP nonce; nothing typed can forge a marker; everything a page shows names its cached copy, so a change
is seen at once; the signed-in person read from the cache is forgotten when their row changes."""

import html.parser
import re

import pytest
from django.test import Client
from django.urls import reverse

from projectapp import fragments
from projectapp.designs import services, views
from projectapp.designs.models import Product
from projectapp.teams.models import Membership
from tests.web.conftest import EXAMPLES, PASSWORD

TOKEN = re.compile(r'name="csrfmiddlewaretoken" value="([^"]+)"')


class SectionForm(html.parser.HTMLParser):
    """The fields a browser sends for one questionnaire section, as the page shows them."""

    def __init__(self, form_id: str):
        super().__init__()
        self.form_id, self.inside, self.fields, self._select = form_id, False, [], None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "form":
            self.inside = a.get("id") == self.form_id
        elif self.inside and tag == "input" and a.get("name") and a.get("type") not in ("submit", "button"):
            if a.get("type") not in ("checkbox", "radio"):
                self.fields.append((a["name"], a.get("value") or ""))
            elif "checked" in a:  # a ticked box without a value sends "on", as a browser does
                self.fields.append((a["name"], a.get("value") or "on"))
        elif self.inside and tag == "select":
            self._select = (a["name"], None)
        elif self.inside and tag == "option" and self._select and (self._select[1] is None or "selected" in a):
            self._select = (self._select[0], a.get("value") or "")

    def data(self) -> dict[str, list[str]]:
        posted: dict[str, list[str]] = {}
        for name, value in self.fields:
            posted.setdefault(name, []).append(value)
        return posted

    def handle_endtag(self, tag):
        if tag == "select" and self._select:
            self.fields.append((self._select[0], self._select[1] or ""))
            self._select = None
        elif tag == "form":
            self.inside = False


def signed_in(user, *, enforce_csrf: bool = False) -> Client:
    client = Client(enforce_csrf_checks=enforce_csrf)
    client.force_login(user)
    return client


@pytest.fixture
def drawn(monkeypatch):
    """Counts how often a revision page's checklist is worked out (only when no cached copy serves)."""
    calls = []
    original = views.checklist_for

    def counting(revision):
        calls.append(revision.pk)
        return original(revision)

    monkeypatch.setattr(views, "checklist_for", counting)
    return calls


def test_two_readers_of_one_cached_page_each_get_their_own_token_and_name(submitted_product, author, team, drawn):
    from tests.web.conftest import make_user

    # Same roles: a frozen revision's page offers authors "start a draft from it" and reviewers a measurement
    # draft, so the roles are part of its key.
    reviewer = make_user("reviewer", team, "author")
    url = submitted_product.latest.get_absolute_url()
    first, second = signed_in(author, enforce_csrf=True), signed_in(reviewer, enforce_csrf=True)
    page_first = first.get(url).content.decode()
    page_second = second.get(url).content.decode()
    assert len(drawn) == 1, "the second reader is served the cached page"
    assert "earshot:" not in page_first + page_second, "no marker is left in a served page"
    assert "<span>author</span>" in page_first and "<span>author</span>" not in page_second
    assert "<span>reviewer</span>" in page_second and "<span>reviewer</span>" not in page_first
    assert TOKEN.search(page_first) is None, "a page that changes nothing carries no token"


def test_two_authors_of_one_cached_draft_page_each_get_their_own_token(product, author, team, drawn):
    from tests.web.conftest import make_user

    other = make_user("second-author", team, "author")
    url = reverse("draft_edit", args=[product.pk])
    first, second = signed_in(author, enforce_csrf=True), signed_in(other, enforce_csrf=True)
    page_first = first.get(url).content.decode()
    page_second = second.get(url).content.decode()
    assert len(drawn) == 1, "the second author is served the cached page"
    assert "earshot:" not in page_first + page_second
    tokens_first, tokens_second = set(TOKEN.findall(page_first)), set(TOKEN.findall(page_second))
    assert len(tokens_first) == len(tokens_second) == 1 and tokens_first != tokens_second
    # Each token is good for its own session only: submitting the draft is a CSRF-protected POST.
    submit = reverse("draft_submit", args=[product.pk])
    assert second.post(submit, {"csrfmiddlewaretoken": tokens_first.pop()}).status_code == 403
    assert second.post(submit, {"csrfmiddlewaretoken": tokens_second.pop()}).status_code == 302


def test_a_cached_page_carries_the_nonce_of_its_own_response(submitted_product, author, reviewer):
    url = submitted_product.latest.get_absolute_url()
    for client in (signed_in(author), signed_in(reviewer), signed_in(reviewer)):
        response = client.get(url)
        header = re.search(r"'nonce-([^']+)'", response["Content-Security-Policy"])[1]
        nonces = re.findall(r'<script [^>]*nonce="([^"]+)"', response.content.decode())
        assert nonces and set(nonces) == {header}  # htmx and earshot.js, each with this response's nonce


def test_text_typed_into_a_design_cannot_forge_a_marker(submitted_product, author):
    markers = " ".join(mark for mark in (fragments.CSRF_MARK, fragments.NAME_MARK, fragments.FLASH_MARK,
                                         fragments.NONCE_MARK))
    Product.objects.filter(pk=submitted_product.pk).update(description=markers, name=f"Probe {markers}")
    client = signed_in(author)
    for url in (reverse("product_list"), submitted_product.latest.get_absolute_url()):
        page = client.get(url).content.decode()
        assert "&lt;!--earshot:csrf--&gt;" in page, url  # shown as typed, escaped
        assert not TOKEN.findall(page), url  # the page has no form, so no token at all
        assert page.count("<span>author</span>") == 2, url  # the header's bar and its phone menu, nothing forged


def test_flash_messages_reach_a_cached_page_once(product, author):
    client = signed_in(author)
    url = reverse("draft_edit", args=[product.pk])
    client.get(url)  # the draft page is now cached for this state
    client.post(reverse("draft_section_save", args=[product.pk, "deployment"]),
                {"deployment.environment": "urban", "deployment.body_distance_mm": "250",
                 "version": product.draft.version})
    assert "Deployment saved." in client.get(url).content.decode()
    assert "Deployment saved." not in client.get(url).content.decode()


def test_every_change_a_page_shows_gives_a_fresh_page(client, product, submitted_product, author, reviewer):
    author_client, reviewer_client = signed_in(author), signed_in(reviewer)
    revision_url = submitted_product.latest.get_absolute_url()
    assert "Orchard soil probe" in reviewer_client.get(revision_url).content.decode()
    submitted_product.name = "Orchard soil probe mk2"
    submitted_product.save()
    assert "Orchard soil probe mk2" in reviewer_client.get(revision_url).content.decode()
    assert "Orchard soil probe mk2" in reviewer_client.get(reverse("product_list")).content.decode()

    draft_url = reverse("draft_edit", args=[product.pk])
    assert 'value="4321"' not in author_client.get(draft_url).content.decode()
    author_client.post(reverse("draft_section_save", args=[product.pk, "deployment"]),
                       {"deployment.environment": "urban", "deployment.body_distance_mm": "4321",
                        "version": product.draft.version})
    assert 'value="4321"' in author_client.get(draft_url).content.decode()

    Membership.objects.filter(user=reviewer).delete()
    assert reviewer_client.get(revision_url).status_code == 404


def test_saving_the_same_values_again_keeps_the_drafts_state(product, author):
    client = signed_in(author)
    draft = product.draft
    key, saved_at = draft.cache_identity, draft.updated_at
    form = SectionForm("section-deployment")
    form.feed(client.get(reverse("draft_edit", args=[product.pk])).content.decode())
    fields = form.data()
    assert "deployment.environment" in fields
    response = client.post(reverse("draft_section_save", args=[product.pk, "deployment"]), fields,
                           HTTP_HX_REQUEST="true")
    assert response.status_code == 200 and "Saved" in response.content.decode()
    draft.refresh_from_db()
    assert draft.cache_identity == key and draft.updated_at == saved_at, "nothing new to store"
    services.measurement_add(revision=draft, name="pair.s2p", user=author,
                             content=(EXAMPLES / "field-router-revA.s2p").read_bytes())
    draft.refresh_from_db()
    assert draft.cache_identity != key, "a new measurement file is a new state"


def test_a_new_password_or_a_deactivation_ends_other_sessions_at_once(submitted_product, reviewer, settings):
    settings.EARSHOT_SHARED_CACHE = True  # as in production: the person is read from the cache
    url = submitted_product.latest.get_absolute_url()
    kept = signed_in(reviewer)
    assert kept.get(url).status_code == 200  # the person is now read from the cache
    reviewer.set_password(PASSWORD + "-new")
    reviewer.save()
    assert kept.get(url).status_code == 302, "the old session ends with the old password"

    again = signed_in(reviewer)
    assert again.get(url).status_code == 200
    reviewer.is_active = False
    reviewer.save()
    assert again.get(url).status_code == 302


def test_the_code_stamp_follows_the_templates(tmp_path, settings):
    (tmp_path / "templates").mkdir()
    template = tmp_path / "templates" / "page.html"
    template.write_text("one")
    settings.BASE_DIR = tmp_path
    fragments.code_stamp.cache_clear()
    try:
        before = fragments.code_stamp()
        template.write_text("two")
        fragments.code_stamp.cache_clear()
        assert fragments.code_stamp() != before
    finally:
        fragments.code_stamp.cache_clear()


@pytest.mark.parametrize("slug", ["product", "enclosure", "antennas", "deployment"])
def test_the_section_in_an_htmx_answer_is_the_section_on_the_page(product, author, slug):
    client = signed_in(author)
    page = client.get(reverse("draft_edit", args=[product.pk])).content.decode()
    form = SectionForm(f"section-{slug}")
    form.feed(page)
    answer = client.post(reverse("draft_section_save", args=[product.pk, slug]), form.data(),
                         HTTP_HX_REQUEST="true").content.decode()

    def section(html: str) -> str:
        found = re.search(rf'<form id="section-{slug}".*?</form>', html, re.S)[0]
        found = TOKEN.sub('name="csrfmiddlewaretoken" value=""', found)
        return re.sub(r'<span class="saved-note[^>]*>.*?</span>', "", found, flags=re.S)

    assert section(answer) == section(page)


def test_with_debug_on_every_page_is_drawn_afresh(submitted_product, author, settings, drawn):
    settings.DEBUG = True  # a developer's machine: template edits show at once
    client = signed_in(author)
    url = submitted_product.latest.get_absolute_url()
    pages = [client.get(url).content.decode() for _ in range(2)]
    assert len(drawn) == 2 and "earshot:" not in pages[0] + pages[1]
    assert "<span>author</span>" in pages[1]


def test_a_draft_changed_and_changed_back_is_served_with_its_current_version(product, author):
    """The content is as before, but the forms must carry the new version: a page cached at the old one would
    make every save look stale. The cache identity names the version, so the page is drawn anew."""
    client = signed_in(author)
    url = reverse("draft_edit", args=[product.pk])
    first = client.get(url).content.decode()
    key = product.draft.cache_identity
    form = SectionForm("section-deployment")
    form.feed(first)
    for distance in ("999", "150"):  # 150 is the example's value: back where it started
        fields = {**form.data(), "deployment.body_distance_mm": distance, "version": product.draft.version}
        client.post(reverse("draft_section_save", args=[product.pk, "deployment"]), fields)
    draft = product.draft
    assert draft.document["deployment"]["body_distance_mm"] == 150 and draft.cache_identity != key
    page = client.get(url).content.decode()
    assert f'name="version" value="{draft.version}" id="section-deployment-version"' in page
    assert f'value="{draft.version - 2}" id="section-deployment-version"' in first


def test_the_code_stamp_follows_the_static_files_a_page_links(tmp_path, settings):
    """A stylesheet-only deploy starts afresh: a cached page names the stylesheet (by its hashed name in
    production), so the stamp covers the static files too."""
    from django.contrib.staticfiles import finders

    static = tmp_path / "static"
    static.mkdir()
    sheet = static / "earshot-extra.css"
    sheet.write_text("body { color: black; }")
    settings.STATICFILES_DIRS = [static]

    def stamp() -> str:
        finders.get_finder.cache_clear()
        fragments.code_stamp.cache_clear()
        return fragments.code_stamp()

    try:
        before = stamp()
        sheet.write_text("body { color: navy; }")
        assert stamp() != before
    finally:
        finders.get_finder.cache_clear()
        fragments.code_stamp.cache_clear()


def test_with_hashed_static_names_the_stamp_follows_the_manifest(tmp_path, settings):
    from django.contrib.staticfiles.storage import staticfiles_storage

    settings.STATIC_ROOT = tmp_path
    settings.STORAGES = {**settings.STORAGES, "staticfiles": {
        "BACKEND": "django.contrib.staticfiles.storage.ManifestStaticFilesStorage"}}
    manifest = tmp_path / "staticfiles.json"
    manifest.write_text('{"paths": {"earshot/earshot.css": "earshot/earshot.1111.css"}, "version": "1.1"}')
    try:
        staticfiles_storage._setup()  # the storage the settings now name, reading this manifest
        fragments.code_stamp.cache_clear()
        before = fragments.code_stamp()
        manifest.write_text('{"paths": {"earshot/earshot.css": "earshot/earshot.2222.css"}, "version": "1.1"}')
        fragments.code_stamp.cache_clear()
        assert fragments.code_stamp() != before
    finally:
        fragments.code_stamp.cache_clear()
