"""What a product manager who is not an RF engineer meets in the questionnaire: a category switch that offers
to drop the bands it can't use, polarization chosen in words, Undo remove, a duplicate placed apart, the
keyboard focus kept where it was, findings kept open across saves, and saved times in local time.

Physics behind the checks (hive-gateway.json, Cat 1 on B3, B8, B20): the lowest edge in scope is B20's
downlink, 791 MHz (3GPP TS 36.101 Table 5.5-1); lambda = 379.0 mm there (c = 299 792 458 m/s), so
lambda/2pi = 60.3 mm (Wheeler 1959) and lambda/4 = 94.8 mm. MAIN and DIV are 45 mm apart: co-polarized that is
a blocker, 90 degrees apart a warning (design.md severity policy).
"""

import re

import pytest
from django.urls import reverse

from projectapp.designs.models import Product
from projectapp.notices.models import Notice
from projectapp.notices.services import notify
from tests.browser.test_questionnaire_flow import (
    answer,
    choose,
    click_button,
    log_in,
    saved,
    sep_001,
    type_answer,
)

try:
    from playwright.sync_api import expect
except ImportError:  # conftest.py's rule: skip locally, fail in CI
    pytest.skip("the playwright Python package is not installed", allow_module_level=True)

pytestmark = pytest.mark.browser


def open_draft(page, live_server, author, product) -> None:
    log_in(page, live_server, author)
    page.goto(live_server.url + reverse("draft_edit", args=[product.pk]))


def stored(product) -> dict:
    return Product.objects.get(pk=product.pk).draft.document


def focused_id(page) -> str:
    return page.evaluate("() => document.activeElement && document.activeElement.id")


def test_switching_the_category_to_nr_keeps_the_checklist_and_offers_to_drop_the_lte_bands(page, live_server, author,
                                                                                           hive_gateway):
    open_draft(page, live_server, author, hive_gateway)
    choose(page, "modem.category", "nr-redcap")

    # Not a wall of errors: the count of receive antennas is still judged, the bands wait, and the form offers
    # the way out.
    offer = page.locator("#section-product .band-offer")
    expect(offer).to_contain_text("B3, B8, B20 are bands this category can't use")
    expect(page.locator("#checklist .counts")).to_be_visible()
    expect(page.locator("#checklist-todo")).to_contain_text("Bands: B3, B8, B20 are LTE bands; NR RedCap uses NR bands")
    expect(page.locator("#checklist")).to_contain_text("CRT-002")
    expect(page.locator("#placement svg")).to_be_visible()  # the drawing stays, pairs not judged meanwhile
    expect(page.locator("#placement svg desc")).to_contain_text("MAIN to DIV 45 mm apart, not judged yet")

    click_button(page, "Drop 3 bands the category can't use")
    expect(page.locator("#section-product .band-offer")).to_have_count(0)
    assert stored(hive_gateway)["modem"]["bands"] == []
    expect(page.locator("#checklist-todo")).to_contain_text("Bands: not answered yet")
    assert focused_id(page) == "q-modem-bands-label"
    click_button(page, "Europe, NR (RedCap)")
    expect(page.locator("#checklist-todo")).to_have_count(0)
    expect(page.locator("#checklist")).to_contain_text("judged at")


def test_polarization_is_chosen_in_words_and_the_drawing_and_checklist_follow(page, live_server, author,
                                                                             hive_gateway):
    open_draft(page, live_server, author, hive_gateway)
    words = answer(page, "antennas[1].polarization.words")
    expect(words).to_have_value("x")  # stored [-1, 0, 0]: along the length
    expect(page.locator("#q-antennas-1-polarization-0")).to_be_hidden()  # no numbers to type
    expect(sep_001(page)).to_have_class(re.compile(r"\bsev-blocker\b"))

    choose(page, "antennas[1].polarization.words", "y")
    assert stored(hive_gateway)["antennas"][1]["polarization"] == [0, 1, 0]
    expect(sep_001(page)).to_have_class(re.compile(r"\bsev-warning\b"))  # 90 degrees apart inside lambda/2pi
    expect(page.locator("#placement svg desc")).to_contain_text("DIV (receive, internal) at x 60, y 10, z 12 mm")
    expect(page.locator("#q-antennas-1-polarization-now")).to_contain_text("along the width (y)")

    # An angle in a plane, still without numbers: 30 degrees from the length towards the width.
    choose(page, "antennas[1].polarization.words", "xy")
    expect(page.locator("#q-antennas-1-polarization-angle")).to_be_visible()
    choose(page, "antennas[1].polarization.angle_deg", "30")
    assert stored(hive_gateway)["antennas"][1]["polarization"] == [0.866025, 0.5, 0]  # cos 30°, sin 30°
    expect(page.locator("#q-antennas-1-polarization-now")).to_contain_text(
        "in the length–width plane, 30° from the length towards the width")
    expect(sep_001(page)).to_have_class(re.compile(r"\bsev-blocker\b"))  # 30 degrees: still co-polarized

    # A direction no choice names is shown as custom, with the nearest words, and kept as it is.
    choose(page, "antennas[1].polarization.words", "custom")
    for axis, value in enumerate(("0.3", "0.2", "0.9")):
        type_answer(page, f"antennas[1].polarization[{axis}]", value)
    page.reload()
    expect(answer(page, "antennas[1].polarization.words")).to_have_value("custom")
    expect(page.locator("#q-antennas-1-polarization-now")).to_contain_text("closest to along the height (z, upright)")


def test_a_removed_antenna_comes_back_with_undo_and_the_focus_stays_on_the_row_actions(page, live_server, author,
                                                                                      hive_gateway):
    open_draft(page, live_server, author, hive_gateway)
    click_button(page, "Europe, LTE")
    assert focused_id(page) == "preset-europe-lte"  # not the top of the page

    remove = page.locator("#section-antennas fieldset.antenna-row").nth(1).get_by_role("button", name="Remove")
    saved(page, remove.click)
    expect(page.locator("#section-antennas fieldset.antenna-row")).to_have_count(1)
    expect(page.locator("#section-antennas .undo-note")).to_contain_text("Removed DIV with its values.")
    assert focused_id(page) == "undo-remove"

    saved(page, lambda: page.keyboard.press("Enter"))  # the focused Undo button
    expect(page.locator("#section-antennas legend")).to_have_text(["Antenna 1: MAIN", "Antenna 2: DIV"])
    assert stored(hive_gateway)["antennas"][1]["position_mm"] == [60, 10, 12]
    expect(page.locator("#section-antennas .undo-note")).to_have_count(0)
    expect(sep_001(page)).to_have_class(re.compile(r"\bsev-blocker\b"))

    click_button(page, "Add an antenna")
    assert focused_id(page) == "q-antennas-2-name"


def test_a_duplicated_antenna_lands_a_quarter_wave_away_inside_the_enclosure(page, live_server, author,
                                                                           hive_gateway):
    open_draft(page, live_server, author, hive_gateway)
    duplicate = page.locator("#section-antennas fieldset.antenna-row").first.get_by_role("button", name="Duplicate")
    saved(page, duplicate.click)
    assert focused_id(page) == "q-antennas-1-name"
    copy = stored(hive_gateway)["antennas"][1]
    # MAIN at x 15; a quarter wave at 791 MHz is 94.8 mm, rounded up to 95: x 110, inside the 120 mm box.
    assert copy["name"] == "MAIN-copy1" and copy["position_mm"] == [110, 10, 12] and copy["role"] == "receive"
    expect(page.locator("#checklist")).not_to_contain_text(re.compile(r"(?<![\d.])0 mm apart"))
    expect(page.locator("#placement svg desc")).to_contain_text("MAIN to MAIN-copy1 95 mm apart")


def test_an_opened_finding_stays_open_while_answers_save(page, live_server, author, hive_gateway):
    open_draft(page, live_server, author, hive_gateway)
    finding = sep_001(page)
    finding.locator("summary").click()
    expect(finding).to_have_attribute("open", "")
    type_answer(page, "deployment.required_dl_kbps", "900")  # the panel is replaced by the answer
    expect(sep_001(page)).to_have_attribute("open", "")
    choose(page, "antennas[1].polarization.words", "z")  # the finding changes, and stays open
    expect(sep_001(page)).to_have_attribute("open", "")


def test_the_saved_time_is_shown_in_the_readers_time_zone(browser, live_server, author, hive_gateway):
    from tests.browser.conftest import DESKTOP

    context = browser.new_context(viewport=DESKTOP, timezone_id="Pacific/Auckland", locale="en-NZ")
    try:
        page = context.new_page()
        open_draft(page, live_server, author, hive_gateway)
        type_answer(page, "deployment.required_dl_kbps", "900")
        note = page.locator("#section-deployment-saved time")
        expect(note).to_have_attribute("title", re.compile(r"^\d\d:\d\d:\d\d UTC$"))
        utc = note.get_attribute("title")[:8]
        expected = page.evaluate("(iso) => new Date(iso).toLocaleTimeString([], {hour: '2-digit', minute: '2-digit', "
                                 "second: '2-digit'})", note.get_attribute("datetime"))
        expect(note).to_have_text(expected)
        assert utc not in expected  # Auckland is 12 or 13 hours from UTC
    finally:
        context.close()


def test_a_notices_time_is_shown_with_the_readers_date_and_zone(browser, live_server, author, reviewer, hive_gateway):
    from tests.browser.conftest import DESKTOP

    notify(recipients=[reviewer], team=hive_gateway.team, kind=Notice.Kind.MENTION, actor=author,
           url="/", text="Hive gateway: @tobias have a look", event_key="mention:browser-test")
    context = browser.new_context(viewport=DESKTOP, timezone_id="Pacific/Auckland", locale="en-NZ")
    try:
        page = context.new_page()
        log_in(page, live_server, reviewer)
        page.goto(live_server.url + reverse("inbox"))
        moment = page.locator("table time").first
        expect(moment).to_have_attribute("title", re.compile(r"^\d{4}-\d\d-\d\d \d\d:\d\d UTC$"))
        # Auckland is UTC+12 or +13: the hour shown is the reader's, with the zone's short name beside it.
        expected = page.evaluate("""(iso) => { const m = new Date(iso), two = (n) => String(n).padStart(2, '0');
            return `${m.getFullYear()}-${two(m.getMonth() + 1)}-${two(m.getDate())} ${two(m.getHours())}:` +
                   `${two(m.getMinutes())}`; }""", moment.get_attribute("datetime"))
        expect(moment).to_contain_text(expected)
        assert moment.get_attribute("title")[:16] != expected
    finally:
        context.close()
