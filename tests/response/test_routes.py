"""The routes of a derivation for models with boson modes.

* equations of motion (no cutoff): the oscillator, the displaced oscillator and two coupled
  oscillators against their closed forms; a spin in a field on both routes;
* exact diagonalisation of the truncated model: the qubit-boson (Jaynes-Cummings) ladder
  against the dressed-state levels and the numeric reference; the cutoff's edge levels and the
  truncation estimate; agreement of both routes where both apply;
* the route choice and its errors.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp.errors import ClosedFormError, InputError
from tests.conftest import RTOL_EXACT, RTOL_LOOSE, assert_close

w, m, f, k = sp.symbols("w m f k", positive=True)
w1, w2 = sp.symbols("w1 w2", positive=True)


def _oscillator(cutoff: int = 12):
    a = sr.boson("a", cutoff)
    return a, (a + sr.dagger(a)) / sp.sqrt(2 * m * w)


# ------------------------------------------------------------------ equations of motion
def test_oscillator_susceptibility_is_the_forced_oscillator_at_every_temperature():
    # Source: Landau & Lifshitz, Statistical Physics (forced oscillator), from memory:
    # chi_xx(omega) = 1/(m (w0^2 - omega^2)), independent of temperature.
    a, x = _oscillator()
    r = sr.Model(w * sr.dagger(a) * a).response(x)
    assert r.route == "motion"
    assert sp.simplify(r.frequency() - 1 / (m * (w**2 - sr.omega**2))) == 0
    assert r.static("isothermal") == r.static("isolated") == 1 / (m * w**2)
    assert r.poles() == [(-w, -1 / (2 * m * w)), (w, 1 / (2 * m * w))]
    assert "no truncation" in r.summary()


def test_displaced_oscillator_keeps_its_susceptibility_and_gains_an_elastic_line():
    # A static force f shifts x by -2f/(w sqrt(2 m w)) (common practice: completing the square);
    # the response does not change and <x>^2 appears as the elastic correlation line.
    a, x = _oscillator()
    r = sr.Model(w * sr.dagger(a) * a + f * (a + sr.dagger(a))).response(x)
    assert r.route == "motion"
    assert sp.simplify(r.frequency() - 1 / (m * (w**2 - sr.omega**2))) == 0
    lines = dict(r.correlation_lines())
    assert sp.simplify(lines[0] - 2 * f**2 / (m * w**3)) == 0
    assert sp.simplify(r.expectation("A") + 2 * f / (w * sp.sqrt(2 * m * w))) == 0


@pytest.mark.parametrize("kind", ["plain", "symmetrised", "canonical"])
def test_motion_correlation_lines_obey_detailed_balance(kind):
    # Fluctuation-dissipation, line by line (common practice; docs/conventions.md section 9):
    # w_k = (1 - exp(-beta Omega_k)) s_k; symmetrised s = w coth(beta Omega/2)/2; canonical
    # s = w / (beta Omega).
    a, x = _oscillator()
    r = sr.Model(w * sr.dagger(a) * a).response(x)
    poles = dict(r.poles())
    b = sr.beta
    for Om, s_k in r.correlation_lines(kind):
        expected = {"plain": poles[Om] / (1 - sp.exp(-b * Om)),
                    "symmetrised": poles[Om] * sp.coth(b * Om / 2) / 2,
                    "canonical": poles[Om] / (b * Om)}[kind]
        value = (s_k - expected).subs({w: sp.Rational(7, 5), m: 2, b: sp.Rational(3, 2)})
        assert abs(complex(sp.N(value, 30))) < 1e-25


def _coupled(g_ab):
    a, b = sr.boson("a", 6), sr.boson("b", 6)
    x1 = (a + sr.dagger(a)) / sp.sqrt(2 * w1)
    x2 = (b + sr.dagger(b)) / sp.sqrt(2 * w2)
    H = w1 * sr.dagger(a) * a + w2 * sr.dagger(b) * b + g_ab * x1 * x2
    return H, x1, x2


@settings(max_examples=6)
@given(st.floats(0.5, 2.0), st.floats(0.5, 2.0), st.floats(-0.3, 0.3), st.floats(0.1, 3.0))
def test_coupled_oscillators_against_their_normal_mode_formula(v1, v2, kv, om):
    # Two unit-mass oscillators coupled by k x1 x2 (common practice: the classical equations
    # of motion, exact for quadratic H): chi_11 = (w2^2 - W^2)/((w1^2 - W^2)(w2^2 - W^2) - k^2),
    # chi_12 = -k/((w1^2 - W^2)(w2^2 - W^2) - k^2) at real frequency W.
    H, x1, x2 = _coupled(k)
    pt = {w1: sp.Float(v1), w2: sp.Float(v2), k: sp.Float(abs(kv) * min(v1, v2) ** 2 * 0.9 + 1e-3)}
    den = (pt[w1]**2 - om**2) * (pt[w2]**2 - om**2) - pt[k]**2
    model = sr.Model(H)
    r11 = model.response(x1, x1)
    r12 = model.response(x1, x2)
    assert r11.route == r12.route == "motion"
    got11 = complex(sp.N(r11.frequency().subs(pt).subs(sr.omega, om), 20))
    got12 = complex(sp.N(r12.frequency().subs(pt).subs(sr.omega, om), 20))
    assert_close(got11, float((pt[w2]**2 - om**2) / den), rtol=RTOL_LOOSE, what="chi_11")
    assert_close(got12, float(-pt[k] / den), rtol=RTOL_LOOSE, what="chi_12")


def test_spin_in_a_field_gives_the_same_response_on_both_routes():
    # A finite model whose motion closes: both routes are exact and must agree.
    h = sp.Symbol("h", positive=True)
    s = sr.spin("s", sp.Rational(1, 2))
    model = sr.Model(h * s.z)
    lehmann = model.response(s.x)                  # auto keeps exact diagonalisation here
    motion = model.response(s.x, route="motion")
    assert (lehmann.route, motion.route) == ("lehmann", "motion")
    for kind in ("isothermal", "isolated"):
        assert sp.simplify((lehmann.static(kind) - motion.static(kind)).rewrite(sp.exp)) == 0
    assert sp.simplify((lehmann.frequency() - motion.frequency()).rewrite(sp.exp)) == 0


def test_motion_evaluator_matches_the_closed_form():
    a, x = _oscillator()
    r = sr.Model(w * sr.dagger(a) * a + f * (a + sr.dagger(a))).response(x)
    mod = r.numpy()
    assert mod.PARAMETERS == ("f", "w", "m")        # the model's order (by name here), then A's
    vals = {"w": 1.3, "f": 0.2, "m": 0.7}
    args = [vals[p] for p in mod.PARAMETERS]
    assert_close(mod.chi_isothermal(0.5, *args), 1 / (0.7 * 1.3**2), what="isothermal")
    om = np.array([0.1, 0.9, 2.5])
    assert_close(mod.chi_omega(om, 0.5, *args, eta=1e-3),
                 1 / (0.7 * (1.3**2 - (om + 1e-3j) ** 2)), rtol=1e-9, what="chi(omega)")


def test_motion_route_has_no_levels_and_says_what_to_do():
    a, x = _oscillator()
    r = sr.Model(w * sr.dagger(a) * a).response(x)
    for get in (lambda: r.levels, lambda: r.transitions, r.partition_function):
        with pytest.raises(ClosedFormError, match="route='lehmann'"):
            get()


# ------------------------------------------------------------------ truncated models
def _jaynes_cummings(cutoff: int):
    w0, wq, g = sp.symbols("w0 wq g", positive=True)
    c = sr.boson("c", cutoff)
    q = sr.spin("q", sp.Rational(1, 2))
    H = w0 * sr.dagger(c) * c + wq * q.z + g * (sr.dagger(c) * q.minus + c * q.plus)
    return sr.Model(H), q, (w0, wq, g)


def test_jaynes_cummings_levels_are_the_dressed_states():
    # Source: E. T. Jaynes and F. W. Cummings, Proc. IEEE 51, 89 (1963); dressed-state formula
    # from memory: E_0 = -wq/2, E_{n,+-} = w0 (n + 1/2) +- sqrt((wq - w0)^2/4 + g^2 (n + 1)).
    N = 10                              # quanta 0..N: doublets n = 0..N-1 are complete
    model, q, (w0, wq, g) = _jaynes_cummings(N)
    r = model.response(q.x)
    assert r.route == "lehmann"
    assert type(r.derivation.spectrum).__name__ == "LadderSpectrum"
    pt = {w0: sp.Rational(1), wq: sp.Rational(9, 10), g: sp.Rational(1, 20)}
    got = sorted(float(sp.re(sp.N(lv.energy.subs(pt), 20))) for lv in r.levels)
    expected = [-0.45]
    for n in range(N):
        root = math.sqrt(0.1**2 / 4 + 0.05**2 * (n + 1))
        expected += [n + 0.5 - root, n + 0.5 + root]
    expected.append(N * 1.0 + 0.45)     # |N, up>: its partner |N + 1, down> is above the cutoff
    assert_close(sorted(got), sorted(expected), what="levels")
    trunc = r.derivation.truncation
    assert trunc is not None and len(trunc.affected) == 1
    top = max(range(len(r.levels)), key=lambda a: float(sp.N(r.levels[a].energy.subs(pt))))
    assert trunc.affected == (top,)


@settings(max_examples=5)
@given(st.floats(0.5, 2.0), st.floats(0.5, 2.0), st.floats(0.01, 0.4), st.floats(0.2, 2.0))
def test_jaynes_cummings_response_against_the_numeric_reference(v0, vq, vg, T):
    model, q, _ = _jaynes_cummings(8)
    r = model.response(q.x)
    mod = r.numpy()
    P = {"w0": v0, "wq": vq, "g": vg}
    args = [P[p] for p in mod.PARAMETERS]
    ref = r.reference(params=P, T=T)
    assert_close(mod.chi_isothermal(T, *args), ref.isothermal.real, rtol=RTOL_LOOSE, what="isothermal")
    assert_close(mod.chi_isolated(T, *args), ref.isolated.real, rtol=RTOL_LOOSE, what="isolated")
    om = np.array([0.3, 1.1])
    assert_close(mod.chi_omega(om, T, *args, eta=0.05), ref.frequency(om, 0.05), rtol=1e-8,
                 what="chi(omega)")


def test_truncated_and_cutoff_free_routes_agree_to_the_truncation_error():
    # The plain oscillator on both routes: exact diagonalisation at cutoff N misses the upward
    # transition of the top level, an error of order the Gibbs weight of the edge state.
    a = sr.boson("a", 14)
    x = a + sr.dagger(a)
    model = sr.Model(w * sr.dagger(a) * a)
    exact = 2 / 1.0                                 # 2/w for x = a + a^+
    truncated = model.response(x, route="lehmann")
    trunc = truncated.derivation.truncation
    assert "boson cutoff (a at 14 quanta)" in truncated.summary()
    for T, small in ((0.2, True), (6.0, False)):
        got = truncated.evaluate("isothermal", params={"w": 1.0}, T=T).real
        eps = trunc.estimate_at({"w": 1.0}, T)
        if small:
            assert eps < 1e-25 and abs(got - exact) < RTOL_EXACT * exact
        else:                                       # the cutoff shows, and the estimate says so
            assert eps > 1e-3 and abs(got - exact) > 1e-3 * exact


def test_route_choice_errors_are_clear():
    model, q, _ = _jaynes_cummings(3)
    with pytest.raises(InputError, match="route="):
        model.response(q.x, route="fastest")
    with pytest.raises(ClosedFormError, match="does not apply.*route='lehmann'"):
        model.response(q.x, route="motion")
    auto = model.response(q.x)
    summary = auto.summary()
    assert "equations of motion not closed" in summary
    # The summary is the results section: radicals named once, lines a page can hold.
    assert "    R1 = sqrt(4*g**2 + w0**2 - 2*w0*wq + wq**2)" in summary.splitlines()
    formulas = [ln for ln in summary.splitlines()[6:] if not ln.startswith("  note:")]
    assert "[cutoff]" in summary and max(map(len, formulas)) < 200
    tex = auto.latex()                  # the same forms, as one aligned block
    assert tex.startswith("\\begin{aligned}") and tex.endswith("\\end{aligned}")
    assert "R_{1} &= \\sqrt{4 g^{2} + w_{0}^{2} - 2 w_{0} wq + wq^{2}} \\\\" in tex.splitlines()


def test_parameters_that_appear_only_in_the_observable_take_values():
    # m enters through A = x only; evaluate and reference accept it by name.
    a, x = _oscillator(cutoff=30)
    r = sr.Model(w * sr.dagger(a) * a).response(x, route="lehmann")
    P = {"w": 1.0, "m": 0.5}
    assert_close(r.evaluate("isothermal", params=P, T=0.5), 2.0, what="1/(m w^2)")
    assert_close(r.reference(params=P, T=0.5).isothermal, 2.0, what="reference")
    with pytest.raises(InputError, match="give values for m"):
        r.evaluate("isothermal", params={"w": 1.0}, T=0.5)
