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
    ("spin S not half-integer", lambda: sr.spin("a", "1/3"),
     r"S=1/3 must be a positive integer or half-integer"),
    ("spin S too large", lambda: sr.spin("a", 50), r"S=50 is larger than the supported maximum"),
    ("spin name", lambda: sr.spin("", 1), r"site name '' is not valid"),
    ("nlevel n", lambda: sr.nlevel("q", "3"), r"n='3' must be an integer"),
    ("boson cutoff", lambda: sr.boson("x", 10**6), r"cutoff=1000000 must be an integer from 1 to"),
    ("non-finite float coefficient", lambda: float("nan") * s.z, r"nan is not a finite number"),
    ("Model of a string", lambda: sr.Model("s.z"),
     r"Hamiltonian must be an operator expression, got str"),
    ("Model name", lambda: sr.Model(s.z, name=3), r"name=3 must be a string"),
    ("observables not a mapping", lambda: sr.Model(s.z, observables=[s.z]),
     r"observables=.* must be a mapping"),
    ("reserved parameter name", lambda: sr.Model(sp.Symbol("beta", positive=True) * s.z),
     r"parameter 'beta' is reserved for the temperature, frequency and time symbols"),
    ("unknown observable", lambda: model.response("M"), r"response A: no observable named 'M'"),
    ("convention type", lambda: model.response(s.x, convention="retarded"),
     r"convention='retarded' must be a symresp Convention"),
    ("convention value", lambda: sr.Convention(prescription="causal"),
     r"prescription='causal' is not one of"),
    ("budget type", lambda: model.response(s.x, budget=10),
     r"budget=10 must be a symresp\.models\.Budget"),
    ("budget seconds", lambda: sr.Budget(seconds=-1), r"seconds=-1 must be a positive finite number"),
    ("static kind", lambda: resp.static("adiabatic"),
     r"kind='adiabatic' must be 'isothermal' or 'isolated'"),
    ("expectation which", lambda: resp.expectation("C"), r"which='C' must be 'A' or 'B'"),
    ("evaluate quantity", lambda: resp.evaluate("entropy", params={"h": 1}, T=1),
     r"quantity='entropy' must be one of"),
    ("evaluate missing parameter", lambda: resp.evaluate("isothermal", T=1),
     r"give values for h in params="),
    ("evaluate unknown parameter", lambda: resp.evaluate("isothermal", params={"J": 1}, T=1),
     r"unknown parameter 'J'"),
    ("evaluate bad T", lambda: resp.evaluate("isothermal", params={"h": 1}, T=-1),
     r"T=-1 must be a positive temperature"),
    ("evaluate non-finite value", lambda: resp.evaluate("isothermal", params={"h": float("nan")}, T=1),
     r"value nan for h is not finite"),
    ("reference bad T", lambda: resp.reference(params={"h": 1}, T=0),
     r"T=0 must be a positive finite number"),
    ("zero_temperature kind", lambda: resp.zero_temperature("both"),
     r"kind='both' must be 'isothermal' or 'isolated'"),
    ("matrix of unknown name", lambda: model.matrix("Q"), r"matrix: no observable named 'Q'"),
    ("array missing parameter", lambda: model.array(),
     r"no numeric value given for parameter\(s\) h \(pass params="),
    ("load_case missing file", lambda: sr.load_case("no_such_case_here"),
     r"no_such_case_here: no such case file or bundled case"),
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
