"""Template helpers for showing a checklist: grouping, and evidence values with their units."""

from typing import Any

from django import template

from rules.findings import SEVERITIES, TOPICS

register = template.Library()

# Units by key suffix, matching the contract's naming (frequencies in MHz, lengths in mm, ...).
UNITS = (("_mhz", "MHz"), ("_mm", "mm"), ("_dbi", "dBi"), ("_db", "dB"), ("_deg", "°"), ("_kbps", "kbps"),
         ("_pct", "%"))
LABELS = {"ecc": "envelope correlation (ECC)", "vswr": "VSWR", "ka": "ka (electrical size)", "q": "Q limit (McLean)",
          "distance_wavelengths": "distance in wavelengths (λ)", "measured_ecc": "measured envelope correlation (ECC)",
          "eccs": "envelope correlation (ECC) per band", "design_severity": "severity from the design alone",
          "outranked_by": "outranked by (measured)", "xpr_db": "cross-polar ratio (XPR)"}
UNITS = (*UNITS, ("_dbm", "dBm"))


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


# What a finding rests on (rule set 2's `basis`), in the words a product manager reads. A stored checklist of
# rule set 1.x has no basis: nothing is shown for it.
BASIS_WORDS = {"design": "from the design", "datasheet": "from datasheets", "measured": "measured"}


@register.filter
def basis_words(finding: Any) -> str:
    basis = finding.get("basis") if isinstance(finding, dict) else None
    return BASIS_WORDS.get(basis, "") if isinstance(basis, str) else ""


@register.filter
def outranked(finding: Any, digests: Any = None) -> list[dict[str, str | None]]:
    """What outranked the design rule of a finding a measurement lowered (`outranked_by` in its evidence):
    each entry with its file's SHA-256 when it names a kept measurement file (`digests`: file name ->
    SHA-256), else the entry as the rule wrote it (a measured value entered in the design)."""
    evidence = finding.get("evidence") if isinstance(finding, dict) else None
    entries = evidence.get("outranked_by") if isinstance(evidence, dict) else None
    if not isinstance(entries, list):
        return []
    known = digests if isinstance(digests, dict) else {}
    return [{"name": str(entry), "sha256": known.get(entry)} for entry in entries]


@register.simple_tag(takes_context=True)
def outranking(context: Any, finding: Any) -> list[dict[str, str | None]]:
    """`outranked` with the page's `measurement_digests`, when it has them (a list of cards across revisions
    has none: the files are named without their SHA-256 there)."""
    return outranked(finding, context.get("measurement_digests"))
