"""What a revision's review must settle before it can be signed, item by item: the sign-off gate.

A decision carried from an earlier revision counts once someone confirms it here; a blocker needs a waiver that
rests on an approver's authority (granted on it as a blocker, or confirmed here by an approver:
ReviewItem.waiver_authority); a warning needs a disposition that settles it (SETTLED). Notes need nothing, nor
does a step outside the team (reviews.steps: certification, RF exposure), whatever its severity: it is tracked. The
sign-off app asks this module and adds only what is its own (signatures, a newer signed revision).
"""

from projectapp.reviews.models import SETTLED, Disposition, ReviewItem
from projectapp.reviews.steps import is_external_step
from projectapp.teams.models import Membership, Role


def approver_ids(team) -> set[int]:
    """The team's approvers: only their waiver (granted or confirmed) settles a blocker."""
    return set(Membership.objects.filter(team=team, role=Role.APPROVER).values_list("user_id", flat=True))


def _waiver_text(item: ReviewItem) -> str:
    by = item.confirmed_by or item.decided_by
    text = f"waived by {by.get_username()}" if by else "waived"
    if item.confirmed_by_id:
        text += " (confirmed)"
    if item.decided_severity and item.decided_severity != item.severity:
        text += f", granted when it was a {item.decided_severity}"
    return text


def item_obstacles(revision) -> list[str]:
    """One line per raised item that stands in the way of signing, in the order the items were raised."""
    obstacles = []
    approvers = approver_ids(revision.product.team)
    for item in revision.review_items.filter(kind=ReviewItem.Kind.RAISED).order_by("id").with_provenance():
        if is_external_step(topic=item.topic, rule_id=item.rule_id):
            continue  # a step outside the team is tracked (ProcessStep), not settled here: it never blocks signing
        label = f"{item.rule_id} {item.title}"
        if item.is_carried_unconfirmed and item.severity in ("blocker", "warning"):
            obstacles.append(f"{label}: the decision carried from revision {item.carried_from.number} "
                             "is not confirmed yet.")
        elif item.severity == "blocker" and item.disposition != Disposition.WAIVED:
            obstacles.append(f"{label}: a blocker must be waived by an approver "
                             f"(now: {item.get_disposition_display().lower()}).")
        elif item.severity == "blocker" and (item.waiver_authority is None
                                             or item.waiver_authority.pk not in approvers):
            obstacles.append(f"{label}: a blocker must be waived by an approver (now: {_waiver_text(item)}); "
                             "an approver must grant or confirm the waiver.")
        elif item.severity == "warning" and item.disposition not in SETTLED:
            obstacles.append(f"{label}: a warning needs a disposition "
                             f"(now: {item.get_disposition_display().lower()}).")
    return obstacles
