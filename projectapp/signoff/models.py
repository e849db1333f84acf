"""Signatures on a submitted revision, the archived PDF record, and which record superseded which.

A record row is written once, with its PDF and the PDF's SHA-256, and never changed: that a later
record supersedes it is a separate row (Supersession), so the archive only ever grows.
"""

from django.conf import settings
from django.db import models
from django.urls import reverse

from projectapp.designs.models import Revision
from projectapp.teams.models import Role


class ImmutableRecordError(RuntimeError):
    """Signatures, records and supersessions are written once and never changed or deleted."""


class WriteOnce(models.Model):
    class Meta:
        abstract = True

    def save(self, *args, **kwargs):
        if self.pk is not None:
            raise ImmutableRecordError(f"{type(self).__name__} rows are never changed")
        super().save(*args, **kwargs)

    def delete(self, *args, **kwargs):
        raise ImmutableRecordError(f"{type(self).__name__} rows are never deleted")


MEANINGS = {
    Role.AUTHOR: "prepared: this is the design the product team intends to build",
    Role.REVIEWER: "reviewed: the flagged items were examined and each has a disposition",
    Role.APPROVER: "approved: the remaining risks, including every waiver, are accepted",
}


class Signature(WriteOnce):
    revision = models.ForeignKey(Revision, on_delete=models.PROTECT, related_name="signatures")
    role = models.CharField(max_length=16, choices=Role.choices)
    signer = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.PROTECT, related_name="+")
    # As it was when signed: Django's full name, first (150) + space + last (150) characters at most.
    signer_name = models.CharField(max_length=301)
    meaning = models.CharField(max_length=200)
    signed_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["signed_at", "id"]
        constraints = [models.UniqueConstraint(fields=["revision", "role"], name="one_signature_per_role")]

    def __str__(self) -> str:
        return f"{self.signer_name} ({self.role}) on {self.revision}"


def record_upload_to(instance: "SignedRecord", filename: str) -> str:
    return f"records/product-{instance.revision.product_id}/{filename}"


class SignedRecord(WriteOnce):
    revision = models.OneToOneField(Revision, on_delete=models.PROTECT, related_name="signed_record")
    pdf = models.FileField(upload_to=record_upload_to)
    sha256 = models.CharField(max_length=64, unique=True)
    size_bytes = models.PositiveIntegerField()
    fingerprint = models.CharField(max_length=64)  # SHA-256 of the record's content, printed on every page
    created_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["-created_at", "-id"]

    def __str__(self) -> str:
        return f"record of {self.revision}"

    def get_absolute_url(self) -> str:
        return reverse("record_detail", args=[self.pk])

    @property
    def superseded_by(self) -> "SignedRecord | None":
        link = Supersession.objects.filter(older=self).select_related("newer__revision").first()
        return link.newer if link else None

    @property
    def is_current(self) -> bool:
        return not Supersession.objects.filter(older=self).exists()


class Supersession(WriteOnce):
    older = models.OneToOneField(SignedRecord, on_delete=models.PROTECT, related_name="supersession")
    newer = models.ForeignKey(SignedRecord, on_delete=models.PROTECT, related_name="supersedes")
    created_at = models.DateTimeField(auto_now_add=True)

    def __str__(self) -> str:
        return f"{self.newer} supersedes {self.older}"
