"""Symmetry sectors (ring translations, total spin) against exact diagonalisation.

Each model is derived with the sectors and without them (``solve(..., symmetry=False)``), and
both are compared with a numeric reference built from plain Kronecker products
(tests/strategies.py), never from symresp.algebra.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp import numeric
from symresp.models import System
from symresp.response import derive
from symresp.spectrum import solve

from .._pieces import derived_sums

from ..conftest import assert_close
from ..strategies import spin_matrices

J = sp.Symbol("J", positive=True)
J2 = sp.Symbol("J2", real=True)
h = sp.Symbol("h", real=True)
D = sp.Symbol("D", real=True)


def _site_ops(spins: list[Fraction]):
    dims = [int(2 * s + 1) for s in spins]

    def embed(op, k):
        out = np.ones((1, 1), dtype=complex)
        for i, d in enumerate(dims):
            out = np.kron(out, op if i == k else np.eye(d))
        return out

    return {c: [embed(spin_matrices(s)[c], k) for k, s in enumerate(spins)] for c in "xyz"}


def _ring(N: int, spin: Fraction, *, second: bool = False, anisotropy: bool = False):
    """Symbolic ring: J S_i.S_{i+1} (+ J2 S_i.S_{i+2}) (+ D S^z_i S^z_{i+1}) + h S^z."""
    s = [sr.spin(f"s{i}", sp.Rational(spin.numerator, spin.denominator)) for i in range(N)]
    H = J * sum((s[i].vec @ s[(i + 1) % N].vec for i in range(N)), sp.Integer(0))
    if second:
        H += J2 * sum((s[i].vec @ s[(i + 2) % N].vec for i in range(N)), sp.Integer(0))
    if anisotropy:
        H += D * sum((s[i].z * s[(i + 1) % N].z for i in range(N)), sp.Integer(0))
    H += h * sum((x.z for x in s), sp.Integer(0))
    return s, H


def _ring_matrices(N: int, spin: Fraction, p: dict, *, second=False, anisotropy=False):
    ops = _site_ops([spin] * N)
    dot = lambda i, j: sum(ops[c][i] @ ops[c][j] for c in "xyz")  # noqa: E731
    H = p["J"] * sum(dot(i, (i + 1) % N) for i in range(N))
    if second:
        H = H + p["J2"] * sum(dot(i, (i + 2) % N) for i in range(N))
    if anisotropy:
        H = H + p["D"] * sum(ops["z"][i] @ ops["z"][(i + 1) % N] for i in range(N))
    H = H + p["h"] * sum(ops["z"])
    return H, ops


def _numbers(d, p: dict, T: float, z: complex) -> tuple[complex, complex, complex]:
    """Isothermal, isolated and chi(z) summed numerically from the derivation's exact pieces."""
    return derived_sums(d, p, T, z)[:3]


def _check(N, spin, A_of, A_num, p, T, **kw):
    """Derive with and without sectors; both against exact diagonalisation."""
    s, H = _ring(N, spin, **kw)
    model = sr.Model(H)
    A = A_of(s)
    Hn, ops = _ring_matrices(N, spin, p, **kw)
    An = A_num(ops)
    ref = numeric.solve(Hn, An, An, 1.0 / T)
    z = 0.37 + 0.05j
    expected = (ref.isothermal, ref.isolated, ref.frequency(np.array([z.real]), z.imag)[0])
    r = model.response(A)
    plain = derive(model.system, A, A, symmetry=False)
    for d, how in ((r.derivation, "sectors"), (plain, "product-basis blocks")):
        for got, want, what in zip(_numbers(d, p, T, z), expected, ("isothermal", "isolated", "chi(z)")):
            assert_close(got, want, what=f"{what} ({how})")
    return r


TOTAL_X = (lambda s: sum((x.x for x in s), sp.Integer(0)), lambda o: sum(o["x"]))
SITE_Z = (lambda s: s[0].z, lambda o: o["z"][0])
SITE_X = (lambda s: s[1].x, lambda o: o["x"][1])


@pytest.mark.parametrize("N,spin", [(4, Fraction(1, 2)), (5, Fraction(1, 2)), (3, Fraction(1)),
                                    (6, Fraction(1, 2))])
@pytest.mark.parametrize("obs", [TOTAL_X, SITE_Z, SITE_X], ids=["total_x", "site_z", "site_x"])
def test_rings_split_by_momentum_and_total_spin_match_exact_diagonalisation(N, spin, obs):
    p = {"J": 1.3, "h": 0.41}
    r = _check(N, spin, *obs, p, T=0.9)
    text = r.derivation.spectrum.describe()
    assert "k (ring translation)" in text and "S (total spin)" in text


def test_public_route_evaluates_sector_results():
    p = {"J": 1.3, "h": 0.41}
    r = _check(4, Fraction(1, 2), *SITE_Z, p, T=0.9)
    s, H = _ring(4, Fraction(1, 2))
    Hn, ops = _ring_matrices(4, Fraction(1, 2), p)
    ref = numeric.solve(Hn, ops["z"][0], ops["z"][0], 1 / 0.9)
    assert_close(r.evaluate("isothermal", params=p, T=0.9), ref.isothermal, what="evaluate")


def test_sectors_carry_momentum_and_spin_labels():
    s, H = _ring(4, Fraction(1, 2))
    spec = solve(System.build(H))
    labels = [dict(sol.block.labels) for sol in spec.solutions]
    # S^z = 0 of the 4-ring (6 states) splits into k = 0, pi, +-pi/2 and S = 0, 1, 2.
    zero = [lab for lab in labels if lab["Sz"] == 0]
    assert {str(lab["k"]) for lab in zero} == {"0", "pi", "+-pi/2"}
    assert {lab["S"] for lab in zero} == {0, 1, 2}
    # Singlets and the quintet of the 4-ring: E(S=2) = J, the ground singlet at -2J (h = 0).
    # Source: the 4-site Heisenberg ring spectrum, E = (J/2)[S(S+1) - S_13(S_13+1)
    # - S_24(S_24+1)] (Kambe's method; common practice in molecular magnetism).
    energies = {sp.simplify(p.energy.subs(h, 0)) for p in spec.parts}
    assert {-2 * J, -J, 0, J} <= energies


def test_sectors_and_plain_blocks_give_identical_weights():
    # Frustrated ring (next-nearest neighbours J2): two parameters inside every block, so the
    # product-basis blocks take the slow symbolic route; on 5 sites 30 s without sectors
    # against 1 s with them (tests/perf/bench_derive.py). 4 sites keep this test short.
    s, H = _ring(4, Fraction(1, 2), second=True)
    system = System.build(H)
    A = s[0].z + 2 * s[2].x
    p = {"J": 1.2, "J2": -2 / 7, "h": 1 / 3}
    T = 4 / 3
    Hn, ops = _ring_matrices(4, Fraction(1, 2), p, second=True)
    An = ops["z"][0] + 2 * ops["x"][2]
    ref = numeric.solve(Hn, An, An, 1 / T)
    assert len(solve(system, symmetry=False).solutions) < len(solve(system).solutions)
    for symmetry in (True, False):
        iso_T, iso, _ = _numbers(derive(system, A, A, symmetry=symmetry), p, T, 0.1j)
        assert_close(iso_T, ref.isothermal, what=f"isothermal (symmetry={symmetry})")
        assert_close(iso, ref.isolated, what=f"isolated (symmetry={symmetry})")


def test_broken_translation_is_not_used():
    # One stronger bond: no ring translation; total spin is still conserved.
    s = [sr.spin(f"s{i}", sp.Rational(1, 2)) for i in range(4)]
    H = J * sum((s[i].vec @ s[(i + 1) % 4].vec for i in range(1, 4)), sp.Integer(0)) \
        + 2 * J * (s[0].vec @ s[1].vec)
    text = solve(System.build(H)).describe()
    assert "ring translation" not in text and "total spin" in text


def test_spin_three_halves_are_split_in_the_rescaled_basis():
    # Spins 3/2 carry surds in S^+ S^-; in the solver's rescaled basis S^2 and the translation
    # are rational again, so the blocks are split there (docs/engine.md); values stay exact.
    p = {"J": 0.8, "h": 0.3}
    r = _check(3, Fraction(3, 2), *TOTAL_X, p, T=1.1)
    spec = r.derivation.spectrum
    assert "k (ring translation)" in spec.describe() and "S (total spin)" in spec.describe()
    assert any(s.gauge is not None and s.block.sector is not None for s in spec.solutions)


def test_mixed_spins_get_total_spin_sectors():
    # A spin 1/2 - spin 1 - spin 1/2 - spin 1 ring: no translation by one site, but S^2 is
    # conserved; its sectors are rational in the rescaled basis.
    sites = [sr.spin("a1", sp.Rational(1, 2)), sr.spin("b1", 1), sr.spin("a2", sp.Rational(1, 2)),
             sr.spin("b2", 1)]
    H = J * sum((sites[i].vec @ sites[(i + 1) % 4].vec for i in range(4)), sp.Integer(0)) \
        + h * sum((x.z for x in sites), sp.Integer(0))
    model = sr.Model(H)
    r = model.response(sites[1].z)
    text = r.derivation.spectrum.describe()
    assert "S (total spin)" in text and "ring translation" not in text
    p = {"J": 1.0, "h": 0.2}
    ref = r.reference(params=p, T=0.7)
    iso_T, iso, _ = _numbers(r.derivation, p, 0.7, 0.1j)
    assert_close(iso_T, ref.isothermal, what="isothermal")
    assert_close(iso, ref.isolated, what="isolated")


def test_exchange_anisotropy_breaks_total_spin_only():
    p = {"J": 1.0, "h": 0.2, "D": 0.45}
    r = _check(4, Fraction(1, 2), *SITE_Z, p, T=0.8, anisotropy=True)
    text = r.derivation.spectrum.describe()
    assert "ring translation" in text
    # S^2 is conserved only where the Ising term is constant (S^z = +-1, +-2 of the 4-ring),
    # not in S^z = 0.
    for sol in r.derivation.spectrum.solutions:
        labels = dict(sol.block.labels)
        assert ("S" in labels) == (labels["Sz"] != 0), labels


@settings(max_examples=10, deadline=None)
@given(N=st.integers(3, 5), spin=st.sampled_from([Fraction(1, 2), Fraction(1)]),
       Jv=st.floats(0.2, 2.0), hv=st.floats(-1.5, 1.5), T=st.floats(0.2, 3.0),
       site=st.integers(0, 2), comp=st.sampled_from("xz"))
def test_random_rings_agree_with_exact_diagonalisation(N, spin, Jv, hv, T, site, comp):
    if spin == 1:
        N = 3                                     # spin-1 rings of 4+ sites take seconds each
    obs = (lambda s: getattr(s[site], comp), lambda o: o[comp][site])
    _check(N, spin, *obs, {"J": Jv, "h": hv}, T)

