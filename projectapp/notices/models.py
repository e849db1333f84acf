"""What a person is told: an assignment, a mention, a signature awaited, a revision signed, a step due.

The inbox reads these rows (paged in the database); e-mail goes out after the transaction that made them
commits, to people whose switch (MailSwitch) is on.
"""

from django.conf import settings
from django.db import models


class Notice(models.Model):
    class Kind(models.TextChoices):
        ASSIGNED = "assigned", "Assigned to you"
        MENTION = "mention", "Mentioned you"
        SIGNATURE = "signature", "Your signature is awaited"
        SIGNED = "signed", "A revision was signed"
        STEP_DUE = "step-due", "An external step is due"

    recipient = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="notices")
    team = models.ForeignKey("teams.Team", on_delete=models.CASCADE, related_name="+")
    kind = models.CharField(max_length=12, choices=Kind.choices)
    text = models.CharField(max_length=300)
    url = models.CharField(max_length=300)  # a path inside the app, built with reverse()
    # Names the event a notice is about, so asking twice (a step due checked every day) tells once.
    event_key = models.CharField(max_length=120, blank=True)
    created_at = models.DateTimeField(auto_now_add=True)
    read_at = models.DateTimeField(null=True, blank=True)

    class Meta:
        ordering = ["-created_at", "-id"]
        indexes = [models.Index(fields=["recipient", "read_at"], name="notice_unread"),
                   models.Index(fields=["recipient", "-created_at", "-id"], name="notice_inbox")]
        constraints = [models.UniqueConstraint(fields=["recipient", "event_key"], condition=~models.Q(event_key=""),
                                               name="one_notice_per_event")]

    def __str__(self) -> str:
        return f"{self.get_kind_display()} → {self.recipient}: {self.text}"


class MailSwitch(models.Model):
    """A person's choice about e-mail; no row means on."""

    user = models.OneToOneField(settings.AUTH_USER_MODEL, on_delete=models.CASCADE, primary_key=True,
                                related_name="mail_switch")
    email_notices = models.BooleanField(default=True)

    def __str__(self) -> str:
        return f"e-mail notices {'on' if self.email_notices else 'off'} for {self.user}"

