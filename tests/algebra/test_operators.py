"""Operator algebra: spin commutation relations, fermion anticommutators with Jordan-Wigner signs,
boson commutator below the cutoff, matrix form of commutators, adjoints, canonical form."""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
import sympy as sp
from hypothesis import given
from hypothesis import strategies as st

import symresp as sr
from symresp.algebra import Basis, to_array
from symresp.errors import InputError

from ..conftest import ATOL_EXACT, RTOL_EXACT, assert_close
from ..strategies import SITE_KINDS, Lattice, spin_matrices

SPINS = ["1/2", "1", "3/2", "2", "5/2", "3", "7/2"]


@pytest.mark.parametrize("S", SPINS)
def test_spin_components_obey_the_angular_momentum_algebra(S):
    # [S_a, S_b] = i eps_abc S_c and S^2 = S(S+1) (common practice).
    s = sr.spin("s", S)
    comps = (s.x, s.y, s.z)
    for a in range(3):
        for b in range(3):
            c = 3 - a - b
            expected = 0 if a == b else sp.LeviCivita(a, b, c) * sp.I * comps[c]
            assert sr.commutator(comps[a], comps[b]) == expected
    Sv = sp.Rational(S)
    assert s.vec @ s.vec == Sv * (Sv + 1)
    assert sr.commutator(s.z, s.plus) == s.plus


def test_fermion_anticommutators_across_modes_and_spinful_orbitals():
    up1, dn1 = sr.spinful_fermion("d1")
    c = sr.fermion("c")
    up2, dn2 = sr.spinful_fermion("d2")
    modes = [up1, dn1, c, up2, dn2]
    for i, ci in enumerate(modes):
        for j, cj in enumerate(modes):
            assert sr.anticommutator(ci, sr.dagger(cj)) == (1 if i == j else 0)
            assert sr.anticommutator(ci, cj).is_zero
    # The same relations hold for the matrices, Jordan-Wigner signs included.
    basis = Basis.product({s for m in modes for s in m.sites})
    mats = [to_array(m, basis) for m in modes]
    for i in range(len(mats)):
        for j in range(len(mats)):
            anti = mats[i] @ mats[j].conj().T + mats[j].conj().T @ mats[i]
            assert_close(anti, np.eye(basis.dimension) * (i == j), what=f"{{c{i}, c{j}^+}}")
            assert_close(mats[i] @ mats[j] + mats[j] @ mats[i], 0, what=f"{{c{i}, c{j}}}")


def test_boson_commutator_is_one_below_the_cutoff():
    a = sr.boson("a", 5)
    assert sr.commutator(a, sr.dagger(a)) == 1
    basis = Basis.product(a.sites)
    A = to_array(a, basis)
    comm = A @ A.conj().T - A.conj().T @ A
    assert_close(np.diag(comm)[:-1], np.ones(5), what="[a, a^+] below the cutoff")
    # normal ordering: a a^+ a^+ = a^+ a^+ a + 2 a^+
    ad = sr.dagger(a)
    assert a * ad * ad == ad * ad * a + 2 * ad


@st.composite
def expressions(draw):
    kinds = draw(st.lists(SITE_KINDS.filter(lambda k: k[0] != "boson"), min_size=1, max_size=3))
    lat = Lattice(kinds)
    vocab = [f for s in range(len(kinds)) for f in lat.vocabulary(s)]

    def term():
        fs = draw(st.lists(st.sampled_from(vocab), min_size=1, max_size=3))
        op, mat = fs[0].op, fs[0].matrix
        for f in fs[1:]:
            op, mat = op * f.op, mat @ f.matrix
        q = draw(st.integers(-3, 3))
        return q * op, q * mat

    x, X = term()
    y, Y = term()
    return lat, x, X, y, Y


@given(expressions())
def test_matrix_of_a_commutator_is_the_commutator_of_matrices(data):
    lat, x, X, y, Y = data
    basis = Basis.product([h.site if hasattr(h, "site") else next(iter(h.sites)) for h in lat.handles])
    assert_close(to_array(sr.commutator(x, y), basis), X @ Y - Y @ X, what="[x, y]")
    assert_close(to_array(x * y, basis), X @ Y, what="x y")


@given(expressions())
def test_adjoint_of_a_product_reverses_the_order(data):
    lat, x, X, y, Y = data
    assert sr.dagger(x * y) == sr.dagger(y) * sr.dagger(x)
    assert sr.dagger(sr.dagger(x)) == x
    basis = Basis.product([h.site if hasattr(h, "site") else next(iter(h.sites)) for h in lat.handles])
    assert_close(to_array(sr.dagger(x), basis), X.conj().T, what="x^+")


def test_hermiticity_and_real_parameters():
    J = sp.Symbol("J", real=True)
    a, b = sr.spin("a", "1/2"), sr.spin("b", "1/2")
    assert (J * (a.vec @ b.vec)).is_hermitian()
    assert not (sp.I * a.x).is_hermitian()
    with pytest.raises(sr.NotHermitianError, match="not Hermitian"):
        sr.Model(a.plus)
    K = sp.Symbol("K")  # no real assumption: H is not Hermitian for complex K
    with pytest.raises(sr.NotHermitianError, match="real=True"):
        sr.Model(K * a.z)


def test_matrix_form_matches_independent_kronecker_products():
    J = sp.Symbol("J", positive=True)
    a, b = sr.spin("a", 1), sr.spin("b", "1/2")
    M = sr.Model(J * (a.vec @ b.vec)).matrix()
    A, B = spin_matrices(Fraction(1)), spin_matrices(Fraction(1, 2))
    ref = sum(np.kron(A[c], B[c]) for c in ("x", "y", "z"))
    assert_close(np.array(M.subs(J, 1), dtype=complex), ref, rtol=RTOL_EXACT, atol=ATOL_EXACT, what="J S1.S2")


@pytest.mark.parametrize("bad, match", [
    (lambda: sr.spin("a", "2/3"), "half-integer"),
    (lambda: sr.spin("a", 0.3), "half-integer"),
    (lambda: sr.spin("1a", 1), "must not start"),
    (lambda: sr.nlevel("q", 1), "from 2"),
    (lambda: sr.boson("x", 0), "cutoff"),
    (lambda: float("inf") * sr.spin("a", 1).z, "not a finite number"),
    (lambda: sr.spin("a", 1).z ** -1, "non-negative"),
    (lambda: sr.spin("a", 1).z / sr.spin("b", 1).z, "divide"),
    (lambda: sr.nlevel("q", 3).op(0, 3), "out of range"),
    (lambda: sr.Model("H"), "operator expression"),
    (lambda: sr.Model(sr.spin("a", 1).z, sector=[1]), "mapping"),
    (lambda: sr.Model(sr.spin("a", 1).x, sector={sr.spin("b", 1).x: 1}), "diagonal"),
])
def test_bad_arguments_raise_input_error_naming_the_problem(bad, match):
    with pytest.raises(InputError, match=match):
        bad()


def test_sector_operator_must_commute_with_h():
    a, b = sr.spin("a", "1/2"), sr.spin("b", "1/2")
    with pytest.raises(sr.NotConservedError, match="does not commute"):
        sr.Model(a.x + b.z, sector={a.z + b.z: 0})
    m = sr.Model(a.vec @ b.vec, sector={a.z + b.z: 0})
    assert m.dimension == 2


def test_floats_become_the_decimals_they_print_as():
    # One stated rule (docs/limits.md): a float is the exact rational of its repr.
    a = sr.spin("a", "1/2")
    h = sp.Symbol("h", real=True)
    assert 0.1 * a.z == sp.Rational(1, 10) * a.z
    assert (2.0023 * h) * a.z == sp.Rational(20023, 10000) * h * a.z
    assert sr.Model(1e-3 * a.z).hamiltonian == sp.Rational(1, 1000) * a.z
    assert (0.5 + 0.25j) * a.z == (sp.Rational(1, 2) + sp.I / 4) * a.z
