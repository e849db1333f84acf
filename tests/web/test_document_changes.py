"""The compact diff of two design documents that the audit trail and conflict messages show."""

from projectapp.designs.document_changes import document_changes

MAIN = {"name": "MAIN", "role": "main", "position_mm": [15, 10, 12]}
DIV = {"name": "DIV", "role": "receive", "position_mm": [60, 10, 12]}
GNSS = {"name": "GNSS", "role": "gnss"}


def test_equal_documents_have_no_changes():
    assert document_changes({"antennas": [MAIN, DIV]}, {"antennas": [MAIN, DIV]}) == {}


def test_objects_are_compared_key_by_key_and_a_list_of_numbers_is_one_value():
    before = {"deployment": {"body_distance_mm": 150}, "enclosure": {"size_mm": [120, 80, 30]}}
    after = {"deployment": {"body_distance_mm": 400, "environment": "indoor"}, "enclosure": {"size_mm": [120, 80, 31]}}
    assert document_changes(before, after) == {
        "deployment.body_distance_mm": [150, 400],
        "deployment.environment": [None, "indoor"],
        "enclosure.size_mm": [[120, 80, 30], [120, 80, 31]],
    }


def test_removing_the_first_antenna_reads_as_one_antenna_removed():
    assert document_changes({"antennas": [MAIN, DIV, GNSS]}, {"antennas": [DIV, GNSS]}) == {
        "antennas[0]": [MAIN, None]}


def test_an_added_antenna_and_an_edit_of_another_are_each_their_own_path():
    moved = {**DIV, "position_mm": [95, 10, 12]}
    assert document_changes({"antennas": [MAIN, DIV]}, {"antennas": [MAIN, moved, GNSS]}) == {
        "antennas[1].position_mm": [[60, 10, 12], [95, 10, 12]],
        "antennas[2]": [None, GNSS],
    }


def test_a_renamed_antenna_in_place_shows_its_changed_fields():
    renamed = {**MAIN, "name": "ANT-A"}
    assert document_changes({"antennas": [MAIN, DIV]}, {"antennas": [renamed, DIV]}) == {
        "antennas[0].name": ["MAIN", "ANT-A"]}


def test_a_number_that_becomes_text_is_a_change():
    assert document_changes({"deployment": {"body_distance_mm": 150}},
                            {"deployment": {"body_distance_mm": "far"}}) == {
        "deployment.body_distance_mm": [150, "far"]}
