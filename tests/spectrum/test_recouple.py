"""Total-spin (recoupled) sectors of isotropic spin clusters against published level schemes
and exact diagonalisation built from numpy Kronecker products (independent of symresp).

Isotropic exchange conserves the total spin S_T; a field along z only splits each multiplet
by h M. The derivation then uses blocks of fixed (momentum class, S_T, M) whose energies are
found once per family of multiplets. Checked: the dimer's interval rule, the square of four
spins (pair spins of opposite corners), susceptibilities at random points, mixed spins, a
local operator (which joins different S_T), and the fallback when an anisotropy breaks S_T.
"""

from __future__ import annotations

from collections import Counter
from fractions import Fraction
from functools import lru_cache, reduce

import numpy as np
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp import numeric
from symresp.models import System
from symresp.spectrum import solve
from symresp.spectrum._recouple import recouple

from ..conftest import ATOL_EXACT, RTOL_EXACT, assert_close
from ..strategies import spin_matrices

J = sp.Symbol("J", positive=True)
J2 = sp.Symbol("J2", real=True)
h = sp.Symbol("h", real=True)
D = sp.Symbol("D", real=True)


def _kron_sites(spins: list[Fraction]):
    """Per site the matrices x, y, z of spin S_i on the product space (site 0 leftmost)."""
    mats = [spin_matrices(S) for S in spins]
    eyes = [np.eye(int(2 * S + 1)) for S in spins]
    out = []
    for i in range(len(spins)):
        out.append({c: reduce(np.kron, [mats[i][c] if k == i else eyes[k]
                                        for k in range(len(spins))]) for c in "xyz"})
    return out


def _dot(a, b):
    return sum(a[c] @ b[c] for c in "xyz")


def _labels(level) -> set:
    return {dict(q).get("S") for q in level.quantum_numbers}


# ------------------------------------------------------------------ level schemes
def test_spin_five_halves_dimer_follows_the_interval_rule():
    # E(S_T, M) = J/2 [S_T(S_T+1) - 2 S(S+1)] + h M (common practice: the Lande interval
    # rule of two coupled spins), one level per (S_T, M), each labelled by its S_T.
    a, b = sr.spin("a", "5/2"), sr.spin("b", "5/2")
    model = sr.Model(J * (a.vec @ b.vec) + h * (a.z + b.z))
    assert recouple(model.system, solve(model.system).structure) is not None
    S = sp.Rational(5, 2)
    expected = Counter()
    for ST in range(6):
        for M in range(-ST, ST + 1):
            expected[(sp.expand(J / 2 * (ST * (ST + 1) - 2 * S * (S + 1)) + h * M), ST)] += 1
    got = Counter()
    for lv in model.levels():
        (ST,) = _labels(lv)
        got[(sp.expand(lv.energy), ST)] += lv.degeneracy
    assert got == expected


def test_square_of_four_spins_five_halves_follows_the_pair_spin_scheme():
    # Source: Kambe's decomposition for a square of four spins (from memory):
    # H = J (S1.S2 + S2.S3 + S3.S4 + S4.S1) = J/2 [S_T^2 - S_13^2 - S_24^2],
    # E = J/2 [S_T(S_T+1) - S_13(S_13+1) - S_24(S_24+1)], 2 S_T + 1 states each.
    s = [sr.spin(f"c{i}", "5/2") for i in range(4)]
    model = sr.Model(sum((J * (s[i].vec @ s[(i + 1) % 4].vec) for i in range(4)),
                         sr.Operator.scalar(0)))
    expected: Counter = Counter()
    for S13 in range(6):
        for S24 in range(6):
            for ST in range(abs(S13 - S24), S13 + S24 + 1):
                E = sp.expand(J / 2 * (ST * (ST + 1) - S13 * (S13 + 1) - S24 * (S24 + 1)))
                expected[E] += 2 * ST + 1
    got = Counter()
    for lv in model.levels():
        got[sp.expand(lv.energy)] += lv.degeneracy
    assert got == expected
    spec = solve(model.system)
    assert "S (total spin)" in spec.describe() and "k (ring translation)" in spec.describe()


# ------------------------------------------------------------------ against numerics
@lru_cache(maxsize=None)
def _dimer():
    a, b = sr.spin("a", "5/2"), sr.spin("b", "5/2")
    r = sr.Model(J * (a.vec @ b.vec) + h * (a.z + b.z)).response(a.z + b.z)
    return r, r.numpy()


@settings(max_examples=15, deadline=None)
@given(Jv=st.floats(0.1, 3.0), hv=st.floats(-2.0, 2.0), T=st.floats(0.2, 5.0))
def test_spin_five_halves_dimer_susceptibility_matches_exact_diagonalisation(Jv, hv, T):
    r, mod = _dimer()
    ops = _kron_sites([Fraction(5, 2)] * 2)
    H = Jv * _dot(ops[0], ops[1]) + hv * (ops[0]["z"] + ops[1]["z"])
    A = ops[0]["z"] + ops[1]["z"]
    ref = numeric.solve(H, A, A, 1.0 / T)
    assert_close(mod.chi_isothermal(T, J=Jv, h=hv), ref.isothermal, what="isothermal")
    assert_close(mod.chi_isolated(T, J=Jv, h=hv), ref.isolated, atol=1e-10, what="isolated")


def test_mixed_spin_cluster_matches_exact_diagonalisation():
    # S = 1 - S = 3/2 - S = 1 chain. Two exchange constants mix inside the multiplet blocks
    # (total moment); with one, the local S^x of the middle spin (joining different S_T).
    u, v, w = sr.spin("u", 1), sr.spin("v", "3/2"), sr.spin("w", 1)
    ops = _kron_sites([Fraction(1), Fraction(3, 2), Fraction(1)])
    Mz = sum(o["z"] for o in ops)
    field = h * (u.z + v.z + w.z)
    T = 0.8
    two = sr.Model(J * (u.vec @ v.vec) + J2 * (v.vec @ w.vec) + field)
    assert recouple(two.system, solve(two.system).structure) is not None
    p = {"J": 1.3, "J2": -0.45, "h": 0.27}
    H = p["J"] * _dot(ops[0], ops[1]) + p["J2"] * _dot(ops[1], ops[2]) + p["h"] * Mz
    r = two.response(u.z + v.z + w.z)
    ref = numeric.solve(H, Mz, Mz, 1.0 / T)
    assert_close(r.evaluate("isothermal", params=p, T=T), ref.isothermal, what="isothermal")
    one = sr.Model(J * (u.vec @ v.vec + v.vec @ w.vec) + field)
    mod = one.response(v.x).numpy()
    H = p["J"] * (_dot(ops[0], ops[1]) + _dot(ops[1], ops[2])) + p["h"] * Mz
    ref = numeric.solve(H, ops[1]["x"], ops[1]["x"], 1.0 / T)
    q = {"J": p["J"], "h": p["h"]}
    assert_close(mod.chi_isothermal(T, **q), ref.isothermal, what="local isothermal")
    assert_close(mod.chi_isolated(T, **q), ref.isolated, what="local isolated")


def test_local_operator_of_spin_one_triangle_joins_total_spins():
    # S^x of one site of an S = 1 triangle connects multiplets of different S_T.
    t = [sr.spin(f"t{i}", 1) for i in range(3)]
    H = sum((J * (t[i].vec @ t[(i + 1) % 3].vec) for i in range(3)), sr.Operator.scalar(0)) + \
        h * (t[0].z + t[1].z + t[2].z)
    r = sr.Model(H).response(t[0].x)
    d = r.derivation
    spins = {i: dict(lv.quantum_numbers[0]).get("S") for i, lv in enumerate(d.levels)}
    assert any(spins[a] != spins[b] for (a, b) in d.level_weights)
    ops = _kron_sites([Fraction(1)] * 3)
    mod = r.numpy()
    for Jv, hv, T in ((1.0, 0.3, 0.7), (0.6, -0.8, 2.5)):
        Hn = Jv * sum(_dot(ops[i], ops[(i + 1) % 3]) for i in range(3)) + \
            hv * sum(o["z"] for o in ops)
        ref = numeric.solve(Hn, ops[0]["x"], ops[0]["x"], 1.0 / T)
        assert_close(mod.chi_isothermal(T, J=Jv, h=hv), ref.isothermal, what="isothermal")
        assert_close(mod.chi_isolated(T, J=Jv, h=hv), ref.isolated, what="isolated")
        omega = np.array([0.0, 0.4, 1.7])
        assert_close(mod.chi_omega(omega, T, J=Jv, h=hv, eta=0.05), ref.frequency(omega, 0.05),
                     rtol=RTOL_EXACT, atol=ATOL_EXACT, what="chi(omega)")


def test_anisotropy_breaks_total_spin_and_the_old_blocks_are_used():
    a, b = sr.spin("a", 1), sr.spin("b", "3/2")
    model = sr.Model(J * (a.vec @ b.vec) + D * b.z ** 2 + h * (a.z + b.z))
    assert recouple(model.system, solve(model.system).structure) is None
    r = model.response(a.z + b.z)
    ops = _kron_sites([Fraction(1), Fraction(3, 2)])
    p = {"J": 0.9, "D": 0.35, "h": 0.2}
    H = p["J"] * _dot(ops[0], ops[1]) + p["D"] * ops[1]["z"] @ ops[1]["z"] + \
        p["h"] * (ops[0]["z"] + ops[1]["z"])
    A = ops[0]["z"] + ops[1]["z"]
    ref = numeric.solve(H, A, A, 1.0 / 0.6)
    assert_close(r.evaluate("isothermal", params=p, T=0.6), ref.isothermal, what="isothermal")


def test_field_along_x_is_not_recoupled_but_still_derives():
    a, b = sr.spin("a", 1), sr.spin("b", 1)
    model = sr.Model(J * (a.vec @ b.vec) + h * (a.x + b.x))
    assert recouple(model.system, solve(model.system).structure) is None
    assert len(model.levels()) > 0


def test_sector_restricted_model_is_not_recoupled():
    a, b = sr.spin("a", 1), sr.spin("b", 1)
    system = System.build(J * (a.vec @ b.vec), sector={a.z + b.z: 0})
    assert recouple(system, solve(system).structure) is None
