"""Template helpers for showing a checklist: grouping, and evidence values with their units."""

from typing import Any

from django import template

from rules.findings import SEVERITIES, TOPICS

register = template.Library()

# Units by key suffix, matching the contract's naming (frequencies in MHz, lengths in mm, ...).
UNITS = (("_mhz", "MHz"), ("_mm", "mm"), ("_dbi", "dBi"), ("_db", "dB"), ("_deg", "°"), ("_kbps", "kbps"),
         ("_pct", "%"))
LABELS = {"ecc": "envelope correlation (ECC)", "vswr": "VSWR", "ka": "ka (electrical size)", "q": "Q limit (McLean)",
          "distance_wavelengths": "distance in wavelengths (λ)"}


@register.filter
def grouped(findings: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """[{severity, count, topics: [{topic, findings}]}] in checklist order, empty severities left out."""
    groups = []
    for severity in SEVERITIES:
        of_severity = [finding for finding in findings if finding["severity"] == severity]
        if not of_severity:
            continue
        topics = []
        for topic in TOPICS:
            of_topic = [finding for finding in of_severity if finding["topic"] == topic]
            if of_topic:
                topics.append({"topic": topic, "findings": of_topic})
        groups.append({"severity": severity, "count": len(of_severity), "topics": topics})
    return groups


def _show(value: Any) -> str:
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:g}"
    if isinstance(value, list):
        if value and all(isinstance(item, list) for item in value):
            return ", ".join("–".join(_show(part) for part in item) for item in value)
        return ", ".join(_show(item) for item in value)
    return str(value)


@register.filter
def evidence_rows(evidence: dict[str, Any]) -> list[tuple[str, str, str, str]]:
    """(label, value, unit, key) for each evidence entry that has a value."""
    rows = []
    for key, value in evidence.items():
        if value is None:
            continue
        unit = next((unit for suffix, unit in UNITS if key.endswith(suffix)), "")
        stem = key
        for suffix, _ in UNITS:
            if key.endswith(suffix):
                stem = key[: -len(suffix)]
                break
        label = LABELS.get(key, stem.replace("_", " "))
        rows.append((label, _show(value), unit, key))
    return rows


@register.filter
def get_item(mapping: dict[str, Any], key: str) -> Any:
    return mapping.get(key)


@register.filter
def num(value: Any) -> str:
    """A number as typed: 120 rather than 120.0; other values unchanged."""
    if isinstance(value, float):
        return f"{value:g}"
    return "" if value is None else str(value)
