"""Every legal parameter name works in the emitted evaluators, in the declared order.

Names that are Python builtins, names of the module's own functions and constants, the
arguments of the functions (``kind``, ``shape``) and ``E`` (a rhombic anisotropy, not
Euler's number) give the same numbers as plain names; PARAMETERS and the docstrings keep the
user's names; the order is the declared one, never alphabetical.
"""

from __future__ import annotations

import inspect

import numpy as np
import pytest
import sympy as sp

import symresp as sr
from symresp.emit import compile_module, numpy_module_source

from ..conftest import assert_close

HALF = sp.Rational(1, 2)
ODD_NAMES = ["float", "type", "isinstance", "E", "chi_omega", "energies", "PARAMETERS", "numpy",
             "kind", "shape", "_x", "_impl_chi_isothermal", "value", "len"]


def _dimer(first: str, second: str, order=None):
    J = sp.Symbol(first, positive=True)
    h = sp.Symbol(second, real=True)
    a, b = sr.spin("a", HALF), sr.spin("b", HALF)
    H = J * (a.vec @ b.vec) - h * (a.z + b.z)
    model = sr.Model(H, parameters=order(J, h) if order else None)
    return model.response(a.x + b.x + a.z / 3)


@pytest.fixture(scope="module")
def reference():
    return _dimer("J", "h", order=lambda J, h: (J, h)).numpy()


@pytest.mark.parametrize("name", ODD_NAMES)
def test_an_odd_name_gives_the_same_numbers_under_its_own_name(name, reference):
    r = _dimer(name, "h", order=lambda J, h: (J, h))
    src = numpy_module_source(r.derivation)
    mod = compile_module(src)
    assert mod.PARAMETERS == (name, "h")
    assert name in mod.__doc__
    T, J, h = 0.7, 1.3, 0.4
    assert_close(mod.chi_isothermal(T, J, h), reference.chi_isothermal(T, J, h), what="chi_T")
    assert_close(mod.chi_isolated(T, J, h), reference.chi_isolated(T, J, h), what="chi_isol")
    grid = np.linspace(-2.0, 2.0, 7)
    assert_close(mod.chi_omega(grid, T, J, h, eta=0.1), reference.chi_omega(grid, T, J, h, eta=0.1),
                 what="chi(omega)")
    assert_close(mod.chi_static(T, J, h, kind="isolated"), reference.chi_isolated(T, J, h),
                 what="chi_static")
    assert_close(mod.jacobian_static(T, J, h), reference.jacobian_static(T, J, h), what="jacobian")
    assert_close(mod.energies(J, h), reference.energies(J, h), what="energies")
    params = list(inspect.signature(mod.chi_isothermal).parameters)
    expected = name if name not in ("kind", "shape") else name + "_"
    assert params == ["T", expected, "h"]
    # keyword calls use the names of the signature
    assert_close(mod.chi_isothermal(T, **{expected: J, "h": h}), reference.chi_isothermal(T, J, h),
                 what="keyword call")


def test_the_declared_order_is_the_order_of_the_evaluators(reference):
    r = _dimer("J", "h", order=lambda J, h: (h, J))
    mod = r.numpy()
    assert mod.PARAMETERS == ("h", "J")
    assert list(inspect.signature(mod.chi_isothermal).parameters) == ["T", "h", "J"]
    assert_close(mod.chi_isothermal(0.7, 0.4, 1.3), reference.chi_isothermal(0.7, 1.3, 0.4))
    assert [p.name for p in r.model.parameters] == ["h", "J"]


def test_a_case_file_keeps_its_declaration_order():
    case = sr.load_case("dimer")
    assert [p.name for p in case.parameters] == ["J", "h"]
    from symresp.cases import parse_case
    c = parse_case('[model]\nhamiltonian = "zeta*a.z + alpha*a.x"\n[parameters]\nzeta = 1\n'
                   'alpha = 2\n[sites]\na = "spin 1/2"\n[[response]]\nA = "a.z"\n')
    assert [p.name for p in c.system.parameters] == ["zeta", "alpha"]
    from symresp.cases import derive_case
    (_, d), = derive_case(c)
    from symresp.emit import numpy_functions
    assert numpy_functions(d).PARAMETERS == ("zeta", "alpha")


@pytest.mark.parametrize("order, match", [
    (lambda J, h: (J,), "does not list h"),
    (lambda J, h: (J, h, J), "listed twice"),
    (lambda J, h: (J, h, sp.Symbol("Q")), "neither in H"),
    (lambda J, h: "J, h", "sequence"),
    (lambda J, h: (J, 3), "not a sympy Symbol"),
])
def test_a_bad_parameter_order_is_refused(order, match):
    with pytest.raises(sr.InputError, match=match):
        _dimer("J", "h", order=order)


def test_e_is_a_parameter_and_not_euler_number():
    E = sp.Symbol("E", real=True)
    s = sr.spin("s", 1)
    r = sr.Model(E * (s.x**2 - s.y**2)).response(s.z)
    assert E in r.static("isothermal").free_symbols
    assert not r.static("isothermal").has(sp.E)
    value = r.numpy().chi_isothermal(0.5, 0.3)
    ref = r.reference(params={"E": 0.3}, T=0.5).isothermal
    assert_close(value, ref.real, what="chi with E = 0.3")
