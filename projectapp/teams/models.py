"""Teams, and the roles a person holds in each.

A person may belong to several teams and hold several roles in one: author (product manager),
reviewer (RF or hardware engineer), approver. Everything a person sees is scoped to their teams.
"""

from django.conf import settings
from django.db import models


class Role(models.TextChoices):
    AUTHOR = "author", "Author (product manager)"
    REVIEWER = "reviewer", "Reviewer (RF / hardware engineer)"
    APPROVER = "approver", "Approver"


def default_signoff_roles() -> list[str]:
    return [Role.AUTHOR.value, Role.REVIEWER.value, Role.APPROVER.value]


class Team(models.Model):
    name = models.CharField(max_length=120, unique=True)
    created_at = models.DateTimeField(auto_now_add=True)
    # Who must sign a revision before its record is archived, and whether one person may sign for two roles.
    signoff_roles = models.JSONField(default=default_signoff_roles,
                                     help_text="Roles that must each sign, from: author, reviewer, approver.")
    allow_dual_signing = models.BooleanField(default=False,
                                             help_text="Let one person sign for two required roles.")

    class Meta:
        ordering = ["name"]

    def __str__(self) -> str:
        return self.name

    def clean(self):
        from django.core.exceptions import ValidationError

        if not isinstance(self.signoff_roles, list) or not self.signoff_roles \
                or any(role not in Role.values for role in self.signoff_roles) \
                or len(set(self.signoff_roles)) != len(self.signoff_roles):
            raise ValidationError({"signoff_roles": f"expected a list of distinct roles from {Role.values}"})

    def roles_of(self, user) -> set[str]:
        return set(self.memberships.filter(user=user).values_list("role", flat=True))


class Membership(models.Model):
    team = models.ForeignKey(Team, on_delete=models.CASCADE, related_name="memberships")
    user = models.ForeignKey(settings.AUTH_USER_MODEL, on_delete=models.CASCADE, related_name="memberships")
    role = models.CharField(max_length=16, choices=Role.choices)

    class Meta:
        ordering = ["team__name", "user__username", "role"]
        constraints = [
            models.UniqueConstraint(fields=["team", "user", "role"], name="one_membership_per_role"),
        ]

    def __str__(self) -> str:
        return f"{self.user} — {self.get_role_display()} in {self.team}"
