"""The checklist of a revision: computed live for a draft, read from the frozen snapshot otherwise.

Both come out in the contract's shape (earshot-checklist/1 as a dict), so templates, exports and the
PDF read one structure whichever state the revision is in.

One design must never take a page down for anyone else: an error while checking a design (a defect in
Earshot, not in the design, which the parser would have named) is logged and shown as that design's
problem, and its stored counts say "not checked"; a rule that raises is already contained by evaluate().
Lists read the counts each revision stores (`count_revision`), never a checklist.
"""

import logging
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

from django.core.cache import cache
from django.db import DatabaseError

from projectapp import fragments
from projectapp.designs.models import Revision
from rules.coverage import analyse_coverage
from rules.design import Design, DesignError, PartialDesign, Problem, parse_design, parse_design_partial
from rules.evaluate import evaluate, evaluate_partial
from rules.measurements import AttachedMeasurements, LoadedMeasurement, LoadedPattern, attach_measurements
from rules.registry import RULESET_VERSION

logger = logging.getLogger(__name__)
CHECK_FAILED = Problem("", "this design could not be checked: an error in Earshot, not in the design (it is "
                           "logged for the people who run Earshot)")


@dataclass
class ChecklistState:
    """What a revision's page shows of its checklist. `design` is the whole parsed design (None while a draft
    is incomplete: nothing may judge or draw on it as if it were whole); `partial` is a draft's partial design,
    for drawing what there is. `problems` are the parser's problems and `unanswered` the required values a draft
    has not given yet (a draft's checklist then holds what could be judged, and what waits)."""

    revision: Revision
    design: Design | None = None
    checklist: dict[str, Any] | None = None
    problems: list[Problem] = field(default_factory=list)
    measurements: tuple[LoadedMeasurement, ...] = ()
    partial: PartialDesign | None = None
    unanswered: list[Problem] = field(default_factory=list)

    @property
    def findings(self) -> list[dict[str, Any]]:
        return self.checklist["findings"] if self.checklist else []

    @property
    def summary(self) -> dict[str, int]:
        return self.checklist["summary"] if self.checklist else {}

    @property
    def is_partial(self) -> bool:
        """A draft's checklist of what could be judged so far (the design is not complete)."""
        return bool(self.checklist) and self.checklist.get("complete") is False

    @property
    def shown_design(self) -> Design | None:
        """The design to draw: the whole one, or what a draft has so far."""
        if self.design is not None:
            return self.design
        return self.partial.shown() if self.partial is not None else None


def measurement_reader(revision: Revision):
    files = {measurement.name: measurement for measurement in revision.measurement_files.all()}

    def read_text(name: str) -> str:
        if name not in files:
            raise FileNotFoundError(2, "no file of that name is uploaded to this revision")
        return files[name].read_text()

    return read_text


def measurement_digests(revision: Revision) -> dict[str, str]:
    """File name -> SHA-256 of the measurement files kept with a revision: what a finding that a measurement
    cleared names beside each file (part of the revision's state, so the page-cache key already covers it)."""
    return {measurement.name: measurement.sha256 for measurement in revision.measurement_files.all()}


def checklist_for(revision: Revision) -> ChecklistState:
    if revision.is_draft:
        return _draft_checklist(revision)
    state = ChecklistState(revision)
    try:
        state.design = parse_design(revision.document)
    except DesignError as error:
        state.problems = error.problems
    except DatabaseError:
        raise
    except Exception:
        logger.exception("checking revision %s failed", revision.pk)
        state.design, state.problems = None, [CHECK_FAILED]
    state.checklist = revision.evaluation
    return state


def _draft_checklist(revision: Revision) -> ChecklistState:
    """A draft's live checklist: of the whole design when it is complete (exactly what submitting it would
    freeze), else of what can be judged so far (rules.evaluate.evaluate_partial), with the unanswered values,
    the problems and the checks still waiting. Kept in the cache per state of the draft."""
    state = ChecklistState(revision)
    try:
        partial = parse_design_partial(revision.document)
        state.partial = partial
        key = fragments.cache_key("checklist", revision.cache_identity)  # the code stamp covers the rules
        state.checklist = cache.get(key)
        if state.checklist is None:
            measurements: tuple[LoadedMeasurement, ...] = ()
            if partial.has("measurements") and partial.design.measurements:
                try:
                    measurements = attach_measurements(partial.design, measurement_reader(revision))
                except DesignError as error:  # a file that can't be read: the checks that need it wait
                    partial = partial.without("measurements", error.problems)
            if partial.complete:
                state.measurements = measurements
                state.checklist = evaluate(partial.design, measurements).as_dict()
            else:
                state.checklist = evaluate_partial(partial, measurements).as_dict()
            cache.set(key, state.checklist, timeout=24 * 3600)
        if state.is_partial:
            state.problems = [Problem(item["path"], item["message"]) for item in state.checklist["problems"]]
            state.unanswered = [Problem(item["path"], item["message"]) for item in state.checklist["unanswered"]]
        else:
            state.design = partial.design
    except DatabaseError:
        raise  # the request can't go on without its database; that is not this design's doing
    except Exception:
        logger.exception("checking revision %s failed", revision.pk)
        state.design, state.checklist, state.problems, state.partial = None, None, [CHECK_FAILED], None
    return state


def coverage_rows(state: ChecklistState, **assumptions: Any) -> list[dict[str, Any]]:
    """The uplink and downlink budget per band with one and two receive antennas (rules.coverage), as dicts;
    `assumptions` are analyse_coverage()'s keywords (a what-if; OutsideValidity names one it can't take)."""
    if state.design is None:
        return []
    return [analysis.as_dict() for analysis in analyse_coverage(state.design, load_measurements(state), **assumptions)]


def load_measurements(state: ChecklistState) -> tuple[LoadedMeasurement, ...]:
    """The revision's measurements, read now if checklist_for() left them unread (frozen revisions)."""
    # AttachedMeasurements once read (empty as a tuple when the design has far-field patterns only).
    if state.design is not None and state.design.measurements and not isinstance(state.measurements,
                                                                                 AttachedMeasurements):
        try:
            state.measurements = attach_measurements(state.design, measurement_reader(state.revision))
        except DesignError as error:
            state.problems = error.problems
    return state.measurements


def cellular_patterns(measurements: Sequence[LoadedMeasurement], design: Design) -> list[LoadedPattern]:
    """The far-field patterns of the cellular antennas among a design's measurements: those compared pair by
    pair (GNSS and WLAN patterns are kept but not compared)."""
    patterns = getattr(measurements, "far_fields", ())
    names = {antenna.name for antenna in design.antennas if antenna.is_cellular}
    return [pattern for pattern in patterns if pattern.antenna in names]


def _category_label(state: ChecklistState) -> str:
    if state.design is not None:
        return state.design.modem.category.label
    if state.partial is not None and state.partial.has("modem.category"):
        return state.partial.design.modem.category.label
    return ""


def evaluation_to_freeze(revision: Revision) -> dict[str, Any]:
    """The checklist a draft is submitted with, evaluated now from the document and files as stored. Raises
    DesignError when the design can't be checked yet, or when a rule could not run: an incomplete checklist is
    not frozen for people to sign."""
    design = parse_design(revision.document)
    evaluation = evaluate(design, attach_measurements(design, measurement_reader(revision)))
    if evaluation.rule_failures:
        raise DesignError([Problem("", f"rule {failure.id} ({failure.title}) could not run on this design, so the "
                                       "checklist is incomplete; that is an error in Earshot, logged for the people "
                                       "who run it") for failure in evaluation.rule_failures])
    return evaluation.as_dict()


def counts_of(checklist: dict[str, Any]) -> dict[str, Any]:
    """A checklist's stored summary, as Revision's count columns."""
    summary = checklist.get("summary") or {}
    return {"category": str((checklist.get("design") or {}).get("category") or "")[:16],
            "blockers": summary.get("blocker", 0), "warnings": summary.get("warning", 0),
            "notes": summary.get("note", 0), "problems": 0, "unanswered": 0, "rule_failures": len(checklist.get("rule_failures") or []),
            "check_failed": False}


def _draft_counts(revision: Revision) -> dict[str, Any]:
    """A complete draft's finding counts; a partial one's category so far, its problems and unanswered questions
    (no counts: a list shows "not finished" rather than a tally of the rules that could run)."""
    state = checklist_for(revision)
    if state.checklist is not None and not state.is_partial:
        return counts_of(state.checklist)
    failed = state.problems == [CHECK_FAILED]
    return {"category": _category_label(state)[:16], "blockers": None, "warnings": None, "notes": None,
            "problems": 0 if failed else len(state.problems), "unanswered": 0 if failed else len(state.unanswered),
            "rule_failures": 0, "check_failed": failed}


def count_revision(revision: Revision) -> Revision:
    """Stores what lists show of a draft (its category, finding counts, problems, rule failures and the rule set
    that counted them), from its checklist as it is now: called on every write of a draft (designs.services),
    so no list ever evaluates a design. A submitted revision's counts are stored at submission, from the frozen
    checklist (designs.lifecycle.submit). A rule-set upgrade recounts drafts through here."""
    if not revision.is_draft:
        return revision
    values = {**_draft_counts(revision), "ruleset": RULESET_VERSION}
    Revision.objects.filter(pk=revision.pk, state=Revision.State.DRAFT).update(**values)
    for name, value in values.items():
        setattr(revision, name, value)
    return revision
