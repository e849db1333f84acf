"""The rule registry: every check is a small function registered with its id, topic and sources.

Modelled on Django's system checks: a check takes the evaluation context and yields Flags; the
registry turns each into a Finding carrying the rule's stable id and topic, and refuses a flag whose
severity the rule did not declare, whose basis is not one of findings.BASES, whose evidence lacks a
key the contract promises for its topic, or that does not say what it means for the product (a
`product_impact` in a product manager's words, not a copy of the engineer's explanation or action).
A rule itself must say, in the same words, what it means for a product in general (shown on the rules page).
Ids are never reused: a retired rule stays in RETIRED with the reason.
"""

import inspect
import re
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass
from typing import TYPE_CHECKING

from rules.design import INPUTS
from rules.findings import BASES, EVIDENCE_KEYS, SEVERITIES, TOPICS, Finding, Flag, round_evidence

if TYPE_CHECKING:
    from rules.context import CheckContext

# 1.1.0: COV-001 (coverage cost of a missing second receive antenna).
# 2.0.0: every finding has a basis; measurement outranks geometry (SEP-001, GND-001 cleared by measurement);
# correlation over the downlink, far-field patterns (ECC-003, ECC-004, EFF-004), passivity (MEA-001),
# optimistic S-parameter ECC (ECC-002), efficiency imbalance (EFF-003), feed outside the enclosure (ENC-002,
# SEP-003), per-band peak gain (GAI-001), GNSS and WLAN antennas kept out of the cellular rules; coexistence with
# them (COX-001, COX-002), radiated estimates against the team's targets (OTA-001..003), the RedCap 1Rx barring
# note (CNT-004), coverage enhancement for deep LTE-M / NB-IoT (COV-002).
RULESET_VERSION = "2.0.0"
RULE_ID_PATTERN = re.compile(r"^[A-Z]{3}-\d{3}$")

CheckFunction = Callable[["CheckContext"], Iterable[Flag]]


class RuleDefinitionError(TypeError):
    """A rule registered wrongly: a programming error, caught when the module is imported."""


class RuleOutputError(RuntimeError):
    """A rule yielded something its declaration does not allow."""


@dataclass(frozen=True)
class Rule:
    id: str
    topic: str
    severities: tuple[str, ...]
    title: str
    rationale: str
    sources: tuple[str, ...]
    check: CheckFunction
    added_in: str | None = None  # the rule set that introduced it (None: before rule set 2)
    changed_in: str | None = None  # the last rule set that changed what it says
    needs: tuple[str, ...] = INPUTS  # the design inputs it reads (rules.design.INPUTS); all unless declared
    product_impact: str = ""  # what the rule means for a product, in a product manager's words (required by rule())

    def run(self, context: "CheckContext") -> Iterator[Finding]:
        for flag in self.check(context):
            if not isinstance(flag, Flag):
                raise RuleOutputError(f"{self.id} yielded {flag!r}, expected a Flag")
            if flag.severity not in self.severities:
                raise RuleOutputError(f"{self.id} yielded a {flag.severity}; it declares {self.severities}")
            if flag.basis not in BASES:
                raise RuleOutputError(f"{self.id} yielded basis {flag.basis!r}; expected one of {BASES}")
            missing = [key for key in EVIDENCE_KEYS.get(self.topic, ()) if key not in flag.evidence]
            if missing:
                raise RuleOutputError(f"{self.id} evidence lacks {missing}")
            impact = flag.product_impact.strip() if isinstance(flag.product_impact, str) else ""
            if not impact:
                raise RuleOutputError(f"{self.id} yielded a finding without product_impact (what it means for the "
                                      "product, in a product manager's words)")
            if impact in (flag.explanation.strip(), flag.action.strip()):
                raise RuleOutputError(f"{self.id}: product_impact repeats the explanation or the action; say what "
                                      "the finding means for the product")
            yield Finding(
                id=self.id,
                topic=self.topic,
                severity=flag.severity,
                title=flag.title,
                explanation=flag.explanation,
                action=flag.action,
                product_impact=impact,
                subjects=tuple(flag.subjects),
                evidence={key: round_evidence(key, value) for key, value in flag.evidence.items()},
                references=tuple(flag.references) or self.sources,
                basis=flag.basis,
            )


@dataclass(frozen=True)
class RetiredRule:
    id: str
    topic: str
    retired_in: str
    reason: str


_RULES: dict[str, Rule] = {}

# Ids that once meant something and must never be given to a new rule.
RETIRED: tuple[RetiredRule, ...] = ()


def rule(
    *, id: str, topic: str, severities: Iterable[str], title: str, rationale: str, sources: Iterable[str],
    product_impact: str, added_in: str | None = None, changed_in: str | None = None,
    needs: Iterable[str] | None = None,
) -> Callable[[CheckFunction], CheckFunction]:
    """Registers a check function under a stable id. The function takes one argument, `context`.
    `product_impact` says what the rule means for a product, in a product manager's words (each finding
    then says it for its own case). `added_in` and `changed_in` name the rule set that introduced the rule
    or last changed its meaning. `needs` names the design inputs it reads (rules.design.INPUTS): on a partial
    design (a draft being filled in) it runs only when all of them are there. A rule that declares none needs
    every input, so it waits until the design is complete; tests/rules/test_partial.py checks each declaration
    against what the rule reads."""
    severities = tuple(severities)
    sources = tuple(sources)
    declared = INPUTS if needs is None else tuple(needs)

    def register(function: CheckFunction) -> CheckFunction:
        where = f"{function.__module__}.{function.__name__}"
        if not RULE_ID_PATTERN.match(id):
            raise RuleDefinitionError(f"{where}: rule id {id!r} should look like ABC-123")
        if id in _RULES or any(retired.id == id for retired in RETIRED):
            raise RuleDefinitionError(f"{where}: rule id {id} is already taken")
        if topic not in TOPICS:
            raise RuleDefinitionError(f"{where}: topic {topic!r} is not one of {TOPICS}")
        if not severities or any(severity not in SEVERITIES for severity in severities):
            raise RuleDefinitionError(f"{where}: severities {severities} should come from {SEVERITIES}")
        if not sources:
            raise RuleDefinitionError(f"{where}: a rule names its sources ('common practice' counts)")
        unknown = [name for name in declared if name not in INPUTS]
        if unknown:
            raise RuleDefinitionError(f"{where}: needs {unknown} are not inputs of rules.design.INPUTS")
        if not isinstance(product_impact, str) or not product_impact.strip():
            raise RuleDefinitionError(f"{where}: a rule says what it means for the product (product_impact), in a "
                                      "product manager's words")
        parameters = list(inspect.signature(function).parameters.values())
        if [parameter.name for parameter in parameters] != ["context"]:
            raise RuleDefinitionError(f"{where}: a check takes exactly one parameter, 'context'")
        _RULES[id] = Rule(id, topic, severities, title, rationale, sources, function, added_in, changed_in,
                          declared, product_impact=product_impact.strip())
        return function

    return register


def registered_rules() -> tuple[Rule, ...]:
    """Every active rule, in checklist order (topic, then id)."""
    import rules.checks  # noqa: F401  (importing the package registers its checks)

    return tuple(sorted(_RULES.values(), key=lambda item: (TOPICS.index(item.topic), item.id)))
