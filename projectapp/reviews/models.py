"""Review of a submitted revision: one item per finding, its disposition, and comments.

An item carries its finding as submitted (the frozen checklist entry) and what the team decided about
it. Items are matched across revisions by rule id and subjects, so a decision carries forward to the
next revision until someone confirms it, unless the finding's severity rose: a decision taken on a
warning never becomes a decision on a blocker. Each item keeps its decision's provenance: who decided,
when, in which revision and on which severity; what the previous revision had decided (carried or
not); who confirmed a carried decision here. Items and comments change only while the revision is in
review (designs.lifecycle: the state, read from the revision's row).
"""

import hashlib

from django.conf import settings
from django.db import models
from django.urls import reverse
from django.utils import timezone

from projectapp.designs import lifecycle
from projectapp.designs.models import Revision
from projectapp.reviews import steps


class Disposition(models.TextChoices):
    OPEN = "open", "Open"
    CHANGE = "change", "Will change the design"
    WAIVED = "waived", "Accepted risk (waiver)"
    NOT_APPLICABLE = "not-applicable", "Not applicable"
    DISCUSSION = "discussion", "Needs discussion"


# Dispositions that settle an item (a warning or note needs one of these before sign-off).
SETTLED = (Disposition.CHANGE, Disposition.WAIVED, Disposition.NOT_APPLICABLE)
NEEDS_JUSTIFICATION = (Disposition.WAIVED, Disposition.NOT_APPLICABLE)
SEVERITY_RANK = {"note": 0, "warning": 1, "blocker": 2}  # higher is graver
# The items that still need someone: open, under discussion, or carried from an earlier revision and not confirmed.
# An item tracked as a step outside the team (ProcessStep, reviews.steps) is planned, not decided: never open.
OPEN_ITEMS = ((models.Q(disposition__in=[Disposition.OPEN, Disposition.DISCUSSION])
               | models.Q(carried_from__isnull=False, carried_confirmed=False))
              & models.Q(process_step__isnull=True))


class SignedRevisionError(RuntimeError):
    """A review item (or comment) of a revision whose review is closed (signing started, signed, superseded or
    withdrawn: designs.lifecycle) can't change."""


def subjects_digest(subjects_key: str) -> str:
    """SHA-256 of an item's subjects key: what the one-item-per-finding constraint compares. The key itself
    may be long (a finding about 32 antennas names all of them) and an index entry can't be (PostgreSQL
    refuses entries above about 2.7 kB)."""
    return hashlib.sha256(subjects_key.encode()).hexdigest()


PROVENANCE_REVISIONS = ("decided_in", "carried_from")


class ReviewItemQuerySet(models.QuerySet):
    def bulk_create(self, objs, *args, **kwargs):
        objs = list(objs)
        for item in objs:
            item.subjects_digest = subjects_digest(item.subjects_key)
        return super().bulk_create(objs, *args, **kwargs)

    def with_provenance(self):
        """Items with the people and revisions their provenance names (reviews.provenance), without those
        revisions' documents and checklists: large JSON, decoded once per item otherwise."""
        return self.select_related("decided_by", "confirmed_by", *PROVENANCE_REVISIONS).defer(
            *(f"{name}__{field}" for name in PROVENANCE_REVISIONS for field in ("document", "evaluation")))

    def update(self, **kwargs):
        if not lifecycle.review_open_in_database(self.values("revision")):
            raise SignedRevisionError("review items of a revision whose review is closed are frozen")
        return super().update(**kwargs)


class ReviewItem(models.Model):
    class Kind(models.TextChoices):
        RAISED = "raised", "Raised by this revision"
        RESOLVED = "resolved", "Resolved by this revision"

    revision = models.ForeignKey(Revision, on_delete=models.PROTECT, related_name="review_items")
    kind = models.CharField(max_length=10, choices=Kind.choices, default=Kind.RAISED)
    rule_id = models.CharField(max_length=16)
    # Subjects joined with "|": with rule_id, the item's identity. Any length: a finding may name every antenna.
    subjects_key = models.TextField()
    subjects_digest = models.CharField(max_length=64, editable=False)  # set from subjects_key on every save
    topic = models.CharField(max_length=24)
    severity = models.CharField(max_length=10)
    title = models.CharField(max_length=300)
    finding = models.JSONField()  # the checklist entry as submitted (earshot-checklist/1 finding)
    disposition = models.CharField(max_length=16, choices=Disposition.choices, default=Disposition.OPEN)
    justification = models.TextField(blank=True)
    decided_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True,
                                   related_name="+")
    decided_at = models.DateTimeField(null=True, blank=True)
    # Not indexed on its own: with one, SQLite's planner answered "my queue" by walking every item ever assigned to
    # the person and checking each one's revision; without, it reads the revisions in review and their items
    # (benchmarks/lists.py). Unassigning on a person's deletion reads the table, which is rare.
    assignee = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True,
                                 related_name="review_items", db_index=False)
    # Provenance of the decision in force: the revision it was made in and the finding's severity then.
    decided_in = models.ForeignKey(Revision, on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    decided_severity = models.CharField(max_length=10, blank=True)
    # Set at submission when the previous revision's decision was carried in: the revision it came from.
    # It never changes; carried_confirmed closes the carry (by a confirmation here or a new decision).
    carried_from = models.ForeignKey(Revision, on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    carried_confirmed = models.BooleanField(default=False)
    confirmed_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True,
                                     related_name="+")
    confirmed_at = models.DateTimeField(null=True, blank=True)
    # What the previous submitted revision had decided about the same finding, as it stood at submission,
    # whether or not it was carried (see reviews.services.decision_snapshot); null when it had no decision.
    previous_decision = models.JSONField(null=True, blank=True)
    version = models.PositiveIntegerField(default=1)  # optimistic locking: a save names the version it read
    updated_at = models.DateTimeField(auto_now=True)

    objects = ReviewItemQuerySet.as_manager()

    class Meta:
        ordering = ["revision", "kind", "id"]
        constraints = [
            models.UniqueConstraint(fields=["revision", "kind", "rule_id", "subjects_digest"],
                                    name="one_item_per_finding"),
        ]

    def __str__(self) -> str:
        return f"{self.rule_id} {self.subjects_key or '—'} (design revision {self.revision.number})"

    def save(self, *args, **kwargs):
        if self.revision_id and not lifecycle.review_open_in_database(self.revision_id):
            raise SignedRevisionError("review items of a revision whose review is closed are frozen")
        self.subjects_digest = subjects_digest(self.subjects_key)
        super().save(*args, **kwargs)

    def get_absolute_url(self) -> str:
        return reverse("review_item", args=[self.pk])

    @property
    def subjects(self) -> list[str]:
        return list(self.finding.get("subjects", []))

    @property
    def is_carried_unconfirmed(self) -> bool:
        return self.carried_from_id is not None and not self.carried_confirmed

    @property
    def is_settled(self) -> bool:
        return self.disposition in SETTLED and not self.is_carried_unconfirmed

    @property
    def is_redecided(self) -> bool:
        """A decision was carried in, and someone here decided anew instead of confirming it."""
        return (self.carried_from_id is not None and self.carried_confirmed and self.confirmed_by_id is None
                and self.decided_in_id == self.revision_id)

    @property
    def waiver_authority(self):
        """Whose authority a waiver of this finding rests on, for the rule that only an approver waives a
        blocker: the person who confirmed a carried waiver here, or the person who granted it on this
        finding at its present severity or graver. None when no one's does (a carried waiver not yet
        confirmed, or a waiver given when the finding was less severe)."""
        if self.disposition != Disposition.WAIVED or self.is_carried_unconfirmed:
            return None
        if self.confirmed_by_id is not None:
            return self.confirmed_by
        decided_rank = SEVERITY_RANK.get(self.decided_severity or "", -1)
        if self.decided_by_id is not None and decided_rank >= SEVERITY_RANK.get(self.severity, 9):
            return self.decided_by
        return None


class Comment(models.Model):
    item = models.ForeignKey(ReviewItem, on_delete=models.PROTECT, related_name="comments")
    author = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")
    text = models.TextField()
    # Comments carry forward with their items: a copy on the next revision's item keeps the time it was written
    # and the revision it was written on (so not auto_now_add, which would stamp the copy's time).
    created_at = models.DateTimeField(default=timezone.now)
    written_on = models.ForeignKey(Revision, on_delete=models.PROTECT, related_name="+", null=True)

    class Meta:
        ordering = ["created_at", "id"]

    def __str__(self) -> str:
        return f"comment by {self.author} on {self.item}"

    def save(self, *args, **kwargs):
        if not lifecycle.review_open_in_database(self.item.revision_id):
            raise SignedRevisionError("the discussion of a revision whose review is closed is closed too")
        super().save(*args, **kwargs)


class ReviewTally(models.Model):
    """One revision's open raised items (OPEN_ITEMS) counted by severity, topic and assignee: what the review
    dashboard sums, a row per revision in review, instead of counting every item on every look. Every write that
    changes an item refreshes it in the same transaction, under the revision's lock (reviews.services)."""

    revision = models.OneToOneField(Revision, on_delete=models.CASCADE, primary_key=True, related_name="review_tally")
    open_items = models.PositiveIntegerField(default=0)
    groups = models.JSONField(default=list)  # [[severity, topic, assignee id or null, count], ...]

    def __str__(self) -> str:
        return f"{self.open_items} open item(s) of revision {self.revision_id}"


class StepStatus(models.TextChoices):
    PLANNED = "planned", "Planned"
    IN_PROGRESS = "in-progress", "In progress"
    PASSED = "passed", "Passed"
    FAILED = "failed", "Failed"


class ProcessStep(models.Model):
    """A step outside the team that a finding names (reviews.steps): who owns it, when it is planned, where it
    stands and the lab's or operator's reference. It never blocks sign-off of the design review (reviews.gate
    skips its item); it carries forward to the next revision with its status and history, and is frozen once
    signing starts: the record shows it as it stood at signing."""

    revision = models.ForeignKey(Revision, on_delete=models.PROTECT, related_name="process_steps")
    item = models.OneToOneField(ReviewItem, on_delete=models.PROTECT, related_name="process_step")
    owner = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True,
                              related_name="+")
    planned_on = models.DateField(null=True, blank=True)
    status = models.CharField(max_length=12, choices=StepStatus.choices, default=StepStatus.PLANNED)
    reference = models.CharField(max_length=200, blank=True)  # the lab's report number, the operator's case id
    # Every change as [iso time, username, revision number, {field: [before, after]}], carried forward whole.
    history = models.JSONField(default=list)
    carried_from = models.ForeignKey(Revision, on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    version = models.PositiveIntegerField(default=1)
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        ordering = ["revision", "item_id"]

    def __str__(self) -> str:
        return f"step {self.item.rule_id} ({self.get_status_display()}) of revision {self.revision.number}"

    def save(self, *args, **kwargs):
        if self.revision_id and not lifecycle.review_open_in_database(self.revision_id):
            raise SignedRevisionError("the steps of a revision whose review is closed are frozen")
        super().save(*args, **kwargs)

    @property
    def decided_by(self) -> str:
        return steps.decided_by(topic=self.item.topic, rule_id=self.item.rule_id)


MAX_ATTACHMENT_BYTES = 10_000_000  # a scanned approval letter or a lab report; larger belongs in the lab's system


def attachment_upload_to(instance: "EvidenceAttachment", filename: str) -> str:
    return f"evidence/product-{instance.revision.product_id}/rev-{instance.revision.number}/{instance.sha256[:16]}-{filename}"


class EvidenceAttachment(models.Model):
    """A file a decision or a step rests on (an operator's approval letter, a lab report), kept with its SHA-256
    and size. Served only to the team as a download, never inline; frozen once the review closes."""

    revision = models.ForeignKey(Revision, on_delete=models.PROTECT, related_name="evidence")
    item = models.ForeignKey(ReviewItem, on_delete=models.PROTECT, null=True, blank=True, related_name="evidence")
    step = models.ForeignKey(ProcessStep, on_delete=models.PROTECT, null=True, blank=True, related_name="evidence")
    name = models.CharField(max_length=120)
    file = models.FileField(upload_to=attachment_upload_to)
    size_bytes = models.PositiveIntegerField()
    sha256 = models.CharField(max_length=64)
    uploaded_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, related_name="+")
    uploaded_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["revision", "id"]

    def __str__(self) -> str:
        return self.name

    def save(self, *args, **kwargs):
        if not lifecycle.review_open_in_database(self.revision_id):
            raise SignedRevisionError("the evidence of a revision whose review is closed is frozen")
        super().save(*args, **kwargs)

    def delete(self, *args, **kwargs):
        raise SignedRevisionError("evidence is kept: it is part of the review's record")

    @property
    def supports(self) -> str:
        """What the file is evidence for, in the record's words."""
        item = self.step.item if self.step_id else self.item
        kind = "step" if self.step_id else "decision"
        return f"{kind} on {item.rule_id} {item.title}" if item else kind


class TopicReviewer(models.Model):
    """A team's default reviewer for one topic: submitting a revision assigns each raised item of that topic to
    them (unless the item carries an assignee from the previous revision)."""

    team = models.ForeignKey("teams.Team", on_delete=models.CASCADE, related_name="topic_reviewers")
    topic = models.CharField(max_length=40)
    reviewer = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")

    class Meta:
        constraints = [models.UniqueConstraint(fields=["team", "topic"], name="one_default_reviewer_per_topic")]

    def __str__(self) -> str:
        return f"{self.topic}: {self.reviewer} ({self.team})"

