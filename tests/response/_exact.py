"""Closed forms at exact points, shared by the property tests that compare a derivation with
the numeric reference (tests/response/test_against_numeric.py and its companions)."""

from __future__ import annotations

import numpy as np
import sympy as sp
from hypothesis import assume, note

import symresp as sr
from symresp.errors import BudgetExceeded, ClosedFormError

#: Relative step off a removable singularity of a closed form (e.g. 1/(J1 - J2) at J1 = J2,
#: where two levels meet): the response is analytic there, and 30-digit evaluation 1e-15 away
#: gives the limit to far better than the 1e-10 compared.
NUDGE = sp.Rational(1, 10**15)


def at_point(expr, values: dict, T):
    """``expr`` at the parameter values (by name) and temperature T, by exact replacement
    (``subs`` on large expressions costs far more than ``xreplace``)."""
    expr = sp.sympify(expr)
    rep = {s: sp.nsimplify(values[s.name]) for s in expr.free_symbols if s.name in values}
    rep[sr.beta] = 1 / sp.nsimplify(T)
    return expr.xreplace(rep)


def number(expr, digits: int = 30) -> complex:
    """``expr`` (free of symbols) as a complex number, to ``digits`` digits."""
    # Evaluate each implicit root once (CRootOf re-isolates its root on every evalf call);
    # roots of a block with an imaginary scale (i J R, R real antisymmetric) are imaginary.
    roots = {r: r.evalf(digits + 20) for r in expr.atoms(sp.CRootOf)}
    return complex(sp.N(expr.xreplace(roots) if roots else expr, digits))


def regular_point(r, values: dict, T) -> dict:
    """``values``, or a point 1e-15 (relative) away if a closed form is singular there."""
    exprs = (r.static("isothermal"), r.static("isolated"), r.partition_function())
    if all(np.isfinite(number(at_point(e, values, T))) for e in exprs):
        return values
    return {k: (sp.nsimplify(x) * (1 + (i + 1) * NUDGE)) if x else (i + 1) * NUDGE
            for i, (k, x) in enumerate(sorted(values.items()))}


def response_or_skip(model):
    """The response of a random model, or a skipped example when the model is outside the
    closed form by design (a large parametric factor, or over the budget)."""
    try:
        # Exact diagonalisation on both sides: the numeric reference truncates boson modes
        # at the same cutoff (the cutoff-free route has its own tests in test_routes.py).
        return sr.Model(model.H).response(model.A, model.B, route="lehmann")
    except (ClosedFormError, BudgetExceeded) as err:
        note(f"outside closed form by design: {err}")
        assume(False)
