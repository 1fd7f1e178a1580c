"""Evaluator numerics that do not depend on units, extreme temperatures, and argument types.

The same model evaluated in kelvin and in joules (every energy and the temperature times
k_B) gives the same susceptibility after conversion: chi has the dimension of 1/energy, so
chi_J = chi_K / k_B. Degenerate levels are grouped relative to the energy scale of the point,
never by an absolute tolerance that would call all of an SI spectrum (~1e-23 J) degenerate.
"""

from __future__ import annotations

import functools
import warnings

import numpy as np
import pytest
import sympy as sp

import symresp as sr

from ..conftest import assert_close

#: Boltzmann constant in J/K (exact since the 2019 SI redefinition). Source: CODATA 2018.
K_B = 1.380649e-23
#: Relative agreement of the kelvin and joule evaluations (issue target).
RTOL_UNITS = 1e-12
HALF = sp.Rational(1, 2)


@functools.cache
def _models():
    J = sp.Symbol("J", positive=True)
    h = sp.Symbol("h", real=True)
    D = sp.Symbol("D", real=True)
    E = sp.Symbol("E", real=True)
    a, b = sr.spin("a", HALF), sr.spin("b", HALF)
    dimer = sr.Model(J * (a.vec @ b.vec) - h * (a.z + b.z), parameters=(J, h))
    s = sr.spin("s", 1)
    ion = sr.Model(D * s.z**2 + E * (s.x**2 - s.y**2) - h * s.z, parameters=(D, E, h))
    pairs = [(dimer.response(a.x + b.x), (10.0, 2.0)), (dimer.response(a.z + b.z), (10.0, 2.0)),
             (ion.response(s.x), (5.0, 0.0, 0.0)), (ion.response(s.z), (5.0, 0.7, 0.3))]
    return [(r, r.numpy(), p) for r, p in pairs]


@pytest.fixture(scope="module", params=range(4), ids=["dimer-x", "dimer-z", "ion-x", "ion-z"])
def case(request):
    _, f, p = _models()[request.param]
    return f, p


@pytest.mark.parametrize("T", [0.5, 3.0, 40.0])
def test_kelvin_and_joule_give_the_same_susceptibility(case, T):
    f, p = case
    pJ = tuple(v * K_B for v in p)
    for name in ("chi_isothermal", "chi_isolated"):
        in_kelvin = getattr(f, name)(T, *p)
        in_joule = getattr(f, name)(T * K_B, *pJ) * K_B
        assert_close(in_joule, in_kelvin, rtol=RTOL_UNITS, atol=0.0, what=name)
    w = np.array([0.5, 2.0, 9.0])
    chi_K = f.chi_omega(w, T, *p, eta=0.1)
    chi_J = f.chi_omega(w * K_B, T * K_B, *pJ, eta=0.1 * K_B) * K_B
    # (zero where A and B commute with H: compared on the scale of the largest value)
    assert_close(chi_J, chi_K, rtol=RTOL_UNITS, atol=RTOL_UNITS * np.abs(chi_K).max(),
                 what="chi(omega)")


def test_the_isolated_susceptibility_of_an_si_dimer_is_not_zero():
    f, p = _models()[0][1], (10.0 * K_B, 2.0 * K_B)
    assert f.chi_isolated(3.0 * K_B, *p) > 1e18      # ~0.023 / k_B, not 0


@pytest.mark.parametrize("T", [1e-320, 5e-309, np.array([1.0, 1e-320]), float("nan"), -1.0, 0.0,
                               np.array([1.0, np.nan])])
def test_temperatures_beyond_a_float_give_a_clear_error(T):
    f, p = _models()[0][1], (10.0, 2.0)
    for call in (lambda: f.chi_isothermal(T, *p), lambda: f.chi_isolated(T, *p),
                 lambda: f.chi_omega(1.0, T, *p, eta=0.1), lambda: f.jacobian_static(T, *p)):
        with pytest.raises(ValueError, match="T must be"):
            call()


@pytest.mark.parametrize("T", [1e-300, 1e-200, 1e300, np.array([1e-300, 1.0, 1e300]), float("inf"),
                               np.array([1.0, np.inf])])
def test_extreme_but_representable_temperatures_give_finite_values(T):
    for _, f, p in _models():
        with warnings.catch_warnings():
            warnings.simplefilter("error")          # no overflow on the way either
            values = (f.chi_isothermal(T, *p), f.chi_isolated(T, *p),
                      f.chi_omega(1.0, T, *p, eta=0.1), f.jacobian_static(T, *p))
        for v in values:
            assert np.all(np.isfinite(v)), (T, v)


@pytest.mark.parametrize("bad", ["3", b"3", None, True, 1 + 2j, [1.0, "a"], np.array(["1.0"]),
                                 {"T": 1.0}, object()])
def test_non_numeric_arguments_raise_type_error(bad):
    f, p = _models()[0][1], (10.0, 2.0)
    with pytest.raises(TypeError, match="must be a real number"):
        f.chi_isothermal(bad, *p)
    with pytest.raises(TypeError, match="must be a real number"):
        f.chi_isothermal(1.0, bad, p[1])
    with pytest.raises(TypeError, match="must be a real number"):
        f.chi_omega(bad, 1.0, *p, eta=0.1)


def test_the_api_refuses_text_where_a_number_belongs():
    r = _models()[0][0]
    for call in (lambda: r.evaluate("isothermal", params={"J": 1, "h": 0.2}, T="0.5"),
                 lambda: r.evaluate("time", params={"J": 1, "h": 0.2}, T=0.5,
                                    time_value="__import__('os').getcwd()"),
                 lambda: r.evaluate("frequency", params={"J": 1, "h": 0.2}, T=0.5,
                                    omega_value="1+2j"),
                 lambda: r.evaluate("isothermal", params={"J": "1", "h": 0.2}, T=0.5),
                 lambda: r.reference(params={"J": 1, "h": 0.2}, T="0.5")):
        with pytest.raises(sr.InputError, match="text is never evaluated|not a number|must be a"):
            call()
