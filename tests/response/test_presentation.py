"""Presentable forms: Boltzmann factors relative to the lowest level, cosh/sinh for a field.

Every value here is also checked numerically against the unpresented Lehmann sum, so a
presentation rule can only change how a formula reads, never what it is.
"""

from __future__ import annotations

import pytest
import sympy as sp

import symresp as sr
from symresp.conventions import beta
from symresp.response._present import boltzmann_form

J = sp.Symbol("J", positive=True)
h = sp.Symbol("h", real=True)
D = sp.Symbol("D", real=True)
HALF = sp.Rational(1, 2)
#: Exact rational sample points for the value comparisons.
POINTS = [{J: sp.Rational(7, 5), h: sp.Rational(3, 10), beta: sp.Rational(2, 3)},
          {J: sp.Rational(1, 3), h: sp.Rational(-9, 4), beta: sp.Rational(5, 2)}]


def _equal(a: sp.Expr, b: sp.Expr) -> bool:
    return all(abs(sp.N((a - b).subs(p), 30)) < sp.Float("1e-25") for p in POINTS)


def _dimer_in_field():
    a, b = sr.spin("a", HALF), sr.spin("b", HALF)
    return sr.Model(J * a.vec @ b.vec - h * (a.z + b.z)), a.z + b.z, a.x + b.x


def test_dimer_in_a_field_reads_as_the_textbook_form():
    # Z' = 1 + e^{-beta J}(1 + 2 cosh(beta h)) relative to the singlet; chi_zz = beta (<M^2> -
    # <M>^2) = 2 beta e^{-beta J}[cosh(beta h) + e^{-beta J}(2 + cosh(beta h))] / Z'^2.
    # Source: the Bleaney-Bowers dimer (Proc. R. Soc. A 214, 451 (1952)) in a field; the
    # cosh/sinh form is common practice in magnetochemistry.
    model, Mz, Mx = _dimer_in_field()
    Zr = 1 + sp.exp(-beta * J) * (1 + 2 * sp.cosh(beta * h))
    expected = 2 * beta * sp.exp(-beta * J) * (sp.cosh(beta * h)
                                               + sp.exp(-beta * J) * (2 + sp.cosh(beta * h))) / Zr**2
    chi = model.response(Mz).static("isothermal")
    assert _equal(chi, expected)
    assert chi.has(sp.cosh) and not chi.has(sp.exp(beta * J))     # decaying factors only
    _, den = sp.fraction(sp.together(chi))
    assert any(isinstance(f, sp.Pow) and f.exp == 2 for f in sp.Mul.make_args(den))
    # Transverse: chi_xx = 2 e^{-beta J} sinh(beta h) / (h Z') (isothermal = isolated).
    chi_x = model.response(Mx).static("isothermal")
    assert _equal(chi_x, 2 * sp.exp(-beta * J) * sp.sinh(beta * h) / (h * Zr))
    assert chi_x.has(sp.sinh)


def test_partition_function_is_relative_to_the_lowest_level():
    model, Mz, _ = _dimer_in_field()
    Z = model.response(Mz).partition_function()
    expected = sp.exp(3 * beta * J / 4) * (1 + sp.exp(-beta * J) * (1 + 2 * sp.cosh(beta * h)))
    assert _equal(Z, expected)
    assert len(Z.atoms(sp.exp)) == 2 and Z.has(sp.cosh)


def test_sign_free_parameter_without_a_reversal_symmetry_keeps_plain_exponentials():
    # D has no sign: no cosh is invented when the levels are not symmetric under D -> -D.
    Zr = 1 + 2 * sp.exp(-beta * D)
    out = boltzmann_form(Zr)
    assert out == Zr and not out.has(sp.cosh)


def test_boltzmann_form_declines_non_linear_exponents():
    assert boltzmann_form(sp.exp(-beta * J**2 * sp.exp(J))) is None
    assert boltzmann_form(beta * J) is None


def test_boltzmann_form_leaves_phases_alone():
    t = sp.Symbol("t", real=True)
    assert boltzmann_form(sp.exp(sp.I * J * t) + sp.exp(-beta * J)) is None


def test_parameter_factors_cancel_between_numerator_and_denominator():
    # Levels 0 and 2(J1 - J2): the factor (J1 - J2) of the weights must not survive as an
    # uncancelled pair in the presented form.
    J1, J2 = sp.Symbol("J1", real=True), sp.Symbol("J2", positive=True)
    s = sr.spin("s", HALF)
    chi = sr.Model((2 * J1 - 2 * J2) * (s.z + HALF)).response(s.x).static("isothermal")
    _, den = sp.fraction(sp.together(chi))
    assert sp.degree(sp.Poly(sp.factor(den).as_independent(sp.exp)[0], J1)) <= 1


def test_evaluate_takes_the_limit_where_levels_meet():
    # At J1 = J2 the closed form is 0/0 (a removable singularity); evaluate() gives the limit,
    # equal to exact diagonalisation, and refuses the isolated susceptibility, which jumps there.
    J1, J2 = sp.Symbol("J1", real=True), sp.Symbol("J2", positive=True)
    s = sr.spin("s", HALF)
    r = sr.Model((2 * J1 - 2 * J2) * (s.z + HALF)).response(s.x)
    p = {"J1": 1.0, "J2": 1.0}
    ref = r.reference(params=p, T=0.3)
    assert abs(r.evaluate("isothermal", params=p, T=0.3) - ref.isothermal) < 1e-12
    assert abs(r.evaluate("frequency", params=p, T=0.3, omega_value=0.5 + 0.1j)
               - ref.frequency(0.5, 0.1)) < 1e-12
    with pytest.raises(sr.InputError, match="isolated susceptibility is discontinuous"):
        r.evaluate("isolated", params=p, T=0.3)


def test_one_generator_in_a_parameter_combination_reads_as_tanh():
    # Levels 0 and 2(J1 - J2), A = S^x: chi = tanh(beta (J1 - J2)) / (4 (J1 - J2)), the
    # two-level result with splitting 2(J1 - J2) (common practice).
    J1, J2 = sp.Symbol("J1", real=True), sp.Symbol("J2", positive=True)
    s = sr.spin("s", HALF)
    chi = sr.Model((2 * J1 - 2 * J2) * (s.z + HALF)).response(s.x).static("isothermal")
    assert chi.has(sp.tanh) and not chi.has(sp.exp)
    assert _equal(chi.subs({J1: sp.Rational(3, 2), J2: sp.Rational(1, 3)}),
                  (sp.tanh(beta * sp.Rational(7, 6)) / (4 * sp.Rational(7, 6))))
