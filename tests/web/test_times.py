"""The local_time tag: UTC a page reads right without a script, marked for earshot.js to show in local time."""

import datetime
import zoneinfo

from django.template import Context, Template


def render(moment) -> str:
    return Template("{% load times %}{% local_time moment %}").render(Context({"moment": moment}))


def test_it_writes_the_moment_in_utc_whatever_zone_it_was_made_in():
    auckland = datetime.datetime(2026, 12, 3, 9, 5, tzinfo=zoneinfo.ZoneInfo("Pacific/Auckland"))  # UTC+13 in summer
    assert render(auckland) == ('<time datetime="2026-12-02T20:05:00+00:00" data-local-time="date-time">'
                                "2026-12-02 20:05 UTC</time>")


def test_no_moment_reads_as_a_dash():
    assert render(None) == "—"
