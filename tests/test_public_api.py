"""The public surface is pinned: any change to it is deliberate."""

from __future__ import annotations

import doctest
import importlib
import inspect
import pkgutil

import pytest
import sympy as sp

import symresp as sr
from symresp._public import REGISTERED

# The facade loads its modules on first use; load them all so that REGISTERED is complete.
for _info in pkgutil.walk_packages(sr.__path__, "symresp."):
    if not _info.name.endswith("__main__"):
        importlib.import_module(_info.name)

PUBLIC = {
    "spin", "nlevel", "fermion", "spinful_fermion", "boson", "dagger", "commutator",
    "anticommutator", "Operator", "Model", "Response", "Budget", "load_case",
    "Verdict", "Report", "CheckRow",
    "beta", "omega", "t", "eta", "nu", "Convention",
    "SymrespError", "InputError", "NotHermitianError", "NotConservedError", "BudgetExceeded",
    "ClosedFormError",
    "zeeman", "magnetic_moment",
}


def test_public_names_are_pinned():
    missing, extra = PUBLIC - set(sr.__all__), set(sr.__all__) - PUBLIC
    assert not missing and not extra, f"missing: {missing}; unpinned: {extra}"
    assert all(hasattr(sr, name) for name in PUBLIC)


def test_sympy_names_are_not_re_exported():
    # exact numbers and the imaginary unit are sympy's: sp.Rational, sp.I
    for name in ("I", "Rational", "Symbol", "sympify"):
        assert not hasattr(sr, name), name


def test_minimal_api_of_the_design_runs_as_written():
    J = sp.Symbol("J", positive=True)
    a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    H = J * (a.x * b.x + a.y * b.y + a.z * b.z)
    model = sr.Model(H)
    r = model.response(a.z + b.z, a.z + b.z)
    assert r.static("isothermal").has(sr.beta)
    assert r.static("isolated") == 0
    assert isinstance(r.frequency(), sp.Expr)
    assert isinstance(r.time(), sp.Expr)
    assert r.poles() == []
    assert model.matrix(a.x).shape == (4, 4)
    assert sorted(lv.degeneracy for lv in model.levels()) == [1, 3]
    c_up, c_dn = sr.fermion("c_up"), sr.fermion("c_dn")
    x = sr.boson("x", 12)
    n_up = sr.dagger(c_up) * c_up
    m = sr.Model(n_up + sr.dagger(c_dn) * c_dn + 0 * x, sector={n_up + sr.dagger(c_dn) * c_dn: 2})
    assert m.dimension == 13


def test_every_registered_public_object_has_a_doctest():
    finder = doctest.DocTestFinder()
    missing = []
    for obj in REGISTERED:
        tests = [t for t in finder.find(obj) if t.examples]
        if not tests:
            missing.append(getattr(obj, "__name__", repr(obj)))
    assert not missing, f"public objects without a doctest example: {missing}"


def test_public_classes_show_the_public_module_path():
    for obj in REGISTERED:
        if inspect.isclass(obj):
            assert obj.__module__ == "symresp", obj


def _public_doctests():
    finder = doctest.DocTestFinder(exclude_empty=True)
    seen = set()
    for obj in REGISTERED:
        for test in finder.find(obj, getattr(obj, "__name__", "obj"), module=False, globs={}):
            if test.examples and test.name not in seen:
                seen.add(test.name)
                yield test


@pytest.mark.parametrize("test", list(_public_doctests()), ids=lambda t: t.name)
def test_doctests_of_public_objects_and_their_methods_pass(test):
    # pytest's module collection skips objects whose __module__ was set to "symresp" (and their
    # methods), so the examples of the public surface are run here explicitly.
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    out: list[str] = []
    result = runner.run(test, out=out.append)
    assert result.failed == 0, "".join(out)
