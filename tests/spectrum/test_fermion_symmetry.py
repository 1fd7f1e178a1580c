"""Fermion lattice symmetries: Jordan-Wigner signs, Hubbard rings and chains.

The signed permutations of ``spectrum._symmetry`` are checked against fermion matrices built
here with plain Kronecker products and Jordan-Wigner strings (never through symresp.algebra):
a mode map :math:`U c_p^\\dagger U^{-1} = c_{\\pi(p)}^\\dagger` and the particle-hole map
:math:`U c_p^\\dagger U^{-1} = \\epsilon_p c_p` must hold as matrix identities on the whole
Fock space. Hubbard models are derived with their sectors and compared with exact
diagonalisation of independently built matrices and with published values.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp import numeric
from symresp.algebra import Basis
from symresp.models import System
from symresp.response import derive
from symresp.spectrum import solve
from symresp.spectrum._symmetry import find_symmetries, mode_permutation, particle_hole

from .._pieces import derived_sums

from ..conftest import assert_close

tc = sp.Symbol("tc", positive=True)
U = sp.Symbol("U", positive=True)
h = sp.Symbol("h", real=True)


# ---------------------------------------------------------------- independent fermion matrices
def jw_annihilators(M: int) -> list[np.ndarray]:
    """c_p on 2^M Fock states, first mode most significant, string (-1)^n on earlier modes."""
    c = np.array([[0, 1], [0, 0]], dtype=float)
    z = np.diag([1.0, -1.0])
    out = []
    for p in range(M):
        mat = np.ones((1, 1))
        for q in range(M):
            mat = np.kron(mat, c if q == p else (z if q < p else np.eye(2)))
        out.append(mat)
    return out


def signed_matrix(M: int, fn) -> np.ndarray:
    """The matrix of U|s> = sign |s'> on all 2^M Fock states (same order as the Kronecker)."""
    states = list(itertools.product((0, 1), repeat=M))
    index = {s: i for i, s in enumerate(states)}
    out = np.zeros((len(states), len(states)))
    for j, s in enumerate(states):
        new, sign = fn(s)
        out[index[new], j] = sign
    return out


@settings(max_examples=25, deadline=None)
@given(M=st.integers(1, 5), data=st.data())
def test_mode_permutation_carries_jordan_wigner_signs(M, data):
    perm = data.draw(st.permutations(range(M)))
    c = jw_annihilators(M)
    Umat = signed_matrix(M, lambda s: mode_permutation(s, tuple(perm)))
    assert np.allclose(Umat @ Umat.T, np.eye(2**M))
    for p in range(M):
        assert np.allclose(Umat @ c[p].T @ Umat.T, c[perm[p]].T), f"mode {p} -> {perm[p]}"


@settings(max_examples=25, deadline=None)
@given(M=st.integers(1, 5), data=st.data())
def test_particle_hole_map_carries_jordan_wigner_signs(M, data):
    eps = tuple(data.draw(st.lists(st.sampled_from([1, -1]), min_size=M, max_size=M)))
    c = jw_annihilators(M)
    Umat = signed_matrix(M, lambda s: particle_hole(s, eps))
    assert np.allclose(Umat @ Umat.T, np.eye(2**M))
    for p in range(M):
        assert np.allclose(Umat @ c[p].T @ Umat.T, eps[p] * c[p]), f"mode {p}"


# ---------------------------------------------------------------- Hubbard models
def hubbard(L: int, *, ring: bool, field: bool = False, spinless: bool = False):
    """H = -tc sum_<ij>,s (c+_is c_js + h.c.) + U sum_i n_iup n_idn (- h S^z), symresp form."""
    if spinless:
        modes = [[sr.fermion(f"f{i}")] for i in range(L)]
    else:
        modes = [list(sr.spinful_fermion(f"c{i}")) for i in range(L)]
    bonds = [(i, (i + 1) % L) for i in range(L if ring else L - 1)]
    H = sr.Operator.scalar(0)
    for i, j in bonds:
        for s in range(len(modes[0])):
            H += -tc * (sr.dagger(modes[i][s]) * modes[j][s] + sr.dagger(modes[j][s]) * modes[i][s])
    n = [[sr.dagger(c) * c for c in m] for m in modes]
    if spinless:
        H += U * sum((n[i][0] * n[j][0] for i, j in bonds), sr.Operator.scalar(0))
        return modes, H, n
    H += U * sum((n[i][0] * n[i][1] for i in range(L)), sr.Operator.scalar(0))
    if field:
        H += -h * sum(((x[0] - x[1]) / 2 for x in n), sr.Operator.scalar(0))
    return modes, H, n


def hubbard_matrices(L: int, p: dict, *, ring: bool, field: bool = False, spinless: bool = False):
    """The same model from jw_annihilators: modes in creation order (c0_up, c0_dn, c1_up, ...)."""
    f = 1 if spinless else 2
    c = jw_annihilators(f * L)
    mode = lambda i, s: c[f * i + s]  # noqa: E731
    num = lambda i, s: mode(i, s).T @ mode(i, s)  # noqa: E731
    bonds = [(i, (i + 1) % L) for i in range(L if ring else L - 1)]
    H = np.zeros((2 ** (f * L),) * 2)
    for i, j in bonds:
        for s in range(f):
            hop = mode(i, s).T @ mode(j, s)
            H -= p["tc"] * (hop + hop.T)
    if spinless:
        for i, j in bonds:
            H += p["U"] * num(i, 0) @ num(j, 0)
    else:
        for i in range(L):
            H += p["U"] * num(i, 0) @ num(i, 1)
        if field:
            H -= p["h"] * sum(num(i, 0) - num(i, 1) for i in range(L)) / 2
    ops = {"n": [[num(i, s) for s in range(f)] for i in range(L)], "c": mode}
    return H, ops


def _sector(H: np.ndarray, ops, L: int, N: int, f: int):
    """Restrict matrices to total particle number N (the states symresp keeps, same order)."""
    total = sum(ops["n"][i][s] for i in range(L) for s in range(f))
    keep = np.where(np.isclose(np.diag(total), N))[0]
    return keep


def _charge(n, L):
    return sum((n[i][s] * (-1) ** i for i in range(L) for s in range(len(n[0]))), sr.Operator.scalar(0))


def _charge_num(ops, L):
    return sum(ops["n"][i][s] * (-1) ** i for i in range(L) for s in range(len(ops["n"][0])))


def _spin(n, L):
    return sum(((n[i][0] - n[i][1]) / 2 for i in range(L)), sr.Operator.scalar(0))


def _spin_num(ops, L):
    return sum((ops["n"][i][0] - ops["n"][i][1]) / 2 for i in range(L))


def _site_spin(n, L):
    return (n[0][0] - n[0][1]) / 2


def _site_spin_num(ops, L):
    return (ops["n"][0][0] - ops["n"][0][1]) / 2


def _current(modes, L):
    """Particle current around the ring, i tc sum_i,s (c+_{i+1,s} c_is - h.c.)."""
    out = sr.Operator.scalar(0)
    for i in range(L):
        for s in range(len(modes[0])):
            hop = sr.dagger(modes[(i + 1) % L][s]) * modes[i][s]
            out += sp.I * tc * (hop - sr.dagger(hop))
    return out


def _current_num(ops, L, p, f):
    out = np.zeros_like(ops["n"][0][0], dtype=complex)
    for i in range(L):
        for s in range(f):
            hop = ops["c"]((i + 1) % L, s).T @ ops["c"](i, s)
            out += 1j * p["tc"] * (hop - hop.T)
    return out


def _check(L, N, p, T, *, ring=True, field=False, spinless=False, which="spin"):
    f = 1 if spinless else 2
    modes, H, n = hubbard(L, ring=ring, field=field, spinless=spinless)
    total = sum((x for row in n for x in row), sr.Operator.scalar(0))
    model = sr.Model(H, sector={total: N})
    A, A_num = {
        "spin": (lambda: _spin(n, L), lambda o: _spin_num(o, L)),
        "site": (lambda: _site_spin(n, L), lambda o: _site_spin_num(o, L)),
        "charge": (lambda: _charge(n, L), lambda o: _charge_num(o, L)),
        "current": (lambda: _current(modes, L), lambda o: _current_num(o, L, p, f)),
    }[which]
    Hn, ops = hubbard_matrices(L, p, ring=ring, field=field, spinless=spinless)
    keep = _sector(Hn, ops, L, N, f)
    An = A_num(ops)[np.ix_(keep, keep)]
    ref = numeric.solve(Hn[np.ix_(keep, keep)], An, An, 1 / T)
    r = model.response(A())
    z = 0.37 + 0.21j
    iso_T, iso, dyn, energies = derived_sums(r.derivation, p, T, z)
    assert_close(iso_T, ref.isothermal, what="isothermal")
    assert_close(iso, ref.isolated, what="isolated")
    assert_close(dyn, ref.frequency(np.array([z.real]), z.imag)[0], what="chi(z)")
    assert_close(energies, np.linalg.eigvalsh(Hn[np.ix_(keep, keep)]), what="levels")
    return r


def test_lattice_operations_of_a_hubbard_ring_commute_with_its_matrix():
    # Every candidate the engine keeps for a block must commute with H there; on the ring at
    # half filling in zero field all of them commute with the whole H.
    modes, H, n = hubbard(4, ring=True)
    system = System.build(H)
    basis = system.basis()
    from symresp.algebra import sparse_form
    sym = find_symmetries(basis, sparse_form(H, basis))
    assert {op.name for op in sym.operations} == {"k", "R", "F", "C"}
    Hn, _ = hubbard_matrices(4, {"tc": 0.7, "U": 2.1}, ring=True)
    for op in sym.operations:
        Umat = np.zeros_like(Hn)
        for j, (i, s) in enumerate(zip(op.perm, op.sign)):
            Umat[i, j] = s
        commutes = np.allclose(Umat @ Hn, Hn @ Umat)
        # The particle-hole map changes N (and the constant U(L - N)): it commutes with H
        # only at half filling; checked per block by the engine.
        if op.name != "C":
            assert commutes, op.name


def test_hubbard_dimer_ground_state_matches_the_textbook_formula():
    # Two-site Hubbard model at half filling, H = -t sum_s (c+_1s c_2s + h.c.) + U sum_i
    # n_iup n_idn: E0 = U/2 - sqrt(U^2/4 + 4t^2) (singlet); the other levels are 0 (triplet),
    # U and U/2 + sqrt(U^2/4 + 4t^2). Source: the two-site Hubbard model, from memory.
    modes, H, n = hubbard(2, ring=False)
    total = sum((x for row in n for x in row), sr.Operator.scalar(0))
    levels = {lv.energy: lv.degeneracy for lv in sr.Model(H, sector={total: 2}).levels()}
    root = sp.sqrt(U**2 / 4 + 4 * tc**2)
    expected = {U / 2 - root: 1, sp.Integer(0): 3, U: 1, U / 2 + root: 1}
    assert {sp.simplify(E): g for E, g in levels.items()} == {sp.simplify(E): g for E, g in expected.items()}


@pytest.mark.parametrize("L,N", [(3, 3), (4, 2), (3, 2)])
def test_hubbard_rings_at_zero_coupling_fill_the_tight_binding_band(L, N):
    # U = 0: single-particle energies -2t cos(2 pi j / L), two spins each, filled from the
    # bottom (common practice); the ground level of the derived closed form must agree.
    modes, H, n = hubbard(L, ring=True)
    total = sum((x for row in n for x in row), sr.Operator.scalar(0))
    levels = sr.Model(H, sector={total: N}).levels()
    band = sorted([-2 * np.cos(2 * np.pi * j / L) for j in range(L)] * 2)
    ground = min(float(sp.N(lv.energy.subs({U: 0, tc: 1}))) for lv in levels)
    assert abs(ground - sum(band[:N])) < 1e-12


def test_hubbard_ring_of_four_approaches_the_heisenberg_ring_at_large_coupling():
    # Half filling, U >> t: H_eff = J sum (S_i.S_j - 1/4) with J = 4t^2/U; the 4-site
    # Heisenberg ring has E0 = -2J, so E0 -> -3J = -12 t^2/U (from memory; corrections
    # O(t^4/U^3)). Checked at U/t = 400 to 1e-4 relative.
    modes, H, n = hubbard(4, ring=True)
    total = sum((x for row in n for x in row), sr.Operator.scalar(0))
    levels = sr.Model(H, sector={total: 4}).levels()
    ground = min(float(sp.N(lv.energy.subs({tc: sp.Rational(1, 2), U: 200}), 30)) for lv in levels)
    assert abs(ground / (-12 * 0.25 / 200) - 1) < 1e-4


def test_hubbard_ring_of_four_at_half_filling_uses_all_lattice_symmetries():
    r = _check(4, 4, {"tc": 0.7, "U": 2.3}, T=0.8, which="spin")
    text = r.derivation.spectrum.describe()
    for word in ("k (ring translation)", "R (reflection)", "S (total spin)", "C (particle-hole)"):
        assert word in text
    assert max(s.block.size for s in r.derivation.spectrum.solutions) <= 4


@pytest.mark.slow
@pytest.mark.parametrize("which", ["charge", "site", "current"])
def test_hubbard_ring_of_four_responses_match_exact_diagonalisation(which):
    _check(4, 4, {"tc": 0.7, "U": 2.3}, T=0.8, which=which)


def test_hubbard_chain_of_three_derives_in_sectors():
    # The open chain has no translation but a reflection (and particle-hole at half filling).
    r = _check(3, 3, {"tc": 0.6, "U": 1.7}, T=0.5, ring=False, which="charge")
    text = r.derivation.spectrum.describe()
    assert "R (reflection)" in text and "ring translation" not in text


def test_spin_flip_is_used_where_total_spin_is_not_conserved():
    # Spinless-like check of F: a Hubbard ring in a field keeps S^2; F is used only where it
    # commutes, i.e. the S^z = 0 blocks (the field term vanishes there), and it is redundant
    # with S, so S is what labels them.
    r = _check(3, 2, {"tc": 0.8, "U": 1.3, "h": 0.3}, T=0.6, field=True, which="site")
    for sol in r.derivation.spectrum.solutions:
        assert "S" in dict(sol.block.labels)


def test_spinless_ring_with_nearest_neighbour_repulsion():
    r = _check(4, 2, {"tc": 0.9, "U": 1.4}, T=0.7, spinless=True, which="charge")
    text = r.derivation.spectrum.describe()
    assert "k (ring translation)" in text and "R (reflection)" in text


@pytest.mark.slow
def test_sectors_and_plain_blocks_agree_on_a_hubbard_ring():
    modes, H, n = hubbard(3, ring=True)
    total = sum((x for row in n for x in row), sr.Operator.scalar(0))
    system = System.build(H, sector={total: 2})
    A = _site_spin(n, 3)
    assert len(solve(system).solutions) > len(solve(system, symmetry=False).solutions)
    a = derive(system, A, A)
    b = derive(system, A, A, symmetry=False)
    pt = {tc: sp.Rational(3, 5), U: sp.Rational(7, 4), sr.beta: sp.Rational(5, 4)}
    for kind in ("isothermal", "isolated"):
        assert_close(complex(sp.N(a.static(kind).subs(pt), 20)),
                     complex(sp.N(b.static(kind).subs(pt), 20)), what=kind)


@settings(max_examples=3, deadline=None)
@given(data=st.data(), t_value=st.floats(0.2, 1.5), u_value=st.floats(0.2, 4.0),
       T=st.floats(0.2, 3.0))
def test_random_hubbard_points_agree_with_exact_diagonalisation(data, t_value, u_value, T):
    N = data.draw(st.sampled_from([1, 2, 3, 4]))
    which = data.draw(st.sampled_from(["spin", "charge", "site", "current"]))
    _check(3, N, {"tc": t_value, "U": u_value}, T, which=which)


@pytest.mark.slow
@settings(max_examples=10, deadline=None)
@given(L=st.sampled_from([3, 4]), data=st.data(), t_value=st.floats(0.2, 1.5),
       u_value=st.floats(0.2, 4.0), T=st.floats(0.2, 3.0))
def test_random_hubbard_rings_agree_with_exact_diagonalisation(L, data, t_value, u_value, T):
    N = data.draw(st.sampled_from([1, 2, 4, 6] if L == 4 else [1, 2, 3, 4, 5]))
    which = data.draw(st.sampled_from(["spin", "charge", "site", "current"]))
    _check(L, N, {"tc": t_value, "U": u_value}, T, which=which)
