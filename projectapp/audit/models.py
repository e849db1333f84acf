"""The audit trail: who changed what, when, on which product, revision, review item or library entry, with the
values before and after. Append-only: the model refuses changes and deletions.

Every app writes here (through `projectapp.audit.services.audit_record`), so this app sits low in the layers
(above teams, below the parts library, designs, reviews and sign-off): it imports none of them. The events
point at products, revisions and review items by lazy model reference (a database link, not an import).
"""

from django.conf import settings
from django.db import models


class AppendOnlyError(RuntimeError):
    """The audit trail can't be edited or deleted."""


class AuditEvent(models.Model):
    class Action(models.TextChoices):
        SUBMITTED = "submitted", "Submitted a revision"
        REVIEW_OPENED = "review-opened", "Opened the review"
        WITHDRAWN = "withdrawn", "Withdrew a revision"
        SIGNED = "signed", "Signed"
        ARCHIVED = "archived", "Archived the signed record"
        SUPERSEDED = "superseded", "Superseded a signed revision"
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
        STEP_CHANGED = "step-changed", "Updated a process step"
        EVIDENCE_ADDED = "evidence-added", "Attached evidence"
        REVIEWERS_SET = "reviewers-set", "Set the default reviewers"

    # A design or review event belongs to a product; a parts-library event to its team alone, with
    # `subject` naming the library entry ("library-entry:<id>").
    product = models.ForeignKey("designs.Product", on_delete=models.PROTECT, null=True, blank=True,
                                related_name="audit_events")
    team = models.ForeignKey("teams.Team", on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    subject = models.CharField(max_length=80, blank=True, db_index=True)
    revision = models.ForeignKey("designs.Revision", on_delete=models.PROTECT, null=True, blank=True,
                                 related_name="+")
    item = models.ForeignKey("reviews.ReviewItem", on_delete=models.PROTECT, null=True, blank=True,
                             related_name="audit_events")
    actor = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")
    action = models.CharField(max_length=24, choices=Action.choices)
    summary = models.CharField(max_length=300)
    changes = models.JSONField(default=dict)  # {"field": [before, after], ...}; design paths for design edits
    draft_version = models.PositiveIntegerField(null=True, blank=True)  # the draft version a design edit made
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        # The table keeps the name it had when the trail lived in the reviews app: moving the model to its own
        # app changed Django's bookkeeping only, not a row or a table (audit/migrations/0001).
        db_table = "reviews_auditevent"
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
