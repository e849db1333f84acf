"""Links from a rule id, wherever a page shows one, to that rule's row on the rules page."""

import re
from functools import cache, lru_cache

from django import template
from django.urls import get_script_prefix, reverse
from django.utils.html import escape, format_html
from django.utils.safestring import SafeString, mark_safe

from rules.registry import RETIRED, RULE_ID_PATTERN, registered_rules

register = template.Library()

_ID_IN_TEXT = re.compile(r"\b[A-Z]{3}-\d{3}\b")


@cache
def _known_ids() -> frozenset[str]:
    """The ids of the rule set this process runs (fixed once the checks are imported), retired ones included."""
    return frozenset({rule.id for rule in registered_rules()} | {rule.id for rule in RETIRED})


def rule_url(rule_id: str) -> str:
    return f"{reverse('rule_list')}#rule-{rule_id}"


@lru_cache(maxsize=1024)
def _rule_link(rule_id: str, script_prefix: str) -> SafeString:
    return format_html('<a class="rule-link" href="{}"><code>{}</code></a>', rule_url(rule_id), rule_id)


@register.simple_tag
def rule_link(rule_id: str) -> SafeString:
    """The id as a link to its rule; an id that is not a rule's (a stored value gone odd) as plain text."""
    if not isinstance(rule_id, str) or not RULE_ID_PATTERN.match(rule_id) or rule_id not in _known_ids():
        return format_html("<code>{}</code>", rule_id)
    return _rule_link(rule_id, get_script_prefix())


@register.filter
def link_rule_ids(text: str) -> SafeString:
    """Free text (an audit summary) escaped, always, with every known rule id in it linked to its rule."""
    known = _known_ids()
    pieces, last = [], 0
    text = "" if text is None else str(text)  # str() of a SafeString is still escaped below
    for match in _ID_IN_TEXT.finditer(text):
        if match.group() not in known:
            continue
        pieces += [escape(text[last:match.start()]), rule_link(match.group())]
        last = match.end()
    pieces.append(escape(text[last:]))
    return mark_safe("".join(str(piece) for piece in pieces))  # every piece is escaped or built by format_html
