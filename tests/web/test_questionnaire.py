"""The questionnaire's reading of a posted section: polarization from words, units and decimal commas in the
fields, a category change's band offer, a duplicated antenna placed apart.

Lengths: a quarter wave at 791 MHz (B20 DL, 3GPP TS 36.101 Table 5.5-1) is 94.8 mm (c = 299 792 458 m/s),
rounded up to 95 mm for the copy; at 703 MHz (B28 UL) 106.6 mm, 107 mm."""

import pytest
from django.http import QueryDict

from projectapp.designs import questionnaire
from tests.rules.design_builders import antenna, design


def posted(**fields) -> QueryDict:
    data = QueryDict(mutable=True)
    for key, value in fields.items():
        data[key.replace("__", ".")] = value
    return data


def antennas_post(document: dict, **changes) -> QueryDict:
    """The antenna section as the page posts it: every row's inputs, with `changes` over them."""
    data = QueryDict(mutable=True)
    for index, row in enumerate(document["antennas"]):
        prefix = f"antennas[{index}]."
        data[prefix + "name"] = row["name"]
        data[prefix + "role"] = row["role"]
        for axis, value in enumerate(row.get("position_mm") or []):
            data[f"{prefix}position_mm[{axis}]"] = str(value)
    for key, value in changes.items():
        data[key] = value
    return data


def test_polarization_words_become_the_vector_in_the_file():
    document = design("cat-1", antennas=[antenna("MAIN", polarization=(1, 0, 0)), antenna("DIV", "receive")])
    after = questionnaire.apply_answers(document, questionnaire.ANTENNAS, antennas_post(
        document, **{"antennas[0].polarization.words": "y", "antennas[1].polarization.words": "xz",
                     "antennas[1].polarization.angle_deg": "30"}))
    assert after["antennas"][0]["polarization"] == [0, 1, 0]
    assert after["antennas"][1]["polarization"] == [0.866025, 0, 0.5]  # cos 30°, sin 30° in the x-z plane


def test_an_untouched_choice_keeps_the_stored_vector_as_it_was():
    document = design("cat-1", antennas=[antenna("MAIN", polarization=(-2, 0, 0))])
    after = questionnaire.apply_answers(document, questionnaire.ANTENNAS,
                                        antennas_post(document, **{"antennas[0].polarization.words": "x"}))
    assert after["antennas"][0]["polarization"] == [-2, 0, 0]


def test_another_direction_reads_the_numbers_and_not_given_clears_it():
    document = design("cat-1", antennas=[antenna("MAIN")])
    custom = antennas_post(document, **{"antennas[0].polarization.words": "custom", "antennas[0].polarization[0]": "0,3",
                                        "antennas[0].polarization[1]": "0.2", "antennas[0].polarization[2]": "0.9"})
    assert questionnaire.apply_answers(document, questionnaire.ANTENNAS, custom)["antennas"][0]["polarization"] == [
        0.3, 0.2, 0.9]
    cleared = antennas_post(document, **{"antennas[0].polarization.words": ""})
    assert "polarization" not in questionnaire.apply_answers(document, questionnaire.ANTENNAS, cleared)["antennas"][0]
    hostile = antennas_post(document, **{"antennas[0].polarization.words": "sideways",
                                         "antennas[0].polarization.angle_deg": "1e9"})
    assert questionnaire.apply_answers(document, questionnaire.ANTENNAS, hostile)["antennas"][0]["polarization"] == [
        1, 0, 0]  # not a choice: nothing changes


def test_fields_read_units_and_decimal_commas():
    document = design("cat-1")
    after = questionnaire.apply_answers(document, questionnaire.DEPLOYMENT, posted(
        deployment__body_distance_mm="0,5 m", deployment__required_dl_kbps="1,5 Mbps"))
    assert after["deployment"]["body_distance_mm"] == 500 and after["deployment"]["required_dl_kbps"] == 1500
    ranges = antennas_post(document, **{"antennas[0].ranges_mhz": "0.698–0.96 GHz, 1710 to 2690"})
    assert questionnaire.apply_answers(document, questionnaire.ANTENNAS, ranges)["antennas"][0]["ranges_mhz"] == [
        [698, 960], [1710, 2690]]


def test_after_a_switch_to_nr_the_lte_bands_are_offered_for_dropping_and_dropped_on_request():
    document = design("nr-redcap", bands=["B3", "n78", "B20", "X9"])
    assert questionnaire.bands_the_category_cannot_use(document) == ["B3", "B20", "X9"]
    fields = questionnaire.section_fields(questionnaire.PRODUCT, document, [])
    assert next(item for item in fields if item.question.key == "modem.bands").unusable == ["B3", "B20", "X9"]
    data = posted(modem__category="nr-redcap", action="drop-bands")
    data.setlist("modem.bands", ["B3", "n78", "B20", "X9"])
    data["product.name"] = "Test widget"
    after = questionnaire.apply_answers(document, questionnaire.PRODUCT, data)
    assert after["modem"]["bands"] == ["n78"]


@pytest.mark.parametrize(("position", "enclosure", "bands", "copy"), [
    ([15, 10, 12], [120, 80, 30], ["B3", "B8", "B20"], [110, 10, 12]),  # +x: 15 + 95 inside 120
    ([100, 10, 12], [120, 80, 30], ["B3", "B8", "B20"], [5, 10, 12]),  # no room along +x or +y: -x
    ([15, 10, 12], [60, 40, 30], ["B3", "B8", "B20"], [60, 10, 12]),  # nowhere a quarter wave: to the wall
    ([20, 30, 10], None, ["B28"], [127, 30, 10]),  # no enclosure: +x by 107 mm
])
def test_a_duplicate_lands_a_quarter_wave_away_inside_the_enclosure(position, enclosure, bands, copy):
    document = design("cat-1", bands=bands, antennas=[antenna("MAIN", position=position)])
    if enclosure is None:
        del document["enclosure"]
    else:
        document["enclosure"]["size_mm"] = enclosure
    after = questionnaire.antennas_action(document, "duplicate", 0)
    twin = after["antennas"][1]
    assert twin["position_mm"] == copy and twin["name"] == "MAIN-copy1" and twin["role"] == "receive"
    assert after["antennas"][0]["position_mm"] == position


def test_a_duplicate_of_an_unplaced_antenna_stays_unplaced():
    document = design("cat-1", antennas=[{"name": "A", "role": "receive", "position_mm": [1, "x", 2]}])
    assert questionnaire.antennas_action(document, "duplicate", 0)["antennas"][1]["position_mm"] == [1, "x", 2]
