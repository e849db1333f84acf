"""Engineering review: the permission matrix, carry-forward, conflicts, the audit trail."""

import copy
import json

import pytest
from django.urls import reverse

from projectapp.audit.models import AppendOnlyError, AuditEvent
from projectapp.designs import services as design_services
from projectapp.reviews.models import Comment, Disposition, ReviewItem
from projectapp.reviews.services import review_item_decide, revision_submit
from tests.web.conftest import EXAMPLES

HTMX = {"HTTP_HX_REQUEST": "true"}


def hive_document() -> dict:
    return json.loads((EXAMPLES / "hive-gateway.json").read_text())


@pytest.fixture
def reviewed(product, author):
    """The hive gateway submitted: its findings are review items (SEP-001 is its blocker)."""
    revision_submit(revision=product.draft, user=author)
    return product


def item_of(product, rule_id: str, number: int = 1) -> ReviewItem:
    return ReviewItem.objects.get(revision__product=product, revision__number=number, rule_id=rule_id,
                                  kind=ReviewItem.Kind.RAISED)


def post(client, user, name: str, item: ReviewItem, data: dict, **extra):
    client.force_login(user)
    return client.post(reverse(name, args=[item.pk]), data, **extra)


def test_submission_makes_one_review_item_per_finding(reviewed):
    revision = reviewed.revisions.get(number=1)
    findings = revision.evaluation["findings"]
    items = revision.review_items.filter(kind=ReviewItem.Kind.RAISED)
    assert items.count() == len(findings)
    assert {(item.rule_id, tuple(item.subjects)) for item in items} == {(f["id"], tuple(f["subjects"])) for f in findings}
    assert all(item.disposition == Disposition.OPEN for item in items)
    [event] = AuditEvent.objects.filter(product=reviewed, action="submitted")
    assert "Submitted design revision 1" in event.summary


# -- the permission matrix (author, reviewer, approver, outsider) for every action -------------------------

ACTIONS = {
    "decide on a warning": ("review_item_decide", "EFF-001", {"disposition": "change", "justification": ""}),
    "waive a warning": ("review_item_decide", "EFF-001", {"disposition": "waived", "justification": "Tested in chamber"}),
    "waive a blocker": ("review_item_decide", "SEP-001", {"disposition": "waived", "justification": "Pilot run only"}),
    "assign": ("review_item_assign", "EFF-001", {"assignee": "REVIEWER"}),
}
EXPECTED = {  # status per person: 302/200 allowed, 403 member without the right, 404 outsider
    "decide on a warning": {"author": 403, "reviewer": 200, "approver": 200, "outsider": 404},
    "waive a warning": {"author": 403, "reviewer": 200, "approver": 200, "outsider": 404},
    "waive a blocker": {"author": 403, "reviewer": 403, "approver": 200, "outsider": 404},
    "assign": {"author": 403, "reviewer": 200, "approver": 200, "outsider": 404},
}


@pytest.mark.parametrize("action", list(ACTIONS))
@pytest.mark.parametrize("person", ["author", "reviewer", "approver", "outsider"])
def test_the_permission_matrix(client, reviewed, author, reviewer, approver, outsider, action, person):
    users = {"author": author, "reviewer": reviewer, "approver": approver, "outsider": outsider}
    name, rule_id, data = ACTIONS[action]
    item = item_of(reviewed, rule_id)
    data = {key: (reviewer.pk if value == "REVIEWER" else value) for key, value in data.items()}
    response = post(client, users[person], name, item, {**data, "version": item.version}, **HTMX)
    assert response.status_code == EXPECTED[action][person]
    changed = ReviewItem.objects.get(pk=item.pk).version != item.version
    assert changed == (EXPECTED[action][person] == 200)


@pytest.mark.parametrize(("person", "status"), [("author", 302), ("reviewer", 302), ("approver", 302),
                                                ("outsider", 404)])
def test_every_team_member_may_comment_and_an_outsider_gets_404(client, reviewed, author, reviewer, approver,
                                                                outsider, person, status):
    users = {"author": author, "reviewer": reviewer, "approver": approver, "outsider": outsider}
    item = item_of(reviewed, "SEP-001")
    response = post(client, users[person], "review_item_comment", item, {"text": "Can DIV move to the far corner?"})
    assert response.status_code == status
    assert Comment.objects.filter(item=item).exists() == (status == 302)


@pytest.mark.parametrize("name", ["review_item", "review_dashboard"])
def test_review_pages_deny_outsiders_and_anonymous_visitors(client, reviewed, outsider, name):
    item = item_of(reviewed, "SEP-001")
    url = reverse(name, args=[item.pk]) if name == "review_item" else reverse(name)
    assert client.get(url).status_code == 302
    client.force_login(outsider)
    response = client.get(url)
    assert response.status_code == (404 if name == "review_item" else 200)
    assert "SEP-001" not in response.content.decode() or name == "review_item"
    for page in ("revision_review", "revision_compare", "product_audit"):
        args = [reviewed.pk, 1] if page == "revision_review" else [reviewed.pk]
        assert client.get(reverse(page, args=args)).status_code == 404


def test_a_waiver_or_not_applicable_needs_a_justification(client, reviewed, reviewer):
    item = item_of(reviewed, "EFF-001")
    response = post(client, reviewer, "review_item_decide", item,
                    {"disposition": "not-applicable", "justification": "  ", "version": item.version}, **HTMX)
    assert response.status_code == 400
    assert "justification: required for &#x27;Not applicable&#x27;" in response.content.decode()
    assert ReviewItem.objects.get(pk=item.pk).disposition == Disposition.OPEN


def test_without_javascript_a_decision_redirects_back(client, reviewed, reviewer):
    item = item_of(reviewed, "EFF-001")
    back = reverse("revision_review", args=[reviewed.pk, 1])
    response = post(client, reviewer, "review_item_decide", item,
                    {"disposition": "change", "justification": "", "version": item.version, "next": back})
    assert response.status_code == 302 and response["Location"] == back
    assert ReviewItem.objects.get(pk=item.pk).disposition == Disposition.CHANGE


# -- conflicts ------------------------------------------------------------------------------------------

def test_a_second_reviewer_sees_the_others_change_and_nothing_is_overwritten(client, reviewed, reviewer, approver):
    item = item_of(reviewed, "EFF-001")
    read_version = item.version  # both open the item at this version
    first = post(client, reviewer, "review_item_decide", item,
                 {"disposition": "change", "justification": "Move DIV off the battery", "version": read_version}, **HTMX)
    assert first.status_code == 200
    second = post(client, approver, "review_item_decide", item,
                  {"disposition": "waived", "justification": "Efficiency fine for indoor use", "version": read_version},
                  **HTMX)
    page = second.content.decode()
    assert second.status_code == 409
    assert "changed this item while you were editing" in page and "Will change the design" in page
    assert "Efficiency fine for indoor use" in page  # the second person's entry is kept in the form
    stored = ReviewItem.objects.get(pk=item.pk)
    assert (stored.disposition, stored.justification) == ("change", "Move DIV off the battery")
    # saving again, now based on the current version, replaces it knowingly
    third = post(client, approver, "review_item_decide", item,
                 {"disposition": "waived", "justification": "Efficiency fine for indoor use", "version": stored.version},
                 **HTMX)
    assert third.status_code == 200
    assert ReviewItem.objects.get(pk=item.pk).disposition == "waived"


# -- carry-forward across three revisions ------------------------------------------------------------------

def submit_with(product, author, mutate) -> None:
    draft = design_services.draft_get_or_start(product=product, user=author)
    document = copy.deepcopy(draft.document)
    mutate(document)
    design_services.draft_save_document(revision=draft, document=document, user=author)
    revision_submit(revision=draft, user=author)


def test_decisions_carry_forward_across_three_revisions(client, reviewed, author, reviewer, approver):
    # revision 1: DIV 45 mm from MAIN, co-polarized at 791 MHz (lambda/2pi 60.3 mm, Wheeler 1959): SEP-001 blocker
    sep = item_of(reviewed, "SEP-001")
    eff = item_of(reviewed, "EFF-001")
    review_item_decide(item=sep, user=approver, disposition="waived", justification="Pilot of 20 units",
                       expected_version=sep.version)
    review_item_decide(item=eff, user=reviewer, disposition="change", justification="", expected_version=eff.version)

    # revision 2: DIV turned 90 degrees, same place: SEP-001 stays (now a warning), EFF-001 unchanged
    submit_with(reviewed, author, lambda d: d["antennas"][1].update(polarization=[0, 1, 0]))
    sep2, eff2 = item_of(reviewed, "SEP-001", 2), item_of(reviewed, "EFF-001", 2)
    assert sep2.severity == "warning" and sep2.disposition == "waived" and sep2.carried_from.number == 1
    assert eff2.disposition == "change" and eff2.is_carried_unconfirmed
    client.force_login(reviewer)
    page = client.get(reverse("revision_review", args=[reviewed.pk, 2])).content.decode()
    assert "carried from design revision 1 — not yet confirmed" in page
    response = client.post(reverse("review_item_confirm", args=[eff2.pk]), {"version": eff2.version}, **HTMX)
    assert response.status_code == 200 and not ReviewItem.objects.get(pk=eff2.pk).is_carried_unconfirmed

    # revision 3: DIV moved 150 mm away (beyond lambda/4 = 94.7 mm at 791 MHz): SEP-001 resolved
    submit_with(reviewed, author, lambda d: d["antennas"][1].update(position_mm=[165, 10, 12]))
    revision3 = reviewed.revisions.get(number=3)
    assert not revision3.review_items.filter(rule_id="SEP-001", kind="raised").exists()
    resolved = revision3.review_items.get(rule_id="SEP-001", kind="resolved")
    assert resolved.finding["severity"] == "warning"
    eff3 = item_of(reviewed, "EFF-001", 3)
    assert eff3.disposition == "change" and eff3.carried_from.number == 2  # confirmed in 2, carried from 2
    # an item new in revision 3 starts open: none here, but every carried item is still unconfirmed
    assert all(item.is_carried_unconfirmed or item.disposition == "open"
               for item in revision3.review_items.filter(kind="raised"))
    page = client.get(reverse("revision_review", args=[reviewed.pk, 3])).content.decode()
    assert "Resolved by this revision" in page


def test_the_comparison_shows_changed_fields_and_checklist_changes(client, reviewed, author, reviewer):
    submit_with(reviewed, author, lambda d: d["antennas"][1].update(polarization=[0, 1, 0]))
    client.force_login(reviewer)
    page = client.get(reverse("revision_compare", args=[reviewed.pk]) + "?from=1&to=2").content.decode()
    assert "antennas[1].polarization" in page
    assert "Severity changed (1)" in page and "SEP-001" in page


# -- the audit trail --------------------------------------------------------------------------------------

def test_the_audit_trail_records_who_did_what_and_cannot_be_changed(client, reviewed, reviewer, approver):
    item = item_of(reviewed, "SEP-001")
    post(client, reviewer, "review_item_assign", item, {"assignee": reviewer.pk, "version": item.version})
    item.refresh_from_db()
    post(client, approver, "review_item_decide", item,
         {"disposition": "waived", "justification": "Pilot of 20 units", "version": item.version})
    post(client, reviewer, "review_item_comment", item, {"text": "Agreed for the pilot only."})
    events = list(AuditEvent.objects.filter(item=item).order_by("id"))
    assert [event.action for event in events] == ["assigned", "waiver", "comment"]
    assert [event.actor for event in events] == [reviewer, approver, reviewer]
    assert events[0].changes == {"assignee": [None, "reviewer"]}
    assert events[1].changes == {"disposition": ["open", "waived"], "justification": ["", "Pilot of 20 units"]}
    with pytest.raises(AppendOnlyError):
        events[0].summary = "edited"
        events[0].save()
    with pytest.raises(AppendOnlyError):
        events[0].delete()
    client.force_login(reviewer)
    page = client.get(reverse("product_audit", args=[reviewed.pk])).content.decode()
    assert "Granted a waiver" in page and "Pilot of 20 units" in page and "Submitted a revision" in page


def test_the_dashboard_filters_and_shows_my_queue(client, reviewed, reviewer):
    item = item_of(reviewed, "SEP-001")
    post(client, reviewer, "review_item_assign", item, {"assignee": reviewer.pk, "version": item.version})
    page = client.get(reverse("review_dashboard") + "?assignee=me").content.decode()
    assert "My queue (1 open)" in page and item.title in page
    page = client.get(reverse("review_dashboard") + "?severity=note").content.decode()
    assert item.title not in page
    partial = client.get(reverse("review_dashboard") + "?topic=separation", **HTMX).content.decode()
    assert partial.startswith('<div id="dashboard-items">') and item.title in partial


# -- a decision never gains weight by being carried ------------------------------------------------------------

def cross_polarized(document: dict) -> None:
    # DIV turned 90 degrees from MAIN, 45 mm away: inside lambda/2pi (60.3 mm at 791 MHz, Wheeler 1959) but
    # cross-polarized, so SEP-001 is a warning (design.md severity policy)
    document["antennas"][1]["polarization"] = [0, 1, 0]


def co_polarized(document: dict) -> None:
    document["antennas"][1]["polarization"] = [-1, 0, 0]  # back in line with MAIN: SEP-001 is a blocker


def test_a_warning_waiver_is_not_carried_to_a_revision_where_the_finding_is_a_blocker(
        client, product, author, reviewer):
    from projectapp.signoff.services import readiness

    submit_with(product, author, cross_polarized)
    sep = item_of(product, "SEP-001")
    assert sep.severity == "warning"
    review_item_decide(item=sep, user=reviewer, disposition="waived", justification="Chamber test showed 14 dB",
                       expected_version=sep.version)
    submit_with(product, author, co_polarized)
    sep2 = item_of(product, "SEP-001", 2)
    assert sep2.severity == "blocker"
    assert (sep2.disposition, sep2.justification, sep2.decided_by, sep2.carried_from) == ("open", "", None, None)
    # what revision 1 decided is kept beside the item, marked as not carried
    assert sep2.previous_decision["carried"] is False
    assert (sep2.previous_decision["revision"], sep2.previous_decision["disposition"],
            sep2.previous_decision["decided_by"], sep2.previous_decision["decided_severity"]) == (
        1, "waived", "reviewer", "warning")
    client.force_login(reviewer)
    page = client.get(reverse("revision_review", args=[product.pk, 2])).content.decode()
    assert "not carried: it is a blocker now" in page
    # nothing to confirm, and the gate still wants an approver's waiver
    response = client.post(reverse("review_item_confirm", args=[sep2.pk]), {"version": sep2.version}, **HTMX)
    assert ReviewItem.objects.get(pk=sep2.pk).disposition == "open"
    assert response.status_code == 200
    revision2 = product.revisions.get(number=2)
    assert any(o.startswith("SEP-001") and "waived by an approver" in o for o in readiness(revision2).obstacles)


def test_only_an_approver_confirms_a_carried_blocker_waiver(client, reviewed, author, reviewer, approver):
    from projectapp.signoff.services import readiness

    sep = item_of(reviewed, "SEP-001")
    review_item_decide(item=sep, user=approver, disposition="waived", justification="Pilot of 20 units",
                       expected_version=sep.version)
    submit_with(reviewed, author, lambda d: d["product"].update(revision="B"))
    sep2 = item_of(reviewed, "SEP-001", 2)
    assert sep2.severity == "blocker" and sep2.disposition == "waived" and sep2.is_carried_unconfirmed
    response = post(client, reviewer, "review_item_confirm", sep2, {"version": sep2.version}, **HTMX)
    assert response.status_code == 403 and "Only an approver" in response.content.decode()
    assert ReviewItem.objects.get(pk=sep2.pk).is_carried_unconfirmed
    response = post(client, approver, "review_item_confirm", sep2, {"version": sep2.version}, **HTMX)
    assert response.status_code == 200
    confirmed = ReviewItem.objects.get(pk=sep2.pk)
    assert (confirmed.confirmed_by, confirmed.decided_by, confirmed.decided_in.number) == (approver, approver, 1)
    assert not any(o.startswith("SEP-001") for o in readiness(confirmed.revision).obstacles)


def test_the_gate_counts_a_blocker_waived_only_when_an_approver_granted_or_confirmed_it(client, reviewed, reviewer,
                                                                                        approver):
    """Rows that older code could leave behind: a reviewer's waiver carried onto a blocker and confirmed."""
    from projectapp.signoff.services import readiness

    sep = item_of(reviewed, "SEP-001")
    revision = sep.revision
    ReviewItem.objects.filter(pk=sep.pk).update(
        disposition="waived", justification="Carried from a warning", decided_by=reviewer, decided_severity="warning",
        carried_from=revision, carried_confirmed=True, confirmed_by=reviewer)
    [obstacle] = [o for o in readiness(revision).obstacles if o.startswith("SEP-001")]
    assert "waived by an approver" in obstacle and "reviewer" in obstacle
    client.force_login(reviewer)  # the card says so too
    page = client.get(reverse("revision_review", args=[reviewed.pk, 1])).content.decode()
    assert "Not an approver&#x27;s waiver: an approver must grant or confirm it before sign-off." in page
    ReviewItem.objects.filter(pk=sep.pk).update(confirmed_by=approver)
    assert not any(o.startswith("SEP-001") for o in readiness(revision).obstacles)
    # a waiver an approver granted on this finding as a blocker counts; the same person's waiver of it as a
    # warning does not
    ReviewItem.objects.filter(pk=sep.pk).update(decided_by=approver, confirmed_by=None, carried_from=None,
                                                decided_severity="blocker")
    assert not any(o.startswith("SEP-001") for o in readiness(revision).obstacles)
    ReviewItem.objects.filter(pk=sep.pk).update(decided_severity="warning")
    assert any(o.startswith("SEP-001") for o in readiness(revision).obstacles)


# -- who decided what: the card keeps carried, confirmed and re-decided apart --------------------------------------

def test_a_decision_made_on_a_carried_item_shows_who_made_it_and_what_was_carried(client, reviewed, author,
                                                                                reviewer, approver):
    eff, sep = item_of(reviewed, "EFF-001"), item_of(reviewed, "SEP-001")
    review_item_decide(item=eff, user=reviewer, disposition="discussion", justification="",
                       expected_version=eff.version)
    review_item_decide(item=sep, user=approver, disposition="waived", justification="Pilot of 20 units",
                       expected_version=sep.version)
    submit_with(reviewed, author, lambda d: d["product"].update(revision="B"))
    eff2, sep2 = item_of(reviewed, "EFF-001", 2), item_of(reviewed, "SEP-001", 2)
    assert eff2.disposition == "discussion" and eff2.is_carried_unconfirmed

    # the approver decides on the item carried as "needs discussion": the decision is theirs, made here
    response = post(client, approver, "review_item_decide", eff2,
                    {"disposition": "waived", "justification": "Indoor use only", "version": eff2.version}, **HTMX)
    card = " ".join(response.content.decode().split())
    assert response.status_code == 200
    assert "carried from design revision 1, confirmed" not in card
    assert "Decided by approver" in card and "in this revision" in card
    assert "Design revision 1 carried in: Needs discussion, decided by reviewer" in card
    stored = ReviewItem.objects.get(pk=eff2.pk)
    assert (stored.decided_by, stored.decided_in, stored.confirmed_by) == (approver, stored.revision, None)

    # confirming instead keeps the first decider and names the one who confirmed
    response = post(client, approver, "review_item_confirm", sep2, {"version": sep2.version}, **HTMX)
    card = " ".join(response.content.decode().split())
    assert "Decided by approver" in card and "in design revision 1" in card
    assert "Carried from design revision 1; confirmed here by approver" in card


def test_on_the_review_page_a_decision_updates_the_settled_count_out_of_band(client, reviewed, reviewer):
    item = item_of(reviewed, "EFF-001")
    review_url = reverse("revision_review", args=[reviewed.pk, 1])
    total = ReviewItem.objects.filter(revision__product=reviewed, kind=ReviewItem.Kind.RAISED,
                                      process_step__isnull=True).count()  # external steps are tracked, not settled
    client.force_login(reviewer)
    assert f"0 of {total} items settled" in client.get(review_url).content.decode()
    response = post(client, reviewer, "review_item_decide", item,
                    {"disposition": "change", "justification": "", "version": item.version},
                    HTTP_HX_CURRENT_URL=f"http://testserver{review_url}", **HTMX)
    page = response.content.decode()
    assert f'<span id="review-counts" aria-live="polite" hx-swap-oob="true">1 of {total} items settled</span>' in page
    # From the item's own page (no count there) the card comes alone.
    item = item_of(reviewed, "EFF-001")
    response = post(client, reviewer, "review_item_decide", item,
                    {"disposition": "discussion", "justification": "", "version": item.version},
                    HTTP_HX_CURRENT_URL=f"http://testserver{reverse('review_item', args=[item.pk])}", **HTMX)
    assert "review-counts" not in response.content.decode()
