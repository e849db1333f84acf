"""The checklist as an engineer reads it in a terminal: a band table, then findings by severity.

Everything printed passes through `terminal_text.printable`: names, the revision and ignored keys come from
the design file, and a control character in them must show as an escape, not act on the terminal.
"""

import textwrap
from collections.abc import Sequence
from functools import partial
from typing import Any

from rules.evaluate import Evaluation
from rules.findings import SEVERITIES, Finding
from rules.terminal_text import printable

WIDTH = 100
_wrap = partial(textwrap.wrap, break_on_hyphens=False, break_long_words=False)


def wrap(text: str, width: int, *, initial_indent: str = "", subsequent_indent: str = "") -> list[str]:
    """Escaped first: textwrap would turn a carriage return into a space and hide it."""
    return _wrap(printable(text), width, initial_indent=initial_indent, subsequent_indent=subsequent_indent)


HEADINGS = {"blocker": "BLOCKERS", "warning": "WARNINGS", "note": "NOTES"}
BASIS_WORDS = {"design": "from the design", "datasheet": "from datasheets", "measured": "measured"}


def table(headers: Sequence[str], rows: Sequence[Sequence[str]], right: Sequence[bool]) -> list[str]:
    """Aligned columns: numbers to the right, text to the left."""
    headers = [printable(header) for header in headers]
    rows = [[printable(cell) for cell in row] for row in rows]
    widths = [max(len(headers[index]), *(len(row[index]) for row in rows)) for index in range(len(headers))]

    def line(cells: Sequence[str]) -> str:
        return "  ".join(cell.rjust(width) if align_right else cell.ljust(width)
                         for cell, width, align_right in zip(cells, widths, right, strict=True)).rstrip()

    return [line(headers), line(["-" * width for width in widths]), *(line(row) for row in rows)]


def _range(pair: Sequence[float] | None) -> str:
    return "—" if pair is None else f"{pair[0]:g}–{pair[1]:g}"  # None: an SDL band's missing uplink


def _evidence_value(value: Any) -> str:
    if isinstance(value, list):
        return "[" + ", ".join(_evidence_value(item) for item in value) + "]"
    if isinstance(value, float):
        return f"{value:g}"
    return str(value)


def _finding_lines(finding: Finding) -> list[str]:
    subjects = f" ({', '.join(finding.subjects)})" if finding.subjects else ""
    lines = [f"  {finding.id}  {finding.topic}{subjects}  [{BASIS_WORDS.get(finding.basis, finding.basis)}]",
             f"    {finding.title}"]
    indent = " " * 6
    lines += wrap(finding.explanation, WIDTH, initial_indent=indent, subsequent_indent=indent)
    lines += wrap("Action: " + finding.action, WIDTH, initial_indent=indent, subsequent_indent=indent)
    lines += wrap("For the product: " + finding.product_impact, WIDTH, initial_indent=indent, subsequent_indent=indent)
    shown = [f"{key} {_evidence_value(value)}" for key, value in finding.evidence.items() if value is not None]
    if shown:
        lines += wrap("Evidence: " + "; ".join(shown), WIDTH, initial_indent=indent,
                               subsequent_indent=indent + "  ")
    lines += wrap("Sources: " + "; ".join(finding.references), WIDTH, initial_indent=indent,
                           subsequent_indent=indent + "  ")
    return lines


def render_text(evaluation: Evaluation, *, ignored_paths: Sequence[str] = ()) -> str:
    design = evaluation.design
    revision = f" rev {design.product_revision}" if design.product_revision else ""
    summary = evaluation.summary
    lines = [
        f"{design.product_name}{revision} — {design.modem.category.label} ({design.modem.category.id})",
        f"Rule set {evaluation.ruleset}; spacing and ground judged at {evaluation.judged_at_mhz:g} MHz, "
        "the lowest band edge in scope.",
        "",
    ]
    rows = [[row.band.name, row.band.duplex, _range(row.band.ul_mhz), _range(row.band.dl_mhz),
             f"{row.lowest_mhz:g}", f"{row.wavelength_mm:.1f}", f"{row.quarter_wave_mm:.1f}",
             f"{row.near_field_mm:.1f}"] for row in evaluation.bands]
    lines += table(["band", "duplex", "UL MHz", "DL MHz", "lowest MHz", "lambda mm", "lambda/4 mm", "lambda/2pi mm"],
                   rows, [False, False, True, True, True, True, True, True])
    lines += ["", "  ".join(f"{summary[severity]} {severity}{'s' if summary[severity] != 1 else ''}"
                           for severity in SEVERITIES)]
    for severity in SEVERITIES:
        group = [finding for finding in evaluation.findings if finding.severity == severity]
        if not group:
            continue
        lines += ["", f"{HEADINGS[severity]} ({len(group)})"]
        for finding in group:
            lines += _finding_lines(finding)
    if evaluation.rule_failures:
        lines += ["", f"RULES THAT COULD NOT RUN ({len(evaluation.rule_failures)}): this checklist is incomplete"]
        for failure in evaluation.rule_failures:
            lines += [f"  {failure.id}  {failure.topic}", f"    {failure.title}: not checked ({failure.error})"]
    if ignored_paths:
        lines += ["", "Ignored (not part of earshot-design/1): " + ", ".join(ignored_paths)]
    lines += ["", "This checklist does not replace carrier acceptance, industry certification or regulatory "
                  "approval."]
    return "\n".join(printable(line) for line in lines) + "\n"
