"""Touchstone reader checked against scikit-rf, its shipped data and the specification's examples.

Sources named below:
- "Touchstone v1.1": IBIS Open Forum, Touchstone File Format Specification, Version 1.1 (2002).
- "Touchstone v2.0": IBIS Open Forum, Touchstone File Format Specification, Version 2.0 (2009).
- scikit-rf: skrf.Network, whose reader is an independent implementation of the same specification.
"""

import cmath
import importlib.util
import math
import pickle
from pathlib import Path
from unittest import mock

import numpy as np
import pytest
import skrf
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rules import touchstone
from rules.sparams import DB_CAP, return_loss_db, vswr
from rules.touchstone import Network, TouchstoneError, parse_touchstone, read_touchstone

SKRF_DATA = Path(skrf.__file__).parent / "data"
SHIPPED_FILES = sorted(SKRF_DATA.glob("*.s?p"))


def polar(magnitude: float, angle_deg: float) -> complex:
    return cmath.rect(magnitude, math.radians(angle_deg))


def skrf_network(path: Path) -> skrf.Network:
    return skrf.Network(str(path))


def assert_same_as_skrf(ours: Network, path: Path) -> skrf.Network:
    theirs = skrf_network(path)
    np.testing.assert_allclose(ours.frequencies_hz, theirs.f, rtol=1e-12)
    np.testing.assert_allclose(ours.s, theirs.s, rtol=1e-9, atol=1e-15)
    # scikit-rf keeps one (possibly complex) reference per port and frequency.
    z0 = np.asarray(theirs.z0)
    np.testing.assert_allclose(np.broadcast_to(ours.reference_ohm, z0.shape), z0.real, rtol=1e-12)
    assert np.all(z0.imag == 0.0)
    return theirs


def write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="ascii")
    return path


# ------------------------------------------------------------------------- shipped reference data


def test_scikit_rf_ships_the_files_these_tests_rely_on():
    names = {path.name for path in SHIPPED_FILES}
    assert {"ring slot.s2p", "tee.s3p", "ro,1.s1p", "ntwk1.s2p", "short.s2p"} <= names


@pytest.mark.parametrize("path", SHIPPED_FILES, ids=lambda path: path.name)
def test_shipped_file_matches_scikit_rf(path: Path):
    ours = read_touchstone(path)
    theirs = assert_same_as_skrf(ours, path)
    assert ours.source == path.name
    assert ours.version == "1.1"
    assert ours.port_count == theirs.nports
    np.testing.assert_allclose(ours.frequencies_mhz, theirs.f / 1e6, rtol=1e-12)

    # skrf divides by zero for |S| = 0 and |S| = 1; its warnings are not what is under test.
    with np.errstate(divide="ignore", invalid="ignore"):
        s_db = np.diagonal(theirs.s_db, axis1=1, axis2=2)
        s_vswr = np.diagonal(theirs.s_vswr, axis1=1, axis2=2)
    # Return loss is -|S_ii| in dB; ours stops at DB_CAP where skrf reaches +inf (S_ii = 0).
    np.testing.assert_allclose(return_loss_db(ours), np.minimum(-s_db, DB_CAP), rtol=1e-9, atol=1e-9)
    magnitude = np.abs(np.diagonal(ours.s, axis1=1, axis2=2))
    below_one = magnitude < 1.0
    np.testing.assert_allclose(vswr(ours)[below_one], s_vswr[below_one], rtol=1e-9)
    # At and past |S_ii| = 1 (a short, or a calibration ripple above 1) the VSWR is unbounded.
    assert np.all(np.isinf(vswr(ours)[~below_one]))


def test_shipped_file_comments_are_kept_in_order():
    ours = read_touchstone(SKRF_DATA / "tee.s3p")
    # First lines of tee.s3p as shipped with scikit-rf.
    assert ours.comments[:2] == (
        "Created with skrf (http://scikit-rf.org).",
        "freq ReS11 ImS11 ReS12 ImS12 ReS13 ImS13",
    )


def test_names_with_spaces_and_commas_read_through_parse_too():
    path = SKRF_DATA / "ro,1.s1p"
    ours = parse_touchstone(path.read_text(), source=path.name)
    assert_same_as_skrf(ours, path)


# ---------------------------------------------------------------------------- version 1.1 examples

# Touchstone v1.1, 1-port example with one frequency point (text from memory).
ONE_PORT = """!1-port S-parameter file, single frequency point
# MHz S MA R 50
!freq magS11 angS11
2.000 0.894 -12.136
"""

# Touchstone v1.1, 2-port RI example with three frequencies; the same lines are in scikit-rf's
# test data (skrf/io/tests/ts/ex_13.s2p).
TWO_PORT_RI = """!2-port S-parameter file, three frequency points
# GHz S RI R 50.0
!freq ReS11 ImS11 ReS21 ImS21 ReS12 ImS12 ReS22 ImS22
1.0000 0.3926 -0.1211 -0.0003 -0.0021 -0.0003 -0.0021 0.3926 -0.1211
2.0000 0.3517 -0.3054 -0.0096 -0.0298 -0.0096 -0.0298 0.3517 -0.3054
10.000 0.3419 0.3336 -0.0134 0.0379 -0.0134 0.0379 0.3419 0.3336
"""

# Touchstone v1.1, 4-port example (three frequencies, one matrix row per line, "data points need
# not be aligned"), as also kept in scikit-rf's test data (skrf/io/tests/ts/ex_14.s4p).
FOUR_PORT = """! 4-port S-parameter data, taken at three frequency points
! note that data points need not be aligned
# GHz S MA R 50
5.00000 0.60 161.24 0.40 -42.20 0.42 -66.58 0.53 -79.34 !row 1
 0.40 -42.20 0.60 161.20 0.53 -79.34 0.42 -66.58 !row 2
 0.42 -66.58 0.53 -79.34 0.60 161.24 0.40 -42.20 !row 3
 0.53 -79.34 0.42 -66.58 0.40 -42.20 0.60 161.24 !row 4
6.00000 0.57 150.37 0.40 -44.34 0.41 -81.24 0.57 -95.77 !row 1
 0.40 -44.34 0.57 150.37 0.57 -95.77 0.41 -81.24 !row 2
 0.41 -81.24 0.57 -95.77 0.57 150.37 0.40 -44.34 !row 3
 0.57 -95.77 0.41 -81.24 0.40 -44.34 0.57 150.37 !row 4
7.00000 0.50 136.69 0.45 -46.41 0.37 -99.09 0.62 -114.19 !row 1
0.45 -46.41 0.50 136.69 0.62 -114.19 0.37 -99.09 !row 2
0.37 -99.09 0.62 -114.19 0.50 136.69 0.45 -46.41 !row 3
0.62 -114.19 0.37 -99.09 0.45 -46.41 0.50 136.69 !row 4
"""

# Touchstone v1.1, 2-port example with noise parameters (the block after the drop from 22 GHz to
# 4 GHz); the same lines are in scikit-rf's test data (skrf/io/tests/ts/ex_18.s2p).
TWO_PORT_WITH_NOISE = """!2-port network, S-parameter and noise data
!Default MA format, GHz frequencies, 50 ohm reference, S-parameters
#
! NETWORK PARAMETERS
2 .95 -26 3.57 157 .04 76 .66 -14
22 .60 -144 1.30 40 .14 40 .56 -85
! NOISE PARAMETERS
4 .7 .64 69 .38
18 2.7 .46 -33 .40
"""


def test_one_port_example(tmp_path):
    path = write(tmp_path, "example1.s1p", ONE_PORT)
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    assert ours.frequencies_hz.tolist() == [2.0e6]
    assert ours.s[0, 0, 0] == pytest.approx(polar(0.894, -12.136), rel=1e-12)
    assert ours.reference_ohm.tolist() == [50.0]
    assert ours.comments == ("1-port S-parameter file, single frequency point", "freq magS11 angS11")


def test_two_port_ri_example_reads_s21_from_the_second_pair(tmp_path):
    path = write(tmp_path, "example4.s2p", TWO_PORT_RI)
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    # v1 2-port order is N11 N21 N12 N22 (Touchstone v1.1).
    assert ours.s[0, 1, 0] == pytest.approx(-0.0003 - 0.0021j)
    assert ours.s[2, 1, 1] == pytest.approx(0.3419 + 0.3336j)
    assert ours.frequencies_hz.tolist() == [1e9, 2e9, 10e9]


def _as_format(rows: list[tuple[float, list[complex]]], data_format: str) -> str:
    """The same numbers written as MA (degrees) or DB (20 log10 |x|, degrees), per Touchstone v1.1."""
    lines = [f"# GHz S {data_format} R 50"]
    for frequency, values in rows:
        pairs = []
        for value in values:
            magnitude, angle = abs(value), math.degrees(cmath.phase(value))
            first = 20.0 * math.log10(magnitude) if data_format == "DB" else magnitude
            pairs.append(f"{first:.15g} {angle:.15g}")
        lines.append(f"{frequency:g} " + " ".join(pairs))
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("data_format", ["MA", "DB"])
def test_two_port_formats_agree_with_ri(tmp_path, data_format):
    ri = parse_touchstone(TWO_PORT_RI, source="example4.s2p")
    rows = [(f / 1e9, [ri.s[k, 0, 0], ri.s[k, 1, 0], ri.s[k, 0, 1], ri.s[k, 1, 1]])
            for k, f in enumerate(ri.frequencies_hz)]
    path = write(tmp_path, f"example4_{data_format}.s2p", _as_format(rows, data_format))
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    np.testing.assert_allclose(ours.s, ri.s, rtol=1e-12)


def test_db_format_half_amplitude():
    # 20 log10(0.5) = -6.0206 dB (definition of the decibel for field quantities, Touchstone v1.1 "DB").
    ours = parse_touchstone("# GHz S DB R 50\n1 -6.020599913279624 90\n", source="half.s1p")
    assert ours.s[0, 0, 0] == pytest.approx(0.5j, abs=1e-15)


def test_four_port_example_with_continuation_lines(tmp_path):
    path = write(tmp_path, "example.s4p", FOUR_PORT)
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    assert ours.port_count == 4
    assert ours.frequencies_hz.tolist() == [5e9, 6e9, 7e9]
    # Rows are matrix rows for 3+ ports: row 2 starts with S21 and its second pair is S22, which
    # the example gives as 161.20 degrees against 161.24 for S11 (Touchstone v1.1).
    assert ours.s[0, 1, 0] == pytest.approx(polar(0.40, -42.20))
    assert ours.s[0, 1, 1] == pytest.approx(polar(0.60, 161.20))
    assert ours.s[0, 0, 0] == pytest.approx(polar(0.60, 161.24))
    assert ours.s[2, 0, 3] == pytest.approx(polar(0.62, -114.19))
    assert ours.comments.count("row 1") == 3


THREE_PORT = """! S_ij = 0.i + 0.0j + j(0.00i + 0.000j), so a transposed or shifted matrix shows
# GHz S RI R 50
1.0 0.11 0.011 0.12 0.012 0.13 0.013
    0.21 0.021 0.22 0.022 0.23 0.023
    0.31 0.031 0.32 0.032 0.33 0.033
2.0 0.11 0.011 0.12 0.012 0.13 0.013 0.21 0.021
    0.22 0.022 0.23 0.023 0.31 0.031 0.32 0.032
    0.33 0.033
"""


def test_three_port_rows_and_uneven_continuation_lines(tmp_path):
    path = write(tmp_path, "rows.s3p", THREE_PORT)
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    expected = np.array([[0.1 * i + 0.01 * j for j in range(1, 4)] for i in range(1, 4)])
    np.testing.assert_allclose(ours.s.real, np.stack([expected, expected]), rtol=1e-12)
    np.testing.assert_allclose(ours.s.imag, np.stack([expected, expected]) / 10.0, rtol=1e-12)


def test_eight_ports_with_the_four_pair_line_limit():
    # 8 ports: each matrix row takes two lines of at most four pairs (Touchstone v1.1: "no more than
    # four pairs of network data are allowed per data line").
    ports = 8
    values = np.arange(1, ports * ports + 1).reshape(ports, ports) / 100.0
    lines = ["# Hz S RI R 50"]
    for frequency in (1, 2):
        for row in range(ports):
            first = f"{frequency}" if row == 0 else " "
            for half in (values[row, :4], values[row, 4:]):
                lines.append(first + " " + " ".join(f"{v:g} 0" for v in half))
                first = " "
    ours = parse_touchstone("\n".join(lines), source="big.s8p")
    np.testing.assert_allclose(ours.s[1].real, values)


@pytest.mark.parametrize(
    ("unit", "multiplier"),
    [("Hz", 1.0), ("kHz", 1e3), ("MHz", 1e6), ("GHz", 1e9),
     ("hz", 1.0), ("KHZ", 1e3), ("mhz", 1e6), ("gHz", 1e9)],
)
def test_frequency_units_are_case_insensitive(tmp_path, unit, multiplier):
    path = write(tmp_path, "units.s1p", f"# {unit} S RI R 50\n1.5 0.1 0.2\n3 0.3 0.4\n")
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    np.testing.assert_allclose(ours.frequencies_hz, [1.5 * multiplier, 3.0 * multiplier], rtol=1e-15)


def test_option_line_fields_in_any_order_and_any_case():
    # Touchstone v1.1: the option line's fields may come in any order (wording from memory).
    ours = parse_touchstone("# r 75 ri mhz s\n100 0.1 0.2\n", source="order.s1p")
    assert ours.frequencies_hz.tolist() == [100e6]
    assert ours.s[0, 0, 0] == 0.1 + 0.2j
    assert ours.reference_ohm.tolist() == [75.0]


def test_missing_option_line_means_ghz_s_ma_50_ohm(tmp_path):
    # Touchstone v1.1: the defaults are "# GHz S MA R 50".
    path = write(tmp_path, "defaults.s1p", "! no option line\n1 0.5 45\n2 0.25 -90\n")
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    assert ours.frequencies_hz.tolist() == [1e9, 2e9]
    assert ours.s[0, 0, 0] == pytest.approx(polar(0.5, 45.0))
    assert ours.reference_ohm.tolist() == [50.0]


def test_r_75_sets_every_port_reference(tmp_path):
    path = write(tmp_path, "r75.s2p", "# MHz S RI R 75\n900 0.1 0 0.5 0 0.5 0 0.2 0\n")
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    assert ours.reference_ohm.tolist() == [75.0, 75.0]


def test_per_port_r_on_the_option_line(tmp_path):
    # Touchstone v2.1 has an example of one R value per port "using Version 1.1 syntax" (from memory);
    # scikit-rf reads it the same way.
    text = "# GHz S MA R 0.01 0.01 50.0 50.0\n" + FOUR_PORT.split("# GHz S MA R 50\n")[1]
    path = write(tmp_path, "perport.s4p", text)
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    assert ours.reference_ohm.tolist() == [0.01, 0.01, 50.0, 50.0]


def test_two_port_noise_block_is_left_out(tmp_path):
    path = write(tmp_path, "noise.s2p", TWO_PORT_WITH_NOISE)
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    assert ours.frequencies_hz.tolist() == [2e9, 22e9]
    assert ours.s[0, 1, 0] == pytest.approx(polar(3.57, 157.0))
    assert ours.s[1, 0, 1] == pytest.approx(polar(0.14, 40.0))


def test_v1_normalized_z_one_port(tmp_path):
    # Touchstone v1.1, 1-port Z example normalized to R = 75 (text from memory); S11 = (z - 1)/(z + 1).
    text = ("!1-port Z-parameter file, multiple frequency points\n# MHz Z MA R 75\n!freq magZ11 angZ11\n"
            "100 0.99 -4\n200 0.80 -22\n300 0.707 -45\n400 0.40 -62\n500 0.01 -89\n")
    path = write(tmp_path, "example2.s1p", text)
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    z = polar(0.99, -4.0)
    assert ours.s[0, 0, 0] == pytest.approx((z - 1) / (z + 1), rel=1e-12)
    assert ours.reference_ohm.tolist() == [75.0]


def test_v1_normalized_y_two_port():
    # 1.x Y data is normalized to R (Touchstone v1.1): y = Y R, so Y = y / R. (scikit-rf 1.x multiplies
    # normalized Y by R as it does Z, so its reader is not the reference here; its y2s conversion is.)
    text = "# GHz Y RI R 50\n1 1.2 0.1 0.3 0.2 0.35 0.15 0.9 -0.2\n2 1 0 0 0 0 0 1 0\n"
    ours = parse_touchstone(text, source="y.s2p")
    y = np.array([[1.2 + 0.1j, 0.35 + 0.15j], [0.3 + 0.2j, 0.9 - 0.2j]])
    np.testing.assert_allclose(ours.s[0], skrf.network.y2s((y / 50.0)[None], z0=50.0)[0], rtol=1e-12)
    # S = (I - y)(I + y)^-1 for normalized admittances (the Y-to-S relation with Z0 = R).
    np.testing.assert_allclose(ours.s[0], (np.eye(2) - y) @ np.linalg.inv(np.eye(2) + y), rtol=1e-12)
    # y = 1 on each port is a matched load and nothing between the ports: S = 0.
    np.testing.assert_allclose(ours.s[1], np.zeros((2, 2)), atol=1e-15)


# ---------------------------------------------------------------------------- version 2.0 examples

# Touchstone v2.0 2-port example with the S-parameter lines of the v1.1 noise example.
V2_TWO_PORT = """! 2-port, written in the 2.0 syntax
[Version] 2.0
# GHz S MA R 50
[Number of Ports] 2
[Two-Port Data Order] {order}
[Number of Frequencies] 2
[Network Data]
2 .95 -26 3.57 157 .04 76 .66 -14
22 .60 -144 1.30 40 .14 40 .56 -85
[End]
"""


def test_two_port_data_order_swaps_s21_and_s12(tmp_path):
    networks = {}
    for order in ("12_21", "21_12"):
        path = write(tmp_path, f"order{order}.ts", V2_TWO_PORT.format(order=order))
        networks[order] = read_touchstone(path)
        assert_same_as_skrf(networks[order], path)
        assert networks[order].version == "2.0"
    # [Two-Port Data Order] 21_12 is the 1.x order N11 N21 N12 N22; 12_21 is N11 N12 N21 N22.
    assert networks["21_12"].s[0, 1, 0] == pytest.approx(polar(3.57, 157.0))
    assert networks["12_21"].s[0, 0, 1] == pytest.approx(polar(3.57, 157.0))
    np.testing.assert_array_equal(networks["12_21"].s, networks["21_12"].s.transpose(0, 2, 1))


def test_v2_two_port_with_noise_data(tmp_path):
    # Touchstone v2.0 example with [Noise Data]; noise lines are frequency + 4 values.
    text = V2_TWO_PORT.format(order="21_12").replace(
        "[Network Data]", "[Number of Noise Frequencies] 2\n[Network Data]").replace(
        "[End]", "[Noise Data]\n4 .7 .64 69 .38\n18 2.7 .46 -33 .40\n[End]")
    path = write(tmp_path, "noise.ts", text)
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    assert ours.frequencies_hz.tolist() == [2e9, 22e9]


# Touchstone v2.0, 4-port examples: the full matrix with per-port [Reference] (also skrf's
# skrf/io/tests/ts/ex_5.ts) and the same data as a lower triangle with [Reference] split over two
# lines (skrf/io/tests/ts/ex_6.ts).
V2_FOUR_PORT_FULL = """! 4-port S-parameter data
[Version] 2.0
# GHz S MA R 50
[Number of Ports] 4
[Number of Frequencies] 1
[Reference] 50 75 0.01 0.01
[Matrix Format] Full
[Network Data]
5.00000 0.60 161.24 0.40 -42.20 0.42 -66.58 0.53 -79.34 !row 1
 0.40 -42.20 0.60 161.20 0.53 -79.34 0.42 -66.58 !row 2
 0.42 -66.58 0.53 -79.34 0.60 161.24 0.40 -42.20 !row 3
 0.53 -79.34 0.42 -66.58 0.40 -42.20 0.60 161.24 !row 4
[End]
"""

V2_FOUR_PORT_LOWER = """! 4-port S-parameter data, lower triangle
[Version] 2.0
# GHz S MA R 50
[Number of Ports] 4
[Number of Frequencies] 1
[Reference] 50 75
0.01 0.01
[Matrix Format] Lower
[Network Data]
5.00000 0.60 161.24 !row 1
 0.40 -42.20 0.60 161.20 !row 2
 0.42 -66.58 0.53 -79.34 0.60 161.24 !row 3
 0.53 -79.34 0.42 -66.58 0.40 -42.20 0.60 161.24 !row 4
[End]
"""

V2_FOUR_PORT_UPPER = """! 4-port S-parameter data, upper triangle
[Version] 2.0
# GHz S MA R 50
[Number of Ports] 4
[Number of Frequencies] 1
[Reference]
50 75 0.01 0.01
[Matrix Format] Upper
[Network Data]
5.00000 0.60 161.24 0.40 -42.20 0.42 -66.58 0.53 -79.34 !row 1
 0.60 161.20 0.53 -79.34 0.42 -66.58 !row 2
 0.60 161.24 0.40 -42.20 !row 3
 0.60 161.24 !row 4
[End]
"""


@pytest.mark.parametrize("text", [V2_FOUR_PORT_FULL, V2_FOUR_PORT_LOWER, V2_FOUR_PORT_UPPER],
                         ids=["full", "lower", "upper"])
def test_matrix_formats_fill_the_symmetric_matrix(tmp_path, text):
    path = write(tmp_path, "four.ts", text)
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    full = parse_touchstone(V2_FOUR_PORT_FULL, source="full.ts")
    np.testing.assert_allclose(ours.s, full.s, rtol=1e-15)
    assert ours.reference_ohm.tolist() == [50.0, 75.0, 0.01, 0.01]
    assert ours.s[0, 3, 1] == pytest.approx(polar(0.42, -66.58))


def test_v2_z_parameters_are_not_normalized(tmp_path):
    # Touchstone v2.0 1-port Z example (ohms, not normalized), as in skrf/io/tests/ts/ex_7.ts.
    text = ("!1-port Z-parameter file, multiple frequency points\n[Version] 2.0\n# MHz Z MA\n"
            "[Number of Ports] 1\n[Number of Frequencies] 5\n[Reference] 20.0\n[Network Data]\n"
            "!freq magZ11 angZ11\n100 74.25 -4\n200 60 -22\n300 53.025 -45\n400 30 -62\n500 0.75 -89\n")
    path = write(tmp_path, "z.ts", text)
    ours = read_touchstone(path)
    assert_same_as_skrf(ours, path)
    z = polar(74.25, -4.0)
    # Reflection coefficient of a load Z on a reference R: (Z - R)/(Z + R).
    assert ours.s[0, 0, 0] == pytest.approx((z - 20.0) / (z + 20.0), rel=1e-12)


def test_v2_y_parameters_with_a_reference_per_port(tmp_path):
    text = ("[Version] 2.0\n# GHz Y RI R 50\n[Number of Ports] 2\n[Two-Port Data Order] 12_21\n"
            "[Number of Frequencies] 2\n[Reference] 50 75\n[Network Data]\n"
            "1 0.02 0.001 -0.005 0.002 -0.004 0.001 0.015 -0.003\n"
            "2 0.021 0.002 -0.006 0.003 -0.005 0.002 0.016 -0.002\n[End]\n")
    path = write(tmp_path, "y.ts", text)
    ours = read_touchstone(path)
    # scikit-rf converts with power waves (Kurokawa), as we do for a real reference per port.
    assert_same_as_skrf(ours, path)


def test_v2_1_and_information_block():
    text = ("[Version] 2.1\n# GHz S RI R 50\n[Number of Ports] 1\n[Begin Information]\n"
            "[Manufacturer] nobody\n[End Information]\n[Number of Frequencies] 1\n[Network Data]\n"
            "1 0.5 0\n[End]\nanything after [End] is not read\n")
    ours = parse_touchstone(text, source="info.ts")
    assert ours.version == "2.1"
    assert ours.s[0, 0, 0] == 0.5


def test_crlf_line_endings_and_latin1_comment(tmp_path):
    path = tmp_path / "crlf.s1p"
    text = "! measured at 23 \xb0C\r\n# MHz S RI R 50\r\n800 0.1 0.2\r\n900 0.3 x\r\n"
    path.write_bytes(text.encode("latin-1"))
    with pytest.raises(TouchstoneError) as caught:
        read_touchstone(path)
    assert str(caught.value) == "crlf.s1p:4: expected a number, got 'x'"
    path.write_bytes("! measured at 23 \xb0C\r\n# MHz S RI R 50\r\n800 0.1 0.2\r\n".encode("latin-1"))
    assert read_touchstone(path).comments == ("measured at 23 \xb0C",)


def test_port_count_argument_for_a_name_without_extension():
    ours = parse_touchstone(TWO_PORT_RI, source="upload 7", port_count=2)
    assert ours.port_count == 2
    with pytest.raises(TouchstoneError, match=r"^upload 7: cannot tell the number of ports"):
        parse_touchstone(TWO_PORT_RI, source="upload 7")


def test_read_touchstone_takes_the_port_count_from_the_path(tmp_path):
    path = write(tmp_path, "bench.s2p", TWO_PORT_RI)
    ours = read_touchstone(path, source="customer upload")
    assert ours.source == "customer upload"
    assert ours.port_count == 2


def test_network_arrays_are_read_only():
    ours = parse_touchstone(TWO_PORT_RI, source="ro.s2p")
    with pytest.raises(ValueError):
        ours.s[0, 0, 0] = 0
    assert ours.frequencies_hz.dtype == np.float64
    assert ours.s.dtype == np.complex128
    assert ours.reference_ohm.dtype == np.float64


# ----------------------------------------------------------------------------------------- errors

BAD_FILES = [
    ("ring.s2p",
     "# GHz S RI R 50\n1 0.1 0 0.2 0 0.3 0 0.4 0\n2 0.1 0 0.2 0 0.3 0\n3 0.1 0 0.2 0 0.3 0 0.4 0\n",
     "ring.s2p:3: expected 9 numbers for one frequency, got 7"),
    ("long.s2p", "# GHz S RI R 50\n1 0.1 0 0.2 0 0.3 0 0.4 0 0.5 0\n2 0.1 0 0.2 0 0.3 0 0.4 0\n",
     "long.s2p:2: expected 9 numbers for one frequency, got 11"),
    ("x.s2p", "! a\n! b\n# GHz S XY R 50\n1 0.1 0 0.2 0 0.3 0 0.4 0\n",
     "x.s2p:3: unknown format 'XY', expected RI, MA or DB"),
    ("u.s1p", "# THz S RI R 50\n1 0.1 0\n",
     "u.s1p:1: unknown frequency unit 'THz', expected Hz, kHz, MHz or GHz"),
    ("p.s1p", "# GHz Q RI R 50\n1 0.1 0\n", "p.s1p:1: unknown parameter 'Q', expected S, Y, Z, H or G"),
    ("h.s2p", "# kHz H MA R 1\n2 .95 -26 3.57 157 .04 76 .66 -14\n",
     "h.s2p:1: H-parameters are not supported: only S, Y and Z parameters can be turned into S-parameters"),
    ("r.s1p", "# GHz S RI R\n1 0.1 0\n", "r.s1p:1: expected the reference resistance in ohms after R"),
    ("order.s1p", "# GHz S RI R 50\n1 0.1 0\n2 0.1 0\n1.5 0.1 0\n",
     "order.s1p:4: frequency '1.5' is not higher than the previous one ('2' at line 3); "
     "frequencies must increase"),
    ("same.s1p", "# GHz S RI R 50\n1 0.1 0\n1 0.1 0\n",
     "same.s1p:3: frequency '1' is not higher than the previous one ('1' at line 2); "
     "frequencies must increase"),
    ("neg.s1p", "# GHz S RI R 50\n-1 0.1 0\n", "neg.s1p:2: frequency '-1' is negative"),
    ("end.s4p", FOUR_PORT.rsplit("\n", 2)[0] + "\n",
     "end.s4p:12: expected 33 numbers for one frequency, got 25 before the data ends"),
    ("word.s1p", "# GHz S RI R 50\n1 0.1 0\n2 0.1 zero\n", "word.s1p:3: expected a number, got 'zero'"),
    ("nan.s1p", "# GHz S RI R 50\n1 0.1 nan\n", "nan.s1p:2: values must be finite numbers, got 'nan'"),
    ("inf.s1p", "# GHz S RI R 50\n1 inf 0\n", "inf.s1p:2: values must be finite numbers, got 'inf'"),
    ("huge.s1p", "# GHz S RI R 50\n1 1e999 0\n", "huge.s1p:2: number '1e999' is too large"),
    ("empty.s1p", "! nothing but a comment\n# GHz S RI R 50\n", "empty.s1p: no network data"),
    ("nodata.ts", "[Version] 2.0\n# GHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 1\n1 0.1 0\n",
     "nodata.ts:5: expected [Network Data] before the network data"),
    ("nokeyword.ts", "[Version] 2.0\n# GHz S RI R 50\n[Number of Ports] 1\n",
     "nokeyword.ts: missing [Network Data]"),
    ("count.ts",
     "[Version] 2.0\n# GHz S RI R 50\n[Number of Ports] 1\n[Number of Frequencies] 3\n[Network Data]\n"
     "1 0.1 0\n2 0.1 0\n[End]\n",
     "count.ts:4: [Number of Frequencies] is 3, but the network data has 2"),
    ("twoport.ts", "[Version] 2.0\n# GHz S RI R 50\n[Number of Ports] 2\n[Network Data]\n1 0 0 0 0 0 0 0 0\n",
     "twoport.ts:4: [Two-Port Data Order] (12_21 or 21_12) is required for 2-port data"),
    ("ref.ts",
     "[Version] 2.0\n# GHz S RI R 50\n[Number of Ports] 2\n[Reference] 50\n[Two-Port Data Order] 12_21\n",
     "ref.ts:4: [Reference] needs 2 values, one per port, got 1"),
    ("early.ts", "[Number of Ports] 2\n[Version] 2.0\n",
     "early.ts:1: [Number of Ports] is a Touchstone 2.0 keyword: the file must start with [Version] 2.0"),
    ("version.ts", "[Version] 3.0\n", "version.ts:1: unsupported [Version] '3.0', expected 2.0 or 2.1"),
    ("mismatch.s2p", "[Version] 2.0\n[Number of Ports] 1\n[Network Data]\n1 0 0\n",
     "mismatch.s2p:2: [Number of Ports] says 1, but the file name says 2"),
    ("noise.s2p", TWO_PORT_WITH_NOISE.replace("18 2.7 .46 -33 .40", "18 2.7 .46 -33"),
     "noise.s2p:9: expected 5 numbers on a noise-parameter line (the noise data starts at line 8, "
     "where the frequency went down), got 4"),
    ("noisecount.ts",
     V2_TWO_PORT.format(order="21_12")
     .replace("[Network Data]", "[Number of Noise Frequencies] 3\n[Network Data]")
     .replace("[End]", "[Noise Data]\n4 .7 .64 69 .38\n18 2.7 .46 -33 .40\n[End]"),
     "noisecount.ts:7: [Number of Noise Frequencies] is 3, but the noise data has 2"),
    ("late.s1p", "1 0.1 0\n# GHz S RI R 50\n", "late.s1p:2: the option line must come before the data"),
    ("bracket.ts", "[Version 2.0\n", "bracket.ts:1: keyword '[Version 2.0' is missing its closing ']'"),
    # z = -1 makes z + 1 = 0: no S exists for that load.
    ("singular.s1p", "# GHz Z RI R 50\n1 1 0\n2 -1 0\n",
     "singular.s1p:3: Z-parameters at this frequency have no S-parameter equivalent (singular matrix)"),
    ("db.s1p", "# GHz S DB R 50\n1 -3 0\n2 7000 0\n",
     "db.s1p:3: values at this frequency are too large to convert"),
    ("big.ts",
     "[Version] 2.0\n# GHz Z RI\n[Number of Ports] 1\n[Reference] 0.01\n[Network Data]\n1 1e307 0\n",
     "big.ts:6: values at this frequency are too large to convert"),
    ("perport.s2p", "# GHz Z RI R 50 75\n1 1 0 0 0 0 0 1 0\n",
     "perport.s2p:1: normalized Y or Z data needs one reference resistance for all ports"),
    ("rcount.s2p", "# GHz S RI R 50 75 100\n1 1 0 0 0 0 0 1 0\n",
     "rcount.s2p:1: R gives 3 reference resistances; expected one, or one per port (2)"),
    ("twice.s1p", "# GHz MHz S RI\n1 0 0\n", "twice.s1p:1: the option line gives the frequency unit twice"),
    ("mixed.ts", "[Version] 2.0\n[Number of Ports] 2\n[Mixed-Mode Order] D1,2 C1,2\n",
     "mixed.ts:3: mixed-mode data is not supported: export single-ended S-parameters"),
]


@pytest.mark.parametrize(("source", "text", "expected"), BAD_FILES, ids=[case[0] for case in BAD_FILES])
def test_malformed_file_names_source_and_line(source, text, expected):
    with pytest.raises(TouchstoneError) as caught:
        parse_touchstone(text, source=source)
    assert str(caught.value) == expected
    error = caught.value
    assert error.source == source
    assert expected.endswith(error.message)
    assert isinstance(error, ValueError)


def test_error_line_numbers_skip_nothing_in_a_shipped_file(tmp_path):
    # Break line 14 of a real file: the message must point at line 14 of that file.
    lines = (SKRF_DATA / "ring slot.s2p").read_text().splitlines()
    lines[13] = " ".join(lines[13].split()[:7])
    with pytest.raises(TouchstoneError) as caught:
        parse_touchstone("\n".join(lines), source="ring slot.s2p")
    assert str(caught.value) == "ring slot.s2p:14: expected 9 numbers for one frequency, got 7"
    assert caught.value.line == 14


def test_error_survives_pickling():
    error = TouchstoneError("expected a number, got 'x'", source="a.s1p", line=3)
    copy = pickle.loads(pickle.dumps(error))
    assert (copy.message, copy.source, copy.line) == (error.message, "a.s1p", 3)
    assert str(copy) == "a.s1p:3: expected a number, got 'x'"


# ------------------------------------------------------------------------------- property tests

SOURCES = st.sampled_from(["fuzz.s1p", "fuzz.s2p", "fuzz.s3p", "fuzz.s4p", "fuzz.ts", "fuzz.txt"])


def check_network(network: Network) -> None:
    frequencies = network.frequencies_hz
    assert frequencies.ndim == 1 and frequencies.size >= 1
    assert np.all(np.diff(frequencies) > 0.0) and frequencies[0] >= 0.0
    ports = network.port_count
    assert network.s.shape == (frequencies.size, ports, ports)
    assert np.isfinite(network.s).all()
    assert network.reference_ohm.shape == (ports,) and np.all(network.reference_ohm > 0.0)


@settings(max_examples=300, deadline=None)
@given(text=st.text(), source=SOURCES)
def test_any_text_is_a_network_or_a_touchstone_error(text, source):
    try:
        network = parse_touchstone(text, source=source)
    except TouchstoneError as error:
        assert str(error).startswith(source + ":")
    else:
        check_network(network)


TEMPLATES = [
    ("near.s2p", TWO_PORT_RI),
    ("near.s2p", TWO_PORT_WITH_NOISE),
    ("near.s4p", FOUR_PORT),
    ("near.s3p", THREE_PORT),
    ("near.ts", V2_FOUR_PORT_LOWER),
    ("near.ts", V2_TWO_PORT.format(order="12_21")),
]
# Pieces a damaged or hand-edited file might contain.
INJECTIONS = [
    "nan", "inf", "-inf", "1e999", "-1", "0", "1e-320", "[End]", "[Network Data]", "[Noise Data]", "#",
    "# Hz Z RI R 0", "# MHz Y DB R 50 50", "[Number of Ports] 99999", "[Number of Ports] 0", "[Reference] 1",
    "[Matrix Format] Upper", "[Two-Port Data Order] 21_12", "[Version] 2.0", "! comment", "1_0", "0x10",
    "\t", "\x0c", "\u00a0", "\u0661", "]", "[", "!", "1 2 3 4 5", "1.5", "999999999999", ".5e+3",
]


@st.composite
def near_touchstone(draw) -> tuple[str, str]:
    source, template = draw(st.sampled_from(TEMPLATES))
    lines = template.split("\n")
    for _ in range(draw(st.integers(min_value=1, max_value=4))):
        action = draw(st.sampled_from(["insert", "delete", "replace_token", "duplicate", "swap"]))
        index = draw(st.integers(min_value=0, max_value=max(len(lines) - 1, 0)))
        piece = draw(st.one_of(st.sampled_from(INJECTIONS), st.text(max_size=8)))
        if action == "insert":
            lines.insert(index, piece)
        elif action == "delete" and lines:
            del lines[index]
        elif action == "duplicate" and lines:
            lines.insert(index, lines[index])
        elif action == "swap" and len(lines) > 1:
            other = draw(st.integers(min_value=0, max_value=len(lines) - 1))
            lines[index], lines[other] = lines[other], lines[index]
        elif lines:
            tokens = lines[index].split() or [""]
            tokens[draw(st.integers(min_value=0, max_value=len(tokens) - 1))] = piece
            lines[index] = " ".join(tokens)
    return source, "\n".join(lines)


def parse_outcome(text: str, source: str) -> tuple[str, object]:
    try:
        network = parse_touchstone(text, source=source)
    except TouchstoneError as error:
        assert str(error).startswith(source + ":") and error.message
        return "error", str(error)
    check_network(network)
    return "network", network


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(case=near_touchstone())
def test_damaged_files_give_a_network_or_a_touchstone_error(case):
    source, text = case
    parse_outcome(text, source)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(case=near_touchstone())
def test_fast_and_careful_passes_agree(case):
    # The numpy fast pass may only ever say what the token-by-token pass would have said.
    source, text = case
    kind, fast = parse_outcome(text, source)
    with mock.patch.object(touchstone, "_fast_records", return_value=None):
        careful_kind, careful = parse_outcome(text, source)
    assert kind == careful_kind
    if kind == "error":
        assert fast == careful
    else:
        assert isinstance(fast, Network) and isinstance(careful, Network)
        np.testing.assert_array_equal(fast.frequencies_hz, careful.frequencies_hz)
        np.testing.assert_array_equal(fast.s, careful.s)
        assert fast.comments == careful.comments


# ------------------------------------------------------------------------------------------ speed


def _load_benchmark_writer():
    path = Path(__file__).resolve().parents[2] / "benchmarks" / "touchstone_data.py"
    spec = importlib.util.spec_from_file_location("touchstone_benchmark_data", path)
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module.write_four_port_file


def test_large_four_port_file_reads_the_same_as_scikit_rf(tmp_path):
    # Speed is measured by benchmarks/engine.py (a script that prints figures), not asserted here.
    path = tmp_path / "large.s4p"
    _load_benchmark_writer()(path, points=20001)
    assert_same_as_skrf(read_touchstone(path), path)
