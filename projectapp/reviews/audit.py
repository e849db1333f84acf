"""The one way into the audit trail: who changed what on which product, when, and the before and after.

Design edits (questionnaire saves, imports, measurement files) and review steps both write through
`audit_record`, so moving the trail elsewhere later changes this module and its model only.
"""

from typing import Any

from projectapp.reviews.models import AuditEvent


def audit_record(*, product, actor, action: str, summary: str, revision=None, item=None,
                 changes: dict[str, Any] | None = None, draft_version: int | None = None) -> AuditEvent:
    return AuditEvent.objects.create(product=product, revision=revision, item=item, actor=actor, action=action,
                                     summary=summary[:300], changes=changes or {}, draft_version=draft_version)
