"""Polarization in words and back: the choices name the directions along the enclosure's edges and at 15°
steps in their planes; anything else is custom, with the nearest words. Angles: cos 30° = 0.866025,
sin 30° = 0.5 (to six places)."""

import math

import pytest

from projectapp.designs.polarization_words import ANGLES_DEG, CUSTOM, describe, vector_for


@pytest.mark.parametrize(("vector", "words", "angle"), [
    ([1, 0, 0], "x", None), ([-2, 0, 0], "x", None), ([0, 1, 0], "y", None), ([0, 0, 5], "z", None),
    ([0.866025, 0.5, 0], "xy", 30), ([0.5, -0.866025, 0], "xy", 120),  # an axis has no sign: -60° is 120°
    ([0.707107, 0, 0.707107], "xz", 45), ([0, 0.258819, 0.965926], "yz", 75),
])
def test_a_vector_a_choice_names_is_shown_as_that_choice(vector, words, angle):
    described = describe(vector)
    assert (described.words, described.angle_deg) == (words, angle)


def test_every_choice_reads_back_to_itself():
    for words in ("x", "y", "z"):
        assert describe(vector_for(words, None)).words == words
    for words in ("xy", "xz", "yz"):
        for angle in ANGLES_DEG:
            back = describe(vector_for(words, angle))
            if angle == 0 or angle == 90:  # on an axis: the axis names it
                assert back.words in ("x", "y", "z") and back.angle_deg is None
            else:
                assert (back.words, back.angle_deg) == (words, angle)


def test_thirty_degrees_in_the_length_width_plane_is_cos_and_sin_of_thirty():
    assert vector_for("xy", 30) == [0.866025, 0.5, 0]
    assert math.isclose(math.degrees(math.atan2(0.5, 0.866025)), 30.0, abs_tol=1e-4)


@pytest.mark.parametrize(("vector", "sentence"), [
    # acos(0.9 / sqrt(0.3² + 0.2² + 0.9²)) = acos(0.9283) = 21.8°
    ([0.3, 0.2, 0.9], "closest to along the height (z, upright), 22° off it"),
    # atan2(0.34, 0.94) = 19.9°
    ([0.94, 0.34, 0], "in the length–width plane, about 20° from the length towards the width"),
])
def test_another_direction_is_custom_with_the_nearest_words(vector, sentence):
    described = describe(vector)
    assert described.words == CUSTOM and described.sentence == sentence


@pytest.mark.parametrize("value", [[0, 0, 0], ["a", 1, 0], [1, 0], "north", [float("inf"), 0, 0]])
def test_what_is_not_a_direction_is_custom_and_left_for_the_parser_to_name(value):
    assert describe(value).words == CUSTOM


def test_not_given_is_no_choice():
    assert describe(None).words == "" and vector_for("", None) is None
