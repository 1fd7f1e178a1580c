"""Implicit levels (LevelRoot): exact roots of parametric characteristic factors."""

from __future__ import annotations

import numpy as np
import sympy as sp

from symresp.spectrum import LevelRoot

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
