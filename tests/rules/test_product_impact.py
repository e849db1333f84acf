"""Every finding says what it means for the product, in a product manager's words, agreeing with its numbers
and its severity; the registry refuses a rule or a finding that doesn't.

The designs below are a spread that makes every registered rule speak at every severity it declares: the
invented company's examples (rules/examples/) and designs bent one way each from tests/rules/design_builders.py.
Band edges: 3GPP TS 36.101 Table 5.5-1 (B3 DL 1805-1880, B8 DL 925-960, B20 DL 791-821, UL 832-862). At
791 MHz: lambda/4 = 94.7 mm, lambda/2pi = 60.3 mm (c = 299 792 458 m/s; Wheeler 1959). Two-port data with
S11 = S22 = a and S21 = S12 = b (real): return loss -20 log10 a, isolation -20 log10 b, ECC 4a²b²/(1-a²-b²)²
(Blanch, Romeu, Corbella 2003), efficiency bound 1 - a² - b², singular values |a ± b| (power conservation).
Far-field patterns are short dipoles (benchmarks/far_field_data.py, Balanis §4.2).
"""

import json
import re
from collections.abc import Callable
from pathlib import Path

import pytest

from benchmarks.far_field_data import dipole_field, grid, pattern_text
from rules import registry
from rules.checks.measured import diversity_share
from rules.design import parse_design
from rules.evaluate import Evaluation, evaluate
from rules.findings import Finding, Flag
from rules.measurements import attach_measurements
from tests.rules.design_builders import antenna, design

EXAMPLES = Path(__file__).resolve().parents[2] / "rules" / "examples"
PATTERN_FREQUENCIES_MHZ = [800.0, 940.0, 1840.0]  # inside the downlinks of B20, B8 and B3 (TS 36.101)
EFFICIENT = {"B3": 60, "B8": 60, "B20": 60}


def two_port(blocks: list[tuple[float, float, float, float]], low_mhz: int = 700, high_mhz: int = 2200) -> str:
    """S11 = S22 = a, S21 = S12 = b in blocks (from_mhz, to_mhz, a, b); elsewhere a = 0.1, b = 0.05."""
    lines = ["# MHz S RI R 50"]
    for frequency in range(low_mhz, high_mhz + 1, 5):
        a, b = next(((a, b) for low, high, a, b in blocks if low <= frequency <= high), (0.1, 0.05))
        lines.append(f"{frequency} {a} 0 {b} 0 {b} 0 {a} 0")
    return "\n".join(lines) + "\n"


def dipole_file(axis, position_mm, efficiency: float = 1.0, frequencies=PATTERN_FREQUENCIES_MHZ) -> str:
    theta, phi = grid(10.0)
    return pattern_text(frequencies, theta, phi, *dipole_field(frequencies, theta, phi, axis, position_mm, efficiency))


def pair(distance_mm: float, second_polarization=(1, 0, 0), category: str = "cat-1", **extra) -> dict:
    more = {key: extra.pop(key) for key in ("efficiency_pct", "efficiency_source") if key in extra}
    return design(category, antennas=[antenna("A", "main", (20, 20, 10), (1, 0, 0), **more),
                                      antenna("B", "receive", (20 + distance_mm, 20, 10), second_polarization, **more)],
                  **extra)


def measured_pair(blocks, efficiency=None, distance_mm: float = 120.0, **touchstone) -> tuple[dict, dict]:
    extra = {"efficiency_pct": efficiency} if efficiency else {}
    return (pair(distance_mm, (0, 1, 0), measurements=[{"file": "pair.s2p", "ports": ["A", "B"]}], **extra),
            {"pair.s2p": two_port(blocks, **touchstone)})


def with_patterns(distance_mm: float, second_axis, efficiency: float = 1.0, absolute: bool = False,
                  frequencies=PATTERN_FREQUENCIES_MHZ) -> tuple[dict, dict]:
    entries = [{"kind": "far-field", "file": f"{name}.csv", "antenna": name.upper(), **({"absolute": True} if absolute
                                                                                        else {})}
               for name in ("a", "b")]
    document = pair(distance_mm, second_axis, measurements=entries)
    files = {"a.csv": dipole_file((1, 0, 0), (20, 20, 10), efficiency, frequencies),
             "b.csv": dipole_file(second_axis, (20 + distance_mm, 20, 10), efficiency, frequencies)}
    return document, files


def without(document: dict, *path: str) -> dict:
    """The document with the key at `path` left out."""
    node = document
    for key in path[:-1]:
        node = node[key]
    del node[path[-1]]
    return document


DESIGNS: dict[str, Callable[[], tuple[dict, dict]]] = {
    **{f"example {path.stem}": (lambda path=path: (json.loads(path.read_text()),
                                                   {item.name: item.read_text() for item in EXAMPLES.iterdir()
                                                    if item.suffix in (".s2p", ".csv")}))
       for path in sorted(EXAMPLES.glob("*.json"))},
    "cat 1 alone": lambda: (design("cat-1"), {}),
    "cat 1 alone on an operator's approval": lambda: (design("cat-1", modem={"operator_single_antenna_approval": True}), {}),
    "cat 4 alone": lambda: (design("cat-4"), {}),
    "redcap with two branches and one antenna": lambda: (design("nr-redcap", bands=["n3", "n8", "n20"],
                                                                modem={"rx_ports": 2}), {}),
    "no antenna": lambda: (design(antennas=[]), {}),
    "receive antennas only": lambda: (design(antennas=[antenna("A", "receive")]), {}),
    "lte-m with two antennas": lambda: (design(antennas=[antenna("A"), antenna("B", "receive", (140, 20, 10))]), {}),
    "antennas that miss the low bands": lambda: (pair(120, (0, 1, 0)) | {"antennas": [
        antenna("A", ranges_mhz=[[1700, 2200]]), antenna("B", "receive", (140, 20, 10), ranges_mhz=[[1700, 2200]])]}, {}),
    "rated ranges not given": lambda: (design(antennas=[without(antenna("A"), "ranges_mhz")]), {}),
    "co-polarized pair inside the near field": lambda: (pair(40), {}),
    "cross-polarized pair inside the near field": lambda: (pair(40, (0, 1, 0)), {}),
    "co-polarized pair short of a quarter wave": lambda: (pair(80), {}),
    "cross-polarized pair short of a quarter wave": lambda: (pair(80, (0, 1, 0)), {}),
    "close pair cleared by crossed patterns": lambda: with_patterns(55, (0, 1, 0)),
    "close pair, parallel patterns": lambda: with_patterns(55, (1, 0, 0)),
    "pair, parallel patterns 100 mm apart": lambda: with_patterns(100, (1, 0, 0)),
    "patterns outside every downlink": lambda: with_patterns(120, (0, 1, 0), frequencies=[1000.0]),
    "absolute patterns, efficient": lambda: with_patterns(120, (0, 1, 0), 0.6, absolute=True),
    "absolute patterns, lossy": lambda: with_patterns(120, (0, 1, 0), 0.2, absolute=True),
    "pair, one position missing": lambda: (design("cat-1", antennas=[
        antenna("A"), without(antenna("B", "receive"), "position_mm")]), {}),
    "feed outside the enclosure": lambda: (design("cat-1", antennas=[
        antenna("A"), antenna("B", "receive", (250, 20, 10), (0, 1, 0))]), {}),
    "ground plane between an eighth and a quarter wave": lambda: (design(ground_plane_mm=[70, 60]), {}),
    "ground plane below an eighth wave": lambda: (design(ground_plane_mm=[45, 30]), {}),
    "short ground plane, measured efficient": lambda: (design(ground_plane_mm=[45, 30], antennas=[
        antenna("A", efficiency_pct={"B20": 30, "B8": 35}, efficiency_source="measured")]), {}),
    "ground plane not given": lambda: (design(ground_plane_mm=None), {}),
    "small board for the low bands": lambda: (design(bands=["B85", "B20", "B8"], ground_plane_mm=[100, 50]), {}),
    "metal enclosure": lambda: (design(enclosure={"material": "metal"}), {}),
    "mixed enclosure": lambda: (design(enclosure={"material": "mixed"}), {}),
    "gain over the limit in one band, unknown in another": lambda: (design(
        modem={"gain_limits_dbi": {"B3": 2.0, "B8": 2.0, "B20": 2.0}},
        antennas=[antenna("A", peak_gain_dbi={"B3": 3.5, "B8": 1.0})]), {}),
    "throughput above the peak": lambda: (design(deployment={"required_dl_kbps": 5000, "required_ul_kbps": 5000}), {}),
    "lossy main and receive antennas": lambda: (design("cat-1", antennas=[
        antenna("A", efficiency_pct={"B8": 20, "B20": 60}),
        antenna("B", "receive", (140, 20, 10), (0, 1, 0), efficiency_pct={"B8": 18, "B20": 15})]), {}),
    "mismatched port (warning)": lambda: measured_pair([(700, 1000, 0.6, 0.05)]),
    "mismatched port (blocker)": lambda: measured_pair([(700, 1000, 0.8, 0.05)]),
    "measurement short of B3": lambda: measured_pair([], high_mhz=1000),
    "isolation 8 dB": lambda: measured_pair([(700, 1000, 0.1, 0.4)]),
    "isolation 4.4 dB": lambda: measured_pair([(700, 1000, 0.1, 0.6)]),
    "s-parameter ECC 0.54, efficient": lambda: measured_pair([(700, 1000, 0.46, 0.46)], EFFICIENT),
    "s-parameter ECC 0.73, lossy": lambda: measured_pair([(700, 1000, 0.48, 0.48)]),
    "low s-parameter ECC, efficiency unknown": lambda: measured_pair([(700, 1000, 0.2, 0.05)]),
    "low efficiency bound": lambda: measured_pair([(700, 1000, 0.87, 0.05)]),
    "not passive": lambda: measured_pair([(780, 870, 0.6, 0.5)], EFFICIENT),
    "radiated targets without the efficiency to estimate them": lambda: (design(
        deployment={"radiated_targets_dbm": {"trp": {"B20": 20.0}, "tis": {"B8": -95.0}}}), {}),
    "people within 50 mm": lambda: (design(deployment={"body_distance_mm": 50}), {}),
    "distance to people not given": lambda: (without(design(), "deployment", "body_distance_mm"), {}),
    # B29 is supplemental downlink (TS 36.101 Table 5.5-1): no uplink absorbs the missing branch's cost.
    "cat 6 alone with a downlink-only band": lambda: (design("cat-6", bands=["B2", "B29"],
                                                             deployment={"environment": "indoor"}), {}),
}


def evaluated(name: str) -> Evaluation:
    document, files = DESIGNS[name]()
    parsed = parse_design(document)
    return evaluate(parsed, attach_measurements(parsed, files.__getitem__))


@pytest.fixture(scope="module")
def findings() -> list[tuple[str, Finding]]:
    return [(name, finding) for name in DESIGNS for finding in evaluated(name).findings]


def test_the_spread_of_designs_makes_every_rule_speak_at_every_severity_it_declares(findings):
    seen = {(finding.id, finding.severity) for _, finding in findings}
    declared = {(rule.id, severity) for rule in registry.registered_rules() for severity in rule.severities}
    assert declared - seen == set(), "add a design above that makes these rules speak"


def test_every_finding_says_what_it_means_for_the_product(findings):
    for name, finding in findings:
        impact = finding.product_impact
        assert impact.strip(), (name, finding.id)
        assert impact not in (finding.explanation, finding.action), (name, finding.id)
        assert "{" not in impact and "}" not in impact, (name, finding.id, impact)  # no unfilled template
        assert finding.as_dict()["product_impact"] == impact


# Words that read like a blocker, or like all is well: a note must not alarm, a blocker must not reassure.
ALARM = re.compile(r"can't pass|will refuse|would not connect|can't be sold|can't connect|can't send", re.I)
REASSURE = re.compile(r"nothing to do|no loss|does its job|little effect|does not shrink|a modest loss", re.I)


def test_a_notes_words_dont_read_like_a_blocker_and_a_blockers_dont_reassure(findings):
    for name, finding in findings:
        if finding.severity == "note":
            assert not ALARM.search(finding.product_impact), (name, finding.id, finding.product_impact)
        if finding.severity == "blocker":
            assert not REASSURE.search(finding.product_impact), (name, finding.id, finding.product_impact)


def near(value: float, spec: str, suffix: str = "") -> set[str]:
    """`value` as the impact line shows it, allowing for the evidence having been rounded (to 0.1 at worst)."""
    return {f"{value + offset:{spec}}{suffix}" for offset in (-0.05, 0.0, 0.05)}


def _reflected_pct(evidence) -> float:
    return 100 * 10 ** (-evidence["return_loss_db"] / 10)  # power reflected = |S11|² = 10^(-RL/10)


# The numbers each rule's impact line repeats, computed from the finding's own evidence.
NUMBERS: dict[str, Callable[[dict], list[set[str]]]] = {
    "SEP-001": lambda e: [near(e["distance_mm"], ".0f", " mm")],
    "GND-001": lambda e: [{f"{e['frequency_mhz']:g} MHz"}],
    "GAI-001": lambda e: [near(e["gain_dbi"], ".1f", " dBi"), near(e["limit_dbi"], ".1f", " dBi")],
    "THR-001": lambda e: [{f"{e['required_kbps']:g} kbps"}, {f"{e['peak_kbps']:g} kbps"}],
    "EFF-001": lambda e: [{f"{e['efficiency_pct']:g} %"}],
    "EFF-003": lambda e: [near(e["cost_db"], ".1f", " dB")],
    "MAT-001": lambda e: [near(_reflected_pct(e), ".0f", " %")],
    "ISO-001": lambda e: [near(e["coupled_pct"], ".0f", " %")],
    "ECC-001": lambda e: [{f"{e['ecc']:.2f}"}, near(100 * diversity_share(e["ecc"]), ".0f", " %")],
    "ECC-003": lambda e: [{f"{e['ecc']:.2f}"}, near(100 * diversity_share(e["ecc"]), ".0f", " %")],
    "EFF-002": lambda e: [near(e["efficiency_pct"], ".0f", " %")],
    "EFF-004": lambda e: [near(e["efficiency_pct"], ".0f", " %")],
    "COV-001": lambda e: [near(e["single_branch_cost_db"], ".1f", " dB")],
    "SIZ-001": lambda e: [near(e["best_efficiency_pct"], ".0f", " %")],
    "ENC-002": lambda e: [near(e["outside_by_mm"], ".0f", " mm")],
    "RFX-001": lambda e: [{f"{e['body_distance_mm']:g} mm"}],
    "OTA-001": lambda e: [near(-e["shortfall_db"], ".1f", " dB") if e["shortfall_db"] <= 0
                          else near(e["shortfall_db"], ".1f", " dB")],
    "OTA-002": lambda e: [near(-e["shortfall_db"], ".1f", " dB") if e["shortfall_db"] <= 0
                          else near(e["shortfall_db"], ".1f", " dB")],
    "COX-001": lambda e: [{""} if e["isolation_margin_db"] is None else near(abs(e["isolation_margin_db"]), ".1f", " dB")],
    "COX-002": lambda e: [{""} if e["isolation_margin_db"] is None else near(abs(e["isolation_margin_db"]), ".1f", " dB")],
}


def test_impact_lines_repeat_the_findings_own_numbers(findings):
    checked = set()
    for name, finding in findings:
        if finding.id in NUMBERS:
            for shown in NUMBERS[finding.id](dict(finding.evidence)):
                assert any(text in finding.product_impact for text in shown), (name, finding.id, shown,
                                                                               finding.product_impact)
            checked.add(finding.id)
    assert checked == set(NUMBERS)


def test_a_coverage_warning_gives_the_area_share_and_a_note_where_the_uplink_limits_says_so(findings):
    coverage = [finding for _, finding in findings if finding.id == "COV-001"]
    warning = next(finding for finding in coverage if finding.severity == "warning")
    assert f"{warning.evidence['area_share_pct']:.0f} % of the area" in warning.product_impact
    assert "operators' networks and tests decide" in warning.product_impact  # defers, as the rule does
    for note in (finding for finding in coverage if finding.severity == "note"):
        if note.evidence["limiting_direction"] == "ul":
            assert "does not shrink" in note.product_impact


def test_a_gain_blocker_defers_to_the_regulator(findings):
    [gain] = [finding for _, finding in findings if finding.id == "GAI-001"]
    assert "regulator" in gain.product_impact


# -- the registry refuses rules and findings that don't say it ------------------------------------------------

def test_the_registry_refuses_a_rule_without_a_product_impact():
    with pytest.raises(registry.RuleDefinitionError, match="product_impact"):
        registry.rule(id="ZZZ-901", topic="coverage", severities=("note",), title="t", rationale="r",
                      sources=("common practice",), product_impact="  ")(lambda context: iter(()))
    assert "ZZZ-901" not in {rule.id for rule in registry.registered_rules()}


def test_a_flag_cant_be_made_without_a_product_impact():
    with pytest.raises(TypeError, match="product_impact"):
        Flag(severity="note", title="t", explanation="e", action="a")  # type: ignore[call-arg]


@pytest.mark.parametrize("impact", ["", "   ", "the explanation", "the action"])
def test_the_registry_refuses_a_finding_with_an_empty_or_copied_impact(monkeypatch, impact):
    import dataclasses

    def check(context):
        yield Flag(severity="note", title="t", explanation="the explanation", action="the action",
                   product_impact=impact)

    rule = {rule.id: rule for rule in registry.registered_rules()}["CRT-001"]  # a topic without evidence keys
    replaced = dataclasses.replace(rule, check=check)
    with pytest.raises(registry.RuleOutputError, match="product_impact"):
        list(replaced.run(None))  # type: ignore[arg-type]


def test_every_rule_says_what_it_means_for_a_product_on_the_rules_page():
    for rule in registry.registered_rules():
        assert rule.product_impact.strip(), rule.id
