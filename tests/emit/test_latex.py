"""Paper-ready LaTeX (symresp.emit.latex_document)."""

from __future__ import annotations

import re

import pytest
import sympy as sp

import symresp as sr
from symresp.conventions import Convention
from symresp.emit import latex_document
from symresp.errors import InputError

from ._models import response


def _rows(doc: str) -> list[str]:
    body = doc.split("\\begin{aligned}\n", 1)[1].split("\\end{aligned}", 1)[0]
    return [r.strip() for r in body.split("\\\\\n") if r.strip()]


def test_document_is_one_aligned_block_with_all_parts():
    doc = latex_document(response("dimer_zz").derivation)
    assert doc.count("\\begin{aligned}") == 1 and doc.count("\\end{aligned}") == 1
    rows = _rows(doc)
    assert rows[0].startswith(r"Z &= \sum_a d_a\, e^{-\beta E_a} = ")
    assert sum(r.startswith("E_{") for r in rows) == 4
    assert any(r.startswith(r"\chi^{T}_{AB} &= ") for r in rows)
    assert any(r.startswith(r"\chi^{\mathrm{isol}}_{AB} &= ") for r in rows)
    assert all(line.startswith("%") for line in doc.split("\\begin{aligned}")[0].splitlines())
    assert "Convention:" in doc and "fingerprint" in doc


def test_levels_show_degeneracies_and_quantum_numbers():
    J = sp.Symbol("J", real=True)
    a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    doc = latex_document(sr.Model(J * (a.vec @ b.vec)).response(a.z + b.z).derivation)
    levels = [r for r in _rows(doc) if r.startswith("E_{")]
    assert levels[0].startswith(r"E_{1} &= \frac{J}{4}, & d_{1} &= 3")
    assert levels[1].startswith(r"E_{2} &= - \frac{3 J}{4}, & d_{2} &= 1")
    assert "S^z = 0" in levels[1]


def test_symbols_are_typeset_as_physicists_write_them():
    eps, D0 = sp.Symbol("epsilon", real=True), sp.Symbol("Delta_0", positive=True)
    J1 = sp.Symbol("J_1", real=True)
    q, s = sr.spin("q", sp.Rational(1, 2)), sr.spin("s", sp.Rational(1, 2))
    doc = latex_document(sr.Model(eps * q.z + D0 * q.x).response(q.z).derivation)
    doc += latex_document(sr.Model(J1 * (q.vec @ s.vec)).response(q.z + s.z).derivation)
    assert r"\beta" in doc and r"\epsilon" in doc and r"\Delta_{0}" in doc and "J_{1}" in doc
    assert "beta" not in doc.replace(r"\beta", "")


def test_named_combinations_are_substituted_and_defined():
    eps, D0 = sp.Symbol("epsilon", real=True), sp.Symbol("Delta_0", positive=True)
    Om = sp.Symbol("Omega", positive=True)
    q = sr.spin("q", sp.Rational(1, 2))
    r = sr.Model(eps * q.z + D0 * q.x).response(q.z)
    plain = latex_document(r.derivation)
    named = latex_document(r.derivation, substitutions={Om: sp.sqrt(eps**2 + D0**2)})
    assert r"\sqrt" in plain
    levels = [row for row in _rows(named) if row.startswith("E_{")]
    assert levels and all(r"\sqrt" not in row and r"\Omega" in row for row in levels)
    assert _rows(named)[-1] == r"\Omega &= \sqrt{\Delta_{0}^{2} + \epsilon^{2}}"


def test_implicit_roots_are_named_and_defined():
    doc = latex_document(response("tilted_pair").derivation)
    assert "CRootOf" not in doc and "x__block" not in doc
    defs = [r for r in _rows(doc) if re.match(r"r_\{\d,k\} &: ", r)]
    assert len(defs) == 1   # one row names the whole root set
    assert r"\text{the roots of } 36 x^{3} - 72 x^{2} + 17 x + 13 = 0" in defs[0]
    assert all(f"r_{{1,{k}}} \\approx" in defs[0] for k in range(3))


@pytest.mark.parametrize("convention,sign", [
    (Convention(), "-"),
    (Convention(prescription="advanced"), "+"),
    (Convention(fourier="-i omega t"), "+"),
    (Convention(fourier="-i omega t", prescription="advanced"), "-"),
])
def test_pole_sum_states_the_prescription_of_the_convention(convention, sign):
    h = sp.Symbol("h", positive=True)
    s = sr.spin("s", sp.Rational(1, 2))
    doc = latex_document(sr.Model(h * s.z).response(s.x, convention=convention).derivation)
    assert rf"\frac{{w_k}}{{\Omega_k - \omega {sign} i0^+}}" in doc


def test_document_is_deterministic():
    d = response("triangle_s0x").derivation
    assert latex_document(d) == latex_document(d)


@pytest.mark.parametrize("kwargs", [
    {"substitutions": [("Delta", 1)]},
    {"substitutions": {"Delta": sp.sqrt(2)}},
    {"substitutions": {sp.Symbol("D"): 0.5}},
    {"substitutions": {sp.Symbol("D"): object()}},
    {"symbol_names": {"J": "J'"}},
])
def test_latex_rejects_bad_arguments(kwargs):
    with pytest.raises(InputError):
        latex_document(response("dimer_zz").derivation, **kwargs)


def test_latex_rejects_non_derivations():
    with pytest.raises(InputError):
        latex_document("H = J S.S")


def test_parametric_implicit_roots_are_named_and_defined_by_their_polynomial():
    doc = latex_document(response("tilted_field").derivation)
    assert "LevelRoot" not in doc and "varepsilon" not in doc
    defs = [r for r in _rows(doc) if re.match(r"r_\{\d,k\} &: ", r)]
    assert len(defs) == 1   # one row names the whole root set
    # The cubic of the block D S_z^2 + h S_z + hx S_x in the level variable x.
    assert all("x^{3}" in d and "hx" in d and r"\approx" not in d for d in defs)
