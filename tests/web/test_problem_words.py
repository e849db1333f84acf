"""The parser's problems as a page words them: the question's label, counting from one, the antenna by its
name, the typed value quoted; the parser's path kept for the command line (rules.design)."""

import pytest

from projectapp.designs.problem_words import (
    INPUT_LABELS,
    grouped,
    input_label,
    label_of,
    todo,
    unanswered,
    worded,
)
from rules.design import INPUTS, parse_design, parse_design_partial
from rules.evaluate import evaluate_partial
from tests.rules.design_builders import antenna, design


def two_antennas(**extra) -> dict:
    return design("cat-1", antennas=[antenna("MAIN"), antenna("DIV", "receive", (120, 20, 10))], **extra)


def words_of(document) -> dict[str, str]:
    return {problem.path: worded(problem, document).in_checklist
            for problem in parse_design_partial(document).problems}


@pytest.mark.parametrize(("change", "path", "expected"), [
    (lambda d: d["enclosure"].update(size_mm=[140, "6O", 30]), "enclosure.size_mm",
     'Enclosure outer size, width: "6O" is not a number'),
    (lambda d: d["antennas"][1].update(position_mm=[120, 20, "x"]), "antennas[1].position_mm",
     'DIV · Feed point position, z: "x" is not a number'),
    (lambda d: d["antennas"][0].update(peak_gain_dbi="2.5 dB"), "antennas[0].peak_gain_dbi",
     'MAIN · Peak gain: "2.5 dB" is not in dBi: type the number in dBi'),
    (lambda d: d["antennas"][0].update(efficiency_pct={"B3": 120}), "antennas[0].efficiency_pct.B3",
     "MAIN · Total efficiency per band, B3: 120 % is out of range: expected a number at least 0 and at most 100 %"),
    (lambda d: d["antennas"][1].update(name="MAIN"), "antennas[1].name",
     'Antenna 2 · Name: "MAIN" is already the name of antenna 1'),
    (lambda d: d["antennas"][0].update(ranges_mhz=[[960, 698]]), "antennas[0].ranges_mhz[0]",
     "MAIN · Rated frequency ranges, range 1: 960–698 MHz: the lower end comes first"),
    (lambda d: d["antennas"][0].update(size_mm=[0, 8, 3]), "antennas[0].size_mm",
     "MAIN · Element size, length: 0 mm is not more than 0"),
    (lambda d: d["deployment"].update(body_distance_mm="1,000"), "deployment.body_distance_mm",
     'Closest distance to people: "1,000" is unclear: type 1000 without the comma, or 1.000 with a point if it '
     "is a decimal"),
    (lambda d: d["deployment"].update(required_dl_kbps=-4), "deployment.required_dl_kbps",
     "Sustained downlink need: -4 kbps is out of range: expected a number at least 0 and at most 10\u2009000\u2009000 "
     "kbps"),
    (lambda d: d["enclosure"].update(material="wood"), "enclosure.material",
     'Enclosure material: "wood" is not one of the choices (plastic, metal, mixed)'),
    (lambda d: d["modem"].update(category="nr-redcap"), "modem.bands[0]",
     "Bands: B3 is an LTE band; NR RedCap uses NR bands (n1, n3, …)"),
    (lambda d: d["modem"].update(bands=["B3", "B99"]), "modem.bands[1]",
     'Bands: "B99" is not a band Earshot knows (LTE bands are B1, B3, …; NR bands n1, n78, …)'),
])
def test_a_problem_reads_with_the_label_counting_from_one_and_the_antennas_name(change, path, expected):
    document = two_antennas()
    change(document)
    assert words_of(document)[path] == expected


def test_the_command_line_keeps_the_parsers_path_and_words():
    document = two_antennas()
    document["enclosure"]["size_mm"] = [140, "6O", 30]
    with pytest.raises(Exception) as caught:
        parse_design(document)
    assert str(caught.value.problems[0]) == 'enclosure.size_mm: expected 3 positive numbers in mm; item 1 is "6O"'


def test_a_message_without_its_own_words_is_shown_as_the_parser_wrote_it_after_the_label():
    document = two_antennas(modem={"category": "cat-nb1", "full_duplex": True, "bands": ["B20"]})
    assert words_of(document)["modem.full_duplex"].startswith(
        "The module runs LTE-M in full duplex (FD-FDD): NB-IoT is half-duplex only")


def test_each_problem_points_at_the_input_to_fix():
    document = two_antennas()
    document["antennas"][1]["position_mm"] = [120, "6O", 10]
    document["modem"]["gain_limits_dbi"] = {"B8": "x"}
    anchors = {problem.path: worded(problem, document).anchor for problem in parse_design_partial(document).problems}
    assert anchors == {"antennas[1].position_mm": "q-antennas-1-position-mm-1",
                       "modem.gain_limits_dbi.B8": "q-modem-gain-limits-dbi-B8"}


def test_unanswered_questions_read_as_a_to_do_list():
    document = {"format": "earshot-design/1", "product": {"name": ""}, "modem": {"category": "cat-1"},
                "enclosure": {"size_mm": [140, None, None]}, "antennas": [{"name": "MAIN", "role": "main"},
                                                                         {"role": "receive"}]}
    partial = parse_design_partial(document)
    assert [unanswered(problem, document).in_checklist for problem in partial.unanswered] == [
        "Product name: not answered yet", "Bands: not answered yet", "Antenna 2 · Name: not answered yet",
        "Enclosure outer size: width and height not answered yet"]
    listed = todo(document, evaluate_partial(partial).as_dict())
    waiting = {item.input: item for item in listed["waiting"]}
    assert waiting["modem.bands"].label == "Bands" and waiting["modem.bands"].count > 10
    assert "band coverage" in waiting["modem.bands"].topics


def test_every_input_a_rule_may_wait_for_has_words():
    assert set(INPUT_LABELS) == set(INPUTS)
    assert input_label("antennas[].position_mm") == "Feed point positions"


def test_paths_outside_the_questions_still_get_a_label():
    assert label_of("measurements[0].ports[1]", {"measurements": [{"file": "pair.s2p"}]}) == (
        "Measurement pair.s2p", "Measurements, port 2")
    assert label_of("format", {}) == ("", "Format")


def test_bands_of_the_other_technology_are_named_in_one_line():
    document = two_antennas()
    document["modem"]["category"] = "nr-redcap"
    problems = grouped(list(parse_design_partial(document).problems))
    assert [worded(problem, document).in_checklist for problem in problems] == [
        "Bands: B3, B8, B20 are LTE bands; NR RedCap uses NR bands (n1, n3, …)"]
