"""One table of bad arguments for the public entry points: each raises InputError naming the problem."""

from __future__ import annotations

import pytest
import sympy as sp

import symresp as sr
from symresp.errors import InputError

s = sr.spin("s_bad", sp.Rational(1, 2))
h = sp.Symbol("h", positive=True)
model = sr.Model(h * s.z)
resp = model.response(s.x)

BAD = [
    ("spin S not half-integer", lambda: sr.spin("a", "1/3"), "half-integer"),
    ("spin S too large", lambda: sr.spin("a", 50), "maximum"),
    ("spin name", lambda: sr.spin("", 1), "not valid"),
    ("nlevel n", lambda: sr.nlevel("q", "3"), "integer"),
    ("boson cutoff", lambda: sr.boson("x", 10**6), "cutoff"),
    ("float coefficient", lambda: 0.1 * s.z, "float"),
    ("Model of a string", lambda: sr.Model("s.z"), "operator expression"),
    ("Model name", lambda: sr.Model(s.z, name=3), "name"),
    ("observables not a mapping", lambda: sr.Model(s.z, observables=[s.z]), "mapping"),
    ("reserved parameter name", lambda: sr.Model(sp.Symbol("beta", positive=True) * s.z), "reserved"),
    ("unknown observable", lambda: model.response("M"), "no observable named"),
    ("convention type", lambda: model.response(s.x, convention="retarded"), "Convention"),
    ("convention value", lambda: sr.Convention(prescription="causal"), "prescription"),
    ("budget type", lambda: model.response(s.x, budget=10), "Budget"),
    ("budget seconds", lambda: sr.Budget(seconds=-1), "seconds"),
    ("static kind", lambda: resp.static("adiabatic"), "isothermal"),
    ("expectation which", lambda: resp.expectation("C"), "which"),
    ("evaluate quantity", lambda: resp.evaluate("entropy", params={"h": 1}, T=1), "quantity"),
    ("evaluate missing parameter", lambda: resp.evaluate("isothermal", T=1), "h"),
    ("evaluate unknown parameter", lambda: resp.evaluate("isothermal", params={"J": 1}, T=1), "unknown parameter"),
    ("evaluate bad T", lambda: resp.evaluate("isothermal", params={"h": 1}, T=-1), "temperature"),
    ("evaluate non-finite value", lambda: resp.evaluate("isothermal", params={"h": float("nan")}, T=1), "finite"),
    ("reference bad T", lambda: resp.reference(params={"h": 1}, T=0), "positive"),
    ("zero_temperature kind", lambda: resp.zero_temperature("both"), "kind"),
    ("matrix of unknown name", lambda: model.matrix("Q"), "no observable"),
    ("array missing parameter", lambda: model.array(), "params"),
    ("load_case missing file", lambda: sr.load_case("no_such_case_here"), "no_such_case_here"),
]


@pytest.mark.parametrize("what, call, match", BAD, ids=[b[0] for b in BAD])
def test_bad_argument_raises_input_error(what, call, match):
    with pytest.raises(InputError, match=match):
        call()


def test_other_conventions_are_reachable_and_consistent():
    # docs/conventions.md: H0 + f B flips the sign; the e^{-i omega t} Fourier sign maps omega -> -omega.
    default = resp.frequency()
    flipped = model.response(s.x, convention=sr.Convention(perturbation="H0 + f B"))
    assert sp.simplify(flipped.frequency() + default) == 0
    assert sp.simplify(flipped.static("isothermal") + resp.static("isothermal")) == 0
    reversed_ = model.response(s.x, convention=sr.Convention(fourier="-i omega t"))
    assert sp.simplify(reversed_.frequency() - default.subs(sr.omega, -sr.omega)) == 0
    assert reversed_.convention.fourier == "-i omega t" and resp.convention == sr.Convention()
