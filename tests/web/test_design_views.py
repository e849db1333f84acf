"""Products, the questionnaire, submission, import/export: each view with its three people."""

import json

import pytest
from django.urls import reverse
from django.utils.html import escape

from projectapp.designs import services
from projectapp.designs.models import FrozenRevisionError, Product, Revision
from rules.design import parse_design
from rules.registry import RULESET_VERSION
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
    assert "deployment.body_distance_mm: expected a number in mm, got &quot;about a metre&quot;" in page
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
    assert revision.status == "submitted" and revision.ruleset == RULESET_VERSION
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
    assert product.draft is not None and product.draft.status == "draft"


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
    services.revision_submit(revision=product.draft, user=author)
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
    assert services.revision_submit(revision=draft, user=author).ruleset == RULESET_VERSION == "2.0.0"
    revision = Revision.objects.get(product=product, number=1)
    assert {finding["basis"] for finding in revision.evaluation["findings"]} <= {"design", "datasheet", "measured"}
    from projectapp.signoff.pdf import _design_summary

    assert _design_summary(parse_design(revision.document))  # the record's design table draws these antennas
