"""Blocks and their quantum numbers: names, independence, conservation.

The conservation check uses the tests' own Kronecker-product matrices (tests/strategies.py),
never symresp's matrix form: a reported quantity Q, diagonal in the product basis with the
values Q reports, must commute with H at a random parameter point.
"""

from __future__ import annotations

import re

import numpy as np
import pytest
import sympy as sp
from hypothesis import given, strategies as st

import symresp as sr
from symresp.models import System
from symresp.spectrum import decompose
from tests.conftest import ATOL_EXACT
from tests.strategies import parameter_points, random_models

HALF = sp.Rational(1, 2)
w = sp.Symbol("w", positive=True)
g = sp.Symbol("g", positive=True)
J = sp.Symbol("J", positive=True)


def names(H, **kw) -> tuple[str, ...]:
    return tuple(q.name for q in decompose(System.build(H, **kw)).quantum_numbers)


def diagonal(q, states) -> np.ndarray:
    return np.array([float(q.value(s)) for s in states])


@given(random_models(max_sites=3, max_dim=12), st.data())
def test_reported_quantities_commute_with_H_and_are_independent(model, data):
    system = System.build(model.H)
    structure = decompose(system)
    states = structure.basis.states
    assert len(states) == model.lattice.dimension
    H = model.H_num(data.draw(parameter_points(model.params)))
    vectors = [np.ones(len(states))]
    for q in structure.quantum_numbers:
        assert not re.fullmatch(r"Q\d+", q.name), q.name
        d = diagonal(q, states)
        # [Q, H]_ij = (q_i - q_j) H_ij = 0 on every element.
        assert np.abs((d[:, None] - d[None, :]) * H).max() <= ATOL_EXACT, q.name
        vectors.append(d)
    assert np.linalg.matrix_rank(np.array(vectors)) == len(vectors)   # independent (and not 1)
    # Every reported quantity is constant on each block.
    for b in structure.blocks:
        for q in structure.quantum_numbers:
            assert len({q.value(states[p]) for p in b.positions}) == 1


def test_single_oscillator_reports_the_boson_number_only():
    a = sr.boson("a", 200)
    structure = decompose(System.build(w * sr.dagger(a) * a))
    assert [q.name for q in structure.quantum_numbers] == ["Nb"]
    assert len(structure.blocks) == 201
    assert [b.labels for b in structure.blocks[:3]] == [(("Nb", 0),), (("Nb", 1),), (("Nb", 2),)]


def test_spin_ring_reports_total_sz():
    s = [sr.spin(f"s{i}", HALF) for i in range(4)]
    H = sum((J * (s[i].vec @ s[(i + 1) % 4].vec) for i in range(4)), 0 * s[0].z)
    assert names(H) == ("Sz",)


def test_hubbard_dimer_reports_sz_and_particle_number():
    tc, U = sp.symbols("tc U", positive=True)
    (lu, ld), (ru, rd) = sr.spinful_fermion("l"), sr.spinful_fermion("r")
    n = lambda c: sr.dagger(c) * c   # noqa: E731
    hop = sum((sr.dagger(x) * y + sr.dagger(y) * x for x, y in ((lu, ru), (ld, rd))), 0 * n(lu))
    H = -tc * hop + U * (n(lu) * n(ld) + n(ru) * n(rd))
    assert names(H) == ("Sz", "N")


def test_spin_flip_hopping_leaves_one_flavour_number():
    # Hopping of up electrons only, and a spin-flip term that conserves N but not Sz:
    # the particle number of all fermions is conserved, Sz is not.
    (lu, ld), (ru, rd) = sr.spinful_fermion("l"), sr.spinful_fermion("r")
    H = w * (sr.dagger(lu) * ru + sr.dagger(ru) * lu) + g * (sr.dagger(ld) * lu + sr.dagger(lu) * ld)
    assert names(H + 0 * sr.dagger(rd) * rd) == ("N", "n(r_dn)")
    # Up hopping only: N_up and each down occupation are conserved separately; N_up follows
    # from Sz and N (N_up = N/2 + Sz), so the third independent one is a down occupation.
    H2 = w * (sr.dagger(lu) * ru + sr.dagger(ru) * lu) + g * sr.dagger(ld) * ld
    assert names(H2 + 0 * sr.dagger(rd) * rd) == ("Sz", "N", "n(l_dn)")


def test_jaynes_cummings_reports_the_excitation_number():
    a, q = sr.boson("a", 30), sr.spin("q", HALF)
    H = w * sr.dagger(a) * a + w * q.z + g * (sr.dagger(a) * q.minus + a * q.plus)
    structure = decompose(System.build(H))
    (qn,) = structure.quantum_numbers
    assert qn.name == "n(a)+q.z"
    # Labels: n + m, from -1/2 (empty cavity, spin down) to 30 + 1/2.
    values = sorted(v for b in structure.blocks for _, v in b.labels)
    assert values[0] == -HALF and values[-1] == 30 + HALF and len(values) == 32


def test_two_photon_exchange_gets_an_integer_combination():
    a, b = sr.boson("a", 6), sr.boson("b", 3)
    H = w * sr.dagger(a) * a + 2 * w * sr.dagger(b) * b + g * (sr.dagger(a) ** 2 * b + sr.dagger(b) * a ** 2)
    assert names(H) == ("n(a)+2*n(b)",)


def test_rabi_model_reports_the_parity():
    a, q = sr.boson("a", 10), sr.spin("q", HALF)
    H = w * sr.dagger(a) * a + w * q.z + g * (a + sr.dagger(a)) * q.x
    structure = decompose(System.build(H))
    assert names(H) == ("(n(a)+q.z+1/2) mod 2",)
    assert sorted(b.labels for b in structure.blocks) == [(("(n(a)+q.z+1/2) mod 2", 0),),
                                                          (("(n(a)+q.z+1/2) mod 2", 1),)]


def test_rhombic_ion_reports_the_parity_of_m():
    D, Erh = sp.Symbol("D", real=True), sp.Symbol("Erh", positive=True)
    s = sr.spin("s", 10)
    assert names(D * s.z ** 2 + Erh * (s.x ** 2 - s.y ** 2)) == ("s.z mod 2",)
    s3 = sr.spin("s3", sp.Rational(5, 2))
    assert names(D * s3.z ** 2 + Erh * (s3.x ** 2 - s3.y ** 2)) == ("(s3.z+1/2) mod 2",)
    # A transverse field mixes every m: nothing is conserved.
    h = sp.Symbol("h", real=True)
    assert names(D * s.z ** 2 + Erh * (s.x ** 2 - s.y ** 2) + h * s.x) == ()


def test_free_spins_report_each_spin_that_is_needed():
    a, b = sr.spin("a", HALF), sr.spin("b", HALF)
    assert names(w * a.z + g * b.z) == ("Sz", "a.z")


def test_dark_level_is_named_by_its_projector():
    x = sr.nlevel("x", 3)
    H = w * x.proj(1) + g * (x.op(0, 1) + x.op(1, 0)) + 2 * w * x.proj(2)
    assert names(H) == ("|2><2|(x)",)


def test_sector_basis_keeps_its_labels():
    s = [sr.spin(f"s{i}", HALF) for i in range(3)]
    Mz = s[0].z + s[1].z + s[2].z
    H = J * (s[0].vec @ s[1].vec + s[1].vec @ s[2].vec)
    structure = decompose(System.build(H, sector={Mz: HALF}))
    assert structure.quantum_numbers[0].name == "Sz"
    assert all(b.labels == (("Sz", HALF),) for b in structure.blocks)


@pytest.mark.parametrize("n", [10])
def test_large_ring_quantum_numbers(n):
    s = [sr.spin(f"s{i}", HALF) for i in range(n)]
    H = sum((J * (s[i].vec @ s[(i + 1) % n].vec) for i in range(n)), 0 * s[0].z)
    structure = decompose(System.build(H))
    assert [q.name for q in structure.quantum_numbers] == ["Sz"]
    assert len(structure.blocks) == n + 1
