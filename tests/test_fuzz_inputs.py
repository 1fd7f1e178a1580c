"""Fuzzing of formula text and case files: random structure and random bytes.

The only allowed outcomes are a result or a clear error (InputError, with a message that
names the source), each within a wall-clock ceiling; anything else (an internal exception, a
hang, a crash of the interpreter) fails. A hang is stopped by ``faulthandler`` so the suite
does not stall.
"""

from __future__ import annotations

import faulthandler
import tempfile
import time
from pathlib import Path

import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp.algebra import Operator
from symresp.cases import Case, parse_case, read_case
from symresp.errors import InputError
from symresp.text import parse_operator, parse_scalar

#: Seconds one fuzzed input may take (text work only; generous for a loaded machine).
CEILING = 5.0
EXAMPLES = 60

J = sp.Symbol("J", positive=True)
h = sp.Symbol("h", real=True)
SCALARS = {"J": J, "h": h, "beta": sr.beta}
SITES = {"a": sr.spin("a", sp.Rational(1, 2)), "q": sr.nlevel("q", 3), "c": sr.fermion("c"),
         "x": sr.boson("x", 4), "J": J, "h": h}

TOKENS = ["J", "h", "beta", "a", "q", "c", "x", "a.x", "a.z", "a.plus", "q.proj", "exp", "sqrt",
          "cosh", "tanh", "log", "abs", "adj", "n", "dot", "pi", "I", "0", "1", "2", "0.5", "1e-3",
          "1e9", "12345678901234567890", "+", "-", "*", "/", "^", "**", "(", ")", "[", "]", ",",
          ".", " ", "\n", "=", "'", "\\", "é", "\x00", "(0, 1)", "(a, a)"]


def _check(run, source: str):
    faulthandler.dump_traceback_later(3 * CEILING + 5, exit=True)
    start = time.monotonic()
    try:
        try:
            result = run()
        except InputError as err:
            message = str(err)
            assert source in message, message
            assert "Traceback" not in message
            result = None
    finally:
        faulthandler.cancel_dump_traceback_later()
    elapsed = time.monotonic() - start
    assert elapsed < CEILING, f"{elapsed:.1f} s"
    return result


formula_text = st.one_of(
    st.lists(st.sampled_from(TOKENS), max_size=40).map("".join),
    st.text(max_size=60),
    st.binary(max_size=60).map(lambda b: b.decode("latin-1")),
)


@settings(max_examples=EXAMPLES)
@given(formula_text)
def test_fuzzed_scalar_formula_gives_a_value_or_a_clear_error(text):
    out = _check(lambda: parse_scalar(text, SCALARS, source="<fuzz>"), "<fuzz>")
    assert out is None or isinstance(out, sp.Expr)


@settings(max_examples=EXAMPLES)
@given(formula_text)
def test_fuzzed_operator_formula_gives_an_operator_or_a_clear_error(text):
    out = _check(lambda: parse_operator(text, SITES, source="<fuzz>"), "<fuzz>")
    assert out is None or isinstance(out, Operator)


# ------------------------------------------------------------------------------ case files
names = st.sampled_from(["J", "h", "a", "b", "M", "E", "x1", "beta", "exp", "1x", "a b", "ﬁ",
                         "__x__", "lambda", "float", "c_up"])
scalars = st.one_of(st.integers(-10**30, 10**30), st.floats(allow_nan=True, allow_infinity=True),
                    st.sampled_from(['"1/2"', '"x"', "true", '"spin 1/2"', '"levels 3"',
                                     '"fermion"', '"boson 3"', '"a.z + b.z"', '"J*dot(a, b)"',
                                     '"positive"', "[]", "[1, [2]]", '{ value = 1 }',
                                     '{ assume = "real", value = 0.3 }']))


def _value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return {float("inf"): "inf", float("-inf"): "-inf"}.get(v, "nan" if v != v else repr(v))
    return str(v)


def _key(k: str) -> str:
    return k if k.replace("_", "").isalnum() and k.isascii() else '"' + k + '"'


table = st.dictionaries(names, scalars, max_size=4).map(
    lambda d: "".join(f"{_key(k)} = {_value(v)}\n" for k, v in d.items()))
sections = st.sampled_from(["model", "parameters", "sites", "observables", "sector", "response",
                            "paramters"])


@st.composite
def case_files(draw):
    parts = []
    if draw(st.booleans()):
        parts.append('[model]\nhamiltonian = "' + draw(st.lists(st.sampled_from(
            ["J", "*", "dot(a, b)", "a.z", "+", "h", "b.x", "-", "2", "(", ")", "adj(c)", "c"]),
            max_size=12).map(" ".join)) + '"\n')
    for _ in range(draw(st.integers(0, 4))):
        sec = draw(sections)
        head = f"[[{sec}]]" if sec == "response" and draw(st.booleans()) else f"[{sec}]"
        parts.append(f"{head}\n{draw(table)}")
    return "\n".join(parts)


@settings(max_examples=EXAMPLES)
@given(case_files())
def test_fuzzed_case_structure_gives_a_case_or_a_clear_error(text):
    out = _check(lambda: parse_case(text, source="fuzz.toml"), "fuzz.toml")
    assert out is None or isinstance(out, Case)


@settings(max_examples=EXAMPLES)
@given(st.binary(max_size=300))
def test_fuzzed_case_bytes_give_a_clear_error(data):
    path = Path(tempfile.mkdtemp()) / "bytes.toml"
    path.write_bytes(data)
    out = _check(lambda: read_case(path), "bytes.toml")
    assert out is None or isinstance(out, Case)
