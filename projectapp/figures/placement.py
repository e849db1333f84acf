"""The placement drawing: where the antennas sit in the enclosure, which way they are polarized, how far
the reactive near field and a quarter wave reach around each cellular antenna at the lowest frequency,
every pair of cellular antennas coloured by the worst spacing finding about it, GNSS and WLAN antennas with
their own symbols, and a dashed line for each cellular antenna and GNSS or WLAN antenna that a coexistence
finding names.

One reportlab `Drawing` serves both outputs: `placement_svg` turns it into an accessible inline <svg> for
the page, and the PDF record places the same drawing as a flowable, so the two never disagree. Lengths
come from `rules.physics`; this module only scales millimetres to points.

Coordinates: the design's enclosure frame in mm. The top view looks down the z axis (x right, y up);
the side view, shown only when the antennas sit at different heights, looks along y (x right, z up).
Both views share one scale, `PlacementDrawing.scale_pt_per_mm`, and the same x positions.
"""

import math
import re
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, replace
from itertools import combinations
from typing import Any

import numpy as np
from reportlab.graphics import renderSVG
from reportlab.graphics.shapes import Circle, Drawing, Group, Line, Polygon, PolyLine, Rect, String
from reportlab.lib import colors
from reportlab.lib.attrmap import AttrMap, AttrMapValue
from reportlab.lib.utils import simpleSplit
from reportlab.lib.validators import isAnything
from reportlab.pdfbase.pdfmetrics import stringWidth

from projectapp import palette
from rules import physics
from rules.design import CELLULAR_ROLES, UNIT_LIMITS, Antenna, Design, find_band
from rules.findings import SEVERITIES, Finding

# The app's palette (projectapp/palette.py, where every pairing's contrast is listed and tested).
INK = colors.HexColor(palette.INK)
MUTED = colors.HexColor(palette.MUTED)
GRID = colors.HexColor(palette.LINE)
BOARD = colors.HexColor(palette.BOARD)
BOARD_EDGE = colors.HexColor(palette.BOARD_EDGE)
ENCLOSURE = INK
SEVERITY_COLOURS: Mapping[str, colors.Color] = {
    severity: colors.HexColor(colour) for severity, colour in palette.SEVERITY.items()
}
NO_FINDING_COLOUR = colors.HexColor(palette.OK)
NOT_JUDGED = "not judged yet"  # a pair's state while a draft's spacing checks wait for an answer
NOT_JUDGED_COLOUR = MUTED
WHITE = colors.white
PLATE = colors.Color(1, 1, 1, alpha=palette.PLATE_ALPHA)  # behind labels, so they stay legible over lines and circles
NEAR_FIELD_TINT = colors.Color(MUTED.red, MUTED.green, MUTED.blue, alpha=palette.NEAR_FIELD_ALPHA)

FONT = "Helvetica"
FONT_BOLD = "Helvetica-Bold"
FONT_ITALIC = "Helvetica-Oblique"

NEAR_FIELD_DASH = [4.5, 2.5]
QUARTER_WAVE_DASH = [1.2, 2.2]
ENCLOSURE_DASH = [7, 3]

MIN_WIDTH_PT = 240.0
MARGIN_PT = 14.0
Y_TICK_GUTTER_PT = 28.0  # room for the y (and z) tick labels left of the panels
PANEL_PAD_PT = 14.0  # between the fitted extent and the panel edge, for labels near the border
SIDE_PAD_PT = 18.0
HEADER_PT = 42.0
TICK_ROW_PT = 12.0
SCALE_ROW_PT = 26.0
SIDE_HEADING_PT = 18.0
GAP_PT = 10.0
MIN_GRID_SPACING_PT = 48.0
MIN_VIEWS_HEIGHT_PT = 60.0  # the views never shrink below this to meet max_height_pt
MIN_Z_TICK_SPACING_PT = 16.0
MARKER_HALF_PT = 4.2
ARROW_HALF_PT = 17.0
OUT_OF_PLANE_RING_PT = 8.0
# An axis less than this fraction in the view plane (tilted more than ~70 degrees out of it) is drawn as
# pointing out of the page rather than as a stub arrow.
IN_PLANE_MIN_FRACTION = 0.34
LEGEND_COLUMN_MIN_PT = 190.0
LEGEND_ROW_PT = 12.5
LEGEND_DETAIL_PT = 9.0
LEGEND_HEADING_PT = 15.0
NOTE_LINE_PT = 11.0
MAX_NAME_CHARS = 24
# Pair lines (and their distance labels) drawn at most: every pair of eight antennas. Beyond that a
# drawing of every pair is a thicket (32 antennas have 496 pairs) and costs the page its speed; the
# pairs with a spacing finding are drawn first, worst and nearest first, then the nearest others.
MAX_DRAWN_PAIRS = 28
# Coexistence lines drawn at most (worst first): a design with a few GNSS and WLAN antennas beside eight
# cellular ones stays legible, and the placer's work stays bounded as above.
MAX_COEXISTENCE_LINES = 16
COEXISTENCE_DASH = [6, 3]
COEXISTENCE_LABEL_CHARS = 40
DRAWABLE_MM = 1e9  # a thousand kilometres: beyond any enclosure, within float precision of a millimetre

Box = tuple[float, float, float, float]  # x0, y0, x1, y1


@dataclass(frozen=True)
class PairLine:
    first: str
    second: str
    distance_mm: float  # feed to feed, in three dimensions (the drawing shows its projection)
    severity: str | None  # worst separation finding about the pair; None when there is none; NOT_JUDGED


@dataclass(frozen=True)
class CoexistenceLine:
    """A cellular antenna and a GNSS or WLAN antenna that coexistence findings name, with the worst severity,
    the cellular bands and the victims (e.g. 'GNSS L1/E1') those findings give."""

    cellular: str
    victim: str
    severity: str
    bands: tuple[str, ...]
    victims: tuple[str, ...]

    @property
    def label(self) -> str:
        text = ", ".join(self.bands) + (" → " + ", ".join(self.victims) if self.victims else "")
        return text if len(text) <= COEXISTENCE_LABEL_CHARS else text[:COEXISTENCE_LABEL_CHARS - 1] + "…"


@dataclass(frozen=True)
class PlacementLayout:
    """What a placement drawing shows and where it put things, for the page, the PDF and tests."""

    scale_pt_per_mm: float
    scale_bar_mm: float
    frequency_mhz: float | None  # None: no band chosen yet, so no circles
    near_field_radius_mm: float | None
    quarter_wave_mm: float | None
    top_view_origin_pt: tuple[float, float]  # drawing point of x = 0, y = 0 mm (may lie outside the panel)
    side_view_origin_pt: tuple[float, float] | None  # drawing point of x = 0, z = 0 mm; None without one
    enclosure_given: bool
    placed: tuple[str, ...]
    unplaced: tuple[str, ...]
    pairs: tuple[PairLine, ...]  # every pair of placed cellular antennas
    title: str
    description: str
    drawn_pairs: tuple[PairLine, ...] = ()  # the pairs with a line and a label (at most MAX_DRAWN_PAIRS)
    coexistence: tuple[CoexistenceLine, ...] = ()  # the coexistence lines drawn (at most MAX_COEXISTENCE_LINES)

    @property
    def has_side_view(self) -> bool:
        return self.side_view_origin_pt is not None

    def top_view_pt(self, x_mm: float, y_mm: float) -> tuple[float, float]:
        x0, y0 = self.top_view_origin_pt
        return (x0 + x_mm * self.scale_pt_per_mm, y0 + y_mm * self.scale_pt_per_mm)

    def side_view_pt(self, x_mm: float, z_mm: float) -> tuple[float, float]:
        if self.side_view_origin_pt is None:
            raise ValueError("this drawing has no side view")
        x0, z0 = self.side_view_origin_pt
        return (x0 + x_mm * self.scale_pt_per_mm, z0 + z_mm * self.scale_pt_per_mm)


class PlacementDrawing(Drawing):
    """A reportlab Drawing (so also a platypus Flowable) that carries its `layout`."""

    _attrMap = AttrMap(BASE=Drawing, layout=AttrMapValue(isAnything, desc="the PlacementLayout drawn"))

    @property
    def scale_pt_per_mm(self) -> float:
        return self.layout.scale_pt_per_mm


# -- findings -> pair colours ---------------------------------------------------------------------------


def pair_severities_from_findings(findings: Iterable[Finding | Mapping[str, Any]]) -> dict[frozenset[str], str]:
    """The worst severity per antenna pair among separation findings about two antennas (SEP-001).

    Accepts `rules.findings.Finding` objects or their `as_dict()` form, so stored checklists work too.
    """
    worst: dict[frozenset[str], str] = {}
    for finding in findings:
        if isinstance(finding, Finding):
            topic, severity, subjects = finding.topic, finding.severity, finding.subjects
        else:
            topic, severity, subjects = finding.get("topic"), finding.get("severity"), finding.get("subjects")
        if topic != "separation" or severity not in SEVERITIES or not isinstance(subjects, (list, tuple)):
            continue
        pair = frozenset(subject for subject in subjects if isinstance(subject, str))
        if len(subjects) != 2 or len(pair) != 2:
            continue
        current = worst.get(pair)
        if current is None or SEVERITIES.index(severity) < SEVERITIES.index(current):
            worst[pair] = severity
    return worst


def coexistence_lines_from_findings(findings: Iterable[Finding | Mapping[str, Any]],
                                    design: Design) -> list[CoexistenceLine]:
    """One line per cellular antenna and GNSS or WLAN antenna that `coexistence` findings name, worst first.

    A finding's subjects name the antennas (and the band); a finding that names only the victim is drawn
    from the transmitting (main) antennas, whose uplink is the aggressor, and one that names only a cellular
    antenna to every antenna of the victim's radio (its evidence `victim`, e.g. 'GNSS L1/E1'). Stored
    checklists work too (the findings' dict form); a finding that names an antenna the design doesn't have is
    left out."""
    roles = {antenna.name: antenna.role for antenna in design.antennas}
    found: dict[tuple[str, str], tuple[str, list[str], list[str]]] = {}
    for finding in findings:
        if isinstance(finding, Finding):
            topic, severity, subjects, evidence = (finding.topic, finding.severity, finding.subjects,
                                                   finding.evidence)
        else:
            topic, severity = finding.get("topic"), finding.get("severity")
            subjects, evidence = finding.get("subjects"), finding.get("evidence")
        if topic != "coexistence" or severity not in SEVERITIES or not isinstance(subjects, (list, tuple)):
            continue
        evidence = evidence if isinstance(evidence, Mapping) else {}
        if any(not isinstance(subject, str) or (subject not in roles and find_band(subject) is None)
               for subject in subjects):
            continue  # it names an antenna this design does not have (say, a renamed one): nothing to join
        named = [subject for subject in subjects if subject in roles]
        victim_text = evidence.get("victim") if isinstance(evidence.get("victim"), str) else ""
        victim_role = "wlan" if victim_text.upper().startswith("WLAN") else "gnss" if victim_text else None
        cellular = [name for name in named if roles[name] in CELLULAR_ROLES]
        victims = [name for name in named if roles[name] not in CELLULAR_ROLES]
        if not cellular:
            cellular = [name for name, role in roles.items() if role == "main"]
        if not victims and victim_role is not None:
            victims = [name for name, role in roles.items() if role == victim_role]
        band = evidence.get("band")
        bands = [band] if isinstance(band, str) else [subject for subject in subjects
                                                     if isinstance(subject, str) and subject not in roles]
        for first in cellular:
            for second in victims:
                worst, known_bands, known_victims = found.get((first, second), (severity, [], []))
                if SEVERITIES.index(severity) < SEVERITIES.index(worst):
                    worst = severity
                known_bands += [item for item in bands if item not in known_bands]
                if victim_text and victim_text not in known_victims:
                    known_victims.append(victim_text)
                found[(first, second)] = (worst, known_bands, known_victims)
    lines = [CoexistenceLine(first, second, severity, tuple(bands), tuple(victims))
             for (first, second), (severity, bands, victims) in found.items()]
    return sorted(lines, key=lambda line: SEVERITIES.index(line.severity))


# -- small helpers ----------------------------------------------------------------------------------------


def _mm_text(value_mm: float) -> str:
    rounded = round(value_mm, 1)
    return f"{rounded + 0.0:g}"  # + 0.0 turns -0.0 into 0.0


def _short(name: str) -> str:
    return name if len(name) <= MAX_NAME_CHARS else name[: MAX_NAME_CHARS - 1] + "…"


def _fit_text(text: str, font: str, size: float, width_pt: float) -> str:
    if stringWidth(text, font, size) <= width_pt:
        return text
    while text and stringWidth(text + "…", font, size) > width_pt:
        text = text[:-1]
    return text + "…"


def _nice_values(around: float) -> list[float]:
    exponent = math.floor(math.log10(around))
    return [mantissa * 10.0**power for power in (exponent - 1, exponent, exponent + 1)
            for mantissa in (1, 2, 5)]


def _nice_at_least(value: float) -> float:
    """The smallest of 1, 2, 5 x 10^k that is at least `value`."""
    return min(nice for nice in _nice_values(value) + [10.0 ** (math.floor(math.log10(value)) + 2)]
               if nice >= value * (1 - 1e-9))


def _nice_nearest(value: float) -> float:
    """The 1, 2, 5 x 10^k closest to `value` on a log scale."""
    return min(_nice_values(value), key=lambda nice: abs(math.log(nice / value)))


def _baseline(y: float) -> float:
    # The SVG renderer writes a text's flip transform with a whole number (2y), so keep y on half points.
    return round(y * 2) / 2


def _union(boxes: Sequence[Box]) -> Box:
    return (min(box[0] for box in boxes), min(box[1] for box in boxes),
            max(box[2] for box in boxes), max(box[3] for box in boxes))


def _axis_text(polarization: tuple[float, float, float] | None) -> str:
    if polarization is None:
        return "polarization not given"
    norm = math.hypot(*polarization)
    for axis, component in zip("xyz", polarization, strict=True):
        if abs(abs(component) / norm - 1.0) < 1e-9:
            return f"polarized along {axis}"
    return "polarized along (" + ", ".join(f"{value:g}" for value in polarization) + ")"


class _Placer:
    """Greedy label placement: each label takes the first candidate spot that covers nothing drawn or
    labelled so far, or else the spot that covers least (weighted by what it would hide).

    The work is bounded: boxes live in numpy arrays that grow by doubling (nothing is rebuilt per label),
    and a line is kept as one segment whose cover of a candidate is computed exactly (the length of it
    inside the candidate, widened by the line's half width), not as a row of small boxes. Placing a label
    costs candidates x (boxes + segments), and the drawing caps how many pair lines and labels it shows.
    """

    def __init__(self, bounds: Box):
        self.bounds = bounds
        self._boxes = np.empty((64, 4))
        self._box_weights = np.empty(64)
        self._box_count = 0
        self._segments = np.empty((64, 4))
        self._segment_weights = np.empty(64)  # weight x 2 x half width: cover per point of length
        self._segment_halves = np.empty(64)
        self._segment_count = 0

    @property
    def taken(self) -> int:
        """How many boxes and segments are blocked so far."""
        return self._box_count + self._segment_count

    def block(self, box: Box, weight: float) -> None:
        if self._box_count == len(self._boxes):
            self._boxes = np.resize(self._boxes, (2 * len(self._boxes), 4))
            self._box_weights = np.resize(self._box_weights, 2 * len(self._box_weights))
        self._boxes[self._box_count] = box
        self._box_weights[self._box_count] = weight
        self._box_count += 1

    def block_segment(self, start: tuple[float, float], end: tuple[float, float], half_pt: float,
                      weight: float) -> None:
        if self._segment_count == len(self._segments):
            size = 2 * len(self._segments)
            self._segments = np.resize(self._segments, (size, 4))
            self._segment_weights = np.resize(self._segment_weights, size)
            self._segment_halves = np.resize(self._segment_halves, size)
        self._segments[self._segment_count] = (*start, *end)
        self._segment_weights[self._segment_count] = weight * 2 * half_pt
        self._segment_halves[self._segment_count] = half_pt
        self._segment_count += 1

    def place(self, width: float, height: float, anchors: Sequence[tuple[float, float]]) -> Box:
        # Every candidate is scored against every box and segment taken so far at once (numpy).
        corners = np.asarray(anchors, dtype=float).reshape(-1, 2)
        x0, y0 = corners[:, 0], corners[:, 1]
        x1, y1 = x0 + width, y0 + height
        bounds = self.bounds
        inside_w = np.minimum(x1, bounds[2]) - np.maximum(x0, bounds[0])
        inside_h = np.minimum(y1, bounds[3]) - np.maximum(y0, bounds[1])
        inside = np.where((inside_w > 0) & (inside_h > 0), inside_w * inside_h, 0.0)
        costs = 40.0 * (width * height - inside)
        if self._box_count:
            boxes = self._boxes[:self._box_count]
            over_w = np.minimum(x1[:, None], boxes[None, :, 2]) - np.maximum(x0[:, None], boxes[None, :, 0])
            over_h = np.minimum(y1[:, None], boxes[None, :, 3]) - np.maximum(y0[:, None], boxes[None, :, 1])
            covered = np.where((over_w > 0) & (over_h > 0), over_w * over_h, 0.0)
            costs = costs + covered @ self._box_weights[:self._box_count]
        if self._segment_count:
            costs = costs + self._segment_cover(x0, y0, x1, y1) @ self._segment_weights[:self._segment_count]
        free = np.flatnonzero(costs == 0.0)
        # The first spot that covers nothing wins; otherwise the cheapest, nearer spots breaking ties.
        choice = int(free[0]) if free.size else int(np.argmin(costs + 0.05 * np.arange(len(costs))))
        box = (float(x0[choice]), float(y0[choice]), float(x1[choice]), float(y1[choice]))
        self.block(box, 25.0)
        return box

    def _segment_cover(self, x0: np.ndarray, y0: np.ndarray, x1: np.ndarray, y1: np.ndarray) -> np.ndarray:
        """Candidates x segments: the length of each segment inside each candidate box widened by the
        segment's half width (Liang-Barsky clipping of the segment's parameter to both slabs)."""
        segments = self._segments[:self._segment_count]
        half = self._segment_halves[:self._segment_count][None, :]
        start_x, start_y = segments[None, :, 0], segments[None, :, 1]
        delta_x, delta_y = segments[None, :, 2] - start_x, segments[None, :, 3] - start_y
        enter = np.zeros((len(x0), self._segment_count))
        leave = np.ones_like(enter)
        for start, delta, low, high in ((start_x, delta_x, x0[:, None] - half, x1[:, None] + half),
                                        (start_y, delta_y, y0[:, None] - half, y1[:, None] + half)):
            moving = delta != 0
            with np.errstate(divide="ignore", invalid="ignore"):
                first = np.where(moving, (low - start) / delta, -np.inf)
                second = np.where(moving, (high - start) / delta, np.inf)
            # A segment parallel to the slab is inside it everywhere or nowhere.
            outside = ~moving & ((start <= low) | (start >= high))
            enter = np.maximum(enter, np.minimum(first, second))
            leave = np.where(outside, 0.0, np.minimum(leave, np.maximum(first, second)))
        length = np.hypot(delta_x, delta_y)
        # A segment of no length (both ends at one point) covers like a point: count it as one half width.
        length = np.where(length > 0, length, half)
        return np.clip(leave - enter, 0.0, None) * length


def _around(x: float, y: float, gap: float, width: float, height: float) -> list[tuple[float, float]]:
    """Candidate lower-left corners for a label of the given size beside a point, nearest first."""
    anchors = []
    for ring in range(4):
        d = gap + ring * 10.0
        e = d * 0.75
        anchors += [
            (x + d, y - height / 2), (x - width / 2, y + d), (x - width / 2, y - d - height),
            (x - d - width, y - height / 2), (x + e, y + e), (x + e, y - e - height),
            (x - e - width, y + e), (x - e - width, y - e - height),
        ]
    return anchors


@dataclass(frozen=True)
class _Label:
    text: str
    font: str
    size: float
    colour: colors.Color
    border: colors.Color | None = None

    @property
    def width(self) -> float:
        return stringWidth(self.text, self.font, self.size) + 5.0

    @property
    def height(self) -> float:
        return self.size + 3.5

    def draw(self, group: Group, box: Box) -> None:
        group.add(Rect(box[0], box[1], box[2] - box[0], box[3] - box[1], rx=2, ry=2, fillColor=PLATE,
                       strokeColor=self.border, strokeWidth=0.6 if self.border else 0))
        group.add(String(box[0] + 2.5, _baseline(box[1] + 1.75 + 0.2 * self.size), self.text,
                         fontName=self.font, fontSize=self.size, fillColor=self.colour))


# -- glyphs (shared by the views and the legend) ------------------------------------------------------------


def _marker(group: Group, x: float, y: float, role: str, mounting: str) -> Box:
    """Square for the main antenna, diamond for a receive one, circle for a GNSS antenna, triangle for a WLAN
    one; hollow when mounted outside."""
    external = mounting == "external"
    fill = WHITE if external else INK
    stroke = INK if external else WHITE
    width = 1.3 if external else 0.8
    half = MARKER_HALF_PT
    if role == "main":
        group.add(Rect(x - half, y - half, 2 * half, 2 * half, fillColor=fill, strokeColor=stroke,
                       strokeWidth=width))
    elif role == "gnss":
        half *= 1.15
        group.add(Circle(x, y, half, fillColor=fill, strokeColor=stroke, strokeWidth=width))
    elif role == "wlan":
        half *= 1.3
        group.add(Polygon([x, y + half, x + half, y - 0.75 * half, x - half, y - 0.75 * half], fillColor=fill,
                          strokeColor=stroke, strokeWidth=width))
    else:
        half *= 1.35
        group.add(Polygon([x, y + half, x + half, y, x, y - half, x - half, y], fillColor=fill,
                          strokeColor=stroke, strokeWidth=width))
    return (x - half, y - half, x + half, y + half)


def _arrow(group: Group, x: float, y: float, dx: float, dy: float, half_pt: float,
           colour: colors.Color = INK) -> tuple[tuple[float, float], tuple[float, float]]:
    """A double-ended arrow through (x, y) along the unit direction (dx, dy): an axis has no sign."""
    start = (x - dx * half_pt, y - dy * half_pt)
    end = (x + dx * half_pt, y + dy * half_pt)
    head_pt, wing_pt = 5.5, 2.6
    group.add(Line(start[0] + dx * head_pt * 0.6, start[1] + dy * head_pt * 0.6,
                   end[0] - dx * head_pt * 0.6, end[1] - dy * head_pt * 0.6, strokeColor=colour,
                   strokeWidth=1.3))
    for tip, sign in ((end, 1.0), (start, -1.0)):
        base_x, base_y = tip[0] - sign * dx * head_pt, tip[1] - sign * dy * head_pt
        group.add(Polygon([tip[0], tip[1], base_x - dy * wing_pt, base_y + dx * wing_pt,
                           base_x + dy * wing_pt, base_y - dx * wing_pt],
                          fillColor=colour, strokeColor=None))
    return start, end


def _dashed(start: tuple[float, float], end: tuple[float, float], colour: colors.Color) -> PolyLine:
    """A coexistence line. A PolyLine, not a Line: the SVG renderer closes a Line's path (Z), and a dash pattern
    drawn there and back fills its own gaps."""
    return PolyLine([*start, *end], strokeColor=colour, strokeWidth=1.5, strokeDashArray=COEXISTENCE_DASH)


def _out_of_page(group: Group, x: float, y: float, dot: bool = False) -> Box:
    """The circled dot of an axis perpendicular to the view; around a marker the marker is the dot."""
    group.add(Circle(x, y, OUT_OF_PLANE_RING_PT, fillColor=None, strokeColor=INK, strokeWidth=1.1))
    if dot:
        group.add(Circle(x, y, 1.6, fillColor=INK, strokeColor=None))
    ring = OUT_OF_PLANE_RING_PT + 1
    return (x - ring, y - ring, x + ring, y + ring)


def _antenna_glyph(group: Group, placer: _Placer, antenna: Antenna, x: float, y: float,
                   axes: tuple[int, int], marks: "_Marks | None" = None, view: str = "top") -> None:
    """Polarization (projected onto the view's two axes) and the marker, blocked for label placement. In the
    editable drawing they sit in the antenna's focusable group, with a pointer target around the marker, a
    turn handle at the end of an axis drawn in the view, and a focus ring the page's stylesheet shows."""
    target = marks.marker(group, antenna.name, view, axes) if marks is not None else group
    if marks is not None:
        target.add(Circle(x, y, EDITOR_HIT_PT, fillColor=TRANSPARENT, strokeColor=None))
    if antenna.polarization is not None:
        norm = math.hypot(*antenna.polarization)
        across = antenna.polarization[axes[0]] / norm
        up = antenna.polarization[axes[1]] / norm
        in_plane = math.hypot(across, up)
        if in_plane < IN_PLANE_MIN_FRACTION:
            placer.block(_out_of_page(target, x, y), 6.0)
        else:
            # Foreshortened: an axis tilted out of the view plane draws shorter.
            axis = _part(target, marks, part="axis")
            start, end = _arrow(axis, x, y, across / in_plane, up / in_plane, ARROW_HALF_PT * in_plane)
            placer.block_segment(start, end, 3.0, 6.0)
            if marks is not None:
                handle = _part(axis, marks, part="turn")
                handle.add(Circle(*end, TURN_HIT_PT, fillColor=TRANSPARENT, strokeColor=None))
                handle.add(Circle(*end, TURN_HANDLE_PT, fillColor=WHITE, strokeColor=INK, strokeWidth=1.2))
    placer.block(_marker(target, x, y, antenna.role, antenna.mounting), 30.0)
    if marks is not None:
        ring = _part(target, marks, part="focus-ring")
        ring.add(Circle(x, y, FOCUS_RING_PT, fillColor=None, strokeColor=FOCUS_COLOUR, strokeWidth=2.2))


# -- marks for the page's placement editor ---------------------------------------------------------------------

EDITOR_HIT_PT = 10.0  # radius around a marker that takes the pointer (the marker is about 8 pt across)
TURN_HANDLE_PT = 3.2
TURN_HIT_PT = 7.0
FOCUS_RING_PT = 12.0
FOCUS_COLOUR = colors.HexColor(palette.ACCENT)  # the page's accent (earshot.css --accent)
TRANSPARENT = colors.Color(0, 0, 0, alpha=0)  # painted, so it takes the pointer, but unseen


class _Tagged(Group):
    """A group whose <g> carries `svg_attributes` in the page's SVG (data-*, tabindex, role, aria-*). Other
    renderers, the PDF's among them, draw it as the plain group it is."""

    _attrMap = AttrMap(BASE=Group, svg_attributes=AttrMapValue(isAnything, desc="attributes of the SVG <g>"))


def _numbers(values: Iterable[float]) -> str:
    return " ".join(f"{value + 0.0:.10g}" for value in values)


def _part(group: Group, marks: "_Marks | None", **attributes: Any) -> Group:
    """A group added to `group` to draw one part into: tagged `data-<key>` in the editable drawing, the group
    itself otherwise."""
    if marks is None:
        return group
    tagged = _Tagged(svg_attributes={f"data-{key.replace('_', '-')}": str(value) for key, value in attributes.items()})
    group.add(tagged)
    return tagged


@dataclass(frozen=True)
class _Marks:
    """What the editable drawing tags for the draft page's placement editor (static/earshot/placement-edit.js):
    each view's scale and origin, each antenna's parts with its row in the design (the questionnaire's
    `antennas[i]`) and the box its feed may be moved in, each pair line's two antennas. With these the script
    only maps pointer positions to millimetres and turns an axis; what it changes it writes into the
    questionnaire's fields, whose save redraws this drawing and the checklist."""

    antennas: Mapping[str, tuple[int, Antenna]]  # the design's own values (not the ones clamped for drawing)
    bounds_mm: Mapping[str, tuple[float, float, float, float, float, float]]  # x0 y0 z0 x1 y1 z1
    keys_id: str  # the page's text that says how to move and turn an antenna

    @classmethod
    def of(cls, design: Design, top: "_View", heights_mm: tuple[float, float], keys_id: str) -> "_Marks":
        """An internal antenna's feed stays inside the enclosure box [0, size] (the rules flag one outside it,
        ENC-002); an external antenna (on a cable, outside the box), or any antenna when no enclosure size is
        given, stays inside what the views show, which grows around it with each save. Both within the parser's
        limits for a length."""
        limit = UNIT_LIMITS["_mm"]
        shown = (top.across_min_mm, top.up_min_mm, heights_mm[0], top.across_max_mm, top.up_max_mm, heights_mm[1])
        antennas, bounds = {}, {}
        for index, antenna in enumerate(design.antennas):
            antennas[antenna.name] = (index, antenna)
            box = ((0.0, 0.0, 0.0, *design.enclosure_size_mm)
                   if antenna.mounting == "internal" and design.enclosure_size_mm is not None else shown)
            low = tuple(max(limit.low, value) for value in box[:3])
            high = tuple(min(limit.high, value) for value in box[3:])
            bounds[antenna.name] = (*low, *high)
        return cls(antennas, bounds, keys_id)  # type: ignore[arg-type]

    def index(self, name: str) -> int:
        return self.antennas[name][0]

    def pair(self, first: str, second: str) -> str:
        return f"{self.index(first)} {self.index(second)}"

    def view(self, group: Group, view: "_View", name: str, axes: str) -> Group:
        return _part(group, self, view=name, axes=axes, origin_pt=_numbers(view.pt(0.0, 0.0)),
                     scale_pt_per_mm=f"{view.scale:.10g}",
                     extent_mm=_numbers((view.across_min_mm, view.up_min_mm, view.across_max_mm, view.up_max_mm)))

    def marker(self, group: Group, name: str, view: str, axes: tuple[int, int]) -> Group:
        index, antenna = self.antennas[name]
        attributes = {
            "data-part": "marker", "data-antenna": str(index), "data-view": view, "data-axes": f"{axes[0]} {axes[1]}",
            "data-name": antenna.name, "data-role": antenna.role, "data-mounting": antenna.mounting,
            "data-position-mm": _numbers(antenna.position_mm or ()), "data-bounds-mm": _numbers(self.bounds_mm[name]),
            "tabindex": "0", "role": "button", "aria-roledescription": "movable antenna",
            "aria-label": marker_label(antenna, view), "aria-describedby": self.keys_id,
        }
        if antenna.polarization is not None:
            attributes["data-polarization"] = _numbers(antenna.polarization)
        tagged = _Tagged(svg_attributes=attributes)
        group.add(tagged)
        return tagged


def marker_label(antenna: Antenna, view: str) -> str:
    """The accessible name of an antenna's marker in a view (the editor words it the same way as it moves)."""
    position = ", ".join(f"{axis} {_mm_text(value)}" for axis, value in zip("xyz", antenna.position_mm or (), strict=False))
    return (f"{antenna.name}, {antenna.role} antenna ({antenna.mounting}), at {position} mm, "
            f"{_axis_text(antenna.polarization)}; {view} view")


# -- the layout -------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _View:
    """A panel: millimetres of the view's two axes mapped to drawing points."""

    left_pt: float
    bottom_pt: float
    width_pt: float
    height_pt: float
    across_min_mm: float  # mm value at the panel's left edge
    up_min_mm: float  # mm value at the panel's bottom edge
    scale: float

    def pt(self, across_mm: float, up_mm: float) -> tuple[float, float]:
        return (self.left_pt + (across_mm - self.across_min_mm) * self.scale,
                self.bottom_pt + (up_mm - self.up_min_mm) * self.scale)

    @property
    def box(self) -> Box:
        return (self.left_pt, self.bottom_pt, self.left_pt + self.width_pt, self.bottom_pt + self.height_pt)

    @property
    def across_max_mm(self) -> float:
        return self.across_min_mm + self.width_pt / self.scale

    @property
    def up_max_mm(self) -> float:
        return self.up_min_mm + self.height_pt / self.scale


def _drawable(design: Design) -> Design:
    """The design with every coordinate and size kept within DRAWABLE_MM, so that absurd but valid
    numbers (1e300 mm) still give finite spans and scales; distances are computed from the original."""

    def clamp(values: tuple[float, ...] | None) -> Any:
        return None if values is None else tuple(max(-DRAWABLE_MM, min(DRAWABLE_MM, value)) for value in values)

    return replace(
        design,
        enclosure_size_mm=clamp(design.enclosure_size_mm),
        ground_plane_mm=clamp(design.ground_plane_mm),
        antennas=tuple(replace(antenna, position_mm=clamp(antenna.position_mm)) for antenna in design.antennas),
    )


def _enclosure_box(design: Design, placed: Sequence[Antenna]) -> Box | None:
    """The enclosure's footprint; without a size, a box fitted around the antennas and ground plane."""
    if design.enclosure_size_mm is not None:
        return (0.0, 0.0, design.enclosure_size_mm[0], design.enclosure_size_mm[1])
    boxes = [(antenna.position_mm[0], antenna.position_mm[1]) * 2 for antenna in placed]  # type: ignore[index]
    if design.ground_plane_mm is not None:
        boxes.append((0.0, 0.0, design.ground_plane_mm[0], design.ground_plane_mm[1]))
    if not boxes:
        return None
    x0, y0, x1, y1 = _union(boxes)
    margin_mm = max(10.0, 0.1 * max(x1 - x0, y1 - y0))
    return (x0 - margin_mm, y0 - margin_mm, x1 + margin_mm, y1 + margin_mm)


def _top_extent(design: Design, placed: Sequence[Antenna], enclosure: Box | None, zone_mm: float,
                steady: bool = False) -> Box:
    """What the top view must show. `steady` (the editable drawing) also keeps room for a cellular antenna's
    circles anywhere in a given enclosure, so that moving an internal antenna never rescales the drawing."""
    boxes: list[Box] = [enclosure] if enclosure is not None else []
    if steady and design.enclosure_size_mm is not None and any(antenna.is_cellular for antenna in placed):
        length_mm, width_mm, _ = design.enclosure_size_mm
        boxes.append((-zone_mm, -zone_mm, length_mm + zone_mm, width_mm + zone_mm))
    if design.ground_plane_mm is not None:
        boxes.append((0.0, 0.0, design.ground_plane_mm[0], design.ground_plane_mm[1]))
    for antenna in placed:
        x, y = antenna.position_mm[0], antenna.position_mm[1]  # type: ignore[index]
        boxes.append((x - zone_mm, y - zone_mm, x + zone_mm, y + zone_mm))
    return _union(boxes) if boxes else (0.0, 0.0, 100.0, 60.0)


def _side_extent(design: Design, placed: Sequence[Antenna]) -> tuple[float, float]:
    heights = [antenna.position_mm[2] for antenna in placed]  # type: ignore[index]
    if design.enclosure_size_mm is not None:
        heights += [0.0, design.enclosure_size_mm[2]]
    return min(heights), max(heights)


def _pair_colour(severity: str | None) -> colors.Color:
    if severity == NOT_JUDGED:
        return NOT_JUDGED_COLOUR
    return SEVERITY_COLOURS[severity] if severity else NO_FINDING_COLOUR


def _pairs(placed: Sequence[Antenna], pair_severities: Mapping[frozenset[str], str] | None) -> list[PairLine]:
    pairs = []
    for first, second in combinations(placed, 2):
        severity = NOT_JUDGED if pair_severities is None else pair_severities.get(frozenset((first.name, second.name)))
        if severity is not None and severity != NOT_JUDGED and severity not in SEVERITY_COLOURS:
            raise ValueError(f"unknown severity {severity!r} for {first.name} and {second.name}; "
                             f"expected one of {', '.join(SEVERITIES)}")
        distance_mm = physics.distance_mm(first.position_mm, second.position_mm)  # type: ignore[arg-type]
        pairs.append(PairLine(first.name, second.name, distance_mm, severity))
    return pairs


def _pairs_to_draw(pairs: Sequence[PairLine]) -> list[PairLine]:
    """The pairs that get a line: all of them up to MAX_DRAWN_PAIRS; beyond, those with a finding (worst,
    then nearest, first) and then the nearest others. Kept in their usual order, so the drawing of a
    small design does not change."""
    if len(pairs) <= MAX_DRAWN_PAIRS:
        return list(pairs)
    rank = {severity: index for index, severity in enumerate(SEVERITIES)}
    order = sorted(range(len(pairs)), key=lambda index: (
        rank.get(pairs[index].severity or "", len(SEVERITIES)), pairs[index].distance_mm, index))
    chosen = set(order[:MAX_DRAWN_PAIRS])
    return [pair for index, pair in enumerate(pairs) if index in chosen]


def _ticks(low_mm: float, high_mm: float, step_mm: float) -> range:
    """Indices of the multiples of the step between low and high; none where float precision has run
    out (coordinates so large that the step no longer changes them)."""
    low, high = low_mm / step_mm, high_mm / step_mm
    if not (math.isfinite(low) and math.isfinite(high)) or high - low > 400 or abs(low) > 1e12:
        return range(0)
    return range(math.ceil(low), math.floor(high) + 1)


def _span(low: float, high: float) -> float:
    # Millimetre coordinates may be huge; keep a span positive when their difference rounds to nothing.
    return max(high - low, 1e-9 * max(1.0, abs(low), abs(high)))


def _grid(group: Group, view: _View, step_mm: float, up_step_mm: float, across_name: str, up_name: str) -> None:
    """Panel frame, light grid lines on multiples of the steps, heavier lines on the frame's axes, and
    tick labels in mm along the bottom and left edges."""
    group.add(Rect(*view.box[:2], view.width_pt, view.height_pt, fillColor=WHITE, strokeColor=GRID,
                   strokeWidth=0.8))
    x0, y0, x1, y1 = view.box
    for index in _ticks(view.across_min_mm, view.across_max_mm, step_mm):
        value_mm = index * step_mm
        x, _ = view.pt(value_mm, 0)
        group.add(Line(x, y0, x, y1, strokeColor=GRID, strokeWidth=0.9 if index == 0 else 0.4))
        group.add(String(x, y0 - 9, _mm_text(value_mm), fontName=FONT, fontSize=7, fillColor=MUTED,
                         textAnchor="middle"))
    for index in _ticks(view.up_min_mm, view.up_max_mm, up_step_mm):
        value_mm = index * up_step_mm
        _, y = view.pt(0, value_mm)
        group.add(Line(x0, y, x1, y, strokeColor=GRID, strokeWidth=0.9 if index == 0 else 0.4))
        group.add(String(x0 - 3, _baseline(y - 2.5), _mm_text(value_mm), fontName=FONT, fontSize=7,
                         fillColor=MUTED, textAnchor="end"))
    group.add(String(x1, _baseline(y1 + 3), f"axes in mm: {across_name} →, {up_name} ↑", fontName=FONT, fontSize=7,
                     fillColor=MUTED, textAnchor="end"))


def _rect_pt(view: _View, box_mm: Box) -> tuple[float, float, float, float]:
    x0, y0 = view.pt(box_mm[0], box_mm[1])
    x1, y1 = view.pt(box_mm[2], box_mm[3])
    return x0, y0, x1 - x0, y1 - y0


def _top_view(group: Group, labels: Group, view: _View, design: Design, placed: Sequence[Antenna],
              pairs: Sequence[PairLine], enclosure: Box | None, near_field_mm: float | None,
              quarter_wave_mm: float | None, step_mm: float, coexistence: Sequence[CoexistenceLine] = (),
              marks: _Marks | None = None) -> None:
    _grid(marks.view(group, view, "top", "x y") if marks is not None else group, view, step_mm, step_mm, "x", "y")
    placer = _Placer(view.box)
    deferred: list[tuple[_Label, list[tuple[float, float]]]] = []

    if design.ground_plane_mm is not None:
        x, y, width, height = _rect_pt(view, (0.0, 0.0, *design.ground_plane_mm))
        group.add(Rect(x, y, width, height, fillColor=BOARD, strokeColor=BOARD_EDGE, strokeWidth=1.0))
        label = _Label(f"ground plane {_mm_text(design.ground_plane_mm[0])} × "
                       f"{_mm_text(design.ground_plane_mm[1])} mm", FONT, 7.5, MUTED)
        deferred.append((label, [(x + 3, y + 3), (x + 3, y + height - label.height - 3),
                                 (x + width - label.width - 3, y + 3), (x, y - label.height - 2),
                                 (x + width - label.width, y + height + 2)]))
        placer.block_segment((x, y), (x + width, y), 1.5, 0.2)
        placer.block_segment((x, y + height), (x + width, y + height), 1.5, 0.2)

    if enclosure is not None:
        x, y, width, height = _rect_pt(view, enclosure)
        group.add(Rect(x, y, width, height, fillColor=None, strokeColor=ENCLOSURE, strokeWidth=1.3,
                       strokeDashArray=ENCLOSURE_DASH))
        if design.enclosure_size_mm is not None:
            length_mm, width_mm, height_mm = design.enclosure_size_mm
            text = (f"enclosure {_mm_text(length_mm)} × {_mm_text(width_mm)} × {_mm_text(height_mm)} mm, "
                    f"{design.enclosure_material}")
        else:
            text = "enclosure size not given"
        label = _Label(text, FONT, 7.5, INK)
        deferred.append((label, [(x, y + height + 2), (x + width - label.width, y + height + 2),
                                 (x + 3, y + height - label.height - 3), (x, y - label.height - 2),
                                 (x + width - label.width, y - label.height - 2)]))
        for start, end in (((x, y), (x + width, y)), ((x, y + height), (x + width, y + height))):
            placer.block_segment(start, end, 1.5, 0.3)

    points = {antenna.name: view.pt(antenna.position_mm[0], antenna.position_mm[1])  # type: ignore[index]
              for antenna in placed}
    for antenna in placed:
        if near_field_mm is None or quarter_wave_mm is None:
            break  # no band chosen yet: no circles
        if not antenna.is_cellular:  # the circles are the cellular band's; GNSS and WLAN work far above it
            continue
        x, y = points[antenna.name]
        zones = _part(group, marks, antenna=marks.index(antenna.name), view="top", part="zone") if marks else group
        zones.add(Circle(x, y, quarter_wave_mm * view.scale, fillColor=None, strokeColor=MUTED,
                         strokeWidth=0.9, strokeDashArray=QUARTER_WAVE_DASH))
        zones.add(Circle(x, y, near_field_mm * view.scale, fillColor=NEAR_FIELD_TINT, strokeColor=MUTED,
                         strokeWidth=0.9, strokeDashArray=NEAR_FIELD_DASH))

    for pair in pairs:
        colour = _pair_colour(pair.severity)
        start, end = points[pair.first], points[pair.second]
        if start != end:
            line_group = _part(group, marks, pair=marks.pair(pair.first, pair.second), part="pair") if marks else group
            line_group.add(Line(*start, *end, strokeColor=colour, strokeWidth=1.8))
            placer.block_segment(start, end, 1.5, 1.0)
    for line in coexistence:
        start, end = points[line.cellular], points[line.victim]
        if start != end:
            line_group = (_part(group, marks, pair=marks.pair(line.cellular, line.victim), part="coexistence")
                          if marks else group)
            line_group.add(_dashed(start, end, SEVERITY_COLOURS[line.severity]))
            placer.block_segment(start, end, 1.5, 1.0)

    for antenna in placed:
        _antenna_glyph(group, placer, antenna, *points[antenna.name], axes=(0, 1), marks=marks, view="top")

    for antenna in placed:
        label = _Label(_short(antenna.name), FONT_BOLD, 8.5, INK)
        x, y = points[antenna.name]
        into = _part(labels, marks, antenna=marks.index(antenna.name), view="top", part="label") if marks else labels
        label.draw(into, placer.place(label.width, label.height, _around(x, y, 7.0, label.width, label.height)))
    for pair in pairs:
        colour = _pair_colour(pair.severity)
        label = _Label(f"{_mm_text(pair.distance_mm)} mm", FONT_BOLD, 7.5, colour, border=colour)
        (x1, y1), (x2, y2) = points[pair.first], points[pair.second]
        middle_x, middle_y = (x1 + x2) / 2, (y1 + y2) / 2
        length = math.hypot(x2 - x1, y2 - y1)
        normal = ((y1 - y2) / length, (x2 - x1) / length) if length else (0.0, 1.0)
        anchors = [(middle_x - label.width / 2, middle_y - label.height / 2)]
        for along in (0.0, 0.2, -0.2):
            for side in (1.0, -1.0):
                centre_x = middle_x + along * (x2 - x1) + side * normal[0] * (label.height + 2)
                centre_y = middle_y + along * (y2 - y1) + side * normal[1] * (label.height + 2)
                anchors.append((centre_x - label.width / 2, centre_y - label.height / 2))
        anchors += _around(middle_x, middle_y, 8.0, label.width, label.height)
        into = _part(labels, marks, pair=marks.pair(pair.first, pair.second), part="distance") if marks else labels
        label.draw(into, placer.place(label.width, label.height, anchors))
    for line in coexistence:
        colour = SEVERITY_COLOURS[line.severity]
        label = _Label(line.label, FONT_ITALIC, 7.5, colour, border=colour)
        (x1, y1), (x2, y2) = points[line.cellular], points[line.victim]
        anchors = [((x1 + x2) / 2 + along * (x2 - x1) - label.width / 2,
                    (y1 + y2) / 2 + along * (y2 - y1) - label.height / 2) for along in (0.15, -0.15, 0.3, 0.0)]
        anchors += _around((x1 + x2) / 2, (y1 + y2) / 2, 8.0, label.width, label.height)
        into = (_part(labels, marks, pair=marks.pair(line.cellular, line.victim), part="coexistence-label")
                if marks else labels)
        label.draw(into, placer.place(label.width, label.height, anchors))
    for label, anchors in deferred:
        label.draw(labels, placer.place(label.width, label.height, anchors))

    if not placed:
        message = "No antennas in this design" if not design.antennas else "No antenna has a position yet"
        x0, y0, x1, y1 = view.box
        labels.add(String((x0 + x1) / 2, _baseline((y0 + y1) / 2), message, fontName=FONT_ITALIC,
                          fontSize=10, fillColor=MUTED, textAnchor="middle"))


def _side_view(group: Group, view: _View, design: Design, placed: Sequence[Antenna], step_mm: float,
               marks: _Marks | None = None) -> None:
    # Heights span little, so the z ticks may be closer than the x ticks.
    _grid(marks.view(group, view, "side", "x z") if marks is not None else group, view, step_mm,
          min(step_mm, _nice_at_least(MIN_Z_TICK_SPACING_PT / view.scale)), "x", "z")
    placer = _Placer(view.box)
    labels = Group()
    enclosure_label: tuple[_Label, list[tuple[float, float]]] | None = None
    if design.enclosure_size_mm is not None:
        length_mm, _, height_mm = design.enclosure_size_mm
        x, y, width, height = _rect_pt(view, (0.0, 0.0, length_mm, height_mm))
        group.add(Rect(x, y, width, height, fillColor=None, strokeColor=ENCLOSURE, strokeWidth=1.3,
                       strokeDashArray=ENCLOSURE_DASH))
        label = _Label(f"enclosure height {_mm_text(height_mm)} mm", FONT, 7.5, INK)
        enclosure_label = (label, [(x, y + height + 2), (x + width - label.width, y + height + 2),
                                   (x + 3, y + height - label.height - 3), (x, y - label.height - 2)])
    points = {antenna.name: view.pt(antenna.position_mm[0], antenna.position_mm[2])  # type: ignore[index]
              for antenna in placed}
    for antenna in placed:
        _antenna_glyph(group, placer, antenna, *points[antenna.name], axes=(0, 2), marks=marks, view="side")
    for antenna in placed:
        label = _Label(_short(antenna.name), FONT_BOLD, 8.5, INK)
        x, y = points[antenna.name]
        into = _part(labels, marks, antenna=marks.index(antenna.name), view="side", part="label") if marks else labels
        label.draw(into, placer.place(label.width, label.height, _around(x, y, 7.0, label.width, label.height)))
    if enclosure_label is not None:
        label, anchors = enclosure_label
        label.draw(labels, placer.place(label.width, label.height, anchors))
    group.add(labels)


# -- legend -------------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Entry:
    swatch: Callable[[Group, float, float], object]
    text: str
    detail: str | None = None


def _legend_groups(frequency_mhz: float | None, near_field_mm: float | None, quarter_wave_mm: float | None,
                   roles: frozenset[str] = frozenset(), coexistence: bool = False,
                   judged: bool = True) -> list[tuple[str, list[_Entry]]]:
    """The legend; the GNSS, WLAN and coexistence entries only when the drawing has such antennas or lines; no
    circles before a band is chosen (no frequency), and the pairs 'not judged yet' while a draft's spacing
    checks wait (`judged` false)."""
    def zone(dash: list[float], tint: colors.Color | None) -> Callable[[Group, float, float], object]:
        return lambda group, x, y: group.add(Circle(x, y, 6.5, fillColor=tint, strokeColor=MUTED,
                                                    strokeWidth=0.9, strokeDashArray=dash))

    def pair_line(colour: colors.Color) -> Callable[[Group, float, float], object]:
        return lambda group, x, y: group.add(Line(x - 11, y, x + 11, y, strokeColor=colour, strokeWidth=1.8))

    outlines = [
        _Entry(lambda group, x, y: group.add(Rect(x - 11, y - 5, 22, 10, fillColor=None, strokeColor=ENCLOSURE,
                                                  strokeWidth=1.3, strokeDashArray=ENCLOSURE_DASH)),
               "enclosure outline"),
        _Entry(lambda group, x, y: group.add(Rect(x - 11, y - 5, 22, 10, fillColor=BOARD,
                                                  strokeColor=BOARD_EDGE, strokeWidth=1.0)),
               "ground plane"),
    ]
    pair_entries = [
        *(_Entry(pair_line(SEVERITY_COLOURS[severity]), severity) for severity in SEVERITIES),
        _Entry(pair_line(NO_FINDING_COLOUR), "no finding", "label: 3-D distance in mm"),
    ] if judged else [_Entry(pair_line(NOT_JUDGED_COLOUR), NOT_JUDGED, "the spacing checks wait for an answer")]
    if coexistence:
        pair_entries.append(_Entry(lambda group, x, y: group.add(_dashed((x - 11, y), (x + 11, y),
                                                                         SEVERITY_COLOURS["warning"])),
                                   "dashed: coexistence finding", "cellular bands → the GNSS or WLAN band"))
    pairs_title = "Cellular antenna pairs, feed to feed"
    if frequency_mhz is None or near_field_mm is None or quarter_wave_mm is None:
        return [_antenna_legend(roles), ("Outlines (circles follow once bands are chosen)", outlines),
                (pairs_title, pair_entries)]
    frequency = f"{frequency_mhz:g} MHz"
    return [
        _antenna_legend(roles),
        (f"Around each {'cellular ' if roles - set(CELLULAR_ROLES) else ''}antenna at {frequency}", [
            _Entry(zone(NEAR_FIELD_DASH, NEAR_FIELD_TINT), f"λ/2π = {near_field_mm:.1f} mm at {frequency}",
                   "reactive near field"),
            _Entry(zone(QUARTER_WAVE_DASH, None), f"λ/4 = {quarter_wave_mm:.1f} mm at {frequency}",
                   "quarter wave, the usual minimum spacing"),
            *outlines,
        ]),
        (pairs_title, pair_entries),
    ]


def _antenna_legend(roles: frozenset[str]) -> tuple[str, list[_Entry]]:
    return ("Antennas", [
        _Entry(lambda group, x, y: _marker(group, x, y, "main", "internal"), "main antenna, at its feed"),
        _Entry(lambda group, x, y: _marker(group, x, y, "receive", "internal"), "receive antenna"),
        *([_Entry(lambda group, x, y: _marker(group, x, y, "gnss", "internal"), "GNSS antenna",
                  "satellite navigation; not a cellular branch")] if "gnss" in roles else []),
        *([_Entry(lambda group, x, y: _marker(group, x, y, "wlan", "internal"), "WLAN antenna",
                  "Wi-Fi or Bluetooth; not a cellular branch")] if "wlan" in roles else []),
        _Entry(lambda group, x, y: _marker(group, x, y, "main", "external"), "hollow: external antenna"),
        _Entry(lambda group, x, y: _arrow(group, x, y, 1.0, 0.0, 11.0), "polarization axis",
               "projected; shorter when tilted out of view"),
        _Entry(lambda group, x, y: _out_of_page(group, x, y, dot=True), "axis out of the page"),
    ])


def _entry_height(entry: _Entry) -> float:
    return LEGEND_ROW_PT + (LEGEND_DETAIL_PT if entry.detail else 0.0) + 2.0


def _legend_columns(width_pt: float, groups: list[tuple[str, list[_Entry]]]) -> list[list[tuple[str, list[_Entry]]]]:
    count = max(1, min(len(groups), int((width_pt - 2 * MARGIN_PT) // LEGEND_COLUMN_MIN_PT)))
    columns: list[list[tuple[str, list[_Entry]]]] = [[] for _ in range(count)]
    heights = [0.0] * count
    for heading, entries in groups:
        index = heights.index(min(heights))
        columns[index].append((heading, entries))
        heights[index] += LEGEND_HEADING_PT + sum(_entry_height(entry) for entry in entries) + 6
    return columns


def _legend_height(columns: list[list[tuple[str, list[_Entry]]]]) -> float:
    return max(sum(LEGEND_HEADING_PT + sum(_entry_height(entry) for entry in entries) + 6
                   for _, entries in column) for column in columns)


def _draw_legend(group: Group, columns: list[list[tuple[str, list[_Entry]]]], left: float, top: float,
                 width_pt: float) -> None:
    column_width = (width_pt - 2 * MARGIN_PT) / len(columns)
    for index, column in enumerate(columns):
        x = left + index * column_width
        y = top
        for heading, entries in column:
            group.add(String(x, _baseline(y - 9), _fit_text(heading, FONT_BOLD, 8, column_width - 6),
                             fontName=FONT_BOLD, fontSize=8, fillColor=INK))
            y -= LEGEND_HEADING_PT
            for entry in entries:
                centre_y = y - LEGEND_ROW_PT / 2
                entry.swatch(group, x + 12, centre_y)
                group.add(String(x + 30, _baseline(centre_y - 2.8),
                                 _fit_text(entry.text, FONT, 8, column_width - 36),
                                 fontName=FONT, fontSize=8, fillColor=INK))
                if entry.detail:
                    group.add(String(x + 30, _baseline(centre_y - 2.8 - LEGEND_DETAIL_PT),
                                     _fit_text(entry.detail, FONT, 7, column_width - 36),
                                     fontName=FONT, fontSize=7, fillColor=MUTED))
                y -= _entry_height(entry)
            y -= 6


def _scale_bar(group: Group, left: float, top: float, scale: float, width_pt: float, max_pt: float) -> float:
    """A bar of a round length near a quarter of the drawing's width, in two halves."""
    length_mm = _nice_nearest(0.25 * width_pt / scale)
    while length_mm * scale > max_pt:
        length_mm = _nice_nearest(length_mm * 0.45)
    half_pt = length_mm * scale / 2
    y = top - 8
    group.add(Rect(left, y, half_pt, 4, fillColor=INK, strokeColor=INK, strokeWidth=0.6))
    group.add(Rect(left + half_pt, y, half_pt, 4, fillColor=WHITE, strokeColor=INK, strokeWidth=0.6))
    for offset_pt, text in ((0.0, "0"), (half_pt, _mm_text(length_mm / 2)),
                            (2 * half_pt, f"{_mm_text(length_mm)} mm")):
        group.add(String(left + offset_pt, _baseline(y - 9), text, fontName=FONT, fontSize=7.5, fillColor=INK,
                         textAnchor="middle" if offset_pt < 2 * half_pt else "start"))
    return length_mm


# -- the drawing ---------------------------------------------------------------------------------------------


def _product_words(design: Design, record: str) -> str:
    """`Gate opener, hardware revision B, design revision 2`: the board's revision (from the design) and the
    record's (from the caller) named apart."""
    parts = [design.product_name or "this product"]
    if design.product_revision:
        parts.append(f"hardware revision {design.product_revision}")
    if record:
        parts.append(record)
    return ", ".join(parts)


def _description(design: Design, placed: Sequence[Antenna], pairs: Sequence[PairLine], frequency_mhz: float | None,
                 near_field_mm: float | None, quarter_wave_mm: float | None, side_view: bool, all_pairs: int,
                 coexistence: Sequence[CoexistenceLine] = (), all_coexistence: int = 0, record: str = "") -> str:
    product = _product_words(design, record)
    sentences = [f"Top view of the antenna placement of {product}: positions in mm in the enclosure frame, "
                 f"x to the right and y up."]
    if design.enclosure_size_mm is not None:
        sentences.append("The enclosure is " + " × ".join(_mm_text(v) for v in design.enclosure_size_mm)
                         + " mm.")
    else:
        sentences.append("The enclosure size is not given.")
    if design.ground_plane_mm is not None:
        sentences.append("The ground plane is " + " × ".join(_mm_text(v) for v in design.ground_plane_mm)
                         + " mm from the origin.")
    if not design.antennas:
        sentences.append("The design has no antennas.")
    else:
        described = []
        for antenna in design.antennas:
            what = f"{antenna.name} ({antenna.role}, {antenna.mounting})"
            if antenna.position_mm is None:
                described.append(f"{what} is not placed")
            else:
                x, y, z = (_mm_text(v) for v in antenna.position_mm)
                described.append(f"{what} at x {x}, y {y}, z {z} mm, {_axis_text(antenna.polarization)}")
        sentences.append("Antennas: " + "; ".join(described) + ".")
    if pairs:
        sentences.append("Pairs: " + "; ".join(
            f"{pair.first} to {pair.second} {_mm_text(pair.distance_mm)} mm apart, "
            f"{pair.severity or 'no finding'}" for pair in pairs) + ".")
        if any(pair.severity == NOT_JUDGED for pair in pairs):
            sentences.append("The spacing checks wait for an answer in the questionnaire, so no pair is judged yet.")
    if all_pairs > len(pairs):
        sentences.append(f"Lines are drawn for {len(pairs)} of the {all_pairs} pairs: those with a spacing "
                         f"finding, worst and nearest first, then the nearest others; the checklist lists "
                         f"every finding.")
    if coexistence:
        sentences.append("Dashed lines join antennas a coexistence finding names: " + "; ".join(
            f"{line.cellular} to {line.victim}, {line.label}, {line.severity}" for line in coexistence) + ".")
    if all_coexistence > len(coexistence):
        sentences.append(f"Coexistence lines are drawn for the {len(coexistence)} worst of {all_coexistence}.")
    cellular_placed = any(antenna.is_cellular for antenna in placed)
    if cellular_placed and frequency_mhz is None:
        sentences.append("No band is chosen yet, so no near-field or quarter-wave circles are drawn.")
    elif cellular_placed:
        sentences.append(f"Circles around each cellular antenna show the reactive near field, λ/2π = "
                         f"{near_field_mm:.1f} mm, and a quarter wave, λ/4 = {quarter_wave_mm:.1f} mm, at "
                         f"{frequency_mhz:g} MHz.")
    if side_view:
        sentences.append("A side view below shows the antenna heights, x to the right and z up.")
    return " ".join(sentences)


def placement_drawing(design: Design, *, pair_severities: Mapping[frozenset[str], str] | None,
                      frequency_mhz: float | None, width_pt: float = 640, max_height_pt: float | None = None,
                      coexistence: Sequence[CoexistenceLine] = (), record: str = "", editable: bool = False,
                      keys_id: str = "placement-keys") -> PlacementDrawing:
    """The placement drawing of a design, `width_pt` wide, judged at `frequency_mhz` (the lowest
    frequency in scope; None while a draft has no bands: no circles then). `pair_severities` maps a pair of
    antenna names to its worst separation finding (see `pair_severities_from_findings`); a pair of cellular
    antennas without an entry is drawn as having none; None draws every pair as not judged yet (a draft whose
    spacing checks wait). `coexistence` (see `coexistence_lines_from_findings`) adds a dashed line per pair it
    names, the worst MAX_COEXISTENCE_LINES of those whose antennas are both placed. `record` names the record
    the drawing belongs to ("design revision 2"), beside the hardware revision.
    `max_height_pt` (say, a PDF frame's height) shrinks the scale until the drawing fits, as far as
    the fixed rows (title, legend) allow.

    `editable` draws it for the draft page's placement editor: a side view whenever an antenna is placed (so
    heights can be changed there too), a top view that keeps room for circles anywhere in the enclosure (so
    moving an antenna doesn't rescale it), and each view's scale and origin, each antenna's parts and each pair
    line tagged for the page's SVG (`_Marks`); `keys_id` names the page's text on the keys. The PDF's drawing
    is never editable.

    The result's `layout` (and `scale_pt_per_mm`) tell where things were drawn."""
    if frequency_mhz is not None and not (math.isfinite(frequency_mhz) and frequency_mhz > 0):
        raise ValueError(f"frequency_mhz must be a positive number, got {frequency_mhz!r}")
    if not (math.isfinite(width_pt) and width_pt >= MIN_WIDTH_PT):
        raise ValueError(f"width_pt must be at least {MIN_WIDTH_PT:g}, got {width_pt!r}")
    if max_height_pt is not None and not (math.isfinite(max_height_pt) and max_height_pt > 0):
        raise ValueError(f"max_height_pt must be a positive number, got {max_height_pt!r}")
    width_pt = float(width_pt)
    near_field_mm = physics.near_field_radius_mm(frequency_mhz) if frequency_mhz is not None else None
    quarter_wave_mm = physics.quarter_wave_mm(frequency_mhz) if frequency_mhz is not None else None
    pairs = _pairs([antenna for antenna in design.antennas if antenna.position_mm is not None and antenna.is_cellular],
                   pair_severities)
    drawn_pairs = _pairs_to_draw(pairs)
    positioned = {antenna.name for antenna in design.antennas if antenna.position_mm is not None}
    for line in coexistence:
        if line.severity not in SEVERITY_COLOURS:
            raise ValueError(f"unknown severity {line.severity!r} for {line.cellular} and {line.victim}; "
                             f"expected one of {', '.join(SEVERITIES)}")
    coexisting = [line for line in coexistence if line.cellular in positioned and line.victim in positioned]
    drawn_coexistence = sorted(coexisting, key=lambda line: SEVERITIES.index(line.severity))[:MAX_COEXISTENCE_LINES]
    drawn = _drawable(design)
    placed = [antenna for antenna in drawn.antennas if antenna.position_mm is not None]
    unplaced = [antenna.name for antenna in drawn.antennas if antenna.position_mm is None]
    enclosure = _enclosure_box(drawn, placed)
    ex0, ey0, ex1, ey1 = _top_extent(drawn, placed, enclosure, max(near_field_mm or 0.0, quarter_wave_mm or 0.0),
                                     steady=editable)
    heights = {antenna.position_mm[2] for antenna in placed}  # type: ignore[index]
    side = _side_extent(drawn, placed) if len(heights) > 1 or (editable and placed) else None

    legend = _legend_columns(width_pt, _legend_groups(
        frequency_mhz, near_field_mm, quarter_wave_mm, frozenset(antenna.role for antenna in placed),
        bool(drawn_coexistence), judged=pair_severities is not None))
    note_lines = simpleSplit(f"not placed: {', '.join(unplaced)} (no feed position given)", FONT_ITALIC, 8,
                             width_pt - 2 * MARGIN_PT) if unplaced else []
    if len(drawn_pairs) < len(pairs):
        note_lines += simpleSplit(f"lines for {len(drawn_pairs)} of {len(pairs)} pairs: those with a spacing "
                                  "finding, worst and nearest first, then the nearest others (the checklist "
                                  "lists every finding)", FONT_ITALIC, 8, width_pt - 2 * MARGIN_PT)
    # The height is these fixed rows plus the views' spans in mm times the scale.
    fixed_height_pt = (
        MARGIN_PT + HEADER_PT + 12 + 2 * PANEL_PAD_PT + TICK_ROW_PT + SCALE_ROW_PT
        + (SIDE_HEADING_PT + 12 + 2 * SIDE_PAD_PT + TICK_ROW_PT if side is not None else 0.0)
        + GAP_PT + _legend_height(legend) + len(note_lines) * NOTE_LINE_PT + MARGIN_PT
    )
    spans_mm = _span(ey0, ey1) + (_span(*side) if side is not None else 0.0)

    # One scale for both views: the top view fills the width unless that makes it (or the side view)
    # far taller than wide, or the whole drawing taller than the caller's limit.
    room_pt = width_pt - 2 * MARGIN_PT - Y_TICK_GUTTER_PT - 2 * PANEL_PAD_PT
    limits = [room_pt / _span(ex0, ex1), 1.1 * width_pt / _span(ey0, ey1)]
    if side is not None:
        limits.append(0.6 * width_pt / _span(*side))
    if max_height_pt is not None:
        # The height is rounded up to a whole point (the SVG renderer needs one): leave a point for that.
        limits.append(max(math.floor(max_height_pt) - 1 - fixed_height_pt, MIN_VIEWS_HEIGHT_PT) / spans_mm)
    scale = min(limits)
    panel_width_pt = _span(ex0, ex1) * scale + 2 * PANEL_PAD_PT
    panel_left_pt = MARGIN_PT + Y_TICK_GUTTER_PT + (room_pt + 2 * PANEL_PAD_PT - panel_width_pt) / 2
    top_height_pt = _span(ey0, ey1) * scale + 2 * PANEL_PAD_PT
    side_height_pt = _span(*side) * scale + 2 * SIDE_PAD_PT if side is not None else 0.0
    step_mm = _nice_at_least(MIN_GRID_SPACING_PT / scale)
    height_pt = math.ceil(fixed_height_pt + spans_mm * scale)

    title = ("Placement — top view, no band chosen yet" if frequency_mhz is None
             else f"Placement — top view, judged at {frequency_mhz:g} MHz")
    drawing = PlacementDrawing(width_pt, height_pt)
    group = Group()
    top = height_pt - MARGIN_PT
    group.add(String(MARGIN_PT, _baseline(top - 13), _fit_text(title, FONT_BOLD, 13, width_pt - 2 * MARGIN_PT),
                     fontName=FONT_BOLD, fontSize=13, fillColor=INK))
    product = _product_words(design, record)
    subtitle = f"{product} · positions in mm in the enclosure frame"  # the legend explains the lines
    group.add(String(MARGIN_PT, _baseline(top - 29), _fit_text(subtitle, FONT, 8.5, width_pt - 2 * MARGIN_PT),
                     fontName=FONT, fontSize=8.5, fillColor=MUTED))
    top -= HEADER_PT + 12

    top_view = _View(panel_left_pt, top - top_height_pt, panel_width_pt, top_height_pt,
                     ex0 - PANEL_PAD_PT / scale, ey0 - PANEL_PAD_PT / scale, scale)
    marks = None
    if editable:
        heights_mm = ((side[0] - SIDE_PAD_PT / scale, side[1] + SIDE_PAD_PT / scale) if side is not None
                      else (0.0, 0.0))
        marks = _Marks.of(design, top_view, heights_mm, keys_id)
    labels = Group()
    _top_view(group, labels, top_view, drawn, placed, drawn_pairs, enclosure, near_field_mm, quarter_wave_mm,
              step_mm, drawn_coexistence, marks)
    group.add(labels)
    top -= top_height_pt + TICK_ROW_PT
    scale_bar_mm = _scale_bar(group, panel_left_pt, top, scale, width_pt, panel_width_pt)
    top -= SCALE_ROW_PT

    side_view = None
    if side is not None:
        group.add(String(MARGIN_PT, _baseline(top - 11), "Side view — x right, z up, same scale",
                         fontName=FONT_BOLD, fontSize=9.5, fillColor=INK))
        top -= SIDE_HEADING_PT + 12
        side_view = _View(panel_left_pt, top - side_height_pt, panel_width_pt, side_height_pt,
                          top_view.across_min_mm, side[0] - SIDE_PAD_PT / scale, scale)
        _side_view(group, side_view, drawn, placed, step_mm, marks)
        top -= side_height_pt + TICK_ROW_PT

    top -= GAP_PT
    _draw_legend(group, legend, MARGIN_PT, top, width_pt)
    top -= _legend_height(legend)
    for line in note_lines:
        group.add(String(MARGIN_PT, _baseline(top - 9), line, fontName=FONT_ITALIC, fontSize=8, fillColor=INK))
        top -= NOTE_LINE_PT
    drawing.add(group)

    drawing.layout = PlacementLayout(
        scale_pt_per_mm=scale,
        scale_bar_mm=scale_bar_mm,
        frequency_mhz=frequency_mhz,
        near_field_radius_mm=near_field_mm,
        quarter_wave_mm=quarter_wave_mm,
        top_view_origin_pt=top_view.pt(0.0, 0.0),
        side_view_origin_pt=side_view.pt(0.0, 0.0) if side_view is not None else None,
        enclosure_given=design.enclosure_size_mm is not None,
        placed=tuple(antenna.name for antenna in placed),
        unplaced=tuple(unplaced),
        pairs=tuple(pairs),
        title=f"Antenna placement of {design.product_name or 'this product'}",
        description=_description(design, placed, drawn_pairs, frequency_mhz, near_field_mm, quarter_wave_mm,
                                 side is not None, len(pairs), drawn_coexistence, len(coexisting), record),
        drawn_pairs=tuple(drawn_pairs),
        coexistence=tuple(drawn_coexistence),
    )
    return drawing


# -- SVG for the page ---------------------------------------------------------------------------------------

_SVG_FAMILY = "Helvetica, Arial, sans-serif"
_SVG_FONTS = {
    FONT: {"family": _SVG_FAMILY},
    FONT_BOLD: {"family": _SVG_FAMILY, "weight": "bold"},
    FONT_ITALIC: {"family": _SVG_FAMILY, "style": "italic"},
}


class _ExactColourSVGCanvas(renderSVG.SVGCanvas):
    """The stock canvas writes each colour channel as a whole percent (#b3261e becomes rgb(70%,14%,11%)),
    so the page would drift from the palette and from the PDF; this one writes #rrggbb."""

    @staticmethod
    def _hex(colour: colors.Color) -> str:
        return "#" + "".join(f"{round(channel * 255):02x}" for channel in (colour.red, colour.green, colour.blue))

    def setStrokeColor(self, color: colors.Color | None) -> None:
        super().setStrokeColor(color)
        if color is not None:
            self.style["stroke"] = self._hex(color)

    def setFillColor(self, color: colors.Color | None) -> None:
        super().setFillColor(color)
        if color is not None:
            self.style["fill"] = self._hex(color)


class _TaggingSVGRenderer(renderSVG._SVGRenderer):
    """The stock SVG renderer, writing a `_Tagged` group's attributes on its <g>. reportlab offers no hook for
    attributes on a group; a group's <g> is the last child its parent has once the group is drawn."""

    def drawGroup(self, group: Group) -> None:
        parent = self._canvas.currGroup
        super().drawGroup(group)
        for name, value in (getattr(group, "svg_attributes", None) or {}).items():
            parent.lastChild.setAttribute(name, value)


def _clean_prefix(id_prefix: str) -> str:
    prefix = re.sub(r"[^A-Za-z0-9_-]+", "-", id_prefix).strip("-")
    return prefix if prefix[:1].isalpha() else f"p-{prefix}".rstrip("-")


def placement_svg(design: Design, *, pair_severities: Mapping[frozenset[str], str] | None,
                  frequency_mhz: float | None, width_pt: float = 640, id_prefix: str = "placement",
                  coexistence: Sequence[CoexistenceLine] = (), record: str = "", editable: bool = False) -> str:
    """The placement drawing as a standalone <svg> element to inline in HTML.

    It has role="img" and is labelled by its <title> and <desc> (a sentence listing the antennas, their
    positions, pair distances and findings, and the circle radii). Every id starts with `id_prefix`, so
    two drawings can share a page; it scales to its container, at most its natural width.

    `editable` (the draft page) draws it for the placement editor (see `placement_drawing`): the <svg> is then
    a group, not an image, since it holds a focusable marker per antenna and view, and it carries the
    enclosure's size (`data-enclosure-mm`) and how many antennas the design has (`data-antennas`). Each marker
    is described by the page's element `<id_prefix>-keys`, which says how to move and turn it.
    """
    prefix = _clean_prefix(id_prefix)
    drawing = placement_drawing(design, pair_severities=pair_severities, frequency_mhz=frequency_mhz,
                                width_pt=width_pt, coexistence=coexistence, record=record, editable=editable,
                                keys_id=f"{prefix}-keys")
    layout: PlacementLayout = drawing.layout
    editor = None
    if editable:
        editor = {"data-placement-editor": "", "data-antennas": str(len(design.antennas))}
        if design.enclosure_size_mm is not None:
            editor["data-enclosure-mm"] = _numbers(design.enclosure_size_mm)
    return accessible_svg(drawing, title=layout.title, description=layout.description, id_prefix=id_prefix,
                          editor=editor)


def accessible_svg(drawing: Drawing, *, title: str, description: str, id_prefix: str,
                   editor: Mapping[str, str] | None = None) -> str:
    """Any drawing as a standalone <svg> element to inline in HTML: role="img", labelled by its <title>
    and <desc>, every id prefixed with `id_prefix` (cleaned to a valid id start), palette colours written
    exactly, and a width that follows its container up to the drawing's natural width. With `editor` (the
    attributes of an editable drawing) it is a group labelled by its title and described by its description,
    holding focusable parts that an image may not."""
    canvas = _ExactColourSVGCanvas((drawing.width, drawing.height),
                                   fontHacks={font: dict(attrs) for font, attrs in _SVG_FONTS.items()})
    _TaggingSVGRenderer().draw(renderSVG.renderScaledDrawing(drawing), canvas, 0, 0, showBoundary=False)
    prefix = _clean_prefix(id_prefix)
    svg = canvas.svg

    elements = [svg, *svg.getElementsByTagName("*")]
    renamed = {}
    for element in elements:
        if element.hasAttribute("id"):
            renamed[element.getAttribute("id")] = f"{prefix}-{element.getAttribute('id')}"
            element.setAttribute("id", renamed[element.getAttribute("id")])
    for element in elements:
        for attribute in ("style", "clip-path", "mask", "fill", "href", "xlink:href"):
            if element.hasAttribute(attribute):
                value = element.getAttribute(attribute)
                for old, new in renamed.items():
                    value = value.replace(f"url(#{old})", f"url(#{new})")
                    if value == f"#{old}":
                        value = f"#{new}"
                element.setAttribute(attribute, value)

    for tag, text in (("title", title), ("desc", description)):
        node = svg.getElementsByTagName(tag)[0]
        node.setAttribute("id", f"{prefix}-{tag}")
        for child in list(node.childNodes):
            node.removeChild(child)
        node.appendChild(canvas.doc.createTextNode(text))

    svg.removeAttribute("height")
    svg.setAttribute("width", "100%")
    svg.setAttribute("viewBox", f"0 0 {drawing.width:g} {drawing.height:g}")
    svg.setAttribute("style", f"max-width: {drawing.width:g}px; height: auto;")
    if editor is None:
        svg.setAttribute("role", "img")
        svg.setAttribute("aria-labelledby", f"{prefix}-title {prefix}-desc")
    else:
        svg.setAttribute("role", "group")
        svg.setAttribute("aria-labelledby", f"{prefix}-title")
        svg.setAttribute("aria-describedby", f"{prefix}-desc")
        for name, value in editor.items():
            svg.setAttribute(name, value)
    return svg.toxml()
