"""The signed PDF record of a design revision, built with reportlab.

Cover, design summary, band table, placement drawing (vector), the checklist with every disposition,
the findings in detail, measurement charts when the revision has measurements, the signatures, and a
cautions page. Every page carries "page X of Y" and a footer with product, revision and fingerprint;
tables that split across pages repeat their header.

Whatever the forms and the parser accept must lay out: every table may split inside a row (a 4,000
character justification or a 1,000 character name is taller than a page in a narrow column), a word
longer than its column is broken, a very long justification is cut in the checklist table and printed
whole under the findings in detail, and a figure that fails to draw is replaced by a note saying so
(the tables carry the same data). Text goes through record_fonts, which embeds fonts that have every
name's characters.
"""

import io
import logging
from collections.abc import Callable, Sequence
from functools import partial
from typing import Any

from reportlab import platypus, rl_config
from reportlab.lib import colors
from reportlab.lib.enums import TA_LEFT
from reportlab.lib.pagesizes import A4
from reportlab.lib.styles import ParagraphStyle, getSampleStyleSheet
from reportlab.lib.units import mm
from reportlab.pdfgen import canvas as pdf_canvas
from reportlab.platypus import (
    CondPageBreak,
    KeepTogether,
    LongTable,
    PageBreak,
    SimpleDocTemplate,
    Spacer,
    Table,
    TableStyle,
)
from reportlab.platypus.flowables import Flowable

from projectapp import palette
from projectapp.designs import coverage_panel
from projectapp.designs.checklists import cellular_patterns, measurement_digests, measurement_reader
from projectapp.designs.models import Revision
from projectapp.designs.templatetags.checklist import basis_words, outranked
from projectapp.figures.charts import (
    correlation_chart,
    coverage_chart,
    isolation_chart,
    pattern_correlation_chart,
    return_loss_chart,
)
from projectapp.figures.placement import (
    coexistence_lines_from_findings,
    pair_severities_from_findings,
    placement_drawing,
)
from projectapp.reviews.models import EvidenceAttachment, ProcessStep, ReviewItem
from projectapp.reviews.provenance import decision_lines
from projectapp.reviews.services import approver_ids
from projectapp.signoff.record_fonts import (
    SANS,
    SANS_BOLD,
    draw_text,
    embed_drawing_text,
    fit,
    markup,
    printable,
    register,
    text_width,
)
from rules.coverage import analyse_coverage
from rules.design import parse_design
from rules.farfield import environment_text
from rules.measurements import LoadedMeasurement, attach_measurements

logger = logging.getLogger(__name__)

# Compressed streams stay binary: ASCII85 would make the file 25 % larger and cost a third of the build.
rl_config.useA85 = 0

# The app's palette (projectapp/palette.py), so the record reads like the page.
INK = colors.HexColor(palette.INK)
MUTED = colors.HexColor(palette.MUTED)
LINE = colors.HexColor(palette.LINE)
HEAD = colors.HexColor(palette.HEAD)
SEVERITY_COLOURS = {severity: colors.HexColor(colour) for severity, colour in palette.SEVERITY.items()}
PAGE_WIDTH, PAGE_HEIGHT = A4
MARGIN = 18 * mm
FRAME_WIDTH = PAGE_WIDTH - 2 * MARGIN

_styles = getSampleStyleSheet()
BODY = ParagraphStyle("body", parent=_styles["BodyText"], fontName=SANS, fontSize=9, leading=12,
                      textColor=INK, alignment=TA_LEFT)
SMALL = ParagraphStyle("small", parent=BODY, fontSize=7.5, leading=9.5, textColor=INK)
MUTED_SMALL = ParagraphStyle("muted", parent=SMALL, textColor=MUTED)
H1 = ParagraphStyle("h1", parent=BODY, fontName=SANS_BOLD, fontSize=20, leading=25, spaceAfter=6)
H2 = ParagraphStyle("h2", parent=BODY, fontName=SANS_BOLD, fontSize=13, leading=17, spaceBefore=10,
                    spaceAfter=5)
H3 = ParagraphStyle("h3", parent=BODY, fontName=SANS_BOLD, fontSize=10, leading=13, spaceBefore=6,
                    spaceAfter=2)
CELL = ParagraphStyle("cell", parent=SMALL)
CELL_BOLD = ParagraphStyle("cellbold", parent=SMALL, fontName=SANS_BOLD)
CELL_MUTED = ParagraphStyle("cellmuted", parent=CELL, textColor=MUTED, spaceBefore=0)
MONO_SMALL = ParagraphStyle("monosmall", parent=SMALL, fontSize=6.5, leading=8)  # a SHA-256 breaks where it must
# A row splits across pages only when it must, and never into a piece shorter than this (points).
MIN_ROW_PIECE_PT = 30
# Longer justifications are cut in the checklist table and printed whole under the findings in detail.
JUSTIFICATION_IN_TABLE_CHARS = 600


class Paragraph(platypus.Paragraph):
    """A paragraph that keeps its last layout. A table wraps every cell to measure its rows, again each time
    it splits across a page and again to draw it; a paragraph's lines depend on the width alone, so the
    repeats were a third of the record's build time."""

    _wrapped_width: float | None = None

    def wrap(self, availWidth, availHeight):  # noqa: N803 (reportlab's names)
        if availWidth != self._wrapped_width or not hasattr(self, "blPara"):  # split() may drop the layout
            super().wrap(availWidth, availHeight)
            self._wrapped_width = availWidth
        return self.width, self.height


def esc(value: Any) -> str:
    """Paragraph markup of a value typed by someone: escaped, each character in a font that has it."""
    return markup(value)


def p(text: Any, style: ParagraphStyle = CELL) -> Paragraph:
    return Paragraph(markup(text, base=SANS_BOLD if style.fontName == SANS_BOLD else SANS), style)


def grid_table(rows: Sequence[Sequence[Any]], widths: Sequence[float], *, header: bool = True) -> Table:
    """A table whose header row repeats on every page it spans; a row taller than the space left splits."""
    table = LongTable([[cell if isinstance(cell, Flowable | list) else p(cell) for cell in row] for row in rows],
                  colWidths=widths, repeatRows=1 if header else 0, hAlign="LEFT", splitInRow=MIN_ROW_PIECE_PT)
    style = [("GRID", (0, 0), (-1, -1), 0.4, LINE), ("VALIGN", (0, 0), (-1, -1), "TOP"),
             ("LEFTPADDING", (0, 0), (-1, -1), 3), ("RIGHTPADDING", (0, 0), (-1, -1), 3),
             ("TOPPADDING", (0, 0), (-1, -1), 2), ("BOTTOMPADDING", (0, 0), (-1, -1), 2)]
    if header:
        style.append(("BACKGROUND", (0, 0), (-1, 0), HEAD))
    table.setStyle(TableStyle(style))
    return table


def numbered_canvas(footer_text: str):
    """A canvas class that knows the page count when each page is finished: "page X of Y"."""

    class NumberedCanvas(pdf_canvas.Canvas):
        def __init__(self, *args, **kwargs):
            super().__init__(*args, **kwargs)
            self._saved_pages: list[dict] = []

        def showPage(self):  # noqa: N802 (reportlab's name)
            self._saved_pages.append(dict(self.__dict__))
            self._startPage()

        def save(self):
            total = len(self._saved_pages)
            for state in self._saved_pages:
                self.__dict__.update(state)
                self._footer(total)
                super().showPage()
            super().save()

        def _footer(self, total: int) -> None:
            self.saveState()
            self.setStrokeColor(LINE)
            self.line(MARGIN, 13 * mm, PAGE_WIDTH - MARGIN, 13 * mm)
            self.setFillColor(MUTED)
            number = f"page {self._pageNumber} of {total}"
            draw_text(self, MARGIN, 9 * mm, footer_text, size=7)
            draw_text(self, PAGE_WIDTH - MARGIN, 9 * mm, number, size=7, anchor="end")
            self.restoreState()

    return NumberedCanvas


def _design_summary(design) -> list[Flowable]:
    modem = design.modem
    facts = [
        ["Category", f"{modem.category.label} ({modem.category.id})"],
        ["Bands", ", ".join(band.name for band in modem.bands)],
        ["Receive ports on the module", modem.rx_ports if modem.rx_ports is not None else "not given"],
        ["Operator single-antenna approval", "recorded" if modem.operator_single_antenna_approval else "none"],
        ["Approved gain limits", ", ".join(f"{band} {limit:g} dBi" for band, limit in modem.gain_limits_dbi.items())
         or "not given"],
        ["Enclosure", (" × ".join(f"{v:g}" for v in design.enclosure_size_mm) + " mm, " if design.enclosure_size_mm
                       else "size not given, ") + design.enclosure_material],
        ["Ground plane", " × ".join(f"{v:g}" for v in design.ground_plane_mm) + " mm" if design.ground_plane_mm
         else "not given"],
        ["Deployment", ", ".join(filter(None, [
            design.deployment.environment or "environment not given",
            f"DL {design.deployment.required_dl_kbps:g} kbps" if design.deployment.required_dl_kbps is not None else "",
            f"UL {design.deployment.required_ul_kbps:g} kbps" if design.deployment.required_ul_kbps is not None else "",
            f"people at {design.deployment.body_distance_mm:g} mm" if design.deployment.body_distance_mm is not None
            else ""]))],
    ]
    facts[5:5] = _modem_facts(design)
    rows = [["Name", "Role", "Mounting", "Feed x, y, z (mm)", "Axis", "Rated (MHz)", "Cable (dB)"]]
    figures = [["Name", "Peak gain (dBi)", "Total efficiency (%)", "Efficiency from"]]
    for antenna in design.antennas:
        rows.append([
            antenna.name, ROLE_WORDS.get(antenna.role, antenna.role), antenna.mounting,
            ", ".join(f"{v:g}" for v in antenna.position_mm) if antenna.position_mm else "—",
            ", ".join(f"{v:g}" for v in antenna.polarization) if antenna.polarization else "—",
            ", ".join(f"{lo:g}–{hi:g}" for lo, hi in antenna.ranges_mhz) if antenna.ranges_mhz else "—",
            f"{antenna.cable_loss_db:g}",
        ])
        figures.append([
            antenna.name, _gain_text(antenna),
            _per_band(antenna.efficiency_pct, "") or "not given",
            EFFICIENCY_SOURCE_WORDS.get(antenna.efficiency_source, antenna.efficiency_source)
            if antenna.efficiency_pct else "—",
        ])
    width = FRAME_WIDTH
    return [
        p("Design summary", H2),
        grid_table(facts, [55 * mm, width - 55 * mm], header=False),
        Spacer(1, 4 * mm),
        p("Antennas", H3),
        grid_table(rows, [18 * mm, 30 * mm, 17 * mm, 28 * mm, 18 * mm, width - 131 * mm, 20 * mm]),
        Spacer(1, 3 * mm),
        p("Antenna figures per band", H3),
        grid_table(figures, [18 * mm, 55 * mm, 55 * mm, width - 128 * mm]),
    ]


ROLE_WORDS = {"main": "main (cellular, sends and receives)", "receive": "receive (cellular)",
              "gnss": "GNSS (satellite navigation)", "wlan": "WLAN (Wi-Fi, Bluetooth)"}
EFFICIENCY_SOURCE_WORDS = {"datasheet": "antenna datasheet", "measured": "measured in this product"}


def _per_band(values, unit: str) -> str:
    return ", ".join(f"{band} {value:g}{unit}" for band, value in values.items())


def _gain_text(antenna) -> str:
    """Peak gain as entered: one figure for every band, or each band's own (a band left out is not judged)."""
    if antenna.peak_gain_dbi is not None:
        return f"{antenna.peak_gain_dbi:g} in every band"
    return _per_band(antenna.peak_gain_dbi_per_band, "") or "not given"


def _modem_facts(design) -> list[list[str]]:
    """Rule set 2's module and deployment figures: power class, sensitivity, LTE-M duplex, satellite access,
    the team's radiated targets."""
    modem = design.modem
    facts = [
        ["Power class", f"class {modem.power_class}: {modem.max_output_dbm:g} dBm conducted"],
        ["Conducted sensitivity", _per_band(modem.conducted_sensitivity_dbm, " dBm") or "not given"],
    ]
    if modem.category.id in ("cat-m1", "cat-m2"):
        facts.append(["LTE-M duplex", "full duplex (FD-FDD)" if modem.full_duplex else "half duplex (HD-FDD)"])
    facts.append(["Satellite (NTN) access", "supported" if modem.ntn else "not declared"])
    for label, name in (("Radiated target, TRP (at least)", "trp_targets_dbm"),
                        ("Radiated target, TIS (at most)", "tis_targets_dbm")):
        targets = getattr(design.deployment, name, None)
        if targets:
            facts.append([label, _per_band(targets, " dBm")])
    return facts


def _band_table(checklist: dict[str, Any]) -> list[Flowable]:
    rows = [["Band", "Duplex", "UL (MHz)", "DL (MHz)", "Lowest (MHz)", "λ (mm)", "λ/4 (mm)", "λ/2π (mm)"]]
    for row in checklist["bands"]:
        rows.append([row["band"], row["duplex"], f"{row['ul_mhz'][0]:g}–{row['ul_mhz'][1]:g}" if row["ul_mhz"] else "—",
                     f"{row['dl_mhz'][0]:g}–{row['dl_mhz'][1]:g}", f"{row['lowest_mhz']:g}",
                     f"{row['wavelength_mm']:.1f}", f"{row['quarter_wave_mm']:.1f}", f"{row['near_field_mm']:.1f}"])
    return [
        p("Bands and wavelengths", H2),
        p(f"Lengths at each band's lowest edge (c = 299 792 458 m/s). Spacing and ground plane are judged at "
          f"{checklist.get('judged_at_mhz', 0):g} MHz, the lowest edge in scope.", MUTED_SMALL),
        Spacer(1, 2 * mm),
        grid_table(rows, [16 * mm, 16 * mm, 28 * mm, 28 * mm, 24 * mm, 20 * mm, 20 * mm, FRAME_WIDTH - 152 * mm]),
    ]


def _checklist(items: list[ReviewItem], approvers: set[int], stepped: set[int]) -> list[Flowable]:
    rows = [["Severity, basis", "Rule", "Finding", "Decision", "Justification"]]
    for item in items:
        if item.pk in stepped:  # not a decision of this review: the steps table below says where it stands
            rows.append([p(item.severity.upper(), CELL), f"{item.rule_id}\n{', '.join(item.subjects)}", item.title,
                         p("Tracked as an external step (below)"), "—"])
            continue
        severity = [Paragraph(f'<font color="{SEVERITY_COLOURS[item.severity].hexval().replace("0x", "#")}">'
                              f"<b>{esc(item.severity.upper())}</b></font>", CELL),
                    p(basis_words(item.finding) or "—", CELL_MUTED)]
        # One paragraph per line: a line break inside a paragraph takes reportlab's slower layout path.
        decision = [Paragraph(f"<b>{esc(item.get_disposition_display())}</b>", CELL),
                    *[p(line.text) for line in decision_lines(item, approver_ids=approvers)]]
        rows.append([severity, f"{item.rule_id}\n{', '.join(item.subjects)}", item.title, decision,
                     _justification_in_table(item)])
    return [p("Checklist and dispositions", H2),
            grid_table(rows, [18 * mm, 22 * mm, 40 * mm, 52 * mm, FRAME_WIDTH - 132 * mm])]


def _external_steps(revision: Revision) -> list[Flowable]:
    """The steps outside the team as they stood at signing (frozen since: reviews.models.ProcessStep)."""
    steps = list(ProcessStep.objects.filter(revision=revision).select_related("item", "owner").order_by("item_id"))
    if not steps:
        return []
    rows = [["Rule", "Step", "Status", "Owner", "Planned", "Reference"]]
    for step in steps:
        rows.append([f"{step.item.rule_id}\n{', '.join(step.item.subjects)}",
                     f"{step.item.title}\nDecided by {step.decided_by}" if step.decided_by else step.item.title,
                     step.get_status_display(), step.owner.get_username() if step.owner else "nobody",
                     f"{step.planned_on:%Y-%m-%d}" if step.planned_on else "—", step.reference or "—"])
    return [p("Open external steps", H2),
            p("Certification, operator acceptance and RF-exposure evaluation are a lab's, a regulator's or an "
              "operator's to decide; they did not hold up this sign-off. Their state at signing:", MUTED_SMALL),
            grid_table(rows, [22 * mm, FRAME_WIDTH - 122 * mm, 20 * mm, 22 * mm, 22 * mm, 36 * mm]),
            Spacer(1, 4 * mm)]


def _evidence_files(revision: Revision) -> list[Flowable]:
    files = list(EvidenceAttachment.objects.filter(revision=revision).select_related("item", "step__item")
                 .order_by("id"))
    if not files:
        return []
    rows = [["File", "SHA-256", "Supports"]]
    rows += [[f"{f.name}\n{f.size_bytes} bytes", f.sha256, f.supports] for f in files]
    return [p("Evidence files", H2),
            p("Kept with the review; the export pack carries each file, checkable against its SHA-256.", MUTED_SMALL),
            grid_table(rows, [40 * mm, 62 * mm, FRAME_WIDTH - 102 * mm]), Spacer(1, 4 * mm)]


def _is_cut(item: ReviewItem) -> bool:
    return len(item.justification) > JUSTIFICATION_IN_TABLE_CHARS


def _justification_in_table(item: ReviewItem) -> str:
    if not item.justification:
        return "—"
    if not _is_cut(item):
        return item.justification
    return (item.justification[:JUSTIFICATION_IN_TABLE_CHARS - 100].rstrip()
            + f" … (continued under Findings in detail, {item.rule_id})")


def _figure(what: str, build: Callable[[], Flowable | None]) -> list[Flowable]:
    """A figure with the glyphs of every name; a note in its place if it fails to draw, so that one odd
    design never makes the record unbuildable (the tables carry the same data)."""
    try:
        drawing = build()
    except Exception:  # noqa: BLE001 (contained on purpose; the server log keeps the traceback)
        logger.exception("the %s of a record could not be drawn", what)
        return [p(f"The {what} could not be drawn for this design; the tables of this record give its data.",
                  MUTED_SMALL)]
    return [] if drawing is None else [embed_drawing_text(drawing)]


def _finding_details(items: list[ReviewItem], digests: dict[str, str]) -> list[Flowable]:
    flowables: list[Flowable] = [p("Findings in detail", H2)]
    for item in items:
        finding = item.finding
        evidence = ", ".join(f"{key} {value}" for key, value in finding.get("evidence", {}).items()
                             if value is not None)
        basis = basis_words(finding)
        block = [
            Paragraph(f"<b>{esc(finding['id'])}</b> · {esc(finding['severity'])} · {esc(finding['topic'])}"
                      f"{' · ' + esc(', '.join(finding.get('subjects', []))) if finding.get('subjects') else ''}"
                      f"{' · ' + esc(basis) if basis else ''}"
                      f" — {esc(finding['title'])}", BODY),
            p(finding["explanation"], SMALL),
        ]
        if finding.get("product_impact"):  # findings submitted before the impact line existed have none
            block.append(Paragraph(f"<b>For the product:</b> {esc(finding['product_impact'])}", SMALL))
        block.append(Paragraph(f"<b>Action:</b> {esc(finding['action'])}", SMALL))
        cleared = outranked(finding, digests)
        if cleared:
            design_severity = finding.get("evidence", {}).get("design_severity")
            block.append(Paragraph(
                "<b>Cleared by measurement</b>"
                + (f" (from the design alone: {esc(design_severity)})" if isinstance(design_severity, str) else "")
                + ": " + "; ".join(esc(entry["name"]) + (f", SHA-256 {esc(entry['sha256'])}" if entry["sha256"] else "")
                                   for entry in cleared), SMALL))
        if evidence:
            block.append(Paragraph(f"<b>Evidence:</b> {esc(evidence)}", SMALL))
        block.append(Paragraph(f"<b>Sources:</b> {esc('; '.join(finding.get('references', [])))}", MUTED_SMALL))
        if _is_cut(item):  # the checklist table shows its beginning
            block.append(Paragraph(f"<b>Justification ({esc(item.get_disposition_display())}):</b> "
                                   f"{esc(item.justification)}", SMALL))
        block.append(Spacer(1, 2.5 * mm))
        flowables.append(KeepTogether(block))
    return flowables


def _measurement_files(revision: Revision, measurements: Sequence[LoadedMeasurement]) -> list[list[Any]]:
    """One row per kept file: name, kind, what it measured, SHA-256 (what a reader checks a copy against)."""
    patterns = {pattern.file: pattern for pattern in getattr(measurements, "far_fields", ())}
    touchstone = {measurement.file: measurement for measurement in measurements}
    rows: list[list[Any]] = [["File", "Kind", "Measured", "SHA-256"]]
    for kept in revision.measurement_files.all():
        if kept.name in patterns:
            pattern = patterns[kept.name]
            grid = pattern.pattern
            what = (f"{pattern.antenna}; {'absolute (realized gain)' if pattern.absolute else 'relative field'}; "
                    f"{environment_text(pattern.environment)}; {grid.frequencies_mhz.size} frequencies "
                    f"({', '.join(f'{value:g}' for value in grid.frequencies_mhz[:8])}"
                    f"{', …' if grid.frequencies_mhz.size > 8 else ''} MHz); grid {grid.theta_step_deg:g}° × "
                    f"{grid.phi_step_deg:g}°")
        elif kept.name in touchstone:
            measurement = touchstone[kept.name]
            what = "ports " + ", ".join(f"{index + 1} = {name or 'not connected'}"
                                        for index, name in enumerate(measurement.ports))
        else:
            what = "kept, not named in the design"
        rows.append([kept.name, kept.get_kind_display(), what, Paragraph(esc(kept.sha256), MONO_SMALL)])
    return rows


def _measurement_charts(revision: Revision, measurements: Sequence[LoadedMeasurement], design) -> list[Flowable]:
    files = _measurement_files(revision, measurements)
    if len(files) == 1:
        return []
    flowables: list[Flowable] = [PageBreak(), p("Measurements", H2),
                                 grid_table(files, [38 * mm, 24 * mm, FRAME_WIDTH - 122 * mm, 60 * mm]),
                                 Spacer(1, 3 * mm)]
    for measurement in measurements:
        flowables.append(p(f"{measurement.file}: ports " + ", ".join(
            f"{index + 1} = {name or 'not connected'}" for index, name in enumerate(measurement.ports)), SMALL))
        for build in (return_loss_chart, isolation_chart, correlation_chart):
            drawn = _figure(f"chart of {measurement.file}",
                            partial(build, measurement, design, width_pt=FRAME_WIDTH, height_pt=200))
            if drawn:
                flowables += [CondPageBreak(215), *drawn, Spacer(1, 3 * mm)]
    patterns = cellular_patterns(measurements, design)
    if patterns:
        drawn = _figure("far-field correlation chart", partial(pattern_correlation_chart, patterns, design,
                                                               width_pt=FRAME_WIDTH, height_pt=200))
        flowables += [CondPageBreak(215), *drawn, Spacer(1, 3 * mm)]
    return flowables


def _coverage(measurements: Sequence[LoadedMeasurement], design) -> list[Flowable]:
    rows = [analysis.as_dict() for analysis in analyse_coverage(design, measurements)]
    if not rows:
        return []
    panel = coverage_panel.panel(rows, coverage_panel.CoverageAssumptionsForm({}).read())
    tables: list[Flowable] = []
    for start in range(0, len(rows), COVERAGE_BANDS_PER_TABLE):  # a table of at most so many bands fits the page
        bands = rows[start:start + COVERAGE_BANDS_PER_TABLE]
        table: list[list[Any]] = [["per band", "unit", *[row["band"] for row in bands]]]
        for group in panel["coverage_groups"]:
            table.append([Paragraph(f"<b>{esc(group['title'])}</b>", CELL), "", *[""] * len(bands)])
            table += [[line["label"], line["unit"], *line["cells"][start:start + len(bands)]] for line in group["rows"]]
        band_width = (FRAME_WIDTH - 72 * mm) / COVERAGE_BANDS_PER_TABLE
        tables += [grid_table(table, [60 * mm, 12 * mm, *[band_width] * len(bands)]), Spacer(1, 3 * mm)]
    return [PageBreak(), p("Coverage: uplink and downlink, with one and two receive antennas", H2),
            *[p(sentence, SMALL) for sentence in panel["coverage_headline"]],
            Spacer(1, 2 * mm),
            *_figure("coverage chart", lambda: coverage_chart(rows, width_pt=FRAME_WIDTH, height_pt=200)),
            Spacer(1, 3 * mm),
            p(f"Each direction budgeted at its lowest frequency in the band; margins at {rows[0]['reference_distance_km']:g} "
              "km. Budgetary estimates: median path loss without shadow fading; the operator's acceptance and "
              "over-the-air tests decide.", MUTED_SMALL),
            Spacer(1, 2 * mm), *tables,
            p("Sources", H3),
            *[Paragraph(f"<b>{esc(what)}:</b> {esc(source)}", MUTED_SMALL) for what, source in panel["coverage_sources"]]]


COVERAGE_BANDS_PER_TABLE = 7


CAUTIONS = [
    "This record documents an engineering review of an antenna design against a rule set. It does not replace "
    "carrier acceptance testing: every operator whose network the product uses runs its own acceptance, usually "
    "including radiated performance (TRP/TIS).",
    "It does not replace industry certification of the finished device, nor regulatory approval in each market "
    "where the product is sold.",
    "RF exposure must be evaluated under the local rules of each market, by a qualified test house, whatever "
    "this record says about distances to people.",
    "Where a module's approval is relied on, its conditions (such as maximum antenna gain per band) apply; any "
    "change outside them needs a new or extended approval.",
    "Defer to the carrier, the regulator and licensed practice. Measurements and computed values in this record "
    "are engineering estimates with stated assumptions (for example, envelope correlation from S-parameters "
    "assumes lossless antennas).",
]


def build_record_pdf(revision: Revision, *, fingerprint: str) -> bytes:
    design = parse_design(revision.document)
    measurements = attach_measurements(design, measurement_reader(revision))  # read once, used twice
    checklist = revision.evaluation
    items = list(revision.review_items.filter(kind=ReviewItem.Kind.RAISED)
                 .with_provenance().order_by("id"))
    rank = {"blocker": 0, "warning": 1, "note": 2}
    items.sort(key=lambda item: (rank.get(item.severity, 9), item.topic, item.rule_id, item.subjects_key))
    signatures = list(revision.signatures.select_related("signer").order_by("id"))
    digests = measurement_digests(revision)
    product = revision.product
    grouped = " ".join(fingerprint[index:index + 4] for index in range(0, 32, 4))
    # The footer's line leaves room for "page 999 of 999"; a long product name is cut to fit (the cover
    # has it whole).
    suffix = f" · design revision {revision.number} · fingerprint {grouped}"
    room_pt = FRAME_WIDTH - 60 - text_width(suffix, size=7)
    footer = fit(product.name, size=7, width=room_pt) + suffix

    register()
    story: list[Flowable] = [
        Spacer(1, 25 * mm),
        p("Antenna design record", H1),
        p(f"{product.name} — design revision {revision.number}", H2),
        Spacer(1, 6 * mm),
        grid_table([
            ["Product", product.name], ["Team", product.team.name],
            ["Design revision", f"{revision.number} (this record's number)"],
            ["Hardware revision", f"{design.product_revision} (the board the design describes)"
             if design.product_revision else "not given"],
            ["UE category", f"{design.modem.category.label} ({design.modem.category.id})"],
            ["Status", "signed and archived; current when signed"],
            ["Rule set", revision.ruleset],
            ["Submitted", f"{revision.submitted_at:%Y-%m-%d %H:%M} UTC"],
            ["Signed", f"{signatures[-1].signed_at:%Y-%m-%d %H:%M} UTC" if signatures else "—"],
            ["Checklist", f"{checklist['summary']['blocker']} blockers, {checklist['summary']['warning']} warnings, "
                          f"{checklist['summary']['note']} notes"],
            ["Fingerprint (SHA-256 of the record content)", fingerprint],
        ], [60 * mm, FRAME_WIDTH - 60 * mm], header=False),
        Spacer(1, 8 * mm),
        p("The archive keeps the SHA-256 of this PDF file: anyone on the team can check a copy against it.",
          MUTED_SMALL),
        p("This record does not replace carrier acceptance, industry certification or regulatory approval; see the "
          "cautions on the last page.", MUTED_SMALL),
        PageBreak(),
        *_design_summary(design),
        Spacer(1, 4 * mm),
        *_band_table(checklist),
        PageBreak(),
        p("Placement", H2),
        *_figure("placement drawing", lambda: placement_drawing(
            design, pair_severities=pair_severities_from_findings(checklist["findings"]),
            frequency_mhz=design.lowest_mhz, width_pt=FRAME_WIDTH, max_height_pt=PAGE_HEIGHT - 80 * mm,
            coexistence=coexistence_lines_from_findings(checklist["findings"], design),
            record=f"design revision {revision.number}")),
        PageBreak(),
        *_checklist(items, approver_ids(product.team),
                    set(ProcessStep.objects.filter(revision=revision).values_list("item_id", flat=True))),
        Spacer(1, 4 * mm),
        *_external_steps(revision),
        *_evidence_files(revision),
        *_finding_details(items, digests),
        *_measurement_charts(revision, measurements, design),
        *_coverage(measurements, design),
        CondPageBreak(60 * mm),
        p("Signatures", H2),
        grid_table([["Role", "Name", "Meaning", "Signed (UTC)"]]
                   + [[s.get_role_display(), s.signer_name, s.meaning, f"{s.signed_at:%Y-%m-%d %H:%M:%S}"]
                      for s in signatures],
                   [40 * mm, 35 * mm, FRAME_WIDTH - 115 * mm, 40 * mm]),
        p("Each signer re-entered their password to sign.", MUTED_SMALL),
        PageBreak(),
        p("Cautions", H2),
        *[p(text, BODY) for text in CAUTIONS],
    ]
    buffer = io.BytesIO()
    document = SimpleDocTemplate(buffer, pagesize=A4, leftMargin=MARGIN, rightMargin=MARGIN, topMargin=MARGIN,
                                 bottomMargin=20 * mm,
                                 title=printable(f"{product.name} design revision {revision.number} record"),
                                 author=printable(product.team.name), subject="Antenna design record",
                                 creator="Earshot",
                                 invariant=1)
    document.build(story, canvasmaker=numbered_canvas(footer))
    return buffer.getvalue()
