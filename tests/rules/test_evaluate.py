"""evaluate(): a rule that raises is contained, reported as a rule failure, and the rest of the checklist comes out."""

import dataclasses

import pytest

from rules import registry
from rules.evaluate import RuleFailure, evaluate
from rules.findings import Flag
from rules.text_report import render_text
from tests.rules.design_builders import antenna, design, run


@pytest.fixture
def broken_rule(monkeypatch):
    """SIZ-001 (device size) raising as it did for a ground plane of 1e-308 mm, before the parser's limits."""
    def check(context):
        yield from ()
        raise ZeroDivisionError("float division by zero")

    rule = {rule.id: rule for rule in registry.registered_rules()}["SIZ-001"]
    monkeypatch.setitem(registry._RULES, "SIZ-001", dataclasses.replace(rule, check=check))
    return rule


def test_a_rule_that_raises_is_a_rule_failure_and_every_other_rule_still_judges(broken_rule):
    document = design("cat-1", antennas=[antenna("A"), antenna("B", "receive", position=(75, 20, 10))])
    evaluation = run(document)
    assert evaluation.rule_failures == (RuleFailure("SIZ-001", "device-size", broken_rule.title,
                                                    "ZeroDivisionError: float division by zero"),)
    # Same findings as without the broken rule, less its own: the pair 55 mm apart is still judged.
    assert "SEP-001" in {finding.id for finding in evaluation.findings}
    assert "SIZ-001" not in {finding.id for finding in evaluation.findings}
    checklist = evaluation.as_dict()
    assert checklist["rule_failures"] == [{"id": "SIZ-001", "topic": "device-size", "title": broken_rule.title,
                                           "error": "ZeroDivisionError: float division by zero"}]
    text = render_text(evaluation)
    assert "RULES THAT COULD NOT RUN (1): this checklist is incomplete" in text
    assert "SIZ-001  device-size" in text


def test_a_rule_that_flags_and_then_raises_leaves_none_of_its_findings(monkeypatch):
    def check(context):
        yield Flag(severity="note", title="half done", explanation="", action="", product_impact="half said")
        raise RuntimeError("then it broke")

    rule = {rule.id: rule for rule in registry.registered_rules()}["GND-002"]
    monkeypatch.setitem(registry._RULES, "GND-002", dataclasses.replace(rule, check=check, severities=("note",)))
    evaluation = run(design(ground_plane_mm=None))
    assert [failure.id for failure in evaluation.rule_failures] == ["GND-002"]
    assert not [finding for finding in evaluation.findings if finding.id == "GND-002"]


def test_a_design_whose_rules_all_run_has_no_rule_failures():
    evaluation = evaluate(run(design()).design)
    assert evaluation.rule_failures == () and evaluation.as_dict()["rule_failures"] == []
