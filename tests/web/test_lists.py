"""Every list and page shows a revision's true state (designs.lifecycle), and a signed revision links to its
record wherever it appears; lists read the counts each revision stored, never a checklist; they page and filter
in the database."""

import re

import pytest
from django.core.cache import cache
from django.urls import reverse

from projectapp import fragments, paging
from projectapp.designs import services
from projectapp.designs.models import Revision
from projectapp.reviews.services import revision_submit
from projectapp.signoff.models import SignedRecord
from tests.web.conftest import EXAMPLES
from tests.web.test_lifecycle import settle, sign, sign_all


@pytest.fixture
def signed_with_blockers(product, author, reviewer, approver):
    """The hive gateway's revision 1 signed: its blocker (SEP-001) waived by the approver."""
    revision = revision_submit(revision=product.draft, user=author)
    settle(revision, reviewer, approver)
    record = sign_all(revision, author, reviewer, approver)
    assert Revision.objects.get(pk=revision.pk).blockers >= 1
    return revision, record


def page(client, user, url, **query) -> str:
    client.force_login(user)
    response = client.get(url, query)
    assert response.status_code == 200, (url, query, response.status_code)
    return response.content.decode()


def row_of(html: str, name: str) -> str:
    return next(row for row in re.findall(r"<tr>.*?</tr>", html, re.S) if name in row)


def record_link(revision) -> str:
    return reverse("revision_record", args=[revision.product_id, revision.number])


def test_a_signed_product_shows_its_state_and_record_not_red_blockers(client, signed_with_blockers, reviewer):
    revision, record = signed_with_blockers
    row = row_of(page(client, reviewer, reverse("product_list")), "Hive gateway")
    blockers = Revision.objects.get(pk=revision.pk).blockers
    assert "status-signed" in row and f'href="{record_link(revision)}"' in row
    assert f"signed — {blockers} blocker{'s' if blockers != 1 else ''} waived by an approver" in row
    assert "count-blocker" not in row  # no red count on a signed product
    assert client.get(record_link(revision)).headers["Location"] == record.get_absolute_url()


def test_the_product_list_names_the_record_in_force_beside_a_newer_draft(client, signed_with_blockers, author,
                                                                          reviewer):
    revision, _ = signed_with_blockers
    services.draft_get_or_start(product=revision.product, user=author)
    row = row_of(page(client, reviewer, reverse("product_list")), "Hive gateway")
    assert "status-draft" in row and "count-blocker" in row  # the draft raises the blocker again, live
    assert "in force:" in row and f'href="{record_link(revision)}"' in row


def test_every_page_of_a_revision_shows_its_state_and_record(client, signed_with_blockers, author, reviewer):
    revision, record = signed_with_blockers
    product = revision.product
    draft = services.draft_get_or_start(product=product, user=author)
    second = revision_submit(revision=draft, user=author)
    urls = [reverse("product_detail", args=[product.pk]), revision.get_absolute_url(),
            reverse("revision_review", args=[product.pk, 1]), reverse("signoff_page", args=[product.pk, 1])]
    for url in urls:
        html = page(client, reviewer, url)
        assert "status-signed" in html and f'href="{record_link(revision)}"' in html, url
    product_page = page(client, reviewer, urls[0])
    assert "status-in-review" in row_of(product_page, "Design revision 2")
    review = page(client, reviewer, urls[2])
    assert "is signed: its review is frozen" in review
    dashboard = page(client, reviewer, reverse("review_dashboard"), state="all")
    assert f"Hive gateway, design revision {second.number}" in dashboard
    assert "Hive gateway, design revision 1<" not in dashboard
    assert "status-in-review" in dashboard
    archive = page(client, reviewer, reverse("archive_list"))
    assert record.get_absolute_url() in archive and "status-signed" in archive


def test_a_cached_revision_page_shows_each_new_state_at_once(client, product, author, reviewer, approver):
    revision = revision_submit(revision=product.draft, user=author)
    url = revision.get_absolute_url()
    assert "status-in-review" in page(client, reviewer, url)  # now kept in the cache
    settle(revision, reviewer, approver)
    sign(revision, author, "author")
    assert "status-signing" in page(client, reviewer, url)
    sign(revision, reviewer, "reviewer")
    sign(revision, approver, "approver")
    html = page(client, reviewer, url)
    assert "status-signed" in html and record_link(revision) in html


def test_lists_never_evaluate_a_design(client, product, submitted_product, author, reviewer, monkeypatch):
    from projectapp.designs import checklists

    def evaluate(*args, **kwargs):
        raise AssertionError("a list evaluated a design")

    monkeypatch.setattr(checklists, "evaluate", evaluate)
    cache.clear()
    fragments.LOCAL.clear()
    for url in (reverse("product_list"), reverse("review_dashboard"), reverse("archive_list")):
        html = page(client, reviewer, url)
        assert "Earshot" in html
    assert "count-blocker" in row_of(page(client, reviewer, reverse("product_list")), "Hive gateway")


def test_an_unfinished_draft_says_how_many_questions_are_left(client, team, author, reviewer):
    product = services.product_create(team=team, name="Culvert level sensor", user=author)  # nothing answered
    row = row_of(page(client, reviewer, reverse("product_list")), "Culvert level sensor")
    left = Revision.objects.get(pk=product.draft.pk).unanswered
    assert left > 0 and f"not finished: {left} question{'s' if left != 1 else ''} to answer" in row


# -- paging and filters ---------------------------------------------------------------------------------------------
@pytest.fixture
def many(team, author, monkeypatch):
    """Five products, two to a page."""
    monkeypatch.setattr(paging, "PER_PAGE", 2)
    names = [f"Tank level sensor {index}" for index in range(5)]
    for name in names:
        services.product_create(team=team, name=name, user=author)
    return names


def test_the_product_list_pages_in_name_order(client, many, author):
    first = page(client, author, reverse("product_list"))
    assert "5 products · page 1 of 3" in first and 'href="?page=2"' in first
    assert many[0] in first and many[1] in first and many[2] not in first
    third = page(client, author, reverse("product_list"), page=3)
    assert many[4] in third and many[0] not in third and 'href="?page=2"' in third
    assert many[4] in page(client, author, reverse("product_list"), page=99)  # past the end: the last page


def test_a_page_link_keeps_the_filters(client, many, product, author):
    html = page(client, author, reverse("product_list"), q="sensor", state="draft")
    assert "5 products" in html and "Hive gateway" not in html
    assert 'href="?q=sensor&amp;state=draft&amp;page=2"' in html


def test_the_product_list_filters_on_the_latest_revision(client, product, submitted_product, team, author):
    services.product_create(team=team, name="Culvert level sensor", user=author)
    in_review = page(client, author, reverse("product_list"), state="in-review")
    assert "Orchard soil probe" in in_review and "Hive gateway" not in in_review
    blockers = page(client, author, reverse("product_list"), raises="blocker")
    assert "Hive gateway" in blockers and "Orchard soil probe" not in blockers
    assert "Culvert level sensor" not in blockers  # not checked: no counts, so it raises nothing known
    category = page(client, author, reverse("product_list"), category="cat-m1")
    assert "Orchard soil probe" in category and "Hive gateway" not in category
    assert "No product matches these filters" in page(client, author, reverse("product_list"), q="nothing like it")


def test_the_dashboard_and_archive_page_too(client, team, author, reviewer, approver, monkeypatch):
    monkeypatch.setattr(paging, "PER_PAGE", 2)
    product = services.product_create(team=team, name="Hive gateway", user=author)
    services.design_import(product=product, text=(EXAMPLES / "hive-gateway.json").read_text(),
                           source="hive-gateway.json", user=author)
    revision = revision_submit(revision=product.draft, user=author)
    # Steps outside the team are planned on the review page, not listed on the dashboard.
    items = revision.review_items.filter(kind="raised", process_step__isnull=True).count()
    dashboard = page(client, reviewer, reverse("review_dashboard"), state="all")
    assert items == 2  # SEP-001 and EFF-001; the rest are certification and RF-exposure steps
    monkeypatch.setattr(paging, "PER_PAGE", 1)
    dashboard = page(client, reviewer, reverse("review_dashboard"), state="all")
    assert "2 items · page 1 of 2" in dashboard
    assert dashboard.count('<span class="badge badge-blocker">') == 1  # gravest first: the blocker on page 1
    monkeypatch.setattr(paging, "PER_PAGE", 2)
    settle(revision, reviewer, approver)
    sign_all(revision, author, reviewer, approver)
    for _ in range(2):
        revision = revision_submit(revision=services.draft_get_or_start(product=product, user=author), user=author)
        settle(revision, reviewer, approver)
        sign_all(revision, author, reviewer, approver)
    archive = page(client, reviewer, reverse("archive_list"))
    assert "3 records · page 1 of 2" in archive and archive.count("status-superseded") == 1
    last = page(client, reviewer, reverse("archive_list"), page=2)
    assert last.count("status-superseded") == 1 and "status-signed" not in last
    assert SignedRecord.objects.count() == 3


def test_every_review_write_keeps_the_dashboards_tally(client, product, author, reviewer, approver):
    from django.db.models import Count

    from projectapp.reviews.models import OPEN_ITEMS, ReviewItem, ReviewTally
    from projectapp.reviews.services import review_item_assign, review_item_confirm, review_item_decide

    def counted_now(revision) -> list:
        return sorted([list(row) for row in ReviewItem.objects.filter(revision=revision, kind="raised")
                       .filter(OPEN_ITEMS).order_by().values_list("severity", "topic", "assignee_id")
                       .annotate(n=Count("id"))], key=repr)

    def kept(revision) -> list:
        return sorted(ReviewTally.objects.get(revision=revision).groups, key=repr)

    revision = revision_submit(revision=product.draft, user=author)
    assert kept(revision) == counted_now(revision) and counted_now(revision)
    item = revision.review_items.get(rule_id="EFF-001", kind="raised")
    review_item_assign(item=item, user=reviewer, assignee=reviewer, expected_version=item.version)
    assert kept(revision) == counted_now(revision)
    item.refresh_from_db()
    review_item_decide(item=item, user=reviewer, disposition="change", justification="",
                       expected_version=item.version)
    assert kept(revision) == counted_now(revision)
    second = revision_submit(revision=services.draft_get_or_start(product=product, user=author), user=author)
    carried = second.review_items.get(rule_id="EFF-001", kind="raised")
    assert carried.is_carried_unconfirmed and kept(second) == counted_now(second)
    review_item_confirm(item=carried, user=reviewer, expected_version=carried.version)
    assert kept(second) == counted_now(second)
    html = page(client, reviewer, reverse("review_dashboard"))
    open_now = sum(row[3] for row in counted_now(second))
    assert f"{open_now} item{'s' if open_now != 1 else ''}" in html  # the pager's count of the open items
    assert ReviewTally.objects.get(revision=second).open_items == open_now
