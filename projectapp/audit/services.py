"""The one way into the audit trail: who changed what, when, and the before and after.

Design edits (questionnaire saves, imports, measurement files), life-cycle transitions, review steps,
signatures and parts-library changes all write through `audit_record`; the library reads an entry's history
through `audit_trail`.
"""

from typing import Any

from django.db.models import QuerySet

from projectapp.audit.models import AuditEvent


def audit_record(*, actor, action: str, summary: str, product=None, team=None, subject: str = "",
                 revision=None, item=None, changes: dict[str, Any] | None = None,
                 draft_version: int | None = None) -> AuditEvent:
    """One event. A product's event names its team too (the model fills it in); a library event names its
    team and `subject`."""
    return AuditEvent.objects.create(product=product, team=team, subject=subject[:80], revision=revision, item=item,
                                     actor=actor, action=action, summary=summary[:300], changes=changes or {},
                                     draft_version=draft_version)


def audit_trail(*, team, subject: str) -> QuerySet[AuditEvent]:
    """A subject's events in a team, newest first (a library entry's change history)."""
    return AuditEvent.objects.filter(team=team, subject=subject).select_related("actor")
