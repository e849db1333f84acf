"""Two revisions side by side: which design fields changed, and how the checklist changed."""

from dataclasses import dataclass, field
from typing import Any

from projectapp.designs.checklists import checklist_for
from projectapp.designs.models import Revision
from projectapp.designs.upgrades import finding_key


def flatten(value: Any, path: str = "") -> dict[str, Any]:
    """{'antennas[0].position_mm': [15, 10, 20], ...}: leaves and short lists of numbers as one value."""
    if isinstance(value, dict):
        flat: dict[str, Any] = {}
        for key, item in value.items():
            flat.update(flatten(item, f"{path}.{key}" if path else key))
        return flat or {path: {}}
    if isinstance(value, list) and value and any(isinstance(item, (dict, list)) for item in value) \
            and not all(isinstance(item, list) and all(not isinstance(x, (dict, list)) for x in item) for item in value):
        flat = {}
        for index, item in enumerate(value):
            flat.update(flatten(item, f"{path}[{index}]"))
        return flat
    return {path: value}


@dataclass
class FieldChange:
    path: str
    before: Any
    after: Any


@dataclass
class Comparison:
    older: Revision
    newer: Revision
    fields: list[FieldChange] = field(default_factory=list)
    new: list[dict[str, Any]] = field(default_factory=list)
    resolved: list[dict[str, Any]] = field(default_factory=list)
    severity_changed: list[tuple[dict[str, Any], dict[str, Any]]] = field(default_factory=list)
    unchanged: int = 0
    problems: list[str] = field(default_factory=list)


def _findings_by_key(revision: Revision) -> tuple[dict[tuple[str, tuple[str, ...]], dict[str, Any]], list[str]]:
    state = checklist_for(revision)
    keyed = {finding_key(finding): finding for finding in state.findings}  # one identity with rule-set upgrades
    return keyed, [f"design revision {revision.number}: {problem}" for problem in state.problems]


def compare_revisions(older: Revision, newer: Revision) -> Comparison:
    comparison = Comparison(older, newer)
    before, after = flatten(older.document), flatten(newer.document)
    for path in sorted(set(before) | set(after), key=lambda item: (item.split(".")[0], item)):
        if before.get(path, None) != after.get(path, None):
            comparison.fields.append(FieldChange(path, before.get(path), after.get(path)))
    old_findings, old_problems = _findings_by_key(older)
    new_findings, new_problems = _findings_by_key(newer)
    comparison.problems = old_problems + new_problems
    for key, finding in new_findings.items():
        if key not in old_findings:
            comparison.new.append(finding)
        elif old_findings[key]["severity"] != finding["severity"]:
            comparison.severity_changed.append((old_findings[key], finding))
        else:
            comparison.unchanged += 1
    comparison.resolved = [finding for key, finding in old_findings.items() if key not in new_findings]
    return comparison
