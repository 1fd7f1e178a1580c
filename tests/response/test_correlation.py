"""Correlation lines of a derivation: the two-level system, the fluctuation-dissipation
relation line by line, detailed balance, the canonical correlation, and random models against
the numeric reference (independent matrices)."""

from __future__ import annotations

import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp import numeric
from symresp.conventions import beta

from ..conftest import assert_close
from ..strategies import parameter_points, random_models
from ._exact import at_point, number, response_or_skip

HALF = sp.Rational(1, 2)
Delta = sp.Symbol("Delta", positive=True)
J = sp.Symbol("J", positive=True)
h = sp.Symbol("h", real=True)
POINT = {Delta: sp.Rational(7, 5), J: sp.Rational(3, 2), h: sp.Rational(2, 5),
         beta: sp.Rational(2, 3)}


def _value(e):
    return complex(sp.N(sp.sympify(e).subs(POINT), 30))


def test_two_level_system_obeys_detailed_balance():
    # A = B = sigma_x on levels -+Delta/2: the upward line (absorption, from the lower level)
    # carries 1/(1 + e^{-beta Delta}), the downward one e^{-beta Delta}/(1 + e^{-beta Delta})
    # (detailed balance; common practice).
    q = sr.spin("q", HALF)
    lines = dict(sr.Model(Delta * q.z).response(2 * q.x).correlation_lines())
    assert set(lines) == {Delta, -Delta}
    up = 1 / (1 + sp.exp(-beta * Delta))
    down = sp.exp(-beta * Delta) / (1 + sp.exp(-beta * Delta))
    assert abs(_value(lines[Delta] - up)) < 1e-25 and abs(_value(lines[-Delta] - down)) < 1e-25


def _responses():
    a, b = sr.spin("a", HALF), sr.spin("b", HALF)
    s = sr.spin("s", 1)
    dimer = sr.Model(J * (a.vec @ b.vec) - h * (a.z + b.z))
    return [dimer.response(a.x + b.x), dimer.response(a.z), dimer.response(a.plus, a.minus),
            sr.Model(Delta * s.z**2 - h * s.z).response(s.x, s.x)]


@pytest.mark.parametrize("k", range(4))
def test_fluctuation_dissipation_line_by_line(k):
    # w_k = (1 - e^{-beta Omega_k}) s_k for every pole of chi(omega).
    # Source: H. B. Callen and T. A. Welton, Phys. Rev. 83, 34 (1951).
    r = _responses()[k]

    def grouped(lines):
        out: dict[float, complex] = {}
        for Om, v in lines:
            f = round(_value(Om).real, 12)
            out[f] = out.get(f, 0) + _value(v)
        return out

    s_lines, poles = grouped(r.correlation_lines()), grouped(r.poles())
    assert poles
    for f, w in poles.items():
        assert abs(w - (-np.expm1(-float(POINT[beta]) * f)) * s_lines.get(f, 0)) < 1e-13


@pytest.mark.parametrize("k", [0, 1, 3])
def test_detailed_balance_and_symmetrised_lines(k):
    # A = B Hermitian: s(-Omega) = e^{-beta Omega} s(Omega); the symmetrised lines are
    # coth(beta Omega / 2) chi''-weights / 2 (Callen & Welton 1951).
    r = _responses()[k]
    plain = {_value(Om).real: _value(s) for Om, s in r.correlation_lines()}
    sym = {_value(Om).real: _value(s) for Om, s in r.correlation_lines("symmetrised")}
    poles = {_value(Om).real: _value(w) for Om, w in r.poles()}
    b = float(POINT[beta])
    for f, s in plain.items():
        if abs(f) > 1e-12:
            assert abs(plain[-f] - np.exp(-b * f) * s) < 1e-13
            assert abs(sym[f] - poles[f] / (2 * np.tanh(b * f / 2))) < 1e-13


@pytest.mark.parametrize("k", [0, 1, 3])
def test_canonical_correlation_is_the_isothermal_susceptibility(k):
    # chi_T = beta (sum_k s^K_k - <A><B>): Kubo's canonical correlation.
    # Source: R. Kubo, J. Phys. Soc. Jpn. 12, 570 (1957).
    r = _responses()[k]
    total = sum((s for _, s in r.correlation_lines("canonical")), sp.Integer(0))
    chi = beta * (total - r.expectation("A") * r.expectation("B"))
    assert abs(_value(chi - r.static("isothermal"))) < 1e-20


def test_correlation_kind_is_checked():
    q = sr.spin("q", HALF)
    with pytest.raises(sr.InputError, match="kind"):
        sr.Model(Delta * q.z).response(q.x).correlation_lines("quantum")


@pytest.mark.parametrize("kind", ["plain", "symmetrised", "canonical"])
def test_lines_of_levels_with_square_roots_equal_exact_diagonalisation(kind):
    # Levels -1 -+ sqrt(2) and 0 of a three-level site; the elastic line's weight has
    # coefficients in QQ(sqrt(2)) (once left with an auxiliary variable by the presentable form).
    s = sr.nlevel("s", 3)
    H = -2 + s.op(0, 1) + s.op(1, 0) + 2 * s.op(1, 1) + 2 * s.op(2, 2)
    A = 2 * s.op(0, 0)
    lines = sr.Model(H).response(A).correlation_lines(kind)
    assert all(w.free_symbols <= {beta} for _, w in lines)
    T = 0.7
    Hm = np.array([[-2, 1, 0], [1, 0, 0], [0, 0, 0]], dtype=float)
    Am = np.diag([2.0, 0.0, 0.0])
    f_ref, s_ref = numeric.correlation_lines(Hm, Am, Am, 1.0 / T, kind=kind)
    got = {round(float(Om), 9): number(at_point(w, {}, T)) for Om, w in lines}
    want: dict = {}
    for f, w in zip(f_ref, s_ref):
        want[round(float(f), 9) + 0.0] = want.get(round(float(f), 9) + 0.0, 0) + w
    want = {f: w for f, w in want.items() if abs(w) > 1e-13}
    assert sorted(got) == sorted(want)
    for f in got:
        assert_close(got[f], want[f], what=f"{kind} line at {f}")


# A third of the backbone's examples: the presentation test covers the plain lines too.
@settings(max_examples=max(5, settings().max_examples // 3))
@given(model=random_models(), data=st.data())
def test_correlation_lines_equal_exact_diagonalisation(model, data):
    r = response_or_skip(model)
    exact = data.draw(parameter_points(model.params))
    T = data.draw(st.sampled_from([0.3, 1.0, 4.0]))
    kind = data.draw(st.sampled_from(["plain", "symmetrised", "canonical"]))
    mine = [(number(at_point(Om, exact, T)).real, number(at_point(s, exact, T)))
            for Om, s in r.correlation_lines(kind)]
    f_ref, s_ref = numeric.correlation_lines(model.H_num(exact), model.A_mat, model.B_mat,
                                             1.0 / T, kind=kind)
    tol = 1e-7 * max([1.0, *(abs(f) for f in f_ref)])
    grid = sorted({round(f / tol) for f, _ in mine} | {round(f / tol) for f in f_ref})
    for key in grid:
        a = sum((s for f, s in mine if round(f / tol) == key), 0j)
        b = sum((s for f, s in zip(f_ref, s_ref) if round(f / tol) == key), 0j)
        assert_close(a, b, rtol=1e-9, atol=1e-11, what=f"{kind} line at {key * tol}")
