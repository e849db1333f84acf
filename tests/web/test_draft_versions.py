"""Two people editing one draft: each save is a read-modify-write of its own part under the row lock, so
saves of different parts both land, and a save of a part someone changed since the page was read is a 409
that shows their change, stores nothing and keeps what the second person typed."""

import threading
import time

import pytest
from django.core.files.uploadedfile import SimpleUploadedFile
from django.db import connection
from django.test import Client
from django.urls import reverse

from projectapp.designs import questionnaire, services
from projectapp.designs.models import MeasurementFile, Revision
from projectapp.teams.models import Role, Team
from tests.web.conftest import EXAMPLES, make_user
from tests.web.test_page_cache import SectionForm

HTMX = {"HTTP_HX_REQUEST": "true"}
GOOD_S2P = (EXAMPLES / "field-router-revA.s2p").read_bytes()


def signed_in(user) -> Client:
    client = Client()
    client.force_login(user)
    return client


def page_form(client, product, slug: str) -> dict[str, list[str]]:
    """What the browser would post for a section, as the page shows it now (the version included)."""
    form = SectionForm(f"section-{slug}")
    form.feed(client.get(reverse("draft_edit", args=[product.pk])).content.decode())
    return form.data()


def save(client, product, slug: str, data: dict, **extra):
    return client.post(reverse("draft_section_save", args=[product.pk, slug]), data, **extra)


def draft_of(product) -> Revision:
    return Revision.objects.get(product=product, state="draft")


@pytest.fixture
def second_author(team):
    return make_user("tobias", team, Role.AUTHOR)


def test_a_stale_antenna_save_keeps_the_antenna_another_session_added(product, author, second_author):
    mine, theirs = signed_in(author), signed_in(second_author)
    stale = page_form(mine, product, "antennas")
    added = save(theirs, product, "antennas", {**page_form(theirs, product, "antennas"), "action": "add"})
    assert added.status_code == 302
    assert [a["name"] for a in draft_of(product).document["antennas"]] == ["MAIN", "DIV", "ANT1"]

    stale["antennas[1].position_mm[0]"] = ["99"]  # what I typed on my page, which still shows two antennas
    answer = save(mine, product, "antennas", stale, **HTMX)

    assert answer.status_code == 409
    assert answer["HX-Reswap"] == "none", "the inputs keep what I typed; only the conflict box is sent"
    text = answer.content.decode()
    assert "Conflict." in text and "tobias" in text and "antennas[2]" in text and "ANT1" in text
    document = draft_of(product).document
    assert [a["name"] for a in document["antennas"]] == ["MAIN", "DIV", "ANT1"], "their antenna is kept"
    assert document["antennas"][1]["position_mm"][0] == 60, "nothing of mine was stored"


def test_without_javascript_a_conflict_shows_the_page_with_what_i_typed(product, author, second_author):
    mine, theirs = signed_in(author), signed_in(second_author)
    stale = page_form(mine, product, "deployment")
    fresh = page_form(theirs, product, "deployment")
    assert save(theirs, product, "deployment", {**fresh, "deployment.body_distance_mm": "400"}).status_code == 302

    answer = save(mine, product, "deployment", {**stale, "deployment.body_distance_mm": "250"})

    assert answer.status_code == 409
    text = answer.content.decode()
    assert 'value="250"' in text, "my entry is kept in the form"
    assert "deployment.body_distance_mm" in text and "150 → 400" in text, "their change is shown"
    assert draft_of(product).document["deployment"]["body_distance_mm"] == 400


def test_saving_mine_over_theirs_after_a_conflict_replaces_their_change(product, author, second_author):
    mine, theirs = signed_in(author), signed_in(second_author)
    stale = page_form(mine, product, "deployment")
    save(theirs, product, "deployment", {**page_form(theirs, product, "deployment"),
                                         "deployment.body_distance_mm": "400"})
    conflict = save(mine, product, "deployment", {**stale, "deployment.body_distance_mm": "250"}, **HTMX)
    assert conflict.status_code == 409
    overwrite = f'name="overwrite" value="{draft_of(product).version}"'
    assert overwrite in conflict.content.decode()

    again = save(mine, product, "deployment", {**stale, "deployment.body_distance_mm": "250",
                                               "overwrite": str(draft_of(product).version)}, **HTMX)
    assert again.status_code == 200
    assert draft_of(product).document["deployment"]["body_distance_mm"] == 250


def test_stale_saves_of_different_sections_both_land(product, author, second_author):
    mine, theirs = signed_in(author), signed_in(second_author)
    my_page = page_form(mine, product, "enclosure")
    their_page = page_form(theirs, product, "deployment")
    assert save(theirs, product, "deployment", {**their_page, "deployment.body_distance_mm": "400"},
                **HTMX).status_code == 200
    assert save(mine, product, "enclosure", {**my_page, "enclosure.material": "metal"}, **HTMX).status_code == 200
    document = draft_of(product).document
    assert document["deployment"]["body_distance_mm"] == 400 and document["enclosure"]["material"] == "metal"


def test_my_own_saves_in_a_row_never_conflict(product, author):
    """Each answer carries the new version for the section's form (htmx puts it in place)."""
    client = signed_in(author)
    data = page_form(client, product, "deployment")
    for distance in ("200", "300", "400"):
        answer = save(client, product, "deployment", {**data, "deployment.body_distance_mm": distance,
                                                       "answer": "messages"}, **HTMX)
        assert answer.status_code == 200
        text = answer.content.decode()
        version = draft_of(product).version
        assert f'name="version" value="{version}" id="section-deployment-version" hx-swap-oob="true"' in text
        assert 'name="deployment.body_distance_mm"' not in text, "the answer never carries the inputs back"
        data["version"] = [str(version)]
    assert draft_of(product).document["deployment"]["body_distance_mm"] == 400


def test_a_save_without_a_readable_version_stores_nothing(product, author):
    client = signed_in(author)
    data = page_form(client, product, "deployment")
    before = draft_of(product).document
    for version in (["²"], ["-1"], ["9" * 400], ["two"]):
        answer = save(client, product, "deployment", {**data, "version": version,
                                                       "deployment.body_distance_mm": "5"}, **HTMX)
        assert answer.status_code == 400 and "version: expected" in answer.content.decode()
    # No version at all reads as "saw none": refused, since the import changed this section.
    missing = save(client, product, "deployment", {**data, "version": [], "deployment.body_distance_mm": "5"})
    assert missing.status_code == 409
    assert draft_of(product).document == before


def test_a_stale_import_is_refused_and_changes_nothing(client, product, author, second_author):
    mine, theirs = signed_in(author), signed_in(second_author)
    import_page = mine.get(reverse("design_import", args=[product.pk])).content.decode()
    read = draft_of(product).version
    assert f'name="version" value="{read}"' in import_page
    save(theirs, product, "deployment", {**page_form(theirs, product, "deployment"),
                                         "deployment.body_distance_mm": "400"})
    answer = mine.post(reverse("design_import", args=[product.pk]), {
        "version": read, "design_file": SimpleUploadedFile("hive.json", (EXAMPLES / "hive-gateway.json").read_bytes())})
    assert answer.status_code == 409
    assert "tobias" in answer.content.decode() and "150 → 400" in answer.content.decode()
    assert draft_of(product).document["deployment"]["body_distance_mm"] == 400


def test_measurement_changes_bump_the_version_and_stale_ones_are_refused(product, author, second_author):
    mine, theirs = signed_in(author), signed_in(second_author)
    start = draft_of(product).version
    mine.post(reverse("measurement_upload", args=[product.pk]),
              {"touchstone": SimpleUploadedFile("pair.s2p", GOOD_S2P), "version": start})
    read = draft_of(product).version
    assert read == start + 1
    ports = {"file": "pair.s2p", "port_count": "2", "version": read}
    assert theirs.post(reverse("measurement_ports", args=[product.pk]),
                       {**ports, "port-0": "DIV", "port-1": "MAIN"}).status_code == 302
    assert draft_of(product).version == read + 1

    stale_map = mine.post(reverse("measurement_ports", args=[product.pk]), {**ports, "port-0": "MAIN", "port-1": ""})
    assert stale_map.status_code == 409
    assert "tobias" in stale_map.content.decode() and "Save my port map over theirs" in stale_map.content.decode()
    stale_remove = mine.post(reverse("measurement_remove", args=[product.pk]), {"file": "pair.s2p", "version": read})
    assert stale_remove.status_code == 409
    assert draft_of(product).document["measurements"] == [{"file": "pair.s2p", "ports": ["DIV", "MAIN"]}]
    assert MeasurementFile.objects.filter(name="pair.s2p").exists()

    fresh = draft_of(product).version
    assert mine.post(reverse("measurement_remove", args=[product.pk]),
                     {"file": "pair.s2p", "version": fresh}).status_code == 302
    assert draft_of(product).version == fresh + 1 and not MeasurementFile.objects.exists()


def test_a_measurement_added_meanwhile_survives_a_section_save(product, author, reviewer):
    """An upload writes into the document as it is now; a save of a section after it keeps it."""
    client = signed_in(author)
    data = page_form(client, product, "deployment")
    services.measurement_add(revision=draft_of(product), name="pair.s2p", content=GOOD_S2P, user=reviewer)
    assert save(client, product, "deployment", {**data, "deployment.body_distance_mm": "90"}).status_code == 302
    document = draft_of(product).document
    assert document["measurements"][0]["file"] == "pair.s2p" and document["deployment"]["body_distance_mm"] == 90


# -- at the same moment: two threads, two database connections ------------------------------------------------

@pytest.fixture
def slow_reads(monkeypatch):
    """Each section save holds on 0.3 s between reading the document and writing it, so two saves that are
    sent together overlap: without the row lock, the later write would drop the earlier one's change."""
    original = questionnaire.apply_section

    def slow(document, section, data):
        time.sleep(0.3)
        return original(document, section, data)

    monkeypatch.setattr(questionnaire, "apply_section", slow)


@pytest.mark.django_db(transaction=True)
def test_two_sessions_saving_different_sections_at_once_both_persist(slow_reads):
    team = Team.objects.create(name="Tallow Creek Instruments")
    maren, tobias = make_user("maren", team, Role.AUTHOR), make_user("tobias", team, Role.AUTHOR)
    product = services.product_create(team=team, name="Hive gateway", user=maren)
    services.design_import(product=product, text=(EXAMPLES / "hive-gateway.json").read_text(),
                           source="hive-gateway.json", user=maren)
    clients = {"maren": signed_in(maren), "tobias": signed_in(tobias)}
    posts = {"maren": ("enclosure", {**page_form(clients["maren"], product, "enclosure"),
                                     "enclosure.material": "metal"}),
             "tobias": ("deployment", {**page_form(clients["tobias"], product, "deployment"),
                                       "deployment.body_distance_mm": "400"})}
    start = threading.Barrier(2)
    statuses: dict[str, int] = {}

    def post(name: str) -> None:
        try:
            start.wait()
            slug, data = posts[name]
            statuses[name] = save(clients[name], product, slug, data).status_code
        finally:
            connection.close()  # each thread's own connection

    threads = [threading.Thread(target=post, args=(name,)) for name in posts]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=60)
    assert statuses == {"maren": 302, "tobias": 302}
    document = draft_of(product).document
    assert document["enclosure"]["material"] == "metal", "maren's save was lost"
    assert document["deployment"]["body_distance_mm"] == 400, "tobias's save was lost"
    assert draft_of(product).version == 4  # created 1, imported 2, then one version per save
