"""Charts of a measurement and of the coverage analysis: return loss per port, isolation and envelope
correlation per port pair against frequency, and the downlink range with one and two receive antennas.

Like the placement drawing, each chart is one reportlab `Drawing`: `chart_svg` turns it into an accessible
inline <svg> for the page and the PDF record places the same object, so the two never disagree. Every
plotted number comes from `rules` (`rules.sparams` through the measurement's cached arrays, the band edges
from `rules.catalog`, the ranges from `rules.coverage`); this module only lays them out.

Each drawing carries a `layout` telling where things went, and `x_of(mhz)` / `y_of(value)` give the
drawing point of a value on its axes, so tests check the picture against the numbers rather than pixels.
"""

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from itertools import combinations

import numpy as np
from reportlab.graphics.shapes import Circle, Drawing, Group, Line, PolyLine, Rect, String
from reportlab.lib import colors
from reportlab.lib.attrmap import AttrMap, AttrMapValue
from reportlab.lib.utils import simpleSplit
from reportlab.lib.validators import isAnything
from reportlab.pdfbase.pdfmetrics import stringWidth

from projectapp import palette
from projectapp.figures.placement import (
    FONT,
    FONT_BOLD,
    FONT_ITALIC,
    GRID,
    INK,
    MUTED,
    NO_FINDING_COLOUR,
    PLATE,
    SEVERITY_COLOURS,
    WHITE,
    _baseline,
    _fit_text,
    _nice_at_least,
    accessible_svg,
)
from rules import sparams
from rules.catalog import Band
from rules.context import merge_ranges, ranges_to_serve
from rules.design import Design
from rules.farfield import correlation_matrix, environment_text
from rules.measurements import LoadedMeasurement, LoadedPattern

ACCENT = colors.HexColor(palette.ACCENT)
NOTE = SEVERITY_COLOURS["note"]
OK = NO_FINDING_COLOUR

# Curves: colour and dash, so that two curves differ by more than hue alone (and survive greyscale print).
SERIES_STYLES: tuple[tuple[colors.Color, list[float] | None], ...] = (
    (NOTE, None),
    (ACCENT, [6.0, 1.6, 1.6, 1.6]),
    (INK, None),
    (OK, [6.0, 1.6, 1.6, 1.6]),
    (MUTED, None),
    (NOTE, [2.0, 1.6]),
    (ACCENT, None),
    (INK, [6.0, 1.6, 1.6, 1.6]),
)
THRESHOLD_DASH = [4.0, 2.5]
BAND_TINTS: Mapping[str, colors.Color] = {
    "UL": colors.Color(ACCENT.red, ACCENT.green, ACCENT.blue, alpha=palette.BAND_TINT_ALPHA["UL"]),
    "DL": colors.Color(NOTE.red, NOTE.green, NOTE.blue, alpha=palette.BAND_TINT_ALPHA["DL"]),
    "TDD": colors.Color(MUTED.red, MUTED.green, MUTED.blue, alpha=palette.BAND_TINT_ALPHA["TDD"]),
}
BAND_TEXT: Mapping[str, colors.Color] = {"UL": ACCENT, "DL": NOTE, "TDD": MUTED, "mixed": INK}
BAND_KIND_NAMES = {"UL": "uplink (UL) range", "DL": "downlink (DL) range", "TDD": "TDD band (UL = DL)"}
ONE_ANTENNA_FILL = colors.HexColor(palette.ONE_ANTENNA_FILL)  # MUTED lightened: the weaker case, drawn quieter
TWO_ANTENNA_FILL = ACCENT

MIN_WIDTH_PT = 320.0
MARGIN_PT = 12.0
TITLE_SIZE = 12.0
SUBTITLE_SIZE = 8.0
HEADER_PT = 34.0  # title and subtitle rows
LANE_PT = 10.0  # one row of band labels above the plot
MAX_LANES = 3
LABEL_GAP_PT = 4.0  # between two band labels in a row
BAND_LABEL_SIZE = 7.0
TICK_SIZE = 7.5
TICK_ROW_PT = 12.0
CAPTION_ROW_PT = 12.0
CAPTION_SIZE = 8.0
Y_CAPTION_PT = 14.0  # left of the tick labels: the rotated y caption
LEGEND_ROW_PT = 13.0
LEGEND_SIZE = 7.5
NOTE_ROW_PT = 10.5
NOTE_SIZE = 7.5
MIN_PLOT_HEIGHT_PT = 90.0
MIN_X_TICK_SPACING_PT = 54.0
MIN_Y_TICK_SPACING_PT = 20.0
MAX_POINTS_PER_CURVE = 1600  # twice the buckets: a minimum and a maximum from each
Y_CAP_DB = 60.0  # dB axes stop here: a perfect match (capped at sparams.DB_CAP, 200 dB) would flatten the rest
MESSAGE_HEIGHT_PT = 72.0
VALUE_ROW_PT = 14.0  # above the coverage plot: value labels over full-height (hatched) bars
VALUE_LABEL_SIZE = 7.0
BAR_GAP_PT = 3.0  # between the one- and two-antenna bars of a band


# -- the thresholds the rules judge by -------------------------------------------------------------------

@dataclass(frozen=True)
class Threshold:
    """A policy line: values on the `worse` side of `value` raise a finding of `severity`."""

    value: float
    severity: str  # "warning" or "blocker"
    worse: str  # "below" or "above"
    unit: str  # "dB" or "" for a ratio

    @property
    def label(self) -> str:
        return f"{self.severity} {self.worse} {self.value:g}{' ' + self.unit if self.unit else ''}"

    def crossed_by(self, value: float) -> bool:
        return value < self.value if self.worse == "below" else value > self.value


# The same numbers as rules/checks/measured.py: MAT-001, ISO-001 and ECC-001 (tests/web/test_charts.py runs
# the rules on either side of each line to keep the two in step). Worst first.
RETURN_LOSS_THRESHOLDS_DB = (Threshold(3.5, "blocker", "below", "dB"), Threshold(6.0, "warning", "below", "dB"))
ISOLATION_THRESHOLDS_DB = (Threshold(6.0, "blocker", "below", "dB"), Threshold(10.0, "warning", "below", "dB"))
ECC_THRESHOLDS = (Threshold(0.7, "blocker", "above", ""), Threshold(0.5, "warning", "above", ""))


def _verdict(thresholds: Sequence[Threshold], value: float) -> str:
    return next((threshold.severity for threshold in thresholds if threshold.crossed_by(value)), "passes")


# -- what a chart shows and where -------------------------------------------------------------------------

Box = tuple[float, float, float, float]  # x0, y0, x1, y1 in drawing points


@dataclass(frozen=True)
class Axis:
    """A linear axis: `low`..`high` (in the axis unit) drawn from `start_pt` to `end_pt`."""

    low: float
    high: float
    start_pt: float
    end_pt: float
    ticks: tuple[float, ...]

    def pt(self, value: float) -> float:
        return self.start_pt + (value - self.low) * (self.end_pt - self.start_pt) / (self.high - self.low)

    def clamped_pt(self, value: float) -> float:
        return self.pt(min(max(value, self.low), self.high))


@dataclass(frozen=True, eq=False)
class Series:
    label: str
    colour: colors.Color
    dash: list[float] | None
    frequencies_mhz: np.ndarray  # the points drawn, after decimation
    values: np.ndarray  # their values, before clamping to the axis
    sweep_points: int  # points in the measurement


@dataclass(frozen=True)
class BandSpan:
    band: str
    kind: str  # "UL", "DL" or "TDD"
    low_mhz: float  # the catalog's edges (rules.catalog, TS 36.101 / TS 38.101-1)
    high_mhz: float
    drawn_box: Box | None  # the shaded rectangle, clipped to the sweep; None when outside it


@dataclass(frozen=True)
class BandLabel:
    text: str
    kind: str  # "UL", "DL", "TDD", or "mixed" when ranges of different kinds share the label
    lane: int  # 0 is the row nearest the plot
    box: Box


@dataclass(frozen=True)
class Bar:
    band: str
    rx_antennas: int
    range_km: float | None  # None: outside the model's validity, drawn hatched
    box: Box


@dataclass(frozen=True)
class ChartLayout:
    title: str
    description: str
    plot_box: Box | None  # None for a chart that only carries a message
    x: Axis | None = None
    y: Axis | None = None
    series: tuple[Series, ...] = ()
    thresholds: tuple[Threshold, ...] = ()
    band_spans: tuple[BandSpan, ...] = ()
    band_labels: tuple[BandLabel, ...] = ()
    bars: tuple[Bar, ...] = ()
    message: str | None = None


class ChartDrawing(Drawing):
    """A reportlab Drawing (so also a platypus Flowable) that carries its `layout` and its axis mapping."""

    _attrMap = AttrMap(BASE=Drawing, layout=AttrMapValue(isAnything, desc="the ChartLayout drawn"))

    @property
    def chart_title(self) -> str:
        return self.layout.title

    @property
    def chart_description(self) -> str:
        return self.layout.description

    def x_of(self, value: float) -> float:
        """Drawing x of a frequency in MHz (the frequency charts; the coverage chart's bars are in `layout.bars`)."""
        if self.layout.x is None:
            raise ValueError("this chart has no x axis")
        return self.layout.x.pt(value)

    def y_of(self, value: float) -> float:
        """Drawing y of a value on the chart's y axis (dB, correlation, or km)."""
        if self.layout.y is None:
            raise ValueError("this chart has no y axis")
        return self.layout.y.pt(value)


# -- small helpers ------------------------------------------------------------------------------------------

def min_max_indices(values: np.ndarray, max_points: int = MAX_POINTS_PER_CURVE) -> np.ndarray:
    """Indices of the points to draw of a long curve: the sweep cut into max_points / 2 buckets of
    consecutive points, and from each the lowest and the highest (NaN never chosen over a number).
    Every local extreme a bucket holds stays, so the global minimum and maximum are drawn exactly.
    A curve of max_points or fewer comes back whole."""
    count = int(values.shape[0])
    if count <= max_points:
        return np.arange(count)
    buckets = max(1, max_points // 2)
    bucket = (np.arange(count) * buckets) // count  # non-decreasing, every bucket non-empty
    starts = np.flatnonzero(np.r_[True, bucket[1:] != bucket[:-1]])
    ends = np.r_[starts[1:], count] - 1
    low_first = np.lexsort((np.where(np.isnan(values), np.inf, values), bucket))
    high_last = np.lexsort((np.where(np.isnan(values), -np.inf, values), bucket))
    return np.unique(np.concatenate([low_first[starts], high_last[ends]]))


def _ticks(low: float, high: float, step: float) -> tuple[float, ...]:
    first = math.ceil(low / step - 1e-9)
    last = math.floor(high / step + 1e-9)
    return tuple(round(index * step, 10) + 0.0 for index in range(first, last + 1))


def _number_text(value: float) -> str:
    return f"{round(value, 6) + 0.0:g}"


def _km_text(value_km: float) -> str:
    if value_km < 1:
        return f"{value_km:.2f}"
    return f"{value_km:.1f}" if value_km < 100 else f"{value_km:.0f}"


def _served_mhz(design: Design, antenna_name: str, band: Band) -> list[tuple[float, float]]:
    """What an antenna must work over in a band (rules.context); an antenna the design doesn't name
    is judged over both directions."""
    antenna = next((antenna for antenna in design.antennas if antenna.name == antenna_name), None)
    if antenna is None:
        return merge_ranges(list(band.ranges_mhz))
    return ranges_to_serve(antenna, band)


def _string(group: Group, x: float, y: float, text: str, *, font: str = FONT, size: float = 8.0,
            colour: colors.Color = INK, anchor: str = "start") -> None:
    group.add(String(x, _baseline(y), text, fontName=font, fontSize=size, fillColor=colour, textAnchor=anchor))


def _header(group: Group, width_pt: float, top: float, title: str, subtitle: str) -> None:
    room = width_pt - 2 * MARGIN_PT
    _string(group, MARGIN_PT, top - 12, _fit_text(title, FONT_BOLD, TITLE_SIZE, room), font=FONT_BOLD,
            size=TITLE_SIZE)
    _string(group, MARGIN_PT, top - 25, _fit_text(subtitle, FONT, SUBTITLE_SIZE, room), size=SUBTITLE_SIZE,
            colour=MUTED)


@dataclass(frozen=True)
class _LegendEntry:
    text: str
    swatch: Callable[[Group, float, float], None]  # draws centred vertically on y, from x, 16 pt wide

    @property
    def width(self) -> float:
        return 22.0 + stringWidth(self.text, FONT, LEGEND_SIZE) + 14.0


def _line_swatch(colour: colors.Color, dash: list[float] | None, width: float = 1.4):
    def draw(group: Group, x: float, y: float) -> None:
        group.add(Line(x, y, x + 16, y, strokeColor=colour, strokeWidth=width, strokeDashArray=dash))
    return draw


def _box_swatch(fill: colors.Color, stroke: colors.Color | None = None, hatched: bool = False):
    def draw(group: Group, x: float, y: float) -> None:
        group.add(Rect(x, y - 4, 16, 8, fillColor=fill, strokeColor=stroke, strokeWidth=0.6 if stroke else 0))
        if hatched:
            _hatch(group, (x, y - 4, x + 16, y + 4), 3.0)
    return draw


def _legend_rows(entries: Sequence[_LegendEntry], width_pt: float) -> list[list[_LegendEntry]]:
    rows: list[list[_LegendEntry]] = [[]]
    used = 0.0
    room = width_pt - 2 * MARGIN_PT
    for entry in entries:
        if rows[-1] and used + entry.width > room:
            rows.append([])
            used = 0.0
        rows[-1].append(entry)
        used += entry.width
    return [row for row in rows if row]


def _draw_legend(group: Group, rows: Sequence[Sequence[_LegendEntry]], top: float, width_pt: float) -> None:
    room = width_pt - 2 * MARGIN_PT
    for row in rows:
        x = MARGIN_PT
        centre = top - LEGEND_ROW_PT / 2
        for entry in row:
            entry.swatch(group, x, centre)
            text = _fit_text(entry.text, FONT, LEGEND_SIZE, max(10.0, room - (x - MARGIN_PT) - 22))
            _string(group, x + 20, centre - 2.6, text, size=LEGEND_SIZE)
            x += entry.width
        top -= LEGEND_ROW_PT


def _hatch(group: Group, box: Box, spacing_pt: float, colour: colors.Color = MUTED) -> None:
    """45-degree lines clipped to the box (no clip paths: they differ between the SVG and PDF renderers)."""
    x0, y0, x1, y1 = box
    width, height = x1 - x0, y1 - y0
    offset = spacing_pt
    while offset < width + height:
        # the line x - x0 + (y - y0) = offset, clipped to the box
        start = (x0 + min(offset, width), y0 + max(0.0, offset - width))
        end = (x0 + max(0.0, offset - height), y0 + min(offset, height))
        group.add(Line(start[0], start[1], end[0], end[1], strokeColor=colour, strokeWidth=0.5))
        offset += spacing_pt


def _y_caption(group: Group, x: float, y: float, text: str) -> None:
    """The y axis caption, read bottom to top, centred on (x, y)."""
    caption = Group(transform=(0, 1, -1, 0, x, y))
    caption.add(String(0, 0, text, fontName=FONT, fontSize=CAPTION_SIZE, fillColor=INK, textAnchor="middle"))
    group.add(caption)


def _notes(text: str | None, width_pt: float) -> list[str]:
    return simpleSplit(text, FONT_ITALIC, NOTE_SIZE, width_pt - 2 * MARGIN_PT) if text else []


# -- a chart that only says something ---------------------------------------------------------------------

def _message_chart(title: str, subtitle: str, message: str, description: str, width_pt: float) -> ChartDrawing:
    lines = simpleSplit(message, FONT_ITALIC, 9, width_pt - 2 * MARGIN_PT)
    height_pt = math.ceil(MESSAGE_HEIGHT_PT + 12 * (len(lines) - 1))
    drawing = ChartDrawing(width_pt, height_pt)
    group = Group()
    top = height_pt - MARGIN_PT
    _header(group, width_pt, top, title, subtitle)
    y = top - HEADER_PT - 10
    for line in lines:
        _string(group, MARGIN_PT, y, line, font=FONT_ITALIC, size=9, colour=MUTED)
        y -= 12
    drawing.add(group)
    drawing.layout = ChartLayout(title=title, description=description, plot_box=None, message=message)
    return drawing


# -- frequency charts ----------------------------------------------------------------------------------------

@dataclass(frozen=True)
class _Curve:
    label: str
    values: np.ndarray  # over the whole sweep


def _band_spans(design: Design) -> list[tuple[str, str, float, float]]:
    spans = []
    for band in design.modem.bands:
        if band.ul_mhz is None:
            spans.append((band.name, "DL", *band.dl_mhz))
        elif band.ul_mhz == band.dl_mhz:
            spans.append((band.name, "TDD", *band.dl_mhz))
        else:
            spans.append((band.name, "UL", *band.ul_mhz))
            spans.append((band.name, "DL", *band.dl_mhz))
    return spans


@dataclass(frozen=True)
class _Cluster:
    """Band ranges that share one label, clipped to the sweep."""

    names: tuple[str, ...]
    kinds: tuple[str, ...]
    low_mhz: float
    high_mhz: float

    @property
    def kind(self) -> str:
        return self.kinds[0] if len(self.kinds) == 1 else "mixed"

    @property
    def text(self) -> str:
        numbers = sorted(self.names, key=lambda name: (name[0], int(name[1:])))
        return "/".join(numbers) + (f" {self.kind}" if self.kind != "mixed" else "")

    def merged(self, other: "_Cluster") -> "_Cluster":
        return _Cluster(tuple(dict.fromkeys(self.names + other.names)), tuple(dict.fromkeys(self.kinds + other.kinds)),
                        min(self.low_mhz, other.low_mhz), max(self.high_mhz, other.high_mhz))

    @property
    def centre_mhz(self) -> float:
        return (self.low_mhz + self.high_mhz) / 2


def _band_clusters(spans: Sequence[tuple[str, str, float, float]], low_mhz: float,
                   high_mhz: float) -> list[_Cluster]:
    """One label per run of overlapping or touching ranges of one kind (B4 and B66 uplink share one
    label), only for runs that reach into the sweep, in order of their centres."""
    clusters: list[_Cluster] = []
    for kind in ("UL", "DL", "TDD"):
        runs: list[_Cluster] = []
        for name, _, low, high in sorted((s for s in spans if s[1] == kind), key=lambda s: (s[2], s[3])):
            cluster = _Cluster((name,), (kind,), low, high)
            if runs and low <= runs[-1].high_mhz:
                runs[-1] = runs[-1].merged(cluster)
            else:
                runs.append(cluster)
        clusters += [_Cluster(run.names, run.kinds, max(run.low_mhz, low_mhz), min(run.high_mhz, high_mhz))
                     for run in runs if not (run.high_mhz < low_mhz or run.low_mhz > high_mhz)]
    return sorted(clusters, key=lambda cluster: cluster.centre_mhz)


def _lanes_for(clusters: Sequence[_Cluster], x: Axis,
               plot_box: Box) -> tuple[list[tuple[_Cluster, str, int, float, float]], int | None]:
    """Greedy rows: each label takes the lowest row where it clears the labels before it by a few points.
    Returns the placements and, if some label found no room in MAX_LANES rows, its index."""
    placed: list[tuple[_Cluster, str, int, float, float]] = []
    lane_right: list[float] = []
    room = plot_box[2] - plot_box[0]
    for index, cluster in enumerate(clusters):
        text = _fit_text(cluster.text, FONT_BOLD, BAND_LABEL_SIZE, room)
        width = stringWidth(text, FONT_BOLD, BAND_LABEL_SIZE)
        centre = (x.pt(cluster.low_mhz) + x.pt(cluster.high_mhz)) / 2
        left = min(max(centre - width / 2, plot_box[0]), plot_box[2] - width)
        lane = next((row for row, right in enumerate(lane_right) if right + LABEL_GAP_PT <= left), None)
        if lane is None:
            if len(lane_right) == MAX_LANES:
                return placed, index
            lane_right.append(-math.inf)
            lane = len(lane_right) - 1
        lane_right[lane] = left + width
        placed.append((cluster, text, lane, left, left + width))
    return placed, None


def _assign_lanes(clusters: Sequence[_Cluster], x: Axis, plot_box: Box) -> list[tuple[_Cluster, str, int, float, float]]:
    """Band labels in at most MAX_LANES rows without overlap: while one finds no room, it merges with
    its nearer neighbour (one label for both, band names only when the kinds differ) and all are placed
    again. A single label always fits (cut to the plot's width), so this ends."""
    current = list(clusters)
    while True:
        placed, stuck = _lanes_for(current, x, plot_box)
        if stuck is None:
            return placed
        neighbours = [index for index in (stuck - 1, stuck + 1) if 0 <= index < len(current)]
        other = min(neighbours, key=lambda index: abs(current[index].centre_mhz - current[stuck].centre_mhz))
        first, second = sorted((stuck, other))
        current[first:second + 1] = [current[first].merged(current[second])]


def _y_axis(values: Sequence[np.ndarray], thresholds: Sequence[Threshold], fixed: tuple[float, float] | None,
            bottom_pt: float, top_pt: float) -> tuple[Axis, bool]:
    """The y axis and whether any value lies above its top (drawn at the top edge)."""
    height_pt = top_pt - bottom_pt
    finite = [array[np.isfinite(array)] for array in values]
    finite = [array for array in finite if array.size]
    data_low = min((float(array.min()) for array in finite), default=0.0)
    data_high = max((float(array.max()) for array in finite), default=0.0)
    if fixed is not None:
        low, high = fixed
        step = _nice_at_least((high - low) / max(2, math.floor(height_pt / MIN_Y_TICK_SPACING_PT)))
    else:
        low = max(min(0.0, data_low), -sparams.DB_CAP)
        high = max(min(data_high, Y_CAP_DB), 1.5 * max(threshold.value for threshold in thresholds))
        step = _nice_at_least((high - low) / max(2, math.floor(height_pt / MIN_Y_TICK_SPACING_PT)))
        low = math.floor(low / step + 1e-9) * step
        high = math.ceil(high / step - 1e-9) * step
    axis = Axis(low, high, bottom_pt, top_pt, _ticks(low, high, step))
    return axis, data_high > high


def _x_axis(low_mhz: float, high_mhz: float, left_pt: float, right_pt: float) -> Axis:
    if high_mhz <= low_mhz:  # a single frequency: a little room either side
        pad = max(abs(low_mhz) * 0.01, 1.0)
        low_mhz, high_mhz = low_mhz - pad, high_mhz + pad
    step = _nice_at_least((high_mhz - low_mhz) * MIN_X_TICK_SPACING_PT / (right_pt - left_pt))
    return Axis(low_mhz, high_mhz, left_pt, right_pt, _ticks(low_mhz, high_mhz, step))


def _frequency_chart(*, frequencies_mhz: np.ndarray, design: Design, title: str, subtitle: str,
                     y_caption: str, curves: Sequence[_Curve], thresholds: Sequence[Threshold],
                     fixed_y: tuple[float, float] | None, value_format: Callable[[float], str],
                     description: Callable[[bool, float], str], width_pt: float, height_pt: float,
                     markers: bool = False, x_range_mhz: tuple[float, float] | None = None) -> ChartDrawing:
    """`markers`: a dot at every point, for data at a few frequencies (far-field patterns); `x_range_mhz`: the
    frequency axis, when it should reach beyond the data (to show the bands the points fall in)."""
    low_mhz, high_mhz = x_range_mhz or (float(frequencies_mhz[0]), float(frequencies_mhz[-1]))
    spans = _band_spans(design)
    outside = sorted({name for name, _, low, high in spans if high < low_mhz or low > high_mhz},
                     key=[band.name for band in design.modem.bands].index)
    note = (f"Not in the measured {_number_text(low_mhz)}–{_number_text(high_mhz)} MHz, so not shaded: "
            + ", ".join(outside) + ".") if outside else None

    styles = [SERIES_STYLES[index % len(SERIES_STYLES)] for index in range(len(curves))]
    entries = [_LegendEntry(curve.label, _line_swatch(colour, dash)) for curve, (colour, dash) in zip(curves, styles,
                                                                                                       strict=True)]
    entries += [_LegendEntry(threshold.label, _line_swatch(SEVERITY_COLOURS[threshold.severity], THRESHOLD_DASH,
                                                           1.1))
                for threshold in sorted(thresholds, key=lambda threshold: threshold.severity != "warning")]
    kinds = [kind for kind in ("UL", "DL", "TDD")
             if any(span[1] == kind and not (span[3] < low_mhz or span[2] > high_mhz) for span in spans)]
    entries += [_LegendEntry(BAND_KIND_NAMES[kind], _box_swatch(BAND_TINTS[kind])) for kind in kinds]
    legend = _legend_rows(entries, width_pt)
    note_lines = _notes(note, width_pt)

    # Vertical budget: header, band label rows, the plot, tick and caption rows, legend, notes.
    clusters = _band_clusters(spans, low_mhz, high_mhz)
    bottom_rows_pt = (TICK_ROW_PT + CAPTION_ROW_PT + len(legend) * LEGEND_ROW_PT + len(note_lines) * NOTE_ROW_PT
                      + MARGIN_PT - 2)
    lanes_pt = (MAX_LANES if clusters else 0) * LANE_PT + 4  # shrunk to the rows used below
    fixed_pt = MARGIN_PT + HEADER_PT + lanes_pt + bottom_rows_pt
    height_pt = float(math.ceil(max(height_pt, fixed_pt + MIN_PLOT_HEIGHT_PT)))

    # The y axis first (its tick labels set the left gutter), then x, then the band labels' rows.
    # Until the rows are known the plot is as short as MAX_LANES rows would make it; fewer rows hand the
    # spare height back to the plot, which only ever grows, so the y ticks still fit.
    plot_bottom = bottom_rows_pt + 2
    plot_top_max = height_pt - MARGIN_PT - HEADER_PT - 4

    def layout_axes(plot_top: float) -> tuple[Axis, bool, Axis, Box]:
        y_axis, clipped = _y_axis([curve.values for curve in curves], thresholds, fixed_y, plot_bottom, plot_top)
        tick_width = max((stringWidth(value_format(tick), FONT, TICK_SIZE) for tick in y_axis.ticks), default=10)
        plot_left = MARGIN_PT + Y_CAPTION_PT + tick_width + 6
        plot_right = width_pt - MARGIN_PT - 6
        x_axis = _x_axis(low_mhz, high_mhz, plot_left, plot_right)
        return y_axis, clipped, x_axis, (plot_left, plot_bottom, plot_right, plot_top)

    # The rows the labels need depend (slightly) on the x axis, which depends on the y ticks' width, which
    # depends on the plot's height: settle on a row count that holds, starting from the most.
    reserved = MAX_LANES if clusters else 0
    tried: set[int] = set()
    while True:
        tried.add(reserved)
        y_axis, clipped, x_axis, plot_box = layout_axes(plot_top_max - reserved * LANE_PT)
        lanes = _assign_lanes(clusters, x_axis, plot_box)
        used = max((lane for _, _, lane, _, _ in lanes), default=-1) + 1
        if used <= reserved and (used == reserved or used in tried):
            break
        reserved = used if used not in tried else MAX_LANES
    plot_left, plot_bottom, plot_right, plot_top = plot_box

    drawing = ChartDrawing(width_pt, height_pt)
    group = Group()
    top = height_pt - MARGIN_PT
    _header(group, width_pt, top, title, subtitle)

    # Bands: shaded behind everything, labelled in rows above the plot.
    band_spans = []
    for name, kind, low, high in spans:
        box = None
        if not (high < low_mhz or low > high_mhz):
            x0, x1 = x_axis.clamped_pt(low), x_axis.clamped_pt(high)
            box = (x0, plot_bottom, x1, plot_top)
            group.add(Rect(x0, plot_bottom, x1 - x0, plot_top - plot_bottom, fillColor=BAND_TINTS[kind],
                           strokeColor=None, strokeWidth=0))
        band_spans.append(BandSpan(name, kind, low, high, box))
    band_labels = []
    for cluster, text, lane, x0, x1 in lanes:
        baseline = plot_top + 3 + lane * LANE_PT
        _string(group, x0, baseline, text, font=FONT_BOLD, size=BAND_LABEL_SIZE, colour=BAND_TEXT[cluster.kind])
        band_labels.append(BandLabel(text, cluster.kind, lane, (x0, baseline - 1.5, x1, baseline + BAND_LABEL_SIZE)))

    # Grid, ticks and captions.
    for tick in y_axis.ticks:
        y = y_axis.pt(tick)
        group.add(Line(plot_left, y, plot_right, y, strokeColor=INK if tick == 0 and y_axis.low < 0 else GRID,
                       strokeWidth=0.5))
        _string(group, plot_left - 4, y - 2.6, value_format(tick), size=TICK_SIZE, anchor="end")
    for tick in x_axis.ticks:
        x = x_axis.pt(tick)
        group.add(Line(x, plot_bottom, x, plot_top, strokeColor=GRID, strokeWidth=0.5))
        group.add(Line(x, plot_bottom - 3, x, plot_bottom, strokeColor=INK, strokeWidth=0.6))
        _string(group, x, plot_bottom - 3 - TICK_SIZE - 1, _number_text(tick), size=TICK_SIZE, anchor="middle")
    group.add(Rect(plot_left, plot_bottom, plot_right - plot_left, plot_top - plot_bottom, fillColor=None,
                   strokeColor=MUTED, strokeWidth=0.7))
    _string(group, (plot_left + plot_right) / 2, plot_bottom - TICK_ROW_PT - CAPTION_ROW_PT + 2.5,
            "frequency (MHz)", size=CAPTION_SIZE, anchor="middle")
    _y_caption(group, MARGIN_PT + CAPTION_SIZE - 1, (plot_bottom + plot_top) / 2, y_caption)

    # Curves, decimated; values beyond the axis are held at its edge, NaN breaks the line.
    series = []
    for curve, (colour, dash) in zip(curves, styles, strict=True):
        keep = min_max_indices(curve.values)
        drawn_mhz, drawn = frequencies_mhz[keep], curve.values[keep]
        run: list[float] = []
        for frequency_mhz, value in zip(drawn_mhz.tolist(), drawn.tolist(), strict=True):
            if math.isnan(value):
                _polyline(group, run, colour, dash)
                run = []
                continue
            run += [round(x_axis.pt(frequency_mhz), 2), round(y_axis.clamped_pt(value), 2)]  # 0.01 pt: finer than print
            if markers:
                group.add(Circle(run[-2], run[-1], 2.6, fillColor=colour, strokeColor=WHITE, strokeWidth=0.6))
        _polyline(group, run, colour, dash)
        series.append(Series(curve.label, colour, dash, drawn_mhz, drawn, int(curve.values.shape[0])))

    # Thresholds over the curves, each labelled at the right on a plate: the lowest below its line, the
    # others above theirs, so two lines close together keep their labels apart.
    lowest = min(thresholds, key=lambda threshold: threshold.value)
    for threshold in thresholds:
        y = y_axis.pt(threshold.value)
        colour = SEVERITY_COLOURS[threshold.severity]
        group.add(Line(plot_left, y, plot_right, y, strokeColor=colour, strokeWidth=1.1,
                       strokeDashArray=THRESHOLD_DASH))
        text_width = stringWidth(threshold.label, FONT_BOLD, 7)
        box_bottom = y - 11 if threshold is lowest else y + 2
        x0 = plot_right - 4 - text_width - 5
        group.add(Rect(x0, box_bottom, text_width + 5, 9, rx=1.5, ry=1.5, fillColor=PLATE, strokeColor=None,
                       strokeWidth=0))
        _string(group, x0 + 2.5, box_bottom + 2, threshold.label, font=FONT_BOLD, size=7, colour=colour)

    top = plot_bottom - TICK_ROW_PT - CAPTION_ROW_PT
    _draw_legend(group, legend, top, width_pt)
    top -= len(legend) * LEGEND_ROW_PT
    for line in note_lines:
        _string(group, MARGIN_PT, top - 8, line, font=FONT_ITALIC, size=NOTE_SIZE, colour=MUTED)
        top -= NOTE_ROW_PT
    drawing.add(group)

    drawing.layout = ChartLayout(
        title=title, description=description(clipped, y_axis.high), plot_box=plot_box, x=x_axis, y=y_axis,
        series=tuple(series), thresholds=tuple(thresholds), band_spans=tuple(band_spans),
        band_labels=tuple(band_labels),
    )
    return drawing


def _polyline(group: Group, points: list[float], colour: colors.Color, dash: list[float] | None) -> None:
    if len(points) >= 4:
        group.add(PolyLine(points, strokeColor=colour, strokeWidth=1.3, strokeDashArray=dash,
                           strokeLineJoin=1, strokeLineCap=1))
    elif len(points) == 2:  # a lone point between gaps
        group.add(Line(points[0] - 1, points[1], points[0] + 1, points[1], strokeColor=colour, strokeWidth=1.3))


def _check_width(width_pt: float, height_pt: float) -> None:
    if not (math.isfinite(width_pt) and width_pt >= MIN_WIDTH_PT):
        raise ValueError(f"width_pt must be at least {MIN_WIDTH_PT:g}, got {width_pt!r}")
    if not (math.isfinite(height_pt) and height_pt > 0):
        raise ValueError(f"height_pt must be a positive number, got {height_pt!r}")


def _sweep_text(measurement: LoadedMeasurement) -> str:
    frequencies_mhz = measurement.network.frequencies_mhz
    return (f"{_number_text(float(frequencies_mhz[0]))}–{_number_text(float(frequencies_mhz[-1]))} MHz, "
            f"{frequencies_mhz.shape[0]} points")


def _worst_per_band(measurement: LoadedMeasurement, values: np.ndarray, ranges_by_band: Sequence[tuple[str, list]],
                    largest: bool, value_text: Callable[[float], str], thresholds: Sequence[Threshold]) -> str:
    """'B12 4.2 dB at 716 MHz, warning; B13 not measured' from rules.sparams' own worst-case search."""
    network = measurement.network
    parts = []
    for band_name, ranges_mhz in ranges_by_band:
        window = sparams.band_window(network, ranges_mhz)
        pick = sparams.worst_maximum if largest else sparams.worst_minimum
        worst = pick(values, network.frequencies_mhz, window.mask)
        if worst is None:
            parts.append(f"{band_name} not measured")
            continue
        text = (f"{band_name} {value_text(worst.value)} at {_number_text(worst.frequency_mhz)} MHz, "
                f"{_verdict(thresholds, worst.value)}")
        if not window.covered:
            text += " (partly outside the sweep)"
        parts.append(text)
    return "; ".join(parts)


def _mapped_ports(measurement: LoadedMeasurement) -> list[tuple[int, str]]:
    return [(index, name) for index, name in enumerate(measurement.ports) if name is not None]


def _thresholds_sentence(thresholds: Sequence[Threshold]) -> str:
    return "Dashed lines mark the review thresholds: " + ", ".join(
        threshold.label for threshold in sorted(thresholds, key=lambda threshold: threshold.severity != "warning")
    ) + "."


def _bands_sentence(design: Design, measurement: LoadedMeasurement) -> str:
    frequencies_mhz = measurement.network.frequencies_mhz
    shown = [band for band in design.modem.bands
             if band.highest_mhz >= frequencies_mhz[0] and band.lowest_mhz <= frequencies_mhz[-1]]
    if not shown:
        return "None of the design's bands lies in the measured range."
    sources = " and ".join(dict.fromkeys(band.reference for band in shown))
    return (f"Shaded: the design's bands with their edges from {sources}: " + "; ".join(
        f"{band.name} UL {_number_text(band.ul_mhz[0])}–{_number_text(band.ul_mhz[1])} MHz, "
        f"DL {_number_text(band.dl_mhz[0])}–{_number_text(band.dl_mhz[1])} MHz"
        if band.ul_mhz is not None and band.ul_mhz != band.dl_mhz
        else f"{band.name} {_number_text(band.dl_mhz[0])}–{_number_text(band.dl_mhz[1])} MHz "
             f"({'TDD' if band.ul_mhz else 'downlink only'})"
        for band in shown) + ".")


def _clipped_sentence(clipped: bool, axis_top: float, unit: str) -> str:
    return f" Values above {_number_text(axis_top)} {unit} are drawn at the top edge." if clipped else ""


def return_loss_chart(measurement: LoadedMeasurement, design: Design, *, width_pt: float = 640,
                      height_pt: float = 260) -> ChartDrawing:
    """Return loss of each port tied to an antenna, in dB (higher is better), against frequency, over the
    design's bands, with the MAT-001 thresholds. A file with no port tied to an antenna gets a drawing
    that says so."""
    _check_width(width_pt, height_pt)
    title = f"Return loss — {measurement.file}"
    subtitle = f"{_product(design)} · {_sweep_text(measurement)}"
    ports = _mapped_ports(measurement)
    if not ports:
        message = "No port of this file is tied to an antenna: nothing to chart."
        return _message_chart(title, subtitle, message, f"{title}. {message}", float(width_pt))
    return_loss = measurement.return_loss_db
    curves = []
    for index, name in ports:
        antenna = next((antenna for antenna in design.antennas if antenna.name == name), None)
        receive_only = antenna is not None and not antenna.transmits
        curves.append(_Curve(f"{name} · port {index + 1}" + (" · judged on DL" if receive_only else ""),
                             return_loss[:, index]))

    def describe(clipped: bool, axis_top: float) -> str:
        worst = " ".join(
            f"{name} (port {index + 1}): " + _worst_per_band(
                measurement, return_loss[:, index],
                [(band.name, _served_mhz(design, name, band)) for band in design.modem.bands],
                largest=False, value_text=lambda value: f"{value:.1f} dB", thresholds=RETURN_LOSS_THRESHOLDS_DB,
            ) + "." for index, name in ports)
        return (f"Return loss in dB (higher is better) of each antenna port in {measurement.file} against "
                f"frequency, {_sweep_text(measurement)}. {_thresholds_sentence(RETURN_LOSS_THRESHOLDS_DB)} "
                f"{_bands_sentence(design, measurement)} Worst return loss in each band over the ranges the "
                f"antenna serves (uplink and downlink for a main antenna, downlink for a receive one): {worst}"
                + _clipped_sentence(clipped, axis_top, "dB"))

    return _frequency_chart(
        frequencies_mhz=measurement.network.frequencies_mhz, design=design, title=title, subtitle=subtitle,
        y_caption="return loss (dB), higher is better", curves=curves, thresholds=RETURN_LOSS_THRESHOLDS_DB,
        fixed_y=None, value_format=_number_text, description=describe, width_pt=float(width_pt),
        height_pt=float(height_pt),
    )


def _pair_chart(measurement: LoadedMeasurement, design: Design, *, quantity: str, y_caption: str, scale_text: str,
                thresholds: Sequence[Threshold], fixed_y: tuple[float, float] | None,
                values_of: Callable[[int, int], np.ndarray], largest: bool, value_text: Callable[[float], str],
                unit: str, width_pt: float, height_pt: float) -> ChartDrawing:
    _check_width(width_pt, height_pt)
    title = f"{quantity.capitalize()} — {measurement.file}"
    subtitle = f"{_product(design)} · {_sweep_text(measurement)}"
    ports = _mapped_ports(measurement)
    if len(ports) < 2:
        message = ("One port: no pairs." if measurement.network.port_count == 1
                   else "Fewer than two ports are tied to antennas: no pairs.")
        return _message_chart(title, subtitle, message, f"{title}. {message}", width_pt)
    pairs = list(combinations(ports, 2))
    curves = [_Curve(f"{first}–{second} · ports {i + 1}–{j + 1}", values_of(i, j))
              for (i, first), (j, second) in pairs]

    def describe(clipped: bool, axis_top: float) -> str:
        worst = " ".join(
            f"{first}–{second} (ports {i + 1}–{j + 1}): " + _worst_per_band(
                measurement, values_of(i, j),
                [(band.name, merge_ranges(_served_mhz(design, first, band) + _served_mhz(design, second, band)))
                 for band in design.modem.bands],
                largest=largest, value_text=value_text, thresholds=thresholds,
            ) + "." for (i, first), (j, second) in pairs)
        return (f"{quantity.capitalize()} ({scale_text}) of each pair of antenna ports in {measurement.file} "
                f"against frequency, {_sweep_text(measurement)}. {_thresholds_sentence(thresholds)} "
                f"{_bands_sentence(design, measurement)} Worst {quantity} in each band over the ranges either "
                f"antenna serves: {worst}" + _clipped_sentence(clipped, axis_top, unit))

    return _frequency_chart(
        frequencies_mhz=measurement.network.frequencies_mhz, design=design, title=title, subtitle=subtitle, y_caption=y_caption,
        curves=curves, thresholds=thresholds, fixed_y=fixed_y,
        value_format=_number_text if fixed_y is None else (lambda value: f"{value:.1f}"),
        description=describe, width_pt=width_pt, height_pt=height_pt,
    )


def isolation_chart(measurement: LoadedMeasurement, design: Design, *, width_pt: float = 640,
                    height_pt: float = 260) -> ChartDrawing:
    """Isolation of each pair of ports tied to antennas, in dB (higher is better), with the ISO-001
    thresholds. Fewer than two such ports: a drawing that says there are no pairs."""
    return _pair_chart(measurement, design, quantity="isolation", y_caption="isolation (dB), higher is better",
                       scale_text="in dB, higher is better",
                       thresholds=ISOLATION_THRESHOLDS_DB, fixed_y=None, values_of=measurement.isolation_db,
                       largest=False, value_text=lambda value: f"{value:.1f} dB", unit="dB",
                       width_pt=float(width_pt), height_pt=float(height_pt))


def correlation_chart(measurement: LoadedMeasurement, design: Design, *, width_pt: float = 640,
                      height_pt: float = 260) -> ChartDrawing:
    """Envelope correlation (from S-parameters, lossless assumption) of each pair of ports tied to antennas
    on a 0..1 axis (lower is better), with the ECC-001 thresholds."""
    return _pair_chart(measurement, design, quantity="envelope correlation",
                       y_caption="envelope correlation, lower is better",
                       scale_text="0 to 1, lower is better; from S-parameters, assuming lossless antennas",
                       thresholds=ECC_THRESHOLDS,
                       fixed_y=(0.0, 1.0), values_of=measurement.envelope_correlation, largest=True,
                       value_text=lambda value: f"{value:.2f}", unit="", width_pt=float(width_pt),
                       height_pt=float(height_pt))


def pattern_correlation_chart(patterns: Sequence[LoadedPattern], design: Design, *, width_pt: float = 640,
                              height_pt: float = 260) -> ChartDrawing:
    """Envelope correlation from far-field patterns (rules.farfield, Vaughan & Andersen) of each pair of the
    given patterns at the frequencies the files share, in their environment, on a 0..1 axis with the ECC-001
    thresholds; a dot per frequency. The patterns must share frequencies, grid and environment (as
    rules.measurements requires of the cellular antennas' patterns); fewer than two give a drawing that says so."""
    _check_width(width_pt, height_pt)
    title = "Envelope correlation from far-field patterns"
    files = ", ".join(pattern.file for pattern in patterns)
    if len(patterns) < 2:
        subtitle = f"{_product(design)} · {files or 'no patterns'}"
        message = "One far-field pattern: no pairs. Add the other antenna's pattern to see their correlation."
        return _message_chart(title, subtitle, message, f"{title}. {message}", float(width_pt))
    environment = patterns[0].environment
    frequencies_mhz = patterns[0].frequencies_mhz
    ecc = correlation_matrix([pattern.pattern for pattern in patterns], environment)
    pairs = list(combinations(range(len(patterns)), 2))
    curves = [_Curve(f"{patterns[i].antenna}–{patterns[j].antenna}", ecc[:, i, j]) for i, j in pairs]
    short = ("isotropic" if environment.model == "isotropic" else
             f"Taga: elevation {environment.mean_elevation_deg:g}° ± {environment.spread_deg:g}°, XPR "
             f"{environment.xpr_db:g} dB")
    subtitle = f"{_product(design)} · {files} · {frequencies_mhz.size} frequencies · {short}"
    # The axis spans the points and the downlinks they are judged over, a little beyond, so edge points show.
    low = min(float(frequencies_mhz[0]), *(band.dl_mhz[0] for band in design.modem.bands))
    high = max(float(frequencies_mhz[-1]), *(band.dl_mhz[1] for band in design.modem.bands))
    pad = 0.03 * (high - low) or 1.0

    def describe(clipped: bool, axis_top: float) -> str:
        values = "; ".join(
            f"{curve.label}: " + ", ".join(f"{_number_text(float(frequency))} MHz {value:.2f} "
                                           f"({_verdict(ECC_THRESHOLDS, float(value))})"
                                           for frequency, value in zip(frequencies_mhz, curve.values, strict=True))
            for curve in curves)
        return (f"Envelope correlation (0 to 1, lower is better) of each pair of far-field patterns ({files}), "
                f"integrated over the sphere in {environment_text(environment)}, at the files' frequencies. "
                f"{_thresholds_sentence(ECC_THRESHOLDS)} Values: {values}.")

    return _frequency_chart(
        frequencies_mhz=frequencies_mhz, design=design, title=title, subtitle=subtitle,
        y_caption="envelope correlation, lower is better", curves=curves, thresholds=ECC_THRESHOLDS,
        fixed_y=(0.0, 1.0), value_format=lambda value: f"{value:.1f}", description=describe,
        width_pt=float(width_pt), height_pt=float(height_pt), markers=True, x_range_mhz=(low - pad, high + pad))


def _product(design: Design) -> str:
    return design.product_name + (f", hardware revision {design.product_revision}" if design.product_revision else "")


# -- coverage ---------------------------------------------------------------------------------------------------

COVERAGE_KEYS = ("band", "range_one_km", "range_two_km", "area_share_pct")


def _optional_number(row: Mapping, key: str) -> float | None:
    value = row[key]
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) or value < 0:
        raise ValueError(f"{key} should be a non-negative number or None, got {value!r}")
    return float(value)


DIRECTION_WORDS = {"ul": "uplink", "dl": "downlink"}
DIRECTION_SHORT = {"ul": "UL", "dl": "DL"}


def coverage_chart(rows: Sequence[Mapping], *, width_pt: float = 640, height_pt: float = 260) -> ChartDrawing:
    """Maximum range per band with one and with two receive antennas (km), set by whichever direction limits,
    grouped by band, each group labelled with the area one antenna covers as a share of two antennas' (%)
    and, where the rows say (`limiting_one`, `limiting_two`), the direction that limits each case.

    `rows` are the coverage analysis' rows (rules/coverage.py `as_dict()`); `COVERAGE_KEYS` must be there.
    A None range is outside the path-loss model's validity: its bar is drawn hatched, full height,
    marked "n/a", with a note."""
    _check_width(width_pt, height_pt)
    width_pt, height_pt = float(width_pt), float(height_pt)
    parsed = []
    for index, row in enumerate(rows):
        missing = [key for key in COVERAGE_KEYS if key not in row]
        if missing:
            raise ValueError(f"coverage row {index} lacks {', '.join(missing)}")
        parsed.append((str(row["band"]), _optional_number(row, "range_one_km"),
                       _optional_number(row, "range_two_km"), _optional_number(row, "area_share_pct")))
    limits = [(row.get("limiting_one"), row.get("limiting_two")) for row in rows]
    show_limits = bool(limits) and all(one in DIRECTION_SHORT and two in DIRECTION_SHORT for one, two in limits)
    title = "Range with one and two receive antennas"
    subtitle = ("maximum range per band in km, set by the direction that limits (uplink or downlink), from the "
                "coverage analysis")
    if not parsed:
        message = "No bands to chart."
        return _message_chart(title, subtitle, message, f"{title}. {message}", width_pt)

    any_missing = any(one is None or two is None for _, one, two, _ in parsed)
    entries = [_LegendEntry("1 receive antenna", _box_swatch(ONE_ANTENNA_FILL)),
               _LegendEntry("2 receive antennas", _box_swatch(TWO_ANTENNA_FILL))]
    if any_missing:
        entries.append(_LegendEntry("outside the model's validity: no range", _box_swatch(WHITE, MUTED, True)))
    legend = _legend_rows(entries, width_pt)
    note = ("Hatched bars: the band lies outside the path-loss model's validity, so no range is estimated."
            if any_missing else None)
    note_lines = _notes(note, width_pt)

    tick_rows = 3 if show_limits else 2
    bottom_rows_pt = (tick_rows * TICK_ROW_PT + CAPTION_ROW_PT + len(legend) * LEGEND_ROW_PT
                      + len(note_lines) * NOTE_ROW_PT + MARGIN_PT - 2)
    fixed_pt = MARGIN_PT + HEADER_PT + VALUE_ROW_PT + bottom_rows_pt
    height_pt = float(math.ceil(max(height_pt, fixed_pt + MIN_PLOT_HEIGHT_PT)))
    plot_bottom = bottom_rows_pt + 2
    plot_top = height_pt - MARGIN_PT - HEADER_PT - VALUE_ROW_PT  # room for value labels over full-height bars

    values_km = [value for _, one, two, _ in parsed for value in (one, two) if value is not None]
    high_km = max(values_km, default=1.0) or 1.0
    value_labels = ["n/a" if value is None else _km_text(value) for _, one, two, _ in parsed for value in (one, two)]
    widest_label_pt = max(stringWidth(text, FONT, VALUE_LABEL_SIZE) for text in value_labels)
    plot_height = plot_top - plot_bottom
    plot_right = width_pt - MARGIN_PT - 6

    def geometry(headroom_pt: float) -> tuple[Axis, float, float, float]:
        """The y axis with the tallest bar at least `headroom_pt` below the plot's top (and 8 % below),
        the plot's left edge, and the width of a band's group and of a bar."""
        need_km = max(high_km * 1.08, high_km / max(0.25, 1 - headroom_pt / plot_height))
        step = _nice_at_least(need_km / max(2, math.floor(plot_height / MIN_Y_TICK_SPACING_PT)))
        top_km = math.ceil(need_km / step - 1e-9) * step
        axis = Axis(0.0, top_km, plot_bottom, plot_top, _ticks(0.0, top_km, step))
        left = MARGIN_PT + Y_CAPTION_PT + max(stringWidth(_number_text(t), FONT, TICK_SIZE) for t in axis.ticks) + 6
        group_width = (plot_right - left) / len(parsed)
        return axis, left, group_width, min(38.0, group_width * 0.32)

    y_axis, plot_left, group_width, bar_width = geometry(0.0)
    # Value labels sit level above their bars when two fit side by side; otherwise they stand upright,
    # and the axis gains the headroom their length needs beyond the row kept above the plot.
    upright = widest_label_pt > bar_width + BAR_GAP_PT - 1.0
    if upright:
        y_axis, plot_left, group_width, bar_width = geometry(max(0.0, widest_label_pt + 2.5 - VALUE_ROW_PT + 2))
    plot_box = (plot_left, plot_bottom, plot_right, plot_top)

    drawing = ChartDrawing(width_pt, height_pt)
    group = Group()
    _header(group, width_pt, height_pt - MARGIN_PT, title, subtitle)
    for tick in y_axis.ticks:
        y = y_axis.pt(tick)
        group.add(Line(plot_left, y, plot_right, y, strokeColor=GRID, strokeWidth=0.5))
        _string(group, plot_left - 4, y - 2.6, _number_text(tick), size=TICK_SIZE, anchor="end")
    _y_caption(group, MARGIN_PT + CAPTION_SIZE - 1, (plot_bottom + plot_top) / 2, "maximum range (km)")

    bars = []
    for index, (band, one_km, two_km, share_pct) in enumerate(parsed):
        centre = plot_left + (index + 0.5) * group_width
        for rx, value_km, fill, x0 in ((1, one_km, ONE_ANTENNA_FILL, centre - bar_width - BAR_GAP_PT / 2),
                                       (2, two_km, TWO_ANTENNA_FILL, centre + BAR_GAP_PT / 2)):
            if value_km is None:
                box = (x0, plot_bottom, x0 + bar_width, plot_top)
                group.add(Rect(x0, plot_bottom, bar_width, plot_top - plot_bottom, fillColor=WHITE,
                               strokeColor=MUTED, strokeWidth=0.6, strokeDashArray=[2, 2]))
                _hatch(group, box, 5.0, GRID)
                label, label_colour = "n/a", MUTED
            else:
                y1 = y_axis.pt(value_km)
                box = (x0, plot_bottom, x0 + bar_width, y1)
                group.add(Rect(x0, plot_bottom, bar_width, y1 - plot_bottom, fillColor=fill, strokeColor=None,
                               strokeWidth=0))
                label, label_colour = _km_text(value_km), INK
            if upright:
                upright_label = Group(transform=(0, 1, -1, 0, x0 + bar_width / 2 + 0.35 * VALUE_LABEL_SIZE,
                                                 box[3] + 2.5))
                upright_label.add(String(0, 0, label, fontName=FONT, fontSize=VALUE_LABEL_SIZE,
                                         fillColor=label_colour))
                group.add(upright_label)
            else:
                _string(group, x0 + bar_width / 2, box[3] + 2.5, label, size=VALUE_LABEL_SIZE, colour=label_colour,
                        anchor="middle")
            bars.append(Bar(band, rx, value_km, box))
        _string(group, centre, plot_bottom - 3 - TICK_SIZE - 1, _fit_text(band, FONT_BOLD, 8, group_width - 4),
                font=FONT_BOLD, size=8, anchor="middle")
        share = f"area {share_pct:.0f} %" if share_pct is not None else "area n/a"
        if stringWidth(share, FONT, TICK_SIZE) > group_width - 4:
            share = share.removeprefix("area ")
        _string(group, centre, plot_bottom - TICK_ROW_PT - 3 - TICK_SIZE,
                _fit_text(share, FONT, TICK_SIZE, group_width - 4), size=TICK_SIZE, colour=MUTED, anchor="middle")
        if show_limits:
            one, two = limits[index]
            text = f"{DIRECTION_SHORT[one]} · {DIRECTION_SHORT[two]}" if one != two else f"{DIRECTION_SHORT[one]} limits"
            if stringWidth(text, FONT, TICK_SIZE) > group_width - 4:
                text = text.removesuffix(" limits")
            _string(group, centre, plot_bottom - 2 * TICK_ROW_PT - 3 - TICK_SIZE,
                    _fit_text(text, FONT, TICK_SIZE, group_width - 4), size=TICK_SIZE, colour=MUTED,
                    anchor="middle")
    group.add(Line(plot_left, plot_bottom, plot_right, plot_bottom, strokeColor=INK, strokeWidth=0.7))
    caption = "band · area: share of the two-antenna area that one antenna covers"
    if show_limits:
        caption += " · which direction limits (1 antenna · 2 antennas)"
    _string(group, (plot_left + plot_right) / 2, plot_bottom - tick_rows * TICK_ROW_PT - CAPTION_ROW_PT + 2.5,
            _fit_text(caption, FONT, CAPTION_SIZE, plot_right - plot_left), size=CAPTION_SIZE, anchor="middle")

    top = plot_bottom - tick_rows * TICK_ROW_PT - CAPTION_ROW_PT
    _draw_legend(group, legend, top, width_pt)
    top -= len(legend) * LEGEND_ROW_PT
    for line in note_lines:
        _string(group, MARGIN_PT, top - 8, line, font=FONT_ITALIC, size=NOTE_SIZE, colour=MUTED)
        top -= NOTE_ROW_PT
    drawing.add(group)

    def described(index: int, band: str, one_km: float | None, two_km: float | None, share_pct: float | None) -> str:
        ranges = ", ".join(f"{_km_text(value)} km with {count}" if value is not None
                           else f"no range with {count} (outside the model's validity)"
                           for count, value in (("one", one_km), ("two", two_km)))
        share = (f", one antenna covers {share_pct:.0f} % of the two-antenna area" if share_pct is not None
                 else ", no area share")
        limit = ""
        if show_limits:
            one, two = limits[index]
            limit = (f", the {DIRECTION_WORDS[one]} limits with either" if one == two else
                     f", the {DIRECTION_WORDS[one]} limits with one and the {DIRECTION_WORDS[two]} with two")
        return f"{band}: {ranges}{share}{limit}"

    description = ("Maximum range per band with one and with two receive antennas, in km, set by the direction "
                   "that limits, from the coverage analysis. "
                   + "; ".join(described(index, *row) for index, row in enumerate(parsed)) + ".")
    drawing.layout = ChartLayout(title=title, description=description, plot_box=plot_box, y=y_axis,
                                 bars=tuple(bars))
    return drawing


# -- SVG for the page ------------------------------------------------------------------------------------------

def chart_svg(drawing: ChartDrawing, *, title: str | None = None, description: str | None = None,
              id_prefix: str = "chart") -> str:
    """A chart as a standalone, accessible <svg> element to inline in HTML (see
    `placement.accessible_svg`): role="img", labelled by <title> and <desc>, ids prefixed with `id_prefix`,
    as wide as its container up to its natural width. Title and description default to the chart's own
    (its description lists the worst value per band, from rules.sparams)."""
    layout: ChartLayout = drawing.layout
    return accessible_svg(drawing, title=layout.title if title is None else title,
                          description=layout.description if description is None else description,
                          id_prefix=id_prefix)
