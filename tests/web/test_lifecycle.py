"""A revision's life (designs/lifecycle.py): every change of state the table allows, made by the services that
own it, and every other one refused with a message and nothing changed; the audit event of each change; the
review closed outside "in review"; withdrawing and starting a draft from a revision."""

import itertools

import pytest
from django.core.exceptions import PermissionDenied
from django.urls import reverse

from projectapp.audit.models import AuditEvent
from projectapp.designs import lifecycle, services
from projectapp.designs.checklists import evaluation_to_freeze
from projectapp.designs.models import FrozenRevisionError, Revision
from projectapp.reviews.models import ReviewItem, SignedRevisionError
from projectapp.reviews.services import (
    review_item_comment,
    review_item_confirm,
    review_item_decide,
    revision_submit,
    revision_submit_with_earlier_checklist,
)
from projectapp.signoff import services as signoff
from projectapp.signoff.models import SignedRecord, Supersession
from rules.registry import RULESET_VERSION
from tests.web.conftest import PASSWORD, signing_request

State = Revision.State


def settle(revision, reviewer, approver) -> None:
    """Waive every blocker (approver), give every warning a disposition (reviewer), confirm what was carried."""
    for item in revision.review_items.filter(kind="raised"):
        if item.is_carried_unconfirmed and item.severity in ("blocker", "warning"):
            review_item_confirm(item=item, user=approver, expected_version=item.version)
        elif item.severity == "blocker":
            review_item_decide(item=item, user=approver, disposition="waived", justification="Pilot of 20 units",
                               expected_version=item.version)
        elif item.severity == "warning":
            review_item_decide(item=item, user=reviewer, disposition="change", justification="",
                               expected_version=item.version)


def sign(revision, user, role: str):
    return signoff.revision_sign(revision=revision, user=user, role=role, password=PASSWORD,
                                 request=signing_request())


def sign_all(revision, author, reviewer, approver) -> SignedRecord:
    for user, role in ((author, "author"), (reviewer, "reviewer"), (approver, "approver")):
        sign(revision, user, role)
    return SignedRecord.objects.get(revision=revision)


def state_of(revision) -> str:
    return Revision.objects.get(pk=revision.pk).state


def next_revision(product, author):
    return revision_submit(revision=services.draft_get_or_start(product=product, user=author), user=author)


def events(revision, action: str) -> list[AuditEvent]:
    return list(AuditEvent.objects.filter(revision=revision, action=action).order_by("id"))


# -- the table ---------------------------------------------------------------------------------------------------
ILLEGAL = [(before, after) for before, after in itertools.product(State.values, State.values)
           if (before, after) not in lifecycle.TRANSITIONS]


def test_the_table_has_the_six_changes_of_a_revisions_life():
    assert set(lifecycle.TRANSITIONS) == {
        (State.DRAFT, State.IN_REVIEW), (State.IN_REVIEW, State.SIGNING), (State.SIGNING, State.SIGNED),
        (State.SIGNED, State.SUPERSEDED), (State.IN_REVIEW, State.WITHDRAWN), (State.SIGNING, State.WITHDRAWN)}


@pytest.mark.parametrize(("before", "after"), ILLEGAL)
def test_every_change_outside_the_table_is_refused_by_name(product, before, after):
    revision = Revision(product=product, number=7, state=before)
    with pytest.raises(lifecycle.IllegalTransition) as refused:
        lifecycle.check(revision, after)
    message = str(refused.value)
    assert message.startswith(f"Revision 7 of {product.name} is {State(before).label.lower()}: ")
    assert lifecycle.WHAT_IT_TAKES[State(after)] in message


# -- each legal change, through the service that owns it ---------------------------------------------------------
def test_submitting_moves_a_draft_into_review_with_its_frozen_counts_and_an_event(product, author):
    draft = product.draft
    revision = revision_submit(revision=draft, user=author)
    assert state_of(revision) == State.IN_REVIEW and revision.state_changed_at is not None
    stored = Revision.objects.get(pk=revision.pk)
    assert stored.counts == revision.evaluation["summary"]  # the list shows the frozen checklist's counts
    [event] = events(revision, "submitted")
    assert event.changes["state"] == ["draft", "in-review"] and event.actor == author
    assert events(revision, "review-opened")  # the review app records the items it opened


def test_a_newer_submission_withdraws_the_older_revision_still_in_review(product, author):
    first = revision_submit(revision=product.draft, user=author)
    second = next_revision(product, author)
    assert (state_of(first), state_of(second)) == (State.WITHDRAWN, State.IN_REVIEW)
    [event] = events(first, "withdrawn")
    assert event.changes["state"] == ["in-review", "withdrawn"] and "revision 2 was submitted" in event.summary
    carried = second.review_items.filter(carried_from__isnull=False)
    assert not carried.exists() or all(item.carried_from_id == first.pk for item in carried)


def test_the_first_signature_starts_signing_and_the_last_signs(product, author, reviewer, approver):
    revision = revision_submit(revision=product.draft, user=author)
    settle(revision, reviewer, approver)
    sign(revision, author, "author")
    assert state_of(revision) == State.SIGNING and lifecycle.is_signing_started(revision.pk)
    [first] = events(revision, "signed")
    assert first.changes == {"state": ["in-review", "signing"], "signature": [None, "author"]}
    sign(revision, reviewer, "reviewer")
    assert state_of(revision) == State.SIGNING
    sign(revision, approver, "approver")
    assert state_of(revision) == State.SIGNED
    [archived] = events(revision, "archived")
    assert archived.changes["state"] == ["signing", "signed"]


def test_signing_a_newer_revision_supersedes_the_signed_one_and_withdraws_the_unsigned(product, author, reviewer,
                                                                                     approver):
    first = revision_submit(revision=product.draft, user=author)
    settle(first, reviewer, approver)
    old_record = sign_all(first, author, reviewer, approver)
    second = next_revision(product, author)
    settle(second, reviewer, approver)
    sign(second, author, "author")  # revision 2 is being signed ...
    third = next_revision(product, author)  # ... when revision 3 is submitted: 2 stays being signed
    assert state_of(second) == State.SIGNING
    settle(third, reviewer, approver)
    new_record = sign_all(third, author, reviewer, approver)
    assert (state_of(first), state_of(second), state_of(third)) == (State.SUPERSEDED, State.WITHDRAWN,
                                                                    State.SIGNED)
    assert Supersession.objects.get(older=old_record).newer == new_record
    assert events(first, "superseded")[0].changes["state"] == ["signed", "superseded"]
    assert events(second, "withdrawn")[0].changes["state"] == ["signing", "withdrawn"]
    with pytest.raises(signoff.SigningError, match="Design revision 3 of Hive gateway is already signed and archived"):
        sign(second, reviewer, "reviewer")


def test_an_author_withdraws_a_revision_in_review_and_its_review_closes(product, author, reviewer):
    revision = revision_submit(revision=product.draft, user=author)
    services.revision_withdraw(revision=revision, user=author, reason="wrong enclosure drawing")
    assert state_of(revision) == State.WITHDRAWN
    [event] = events(revision, "withdrawn")
    assert event.changes == {"state": ["in-review", "withdrawn"], "reason": [None, "wrong enclosure drawing"]}
    item = revision.review_items.filter(kind="raised").first()
    with pytest.raises(PermissionDenied, match="withdrawn"):
        review_item_decide(item=item, user=reviewer, disposition="change", justification="",
                           expected_version=item.version)
    with pytest.raises(PermissionDenied, match="withdrawn"):
        review_item_comment(item=item, user=reviewer, text="too late")
    with pytest.raises(SignedRevisionError):
        ReviewItem.objects.filter(pk=item.pk).update(justification="edited")
    with pytest.raises(signoff.SigningError, match="withdrawn"):
        sign(revision, author, "author")


# -- refused changes, through the same services: nothing changes -------------------------------------------------
def test_what_only_a_draft_allows_is_refused_afterwards(product, author, reviewer):
    revision = revision_submit(revision=product.draft, user=author)
    with pytest.raises(lifecycle.IllegalTransition, match="only a draft can be submitted"):
        revision_submit(revision=revision, user=author)
    services.revision_withdraw(revision=revision, user=author)
    for refused in (lambda: services.revision_withdraw(revision=revision, user=author),
                    lambda: lifecycle.submit(revision=revision, user=author)):
        with pytest.raises(lifecycle.IllegalTransition):
            refused()
    assert state_of(revision) == State.WITHDRAWN and len(events(revision, "withdrawn")) == 1


def test_signing_refuses_a_draft_and_a_signed_revision_and_withdrawing_refuses_signing(product, author, reviewer,
                                                                                     approver):
    with pytest.raises(signoff.SigningError, match="is a draft: submit it for review first"):
        sign(product.draft, author, "author")
    revision = revision_submit(revision=product.draft, user=author)
    settle(revision, reviewer, approver)
    sign(revision, author, "author")
    with pytest.raises(lifecycle.IllegalTransition, match="only a revision in review can be withdrawn"):
        services.revision_withdraw(revision=revision, user=author)
    sign(revision, reviewer, "reviewer")
    sign(revision, approver, "approver")
    with pytest.raises(signoff.SigningError, match="already signed and archived"):
        sign(revision, approver, "approver")
    with pytest.raises(lifecycle.IllegalTransition):
        lifecycle.sign(revision=Revision.objects.get(pk=revision.pk), user=approver, summary="again", changes={})
    assert SignedRecord.objects.filter(revision=revision).count() == 1


def test_a_revision_changes_state_only_through_the_life_cycle(product, author):
    draft = product.draft
    draft.state = State.SIGNED
    with pytest.raises(FrozenRevisionError, match="only through designs.lifecycle"):
        draft.save()
    with pytest.raises(FrozenRevisionError, match="starts as a draft"):
        Revision(product=product, number=9, state=State.IN_REVIEW, document={}).save()
    assert state_of(draft) == State.DRAFT


def test_each_change_is_announced_once_after_it_commits(product, author, django_capture_on_commit_callbacks):
    heard = []

    def receiver(sender, **kwargs):
        heard.append((kwargs["revision_id"], kwargs["before"], kwargs["after"], kwargs["actor_id"]))

    lifecycle.state_changed.connect(receiver)
    try:
        with django_capture_on_commit_callbacks(execute=False) as callbacks:
            revision = revision_submit(revision=product.draft, user=author)
        assert heard == []  # nothing before the commit
        for callback in callbacks:
            callback()
        assert heard == [(revision.pk, "draft", "in-review", author.pk)]
    finally:
        lifecycle.state_changed.disconnect(receiver)


# -- starting a draft from a revision ----------------------------------------------------------------------------
def test_a_draft_can_start_from_any_earlier_revision(client, product, author):
    first = revision_submit(revision=product.draft, user=author)
    draft = services.draft_get_or_start(product=product, user=author)
    document = {**draft.document, "deployment": {**draft.document["deployment"], "body_distance_mm": 999}}
    services.draft_save_document(revision=draft, document=document, user=author)
    second = revision_submit(revision=draft, user=author)
    client.force_login(author)
    response = client.post(reverse("draft_start", args=[product.pk]), {"from": first.number})
    assert response.status_code == 302
    third = product.draft
    assert third.number == 3 and third.based_on == first and third.document == first.document
    assert third.document != second.document
    refused = client.post(reverse("draft_start", args=[product.pk]), {"from": second.number}, follow=True)
    assert "Design revision 3 is already a draft" in refused.content.decode() and product.revisions.count() == 3
    product.refresh_from_db()
    assert product.latest_revision == third  # the product list reads it


@pytest.mark.parametrize("value", ["²", "0", "99", "abc"])
def test_starting_from_a_revision_that_is_not_one_starts_nothing(client, product, author, value):
    revision_submit(revision=product.draft, user=author)
    client.force_login(author)
    page = client.post(reverse("draft_start", args=[product.pk]), {"from": value}, follow=True).content.decode()
    assert "from: expected the number of a design revision of this product that is not a" in page
    assert product.draft is None


def test_withdrawing_through_the_page_needs_the_author_role(client, product, author, reviewer, outsider):
    revision = revision_submit(revision=product.draft, user=author)
    url = reverse("revision_withdraw", args=[product.pk, revision.number])
    client.force_login(outsider)
    assert client.post(url).status_code == 404
    client.force_login(reviewer)
    assert client.post(url).status_code == 403
    assert state_of(revision) == State.IN_REVIEW
    client.force_login(author)
    page = client.post(url, {"reason": "x" * 201}, follow=True).content.decode()
    assert "reason: expected at most 200 characters" in page and state_of(revision) == State.IN_REVIEW
    client.post(url, {"reason": "the enclosure changed"})
    assert state_of(revision) == State.WITHDRAWN
    page = client.post(url, follow=True).content.decode()
    assert "only a revision in review can be withdrawn" in page


# -- a revision an earlier release froze ------------------------------------------------------------------------

def earlier_checklist(revision: Revision) -> dict:
    """The checklist the current engine writes for this draft, marked as an older rule set's (as test_reevaluate)."""
    evaluation = evaluation_to_freeze(revision)
    evaluation["ruleset"] = "1.1.0"
    return evaluation


def test_a_checklist_an_earlier_release_froze_is_loaded_with_its_rule_set_and_opens_the_review(product, author):
    evaluation = earlier_checklist(product.draft)
    revision = revision_submit_with_earlier_checklist(revision=product.draft, evaluation=evaluation, user=author)
    assert (revision.state, revision.ruleset, revision.evaluation) == (State.IN_REVIEW, "1.1.0", evaluation)
    assert revision.review_items.filter(kind="raised").count() == len(evaluation["findings"])


@pytest.mark.parametrize("changes, message", [
    ({"ruleset": RULESET_VERSION}, "it is the current rule set's"),
    ({"format": "something-else/1"}, "expected a checklist of format earshot-checklist/1"),
    ({"design": {"product": "Another product", "revision": "B"}}, "it was made for another design"),
])
def test_a_checklist_that_is_not_an_earlier_one_of_this_design_is_refused_and_nothing_changes(product, author,
                                                                                             changes, message):
    evaluation = {**earlier_checklist(product.draft), **changes}
    with pytest.raises(ValueError, match=message):
        lifecycle.submit_with_earlier_checklist(revision=product.draft, evaluation=evaluation, user=author)
    assert Revision.objects.get(pk=product.draft.pk).state == State.DRAFT
