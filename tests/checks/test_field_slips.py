"""Slips of hand derivations at finite field, named by ``compare``: the missing
-beta <A><B> term and a whole multiplet placed at the wrong energy.

Published formula used (deliberately altered below): the spin-1/2 dimer in a field,
H = J S1.S2 - h (S1z + S2z), A = B = S1z + S2z, levels -3J/4 (singlet) and J/4 - h m (triplet,
m = 1, 0, -1); chi = beta(<M^2> - <M>^2) (Source: B. Bleaney and K. D. Bowers, Proc. R. Soc. A
214, 451 (1952), in a field; common practice).
"""

from __future__ import annotations

import pytest
import sympy as sp

import symresp as sr
from symresp.checks import compare

HALF = sp.Rational(1, 2)


def _formulas(triplet: str = "J/4") -> tuple[str, str]:
    """(beta <M^2>, beta <M>^2) of the dimer in a field as text, the triplet at ``triplet``."""
    up = f"exp(-({triplet} - h)/T)"
    zero = f"exp(-({triplet})/T)"
    down = f"exp(-({triplet} + h)/T)"
    Z = f"(exp(3*J/(4*T)) + {up} + {zero} + {down})"
    return f"({up} + {down})/({Z}*T)", f"({up} - {down})**2/({Z}**2*T)"


@pytest.fixture(scope="module")
def dimer_in_field():
    J = sp.Symbol("J", positive=True)
    h = sp.Symbol("h", real=True)
    a, b = sr.spin("a", HALF), sr.spin("b", HALF)
    return sr.Model(J * (a.vec @ b.vec) - h * (a.z + b.z)).response(a.z + b.z).derivation


def test_the_correct_field_formula_agrees(dimer_in_field):
    second, mean = _formulas()
    assert compare(dimer_in_field, f"{second} - {mean}").agrees


def test_missing_mean_product_is_named(dimer_in_field):
    second, _ = _formulas()
    v = compare(dimer_in_field, second)
    assert not v.agrees and v.slip == "mean-product-missing"
    assert "-beta*<A>*<B>" in v.diagnosis


def test_missing_mean_product_is_invisible_in_zero_field():
    # at h = 0, <M> = 0: leaving out the term is no slip there (common practice)
    J = sp.Symbol("J", positive=True)
    a, b = sr.spin("a", HALF), sr.spin("b", HALF)
    d = sr.Model(J * (a.vec @ b.vec)).response(a.z + b.z).derivation
    Z = "(exp(3*J/(4*T)) + 3*exp(-J/(4*T)))"
    assert compare(d, f"2*exp(-J/(4*T))/({Z}*T)").agrees


def test_whole_multiplet_at_the_wrong_energy_is_named(dimer_in_field):
    # the triplet placed J/2 too high (gap 3J/2; no coupling convention gives that)
    second, mean = _formulas(triplet="3*J/4")
    v = compare(dimer_in_field, f"{second} - {mean}")
    assert not v.agrees and v.slip == "multiplet-energy"
    assert "S=1" in v.diagnosis and "shifted by J/2" in v.diagnosis


def test_multiplet_shift_by_the_field_is_named(dimer_in_field):
    # the triplet moved by the Zeeman energy h as a whole (a field added to every component)
    second, mean = _formulas(triplet="J/4 + h")
    v = compare(dimer_in_field, f"{second} - {mean}")
    assert v.slip == "multiplet-energy" and "shifted by h" in v.diagnosis


def test_multiplet_of_a_larger_cluster():
    # spin 1/2 with spin 1 (quartet and doublet): the doublet at the wrong energy. Levels
    # J/2 - h m (S = 3/2, m = 3/2 ... -3/2) and -J - h m (S = 1/2)
    J = sp.Symbol("J", positive=True)
    h = sp.Symbol("h", real=True)
    u, w = sr.spin("u", HALF), sr.spin("w", sp.Integer(1))
    d = sr.Model(J * (u.vec @ w.vec) - h * (u.z + w.z)).response(u.z + w.z).derivation
    ms_q = ["3/2", "1/2", "-1/2", "-3/2"]
    ms_d = ["1/2", "-1/2"]
    quartet = [(f"exp(-(J/2 - h*({m}))/T)", m) for m in ms_q]
    doublet = [(f"exp(-(-J/2 - h*({m}))/T)", m) for m in ms_d]     # slip: -J/2, not -J
    terms = quartet + doublet
    Z = "(" + " + ".join(t for t, _ in terms) + ")"
    m2 = "(" + " + ".join(f"({m})**2*{t}" for t, m in terms) + ")"
    m1 = "(" + " + ".join(f"({m})*{t}" for t, m in terms) + ")"
    v = compare(d, f"{m2}/({Z}*T) - {m1}**2/({Z}**2*T)")
    # with two multiplets, either one moved describes the slip; both are named
    assert v.slip == "multiplet-energy"
    assert "S=1/2" in v.diagnosis and "S=3/2" in v.diagnosis and "J/2" in v.diagnosis
