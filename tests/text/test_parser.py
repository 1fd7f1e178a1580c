"""Tests of the safe formula language: scalars, operators, error positions, guards, fuzzing."""

from __future__ import annotations

import sympy as sp
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp.errors import InputError
from symresp.text import (MAX_DEPTH, MAX_LENGTH, ParseError, parse_operator, parse_scalar,
                          parse_tree, tokenize)

J = sp.Symbol("J", positive=True)
h = sp.Symbol("h", real=True)
beta = sr.beta
SYMBOLS = {"J": J, "h": h, "beta": beta}


def _scope():
    a = sr.spin("a", sp.Rational(1, 2))
    b = sr.spin("b", 1)
    q = sr.nlevel("q", 3)
    c_up, c_dn = sr.spinful_fermion("c")
    x = sr.boson("x", 4)
    return {"a": a, "b": b, "q": q, "c_up": c_up, "c_dn": c_dn, "x": x, "J": J, "h": h}


SCOPE = _scope()


# ---------------------------------------------------------------- scalars

@pytest.mark.parametrize("text, expected", [
    ("2", sp.Integer(2)),
    ("0.5", sp.Rational(1, 2)),
    (".25", sp.Rational(1, 4)),
    ("1e-3", sp.Rational(1, 1000)),
    ("1.5E+2", sp.Integer(150)),
    ("2^-1", sp.Rational(1, 2)),
    ("2**3", sp.Integer(8)),
    ("2^3^2", sp.Integer(512)),              # right-associative
    ("-2^2", sp.Integer(-4)),                # the power binds tighter than the sign
    ("(-2)^2", sp.Integer(4)),
    ("1 - 2 - 3", sp.Integer(-4)),           # left-associative
    ("12 / 4 / 3", sp.Integer(1)),
    ("--3", sp.Integer(3)),
    ("+3", sp.Integer(3)),
    ("I^2", sp.Integer(-1)),
    ("exp(0) + log(1) + sqrt(4)", sp.Integer(3)),
    ("abs(-3)", sp.Integer(3)),
    ("cos(pi)", sp.Integer(-1)),
])
def test_scalar_numbers_are_exact(text, expected):
    value = parse_scalar(text, {})
    assert value == expected
    assert not value.has(sp.Float)


def test_scalar_symbols_and_functions():
    value = parse_scalar("2*beta/(3 + exp(beta*J))", SYMBOLS)
    assert value == 2 * beta / (3 + sp.exp(beta * J))
    expected = sp.tanh(J) + sp.coth(h) + sp.sech(J) + sp.csch(J) + sp.sinh(h) + sp.cosh(h)
    assert parse_scalar("tanh(J) + coth(h) + sech(J) + csch(J) + sinh(h) + cosh(h)", SYMBOLS) == expected
    assert parse_scalar("sin(J)^2 + cos(J)**2 + tan(h)", SYMBOLS) == sp.sin(J)**2 + sp.cos(J)**2 + sp.tan(h)


def test_scalar_names_may_stand_for_expressions():
    T = sp.Symbol("T", positive=True)
    assert parse_scalar("J/T", {"J": J, "T": 1 / beta}) == J * beta
    assert parse_scalar("J/T", {"J": J, "T": T}) == J / T


def test_scalar_formula_spans_lines():
    assert parse_scalar("J\n  + h\n", SYMBOLS) == J + h


def test_tokenizer_splits_power_and_attributes():
    assert [t.text for t in tokenize("a.x**2")] == ["a", ".", "x", "**", "2", ""]


def test_tree_of_a_long_sum_is_flat():
    tree = parse_tree(" + ".join(["J"] * 3000))
    assert len(tree.terms) == 3000


# ---------------------------------------------------------------- operators

def test_spin_operators_and_dot():
    a, b = SCOPE["a"], SCOPE["b"]
    H = parse_operator("J*dot(a, b) - h*(a.z + b.z)", SCOPE)
    assert H == J * (a.vec @ b.vec) - h * (a.z + b.z)
    assert parse_operator("a.plus*a.minus - a.minus*a.plus", SCOPE) == 2 * a.z
    assert parse_operator("[a.x, a.y]", SCOPE) == sp.I * a.z
    assert parse_operator("dot(b, b)", SCOPE) == 2                       # S(S+1) for S = 1


def test_level_site_transitions_and_projectors():
    q = SCOPE["q"]
    assert parse_operator("q(0, 1)", SCOPE) == q.op(0, 1)
    assert parse_operator("q.proj(0) + q.proj(1) + q.proj(2)", SCOPE) == 1
    assert parse_operator("q(0,1)*q(1,2)", SCOPE) == q.op(0, 2)


def test_fermions_bosons_adj_and_n():
    c_up = SCOPE["c_up"]
    assert parse_operator("n(c_up)", SCOPE) == sr.dagger(c_up) * c_up
    assert parse_operator("c_up*adj(c_dn) + adj(c_dn)*c_up", SCOPE).is_zero
    assert parse_operator("[x, adj(x)]", SCOPE) == 1
    assert parse_operator("adj(I*J)*a.z", SCOPE) == -sp.I * J * SCOPE["a"].z


def test_scalar_text_gives_identity_operator():
    assert parse_operator("3/2", SCOPE) == sp.Rational(3, 2)


def test_operator_arithmetic_forms():
    a = SCOPE["a"]
    assert parse_operator("a.z/2 + 2*a.z - a.z*3", SCOPE) == -sp.Rational(1, 2) * a.z
    assert parse_operator("(a.x)^2 + a.y**2 + a.z^2", SCOPE) == sp.Rational(3, 4)
    assert parse_operator("a.z^0", SCOPE) == 1


# ---------------------------------------------------------------- errors with positions

@pytest.mark.parametrize("text, line, column, words", [
    ("2J", 1, 2, "2*J"),
    ("J (a.z)", 1, 3, "J*("),
    ("J + Jh", 1, 5, "unknown name 'Jh'"),
    ("a.zz", 1, 3, "did you mean 'a.z'"),
    ("aa.z", 1, 1, "did you mean 'a'"),
    ("exq(J)", 1, 1, "did you mean 'exp'"),
    ("J +\n  * 2", 2, 3, "unexpected '*'"),
    ("(a.z", 1, 5, "missing ')'"),
    ("a.z)", 1, 4, "unmatched ')'"),
    ("[a.x, a.y", 1, 10, "missing ']'"),
    ("1/0", 1, 2, "division by zero"),
    ("log(0)", 1, 1, "no finite value"),
    ("exp(a.z)", 1, 5, "of an operator"),
    ("a.z / a.x", 1, 5, "cannot divide by an operator"),
    ("a", 1, 1, "a.z"),
    ("q(0)", 1, 2, "q.proj(i)"),
    ("q(0, 3)", 1, 6, "from 0 to 2"),
    ("q.x", 1, 3, "q(i, j)"),
    ("dot(a, J)", 1, 8, "dot()"),
    ("n(J)", 1, 3, "n()"),
    ("beta*a.z", 1, 1, "temperature"),
    ("a.x^13", 1, 5, "0 to 12"),
    ("a.x^a.z", 1, 5, "not an operator"),
    ("1e+", 1, 2, "malformed number"),
    ("J\t+ ∂", 1, 5, "unexpected character"),
    ("c_up.x", 1, 6, "spin sites"),
    ("pi(2)", 1, 3, "constant"),
    ("J*dag(x)", 1, 3, "the adjoint is written adj(X)"),
    ("dagger(c_up)", 1, 1, "the adjoint is written adj(X)"),
])
def test_errors_point_at_the_fault(text, line, column, words):
    with pytest.raises(ParseError) as info:
        parse_operator(text, SCOPE, source="test.toml")
    err = info.value
    assert (err.line, err.column) == (line, column), str(err)
    assert words in str(err)
    assert str(err).startswith(f"test.toml:{line}:{column}:")
    caret_line = str(err).splitlines()[-1]
    assert caret_line.index("^") == 4 + column - 1       # caret under the fault


def test_parse_error_is_an_input_error():
    assert issubclass(ParseError, InputError)
    with pytest.raises(InputError):
        parse_scalar("J +", SYMBOLS)


def test_empty_formula_is_an_error():
    for text in ("", "   ", "\n"):
        with pytest.raises(ParseError, match="empty"):
            parse_scalar(text, {})


def test_operator_functions_are_refused_in_scalar_formulas():
    with pytest.raises(ParseError, match="scalar formula"):
        parse_scalar("adj(J)", SYMBOLS)


def test_scope_may_not_redefine_language_words():
    with pytest.raises(InputError, match="formula language"):
        parse_scalar("1", {"exp": J})
    with pytest.raises(InputError, match="expected"):
        parse_scalar("1", {"x": 1.5})                     # floats are not exact
    with pytest.raises(InputError):
        parse_operator("1", {"x": object()})


# ---------------------------------------------------------------- guards and hostile input

# Each hostile input is refused with the reason given here; nothing is executed, nothing hangs.
HOSTILE_REFUSED = [
    ("__import__('os').system('echo hi')", "quotes are not part of the formula language"),
    ("a.__class__", "spin site 'a' has no component '__class__'"),
    ("a.__class__.__bases__", "'a.__class__' has no attributes"),
    ("lambda: 0", "':' has no meaning in a formula"),
    ("().__class__.__bases__", "unexpected ')'"),
    ("[].__class__", "unexpected ']'"),
    ("exec('1')", "quotes are not part of the formula language"),
    ("eval", "unknown name 'eval'"),
    ("globals()", "unknown function 'globals'"),
    ("open('/etc/passwd')", "quotes are not part of the formula language"),
    ("J; import os", "';' is not supported"),
    ("J if J else h", "missing operator between 'J' and 'if'"),
    ("{}", "braces are not part of the formula language"),
    ("f'{J}'", "quotes are not part of the formula language"),
    ("\\x41", "backslashes are not part of the formula language"),
    ("J\x00", "unexpected character U+0000"),
    ("(" * 10000 + "1" + ")" * 9999, f"nested more than {MAX_DEPTH} levels"),
    ("(" * 9000 + "1" + ")" * 9000, f"nested more than {MAX_DEPTH} levels"),
    ("-" * 5000 + "1", f"nested more than {MAX_DEPTH} levels"),
    ("2" + "^2" * 5000, f"nested more than {MAX_DEPTH} levels"),
    ("x" * (MAX_LENGTH + 1), f"more than the limit of {MAX_LENGTH}"),
    ("1" * 5000, "the number literal has 5000 digits"),
    ("9^9^9", "has more than 1000 digits"),
    ("2^2^2^2^2^2", "the number 2^65536 has more than 1000 digits"),
    ("2^3320", "the number 2^3320 has more than 1000 digits"),
    ("((J+h)^30)^30", "the nested power is too large"),
    ("((J+h)^20*J)^20", "too large for a symbolic base (limit 32)"),
    ("(J+h)^33", "the exponent 33 is too large for a symbolic base (limit 32)"),
    ("10^999*10^999", "the product has a number of more than 1000 digits"),
    ("2/10^999/10^999*J", "the product has a number of more than 1000 digits"),
    ("exp(" * 150 + "J" + ")" * 150, f"nested more than {MAX_DEPTH} levels"),
    ("(a.x + b.x + q(0,1) + x + adj(x))^12", "needs too much operator algebra"),
    ("((x + adj(x))^12)^12", "needs too much operator algebra"),
    ("1e99999", "is larger than the limit of 400"),
]

# Large but legitimate inputs just inside the limits parse to the exact value.
HOSTILE_PARSED = [
    ("10^500*10^499", sp.Integer(10) ** 999),
    ("sqrt(" + "7" * 400 + ")", sp.sqrt(sp.Integer("7" * 400))),
    ("(" * (MAX_DEPTH - 1) + "J" + ")" * (MAX_DEPTH - 1), J),
    ("-" * 98 + "h", h),
    ("(J+h)^32", sp.expand((J + h) ** 32)),
]


@pytest.mark.parametrize("text, reason", HOSTILE_REFUSED, ids=range(len(HOSTILE_REFUSED)))
def test_hostile_input_is_refused_with_its_reason(text, reason):
    with pytest.raises(ParseError) as info:
        parse_operator(text, SCOPE)
    assert reason in info.value.reason


@pytest.mark.parametrize("text, expected", HOSTILE_PARSED, ids=range(len(HOSTILE_PARSED)))
def test_large_input_inside_the_limits_parses_exactly(text, expected):
    assert parse_operator(text, SCOPE) == sp.expand(expected)


def test_nesting_and_length_limits_are_named():
    with pytest.raises(ParseError, match=f"more than {MAX_DEPTH} levels"):
        parse_scalar("(" * 9000 + "1" + ")" * 9000, {})
    with pytest.raises(ParseError, match=f"limit of {MAX_LENGTH}"):
        parse_scalar("1" + "+1" * (MAX_LENGTH // 2), {})
    assert parse_scalar("(" * (MAX_DEPTH - 1) + "1" + ")" * (MAX_DEPTH - 1), {}) == 1


def test_nothing_is_executed(tmp_path):
    target = tmp_path / "flag"
    text = f"__import__('pathlib').Path('{target}').touch()"
    with pytest.raises(ParseError):
        parse_scalar(text, {})
    assert not target.exists()


# ---------------------------------------------------------------- fuzzing

_NAMES = ["J", "h", "a", "b", "q", "c_up", "c_dn", "x", "pi", "I", "beta", "zz", "__class__"]
_FUNCS = ["exp", "log", "sqrt", "sin", "tanh", "coth", "abs", "adj", "dag", "n", "dot", "q", "foo"]
_ATOMS = st.one_of(
    st.sampled_from(_NAMES),
    st.sampled_from(["a.x", "a.y", "a.z", "a.plus", "b.minus", "q.proj(1)", "q(0,2)", "a.q"]),
    st.integers(min_value=0, max_value=50).map(str),
    st.sampled_from(["0.5", "1e-3", "2.", ".7", "0"]),
)


def _grow(children):
    return st.one_of(
        st.tuples(children, st.sampled_from(["+", "-", "*", "/", "^", "**", " ", ","]), children)
        .map(lambda t: f"{t[0]}{t[1]}{t[2]}"),
        children.map(lambda c: f"({c})"),
        children.map(lambda c: f"-{c}"),
        st.tuples(st.sampled_from(_FUNCS), children).map(lambda t: f"{t[0]}({t[1]})"),
        st.tuples(children, children).map(lambda t: f"[{t[0]}, {t[1]}]"),
        st.tuples(st.sampled_from(_FUNCS), children, children).map(lambda t: f"{t[0]}({t[1]}, {t[2]})"),
    )


GRAMMARISH = st.recursive(_ATOMS, _grow, max_leaves=12)
FORMULA_ALPHABET = st.sampled_from(list("aJhxqbc_0123456789.+-*/^()[], \n\t'\"=:;{}#@!eE") + ["**", "a.z"])


def _either_value_or_parse_error(text):
    try:
        value = parse_operator(text, SCOPE)
    except ParseError as err:
        assert err.source == "<formula>" and err.reason
        return
    assert isinstance(value, sr.Operator)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(GRAMMARISH)
@example("a.x^12^1")
@example("q(0,1)^12*q(1,0)^12")
def test_fuzz_grammar_like_text(text):
    _either_value_or_parse_error(text)


@settings(max_examples=150, deadline=None)
@given(st.text(max_size=60))
@example("\x00")
@example("1" * 500)
def test_fuzz_arbitrary_text(text):
    _either_value_or_parse_error(text)
    try:
        value = parse_scalar(text, SYMBOLS)
    except ParseError:
        return
    assert isinstance(value, sp.Expr)


@settings(max_examples=100, deadline=None)
@given(st.lists(FORMULA_ALPHABET, max_size=40).map("".join))
def test_fuzz_formula_alphabet(text):
    _either_value_or_parse_error(text)
