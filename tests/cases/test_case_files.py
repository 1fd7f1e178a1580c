"""Tests of TOML case files: reading, checking, error places, search path, verification."""

from __future__ import annotations

import dataclasses
import os
import textwrap

import numpy as np
import pytest
import sympy as sp

import symresp as sr
from symresp.response import evaluate_arrays, evaluate_precise
from symresp.cases import (bundled_cases, case_summary, derive_case, find_case, parse_case, read_case, response_curves,
                           sample_point, verify_case)
from symresp.errors import InputError, NotConservedError, NotHermitianError
from symresp.text import ParseError

# Tolerances of this module (relative, absolute): numeric evaluation of exact formulas.
EVAL_RTOL, EVAL_ATOL = 1e-12, 1e-14


def case_text(body: str) -> str:
    return textwrap.dedent(body).lstrip()


FULL = case_text('''
    [model]
    name = "gadget"
    description = "every kind of site, for the tests"
    energy_unit = "K"
    hamiltonian = """
    J*dot(a, b) + Delta*q.proj(1) + eps*(n(d_up) + n(d_dn)) + w*n(x) + U*n(d_up)*n(d_dn)
      + g*(q(0, 1) + q(1, 0))*(x + adj(x)) + mu*n(c)
    """

    [parameters]
    J = { assume = "positive", value = 1.5, unit = "K", description = "exchange" }
    Delta = { assume = "real", value = "3/2" }
    eps = -0.25
    w = { assume = "positive", value = 2 }
    U = { assume = "nonnegative", value = 0 }
    g = { value = 0.1 }
    mu = { assume = "real" }

    [sites]
    a = "spin 1/2"
    b = "spin 3/2"
    q = "levels 2"
    c = "fermion"
    d = "spinful fermion"
    x = "boson 2"

    [observables]
    M = "a.z + b.z"
    Nd = "n(d_up) + n(d_dn)"

    [sector]
    "n(d_up) + n(d_dn)" = 1
    "n(c)" = 0

    [[response]]
    A = "M"
    quantities = ["isothermal", "time"]

    [[response]]
    label = "mixed"
    A = "M"
    B = "Nd"
''')


def test_full_case_is_read_with_every_kind_of_site():
    case = parse_case(FULL, source="gadget.toml")
    assert case.name == "gadget" and case.energy_unit == "K"
    assert [s.name for s in case.sites] == ["a", "b", "q", "c", "d", "x"]
    assert case.sites[4].modes == ("d_up", "d_dn")
    # sector: one d electron, no c electron -> 2 * 4 * 2 * 1 * 2 * 3 states
    assert case.system.basis().dimension == 2 * 4 * 2 * 2 * 3
    assert [r.label for r in case.responses] == ["M", "mixed"]
    assert case.responses[0].quantities == ("isothermal", "time")
    assert case.responses[1].quantities == ("isothermal", "isolated", "frequency")
    assert case.sector_text[0] == ("n(d_up) + n(d_dn)", 1)


def test_parameters_keep_assumptions_values_and_units():
    case = parse_case(FULL)
    sym = case.symbols
    assert sym["J"].is_positive and sym["U"].is_nonnegative and sym["Delta"].is_real
    assert case.defaults[sym["J"]] == sp.Rational(3, 2)          # 1.5 read exactly
    assert case.defaults[sym["Delta"]] == sp.Rational(3, 2)
    assert case.defaults[sym["eps"]] == sp.Rational(-1, 4)
    assert sym["mu"] not in case.defaults
    assert case.units == {sym["J"]: "K"}


def test_dimer_isothermal_susceptibility_is_bleaney_bowers():
    # Source: B. Bleaney and K. D. Bowers, Proc. R. Soc. A 214, 451 (1952):
    # chi = 2 beta / (3 + exp(beta J)) per dimer for g mu_B = 1, at zero field.
    case = read_case(find_case("dimer"))
    labels = dict(derive_case(case))
    chi = labels["M"].static("isothermal")
    J, h = case.symbols["J"], case.symbols["h"]
    assert sp.simplify(chi.subs(h, 0) - 2 * sr.beta / (3 + sp.exp(sr.beta * J))) == 0


def test_free_spin_case_follows_the_curie_law():
    # Curie law chi = beta S(S+1)/3 for a free spin S (common practice).
    case = parse_case(case_text('''
        [model]
        hamiltonian = "0"
        [sites]
        s = "spin 3/2"
        [[response]]
        A = "s.z"
    '''))
    (_, d), = derive_case(case)
    assert d.static("isothermal") == sp.Rational(5, 4) * sr.beta
    assert d.static("isolated") == 0


def test_read_case_names_the_file(tmp_path):
    p = tmp_path / "broken.toml"
    p.write_text('[model]\nhamiltonian = "J*a.z"\n[sites]\na = "spin 1/2"\n')
    with pytest.raises(ParseError) as info:
        read_case(p)
    assert str(info.value).startswith(f"{p}:2:16: [model] hamiltonian: unknown name 'J'")
    with pytest.raises(InputError, match="no such case file"):
        read_case(tmp_path / "absent.toml")
    with pytest.raises(InputError, match="is a directory"):
        read_case(tmp_path)
    (tmp_path / "latin1.toml").write_bytes(b"[model]\nname = \"\xe9\"\n")
    with pytest.raises(InputError, match="not UTF-8"):
        read_case(tmp_path / "latin1.toml")


def test_expression_errors_map_to_file_line_and_column():
    text = case_text('''
        [model]
        hamiltonian = """
        J*dot(a, b)
          + h*a.zz
        """
        [parameters]
        J = 1
        h = 1
        [sites]
        a = "spin 1/2"
        b = "spin 1/2"
    ''')
    with pytest.raises(ParseError) as info:
        parse_case(text, source="c.toml")
    err = info.value
    assert (err.line, err.column) == (4, 9)
    assert "a.zz" in err.excerpt and "did you mean 'a.z'" in err.reason


def test_toml_syntax_errors_carry_line_and_column():
    with pytest.raises(ParseError) as info:
        parse_case("[model]\nhamiltonian = \n", source="t.toml")
    assert info.value.line == 2 and "not valid TOML" in str(info.value)


def test_non_hermitian_hamiltonian_names_the_file_and_key():
    text = case_text('''
        [model]
        hamiltonian = "a.plus"
        [sites]
        a = "spin 1/2"
    ''')
    with pytest.raises(NotHermitianError, match=r"x\.toml:2: \[model\] hamiltonian: .*adj\(\.\.\.\)"):
        parse_case(text, source="x.toml")


def test_response_that_leaves_the_sector_is_refused():
    text = case_text('''
        [model]
        hamiltonian = "n(c1) + n(c2)"
        [sites]
        c1 = "fermion"
        c2 = "fermion"
        [sector]
        "n(c1) + n(c2)" = 1
        [[response]]
        A = "c1"
    ''')
    with pytest.raises(NotConservedError, match=r"\[\[response\]\] #1 A"):
        parse_case(text, source="s.toml")


def test_sector_as_array_of_tables():
    text = case_text('''
        [model]
        hamiltonian = "n(c1) + 2*n(c2)"
        [sites]
        c1 = "fermion"
        c2 = "fermion"
        [[sector]]
        operator = "n(c1) + n(c2)"
        value = 1
    ''')
    case = parse_case(text)
    assert case.system.basis().dimension == 2


PAR = '[model]\nhamiltonian = "0"\n[parameters]\n'
SPIN = '[sites]\na = "spin 1/2"\n'
FREE = '[model]\nhamiltonian = "0"\n' + SPIN


@pytest.mark.parametrize("body, words", [
    ('[model]\nhamiltonian = "0"\n', "missing section [sites]"),
    ('[sites]\na = "spin 1/2"\n', "missing section [model]"),
    ('[model]\nhamiltonan = "0"\n[sites]\na = "spin 1/2"\n', "did you mean 'hamiltonian'"),
    ('[modle]\n[model]\nhamiltonian = "0"\n[sites]\na = "spin 1/2"\n', "did you mean 'model'"),
    ('[model]\nhamiltonian = "0"\n[sites]\na = "spin 2/3"\n', "not a positive integer or half-integer"),
    ('[model]\nhamiltonian = "0"\n[sites]\na = "spinn 1/2"\n', "did you mean 'spin'"),
    ('[model]\nhamiltonian = "0"\n[sites]\na = "levels 1"\n', "from 2 to"),
    ('[model]\nhamiltonian = "0"\n[sites]\na = "boson"\n', "boson 6"),
    ('[model]\nhamiltonian = "0"\n[sites]\nexp = "fermion"\n', "formula language"),
    ('[model]\nhamiltonian = "0"\n[sites]\nt = "fermion"\n', "reserved"),
    ('[model]\nhamiltonian = "0"\n[sites]\nd = "spinful fermion"\nd_up = "fermion"\n', "duplicate site"),
    ('[model]\nhamiltonian = "0"\n[sites]\na = 5\n', "expected a string"),
    ('[model]\nhamiltonian = "0"\n[sites]\n', "no sites"),
    ('[model]\nhamiltonian = "  "\n[sites]\na = "spin 1/2"\n', "Hamiltonian is empty"),
    ('[model]\nhamiltonian = 3\n[sites]\na = "spin 1/2"\n', "expected a string"),
    (PAR + 'J = { assume = "postive" }\n' + SPIN, "did you mean 'positive'"),
    (PAR + 'J = { assume = "positive", value = -1 }\n' + SPIN, "not positive"),
    (PAR + 'J = { value = true }\n' + SPIN, "boolean"),
    (PAR + 'J = { value = "1/0" }\n' + SPIN, "number"),
    (PAR + 'J = { vlaue = 1 }\n' + SPIN, "did you mean 'value'"),
    (PAR + 'a = 1\n' + SPIN, "both a parameter and a site"),
    (FREE + '[[response]]\nB = "a.z"\n', "missing key 'A'"),
    (FREE + '[[response]]\nA = "a.z"\nquantities = ["isothermel"]\n', "did you mean 'isothermal'"),
    (FREE + '[[response]]\nA = "a.z"\nlabel = "levels"\n', "reserved"),
    ('[model]\nhamiltonian = "0"\n[sites]\na = "boson 100"\nb = "boson 100"\n', "above the limit"),
])
def test_bad_case_files_raise_input_errors_naming_the_key(body, words):
    with pytest.raises(InputError) as info:
        parse_case(body, source="bad.toml")
    assert words in str(info.value)
    assert str(info.value).startswith("bad.toml")


# ---------------------------------------------------------------- finding cases

def test_bundled_cases_are_found_and_described():
    names = [p.stem for p in bundled_cases()]
    assert len(names) >= 8 and "dimer" in names
    for p in bundled_cases():
        assert case_summary(p).description, p


def test_search_path_variable_comes_first(tmp_path):
    (tmp_path / "dimer.toml").write_text('[model]\ndescription = "mine"\nhamiltonian = "0"\n'
                                         '[sites]\na = "spin 1/2"\n')
    env = {"SYMRESP_CASES": os.pathsep.join([str(tmp_path), str(tmp_path / "missing")])}
    assert find_case("dimer", env) == tmp_path / "dimer.toml"
    assert find_case("dimer", {}) != tmp_path / "dimer.toml"
    with pytest.raises(InputError, match="did you mean 'dimer'"):
        find_case("dimr", env)


# ---------------------------------------------------------------- numbers and verification

def test_precise_and_array_evaluation_agree_with_sympy():
    J = sp.Symbol("J", positive=True)
    x = sp.Symbol("x")
    root = sp.CRootOf(x**3 - x - 1, 0)
    expr = sp.exp(-sr.beta * J) * sp.sqrt(J + 2) / (1 + sp.tanh(J * sr.beta)) + root * sp.coth(J)
    at = {J: 0.7, sr.beta: 1.3}
    reference = complex(sp.N(expr.subs({J: sp.Rational(7, 10), sr.beta: sp.Rational(13, 10)}), 30))
    assert np.isclose(evaluate_precise(expr, at), reference, rtol=EVAL_RTOL, atol=EVAL_ATOL)
    arr = evaluate_arrays(expr, {J: np.array([0.7, 0.7]), sr.beta: 1.3})
    assert np.allclose(arr, reference, rtol=EVAL_RTOL, atol=EVAL_ATOL)


def test_sample_points_respect_assumptions():
    case = parse_case(FULL)
    rng = np.random.default_rng(1)
    for _ in range(20):
        p = sample_point(case, rng)
        assert p[case.symbols["J"]] > 0 and p[case.symbols["U"]] >= 0 and p[case.symbols["w"]] > 0


def test_verify_passes_on_a_small_case_and_records_every_quantity():
    case = parse_case(case_text('''
        [model]
        hamiltonian = "Delta*q.z + g*q.x"
        [parameters]
        Delta = { assume = "positive", value = 1 }
        g = { value = 0.3 }
        [sites]
        q = "spin 1/2"
        [[response]]
        A = "q.x"
        quantities = ["isothermal", "isolated", "frequency", "time"]
    '''))
    v = verify_case(case, points=2, seed=3)
    assert v.ok
    assert {c.quantity for c in v.checks} == {"levels", "Z", "isothermal", "isolated", "frequency",
                                              "time"}
    with pytest.raises(InputError):
        verify_case(case, points=0)


def test_verify_and_curves_handle_semi_closed_levels():
    # A spin 1 with axial D in a tilted field: one 3 x 3 block with an irreducible cubic in
    # three parameters, so the levels are implicit roots found numerically at every point.
    case = parse_case(case_text('''
        [model]
        hamiltonian = "D*s.z^2 + hz*s.z + hx*s.x"
        [parameters]
        D = { assume = "positive", value = 1.3 }
        hz = { assume = "real", value = 0.4 }
        hx = { assume = "real", value = 0.7 }
        [sites]
        s = "spin 1"
        [[response]]
        label = "x"
        A = "s.x"
        quantities = ["isothermal", "isolated", "frequency"]
    '''))
    v = verify_case(case, points=2, seed=5)
    assert v.ok, v
    derived = dict(derive_case(case))
    curves = response_curves(case, "x", derived["x"], points=12)
    arrays = [getattr(curves, f.name) for f in dataclasses.fields(curves)]
    arrays = [a for a in arrays if isinstance(a, np.ndarray)]
    assert arrays and all(a.size and np.all(np.isfinite(a)) for a in arrays)


def test_curves_need_default_values_and_obey_isothermal_above_isolated():
    case = read_case(find_case("triangle"))
    derived = dict(derive_case(case))
    curves = response_curves(case, "Mx", derived["Mx"], points=40)
    assert curves.omega.size > 0 and np.all(np.isfinite(curves.spectrum))
    assert np.all(curves.isothermal.real >= curves.isolated.real - EVAL_ATOL)
    no_value = parse_case('[model]\nhamiltonian = "D*s.z"\n[parameters]\nD = {}\n[sites]\ns = "spin 1"\n'
                          '[[response]]\nA = "s.x"\n', source="nv.toml")
    (label, d), = derive_case(no_value)
    with pytest.raises(InputError, match="value for every parameter"):
        response_curves(no_value, label, d)
