"""How the audit trail shows a changed value: short, one line, the full value in the stored event."""

import json
from typing import Any

from django import template

register = template.Library()

SHOWN_CHARACTERS = 160


@register.filter
def compact(value: Any) -> str:
    """A value as compact JSON (text as it is), '—' for nothing, cut to a line with an ellipsis."""
    if value is None:
        return "—"
    text = value if isinstance(value, str) else json.dumps(value, ensure_ascii=False, separators=(", ", ": "),
                                                           default=str)
    return text if len(text) <= SHOWN_CHARACTERS else text[:SHOWN_CHARACTERS - 1] + "…"
