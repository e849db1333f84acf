"""Builders for design documents in tests: a valid baseline that each test bends one way."""

import copy
from typing import Any

from rules.design import parse_design
from rules.evaluate import Evaluation, evaluate
from rules.measurements import LoadedMeasurement

WIDE_RANGES_MHZ = [[600, 1000], [1400, 2700]]


def antenna(name: str, role: str = "main", position=(20, 20, 10), polarization=(1, 0, 0), **extra: Any) -> dict:
    document = {"name": name, "role": role, "mounting": "internal", "position_mm": list(position),
                "polarization": list(polarization), "ranges_mhz": copy.deepcopy(WIDE_RANGES_MHZ),
                "peak_gain_dbi": 1.5}
    document.update(extra)
    return document


def design(category: str = "cat-m1", bands: list[str] | None = None, antennas: list[dict] | None = None,
           **extra: Any) -> dict:
    document: dict[str, Any] = {
        "format": "earshot-design/1",
        "product": {"name": "Test widget", "revision": "1"},
        "modem": {"category": category, "bands": bands or ["B3", "B8", "B20"]},
        "enclosure": {"size_mm": [150, 95, 30], "material": "plastic"},
        "ground_plane_mm": [130, 80],
        "antennas": antennas if antennas is not None else [antenna("A")],
        "deployment": {"environment": "outdoor", "body_distance_mm": 400},
    }
    for key, value in extra.items():
        if isinstance(value, dict) and isinstance(document.get(key), dict):
            document[key] = {**document[key], **value}
        else:
            document[key] = value
    return document


def deeply_nested(levels: int) -> dict:
    """{"x": {"x": ...}} `levels` deep, as an unknown key another tool might add."""
    root: dict = {}
    node = root
    for _ in range(levels):
        node["x"] = {}
        node = node["x"]
    return root


def run(document: dict, measurements: tuple[LoadedMeasurement, ...] = ()) -> Evaluation:
    return evaluate(parse_design(document), measurements)


def findings_of(evaluation: Evaluation, topic: str) -> list:
    return [finding for finding in evaluation.findings if finding.topic == topic]


def severities_of(evaluation: Evaluation, topic: str) -> list[str]:
    return [finding.severity for finding in findings_of(evaluation, topic)]
