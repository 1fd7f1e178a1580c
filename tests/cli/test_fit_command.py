"""The ``fit`` and ``resonance`` commands end to end, and ``--set NAME=VALUE`` on every command.

Run in-process through ``symresp.cli.main`` (the child-process route of every command is
covered by test_command_line.py). The demo data are the numerical reference plus known noise
(tests/cases/synthetic.py).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from symresp.cases import find_case, fit_case, read_case, read_data
from symresp.cli import main
from symresp.cli._plot import HAVE_MATPLOTLIB, fit_figure
from symresp.emit import compile_module
from tests.cases import synthetic

#: A fitted value counts as recovered within this many standard errors.
N_SIGMA = 3.0
DEMO = str(synthetic.DEMO_FILE)


def run(capsys, *args: str) -> tuple[int, str, str]:
    code = main([*args, "--quiet"])
    out = capsys.readouterr()
    return code, out.out, out.err


def test_fit_json_has_the_fixed_shape_and_recovers_the_demo(capsys, tmp_path):
    picture = tmp_path / "fit.png"
    code, out, err = run(capsys, "fit", "dinuclear", DEMO, "--vary", "J,g", "--json",
                         "--picture", str(picture))
    assert code == 0, err
    doc = json.loads(out)
    assert set(doc["parameters"]) == {"J", "g"}
    for name, entry in doc["parameters"].items():
        assert set(entry) == {"value", "error"}
        assert abs(entry["value"] - synthetic.VENNADREL[name]) <= N_SIGMA * entry["error"]
    assert doc["correlation"]["names"] == ["J", "g"]
    assert doc["dof"] == 58 and 0.5 < doc["chi2_per_dof"] < 1.5
    assert doc["fixed"]["rho"] == pytest.approx(0.015)
    if HAVE_MATPLOTLIB:
        assert doc["picture"] == str(picture)
        assert picture.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and picture.stat().st_size > 10_000


@pytest.mark.skipif(not HAVE_MATPLOTLIB, reason="the picture needs matplotlib (plot extra)")
def test_fit_picture_never_replaces_a_file_without_force_nor_an_input(capsys, tmp_path):
    picture = tmp_path / "fit.png"
    picture.write_bytes(b"earlier picture")
    args = ("fit", "dinuclear", DEMO, "--vary", "J,g", "--json", "--picture", str(picture))
    code, _, err = run(capsys, *args)
    assert code == 2 and "--picture" in err and "--force" in err
    assert picture.read_bytes() == b"earlier picture"
    code, _, err = run(capsys, *args, "--force")
    assert code == 0, err
    assert picture.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    data = tmp_path / "data.png"          # a data table whose name looks like a picture
    data.write_bytes(open(DEMO, "rb").read())
    code, _, err = run(capsys, "fit", "dinuclear", str(data), "--vary", "J,g", "--picture",
                       str(data), "--force")
    assert code == 2 and "input of this command" in err
    assert data.read_bytes() == open(DEMO, "rb").read()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["data.png", "fit.png"]  # no temp file


def test_fit_text_and_set_start_values(capsys, tmp_path):
    code, out, _ = run(capsys, "fit", "dinuclear", DEMO, "--vary", "J,g", "--set", "J=90",
                       "--set", "g=2.2", "--no-picture")
    assert code == 0
    assert "chi^2/dof" in out and "correlation" in out and "picture" not in out
    line = next(ln for ln in out.splitlines() if ln.strip().startswith("J "))
    assert abs(float(line.split()[1]) - synthetic.VENNADREL["J"]) < 1.0
    # --set fixes a parameter that is not varied: rho = 0 leaves the impurity tail unexplained
    code, out, _ = run(capsys, "fit", "dinuclear", DEMO, "--vary", "J,g", "--set", "rho=0",
                       "--json", "--no-picture")
    assert json.loads(out)["chi2_per_dof"] > 20


@pytest.mark.skipif(not HAVE_MATPLOTLIB, reason="needs matplotlib")
def test_the_picture_shows_the_data_the_fit_and_the_residuals():
    data = read_data(synthetic.DEMO_FILE)
    result = fit_case(read_case(find_case("dinuclear")), data, ["J", "g"])
    fig = fit_figure(result)
    top, bottom = fig.axes[:2]
    x, y = top.lines[0].get_data()
    np.testing.assert_array_equal(x, data.T)
    np.testing.assert_array_equal(y, data.values)
    cx, cy = top.lines[1].get_data()              # the model curve over the data range
    assert cx.min() == pytest.approx(data.T.min()) and cx.max() == pytest.approx(data.T.max())
    np.testing.assert_allclose(np.interp(data.T, cx, cy), result.fitted, rtol=2e-2, atol=1e-3)
    rx, ry = bottom.lines[0].get_data()
    np.testing.assert_allclose(ry, (data.values - result.fitted) / data.sigma)


@pytest.mark.parametrize("args, words", [
    (("--vary", "K"), "declares no parameter 'K'"),
    (("--vary", "J", "--set", "J"), "NAME=VALUE"),
    (("--vary", "J", "--set", "g=-1"), "positive"),
])
def test_fit_bad_input_exits_2_with_the_fix(capsys, args, words):
    code, _, err = run(capsys, "fit", "dinuclear", DEMO, *args, "--no-picture")
    assert code == 2 and words in err


def test_resonance_command(capsys):
    code, out, _ = run(capsys, "resonance", "dinuclear", "--set", "J=0.3", "--json")
    assert code == 0
    lines = json.loads(out)["lines"]
    assert lines and all(ln["method"] == "exact" for ln in lines)
    # the triplet of the dimer resonates at h nu/(g mu_B) with g = 2 (common practice)
    assert lines[0]["field_T"] == pytest.approx(0.33580, rel=1e-4)


# ------------------------------------------------------------------------------ --set everywhere
def test_set_on_derive_verify_check_consistency_plot_and_emit(capsys, tmp_path):
    code, out, _ = run(capsys, "derive", "dimer", "--set", "h=0")
    assert code == 0 and "h real = 0" in out
    code, out, _ = run(capsys, "verify", "dimer", "--set", "h=0", "--points", "1")
    assert code == 0
    # the zero-field Bleaney-Bowers formula agrees only once h is set to 0
    formula = "2*beta/(3 + exp(J*beta))"
    assert run(capsys, "check", "dimer", "-r", "M", "--formula", formula)[0] == 1
    assert run(capsys, "check", "dimer", "-r", "M", "--set", "h=0", "--formula", formula)[0] == 0
    code, _, _ = run(capsys, "consistency", "two_level", "--set", "Delta=1.5", "--points", "1")
    assert code == 0
    if HAVE_MATPLOTLIB:
        assert run(capsys, "plot", "dimer", "-r", "M", "--set", "h=0", "--out",
                   str(tmp_path / "plots"))[0] == 0
    target = tmp_path / "chi.py"
    assert run(capsys, "emit", "dimer", "-r", "M", "--set", "h=0", "--out", str(target))[0] == 0
    assert compile_module(target.read_text()).PARAMETERS == ("J",)
    code, _, err = run(capsys, "derive", "dimer", "--set", "hh=0")
    assert code == 2 and "did you mean 'h'" in err
    code, _, err = run(capsys, "list", "--set", "J=1")
    assert code == 2
