"""The questionnaire's rule set 2 questions (projectapp/designs/questionnaire.py): each is named by its design
document path, posts into the document as the contract shapes it, and shows the parser's problems beside it."""

import json
import math

import pytest
from django.urls import reverse

from projectapp.designs import questionnaire, services
from projectapp.designs.models import Revision
from rules.catalog import power_classes
from tests.web.conftest import EXAMPLES
from tests.web.test_page_cache import SectionForm

HTMX = {"HTTP_HX_REQUEST": "true"}


def page(client, product) -> str:
    return client.get(reverse("draft_edit", args=[product.pk])).content.decode()


def form_of(client, product, slug: str) -> dict[str, list[str]]:
    form = SectionForm(f"section-{slug}")
    form.feed(page(client, product))
    return form.data()


def save(client, product, slug: str, changes: dict[str, str], **extra):
    """Posts a section as the page shows it, with `changes` typed over it."""
    data = {**form_of(client, product, slug), **{key: [value] for key, value in changes.items()}}
    return client.post(reverse("draft_section_save", args=[product.pk, slug]), data, **extra)


def document(product) -> dict:
    return Revision.objects.get(product=product, state="draft").document


@pytest.fixture
def author_client(client, author):
    client.force_login(author)
    return client


def test_every_new_input_is_named_by_its_design_document_path(author_client, product):
    html = page(author_client, product)
    for name in ("modem.power_class", "modem.conducted_sensitivity_dbm.B3", "modem.ntn",
                 "antennas[0].peak_gain_dbi", "antennas[0].peak_gain_dbi.B20", "antennas[0].efficiency_source",
                 "deployment.radiated_targets_dbm.trp.B8", "deployment.radiated_targets_dbm.tis.B3"):
        assert f'name="{name}"' in html, name
    assert 'name="modem.full_duplex"' not in html, "LTE-M's duplex is not asked of a Cat 1 design"


def test_the_power_class_offers_each_class_with_the_dbm_it_stands_for_and_is_stored_as_a_number(author_client,
                                                                                             product):
    html = page(author_client, product)
    # 3GPP TS 36.101 Table 6.2.2-1: class 3 is 23 dBm; Tables 6.2.2F-1/G-1: class 5 is 20 dBm (from memory)
    assert "class 3: 23 dBm (most modules)" in html and "class 5: 20 dBm" in html
    assert len(questionnaire.POWER_CLASS_CHOICES) == len(power_classes())
    assert save(author_client, product, "product", {"modem.power_class": "5"}).status_code == 302
    assert document(product)["modem"]["power_class"] == 5  # a JSON integer, as the contract has it


def test_an_untouched_product_section_stores_none_of_the_new_defaults(author_client, product):
    before = document(product)
    version = product.draft.version
    assert save(author_client, product, "product", {}).status_code == 302
    after = document(product)
    assert after == before and product.draft.version == version, "no power class, ntn or duplex added"
    assert "power_class" not in after["modem"] and "ntn" not in after["modem"]


def test_conducted_sensitivity_per_band_is_saved_and_a_bad_value_is_named_beside_its_band(author_client, product):
    save(author_client, product, "product", {"modem.conducted_sensitivity_dbm.B3": "-101.5",
                                             "modem.conducted_sensitivity_dbm.B8": "-20"})
    assert document(product)["modem"]["conducted_sensitivity_dbm"] == {"B3": -101.5, "B8": -20}
    # rules/design.py bounds a conducted sensitivity to -150..-50 dBm
    html = page(author_client, product)
    assert ("Conducted receive sensitivity per band, B8: -20 dBm is out of range: expected a number at least -150 "
            "and at most -50 dBm") in html  # the field's label and the band, in words (issue 15 item 2)


def test_full_duplex_is_asked_of_lte_m_only_and_a_hidden_answer_is_kept(author_client, team, author):
    probe = services.product_create(team=team, name="Orchard probe", user=author)
    services.design_import(product=probe, text=(EXAMPLES / "orchard-probe.json").read_text(), source="probe.json",
                           user=author)
    html = page(author_client, probe)
    assert 'name="modem.full_duplex"' in html  # cat-m1
    save(author_client, probe, "product", {"modem.full_duplex": "on"})
    assert document(probe)["modem"]["full_duplex"] is True
    # Switched to Cat 1 (the question disappears); saving the section must not untick what was stored.
    save(author_client, probe, "product", {"modem.category": "cat-1"})
    assert 'name="modem.full_duplex"' not in page(author_client, probe)
    save(author_client, probe, "product", {"modem.rx_ports": "2"})
    assert document(probe)["modem"]["full_duplex"] is True


def test_satellite_access_is_a_tick_and_a_satellite_band_without_it_is_named(author_client, team, author):
    probe = services.product_create(team=team, name="Orchard probe", user=author)
    services.design_import(product=probe, text=(EXAMPLES / "orchard-probe.json").read_text(), source="probe.json",
                           user=author)
    fields = form_of(author_client, probe, "product")
    fields["modem.bands"] = [*fields["modem.bands"], "B255"]  # 3GPP TS 36.102: an NTN band
    author_client.post(reverse("draft_section_save", args=[probe.pk, "product"]), fields)
    assert "B255 is a satellite (NTN) band: tick" in page(author_client, probe)  # worded, naming the tick box
    save(author_client, probe, "product", {"modem.ntn": "on"})
    assert document(probe)["modem"]["ntn"] is True
    assert "is a satellite (NTN) band" not in page(author_client, probe)


def gains(every_band: str, b3: str, b8: str, b20: str) -> dict[str, str]:
    """What the first antenna's peak gain question posts: the figure for every band and each band's own."""
    return {"antennas[0].peak_gain_dbi": every_band, "antennas[0].peak_gain_dbi.B3": b3,
            "antennas[0].peak_gain_dbi.B8": b8, "antennas[0].peak_gain_dbi.B20": b20}


def test_peak_gain_is_one_figure_or_a_figure_per_band(author_client, product):
    save(author_client, product, "antennas", gains("", "3.2", "1.8", "1.5"))
    assert document(product)["antennas"][0]["peak_gain_dbi"] == {"B3": 3.2, "B8": 1.8, "B20": 1.5}
    fields = form_of(author_client, product, "antennas")
    assert fields["antennas[0].peak_gain_dbi.B3"] == ["3.2"] and fields["antennas[0].peak_gain_dbi"] == [""]
    save(author_client, product, "antennas", gains("2.5", "", "", ""))
    assert document(product)["antennas"][0]["peak_gain_dbi"] == 2.5


def test_a_figure_for_every_band_beside_band_figures_fills_the_bands_left_empty(author_client, product):
    save(author_client, product, "antennas", gains("2", "3.2", "", ""))
    assert document(product)["antennas"][0]["peak_gain_dbi"] == {"B3": 3.2, "B8": 2, "B20": 2}


def test_a_per_band_gain_over_the_approval_limit_is_judged_for_that_band_only(author_client, product):
    # hive-gateway.json: the approval allows B3 5.0, B8 3.0, B20 3.0 dBi
    save(author_client, product, "antennas", gains("", "4.5", "3.4", "2.0"))
    draft = Revision.objects.get(product=product, state="draft")
    from projectapp.designs.checklists import checklist_for

    gain = [finding for finding in checklist_for(draft).findings if finding["id"] == "GAI-001"]
    assert [finding["evidence"]["band"] for finding in gain] == ["B8"]


def test_unreadable_gain_is_kept_as_typed_with_the_parsers_message_beside_the_field(author_client, product):
    save(author_client, product, "antennas", {"antennas[0].peak_gain_dbi": "high"})
    assert document(product)["antennas"][0]["peak_gain_dbi"] == "high"
    html = page(author_client, product)
    assert 'value="high"' in html
    assert "Peak gain: &quot;high&quot; is not a number" in html  # the field's label, in words (issue 15 item 2)


def test_the_efficiency_source_is_chosen_beside_the_efficiency_and_defaults_to_the_datasheet(author_client, product):
    html = page(author_client, product)
    assert "antenna datasheet" in html and "measured in this product" in html
    save(author_client, product, "antennas", {})
    assert "efficiency_source" not in document(product)["antennas"][0], "the shown default is not stored"
    save(author_client, product, "antennas", {"antennas[1].efficiency_source": "measured"})
    assert document(product)["antennas"][1]["efficiency_source"] == "measured"
    assert "efficiency_source" not in document(product)["antennas"][0]


def test_roles_are_offered_in_plain_words_and_a_gnss_antenna_is_saved(author_client, product):
    html = page(author_client, product)
    for words in ("main (sends and receives)", "receive (diversity, MIMO)", "GNSS (satellite navigation)",
                  "WLAN (Wi-Fi, Bluetooth)"):
        assert words in html
    save(author_client, product, "antennas", {"action": "add"})
    save(author_client, product, "antennas", {"antennas[2].role": "gnss", "antennas[2].ranges_mhz": "1559-1610"})
    assert document(product)["antennas"][2]["role"] == "gnss"


def test_radiated_targets_are_saved_per_band_in_the_contracts_shape_and_emptied_away(author_client, product):
    save(author_client, product, "deployment", {"deployment.radiated_targets_dbm.trp.B3": "19",
                                                "deployment.radiated_targets_dbm.tis.B3": "-98",
                                                "deployment.radiated_targets_dbm.tis.B20": "-100.5"})
    # design-file.md, "Additions for rule set 2": {"trp": {band: dBm}, "tis": {band: dBm}}
    assert document(product)["deployment"]["radiated_targets_dbm"] == {"trp": {"B3": 19},
                                                                       "tis": {"B3": -98, "B20": -100.5}}
    fields = form_of(author_client, product, "deployment")
    assert fields["deployment.radiated_targets_dbm.tis.B20"] == ["-100.5"]
    save(author_client, product, "deployment", {"deployment.radiated_targets_dbm.trp.B3": ""})
    assert document(product)["deployment"]["radiated_targets_dbm"] == {"tis": {"B3": -98, "B20": -100.5}}
    save(author_client, product, "deployment", {"deployment.radiated_targets_dbm.tis.B3": "",
                                                "deployment.radiated_targets_dbm.tis.B20": ""})
    deployment = document(product)["deployment"]
    assert "radiated_targets_dbm" not in deployment and deployment["environment"] == "outdoor"


def test_the_htmx_answer_to_a_changed_new_answer_carries_its_message_not_its_input(author_client, product):
    response = save(author_client, product, "product", {"modem.conducted_sensitivity_dbm.B3": "loud",
                                                       "answer": "messages"}, **HTMX)
    text = response.content.decode()
    assert response.status_code == 200
    assert "B3: &quot;loud&quot; is not a number" in text  # the band and the person's words (issue 15 item 2)
    assert 'name="modem.conducted_sensitivity_dbm.B3"' not in text, "what was typed is never sent back"


def test_a_stale_save_of_the_new_questions_is_refused_and_stores_nothing(client, author, product, team):
    from tests.web.conftest import make_user

    other = make_user("second-author", team, "author")
    mine, theirs = client, type(client)()
    mine.force_login(author)
    theirs.force_login(other)
    stale = form_of(mine, product, "product")
    assert save(theirs, product, "product", {"modem.power_class": "5"}).status_code == 302
    stale["modem.power_class"] = ["2"]
    answer = mine.post(reverse("draft_section_save", args=[product.pk, "product"]), stale)
    assert answer.status_code == 409 and document(product)["modem"]["power_class"] == 5


def test_an_imported_design_with_every_rule_set_2_field_shows_them_in_the_questionnaire(author_client, team, author):
    tracker = json.loads((EXAMPLES / "trail-tracker.json").read_text())
    del tracker["measurements"]
    tracker["modem"] |= {"power_class": 3, "conducted_sensitivity_dbm": {"B8": -102}}
    tracker["deployment"]["radiated_targets_dbm"] = {"trp": {"B8": 20}}
    product = services.product_create(team=team, name="Trail tracker", user=author)
    services.design_import(product=product, text=json.dumps(tracker), source="trail.json", user=author)
    fields = form_of(author_client, product, "antennas")
    assert fields["antennas[0].peak_gain_dbi.B3"] == ["3.2"] and fields["antennas[1].peak_gain_dbi"] == ["1.0"]
    assert fields["antennas[0].efficiency_source"] == ["measured"] and fields["antennas[2].role"] == ["gnss"]
    assert form_of(author_client, product, "product")["modem.conducted_sensitivity_dbm.B8"] == ["-102"]
    assert form_of(author_client, product, "deployment")["deployment.radiated_targets_dbm.trp.B8"] == ["20"]
    version = product.draft.version
    for slug in ("product", "antennas", "deployment"):
        save(author_client, product, slug, {})
    assert product.draft.version == version, "saving what the page shows stores nothing new"


def test_a_radiated_target_the_parser_refuses_is_named_beside_its_band(author_client, product):
    save(author_client, product, "deployment", {"deployment.radiated_targets_dbm.tis.B3": "-20",
                                                "deployment.radiated_targets_dbm.trp.B8": "high"})
    html = page(author_client, product)
    # rules/design.py bounds a TIS target to -150..-50 dBm
    assert ("Radiated sensitivity target (TIS) per band, B3: -20 dBm is out of range: expected a number at least -150 "
            "and at most -50 dBm") in html  # the field's label and the band, in words (issue 15 item 2)
    assert "Radiated power target (TRP) per band, B8: &quot;high&quot; is not a number" in html
    assert 'value="high"' in html, "kept as typed"


def test_radiated_targets_entered_in_the_questionnaire_reach_the_radiated_estimates(author_client, product):
    # hive-gateway.json's MAIN: 52 % in B3, class 3 (23 dBm, TS 36.101 Table 6.2.2-1); TRP = 23 + 10 log10(0.52)
    save(author_client, product, "deployment", {"deployment.radiated_targets_dbm.trp.B3": "22"})
    from projectapp.designs.checklists import checklist_for

    ota = [finding for finding in checklist_for(Revision.objects.get(product=product, state="draft")).findings
           if finding["topic"] == "ota" and finding["evidence"].get("band") == "B3"]
    assert ota and ota[0]["evidence"]["target_dbm"] == 22 and ota[0]["severity"] == "warning"
    assert ota[0]["evidence"]["estimate_dbm"] == pytest.approx(23 + 10 * math.log10(0.52), abs=0.01)
