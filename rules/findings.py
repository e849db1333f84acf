"""What a check says: severities, topics, and the Finding a checklist is made of."""

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

SEVERITIES = ("blocker", "warning", "note")

# What a finding rests on, lowest rank first (design.md, rule set 2): the design's geometry and choices,
# a component's datasheet figures, or a measurement of this product. A measurement outranks the others.
BASES = ("design", "datasheet", "measured")

# Fixed vocabulary of the contract (design-file.md); the order is the order a checklist lists them in.
TOPICS = (
    "antenna-count", "band-coverage", "separation", "ground-plane", "enclosure", "device-size", "gain-limit",
    "throughput", "measurement", "matching", "isolation", "correlation", "efficiency", "coverage", "coexistence",
    "ota", "rf-exposure", "certification",
)

# Evidence keys the contract promises for a topic; a finding of that topic must carry all of them.
EVIDENCE_KEYS: Mapping[str, tuple[str, ...]] = {
    "antenna-count": ("required", "fitted"),
    "band-coverage": ("band", "missing_mhz"),
    "separation": ("frequency_mhz", "distance_mm", "quarter_wave_mm", "near_field_mm", "polarization_angle_deg"),
    "ground-plane": ("frequency_mhz", "length_mm", "quarter_wave_mm"),
    "gain-limit": ("band", "gain_dbi", "limit_dbi"),
    "throughput": ("direction", "required_kbps", "peak_kbps"),
    "matching": ("band", "port", "return_loss_db", "vswr"),
    "isolation": ("band", "ports", "isolation_db"),
    "correlation": ("band", "ports", "ecc", "method"),
    "efficiency": ("band", "efficiency_pct"),
    "coexistence": ("band", "victim", "mechanism", "aggressor_mhz", "victim_mhz"),
    "ota": ("band", "quantity", "estimate_dbm", "target_dbm"),
    "measurement": ("file", "problem", "frequency_mhz"),
}

# How finely each evidence value is shown, by the unit its key ends in (contract: 0.1 for MHz and mm).
_DECIMALS_BY_SUFFIX = (
    ("_mhz", 1), ("_mm", 1), ("_deg", 1), ("_kbps", 1), ("_pct", 1), ("_db", 2), ("_dbi", 2),
    ("_dbm", 2), ("vswr", 2), ("ecc", 3), ("_ratio", 3), ("ka", 3), ("q", 2),
)


def round_evidence(key: str, value: Any) -> Any:
    """Rounds a number (or the numbers inside lists) to the precision its unit is shown in."""
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, (list, tuple)):
        return [round_evidence(key, item) for item in value]
    if isinstance(value, int):
        return value
    if isinstance(value, float):
        for suffix, decimals in _DECIMALS_BY_SUFFIX:
            if key.endswith(suffix):
                return round(value, decimals)
        return round(value, 3)
    return value


@dataclass(frozen=True, kw_only=True)
class Flag:
    """What a check function yields; the registry stamps it with the rule's id and topic.

    `explanation` and `action` are the engineer's words. `product_impact` says, in a product manager's words,
    what the finding means for the product (range, cost, schedule, approval), agreeing with the finding's
    numbers and severity; it is required, so no rule can leave a finding unexplained to the person who owns
    the product."""

    severity: str
    title: str
    explanation: str
    action: str
    product_impact: str
    subjects: tuple[str, ...] = ()
    evidence: Mapping[str, Any] = field(default_factory=dict)
    references: tuple[str, ...] = ()
    basis: str = "design"


@dataclass(frozen=True)
class Finding:
    id: str
    topic: str
    severity: str
    title: str
    explanation: str
    action: str
    subjects: tuple[str, ...]
    evidence: Mapping[str, Any]
    references: tuple[str, ...]
    basis: str = "design"
    # Last and defaulted so that positional construction keeps working; the registry always sets it from the
    # flag, which must carry one (Flag.product_impact has no default).
    product_impact: str = ""

    @property
    def key(self) -> tuple[str, tuple[str, ...]]:
        """What makes a finding 'the same item' across revisions: its rule and what it is about."""
        return (self.id, self.subjects)

    def sort_key(self) -> tuple[int, int, str, tuple[str, ...]]:
        return (SEVERITIES.index(self.severity), TOPICS.index(self.topic), self.id, self.subjects)

    def as_dict(self) -> dict[str, Any]:
        return {
            "id": self.id,
            "topic": self.topic,
            "severity": self.severity,
            "title": self.title,
            "explanation": self.explanation,
            "action": self.action,
            "product_impact": self.product_impact,
            "subjects": list(self.subjects),
            "evidence": dict(self.evidence),
            "references": list(self.references),
            "basis": self.basis,
        }
