"""Fits of measured magnetometry data (symresp.cases._fit, _data, _values, _magnet).

Synthetic data come from the numerical reference (exact diagonalisation in symresp.numeric,
tests/cases/synthetic.py), never from the emitted evaluators the fit uses. Published checks:
Bleaney-Bowers (Source: B. Bleaney and K. D. Bowers, Proc. R. Soc. A 214, 451 (1952)) and the
axial spin 1 (Source: O. Kahn, Molecular Magnetism, VCH 1993 -- from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from symresp.cases import (find_case, fit_case, magnetometry_model, parse_case, parse_data,
                           read_case, read_data, with_values)
from symresp.emit import molar_factor, temperature_factor
from symresp.errors import InputError
from tests.cases import synthetic

#: A fitted value counts as recovered within this many standard errors.
N_SIGMA = 3.0
#: The wrong model must leave chi^2/dof at least this large (a right one gives about 1).
WRONG_MODEL_CHI2 = 20.0
#: Quoted Curie-type constants (three digits, common practice).
RTOL_QUOTED = 1e-3
#: Model against the closed-form Bleaney-Bowers and Kahn formulas (double precision).
RTOL_FORMULA = 1e-9

ION = """
[model]
name = "ion"
energy_unit = "K"
hamiltonian = "D*s.z^2"
[parameters]
D = { assume = "real", value = 3.0, unit = "K" }
g = { assume = "positive", value = 2.0 }
B = { assume = "nonnegative", value = 0, unit = "T" }
[sites]
s = "spin 1"
[zeeman]
g = { s = "g" }
field = "B"
"""


@pytest.fixture(scope="module")
def dinuclear():
    return read_case(find_case("dinuclear"))


@pytest.fixture(scope="module")
def demo_data():
    return read_data(synthetic.DEMO_FILE)


# ------------------------------------------------------------------------------ data files
def test_demo_data_file_is_the_numerical_reference_plus_the_stated_noise():
    T, y, s = synthetic.demo_table()
    d = read_data(synthetic.DEMO_FILE)
    np.testing.assert_allclose(d.T, T, atol=5e-4)
    np.testing.assert_allclose(d.values, y, atol=1e-6)      # six printed decimals
    np.testing.assert_allclose(d.sigma, s, atol=1e-6)


@pytest.mark.parametrize("text, words", [
    ("", "no header"),
    ("T chi\n", "no rows"),
    ("T, chiT\n1, 2, 3\n", "3 value(s)"),
    ("t, chiT\n1, 2\n", "did you mean 'T'"),
    ("T, chi, chiT\n1, 2, 3\n", "exactly one measured"),
    ("B, M\n1, 2\n", "no column T"),
    ("T, chi\n-1, 2\n", "must be > 0"),
    ("T, chi, sigma\n1, 2, 0\n", "standard error"),
    ("T, chi\n1, nan\n", "finite"),
    ("T, chi\n1, abc\n", "not a number"),
    ("T, T, chi\n1, 1, 2\n", "twice"),
    ("2, 0.3\n", "header"),
])
def test_bad_data_tables_are_named(text, words):
    with pytest.raises(InputError, match=words.replace("(", r"\(").replace(")", r"\)")):
        parse_data(text, source="bad.csv")


def test_whitespace_and_csv_tables_read_the_same():
    a = parse_data("# comment\nT B M sigma\n2 1 0.5 0.01\n5 2 0.8 0.02\n")
    b = parse_data("T,B,M,sigma\n2,1,0.5,0.01\n5,2,0.8,0.02\n")
    for x, y in ((a.T, b.T), (a.B, b.B), (a.values, b.values), (a.sigma, b.sigma)):
        np.testing.assert_array_equal(x, y)
    assert a.quantity == "M"


# ------------------------------------------------------------------------------ --set values
def test_with_values_substitutes_exactly_everywhere(dinuclear):
    case = with_values(dinuclear, {"B": "0.5", "g": 2})
    assert {p.name for p in case.system.parameters} == {"J"}
    assert str(case.magnetism.zeeman.field) == "1/2"             # exact: 0.5 is 1/2
    assert str(dict((p.name, p.value) for p in case.parameters)["B"]) == "1/2"
    with pytest.raises(InputError, match="did you mean 'rho'"):
        with_values(dinuclear, {"rh": 1})
    with pytest.raises(InputError, match="positive"):
        with_values(dinuclear, {"g": -2})
    with pytest.raises(InputError, match="not a number"):
        with_values(dinuclear, {"J": "1.5.2"})


def test_case_sections_are_checked():
    with pytest.raises(InputError, match="not a spin"):
        parse_case(ION.replace('s = "spin 1"', 's = "spin 1"\nq = "levels 3"')
                   .replace('g = { s = "g" }', 'g = { s = "g", q = 2 }'))
    with pytest.raises(InputError, match="no site named"):
        parse_case(ION.replace('g = { s = "g" }', 'g = { q = "g" }'))
    with pytest.raises(InputError, match="energy unit"):
        parse_case(ION.replace('energy_unit = "K"', 'energy_unit = "furlong"'))
    with pytest.raises(InputError, match="temperature unit"):
        parse_case(ION.replace('energy_unit = "K"', 'energy_unit = "K"\ntemperature_unit = "F"'))
    with pytest.raises(InputError, match="one parameter"):
        parse_case(ION + '[sample]\ntip = "g*2"\n')
    with pytest.raises(InputError, match="powder"):
        parse_case(ION + '[sample]\norientation = "crystal"\n')
    axial = parse_case(ION.replace('g = { s = "g" }',
                                   'g = { s = { parallel = "g", perpendicular = 2.1 } }'))
    assert axial.magnetism.zeeman.g[0][1].kind == "axial"


# ------------------------------------------------------------------------------ published forms
def test_bleaney_bowers_limits_and_formula(dinuclear):
    # chi = 2 N_A g^2 mu_B^2 / (k_B T (3 + exp(J/k_B T))), H = J S_a.S_b, J in cm^-1
    # (Source: Bleaney & Bowers, Proc. R. Soc. A 214, 451 (1952))
    model = magnetometry_model(dinuclear, "chiT", ["J", "g"], values={"rho": 0, "tip": 0})
    J, g = 150.0, 2.1
    T = np.array([1.0, 5.0, 100.0, 300.0, 1e6])
    y, _ = model([J, g], T)
    x = J / (T * temperature_factor("K", "cm^-1"))           # J / k_B T
    bb = molar_factor("K") * g * g * 2 / (3 + np.exp(x))       # chi T
    np.testing.assert_allclose(y, bb, rtol=RTOL_FORMULA, atol=1e-300)
    assert y[0] < 1e-80                                          # far below the gap
    # high T: 2 x 0.375 g^2/4 cm^3 K/mol (two Curie spins 1/2; common practice)
    assert y[-1] == pytest.approx(2 * 0.375 * g * g / 4, rel=RTOL_QUOTED)


def test_powder_average_of_an_axial_spin_one_against_the_textbook():
    # chi_par = 2 N g^2 mu_B^2 exp(-D/kT) / (kT (1 + 2 exp(-D/kT))),
    # chi_perp = 2 N g^2 mu_B^2 (1 - exp(-D/kT)) / (D (1 + 2 exp(-D/kT))),
    # powder (chi_par + 2 chi_perp)/3 (Source: O. Kahn, Molecular Magnetism, VCH 1993 -- from
    # memory)
    case = parse_case(ION)
    model = magnetometry_model(case, "chi", ["D", "g"])
    assert "chi_par + 2 chi_perp" in model.describe()
    D, g = 4.7, 2.03
    T = np.array([0.5, 2.0, 10.0, 80.0])
    y, _ = model([D, g], T)
    F = molar_factor("K")
    e = np.exp(-D / T)
    par = 2 * F * g * g * e / (T * (1 + 2 * e))
    perp = 2 * F * g * g * (1 - e) / (D * (1 + 2 * e))
    np.testing.assert_allclose(y, (par + 2 * perp) / 3, rtol=RTOL_FORMULA)


def test_analytic_jacobian_of_the_model_matches_finite_differences(dinuclear):
    case = parse_case(ION.replace('B = { assume = "nonnegative", value = 0',
                                  'B = { assume = "nonnegative", value = 0.5'))
    T = np.array([1.5, 4.0, 20.0])
    for quantity, finite in (("chiT", False), ("M", True), ("chi", True)):
        model = magnetometry_model(case, quantity, ["D", "g"], finite_field=finite)
        theta = np.array([3.3, 2.07])
        _, jac = model(theta, T, np.array([0.5, 2.0, 6.0]))
        for j in range(2):
            h = np.zeros(2)
            h[j] = 1e-6 * theta[j]
            up, _ = model(theta + h, T, np.array([0.5, 2.0, 6.0]))
            dn, _ = model(theta - h, T, np.array([0.5, 2.0, 6.0]))
            np.testing.assert_allclose(jac[:, j], (up - dn) / (2 * h[j]), rtol=1e-5)


# ------------------------------------------------------------------------------ fits
def test_fit_recovers_the_demo_parameters_within_their_errors(dinuclear, demo_data):
    result = fit_case(dinuclear, demo_data, ["J", "g"])
    truth = synthetic.VENNADREL
    for name in ("J", "g"):
        value, error = result.parameters[name]
        assert abs(value - truth[name]) <= N_SIGMA * error, (name, value, error)
        assert 0 < error < 0.01 * abs(truth[name])          # informative errors
    assert 0.5 < result.reduced_chi2 < 1.5
    assert result.correlation.shape == (2, 2) and result.correlation[0, 0] == pytest.approx(1)
    wide = fit_case(dinuclear, demo_data, ["J", "g", "rho", "tip"])
    for name in ("J", "g", "rho", "tip"):
        value, error = wide.parameters[name]
        assert abs(value - truth[name]) <= N_SIGMA * error, (name, value, error)


def test_fit_of_the_wrong_model_does_not_agree(demo_data, dinuclear):
    # a single spin 1 with zero-field splitting cannot make a singlet ground state
    ion = parse_case(ION)
    result = fit_case(ion, demo_data, ["D", "g"])
    assert result.reduced_chi2 > WRONG_MODEL_CHI2
    # the right Hamiltonian without the impurity term misses the low-temperature tail
    bare = fit_case(dinuclear, demo_data, ["J", "g"], values={"rho": 0})
    assert bare.reduced_chi2 > WRONG_MODEL_CHI2


def test_fit_of_powder_magnetisation_with_semi_closed_levels():
    # M(B) of an axial spin 1 at two temperatures: data from exact diagonalisation with a finer
    # orientation average than the fit's, plus Gaussian noise of known sigma
    T = np.repeat([2.0, 5.0], 12)
    B = np.tile(np.linspace(0.5, 7.0, 12), 2)
    truth = {"D": 4.2, "g": 2.05}
    clean = synthetic.ion_powder_M(truth["D"], truth["g"], T, B)
    sigma = np.full(T.size, 0.005)
    y = clean + sigma * np.random.default_rng(3).standard_normal(T.size)
    text = "T B M sigma\n" + "".join(f"{a} {b} {c} {d}\n" for a, b, c, d in zip(T, B, y, sigma))
    case = parse_case(ION)
    result = fit_case(case, parse_data(text), ["D", "g"])
    assert "Gauss-Legendre" in result.description
    for name in ("D", "g"):
        value, error = result.parameters[name]
        assert abs(value - truth[name]) <= N_SIGMA * error, (name, value, error)
    assert result.x_name == "B" and len(result.curves) == 2


def test_fit_errors_name_the_fix(dinuclear, demo_data):
    with pytest.raises(InputError, match="declares no parameter"):
        fit_case(dinuclear, demo_data, ["K"])
    with pytest.raises(InputError, match="field parameter B cannot be varied"):
        fit_case(dinuclear, demo_data, ["B"])
    with pytest.raises(InputError, match="zeeman"):
        fit_case(read_case(find_case("dimer")), demo_data, ["J"])
    M_without_field = parse_data("T M\n2 0.5\n")
    with pytest.raises(InputError, match="need a field"):
        fit_case(dinuclear, M_without_field, ["J"])


def test_unweighted_fit_scales_errors_by_the_residuals(dinuclear, demo_data):
    text = "T chiT\n" + "".join(f"{t} {v}\n" for t, v in zip(demo_data.T, demo_data.values))
    result = fit_case(dinuclear, parse_data(text), ["J", "g"])
    assert not result.weighted
    assert math.isfinite(result.errors[0]) and result.errors[0] > 0


def test_differential_susceptibility_is_the_field_derivative_of_M():
    # dM/dB with an impurity and TIP, against a central difference of M(B)
    case = parse_case(ION + '[sample]\ntip = 3e-4\n'
                            'impurity = { fraction = 0.05, spin = "5/2", g = 2.0 }\n')
    model = magnetometry_model(case, "M", ["D", "g"], finite_field=True)
    T, B = np.array([2.0, 5.0, 1.5]), np.array([1.0, 3.0, 6.0])
    theta = [4.0, 2.1]
    h = 1e-5
    up, _ = model(theta, T, B + h)
    dn, _ = model(theta, T, B - h)
    np.testing.assert_allclose(model.differential(theta, T, B), (up - dn) / (2 * h), rtol=1e-6)
    with pytest.raises(InputError, match="finite-field"):
        magnetometry_model(case, "chi", ["D"]).differential([4.0], T, B)


def test_mean_field_and_corrections_in_the_fitted_model(dinuclear):
    # chi = (1 - rho) chi_BB / (1 + zJ chi_BB/(N_A mu_B^2 g^2)) + rho C/T + TIP + dia, with
    # Bleaney-Bowers chi_BB (Source: Bleaney & Bowers 1952; mean-field convention of
    # docs/conventions.md section 8)
    text = open(find_case("dinuclear")).read().replace(
        'tip = "tip"', 'tip = "tip"\nmean_field = "zJ"\ndiamagnetic = -1e-4').replace(
        '[sites]', '[parameters.zJ]\nvalue = -3\n\n[sites]')
    case = parse_case(text)
    model = magnetometry_model(case, "chi", ["J", "g", "zJ", "rho"])
    theta = np.array([60.0, 2.05, -3.0, 0.02])
    T = np.array([3.0, 40.0, 250.0])
    y, jac = model(theta, T)
    J, g, zJ, rho = theta
    F = molar_factor("cm^-1")
    TE = T * temperature_factor("K", "cm^-1")
    bb = F * g * g * 2 / (TE * (3 + np.exp(J / TE)))
    mf = bb / (1 + zJ * bb / (F * g * g))
    expected = (1 - rho) * mf + rho * F * g * g * 0.75 / (3 * TE) + 1.2e-4 - 1e-4
    np.testing.assert_allclose(y, expected, rtol=RTOL_FORMULA)
    for j in range(4):
        h = np.zeros(4)
        h[j] = 1e-6 * max(1.0, abs(theta[j]))
        up, _ = model(theta + h, T)
        dn, _ = model(theta - h, T)
        # rounding of the difference quotient: about 1e-16 |y| / h
        np.testing.assert_allclose(jac[:, j], (up - dn) / (2 * h[j]), rtol=1e-5, atol=1e-10)
