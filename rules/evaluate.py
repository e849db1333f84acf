"""evaluate(): a parsed design (and its measurements) in, a checklist out (contract `earshot-checklist/1`).

A rule that raises is contained: its findings are dropped (all of them, none half-made), it is listed
under `rule_failures` with the error, and every other rule still runs. A checklist with a rule failure is
incomplete, so a revision can't be submitted with one and the command line does not exit 0.

evaluate_partial(): a draft's partial design (rules.design.parse_design_partial) in, the checklist of what can
be judged out: the rules whose declared inputs are all there judge; each other rule is listed as waiting, with
the inputs it waits for. Never a judgement on a value that isn't there.
"""

import logging
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from rules import physics
from rules.catalog import Band
from rules.context import CheckContext
from rules.design import Design, PartialDesign, Problem
from rules.findings import SEVERITIES, Finding
from rules.measurements import AttachedMeasurements, LoadedMeasurement, LoadedPattern
from rules.registry import RULESET_VERSION, Rule, registered_rules
from rules.withheld import Unavailable, Withheld

CHECKLIST_FORMAT = "earshot-checklist/1"

logger = logging.getLogger(__name__)


@dataclass(frozen=True)
class RuleFailure:
    """A rule that raised instead of judging: the concern it covers is unchecked for this design."""

    id: str
    topic: str
    title: str
    error: str  # the exception's type and message, for the people who run Earshot

    def as_dict(self) -> dict[str, Any]:
        return {"id": self.id, "topic": self.topic, "title": self.title, "error": self.error}


@dataclass(frozen=True)
class BandRow:
    """One selected band with the lengths that matter at its lowest edge."""

    band: Band

    @property
    def lowest_mhz(self) -> float:
        return self.band.lowest_mhz

    @property
    def wavelength_mm(self) -> float:
        return physics.wavelength_mm(self.lowest_mhz)

    @property
    def quarter_wave_mm(self) -> float:
        return physics.quarter_wave_mm(self.lowest_mhz)

    @property
    def near_field_mm(self) -> float:
        return physics.near_field_radius_mm(self.lowest_mhz)

    def as_dict(self) -> dict[str, Any]:
        return {
            "band": self.band.name,
            "technology": self.band.technology,
            "ul_mhz": list(self.band.ul_mhz) if self.band.ul_mhz is not None else None,  # None: SDL
            "dl_mhz": list(self.band.dl_mhz),
            "duplex": self.band.duplex,
            "lowest_mhz": self.lowest_mhz,
            "wavelength_mm": round(self.wavelength_mm, 1),
            "quarter_wave_mm": round(self.quarter_wave_mm, 1),
            "near_field_mm": round(self.near_field_mm, 1),
        }


@dataclass(frozen=True)
class Evaluation:
    design: Design
    bands: tuple[BandRow, ...]
    findings: tuple[Finding, ...]
    ruleset: str = RULESET_VERSION
    rule_failures: tuple[RuleFailure, ...] = ()

    @property
    def summary(self) -> dict[str, int]:
        counts = Counter(finding.severity for finding in self.findings)
        return {severity: counts.get(severity, 0) for severity in SEVERITIES}

    @property
    def has_blocker(self) -> bool:
        return any(finding.severity == "blocker" for finding in self.findings)

    @property
    def judged_at_mhz(self) -> float:
        return self.design.lowest_mhz

    def as_dict(self) -> dict[str, Any]:
        return {
            "format": CHECKLIST_FORMAT,
            "ruleset": self.ruleset,
            "design": {
                "product": self.design.product_name,
                "revision": self.design.product_revision,
                "category": self.design.modem.category.id,
            },
            "judged_at_mhz": self.judged_at_mhz,
            "bands": [row.as_dict() for row in self.bands],
            "summary": self.summary,
            "findings": [finding.as_dict() for finding in self.findings],
            "rule_failures": [failure.as_dict() for failure in self.rule_failures],
        }


def _run(rule: Rule, context: CheckContext, failures: list[RuleFailure]) -> list[Finding]:
    try:
        return list(rule.run(context))
    except Unavailable:
        raise
    except Exception as error:  # one rule's defect must not take the whole checklist down
        logger.exception("rule %s failed on %r", rule.id, context.design.product_name)
        failures.append(RuleFailure(rule.id, rule.topic, rule.title, f"{type(error).__name__}: {error}"))
        return []


def evaluate(
    design: Design, measurements: Sequence[LoadedMeasurement] = (), far_fields: Sequence[LoadedPattern] | None = None,
) -> Evaluation:
    """The checklist. `measurements` as attach_measurements() returns them carry their far-field patterns;
    `far_fields` gives patterns alongside a plain sequence of Touchstone measurements. A rule that raises is
    contained: it is listed in `rule_failures` and the other rules still judge."""
    if far_fields is None:
        far_fields = measurements.far_fields if isinstance(measurements, AttachedMeasurements) else ()
    context = CheckContext(design, tuple(measurements), tuple(far_fields))
    findings: list[Finding] = []
    failures: list[RuleFailure] = []
    for rule in registered_rules():
        try:
            findings += _run(rule, context, failures)
        except Unavailable as error:  # a complete design withholds nothing; a defect if it happens
            failures.append(RuleFailure(rule.id, rule.topic, rule.title, f"Unavailable: {error}"))
    findings.sort(key=Finding.sort_key)
    return Evaluation(
        design=design,
        bands=tuple(BandRow(band) for band in design.modem.bands),
        findings=tuple(findings),
        rule_failures=tuple(failures),
    )


@dataclass(frozen=True)
class WaitingRule:
    """A rule that could not judge a partial design yet: the inputs it needs that are not there."""

    id: str
    topic: str
    title: str
    waiting_for: tuple[str, ...]

    def as_dict(self) -> dict[str, Any]:
        return {"id": self.id, "topic": self.topic, "title": self.title, "waiting_for": list(self.waiting_for)}


@dataclass(frozen=True)
class PartialEvaluation:
    """The checklist of a partial design: findings of the rules that could judge, the rules still waiting (and
    for what), the unanswered values and the problems. For a complete design it holds what evaluate() gives."""

    partial: PartialDesign
    bands: tuple[BandRow, ...]
    findings: tuple[Finding, ...]
    waiting: tuple[WaitingRule, ...]
    ruleset: str = RULESET_VERSION
    rule_failures: tuple[RuleFailure, ...] = ()

    @property
    def complete(self) -> bool:
        return self.partial.complete and not self.waiting

    @property
    def summary(self) -> dict[str, int]:
        counts = Counter(finding.severity for finding in self.findings)
        return {severity: counts.get(severity, 0) for severity in SEVERITIES}

    @property
    def judged_at_mhz(self) -> float | None:
        return min(row.lowest_mhz for row in self.bands) if self.bands else None

    def as_dict(self) -> dict[str, Any]:
        """The checklist's shape (earshot-checklist/1) with what a partial one adds: `complete`, `waiting`,
        `unanswered` and `problems` (each problem with its path), and None where a value is not there."""
        design = self.partial.design
        shown = self.partial.shown()
        category = None if not self.partial.has("modem.category") else design.modem.category.id
        return {
            "format": CHECKLIST_FORMAT,
            "ruleset": self.ruleset,
            "design": {"product": shown.product_name or None, "revision": shown.product_revision,
                       "category": category},
            "judged_at_mhz": self.judged_at_mhz,
            "bands": [row.as_dict() for row in self.bands],
            "summary": self.summary,
            "findings": [finding.as_dict() for finding in self.findings],
            "rule_failures": [failure.as_dict() for failure in self.rule_failures],
            "complete": self.complete,
            "waiting": [rule.as_dict() for rule in self.waiting],
            "unanswered": [_problem_dict(problem) for problem in self.partial.unanswered],
            "problems": [_problem_dict(problem) for problem in self.partial.problems],
        }


def _problem_dict(problem: Problem) -> dict[str, str]:
    return {"path": problem.path, "message": problem.message}


def evaluate_partial(
    partial: PartialDesign, measurements: Sequence[LoadedMeasurement] = (),
    far_fields: Sequence[LoadedPattern] | None = None,
) -> PartialEvaluation:
    """The checklist of what a partial design lets the rules judge. Each rule runs only if every input it
    declares (`@rule(needs=...)`) is there; otherwise it is listed as waiting for the missing ones. A rule that
    reads an input it did not declare and finds it withheld is listed as waiting too (and logged: its
    declaration is wrong). `measurements` are those attached to `partial.design` (none when the design withholds
    its measurements)."""
    if far_fields is None:
        far_fields = measurements.far_fields if isinstance(measurements, AttachedMeasurements) else ()
    loaded: Any = (tuple(measurements), tuple(far_fields)) if partial.has("measurements") else (
        Withheld("measurements"), Withheld("measurements"))
    context = CheckContext(partial.design, loaded[0], loaded[1])
    findings: list[Finding] = []
    failures: list[RuleFailure] = []
    waiting: list[WaitingRule] = []
    for rule in registered_rules():
        missing = partial.waiting_for(rule.needs)
        if not missing:
            try:
                findings += _run(rule, context, failures)
                continue
            except Unavailable as error:
                logger.warning("rule %s read %s, which it does not declare in needs", rule.id, error.input)
                missing = (error.input,)
        waiting.append(WaitingRule(rule.id, rule.topic, rule.title, missing))
    findings.sort(key=Finding.sort_key)
    bands = tuple(BandRow(band) for band in partial.design.modem.bands) if partial.has("modem.bands") else ()
    return PartialEvaluation(partial, bands, tuple(findings), tuple(waiting), rule_failures=tuple(failures))
