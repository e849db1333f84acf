"""In the browser: a frozen revision from an older rule set shows what the current rules raise instead, the
team page lists it, and the author starts a draft from it; a reviewer adds a measurement draft."""

import os

import pytest
from django.urls import reverse
from playwright.sync_api import expect

from projectapp.designs import services as design_services
from projectapp.reviews.services import revision_submit
from tests.browser.test_questionnaire_flow import log_in
from tests.web.conftest import EXAMPLES
from tests.web.test_reevaluate import store_older

pytestmark = pytest.mark.browser
SHOTS = os.environ.get("EARSHOT_SHOTS")  # a folder for screenshots to look at (never the repo)


def shot(page, name: str) -> None:
    if SHOTS:
        page.screenshot(path=os.path.join(SHOTS, name), full_page=True)


@pytest.fixture
def older(team, author):
    product = design_services.product_create(team=team, name="Hive gateway", user=author)
    design_services.design_import(product=product, text=(EXAMPLES / "hive-gateway.json").read_text(),
                                  source="hive-gateway.json", user=author)
    revision = revision_submit(revision=product.draft, user=author)
    return store_older(revision, lambda findings: findings.remove(next(f for f in findings if f["id"] == "SEP-001")))


def test_an_author_sees_the_upgrade_and_starts_a_draft_from_it(page, live_server, author, older):
    log_in(page, live_server, author)
    page.goto(live_server.url + reverse("revision_detail", args=[older.product_id, older.number]))
    panel = page.locator("section.upgrade")
    expect(panel).to_contain_text("1 new, 0 gone, 0 changed")
    expect(panel).to_contain_text("SEP-001")
    shot(page, "upgrade-revision.png")
    panel.get_by_role("link", name="Every revision of").click()
    expect(page.locator("table.grid tbody tr")).to_have_count(1)
    shot(page, "upgrade-team.png")
    page.get_by_role("button", name="Start a draft from it").click()
    expect(page).to_have_url(live_server.url + reverse("draft_edit", args=[older.product_id]))


def test_a_reviewer_starts_a_measurement_draft(page, live_server, reviewer, older):
    log_in(page, live_server, reviewer)
    page.goto(live_server.url + reverse("revision_detail", args=[older.product_id, older.number]))
    page.get_by_role("button", name="Add measurements (start a measurement draft)").click()
    expect(page.locator("h1")).to_contain_text("Design revision 2")
    shot(page, "measurement-draft.png")
