"""Products, their numbered design revisions, and the measurement files kept with a revision.

A draft revision is editable. Submitting it freezes it: the design document is stored whole with its
checklist and the rule-set version that produced it, and nothing may change it afterwards. Editing
again starts a new draft from the latest revision.
"""

import hashlib

from django.conf import settings
from django.db import models
from django.urls import reverse

from projectapp.teams.models import Team


class FrozenRevisionError(RuntimeError):
    """An attempt to change a revision (or a file of it) that is no longer a draft."""


class Product(models.Model):
    team = models.ForeignKey(Team, on_delete=models.PROTECT, related_name="products")
    name = models.CharField(max_length=120)
    description = models.CharField(max_length=300, blank=True)
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, related_name="+")
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["team__name", "name"]
        constraints = [models.UniqueConstraint(fields=["team", "name"], name="product_name_unique_in_team")]

    def __str__(self) -> str:
        return self.name

    def get_absolute_url(self) -> str:
        return reverse("product_detail", args=[self.pk])

    @property
    def draft(self) -> "Revision | None":
        return self.revisions.filter(status=Revision.Status.DRAFT).first()

    @property
    def latest(self) -> "Revision | None":
        return self.revisions.order_by("-number").first()

    @property
    def latest_submitted(self) -> "Revision | None":
        return self.revisions.exclude(status=Revision.Status.DRAFT).order_by("-number").first()


class Revision(models.Model):
    class Status(models.TextChoices):
        DRAFT = "draft", "Draft"
        SUBMITTED = "submitted", "Submitted for review"

    product = models.ForeignKey(Product, on_delete=models.PROTECT, related_name="revisions")
    number = models.PositiveIntegerField()
    status = models.CharField(max_length=16, choices=Status.choices, default=Status.DRAFT)
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

    class Meta:
        ordering = ["product", "-number"]
        constraints = [
            models.UniqueConstraint(fields=["product", "number"], name="revision_number_unique"),
            models.UniqueConstraint(fields=["product"], condition=models.Q(status="draft"),
                                    name="one_draft_per_product"),
        ]

    def __str__(self) -> str:
        return f"{self.product} design revision {self.number} ({self.get_status_display().lower()})"

    def save(self, *args, **kwargs):
        stored = self._stored_status()
        if stored is not None and stored != self.Status.DRAFT:
            raise FrozenRevisionError(f"{self} is frozen; start a new draft to change the design.")
        super().save(*args, **kwargs)

    def get_absolute_url(self) -> str:
        return reverse("revision_detail", args=[self.product_id, self.number])

    def delete(self, *args, **kwargs):
        if self._stored_status() not in (None, self.Status.DRAFT):
            raise FrozenRevisionError(f"{self} is frozen and can't be deleted.")
        return super().delete(*args, **kwargs)

    def _stored_status(self) -> str | None:
        if self.pk is None:
            return None
        return Revision.objects.filter(pk=self.pk).values_list("status", flat=True).first()

    @property
    def is_draft(self) -> bool:
        return self.status == self.Status.DRAFT

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
        if not Revision.objects.filter(pk=self.revision_id, status=Revision.Status.DRAFT).exists():
            raise FrozenRevisionError("Measurement files of a submitted revision can't change.")
        super().save(*args, **kwargs)

    def delete(self, *args, **kwargs):
        if not Revision.objects.filter(pk=self.revision_id, status=Revision.Status.DRAFT).exists():
            raise FrozenRevisionError("Measurement files of a submitted revision can't be deleted.")
        return super().delete(*args, **kwargs)

    def read_text(self) -> str:
        with self.file.open("rb") as handle:
            return handle.read().decode("utf-8", errors="replace")

    @staticmethod
    def digest(content: bytes) -> str:
        return hashlib.sha256(content).hexdigest()
