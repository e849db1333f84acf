"""Far-field patterns: the reader, the sphere quadrature, ECC and mean effective gain against closed forms.

Check values:
- Two parallel short dipoles side by side (broadside) in a uniform 3-D field: complex correlation
  rho = 3/2 [sin x/x + cos x/x^2 - sin x/x^3], x = kd (Jakes, Microwave Mobile Communications, 1974);
  the envelope correlation is rho^2.
- Two isotropic radiators: rho = sin x / x, envelope correlation (sin x / x)^2 (Jakes 1974).
- Orthogonal dipoles (z and x axes, displaced along y): 0 by symmetry (Vaughan & Andersen 1987).
- Vertical dipoles in a horizontal (2-D) field: envelope correlation J0(kd)^2 (Clarke, Bell Syst. Tech. J.
  47, 1968), J0 from scipy.special.
- Lossless antennas in a uniform field: ECC from patterns equals ECC from S-parameters (Blanch, Romeu,
  Corbella, Electronics Letters 39(9), 2003); matched loss makes the S-parameter figure read low.
- A lossless antenna in a statistically uniform field with XPR = 0 dB has MEG = -3 dB; an isotropic antenna
  has -3 dB in any environment (Taga, IEEE Trans. Veh. Technol. 39(2), 1990).
- Clenshaw-Curtis quadrature integrates x^n over [-1, 1] exactly (2 / (n + 1), n even) up to n = N
  (Clenshaw & Curtis 1960; Waldvogel 2006).
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.special import j0

from benchmarks.far_field_data import (
    SPEED_OF_LIGHT_MM_PER_S,
    dipole_field,
    grid,
    pattern_text,
    position_phase,
)
from rules import sparams
from rules.design import FieldEnvironment, parse_design
from rules.farfield import (
    HEADER,
    FarFieldError,
    FarFieldPattern,
    clenshaw_curtis_weights,
    envelope_correlation,
    mean_effective_gain,
    parse_far_field,
    sphere_weights,
    total_efficiency,
)
from rules.touchstone import parse_touchstone
from tests.rules.design_builders import antenna, design

FREQUENCY_MHZ = 1000.0
WAVELENGTH_MM = SPEED_OF_LIGHT_MM_PER_S / (FREQUENCY_MHZ * 1e6)  # 299.8 mm
SPACINGS_WAVELENGTHS = (0.1, 0.25, 0.5, 1.0)
GRIDS_DEG = (2.0, 5.0, 10.0)


def pattern(step_deg: float, fields: tuple[np.ndarray, np.ndarray], frequencies=(FREQUENCY_MHZ,)) -> FarFieldPattern:
    theta, phi = grid(step_deg)
    return FarFieldPattern("test", np.array(frequencies, dtype=float), theta, phi, *fields)


def dipole(step_deg: float, axis, position_mm, **extra) -> FarFieldPattern:
    theta, phi = grid(step_deg)
    return pattern(step_deg, dipole_field([FREQUENCY_MHZ], theta, phi, axis, position_mm, **extra))


def isotropic(step_deg: float, position_mm) -> FarFieldPattern:
    theta, phi = grid(step_deg)
    phase = position_phase([FREQUENCY_MHZ], theta, phi, position_mm)
    return pattern(step_deg, (phase, np.zeros_like(phase)))


# -- quadrature -------------------------------------------------------------------------------------------

@pytest.mark.parametrize("intervals", [18, 36, 90])  # 10, 5 and 2 degree theta grids
def test_clenshaw_curtis_integrates_polynomials_up_to_its_degree_exactly(intervals):
    weights = clenshaw_curtis_weights(intervals)
    x = np.cos(np.pi * np.arange(intervals + 1) / intervals)
    assert weights.min() > 0
    for n in range(0, intervals + 1, 2):
        assert weights @ x**n == pytest.approx(2.0 / (n + 1), rel=1e-12)  # ∫ x^n dx over [-1, 1]
    for n in range(1, intervals + 1, 2):
        assert weights @ x**n == pytest.approx(0.0, abs=1e-13)


def test_the_pole_rows_carry_the_weight_of_their_caps():
    # On a 10 degree grid, cos^18 theta is large only near the poles; its sphere integral is 4 pi / 19.
    theta, phi = grid(10.0)
    weights = sphere_weights(theta.size, phi.size)
    values = np.cos(np.radians(theta))[:, None] ** 18 * np.ones((1, phi.size))
    assert (weights * values).sum() == pytest.approx(4 * np.pi / 19, rel=1e-12)
    assert weights[0, 0] > 0 and weights[-1, 0] > 0


# -- envelope correlation against closed forms ----------------------------------------------------------

@pytest.mark.parametrize("step_deg", GRIDS_DEG)
@pytest.mark.parametrize("spacing", SPACINGS_WAVELENGTHS)
def test_parallel_dipoles_broadside_match_jakes(step_deg, spacing):
    x = 2 * math.pi * spacing
    rho = 1.5 * (math.sin(x) / x + math.cos(x) / x**2 - math.sin(x) / x**3)  # Jakes 1974
    d_mm = spacing * WAVELENGTH_MM
    first = dipole(step_deg, (0, 0, 1), (-d_mm / 2, 0, 0))
    second = dipole(step_deg, (0, 0, 1), (d_mm / 2, 0, 0))
    assert envelope_correlation(first, second)[0] == pytest.approx(rho**2, abs=1e-9)


@pytest.mark.parametrize("step_deg", GRIDS_DEG)
@pytest.mark.parametrize("spacing", SPACINGS_WAVELENGTHS)
def test_isotropic_radiators_match_sin_x_over_x(step_deg, spacing):
    x = 2 * math.pi * spacing
    d_mm = spacing * WAVELENGTH_MM
    ecc = envelope_correlation(isotropic(step_deg, (0, 0, 0)), isotropic(step_deg, (0, d_mm, 0)))[0]
    assert ecc == pytest.approx((math.sin(x) / x) ** 2, abs=1e-9)  # Jakes 1974


@pytest.mark.parametrize("step_deg", GRIDS_DEG)
@pytest.mark.parametrize("spacing", (0.0, *SPACINGS_WAVELENGTHS))
def test_orthogonal_dipoles_are_uncorrelated(step_deg, spacing):
    d_mm = spacing * WAVELENGTH_MM
    ecc = envelope_correlation(dipole(step_deg, (0, 0, 1), (0, 0, 0)), dipole(step_deg, (1, 0, 0), (0, d_mm, 0)))
    assert ecc[0] == pytest.approx(0.0, abs=1e-12)


def test_identical_patterns_are_fully_correlated():
    same = dipole(10.0, (1, 1, 0), (30, 0, 0))
    assert envelope_correlation(same, same)[0] == pytest.approx(1.0, abs=1e-12)  # Vaughan & Andersen 1987


@pytest.mark.parametrize("spacing", SPACINGS_WAVELENGTHS)
def test_vertical_dipoles_in_a_horizontal_field_match_clarke(spacing):
    # Taga's elevation Gaussian about the horizon with a 1 degree spread tends to the 2-D field of Clarke's
    # model; on a 0.5 degree grid the difference from J0(kd)^2 stays below 1e-3.
    theta, phi = grid(0.5)
    d_mm = spacing * WAVELENGTH_MM
    fields = [dipole_field([FREQUENCY_MHZ], theta, phi, (0, 0, 1), (sign * d_mm / 2, 0, 0)) for sign in (-1, 1)]
    first, second = (pattern(0.5, field) for field in fields)
    horizontal = FieldEnvironment("taga", mean_elevation_deg=0.0, spread_deg=1.0, xpr_db=0.0)
    assert envelope_correlation(first, second, horizontal)[0] == pytest.approx(j0(2 * math.pi * spacing) ** 2,
                                                                               abs=1e-3)


# -- far field against S-parameters (Blanch 2003) -------------------------------------------------------

def _matrix_sqrt(matrix: np.ndarray) -> np.ndarray:
    values, vectors = np.linalg.eigh(matrix)
    return (vectors * np.sqrt(values)) @ vectors.conj().T


def _embedded_pair(a: float, b: float, spacing: float):
    """A lossless two-port S = [[a, b], [b, a]] and embedded patterns consistent with it: two parallel dipoles
    combined so that their power Gram matrix (1/4π) ∮ F_i·F_j* dΩ equals I - S^H S, which is what energy
    conservation demands of a lossless antenna pair (Blanch 2003's premise)."""
    s = np.array([[a, b], [b, a]], dtype=complex)
    d_mm = spacing * WAVELENGTH_MM
    elements = [dipole(5.0, (0, 0, 1), (sign * d_mm / 2, 0, 0)) for sign in (-1, 1)]
    weights = sphere_weights(elements[0].theta_deg.size, elements[0].phi_deg.size)
    stacked = np.stack([np.concatenate([e.e_theta[0].ravel(), e.e_phi[0].ravel()]) for e in elements])
    w = np.concatenate([np.broadcast_to(weights, elements[0].e_theta[0].shape).ravel()] * 2)
    gram = (stacked * w) @ stacked.conj().T / (4 * np.pi)
    mix = np.linalg.solve(_matrix_sqrt(gram), _matrix_sqrt(np.eye(2) - s.conj().T @ s))
    embedded = mix.T @ stacked  # F_j = sum_i e_i A_ij
    shape = elements[0].e_theta[0].shape
    size = shape[0] * shape[1]
    patterns = [pattern(5.0, (row[:size].reshape(1, *shape), row[size:].reshape(1, *shape))) for row in embedded]
    return s, patterns


def _network(s: np.ndarray):
    lines = ["# MHz S RI R 50"]
    for frequency in (FREQUENCY_MHZ - 1, FREQUENCY_MHZ, FREQUENCY_MHZ + 1):
        values = [s[0, 0], s[1, 0], s[0, 1], s[1, 1]]
        lines.append(f"{frequency:g} " + " ".join(f"{v.real:.15g} {v.imag:.15g}" for v in values))
    return parse_touchstone("\n".join(lines) + "\n", source="pair.s2p")


@pytest.mark.parametrize(("a", "b"), [(0.3, 0.4), (0.2, 0.1), (0.45, 0.45)])
def test_far_field_and_sparameter_ecc_agree_for_a_lossless_pair(a, b):
    s, (first, second) = _embedded_pair(a, b, 0.2)
    blanch = 4 * a**2 * b**2 / (1 - a**2 - b**2) ** 2  # Blanch 2003, symmetric real S
    assert sparams.envelope_correlation(_network(s), 0, 1)[1] == pytest.approx(blanch, rel=1e-9)
    assert envelope_correlation(first, second)[0] == pytest.approx(blanch, rel=1e-6)
    # Lossless: the embedded patterns radiate exactly what the S-matrix does not return.
    assert total_efficiency(first)[0] == pytest.approx(1 - a**2 - b**2, rel=1e-6)


@pytest.mark.parametrize("loss_db", [1.0, 2.0, 3.0])
def test_loss_makes_sparameter_ecc_read_low_while_the_pattern_ecc_stays(loss_db):
    # A matched attenuator of loss_db in each feed: waves pass it twice in S (S' = g^2 S) and once in the
    # radiated field (F' = g F), g = 10^(-loss_db / 20). The pattern correlation is unchanged by the scale.
    a = b = math.sqrt(0.2213)  # pattern ECC 0.63, Blanch 2003
    s, (first, second) = _embedded_pair(a, b, 0.2)
    g = 10 ** (-loss_db / 20)
    lossy = [pattern(5.0, (g * p.e_theta, g * p.e_phi)) for p in (first, second)]
    pattern_ecc = envelope_correlation(*lossy)[0]
    sparameter_ecc = sparams.envelope_correlation(_network(g**2 * s), 0, 1)[1]
    assert pattern_ecc == pytest.approx(4 * a**4 / (1 - 2 * a**2) ** 2, rel=1e-6)
    expected = 4 * g**8 * a**4 / (1 - 2 * g**4 * a**2) ** 2  # Blanch 2003 with S' = g^2 S
    assert sparameter_ecc == pytest.approx(expected, rel=1e-9)
    assert sparameter_ecc < pattern_ecc / 3  # optimistic: S-parameters of lossy antennas read low


# -- efficiency and mean effective gain -------------------------------------------------------------------

@pytest.mark.parametrize("step_deg", GRIDS_DEG)
def test_a_lossless_dipole_has_efficiency_1_and_meg_of_minus_3_db_in_a_uniform_field(step_deg):
    lossless = dipole(step_deg, (1, 2, 3), (40, -10, 5))
    assert total_efficiency(lossless)[0] == pytest.approx(1.0, abs=1e-12)
    assert 10 * math.log10(mean_effective_gain(lossless)[0]) == pytest.approx(-3.0103, abs=1e-3)  # Taga 1990


def test_an_isotropic_antenna_has_meg_of_minus_3_db_in_any_environment():
    theta, phi = grid(5.0)
    half = np.full((1, theta.size, phi.size), math.sqrt(0.5), dtype=complex)  # G_theta = G_phi = 0.5
    antenna_pattern = pattern(5.0, (half, half))
    for environment in (FieldEnvironment(), FieldEnvironment("taga", 20.0, 15.0, 6.0),
                        FieldEnvironment("taga", -10.0, 40.0, -3.0)):
        assert mean_effective_gain(antenna_pattern, environment)[0] == pytest.approx(0.5, abs=1e-12)  # -3 dB


def test_a_vertical_dipole_gains_from_a_vertically_polarized_horizon_field():
    # A z dipole receives only theta polarization; with XPR 6 dB (power ratio 3.98) near the horizon its MEG
    # tends to 1.5 XPR / (1 + XPR) = 1.198 (0.78 dB) as the spread shrinks (Taga 1990).
    vertical = dipole(1.0, (0, 0, 1), (0, 0, 0))
    xpr = 10 ** 0.6
    meg = mean_effective_gain(vertical, FieldEnvironment("taga", 0.0, 2.0, 6.0))[0]
    assert meg == pytest.approx(1.5 * xpr / (1 + xpr), rel=2e-3)


# -- the reader -----------------------------------------------------------------------------------------

def small_file(step_deg: float = 10.0, frequencies=(800.0, 900.0), **extra) -> str:
    theta, phi = grid(step_deg)
    fields = dipole_field(list(frequencies), theta, phi, (0, 0, 1), (10, 20, 5))
    return pattern_text(list(frequencies), theta, phi, *fields, **extra)


def test_it_reads_a_pattern_as_numpy_loadtxt_reads_its_numbers():
    text = small_file(comment="Tallow Creek test chamber\nsimulated")
    read = parse_far_field(text, source="a.csv")
    table = np.loadtxt(text.splitlines(), delimiter=",", comments="#", skiprows=3)  # reference reader
    assert read.frequencies_mhz.tolist() == [800.0, 900.0]
    assert read.theta_deg.size == 19 and read.phi_deg.size == 36
    assert np.array_equal(read.e_theta.ravel(), table[:, 3] + 1j * table[:, 4])
    assert np.array_equal(read.e_phi.ravel(), table[:, 5] + 1j * table[:, 6])


def test_rows_in_any_order_with_comments_and_crlf_read_the_same():
    text = small_file()
    header, *rows = [line for line in text.splitlines() if not line.startswith("#")]
    shuffled = [rows[index] for index in np.random.default_rng(7).permutation(len(rows))]
    mixed = "\r\n".join(["# exported", header, *shuffled[:50], "# a comment mid-file", "", *shuffled[50:]]) + "\r\n"
    first, second = parse_far_field(text, source="a.csv"), parse_far_field(mixed, source="b.csv")
    assert np.array_equal(first.e_theta, second.e_theta) and np.array_equal(first.e_phi, second.e_phi)


def _lines(text: str) -> list[str]:
    return text.splitlines()


def _with_line(text: str, number: int, replacement: str | None) -> str:
    lines = _lines(text)
    if replacement is None:
        del lines[number - 1]
    else:
        lines[number - 1] = replacement
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize(("mutate", "line", "words"), [
    (lambda t: _with_line(t, 1, "frequency,theta,phi,a,b,c,d"), 1, "expected the header line"),
    (lambda t: _with_line(t, 5, "800,30,0,1,2,3"), 5, "expected 7 comma-separated numbers"),
    (lambda t: _with_line(t, 6, "800,40,0,1,2,3,abc"), 6, "e_phi_im: expected a number"),
    (lambda t: _with_line(t, 7, "800,50,0,1,nan,3,4"), 7, "e_theta_im: expected a number"),
    (lambda t: _with_line(t, 8, "800,60,0,1,1e999,3,4"), 8, "too large"),
    (lambda t: _with_line(t, 3, "-800,0,10,1,2,3,4"), 3, "positive frequency"),
])
def test_a_bad_row_is_named_by_file_and_line(mutate, line, words):
    text = small_file()
    with pytest.raises(FarFieldError) as caught:
        parse_far_field(mutate(text), source="ant1.csv")
    assert str(caught.value).startswith(f"ant1.csv:{line}: ")
    assert words in str(caught.value)


def test_a_missing_point_is_named():
    text = small_file()
    with pytest.raises(FarFieldError, match=r"ant1\.csv:\d+: 800 MHz lacks the point theta 0°, phi 10°"):
        parse_far_field(_with_line(text, 3, None), source="ant1.csv")


def test_a_repeated_point_is_named_at_its_second_line():
    lines = _lines(small_file())
    text = "\n".join([*lines[:10], lines[5], *lines[10:]]) + "\n"
    with pytest.raises(FarFieldError, match=r"ant1\.csv:11: the point .* is given twice"):
        parse_far_field(text, source="ant1.csv")


@pytest.mark.parametrize(("theta", "phi", "words"), [
    (np.linspace(0, 170, 18), np.arange(36) * 10.0, "expected it to reach 180"),
    (np.linspace(0, 180, 13), np.arange(36) * 10.0, "steps of 15°"),
    (np.linspace(0, 180, 19), np.arange(24) * 15.0, "steps of 15°"),
    (np.linspace(0, 180, 19), np.arange(35) * 10.0, "do not close the circle"),
    (np.linspace(5, 175, 18), np.arange(36) * 10.0, "starts at 5"),
    (np.array([0, 10, 20, 40, *np.arange(50, 181, 10)]), np.arange(36) * 10.0, "off the regular grid"),
])
def test_a_grid_that_breaks_the_contract_is_refused(theta, phi, words):
    fields = dipole_field([800.0], theta, phi, (0, 0, 1))
    with pytest.raises(FarFieldError, match=words):
        parse_far_field(pattern_text([800.0], theta, phi, *fields), source="ant1.csv")


def test_an_empty_file_says_what_it_expected():
    with pytest.raises(FarFieldError, match="no header line"):
        parse_far_field("# nothing here\n", source="ant1.csv")
    with pytest.raises(FarFieldError, match="no data rows"):
        parse_far_field(HEADER + "\n", source="ant1.csv")


# -- far-field measurements in a design ----------------------------------------------------------------

def far_field_design(entries: list[dict]) -> dict:
    return design("cat-1", antennas=[antenna("A", "main", (20, 20, 10)), antenna("B", "receive", (120, 20, 10))],
                  measurements=entries)


def attach(document: dict, files: dict[str, str]):
    from rules.measurements import attach_measurements

    return attach_measurements(parse_design(document), files.__getitem__)


def test_files_compared_must_share_frequencies_and_grid():
    from rules.design import DesignError

    document = far_field_design([{"kind": "far-field", "file": "a.csv", "antenna": "A"},
                                 {"kind": "far-field", "file": "b.csv", "antenna": "B"}])
    with pytest.raises(DesignError) as caught:
        attach(document, {"a.csv": small_file(), "b.csv": small_file(frequencies=(800.0, 950.0))})
    assert "measurements[1].file: b.csv is compared with a.csv (measurements[0]), but their frequencies differ" \
        in str(caught.value)
    with pytest.raises(DesignError, match="theta grids differ"):
        attach(document, {"a.csv": small_file(), "b.csv": small_file(step_deg=5.0)})


def test_files_compared_must_share_their_environment():
    from rules.design import DesignError

    urban = {"model": "taga", "mean_elevation_deg": 20, "spread_deg": 20, "xpr_db": 6}
    document = far_field_design([{"kind": "far-field", "file": "a.csv", "antenna": "A"},
                                 {"kind": "far-field", "file": "b.csv", "antenna": "B", "environment": urban}])
    with pytest.raises(DesignError, match=r"measurements\[1\]\.environment: .* environments differ"):
        attach(document, {"a.csv": small_file(), "b.csv": small_file()})


def test_a_spread_finer_than_the_grid_is_refused():
    from rules.design import DesignError

    narrow = {"model": "taga", "mean_elevation_deg": 10, "spread_deg": 5, "xpr_db": 6}
    document = far_field_design([{"kind": "far-field", "file": "a.csv", "antenna": "A", "environment": narrow}])
    with pytest.raises(DesignError, match=r"measurements\[0\]\.environment\.spread_deg: .* 10° can't resolve"):
        attach(document, {"a.csv": small_file()})


def test_a_bad_file_is_named_with_its_line_in_the_design_problems():
    from rules.design import DesignError

    document = far_field_design([{"kind": "far-field", "file": "a.csv", "antenna": "A"}])
    with pytest.raises(DesignError, match=r"measurements\[0\]\.file: a\.csv:5: expected 7 comma-separated"):
        attach(document, {"a.csv": _with_line(small_file(), 5, "1,2")})


_FIELD = st.one_of(st.floats(allow_nan=True, allow_infinity=True).map(repr), st.integers(-400, 400).map(str),
                   st.sampled_from(["", " ", "x", "1e", "--1", "0x10", "1_0", "٣", "#", "nan", "1,2"]))


@settings(max_examples=200, deadline=None)
@given(st.lists(st.lists(_FIELD, min_size=0, max_size=8).map(",".join), max_size=12),
       st.booleans())
def test_any_text_either_reads_or_raises_a_far_field_error(rows, with_header):
    text = "\n".join(([HEADER] if with_header else []) + rows) + "\n"
    try:
        read = parse_far_field(text, source="fuzz.csv")
    except FarFieldError as error:
        assert str(error).startswith("fuzz.csv")
    else:
        assert np.isfinite(read.e_theta).all() and read.theta_deg[-1] == 180


def test_a_blank_line_in_the_data_still_leaves_errors_on_the_right_line():
    lines = _lines(small_file())
    text = "\n".join([*lines[:6], "", *lines[6:20], lines[8], *lines[20:]]) + "\n"
    # the repeated row (file line 9) now also stands on line 22, after the blank line 7
    with pytest.raises(FarFieldError, match=r"ant1\.csv:22: the point .* is given twice"):
        parse_far_field(text, source="ant1.csv")


def test_rows_in_the_exporters_order_and_shuffled_give_the_same_pattern():
    text = small_file(step_deg=5.0, frequencies=(700.0, 800.0, 900.0))
    header, *rows = _lines(text)
    reversed_text = "\n".join([header, *rows[::-1]]) + "\n"
    ordered, backwards = parse_far_field(text, source="a.csv"), parse_far_field(reversed_text, source="b.csv")
    assert np.array_equal(ordered.e_phi, backwards.e_phi) and np.array_equal(ordered.theta_deg, backwards.theta_deg)
