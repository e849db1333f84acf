"""Which findings name a step outside the team: certification, operator acceptance, regulatory approval or an
RF-exposure evaluation. Such a finding becomes a tracked process step on the review (reviews.models.ProcessStep),
not an item to waive: the team can't settle it, only plan it and record what the lab or operator said."""

# Topics whose findings defer to a lab, a regulator or an operator (rules/findings.py TOPICS), and who decides
# such a step when its rule is not named below (words that follow "decided by").
EXTERNAL_TOPICS = {
    "certification": "a lab, a certification body or an operator",
    "rf-exposure": "a licensed lab's RF-exposure evaluation, under local regulation",
}
# Rules whose step has a more precise owner: the certification rules (rules/checks/certification.py), and notes of
# other topics that only an operator can settle: whether it enables the deepest coverage enhancement
# (rules/checks/coverage.py COV-002) and whether its cells admit one-branch RedCap devices (antenna_count.py
# CNT-004). A warning or blocker that also mentions an operator (CNT-001) stays a review item: it is a design trade
# the team decides, and the operator's letter it rests on is attached to that decision.
EXTERNAL_RULES = {
    "CRT-001": "each operator, in its acceptance testing",
    "CRT-002": "a test house, under the industry certification scheme",
    "CRT-003": "each market's regulator, on an accredited lab's report",
    "COV-002": "each operator: whether it enables coverage enhancement on its network",
    "CNT-004": "each operator: whether its cells admit one-branch RedCap devices",
}


def is_external_step(*, topic: str, rule_id: str) -> bool:
    return topic in EXTERNAL_TOPICS or rule_id in EXTERNAL_RULES


def decided_by(*, topic: str, rule_id: str) -> str:
    """Who settles the step, in words for its card and the signed record."""
    return EXTERNAL_RULES.get(rule_id) or EXTERNAL_TOPICS.get(topic, "")
