"""Who sees and changes a team's library: everyone in the team reads it, authors and reviewers change it,
and another team's library or entry is a 404."""

from django.core.exceptions import PermissionDenied
from django.shortcuts import get_object_or_404

from projectapp.library.models import Entry
from projectapp.teams.access import has_role, teams_of
from projectapp.teams.models import Role, Team

EDITING_ROLES = (Role.AUTHOR, Role.REVIEWER)


def entries_for(user):
    return Entry.objects.filter(team__in=teams_of(user)).select_related("team")


def get_entry_for_user(user, entry_id: int) -> Entry:
    return get_object_or_404(entries_for(user), pk=entry_id)


def get_team_for_user(user, team_id: int) -> Team:
    return get_object_or_404(teams_of(user), pk=team_id)


def can_edit(user, team: Team) -> bool:
    return any(has_role(user, team, role) for role in EDITING_ROLES)


def require_editor(user, team: Team) -> None:
    """A member who is neither author nor reviewer may read the library, not change it (403)."""
    if not can_edit(user, team):
        raise PermissionDenied(f"Changing {team.name}'s parts library needs the author or reviewer role.")
