"""The draft page's placement editor (static/earshot/placement-edit.js on the drawing of
projectapp/figures/placement.py): the SVG carries a focusable, named marker per antenna and view, and the
scale and origin each view was drawn with, from which the script maps pointer positions to millimetres."""

import re
import xml.etree.ElementTree as ET

import pytest
from django.urls import reverse

from projectapp.designs.models import Revision
from projectapp.figures.placement import pair_severities_from_findings, placement_svg
from rules.design import parse_design
from rules.evaluate import evaluate
from tests.rules.design_builders import antenna, design

SVG = "{http://www.w3.org/2000/svg}"


def numbers(text: str) -> list[float]:
    return [float(value) for value in text.split()]


def drawing(document: dict, *, editable: bool) -> ET.Element:
    parsed = parse_design(document)
    return ET.fromstring(placement_svg(parsed, pair_severities=pair_severities_from_findings(evaluate(parsed).findings),
                                       frequency_mhz=parsed.lowest_mhz, editable=editable))


def draft_svg(client, product) -> ET.Element:
    page = client.get(reverse("draft_edit", args=[product.pk])).content.decode()
    return ET.fromstring(re.search(r"<svg[^>]*data-placement-editor.*?</svg>", page, re.S).group(0))


def test_each_antenna_has_a_focusable_named_marker_in_the_top_and_side_views(client, author, product):
    client.force_login(author)
    root = draft_svg(client, product)
    names = [item["name"] for item in Revision.objects.get(product=product, state="draft").document["antennas"]
             if "position_mm" in item]
    markers = root.findall(f".//{SVG}g[@data-part='marker']")
    assert sorted((marker.get("data-name"), marker.get("data-view")) for marker in markers) == sorted(
        (name, view) for name in names for view in ("top", "side"))
    for marker in markers:
        assert marker.get("tabindex") == "0" and marker.get("role") == "button"
        assert marker.get("aria-label").startswith(f"{marker.get('data-name')}, ")
        assert marker.get("aria-describedby") == "placement-keys"
    assert root.get("role") == "group"


def test_a_markers_centre_is_the_views_origin_plus_its_position_times_the_views_scale():
    # The contract's Cat 1 pair in a 150 x 95 x 30 mm enclosure (tests/rules/design_builders).
    root = drawing(design("cat-1", antennas=[antenna("MAIN", position=(20, 20, 10)),
                                             antenna("DIV", "receive", position=(75, 40, 22))]), editable=True)
    views = {view.get("data-view"): view for view in root.findall(f".//{SVG}g[@data-scale-pt-per-mm]")}
    assert set(views) == {"top", "side"}
    checked = 0
    for marker in root.findall(f".//{SVG}g[@data-part='marker']"):
        view = views[marker.get("data-view")]
        origin_x, origin_y = numbers(view.get("data-origin-pt"))
        scale = float(view.get("data-scale-pt-per-mm"))
        first, second = (int(axis) for axis in marker.get("data-axes").split())
        position = numbers(marker.get("data-position-mm"))
        target = marker.find(f"{SVG}circle")  # the pointer target, centred on the feed point
        assert float(target.get("cx")) == pytest.approx(origin_x + position[first] * scale, abs=1e-6)
        assert float(target.get("cy")) == pytest.approx(origin_y + position[second] * scale, abs=1e-6)
        # An internal antenna is kept inside the enclosure.
        assert numbers(marker.get("data-bounds-mm")) == [0, 0, 0, 150, 95, 30]
        checked += 1
    assert checked == 4


def test_the_drawing_for_the_pdf_and_submitted_pages_has_no_editor_marks():
    root = drawing(design("cat-1", antennas=[antenna("MAIN", position=(20, 20, 10))]), editable=False)
    assert root.get("role") == "img"
    assert not root.findall(f".//{SVG}g[@data-part]") and not root.findall(f".//{SVG}g[@tabindex]")


def test_the_script_is_the_apps_static_file_under_the_pages_nonce(client, author, product):
    client.force_login(author)
    response = client.get(reverse("draft_edit", args=[product.pk]))
    page = response.content.decode()
    tag = re.search(r'<script src="[^"]*earshot/placement-edit\.js" nonce="([^"]+)"', page)
    assert tag and tag.group(1) in response["Content-Security-Policy"]
    assert 'id="placement-keys"' in page
    assert not re.search(r"<[^>]+\son[a-z]+=", page)  # no inline handlers: the CSP would block them
