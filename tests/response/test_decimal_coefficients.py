"""Decimal and large coefficients (a g-factor 2.0023, a coupling 10007) in presented forms.

The presented forms must stay short and exact: Boltzmann factors are exponentials of rational
multiples of one generator, the energies are scaled out rather than turned into powers of
exp(beta h/10000), and where no short polynomial form exists the plain form is kept. Every
value is checked against exact diagonalisation.
"""

from __future__ import annotations

import sympy as sp

import symresp as sr
from symresp.conventions import beta
from symresp.response._present import MAX_SPAN, boltzmann_form

from ..conftest import assert_close

J = sp.Symbol("J", positive=True)
h = sp.Symbol("h", real=True)
HALF = sp.Rational(1, 2)
G = sp.Rational(20023, 10000)


def _dimer(H_field):
    a, b = sr.spin("a", HALF), sr.spin("b", HALF)
    return sr.Model(J * (a.vec @ b.vec) + H_field(a, b)), a, b


def _agrees_with_exact_diagonalisation(r, params):
    ref = r.reference(params=params, T=0.7)
    assert_close(r.evaluate("isothermal", params=params, T=0.7), ref.isothermal, what="isothermal")
    assert_close(r.evaluate("frequency", params=params, T=0.7, omega_value=0.3 + 0.2j),
                 ref.frequency(0.3, 0.2), what="chi(omega)")


def test_g_factor_is_scaled_out_of_the_boltzmann_factors():
    model, a, b = _dimer(lambda a, b: G * h * (a.z + b.z))
    r = model.response(a.z + b.z)
    chi = r.static("isothermal")
    # cosh(20023 beta h/10000), not a polynomial in exp(beta h/10000)
    args = {c.args[0] for c in chi.atoms(sp.cosh)}
    assert args == {G * beta * h}
    assert all(abs(sp.Poly(e.args[0], beta, J, h).coeffs()[0]) >= sp.Rational(1, 4)
               for e in chi.atoms(sp.exp))
    _agrees_with_exact_diagonalisation(r, {"J": 1.3, "h": 0.4})
    _agrees_with_exact_diagonalisation(model.response(a.x + b.x), {"J": 1.3, "h": -0.4})


def test_a_large_integer_coefficient_stays_a_short_form():
    model, a, b = _dimer(lambda a, b: 10007 * h * (a.z + b.z))
    r = model.response(a.z + b.z)
    assert {c.args[0] for c in r.static("isothermal").atoms(sp.cosh)} == {10007 * beta * h}
    _agrees_with_exact_diagonalisation(r, {"J": 1.3, "h": 0.0004})


def test_incommensurate_coefficients_keep_the_plain_form():
    # 2.0023 h on one site and 2 h on the other: one generator beta*h with a step of 1/20000,
    # powers up to ~40000; boltzmann_form refuses it instead of factoring for minutes.
    x = sp.exp(-beta * G * h) + sp.exp(-2 * beta * h) + 1
    assert boltzmann_form(x) is None
    assert (2 * G * 10000) > MAX_SPAN
    model, a, b = _dimer(lambda a, b: G * h * a.z + 2 * h * b.z)
    r = model.response(a.z + b.z)
    _agrees_with_exact_diagonalisation(r, {"J": 1.3, "h": 0.4})


def test_commensurate_decimals_share_one_step():
    # 0.5 and 0.75: step 1/4, powers 0..3.
    x = 1 + sp.exp(-beta * h / 2) + sp.exp(-3 * beta * h / 4)
    out = boltzmann_form(x)
    assert out is not None
    assert sp.simplify(out - x) == 0
