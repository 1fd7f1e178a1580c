"""Large single spins (zero-field splitting, any field direction) and clusters of S = 5/2 ions
with isotropic exchange, against textbook formulas and exact diagonalisation of matrices built
here (independently of the symbolic path)."""

from __future__ import annotations

import functools

import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp import numeric

from ..conftest import ATOL_LOOSE, RTOL_LOOSE, assert_close

D, E, h = sp.Symbol("D", real=True), sp.Symbol("E", real=True), sp.Symbol("h", real=True)
J = sp.Symbol("J", positive=True)


def _spin_matrices(S2: int):
    """(Sx, Sy, Sz) of spin S = S2/2, basis m = S, ..., -S (common practice)."""
    S = S2 / 2
    m = S - np.arange(S2 + 1)
    up = np.zeros((S2 + 1, S2 + 1))
    for k in range(1, S2 + 1):          # <m+1|S+|m> = sqrt(S(S+1) - m(m+1))
        up[k - 1, k] = np.sqrt(S * (S + 1) - m[k] * (m[k] + 1))
    return (up + up.T) / 2, (up - up.T) / 2j, np.diag(m)


def _levels(r) -> list[tuple[sp.Expr, int]]:
    return [(lv.energy, lv.degeneracy) for lv in r.levels]


def _same_levels(derived, expected) -> bool:
    left = sorted(derived, key=lambda x: sp.default_sort_key(x[0]))
    pool = list(expected)
    for e, g in left:
        match = [k for k, (f, d) in enumerate(pool) if d == g and sp.simplify(e - f) == 0]
        if not match:
            return False
        pool.pop(match[0])
    return not pool


# ---------------------------------------------------------------- zero-field splitting
def test_spin_one_zero_field_levels_are_textbook():
    # H = D Sz^2 + E (Sx^2 - Sy^2), S = 1: levels 0 (|m=0>) and D -+ E (from memory).
    s = sr.spin("s", 1)
    r = sr.Model(D * s.z**2 + E * (s.x**2 - s.y**2)).response(s.z)
    assert _same_levels(_levels(r), [(0, 1), (D - E, 1), (D + E, 1)])


def test_spin_three_halves_zero_field_splitting_is_textbook():
    # S = 3/2: two Kramers doublets at 5D/4 -+ sqrt(D^2 + 3E^2), split by 2 sqrt(D^2 + 3E^2)
    # (from memory).
    s = sr.spin("s", sp.Rational(3, 2))
    r = sr.Model(D * s.z**2 + E * (s.x**2 - s.y**2)).response(s.z)
    root = sp.sqrt(D**2 + 3 * E**2)
    assert _same_levels(_levels(r), [(sp.Rational(5, 4) * D - root, 2),
                                     (sp.Rational(5, 4) * D + root, 2)])


@functools.lru_cache(maxsize=None)
def _ion(S2: int, field: str):
    s = sr.spin("s", sp.Rational(S2, 2))
    H = D * s.z**2 + E * (s.x**2 - s.y**2) + h * (s.z if field == "z" else s.x)
    r = sr.Model(H).response(s.z)
    return r, r.numpy()


def _ion_reference(S2: int, field: str, Dv: float, Ev: float, hv: float, T: float):
    sx, sy, sz = _spin_matrices(S2)
    H = Dv * sz @ sz + Ev * (sx @ sx - sy @ sy) + hv * (sz if field == "z" else sx)
    return numeric.solve(H, sz, sz, 1.0 / T)


@settings(max_examples=6)
@given(Dv=st.floats(-2.0, 2.0), Ev=st.floats(0.0, 0.6), hv=st.floats(-1.5, 1.5),
       T=st.sampled_from([0.5, 2.0]))
def test_spin_five_halves_ion_in_an_axial_field_matches_exact_diagonalisation(Dv, Ev, hv, T):
    # E changes m by 2: two blocks of 3 states (m = 5/2, 1/2, -3/2 and the others).
    _, f = _ion(5, "z")
    ref = _ion_reference(5, "z", Dv, Ev, hv, T)
    scale = max(1.0, abs(ref.isothermal))
    assert_close(f.chi_isothermal(T, D=Dv, E=Ev, h=hv) / scale, ref.isothermal / scale,
                 what="isothermal")
    assert_close(f.chi_isolated(T, D=Dv, E=Ev, h=hv) / scale, ref.isolated / scale,
                 what="isolated")


@pytest.mark.slow
@pytest.mark.parametrize("S2,field", [(20, "z"), (20, "x"), (5, "x")])
def test_large_ion_matches_exact_diagonalisation(S2, field):
    # A field along x leaves no symmetry: one semi-closed block of 2S + 1 states.
    r, f = _ion(S2, field)
    assert len(r.levels) == S2 + 1
    rng = np.random.default_rng(11)
    for Dv, Ev, hv, T in zip(rng.uniform(-1, 1, 3), rng.uniform(0, 0.3, 3),
                             rng.uniform(-1, 1, 3), [0.7, 3.0, 20.0]):
        ref = _ion_reference(S2, field, Dv, Ev, hv, T)
        # Double precision on blocks of up to 21 states: the high-temperature sums cancel
        # between close levels (measured 8e-9 relative at T = 20), hence the loose tolerance.
        scale = max(1.0, abs(ref.isothermal))
        assert_close(f.chi_isothermal(T, D=Dv, E=Ev, h=hv) / scale, ref.isothermal / scale,
                     rtol=RTOL_LOOSE, atol=ATOL_LOOSE, what=f"isothermal at D={Dv}, E={Ev}, h={hv}, T={T}")
        assert_close(f.chi_omega(0.4, T, D=Dv, E=Ev, h=hv, eta=0.3), ref.frequency(0.4, 0.3),
                     rtol=RTOL_LOOSE, atol=ATOL_LOOSE, what="chi(omega)")


# ---------------------------------------------------------------- S = 5/2 dimer
def test_spin_five_halves_dimer_follows_the_lande_interval_rule():
    # E(S_T) = J/2 [S_T(S_T + 1) - 2 S(S + 1)], S_T = 0..5, degeneracy 2 S_T + 1
    # (common practice).
    a, b = sr.spin("a", sp.Rational(5, 2)), sr.spin("b", sp.Rational(5, 2))
    r = sr.Model(J * (a.vec @ b.vec)).response(a.z + b.z)
    S = sp.Rational(5, 2)
    expected = [(J / 2 * (ST * (ST + 1) - 2 * S * (S + 1)), 2 * ST + 1) for ST in range(6)]
    assert _same_levels(_levels(r), expected)


@functools.lru_cache(maxsize=None)
def _dimer52():
    a, b = sr.spin("a", sp.Rational(5, 2)), sr.spin("b", sp.Rational(5, 2))
    r = sr.Model(J * (a.vec @ b.vec) + h * (a.z + b.z)).response(a.z + b.z)
    return r, r.numpy()


@settings(max_examples=8)
@given(Jv=st.floats(0.05, 3.0), hv=st.floats(-2.0, 2.0), T=st.sampled_from([0.3, 1.0, 6.0]))
def test_spin_five_halves_dimer_susceptibility_matches_exact_diagonalisation(Jv, hv, T):
    _, f = _dimer52()
    sx, sy, sz = _spin_matrices(5)
    one = np.eye(6)
    Sa = [np.kron(x, one) for x in (sx, sy, sz)]
    Sb = [np.kron(one, x) for x in (sx, sy, sz)]
    H = Jv * sum(x @ y for x, y in zip(Sa, Sb)) + hv * (Sa[2] + Sb[2])
    M = Sa[2] + Sb[2]
    ref = numeric.solve(H, M, M, 1.0 / T)
    scale = max(1.0, abs(ref.isothermal))
    assert_close(f.chi_isothermal(T, J=Jv, h=hv) / scale, ref.isothermal / scale, what="isothermal")
    assert_close(f.chi_isolated(T, J=Jv, h=hv) / scale, ref.isolated / scale, what="isolated")
