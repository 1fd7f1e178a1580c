"""Tests of the ``symresp`` command: bundled cases end to end, bad input, exit codes."""

from __future__ import annotations

import json
import math
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
import sympy as sp

import symresp.cases._verify as verify_module
import symresp.cli._main as cli_main
from symresp.cases import bundled_cases, derive_case, find_case, read_case
from symresp.cli import main
from symresp.cli._plot import HAVE_MATPLOTLIB
from symresp.conventions import beta
from symresp.text import parse_scalar

from ._run import SUBPROCESS_TIMEOUT, run_cli

BUNDLED = [p.stem for p in bundled_cases()]


# ---------------------------------------------------------------- bundled cases, end to end

def test_at_least_eight_bundled_cases():
    assert len(BUNDLED) >= 8
    assert {"dimer", "zfs_ion", "triangle", "ring4", "two_level", "hubbard_dimer", "qubit_cavity",
            "mixed_pair"} <= set(BUNDLED)


#: Bundled cases whose derivation takes tens of seconds: checked in the slow tier.
SLOW_CASES = {"frustrated_ring"}


@pytest.mark.parametrize("name", [pytest.param(n, marks=pytest.mark.slow) if n in SLOW_CASES
                                  else n for n in BUNDLED])
def test_bundled_case_derives_and_verifies(name, capsys):
    # in this process (the console script itself is run by the tests of `python -m symresp`)
    assert main(["derive", name, "--quiet"]) == 0, capsys.readouterr().err
    out = capsys.readouterr().out
    assert "levels (" in out and "Z = " in out and "chi_isothermal = " in out
    # Printed like a results section: after the case header (which repeats the case file) no
    # line is longer than 400 characters, and the whole stays short (the six-site wheel
    # printed 326 KB when formulas were written out in full).
    body = out.split("\n== ", 1)[1]
    assert max(len(line) for line in body.splitlines()) <= 400
    assert len(out.encode()) < 20_000
    code = main(["verify", name, "--quiet", "--points", "2", "--seed", "7"])
    out = capsys.readouterr().out
    assert code == 0, out
    assert re.search(r"all \d+ checks passed", out)
    assert "MISMATCH" not in out


def test_list_shows_every_bundled_case_with_a_description():
    out = run_cli("list")
    assert out.returncode == 0
    lines = out.stdout.splitlines()
    for name in BUNDLED:
        line = next(x for x in lines if x.split()[0] == name)
        assert len(line.split()) > 2


def test_progress_stages_go_to_stderr(capsys):
    assert main(["derive", "dimer"]) == 0
    captured = capsys.readouterr()
    assert "deriving response 1/2 'M'" in captured.err
    assert "deriving" not in captured.out


def test_quantity_latex_and_response_options(capsys):
    assert main(["derive", "dimer", "-q", "--response", "Mx", "--quantity", "time", "--latex"]) == 0
    out = capsys.readouterr().out
    assert "\\chi_{AB}(t) &= " in out and "Response M:" not in out and "chi^{T}" not in out
    assert out.startswith("\\documentclass") and out.rstrip().endswith("\\end{document}")


def test_json_formulas_read_back_with_the_formula_parser(capsys):
    # Every formula is text in sympy syntax over the parameters, beta and the where-list names;
    # reading the where-list in order and then the formula gives the derived quantity.
    assert main(["derive", "zfs_ion", "-q", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    case = read_case(find_case("zfs_ion"))
    derived = dict(derive_case(case))
    for entry in doc["responses"]:
        symbols = dict(case.symbols, beta=beta)
        for item in entry["where"]:
            if item["kind"] != "root":
                symbols[item["name"]] = parse_scalar(item["text"], symbols)
        for q, name in entry["formula_symbols"].items():
            symbols[name] = parse_scalar(entry["quantities"][q]["text"], symbols)
        parsed = parse_scalar(entry["quantities"]["isothermal"]["text"], symbols)
        expected = derived[entry["label"]].static("isothermal")
        point = {s: v for s, v in case.defaults.items()}
        point[beta] = sp.Rational(1, 3)
        assert abs(sp.N((parsed - expected).subs(point), 30)) < 1e-20
        assert [lv["label"] for lv in entry["levels"]] == [1, 2, 3]
    assert doc["parameters"][0]["name"] == "D" and doc["parameters"][0]["value"] == "4.2"


def test_case_path_and_search_variable(tmp_path, capsys):
    case = tmp_path / "mine.toml"
    case.write_text('[model]\ndescription = "free spin"\nhamiltonian = "0"\n[sites]\ns = "spin 1"\n'
                    '[[response]]\nA = "s.z"\n')
    assert main(["verify", str(case), "-q", "--points", "1"]) == 0
    assert "checks passed" in capsys.readouterr().out
    env = dict(os.environ, SYMRESP_CASES=str(tmp_path))
    out = subprocess.run([sys.executable, "-m", "symresp.cli", "list"], capture_output=True,
                         text=True, timeout=SUBPROCESS_TIMEOUT, env=env)
    assert "mine" in out.stdout and "free spin" in out.stdout


# ---------------------------------------------------------------- bad input: exit 2, a place, no traceback

GOOD = '''[model]
hamiltonian = "J*dot(a, b) - h*(a.z + b.z)"
[parameters]
J = { assume = "positive", value = 1 }
h = { value = 0.5 }
[sites]
a = "spin 1/2"
b = "spin 1/2"
[observables]
M = "a.z + b.z"
[[response]]
A = "M"
'''

FERMIONS = '''[model]
hamiltonian = "-t1*(adj(c1)*c2 + adj(c2)*c1)"
[parameters]
t1 = 1
[sites]
c1 = "fermion"
c2 = "fermion"
'''


def _h(expr: str) -> str:
    return GOOD.replace('"J*dot(a, b) - h*(a.z + b.z)"', f'"{expr}"')


# (name, file text, what stderr must show besides the file name)
CATALOGUE = [
    ("toml-syntax", "[model\nhamiltonian = \"0\"\n", r":1:\d+: not valid TOML"),
    ("toml-duplicate-key", GOOD.replace('b = "spin 1/2"', 'b = "spin 1/2"\na = "spin 1"'),
     r":9:\d+: not valid TOML: Cannot overwrite"),
    ("toml-unterminated-string", '[model]\nhamiltonian = "J*a.z\n', r":2:\d+: not valid TOML"),
    ("missing-model", '[sites]\na = "spin 1/2"\n', r"missing section \[model\]"),
    ("missing-sites", '[model]\nhamiltonian = "0"\n', r"missing section \[sites\]"),
    ("unknown-section", GOOD + "[sights]\n", r":\d+: top-level key 'sights'.*did you mean 'sites'"),
    ("unknown-model-key", GOOD.replace("hamiltonian =", "hamiltonain ="), r":2: \[model\] hamiltonain"),
    ("empty-hamiltonian", _h("   "), r":2: \[model\] hamiltonian: the Hamiltonian is empty"),
    ("hamiltonian-not-string", GOOD.replace('hamiltonian = "J*dot(a, b) - h*(a.z + b.z)"', "hamiltonian = 1"),
     r":2: \[model\] hamiltonian: expected a string"),
    ("implicit-product", _h("2J*a.z"), r":2:17: \[model\] hamiltonian: .*'2\*J'"),
    ("undeclared-parameter", _h("K*a.z"), r":2:16: \[model\] hamiltonian: unknown name 'K'"),
    ("undeclared-site", _h("J*c.z"), r":2:18: \[model\] hamiltonian: unknown name 'c'"),
    ("misspelt-component", _h("J*a.zz"), r":2:20: .*did you mean 'a.z'"),
    ("misspelt-function", _h("J*dott(a, b)"), r":2:18: .*did you mean 'dot'"),
    ("unbalanced", _h("J*(a.z + b.z"), r":2:\d+: .*missing '\)'"),
    ("non-hermitian", _h("J*a.plus"), r":2: \[model\] hamiltonian: .*not Hermitian"),
    ("operator-in-exponent", _h("exp(a.z)"), r":2:20: .*of an operator"),
    ("level-out-of-range", GOOD.replace('b = "spin 1/2"', 'q = "levels 3"').replace(
        "J*dot(a, b) - h*(a.z + b.z)", "J*(q(0, 5) + q(5, 0))").replace("a.z + b.z", "a.z"),
     r":2:\d+: .*from 0 to 2"),
    ("spin-not-half-integer", GOOD.replace('b = "spin 1/2"', 'b = "spin 2/3"'),
     r":8: \[sites\] b: spin 2/3 is not a positive integer or half-integer"),
    ("unknown-site-kind", GOOD.replace('b = "spin 1/2"', 'b = "qubit"'), r":8: \[sites\] b: .*kind"),
    ("duplicate-mode", GOOD.replace('b = "spin 1/2"', 'd = "spinful fermion"\nd_up = "fermion"'),
     r":9: \[sites\] d_up: duplicate site name"),
    ("bad-assumption", GOOD.replace('assume = "positive"', 'assume = "posative"'),
     r":4: \[parameters\] J assume: .*did you mean 'positive'"),
    ("value-breaks-assumption", GOOD.replace("value = 1 }", "value = -2 }"),
     r":4: \[parameters\] J value: -2 is not positive"),
    ("value-wrong-type", GOOD.replace("value = 0.5", 'value = [1]'), r":5: \[parameters\] h value: "),
    ("reserved-parameter", GOOD.replace("h = { value = 0.5 }", "beta = { value = 0.5 }"),
     r":5: \[parameters\] beta: .*reserved"),
    ("bad-observable", GOOD.replace('M = "a.z + b.z"', 'M = "a.z +"'), r":10:\d+: \[observables\] M: "),
    ("sector-not-conserved", FERMIONS + '[sector]\n"n(c1)" = 1\n', r"\[sector\]: .*commute"),
    ("sector-empty", FERMIONS + '[sector]\n"n(c1) + n(c2)" = 5\n', r"\[sector\]: .*no state"),
    ("response-leaves-sector", FERMIONS + '[sector]\n"n(c1) + n(c2)" = 1\n[[response]]\nA = "c1"\n',
     r":\d+: \[\[response\]\] #1 A: "),
    ("response-unknown-quantity", GOOD + 'quantities = ["isothermal", "dynamic"]\n',
     r":13: \[\[response\]\] #1 quantities: unknown quantity 'dynamic'"),
    ("response-missing-A", GOOD.replace('A = "M"', 'B = "M"'), r"\[\[response\]\] #1: missing key 'A'"),
    ("response-unknown-name", GOOD.replace('A = "M"', 'A = "Mz"'), r":12:6: .*did you mean 'M'"),
    ("hostile-import", _h("__import__('os').system('echo hi')"), r":2:\d+: .*unexpected character"),
    ("hostile-dunder", _h("a.__class__"), r":2:\d+: .*no component '__class__'"),
    ("deep-nesting", _h("(" * 300 + "J" + ")" * 300 + "*a.z"), r":2:\d+: .*nested more than"),
    ("too-long", _h("+".join(["J*a.z"] * 3400)), r"\[model\] hamiltonian: the formula has \d+ characters"),
    ("too-large-space", GOOD.replace('b = "spin 1/2"', 'x = "boson 200"\ny = "boson 200"'),
     r":9: \[sites\] y: .*above the limit"),
]


@pytest.mark.parametrize("name, text, place", CATALOGUE, ids=[c[0] for c in CATALOGUE])
def test_bad_case_file_exits_2_naming_the_place(tmp_path, capsys, name, text, place):
    path = tmp_path / f"{name}.toml"
    path.write_text(text)
    code = main(["derive", str(path), "--quiet"])
    captured = capsys.readouterr()
    assert code == 2, captured.err
    assert captured.err.startswith("error: "), captured.err
    assert "Traceback" not in captured.err and captured.out == ""
    assert str(path) in captured.err
    assert re.search(place, captured.err), captured.err


def test_catalogue_is_large_enough():
    assert len(CATALOGUE) >= 25


def test_bad_bytes_and_missing_files(tmp_path, capsys):
    path = tmp_path / "latin1.toml"
    path.write_bytes(b'[model]\ndescription = "caf\xe9"\n')
    assert main(["verify", str(path)]) == 2
    assert "not UTF-8" in capsys.readouterr().err
    assert main(["derive", "dimmer", "-q"]) == 2
    err = capsys.readouterr().err
    assert "dimmer: no such case file" in err and "did you mean 'dimer'" in err
    assert main(["derive", str(tmp_path), "-q"]) == 2


@pytest.mark.parametrize("args", [
    ["verify", "dimer", "--points", "0"],
    ["verify", "dimer", "--seed", "-1"],
    ["derive", "dimer", "--quantity", "dynamic"],
    ["derive", "dimer", "--json", "--latex"],
    ["derive", "dimer", "--budget", "nan"],
    ["frobnicate"],
    [],
])
def test_bad_options_exit_2(capsys, args):
    assert main(args) == 2
    assert "Traceback" not in capsys.readouterr().err


def test_unknown_response_label_exits_2(capsys):
    assert main(["derive", "dimer", "-q", "--response", "Mz"]) == 2
    assert "no response labelled 'Mz'" in capsys.readouterr().err


def test_bad_input_through_a_real_process(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(_h("J*a.z + Jh*b.z"))
    out = run_cli("derive", str(path))
    assert out.returncode == 2
    assert out.stderr.splitlines()[-3].startswith(f"error: {path}:2:24: [model] hamiltonian: "
                                                  f"unknown name 'Jh'")
    assert out.stderr.splitlines()[-1].strip() == "^" and "Traceback" not in out.stderr


# ---------------------------------------------------------------- internal errors, plot, emit

def test_internal_error_exits_1_with_a_report_hint(capsys, monkeypatch):
    def broken(*args, **kwargs):
        raise RuntimeError("boom")

    monkeypatch.setattr(cli_main, "derive_case", broken)
    assert main(["derive", "dimer", "-q"]) == 1
    err = capsys.readouterr().err
    assert "internal error: RuntimeError: boom" in err and "report" in err
    assert "Traceback" not in err
    assert main(["derive", "dimer", "-q", "--debug"]) == 1
    assert "Traceback" in capsys.readouterr().err


def test_plot_writes_pngs_or_explains_how_to_install(tmp_path, capsys):
    code = main(["plot", "triangle", "-q", "--out", str(tmp_path / "plots")])
    captured = capsys.readouterr()
    if not HAVE_MATPLOTLIB:
        assert code == 2 and "pip install symresp[plot]" in captured.err
        return
    assert code == 0, captured.err
    files = sorted(p.name for p in (tmp_path / "plots").iterdir())
    assert "triangle-Mx-spectrum.png" in files and "triangle-M-chiT.png" in files
    assert all(Path(line).exists() for line in captured.out.splitlines())


def test_emit_writes_an_evaluator_that_matches_the_derivation(tmp_path, capsys):
    out = tmp_path / "dimer_eval.py"
    code = main(["emit", "dimer", "-q", "--response", "M", "--out", str(out)])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    assert captured.out.strip() == str(out)
    namespace: dict = {}
    exec(compile(out.read_text(), str(out), "exec"), namespace)
    # Bleaney-Bowers at zero field, g mu_B = 1: chi = 2 beta/(3 + exp(beta J)) (common practice)
    T, J = 2.0, 3.0
    expected = 2 / T / (3 + math.exp(J / T))
    assert namespace["chi_isothermal"](T, J=J, h=0.0) == pytest.approx(expected, rel=1e-12)


def test_emit_asks_for_a_label_when_several_responses(tmp_path, capsys):
    assert main(["emit", "dimer", "-q", "--out", str(tmp_path / "x.py")]) == 2
    err = capsys.readouterr().err
    assert "the case has 2 responses (M, Mx); choose one with --response LABEL" in err
    assert not (tmp_path / "x.py").exists()


def test_verify_exits_1_and_reports_a_mismatch(capsys, monkeypatch):
    exact = verify_module.evaluate_precise

    def off_by_a_little(expr, values, **kwargs):
        return exact(expr, values, **kwargs) * (1 + 1e-4) + 1e-6

    monkeypatch.setattr(verify_module, "evaluate_precise", off_by_a_little)
    assert main(["verify", "dimer", "-q", "--points", "1"]) == 1
    out = capsys.readouterr().out
    assert "MISMATCH" in out and "checks FAILED" in out


def test_case_without_responses_shows_levels(tmp_path, capsys):
    path = tmp_path / "levels_only.toml"
    path.write_text('[model]\nhamiltonian = "D*s.z^2"\n[parameters]\nD = 1\n[sites]\ns = "spin 1"\n')
    assert main(["derive", str(path), "-q"]) == 0
    out = capsys.readouterr().out
    assert "== levels" in out and "Z = 1 + 2*exp(-D*beta)" in out
    assert main(["verify", str(path), "-q", "--points", "1"]) == 0
    assert "checks passed" in capsys.readouterr().out


def test_implicit_levels_get_short_names_and_a_legend(tmp_path, capsys):
    path = tmp_path / "cubic.toml"
    path.write_text('[model]\nhamiltonian = "J*(q(0,1) + q(1,0) + q(1,2) + q(2,1) + q.proj(0) + '
                    '3*q.proj(2))"\n[parameters]\nJ = { assume = "positive", value = 1 }\n'
                    '[sites]\nq = "levels 3"\n[[response]]\nA = "q(0,2) + q(2,0)"\n')
    assert main(["derive", str(path), "-q"]) == 0
    out = capsys.readouterr().out
    assert "E1 = J*r1_0" in out and "CRootOf(" not in out
    assert "r1_k: the roots of p(x) = x**3 - 4*x**2 + x + 4, k = 0..2 ascending" in out
    assert "r1_2 = 3.342923082" in out
    assert main(["verify", str(path), "-q", "--points", "1"]) == 0
