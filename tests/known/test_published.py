"""Published closed forms, one per test, each with its source beside it.

The symbolic result must equal the textbook formula exactly (difference simplifies to zero),
and, where the issue asks, the isothermal and isolated values must differ as they should.
"""

from __future__ import annotations

import pytest
import sympy as sp

import symresp as sr
from symresp.conventions import beta, omega, t

J = sp.Symbol("J", real=True)
D = sp.Symbol("D", real=True)
h = sp.Symbol("h", positive=True)
Delta = sp.Symbol("Delta", positive=True)


def _same(a, b) -> bool:
    diff = sp.simplify(sp.expand((a - b).rewrite(sp.exp)))
    return diff == 0


def _half():
    return sp.Rational(1, 2)


def test_bleaney_bowers_dimer():
    # Source: B. Bleaney and K. D. Bowers, Proc. R. Soc. A 214, 451 (1952); H = J S1.S2,
    # chi = 2 beta / (3 + exp(beta J)) per dimer with g mu_B = 1.
    a, b = sr.spin("a", _half()), sr.spin("b", _half())
    r = sr.Model(J * (a.vec @ b.vec)).response(a.z + b.z)
    assert _same(r.static("isothermal"), 2 * beta / (3 + sp.exp(beta * J)))
    # Levels: singlet -3J/4 and triplet J/4 (common practice).
    assert {(lv.energy, lv.degeneracy) for lv in r.levels} == {(-3 * J / 4, 1), (J / 4, 3)}
    # M_z commutes with H: no transitions, so the isolated value vanishes (common practice).
    assert r.static("isolated") == 0


@pytest.mark.parametrize("S", ["1/2", "1", "3/2", "2", "5/2"])
def test_curie_law_isothermal_differs_from_isolated(S):
    # Source: Curie law chi = beta S(S+1)/3 per spin component (common practice; any statistical
    # mechanics text). A free spin has no transitions, so the isolated value is 0.
    s = sr.spin("s", S)
    Sv = sp.Rational(S)
    r = sr.Model(0 * s.z).response(s.z)
    assert _same(r.static("isothermal"), beta * Sv * (Sv + 1) / 3)
    assert r.static("isolated") == 0
    # Isotropy: the x response is the same.
    assert _same(sr.Model(0 * s.z).response(s.x).static("isothermal"), beta * Sv * (Sv + 1) / 3)


def test_spin_one_zero_field_splitting_parallel_and_perpendicular():
    # Source: O. Kahn, Molecular Magnetism (VCH, 1993), S = 1 with D S_z^2 (from memory):
    # chi_par  = 2 beta exp(-beta D) / (1 + 2 exp(-beta D))
    # chi_perp = 2 (1 - exp(-beta D)) / (D (1 + 2 exp(-beta D)))
    s = sr.spin("s", 1)
    m = sr.Model(D * s.z * s.z)
    x = sp.exp(-beta * D)
    par = m.response(s.z)
    perp = m.response(s.x)
    assert _same(par.static("isothermal"), 2 * beta * x / (1 + 2 * x))
    assert par.static("isolated") == 0
    assert _same(perp.static("isothermal"), 2 * (1 - x) / (D * (1 + 2 * x)))
    # Van Vleck: the perpendicular response is entirely inter-level (common practice).
    assert _same(perp.static("isolated"), perp.static("isothermal"))


def test_two_level_system_frequency_and_time():
    # Source: common practice (two-level Lehmann sum): H = (Delta/2) sigma_z, A = B = sigma_x,
    # chi(omega) = 2 Delta tanh(beta Delta/2) / (Delta^2 - omega^2), chi(t) = 2 tanh(beta Delta/2) sin(Delta t).
    q = sr.spin("q", _half())
    r = sr.Model(Delta * q.z).response(2 * q.x)
    th = sp.tanh(beta * Delta / 2)
    assert _same(r.frequency(), 2 * Delta * th / (Delta**2 - omega**2))
    assert _same(r.time(), 2 * th * sp.sin(Delta * t))
    poles = dict(r.poles())
    assert _same(poles[Delta], th) and _same(poles[-Delta], -th)


def test_equilateral_triangle_of_spin_halves():
    # Source: common practice (total-spin decomposition, H = (J/2)(S_tot^2 - 9/4)):
    # a quartet at 3J/4 and two doublets at -3J/4;
    # chi_zz = (beta/4) (1 + 5 exp(-3 beta J/2)) / (1 + exp(-3 beta J/2)).
    s = [sr.spin(f"s{i}", _half()) for i in range(3)]
    H = J * (s[0].vec @ s[1].vec + s[1].vec @ s[2].vec + s[2].vec @ s[0].vec)
    r = sr.Model(H).response(s[0].z + s[1].z + s[2].z)
    assert {(lv.energy, lv.degeneracy) for lv in r.levels} == {(3 * J / 4, 4), (-3 * J / 4, 4)}
    y = sp.exp(-3 * beta * J / 2)
    assert _same(r.static("isothermal"), beta / 4 * (1 + 5 * y) / (1 + y))


def test_zeeman_degenerate_limit_is_the_curie_value():
    # Source: common practice. Spin 1/2 in H = h S_z: chi_xx isolated = tanh(beta h/2)/(2h),
    # whose h -> 0 limit beta/4 equals the isothermal value of the degenerate (h = 0) model,
    # where the isolated value is exactly 0.
    s = sr.spin("s", _half())
    with_field = sr.Model(h * s.z).response(s.x)
    assert _same(with_field.static("isolated"), sp.tanh(beta * h / 2) / (2 * h))
    assert sp.limit(with_field.static("isolated"), h, 0) == beta / 4
    free = sr.Model(0 * s.z).response(s.x)
    assert free.static("isolated") == 0 and free.static("isothermal") == beta / 4
    # chi_zz: isothermal beta/(4 cosh^2(beta h/2)), isolated 0 (common practice).
    zz = sr.Model(h * s.z).response(s.z)
    assert _same(zz.static("isothermal"), beta / (4 * sp.cosh(beta * h / 2) ** 2))
    assert zz.static("isolated") == 0


def test_harmonic_oscillator_position_response():
    # Source: common practice. H = w0 a^+ a, x = (a + a^+)/sqrt(2): chi(omega) = w0/(w0^2 - omega^2)
    # independent of temperature; exact for any cutoff only if the thermal weight of the top state
    # is neglected, so compare the T -> 0 (ground-state) pole table.
    w0 = sp.Symbol("w0", positive=True)
    a = sr.boson("a", 3)
    x = (a + sr.dagger(a)) / sp.sqrt(2)
    r = sr.Model(w0 * sr.dagger(a) * a).response(x)
    lowest = [(Om, sp.limit(w, beta, sp.oo)) for Om, w in r.poles()]
    assert {(Om, w) for Om, w in lowest if w != 0} == {(w0, sp.Rational(1, 2)), (-w0, -sp.Rational(1, 2))}
