"""The draft's page while it is being filled in: the partial checklist and its to-do list, Undo remove through
the versioned save, the focus each redraw asks for, the submit refusal in plain words."""

import json
import re

from django.urls import reverse

from benchmarks.section_save import page_form
from projectapp.audit.models import AuditEvent
from projectapp.designs import services
from projectapp.designs.models import Product
from tests.web.conftest import EXAMPLES, make_user

HTMX = {"HTTP_HX_REQUEST": "true"}


def save(client, product, section: str, data: dict, **extra):
    return client.post(reverse("draft_section_save", args=[product.pk, section]),
                       {"version": Product.objects.get(pk=product.pk).draft.version, **data}, **extra)


def antennas_form(document: dict) -> dict:
    """The antenna section's inputs as the page shows them, as a browser posts them."""
    return page_form(document)


def document_of(product) -> dict:
    return Product.objects.get(pk=product.pk).draft.document


def test_a_new_products_draft_opens_on_its_checklist_with_what_is_still_to_answer(client, team, author):
    product = services.product_create(team=team, name="Gate opener", user=author)
    client.force_login(author)
    page = client.get(reverse("draft_edit", args=[product.pk])).content.decode()
    assert "can&#x27;t be checked yet" not in page and "expected a list" not in page
    assert 'id="checklist-todo"' in page and "UE category: not answered yet" in page and "Bands: not answered yet" in page
    assert 'href="#q-modem-category"' in page  # each to-do links to its question
    assert "CRT-002" in page  # the notes that need no answer are there from the start
    assert "no band chosen yet" in page
    assert document_of(product)["product"] == {"name": "Gate opener"}  # no hardware revision invented
    listed = client.get(reverse("product_list")).content.decode()
    assert "not finished: 2 questions to answer" in listed


def test_a_typo_keeps_the_checklist_the_drawing_and_the_band_table(client, product, author):
    client.force_login(author)
    document = document_of(product)
    data = antennas_form(document)
    data["antennas[1].position_mm[1]"] = "1O"
    page = save(client, product, "antennas", {**data, "answer": "messages"}, **HTMX).content.decode()
    assert "Feed point position, y: &quot;1O&quot; is not a number" in page
    assert "DIV · Feed point position, y: &quot;1O&quot; is not a number" in page  # in the to-do list
    assert "Feed point positions: " in page and 'id="bands"' in page and "B20" in page
    assert re.search(r"count-note\">\d+ note", page)
    figures = client.get(reverse("draft_edit", args=[product.pk]) + "?part=figures", **HTMX).content.decode()
    assert "<svg" in figures and "DIV (receive, internal) is not placed" in figures  # MAIN still drawn in place


def test_undo_remove_puts_the_antenna_back_through_the_versioned_save(client, product, author):
    client.force_login(author)
    before = document_of(product)
    page = save(client, product, "antennas", {**antennas_form(before), "action": "remove:1"}, **HTMX).content.decode()
    assert [row["name"] for row in document_of(product)["antennas"]] == ["MAIN"]
    event = AuditEvent.objects.filter(revision=product.draft).latest("id")
    assert f'value="restore:{event.pk}" id="undo-remove"' in page and 'data-focus="undo-remove"' in page
    # The offer is on the page after a reload too (it comes from the audit trail).
    assert f'value="restore:{event.pk}"' in client.get(reverse("draft_edit", args=[product.pk])).content.decode()

    after = document_of(product)
    page = save(client, product, "antennas", {**antennas_form(after), "action": f"restore:{event.pk}"},
                **HTMX).content.decode()
    assert document_of(product)["antennas"] == before["antennas"]  # every value, in its row
    restored = AuditEvent.objects.filter(revision=product.draft).latest("id")
    assert restored.summary.startswith("Restored antenna DIV (removed in version")
    assert "undo-remove" not in page.split('data-focus="')[0]  # the offer is gone
    assert 'id="undo-remove"' not in page

    again = save(client, product, "antennas", {**antennas_form(before), "action": f"restore:{event.pk}"}, **HTMX)
    assert again.status_code == 400 and "nothing to restore" in again.content.decode()
    assert document_of(product)["antennas"] == before["antennas"]


def test_undo_remove_takes_only_this_drafts_removals(client, product, author, team):
    other = services.product_create(team=team, name="Second gateway", user=author)
    services.design_import(product=other, text=(EXAMPLES / "hive-gateway.json").read_text(), source="h.json",
                           user=author)
    client.force_login(author)
    save(client, other, "antennas", {**antennas_form(document_of(other)), "action": "remove:1"})
    elsewhere = AuditEvent.objects.filter(revision=other.draft).latest("id")
    before = document_of(product)
    response = save(client, product, "antennas", {**antennas_form(before), "action": f"restore:{elsewhere.pk}"},
                    **HTMX)
    assert response.status_code == 400 and document_of(product) == before
    assert [row["name"] for row in document_of(other)["antennas"]] == ["MAIN"]


def test_an_outsider_cannot_restore_and_a_bad_action_is_refused(client, product, author, outsider):
    event = AuditEvent.objects.filter(revision=product.draft).latest("id")
    client.force_login(outsider)
    assert save(client, product, "antennas", {"action": f"restore:{event.pk}"}).status_code == 404
    client.force_login(author)
    for action in ("restore:", "restore:x", "restore:" + "9" * 19, "drop-bands:1"):
        response = save(client, product, "antennas", {"action": action}, **HTMX)
        assert response.status_code == 400, action


def test_each_redraw_says_where_the_focus_belongs(client, product, author):
    client.force_login(author)
    document = document_of(product)
    page = save(client, product, "antennas", {**antennas_form(document), "action": "add"}, **HTMX).content.decode()
    assert 'data-focus="q-antennas-2-name"' in page
    page = save(client, product, "antennas", {**antennas_form(document_of(product)), "action": "duplicate:0"},
                **HTMX).content.decode()
    assert 'data-focus="q-antennas-1-name"' in page
    modem = {"product.name": "Hive gateway", "modem.category": "cat-1", "preset": "europe-lte"}
    page = save(client, product, "product", modem, **HTMX).content.decode()
    assert 'data-focus="preset-europe-lte"' in page and 'id="preset-europe-lte"' in page
    page = save(client, product, "deployment", {"deployment.body_distance_mm": "400", "answer": "messages"},
                **HTMX).content.decode()
    assert "data-focus" not in page  # an answer that doesn't redraw moves nothing


def test_the_saved_time_is_a_time_element_the_browser_shows_in_local_time(client, product, author):
    client.force_login(author)
    page = save(client, product, "deployment", {"deployment.body_distance_mm": "400", "answer": "messages"},
                **HTMX).content.decode()
    assert re.search(r'Saved <time datetime="\d{4}-\d\d-\d\dT[\d:.]+\+00:00" data-local-time>\d\d:\d\d:\d\d UTC</time>',
                     page)


def test_a_category_switch_offers_to_drop_the_bands_and_the_drop_is_one_save(client, product, author):
    client.force_login(author)
    modem = {"product.name": "Hive gateway", "modem.category": "nr-redcap", "modem.bands": ["B3", "B8", "B20"]}
    page = save(client, product, "product", modem, **HTMX).content.decode()
    assert "B3, B8, B20 are bands this category can't use" in page and 'value="drop-bands"' in page
    assert "CNT-001" in page or "counts" in page  # the checklist is still there
    page = save(client, product, "product", {**modem, "action": "drop-bands"}, **HTMX).content.decode()
    assert document_of(product)["modem"]["bands"] == []
    assert 'value="drop-bands"' not in page and 'data-focus="q-modem-bands-label"' in page


def test_submitting_an_unfinished_draft_says_what_is_left_in_plain_words(client, team, author):
    product = services.product_create(team=team, name="Gate opener", user=author)
    client.force_login(author)
    response = client.post(reverse("draft_submit", args=[product.pk]), follow=True)
    text = response.content.decode()
    assert ("Design revision 1 can&#x27;t be submitted yet: 2 questions to answer (UE category: not answered yet; "
            "Bands: not answered yet)") in text


def test_a_reviewer_sees_a_drafts_partial_checklist_without_links_to_inputs(client, team, author, reviewer):
    product = services.product_create(team=team, name="Gate opener", user=author)
    client.force_login(reviewer)
    page = client.get(reverse("revision_detail", args=[product.pk, 1])).content.decode()
    assert "UE category: not answered yet" in page and 'href="#q-modem-category"' not in page


def test_a_second_author_sees_the_offer_of_the_first_authors_removal(client, product, author, team):
    tobias = make_user("tobias", team, "author")
    client.force_login(author)
    save(client, product, "antennas", {**antennas_form(document_of(product)), "action": "remove:0"})
    client.force_login(tobias)
    page = client.get(reverse("draft_edit", args=[product.pk])).content.decode()
    assert "Removed MAIN with its values." in page
    assert json.loads(json.dumps(document_of(product)))["antennas"][0]["name"] == "DIV"


def test_a_saves_answer_leaves_the_drawing_to_the_request_it_triggers(client, product, author, reviewer, outsider):
    client.force_login(author)
    response = save(client, product, "deployment", {"deployment.body_distance_mm": "400", "answer": "messages"},
                    **HTMX)
    assert response["HX-Trigger"] == "figures-due"
    assert 'id="panel-checklist" hx-swap-oob="true"' in response.content.decode()
    assert "<svg" not in response.content.decode()  # the checklist does not wait for the drawing
    figures = client.get(reverse("draft_edit", args=[product.pk]) + "?part=figures", **HTMX)
    assert figures.status_code == 200 and 'id="panel-placement" hx-swap-oob="true"' in figures.content.decode()
    assert "<svg" in figures.content.decode() and "MAIN to DIV 45 mm apart, blocker" in figures.content.decode()
    page = client.get(reverse("draft_edit", args=[product.pk])).content.decode()
    assert 'id="figures-loader"' in page and "<svg" in page  # the page itself draws at once
    assert client.get(reverse("draft_edit", args=[product.pk]) + "?part=everything").status_code == 400
    client.force_login(outsider)
    assert client.get(reverse("draft_edit", args=[product.pk]) + "?part=figures").status_code == 404
    client.force_login(reviewer)
    assert client.get(reverse("draft_edit", args=[product.pk]) + "?part=figures").status_code == 302
