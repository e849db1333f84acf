"""Writes of the engineering review: submitting a draft for review (which opens it), decisions,
assignments, comments.

Submitting is the review's to start: `revision_submit` asks designs' life cycle to freeze the draft, then
creates the items in the same transaction. (An explicit call rather than a signal: the items must exist
whenever a revision is in review, so their creation can't hang on a receiver being connected.)

Every write records an audit event in the same transaction. Decisions and assignments name the item
version they were based on; if someone else saved in between, ReviewConflict carries their change and
nothing is overwritten.

Every write first takes the revision's row lock (as signing does) and reads the item afresh, and only
then checks that the review is open (the revision's state: designs.lifecycle): a signature being recorded
makes the write wait and then be refused, and a signature waits for a write in progress and then sees it.
Nothing lands after the first signature, or on a withdrawn revision.
"""

import hashlib
from collections import Counter
from datetime import timedelta
from typing import Any

from django.contrib.auth import get_user_model
from django.core.exceptions import PermissionDenied
from django.core.files.base import ContentFile
from django.db import transaction
from django.db.models import Count, F
from django.urls import reverse
from django.utils import timezone

from projectapp.audit.models import AuditEvent
from projectapp.audit.services import audit_record
from projectapp.designs import lifecycle
from projectapp.designs.models import Revision
from projectapp.notices.models import Notice
from projectapp.notices.services import mentioned, notify
from projectapp.reviews.gate import approver_ids  # noqa: F401 (the PDF and the views read it from here)
from projectapp.reviews.models import (
    MAX_ATTACHMENT_BYTES,
    NEEDS_JUSTIFICATION,
    OPEN_ITEMS,
    SEVERITY_RANK,
    Comment,
    Disposition,
    EvidenceAttachment,
    ProcessStep,
    ReviewItem,
    ReviewTally,
    StepStatus,
    TopicReviewer,
)
from projectapp.reviews.steps import is_external_step
from projectapp.teams.access import has_role, require_role
from projectapp.teams.models import Membership, Role
from rules.findings import TOPICS


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
    """Takes the item's revision row lock (the one signing takes: designs.lifecycle), then reads the item
    as it is now. Call it first in a transaction, before any check."""
    lifecycle.lock(item.revision_id)
    return ReviewItem.objects.with_provenance().select_related("revision__product__team", "assignee").get(pk=item.pk)


def _require_reviewer(user, item: ReviewItem) -> None:
    if not can_review(user, item):
        raise PermissionDenied("Recording review decisions needs the reviewer or approver role.")
    if item.revision.is_draft:
        raise PermissionDenied("A draft is not under review.")
    if item.kind != ReviewItem.Kind.RAISED:
        raise PermissionDenied("A resolved item needs no decision.")
    if not lifecycle.is_review_open(item.revision):
        raise PermissionDenied(lifecycle.review_closed_reason(item.revision))


def _audit(*, item: ReviewItem | None, revision: Revision, user, action: str, summary: str,
           changes: dict[str, Any] | None = None) -> AuditEvent:
    return audit_record(product=revision.product, revision=revision, item=item, actor=user, action=action,
                        summary=summary, changes=changes)


def _key(finding: dict[str, Any]) -> tuple[str, str]:
    return finding["id"], "|".join(finding.get("subjects", []))


def _previous_submitted(revision: Revision) -> Revision | None:
    return (Revision.objects.filter(product=revision.product, number__lt=revision.number)
            .exclude(state=Revision.State.DRAFT).order_by("-number").first())


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
    defaults = dict(TopicReviewer.objects.filter(team_id=revision.product.team_id).values_list("topic", "reviewer_id"))
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
        item.assignee_id = defaults.get(item.topic)
        if before is not None:
            item.assignee_id = before.assignee_id or item.assignee_id
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
    comments_carry(items=created, earlier=earlier)
    process_steps_create(revision=revision, items=created, previous=previous)
    _tell_assigned_at_submission(revision=revision, items=created, user=user)
    review_tallies_refresh(revision_ids=[revision.pk])
    raised = sum(1 for item in created if item.kind == ReviewItem.Kind.RAISED)
    carried = sum(1 for item in created if item.carried_from_id)
    assigned = sum(1 for item in created if item.kind == ReviewItem.Kind.RAISED and item.assignee_id)
    resolved = len(created) - raised
    graver = f"; {not_carried} not carried because the finding is graver now" if not_carried else ""
    _audit(item=None, revision=revision, user=user, action=AuditEvent.Action.REVIEW_OPENED,
           summary=f"Opened the review of design revision {revision.number}: {raised} items ({carried} carried "
                   f"from earlier decisions{graver}, {assigned} assigned), {resolved} resolved since design revision "
                   f"{previous.number if previous else '—'}",
           changes={"review_items": [None, raised]})
    return created


def _tell_assigned_at_submission(*, revision: Revision, items: list[ReviewItem], user) -> None:
    """Each assignee hears once how many of the revision's items are theirs to review and how many steps outside
    the team they own (a step is planned on the review page, not reviewed: reviews.steps)."""
    raised = [item for item in items if item.kind == ReviewItem.Kind.RAISED]
    stepped = set(ProcessStep.objects.filter(revision=revision).values_list("item_id", flat=True))
    to_review = Counter(item.assignee_id for item in raised if item.assignee_id and item.pk not in stepped)
    owned = Counter(step.owner_id for step in ProcessStep.objects.filter(revision=revision, owner__isnull=False))
    people = {person.pk: person for person in get_user_model().objects.filter(pk__in=set(to_review) | set(owned))}
    for person_id, person in people.items():
        parts = [_counted(to_review[person_id], "item to review", "items to review"),
                 _counted(owned[person_id], "step outside the team to plan", "steps outside the team to plan")]
        url = (reverse("review_dashboard") + f"?assignee=me&product={revision.product_id}" if to_review[person_id]
               else reverse("revision_review", args=[revision.product_id, revision.number]) + "#steps")
        notify(recipients=[person], team=revision.product.team, kind=Notice.Kind.ASSIGNED, actor=user, url=url,
               text=f"{revision.product.name}, design revision {revision.number}: "
                    + ", ".join(part for part in parts if part),
               event_key=f"assigned:{revision.pk}:{person_id}")


def _counted(number: int, one: str, many: str) -> str:
    return "" if not number else f"{number} {one if number == 1 else many}"


def comments_carry(*, items: list[ReviewItem], earlier: dict[tuple[str, str], ReviewItem]) -> None:
    """Each raised item takes the discussion of the previous revision's item for the same finding, each comment
    keeping its author, time and the revision it was written on ("@ines your call" reaches the item she decides)."""
    by_earlier = {before.pk: item for item in items if item.kind == ReviewItem.Kind.RAISED
                  and (before := earlier.get((item.rule_id, item.subjects_key))) is not None}
    copies = [Comment(item=by_earlier[comment.item_id], author_id=comment.author_id, text=comment.text,
                      created_at=comment.created_at, written_on_id=comment.written_on_id or comment.item.revision_id)
              for comment in Comment.objects.filter(item_id__in=by_earlier).select_related("item")
              .order_by("created_at", "id")]
    Comment.objects.bulk_create(copies)


def process_steps_create(*, revision: Revision, items: list[ReviewItem], previous: Revision | None) -> None:
    """A process step for each raised item that names a step outside the team (reviews.steps), taking over the
    previous revision's step for the same finding whole: owner, date, status, reference and history."""
    earlier = {}
    if previous is not None:
        earlier = {(step.item.rule_id, step.item.subjects_key): step
                   for step in ProcessStep.objects.filter(revision=previous).select_related("item")}
    steps = []
    for item in items:
        if item.kind != ReviewItem.Kind.RAISED or not is_external_step(topic=item.topic, rule_id=item.rule_id):
            continue
        step = ProcessStep(revision=revision, item=item, owner_id=item.assignee_id)  # the topic's reviewer
        before = earlier.get((item.rule_id, item.subjects_key))
        if before is not None:
            step.owner_id, step.planned_on, step.status = before.owner_id, before.planned_on, before.status
            step.reference, step.history, step.carried_from = before.reference, before.history, previous
        steps.append(step)
    ProcessStep.objects.bulk_create(steps)


@transaction.atomic
def process_step_update(*, step: ProcessStep, user, owner, planned_on, status: str, reference: str,
                        expected_version: int) -> ProcessStep:
    """Records who owns an external step, when it is planned, where it stands and the lab's or operator's
    reference. Any team member whose role may review; a stale version raises ReviewConflict."""
    lifecycle.lock(step.revision_id)
    step = ProcessStep.objects.select_related("revision__product__team", "item", "owner").get(pk=step.pk)
    team = step.revision.product.team
    if not (can_review(user, step.revision) or has_role(user, team, Role.AUTHOR)):
        raise PermissionDenied("Updating a process step needs the author, reviewer or approver role.")
    if not lifecycle.is_review_open(step.revision):
        raise PermissionDenied(lifecycle.review_closed_reason(step.revision))
    if status not in StepStatus.values:
        raise ReviewInputError("status", f"status: expected one of {', '.join(StepStatus.values)}")
    reference = reference.strip()
    if len(reference) > 200:
        raise ReviewInputError("reference", "reference: at most 200 characters")
    if owner is not None and not Membership.objects.filter(team=team, user=owner).exists():
        raise ReviewInputError("owner", "owner: expected a member of the team")
    if step.version != expected_version:
        raise ReviewConflict(step)
    after = {"owner": _username(owner), "planned_on": planned_on.isoformat() if planned_on else None,
             "status": status, "reference": reference}
    before = {"owner": _username(step.owner), "planned_on": step.planned_on.isoformat() if step.planned_on else None,
              "status": step.status, "reference": step.reference}
    changes = {key: [before[key], after[key]] for key in after if before[key] != after[key]}
    if not changes:
        return step
    history = [*step.history, [_iso(timezone.now()), user.get_username(), step.revision.number, changes]]
    updated = ProcessStep.objects.filter(pk=step.pk, version=expected_version).update(
        owner=owner, planned_on=planned_on, status=status, reference=reference, history=history,
        version=F("version") + 1, updated_at=timezone.now())
    current = ProcessStep.objects.select_related("revision__product__team", "item", "owner").get(pk=step.pk)
    if not updated:
        raise ReviewConflict(current)
    _audit(item=current.item, revision=current.revision, user=user, action=AuditEvent.Action.STEP_CHANGED,
           summary=f"{current.item.rule_id} step: {current.get_status_display()}"
                   + (f" ({reference})" if reference else ""), changes=changes)
    return current


@transaction.atomic
def revision_submit(*, revision: Revision, user) -> Revision:
    """Submits a draft for review: designs' life cycle freezes it (the document, its checklist and the rule-set
    version, stored whole; older revisions still in review are withdrawn), then the review opens with one item
    per finding, decisions carried from the previous submitted revision.

    Raises DesignError (nothing changes) when the design can't be checked yet or a rule could not run, and
    lifecycle.IllegalTransition when the revision is no longer a draft."""
    require_role(user, revision.product.team, Role.AUTHOR)
    frozen = lifecycle.submit(revision=revision, user=user)
    review_items_create(revision=frozen, user=user)
    return frozen


@transaction.atomic
def revision_submit_with_earlier_checklist(*, revision: Revision, evaluation: dict[str, Any], user) -> Revision:
    """As revision_submit, with the checklist an earlier release froze for this design under an older rule set
    (designs.lifecycle.submit_with_earlier_checklist says what it accepts); the review opens on its findings."""
    require_role(user, revision.product.team, Role.AUTHOR)
    frozen = lifecycle.submit_with_earlier_checklist(revision=revision, evaluation=evaluation, user=user)
    review_items_create(revision=frozen, user=user)
    return frozen


def review_tallies_refresh(*, revision_ids) -> None:
    """Counts the open raised items of these revisions again (ReviewTally): after every write that changes an
    item, in its transaction; `Revision.objects.values_list("pk", flat=True)` rebuilds them all (a bulk load)."""
    counted: dict[int, list[list[Any]]] = {revision_id: [] for revision_id in revision_ids}
    groups = (ReviewItem.objects.filter(revision_id__in=list(counted), kind=ReviewItem.Kind.RAISED).filter(OPEN_ITEMS)
              .order_by().values_list("revision_id", "severity", "topic", "assignee_id").annotate(n=Count("id")))
    for revision_id, severity, topic, assignee_id, n in groups:
        counted[revision_id].append([severity, topic, assignee_id, n])
    existing = set(ReviewTally.objects.filter(revision_id__in=list(counted)).values_list("revision_id", flat=True))
    ReviewTally.objects.bulk_create([ReviewTally(revision_id=revision_id) for revision_id in counted
                                     if revision_id not in existing])
    ReviewTally.objects.bulk_update([ReviewTally(revision_id=revision_id, groups=rows,
                                                 open_items=sum(row[3] for row in rows))
                                     for revision_id, rows in counted.items()], ["groups", "open_items"],
                                    batch_size=500)


def _save_versioned(item: ReviewItem, expected_version: int, **values: Any) -> ReviewItem:
    updated = ReviewItem.objects.filter(pk=item.pk, version=expected_version).update(
        version=F("version") + 1, updated_at=timezone.now(), **values)
    if updated:
        review_tallies_refresh(revision_ids=[item.revision_id])
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


def reviewers_of(team):
    """The team's people who may review: its reviewers and approvers (assignees, default reviewers)."""
    members = Membership.objects.filter(team=team, role__in=[Role.REVIEWER, Role.APPROVER])
    return get_user_model().objects.filter(pk__in=members.values("user")).order_by("username")


def assignable_people(revision: Revision):
    return reviewers_of(revision.product.team)


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
    if assignee is not None and after != before:
        notify(recipients=[assignee], team=current.revision.product.team, kind=Notice.Kind.ASSIGNED, actor=user,
               url=reverse("review_item", args=[current.pk]),
               text=f"{current.revision.product.name}, design revision {current.revision.number}: "
                    f"{current.rule_id} {current.title} is assigned to you")
    return current


@transaction.atomic
def review_item_comment(*, item: ReviewItem, user, text: str) -> Comment:
    item = _lock_revision(item)
    team = item.revision.product.team
    if not Membership.objects.filter(team=team, user=user).exists():
        raise PermissionDenied("Only team members comment.")
    if not lifecycle.is_review_open(item.revision):
        raise PermissionDenied(lifecycle.review_closed_reason(item.revision).replace("review", "discussion", 1))
    text = text.strip()
    if not text:
        raise ReviewInputError("text", "text: expected a comment, got nothing")
    comment = Comment.objects.create(item=item, author=user, text=text, written_on=item.revision)
    notify(recipients=mentioned(text=text, team=team), team=team, kind=Notice.Kind.MENTION, actor=user,
           url=reverse("review_item", args=[item.pk]),
           text=f"{user.get_full_name() or user.get_username()} on {item.rule_id} ({item.revision.product.name}, "
                f"design revision {item.revision.number}): {text[:160]}", event_key=f"comment:{comment.pk}")
    _audit(item=item, revision=item.revision, user=user, action=AuditEvent.Action.COMMENT,
           summary=f"{item.rule_id}: {text[:200]}", changes={"comment": [None, text]})
    return comment


def attachment_name(name: str) -> str:
    """The name an uploaded file is kept and offered under: its last path part, letters, digits and ._-, only."""
    base = name.replace("\\", "/").rsplit("/", 1)[-1].strip().lstrip(".")
    return "".join(ch if ch.isalnum() or ch in "._-" else "-" for ch in base)[:120]


@transaction.atomic
def evidence_attach(*, user, name: str, content: bytes, item: ReviewItem | None = None,
                    step: ProcessStep | None = None) -> EvidenceAttachment:
    """Keeps a file a decision (item) or a step rests on, with its SHA-256 and size, while the review is open."""
    if (item is None) == (step is None):
        raise ValueError("evidence belongs to one decision or one step")
    target_item = step.item if step is not None else item
    assert target_item is not None
    locked = _lock_revision(target_item)
    team = locked.revision.product.team
    if not (can_review(user, locked.revision) or (step is not None and has_role(user, team, Role.AUTHOR))):
        raise PermissionDenied("Attaching evidence needs the reviewer or approver role (the author too, on a step).")
    if not lifecycle.is_review_open(locked.revision):
        raise PermissionDenied(lifecycle.review_closed_reason(locked.revision))
    safe = attachment_name(name)
    if not safe:
        raise ReviewInputError("file", "file: expected a file with a name")
    if not content:
        raise ReviewInputError("file", f"file: {safe} is empty")
    if len(content) > MAX_ATTACHMENT_BYTES:
        raise ReviewInputError("file", f"file: expected at most {MAX_ATTACHMENT_BYTES // 1_000_000} MB, "
                                       f"got {len(content) / 1_000_000:.1f} MB")
    attachment = EvidenceAttachment(revision=locked.revision, item=None if step else locked, step=step, name=safe,
                                    size_bytes=len(content), sha256=hashlib.sha256(content).hexdigest(),
                                    uploaded_by=user)
    attachment.file.save(safe, ContentFile(content), save=False)
    attachment.save()
    _audit(item=locked, revision=locked.revision, user=user, action=AuditEvent.Action.EVIDENCE_ADDED,
           summary=f"Attached {safe} to the {'step' if step else 'decision'} on {locked.rule_id}",
           changes={"evidence": [None, {"name": safe, "sha256": attachment.sha256, "size_bytes": len(content)}]})
    return attachment


@transaction.atomic
def topic_reviewers_set(*, team, user, reviewers: dict[str, Any]) -> None:
    """The team's default reviewer per topic (None: nobody). An approver's to set; each must be a member who
    may review. Assigns future submissions only: items already raised keep their assignee."""
    require_role(user, team, Role.APPROVER)
    members = set(reviewers_of(team).values_list("pk", flat=True))
    before = dict(TopicReviewer.objects.filter(team=team).values_list("topic", "reviewer__username"))
    after = {}
    for topic, person in reviewers.items():
        if topic not in TOPICS:
            raise ReviewInputError(topic, f"{topic}: expected one of the checklist's topics")
        if person is not None and person.pk not in members:
            raise ReviewInputError(topic, f"{topic}: {person.username} can't review in this team")
        if person is None:
            TopicReviewer.objects.filter(team=team, topic=topic).delete()
        else:
            TopicReviewer.objects.update_or_create(team=team, topic=topic, defaults={"reviewer": person})
            after[topic] = person.username
    changes = {topic: [before.get(topic), after.get(topic)] for topic in TOPICS
               if before.get(topic) != after.get(topic)}
    if changes:
        audit_record(team=team, subject=f"team:{team.pk}", actor=user, action=AuditEvent.Action.REVIEWERS_SET,
                     summary="Default reviewers: " + "; ".join(f"{topic} {new or 'nobody'}"
                                                             for topic, (_, new) in changes.items()),
                     changes=changes)


def steps_due_notify(*, today, within_days: int = 7) -> int:
    """Tells each open external step's owner when its planned date is within `within_days` (or past), once per
    step and planned date. Steps of revisions whose review is still open or that are signed (the latest
    record's steps are what the team still owes). Returns how many people were told."""
    open_states = (Revision.State.IN_REVIEW, Revision.State.SIGNING, Revision.State.SIGNED)
    steps = (ProcessStep.objects.filter(revision__state__in=open_states, owner__isnull=False,
                                        planned_on__lte=today + timedelta(days=within_days),
                                        status__in=[StepStatus.PLANNED, StepStatus.IN_PROGRESS])
             .select_related("revision__product__team", "item", "owner"))
    told = 0
    for step in steps:
        revision = step.revision
        when = "was due" if step.planned_on < today else "is due"
        told += len(notify(
            recipients=[step.owner], team=revision.product.team, kind=Notice.Kind.STEP_DUE,
            url=reverse("revision_review", args=[revision.product_id, revision.number]),
            text=f"{revision.product.name}, design revision {revision.number}: {step.item.title} {when} on "
                 f"{step.planned_on.isoformat()} ({step.get_status_display().lower()})",
            event_key=f"step-due:{step.pk}:{step.planned_on.isoformat()}"))
    return told

