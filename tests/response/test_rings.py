"""Heisenberg rings in a field: derived chi against exact diagonalisation built independently.

The 4-site ring runs by default; the 6- and 8-site rings (semi-closed: some levels are roots of
cubic and higher factors) are marked slow.
"""

from __future__ import annotations


import pytest
import sympy as sp

import symresp as sr
from symresp import numeric

from .._pieces import kron_ring
from ..conftest import ATOL_EXACT, RTOL_EXACT, assert_close

J = sp.Symbol("J", positive=True)
h = sp.Symbol("h", real=True)


def _kron_ring(N: int, Jv: float, hv: float):
    H, ops = kron_ring(N, Jv, hv)
    return H, sum(ops["z"]), sum(ops["x"])


def _check_ring(N: int):
    s = [sr.spin(f"s{i}", "1/2") for i in range(N)]
    H = sum((J * (s[i].vec @ s[(i + 1) % N].vec) for i in range(N)), sr.Operator.scalar(0))
    H = H + h * sum((x.z for x in s), sr.Operator.scalar(0))
    model = sr.Model(H)
    Mz = sum((x.z for x in s), sr.Operator.scalar(0))
    Mx = sum((x.x for x in s), sr.Operator.scalar(0))
    Jv, hv, T = 1.0, 0.3, 0.7
    Hn, Mzn, Mxn = _kron_ring(N, Jv, hv)
    for A, An in ((Mz, Mzn), (Mx, Mxn)):
        r = model.response(A)
        ref = numeric.solve(Hn, An, An, 1 / T)
        for kind, want in (("isothermal", ref.isothermal), ("isolated", ref.isolated)):
            got = r.evaluate(kind, params={"J": Jv, "h": hv}, T=T)
            assert_close(got, want, rtol=RTOL_EXACT, atol=ATOL_EXACT, what=f"{N}-ring {kind}")
        got = r.evaluate("frequency", params={"J": Jv, "h": hv}, T=T, omega_value=0.4 + 0.05j)
        assert_close(got, ref.frequency(0.4, 0.05), rtol=RTOL_EXACT, atol=ATOL_EXACT, what=f"{N}-ring chi(omega)")


def test_four_site_ring_matches_exact_diagonalisation():
    _check_ring(4)


@pytest.mark.slow
@pytest.mark.parametrize("N", [6, 8])
def test_larger_rings_match_exact_diagonalisation(N):
    _check_ring(N)


def test_parametric_cubic_block_is_semi_closed_and_matches_exact_diagonalisation():
    # Spin 1 with axial D and a field with x and z components: the 3x3 block mixes three
    # parameters and its characteristic polynomial is an irreducible cubic, so the levels are
    # kept as exact implicit roots (LevelRoot) and evaluated numerically only at numbers.
    D, hz, hx = (sp.Symbol(n, positive=True) for n in ("D", "hz", "hx"))
    s = sr.spin("s", 1)
    r = sr.Model(D * s.z * s.z + hz * s.z + hx * s.x).response(s.x)
    assert not r.is_closed_form
    assert all(lv.implicit for lv in r.levels)
    p = {"D": 1.3, "hz": 0.4, "hx": 0.7}
    ref = r.reference(params=p, T=0.8)
    assert_close(r.evaluate("isothermal", params=p, T=0.8), ref.isothermal, what="isothermal")
    assert_close(r.evaluate("isolated", params=p, T=0.8), ref.isolated, what="isolated")
    # With rational parameter values the implicit roots become exact algebraic numbers.
    E0 = r.levels[0].energy.subs({D: 1, hz: sp.Rational(1, 2), hx: sp.Rational(1, 3)})
    assert isinstance(E0, sp.CRootOf)
