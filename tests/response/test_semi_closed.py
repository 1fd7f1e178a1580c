"""Semi-closed form of any degree: an irreducible factor of degree >= 3 with several parameters
is kept as an exact root set, never refused.

Models: a spin 2 in a tilted field with axial anisotropy (one irreducible quintic in D and h:
no symmetry is left), and the open 3-site Hubbard chain (cubics in tc and U in several
fillings). Each is compared with exact diagonalisation of matrices built here, independently
of the symbolic path: the emitted numpy evaluator (vectorised over parameter points), the
presented formula with its where-list substituted, and the LaTeX documents that name the
root set.
"""

from __future__ import annotations

import functools
import re

import numpy as np
import pytest
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp import numeric
from symresp.emit import latex_document, presentation_latex
from symresp.spectrum import LevelRoot

from ..conftest import ATOL_EXACT, RTOL_EXACT, assert_close

D, h = sp.symbols("D h", real=True)
tc, U = sp.symbols("tc U", positive=True)


# ---------------------------------------------------------------- independent reference
def _spin_matrices(S2: int):
    """(Sx, Sy, Sz) of spin S = S2/2 in the basis m = S, S-1, ..., -S (common practice)."""
    S = S2 / 2
    m = S - np.arange(S2 + 1)
    sp_ = np.zeros((S2 + 1, S2 + 1))
    for k in range(1, S2 + 1):          # <m+1|S+|m> = sqrt(S(S+1) - m(m+1))
        sp_[k - 1, k] = np.sqrt(S * (S + 1) - m[k] * (m[k] + 1))
    sx = (sp_ + sp_.T) / 2
    sy = (sp_ - sp_.T) / 2j
    return sx, sy, np.diag(m)


def _fermion_ops(n_modes: int):
    """Jordan-Wigner annihilators of n_modes fermion modes (first mode leftmost)."""
    a = np.array([[0.0, 1.0], [0.0, 0.0]])
    z = np.diag([1.0, -1.0])
    out = []
    for k in range(n_modes):
        m = np.array([[1.0]])
        for j in range(n_modes):
            m = np.kron(m, z if j < k else (a if j == k else np.eye(2)))
        out.append(m)
    return out


@functools.lru_cache(maxsize=None)
def _quintic():
    s = sr.spin("s", 2)
    r = sr.Model(D * s.z**2 + h * (s.z + s.x), name="tilted_spin2").response(s.z + s.x)
    return r, r.numpy()


def _quintic_reference(Dv: float, hv: float, T: float):
    sx, _, sz = _spin_matrices(4)
    H = Dv * sz @ sz + hv * (sz + sx)
    A = sz + sx
    return numeric.solve(H, A, A, 1.0 / T)


@functools.lru_cache(maxsize=None)
def _hubbard3():
    sites = [sr.spinful_fermion(f"c{i}") for i in range(3)]
    H = 0
    for i in range(2):
        for s in (0, 1):
            a, b = sites[i][s], sites[i + 1][s]
            H += -tc * (sr.dagger(a) * b + sr.dagger(b) * a)
    for up, dn in sites:
        H += U * sr.dagger(up) * up * sr.dagger(dn) * dn
    Sz = sum((sr.dagger(up) * up - sr.dagger(dn) * dn) / 2 for up, dn in sites)
    r = sr.Model(H, name="hubbard_chain3").response(Sz)
    return r, r.numpy()


def _hubbard3_reference(tv: float, Uv: float, T: float):
    c = _fermion_ops(6)                          # modes c0_up, c0_dn, c1_up, ...
    n = [x.T @ x for x in c]
    H = sum(-tv * (c[2 * i + s].T @ c[2 * i + 2 + s] + c[2 * i + 2 + s].T @ c[2 * i + s])
            for i in range(2) for s in (0, 1))
    H = H + Uv * sum(n[2 * i] @ n[2 * i + 1] for i in range(3))
    Sz = sum(n[2 * i] - n[2 * i + 1] for i in range(3)) / 2
    return numeric.solve(H, Sz, Sz, 1.0 / T)


# ---------------------------------------------------------------- derivation
def test_quintic_in_two_parameters_is_kept_as_one_root_set():
    r, _ = _quintic()
    roots = {lv.energy for lv in r.levels}
    assert len(roots) == 5 and all(isinstance(e, LevelRoot) for e in roots)
    assert {len(e.args) for e in roots} == {1 + 6}            # index + 6 coefficients: degree 5
    coeffs = next(iter(roots)).args[1:]
    assert set().union(*[sp.sympify(c).free_symbols for c in coeffs]) == {D, h}
    # Irreducible over QQ(D, h): the whole 5-state space is one level set of one factor.
    x = sp.Symbol("x")
    poly = next(iter(roots)).polynomial(x)
    assert len(sp.factor_list(poly, x)[1]) == 1


def test_hubbard_chain_of_three_sites_derives_with_parametric_cubics():
    r, _ = _hubbard3()
    implicit = [lv.energy for lv in r.levels if isinstance(lv.energy, LevelRoot)]
    assert implicit and all(len(e.args) == 1 + 4 for e in implicit)
    assert any({tc, U} <= sp.sympify(e).free_symbols for e in implicit)


# ---------------------------------------------------------------- numbers
@settings(max_examples=12)
@given(Dv=st.floats(-2.0, 2.0), hv=st.floats(0.05, 2.0), T=st.sampled_from([0.2, 1.0, 5.0]))
def test_quintic_evaluator_matches_exact_diagonalisation(Dv, hv, T):
    _, f = _quintic()
    ref = _quintic_reference(Dv, hv, T)
    scale = max(1.0, abs(ref.isothermal))
    assert_close(f.chi_isothermal(T, D=Dv, h=hv) / scale, ref.isothermal / scale, what="isothermal")
    assert_close(f.chi_isolated(T, D=Dv, h=hv) / scale, ref.isolated / scale, what="isolated")
    assert_close(f.chi_omega(0.37, T, D=Dv, h=hv, eta=0.21), ref.frequency(0.37, 0.21),
                 rtol=RTOL_EXACT, atol=ATOL_EXACT * 10, what="chi(omega)")


def test_quintic_evaluator_is_vectorised_over_parameter_points():
    _, f = _quintic()
    rng = np.random.default_rng(7)
    Dv, hv = rng.uniform(-2, 2, 6), rng.uniform(0.1, 2, 6)
    T = 0.8
    got = f.chi_isothermal(T, D=Dv, h=hv)
    assert np.shape(got) == (6,)
    want = [_quintic_reference(a, b, T).isothermal for a, b in zip(Dv, hv)]
    assert_close(got, want, what="isothermal at 6 points")


@settings(max_examples=8)
@given(tv=st.floats(0.2, 2.0), Uv=st.floats(0.0, 8.0), T=st.sampled_from([0.3, 1.0, 4.0]))
def test_hubbard_chain_evaluator_matches_exact_diagonalisation(tv, Uv, T):
    _, f = _hubbard3()
    ref = _hubbard3_reference(tv, Uv, T)
    assert_close(f.chi_isothermal(T, tc=tv, U=Uv), ref.isothermal, what="isothermal")
    assert_close(f.chi_isolated(T, tc=tv, U=Uv), ref.isolated, what="isolated")


def test_presented_formula_matches_exact_diagonalisation():
    r, _ = _quintic()
    p = r.presented(["isothermal", "isolated"])
    for Dv, hv, T in [(sp.Rational(7, 10), sp.Rational(2, 5), sp.Rational(13, 10)),
                      (sp.Rational(-3, 2), sp.Rational(6, 5), sp.Rational(1, 2))]:
        ref = _quintic_reference(float(Dv), float(hv), float(T))
        at = {D: Dv, h: hv, sr.beta: 1 / T}
        for q in ("isothermal", "isolated"):
            value = complex(sp.N(p.value(q).xreplace(at), 20))
            assert_close(value, getattr(ref, q), what=f"presented {q}")


# ---------------------------------------------------------------- text and LaTeX
def test_text_names_the_root_set_once():
    r, _ = _quintic()
    text = r.presented(["isothermal"]).text()
    lines = [ln for ln in text.splitlines() if "the roots of p(x) = " in ln]
    assert len(lines) == 1 and lines[0].strip().startswith("r1_k: the roots of p(x) = x**5")
    assert "LevelRoot" not in text
    assert "Tr(P[r1_0]*A*P[r1_1]*B)" in text        # semi-closed weights by the root names


def test_latex_documents_name_the_root_set():
    r, _ = _quintic()
    doc = latex_document(r.derivation)
    rows = [row for row in doc.split("\\\\\n") if re.search(r"r_\{\d,k\} &: ", row)]
    assert len(rows) == 1 and r"\text{the roots of } x^{5}" in rows[0]
    assert "LevelRoot" not in doc
    report = presentation_latex(r.presented(["isothermal"]))
    assert report.count(r"\text{the roots of } x^{5}") == 1 and "LevelRoot" not in report


def test_response_evaluate_and_arrays_handle_semi_closed_weights():
    # The one evaluation module (precise tree walk and numpy arrays) diagonalises the exact
    # block matrices behind Tr(P[E] A P[E'] B) at each point.
    from symresp.response import evaluate_arrays
    r, _ = _quintic()
    ref = _quintic_reference(0.7, 0.4, 1.3)
    got = r.evaluate("isothermal", params={"D": 0.7, "h": 0.4}, T=1.3)
    assert_close(got, ref.isothermal, what="Response.evaluate")
    Dv, hv = np.array([0.7, -1.1]), np.array([0.4, 0.9])
    arr = evaluate_arrays(r.static("isothermal"), {D: Dv, h: hv, sr.beta: np.full(2, 1 / 1.3)})
    want = [_quintic_reference(a, b, 1.3).isothermal for a, b in zip(Dv, hv)]
    assert_close(arr, want, what="evaluate_arrays")


@pytest.mark.slow
def test_consistency_checks_run_on_semi_closed_weights():
    # Sum rules, Kramers-Kronig, fluctuation-dissipation and the reference rows evaluate the
    # weights Tr(P[E] A P[E'] B) through the compiled functions of the checks.
    r, _ = _quintic()
    assert r.consistency(points=1).ok
