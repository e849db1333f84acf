"""Placing antennas on the drawing in a real browser (static/earshot/placement-edit.js): an antenna dragged
with the mouse and moved and turned with the keyboard, the questionnaire's fields following, the draft saved
through the section's ordinary save, and the checklist following.

Physics behind the steps: the design builders' bands are B3/B8/B20, judged at B20's 791 MHz (3GPP TS 36.101
Table 5.5-1); c = 299 792 458 m/s gives lambda = 379.0 mm, so the reactive near field reaches lambda/2pi =
60.3 mm (Wheeler 1959) and a quarter wave is 94.75 mm. Co-polarized feed points 110 mm apart are beyond a quarter
wave (no SEP-001 finding); 40 mm apart they are inside the near field (SEP-001).
"""

import json
import os
import re

import pytest
from django.urls import reverse

from projectapp.designs import services
from tests.browser.test_questionnaire_flow import answer, log_in, saved
from tests.rules.design_builders import antenna, design

try:
    from playwright.sync_api import expect
except ImportError:  # the same rule as for Chromium itself (conftest.py): skip locally, fail in CI
    if os.environ.get("CI"):
        raise
    pytest.skip("the playwright Python package is not installed: pip install playwright", allow_module_level=True)

pytestmark = pytest.mark.browser

# Client coordinates of a point given in mm in one of the drawing's views, from the scale and origin the server
# drew that view with (the view's own coordinates, mapped to the screen by the browser).
CLIENT_OF_MM = """([view, across, up]) => {
  const group = document.querySelector(`svg[data-placement-editor] [data-view="${view}"][data-scale-pt-per-mm]`);
  const [x0, y0] = group.dataset.originPt.split(' ').map(Number);
  const scale = Number(group.dataset.scalePtPerMm);
  const point = group.ownerSVGElement.createSVGPoint();
  point.x = x0 + across * scale;
  point.y = y0 + up * scale;
  const client = point.matrixTransform(group.getScreenCTM());
  return [client.x, client.y];
}"""


def checklist_ids(page) -> str:
    return page.locator("#checklist").inner_text()


def number(page, name: str) -> float:
    return float(answer(page, name).input_value())


@pytest.fixture
def spaced_product(team, author):
    product = services.product_create(team=team, name="Fence tracker", user=author)
    document = design("cat-1", antennas=[antenna("MAIN", position=(20, 20, 10)),
                                         antenna("DIV", "receive", position=(130, 20, 10))])
    services.design_import(product=product, text=json.dumps(document), source="fence-tracker.json", user=author)
    return product


def test_an_antenna_dragged_and_moved_and_turned_with_the_keyboard_keeps_fields_draft_and_checklist(
        page, live_server, author, spaced_product):
    log_in(page, live_server, author)
    page.goto(live_server.url + reverse("draft_edit", args=[spaced_product.pk]))
    expect(page.locator("#checklist")).to_be_visible()
    assert "SEP-001" not in checklist_ids(page)

    # Drag DIV on the top view from x 130 to x 60 (40 mm from MAIN): the field follows and SEP-001 appears.
    marker = page.locator('[data-part="marker"][data-view="top"][data-name="DIV"]')
    marker.scroll_into_view_if_needed()
    start = page.evaluate(CLIENT_OF_MM, ["top", 130, 20])
    end = page.evaluate(CLIENT_OF_MM, ["top", 60, 20])

    def drag():
        page.mouse.move(*start)
        page.mouse.down()
        page.mouse.move(*end, steps=8)
        page.mouse.up()

    saved(page, drag)
    assert number(page, "antennas[1].position_mm[0]") == pytest.approx(60, abs=0.5)
    assert number(page, "antennas[1].position_mm[1]") == pytest.approx(20, abs=0.5)
    assert "SEP-001" in checklist_ids(page)
    expect(marker).to_have_attribute("aria-label", re.compile(r"^DIV, .* at x (59|60)"))

    # Back out with the keyboard: Shift+ArrowRight moves 10 mm a press, the marker keeps the focus after each save.
    marker.focus()
    x_mm = number(page, "antennas[1].position_mm[0]")
    for _ in range(7):
        saved(page, lambda: page.keyboard.press("Shift+ArrowRight"))
        assert page.evaluate("document.activeElement.dataset.name") == "DIV"
    saved(page, lambda: page.keyboard.press("ArrowRight"))
    assert number(page, "antennas[1].position_mm[0]") == pytest.approx(x_mm + 71, abs=1e-6)
    assert "SEP-001" not in checklist_ids(page)

    # Shift+R turns DIV's axis 90 degrees in the top view's plane: along x becomes along y.
    saved(page, lambda: page.keyboard.press("Shift+R"))
    assert [number(page, f"antennas[1].polarization[{axis}]") for axis in range(3)] == [0, 1, 0]
    saved(page, lambda: page.keyboard.press("r"))  # 15 degrees more: cos 105 deg, sin 105 deg
    assert number(page, "antennas[1].polarization[0]") == pytest.approx(-0.2588, abs=1e-4)
    assert number(page, "antennas[1].polarization[1]") == pytest.approx(0.9659, abs=1e-4)

    # Arrow keys on the side view change the height, clamped to the enclosure's 30 mm.
    side = page.locator('[data-part="marker"][data-view="side"][data-name="DIV"]')
    side.focus()
    for _ in range(2):
        saved(page, lambda: page.keyboard.press("Shift+ArrowUp"))
    assert number(page, "antennas[1].position_mm[2]") == 30
    page.keyboard.press("Shift+ArrowUp")  # at the lid already: nothing changes, so nothing is saved
    assert number(page, "antennas[1].position_mm[2]") == 30

    # Dragging MAIN's turn handle (the dot at its axis's end) to straight above its feed turns it along y.
    handle = page.locator('[data-part="marker"][data-view="top"][data-name="MAIN"] [data-part="turn"]')
    handle.scroll_into_view_if_needed()
    box = handle.bounding_box()
    above = page.evaluate(CLIENT_OF_MM, ["top", 20, 45])

    def turn():
        page.mouse.move(box["x"] + box["width"] / 2, box["y"] + box["height"] / 2)
        page.mouse.down()
        page.mouse.move(*above, steps=6)
        page.mouse.up()

    saved(page, turn)
    assert [number(page, f"antennas[0].polarization[{axis}]") for axis in range(3)] == [0, 1, 0]

    # The draft kept it all.
    page.reload()
    assert number(page, "antennas[1].position_mm[0]") == pytest.approx(x_mm + 71, abs=1e-6)
    assert number(page, "antennas[1].position_mm[2]") == 30
    assert number(page, "antennas[1].polarization[1]") == pytest.approx(0.9659, abs=1e-4)
    assert number(page, "antennas[0].polarization[1]") == 1
    assert "SEP-001" not in checklist_ids(page)
