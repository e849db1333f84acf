"""The measurement and coverage charts (projectapp/figures/charts.py): what the SVG and the PDF show, checked
against rules.sparams, rules.catalog and the rules' own thresholds rather than against pictures."""

import math
import re
import xml.etree.ElementTree as ET
from itertools import combinations
from pathlib import Path

import numpy as np
import pytest
import skrf
from reportlab.graphics import renderPDF
from reportlab.lib.pagesizes import A4
from reportlab.pdfbase.pdfmetrics import stringWidth
from reportlab.platypus import SimpleDocTemplate

from projectapp import palette
from projectapp.figures import charts
from projectapp.figures.charts import (
    ECC_THRESHOLDS,
    ISOLATION_THRESHOLDS_DB,
    MAX_POINTS_PER_CURVE,
    RETURN_LOSS_THRESHOLDS_DB,
    chart_svg,
    correlation_chart,
    coverage_chart,
    isolation_chart,
    min_max_indices,
    return_loss_chart,
)
from rules import sparams
from rules.catalog import bands
from rules.design import parse_design, parse_design_text
from rules.evaluate import evaluate
from rules.measurements import LoadedMeasurement
from rules.touchstone import Network, read_touchstone
from tests.rules.design_builders import antenna, design

SVG = "{http://www.w3.org/2000/svg}"
EXAMPLES = Path(__file__).parents[2] / "rules" / "examples"
SKRF_DATA = Path(skrf.__file__).parent / "data"
BLOCKER, WARNING = palette.BLOCKER, palette.WARNING  # the app's palette
# 3GPP TS 36.101 Table 5.5-1, E-UTRA operating bands (UL, DL) in MHz: the field router's five bands.
TS_36_101_MHZ = {
    "B2": ((1850, 1910), (1930, 1990)),
    "B4": ((1710, 1755), (2110, 2155)),
    "B12": ((699, 716), (729, 746)),
    "B13": ((777, 787), (746, 756)),
    "B66": ((1710, 1780), (2110, 2200)),
}


@pytest.fixture(scope="module")
def router():
    return parse_design_text((EXAMPLES / "field-router.json").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def router_measurement():
    network = read_touchstone(EXAMPLES / "field-router-revA.s2p")
    return LoadedMeasurement("field-router-revA.s2p", network, ("MAIN", "DIV"))


def skrf_measurement(file_name: str, *names: str) -> LoadedMeasurement:
    return LoadedMeasurement(file_name, read_touchstone(SKRF_DATA / file_name), tuple(names))


def synthetic(s: np.ndarray, frequencies_hz: np.ndarray, names=("MAIN", "DIV"), file_name="synthetic.s2p"):
    network = Network(file_name, "1.1", frequencies_hz, s, np.full(s.shape[1], 50.0), ())
    return LoadedMeasurement(file_name, network, tuple(names))


def long_sweep() -> LoadedMeasurement:
    """20,001 points over 600-2800 MHz with noise and one narrow dip on port 1 (a worst case to keep)."""
    frequencies_hz = np.linspace(600e6, 2800e6, 20_001)
    noise = np.random.default_rng(7).standard_normal(frequencies_hz.size)
    s = np.zeros((frequencies_hz.size, 2, 2), dtype=complex)
    s[:, 0, 0] = 0.3 + 0.2 * np.sin(frequencies_hz / 1e8) + 0.02 * noise
    s[12_345, 0, 0] = 0.8  # a single-point dip: 1.9 dB return loss at one frequency
    s[:, 1, 1] = 0.4 + 0.1 * np.cos(frequencies_hz / 7e7)
    s[:, 0, 1] = s[:, 1, 0] = 0.2 + 0.1 * np.sin(frequencies_hz / 3e8)
    return synthetic(s, frequencies_hz, file_name="long.s2p")


def svg_root(drawing, id_prefix="chart") -> tuple[ET.Element, str]:
    text = chart_svg(drawing, id_prefix=id_prefix)
    return ET.fromstring(text), text


def style(element: ET.Element) -> dict[str, str]:
    return {key.strip(): value.strip() for key, _, value in
            (item.partition(":") for item in element.get("style", "").split(";") if ":" in item)}


def texts(root: ET.Element) -> list[str]:
    return [element.text or "" for element in root.iter(f"{SVG}text")]


def straight_lines(root: ET.Element) -> list[tuple[tuple[float, ...], dict[str, str]]]:
    """Every SVG path that is one straight segment: ((x1, y1, x2, y2), style) in drawing points."""
    found = []
    for path in root.iter(f"{SVG}path"):
        numbers = [float(value) for value in re.findall(r"-?\d+(?:\.\d+)?(?:e-?\d+)?", path.get("d", ""))]
        if len(numbers) == 4:
            found.append((tuple(numbers), style(path)))
    return found


def polyline_points(element: ET.Element) -> list[tuple[float, float]]:
    return [(float(x), float(y)) for x, y in (point.split() for point in element.get("points").split(","))]


def rects(root: ET.Element) -> list[tuple[float, float, float, float, dict[str, str]]]:
    return [(float(r.get("x")), float(r.get("y")), float(r.get("width")), float(r.get("height")), style(r))
            for r in root.iter(f"{SVG}rect")]


def overlap(a, b) -> bool:
    return min(a[2], b[2]) - max(a[0], b[0]) > 1e-6 and min(a[3], b[3]) - max(a[1], b[1]) > 1e-6


# -- the SVG ----------------------------------------------------------------------------------------------------

def test_the_svg_is_an_inline_image_labelled_by_its_title_and_a_description_of_worst_values(
        router, router_measurement):
    drawing = return_loss_chart(router_measurement, router)
    root, text = svg_root(drawing, id_prefix="rl-1")
    assert text.startswith("<svg") and "<?xml" not in text
    assert root.get("role") == "img" and root.get("aria-labelledby") == "rl-1-title rl-1-desc"
    assert root.find(f"{SVG}title").text == "Return loss — field-router-revA.s2p"
    assert root.find(f"{SVG}title").get("id") == "rl-1-title"
    description = root.find(f"{SVG}desc").text
    assert root.find(f"{SVG}desc").get("id") == "rl-1-desc"
    assert root.get("height") is None and root.get("width") == "100%"
    assert root.get("viewBox") == "0 0 640 260" and "max-width: 640px" in root.get("style")
    # The worst value per band comes from rules.sparams over what the antenna serves: DIV (receive) in
    # B66 is judged on its downlink, 2110-2200 MHz, where the sweep's last point is its worst.
    network = router_measurement.network
    for port, name in enumerate(("MAIN", "DIV")):
        for band in router.modem.bands:
            ranges = [band.ul_mhz, band.dl_mhz] if name == "MAIN" else [band.dl_mhz]
            window = sparams.band_window(network, ranges)
            worst = sparams.worst_minimum(sparams.return_loss_db(network)[:, port], network.frequencies_mhz,
                                          window.mask)
            assert f"{band.name} {worst.value:.1f} dB at {worst.frequency_mhz:g} MHz" in description
    assert "B66 5.8 dB at 2200 MHz, warning" in description
    assert "warning below 6 dB, blocker below 3.5 dB" in description
    assert "3GPP TS 36.101 Table 5.5-1" in description


def test_the_pair_charts_describe_the_worst_isolation_and_correlation_per_band(router, router_measurement):
    network = router_measurement.network
    both = sparams.band_window(network, [(1930, 1990), (1850, 1910)])  # B2, MAIN transmits: UL and DL
    isolation = sparams.worst_minimum(sparams.isolation_db(network, 0, 1), network.frequencies_mhz, both.mask)
    ecc = sparams.worst_maximum(sparams.envelope_correlation(network, 0, 1), network.frequencies_mhz, both.mask)
    iso_text = isolation_chart(router_measurement, router).layout.description
    ecc_text = correlation_chart(router_measurement, router).layout.description
    assert f"MAIN–DIV (ports 1–2): B2 {isolation.value:.1f} dB at {isolation.frequency_mhz:g} MHz" in iso_text
    assert f"MAIN–DIV (ports 1–2): B2 {ecc.value:.2f} at {ecc.frequency_mhz:g} MHz" in ecc_text
    assert "warning above 0.5, blocker above 0.7" in ecc_text


def test_colours_are_written_exactly_and_ids_carry_the_prefix(router, router_measurement):
    first, first_text = svg_root(return_loss_chart(router_measurement, router), id_prefix="one")
    second, _ = svg_root(isolation_chart(router_measurement, router), id_prefix="two")
    assert "rgb(" not in first_text
    ids = [element.get("id") for root in (first, second) for element in root.iter() if element.get("id")]
    assert len(ids) == len(set(ids)) and ids
    assert all(identifier.startswith(("one-", "two-")) for identifier in ids)


# -- axes, thresholds, bands --------------------------------------------------------------------------------

@pytest.mark.parametrize(("make", "thresholds"), [
    (return_loss_chart, RETURN_LOSS_THRESHOLDS_DB),
    (isolation_chart, ISOLATION_THRESHOLDS_DB),
    (correlation_chart, ECC_THRESHOLDS),
])
def test_threshold_lines_sit_where_the_chart_maps_their_values(router, router_measurement, make, thresholds):
    drawing = make(router_measurement, router)
    root, _ = svg_root(drawing)
    left, _, right, _ = drawing.layout.plot_box
    lines = straight_lines(root)
    for threshold in thresholds:
        y = drawing.y_of(threshold.value)
        colour = BLOCKER if threshold.severity == "blocker" else WARNING
        matching = [found for found, line_style in lines
                    if found == pytest.approx((left, y, right, y), abs=0.01) and line_style["stroke"] == colour
                    and "stroke-dasharray" in line_style]
        assert len(matching) == 1, threshold
        assert threshold.label in texts(root)


def test_return_loss_thresholds_are_6_and_3_5_db_and_isolation_10_and_6_and_correlation_0_5_and_0_7():
    assert {(t.severity, t.value) for t in RETURN_LOSS_THRESHOLDS_DB} == {("warning", 6.0), ("blocker", 3.5)}
    assert {(t.severity, t.value) for t in ISOLATION_THRESHOLDS_DB} == {("warning", 10.0), ("blocker", 6.0)}
    assert {(t.severity, t.value) for t in ECC_THRESHOLDS} == {("warning", 0.5), ("blocker", 0.7)}


def constant_two_port(s11: float, s21: float, s22: float) -> LoadedMeasurement:
    """The same S-matrix from 600 to 2800 MHz: every band's worst case is this one value."""
    frequencies_hz = np.linspace(600e6, 2800e6, 23)
    s = np.empty((frequencies_hz.size, 2, 2), dtype=complex)
    s[:] = [[s11, s21], [s21, s22]]
    return synthetic(s, frequencies_hz)


def ecc_s11_for(target: float, s21: float) -> float:
    """|S11| = |S22| that gives envelope correlation `target` with real S21 (Blanch et al., two ports)."""
    root = math.sqrt(target)
    return (-2 * s21 + math.sqrt(4 * s21**2 + 4 * target * (1 - s21**2))) / (2 * root)


@pytest.mark.parametrize("return_loss_db", [3.4, 3.6, 5.9, 6.1])
def test_the_return_loss_lines_are_where_the_rule_changes_its_verdict(router, return_loss_db):
    measurement = constant_two_port(10 ** (-return_loss_db / 20), 0.01, 0.01)
    found = {f.severity for f in evaluate(router, [measurement]).findings if f.id == "MAT-001"}
    expected = {t.severity for t in RETURN_LOSS_THRESHOLDS_DB if t.crossed_by(return_loss_db)}
    assert found == ({min(expected, key=["blocker", "warning"].index)} if expected else set())


@pytest.mark.parametrize("isolation_db", [5.9, 6.1, 9.9, 10.1])
def test_the_isolation_lines_are_where_the_rule_changes_its_verdict(router, isolation_db):
    measurement = constant_two_port(0.05, 10 ** (-isolation_db / 20), 0.05)
    found = {f.severity for f in evaluate(router, [measurement]).findings if f.id == "ISO-001"}
    expected = {t.severity for t in ISOLATION_THRESHOLDS_DB if t.crossed_by(isolation_db)}
    assert found == ({min(expected, key=["blocker", "warning"].index)} if expected else set())


@pytest.mark.parametrize("target", [0.48, 0.52, 0.68, 0.72])
def test_the_correlation_lines_are_where_the_rule_changes_its_verdict(router, target):
    s11 = ecc_s11_for(target, 0.3)
    measurement = constant_two_port(s11, 0.3, s11)
    ecc = float(sparams.envelope_correlation(measurement.network, 0, 1)[0])
    assert ecc == pytest.approx(target)
    found = {f.severity for f in evaluate(router, [measurement]).findings if f.id == "ECC-001"}
    expected = {t.severity for t in ECC_THRESHOLDS if t.crossed_by(ecc)}
    assert found == ({min(expected, key=["blocker", "warning"].index)} if expected else set())


def test_band_shading_spans_the_catalog_edges(router, router_measurement):
    for name, (ul_mhz, dl_mhz) in TS_36_101_MHZ.items():
        assert (bands()[name].ul_mhz, bands()[name].dl_mhz) == (ul_mhz, dl_mhz)
    drawing = return_loss_chart(router_measurement, router)
    root, _ = svg_root(drawing)
    _, bottom, _, top = drawing.layout.plot_box
    shaded = [(x, y, width, height, rect_style) for x, y, width, height, rect_style in rects(root)
              if "fill-opacity" in rect_style and height == pytest.approx(top - bottom)]
    spans = {(span.band, span.kind): span for span in drawing.layout.band_spans}
    for name, (ul_mhz, dl_mhz) in TS_36_101_MHZ.items():
        for kind, (low_mhz, high_mhz) in (("UL", ul_mhz), ("DL", dl_mhz)):
            assert (spans[name, kind].low_mhz, spans[name, kind].high_mhz) == (low_mhz, high_mhz)
            x0, x1 = drawing.x_of(low_mhz), drawing.x_of(high_mhz)
            assert any(x == pytest.approx(x0) and width == pytest.approx(x1 - x0) and y == pytest.approx(bottom)
                       and height == pytest.approx(top - bottom) for x, y, width, height, _ in shaded), (name, kind)
    assert len(shaded) == 2 * len(TS_36_101_MHZ)


def test_the_x_axis_has_round_megahertz_ticks_inside_the_sweep(router, router_measurement):
    drawing = return_loss_chart(router_measurement, router)
    x_axis = drawing.layout.x
    assert (x_axis.low, x_axis.high) == (600, 2800)
    assert x_axis.ticks == (1000, 1500, 2000, 2500)
    assert drawing.x_of(600) == pytest.approx(drawing.layout.plot_box[0])
    assert drawing.x_of(2800) == pytest.approx(drawing.layout.plot_box[2])
    root, _ = svg_root(drawing)
    assert {"1000", "1500", "2000", "2500", "frequency (MHz)", "return loss (dB), higher is better"} <= set(
        texts(root))
    y_axis = drawing.layout.y
    assert y_axis.low == 0 and y_axis.high == 20 and y_axis.ticks == (0, 5, 10, 15, 20)
    assert correlation_chart(router_measurement, router).layout.y.low == 0
    assert correlation_chart(router_measurement, router).layout.y.high == 1


def crowded_design():
    many = ["B1", "B2", "B3", "B4", "B5", "B7", "B8", "B12", "B13", "B14", "B17", "B20", "B25", "B26", "B28",
            "B41", "B66", "B71"]
    return parse_design(design("cat-4", bands=many, antennas=[antenna("MAIN"),
                                                              antenna("DIV", "receive", position=(80, 20, 10))]))


@pytest.mark.parametrize("width_pt", [320, 480, 640, 900])
@pytest.mark.parametrize("crowded", [False, True])
def test_band_labels_never_overlap_and_stay_above_the_plot(router, router_measurement, width_pt, crowded):
    drawing = return_loss_chart(router_measurement, crowded_design() if crowded else router, width_pt=width_pt)
    left, _, right, top = drawing.layout.plot_box
    labels = drawing.layout.band_labels
    assert labels
    for first, second in combinations(labels, 2):
        assert not overlap(first.box, second.box), (first.text, second.text)
    for label in labels:
        assert left - 1e-6 <= label.box[0] and label.box[2] <= right + 1e-6
        assert top < label.box[1] and label.box[3] < drawing.height - charts.MARGIN_PT - charts.HEADER_PT + 4
    named = {name for label in labels for name in re.findall(r"[Bn]\d+", label.text)}
    assert named == {band.name for band in (crowded_design() if crowded else router).modem.bands}


def test_adjacent_bands_of_one_direction_share_a_label(router, router_measurement):
    labels = {label.text: label for label in return_loss_chart(router_measurement, router).layout.band_labels}
    # B12 DL ends at 746 MHz where B13 DL starts; B4 and B66 share 1710 MHz of uplink.
    assert {"B12/B13 DL", "B4/B66 UL", "B4/B66 DL", "B2 UL", "B2 DL", "B12 UL", "B13 UL"} == set(labels)


# -- long sweeps --------------------------------------------------------------------------------------------------

def test_a_20001_point_sweep_is_decimated_keeping_each_ports_global_minimum_exactly(router):
    measurement = long_sweep()
    drawing = return_loss_chart(measurement, router)
    return_loss = sparams.return_loss_db(measurement.network)
    for port, series in enumerate(drawing.layout.series):
        assert series.sweep_points == 20_001
        assert len(series.values) <= MAX_POINTS_PER_CURVE
        assert series.values.min() == np.min(return_loss[:, port])
        assert series.values.max() == np.max(return_loss[:, port])
        assert np.all(np.diff(series.frequencies_mhz) > 0)
    # The one-point dip is drawn: the polyline reaches its y.
    root, text = svg_root(drawing)
    dip_y = drawing.y_of(float(return_loss[12_345, 0]))
    polylines = [element for element in root.iter(f"{SVG}polyline")]
    ys = [y for element in polylines for _, y in polyline_points(element)]
    assert min(ys) == pytest.approx(dip_y, abs=0.01)
    assert all(len(polyline_points(element)) <= MAX_POINTS_PER_CURVE for element in polylines)
    assert len(text) < 200_000


@pytest.mark.parametrize("seed", range(5))
def test_min_max_decimation_keeps_every_buckets_extremes(seed):
    values = np.random.default_rng(seed).standard_normal(20_001).cumsum()
    values[np.random.default_rng(seed).integers(0, 20_001, 50)] = np.nan
    kept = min_max_indices(values, 1000)
    assert len(kept) <= 1000 and np.all(np.diff(kept) > 0)
    assert np.nanmin(values[kept]) == np.nanmin(values) and np.nanmax(values[kept]) == np.nanmax(values)
    short = np.arange(10.0)
    assert list(min_max_indices(short, 1000)) == list(range(10))


# -- reference files -----------------------------------------------------------------------------------------------

def test_a_three_port_file_has_one_isolation_and_one_correlation_curve_per_pair(router):
    measurement = skrf_measurement("tee.s3p", "MAIN", "DIV", "AUX")
    for make, values_of in ((isolation_chart, sparams.isolation_db),
                            (correlation_chart, sparams.envelope_correlation)):
        drawing = make(measurement, router)
        labels = [series.label for series in drawing.layout.series]
        assert labels == ["MAIN–DIV · ports 1–2", "MAIN–AUX · ports 1–3", "DIV–AUX · ports 2–3"]
        for series, (i, j) in zip(drawing.layout.series, [(0, 1), (0, 2), (1, 2)], strict=True):
            assert np.array_equal(series.values, values_of(measurement.network, i, j))
        root, _ = svg_root(drawing)
        assert set(labels) <= set(texts(root))
    # tee.s3p spans 330-500 GHz: none of the router's bands is shaded, and the chart says so.
    drawing = isolation_chart(measurement, router)
    assert all(span.drawn_box is None for span in drawing.layout.band_spans)
    assert not drawing.layout.band_labels
    root, _ = svg_root(drawing)
    assert any("not shaded: B2, B4, B12, B13, B66." in line for line in texts(root))
    assert "None of the design's bands lies in the measured range." in drawing.layout.description


def test_ring_slot_two_port_and_unmapped_ports(router):
    measurement = skrf_measurement("ring slot.s2p", "MAIN", "DIV")
    drawing = return_loss_chart(measurement, router)
    return_loss = sparams.return_loss_db(measurement.network)
    assert [series.label for series in drawing.layout.series] == ["MAIN · port 1", "DIV · port 2 · judged on DL"]
    assert drawing.layout.series[1].values.min() == np.min(return_loss[:, 1])
    # A port not tied to an antenna is not drawn; with one mapped port there are no pairs.
    half = LoadedMeasurement(measurement.file, measurement.network, ("MAIN", None))
    assert [series.label for series in return_loss_chart(half, router).layout.series] == ["MAIN · port 1"]
    assert isolation_chart(half, router).layout.message == "Fewer than two ports are tied to antennas: no pairs."


def test_a_one_port_file_charts_return_loss_and_says_it_has_no_pairs(router):
    measurement = skrf_measurement("ring slot measured.s1p", "MAIN")
    drawing = return_loss_chart(measurement, router)
    assert len(drawing.layout.series) == 1
    for make in (isolation_chart, correlation_chart):
        empty = make(measurement, router)
        assert empty.layout.message == "One port: no pairs."
        assert empty.layout.plot_box is None and not empty.layout.series
        with pytest.raises(ValueError, match="no y axis"):
            empty.y_of(1.0)
        root, _ = svg_root(empty)
        assert "One port: no pairs." in texts(root)
        assert root.find(f"{SVG}desc").text.endswith("One port: no pairs.")


def test_perfect_matches_are_held_at_the_top_of_a_capped_axis(router):
    measurement = skrf_measurement("line.s2p", "MAIN", "DIV")  # |S11| = 0: 200 dB, sparams.DB_CAP
    drawing = return_loss_chart(measurement, router)
    assert drawing.layout.y.high == charts.Y_CAP_DB
    assert "Values above 60 dB are drawn at the top edge." in drawing.layout.description
    root, _ = svg_root(drawing)
    ys = {y for element in root.iter(f"{SVG}polyline") for _, y in polyline_points(element)}
    assert ys and all(y == pytest.approx(drawing.y_of(charts.Y_CAP_DB), abs=0.01) for y in ys)


# -- coverage -----------------------------------------------------------------------------------------------------------

COVERAGE_ROWS = [
    {"band": "B12", "range_one_km": 6.2, "range_two_km": 8.1, "area_share_pct": 58.6, "model": "ignored"},
    {"band": "B2", "range_one_km": 2.9, "range_two_km": 3.8, "area_share_pct": 57.9},
    {"band": "B4", "range_one_km": None, "range_two_km": None, "area_share_pct": 60.1},
    {"band": "B66", "range_one_km": 2.5, "range_two_km": 3.3, "area_share_pct": None},
]


def test_coverage_bars_reach_the_range_on_the_charts_own_axis():
    drawing = coverage_chart(COVERAGE_ROWS)
    _, bottom, _, top = drawing.layout.plot_box
    bars = {(bar.band, bar.rx_antennas): bar for bar in drawing.layout.bars}
    assert len(bars) == 8
    for row in COVERAGE_ROWS:
        for count, key in ((1, "range_one_km"), (2, "range_two_km")):
            bar = bars[row["band"], count]
            assert bar.range_km == row[key]
            expected_top = top if row[key] is None else drawing.y_of(row[key])
            assert bar.box[1] == pytest.approx(bottom) and bar.box[3] == pytest.approx(expected_top)
    assert bars["B12", 1].box[2] <= bars["B12", 2].box[0]  # one antenna left of two
    assert drawing.layout.y.low == 0 and drawing.layout.y.high >= 8.1
    root, _ = svg_root(drawing, id_prefix="coverage")
    shown = texts(root)
    assert {"6.2", "8.1", "area 59 %", "area 58 %", "area 60 %", "area n/a", "n/a"} <= set(shown)
    assert any("outside the path-loss model's validity" in line for line in shown)
    description = root.find(f"{SVG}desc").text
    assert "B12: 6.2 km with one, 8.1 km with two, one antenna covers 59 % of the two-antenna area" in description
    assert "B4: no range with one (outside the model's validity)" in description
    assert "B66: 2.5 km with one, 3.3 km with two, no area share" in description


def test_coverage_without_unknowns_has_no_hatching_note_and_rejects_bad_rows():
    drawing = coverage_chart(COVERAGE_ROWS[:2])
    root, _ = svg_root(drawing)
    assert not any("validity" in line for line in texts(root))
    with pytest.raises(ValueError, match="lacks range_two_km"):
        coverage_chart([{"band": "B2", "range_one_km": 1.0, "area_share_pct": 50.0}])
    with pytest.raises(ValueError, match="non-negative number"):
        coverage_chart([{"band": "B2", "range_one_km": -1.0, "range_two_km": 1.0, "area_share_pct": 50.0}])
    assert coverage_chart([]).layout.message == "No bands to chart."


def test_coverage_chart_takes_the_coverage_analysis_rows_as_they_are(router, router_measurement):
    coverage = pytest.importorskip("rules.coverage")
    rows = [analysis.as_dict() for analysis in coverage.analyse_coverage(router, [router_measurement])]
    drawing = coverage_chart(rows)
    bars = {(bar.band, bar.rx_antennas): bar.range_km for bar in drawing.layout.bars}
    assert bars == {(row["band"], count): row[key] for row in rows
                    for count, key in ((1, "range_one_km"), (2, "range_two_km"))}
    for row in rows:
        if row["area_share_pct"] is not None:
            assert f"one antenna covers {row['area_share_pct']:.0f} % of the two-antenna area" in (
                drawing.layout.description)


# -- PDF ----------------------------------------------------------------------------------------------------------------

def test_every_chart_renders_into_a_pdf(tmp_path, router, router_measurement):
    one_port = skrf_measurement("ring slot measured.s1p", "MAIN")
    drawings = [return_loss_chart(router_measurement, router), isolation_chart(router_measurement, router),
                correlation_chart(router_measurement, router), isolation_chart(one_port, router),
                return_loss_chart(long_sweep(), router), coverage_chart(COVERAGE_ROWS)]
    for index, drawing in enumerate(drawings):
        path = tmp_path / f"chart-{index}.pdf"
        renderPDF.drawToFile(drawing, str(path))
        assert path.read_bytes().startswith(b"%PDF")
    # And as flowables in a document, at a width that fits an A4 frame.
    path = tmp_path / "record.pdf"
    document = SimpleDocTemplate(str(path), pagesize=A4)
    frame_width_pt = document.width
    document.build([return_loss_chart(router_measurement, router, width_pt=frame_width_pt),
                    coverage_chart(COVERAGE_ROWS, width_pt=frame_width_pt)])
    assert path.read_bytes().startswith(b"%PDF")


def test_it_refuses_a_width_too_narrow_to_lay_out(router, router_measurement):
    with pytest.raises(ValueError, match="width_pt"):
        return_loss_chart(router_measurement, router, width_pt=100)
    with pytest.raises(ValueError, match="height_pt"):
        coverage_chart(COVERAGE_ROWS, height_pt=float("nan"))


# -- fit -----------------------------------------------------------------------------------------------------------------

def text_boxes(root: ET.Element, height_pt: float) -> list[tuple[str, tuple[float, float, float, float]]]:
    """Each text's box in drawing points (x from the left, y up), from its SVG position, size and weight."""
    boxes = []

    def walk(element: ET.Element, matrix: tuple[float, ...]) -> None:
        transform = element.get("transform", "") if element.tag == f"{SVG}g" else ""
        found = re.match(r"\s*matrix\(([^)]*)\)", transform)
        if found:
            matrix = tuple(float(value) for value in found.group(1).split(","))
        for child in element:
            if child.tag != f"{SVG}text":
                walk(child, matrix)
                continue
            text_style = style(child)
            size = float(text_style["font-size"].removesuffix("px"))
            font = "Helvetica-Bold" if text_style.get("font-weight") == "bold" else "Helvetica"
            x, y = float(child.get("x")), float(child.get("y"))
            width = stringWidth(child.text or "", font, size)
            corners = [(x, y - 0.22 * size), (x + width, y + 0.75 * size)]
            a, b, c, d, e, f = matrix
            points = [(a * px + c * py + e, b * px + d * py + f) for px, py in corners]
            xs, ys = [p[0] for p in points], [p[1] for p in points]
            boxes.append((child.text or "", (min(xs), min(ys), max(xs), max(ys))))

    walk(root, (1, 0, 0, 1, 0, 0))
    return boxes


@pytest.mark.parametrize("width_pt", [320, 460, 640, 1000])
def test_every_text_fits_inside_the_drawing_and_no_two_texts_overlap(router, router_measurement, width_pt):
    one_port = skrf_measurement("ring slot measured.s1p", "MAIN")
    many_rows = [{"band": f"B{number}", "range_one_km": 0.37 * number, "range_two_km": None if number == 5 else
                  0.5 * number, "area_share_pct": 55.0 + number} for number in (1, 2, 3, 4, 5, 7, 8, 12, 13, 20)]
    drawings = [
        return_loss_chart(router_measurement, router, width_pt=width_pt),
        return_loss_chart(router_measurement, crowded_design(), width_pt=width_pt, height_pt=200),
        isolation_chart(skrf_measurement("tee.s3p", "MAIN", "DIV", "AUX"), router, width_pt=width_pt),
        correlation_chart(router_measurement, router, width_pt=width_pt),
        isolation_chart(one_port, router, width_pt=width_pt),
        coverage_chart(COVERAGE_ROWS, width_pt=width_pt),
        coverage_chart(many_rows, width_pt=width_pt),
    ]
    for drawing in drawings:
        root, _ = svg_root(drawing)
        boxes = text_boxes(root, drawing.height)
        for text, (x0, y0, x1, y1) in boxes:
            assert 0 <= x0 and x1 <= drawing.width + 0.5 and 0 <= y0 and y1 <= drawing.height, (text, x0, x1)
        for (first, a), (second, b) in combinations(boxes, 2):
            assert not overlap(a, b), (drawing.layout.title, first, second)
