"""Writes of the engineering review: items at submission, decisions, assignments, comments.

Every write records an AuditEvent in the same transaction. Decisions and assignments name the item
version they were based on; if someone else saved in between, ReviewConflict carries their change and
nothing is overwritten.

Every write first takes the revision's row lock (as signing does) and reads the item afresh, and only
then checks whether signing has started: a signature being recorded makes the write wait and then be
refused, and a signature waits for a write in progress and then sees it. Nothing lands after the first
signature.
"""

from typing import Any

from django.core.exceptions import PermissionDenied
from django.db import transaction
from django.db.models import F
from django.utils import timezone

from projectapp.designs.models import Revision
from projectapp.reviews.models import (
    NEEDS_JUSTIFICATION,
    SEVERITY_RANK,
    AuditEvent,
    Comment,
    Disposition,
    ReviewItem,
    is_signing_started,
)
from projectapp.teams.access import has_role
from projectapp.teams.models import Membership, Role


class ReviewConflict(Exception):
    """Someone saved the item after the version this change was based on."""

    def __init__(self, current: ReviewItem):
        self.current = current
        super().__init__(f"{current} changed since it was read (now version {current.version})")


class ReviewInputError(ValueError):
    """A decision that can't be recorded as given; `field` names the form field."""

    def __init__(self, field: str, message: str):
        self.field = field
        super().__init__(message)


def can_review(user, item_or_revision) -> bool:
    revision = item_or_revision.revision if isinstance(item_or_revision, ReviewItem) else item_or_revision
    team = revision.product.team
    return has_role(user, team, Role.REVIEWER) or has_role(user, team, Role.APPROVER)


def _lock_revision(item: ReviewItem) -> ReviewItem:
    """Takes the item's revision row lock (the one signoff.services.revision_sign takes), then reads the item
    as it is now. Call it first in a transaction, before any check."""
    list(Revision.objects.select_for_update().filter(pk=item.revision_id).values_list("pk", flat=True))
    return ReviewItem.objects.with_provenance().select_related("revision__product__team", "assignee").get(pk=item.pk)


def _require_reviewer(user, item: ReviewItem) -> None:
    if not can_review(user, item):
        raise PermissionDenied("Recording review decisions needs the reviewer or approver role.")
    if item.revision.is_draft:
        raise PermissionDenied("A draft is not under review.")
    if item.kind != ReviewItem.Kind.RAISED:
        raise PermissionDenied("A resolved item needs no decision.")
    if is_signing_started(item.revision_id):
        raise PermissionDenied("Signing has started: the review of this revision is frozen.")


def _audit(*, item: ReviewItem | None, revision: Revision, user, action: str, summary: str,
           changes: dict[str, Any] | None = None) -> AuditEvent:
    return AuditEvent.objects.create(product=revision.product, revision=revision, item=item, actor=user,
                                     action=action, summary=summary[:300], changes=changes or {})


def _key(finding: dict[str, Any]) -> tuple[str, str]:
    return finding["id"], "|".join(finding.get("subjects", []))


def _previous_submitted(revision: Revision) -> Revision | None:
    return (Revision.objects.filter(product=revision.product, number__lt=revision.number)
            .exclude(status=Revision.Status.DRAFT).order_by("-number").first())


def _username(user) -> str | None:
    return None if user is None else user.get_username()


def _display_name(user) -> str | None:
    return None if user is None else (user.get_full_name() or user.get_username())


def _iso(moment) -> str | None:
    return None if moment is None else moment.isoformat()


def decision_snapshot(item: ReviewItem, *, revision_number: int, carried: bool) -> dict[str, Any]:
    """An item's decision as it stood, for the next revision's item to keep (`previous_decision`)."""
    return {
        "revision": revision_number,
        "severity": item.severity,
        "disposition": item.disposition,
        "justification": item.justification,
        "decided_by": _username(item.decided_by),
        "decided_by_name": _display_name(item.decided_by),
        "decided_at": _iso(item.decided_at),
        "decided_in": item.decided_in.number if item.decided_in else revision_number,
        "decided_severity": item.decided_severity or item.severity,
        "confirmed_by": _username(item.confirmed_by),
        "confirmed_by_name": _display_name(item.confirmed_by),
        "confirmed_at": _iso(item.confirmed_at),
        "carried": carried,
    }


def severity_rose(*, now: str, before: ReviewItem) -> bool:
    """The finding is graver now than it was in the previous revision or when its decision was made."""
    decided = before.decided_severity or before.severity
    return SEVERITY_RANK.get(now, 9) > min(SEVERITY_RANK.get(before.severity, 9), SEVERITY_RANK.get(decided, 9))


@transaction.atomic
def review_items_create(*, revision: Revision, user) -> list[ReviewItem]:
    """One item per finding of a newly submitted revision, decisions carried from the previous one.

    An item with the same rule and subjects as an item of the previous submitted revision takes over its
    disposition, marked as carried from the revision where it was decided, until someone confirms it,
    unless the finding is graver now: a decision taken on a warning says nothing about a blocker, so that
    item starts open (the earlier decision is kept beside it, marked as not carried). Items of the
    previous revision that this one no longer raises are recorded as resolved by it.
    """
    previous = _previous_submitted(revision)
    earlier = {}
    if previous is not None:
        earlier = {(item.rule_id, item.subjects_key): item
                   for item in previous.review_items.filter(kind=ReviewItem.Kind.RAISED)
                   .with_provenance()}
    created = []
    seen: set[tuple[str, str]] = set()
    not_carried = 0
    for finding in revision.evaluation["findings"]:
        rule_id, subjects_key = _key(finding)
        while (rule_id, subjects_key) in seen:  # the same rule and subjects twice (two files): keep both
            subjects_key += "|again"
        seen.add((rule_id, subjects_key))
        item = ReviewItem(revision=revision, rule_id=rule_id, subjects_key=subjects_key, topic=finding["topic"],
                          severity=finding["severity"], title=finding["title"][:300], finding=finding)
        before = earlier.get((rule_id, subjects_key))
        if before is not None:
            item.assignee = before.assignee
            carry = before.disposition != Disposition.OPEN and not severity_rose(now=item.severity, before=before)
            if before.disposition != Disposition.OPEN:
                item.previous_decision = decision_snapshot(before, revision_number=previous.number, carried=carry)
                not_carried += not carry
            if carry:
                item.disposition = before.disposition
                item.justification = before.justification
                item.decided_by = before.decided_by
                item.decided_at = before.decided_at
                item.decided_in = before.decided_in or previous
                item.decided_severity = before.decided_severity or before.severity
                item.carried_from = before.carried_from if before.is_carried_unconfirmed else previous
        created.append(item)
    for key, before in earlier.items():
        if key not in seen:
            created.append(ReviewItem(revision=revision, kind=ReviewItem.Kind.RESOLVED, rule_id=before.rule_id,
                                      subjects_key=before.subjects_key, topic=before.topic,
                                      severity=before.severity, title=before.title, finding=before.finding,
                                      disposition=before.disposition, justification=before.justification))
    ReviewItem.objects.bulk_create(created)
    raised = sum(1 for item in created if item.kind == ReviewItem.Kind.RAISED)
    carried = sum(1 for item in created if item.carried_from_id)
    resolved = len(created) - raised
    graver = f"; {not_carried} not carried because the finding is graver now" if not_carried else ""
    _audit(item=None, revision=revision, user=user, action=AuditEvent.Action.SUBMITTED,
           summary=f"Submitted design revision {revision.number}: {raised} items ({carried} carried from earlier "
                   f"decisions{graver}), {resolved} resolved since design revision {previous.number if previous else '—'}",
           changes={"status": ["draft", "submitted"], "ruleset": [None, revision.ruleset]})
    return created


def _save_versioned(item: ReviewItem, expected_version: int, **values: Any) -> ReviewItem:
    updated = ReviewItem.objects.filter(pk=item.pk, version=expected_version).update(
        version=F("version") + 1, updated_at=timezone.now(), **values)
    current = ReviewItem.objects.with_provenance().select_related("revision__product__team", "assignee").get(
        pk=item.pk)
    if not updated:
        raise ReviewConflict(current)
    return current


@transaction.atomic
def review_item_decide(*, item: ReviewItem, user, disposition: str, justification: str,
                       expected_version: int) -> ReviewItem:
    item = _lock_revision(item)
    _require_reviewer(user, item)
    if disposition not in Disposition.values:
        raise ReviewInputError("disposition", f"disposition: expected one of {', '.join(Disposition.values)}")
    justification = justification.strip()
    if disposition in NEEDS_JUSTIFICATION and not justification:
        label = Disposition(disposition).label
        raise ReviewInputError("justification", f"justification: required for '{label}': say why")
    if (disposition == Disposition.WAIVED and item.severity == "blocker"
            and not has_role(user, item.revision.product.team, Role.APPROVER)):
        raise PermissionDenied("Only an approver may accept the risk of a blocker (grant a waiver).")
    before = {"disposition": item.disposition, "justification": item.justification}
    # A new decision made here: its own provenance, and it closes any carried decision without confirming it.
    current = _save_versioned(item, expected_version, disposition=disposition, justification=justification,
                              decided_by=user, decided_at=timezone.now(), decided_in=item.revision,
                              decided_severity=item.severity, carried_confirmed=True, confirmed_by=None,
                              confirmed_at=None)
    action = AuditEvent.Action.WAIVER if disposition == Disposition.WAIVED else AuditEvent.Action.DISPOSITION
    changes = {key: [before[key], getattr(current, key)] for key in before if before[key] != getattr(current, key)}
    _audit(item=current, revision=current.revision, user=user, action=action,
           summary=f"{current.rule_id} {current.subjects_key or ''}: {Disposition(disposition).label}".strip(),
           changes=changes)
    return current


@transaction.atomic
def review_item_confirm(*, item: ReviewItem, user, expected_version: int) -> ReviewItem:
    item = _lock_revision(item)
    _require_reviewer(user, item)
    if not item.is_carried_unconfirmed:
        return item
    decided_severity = item.decided_severity or item.severity
    if SEVERITY_RANK.get(item.severity, 9) > SEVERITY_RANK.get(decided_severity, 9):
        raise PermissionDenied(f"The carried decision was taken when this finding was a {decided_severity}; it is a "
                               f"{item.severity} now, so it needs a new decision rather than a confirmation.")
    if (item.severity == "blocker" and item.disposition == Disposition.WAIVED
            and not has_role(user, item.revision.product.team, Role.APPROVER)):
        raise PermissionDenied("Only an approver may confirm the waiver of a blocker: confirming accepts its risk "
                               "for this revision.")
    current = _save_versioned(item, expected_version, carried_confirmed=True, confirmed_by=user,
                              confirmed_at=timezone.now())
    _audit(item=current, revision=current.revision, user=user, action=AuditEvent.Action.CONFIRMED,
           summary=f"{current.rule_id}: confirmed '{current.get_disposition_display()}' carried from revision "
                   f"{current.carried_from.number}", changes={"carried_confirmed": [False, True]})
    return current


def approver_ids(team) -> set[int]:
    """The team's approvers: only their waiver (granted or confirmed) settles a blocker."""
    return set(Membership.objects.filter(team=team, role=Role.APPROVER).values_list("user_id", flat=True))


def assignable_people(revision: Revision):
    from django.contrib.auth import get_user_model

    members = Membership.objects.filter(team=revision.product.team, role__in=[Role.REVIEWER, Role.APPROVER])
    return get_user_model().objects.filter(pk__in=members.values("user")).order_by("username")


@transaction.atomic
def review_item_assign(*, item: ReviewItem, user, assignee, expected_version: int) -> ReviewItem:
    item = _lock_revision(item)
    _require_reviewer(user, item)
    if assignee is not None and not assignable_people(item.revision).filter(pk=assignee.pk).exists():
        raise ReviewInputError("assignee", "assignee: expected a reviewer or approver of this team")
    before = item.assignee.username if item.assignee else None
    current = _save_versioned(item, expected_version, assignee=assignee)
    after = assignee.username if assignee else None
    _audit(item=current, revision=current.revision, user=user, action=AuditEvent.Action.ASSIGNED,
           summary=f"{current.rule_id}: assigned to {after or 'nobody'}", changes={"assignee": [before, after]})
    return current


@transaction.atomic
def review_item_comment(*, item: ReviewItem, user, text: str) -> Comment:
    item = _lock_revision(item)
    team = item.revision.product.team
    if not Membership.objects.filter(team=team, user=user).exists():
        raise PermissionDenied("Only team members comment.")
    if is_signing_started(item.revision_id):
        raise PermissionDenied("Signing has started: the discussion of this revision is closed.")
    text = text.strip()
    if not text:
        raise ReviewInputError("text", "text: expected a comment, got nothing")
    comment = Comment.objects.create(item=item, author=user, text=text)
    _audit(item=item, revision=item.revision, user=user, action=AuditEvent.Action.COMMENT,
           summary=f"{item.rule_id}: {text[:200]}", changes={"comment": [None, text]})
    return comment
