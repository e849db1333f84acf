"""A moment a person reads, in their own time zone: the page carries UTC (it reads right without a script) and
earshot.js rewrites it in the browser's zone, keeping UTC in the tooltip. Signed records and the audit trail stay
in UTC on purpose: they are a record, compared across people and zones."""

import datetime

from django import template
from django.utils import timezone
from django.utils.html import format_html

register = template.Library()


@register.simple_tag
def local_time(moment: datetime.datetime | None, default: str = "—") -> str:
    if moment is None:
        return default
    moment = timezone.localtime(moment, datetime.UTC)
    return format_html('<time datetime="{}" data-local-time="date-time">{} UTC</time>',
                       moment.isoformat(), moment.strftime("%Y-%m-%d %H:%M"))
