"""A product manager's path through the app in a real browser: log in, create a product, answer the
questionnaire while htmx saves each answer and refreshes the checklist and the placement drawing in
place, submit for review. Plus what the server-side tests can't see: a bad value staying on screen after
the swap, the page without JavaScript, and a reviewer landing on the read-only page.

Physics behind the spacing steps (the checklist is judged at the lowest band edge in scope):
B28 uplink starts at 703 MHz (3GPP TS 36.101 Table 5.5-1, the lowest edge of the "Europe, LTE" preset);
c = 299 792 458 m/s gives lambda = 426.4 mm there, so the reactive near field reaches
lambda/2pi = 67.9 mm (Wheeler 1959) and a quarter wave is lambda/4 = 106.6 mm. Co-polarized feed points
55 mm apart are inside the near field (blocker), 75 mm apart are between the two (warning), 150 mm apart
are beyond a quarter wave (no SEP-001 finding).
"""

import os
import re
from collections import Counter

import pytest
from django.urls import reverse

from projectapp import palette
from projectapp.designs.models import Product
from tests.web.conftest import PASSWORD

try:
    from playwright.sync_api import Page, expect
except ImportError:  # the same rule as for Chromium itself (conftest.py): skip locally, fail in CI
    if os.environ.get("CI"):
        raise
    pytest.skip("the playwright Python package is not installed: pip install playwright", allow_module_level=True)

pytestmark = pytest.mark.browser

# Pair-line colours of the placement drawing (projectapp/figures/placement.py: SEVERITY_COLOURS and
# NO_FINDING_COLOUR). The legend draws one sample line of each, pairs of antennas add their own.
BLOCKER_RED = palette.BLOCKER
WARNING_AMBER = palette.WARNING
NOTE_BLUE = palette.NOTE
NO_FINDING_GREEN = palette.OK
LEGEND_SAMPLES = Counter([BLOCKER_RED, WARNING_AMBER, NOTE_BLUE, NO_FINDING_GREEN])
PAIR_LINE_WIDTH = "1.8"

EUROPE_LTE = ["B1", "B3", "B7", "B8", "B20", "B28"]  # projectapp/designs/band_presets.toml [europe-lte]
RATED = "700-960, 1700-2700"  # covers every band of the preset, B28's 703 MHz included


# -- helpers -----------------------------------------------------------------------------------------------

def log_in(page: Page, live_server, user) -> None:
    page.goto(live_server.url + reverse("product_list"))
    expect(page.get_by_role("heading", name="Log in")).to_be_visible()
    page.get_by_label("User name").fill(user.username)
    page.get_by_label("Password").fill(PASSWORD)
    page.get_by_role("button", name="Log in").click()
    expect(page.get_by_role("heading", name="Products")).to_be_visible()


def answer(page: Page, name: str):
    """The questionnaire input named by its document path, e.g. `antennas[1].position_mm[0]`.

    A locator is a query, not an element, so it finds the fresh input after htmx swaps the form."""
    return page.locator(f'[name="{name}"]')


# Every htmx save swaps the section's form (outerHTML) and, out of band, the checklist and band table; its
# answer's HX-Trigger has #figures-loader fetch the drawing, charts and coverage at once (that request is
# under way before the answer is swapped in). Before a change the current elements get an expando property;
# the server's replacements don't have it, so the save has landed once the panel no longer carries it and
# htmx has no request in flight and has finished swapping and settling.
MARK_STALE = """() => {
  for (const element of document.querySelectorAll('form.qsection, #panel-checklist')) element.earshotStale = true;
}"""
SAVED = """() => {
  const panel = document.getElementById('panel-checklist');
  return panel !== null && !panel.earshotStale
      && document.querySelector('.htmx-request, .htmx-swapping, .htmx-settling') === null;
}"""


def saved(page: Page, change) -> None:
    """Make `change` (an action that changes an answer) and wait until htmx has swapped in the answer."""
    page.evaluate(MARK_STALE)
    change()
    page.wait_for_function(SAVED)


def type_answer(page: Page, name: str, value: str) -> None:
    """Type into a field and leave it with Tab, as a person does; the `change` event saves the section.
    The value must differ from the field's current one: an unchanged field fires no `change`."""
    field = answer(page, name)

    def change():
        field.fill(value)
        field.press("Tab")

    saved(page, change)


def choose(page: Page, name: str, value: str) -> None:
    saved(page, lambda: answer(page, name).select_option(value))


def click_button(page: Page, name: str) -> None:
    saved(page, lambda: page.get_by_role("button", name=name, exact=True).click())


def describe_antenna(page: Page, index: int, *, name: str, role: str, position: tuple[int, int, int],
                     polarization: str) -> None:
    """`polarization` in words, as the form offers them: "x" along the length, "y" along the width, "z" up."""
    prefix = f"antennas[{index}]."
    type_answer(page, prefix + "name", name)
    choose(page, prefix + "role", role)
    for axis, value in enumerate(position):
        type_answer(page, f"{prefix}position_mm[{axis}]", str(value))
    choose(page, prefix + "polarization.words", polarization)
    type_answer(page, prefix + "ranges_mhz", RATED)


def checklist_present(page: Page) -> None:
    """The checklist shows its counts and at least the notes that need no answer (certification steps)."""
    expect(page.locator("#checklist .counts")).to_be_visible()
    expect(page.locator("#checklist")).to_contain_text("CRT-002")


def count(page: Page, severity: str) -> int:
    """The number in the checklist's 'N blockers' / 'N warnings' / 'N notes' badge."""
    return int(page.locator(f"#checklist .count-{severity}").inner_text().split()[0])


def sep_001(page: Page):
    return page.locator("#checklist details.finding", has_text="SEP-001")


# Colours as the browser paints them (computed style), so a stylesheet or a content security policy that
# dropped the drawing's styles would show up here, written as #rrggbb.
PAINTED = """(svg) => {
  const hex = (value) => {
    const channels = (value || '').match(/\\d+/g);
    return channels && channels.length >= 3
      ? '#' + channels.slice(0, 3).map((n) => Number(n).toString(16).padStart(2, '0')).join('') : null;
  };
  return {
    strokes: [...svg.querySelectorAll('path, line')]
      .map((element) => getComputedStyle(element))
      .filter((style) => style.strokeWidth === '""" + PAIR_LINE_WIDTH + """px')
      .map((style) => hex(style.stroke)),
    labels: Object.fromEntries([...svg.querySelectorAll('text')]
      .map((text) => [text.textContent.trim(), hex(getComputedStyle(text).fill)])),
  };
}"""


def pair_line_colours(page: Page) -> list[str]:
    """Stroke colours of the drawing's pair lines: every severity-coloured line of a pair line's width,
    minus the legend's one sample of each colour."""
    strokes = page.locator("#placement svg").evaluate(PAINTED)["strokes"]
    pairs = Counter(colour for colour in strokes if colour in LEGEND_SAMPLES) - LEGEND_SAMPLES
    return sorted(pairs.elements())


def pair_label_colour(page: Page, label: str) -> str | None:
    """Fill colour of the drawing's distance label (e.g. '55 mm'), drawn in its pair line's colour."""
    return page.locator("#placement svg").evaluate(PAINTED)["labels"].get(label)


# -- the whole flow ----------------------------------------------------------------------------------------

def test_an_author_fills_the_questionnaire_and_the_checklist_follows_each_answer(page, live_server, author):
    log_in(page, live_server, author)

    page.get_by_role("link", name="New product").click()
    page.get_by_label("Name", exact=True).fill("Gate opener")
    page.get_by_label("Description").fill("Cat 1 gate controller with a main and a diversity antenna.")
    page.get_by_role("button", name="Create with an empty draft").click()
    expect(page.get_by_role("heading", name="Draft design revision 1")).to_be_visible()
    expect(page.get_by_role("status")).to_contain_text("Gate opener created with an empty draft.")
    product = Product.objects.get(name="Gate opener")
    draft_url = live_server.url + reverse("draft_edit", args=[product.pk])
    assert page.url == draft_url

    # Set once on this page: a full page load would lose it, htmx swaps keep it.
    page.evaluate("() => { window.earshotLoadedOnce = 'yes'; }")
    # A new product opens on its checklist with what is still to answer, not on a parser error.
    checklist_present(page)
    expect(page.locator("#checklist-todo")).to_contain_text("UE category: not answered yet")
    expect(page.locator("#checklist-todo")).to_contain_text("Bands: not answered yet")
    expect(page.locator("#checklist .todo-problems")).to_have_count(0)

    def still_the_same_page():
        assert page.url == draft_url
        assert page.evaluate("() => window.earshotLoadedOnce") == "yes"

    # Product and modem: category, then bands from a region preset.
    choose(page, "modem.category", "cat-1")
    expect(answer(page, "modem.category")).to_have_value("cat-1")
    checklist_present(page)
    # TS 36.306: Cat 1 is specified with two receive antennas; judged before any band is chosen.
    expect(page.locator("#checklist")).to_contain_text("LTE Cat 1 needs 2 receive antenna(s); 0 fitted")
    click_button(page, "Europe, LTE")
    for band in EUROPE_LTE:
        expect(page.locator(f'input[name="modem.bands"][value="{band}"]')).to_be_checked()
    expect(page.locator('input[name="modem.bands"][value="B2"]')).not_to_be_checked()
    checklist_present(page)
    expect(page.locator("#checklist-todo")).to_have_count(0)  # complete: nothing left to answer

    # The enclosure answered one number at a time: the checklist stays, the size is a to-do meanwhile.
    type_answer(page, "enclosure.size_mm[0]", "200")
    checklist_present(page)
    expect(page.locator("#checklist-todo")).to_contain_text("Enclosure outer size: width and height not answered yet")
    type_answer(page, "enclosure.size_mm[1]", "90")
    type_answer(page, "enclosure.size_mm[2]", "35")
    expect(page.locator("#checklist-todo")).to_have_count(0)

    # Two antennas, co-polarized along x, feed points 55 mm apart (inside lambda/2pi = 67.9 mm at 703 MHz).
    click_button(page, "Add an antenna")
    checklist_present(page)
    click_button(page, "Add an antenna")
    expect(page.locator("#section-antennas fieldset.antenna-row")).to_have_count(2)
    describe_antenna(page, 0, name="MAIN", role="main", position=(20, 30, 10), polarization="x")
    checklist_present(page)
    describe_antenna(page, 1, name="DIV", role="receive", position=(75, 30, 10), polarization="x")
    expect(page.locator("#section-antennas legend")).to_have_text(["Antenna 1: MAIN", "Antenna 2: DIV"])
    expect(answer(page, "antennas[1].ranges_mhz")).to_have_value(RATED)
    still_the_same_page()

    expect(page.locator("#checklist")).to_contain_text("judged at 703 MHz")
    assert count(page, "blocker") >= 1
    expect(sep_001(page)).to_have_class(re.compile(r"\bsev-blocker\b"))
    expect(sep_001(page)).to_contain_text("MAIN and DIV are 55 mm apart at 703 MHz")
    expect(page.locator("#placement svg")).to_be_visible()
    expect(page.locator("#placement svg desc")).to_contain_text("MAIN to DIV 55 mm apart, blocker")
    assert pair_line_colours(page) == [BLOCKER_RED]
    assert pair_label_colour(page, "55 mm") == BLOCKER_RED
    blockers_when_close = count(page, "blocker")

    # 75 mm: outside the near field, still inside a quarter wave (106.6 mm): a warning.
    type_answer(page, "antennas[1].position_mm[0]", "95")
    still_the_same_page()
    assert count(page, "blocker") == blockers_when_close - 1
    assert count(page, "warning") >= 1
    expect(sep_001(page)).to_have_class(re.compile(r"\bsev-warning\b"))
    expect(sep_001(page)).to_contain_text("MAIN and DIV are 75 mm apart at 703 MHz")
    expect(page.locator("#placement svg desc")).to_contain_text("MAIN to DIV 75 mm apart, warning")
    assert pair_line_colours(page) == [WARNING_AMBER]
    assert pair_label_colour(page, "75 mm") == WARNING_AMBER

    # 150 mm: beyond a quarter wave, so no spacing finding at all.
    type_answer(page, "antennas[1].position_mm[0]", "170")
    still_the_same_page()
    expect(sep_001(page)).to_have_count(0)
    expect(page.locator("#placement svg desc")).to_contain_text("MAIN to DIV 150 mm apart, no finding")
    assert pair_line_colours(page) == [NO_FINDING_GREEN]
    assert pair_label_colour(page, "150 mm") == NO_FINDING_GREEN
    blockers, warnings = count(page, "blocker"), count(page, "warning")

    page.get_by_role("button", name="Submit for review").click()
    expect(page).to_have_url(live_server.url + reverse("revision_detail", args=[product.pk, 1]))
    expect(page.get_by_role("heading", name="Design revision 1")).to_contain_text("In review")
    expect(page.get_by_role("status")).to_contain_text("Design revision 1 submitted for review and frozen.")
    expect(page.locator(".pagehead")).to_contain_text("· frozen")
    # The frozen checklist: no longer live, the same counts as the last draft state, no questionnaire.
    expect(page.locator("#checklist-title")).to_have_text("Checklist")
    assert (count(page, "blocker"), count(page, "warning")) == (blockers, warnings)
    expect(sep_001(page)).to_have_count(0)
    expect(page.locator("form.qsection")).to_have_count(0)
    expect(page.get_by_role("link", name="Edit the draft")).to_have_count(0)
    expect(page.locator("#placement svg")).to_be_visible()


# -- what only a browser shows --------------------------------------------------------------------------------

def test_a_typo_is_shown_with_the_fields_label_and_nothing_else_is_hidden(page, live_server, author, hive_gateway):
    log_in(page, live_server, author)
    page.goto(live_server.url + reverse("draft_edit", args=[hive_gateway.pk]))
    distance = page.get_by_label("Closest distance to people")
    expect(distance).to_have_value("150")

    type_answer(page, "deployment.body_distance_mm", "far")

    question = page.locator("#section-deployment .question", has=answer(page, "deployment.body_distance_mm"))
    expect(question.locator(".field-error")).to_have_text('Closest distance to people: "far" is not a number')
    expect(distance).to_have_value("far")
    # In the checklist's to-do, with a link to the field; nothing else is hidden: the spacing blocker, the
    # drawing and the band table stay, and only the checks that read the distance wait (the RF exposure notes,
    # and the coverage rules, which wait for a complete design).
    to_fix = page.locator("#checklist .todo-problems a")
    expect(to_fix).to_have_text('Closest distance to people: "far" is not a number')
    expect(to_fix).to_have_attribute("href", "#q-deployment-body-distance-mm")
    expect(page.locator("#checklist .todo-waiting")).to_have_text(
        "Closest distance to people: 4 checks (coverage, rf exposure)")
    expect(sep_001(page)).to_have_class(re.compile(r"\bsev-blocker\b"))
    expect(page.locator("#placement svg desc")).to_contain_text("MAIN to DIV 45 mm apart, blocker")
    expect(page.locator("#bands")).to_contain_text("B20")
    # It was stored as typed, not dropped: a fresh load shows it again.
    page.reload()
    expect(page.get_by_label("Closest distance to people")).to_have_value("far")


def test_the_questionnaire_saves_and_rechecks_without_javascript(page_without_js, live_server, author,
                                                                 hive_gateway):
    page = page_without_js
    log_in(page, live_server, author)
    page.goto(live_server.url + reverse("draft_edit", args=[hive_gateway.pk]))
    expect(page.locator("#checklist")).not_to_contain_text("ENC-001")

    page.get_by_label("Enclosure material").select_option("metal")
    page.get_by_role("button", name="Save enclosure and ground plane").click()

    # A plain form post: the server redirects back to the section and the whole page is rendered again.
    expect(page).to_have_url(re.compile(r"/draft/#section-enclosure$"))
    expect(page.get_by_role("status")).to_contain_text("Enclosure and ground plane saved.")
    expect(page.get_by_label("Enclosure material")).to_have_value("metal")
    expect(page.locator("#checklist")).to_contain_text("ENC-001")


def test_a_reviewer_opening_the_draft_lands_on_the_read_only_revision(page, live_server, reviewer,
                                                                      hive_gateway):
    log_in(page, live_server, reviewer)
    page.goto(live_server.url + reverse("draft_edit", args=[hive_gateway.pk]))

    expect(page).to_have_url(live_server.url + reverse("revision_detail", args=[hive_gateway.pk, 1]))
    expect(page.get_by_role("heading", name="Design revision 1")).to_contain_text("Draft")
    expect(page.locator("#checklist")).to_contain_text("SEP-001")
    expect(page.locator("form.qsection")).to_have_count(0)
    # No questionnaire inputs: the only ones are the measurement uploads (a reviewer keeps measured files with
    # the draft) and the coverage panel's what-if assumptions (a GET form that changes nothing).
    inputs = page.locator("main").locator("input:not([type=hidden]), select, textarea")
    expect(inputs.locator("xpath=self::*[not(ancestor::*[@id='section-measurements' or @id='coverage'])]")
           ).to_have_count(0)
    expect(page.locator("#section-measurements form.upload")).to_have_count(2)
    expect(page.get_by_role("link", name="Edit the draft")).to_have_count(0)
    expect(page.get_by_role("button", name="Submit for review")).to_have_count(0)


@pytest.fixture
def slow_saves(monkeypatch):
    """Every questionnaire save takes at least 0.6 s on the server, as on a busy machine: typing goes on while
    the answer is on its way (the live server answers from its own thread, so the sleep holds only it)."""
    import time

    from projectapp.designs import views

    original = views.checklist_for

    def slow(revision):
        time.sleep(0.6)
        return original(revision)

    monkeypatch.setattr(views, "checklist_for", slow)


# Counts htmx requests sent and answered. A queued request is sent in the same task that ends the one before
# it, so "as many answered as sent" seen between tasks means nothing is in flight and nothing is queued.
COUNT_REQUESTS = """() => {
  window.earshotRequests = {sent: 0, answered: 0};
  document.body.addEventListener('htmx:beforeRequest', () => { window.earshotRequests.sent += 1; });
  document.body.addEventListener('htmx:afterRequest', () => { window.earshotRequests.answered += 1; });
}"""
ALL_ANSWERED = """() => window.earshotRequests.sent > 0
    && window.earshotRequests.sent === window.earshotRequests.answered"""


def test_typing_on_while_a_save_comes_back_keeps_every_keystroke(page, live_server, author, hive_gateway,
                                                                  slow_saves):
    log_in(page, live_server, author)
    page.goto(live_server.url + reverse("draft_edit", args=[hive_gateway.pk]))
    page.evaluate(COUNT_REQUESTS)
    downlink = answer(page, "deployment.required_dl_kbps")
    downlink.click()
    page.keyboard.press("Control+A")
    # 150 ms a key, Tab to the next field (which selects its text, so typing replaces it), as a person types.
    for text in ("100", "20", "300"):
        page.keyboard.type(text, delay=150)
        page.keyboard.press("Tab")
    expect(page.locator("#q-deployment-body-distance-mm")).not_to_be_focused()
    assert page.evaluate("() => document.activeElement.name") not in (
        "deployment.required_dl_kbps", "deployment.required_ul_kbps", "deployment.body_distance_mm")
    page.wait_for_function(ALL_ANSWERED, timeout=15_000)
    typed = {"deployment.required_dl_kbps": "100", "deployment.required_ul_kbps": "20",
             "deployment.body_distance_mm": "300"}
    for name, value in typed.items():
        expect(answer(page, name)).to_have_value(value)
    stored = Product.objects.get(pk=hive_gateway.pk).draft.document["deployment"]
    assert (stored["required_dl_kbps"], stored["required_ul_kbps"], stored["body_distance_mm"]) == (100, 20, 300)
    page.reload()
    for name, value in typed.items():
        expect(answer(page, name)).to_have_value(value)


def test_a_stale_page_shows_the_other_change_and_keeps_what_was_typed(browser, page, live_server, author,
                                                                       hive_gateway, team):
    from tests.browser.conftest import DESKTOP
    from tests.web.conftest import make_user

    other_author = make_user("tobias", team, "author")
    log_in(page, live_server, author)
    draft_url = live_server.url + reverse("draft_edit", args=[hive_gateway.pk])
    page.goto(draft_url)

    other_context = browser.new_context(viewport=DESKTOP)
    try:
        other = other_context.new_page()
        log_in(other, live_server, other_author)
        other.goto(draft_url)
        click_button(other, "Add an antenna")
        expect(other.locator("#section-antennas fieldset.antenna-row")).to_have_count(3)
    finally:
        other_context.close()

    # My page still shows two antennas; I move DIV and leave the field.
    field = answer(page, "antennas[1].position_mm[0]")
    field.fill("99")
    field.press("Tab")
    conflict = page.locator("#section-antennas-conflict [role=alert]")
    expect(conflict).to_contain_text("Conflict. Antennas changed after you opened this page")
    expect(conflict).to_contain_text("tobias")
    expect(conflict).to_contain_text('antennas[2]: — → {"name": "ANT1"')
    expect(field).to_have_value("99")
    stored = Product.objects.get(pk=hive_gateway.pk).draft.document["antennas"]
    assert [antenna["name"] for antenna in stored] == ["MAIN", "DIV", "ANT1"] and stored[1]["position_mm"][0] == 60

    page.get_by_role("link", name="load theirs").click()
    expect(page.locator("#section-antennas fieldset.antenna-row")).to_have_count(3)
    expect(page.locator("#section-antennas-conflict [role=alert]")).to_have_count(0)
