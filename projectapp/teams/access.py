"""Who may see and do what. Views fetch objects only through these, so another team's data is a 404."""

from django.core.exceptions import PermissionDenied
from django.db.models import QuerySet

from projectapp.teams.models import Membership, Team


def teams_of(user) -> QuerySet[Team]:
    return Team.objects.filter(memberships__user=user).distinct()


def teams_where(user, role: str) -> QuerySet[Team]:
    return Team.objects.filter(memberships__user=user, memberships__role=role).distinct()


def has_role(user, team: Team, role: str) -> bool:
    return Membership.objects.filter(user=user, team=team, role=role).exists()


def require_role(user, team: Team, role: str) -> None:
    """A team member without the role gets 403: they may see the object, not change it."""
    if not has_role(user, team, role):
        raise PermissionDenied(f"This needs the {role} role in {team.name}.")

