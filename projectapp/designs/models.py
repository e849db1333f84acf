"""Products, their numbered design revisions, and the measurement files kept with a revision.

A revision's life is its `state`: draft (editable) → in review → signing → signed → superseded, or withdrawn
(designs/lifecycle.py holds the table and makes every change of state; DEVELOPERS.md explains it). Submitting
freezes a draft: the design document is stored whole with its checklist and the rule-set version that produced
it, and nothing may change it afterwards. Editing again starts a new draft from the latest revision (or from
any revision: "start a draft from it").

Each revision also stores what a list shows of it (category and finding counts, and for a draft the problems
and rule failures in the way), counted when a draft is saved and at submission, so no list evaluates a design.
"""

import hashlib
from datetime import UTC, datetime

from django.conf import settings
from django.db import models
from django.urls import reverse

from projectapp.teams.models import Team
from rules.catalog import categories


class FrozenRevisionError(RuntimeError):
    """An attempt to change a revision (or a file of it) that is no longer a draft, or to change a revision's
    state other than through designs.lifecycle."""


class Product(models.Model):
    team = models.ForeignKey(Team, on_delete=models.PROTECT, related_name="products")
    name = models.CharField(max_length=120)
    description = models.CharField(max_length=300, blank=True)
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, related_name="+")
    created_at = models.DateTimeField(auto_now_add=True)
    # The highest-numbered revision, set whenever one is created (always under the product's row lock), so the
    # product list filters and pages on its state and counts in the database.
    latest_revision = models.ForeignKey("Revision", on_delete=models.SET_NULL, null=True, blank=True,
                                        related_name="+", editable=False)

    class Meta:
        ordering = ["team__name", "name"]
        constraints = [models.UniqueConstraint(fields=["team", "name"], name="product_name_unique_in_team")]

    def __str__(self) -> str:
        return self.name

    def get_absolute_url(self) -> str:
        return reverse("product_detail", args=[self.pk])

    @property
    def cache_identity(self) -> str:
        """What a cached page shows of the product itself (its name and description may be edited)."""
        text = f"{self.name}\x00{self.description}".encode()
        return f"product-{self.pk}-{hashlib.sha256(text).hexdigest()[:16]}"

    @property
    def draft(self) -> "Revision | None":
        return self.revisions.filter(state=Revision.State.DRAFT).first()

    @property
    def latest(self) -> "Revision | None":
        return self.revisions.order_by("-number").first()

    @property
    def latest_submitted(self) -> "Revision | None":
        return self.revisions.exclude(state=Revision.State.DRAFT).order_by("-number").first()


def cache_identity(*, revision_id: int, created_at: datetime | None, state: str, version: int) -> str:
    """A revision's identity for the caches: everything a page or a computed checklist of it depends on.

    The state names where it is in its life (a page shows it); the version counts a draft's changes (every
    write of its document or files makes the next one, designs.services._store), so a draft is named by what
    it holds; the creation time keeps the name unique if a database is reset and ids come round again."""
    if created_at is not None and created_at.tzinfo is not None:
        created_at = created_at.astimezone(UTC).replace(tzinfo=None)
    return f"rev-{revision_id}-{created_at.isoformat() if created_at else ''}-{state}-{version}"


class Revision(models.Model):
    class State(models.TextChoices):
        DRAFT = "draft", "Draft"
        IN_REVIEW = "in-review", "In review"
        SIGNING = "signing", "Signing"
        SIGNED = "signed", "Signed"
        SUPERSEDED = "superseded", "Superseded"
        WITHDRAWN = "withdrawn", "Withdrawn"

    product = models.ForeignKey(Product, on_delete=models.PROTECT, related_name="revisions")
    number = models.PositiveIntegerField()
    # Changed only by designs.lifecycle (save() refuses any other change of it).
    state = models.CharField(max_length=16, choices=State.choices, default=State.DRAFT, editable=False)
    state_changed_at = models.DateTimeField(null=True, blank=True, editable=False)
    # The design document (earshot-design/1). While a draft it may be incomplete or invalid: the
    # questionnaire keeps what was typed, and the parser's problems are shown beside the fields.
    document = models.JSONField()
    # Set at submission: the checklist (earshot-checklist/1) and the rule set that produced it.
    evaluation = models.JSONField(null=True, blank=True)
    ruleset = models.CharField(max_length=20, blank=True)
    # Counts the draft's changes: every write names the version it read, so a stale page can't overwrite
    # what someone else saved meanwhile. `section_versions` holds, per part of the document (a questionnaire
    # section's slug, or "measurements"), the version that last changed it.
    version = models.PositiveIntegerField(default=1)
    section_versions = models.JSONField(default=dict, blank=True)
    based_on = models.ForeignKey("self", on_delete=models.PROTECT, null=True, blank=True, related_name="+")
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, related_name="+")
    created_at = models.DateTimeField(auto_now_add=True)
    updated_at = models.DateTimeField(auto_now=True)
    submitted_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, blank=True,
                                     related_name="+")
    submitted_at = models.DateTimeField(null=True, blank=True)
    # What a list shows (designs.checklists.count_revision): a draft's on each save, a submitted revision's from
    # its frozen checklist. The counts are None while the design can't be checked (problems, or a failure).
    category = models.CharField(max_length=16, blank=True)
    blockers = models.PositiveIntegerField(null=True, blank=True)
    warnings = models.PositiveIntegerField(null=True, blank=True)
    notes = models.PositiveIntegerField(null=True, blank=True)
    problems = models.PositiveIntegerField(default=0)
    unanswered = models.PositiveIntegerField(default=0)  # a partial draft's questions still to answer
    rule_failures = models.PositiveIntegerField(default=0)
    check_failed = models.BooleanField(default=False)  # checking raised: an error in Earshot, not the design

    class Meta:
        ordering = ["product", "-number"]
        constraints = [
            models.UniqueConstraint(fields=["product", "number"], name="revision_number_unique"),
            models.UniqueConstraint(fields=["product"], condition=models.Q(state="draft"),
                                    name="one_draft_per_product"),
        ]
        indexes = [models.Index(fields=["state", "product"], name="revision_state_product")]

    def __str__(self) -> str:
        return f"{self.product} design revision {self.number} ({self.get_state_display().lower()})"

    def save(self, *args, **kwargs):
        stored = self._stored_state()
        if stored is None and self.state != self.State.DRAFT:
            raise FrozenRevisionError("a revision starts as a draft; its state changes through designs.lifecycle")
        if stored is not None and stored != self.State.DRAFT:
            raise FrozenRevisionError(f"{self} is frozen; start a new draft to change the design.")
        if stored is not None and self.state != stored:
            raise FrozenRevisionError(f"{self}: its state changes only through designs.lifecycle")
        super().save(*args, **kwargs)

    def get_absolute_url(self) -> str:
        return reverse("revision_detail", args=[self.product_id, self.number])

    def delete(self, *args, **kwargs):
        if self._stored_state() not in (None, self.State.DRAFT):
            raise FrozenRevisionError(f"{self} is frozen and can't be deleted.")
        return super().delete(*args, **kwargs)

    def _stored_state(self) -> str | None:
        if self.pk is None:
            return None
        return Revision.objects.filter(pk=self.pk).values_list("state", flat=True).first()

    @property
    def is_draft(self) -> bool:
        return self.state == self.State.DRAFT

    @property
    def is_signed(self) -> bool:
        """Signed and archived: its record exists (current, or superseded by a newer one)."""
        return self.state in (self.State.SIGNED, self.State.SUPERSEDED)

    @property
    def passed_the_gate(self) -> bool:
        """Signing started, so the sign-off gate was passed (reviews.gate): every blocker it raises was waived by an
        approver and every warning settled. A list then says so instead of showing live blockers."""
        return self.state in (self.State.SIGNING, self.State.SIGNED, self.State.SUPERSEDED)

    @property
    def cache_identity(self) -> str:
        return cache_identity(revision_id=self.pk, created_at=self.created_at, state=self.state,
                              version=self.version)

    @property
    def category_label(self) -> str:
        found = categories().get(self.category)
        return found.label if found else self.category

    @property
    def counts(self) -> dict[str, int] | None:
        """The stored finding counts by severity, or None when the design could not be checked."""
        if self.blockers is None:
            return None
        return {"blocker": self.blockers, "warning": self.warnings or 0, "note": self.notes or 0}

def measurement_upload_to(instance: "MeasurementFile", filename: str) -> str:
    return f"measurements/product-{instance.revision.product_id}/rev-{instance.revision.number}/{filename}"


class MeasurementFile(models.Model):
    """A measurement file kept with a revision: a Touchstone file or a far-field pattern (rules.farfield's CSV);
    `name` is what the design document's measurements[].file says."""

    class Kind(models.TextChoices):  # the contract's measurements[].kind
        S_PARAMETERS = "s-parameters", "S-parameters (Touchstone)"
        FAR_FIELD = "far-field", "far-field pattern"

    revision = models.ForeignKey(Revision, on_delete=models.CASCADE, related_name="measurement_files")
    name = models.CharField(max_length=120)
    kind = models.CharField(max_length=16, choices=Kind.choices, default=Kind.S_PARAMETERS)
    file = models.FileField(upload_to=measurement_upload_to)
    size_bytes = models.PositiveIntegerField()
    sha256 = models.CharField(max_length=64)
    uploaded_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, related_name="+")
    uploaded_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["name"]
        constraints = [models.UniqueConstraint(fields=["revision", "name"], name="measurement_name_unique")]

    def __str__(self) -> str:
        return self.name

    def save(self, *args, **kwargs):
        if not Revision.objects.filter(pk=self.revision_id, state=Revision.State.DRAFT).exists():
            raise FrozenRevisionError("Measurement files of a submitted revision can't change.")
        super().save(*args, **kwargs)

    def delete(self, *args, **kwargs):
        if not Revision.objects.filter(pk=self.revision_id, state=Revision.State.DRAFT).exists():
            raise FrozenRevisionError("Measurement files of a submitted revision can't be deleted.")
        return super().delete(*args, **kwargs)

    def read_text(self) -> str:
        with self.file.open("rb") as handle:
            return handle.read().decode("utf-8", errors="replace")

    @staticmethod
    def digest(content: bytes) -> str:
        return hashlib.sha256(content).hexdigest()
