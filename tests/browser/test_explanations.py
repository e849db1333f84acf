"""A product manager who doesn't know a term opens its explanation from the keyboard, with JavaScript off, and
follows it to the terms page; a finding's rule id leads to the rule; a finding says what it means for the
product."""

import pytest
from django.urls import reverse

# Importing the flow's helpers also applies its rule for a missing playwright package (skip locally, fail in CI).
from projectapp.designs import services
from tests.browser.test_questionnaire_flow import expect, log_in
from tests.web.conftest import example_document

pytestmark = pytest.mark.browser


@pytest.fixture
def hive(team, author):
    product = services.product_create(team=team, name="Hive gateway", user=author)
    services.draft_save_document(revision=product.draft, document=example_document("hive-gateway.json"), user=author)
    return product


def test_a_term_opens_from_the_keyboard_without_javascript_and_leads_to_its_entry(page_without_js, live_server,
                                                                                  author, hive):
    page = page_without_js
    log_in(page, live_server, author)
    page.goto(live_server.url + reverse("draft_edit", args=[hive.pk]))
    summary = page.get_by_text("What does “UE category” mean?")
    explanation = page.locator("details.term-help", has=summary).get_by_text("The class of cellular modem")
    expect(explanation).to_be_hidden()
    summary.focus()
    page.keyboard.press("Enter")
    expect(explanation).to_be_visible()
    page.keyboard.press("Tab")  # into the disclosure: its link to the terms page
    expect(page.locator(":focus")).to_have_text("UE category on the terms page")
    page.keyboard.press("Enter")
    expect(page).to_have_url(live_server.url + reverse("term_list") + "#term-ue-category")
    expect(page.locator("#term-ue-category")).to_be_in_viewport()


def test_a_finding_says_what_it_means_for_the_product_and_its_rule_id_leads_to_the_rule(page, live_server, author,
                                                                                       hive):
    log_in(page, live_server, author)
    page.goto(live_server.url + reverse("draft_edit", args=[hive.pk]))
    finding = page.locator("#checklist details.finding", has_text="SEP-001")
    finding.locator("summary").click()
    expect(finding.locator(".impact")).to_contain_text("they will act partly as one antenna")
    finding.get_by_role("link", name="SEP-001").click()
    expect(page).to_have_url(live_server.url + reverse("rule_list") + "#rule-SEP-001")
    expect(page.locator("#rule-SEP-001")).to_be_in_viewport()
    page.get_by_role("link", name="terms page").click()
    expect(page.locator("h1")).to_have_text("Terms")
