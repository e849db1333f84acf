"""Who decided what about a review item, when, and what was carried: the sentences the item's card and the
signed PDF record both print, so the two never tell the story differently.

A decision in force was either made in this revision, or carried in from an earlier one and then either
still unconfirmed or confirmed here by someone (who is named beside the person who decided it). A
carried decision that someone replaced here is shown as theirs, with what had been carried. A decision
the previous revision took on a less severe finding is not carried, and the item says so.
"""

from dataclasses import dataclass
from datetime import datetime

from django.utils.dateparse import parse_datetime

from projectapp.reviews.models import SEVERITY_RANK, Disposition, ReviewItem


@dataclass(frozen=True)
class Line:
    text: str
    attention: bool = False  # something stands in the way of sign-off


def person(user) -> str:
    return user.get_full_name() or user.get_username()


def when(moment: datetime | str | None) -> str:
    if isinstance(moment, str):
        moment = parse_datetime(moment)
    return f"{moment:%Y-%m-%d %H:%M} UTC" if moment else "at an unrecorded time"


def disposition_label(value: str) -> str:
    return Disposition(value).label if value in Disposition.values else value


def decision_lines(item: ReviewItem, *, approver_ids: set[int] | None = None) -> list[Line]:
    """The item's provenance, most important first. With `approver_ids` (the team's approvers), a blocker's
    waiver that no approver granted or confirmed is called out."""
    lines: list[Line] = []
    if item.decided_by_id is not None:
        where = ("in this revision" if item.decided_in_id in (None, item.revision_id)
                 else f"in design revision {item.decided_in.number}")
        graver = (f", when it was a {item.decided_severity}"
                  if item.decided_severity and item.decided_severity != item.severity else "")
        lines.append(Line(f"Decided by {person(item.decided_by)}, {when(item.decided_at)}, {where}{graver}."))
    previous = item.previous_decision or {}
    if item.is_carried_unconfirmed:
        lines.append(Line(f"carried from design revision {item.carried_from.number} — not yet confirmed", attention=True))
    elif item.carried_from_id is not None and item.confirmed_by_id is not None:
        lines.append(Line(f"Carried from design revision {item.carried_from.number}; confirmed here by "
                          f"{person(item.confirmed_by)}, {when(item.confirmed_at)}."))
    elif item.carried_from_id is not None:
        carried_in = f"Design revision {item.carried_from.number} carried in"
        if previous.get("carried"):
            carried_in += (f": {disposition_label(previous['disposition'])}, decided by "
                           f"{previous.get('decided_by_name') or 'someone'}, {when(previous.get('decided_at'))}")
        lines.append(Line(carried_in + "; decided anew here."))
    if previous and not previous.get("carried"):
        # the lesser of the two severities the earlier decision stood on is the one this finding outgrew
        lower = min(previous["severity"], previous.get("decided_severity") or previous["severity"],
                    key=lambda severity: SEVERITY_RANK.get(severity, 9))
        lines.append(Line(
            f"Design revision {previous['revision']} had {disposition_label(previous['disposition'])} "
            f"({previous.get('decided_by_name') or 'someone'}, {when(previous.get('decided_at'))}) with this "
            f"finding a {lower}; not carried: it is a {item.severity} now and needs a new decision."))
    if approver_ids is not None and item.severity == "blocker" and item.disposition == Disposition.WAIVED:
        authority = item.waiver_authority
        if authority is None or authority.pk not in approver_ids:
            lines.append(Line("Not an approver's waiver: an approver must grant or confirm it before sign-off.",
                              attention=True))
    return lines
