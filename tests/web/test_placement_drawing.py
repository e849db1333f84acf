"""The placement drawing (projectapp/figures/placement.py): what the SVG and the PDF show, checked against
rules.physics and the rules' own findings rather than against pictures."""

import dataclasses
import math
import re
import xml.etree.ElementTree as ET

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from reportlab.graphics import renderPDF
from reportlab.lib.pagesizes import A4
from reportlab.platypus import SimpleDocTemplate

from projectapp import palette
from projectapp.figures import placement
from projectapp.figures.placement import pair_severities_from_findings, placement_drawing, placement_svg
from rules import physics
from rules.design import MAX_ANTENNAS, SMALLEST_SIZE_MM, UNIT_LIMITS, parse_design
from rules.evaluate import evaluate
from tests.rules.design_builders import antenna, design

SVG = "{http://www.w3.org/2000/svg}"
# TS 36.101 Table 5.5-1: B20 DL starts at 791 MHz, the lowest edge of B3/B8/B20.
# c = 299 792 458 m/s: lambda = 379.004 mm; lambda/2pi = 60.320 mm (Wheeler 1959); lambda/4 = 94.751 mm.
LOWEST_MHZ = 791.0
NEAR_FIELD_MM = 60.320
QUARTER_WAVE_MM = 94.751
BLOCKER, WARNING, NOTE, NO_FINDING = palette.BLOCKER, palette.WARNING, palette.NOTE, palette.OK  # the app's palette


def unplaced(name: str, role: str = "receive") -> dict:
    document = antenna(name, role)
    del document["position_mm"]
    return document


def contract_pair(second_position=(75, 20, 10), second_polarization=(1, 0, 0), **extra) -> dict:
    """The contract's Cat 1 pair on B3/B8/B20: MAIN at [20, 20, 10] and DIV beside it, both along x."""
    return design("cat-1", antennas=[antenna("MAIN", position=(20, 20, 10)),
                                     antenna("DIV", "receive", position=second_position,
                                             polarization=second_polarization)], **extra)


def render(document: dict, width_pt: float = 640, id_prefix: str = "placement"):
    """Parses and evaluates the document, colours pairs by its findings; returns (svg root, text, layout)."""
    parsed = parse_design(document)
    severities = pair_severities_from_findings(evaluate(parsed).findings)
    options = {"pair_severities": severities, "frequency_mhz": parsed.lowest_mhz, "width_pt": width_pt}
    layout = placement_drawing(parsed, **options).layout
    text = placement_svg(parsed, **options, id_prefix=id_prefix)
    return ET.fromstring(text), text, layout


def style(element: ET.Element) -> dict[str, str]:
    return {key.strip(): value.strip() for key, _, value in
            (item.partition(":") for item in element.get("style", "").split(";") if ":" in item)}


def texts(root: ET.Element) -> list[str]:
    return [element.text or "" for element in root.iter(f"{SVG}text")]


def lines_between(root: ET.Element, start: tuple[float, float], end: tuple[float, float]) -> list[ET.Element]:
    """SVG paths drawn as a straight line from start to end (either way round), in drawing points."""
    found = []
    for path in root.iter(f"{SVG}path"):
        numbers = [float(value) for value in re.findall(r"-?\d+(?:\.\d+)?(?:e-?\d+)?", path.get("d", ""))]
        if len(numbers) != 4:
            continue
        points = [(numbers[0], numbers[1]), (numbers[2], numbers[3])]
        if {tuple(round(v, 1) for v in p) for p in points} == {tuple(round(v, 1) for v in p) for p in (start, end)}:
            found.append(path)
    return found


def circles(root: ET.Element) -> list[tuple[float, float, float, dict[str, str]]]:
    return [(float(c.get("cx")), float(c.get("cy")), float(c.get("r")), style(c)) for c in root.iter(f"{SVG}circle")]


def test_the_svg_is_an_inline_image_labelled_by_its_title_and_description():
    root, text, layout = render(contract_pair(), id_prefix="contract")
    assert text.startswith("<svg") and "<?xml" not in text and "DOCTYPE" not in text
    assert root.tag == f"{SVG}svg"
    assert root.get("role") == "img"
    assert root.get("aria-labelledby") == "contract-title contract-desc"
    title = root.find(f"{SVG}title")
    desc = root.find(f"{SVG}desc")
    assert title.get("id") == "contract-title" and title.text == "Antenna placement of Test widget"
    assert desc.get("id") == "contract-desc"
    assert "MAIN (main, internal) at x 20, y 20, z 10 mm, polarized along x" in desc.text
    assert "DIV (receive, internal) at x 75, y 20, z 10 mm" in desc.text
    assert "MAIN to DIV 55 mm apart, blocker" in desc.text
    assert "λ/2π = 60.3 mm" in desc.text and "λ/4 = 94.8 mm" in desc.text and "791 MHz" in desc.text
    # Scales with its container: no fixed height, the natural width only as a maximum.
    assert root.get("height") is None and root.get("width") == "100%"
    width, height = (float(value) for value in root.get("viewBox").split()[2:])
    assert width == 640 and height == math.ceil(height) > 300
    assert "max-width: 640px" in root.get("style")


def test_it_draws_the_near_field_and_quarter_wave_circles_at_the_layout_scale():
    root, _, layout = render(contract_pair())
    assert layout.near_field_radius_mm == pytest.approx(NEAR_FIELD_MM, abs=1e-3)
    assert layout.quarter_wave_mm == pytest.approx(QUARTER_WAVE_MM, abs=1e-3)
    scale = layout.scale_pt_per_mm
    centres = {layout.top_view_pt(20, 20), layout.top_view_pt(75, 20)}
    near = [c for c in circles(root) if c[2] == pytest.approx(physics.near_field_radius_mm(LOWEST_MHZ) * scale)]
    quarter = [c for c in circles(root) if c[2] == pytest.approx(physics.quarter_wave_mm(LOWEST_MHZ) * scale)]
    assert len(near) == len(quarter) == 2
    for found in (near, quarter):
        assert sorted((round(x, 3), round(y, 3)) for x, y, _, _ in found) == sorted(
            (round(x, 3), round(y, 3)) for x, y in centres)
    # Told apart by their dash patterns: dashed near field, dotted quarter wave.
    assert near[0][3]["stroke-dasharray"] != quarter[0][3]["stroke-dasharray"]
    assert "λ/2π = 60.3 mm at 791 MHz" in texts(root)
    assert "λ/4 = 94.8 mm at 791 MHz" in texts(root)


def test_a_copolarized_pair_55_mm_apart_at_791_mhz_is_joined_in_the_blocker_colour():
    # 55 mm < lambda/2pi = 60.3 mm, both along x: blocker by the severity policy (design.md).
    root, _, layout = render(contract_pair())
    assert [(pair.first, pair.second, pair.severity) for pair in layout.pairs] == [("MAIN", "DIV", "blocker")]
    assert layout.pairs[0].distance_mm == pytest.approx(55.0)
    [line] = lines_between(root, layout.top_view_pt(20, 20), layout.top_view_pt(75, 20))
    assert style(line)["stroke"] == BLOCKER
    assert "55 mm" in texts(root)


def test_a_crosspolarized_pair_75_mm_apart_is_joined_in_the_note_colour():
    # 60.3 mm < 75 mm < lambda/4 = 94.8 mm with x against y (90 degrees): note by the severity policy.
    root, _, layout = render(contract_pair(second_position=(95, 20, 10), second_polarization=(0, 1, 0)))
    [line] = lines_between(root, layout.top_view_pt(20, 20), layout.top_view_pt(95, 20))
    assert style(line)["stroke"] == NOTE
    assert "75 mm" in texts(root)


def test_a_pair_without_a_finding_is_joined_in_the_ok_colour():
    # 110 mm is beyond lambda/4 = 94.8 mm: SEP-001 says nothing about the pair.
    root, _, layout = render(contract_pair(second_position=(130, 20, 10)))
    assert layout.pairs[0].severity is None
    [line] = lines_between(root, layout.top_view_pt(20, 20), layout.top_view_pt(130, 20))
    assert style(line)["stroke"] == NO_FINDING
    assert {"blocker", "warning", "note", "no finding"} <= set(texts(root))


def test_pair_severities_keep_the_worst_separation_finding_per_pair_from_findings_or_their_dicts():
    parsed = parse_design(design("cat-1", antennas=[
        antenna("MAIN", position=(20, 20, 10)),
        antenna("DIV", "receive", position=(75, 20, 10)),  # 55 mm, co-polarized: blocker
        # 75.7 mm from MAIN, cross: note; 99.2 mm from DIV, beyond lambda/4; on the enclosure's wall (y = 95)
        antenna("AUX", "receive", position=(10, 95, 10), polarization=(0, 1, 0)),
        unplaced("SPARE"),  # SEP-002 names it alone: no pair
    ]))
    findings = evaluate(parsed).findings
    expected = {frozenset({"MAIN", "DIV"}): "blocker", frozenset({"MAIN", "AUX"}): "note"}
    assert {f.id for f in findings if f.topic == "separation"} == {"SEP-001", "SEP-002"}
    assert pair_severities_from_findings(findings) == expected
    assert pair_severities_from_findings([finding.as_dict() for finding in findings]) == expected
    blocker = next(f for f in findings if f.subjects == ("MAIN", "DIV"))
    milder = dataclasses.replace(blocker, severity="warning", subjects=("DIV", "MAIN"))
    assert pair_severities_from_findings([milder, blocker])[frozenset({"MAIN", "DIV"})] == "blocker"
    assert pair_severities_from_findings([milder]) == {frozenset({"MAIN", "DIV"}): "warning"}


def test_the_side_view_appears_only_when_the_antennas_sit_at_different_heights():
    flat_root, _, flat = render(contract_pair())
    assert not flat.has_side_view
    assert not any(text.startswith("Side view") for text in texts(flat_root))

    root, _, layout = render(contract_pair(second_position=(75, 20, 25)))
    assert layout.has_side_view
    assert any(text.startswith("Side view") for text in texts(root))
    assert "enclosure height 30 mm" in texts(root)
    # The side view keeps the top view's scale and x positions.
    assert layout.side_view_pt(20, 10)[0] == pytest.approx(layout.top_view_pt(20, 20)[0])
    assert layout.side_view_pt(75, 25)[1] - layout.side_view_pt(75, 10)[1] == pytest.approx(
        15 * layout.scale_pt_per_mm)
    assert float(root.get("viewBox").split()[3]) > float(flat_root.get("viewBox").split()[3])


def test_a_design_without_antennas_renders_an_empty_layout():
    root, _, layout = render(design(antennas=[]))
    assert layout.placed == () and layout.pairs == ()
    assert "No antennas in this design" in texts(root)
    assert "ground plane 130 × 80 mm" in texts(root)
    assert "The design has no antennas." in root.find(f"{SVG}desc").text


def test_antennas_without_positions_are_listed_as_not_placed():
    root, _, layout = render(design("cat-1", antennas=[antenna("MAIN", position=(20, 20, 10)), unplaced("ANT3")]))
    assert layout.placed == ("MAIN",) and layout.unplaced == ("ANT3",)
    assert any(text.startswith("not placed: ANT3") for text in texts(root))
    assert "ANT3 (receive, internal) is not placed" in root.find(f"{SVG}desc").text

    root, _, layout = render(design("cat-1", antennas=[unplaced("A", "main"), unplaced("B")], enclosure=None))
    assert "No antenna has a position yet" in texts(root)
    assert any(text.startswith("not placed: A, B") for text in texts(root))


def test_without_an_enclosure_size_a_box_is_fitted_and_labelled():
    root, _, layout = render(contract_pair(enclosure=None))
    assert not layout.enclosure_given
    assert "enclosure size not given" in texts(root)
    assert "The enclosure size is not given." in root.find(f"{SVG}desc").text


def test_polarization_out_of_the_view_is_a_ring_around_the_marker_and_in_the_view_an_arrow():
    root, _, layout = render(contract_pair(second_position=(130, 20, 10), second_polarization=(0, 0, 1)))
    rings = [(x, y) for x, y, r, _ in circles(root) if r == placement.OUT_OF_PLANE_RING_PT]
    div = layout.top_view_pt(130, 20)
    main = layout.top_view_pt(20, 20)
    assert any(math.dist(ring, div) < 0.01 for ring in rings)
    assert not any(math.dist(ring, main) < 0.01 for ring in rings)
    # MAIN lies along x: a double-ended arrow, its two heads at the same height either side of the feed.
    heads = [polygon for polygon in root.iter(f"{SVG}polygon") if len(polygon.get("points").split(",")) == 3]
    tips = [tuple(float(v) for v in polygon.get("points").split(",")[0].split()) for polygon in heads]
    assert any(math.dist(tip, (main[0] + placement.ARROW_HALF_PT, main[1])) < 0.01 for tip in tips)
    assert any(math.dist(tip, (main[0] - placement.ARROW_HALF_PT, main[1])) < 0.01 for tip in tips)


def test_the_scale_bar_is_a_round_length_near_a_quarter_of_the_width():
    root, _, layout = render(contract_pair())
    bar_mm = layout.scale_bar_mm
    mantissa = bar_mm / 10 ** math.floor(math.log10(bar_mm))
    assert round(mantissa, 6) in (1, 2, 5)
    assert 0.25 * 640 / 1.6 <= bar_mm * layout.scale_pt_per_mm <= 0.25 * 640 * 1.6
    assert f"{bar_mm:g} mm" in texts(root)
    assert "Placement — top view, judged at 791 MHz" in texts(root)


def test_ids_carry_the_prefix_so_two_drawings_can_share_a_page():
    first, _, _ = render(contract_pair(), id_prefix="rev 1")
    second, _, _ = render(contract_pair(second_position=(75, 20, 25)), id_prefix="rev-2")
    ids = []
    for root, prefix in ((first, "rev-1-"), (second, "rev-2-")):
        own = [element.get("id") for element in root.iter() if element.get("id")]
        assert own and all(value.startswith(prefix) for value in own)
        references = re.findall(r"url\(#([^)]+)\)", ET.tostring(root, encoding="unicode"))
        assert references and set(references) <= set(own)
        ids += own
    assert len(ids) == len(set(ids))


@pytest.mark.parametrize("document", [
    contract_pair(),
    contract_pair(second_position=(-40, -70, 3), enclosure=None),  # negative coordinates
    contract_pair(enclosure={"size_mm": [4000, 2500, 900]}, ground_plane_mm=[3000, 2000]),  # huge
    contract_pair(enclosure={"size_mm": [6, 4, 2]}, ground_plane_mm=[5, 3]),  # small
    design("cat-1", antennas=[antenna(name, position=(-5, 7, 1)) for name in ("A", "B", "C")]),  # one spot
    design(antennas=[antenna("ONLY", position=(60, 40, 12), polarization=(1, 1, 1))]),  # one antenna
], ids=["contract", "negative", "huge", "small", "same-spot", "one"])
def test_everything_fits_inside_the_drawing(document):
    root, _, layout = render(document, width_pt=480)
    width, height = (float(value) for value in root.get("viewBox").split()[2:])
    assert width == 480
    for x, y, r, _ in circles(root):
        assert -0.01 <= x - r and x + r <= width + 0.01
        assert -0.01 <= y - r and y + r <= height + 0.01
    for name in layout.placed:
        assert name in texts(root)


def test_it_renders_into_a_pdf_and_fits_a_page_frame(tmp_path):
    parsed = parse_design(contract_pair(second_position=(75, 20, 25)))
    severities = pair_severities_from_findings(evaluate(parsed).findings)
    drawing = placement_drawing(parsed, pair_severities=severities, frequency_mhz=parsed.lowest_mhz)
    path = tmp_path / "placement.pdf"
    renderPDF.drawToFile(drawing, str(path))
    assert path.read_bytes().startswith(b"%PDF")

    document = SimpleDocTemplate(str(tmp_path / "record.pdf"), pagesize=A4)
    framed = placement_drawing(parsed, pair_severities=severities, frequency_mhz=parsed.lowest_mhz,
                               width_pt=document.width, max_height_pt=document.height - 12)
    assert framed.height <= document.height - 12 and framed.scale_pt_per_mm < drawing.scale_pt_per_mm
    document.build([framed])
    assert (tmp_path / "record.pdf").read_bytes().startswith(b"%PDF")


def test_it_refuses_an_unknown_severity_or_a_frequency_that_is_not_positive():
    parsed = parse_design(contract_pair())
    with pytest.raises(ValueError, match="unknown severity 'fatal'"):
        placement_drawing(parsed, pair_severities={frozenset({"MAIN", "DIV"}): "fatal"}, frequency_mhz=791)
    with pytest.raises(ValueError, match="frequency_mhz"):
        placement_drawing(parsed, pair_severities={}, frequency_mhz=0)


# Everything the parser accepts (rules.design: positions within 100 m, sizes from 10 um to 100 m), edges included.
LENGTH = UNIT_LIMITS["_mm"]
coordinate = st.floats(min_value=LENGTH.low, max_value=LENGTH.high, allow_nan=False, allow_infinity=False)
size = st.floats(min_value=SMALLEST_SIZE_MM, max_value=LENGTH.high, allow_nan=False, allow_infinity=False)
axis = st.lists(st.integers(-3, 3), min_size=3, max_size=3).filter(any)


@st.composite
def designs(draw) -> dict:
    antennas = []
    for index in range(draw(st.integers(0, 5))):
        document = antenna(f"ANT{index}", draw(st.sampled_from(["main", "receive"])),
                           mounting=draw(st.sampled_from(["internal", "external"])))
        position = draw(st.none() | st.tuples(coordinate, coordinate, coordinate))
        if position is None:
            del document["position_mm"]
        else:
            document["position_mm"] = list(position)
        polarization = draw(st.none() | axis)
        if polarization is None:
            del document["polarization"]
        else:
            document["polarization"] = polarization
        antennas.append(document)
    enclosure = draw(st.none() | st.tuples(size, size, size))
    ground = draw(st.none() | st.tuples(size, size))
    return design("cat-1", bands=draw(st.sampled_from([["B20"], ["B3"], ["B1", "B7"]])), antennas=antennas,
                  enclosure=None if enclosure is None else {"size_mm": list(enclosure)},
                  ground_plane_mm=None if ground is None else list(ground))


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(designs())
def test_any_valid_design_renders_a_parseable_svg_with_every_antenna_named(document):
    root, _, layout = render(document)
    names = [item["name"] for item in document["antennas"]]
    assert set(layout.placed) | set(layout.unplaced) == set(names)
    description = root.find(f"{SVG}desc").text
    assert all(name in description for name in names)
    width, height = (float(value) for value in root.get("viewBox").split()[2:])
    assert all(math.isfinite(value) for x, y, r, _ in circles(root) for value in (x, y, r))
    assert all(0 <= x <= width and 0 <= y <= height for x, y, _, _ in circles(root))


def crowded(count: int) -> dict:
    """`count` co-polarized antennas 30 mm apart in a row: every neighbour inside lambda/2pi at 791 MHz."""
    return design("cat-1", antennas=[antenna("MAIN" if index == 0 else f"RX{index}", "main" if index == 0 else
                                             "receive", position=(20 + 30 * index, 40, 10)) for index in range(count)],
                  enclosure={"size_mm": [40 + 30 * count, 80, 30]}, ground_plane_mm=[20 + 30 * count, 70])


def test_a_crowded_design_draws_the_pairs_with_findings_first_and_says_how_many_it_left_out():
    root, _, layout = render(crowded(12))
    assert len(layout.pairs) == 66 and len(layout.drawn_pairs) == placement.MAX_DRAWN_PAIRS
    # Worst first, then nearest: the blockers are neighbours 30 mm apart (< lambda/2pi = 60.3 mm, co-polarized).
    ranked = sorted(layout.pairs, key=lambda pair: (pair.severity is None, pair.severity != "blocker",
                                                     pair.distance_mm))
    assert {(p.first, p.second) for p in layout.drawn_pairs} == {(p.first, p.second)
                                                                  for p in ranked[:placement.MAX_DRAWN_PAIRS]}
    assert all(pair.severity == "blocker" for pair in layout.drawn_pairs if pair.distance_mm < 35)
    drawn = [path for path in root.iter(f"{SVG}path") if style(path).get("stroke") in (BLOCKER, WARNING, NOTE, NO_FINDING)
             and style(path).get("stroke-width") == "1.8"]
    assert len(drawn) == placement.MAX_DRAWN_PAIRS + 4  # and the legend's four swatches
    positions = {item["name"]: item["position_mm"] for item in crowded(12)["antennas"]}
    for pair in layout.drawn_pairs:
        first, second = positions[pair.first], positions[pair.second]
        assert lines_between(root, layout.top_view_pt(*first[:2]), layout.top_view_pt(*second[:2])), pair
    assert any(text.startswith(f"lines for {placement.MAX_DRAWN_PAIRS} of 66 pairs") for text in texts(root))
    assert f"Lines are drawn for {placement.MAX_DRAWN_PAIRS} of the 66 pairs" in root.find(f"{SVG}desc").text
    assert set(layout.placed) <= set(texts(root))  # every antenna is still named


def test_a_small_design_draws_every_pair():
    _, _, layout = render(crowded(8))
    assert layout.drawn_pairs == layout.pairs and len(layout.pairs) == 28


def test_the_most_antennas_the_parser_takes_all_fit_and_are_named():
    root, _, layout = render(crowded(MAX_ANTENNAS), width_pt=480)
    width, height = (float(value) for value in root.get("viewBox").split()[2:])
    for x, y, r, _ in circles(root):
        assert -0.01 <= x - r and x + r <= width + 0.01 and -0.01 <= y - r and y + r <= height + 0.01
    assert len(layout.placed) == MAX_ANTENNAS and set(layout.placed) <= set(texts(root))


def test_a_label_avoids_a_line_across_its_first_choice():
    placer = placement._Placer((0.0, 0.0, 200.0, 200.0))
    placer.block_segment((0.0, 50.0), (200.0, 50.0), 1.5, 1.0)  # a horizontal line at y = 50
    # The first candidate straddles the line; the second is clear of it by 10 pt.
    assert placer.place(20.0, 10.0, [(10.0, 45.0), (10.0, 60.0)]) == (10.0, 60.0, 30.0, 70.0)
    # A candidate within the line's half width of it still counts as covering it.
    assert placer.place(20.0, 10.0, [(100.0, 51.0), (100.0, 80.0)]) == (100.0, 80.0, 120.0, 90.0)
    # A line of no length (both ends at one point) blocks like a point.
    placer.block_segment((150.0, 150.0), (150.0, 150.0), 2.0, 1.0)
    assert placer.place(10.0, 10.0, [(145.0, 145.0), (170.0, 170.0)]) == (170.0, 170.0, 180.0, 180.0)


# -- GNSS and WLAN antennas, coexistence lines (rule set 2) -----------------------------------------------------

def radios_design(**extra) -> dict:
    """A Cat 1 pair with a GNSS and a WLAN antenna beside it (design-file.md, rule set 2's roles)."""
    return design("cat-1", antennas=[
        antenna("MAIN", position=(20, 20, 10)),
        antenna("DIV", "receive", position=(130, 20, 10), polarization=(0, 1, 0)),
        antenna("GPS", "gnss", position=(60, 80, 10), polarization=(0, 0, 1), ranges_mhz=[[1559, 1610]]),
        antenna("WIFI", "wlan", position=(100, 80, 10), polarization=(0, 1, 0), ranges_mhz=[[2400, 2500]]),
    ], **extra)


def coexistence_findings() -> list[dict]:
    """Hand-made coexistence findings in the shapes the rules give them: (cellular, victim, band) subjects, and a
    victim named alone with its band (the uplink's transmitter, the main antenna, is then the aggressor)."""
    return [
        {"id": "COX-001", "topic": "coexistence", "severity": "warning", "subjects": ["MAIN", "GPS", "B13"],
         "evidence": {"band": "B13", "victim": "GNSS L1/E1"}},
        {"id": "COX-001", "topic": "coexistence", "severity": "warning", "subjects": ["GPS", "B14"],
         "evidence": {"band": "B14", "victim": "GNSS L1/E1"}},
        {"id": "COX-002", "topic": "coexistence", "severity": "warning", "subjects": ["DIV", "WIFI", "B40"],
         "evidence": {"band": "B40", "victim": "WLAN 2.4 GHz"}},
        {"id": "COX-002", "topic": "coexistence", "severity": "note", "subjects": ["GHOST", "WIFI", "B41"],
         "evidence": {"band": "B41", "victim": "WLAN 2.4 GHz"}},
    ]


def render_with(document: dict, findings: list[dict]):
    parsed = parse_design(document)
    all_findings = [finding.as_dict() for finding in evaluate(parsed).findings] + findings
    options = {"pair_severities": pair_severities_from_findings(all_findings), "frequency_mhz": parsed.lowest_mhz,
               "coexistence": placement.coexistence_lines_from_findings(all_findings, parsed)}
    layout = placement_drawing(parsed, **options).layout
    return ET.fromstring(placement_svg(parsed, **options)), layout


def test_gnss_and_wlan_antennas_get_their_own_symbols_and_legend_entries():
    root, layout = render_with(radios_design(), [])
    scale = layout.scale_pt_per_mm
    gps_x, gps_y = layout.top_view_pt(60, 80)
    markers = [c for c in circles(root) if c[2] == pytest.approx(placement.MARKER_HALF_PT * 1.15)
               and (c[0], c[1]) == (pytest.approx(gps_x), pytest.approx(gps_y))]
    assert markers and markers[0][3]["fill"] == palette.INK, "a filled circle marks the GNSS antenna"
    wifi_x, _ = layout.top_view_pt(100, 80)
    triangles = []
    for polygon in root.iter(f"{SVG}polygon"):
        points = [tuple(float(v) for v in point.split()) for point in polygon.get("points").split(",")]
        if len(points) == 3 and style(polygon)["stroke"] == "#ffffff":  # a marker, outlined (arrowheads are not)
            triangles.append(sum(x for x, _ in points) / 3)
    assert pytest.approx(wifi_x) in triangles, "a triangle marks the WLAN antenna (the other: its legend entry)"
    shown = texts(root)
    assert {"GNSS antenna", "WLAN antenna"} <= set(shown)
    assert "dashed: coexistence finding" not in shown, "no coexistence finding, no legend entry for one"
    # The circles are the cellular band's: none around the GNSS and WLAN antennas.
    near = [c for c in circles(root) if c[2] == pytest.approx(physics.near_field_radius_mm(LOWEST_MHZ) * scale)]
    assert sorted((round(x, 2), round(y, 2)) for x, y, _, _ in near) == sorted(
        (round(x, 2), round(y, 2)) for x, y in (layout.top_view_pt(20, 20), layout.top_view_pt(130, 20)))


def test_spacing_lines_join_cellular_antennas_only():
    root, layout = render_with(radios_design(), [])
    assert [(pair.first, pair.second) for pair in layout.pairs] == [("MAIN", "DIV")]
    assert not lines_between(root, layout.top_view_pt(20, 20), layout.top_view_pt(60, 80))
    assert "GPS (gnss, internal) at x 60, y 80, z 10 mm" in root.find(f"{SVG}desc").text


def test_coexistence_findings_become_dashed_lines_in_their_colour_with_bands_and_victim():
    root, layout = render_with(radios_design(), coexistence_findings())
    lines = {(line.cellular, line.victim): line for line in layout.coexistence}
    assert set(lines) == {("MAIN", "GPS"), ("DIV", "WIFI")}, "GHOST is not in the design: left out"
    assert lines["MAIN", "GPS"].bands == ("B13", "B14"), "the victim-only finding is drawn from the main antenna"
    assert lines["MAIN", "GPS"].label == "B13, B14 → GNSS L1/E1"
    main, gps = (tuple(round(value, 2) for value in layout.top_view_pt(*xy)) for xy in ((20, 20), (60, 80)))
    [dashed] = [polyline for polyline in root.iter(f"{SVG}polyline")
                if {tuple(round(float(v), 2) for v in point.split()) for point in polyline.get("points").split(",")}
                == {main, gps}]
    assert style(dashed)["stroke"] == WARNING and style(dashed)["stroke-dasharray"] == "6, 3"
    assert not lines_between(root, layout.top_view_pt(20, 20), layout.top_view_pt(60, 80)), (
        "an open polyline: a closed path would draw the dashes there and back and fill the gaps")
    shown = texts(root)
    assert "B13, B14 → GNSS L1/E1" in shown and "B40 → WLAN 2.4 GHz" in shown
    assert "dashed: coexistence finding" in shown
    description = root.find(f"{SVG}desc").text
    assert "Dashed lines join antennas a coexistence finding names: MAIN to GPS, B13, B14 → GNSS L1/E1, warning" in (
        description)


def test_coexistence_lines_come_from_findings_or_their_dicts_and_keep_the_worst_severity():
    parsed = parse_design(radios_design())
    findings = coexistence_findings() + [{"id": "COX-002", "topic": "coexistence", "severity": "note",
                                          "subjects": ["DIV", "WIFI", "B7"],
                                          "evidence": {"band": "B7", "victim": "WLAN 2.4 GHz"}}]
    lines = {(line.cellular, line.victim): line for line in placement.coexistence_lines_from_findings(findings, parsed)}
    assert lines["DIV", "WIFI"].severity == "warning" and lines["DIV", "WIFI"].bands == ("B40", "B7")
    from rules.findings import Finding

    as_objects = [Finding(f["id"], f["topic"], f["severity"], "t", "e", "a", tuple(f["subjects"]), f["evidence"], ())
                  for f in findings]
    assert placement.coexistence_lines_from_findings(as_objects, parsed) == list(lines.values())
    assert placement.coexistence_lines_from_findings([{"topic": "coexistence", "severity": "urgent",
                                                       "subjects": ["MAIN", "GPS"]}], parsed) == []


def test_coexistence_lines_are_capped_worst_first_and_the_drawing_says_so():
    cellular = [antenna(f"RX{index}", "receive" if index else "main", position=(10 + 12 * index, 10, 10))
                for index in range(9)]
    victims = [antenna(f"G{index}", "gnss", position=(10 + 12 * index, 80, 10), ranges_mhz=[[1559, 1610]])
               for index in range(3)]
    document = design("cat-6", antennas=cellular + victims, enclosure={"size_mm": [150, 95, 30]})
    findings = [{"id": "COX-001", "topic": "coexistence", "severity": "note" if index else "warning",
                 "subjects": [cell["name"], victim["name"], "B13"], "evidence": {"band": "B13", "victim": "GNSS L1/E1"}}
                for index, (cell, victim) in enumerate((c, v) for c in cellular for v in victims)]
    root, layout = render_with(document, findings)
    assert len(layout.coexistence) == placement.MAX_COEXISTENCE_LINES < len(findings)
    assert layout.coexistence[0].severity == "warning"
    assert f"Coexistence lines are drawn for the {placement.MAX_COEXISTENCE_LINES} worst of 27." in (
        root.find(f"{SVG}desc").text)


def test_the_engines_own_coexistence_findings_are_drawn_for_the_depot_gateway():
    # rules/examples/depot-gateway.json: B13's 2nd uplink harmonic (777-787 MHz x 2 = 1554-1574 MHz, 3GPP TS 36.101
    # Table 5.5-1) lands on GNSS L1/E1; B41 (2496 MHz) sits 12.5 MHz above WLAN's 2483.5 MHz (TR 36.816 names both)
    import json

    from tests.web.conftest import EXAMPLES

    parsed = parse_design(json.loads((EXAMPLES / "depot-gateway.json").read_text()))
    findings = evaluate(parsed).findings
    lines = placement.coexistence_lines_from_findings(findings, parsed)
    assert {(line.cellular, line.victim, line.bands) for line in lines} == {
        ("MAIN", "GNSS", ("B13",)), ("MAIN", "WIFI", ("B41",)), ("DIV", "WIFI", ("B41",))}
    layout = placement_drawing(parsed, pair_severities=pair_severities_from_findings(findings),
                               frequency_mhz=parsed.lowest_mhz, coexistence=lines).layout
    assert len(layout.coexistence) == 3 and [(p.first, p.second) for p in layout.pairs] == [("MAIN", "DIV")]
