"""The bad-input catalogue: one table of hostile or mistaken inputs across case files, formula
text, API arguments, command-line options and emitted evaluators.

Each row gives the input, the error type it must raise (or the exit code of the command), the
parts of the message that name the place and the fix, and a wall-clock ceiling. The harness
measures every row; a row that hangs is stopped by ``faulthandler`` (the process ends with a
traceback of where it hung, so the suite fails instead of stalling). Pure-text rows need no
derivation and finish in milliseconds; rows that derive a model carry a budget of their own.

Run ``python -m pytest tests/test_bad_inputs.py -s`` to see the count and the longest row.
"""

from __future__ import annotations

import faulthandler
import io
import math
import os
import sys
import time
from contextlib import redirect_stderr, redirect_stdout
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
import sympy as sp

import symresp as sr
from symresp.cases import parse_case, read_case
from symresp.cli import main
from symresp.errors import BudgetExceeded, InputError, NotConservedError, NotHermitianError
from symresp.models import Budget
from symresp.text import ParseError, parse_scalar

#: Ceiling of a row that only reads text (seconds, generous for a loaded 2-core machine).
FAST = 10.0
#: Ceiling of a row that derives or compiles something.
SLOW = 30.0
#: A row still running this many times its ceiling is a hang: the process is stopped.
HANG_FACTOR = 3

TIMES: dict[str, float] = {}


@dataclass(frozen=True)
class Row:
    id: str
    call: object                 # () -> None; must raise (or return an exit code for CLI rows)
    error: type | int            # exception type, or the expected exit code of a command
    says: tuple[str, ...]        # parts of the message: the place and the fix
    ceiling: float = FAST


# ------------------------------------------------------------------------------ case files
GOOD = {
    "model": '[model]\nname = "m"\nhamiltonian = "J*dot(a, b) - h*(a.z + b.z)"\n',
    "parameters": '[parameters]\nJ = { assume = "positive", value = 1.5 }\nh = 0.2\n',
    "sites": '[sites]\na = "spin 1/2"\nb = "spin 1/2"\n',
    "observables": '[observables]\nM = "a.z + b.z"\n',
    "response": '[[response]]\nA = "M"\n',
}


def case_text(**parts: str | None) -> str:
    """The good case with some sections replaced (None drops a section)."""
    d = {**GOOD, **parts}
    return "\n".join(v for v in d.values() if v is not None)


def _h(expr: str) -> str:
    return case_text(model=f'[model]\nhamiltonian = "{expr}"\n')


def _p(line: str) -> str:
    return case_text(parameters=f"[parameters]\nJ = 1\nh = 0.2\n{line}\n")


def _s(line: str) -> str:
    return case_text(sites=f'[sites]\na = "spin 1/2"\nb = "spin 1/2"\n{line}\n')


def case_row(id_: str, text: str, says: tuple[str, ...], error: type = InputError) -> Row:
    return Row(f"case: {id_}", lambda: parse_case(text, source="bad.toml"), error,
               ("bad.toml",) + says)


CASE_ROWS = [
    case_row("unclosed string", '[model]\nhamiltonian = "J*a.z\n', ("not valid TOML", ":2:")),
    case_row("missing equals", "[model]\nhamiltonian\n", ("not valid TOML", ":2:")),
    case_row("duplicate key", '[model]\nname = "a"\nname = "b"\n', ("not valid TOML",)),
    case_row("bad escape", '[model]\nname = "\\q"\n', ("not valid TOML",)),
    case_row("NUL byte", "[model]\x00\n", ("not valid TOML",)),
    case_row("random bytes", "\x07\x1b[2J\x7f", ("not valid TOML",)),
    case_row("missing [model]", case_text(model=None), ("missing section [model]",)),
    case_row("missing [sites]", case_text(sites=None), ("missing section [sites]",)),
    case_row("unknown section", case_text() + "[paramters]\nx = 1\n",
             ("unknown section", "did you mean 'parameters'")),
    case_row("unknown model key", '[model]\nhamiltonian = "0"\nhamiltonain = "x"\n' + GOOD["sites"],
             ("[model] hamiltonain", "allowed keys")),
    case_row("hamiltonian not a string", "[model]\nhamiltonian = 3\n" + GOOD["sites"],
             ("[model] hamiltonian", "expected a string")),
    case_row("hamiltonian missing", '[model]\nname = "x"\n' + GOOD["sites"],
             ("missing key 'hamiltonian'",)),
    case_row("empty hamiltonian", _h("  "), ("the Hamiltonian is empty", "write \"0\"")),
    case_row("empty name", case_text(model='[model]\nname = " "\nhamiltonian = "0"\n'),
             ("[model] name", "empty")),
    case_row("model is an array", 'model = [1]\n' + GOOD["sites"], ("[model]", "expected a table")),
    case_row("parameter name with digit first", _p("1J = 2"), ("not a valid parameter name",)),
    case_row("parameter name with dash", _p('"J-x" = 2'), ("'J-x'", "ASCII letters")),
    case_row("parameter name unicode", _p('"a²" = 2'), ("not ASCII", "'a2'")),
    case_row("parameter name ligature", _p('"ﬁ" = 2'), ("not ASCII", "'fi'")),
    case_row("parameter name keyword", _p("lambda = 2"), ("Python keyword", "lambda_")),
    case_row("parameter name dunder", _p("__import__ = 2"), ("dunder", "double underscores")),
    case_row("parameter name beta", _p("beta = 2"), ("reserved", "rename it")),
    case_row("parameter name of a function", _p("exp = 2"), ("word of the formula language",
                                                              "rename it")),
    case_row("parameter name too long", _p("x" * 80 + " = 2"), ("more than 64",)),
    case_row("parameter name with newline", _p('"a\\nb" = 2'), ("not a valid parameter name",)),
    case_row("assume unknown", _p('K = { assume = "postive" }'),
             ("[parameters] K assume", "did you mean 'positive'")),
    case_row("value boolean", _p("K = true"), ("[parameters] K", "boolean")),
    case_row("value text", _p('K = "fast"'), ("[parameters] K", "such as 2, 0.5")),
    case_row("value inf", _p("K = inf"), ("[parameters] K", "finite")),
    case_row("value nan", _p("K = nan"), ("[parameters] K", "finite")),
    case_row("positive parameter negative", _p('K = { assume = "positive", value = -1 }'),
             ("not positive", "assume = \"positive\"")),
    case_row("nonnegative parameter negative", _p('K = { assume = "nonnegative", value = -1 }'),
             ("negative",)),
    case_row("parameter is an array", _p("K = [1, 2]"), ("[parameters] K", "expected a table")),
    case_row("unknown parameter key", _p("K = { value = 1, units = 'K' }"),
             ("[parameters.K] units", "did you mean 'unit'")),
    case_row("no sites", case_text(sites="[sites]\n"), ("no sites are declared",)),
    case_row("unknown site kind", _s('c = "spinn 1/2"'), ("[sites] c", "did you mean 'spin'")),
    case_row("spin 1/3", _s('c = "spin 1/3"'), ("[sites] c", "half-integer")),
    case_row("spin 0", _s('c = "spin 0"'), ("[sites] c", "half-integer")),
    case_row("spin 11", _s('c = "spin 11"'), ("[sites] c", "maximum")),
    case_row("spin text", _s('c = "spin x"'), ("[sites] c", "write e.g. \"spin 1/2\"")),
    case_row("levels 1", _s('c = "levels 1"'), ("[sites] c", "from 2")),
    case_row("levels 40", _s('c = "levels 40"'), ("[sites] c", "from 2 to 32")),
    case_row("boson 0", _s('c = "boson 0"'), ("[sites] c", "cutoff must be from 1")),
    case_row("boson huge", _s('c = "boson 9999999"'), ("[sites] c", "not a whole number")),
    case_row("boson text", _s('c = "boson many"'), ("[sites] c", "not a whole number")),
    case_row("site kind not a string", _s("c = 3"), ("[sites] c", "expected a string")),
    case_row("site named like a parameter", _s('J = "spin 1/2"'), ("both a parameter and a site",)),
    case_row("spinful fermion clash", _s('c = "spinful fermion"\nc_up = "fermion"'),
             ("duplicate site name 'c_up'",)),
    case_row("dimension too large", case_text(sites="[sites]\n" + "".join(
        f's{i} = "spin 1/2"\n' for i in range(13)), observables=None, response=None,
        model='[model]\nhamiltonian = "0"\n', parameters=None),
        ("dimension 8192", "above the limit 4096", "fewer sites")),
    case_row("unknown name in H", _h("J*dot(a, b) + K*a.z"),
             ("[model] hamiltonian", "unknown name 'K'", "declare parameters")),
    case_row("unknown function in H", _h("J*dott(a, b)"), ("unknown function 'dott'",
                                                           "did you mean 'dot'")),
    case_row("old adjoint spelling", _h("J*dag(a.plus)"), ("adj(X)",)),
    case_row("unknown spin component", _h("J*a.w"), ("no component 'w'", "components")),
    case_row("implicit product", _h("2J*a.z"), ("2*J",)),
    case_row("unbalanced parenthesis", _h("J*(a.z + b.z"), ("missing ')'",)),
    case_row("not Hermitian", _h("I*J*a.z"), ("not Hermitian", "adj("), NotHermitianError),
    case_row("divide by operator", _h("J/a.z"), ("cannot divide by an operator",)),
    case_row("operator power too large", _h("(a.x + b.x)^40"), ("integer exponent from 0 to 12",)),
    case_row("level index out of range", case_text(sites='[sites]\nq = "levels 3"\na = "spin 1/2"\n'
                                                   'b = "spin 1/2"\n', model='[model]\n'
                                                   'hamiltonian = "J*q(0, 5)"\n'),
             ("a level of 'q' must be an integer from 0 to 2",)),
    case_row("temperature in H", _h("beta*a.z"), ("unknown name 'beta'", "temperature")),
    case_row("nested 200 deep", _h("(" * 200 + "J" + ")" * 200 + "*a.z"),
             ("nested more than 100 levels",)),
    case_row("formula too long", _h("J*a.z" + " + J*a.z" * 4000), ("more than the limit of 20000",)),
    case_row("number with 500 digits", _h("1" * 500 + "*a.z"), ("more than the limit of 400",)),
    case_row("exponent 1e999", _h("1e999*a.z"), ("larger than the limit of 400",)),
    case_row("observable name reserved", case_text(observables='[observables]\nomega = "a.z"\n'),
             ("[observables] omega", "reserved")),
    case_row("observable not a string", case_text(observables="[observables]\nM = 1\n"),
             ("[observables] M", "expected an expression string")),
    case_row("observable formula error", case_text(observables='[observables]\nM = "a.z +"\n'),
             ("[observables] M", "ends too early")),
    case_row("sector not conserved", case_text(model='[model]\nhamiltonian = "J*a.x"\n') +
             '[sector]\n"a.z + b.z" = 0\n', ("[sector]", "does not commute"), NotConservedError),
    case_row("sector not diagonal", case_text() + '[sector]\n"a.x" = 0\n', ("[sector]", "diagonal")),
    case_row("sector value text", case_text() + '[sector]\n"a.z + b.z" = "zero"\n',
             ("[sector]", "such as 2, 0.5")),
    case_row("sector with no state", case_text() + '[sector]\n"a.z + b.z" = 7\n',
             ("[sector]", "contains no state")),
    case_row("response without A", case_text(response='[[response]]\nB = "M"\n'),
             ("[[response]] #1", "missing key 'A'")),
    case_row("unknown quantity", case_text(response='[[response]]\nA = "M"\nquantities = ["entropy"]\n'),
             ("[[response]] #1 quantities", "unknown quantity 'entropy'")),
    case_row("empty quantities", case_text(response='[[response]]\nA = "M"\nquantities = []\n'),
             ("quantities", "non-empty array")),
    case_row("duplicate label", case_text(response='[[response]]\nA = "M"\n[[response]]\nA = "M"\n'),
             ("duplicate response label 'M'",)),
    case_row("label levels", case_text(response='[[response]]\nA = "M"\nlabel = "levels"\n'),
             ("'levels' is reserved",)),
    case_row("unknown observable in response", case_text(response='[[response]]\nA = "Mx"\n'),
             ("[[response]] #1 A", "unknown name 'Mx'")),
    case_row("response A not a string", case_text(response="[[response]]\nA = 3\n"),
             ("[[response]] #1 A", "expected a string")),
    case_row("nested arrays 40 deep", case_text() + "x = " + "[" * 40 + "]" * 40 + "\n",
             ("nested more than 16 levels",)),
    case_row("nested inline tables", case_text() + "y = " + "{a = " * 30 + "1" + "}" * 30 + "\n",
             ("nested more than 16 levels",)),
]


# ------------------------------------------------------------------------------ formula text
J = sp.Symbol("J", positive=True)
SCOPE = {"J": J, "beta": sr.beta, "T": 1 / sr.beta}


def formula_row(text: str, says: tuple[str, ...]) -> Row:
    return Row(f"formula: {text[:40]!r}", lambda: parse_scalar(text, SCOPE), ParseError,
               ("<formula>",) + says)


FORMULA_ROWS = [
    formula_row("", ("empty",)),
    formula_row("   \n\t", ("empty",)),
    formula_row("K", ("unknown name 'K'",)),
    formula_row("Jx", ("unknown name 'Jx'", "did you mean 'J'")),
    formula_row("expp(J)", ("unknown function 'expp'", "did you mean 'exp'")),
    formula_row("2J", ("write '2*J'",)),
    formula_row("J (J)", ("'J' is a parameter, not a function", "'J*(...)'")),
    formula_row("1 +", ("ends too early",)),
    formula_row(")", ("unexpected ')'",)),
    formula_row("(J", ("missing ')'",)),
    formula_row("[J, J", ("missing ']'",)),
    formula_row("J, J", ("unexpected ','",)),
    formula_row("J..x", ("attribute",)),
    formula_row('"J"', ("quotes are not part of the formula language",)),
    formula_row("J = 1", ("'=' has no meaning",)),
    formula_row("{J}", ("braces", "use parentheses")),
    formula_row("J!", ("factorial",)),
    formula_row("J % 2", ("'%' is not supported",)),
    formula_row("J @ J", ("'@' is not supported", "dot(a, b)")),
    formula_row("J; J", ("one expression per formula",)),
    formula_row("J # note", ("comments are not allowed",)),
    formula_row("\\frac{1}{J}", ("backslashes",)),
    formula_row("J^^2", ("unexpected '^'",)),
    formula_row("J**", ("ends too early",)),
    formula_row("exp()", ("expected 1 argument, got 0", "exp(x)")),
    formula_row("exp(J, J)", ("expected 1 argument, got 2",)),
    formula_row("sqrt J", ("missing operator between 'sqrt' and 'J'", "write '*'")),
    formula_row("J(2)", ("is a parameter, not a function", "'J*(...)'")),
    formula_row("pi(2)", ("is a constant, not a function",)),
    formula_row("1/0", ("division by zero",)),
    formula_row("0^-1", ("no finite value",)),
    formula_row("10^10000", ("more than 1000 digits",)),
    formula_row("(J + 1)^1000", ("too large for a symbolic base",)),
    formula_row("1e500", ("larger than the limit of 400",)),
    formula_row("J" + " + J" * 8000, ("more than the limit of 20000",)),
    formula_row("(" * 150 + "J" + ")" * 150, ("nested more than 100 levels",)),
    formula_row("-" * 150 + "J", ("nested more than 100 levels",)),
    formula_row("exp(" * 120 + "J" + ")" * 120, ("nested more than 100 levels",)),
    formula_row("log(0)", ("no finite value",)),
    formula_row("adj(J)", ("builds operators", "scalar formula")),
    formula_row("2.5.3", ("missing operator between '2.5' and '.3'",)),
    formula_row("1e", ("a number cannot be followed directly by a name",)),
    formula_row("β*J", ("unexpected character 'β'", "ASCII")),
    formula_row("J\x00", ("unexpected character U+0000",)),
    formula_row("J\u202e", ("unexpected character U+202E",)),
]


# ------------------------------------------------------------------------------ API arguments
_a, _b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
_h_sym = sp.Symbol("h", real=True)
_MODEL = sr.Model(J * (_a.vec @ _b.vec) - _h_sym * (_a.z + _b.z))
_RESP = _MODEL.response(_a.x + _b.x)


def _named(name: str):
    return lambda: sr.Model(sp.Symbol(name, real=True) * _a.z)


def api_row(id_: str, call, says: tuple[str, ...], error: type = InputError) -> Row:
    return Row(f"api: {id_}", call, error, says)


API_ROWS = [
    api_row("parameter name with space", _named("a b"), ("'a b'", "ASCII letters")),
    api_row("parameter name dunder", _named("__class__"), ("dunder", "double underscores")),
    api_row("parameter name ligature", _named("ﬁ"), ("not ASCII", "'fi'")),
    api_row("parameter name keyword", _named("lambda"), ("Python keyword", "'lambda_'")),
    api_row("parameter name newline", _named("x\ny"), ("not a valid parameter name",)),
    api_row("parameter name beta", _named("beta"), ("reserved", "rename it")),
    api_row("two symbols one name", lambda: sr.Model(J * _a.z + sp.Symbol("J", real=True) * _b.z),
            ("two different parameters are both named 'J'", "use one symbol")),
    api_row("parameter order missing one", lambda: sr.Model(J * _a.z + _h_sym * _b.z, parameters=(J,)),
            ("does not list h", "list every parameter")),
    api_row("parameter order twice", lambda: sr.Model(J * _a.z, parameters=(J, J)), ("listed twice",)),
    api_row("parameter order string", lambda: sr.Model(J * _a.z, parameters="J"), ("sequence",)),
    api_row("parameter order unknown", lambda: sr.Model(J * _a.z, parameters=(J, _h_sym)),
            ("'h'", "neither in H")),
    api_row("observable name bad", lambda: sr.Model(J * _a.z, observables={"M x": _a.z}),
            ("observable", "'M x'")),
    api_row("observable name keyword", lambda: sr.Model(J * _a.z, observables={"class": _a.z}),
            ("observable", "Python keyword")),
    api_row("sector value text", lambda: sr.Model(J * (_a.vec @ _b.vec), sector={_a.z + _b.z: "0"}),
            ("sector value", "not a number")),
    api_row("nan coefficient", lambda: float("nan") * _a.z, ("not a finite number",)),
    api_row("inf in H", lambda: sr.Model(J * _a.z + sp.oo * _b.z), ("not a finite number",)),
    api_row("budget zero", lambda: Budget(seconds=0), ("seconds", "positive finite")),
    api_row("budget nan", lambda: Budget(seconds=math.nan), ("seconds",)),
    api_row("budget text", lambda: Budget(seconds="10"), ("seconds",)),
    api_row("budget bool", lambda: Budget(seconds=True), ("seconds",)),
    api_row("budget max_block", lambda: Budget(max_block=0), ("max_block",)),
    api_row("budget of a response", lambda: _MODEL.response(_a.z, budget=60), ("Budget",)),
    api_row("evaluate T text", lambda: _RESP.evaluate("isothermal", params={"J": 1, "h": 0}, T="1"),
            ("evaluate: T", "not str", "never evaluated")),
    api_row("evaluate time text", lambda: _RESP.evaluate(
        "time", params={"J": 1, "h": 0}, T=1, time_value="__import__('os').system('false')"),
        ("evaluate: time_value", "never evaluated")),
    api_row("evaluate omega text", lambda: _RESP.evaluate(
        "frequency", params={"J": 1, "h": 0}, T=1, omega_value="1j"), ("omega_value", "number")),
    api_row("evaluate param text", lambda: _RESP.evaluate("isothermal", params={"J": "1", "h": 0}, T=1),
            ("params", "J", "not a number")),
    api_row("evaluate params list", lambda: _RESP.evaluate("isothermal", params=[1, 2], T=1),
            ("params", "mapping")),
    api_row("evaluate T zero", lambda: _RESP.evaluate("isothermal", params={"J": 1, "h": 0}, T=0),
            ("T=0", "positive temperature")),
    api_row("evaluate T nan", lambda: _RESP.evaluate("isothermal", params={"J": 1, "h": 0}, T=math.nan),
            ("evaluate: T", "finite")),
    api_row("reference T text", lambda: _RESP.reference(params={"J": 1, "h": 0}, T="1"),
            ("reference: T", "never evaluated")),
    api_row("reference T bool", lambda: _RESP.reference(params={"J": 1, "h": 0}, T=True),
            ("reference: T", "not bool")),
    api_row("array params text", lambda: _MODEL.array(params={"J": "2", "h": 0}), ("J", "not a number")),
    api_row("latex substitutions text", lambda: _RESP.latex_document(substitutions={J: "J+1"}),
            ("substitution", "not an expression")),
    api_row("load_case device", lambda: sr.load_case("/dev/zero"), ("/dev/zero", "not a file")),
    api_row("read_case device", lambda: read_case("/dev/zero"), ("/dev/zero", "not a regular file")),
    api_row("read_case directory", lambda: read_case("/"), ("is a directory",)),
    api_row("nlevel n float", lambda: sr.nlevel("q", 2.5), ("n=2.5", "integer")),
    api_row("boson cutoff bool", lambda: sr.boson("x", True), ("cutoff", "integer")),
    api_row("spin name empty", lambda: sr.spin("", 1), ("not valid",)),
    api_row("derivation over budget", lambda: _ring(10).response(
        sum((s.z for s in _RING_SITES[10]), 0), budget=Budget(seconds=0.5)).static(),
        ("time budget (0.5 s) during", "raise the budget"), BudgetExceeded),
]

_RING_SITES: dict[int, list] = {}


def _ring(n: int) -> sr.Model:
    s = _RING_SITES.setdefault(n, [sr.spin(f"s{i}", sp.Rational(1, 2)) for i in range(n)])
    return sr.Model(sum((J * (s[i].vec @ s[(i + 1) % n].vec) for i in range(n)), 0)
                    + _h_sym * sum((x.z for x in s), 0))


# ------------------------------------------------------------------------------ command line
def cli(*args: str):
    """Run the command in this process; return (exit code, stderr)."""
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = main(list(args))
    return code, err.getvalue()


def cli_row(id_: str, args, code: int, says: tuple[str, ...], ceiling: float = FAST) -> Row:
    return Row(f"cli: {id_}", lambda: cli(*(args() if callable(args) else args)), code, says, ceiling)


@pytest.fixture(scope="module")
def workdir(tmp_path_factory) -> Path:
    d = tmp_path_factory.mktemp("bad_inputs")
    (d / "exists.py").write_text("keep me\n")
    (d / "formula.txt").write_text("beta/4 +\n")
    (d / "long.txt").write_text("J" + " + J" * 30000)
    (d / "sub").mkdir()
    (d / "ring10.toml").write_text(
        "[model]\nhamiltonian = \"" + " + ".join(f"J*dot(s{i}, s{(i + 1) % 10})" for i in range(10))
        + " + h*(" + " + ".join(f"s{i}.z" for i in range(10)) + ")\"\n[parameters]\nJ = 1\nh = 0.1\n"
        "[sites]\n" + "".join(f's{i} = "spin 1/2"\n' for i in range(10))
        + "[[response]]\nA = \"" + " + ".join(f"s{i}.z" for i in range(10)) + "\"\n")
    return d


WORK: list[Path] = []


def w(name: str) -> str:
    return str(WORK[0] / name)


CLI_ROWS = [
    cli_row("no command", [], 2, ()),
    cli_row("unknown command", ["derivee", "dimer"], 2, ()),
    cli_row("unknown case", ["derive", "dimr", "-q"], 2, ("dimr", "did you mean 'dimer'")),
    cli_row("case is a directory", lambda: ["derive", w("sub"), "-q"], 2, ("is not a file",)),
    cli_row("case is a device", ["derive", "/dev/null", "-q"], 2, ("/dev/null", "not a file")),
    cli_row("budget negative", ["derive", "dimer", "--budget", "-1"], 2, ()),
    cli_row("budget text", ["derive", "dimer", "--budget", "soon"], 2, ()),
    cli_row("budget infinite", ["derive", "dimer", "--budget", "inf"], 2, ()),
    cli_row("points zero", ["verify", "dimer", "--points", "0"], 2, ()),
    cli_row("points huge", ["verify", "dimer", "--points", "100000"], 2, ()),
    cli_row("seed negative", ["verify", "dimer", "--seed", "-3"], 2, ()),
    cli_row("check without formula", ["check", "two_level"], 2, ()),
    cli_row("samples one", ["check", "two_level", "--formula", "beta", "--samples", "1"], 2, ()),
    cli_row("quantity unknown", ["check", "two_level", "--formula", "beta", "--quantity", "heat"], 2, ()),
    cli_row("formula file device", ["check", "two_level", "-r", "dipole", "--formula-file", "/dev/zero", "-q"], 2,
            ("--formula-file /dev/zero", "not a regular file")),
    cli_row("formula file missing", lambda: ["check", "two_level", "-r", "dipole", "--formula-file", w("none.txt"), "-q"],
            2, ("--formula-file", "no such file")),
    cli_row("formula file directory", lambda: ["check", "two_level", "-r", "dipole", "--formula-file", w("sub"), "-q"],
            2, ("--formula-file", "is a directory")),
    cli_row("formula file too long", lambda: ["check", "two_level", "-r", "dipole", "--formula-file", w("long.txt"), "-q"],
            2, ("--formula-file", "more than the limit")),
    cli_row("formula file parse error", lambda: ["check", "two_level", "-r", "dipole", "--formula-file",
                                                 w("formula.txt"), "-q"], 2,
            ("formula.txt:1:", "ends too early"), SLOW),
    cli_row("formula parse error", ["check", "two_level", "-r", "dipole", "--formula", "beta/(4", "-q"], 2,
            ("<formula>:1:", "missing ')'"), SLOW),
    cli_row("formula unknown name", ["check", "two_level", "-r", "dipole", "--formula", "beta*Jx", "-q"], 2,
            ("unknown name 'Jx'",), SLOW),
    cli_row("formula nested exponentials", ["check", "dimer", "-r", "M", "--formula",
                                            "exp(exp(exp(exp(1000*beta))))", "--budget", "3", "-q"],
            1, ("time budget (3 s)", "raise the budget"), SLOW),
    cli_row("response unknown", ["derive", "dimer", "-r", "Q", "-q"], 2, ("no response labelled 'Q'",
                                                                          "known: M, Mx")),
    cli_row("emit over an existing file", lambda: ["emit", "two_level", "-r", "dipole", "--out", w("exists.py"), "-q"],
            2, ("exists.py", "add --force"), SLOW),
    cli_row("emit over the case file", lambda: ["emit", str(Path(sr.__file__).parents[1] / "cases"
                                                         / "two_level.toml"), "-r", "dipole", "--out",
                                                str(Path(sr.__file__).parents[1] / "cases"
                                                    / "two_level.toml"), "--force", "-q"],
            2, ("input of this command",), SLOW),
    cli_row("emit into a missing directory", lambda: ["emit", "two_level", "-r", "dipole", "--out",
                                                      w("nowhere/x.py"), "-q"],
            2, ("does not exist", "create it"), SLOW),
    cli_row("emit onto a directory", lambda: ["emit", "two_level", "-r", "dipole", "--out", w("sub"), "-q"], 2,
            ("is a directory",), SLOW),
    cli_row("emit onto a device", ["emit", "two_level", "-r", "dipole", "--out", "/dev/null", "--force", "-q"], 2,
            ("not a regular file",), SLOW),
    cli_row("plot onto a file", lambda: ["plot", "two_level", "--out", w("exists.py"), "-q"], 2,
            ("exists and is not a directory",), SLOW),
    cli_row("derive over budget", lambda: ["derive", w("ring10.toml"), "--budget", "1", "-q"], 1,
            ("time budget (1 s) during", "raise the budget"), SLOW),
    cli_row("emit with several responses", ["emit", "dimer", "--out", "/tmp/never.py", "-q"], 2,
            ("choose one with --response",), SLOW),
]


# ------------------------------------------------------------------------------ emitted evaluators
_EVAL: list = []


def ev_row(id_: str, call, error: type, says: tuple[str, ...]) -> Row:
    return Row(f"evaluator: {id_}", lambda: call(_EVAL[0]), error, says, SLOW)


EVALUATOR_ROWS = [
    ev_row("T text", lambda m: m.chi_isothermal("1.0", 1.0, 0.1), TypeError, ("T='1.0'", "real number")),
    ev_row("T None", lambda m: m.chi_isothermal(None, 1.0, 0.1), TypeError, ("T=None",)),
    ev_row("T complex", lambda m: m.chi_isothermal(1 + 1j, 1.0, 0.1), TypeError, ("T=(1+1j)",)),
    ev_row("T bool", lambda m: m.chi_isolated(True, 1.0, 0.1), TypeError, ("T=True",)),
    ev_row("T text array", lambda m: m.chi_isothermal(np.array(["1"]), 1.0, 0.1), TypeError, ("T=",)),
    ev_row("T negative", lambda m: m.chi_isothermal(-1.0, 1.0, 0.1), ValueError, ("T must be > 0",)),
    ev_row("T nan", lambda m: m.chi_isothermal(math.nan, 1.0, 0.1), ValueError, ("T must be > 0",)),
    ev_row("T 1e-320", lambda m: m.chi_isothermal(1e-320, 1.0, 0.1), ValueError,
           ("T must be at least", "overflows")),
    ev_row("T 1e-320 in an array", lambda m: m.chi_isothermal(np.array([1.0, 1e-320]), 1.0, 0.1),
           ValueError, ("T must be at least",)),
    ev_row("parameter text", lambda m: m.chi_isothermal(1.0, "J", 0.1), TypeError, ("'J'", "real number")),
    ev_row("parameter inf", lambda m: m.chi_isothermal(1.0, math.inf, 0.1), ValueError, ("must be finite",)),
    ev_row("eta zero", lambda m: m.chi_omega(0.1, 1.0, 1.0, 0.1, eta=0.0), ValueError, ("eta", "> 0")),
    ev_row("eta array", lambda m: m.chi_omega(0.1, 1.0, 1.0, 0.1, eta=np.array([0.1, 0.2])), ValueError,
           ("eta", "one finite number")),
    ev_row("kind unknown", lambda m: m.chi_static(1.0, 1.0, 0.1, kind="adiabatic"), ValueError,
           ("kind='adiabatic'", "'isothermal' or 'isolated'")),
    ev_row("shape unknown", lambda m: m.chi_spectral(0.1, 1.0, 1.0, 0.1, eta=0.1, shape="voigt"),
           ValueError, ("shape='voigt'", "'lorentzian' or 'gaussian'")),
    ev_row("omega text", lambda m: m.chi_omega("1", 1.0, 1.0, 0.1, eta=0.1), TypeError, ("omega='1'",)),
    ev_row("time text", lambda m: m.chi_time("1", 1.0, 1.0, 0.1), TypeError, ("t='1'",)),
    ev_row("missing parameter", lambda m: m.chi_isothermal(1.0, 1.0), TypeError, ("missing 1 required",
                                                                                    "'h'")),
]

ROWS = CASE_ROWS + FORMULA_ROWS + API_ROWS + CLI_ROWS + EVALUATOR_ROWS


@pytest.fixture(scope="module", autouse=True)
def _setup(workdir):
    WORK[:] = [workdir]
    if not _EVAL:
        _EVAL.append(_MODEL.response(_a.x + _b.x + _a.z / 3).numpy())
    yield


@pytest.mark.parametrize("row", ROWS, ids=[r.id for r in ROWS])
def test_bad_input_gives_a_clear_error_in_time(row: Row):
    faulthandler.dump_traceback_later(HANG_FACTOR * row.ceiling + 5, exit=True)
    start = time.monotonic()
    try:
        if isinstance(row.error, int):
            code, message = row.call()
            assert code == row.error, f"exit code {code}, expected {row.error}: {message}"
            if row.error == 2 and not row.says:
                assert message.strip(), "a bad option must say what is wrong"
        else:
            with pytest.raises(row.error) as info:
                row.call()
            message = str(info.value)
            assert "Traceback" not in message
    finally:
        faulthandler.cancel_dump_traceback_later()
        elapsed = time.monotonic() - start
        TIMES[row.id] = elapsed
    for part in row.says:
        assert part in message, f"{part!r} not in the message:\n{message}"
    assert elapsed <= row.ceiling, f"{elapsed:.1f} s, above the ceiling of {row.ceiling} s"


def test_the_catalogue_is_large_and_covers_every_kind_of_input():
    kinds = {r.id.split(":")[0] for r in ROWS}
    assert kinds == {"case", "formula", "api", "cli", "evaluator"}
    assert len(ROWS) >= 150
    assert len({r.id for r in ROWS}) == len(ROWS), "row ids must be unique"
    if TIMES:
        slowest = max(TIMES, key=TIMES.get)
        print(f"\nbad inputs: {len(ROWS)} rows, {len(TIMES)} run; longest {TIMES[slowest]:.2f} s "
              f"({slowest})")
