"""A product's whole life in the browser, through two design revisions, with three people of one team and an
outsider of another: submitted → assigned → told (inbox and a real e-mail) → decided with an attachment and a
mention → steps planned → signed → archived → a second revision carrying decisions and comments → the rule-set
upgrade page showing what the current rules raise instead. Each person uses the pages; the outsider gets a 404
wherever they try."""

import os

import pytest
from django.urls import reverse
from playwright.sync_api import expect

from projectapp.designs import services as design_services
from projectapp.designs.models import Revision
from projectapp.reviews.models import ProcessStep, ReviewItem, TopicReviewer
from projectapp.signoff.models import SignedRecord
from projectapp.teams.models import Role, Team
from rules.findings import TOPICS
from tests.browser.conftest import DESKTOP
from tests.browser.test_questionnaire_flow import log_in
from tests.web.conftest import EXAMPLES, PASSWORD, make_user
from tests.web.test_notices import bodies, smtp, with_addresses  # noqa: F401 (smtp: the SMTP server fixture)
from tests.web.test_reevaluate import OLDER, store_older

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]  # e-mail leaves when a write commits
SHOTS = os.environ.get("EARSHOT_SHOTS")  # a folder for screenshots to look at (never the repo)
LETTER = b"%PDF-1.4\n% Pilot acceptance letter (test document)\n"


@pytest.fixture
def approver(team):
    return make_user("approver", team, Role.APPROVER)


@pytest.fixture
def outsider(team):
    return make_user("outsider", Team.objects.create(name="Larchmere Metering"), Role.AUTHOR, Role.REVIEWER,
                     Role.APPROVER)


@pytest.fixture
def people_pages(browser):
    """A browser context per person, so each keeps their own session, as four people at four desks would."""
    contexts = []

    def open_for(live_server, user):
        context = browser.new_context(viewport=DESKTOP)
        contexts.append(context)
        page = context.new_page()
        log_in(page, live_server, user)
        return page

    yield open_for
    for context in contexts:
        context.close()


def shot(page, name: str) -> None:
    if SHOTS:
        page.screenshot(path=os.path.join(SHOTS, name), full_page=True)


def refused_to(outsider_page, live_server, *paths: str) -> None:
    for path in paths:
        response = outsider_page.goto(live_server.url + path)
        assert response.status == 404, f"{path} answered {response.status} to an outsider"


def card_of(page, revision: Revision, rule_id: str):
    item = ReviewItem.objects.get(revision=revision, kind="raised", rule_id=rule_id)
    return page.locator(f"#item-{item.pk}"), item


def decide(card, disposition: str, justification: str) -> None:
    card.locator("select[name=disposition]").select_option(disposition)
    card.locator("textarea[name=justification]").fill(justification)
    card.get_by_role("button", name="Record").click()
    expect(card.locator(".saved")).to_be_visible()


def test_a_product_lives_through_two_design_revisions(people_pages, live_server, smtp, team, author,  # noqa: F811
                                                      reviewer, approver, outsider):
    with_addresses(author, reviewer, approver)
    for topic in TOPICS:  # the RF topics to the reviewer; the approvals outside the team to the approver
        TopicReviewer.objects.create(team=team, topic=topic,
                                     reviewer=approver if topic in ("certification", "rf-exposure") else reviewer)
    product = design_services.product_create(team=team, name="Hive gateway", user=author)
    design_services.design_import(product=product, text=(EXAMPLES / "hive-gateway.json").read_text(),
                                  source="hive-gateway.json", user=author)
    stranger = people_pages(live_server, outsider)
    refused_to(stranger, live_server, reverse("product_detail", args=[product.pk]),
               reverse("draft_edit", args=[product.pk]))

    # -- the author submits ---------------------------------------------------------------------------------
    maren = people_pages(live_server, author)
    maren.goto(live_server.url + reverse("draft_edit", args=[product.pk]))
    maren.get_by_role("button", name="Submit for review").click()
    expect(maren.get_by_role("heading", name="Design revision 1")).to_contain_text("In review")
    first = product.revisions.get(number=1)

    # -- the reviewer is told, in the inbox and by e-mail, and works through the queue -------------------------
    tobias = people_pages(live_server, reviewer)
    expect(tobias.locator("header .unread:visible")).to_have_text("1")  # the bar's count (the phone menu holds a hidden copy)
    tobias.get_by_role("link", name="Inbox").click()
    expect(tobias.locator("table")).to_contain_text("Hive gateway, design revision 1: 2 items to review")
    assert any("Hive gateway, design revision 1: 2 items to review" in body for body in bodies(smtp))
    assert "reviewer@tallow-creek.example" in ", ".join(m["X-Envelope-To"] for m in smtp.messages)
    shot(tobias, "life-1-inbox.png")
    tobias.get_by_role("button", name="Open").first.click()
    expect(tobias.locator("#dashboard-items tbody tr")).to_have_count(2)  # SEP-001 and EFF-001, both theirs
    expect(tobias.locator("#dashboard-items")).not_to_contain_text("CRT-001")  # a step, planned elsewhere

    tobias.goto(live_server.url + reverse("revision_review", args=[product.pk, 1]))
    efficiency, efficiency_item = card_of(tobias, first, "EFF-001")
    decide(efficiency, "change", "DIV moves to the lid's flex antenna")
    efficiency.locator("input[type=file]").set_input_files(
        files=[{"name": "div-flex-efficiency.pdf", "mimeType": "application/pdf", "buffer": LETTER}])
    efficiency.get_by_role("button", name="Attach", exact=True).click()
    expect(tobias.get_by_role("link", name="div-flex-efficiency.pdf")).to_be_visible()

    spacing, spacing_item = card_of(tobias, first, "SEP-001")
    tobias.goto(live_server.url + reverse("review_item", args=[spacing_item.pk]))
    tobias.get_by_label("Comment").fill("@approver your call: the pilot ships as it is, DIV moves in revision 2")
    tobias.get_by_role("button", name="Add comment").click()
    expect(tobias.locator(".comment").last).to_contain_text("@approver your call")
    refused_to(stranger, live_server, reverse("review_item", args=[spacing_item.pk]),
               reverse("revision_review", args=[product.pk, 1]))

    # -- the approver: mentioned, owns the steps outside the team, waives the blocker, plans the steps ---------
    ines = people_pages(live_server, approver)
    ines.get_by_role("link", name="Inbox").click()
    inbox = ines.locator("table")
    expect(inbox).to_contain_text("Mentioned you")
    steps = ProcessStep.objects.filter(revision=first).count()
    expect(inbox).to_contain_text(f"{steps} steps outside the team to plan")
    ines.goto(live_server.url + reverse("revision_review", args=[product.pk, 1]))
    spacing, _ = card_of(ines, first, "SEP-001")
    decide(spacing, "waived", "Accepted for a 20-unit pilot; DIV moves in revision 2")
    for step in ProcessStep.objects.filter(revision=first).order_by("id")[:2]:
        card = ines.locator(f"#step-{step.pk}")
        expect(card).to_contain_text("owner approver")
        card.locator("select[name=status]").select_option("in-progress")
        card.locator("input[name=planned_on]").fill("2027-03-01")
        card.locator("input[name=reference]").fill(f"LAB-{step.pk:04d}")
        card.get_by_role("button", name="Save step").click()
        expect(ines.locator(f"#step-{step.pk}")).to_contain_text(f"reference LAB-{step.pk:04d}")
    shot(ines, "life-2-review.png")

    # -- three signatures; the others are told; the record is archived -------------------------------------
    for page, role in ((maren, "author"), (tobias, "reviewer"), (ines, "approver")):
        page.goto(live_server.url + reverse("signoff_page", args=[product.pk, 1]))
        page.locator("#id_role").select_option(role)
        page.locator("#id_password").fill(PASSWORD)
        page.get_by_role("button", name="Sign").click()
        expect(page.locator("table")).to_contain_text(role.capitalize())
    record = SignedRecord.objects.get(revision=first)
    tobias.goto(live_server.url + reverse("inbox"))  # the author signed first: the others were waited for
    expect(tobias.locator("table")).to_contain_text("Your signature is awaited")
    maren.goto(live_server.url + reverse("inbox"))
    expect(maren.locator("table")).to_contain_text("A revision was signed")
    maren.goto(live_server.url + reverse("product_detail", args=[product.pk]))
    expect(maren.get_by_role("link", name="record").first).to_be_visible()
    maren.goto(live_server.url + reverse("archive_list"))
    maren.get_by_role("link", name="design revision 1").first.click()
    expect(maren.locator("main")).to_contain_text(record.sha256)
    download = maren.request.get(live_server.url + reverse("record_download", args=[record.pk]))
    assert download.status == 200 and download.body()[:5] == b"%PDF-"
    refused_to(stranger, live_server, reverse("record_detail", args=[record.pk]),
               reverse("record_download", args=[record.pk]), reverse("record_pack", args=[record.pk]))
    for listing in ("archive_list", "product_list", "review_dashboard", "inbox"):  # lists of another team's
        stranger.goto(live_server.url + reverse(listing))
        expect(stranger.locator("main")).not_to_contain_text("Hive gateway")
    ines.goto(live_server.url + reverse("revision_review", args=[product.pk, 1]))  # signed: read-only, kept
    expect(ines.locator("main")).to_contain_text("Revision 1 is signed: its review is frozen.")
    expect(ines.get_by_role("button", name="Record")).to_have_count(0)
    expect(ines.get_by_role("button", name="Attach", exact=True)).to_have_count(0)
    expect(ines.get_by_role("link", name="div-flex-efficiency.pdf")).to_be_visible()

    # -- the second revision carries the decisions and the discussion --------------------------------------
    maren.goto(live_server.url + reverse("product_detail", args=[product.pk]))
    maren.get_by_role("button", name="Start a new draft").click()
    expect(maren.get_by_role("heading", name="Draft design revision 2")).to_be_visible()
    maren.get_by_role("button", name="Submit for review").click()
    expect(maren.get_by_role("heading", name="Design revision 2")).to_contain_text("In review")
    second = product.revisions.get(number=2)
    tobias.goto(live_server.url + reverse("revision_review", args=[product.pk, 2]))
    carried, _ = card_of(tobias, second, "EFF-001")
    expect(carried).to_contain_text("carried from design revision 1 — not yet confirmed")
    expect(carried.get_by_role("button", name="Confirm carried decision")).to_be_visible()
    _, spacing_again = card_of(tobias, second, "SEP-001")
    tobias.goto(live_server.url + reverse("review_item", args=[spacing_again.pk]))
    expect(tobias.locator(".comment").first).to_contain_text("written on design revision 1")
    expect(tobias.locator(".comment").first).to_contain_text("@approver your call")

    # -- the rules move on: the signed revision shows what they would raise instead ---------------------------
    store_older(first, lambda findings: findings.remove(next(f for f in findings if f["id"] == "EFF-001")))
    ines.goto(live_server.url + reverse("team_upgrades", args=[team.pk]))
    row = ines.locator("table tbody tr").filter(has_text="Hive gateway")
    expect(row).to_contain_text("Signed")
    expect(row.locator("td.num").first).to_have_text("1")  # one new finding: the EFF-001 the older set lacked
    row.get_by_role("link", name="1", exact=True).click()
    upgrade = ines.locator("section.upgrade")
    expect(upgrade).to_contain_text(f"rule set {OLDER}")
    expect(upgrade).to_contain_text("1 new, 0 gone, 0 changed")
    expect(upgrade.locator("ul").first).to_contain_text("EFF-001")
    shot(ines, "life-3-upgrade.png")
    refused_to(stranger, live_server, reverse("team_upgrades", args=[team.pk]))
