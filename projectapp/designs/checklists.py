"""The checklist of a revision: computed live for a draft, read from the frozen snapshot otherwise.

Both come out in the contract's shape (earshot-checklist/1 as a dict), so templates, exports and the
PDF read one structure whichever state the revision is in.
"""

from dataclasses import dataclass, field
from typing import Any

from django.core.cache import cache

from projectapp.designs.models import Revision
from rules.coverage import analyse_coverage
from rules.design import Design, DesignError, Problem, parse_design
from rules.evaluate import evaluate
from rules.measurements import LoadedMeasurement, attach_measurements
from rules.registry import RULESET_VERSION


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


def draft_cache_key(revision: Revision, what: str) -> str:
    """A draft changes only by saving it (every save moves updated_at), so its checklist and figures are
    cached per saved state and rule set."""
    return f"earshot:{what}:{RULESET_VERSION}:{revision.pk}:{revision.updated_at.timestamp()}"


def checklist_for(revision: Revision) -> ChecklistState:
    state = ChecklistState(revision)
    try:
        state.design = parse_design(revision.document)
        if revision.is_draft:  # a frozen revision's checklist is stored; its files are read only when drawn
            key = draft_cache_key(revision, "checklist")
            state.checklist = cache.get(key)
            if state.checklist is None:
                state.measurements = attach_measurements(state.design, measurement_reader(revision))
                state.checklist = evaluate(state.design, state.measurements).as_dict()
                cache.set(key, state.checklist, timeout=24 * 3600)
    except DesignError as error:
        state.problems = error.problems
    if not revision.is_draft:
        state.checklist = revision.evaluation
    return state


def coverage_rows(state: ChecklistState) -> list[dict[str, Any]]:
    """The downlink budget per band with one and two receive antennas (rules.coverage), as dicts."""
    if state.design is None:
        return []
    return [analysis.as_dict() for analysis in analyse_coverage(state.design, load_measurements(state))]


def load_measurements(state: ChecklistState) -> tuple[LoadedMeasurement, ...]:
    """The revision's measurements, read now if checklist_for() left them unread (frozen revisions)."""
    if state.design is not None and state.design.measurements and not state.measurements:
        try:
            state.measurements = attach_measurements(state.design, measurement_reader(state.revision))
        except DesignError as error:
            state.problems = error.problems
    return state.measurements
