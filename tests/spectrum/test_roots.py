"""Implicit levels (LevelRoot): exact roots of parametric characteristic factors."""

from __future__ import annotations

import mpmath
import numpy as np
import sympy as sp
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from symresp.spectrum import (LevelRoot, atoms_outside_roots, freeze_roots, replace_outside_roots,
                             root_float, root_value)

from ..conftest import ATOL_ROOTS, RTOL_EXACT, RTOL_ROOTS

a = sp.Symbol("a", positive=True)


def test_roots_are_ascending_and_solve_their_polynomial():
    values = [float(LevelRoot(k, 1, 0, -a, 1).subs(a, sp.Float(3.0))) for k in range(3)]
    # Against numpy.roots (a general-purpose reference library).
    assert np.allclose(values, np.sort(np.roots([1, 0, -3, 1]).real), rtol=1e-13)
    assert values == sorted(values)


def test_latex_of_a_root_and_of_its_powers():
    r = LevelRoot(1, 1, 0, -a, 1)
    assert sp.latex(r) == r"\varepsilon_{1}"
    assert sp.latex(r**2) == r"\varepsilon_{1}^{2}"
    assert sp.latex(2 * r**3 - r) == r"2 \varepsilon_{1}^{3} - \varepsilon_{1}"


def test_rational_coefficients_give_an_exact_algebraic_number():
    assert isinstance(LevelRoot(0, 1, 0, -3, 1), sp.CRootOf)


# ----------------------------------------------------------- stored values of exact roots
@st.composite
def _integer_polynomials(draw):
    """An irreducible integer polynomial of degree 3 to 5 (roots real or complex)."""
    x = sp.Symbol("x")
    degree = draw(st.integers(3, 5))
    coeffs = [draw(st.integers(1, 4))] + [draw(st.integers(-9, 9)) for _ in range(degree)]
    poly = sp.Poly(coeffs, x)
    assume(poly.is_irreducible)
    return poly


def _close(value, expected) -> bool:
    return abs(value - expected) <= ATOL_ROOTS + RTOL_ROOTS * abs(expected)


@settings(max_examples=10)
@given(_integer_polynomials())
def test_stored_root_values_are_the_indexed_roots_to_seventy_digits(poly):
    # Each stored value solves the polynomial to 70 digits (residual against the size of its
    # terms) and is the root sympy gives that index (sympy's isolation at 15 digits; refining
    # complex roots to 70 digits takes sympy tens of seconds).
    coeffs = [int(c) for c in poly.all_coeffs()]
    values = [root_value(sp.CRootOf(poly, k)) for k in range(poly.degree())]
    with mpmath.workdps(80):
        for k, v in enumerate(values):
            residual = mpmath.polyval(coeffs, v)
            size = sum(abs(c) * abs(v) ** i for i, c in enumerate(reversed(coeffs)))
            assert abs(residual) <= RTOL_ROOTS * size, (poly, k)
            guess = complex(sp.CRootOf(poly, k).evalf(15))
            assert abs(complex(v) - guess) <= RTOL_EXACT * (1 + abs(guess)), (poly, k)


def test_stored_real_roots_match_sympy_refinement():
    # Reference: sympy's own isolation and refinement of each real CRootOf, at 75 digits.
    poly = sp.Poly([4, 16, 2, -48, -31, 28, 24, 0, -2], sp.Symbol("x"))
    for k in range(poly.degree()):
        r = sp.CRootOf(poly, k)
        with mpmath.workdps(80):
            expected = mpmath.mpmathify(r.evalf(75))
            assert _close(root_value(r), expected), k
            assert _close(mpmath.mpmathify(root_float(r)), expected), k


def test_stored_root_values_do_not_depend_on_the_callers_precision():
    # The first caller may run at mpmath's default 15 digits; a later one at 60 digits must
    # still read 70 correct digits.
    r = sp.CRootOf(sp.Poly([4, 16, 2, -48, -31, 28, 24, 0, -2], sp.Symbol("x")), 6)
    with mpmath.workdps(15):
        root_value(r)
    with mpmath.workdps(80):
        assert _close(root_value(r), mpmath.mpmathify(r.evalf(75)))


def test_frozen_roots_leave_no_exact_root_behind():
    r = sp.CRootOf(sp.Poly([2, 0, -4, -1], sp.Symbol("x")), 2)
    e = freeze_roots(3 * r**2 - sp.sqrt(2) * r + 1)
    assert not e.has(sp.CRootOf)
    with mpmath.workdps(80):
        expected = mpmath.mpmathify((3 * r**2 - sp.sqrt(2) * r + 1).evalf(75))
        assert _close(mpmath.mpmathify(sp.N(e, 70)), expected)


def test_traversals_outside_roots_agree_with_sympy():
    # The same atoms and the same replacement as sympy's atoms / xreplace, without entering the
    # exact roots (whose polynomial sympy rebuilds on every visit).
    J = sp.Symbol("J", positive=True)
    r = sp.CRootOf(sp.Poly([2, 0, -4, -1], sp.Symbol("x")), 1)
    lam = LevelRoot(2, 1, 0, -J, 1)
    e = 3 * r**2 * J - sp.sqrt(2) * r * lam + J**2 / (1 + r) + lam
    for types in ((sp.CRootOf,), (LevelRoot,), (sp.Pow,), (sp.CRootOf, LevelRoot)):
        inside = r.poly.as_expr().atoms(*types)         # the root's own polynomial: x**3
        assert atoms_outside_roots(e, *types) == e.atoms(*types) - inside, types
    rule = {J: sp.Rational(5, 3), r: sp.Float("0.25", 30)}
    assert replace_outside_roots(e, rule) == e.xreplace(rule)
    assert replace_outside_roots(e, {}) is e
