"""Local operators on Heisenberg rings in a field: the response to a field on one site.

A local operator such as S^x_0 breaks the ring's translation symmetry: its transitions join
momentum sectors k and k', so every pair of sectors carries weights. The derived response
(its exact pieces, and the emitted numpy evaluator) is checked against exact diagonalisation
built independently (numpy Kronecker products) at random parameter points. The 4- and 6-site
rings run here; the 8-site ring (about 2700 pole pairs) takes minutes to derive with its
evaluator and is measured by tests/perf/bench_scale.py instead.

Also checked: the ring's translation makes |<a|S^x_j|b>|^2 independent of j, so every site
gives the same local susceptibility (common practice: a symmetry of H carries S_j into
S_{j+1}), and the evaluator of a large derivation converts each irrational constant once.
"""

from __future__ import annotations

from collections import Counter
from functools import lru_cache

import numpy as np
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp import numeric
from symresp.emit import _printers, compile_module, numpy_module_source

from .._pieces import derived_sums, kron_ring
from ..conftest import ATOL_LOOSE, RTOL_LOOSE, assert_close

J = sp.Symbol("J", positive=True)
h = sp.Symbol("h", real=True)


def _ring(N: int):
    s = [sr.spin(f"s{i}", "1/2") for i in range(N)]
    zero = sr.Operator.scalar(0)
    H = sum((J * (s[i].vec @ s[(i + 1) % N].vec) for i in range(N)), zero)
    return sr.Model(H + h * sum((x.z for x in s), zero)), s


@lru_cache(maxsize=None)
def _local(N: int, site: int = 0, component: str = "x"):
    """(response, compiled evaluator, conversions of constants per constant) of the local
    operator S^component_site; the module is generated once, counting its conversions."""
    model, s = _ring(N)
    r = model.response(getattr(s[site], component))
    seen: Counter = Counter()
    convert = _printers._convert

    def counting(number):
        seen[number] += 1
        return convert(number)

    _printers._convert = counting
    try:
        source = numpy_module_source(r.derivation)
    finally:
        _printers._convert = convert
    return r, compile_module(source), seen


def _reference(N: int, site: int, component: str, Jv: float, hv: float, T: float):
    Hn, ops = kron_ring(N, Jv, hv)
    A = ops[component][site]
    return numeric.solve(Hn, A, A, 1.0 / T)


def _check_evaluator(N: int, Jv: float, hv: float, T: float, site: int = 0, component: str = "x"):
    _, mod, _ = _local(N, site, component)
    ref = _reference(N, site, component, Jv, hv, T)
    p = {"J": Jv, "h": hv}
    assert_close(mod.chi_isothermal(T, **p), ref.isothermal, what=f"{N}-ring isothermal")
    assert_close(mod.chi_isolated(T, **p), ref.isolated, what=f"{N}-ring isolated")
    omega = np.array([0.0, 0.37, 1.3])
    got = mod.chi_omega(omega, T, **p, eta=0.05)
    assert_close(got, ref.frequency(omega, 0.05), what=f"{N}-ring chi(omega)")


points = dict(Jv=st.floats(0.2, 2.0), hv=st.floats(-1.5, 1.5), T=st.floats(0.15, 3.0))


@settings(max_examples=12, deadline=None)
@given(**points, site=st.integers(0, 1), component=st.sampled_from("xz"))
def test_four_site_ring_local_operators_match_exact_diagonalisation(Jv, hv, T, site, component):
    _check_evaluator(4, Jv, hv, T, site, component)


@settings(max_examples=6, deadline=None)
@given(**points)
def test_six_site_ring_local_sx_matches_exact_diagonalisation(Jv, hv, T):
    _check_evaluator(6, Jv, hv, T)


def test_local_pieces_match_exact_diagonalisation():
    # The derivation's exact levels and weights, summed without the emitted evaluator.
    r, _, _ = _local(4, 1, "x")
    Jv, hv, T, z = 1.1, 0.37, 0.6, 0.41 + 0.05j
    iso_t, iso, dyn, energies = derived_sums(r.derivation, {"J": Jv, "h": hv}, T, z)
    ref = _reference(4, 1, "x", Jv, hv, T)
    assert_close(iso_t, ref.isothermal, what="isothermal")
    assert_close(iso, ref.isolated, what="isolated")
    assert_close(dyn, ref.frequency(np.array([z.real]), z.imag)[0], what="chi(z)")
    Hn, _ = kron_ring(4, Jv, hv)
    assert_close(energies, np.linalg.eigvalsh(Hn), rtol=RTOL_LOOSE, atol=ATOL_LOOSE,
                 what="levels")


def test_local_transitions_join_momentum_sectors():
    # A local operator breaks translations: some weights join levels of different k.
    d = _local(6, 0, "x")[0].derivation
    k = {i: dict(sol.block.labels).get("k") for i, sol in enumerate(d.spectrum.solutions)}

    def momenta(a):
        return {k[d.spectrum.parts[p].block] for p in d.levels[a].parts}

    assert any(momenta(a) != momenta(b) for (a, b) in d.level_weights)


def test_every_site_of_the_ring_gives_the_same_local_response():
    # Common practice: the translation T S_j T^-1 = S_{j+1} commutes with H, so the local
    # susceptibility of every site is the same function.
    m0, m2 = _local(4, 0, "x")[1], _local(4, 2, "x")[1]
    for T in (0.3, 1.7):
        assert_close(m0.chi_isothermal(T, J=0.8, h=0.45), m2.chi_isothermal(T, J=0.8, h=0.45),
                     what="site 0 against site 2")


def test_emitted_module_converts_each_constant_once():
    # The evaluator of a large derivation has several programs (each kind of stage P, the
    # energies, the correlation function) reading the same levels and weights: each exact
    # irrational constant is converted to a number once for all of them. Counted, not timed.
    r, mod, seen = _local(6, 0, "x")
    assert mod.chi_isothermal(1.0, J=1.0, h=0.2) > 0
    assert len(seen) >= 50, f"only {len(seen)} constants: not a large derivation"
    again = {c: n for c, n in seen.items() if n > 1}
    assert not again, f"converted more than once: {list(again.items())[:3]}"

