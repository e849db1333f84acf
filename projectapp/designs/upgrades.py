"""What the current rule set would raise on a frozen revision, beside the checklist it was frozen with.

A submitted or signed revision keeps its stored checklist (what people decided and signed); this module
re-evaluates its frozen design file and measurement files with the current engine, read-only, and compares
the two by finding identity (rule id + subjects): *new* (raised now, not then), *gone* (raised then, not now)
and *changed* (both, with a different severity or evidence). The comparison is cached under the revision's
identity and the code stamp (which covers rules/), so a list of products evaluates each revision once per
rule-set release, not on every request.
"""

import logging
from dataclasses import dataclass, field
from typing import Any

from django.core.cache import cache
from django.db import DatabaseError

from projectapp import fragments
from projectapp.designs.checklists import measurement_reader
from projectapp.designs.models import Revision
from rules.design import DesignError, parse_design
from rules.evaluate import evaluate
from rules.measurements import attach_measurements
from rules.registry import RULESET_VERSION

logger = logging.getLogger(__name__)
FROZEN_STATES = (Revision.State.IN_REVIEW, Revision.State.SIGNING, Revision.State.SIGNED,
                 Revision.State.SUPERSEDED)
CACHE_SECONDS = 7 * 24 * 3600


def finding_key(finding: dict[str, Any]) -> tuple[str, tuple[str, ...]]:
    return str(finding.get("id", "")), tuple(str(subject) for subject in finding.get("subjects") or ())


@dataclass
class Comparison:
    stored_ruleset: str
    current_ruleset: str = RULESET_VERSION
    new: list[dict[str, Any]] = field(default_factory=list)
    gone: list[dict[str, Any]] = field(default_factory=list)
    changed: list[dict[str, Any]] = field(default_factory=list)  # {"before": finding, "after": finding}
    error: str = ""  # the current rules could not judge the frozen design (it is then not compared)

    @property
    def differs(self) -> bool:
        return bool(self.new or self.gone or self.changed or self.error)

    @property
    def shown(self) -> bool:
        """Whether a page shows the comparison: another rule set, or the current rules judge differently."""
        return self.stored_ruleset != self.current_ruleset or self.differs

    @property
    def new_blockers(self) -> int:
        """Blockers the current rules raise that the stored checklist did not raise as blockers."""
        return len([f for f in self.new if f.get("severity") == "blocker"]) + len(
            [c for c in self.changed if c["after"].get("severity") == "blocker"
             and c["before"].get("severity") != "blocker"])

    def as_dict(self) -> dict[str, Any]:
        return {"stored_ruleset": self.stored_ruleset, "current_ruleset": self.current_ruleset,
                "new": self.new, "gone": self.gone, "changed": self.changed, "error": self.error}

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> "Comparison":
        return cls(**data)


def compare_checklists(stored: dict[str, Any], current: dict[str, Any]) -> Comparison:
    before = {finding_key(f): f for f in stored.get("findings") or ()}
    after = {finding_key(f): f for f in current.get("findings") or ()}
    comparison = Comparison(stored_ruleset=str(stored.get("ruleset") or ""),
                            current_ruleset=str(current.get("ruleset") or RULESET_VERSION))
    comparison.new = [after[key] for key in after if key not in before]
    comparison.gone = [before[key] for key in before if key not in after]
    comparison.changed = [{"before": before[key], "after": after[key]} for key in after
                          if key in before and (before[key].get("severity") != after[key].get("severity")
                                                or before[key].get("evidence") != after[key].get("evidence"))]
    return comparison


def current_checklist(revision: Revision) -> dict[str, Any]:
    """The frozen design and files judged by the current engine; reads only, stores nothing."""
    design = parse_design(revision.document)
    return evaluate(design, attach_measurements(design, measurement_reader(revision))).as_dict()


def comparison_for(revision: Revision) -> Comparison | None:
    """The comparison for a frozen revision (None for a draft, which always follows the current rules)."""
    if revision.state not in FROZEN_STATES or not isinstance(revision.evaluation, dict):
        return None
    key = fragments.cache_key("upgrade", revision.cache_identity, RULESET_VERSION)
    cached = cache.get(key)
    if cached is not None:
        return Comparison.from_dict(cached)
    stored_ruleset = revision.ruleset or str(revision.evaluation.get("ruleset") or "")
    try:
        comparison = compare_checklists({**revision.evaluation, "ruleset": stored_ruleset},
                                        current_checklist(revision))
    except DesignError as error:
        comparison = Comparison(stored_ruleset=stored_ruleset,
                                error="the current rules can't read this design: "
                                      + "; ".join(problem.message for problem in error.problems))
    except DatabaseError:
        raise
    except Exception:
        logger.exception("re-evaluating revision %s failed", revision.pk)
        comparison = Comparison(stored_ruleset=stored_ruleset,
                                error="this revision could not be re-evaluated: an error in Earshot, logged")
    cache.set(key, comparison.as_dict(), timeout=CACHE_SECONDS)
    return comparison


@dataclass
class AffectedRevision:
    revision: Revision
    comparison: Comparison


def affected_revisions(revisions) -> list[AffectedRevision]:
    """Frozen revisions whose comparison is shown, signed ones that would now raise a blocker first."""
    rows = []
    for revision in revisions.filter(state__in=FROZEN_STATES).select_related("product", "product__team") \
            .order_by("product__name", "-number"):
        comparison = comparison_for(revision)
        if comparison is not None and comparison.shown:
            rows.append(AffectedRevision(revision, comparison))
    rows.sort(key=lambda row: not (row.revision.is_signed and row.comparison.new_blockers))
    return rows


def changes_since_source(draft: Revision, checklist: dict[str, Any] | None) -> Comparison | None:
    """A draft's live checklist against the stored checklist of the revision it was started from: what a
    reviewer's measurement files (or any edit) changed, for the author to see."""
    source = draft.based_on
    if checklist is None or source is None or not isinstance(source.evaluation, dict):
        return None
    return compare_checklists({**source.evaluation, "ruleset": source.ruleset or source.evaluation.get("ruleset")},
                              checklist)
