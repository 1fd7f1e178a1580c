"""Comparison of hand-derived formulas: equivalent rewritings are accepted, and each common slip
is caught and named on published formulas deliberately altered."""

from __future__ import annotations

import doctest

import pytest
import sympy as sp

import symresp as sr
from symresp.checks import QUANTITIES, Verdict, compare
from symresp.errors import InputError
from symresp.text import ParseError

#: Two values this far apart are clearly different (the slips below change values at O(1)).
CLEARLY_DIFFERENT = 1e-6

# --------------------------------------------------------------------------------------------
# Published formulas used below
#
# Bleaney-Bowers dimer, H = J S1.S2, A = B = S1z + S2z (g mu_B = 1):
#   chi = 2 beta / (3 + exp(beta J)).
#   Source: B. Bleaney and K. D. Bowers, Proc. R. Soc. A 214, 451 (1952).
# Curie law of a free spin 1/2: chi_T = beta S(S+1)/3 = beta/4; the isolated value is 0
#   (common practice; docs/conventions.md section 5).
# Spin 1 with D Sz^2, chi_perp = chi_xx (Van Vleck type):
#   2 (1 - exp(-beta D)) / (D (1 + 2 exp(-beta D))).
#   Source: O. Kahn, Molecular Magnetism, VCH 1993 -- from memory.
# Two-level system H = Delta Sz, A = B = sigma_x:
#   chi(omega) = 2 Delta tanh(beta Delta/2) / (Delta^2 - (omega + i0+)^2)   (common practice).
# --------------------------------------------------------------------------------------------
BLEANEY_BOWERS = "2*beta/(3 + exp(beta*J))"
KAHN_PERP = "2*(1 - exp(-beta*D))/(D*(1 + 2*exp(-beta*D)))"
TWO_LEVEL = "2*Delta*tanh(beta*Delta/2)/(Delta^2 - (omega + I*eta)^2)"


def _differs(v: Verdict, slip: str, words: str) -> None:
    assert not v.agrees, v.text()
    assert v.slip == slip, v.text()
    assert words in v.diagnosis, v.text()
    assert v.counterexample is not None
    point, theirs, ours = v.counterexample
    assert theirs != ours
    assert v.text().startswith("differs: ")


# ------------------------------------------------------------------ equivalent rewritings
EQUIVALENT = [
    ("dimer", BLEANEY_BOWERS, "isothermal"),
    ("dimer", "2/(T*(3 + exp(J/T)))", "isothermal"),                             # T instead of beta
    ("dimer", "2*beta*exp(-beta*J)/(1 + 3*exp(-beta*J))", "isothermal"),         # singlet as zero
    ("dimer", "beta*(1 - tanh(beta*J/2))/(2 - tanh(beta*J/2))", "isothermal"),   # tanh form
    ("dimer", "exp(3*beta*J/4) + 3*exp(-beta*J/4)", "partition"),
    ("dimer", "0", "isolated"),
    ("free_spin", "1/(4*T)", "isothermal"),
    ("free_spin", "2", "partition"),
    ("spin_one_zfs", KAHN_PERP, "isothermal"),
    ("spin_one_zfs", "2*(exp(beta*D) - 1)/(D*(exp(beta*D) + 2))", "isolated"),
    # the same susceptibility with the energy zero in the middle of the levels (-D/3, 2D/3)
    ("spin_one_zfs", "2*(exp(beta*D/3) - exp(-2*beta*D/3))/(D*(exp(beta*D/3) + 2*exp(-2*beta*D/3)))",
     "isothermal"),
    ("two_level", "2*Delta*tanh(beta*Delta/2)/(Delta^2 - omega^2)", "frequency"),
    ("two_level", TWO_LEVEL, "frequency"),
    ("two_level", "tanh(Delta/(2*T))*(1/(Delta - omega) + 1/(Delta + omega))", "frequency"),
    ("two_level", "2*sinh(beta*Delta/2)/cosh(beta*Delta/2)*sin(Delta*t)", "time"),
    ("two_level", "tanh(beta*Delta/2)*(exp(I*Delta*t) - exp(-I*Delta*t))/I", "time"),
    ("two_level", "2*cosh(beta*Delta/2)", "partition"),
    ("two_level", "2*tanh(beta*Delta/2)/Delta", "isolated"),
    ("two_level_ladder", "tanh(beta*Delta/2)/(Delta - omega)", "frequency"),
]


@pytest.mark.parametrize("model, formula, quantity", EQUIVALENT)
def test_equivalent_rewritings_are_accepted(request, model, formula, quantity):
    v = compare(request.getfixturevalue(model), formula, quantity)
    assert v.agrees, v.text()
    assert v.diagnosis is None and v.counterexample is None


def test_small_identities_are_proved_exactly(dimer, two_level):
    assert compare(dimer, "2*beta*exp(-beta*J)/(1 + 3*exp(-beta*J))").method == "exact"
    v = compare(two_level, "2*Delta*tanh(beta*Delta/2)/(Delta^2 - omega^2)", "frequency")
    assert v.method == "exact" and v.text() == "agrees (exact)"


def test_sympy_expressions_are_accepted_by_name(dimer):
    # a user's plain Symbol("J") (no assumptions) is identified with the model's J by name
    J, beta = sp.Symbol("J"), sp.Symbol("beta")
    assert compare(dimer, 2 * beta / (3 + sp.exp(beta * J))).agrees


def test_large_expressions_are_decided_by_sampling():
    # open chain of three spins 1/2 in a field, transverse response: a few hundred operations
    J, h = sp.Symbol("J", real=True), sp.Symbol("h", positive=True)
    a, b, c = (sr.spin(x, sp.Rational(1, 2)) for x in "abc")
    r = sr.Model(J * (a.vec @ b.vec + b.vec @ c.vec) + h * (a.z + b.z + c.z)).response(a.x + b.x + c.x)
    chi = sp.sstr(r.static("isothermal"))
    v = compare(r.derivation, f"({chi})*(cosh(beta*J)^2 - sinh(beta*J)^2)")
    assert v.agrees and v.method == "sampling", v.text()
    assert "9 of 9" in v.confidence


def test_hubbard_dimer_formula_with_square_roots_is_proved():
    U, tau = sp.Symbol("U", positive=True), sp.Symbol("tau", positive=True)
    c1u, c1d, c2u, c2d = (sr.fermion(n) for n in ("c1u", "c1d", "c2u", "c2d"))
    n = [sr.dagger(c) * c for c in (c1u, c1d, c2u, c2d)]
    hop = sum((sr.dagger(x) * y + sr.dagger(y) * x for x, y in ((c1u, c2u), (c1d, c2d))), 0 * n[0])
    model = sr.Model(-tau * hop + U * (n[0] * n[1] + n[2] * n[3]), sector={sum(n[1:], n[0]): 2})
    r = model.response((n[0] - n[1] - n[2] + n[3]) / 2)
    chi = sp.sstr(r.static("isothermal"))
    assert compare(r.derivation, f"({chi})*(cosh(beta*U)^2 - sinh(beta*U)^2)").agrees
    v = compare(r.derivation, f"({chi})*exp(beta*U)")
    assert not v.agrees and v.slip == "energy-zero", v.text()


# ------------------------------------------------------------------ named slips
def test_bleaney_bowers_with_the_sign_of_J_flipped(dimer):
    _differs(compare(dimer, "2*beta/(3 + exp(-beta*J))"), "coupling", "J -> -J")


def test_bleaney_bowers_in_the_2J_convention(dimer):
    _differs(compare(dimer, "2*beta/(3 + exp(2*beta*J))"), "coupling", "J -> 2*J")


def test_bleaney_bowers_in_the_minus_2J_convention(dimer):
    _differs(compare(dimer, "2*beta/(3 + exp(-2*beta*J))"), "coupling", "J -> -2*J")


def test_bleaney_bowers_missing_a_factor_2(dimer):
    _differs(compare(dimer, "beta/(3 + exp(beta*J))"), "factor", "factor 1/2")


def test_bleaney_bowers_with_factor_4_and_sign(dimer):
    _differs(compare(dimer, "8*beta/(3 + exp(beta*J))"), "factor", "factor 4")
    _differs(compare(dimer, "-2*beta/(3 + exp(beta*J))"), "sign", "overall sign")
    _differs(compare(dimer, "-beta/(3 + exp(beta*J))"), "factor", "your expression is -1/2 times ours")


def test_bleaney_bowers_with_T_and_beta_swapped(dimer):
    _differs(compare(dimer, "2*T/(3 + exp(J*T))"), "T-beta", "T and beta swapped")


def test_curie_law_given_when_the_isolated_value_is_asked(free_spin):
    v = compare(free_spin, "beta/4", "isolated")
    _differs(v, "isothermal-for-isolated", "your expression is the isothermal susceptibility")
    assert "leaves out beta/4" in v.diagnosis


def test_isolated_value_given_when_the_isothermal_one_is_asked(free_spin):
    v = compare(free_spin, "0", "isothermal")
    _differs(v, "isolated-for-isothermal", "your expression is the isolated susceptibility")
    assert v.diagnosis.endswith("the isothermal one adds beta/4")


def test_isolated_given_for_isothermal_prints_the_missing_term():
    # spin 1/2 in a longitudinal field: chi_isol = 0, chi_T = beta/(4 cosh^2(beta h/2))
    h = sp.Symbol("h", positive=True)
    s = sr.spin("s", sp.Rational(1, 2))
    d = sr.Model(h * s.z).response(s.z).derivation
    v = compare(d, "0")
    _differs(v, "isolated-for-isothermal", "the isothermal one adds")
    assert "beta" in v.diagnosis.split("adds")[1]


def test_two_level_advanced_instead_of_retarded(two_level):
    v = compare(two_level, "2*Delta*tanh(beta*Delta/2)/(Delta^2 - (omega - I*eta)^2)", "frequency")
    _differs(v, "advanced", "advanced instead of retarded")


def test_two_level_with_omega_reversed(two_level_ladder):
    v = compare(two_level_ladder, "tanh(beta*Delta/2)/(Delta + omega)", "frequency")
    _differs(v, "omega-reversed", "omega -> -omega")


def test_retarded_given_for_an_advanced_derivation():
    Delta = sp.Symbol("Delta", positive=True)
    q = sr.spin("q", sp.Rational(1, 2))
    r = sr.Model(Delta * q.z).response(q.minus, q.plus, convention=sr.Convention(prescription="advanced"))
    assert compare(r.derivation, "tanh(beta*Delta/2)/(Delta - (omega - I*eta))", "frequency").agrees
    v = compare(r.derivation, "tanh(beta*Delta/2)/(Delta - (omega + I*eta))", "frequency")
    _differs(v, "advanced", "retarded instead of advanced")


def test_time_reversed(two_level):
    _differs(compare(two_level, "-2*tanh(beta*Delta/2)*sin(Delta*t)", "time"), "sign", "overall sign")
    v = compare(two_level_ladder_derivation(), "I*tanh(beta*Delta/2)*exp(I*Delta*t)", "time")
    _differs(v, "t-reversed", "t -> -t")


def two_level_ladder_derivation():
    Delta = sp.Symbol("Delta", positive=True)
    q = sr.spin("q", sp.Rational(1, 2))
    return sr.Model(Delta * q.z).response(q.minus, q.plus).derivation


def test_van_vleck_with_a_wrong_degeneracy_in_Z(spin_one_zfs):
    v = compare(spin_one_zfs, "2*(1 - exp(-beta*D))/(D*(1 + exp(-beta*D)))")
    _differs(v, "partition-degeneracy", "E = D with degeneracy 1 instead of 2")


def test_van_vleck_with_a_level_missing_from_Z(spin_one_zfs):
    # Z = 2 exp(-beta D): the ground level (E = 0) left out
    v = compare(spin_one_zfs, "2*(1 - exp(-beta*D))/(D*2*exp(-beta*D))")
    _differs(v, "partition-level-missing", "leaves out the level E = 0")


def test_van_vleck_without_Z(spin_one_zfs):
    v = compare(spin_one_zfs, "2*(1 - exp(-beta*D))/D")
    _differs(v, "partition-missing", "missing partition function")


def test_van_vleck_with_the_infinite_temperature_Z(spin_one_zfs):
    v = compare(spin_one_zfs, "2*(1 - exp(-beta*D))/(3*D)")
    _differs(v, "partition-constant", "infinite-temperature value")


def test_partition_function_with_a_shifted_energy_zero(dimer):
    # Z with the singlet as zero: exp(-beta c) times ours with c = 3J/4 -- not equal, but named
    v = compare(dimer, "1 + 3*exp(-beta*J)", "partition")
    _differs(v, "energy-zero", "energy zero shifted by c = 3*J/4")
    assert "overall factor exp(-beta*c)" in v.diagnosis


def test_partition_function_with_an_extra_level(spin_one_field):
    v = compare(spin_one_field, "1 + exp(-beta*(D+h)) + exp(-beta*(D-h)) + exp(-3*beta*D)", "partition")
    _differs(v, "partition-extra-term", "E = 3*D, not an energy of the spectrum")


def test_wrong_level_energy_is_fitted(spin_one_field):
    Zw = "(1 + exp(-beta*(D+2*h)) + exp(-beta*(D-h)))"
    formula = (f"beta*((exp(-beta*(D+2*h)) + exp(-beta*(D-h)))/{Zw}"
               f" - ((exp(-beta*(D-h)) - exp(-beta*(D+2*h)))/{Zw})^2)")
    v = compare(spin_one_field, formula)
    _differs(v, "level-energy", "E = D + h (degeneracy 1) moved to E = D + 2*h")


def test_wrong_level_energy_in_Z_only(spin_one_field):
    v = compare(spin_one_field, "1 + exp(-beta*(D+h/2)) + exp(-beta*(D-h))", "partition")
    _differs(v, "level-energy", "at E = D + h/2")


def test_rounded_constants(dimer):
    v = compare(dimer, "2*beta/(3.0001 + exp(beta*J))")
    _differs(v, "rounded", "agrees to about 4 digits")


def test_unrecognised_difference_still_gives_a_counterexample(dimer):
    v = compare(dimer, "beta/(1 + exp(beta*J))^2")
    assert not v.agrees and v.diagnosis is None and v.slip is None
    assert v.text().startswith("differs (no common slip recognised)")
    point, theirs, ours = v.counterexample
    assert set(point) == {"J", "beta"}
    assert abs(theirs - ours) > CLEARLY_DIFFERENT


def test_counterexample_uses_the_names_of_the_formula(dimer, two_level):
    point, _, _ = compare(dimer, "2*T/(3 + exp(J*T))").counterexample
    assert set(point) == {"J", "T"}
    point, _, _ = compare(two_level, "-2*Delta*tanh(beta*Delta/2)/(Delta^2 - omega^2)",
                          "frequency").counterexample
    assert isinstance(point["omega"], complex) and point["omega"].imag > 0


def test_units_k_B_and_hbar():
    # J in meV, T in kelvin: beta = 1/(k_B T) with k_B = 0.0861733 meV/K (CODATA 2018; common practice)
    J = sp.Symbol("J", real=True)
    a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    d = sr.Model(J * (a.vec @ b.vec)).response(a.z + b.z).derivation
    units = {"k_B": 0.0861733}
    assert compare(d, "2/(k_B*T*(3 + exp(J/(k_B*T))))", units=units).agrees
    v = compare(d, "2/(k_B*T*(3 + exp(2*J/(k_B*T))))", units=units)
    _differs(v, "coupling", "J -> 2*J")
    # chi(t) = (i/hbar) theta(t) <[A(t), B]> with A(t) = exp(iHt/hbar) A exp(-iHt/hbar)
    Delta = sp.Symbol("Delta", positive=True)
    q = sr.spin("q", sp.Rational(1, 2))
    d2 = sr.Model(Delta * q.z).response(2 * q.x).derivation
    # hbar in meV ps, rounded (common practice); the identity holds for any value
    assert compare(d2, "2*tanh(beta*Delta/2)*sin(Delta*t/hbar)/hbar", "time", units={"hbar": 0.6582}).agrees


def test_verdict_is_deterministic_for_a_seed(dimer):
    f = "2*beta/(3 + exp(-beta*J))"
    assert compare(dimer, f, seed=3) == compare(dimer, f, seed=3)
    assert compare(dimer, f, samples=4).counterexample is not None


# ------------------------------------------------------------------ bad input
@pytest.mark.parametrize("kwargs, words", [
    ({"quantity": "static"}, "quantity"),
    ({"samples": 2}, "samples"),
    ({"samples": 5.0}, "samples"),
    ({"seed": "x"}, "seed"),
    ({"units": 1.0}, "units"),
    ({"units": {"c": 1}}, "units key"),
    ({"units": {"k_B": -1}}, "positive"),
])
def test_bad_arguments_raise_input_error(dimer, kwargs, words):
    kw = dict(kwargs)
    quantity = kw.pop("quantity", "isothermal")
    with pytest.raises(InputError, match=words):
        compare(dimer, BLEANEY_BOWERS, quantity, **kw)


def test_bad_formulas_raise_input_error(dimer):
    with pytest.raises(InputError, match="derivation"):
        compare("not a derivation", BLEANEY_BOWERS)
    with pytest.raises(InputError, match="formula"):
        compare(dimer, 1.5)
    with pytest.raises(InputError, match="omega and eta belong to quantity 'frequency'"):
        compare(dimer, "beta/(1 + omega)")
    with pytest.raises(InputError, match="t belongs to quantity 'time'"):
        compare(dimer, "beta*t")
    with pytest.raises(InputError, match="units="):
        compare(dimer, "beta/k_B")
    with pytest.raises(InputError, match="'Jx'"):
        compare(dimer, sp.Symbol("Jx") * sr.beta)
    with pytest.raises(ParseError):
        compare(dimer, "2*beta/(3 + exp(beta*Jx))")
    with pytest.raises(ParseError):
        compare(dimer, "2*beta/(3 + ")


def test_advanced_time_comparison_is_refused():
    Delta = sp.Symbol("Delta", positive=True)
    q = sr.spin("q", sp.Rational(1, 2))
    r = sr.Model(Delta * q.z).response(q.x, convention=sr.Convention(prescription="advanced"))
    with pytest.raises(InputError, match="advanced"):
        compare(r.derivation, "0", "time")


def test_quantities_are_the_documented_ones():
    assert QUANTITIES == ("isothermal", "isolated", "frequency", "time", "partition")


def test_doctests_of_the_public_objects_run():
    # @public sets __module__ = "symresp", which hides these docstrings from --doctest-modules
    for obj in (compare, Verdict):
        for test in doctest.DocTestFinder().find(obj, obj.__name__, module=False, globs={}):
            assert doctest.DocTestRunner().run(test).failed == 0, test.name
