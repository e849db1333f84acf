"""A reviewer works through their queue in the browser: every item dispositioned in place, the audit
trail showing each step."""

import pytest
from django.urls import reverse
from playwright.sync_api import expect

from projectapp.audit.models import AuditEvent
from projectapp.designs import services as design_services
from projectapp.reviews.models import ReviewItem
from projectapp.reviews.services import review_item_assign, revision_submit
from tests.browser.test_questionnaire_flow import log_in
from tests.web.conftest import EXAMPLES

pytestmark = pytest.mark.browser


@pytest.fixture
def queue(team, author, reviewer):
    """The hive gateway submitted, its blocker and warning assigned to the reviewer."""
    product = design_services.product_create(team=team, name="Hive gateway", user=author)
    design_services.design_import(product=product, text=(EXAMPLES / "hive-gateway.json").read_text(),
                                  source="hive-gateway.json", user=author)
    revision = revision_submit(revision=product.draft, user=author)
    for item in revision.review_items.filter(kind="raised", severity__in=["blocker", "warning"]):
        review_item_assign(item=item, user=reviewer, assignee=reviewer, expected_version=item.version)
    return revision


def test_a_reviewer_works_through_their_queue(page, live_server, reviewer, queue):
    log_in(page, live_server, reviewer)
    page.goto(live_server.url + reverse("review_dashboard"))
    page.get_by_role("link", name="My queue (2 open)").click()
    rows = page.locator("#dashboard-items tbody tr")
    expect(rows).to_have_count(2)

    page.goto(live_server.url + reverse("revision_review", args=[queue.product_id, queue.number]))
    page.evaluate("window.earshotMarker = 'still here'")  # survives only if no full page load happens
    decisions = {"SEP-001": ("change", "Move DIV to the far corner of the board"),
                 "EFF-001": ("change", "")}
    # external steps (certification, RF exposure) are tracked, not dispositioned: the cards with a decision form
    for item in ReviewItem.objects.filter(revision=queue, kind="raised", process_step__isnull=True).order_by("id"):
        disposition, justification = decisions.get(item.rule_id, ("not-applicable", "Tracked in the test plan"))
        card = page.locator(f"#item-{item.pk}")
        card.locator("select[name=disposition]").select_option(disposition)
        card.locator("textarea[name=justification]").fill(justification)
        card.get_by_role("button", name="Record").click()
        expect(page.locator(f"#item-{item.pk} .saved")).to_be_visible()
        expect(page.locator(f"#item-{item.pk} .disp")).not_to_have_text("Open")
    assert page.evaluate("window.earshotMarker") == "still here"

    page.goto(live_server.url + reverse("review_dashboard") + "?assignee=me")
    expect(page.get_by_text("No open item is assigned to you")).to_be_visible()
    page.goto(live_server.url + reverse("product_audit", args=[queue.product_id]))
    expect(page.get_by_text("Move DIV to the far corner of the board").first).to_be_visible()
    recorded = AuditEvent.objects.filter(product=queue.product, action="disposition", actor=reviewer).count()
    assert recorded == ReviewItem.objects.filter(revision=queue, kind="raised", process_step__isnull=True).count()


def test_a_waiver_on_a_blocker_is_refused_to_a_reviewer_with_a_clear_answer(page, live_server, reviewer, queue):
    log_in(page, live_server, reviewer)
    page.goto(live_server.url + reverse("revision_review", args=[queue.product_id, queue.number]))
    item = ReviewItem.objects.get(revision=queue, rule_id="SEP-001", kind="raised")
    card = page.locator(f"#item-{item.pk}")
    card.locator("select[name=disposition]").select_option("waived")
    card.locator("textarea[name=justification]").fill("Pilot only")
    with page.expect_response(lambda response: "/decide/" in response.url) as answer:
        card.get_by_role("button", name="Record").click()
    assert answer.value.status == 403
    expect(card).to_contain_text("Only an approver may accept the risk of a blocker")
    assert ReviewItem.objects.get(pk=item.pk).disposition == "open"
