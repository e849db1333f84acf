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
from rules.design import Design, DesignError, Problem, parse_design
from rules.evaluate import evaluate
from rules.measurements import AttachedMeasurements, LoadedMeasurement, LoadedPattern, attach_measurements
from rules.registry import RULESET_VERSION

logger = logging.getLogger(__name__)
CHECK_FAILED = Problem("", "this design could not be checked: an error in Earshot, not in the design (it is "
                           "logged for the people who run Earshot)")


@dataclass
class ChecklistState:
    revision: Revision
    design: Design | None = None
    checklist: dict[str, Any] | None = None
    problems: list[Problem] = field(default_factory=list)
    measurements: tuple[LoadedMeasurement, ...] = ()

    @property
    def findings(self) -> list[dict[str, Any]]:
        return self.checklist["findings"] if self.checklist else []

    @property
    def summary(self) -> dict[str, int]:
        return self.checklist["summary"] if self.checklist else {}


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
    state = ChecklistState(revision)
    try:
        state.design = parse_design(revision.document)
        if revision.is_draft:  # a frozen revision's checklist is stored; its files are read only when drawn
            key = fragments.cache_key("checklist", revision.cache_identity)  # the code stamp covers the rules
            state.checklist = cache.get(key)
            if state.checklist is None:
                state.measurements = attach_measurements(state.design, measurement_reader(revision))
                state.checklist = evaluate(state.design, state.measurements).as_dict()
                cache.set(key, state.checklist, timeout=24 * 3600)
    except DesignError as error:
        state.problems = error.problems
    except DatabaseError:
        raise  # the request can't go on without its database; that is not this design's doing
    except Exception:
        logger.exception("checking revision %s failed", revision.pk)
        state.design, state.checklist, state.problems = None, None, [CHECK_FAILED]
    if not revision.is_draft:
        state.checklist = revision.evaluation
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
            "notes": summary.get("note", 0), "problems": 0, "rule_failures": len(checklist.get("rule_failures") or []),
            "check_failed": False}


def _draft_counts(revision: Revision) -> dict[str, Any]:
    state = checklist_for(revision)
    if state.checklist is not None:
        return counts_of(state.checklist)
    modem = revision.document.get("modem") if isinstance(revision.document, dict) else None
    category = modem.get("category") if isinstance(modem, dict) and isinstance(modem.get("category"), str) else ""
    failed = state.problems == [CHECK_FAILED]
    return {"category": category[:16], "blockers": None, "warnings": None, "notes": None,
            "problems": 0 if failed else len(state.problems), "rule_failures": 0, "check_failed": failed}


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
