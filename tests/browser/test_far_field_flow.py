"""An engineer's path through the far-field upload in a real browser: the demo's trail tracker (its design from
rules/examples/trail-tracker.json without its measurements) is a Cat 1 pair 50 mm apart at 791 MHz, inside the
reactive near field but cross-polarized, so the geometry says "warning". Uploading the two far-field patterns
(trail-tracker-main.csv and trail-tracker-div.csv, with the demo's Taga environment) turns the spacing finding
into a note whose basis is "measured", naming both files with their SHA-256.

Physics behind it: B20's downlink starts at 791 MHz (3GPP TS 36.101 Table 5.5-1), lambda/2pi = 60.3 mm there
(Wheeler 1959); the patterns' envelope correlation over B20's downlink is at most 0.5 (the demo's synthetic
patterns give about 0.00), which clears the spacing rule (design.md, rule set 2).
"""

import hashlib
import json
import os

import pytest
from django.urls import reverse

from projectapp.designs import services
from tests.browser.test_questionnaire_flow import log_in
from tests.web.conftest import EXAMPLES

try:
    from playwright.sync_api import Page, expect
except ImportError:
    if os.environ.get("CI"):
        raise
    pytest.skip("the playwright Python package is not installed: pip install playwright", allow_module_level=True)

pytestmark = pytest.mark.browser

FILES = ("trail-tracker-main.csv", "MAIN"), ("trail-tracker-div.csv", "DIV")


@pytest.fixture
def tracker(team, author):
    document = json.loads((EXAMPLES / "trail-tracker.json").read_text())
    del document["measurements"]
    product = services.product_create(team=team, name="Trail tracker", user=author)
    services.design_import(product=product, text=json.dumps(document), source="trail-tracker.json", user=author)
    return product


def spacing_finding(page: Page):
    return page.locator("#panel-checklist details.finding", has_text="SEP-001")


def upload_pattern(page: Page, file_name: str, antenna: str) -> None:
    form = page.locator("form.upload.pattern-form")
    form.locator('input[type="file"]').set_input_files(str(EXAMPLES / file_name))
    form.get_by_label("Antenna", exact=True).select_option(antenna)
    form.get_by_label("Absolute").check()
    form.get_by_label("Outdoor, Taga's model").check()
    form.locator('[name="mean_elevation_deg"]').fill("20")  # the demo's environment (trail-tracker.json)
    form.locator('[name="spread_deg"]').fill("20")
    form.locator('[name="xpr_db"]').fill("6")
    form.get_by_role("button", name="Upload").click()


def test_uploading_the_trail_trackers_patterns_makes_the_spacing_finding_a_measured_note(page: Page, live_server,
                                                                                         tracker, author, tmp_path):
    log_in(page, live_server, author)
    page.goto(live_server.url + reverse("draft_edit", args=[tracker.pk]))
    finding = spacing_finding(page)
    expect(finding.locator(".badge")).to_have_text("warning")
    expect(finding.locator(".basis")).to_have_text("from the design")

    for file_name, antenna in FILES:
        upload_pattern(page, file_name, antenna)
        expect(page.get_by_text(f"{file_name} kept with draft 1 as the far-field pattern of {antenna}.")).to_be_visible()

    finding = spacing_finding(page)
    expect(finding.locator(".badge")).to_have_text("note")
    expect(finding.locator(".basis")).to_have_text("measured")
    finding.locator("summary").click()
    expect(finding.get_by_text("from the design alone this would be a warning")).to_be_visible()
    for file_name, _ in FILES:
        digest = hashlib.sha256((EXAMPLES / file_name).read_bytes()).hexdigest()
        expect(finding.get_by_text(digest)).to_be_visible()
    measurements = page.locator("#section-measurements")
    expect(measurements.get_by_text("3 frequencies: 800.0, 940.0, 1840.0 MHz").first).to_be_visible()
    expect(page.locator("#measured svg title", has_text="Envelope correlation from far-field patterns")).to_have_count(1)
    page.screenshot(path=str(tmp_path / "far-field-cleared.png"), full_page=True)


def test_a_broken_pattern_is_refused_with_its_line_and_the_page_stays_as_it_was(page: Page, live_server, tracker,
                                                                                 author, tmp_path):
    broken = tmp_path / "broken.csv"
    lines = (EXAMPLES / "trail-tracker-main.csv").read_text().split("\n")
    lines[8] = "800,0,40,0.6,zero,0,0"  # line 9
    broken.write_text("\n".join(lines))
    log_in(page, live_server, author)
    page.goto(live_server.url + reverse("draft_edit", args=[tracker.pk]))
    form = page.locator("form.upload.pattern-form")
    form.locator('input[type="file"]').set_input_files(str(broken))
    form.get_by_label("Antenna", exact=True).select_option("MAIN")
    form.get_by_role("button", name="Upload").click()
    expect(page.get_by_text("broken.csv:9: e_theta_im: expected a number, got 'zero' — nothing was stored.")).to_be_visible()
    expect(page.locator("#section-measurements").get_by_text("No measurements kept with this draft.")).to_be_visible()
    expect(spacing_finding(page).locator(".badge")).to_have_text("warning")
