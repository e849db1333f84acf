"""Products, the questionnaire, submission, import/export: each view with its three people."""

import io
import json

import pytest
from django.core.cache import cache
from django.core.management import call_command
from django.urls import reverse
from django.utils.html import escape

from projectapp.designs import services
from projectapp.designs.models import FrozenRevisionError, Product, Revision
from projectapp.reviews.services import revision_submit
from rules.design import parse_design
from rules.registry import RULESET_VERSION
from tests.rules.design_builders import deeply_nested
from tests.web.conftest import EXAMPLES

HTMX = {"HTTP_HX_REQUEST": "true"}


def version_of(product) -> int:
    """The draft version a freshly loaded page would carry in its forms."""
    return product.draft.version


def client_for(client, user):
    client.force_login(user)
    return client


def read_views(product):
    number = product.latest.number
    return [
        reverse("product_detail", args=[product.pk]),
        reverse("revision_detail", args=[product.pk, number]),
        reverse("revision_export", args=[product.pk, number]),
        reverse("revision_placement_svg", args=[product.pk, number]),
        reverse("draft_edit", args=[product.pk]),
        reverse("design_import", args=[product.pk]),
    ]


def write_views(product):
    return [
        (reverse("draft_section_save", args=[product.pk, "deployment"]), {"deployment.body_distance_mm": "50",
                                                                         "version": product.draft.version}),
        (reverse("draft_submit", args=[product.pk]), {}),
        (reverse("draft_start", args=[product.pk]), {}),
    ]


# -- access ------------------------------------------------------------------------------------------------

def test_every_view_sends_anonymous_visitors_to_log_in(client, product):
    for url in [reverse("product_list"), reverse("product_create"), reverse("rule_list"), *read_views(product)]:
        response = client.get(url)
        assert response.status_code == 302 and response["Location"].startswith(reverse("login")), url
    for url, data in write_views(product):
        response = client.post(url, data)
        assert response.status_code == 302 and response["Location"].startswith(reverse("login")), url


def test_every_product_view_is_404_for_an_outsider(client, product, outsider):
    client_for(client, outsider)
    for url in read_views(product):
        assert client.get(url).status_code == 404, url
    for url, data in write_views(product):
        assert client.post(url, data).status_code == 404, url
    assert product.name not in client.get(reverse("product_list")).content.decode()


def test_a_member_without_the_author_role_can_read_but_not_write(client, product, reviewer):
    client_for(client, reviewer)
    assert client.get(reverse("product_detail", args=[product.pk])).status_code == 200
    assert client.get(reverse("revision_detail", args=[product.pk, 1])).status_code == 200
    # the draft page shows the read-only revision view to a non-author
    assert client.get(reverse("draft_edit", args=[product.pk])).status_code == 302
    before = Revision.objects.get(product=product, number=1).document
    for url, data in write_views(product):
        assert client.post(url, data).status_code == 403, url
    assert Revision.objects.get(product=product, number=1).document == before
    assert client.get(reverse("design_import", args=[product.pk])).status_code == 403
    assert client.get(reverse("product_create")).status_code == 403


def test_the_author_sees_the_questionnaire_with_the_live_checklist(client, product, author):
    response = client_for(client, author).get(reverse("draft_edit", args=[product.pk]))
    page = response.content.decode()
    assert response.status_code == 200
    for title in ("Product and modem", "Enclosure and ground plane", "Antennas", "Deployment"):
        assert title in page
    assert "SEP-001" in page  # the hive gateway's pair is too close (see tests/rules for the physics)
    assert "<svg" in page and "λ/4" in page


# -- products ----------------------------------------------------------------------------------------------

def test_an_author_creates_a_product_with_an_empty_draft(client, team, author):
    response = client_for(client, author).post(reverse("product_create"), {"team": team.pk, "name": "Gate opener"})
    product = Product.objects.get(name="Gate opener")
    assert response["Location"] == reverse("draft_edit", args=[product.pk])
    assert product.draft.number == 1 and product.draft.document["antennas"] == []


def test_product_names_are_unique_within_a_team(client, team, author, product):
    response = client_for(client, author).post(reverse("product_create"), {"team": team.pk, "name": product.name})
    assert response.status_code == 200
    assert "already has a product named" in response.content.decode()


# -- the questionnaire ------------------------------------------------------------------------------------

def test_saving_a_section_keeps_bad_values_with_the_parsers_message(client, product, author):
    url = reverse("draft_section_save", args=[product.pk, "deployment"])
    response = client_for(client, author).post(url, {"deployment.environment": "outdoor", "version": version_of(product),
                                                     "deployment.body_distance_mm": "about a metre"}, **HTMX)
    page = response.content.decode()
    assert response.status_code == 200
    assert 'value="about a metre"' in page
    assert "Closest distance to people: &quot;about a metre&quot; is not a number" in page
    assert product.draft.document["deployment"]["body_distance_mm"] == "about a metre"
    # the rest of the design is untouched
    assert product.draft.document["antennas"] == json.loads((EXAMPLES / "hive-gateway.json").read_text())["antennas"]


def test_the_htmx_answer_carries_the_section_and_the_refreshed_panel(client, product, author):
    url = reverse("draft_section_save", args=[product.pk, "antennas"])
    document = product.draft.document
    data = {"version": version_of(product)}
    for index, antenna in enumerate(document["antennas"]):
        prefix = f"antennas[{index}]."
        data.update({prefix + "name": antenna["name"], prefix + "role": antenna["role"], prefix + "mounting": "internal"})
        position = antenna["position_mm"] if index == 0 else [200, 10, 12]  # move DIV 185 mm away
        for axis, value in enumerate(position):
            data[f"{prefix}position_mm[{axis}]"] = str(value)
        for axis, value in enumerate(antenna["polarization"]):
            data[f"{prefix}polarization[{axis}]"] = str(value)
        data[prefix + "ranges_mhz"] = "790-960, 1710-2200"
    response = client_for(client, author).post(url, data, **HTMX)
    page = response.content.decode()
    assert 'id="section-antennas"' in page and 'hx-swap-oob="true"' in page
    assert "SEP-001" not in page  # 185 mm is beyond lambda/4 at 791 MHz (94.7 mm, c = 299 792 458 m/s)
    assert product.draft.document["antennas"][1]["position_mm"] == [200, 10, 12]


def test_the_questionnaire_works_without_javascript(client, product, author):
    url = reverse("draft_section_save", args=[product.pk, "enclosure"])
    response = client_for(client, author).post(url, {"enclosure.material": "metal", "ground_plane_mm[0]": "100",
                                                     "ground_plane_mm[1]": "60", "version": version_of(product)})
    assert response.status_code == 302
    assert response["Location"].endswith("#section-enclosure")
    assert product.draft.document["enclosure"] == {"material": "metal"}
    page = client.get(response["Location"]).content.decode()
    assert "ENC-001" in page


def test_antenna_rows_can_be_added_duplicated_and_removed(client, product, author):
    client_for(client, author)
    url = reverse("draft_section_save", args=[product.pk, "antennas"])
    page = client.get(reverse("draft_edit", args=[product.pk])).content.decode()
    assert 'value="duplicate:0"' in page
    client.post(url, {"antennas[0].name": "MAIN", "antennas[0].role": "main", "antennas[1].name": "DIV",
                      "antennas[1].role": "receive", "action": "add", "version": version_of(product)})
    names = [antenna["name"] for antenna in product.draft.document["antennas"]]
    assert names == ["MAIN", "DIV", "ANT1"]
    client.post(url, {"antennas[0].name": "MAIN", "antennas[0].role": "main", "antennas[1].name": "DIV",
                      "antennas[1].role": "receive", "antennas[2].name": "ANT1", "antennas[2].role": "receive",
                      "action": "duplicate:0", "version": version_of(product)})
    assert [a["name"] for a in product.draft.document["antennas"]] == ["MAIN", "MAIN-copy1", "DIV", "ANT1"]
    client.post(url, {f"antennas[{i}].name": name for i, name in enumerate(["MAIN", "MAIN-copy1", "DIV", "ANT1"])}
                | {f"antennas[{i}].role": "receive" for i in range(4)} | {"action": "remove:1",
                                                                         "version": version_of(product)})
    assert [a["name"] for a in product.draft.document["antennas"]] == ["MAIN", "DIV", "ANT1"]


def test_a_region_preset_fills_the_bands(client, product, author):
    url = reverse("draft_section_save", args=[product.pk, "product"])
    client_for(client, author).post(url, {"product.name": "Hive gateway", "modem.category": "cat-1",
                                          "preset": "europe-lte", "version": version_of(product)})
    assert product.draft.document["modem"]["bands"] == ["B1", "B3", "B7", "B8", "B20", "B28"]


# -- submit, freeze, new draft ----------------------------------------------------------------------------

def test_submitting_freezes_the_document_and_its_checklist(client, product, author):
    response = client_for(client, author).post(reverse("draft_submit", args=[product.pk]))
    revision = Revision.objects.get(product=product, number=1)
    assert response["Location"] == revision.get_absolute_url()
    assert revision.state == "in-review" and revision.ruleset == RULESET_VERSION
    assert revision.evaluation["format"] == "earshot-checklist/1"
    assert any(f["id"] == "SEP-001" for f in revision.evaluation["findings"])
    revision.document = {}
    with pytest.raises(FrozenRevisionError):
        revision.save()
    with pytest.raises(FrozenRevisionError):
        Revision.objects.get(pk=revision.pk).delete()


def test_an_invalid_draft_cannot_be_submitted_and_nothing_changes(client, team, author):
    product = services.product_create(team=team, name="Blank", user=author)
    response = client_for(client, author).post(reverse("draft_submit", args=[product.pk]))
    assert response.status_code == 302
    assert product.draft is not None and product.draft.state == "draft"


def test_editing_after_submission_starts_a_new_draft_from_the_latest(client, submitted_product, author):
    client_for(client, author)
    page = client.get(reverse("draft_edit", args=[submitted_product.pk])).content.decode()
    assert "Start a new draft" in page
    client.post(reverse("draft_start", args=[submitted_product.pk]))
    draft = submitted_product.draft
    assert draft.number == 2 and draft.based_on.number == 1
    assert draft.document == Revision.objects.get(product=submitted_product, number=1).document


# -- import and export ------------------------------------------------------------------------------------

def test_export_then_import_round_trips_exactly(client, product, author):
    client_for(client, author)
    exported = client.get(reverse("revision_export", args=[product.pk, 1]))
    assert exported["Content-Disposition"].startswith("attachment;")
    text = exported.content.decode()
    revision_submit(revision=product.draft, user=author)
    from django.core.files.uploadedfile import SimpleUploadedFile
    response = client.post(reverse("design_import", args=[product.pk]),
                           {"design_file": SimpleUploadedFile("hive.json", text.encode(), "application/json"),
                            "version": 0})  # the import page showed no draft
    assert response.status_code == 302
    draft = product.draft
    assert draft.number == 2
    assert client.get(reverse("revision_export", args=[product.pk, 2])).content.decode() == text


def test_import_lists_every_problem_with_its_path_and_stores_nothing(client, product, author):
    from django.core.files.uploadedfile import SimpleUploadedFile
    document = json.loads((EXAMPLES / "hive-gateway.json").read_text())
    document["antennas"][0]["position_mm"] = [1, 2]
    document["modem"]["bands"].append("B77")
    before = product.draft.document
    response = client_for(client, author).post(reverse("design_import", args=[product.pk]), {
        "design_file": SimpleUploadedFile("bad.json", json.dumps(document).encode(), "application/json"),
        "version": version_of(product)})
    page = response.content.decode()
    assert response.status_code == 400
    assert "antennas[0].position_mm: expected 3 numbers, got 2" in page
    assert "modem.bands[3]: unknown band &quot;B77&quot;" in page
    assert product.draft.document == before


def test_import_rejects_text_that_is_not_json(client, product, author):
    from django.core.files.uploadedfile import SimpleUploadedFile
    response = client_for(client, author).post(reverse("design_import", args=[product.pk]), {
        "design_file": SimpleUploadedFile("x.json", b"\xff\xfe not json", "application/json"),
        "version": version_of(product)})
    assert response.status_code == 400 and "not valid JSON" in response.content.decode()


def test_the_rules_page_lists_every_rule_from_the_registry(client, author):
    from rules.registry import registered_rules
    page = client_for(client, author).get(reverse("rule_list")).content.decode()
    for rule in registered_rules():
        assert rule.id in page and escape(rule.sources[0]) in page


# -- input that breaks pages: refused by name, contained per design -------------------------------------------

def upload(text: str | bytes, name: str = "design.json"):
    from django.core.files.uploadedfile import SimpleUploadedFile
    return SimpleUploadedFile(name, text.encode() if isinstance(text, str) else text, "application/json")


def pages_of(product) -> list[str]:
    return [reverse("product_list"), reverse("draft_edit", args=[product.pk]),
            reverse("revision_detail", args=[product.pk, product.latest.number]),
            reverse("revision_placement_svg", args=[product.pk, product.latest.number])]


def assert_pages_answer(client, people, product, statuses=(200, 302, 404)):
    """Every page of the product answers (the drawing may be 404 while the design can't be drawn), for each person."""
    for person in people:
        client.force_login(person)
        for url in pages_of(product):
            assert client.get(url).status_code in statuses, (person, url)


def hive(**changes) -> dict:
    document = json.loads((EXAMPLES / "hive-gateway.json").read_text())
    for key, value in changes.items():
        document[key] = value
    return document


@pytest.mark.parametrize(("value", "expected", "worded"), [
    # 1e-308 mm in both ground-plane fields divided by zero in the size limit; 1e308 overflowed (ValueError).
    ("1e-308", "ground_plane_mm: expected 2 numbers from 0.01 to 100000 mm; item 0 is 1e-308",
     "Main board ground plane, length: 1e-308 mm is out of range: expected 0.01 to 100\u2009000 mm"),
    ("1e308", "ground_plane_mm: expected 2 numbers from 0.01 to 100000 mm; item 0 is 1e+308",
     "Main board ground plane, length: 1e+308 mm is out of range: expected 0.01 to 100\u2009000 mm"),
])
def test_a_physically_impossible_ground_plane_is_named_and_no_page_fails(client, product, author, reviewer,
                                                                         value, expected, worded):
    document = hive()
    response = client_for(client, author).post(reverse("design_import", args=[product.pk]), {
        "design_file": upload(json.dumps(document).replace("[100, 60]", f"[{value}, {value}]"))})
    assert response.status_code == 400 and expected in response.content.decode()
    assert product.draft.document == document  # nothing stored
    # Typed into the questionnaire it is kept as typed, the parser explains, and every page stays up.
    response = client.post(reverse("draft_section_save", args=[product.pk, "enclosure"]), {
        "enclosure.material": "plastic", "ground_plane_mm[0]": value, "ground_plane_mm[1]": value,
        "version": version_of(product)}, **HTMX)
    assert response.status_code == 200 and worded in response.content.decode()  # the file's path, the form's label
    assert_pages_answer(client, [author, reviewer], product)


def test_a_400_digit_integer_in_an_import_is_named_by_its_path(client, product, author):
    text = json.dumps(hive()).replace('"body_distance_mm": 150', '"body_distance_mm": 1' + "0" * 400)
    response = client_for(client, author).post(reverse("design_import", args=[product.pk]),
                                               {"design_file": upload(text)})
    assert response.status_code == 400
    assert "deployment.body_distance_mm: expected a number in mm, got 1000000" in response.content.decode()


def test_nul_and_lone_surrogates_in_an_import_are_named_and_nothing_is_stored(client, product, author):
    client_for(client, author)
    before = product.draft.document
    for json_escape, expected in (("\\u0000", "product.name: control character U+0000 not allowed"),
                                  ("\\ud800", "product.name: lone surrogate U+D800 not allowed"),
                                  ("\\u001b[32m", "product.name: control character U+001B not allowed")):
        text = json.dumps(hive()).replace("Tallow Creek hive gateway", f"Tallow{json_escape} hive gateway")
        response = client.post(reverse("design_import", args=[product.pk]), {"design_file": upload(text)})
        assert response.status_code == 400 and expected in response.content.decode(), json_escape
    assert product.draft.document == before
    assert_pages_answer(client, [author], product)


def test_a_nul_typed_into_the_questionnaire_is_stored_marked_and_named(client, product, author, reviewer):
    # Stored as typed, a NUL was a 500 on PostgreSQL, and on SQLite every page of the draft afterwards.
    url = reverse("draft_section_save", args=[product.pk, "product"])
    response = client_for(client, author).post(url, {
        "product.name": "Hive\x00gateway", "modem.category": "cat-1", "modem.bands": ["B3", "B8", "B20"],
        "modem.gain_limits_dbi.B3\x00": "2", "version": version_of(product)}, **HTMX)
    assert response.status_code == 200
    document = product.draft.document
    assert document["product"]["name"] == "Hive\ufffdgateway"
    assert document["modem"]["gain_limits_dbi"] == {"B3\ufffd": 2}
    page = response.content.decode()
    assert "replacement character U+FFFD not allowed" in page
    assert_pages_answer(client, [author, reviewer], product)


def test_a_document_no_database_can_hold_is_refused_by_the_save_and_nothing_changes(product, author):
    from rules.design import DesignError
    before = product.draft.document
    for bad in ({**before, "notes": "a\x00b"}, {**before, "notes": "\udc80"}, {**before, "ratio": float("nan")}):
        with pytest.raises(DesignError):
            services.draft_save_document(revision=product.draft, document=bad, user=author)
    assert Revision.objects.get(pk=product.draft.pk).document == before


def test_an_unknown_key_nested_900_deep_is_refused_and_saves_keep_working(client, product, author):
    # Imported, it made every later save a 500 (RecursionError copying the document).
    client_for(client, author)
    response = client.post(reverse("design_import", args=[product.pk]),
                           {"design_file": upload(json.dumps(hive(extra=deeply_nested(900))))})
    page = response.content.decode()
    assert response.status_code == 400 and "extra.x.x.x" in page and "nested more than 16 levels deep" in page
    assert "extra" not in product.draft.document
    response = client.post(reverse("draft_section_save", args=[product.pk, "deployment"]),
                           {"deployment.environment": "indoor", "version": version_of(product)}, **HTMX)
    assert response.status_code == 200 and product.draft.document["deployment"] == {"environment": "indoor"}


def test_one_design_that_fails_to_check_leaves_every_list_and_page_up(client, product, team, author, reviewer,
                                                                      monkeypatch):
    from projectapp.designs import checklists
    other = services.product_create(team=team, name="Orchard soil probe", user=author)
    services.design_import(product=other, text=(EXAMPLES / "orchard-probe.json").read_text(),
                           source="orchard-probe.json", user=author)
    real = checklists.evaluate

    def evaluate(design, measurements=()):
        if design.product_name == "Tallow Creek hive gateway":
            raise RuntimeError("a defect that only this design reaches")
        return real(design, measurements)

    monkeypatch.setattr(checklists, "evaluate", evaluate)
    document = json.loads(json.dumps(product.draft.document))
    document["deployment"]["body_distance_mm"] = 240
    services.draft_save_document(revision=product.draft, document=document, user=author)  # counted: it fails
    client_for(client, reviewer)
    page = client.get(reverse("product_list")).content.decode()
    assert "not checked: an error in Earshot" in page
    assert page.count("count count-note") >= 1  # the orchard probe's row is counted as usual
    client_for(client, author)
    draft = client.get(reverse("draft_edit", args=[product.pk]))
    assert draft.status_code == 200 and "this design could not be checked: an error in Earshot" in draft.content.decode()
    assert_pages_answer(client, [author, reviewer], product)
    monkeypatch.setattr(checklists, "evaluate", real)  # fixed: the next count (a save, or manage.py recount) checks again
    call_command("recount", stdout=io.StringIO())
    assert "not checked" not in client.get(reverse("product_list")).content.decode()


def test_a_figure_that_fails_to_draw_leaves_the_page_up_and_says_so(client, product, author, monkeypatch):
    from projectapp.designs import views

    def placement_svg(*args, **kwargs):
        raise ValueError("a defect in the drawing")

    monkeypatch.setattr(views, "placement_svg", placement_svg)
    response = client_for(client, author).get(reverse("draft_edit", args=[product.pk]))
    page = response.content.decode()
    assert response.status_code == 200
    assert "Not shown: the placement drawing" in page and "SEP-001" in page  # the checklist is all there


def test_a_rule_that_raises_is_shown_on_the_checklist_and_the_draft_cannot_be_submitted(client, product, author,
                                                                                        monkeypatch):
    import dataclasses

    from rules import registry

    def check(context):
        yield from ()
        raise ZeroDivisionError("float division by zero")

    rule = {rule.id: rule for rule in registry.registered_rules()}["SIZ-001"]
    monkeypatch.setitem(registry._RULES, "SIZ-001", dataclasses.replace(rule, check=check))
    cache.clear()  # as a deploy of the faulty rule would: the code stamp in every key names the rules
    client_for(client, author)
    page = client.get(reverse("draft_edit", args=[product.pk])).content.decode()
    assert "This checklist is incomplete." in page and "SIZ-001" in page and "SEP-001" in page
    response = client.post(reverse("draft_submit", args=[product.pk]), follow=True)
    assert "rule SIZ-001 (" in response.content.decode() and "could not run on this design" in response.content.decode()
    assert product.draft is not None and not Revision.objects.filter(product=product).exclude(state="draft").exists()


def test_the_longest_names_on_the_most_antennas_submit_and_review(client, team, author, reviewer):
    # Two antenna names over about 300 characters together broke submit (subjects_key was 300 long); now a
    # finding about all 32 antennas, each with the longest name the parser takes, is one review item.
    from rules.design import MAX_ANTENNAS, TEXT_LIMITS
    longest = TEXT_LIMITS["antennas[].name"]
    antennas = [{"name": f"{index:02d}" + "é" * (longest - 2), "role": "main" if index == 0 else "receive",
                 "mounting": "internal", "position_mm": [10 * index, 10, 10], "polarization": [1, 0, 0],
                 "ranges_mhz": [[790, 960], [1710, 2200]]} for index in range(MAX_ANTENNAS)]
    document = hive(antennas=antennas, enclosure={"size_mm": [400, 80, 30], "material": "metal"},
                    product={"name": "P" * TEXT_LIMITS["product.name"], "revision": "R" * 40})
    product = services.product_create(team=team, name="Crowded", user=author)
    services.design_import(product=product, text=json.dumps(document), source="crowded.json", user=author)
    response = client_for(client, author).post(reverse("draft_submit", args=[product.pk]))
    revision = Revision.objects.get(product=product, number=1)
    assert response.status_code == 302 and revision.state == "in-review"
    from projectapp.reviews.models import ReviewItem
    metal = ReviewItem.objects.get(revision=revision, rule_id="ENC-001")
    assert metal.subjects == [antenna["name"] for antenna in antennas]
    assert len(metal.subjects_key) == MAX_ANTENNAS * (longest + 1) - 1
    for person in (author, reviewer):
        client.force_login(person)
        for url in (revision.get_absolute_url(), reverse("revision_review", args=[product.pk, 1]),
                    reverse("review_item", args=[metal.pk]), reverse("product_list")):
            assert client.get(url).status_code == 200, url


def test_more_antennas_than_the_cap_are_refused_at_import(client, product, author):
    from rules.design import MAX_ANTENNAS
    antenna = hive()["antennas"][1]
    antennas = [{**antenna, "name": f"RX{index}"} for index in range(MAX_ANTENNAS + 1)]
    response = client_for(client, author).post(reverse("design_import", args=[product.pk]),
                                               {"design_file": upload(json.dumps(hive(antennas=antennas)))})
    assert response.status_code == 400
    assert f"antennas: expected at most {MAX_ANTENNAS} antennas, got {MAX_ANTENNAS + 1}" in response.content.decode()


def test_a_design_with_rule_set_2_fields_opens_evaluates_and_exports(client, team, author):
    # Per-band gain, efficiency source and a GNSS antenna: the questionnaire does not edit them yet, but every
    # page that reads the design must still answer, and the checklist is rule set 2's.
    document = json.loads((EXAMPLES / "hive-gateway.json").read_text())
    document["antennas"][0]["peak_gain_dbi"] = {"B2": 3.0, "B4": 2.5}
    document["antennas"][0]["efficiency_source"] = "measured"
    document["antennas"].append({"name": "GNSS", "role": "gnss", "position_mm": [60, 40, 10],
                                 "ranges_mhz": [[1559, 1610]]})
    product = services.product_create(team=team, name="Tallow Creek tracker", user=author)
    draft = services.design_import(product=product, text=json.dumps(document), source="tracker.json", user=author)
    client_for(client, author)
    for url in read_views(product):
        assert client.get(url).status_code == 200, url
    assert revision_submit(revision=draft, user=author).ruleset == RULESET_VERSION == "2.0.0"
    revision = Revision.objects.get(product=product, number=1)
    assert {finding["basis"] for finding in revision.evaluation["findings"]} <= {"design", "datasheet", "measured"}
    from projectapp.signoff.pdf import _design_summary
    from projectapp.signoff.record_fonts import register

    register()  # what build_record_pdf does first: the record's fonts
    assert _design_summary(parse_design(revision.document))  # the record's design table draws these antennas


def test_the_rules_page_marks_what_the_current_rule_set_added_and_changed(client, author):
    from rules.registry import registered_rules

    client_for(client, author)
    page = client.get(reverse("rule_list")).content.decode()
    added = [rule for rule in registered_rules() if rule.added_in == RULESET_VERSION]
    changed = [rule for rule in registered_rules() if rule.changed_in == RULESET_VERSION and rule not in added]
    assert added and changed, "rule set 2.0.0 both added and changed rules (rules/registry.py)"
    assert f"What rule set {RULESET_VERSION} changed" in page
    assert f"New ({len(added)})" in page and f"Changed ({len(changed)})" in page
    for rule in added:
        row = page[page.index(f'id="rule-{rule.id}"'):][:400]
        assert f"new in {RULESET_VERSION}" in row, rule.id
    for rule in changed:
        row = page[page.index(f'id="rule-{rule.id}"'):][:400]
        assert f"changed in {RULESET_VERSION}" in row, rule.id
    untouched = [rule for rule in registered_rules() if rule not in added and rule not in changed]
    for rule in untouched:
        row = page[page.index(f'id="rule-{rule.id}"'):page.index("</tr>", page.index(f'id="rule-{rule.id}"'))]
        assert "new in" not in row and "changed in" not in row, rule.id
