"""Review of a submitted revision: one item per finding, its disposition, comments, and the audit trail.

An item carries its finding as submitted (the frozen checklist entry) and what the team decided about
it. Items are matched across revisions by rule id and subjects, so a decision carries forward to the
next revision until someone confirms it, unless the finding's severity rose: a decision taken on a
warning never becomes a decision on a blocker. Each item keeps its decision's provenance: who decided,
when, in which revision and on which severity; what the previous revision had decided (carried or
not); who confirmed a carried decision here. The audit trail is append-only: the model refuses changes.
"""

import hashlib

from django.conf import settings
from django.db import models
from django.urls import reverse

from projectapp.designs.models import Product, Revision
from projectapp.teams.models import Team


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


class SignedRevisionError(RuntimeError):
    """A review item (or comment) of a revision that is being or has been signed can't change."""


def is_signing_started(revision_id: int) -> bool:
    from projectapp.signoff.models import Signature

    return Signature.objects.filter(revision_id=revision_id).exists()


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
        from projectapp.signoff.models import Signature

        if Signature.objects.filter(revision__in=self.values("revision")).exists():
            raise SignedRevisionError("review items of a signed revision are frozen")
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
    assignee = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True,
                                 related_name="review_items")
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
        if self.revision_id and is_signing_started(self.revision_id):
            raise SignedRevisionError("review items of a signed revision are frozen")
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
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["created_at", "id"]

    def __str__(self) -> str:
        return f"comment by {self.author} on {self.item}"

    def save(self, *args, **kwargs):
        if is_signing_started(self.item.revision_id):
            raise SignedRevisionError("the discussion of a signed revision is closed")
        super().save(*args, **kwargs)


class AppendOnlyError(RuntimeError):
    """The audit trail can't be edited or deleted."""


class AuditEvent(models.Model):
    class Action(models.TextChoices):
        SUBMITTED = "submitted", "Submitted a revision"
        SIGNED = "signed", "Signed"
        ARCHIVED = "archived", "Archived the signed record"
        DISPOSITION = "disposition", "Recorded a disposition"
        WAIVER = "waiver", "Granted a waiver"
        CONFIRMED = "confirmed", "Confirmed a carried disposition"
        COMMENT = "comment", "Commented"
        ASSIGNED = "assigned", "Assigned"
        DRAFT_STARTED = "draft-started", "Started a draft"
        SECTION_SAVED = "section-saved", "Saved a questionnaire section"
        IMPORTED = "imported", "Imported a design file"
        FILE_ADDED = "file-added", "Added a measurement file"
        FILE_MAPPED = "file-mapped", "Mapped a measurement's ports"
        FILE_REMOVED = "file-removed", "Removed a measurement file"
        LIBRARY_FILLED = "library-filled", "Filled a part from the library"
        LIBRARY_APPLIED = "library-applied", "Applied a library change"
        PART_CREATED = "part-created", "Added a library part"
        PART_CHANGED = "part-changed", "Changed a library part"
        PART_RETIRED = "part-retired", "Retired a library part"
        PART_RESTORED = "part-restored", "Restored a library part"
        PART_FILE_ADDED = "part-file-added", "Added a file to a library part"
        PART_FILE_REMOVED = "part-file-removed", "Removed a file from a library part"

    # A design or review event belongs to a product; a parts-library event to its team alone, with
    # `subject` naming the library entry ("library-entry:<id>").
    product = models.ForeignKey(Product, on_delete=models.PROTECT, null=True, blank=True,
                                related_name="audit_events")
    team = models.ForeignKey(Team, on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    subject = models.CharField(max_length=80, blank=True, db_index=True)
    revision = models.ForeignKey(Revision, on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    item = models.ForeignKey(ReviewItem, on_delete=models.PROTECT, null=True, blank=True, related_name="audit_events")
    actor = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")
    action = models.CharField(max_length=24, choices=Action.choices)
    summary = models.CharField(max_length=300)
    changes = models.JSONField(default=dict)  # {"field": [before, after], ...}; design paths for design edits
    draft_version = models.PositiveIntegerField(null=True, blank=True)  # the draft version a design edit made
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["-created_at", "-id"]

    def __str__(self) -> str:
        return f"{self.created_at:%Y-%m-%d %H:%M} {self.actor}: {self.summary}"

    def save(self, *args, **kwargs):
        if self.pk is not None:
            raise AppendOnlyError("audit events are never changed")
        if self.team_id is None and self.product_id is not None:
            self.team_id = self.product.team_id  # every event names its team, whichever path wrote it
        super().save(*args, **kwargs)

    def delete(self, *args, **kwargs):
        raise AppendOnlyError("audit events are never deleted")
