"""Which findings name a step outside the team: certification, operator acceptance, regulatory approval or an
RF-exposure evaluation. Such a finding becomes a tracked process step on the review (reviews.models.ProcessStep),
not an item to waive: the team can't settle it, only plan it and record what the lab or operator said."""

# Topics whose findings defer to a lab, a regulator or an operator (rules/findings.py TOPICS).
EXTERNAL_TOPICS = frozenset({"certification", "rf-exposure"})
# Rules of other topics whose finding is an operator's acceptance (rules/checks/antenna_count.py, coverage.py).
EXTERNAL_RULE_IDS: frozenset[str] = frozenset()


def is_external_step(*, topic: str, rule_id: str) -> bool:
    return topic in EXTERNAL_TOPICS or rule_id in EXTERNAL_RULE_IDS
