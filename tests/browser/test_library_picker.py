"""A product manager fills an antenna from the team's parts library in a real browser, and the live checklist
follows: the antenna's datasheet ranges no longer cover B12 and B13 (a band-coverage blocker), the library's
entry does, and picking it clears the blocker without a reload while the values land in the fields. A part that
keeps a far-field pattern brings it along: picked for the trail tracker's DIV antenna, whose MAIN pattern the
draft already keeps, the pair's spacing warning becomes a note measured by the two patterns.

Band edges from 3GPP TS 36.101 Table 5.5-1: B12 UL 699-716 / DL 729-746 MHz, B13 UL 777-787 / DL 746-756 MHz,
B2 UL 1850-1910 / DL 1930-1990 MHz, B4 UL 1710-1755 / DL 2110-2155 MHz, B20 DL 791-821 MHz (λ/2π = 60.3 mm at
791 MHz, Wheeler 1959, against the pair's 50 mm). The part's name and figures are invented.
"""

import json
import os

import pytest
from django.urls import reverse

from projectapp.designs import services
from projectapp.library import services as library
from tests.browser.test_questionnaire_flow import answer, log_in, saved
from tests.web.conftest import EXAMPLES
from tests.web.test_library_far_field import DIV_CSV, DIV_VALUES, trail_tracker

try:
    from playwright.sync_api import expect
except ImportError:  # the same rule as for Chromium itself (conftest.py): skip locally, fail in CI
    if os.environ.get("CI"):
        raise
    pytest.skip("the playwright Python package is not installed: pip install playwright", allow_module_level=True)

pytestmark = pytest.mark.browser


@pytest.fixture
def probe_with_high_band_antenna(team, author):
    product = services.product_create(team=team, name="Orchard soil probe", user=author)
    document = json.loads((EXAMPLES / "orchard-probe.json").read_text())
    document["antennas"][0]["ranges_mhz"] = [[1710, 2200]]  # B2 and B4 only: B12 and B13 left uncovered
    services.draft_save_document(revision=product.draft, document=document, user=author)
    library.entry_create(team=team, kind="antenna", name="Ribbon flex F2", user=author,
                         values={"mounting": "internal", "ranges_mhz": [[698, 960], [1710, 2200]],
                                 "peak_gain_dbi": 1.8, "efficiency_pct": {"B2": 52, "B4": 50, "B12": 34, "B13": 36}})
    return product


def test_a_pm_picks_an_antenna_from_the_library_and_the_checklist_follows(page, live_server, author,
                                                                       probe_with_high_band_antenna):
    product = probe_with_high_band_antenna
    log_in(page, live_server, author)
    page.goto(live_server.url + reverse("draft_edit", args=[product.pk]))
    checklist = page.locator("#checklist")
    expect(checklist.locator("details.finding", has_text="BND-001")).to_have_count(2)  # B12 and B13

    picker = page.get_by_label("Fill from library")
    expect(picker).to_have_value(str(product.team.library_entries.get().pk))
    saved(page, lambda: page.locator('#section-antennas button[value="library:0"]').click())

    expect(checklist.locator("details.finding", has_text="BND-001")).to_have_count(0)
    expect(answer(page, "antennas[0].ranges_mhz")).to_have_value("698-960, 1710-2200")
    expect(answer(page, "antennas[0].peak_gain_dbi")).to_have_value("1.8")
    expect(answer(page, "antennas[0].name")).to_have_value("ANT1")  # the design's own name stays
    expect(page.locator("#section-antennas .library-note")).to_contain_text("Ribbon flex F2, version 1")

    # the values stay editable: narrowing the range again brings the blocker back
    field = answer(page, "antennas[0].ranges_mhz")
    saved(page, lambda: (field.fill("1710-2200"), field.press("Tab")))
    expect(checklist.locator("details.finding", has_text="BND-001")).to_have_count(2)


@pytest.fixture
def tracker_with_main_pattern(team, author):
    product = trail_tracker(team, author)
    part = library.entry_create(team=team, kind="antenna", name="Sorrel flex D1", values=dict(DIV_VALUES), user=author)
    library.entry_file_add(entry=part, name="trail-tracker-div.csv", content=DIV_CSV, absolute=True, read_version=1,
                           user=author)
    return product


def test_a_part_picked_with_its_far_field_pattern_brings_the_pattern_and_the_checklist_uses_it(
        page, live_server, author, tracker_with_main_pattern, tmp_path):
    product = tracker_with_main_pattern
    log_in(page, live_server, author)
    page.goto(live_server.url + reverse("draft_edit", args=[product.pk]))
    spacing = page.locator("#panel-checklist details.finding", has_text="SEP-001")
    expect(spacing.locator(".basis")).to_have_text("from the design")

    expect(page.locator("#library-1-entry")).to_have_value(str(product.team.library_entries.get().pk))
    with page.expect_navigation(timeout=30_000):  # files were copied: htmx reloads the page
        page.locator('#section-antennas button[value="library:1"]').click()

    expect(page.get_by_text("copied trail-tracker-div.csv into the measurements")).to_be_visible()
    measurements = page.locator("#section-measurements")
    expect(measurements.get_by_text("trail-tracker-div.csv").first).to_be_visible()
    spacing = page.locator("#panel-checklist details.finding", has_text="SEP-001")
    expect(spacing.locator(".badge")).to_have_text("note")
    expect(spacing.locator(".basis")).to_have_text("measured")
    expect(page.locator("#measured svg title", has_text="Envelope correlation from far-field patterns")).to_have_count(1)
    page.screenshot(path=str(tmp_path / "library-pattern-picked.png"), full_page=True)
