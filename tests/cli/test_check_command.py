"""Tests of ``symresp check`` and ``symresp consistency``: verdicts, exit codes, tables."""

from __future__ import annotations

import re

import pytest
import sympy as sp

import symresp.cli._main as cli_main
from symresp.cases import find_case, read_case
from symresp.checks import CHECK_NAMES, CheckRow, Report
from symresp.cli import EXIT_BAD_INPUT, EXIT_FAILURE, EXIT_OK, main
from symresp.conventions import beta
from symresp.text import parse_scalar

from ._run import run_cli


# Isothermal chi of M = a.z + b.z for the bundled dimer H = J S_a.S_b - h (a.z + b.z): levels
# -3J/4 (singlet) and J/4 - h m (triplet, m = 1, 0, -1). With x = exp(-beta J) and c = cosh(beta h),
# Z ~ 1 + x (1 + 2c), <M> ~ 2 x sinh(beta h), <M^2> ~ 2 x c, and beta (<M^2> - <M>^2) simplifies
# (common practice) to
CHI_M = "2*beta*(cosh(beta*h)*(exp(J/T) + 1) + 2)/(exp(J/T) + 1 + 2*cosh(beta*h))**2"
# The same with J -> -J: a ferromagnetic sign convention for the exchange.
CHI_M_FLIPPED_J = "2*beta*(cosh(beta*h)*(exp(-J/T) + 1) + 2)/(exp(-J/T) + 1 + 2*cosh(beta*h))**2"
# At h = 0 it is the Bleaney-Bowers susceptibility of an exchange-coupled spin-1/2 pair.
# Source: B. Bleaney and K. D. Bowers, Proc. R. Soc. A 214, 451 (1952)
BLEANEY_BOWERS = "2*beta/(3 + exp(J/T))"


def test_dimer_formula_reduces_to_bleaney_bowers_at_zero_field():
    symbols = dict(read_case(find_case("dimer")).symbols, beta=beta, T=1 / beta)
    chi = parse_scalar(CHI_M, symbols)
    bb = parse_scalar(BLEANEY_BOWERS, symbols)
    assert sp.simplify(chi.subs(symbols["h"], 0) - bb) == 0


def test_check_accepts_the_correct_isothermal_chi_of_the_dimer():
    out = run_cli("check", "dimer", "-q", "--response", "M", "--formula", CHI_M)
    assert out.returncode == EXIT_OK, out.stdout + out.stderr
    assert "response 'M'" in out.stdout and "quantity isothermal" in out.stdout
    assert "agrees (exact)" in out.stdout


def test_check_names_a_flipped_sign_of_the_exchange():
    out = run_cli("check", "dimer", "-q", "--response", "M", "--formula", CHI_M_FLIPPED_J)
    assert out.returncode == EXIT_FAILURE, out.stdout + out.stderr
    assert "differs: coupling convention" in out.stdout and "J -> -J" in out.stdout
    assert re.search(r"at J = \S+, h = \S+, beta = \S+: yours = \S+, ours = \S+", out.stdout)
    assert out.stderr == ""


@pytest.mark.parametrize("from_file", [False, True], ids=["inline", "file"])
def test_check_malformed_formula_exits_2_with_place_and_caret(tmp_path, from_file):
    if from_file:
        path = tmp_path / "chi.txt"
        path.write_text("2*beta*(cosh(beta*h)*(exp(J/T) + 1) + 2)\n"
                        "  / (exp(J/T) + 1 + 2*cosh(beta*h)**2\n")
        out = run_cli("check", "dimer", "-q", "-r", "M", "--formula-file", str(path))
        place, excerpt = f"{path}:2:38:", "  / (exp(J/T) + 1 + 2*cosh(beta*h)**2"
    else:
        out = run_cli("check", "dimer", "-q", "-r", "M", "--formula", "2*beta/(3 + exp(J/T)")
        place, excerpt = "<formula>:1:21:", "2*beta/(3 + exp(J/T)"
    assert out.returncode == EXIT_BAD_INPUT
    assert out.stdout == "" and "Traceback" not in out.stderr
    lines = out.stderr.splitlines()
    assert lines[0].startswith(f"error: {place} missing ')'")
    assert lines[1] == f"    {excerpt}"
    assert lines[2] == " " * (4 + len(excerpt)) + "^"


@pytest.mark.parametrize("name", ["dimer", "two_level"])
def test_consistency_passes_and_prints_every_row_with_a_status(name):
    out = run_cli("consistency", name, "-q")
    assert out.returncode == EXIT_OK, out.stdout + out.stderr
    labels = [r.label for r in read_case(find_case(name)).responses]
    for label in labels:
        assert f"== response '{label}'" in out.stdout
    for check in CHECK_NAMES:
        rows = re.findall(rf"^{re.escape(check)} +(pass|fail|not applicable) ", out.stdout,
                          flags=re.MULTILINE)
        assert len(rows) == len(labels) and "fail" not in rows, check
    assert out.stdout.rstrip().endswith(f"all applicable checks pass for {len(labels)} "
                                        f"response(s) (seed 0, 3 point(s))")


def test_consistency_exits_1_and_names_a_failed_check(monkeypatch, capsys):
    failing = Report((CheckRow("positivity", "fail", 0.5, "Omega_k w_k >= 0"),), 1, 0)
    monkeypatch.setattr(cli_main, "consistency", lambda d, *, points, seed: failing)
    assert main(["consistency", "dimer", "-q", "--response", "Mx", "--points", "1"]) == EXIT_FAILURE
    assert "FAILED: 'Mx': positivity" in capsys.readouterr().out
