"""A team's parts library: antennas and modules described once, picked into designs many times.

An entry's values are a fragment of the design file (an `earshot-design/1` antenna object without the
design's own name, role and position, or a modem object), so a design filled from it carries the same values
in the same shape. Entries are never deleted: a design may name one (`antennas[i].library`), so an entry no
longer wanted is retired (hidden from the pickers, kept for the designs that used it).
"""

import hashlib

from django.conf import settings
from django.db import models
from django.urls import reverse

from projectapp.teams.models import Team


class EntryDeletionError(RuntimeError):
    """Library entries are retired, never deleted."""


class Entry(models.Model):
    class Kind(models.TextChoices):
        ANTENNA = "antenna", "Antenna"
        MODULE = "module", "Module"

    team = models.ForeignKey(Team, on_delete=models.PROTECT, related_name="library_entries")
    kind = models.CharField(max_length=10, choices=Kind.choices)
    # The name designs note beside the values they copied; fixed once created (duplicate to rename), so a
    # design's note always finds its entry.
    name = models.CharField(max_length=120)
    description = models.CharField(max_length=300, blank=True)
    values = models.JSONField(default=dict)  # the design-file fragment, valid for rules.design
    # Counts the changes of the values, the description and the files; every change names the version it read.
    version = models.PositiveIntegerField(default=1)
    retired_at = models.DateTimeField(null=True, blank=True)
    created_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, related_name="+")
    created_at = models.DateTimeField(auto_now_add=True)
    updated_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, related_name="+")
    updated_at = models.DateTimeField(auto_now=True)

    class Meta:
        verbose_name_plural = "entries"
        ordering = ["team__name", "kind", "name"]
        constraints = [models.UniqueConstraint(fields=["team", "name"], name="library_entry_name_unique_in_team")]

    def __str__(self) -> str:
        return f"{self.name} (v{self.version})"

    def get_absolute_url(self) -> str:
        return reverse("library_entry", args=[self.pk])

    def delete(self, *args, **kwargs):
        raise EntryDeletionError(f"{self.name}: library entries are retired, never deleted")

    @property
    def is_retired(self) -> bool:
        return self.retired_at is not None

    @property
    def audit_subject(self) -> str:
        return f"library-entry:{self.pk}"


def entry_file_upload_to(instance: "EntryFile", filename: str) -> str:
    return f"library/team-{instance.entry.team_id}/entry-{instance.entry_id}/{filename}"


class EntryFile(models.Model):
    """A file that describes an antenna entry (a Touchstone file or a far-field pattern), kept with its SHA-256.

    Filling a design from the entry copies the file into the draft's measurements, with its kind."""

    class Kind(models.TextChoices):
        TOUCHSTONE = "touchstone", "Touchstone (S-parameters)"
        FAR_FIELD = "far-field", "far-field pattern"

    entry = models.ForeignKey(Entry, on_delete=models.PROTECT, related_name="files")
    name = models.CharField(max_length=120)
    kind = models.CharField(max_length=12, choices=Kind.choices, default=Kind.TOUCHSTONE)
    file = models.FileField(upload_to=entry_file_upload_to)
    # A far-field pattern's `absolute` (design-file.md): |E_theta|^2 + |E_phi|^2 is the realized gain. It is a
    # property of how the file was measured, so it travels with the file into each draft. False for Touchstone.
    absolute = models.BooleanField(default=False)
    size_bytes = models.PositiveIntegerField()
    sha256 = models.CharField(max_length=64)
    uploaded_by = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.SET_NULL, null=True, related_name="+")
    uploaded_at = models.DateTimeField(auto_now_add=True)

    class Meta:
        ordering = ["name"]
        constraints = [models.UniqueConstraint(fields=["entry", "name"], name="library_file_name_unique")]

    def __str__(self) -> str:
        return self.name

    def read_bytes(self) -> bytes:
        with self.file.open("rb") as handle:
            return handle.read()

    @staticmethod
    def digest(content: bytes) -> str:
        return hashlib.sha256(content).hexdigest()
