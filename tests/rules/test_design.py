"""The design parser: the contract's fields (design-file.md), every problem at once, each with its path."""

import json
import math
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rules import design as design_module
from rules.design import (
    MAX_ANTENNAS,
    MAX_NESTING,
    MAX_VALUES,
    TEXT_LIMITS,
    DesignError,
    parse_design,
    parse_design_text,
    storage_problems,
)
from rules.evaluate import evaluate
from tests.rules.design_builders import antenna, deeply_nested, design

EXAMPLES = sorted((Path(__file__).parents[2] / "rules" / "examples").glob("*.json"))


def problems(document) -> list[str]:
    with pytest.raises(DesignError) as caught:
        parse_design(document)
    return [str(problem) for problem in caught.value.problems]


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda path: path.name)
def test_it_parses_every_shipped_example(path):
    parsed = parse_design_text(path.read_text(), source=path.name)
    assert parsed.product_name
    assert parsed.modem.bands


def test_it_reads_every_field_the_contract_names():
    document = design(
        "cat-1", bands=["B12", "b13"],
        modem={"rx_ports": 2, "gain_limits_dbi": {"B12": 4.5}, "operator_single_antenna_approval": True},
        enclosure={"size_mm": [140, 90, 35], "material": "mixed"},
        ground_plane_mm=[120, 70],
        antennas=[antenna("ANT1", "main", (15, 10, 20), (1, 0, 0), mounting="external",
                          efficiency_pct={"B12": 38}, size_mm=[40, 8, 3], cable_loss_db=0.7),
                  antenna("ANT2", "receive", (100, 10, 20), (0, 1, 0))],
        deployment={"environment": "deep-indoor", "required_dl_kbps": 200, "required_ul_kbps": 50,
                    "body_distance_mm": 300},
        measurements=[{"file": "x.s2p", "ports": ["ANT1", "ANT2"]}],
    )
    parsed = parse_design(document)
    assert parsed.product_revision == "1"
    assert parsed.modem.category.id == "cat-1"
    assert [band.name for band in parsed.modem.bands] == ["B12", "B13"]
    assert parsed.modem.rx_ports == 2 and parsed.modem.gain_limits_dbi == {"B12": 4.5}
    assert parsed.modem.operator_single_antenna_approval is True
    assert parsed.enclosure_size_mm == (140, 90, 35) and parsed.enclosure_material == "mixed"
    assert parsed.ground_plane_mm == (120, 70)
    first = parsed.antennas[0]
    assert (first.mounting, first.position_mm, first.polarization) == ("external", (15, 10, 20), (1, 0, 0))
    assert first.efficiency_pct == {"B12": 38} and first.size_mm == (40, 8, 3) and first.cable_loss_db == 0.7
    assert parsed.deployment.environment == "deep-indoor"
    assert parsed.deployment.required_dl_kbps == 200 and parsed.deployment.body_distance_mm == 300
    assert parsed.measurements[0].ports == ("ANT1", "ANT2")
    assert parsed.lowest_mhz == 699  # B12 UL 699-716 (TS 36.101 Table 5.5-1)


def test_it_applies_the_contracts_defaults():
    document = design(antennas=[{"name": "A", "role": "main"}])
    del document["enclosure"]
    parsed = parse_design(document)
    assert parsed.enclosure_material == "plastic"
    assert parsed.modem.operator_single_antenna_approval is False
    assert parsed.antennas[0].mounting == "internal" and parsed.antennas[0].cable_loss_db == 0.0


def test_it_reports_every_problem_at_once_with_its_path():
    document = design("cat-1", bands=["B3", "B77"], antennas=[antenna("A", position=(20, 20))])
    document["antennas"][0]["position_mm"] = [20, 20]
    document["deployment"]["environment"] = "space"
    found = problems(document)
    assert "antennas[0].position_mm: expected 3 numbers, got 2" in found
    assert any(p.startswith("modem.bands[1]: unknown band \"B77\"; accepted: B1, B2") for p in found)
    assert any(p.startswith("deployment.environment: expected one of outdoor, indoor") for p in found)
    assert len(found) == 3


def test_it_names_the_accepted_categories_for_an_unknown_one():
    [found] = problems(design("cat-17"))
    assert found.startswith('modem.category: unknown category "cat-17"; accepted: cat-nb1, cat-nb2, cat-m1')
    assert "nr-redcap" in found


@pytest.mark.parametrize(("mutate", "expected"), [
    (lambda d: d.update(format="earshot-design/2"), 'format: expected "earshot-design/1", got "earshot-design/2"'),
    (lambda d: d["product"].pop("name"), "product.name: required: expected text"),
    (lambda d: d["modem"].update(bands=[]), "modem.bands: expected a list of at least one band"),
    (lambda d: d["modem"].update(bands=["B3", "B3"]), "modem.bands[1]: band B3 is listed twice"),
    (lambda d: d["modem"].update(bands=["n78"]), "modem.bands[0]: n78 is an NR band; category cat-m1 uses LTE"),
    (lambda d: d["modem"].update(rx_ports=0), "modem.rx_ports: expected a whole number from 1 to 8, got 0"),
    (lambda d: d["modem"].update(gain_limits_dbi={"B99": 2}), 'modem.gain_limits_dbi.B99: unknown band "B99"'),
    (lambda d: d["modem"].update(operator_single_antenna_approval="yes"),
     'modem.operator_single_antenna_approval: expected true or false, got "yes"'),
    (lambda d: d["enclosure"].update(material="wood"), "enclosure.material: expected one of plastic, metal, mixed"),
    (lambda d: d["enclosure"].update(size_mm=[10, -2, 3]), "enclosure.size_mm: expected 3 positive numbers in mm"),
    (lambda d: d.update(ground_plane_mm=[100]), "ground_plane_mm: expected 2 numbers, got 1"),
    (lambda d: d.update(antennas=None), "antennas: expected a list of antennas (it may be empty), got nothing"),
    (lambda d: d["antennas"].append(antenna("A")), "antennas[1].name: expected a unique name; 'A' is also antennas[0]"),
    (lambda d: d["antennas"][0].update(role="tx"), 'antennas[0].role: expected one of main, receive, gnss, wlan; got "tx"'),
    (lambda d: d["antennas"][0].pop("role"), "antennas[0].role: required: expected one of main, receive"),
    (lambda d: d["antennas"][0].update(mounting="glued"), "antennas[0].mounting: expected one of internal, external"),
    (lambda d: d["antennas"][0].update(polarization=[0, 0, 0]), "antennas[0].polarization: expected a direction"),
    (lambda d: d["antennas"][0].update(ranges_mhz=[[960, 700]]),
     "antennas[0].ranges_mhz[0]: expected [low, high] with low below high, got [960, 700]"),
    (lambda d: d["antennas"][0].update(peak_gain_dbi="3 dBi"),
     'antennas[0].peak_gain_dbi: expected a number in dBi, got "3 dBi"'),
    (lambda d: d["antennas"][0].update(efficiency_pct={"B3": 140}),
     "antennas[0].efficiency_pct.B3: expected a number at least 0 and at most 100 %, got 140"),
    (lambda d: d["antennas"][0].update(cable_loss_db=-1), "antennas[0].cable_loss_db: expected a number at least 0"),
    (lambda d: d["antennas"][0].update(size_mm=[1, 2, True]), "antennas[0].size_mm: expected 3 positive numbers"),
    (lambda d: d["deployment"].update(required_dl_kbps=-5), "deployment.required_dl_kbps: expected a number at least 0"),
    (lambda d: d["deployment"].update(body_distance_mm=None) or d["deployment"].update(body_distance_mm="far"),
     'deployment.body_distance_mm: expected a number in mm, got "far"'),
    (lambda d: d.update(measurements=[{"file": "m.s2p", "ports": ["A", "Z"]}]),
     'measurements[0].ports[1]: expected an antenna name (A) or null, got "Z"'),
    (lambda d: d.update(measurements=[{"ports": ["A"]}]), "measurements[0].file: required: expected text"),
])
def test_it_explains_each_bad_field(mutate, expected):
    assert_explained(mutate, expected)


def assert_explained(mutate, expected: str) -> None:
    """A valid design bent by `mutate` is refused with a problem that starts with `expected`."""
    document = design()
    mutate(document)
    found = problems(document)
    assert any(problem.startswith(expected) for problem in found), found


def test_it_rejects_a_document_that_is_not_an_object():
    assert problems([1, 2]) == ["expected an object, got a list of 2"]


def test_it_rejects_nan_and_names_line_and_column_of_broken_json():
    with pytest.raises(DesignError, match="not a number JSON allows"):
        parse_design_text('{"format": NaN}')
    with pytest.raises(DesignError, match=r"design.json: not valid JSON: .* line 2 column"):
        parse_design_text('{"format":\n ,}', source="design.json")


def test_it_keeps_unknown_keys_out_of_the_way_and_lists_them():
    document = design()
    document["notes"] = "free text"
    document["antennas"][0]["colour"] = "black"
    assert parse_design(document).ignored_paths == ("notes", "antennas[0].colour")


# Any character, lone surrogates and control characters included; numbers of any size (a 400-digit integer
# overflows a float), tiny and huge floats; nesting down to 40 levels.
ANY_TEXT = st.text(st.characters(codec=None, exclude_categories=()), max_size=8)
SCALARS = (st.none() | st.booleans() | st.integers() | st.integers(-10**6, 10**6)
           | st.sampled_from([10**400, -10**400, 1e-308, 1e308, -1e308, 5e-324])
           | st.floats(allow_nan=False, allow_infinity=False) | ANY_TEXT)
JSON_VALUES = st.recursive(
    SCALARS,
    lambda children: st.lists(children, max_size=4) | st.dictionaries(ANY_TEXT, children, max_size=4),
    max_leaves=20,
)


@st.composite
def nested(draw):
    """A value wrapped in up to 40 levels of lists and objects."""
    value = draw(JSON_VALUES)
    for _ in range(draw(st.integers(0, 40))):
        value = [value] if draw(st.booleans()) else {draw(ANY_TEXT): value}
    return value


CONTRACT_KEYS = ["format", "product", "modem", "enclosure", "ground_plane_mm", "antennas", "deployment",
                 "measurements", "category", "bands", "name", "role", "position_mm", "polarization", "ranges_mhz",
                 "rx_ports", "material", "size_mm", "environment", "ports", "file"]


def assert_parses_or_explains(document) -> None:
    try:
        parse_design(document)
    except DesignError as error:
        assert error.problems, "a DesignError carries at least one problem"
        for problem in error.problems:
            assert problem.message
            # Only the document itself has the empty path: when it is not an object at all.
            assert problem.path or not isinstance(document, dict), problem


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(JSON_VALUES | nested())
def test_any_json_value_either_parses_or_is_rejected_with_path_named_problems(document):
    assert_parses_or_explains(document)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.dictionaries(ANY_TEXT, JSON_VALUES | nested(), max_size=3))
def test_any_extra_keys_on_a_valid_design_parse_or_are_named_and_what_parses_can_be_stored(extra):
    document = {**design(), **extra}
    try:
        parsed = parse_design(document)
    except DesignError as error:
        assert all(problem.path and problem.message for problem in error.problems), error.problems
    else:
        assert storage_problems(document) == []
        assert not evaluate(parsed).rule_failures


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.text(st.sampled_from('[]{}",:0123456789.e-\\u0Dd8\x00 tnrufals'), max_size=60) | st.binary(max_size=60))
def test_any_text_either_parses_or_is_rejected_with_a_problem(text):
    try:
        parse_design_text(text)
    except DesignError as error:
        assert error.problems and all(problem.message for problem in error.problems)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(st.tuples(st.sampled_from(CONTRACT_KEYS), JSON_VALUES), max_size=5), st.randoms())
def test_any_mutation_of_a_valid_design_either_parses_or_names_the_field(mutations, random):
    document = design("cat-1", antennas=[antenna("A"), antenna("B", "receive", (150, 20, 10))])
    targets = [document, document["modem"], document["deployment"], document["antennas"][0]]
    for key, value in mutations:
        random.choice(targets)[key] = value
    try:
        parsed = parse_design(json.loads(json.dumps(document)))
    except DesignError as error:
        assert all(problem.path for problem in error.problems), error.problems
    else:  # whatever the parser accepts, every rule can judge
        assert not evaluate(parsed).rule_failures


def test_positions_may_be_negative_but_must_be_finite():
    document = design(antennas=[antenna("A", position=(-5, 0, 2))])
    assert parse_design(document).antennas[0].position_mm == (-5, 0, 2)
    document["antennas"][0]["position_mm"] = [math.inf, 0, 0]
    assert problems(document) == ["antennas[0].position_mm: expected 3 numbers in mm; item 0 is Infinity"]


# -- additions for rule set 2 (design-file.md) ---------------------------------------------------------------

def test_it_reads_the_rule_set_2_fields():
    document = design("cat-1", antennas=[
        antenna("A", peak_gain_dbi={"B3": 3.5, "b8": 1.0}, efficiency_pct={"B3": 40}, efficiency_source="measured"),
        antenna("G", "gnss", ranges_mhz=[[1559, 1610]]), antenna("W", "wlan")],
        measurements=[{"kind": "far-field", "file": "a.csv", "antenna": "A", "absolute": True,
                       "environment": {"model": "taga", "mean_elevation_deg": 20, "spread_deg": 15, "xpr_db": 6}},
                      {"file": "pair.s2p", "ports": ["A", "G"], "kind": "s-parameters"}])
    parsed = parse_design(document)
    main, gnss, wlan = parsed.antennas
    assert main.peak_gain_dbi is None and dict(main.peak_gain_dbi_per_band) == {"B3": 3.5, "B8": 1.0}
    assert main.peak_gain_in("B3") == 3.5 and main.peak_gain_in("B20") is None
    assert main.efficiency_source == "measured" and gnss.efficiency_source == "datasheet"
    assert (main.is_cellular, gnss.is_cellular, wlan.is_cellular) == (True, False, False)
    pattern, touchstone = parsed.measurements
    assert (pattern.kind, pattern.antenna, pattern.absolute) == ("far-field", "A", True)
    assert (pattern.environment.model, pattern.environment.mean_elevation_deg, pattern.environment.spread_deg,
            pattern.environment.xpr_db) == ("taga", 20.0, 15.0, 6.0)
    assert touchstone.kind == "s-parameters" and touchstone.ports == ("A", "G")
    assert parsed.ignored_paths == ()


def test_a_far_field_entry_defaults_to_the_isotropic_environment():
    parsed = parse_design(design(measurements=[{"kind": "far-field", "file": "a.csv", "antenna": "A"}]))
    assert parsed.measurements[0].environment.model == "isotropic" and parsed.measurements[0].absolute is False


@pytest.mark.parametrize(("entry", "expected"), [
    ({"kind": "far-field", "file": "a.csv"}, "measurements[0].antenna: expected the name of the antenna"),
    ({"kind": "far-field", "file": "a.csv", "antenna": "Z"}, "measurements[0].antenna: expected the name"),
    ({"kind": "far-field", "file": "a.csv", "antenna": "A", "ports": ["A"]}, "measurements[0].ports: a far-field"),
    ({"kind": "near-field", "file": "a.csv", "ports": ["A"]},
     "measurements[0].kind: expected one of s-parameters, far-field"),
    ({"kind": "far-field", "file": "a.csv", "antenna": "A", "environment": {"model": "urban"}},
     "measurements[0].environment.model: expected one of isotropic, taga"),
    ({"kind": "far-field", "file": "a.csv", "antenna": "A", "environment": {"model": "taga", "spread_deg": 10,
                                                                           "xpr_db": 6}},
     "measurements[0].environment.mean_elevation_deg: required for the taga model"),
    ({"kind": "far-field", "file": "a.csv", "antenna": "A",
      "environment": {"model": "taga", "mean_elevation_deg": 100, "spread_deg": 10, "xpr_db": 6}},
     "measurements[0].environment.mean_elevation_deg: expected a number at least -90 and at most 90"),
    ({"kind": "far-field", "file": "a.csv", "antenna": "A", "absolute": "yes"},
     "measurements[0].absolute: expected true or false"),
])
def test_it_explains_each_bad_far_field_entry(entry, expected):
    found = problems(design(measurements=[entry]))
    assert any(problem.startswith(expected) for problem in found), found


def test_it_refuses_two_patterns_for_one_antenna():
    entries = [{"kind": "far-field", "file": f"{name}.csv", "antenna": "A"} for name in ("a", "b")]
    assert problems(design(measurements=entries)) == [
        "measurements[1].antenna: antenna A already has a far-field pattern (measurements[0]); give one file per "
        "antenna"]


@pytest.mark.parametrize(("field", "value", "expected"), [
    ("peak_gain_dbi", {"B3": "high"}, "antennas[0].peak_gain_dbi.B3: expected a number in dBi"),
    ("peak_gain_dbi", {"B99x": 2}, "antennas[0].peak_gain_dbi.B99x: unknown band"),
    ("peak_gain_dbi", [2, 3], "antennas[0].peak_gain_dbi: expected a number in dBi"),
    ("efficiency_source", "guessed", "antennas[0].efficiency_source: expected one of datasheet, measured"),
])
def test_it_explains_bad_rule_set_2_antenna_fields(field, value, expected):
    document = design()
    document["antennas"][0][field] = value
    found = problems(document)
    assert any(problem.startswith(expected) for problem in found), found


# -- rule set 2: modem fields (design-file.md, "Additions for rule set 2") --------------------------------

def problems_of(document) -> list[str]:
    with pytest.raises(DesignError) as raised:
        parse_design(document)
    return [str(problem) for problem in raised.value.problems]


def test_it_reads_power_class_sensitivity_duplex_and_satellite_access():
    modem = parse_design(design("cat-m1", bands=["B8", "B255"], modem={
        "power_class": 5, "conducted_sensitivity_dbm": {"B8": -107.5}, "full_duplex": True, "ntn": True,
    })).modem
    assert (modem.power_class, modem.max_output_dbm) == (5, 20.0)  # TS 36.101 power class 5: 20 dBm
    assert modem.conducted_sensitivity_dbm == {"B8": -107.5}
    assert modem.full_duplex and modem.ntn


def test_power_class_defaults_to_class_3_of_23_dbm():
    modem = parse_design(design("cat-m1")).modem
    assert (modem.power_class, modem.max_output_dbm) == (3, 23.0)  # TS 36.101 Table 6.2.2-1
    assert not modem.full_duplex and not modem.ntn


@pytest.mark.parametrize("value", [4, 3.5, "3", True, 0])
def test_an_unknown_power_class_names_the_accepted_ones(value):
    assert any(problem.startswith("modem.power_class: expected a UE power class (1, 2, 3, 5, 6)")
               for problem in problems_of(design("cat-m1", modem={"power_class": value})))


def test_a_sensitivity_outside_a_plausible_range_is_named_with_its_band():
    problems = problems_of(design("cat-m1", modem={"conducted_sensitivity_dbm": {"B8": -20}}))
    assert any(problem.startswith("modem.conducted_sensitivity_dbm.B8: expected a number at least -150")
               for problem in problems)


def test_it_reads_radiated_targets_per_quantity_and_band():
    # TRP and TIS targets are the team's copy of its operator's requirements (design-file.md, rule set 2).
    deployment = parse_design(design(deployment={"radiated_targets_dbm": {
        "trp": {"B3": 20, "b8": 18.5}, "tis": {"B20": -98}}})).deployment
    assert deployment.trp_targets_dbm == {"B3": 20.0, "B8": 18.5}
    assert deployment.tis_targets_dbm == {"B20": -98.0}
    assert parse_design(design()).deployment.trp_targets_dbm == {}


def test_one_quantity_of_radiated_targets_may_be_left_out_and_unknown_ones_are_ignored():
    parsed = parse_design(design(deployment={"radiated_targets_dbm": {"tis": {"B3": -100}, "eirp": {"B3": 20}}}))
    assert parsed.deployment.trp_targets_dbm == {} and parsed.deployment.tis_targets_dbm == {"B3": -100.0}
    assert parsed.ignored_paths == ("deployment.radiated_targets_dbm.eirp",)


@pytest.mark.parametrize(("targets", "expected"), [
    ([20], "deployment.radiated_targets_dbm: expected an object, got a list of 1"),
    ({"trp": 20}, "deployment.radiated_targets_dbm.trp: expected an object of band to number, got a number"),
    ({"trp": {"B99": 20}}, 'deployment.radiated_targets_dbm.trp.B99: unknown band "B99"'),
    ({"trp": {"B3": "20"}}, 'deployment.radiated_targets_dbm.trp.B3: expected a number in dBm, got "20"'),
    ({"trp": {"B3": 41}}, "deployment.radiated_targets_dbm.trp.B3: expected a number at least -30 and at most 40 dBm"),
    ({"tis": {"B3": -49}}, "deployment.radiated_targets_dbm.tis.B3: expected a number at least -150 and at most -50"),
    ({"tis": {"B3": -151}}, "deployment.radiated_targets_dbm.tis.B3: expected a number at least -150"),
    ({"tis": {"B3": True}}, "deployment.radiated_targets_dbm.tis.B3: expected a number in dBm, got true"),
])
def test_bad_radiated_targets_are_named_by_path(targets, expected):
    assert_explained(lambda d: d["deployment"].update(radiated_targets_dbm=targets), expected)


def test_radiated_targets_at_the_edges_of_their_limits_parse():
    deployment = parse_design(design(deployment={"radiated_targets_dbm": {
        "trp": {"B3": -30, "B8": 40}, "tis": {"B3": -150, "B8": -50}}})).deployment
    assert deployment.trp_targets_dbm == {"B3": -30.0, "B8": 40.0}
    assert deployment.tis_targets_dbm == {"B3": -150.0, "B8": -50.0}


def test_nb_iot_cannot_be_full_duplex():
    assert any(problem.startswith("modem.full_duplex: NB-IoT is half-duplex only")
               for problem in problems_of(design("cat-nb1", modem={"full_duplex": True})))


def test_a_design_of_only_supplemental_downlink_bands_is_refused_naming_the_field():
    problems = problems_of(design("cat-6", bands=["B29", "B32"]))
    assert any(problem.startswith("modem.bands: B29, B32: supplemental-downlink (SDL) bands have no uplink")
               for problem in problems)


def test_a_supplemental_downlink_band_beside_one_with_an_uplink_is_accepted():
    modem = parse_design(design("cat-6", bands=["B2", "B29"])).modem
    assert [band.name for band in modem.bands] == ["B2", "B29"]


def test_a_satellite_band_needs_a_module_that_declares_satellite_access():
    problems = problems_of(design("cat-nb1", bands=["B8", "B256"]))
    assert any(problem.startswith("modem.bands[1]: B256 is a satellite (NTN) band; set modem.ntn")
               for problem in problems)


# -- limits: what the parser accepts, so that every rule's arithmetic stays finite and every page can draw it --
@pytest.mark.parametrize(("mutate", "expected"), [
    # 1e-308 mm squared underflows to 0 (a division by zero in the size limit); 1e308 squared overflows.
    (lambda d: d.update(ground_plane_mm=[1e-308, 1e-308]),
     "ground_plane_mm: expected 2 numbers from 0.01 to 100000 mm; item 0 is 1e-308"),
    (lambda d: d.update(ground_plane_mm=[1e308, 1e308]),
     "ground_plane_mm: expected 2 numbers from 0.01 to 100000 mm; item 0 is 1e+308"),
    (lambda d: d["enclosure"].update(size_mm=[150, 0.001, 30]),
     "enclosure.size_mm: expected 3 numbers from 0.01 to 100000 mm; item 1 is 0.001"),
    (lambda d: d["antennas"][0].update(position_mm=[20, -2e5, 10]),
     "antennas[0].position_mm: expected 3 numbers from -100000 to 100000 mm; item 1 is -200000"),
    (lambda d: d["antennas"][0].update(polarization=[1e-308, 0, 0]), "antennas[0].polarization: expected a direction"),
    (lambda d: d["antennas"][0].update(polarization=[1e300, 1e300, 0]),
     "antennas[0].polarization: expected 3 numbers from -1e+06 to 1e+06"),
    (lambda d: d["antennas"][0].update(ranges_mhz=[[1e-308, 900]]),
     "antennas[0].ranges_mhz[0]: expected 2 numbers from 1 to 100000 MHz; item 0 is 1e-308"),
    (lambda d: d["deployment"].update(required_dl_kbps=1e308),
     "deployment.required_dl_kbps: expected a number at least 0 and at most 1e+07 kbps, got 1e+308"),
    (lambda d: d["deployment"].update(body_distance_mm=10**400),  # overflows a float: OverflowError before
     "deployment.body_distance_mm: expected a number in mm, got 1000000000000000000000000000000000000..."),
    (lambda d: d["modem"].update(rx_ports=10**400), "modem.rx_ports: expected a whole number from 1 to 8, got 1000"),
    (lambda d: d["antennas"][0].update(cable_loss_db=10**400), "antennas[0].cable_loss_db: expected a number in dB"),
])
def test_it_refuses_physically_impossible_values_by_path(mutate, expected):
    assert_explained(mutate, expected)


def test_values_at_the_edges_of_the_limits_are_judged_by_every_rule():
    document = design("cat-1", antennas=[
        antenna("A", position=(-100_000, 100_000, 0), polarization=(0.001, 0, 0), size_mm=[0.01, 0.01, 0.01]),
        antenna("B", "receive", position=(100_000, -100_000, 100_000), polarization=(1e6, -1e6, 1e6),
                ranges_mhz=[[1, 100_000]], size_mm=[100_000, 100_000, 100_000]),
    ], ground_plane_mm=[0.01, 0.01], enclosure={"size_mm": [100_000, 0.01, 100_000]},
        deployment={"required_dl_kbps": 10_000_000, "required_ul_kbps": 0, "body_distance_mm": 100_000})
    assert not evaluate(parse_design(document)).rule_failures
    document["ground_plane_mm"] = [100_000, 100_000]
    assert not evaluate(parse_design(document)).rule_failures
    # GNSS and WLAN antennas at the far corners or on top of the main one, radiated targets and sensitivities at
    # their edges, a band whose harmonic reaches GNSS and one beside WLAN: the coexistence and radiated rules too.
    document["modem"] = {"category": "cat-4", "bands": ["B13", "B41"], "power_class": 1,
                         "conducted_sensitivity_dbm": {"B13": -150, "B41": -50}}
    document["antennas"][0]["efficiency_pct"] = {"B13": 0, "B41": 100}
    document["antennas"][0]["cable_loss_db"] = 40
    document["antennas"] += [
        antenna("G", "gnss", position=(-100_000, 100_000, 0), ranges_mhz=[[1, 100_000]]),
        antenna("W", "wlan", position=(100_000, -100_000, 100_000), polarization=(1e6, -1e6, 1e6),
                ranges_mhz=[[1, 100_000]]),
        antenna("W2", "wlan", position=(-100_000, -100_000, -100_000), polarization=(0.001, 0, 0)),
    ]
    document["deployment"]["radiated_targets_dbm"] = {"trp": {"B13": -30, "B41": 40}, "tis": {"B13": -150, "B41": -50}}
    evaluation = evaluate(parse_design(document))
    assert not evaluation.rule_failures
    assert {finding.topic for finding in evaluation.findings} >= {"coexistence", "ota"}
    json.dumps(evaluation.as_dict(), allow_nan=False)  # every number finite


def test_every_limit_states_why():
    for table in (design_module.UNIT_LIMITS, design_module.PATH_LIMITS):
        for key, limit in table.items():
            assert limit.low < limit.high and len(limit.why) > 30, key
    assert TEXT_LIMITS["product.name"] == 120  # the product name column (designs.Product.name)
    assert TEXT_LIMITS["measurements[].file"] == 120  # the measurement file name column


@pytest.mark.parametrize(("mutate", "expected"), [
    (lambda d: d["product"].update(name="Probe\x00"), "product.name: control character U+0000 not allowed"),
    (lambda d: d["antennas"][0].update(name="A\ud800"), "antennas[0].name: lone surrogate U+D800 not allowed"),
    (lambda d: d["antennas"][0].update(name="A\nB"), "antennas[0].name: control character U+000A not allowed"),
    (lambda d: d["antennas"][0].update(name="A\x1b[32mOK"), "antennas[0].name: control character U+001B not allowed"),
    (lambda d: d["antennas"][0].update(name="A\u202eB"), "antennas[0].name: bidirectional control U+202E not allowed"),
    (lambda d: d["antennas"][0].update(name="A\ufffd"), "antennas[0].name: replacement character U+FFFD not allowed"),
    (lambda d: d["product"].update(revision="B\x7f"), "product.revision: control character U+007F not allowed"),
    (lambda d: d.update(notes="line\x00"), "notes: control character U+0000 not allowed"),
    (lambda d: d.update(notes=["fine", {"deep": "\udfff"}]), "notes[1].deep: lone surrogate U+DFFF not allowed"),
    (lambda d: d.update({"no\x00tes": 1}), "no\\u0000tes: control character U+0000 not allowed"),
    (lambda d: d["modem"].update(gain_limits_dbi={"B3\x00": 2}), "modem.gain_limits_dbi.B3\\u0000: control character"),
    (lambda d: d["product"].update(name="P" * 121), "product.name: expected at most 120 characters, got 121"),
    (lambda d: d["antennas"][0].update(name="A" * (TEXT_LIMITS["antennas[].name"] + 1)),
     f"antennas[0].name: expected at most {TEXT_LIMITS['antennas[].name']} characters"),
    (lambda d: d.update(measurements=[{"file": "m" * 117 + ".s2p", "ports": ["A"]}]),
     "measurements[0].file: expected at most 120 characters, got 121"),
])
def test_it_refuses_characters_and_lengths_that_cannot_be_stored_or_shown_by_path(mutate, expected):
    assert_explained(mutate, expected)


def test_free_text_in_extra_keys_may_hold_tabs_and_line_breaks():
    document = design(notes="first line\n\tsecond line\r\n")
    assert parse_design(document).ignored_paths == ("notes",)


def test_escaped_nul_and_surrogates_in_json_text_are_refused_by_path():
    text = json.dumps(design(product={"name": "Probe"}))
    for escape, expected in (("\\u0000", "product.name: control character U+0000 not allowed"),
                             ("\\ud800", "product.name: lone surrogate U+D800 not allowed")):
        with pytest.raises(DesignError) as caught:
            parse_design_text(text.replace('"Probe"', f'"Pro{escape}be"'))
        assert any(str(problem).startswith(expected) for problem in caught.value.problems), caught.value.problems


def test_an_unknown_key_nested_too_deep_is_refused_with_a_clear_message():
    # 900 levels decode fine, then copying the document (deepcopy) runs out of recursion.
    document = design(extra=deeply_nested(900))
    [found] = problems(document)
    assert found.startswith("extra.x.x.x.x.x.x.x.x.x.x.x.x.x.x.x")
    assert f"nested more than {MAX_NESTING} levels deep" in found
    assert len(found) < 200
    assert storage_problems(document) == [design_module.Problem(found.split(": ")[0], found.split(": ", 1)[1])]
    parse_design(design(extra=deeply_nested(MAX_NESTING - 1)))  # the limit itself is fine
    with pytest.raises(DesignError, match="not valid JSON"):
        parse_design_text("[" * 100_000 + "]" * 100_000)


def test_a_document_with_too_many_values_is_refused():
    document = design(extra=list(range(MAX_VALUES)))
    [found] = problems(document)
    assert found.startswith("extra: ") and f"more than {MAX_VALUES} values" in found


def test_it_caps_the_antennas_a_design_may_have():
    names = [f"ANT{index}" for index in range(MAX_ANTENNAS)]
    antennas = [antenna(name, "main" if index == 0 else "receive", position=(10 * index, 0, 0))
                for index, name in enumerate(names)]
    assert len(parse_design(design("cat-1", antennas=antennas)).antennas) == MAX_ANTENNAS
    antennas.append(antenna("ONE-TOO-MANY", "receive"))
    assert f"antennas: expected at most {MAX_ANTENNAS} antennas, got {MAX_ANTENNAS + 1}" in problems(
        design("cat-1", antennas=antennas))


def test_storage_problems_name_what_no_database_can_hold():
    assert storage_problems(design()) == []
    found = [str(problem) for problem in storage_problems(design(product={"name": "a\x00b"}, notes="\ud800",
                                                                   ratio=math.nan))]
    assert [problem.split(" (")[0] for problem in found] == [
        "product.name: control character U+0000 not allowed", "notes: lone surrogate U+D800 not allowed",
        "ratio: expected a finite number, got NaN"]
    assert storage_problems(design(notes="\x01 is stored as typed")) == []  # the parser explains it instead
