"""The coverage panel: the uplink and downlink budget of every band as a table by direction, a few sentences
saying which direction limits and what a missing receive branch costs, every source, and the assumptions a
reader may change for a what-if (read through a form; the checklist's COV-001 keeps the defaults).

Every number comes from rules.coverage; this module only picks, words and formats them.
"""

import math
from collections.abc import Mapping, Sequence
from typing import Any

from django import forms

from projectapp.filters import FilterForm, choice_field
from rules.coverage import SCENARIO_LABELS, SCENARIOS, TABLE_GROUPS, coverage_data

DIRECTIONS = {"ul": "uplink", "dl": "downlink"}


def _number(low: float, high: float, what: str) -> forms.FloatField:
    message = f"expected {what} from {low:g} to {high:g}"
    return forms.FloatField(required=False, min_value=low, max_value=high, error_messages={
        "invalid": message, "min_value": message, "max_value": message})


class CoverageAssumptionsForm(FilterForm):
    """The coverage analysis' assumptions, from the panel's query string. Bounds are what a budget can hold;
    TR 38.901's own validity (heights, distances) is checked by rules.coverage, which names the parameter."""

    scenario = choice_field(SCENARIOS)
    los = choice_field(("nlos", "los"))
    mobile_height_m = _number(0.5, 30.0, "a device height in m")
    reference_distance_km = _number(0.01, 10.0, "a distance in km")
    outage_pct = _number(0.1, 50.0, "an outage in %")
    base_gain_db = _number(-10.0, 40.0, "a gain in dB")
    entry_loss_db = _number(0.0, 60.0, "a loss in dB")
    ecc = _number(0.0, 1.0, "an envelope correlation")
    efficiency_ratio = _number(0.01, 10.0, "a ratio (second antenna's efficiency over the main one's)")

    def overrides(self, environment: str) -> dict[str, Any]:
        """The valid entries as rules.coverage.analyse_coverage() keywords."""
        chosen = self.cleaned
        result: dict[str, Any] = {key: chosen[key] for key in ("scenario", "mobile_height_m", "reference_distance_km",
                                                              "base_gain_db", "ecc", "efficiency_ratio")
                                  if key in chosen}
        if "los" in chosen:
            result["los"] = chosen["los"] == "los"
        if "outage_pct" in chosen:
            result["outage_probability"] = chosen["outage_pct"] / 100.0
        if "entry_loss_db" in chosen:
            result["entry_loss_db"] = {environment: chosen["entry_loss_db"]}
        return result


def _cell(key: str, value: Any) -> str:
    if value is None:
        return "—"
    if key.startswith("limiting"):
        return DIRECTIONS.get(str(value), str(value))
    if isinstance(value, list):
        return "–".join(_cell(key, item) for item in value)
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        return str(value)
    if key.endswith("_km"):
        return f"{value:.2f}"
    if key.endswith("_pct"):
        return f"{value:.0f}"
    if key.endswith("_mhz"):
        return f"{value:g}"
    return f"{value:.1f}"


def table_groups(rows: Sequence[Mapping[str, Any]]) -> list[dict[str, Any]]:
    """[{title, rows: [{key, label, unit, cells}]}]: TABLE_GROUPS with one formatted cell per band."""
    return [{"title": title, "rows": [{"key": key, "label": label, "unit": unit,
                                       "cells": [_cell(key, row.get(key)) for row in rows]}
                                      for key, label, unit in entries]}
            for title, entries in TABLE_GROUPS]


def _bands(names: list[str]) -> str:
    return ", ".join(names)


def headline(rows: Sequence[Mapping[str, Any]]) -> list[str]:
    """What the table says, in sentences: which direction limits, what one receive branch fewer costs in
    range, and the power class and cable loss the uplink was budgeted with."""
    if not rows:
        return []
    sentences = []

    def limits(key: str) -> str:
        by_direction = {direction: [row["band"] for row in rows if row.get(key) == direction] for direction in DIRECTIONS}
        return " and by ".join(f"the {DIRECTIONS[direction]} in {_bands(bands)}"
                               for direction, bands in by_direction.items() if bands)

    if limits("limiting_two") == limits("limiting_one"):
        sentences.append(f"With one or two receive antennas coverage is limited by {limits('limiting_two')}.")
    else:
        sentences += [f"With two receive antennas coverage is limited by {limits('limiting_two')}.",
                      f"With one it is limited by {limits('limiting_one')}."]
    losing = [row for row in rows if row.get("area_share_pct") is not None and row["area_share_pct"] < 99.5]
    keeping = [row["band"] for row in rows if row.get("area_share_pct") is not None and row["area_share_pct"] >= 99.5]
    first = rows[0]

    def spread(key: str) -> str:
        values = sorted({row[key] for row in rows})
        return _cell("x", values[0]) if len(values) == 1 else f"{_cell('x', values[0])}–{_cell('x', values[-1])}"

    ranges = [row["single_branch_cost_range_db"] for row in rows]
    cost = (f"One receive branch fewer costs the downlink about {spread('single_branch_cost_db')} dB "
            f"(the published single-branch figures, {_cell('x', min(low for low, _ in ranges))}–"
            f"{_cell('x', max(high for _, high in ranges))} dB; at most {spread('fading_bound_db')} dB in flat "
            "Rayleigh fading)")
    if keeping:
        cost += f"; where the uplink limits even then ({_bands(keeping)}) that costs no range"
    sentences.append(cost + ".")
    if losing:
        sentences.append("With one receive antenna the covered area shrinks in " + "; ".join(
            f"{row['band']} to {row['area_share_pct']:.0f} % of the two-antenna area"
            + (f" ({_cell('range_one_km', row['range_one_km'])} instead of {_cell('range_two_km', row['range_two_km'])} km)"
               if row.get("range_one_km") is not None and row.get("range_two_km") is not None else "")
            for row in losing) + ".")
    uplink = [row for row in rows if row.get("mcl_ul_db") is not None]
    if uplink:
        sentences.append(f"The uplink is budgeted at power class {first['power_class']} ({first['max_output_dbm']:g} dBm "
                         f"conducted) with the main antenna's cable loss of {first['cable_loss_db']:g} dB.")
    return sentences


def sources(rows: Sequence[Mapping[str, Any]], entered: Mapping[str, Any]) -> list[tuple[str, str]]:
    """(what, source) for every input of the budget, each named once; entries changed on the panel say so."""
    if not rows:
        return []
    first = rows[0]
    defaults = coverage_data().assumptions.sources

    def pick(key: str, default: str) -> str:
        return "entered on this panel (what-if)" if key in entered else default

    listed = [
        ("Path loss", f"{first['model_label']}, mast {first['base_height_m']:g} m, device {first['mobile_height_m']:g} m "
                      f"({first['model_source']}); " + pick("scenario", defaults["scenario"])),
        ("Line of sight", pick("los", defaults["los"])),
        ("Device height", pick("mobile_height_m", defaults["mobile_height_m"])),
        ("Reference distance", f"{first['reference_distance_km']:g} km; "
                               + pick("reference_distance_km", defaults["reference_distance_km"])),
        ("Uplink target", first["mcl_ul_source"]),
        ("Downlink target", first["mcl_dl_source"]),
        ("Power class", first["power_class_source"]),
        ("One receive branch fewer", first["single_branch_source"]),
        ("Fading bound", f"two-branch maximal-ratio combining in flat Rayleigh fading at {first['outage_pct']:g} % outage "
                         f"({pick('outage_pct', defaults['outage_probability'])})"),
        ("Base station antenna gain", f"{first['base_gain_db']:g} dB; " + pick("base_gain_db", defaults["base_gain_db"])),
        ("Entry loss", f"{first['entry_loss_db']:g} dB ({first['environment']}); " + first["entry_loss_source"]),
        ("Main antenna loss", first["antenna_loss_source"]),
    ]
    for what, key in (("Envelope correlation", "ecc_source"), ("Second antenna's efficiency", "efficiency_source")):
        texts = list(dict.fromkeys(row[key] for row in rows))
        listed.append((what, texts[0] if len(texts) == 1 else "; ".join(f"{row['band']}: {row[key]}" for row in rows)))
    notes = list(dict.fromkeys(row["model_reason"] or row["range_note"] for row in rows
                               if row.get("model_reason") or row.get("range_note")))
    listed += [("Model limits", note) for note in notes]
    return listed


def assumptions(rows: Sequence[Mapping[str, Any]], form: CoverageAssumptionsForm) -> dict[str, Any]:
    """What the assumptions form shows: the value in force for each field (as entered when it was valid)."""
    first = rows[0] if rows else {}
    shown = {name: value for name, value in form.shown.items() if value}
    values = {
        "scenario": first.get("scenario", coverage_data().assumptions.scenario),
        "los": "los" if first.get("los") else "nlos",
        "mobile_height_m": first.get("mobile_height_m"),
        "reference_distance_km": first.get("reference_distance_km"),
        "outage_pct": first.get("outage_pct"),
        "base_gain_db": first.get("base_gain_db"),
        "entry_loss_db": first.get("entry_loss_db"),
        "ecc": form.cleaned.get("ecc", coverage_data().assumptions.assumed_ecc),
        "efficiency_ratio": form.cleaned.get("efficiency_ratio", coverage_data().assumptions.assumed_efficiency_ratio),
    }
    return {"values": {**{key: "" if value is None else f"{value:g}" if isinstance(value, float) else value
                          for key, value in values.items()}, **shown},
            "scenarios": [(scenario, SCENARIO_LABELS[scenario]) for scenario in SCENARIOS]}


def panel(rows: Sequence[Mapping[str, Any]], form: CoverageAssumptionsForm) -> dict[str, Any]:
    return {"coverage": list(rows), "coverage_groups": table_groups(rows), "coverage_headline": headline(rows),
            "coverage_sources": sources(rows, form.cleaned), "coverage_form": assumptions(rows, form),
            "coverage_problems": form.problems, "coverage_entered": bool(form.cleaned)}
