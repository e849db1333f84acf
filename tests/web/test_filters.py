"""Filters and action parameters (projectapp/filters.py and the forms that use it): a malformed value is a 400
or a message naming the parameter, never a 500, and the valid filters still apply.

Each case below was a 500: `²` passes str.isdigit() but not int(); 2026-13-45 is a well-formed date that
does not exist; `abc` and `two` are not port counts."""

import json

import pytest
from django.urls import reverse

from projectapp.designs import services
from projectapp.reviews.models import ReviewItem
from projectapp.reviews.services import revision_submit
from tests.web.conftest import EXAMPLES

HTMX = {"HTTP_HX_REQUEST": "true"}
SUPERSCRIPT_TWO = "²"
HUGE = "9" * 400


@pytest.fixture
def reviewed(submitted_product, author):
    """The orchard probe: revision 1 submitted (so it has review items), revision 2 a draft with one
    Touchstone file kept with it."""
    services.draft_get_or_start(product=submitted_product, user=author)
    rows = ["# MHz S RI R 50"] + [f"{f} 0.2 0 0.05 0 0.05 0 0.2 0" for f in range(700, 2201, 50)]
    draft = submitted_product.draft
    antennas = json.loads((EXAMPLES / "orchard-probe.json").read_text())["antennas"]
    assert antennas, "the orchard probe has an antenna to map a port to"
    services.measurement_add(revision=draft, name="probe.s2p", content=("\n".join(rows) + "\n").encode(),
                             user=author)
    return submitted_product


GET_CASES = [
    ("review_dashboard", {"product": SUPERSCRIPT_TWO}, "product: expected a product"),
    ("review_dashboard", {"assignee": SUPERSCRIPT_TWO}, "assignee: expected me, nobody or a person"),
    ("review_dashboard", {"product": HUGE}, "product: expected a product"),
    ("review_dashboard", {"severity": "fatal"}, "severity: expected one of blocker, warning, note"),
    ("review_dashboard", {"topic": "vibes", "state": "closed"}, "topic: expected one of antenna-count"),
    ("archive_list", {"since": "2026-13-45"}, "since: expected a date as YYYY-MM-DD"),
    ("archive_list", {"until": "yesterday"}, "until: expected a date as YYYY-MM-DD"),
    ("archive_list", {"product": SUPERSCRIPT_TWO}, "product: expected a product"),
    ("archive_list", {"signer": SUPERSCRIPT_TWO}, "signer: expected a signer"),
    ("archive_list", {"q": "probe\x00"}, "q: control character U+0000 not allowed"),
    ("archive_list", {"category": "cat-99"}, "category: expected one of cat-nb1"),
    ("product_list", {"state": "submitted"}, "state: expected one of draft, in-review, signing, signed"),
    ("product_list", {"team": SUPERSCRIPT_TWO}, "team: expected a team"),
    ("product_list", {"raises": "fatal"}, "raises: expected one of blocker, warning, note"),
    ("product_list", {"category": "\x00"}, "category: expected one of cat-nb1"),
    ("product_list", {"q": "x" * 201}, "q: expected at most 200 characters"),
    ("product_list", {"page": SUPERSCRIPT_TWO}, "page: expected a page number"),
    ("product_list", {"page": "0"}, "page: expected a page number"),
    ("review_dashboard", {"page": HUGE}, "page: expected a page number"),
    ("archive_list", {"page": "-3"}, "page: expected a page number"),
    ("revision_compare", {"from": SUPERSCRIPT_TWO, "to": SUPERSCRIPT_TWO}, "from: expected a revision number"),
    ("revision_compare", {"to": HUGE}, "to: expected a revision number"),
]


@pytest.mark.parametrize(("name", "query", "expected"), GET_CASES,
                         ids=[f"{name}-{'-'.join(query)}" for name, query, _ in GET_CASES])
def test_a_malformed_filter_is_a_400_that_names_it(client, reviewed, author, name, query, expected):
    client.force_login(author)
    url = reverse(name, args=[reviewed.pk]) if name == "revision_compare" else reverse(name)
    for headers in ({}, HTMX):
        response = client.get(url, query, **headers)
        assert response.status_code == 400, (url, query, response.status_code)
        assert expected in response.content.decode().replace("&#x27;", "'"), (url, query)


def test_the_valid_filters_still_apply_beside_a_malformed_one(client, reviewed, product, author):
    revision_submit(revision=product.draft, user=author)  # the hive gateway: blockers to notes
    client.force_login(author)
    # The dashboard lists what the team decides (steps outside the team are planned on the review page).
    items = ReviewItem.objects.filter(revision__product=product, kind="raised", process_step__isnull=True)
    warnings = items.filter(severity="warning").count()
    assert warnings and warnings < items.count()
    page = client.get(reverse("review_dashboard"), {"severity": "warning", "state": "all", "product": product.pk,
                                                    "assignee": SUPERSCRIPT_TWO})
    assert page.status_code == 400
    assert f">{warnings} item{'s' if warnings != 1 else ''}<" in page.content.decode()  # the pager counts the filtered
    assert client.get(reverse("review_dashboard"), {"severity": "note", "state": "all"}).status_code == 200
    assert client.get(reverse("archive_list"), {"since": "2026-01-01", "state": "current"}).status_code == 200
    assert client.get(reverse("revision_compare", args=[reviewed.pk]), {"from": 1, "to": 2}).status_code == 200


ACTIONS = [f"remove:{SUPERSCRIPT_TWO}", f"duplicate:{SUPERSCRIPT_TWO}", "duplicate:99999999999999999999",
           "remove:-1", "launch", "add:0"]


@pytest.mark.parametrize("action", ACTIONS)
def test_a_malformed_antenna_action_is_refused_and_nothing_changes(client, reviewed, author, action):
    client.force_login(author)
    url = reverse("draft_section_save", args=[reviewed.pk, "antennas"])
    before = reviewed.draft.document
    data = {"antennas[0].name": "RENAMED", "antennas[0].role": "main", "action": action,
            "version": reviewed.draft.version}
    response = client.post(url, data, **HTMX)
    page = response.content.decode()
    assert response.status_code == 400 and "Nothing was saved: action: expected add, remove:N or duplicate:N" in page
    response = client.post(url, data, follow=True)
    assert "Nothing was saved: action: expected add" in response.content.decode()
    assert reviewed.draft.document == before


def test_an_unknown_region_preset_is_refused(client, reviewed, author):
    client.force_login(author)
    response = client.post(reverse("draft_section_save", args=[reviewed.pk, "product"]),
                           {"product.name": "Orchard soil probe", "preset": "atlantis",
                            "version": reviewed.draft.version}, **HTMX)
    assert response.status_code == 400 and "preset: expected one of the region presets" in response.content.decode()


@pytest.mark.parametrize("count", ["abc", "two", SUPERSCRIPT_TWO, "-1", "65", HUGE, ""])
def test_a_malformed_port_count_is_a_message_and_the_port_map_stays(client, reviewed, author, count):
    client.force_login(author)
    before = reviewed.draft.document
    response = client.post(reverse("measurement_ports", args=[reviewed.pk]),
                           {"file": "probe.s2p", "port_count": count, "port-0": "ANT1",
                            "version": reviewed.draft.version}, follow=True)
    page = response.content.decode()
    assert response.status_code == 200 and "port_count: expected" in page and "nothing was changed" in page
    assert reviewed.draft.document == before


def test_a_port_named_with_a_nul_is_refused_and_the_port_map_stays(client, reviewed, author):
    client.force_login(author)
    before = reviewed.draft.document
    response = client.post(reverse("measurement_ports", args=[reviewed.pk]),
                           {"file": "probe.s2p", "port_count": "2", "port-0": "A\x00", "port-1": "",
                            "version": reviewed.draft.version}, follow=True)
    assert "port-0: Null characters are not allowed" in response.content.decode()
    assert reviewed.draft.document == before


def test_a_valid_port_map_still_saves(client, reviewed, author):
    client.force_login(author)
    name = reviewed.draft.document["antennas"][0]["name"]
    client.post(reverse("measurement_ports", args=[reviewed.pk]),
                {"file": "probe.s2p", "port_count": "2", "port-0": "", "port-1": name,
                 "version": reviewed.draft.version})
    [entry] = reviewed.draft.document["measurements"]
    assert entry["ports"] == [None, name]
