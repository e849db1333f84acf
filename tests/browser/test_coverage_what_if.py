"""The coverage panel's what-if in a real browser: the assumptions form swaps the panel's block in place (htmx),
a refused value is named there and the block keeps working, and going back to the defaults restores the
revision's own figures. The numbers are rules.coverage's (tests/web/test_coverage_panel.py checks them)."""

import os

import pytest
from django.urls import reverse

from projectapp.designs import services
from projectapp.reviews.services import revision_submit
from tests.browser.test_questionnaire_flow import log_in
from tests.web.conftest import EXAMPLES

try:
    from playwright.sync_api import Page, expect
except ImportError:
    if os.environ.get("CI"):
        raise
    pytest.skip("the playwright Python package is not installed: pip install playwright", allow_module_level=True)

pytestmark = pytest.mark.browser


@pytest.fixture
def router(team, author):
    product = services.product_create(team=team, name="Field router", user=author)
    services.measurement_add(revision=product.draft, name="field-router-revA.s2p", user=author,
                             content=(EXAMPLES / "field-router-revA.s2p").read_bytes())
    services.design_import(product=product, text=(EXAMPLES / "field-router.json").read_text(),
                           source="field-router.json", user=author)
    return revision_submit(revision=product.draft, user=author)


def test_the_assumptions_recompute_the_panel_in_place_and_name_a_refused_value(page: Page, live_server, router,
                                                                               reviewer, tmp_path):
    log_in(page, live_server, reviewer)
    address = live_server.url + reverse("revision_detail", args=[router.product_id, router.number])
    page.goto(address)
    coverage = page.locator("#coverage")
    expect(coverage).to_contain_text("TR 38.901 UMa (urban macro) NLOS")
    coverage.get_by_text("Change the assumptions (what-if)").click()
    page.locator("#coverage-scenario").select_option("rma")
    page.locator("#coverage-distance").fill("12")  # TR 38.901 Table 7.4.1-1: RMa NLOS is given to 5 km
    page.locator("#coverage").get_by_role("button", name="Recompute").click()
    expect(page.locator("#coverage .problems")).to_contain_text(
        "reference_distance_km: expected a distance in km from 0.01 to 10; this filter was left out")
    expect(page).to_have_url(address)
    page.locator("#coverage-distance").fill("3")
    page.locator("#coverage").get_by_role("button", name="Recompute").click()
    expect(page.locator("#coverage .what-if")).to_contain_text("keep the defaults")
    expect(page.locator("#coverage")).to_contain_text("TR 38.901 RMa (rural macro) NLOS")
    expect(page.locator("#checklist")).to_be_visible()
    page.screenshot(path=str(tmp_path / "what-if.png"), full_page=True)
    page.locator("#coverage .what-if").get_by_role("link", name="Back to the defaults").click()
    expect(page.locator("#coverage .what-if")).to_have_count(0)
    expect(page.locator("#coverage")).to_contain_text("TR 38.901 UMa (urban macro) NLOS")
    expect(page).to_have_url(address)
