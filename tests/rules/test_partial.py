"""Partial designs (a draft being filled in): what can be read is judged, the rest waits and is named.

Check values: band edges from 3GPP TS 36.101 Table 5.5-1 (B20 UL 832-862 / DL 791-821, B8 UL 880-915);
TS 36.306 Table 4.1-1 (Cat 1 is specified with two receive antennas); c = 299 792 458 m/s.
"""

import json
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rules.context import CheckContext
from rules.design import (
    INPUTS,
    DesignError,
    PartialDesign,
    inputs_of,
    parse_design,
    parse_design_partial,
    withhold,
)
from rules.evaluate import evaluate, evaluate_partial
from rules.measurements import attach_measurements, read_beside
from rules.registry import registered_rules, rule
from rules.withheld import Unavailable, Withheld
from tests.rules.design_builders import antenna, design
from tests.rules.test_design import CONTRACT_KEYS, JSON_VALUES, nested
from tests.rules.test_severity_policy import FAR_FIELDS, close_pair, dipole_file, two_port

EXAMPLES = sorted((Path(__file__).parents[2] / "rules" / "examples").glob("*.json"))


def partial_checklist(document) -> tuple[PartialDesign, dict]:
    partial = parse_design_partial(document)
    return partial, evaluate_partial(partial).as_dict()


def ids(checklist: dict) -> set[str]:
    return {finding["id"] for finding in checklist["findings"]}


def waiting(checklist: dict) -> dict[str, list[str]]:
    return {item["id"]: item["waiting_for"] for item in checklist["waiting"]}


# -- a complete design is the full parse ----------------------------------------------------------------------

@pytest.mark.parametrize("path", EXAMPLES, ids=lambda path: path.name)
def test_a_complete_example_parses_partially_to_the_full_design_and_checklist(path):
    document = json.loads(path.read_text())
    partial = parse_design_partial(document)
    full = parse_design(document)
    assert partial.complete and partial.design == full
    assert (partial.problems, partial.unanswered, dict(partial.missing)) == ((), (), {})
    measurements = attach_measurements(full, read_beside(path, max_bytes=20_000_000))
    judged = evaluate_partial(partial, measurements)
    assert judged.complete and judged.waiting == ()
    assert judged.findings == evaluate(full, measurements).findings


# -- what a draft being filled in gets ------------------------------------------------------------------------

def blank(**parts) -> dict:
    return {"format": "earshot-design/1", "product": {"name": "Gate opener"}, "modem": {}, "antennas": [], **parts}


def test_a_new_product_is_unanswered_not_wrong_and_the_checks_that_need_nothing_run():
    partial, checklist = partial_checklist(blank())
    assert partial.problems == ()
    assert [problem.path for problem in partial.unanswered] == ["modem.category", "modem.bands"]
    assert {"CRT-002", "CRT-003", "RFX-002"} <= ids(checklist)
    assert waiting(checklist)["CRT-001"] == ["modem.bands"]
    assert waiting(checklist)["CNT-001"] == ["modem.category"]
    assert checklist["bands"] == [] and checklist["judged_at_mhz"] is None and not checklist["complete"]


def test_with_the_category_chosen_the_antenna_count_is_judged_before_the_bands_are():
    _, checklist = partial_checklist(blank(modem={"category": "cat-1"}))
    counts = [finding for finding in checklist["findings"] if finding["id"] == "CNT-001"]
    # TS 36.306: Cat 1 is specified with two receive antennas; none is fitted yet.
    assert counts and counts[0]["evidence"]["required"] == 2 and counts[0]["evidence"]["fitted"] == 0
    assert "SEP-001" in waiting(checklist) and "modem.bands" in waiting(checklist)["SEP-001"]


def two_antennas(**extra) -> dict:
    return design("cat-1", bands=["B3", "B8", "B20"],
                  antennas=[antenna("MAIN", position=(20, 20, 10)), antenna("DIV", "receive", (75, 20, 10))], **extra)


def test_only_the_enclosure_length_is_a_partly_answered_size_and_only_its_checks_wait():
    document = two_antennas(enclosure={"size_mm": [140, None, None], "material": "plastic"})
    partial, checklist = partial_checklist(document)
    assert [problem.path for problem in partial.unanswered] == ["enclosure.size_mm"] and partial.problems == ()
    assert set(partial.missing) == {"enclosure.size_mm"}
    assert "enclosure.size_mm" in waiting(checklist)["SEP-001"] and "ENC-002" in waiting(checklist)
    # the receive count, band coverage and ground plane are still judged
    assert {"CNT-001", "BND-001", "GND-001", "ENC-001"}.isdisjoint(waiting(checklist))
    assert [row["band"] for row in checklist["bands"]] == ["B3", "B8", "B20"]
    assert checklist["judged_at_mhz"] == 791  # B20 DL 791 MHz, the lowest edge (TS 36.101 Table 5.5-1)


def test_a_typo_in_one_position_withholds_positions_and_keeps_everything_else():
    document = two_antennas()
    document["antennas"][1]["position_mm"] = [75, "6O", 10]
    partial, checklist = partial_checklist(document)
    assert [problem.path for problem in partial.problems] == ["antennas[1].position_mm"]
    assert partial.unanswered == ()
    assert partial.missing == {"antennas[].position_mm": ("antennas[1].position_mm",)}
    assert waiting(checklist)["SEP-001"] == ["antennas[].position_mm"]
    assert "ENC-002" in waiting(checklist)
    assert "CNT-001" not in waiting(checklist) and "GND-001" not in waiting(checklist)
    # every antenna's position is withheld, not only the mistyped one's: a pair rule judges them all
    assert all(isinstance(item.position_mm, Withheld) for item in partial.design.antennas)
    shown = partial.shown()  # drawn: MAIN where it is, DIV not placed
    assert [item.position_mm for item in shown.antennas] == [(20, 20, 10), None]


def test_switching_lte_to_nr_withholds_the_bands_but_still_counts_receive_antennas():
    document = two_antennas()
    document["modem"]["category"] = "nr-redcap"
    document["modem"]["rx_ports"] = 2
    partial, checklist = partial_checklist(document)
    assert [problem.path for problem in partial.problems] == [f"modem.bands[{index}]" for index in range(3)]
    assert "B3 is an LTE band; category nr-redcap uses NR bands (n<number>)" in partial.problems[0].message
    assert checklist["bands"] == [] and checklist["design"]["category"] == "nr-redcap"
    assert "CNT-001" not in waiting(checklist) and "CNT-003" not in waiting(checklist)
    assert waiting(checklist)["BND-001"] == ["modem.bands"]


def test_an_antenna_without_a_name_is_unanswered_and_the_antenna_list_waits():
    document = two_antennas()
    document["antennas"][1]["name"] = ""
    partial, checklist = partial_checklist(document)
    assert [problem.path for problem in partial.unanswered] == ["antennas[1].name"]
    assert {"antennas", "measurements"} <= set(partial.missing)
    assert "antennas" in waiting(checklist)["CNT-001"]
    assert "RFX-001" not in waiting(checklist) and "CRT-002" in ids(checklist)
    assert [item.name for item in partial.shown().antennas] == ["MAIN"]  # drawn: the antennas that have names


def test_a_partly_answered_list_is_unanswered_but_a_wrong_item_is_a_problem():
    document = two_antennas()
    document["ground_plane_mm"] = [130, None]
    document["antennas"][0]["size_mm"] = [40, "x", None]
    partial = parse_design_partial(document)
    assert [problem.path for problem in partial.unanswered] == ["ground_plane_mm"]
    assert [problem.path for problem in partial.problems] == ["antennas[0].size_mm"]


def test_a_problem_in_measurements_withholds_them_from_every_rule_that_reads_them():
    document = two_antennas(measurements=[{"file": "pair.s2p", "ports": ["MAIN", "NOBODY"]}])
    partial, checklist = partial_checklist(document)
    assert set(partial.missing) == {"measurements"}
    assert waiting(checklist)["SEP-001"] == ["measurements"] and "ISO-001" in waiting(checklist)
    assert "CNT-001" in ids(checklist) or "CNT-001" not in waiting(checklist)


def test_a_file_that_cannot_be_read_later_withholds_the_measurements_too():
    partial = parse_design_partial(two_antennas(measurements=[{"file": "pair.s2p", "ports": ["MAIN", "DIV"]}]))
    assert partial.complete
    try:
        attach_measurements(partial.design, lambda name: "not touchstone")
    except DesignError as error:
        later = partial.without("measurements", error.problems)
    assert not later.complete and later.missing["measurements"] == ("measurements[0].file",)
    assert "SEP-001" in waiting(evaluate_partial(later).as_dict())


@pytest.mark.parametrize(("path", "inputs"), [
    ("antennas[2].position_mm[1]", ("antennas[].position_mm",)),
    ("antennas[0].name", ("antennas",)),
    ("antennas[3]", ("antennas",)),
    ("antennas[0].peak_gain_dbi.B20", ("antennas[].peak_gain_dbi",)),
    ("modem.bands[4]", ("modem.bands",)),
    ("modem.gain_limits_dbi.B3", ("modem.gain_limits_dbi",)),
    ("measurements[1].ports[0]", ("measurements",)),
    ("deployment.body_distance_mm", ("deployment.body_distance_mm",)),
    ("enclosure", ("enclosure.size_mm", "enclosure.material")),
    ("x-other-tool.note", ()),
])
def test_a_problems_path_names_the_inputs_it_withholds(path, inputs):
    assert inputs_of(path) == inputs


def test_the_root_withholds_everything():
    partial, checklist = partial_checklist([1, 2])
    assert set(partial.missing) == set(INPUTS)
    assert {item["id"] for item in checklist["waiting"]} >= {"CNT-001", "SEP-001"}
    assert ids(checklist) == {"CRT-002", "CRT-003"}  # they need no input at all


# -- rules declare what they read ----------------------------------------------------------------------------

def samples() -> list[tuple[str, object, tuple, tuple]]:
    """Designs that reach every rule's branches, with their measurements: the shipped examples and a few built
    here (per-band gain over a limit, throughput needs, a feed outside the box, no positions, GNSS and WLAN)."""
    found = []
    for path in EXAMPLES:
        parsed = parse_design(json.loads(path.read_text()))
        attached = attach_measurements(parsed, read_beside(path, max_bytes=20_000_000))
        found.append((path.name, parsed, tuple(attached), tuple(attached.far_fields)))
    built = {
        "close pair, limits, throughput": two_antennas(
            modem={"gain_limits_dbi": {"B8": 1.0, "B3": 9}, "rx_ports": 2},
            deployment={"environment": "indoor", "required_dl_kbps": 50_000, "required_ul_kbps": 9_000,
                        "body_distance_mm": 50},
            enclosure={"size_mm": [60, 40, 20], "material": "mixed"}, ground_plane_mm=[50, 30]),
        "efficiencies, external, per-band gain": design("cat-4", bands=["B8", "B20"], antennas=[
            antenna("M", mounting="external", cable_loss_db=1.5, peak_gain_dbi={"B8": 3.0},
                    efficiency_pct={"B8": 60, "B20": 12}, efficiency_source="measured"),
            antenna("R", "receive", (30, 21, 10), (0, 1, 0), efficiency_pct={"B8": 20, "B20": 10},
                    ranges_mhz=[[880, 960]]),
            antenna("G", "gnss", (5, 5, 5)), antenna("W", "wlan", (200, 5, 5))],
            modem={"gain_limits_dbi": {"B8": 2.0, "B20": 1.0}}, ground_plane_mm=[30, 20]),
        "unplaced, unpolarized, no ranges": design("cat-1", antennas=[
            {"name": "A", "role": "main"}, {"name": "B", "role": "receive", "position_mm": [10, 10, 5]},
            antenna("C", "receive", (300, 10, 5))], ground_plane_mm=None, enclosure={"material": "metal"}),
        "redcap module": design("nr-redcap", bands=["n71", "n78"], modem={"rx_ports": 1},
                                antennas=[antenna("A"), antenna("B", "receive", (40, 20, 10))]),
        "lte-m half duplex": design("cat-m1", bands=["B20"], modem={"full_duplex": True},
                                    deployment={"required_dl_kbps": 900}),
        "cat 1 on an operator's approval": design("cat-1", modem={"operator_single_antenna_approval": True}),
    }
    built |= {
        "only receive antennas, no distance to people": design("cat-1", antennas=[
            antenna("R1", "receive"), antenna("R2", "receive", (200, 20, 10))], deployment=None),
        "targets without their inputs": design("cat-1", antennas=[antenna("A", efficiency_pct={"B3": 50})],
                                               deployment={"radiated_targets_dbm": {"trp": {"B8": 20},
                                                                                   "tis": {"B3": -100}}}),
    }
    for name, document in built.items():
        document = {key: value for key, value in document.items() if value is not None}
        found.append((name, parse_design(document), (), ()))
    # Measured pairs (tests/rules/test_severity_policy.py's files): a correlated pair (a = b = 0.46 across B20 and
    # B8's downlink: ECC 0.54, Blanch 2003), a file not passive in B20 (singular value 1.1), far-field patterns of
    # two parallel dipoles (correlated), a file that stops short of B3, and a poor match (a = 0.87, b = 0.05:
    # 1 - a² - b² = 24 % at most radiated, below the 25 % of the severity policy).
    files = {"pair.s2p": two_port([(780, 960, 0.46, 0.46)]), "bad.s2p": two_port([(780, 870, 0.6, 0.5)]),
             "short.s2p": two_port([(700, 1000, 0.4, 0.2)]).split("1005 ")[0].rsplit("\n", 1)[0] + "\n",
             "poor.s2p": two_port([(780, 960, 0.87, 0.05)]),
             "a.csv": dipole_file((1, 0, 0), (20, 20, 10)), "b.csv": dipole_file((1, 0, 0), (75, 20, 10))}
    measured = {
        "correlated pair": [{"file": "pair.s2p", "ports": ["A", "B"]}],
        "not passive": [{"file": "bad.s2p", "ports": ["A", "B"]}],
        "patterns": FAR_FIELDS,
        "short sweep": [{"file": "short.s2p", "ports": ["A", "B"]}],
        "poor match": [{"file": "poor.s2p", "ports": ["A", "B"]}],
    }
    for name, entries in measured.items():
        document = close_pair((1, 0, 0), efficiency={"B3": 60, "B8": 30, "B20": 20}, measurements=entries)
        parsed = parse_design(document)
        attached = attach_measurements(parsed, files.__getitem__)
        found.append((name, parsed, tuple(attached), tuple(attached.far_fields)))
    return found


SAMPLES = samples()


def test_the_samples_reach_every_rule():
    """So that the declarations below are checked where each rule says something."""
    fired = {finding.id for _, parsed, measurements, far_fields in SAMPLES
             for checked in registered_rules() for finding in checked.run(CheckContext(parsed, measurements, far_fields))}
    assert {checked.id for checked in registered_rules()} - fired == set(), "add a sample for the others"


@pytest.mark.parametrize("checked", registered_rules(), ids=lambda checked: checked.id)
def test_each_rule_reads_only_the_inputs_it_declares(checked):
    """With every input it doesn't declare withheld (a value that raises when used), each rule says exactly
    what it says on the whole design: so it can run on a partial design that has only its inputs."""
    others = set(INPUTS) - set(checked.needs)
    for name, parsed, measurements, far_fields in SAMPLES:
        expected = list(checked.run(CheckContext(parsed, measurements, far_fields)))
        withheld_context = CheckContext(withhold(parsed, others), *(
            (measurements, far_fields) if "measurements" in checked.needs
            else (Withheld("measurements"), Withheld("measurements"))))
        try:
            assert list(checked.run(withheld_context)) == expected, name
        except Unavailable as error:
            pytest.fail(f"{checked.id} reads {error.input} on {name} but does not declare it in needs")


def test_a_rule_reading_an_input_it_did_not_declare_waits_instead_of_judging(monkeypatch):
    from rules import registry

    @rule(id="TST-901", topic="certification", severities=("note",), title="reads bands undeclared",
          rationale="a test", sources=("a test",), product_impact="a test", needs=())
    def undeclared(context):
        yield from ()
        assert context.design.modem.bands

    monkeypatch.setitem(registry._RULES, "TST-901", registry._RULES.pop("TST-901"))
    try:
        checklist = evaluate_partial(parse_design_partial(blank())).as_dict()
        assert waiting(checklist)["TST-901"] == ["modem.bands"] and checklist["rule_failures"] == []
    finally:
        registry._RULES.pop("TST-901", None)


def test_a_rule_must_name_inputs_that_exist():
    from rules.registry import RuleDefinitionError

    with pytest.raises(RuleDefinitionError, match="needs"):
        rule(id="TST-902", topic="certification", severities=("note",), title="t", rationale="t",
             sources=("t",), product_impact="t", needs=("modem.colour",))(lambda context: iter(()))


# -- any document -----------------------------------------------------------------------------------------

def assert_partial_holds(document) -> None:
    partial = parse_design_partial(document)
    judged = evaluate_partial(partial)
    assert judged.rule_failures == (), judged.rule_failures
    judged.as_dict()
    partial.shown()
    try:
        full = parse_design(document)
    except DesignError:
        assert not partial.complete
    else:
        assert partial.complete and partial.design == full
        assert judged.findings == evaluate(full).findings


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(JSON_VALUES | nested())
def test_any_json_value_parses_partially_without_raising(document):
    assert_partial_holds(document)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.tuples(st.sampled_from(CONTRACT_KEYS), JSON_VALUES), max_size=5), st.randoms())
def test_any_mutation_of_a_valid_design_parses_partially_and_a_valid_one_equals_the_full_parse(mutations, random):
    document = two_antennas(measurements=None)
    document.pop("measurements")
    targets = [document, document["modem"], document["deployment"], document["antennas"][0],
               document["antennas"][1], document["enclosure"]]
    for key, value in mutations:
        random.choice(targets)[key] = value
    assert_partial_holds(json.loads(json.dumps(document)))
