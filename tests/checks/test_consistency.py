"""Consistency checks pass on correct derivations of several models and fail, naming the right
check, on derivations broken on purpose."""

from __future__ import annotations

import dataclasses
import doctest

import pytest
import sympy as sp

import symresp as sr
from symresp.checks import CHECK_NAMES, CheckRow, Report, consistency
from symresp.checks._consistency import KK_TOL
from symresp.errors import InputError
from symresp.response import Level

HALF = sp.Rational(1, 2)
J = sp.Symbol("J", real=True)
h = sp.Symbol("h", positive=True)


def _dimer_in_field():
    a, b = sr.spin("a", HALF), sr.spin("b", HALF)
    return sr.Model(J * (a.vec @ b.vec) + h * (a.z + b.z)), a, b


def _hubbard_dimer():
    U, tau = sp.Symbol("U", positive=True), sp.Symbol("tau", positive=True)
    c1u, c1d, c2u, c2d = (sr.fermion(n) for n in ("c1u", "c1d", "c2u", "c2d"))
    n = [sr.dagger(c) * c for c in (c1u, c1d, c2u, c2d)]
    hop = sum((sr.dagger(x) * y + sr.dagger(y) * x for x, y in ((c1u, c2u), (c1d, c2d))), 0 * n[0])
    model = sr.Model(-tau * hop + U * (n[0] * n[1] + n[2] * n[3]), sector={sum(n[1:], n[0]): 2})
    return model, n


def _dimer_xx():
    m, a, b = _dimer_in_field()
    return m.response(a.x + b.x)


def _dimer_zz():
    m, a, b = _dimer_in_field()
    return m.response(a.z + b.z)


def _dimer_cross():
    m, a, b = _dimer_in_field()
    return m.response(a.x, b.y)          # A != B: Onsager reciprocity with eps_A eps_B = -1


def _spin_one_zfs():
    D = sp.Symbol("D", positive=True)
    s = sr.spin("s", 1)
    return sr.Model(D * s.z**2 + h * s.x).response(s.x)


def _two_level():
    Delta = sp.Symbol("Delta", positive=True)
    q = sr.spin("q", HALF)
    return sr.Model(Delta * q.z).response(2 * q.x)


def _hubbard_spin():
    model, n = _hubbard_dimer()
    return model.response((n[0] - n[1] - n[2] + n[3]) / 2)


def _hubbard_charge():
    model, n = _hubbard_dimer()
    return model.response(n[0] + n[1], n[2] + n[3])


def _triangle():
    a, b, c = (sr.spin(x, HALF) for x in "abc")
    return sr.Model(J * (a.vec @ b.vec + b.vec @ c.vec + c.vec @ a.vec)).response(a.x + b.x + c.x)


def _other_convention():
    m, a, b = _dimer_in_field()
    conv = sr.Convention(perturbation="H0 + f B", prescription="advanced", fourier="-i omega t")
    return m.response(a.minus, a.plus, convention=conv)


MODELS = {
    "dimer in field, chi_xx": _dimer_xx,
    "dimer in field, chi_zz": _dimer_zz,
    "dimer in field, chi_{a.x, b.y}": _dimer_cross,
    "spin-1 zero-field splitting": _spin_one_zfs,
    "two-level system": _two_level,
    "Hubbard dimer, staggered spin": _hubbard_spin,
    "Hubbard dimer, charge n1 vs n2": _hubbard_charge,
    "triangle": _triangle,
    "dimer, non-default convention": _other_convention,
}


@pytest.mark.parametrize("name", list(MODELS))
def test_consistency_passes_on_correct_derivations(name):
    report = consistency(MODELS[name]().derivation, points=2)
    assert report.ok, report.table()
    assert [r.name for r in report.rows] == list(CHECK_NAMES)
    applied = {r.name for r in report.rows if r.status == "pass"}
    assert {"zeroth moment", "first moment", "high-temperature limit", "reference: isothermal",
            "reference: partition"} <= applied


def test_applicability_is_decided_per_model():
    rep = consistency(_dimer_zz().derivation, points=1)
    assert rep.row("Kramers-Kronig").status == "not applicable"     # S^z_total is conserved
    assert rep.row("Onsager reciprocity").note == "A = B"
    rep = consistency(_dimer_cross().derivation, points=1)
    assert rep.row("positivity").status == "not applicable"
    assert rep.row("Onsager reciprocity").status == "pass"
    assert rep.row("Onsager reciprocity").note == "eps_A eps_B = -1"
    assert rep.row("Kramers-Kronig").status == "pass"
    assert rep.row("fluctuation-dissipation").status == "pass"


def _flip(d, diagonal: bool):
    key = next(k for k in sorted(d.level_weights) if (k[0] == k[1]) == diagonal)
    weights = dict(d.level_weights)
    weights[key] = -weights[key]
    return dataclasses.replace(d, level_weights=weights, _memo={})


def test_a_sign_flipped_transition_weight_fails_positivity_and_the_sum_rules():
    d = _flip(_spin_one_zfs().derivation, diagonal=False)
    report = consistency(d, points=2)
    assert not report.ok
    for name in ("positivity", "zeroth moment", "fluctuation-dissipation", "reference: frequency"):
        assert report.row(name).status == "fail", report.table()
    # still a sum of real poles decaying as 1/omega: Kramers-Kronig cannot see this slip
    assert report.row("Kramers-Kronig").status == "pass"
    assert "FAILED: zeroth moment" in report.table()
    # the same weight is in the correlation lines: the numeric reference sees the slip there
    assert report.row("reference: correlation").status == "fail"


def test_a_sign_flipped_curie_weight_fails_the_elastic_line_check():
    m, a, b = _dimer_in_field()
    d = _flip(m.response(a.z + b.z).derivation, diagonal=True)
    report = consistency(d, points=2)
    # The flipped W_aa also sits in the elastic correlation line; the canonical sum rule uses
    # the derived lines on both sides and cannot see it.
    assert set(report.failed) == {"Curie term vs elastic line", "high-temperature limit",
                                  "reference: isothermal", "reference: correlation"}, \
        report.table()


def test_a_moved_level_fails_the_first_moment_but_not_the_zeroth():
    d = _two_level().derivation
    lv = d.levels[0]                       # +-Delta/2: doubling one energy changes the gap
    levels = list(d.levels)
    levels[0] = Level(2 * lv.energy, lv.degeneracy, lv.quantum_numbers, lv.parts, lv.implicit)
    broken = dataclasses.replace(d, levels=tuple(levels), _memo={})
    report = consistency(broken, points=2)
    assert report.row("first moment").status == "fail", report.table()
    assert report.row("fluctuation-dissipation").status == "fail"
    assert report.row("reference: partition").status == "fail"


def test_report_table_and_rows():
    report = consistency(_two_level().derivation, points=1, seed=5)
    text = report.table()
    for name in CHECK_NAMES:
        assert name in text
    assert "all applicable checks pass" in text and "seed 5" in text
    assert str(report) == text
    row = report.row("Kramers-Kronig")
    assert isinstance(row, CheckRow) and row.deviation is not None and row.deviation <= KK_TOL
    with pytest.raises(InputError, match="no check named"):
        report.row("nonsense")
    assert isinstance(report, Report) and report.failed == ()


@pytest.mark.parametrize("kwargs", [{"points": 0}, {"points": 1.5}, {"points": True}, {"seed": "s"}])
def test_bad_arguments_raise_input_error(kwargs):
    d = _two_level().derivation
    with pytest.raises(InputError):
        consistency(d, **kwargs)
    with pytest.raises(InputError, match="derivation"):
        consistency(object())


def test_doctests_of_the_public_objects_run():
    # @public sets __module__ = "symresp", which hides these docstrings from --doctest-modules
    for obj in (consistency, Report, CheckRow):
        for test in doctest.DocTestFinder().find(obj, obj.__name__, module=False, globs={}):
            assert doctest.DocTestRunner().run(test).failed == 0, test.name


@pytest.mark.slow   # tens of seconds; CI runs it in the slow tier
def test_consistency_and_hand_check_work_with_parametric_implicit_levels():
    # Spin 1, axial D, tilted field: the levels are roots of a cubic in three parameters.
    D, hz, hx = (sp.Symbol(n, positive=True) for n in ("D", "hz", "hx"))
    s = sr.spin("s", 1)
    r = sr.Model(D * s.z**2 + hz * s.z + hx * s.x).response(s.x)
    assert not r.is_closed_form
    report = r.consistency(points=1)
    assert report.ok, report
    assert r.check(r.static("isothermal")).agrees
