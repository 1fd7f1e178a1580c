"""The in-place writer of stage-B array kernels (symresp/emit/_inplace.py).

Random straight-line programs over a temperature grid ``_T``, real and complex stage-P numbers
and earlier lines (some used several times, some returned) are written with in-place updates
and run; they must give what the plain numpy printing gives, and leave every input array and
every returned or still-needed value untouched.
"""

from __future__ import annotations

import math
import os

import numpy as np
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp.emit import compile_module, numpy_module_source
from symresp.emit._functions import Boltzmann, BoltzmannT
from symresp.emit._inplace import inplace_body
from symresp.emit._printers import ArrayPrinter
from symresp.emit._runtime import runtime_source

T = sp.Symbol("_T", positive=True)
P_REAL = sp.Symbol("_p", real=True)
P_POS = sp.Symbol("_q", positive=True)
P_CPLX = sp.Symbol("_C0", real=False)          # complex at run time
P_WEIGHT = sp.Symbol("_S0", real=False)        # real at run time, passed as a real input
OFFSETS = tuple(sp.Symbol(f"_c{a}", nonnegative=True) for a in range(6))
INPUTS = (T, P_REAL, P_POS, P_CPLX, P_WEIGHT) + OFFSETS


@st.composite
def programs(draw):
    """Lines ``_v{k} = f(earlier values)`` with +, -, *, / (by positive values) and squares."""
    values = list(INPUTS)
    lines = []
    beta = sp.Symbol("_beta", positive=True)
    with_beta = draw(st.booleans())
    if with_beta:                         # a kernel that needs beta besides its factors
        lines.append((beta, 1 / T))
    # Boltzmann factors first, as in a kernel (stacked into one array from STACK_MIN of them
    # on, when the sums over them are long enough).
    xs = []
    for a in range(draw(st.integers(0, len(OFFSETS)))):
        x = sp.Symbol(f"_x{a}", positive=True)
        lines.append((x, Boltzmann(beta, OFFSETS[a]) if with_beta else BoltzmannT(T, OFFSETS[a])))
        xs.append(x)
    values += xs
    for k in range(draw(st.integers(0, 3)) if len(xs) >= 2 else 0):
        # Partition-like sums over the factors, with numbers and stage-P coefficients.
        coefs = [draw(st.sampled_from([sp.Integer(1), sp.Integer(3), P_REAL, P_WEIGHT, P_CPLX]))
                 for _ in xs]
        terms = [c * x for c, x in zip(coefs, xs)]
        lines.append((sp.Symbol(f"_Zs{k}"), sp.Add(*terms)))
        values.append(lines[-1][0])
        if draw(st.booleans()):           # the same sum with a term that is not linear
            lines.append((sp.Symbol(f"_Zm{k}"), sp.Add(*terms) + T * xs[0] ** 2))
            values.append(lines[-1][0])
    if xs and draw(st.booleans()):
        # Scaled factors -beta E'_a x_a (a Jacobian's) and a sum of them.
        if not with_beta:
            lines.insert(0, (beta, 1 / T))
        ys = []
        for a, x in enumerate(xs):
            y = sp.Symbol(f"_y{a}", real=True)
            lines.append((y, -draw(st.sampled_from([P_REAL, P_POS, sp.Integer(2)])) * beta * x))
            ys.append(y)
        values += ys
        lines.append((sp.Symbol("_Ys"), sp.Add(*[draw(st.sampled_from([sp.Integer(1), P_WEIGHT]))
                                                 * y for y in ys])))
        values.append(lines[-1][0])
    for k in range(draw(st.integers(1, 7))):
        op = draw(st.sampled_from(["add", "sub", "mul", "div", "sq", "lin", "neg"]))
        a, b, c = (draw(st.sampled_from(values)) for _ in range(3))
        positive = [v for v in values if v.is_positive]
        n = sp.Integer(draw(st.integers(-3, 3)) or 2)
        expr = {"add": a + b + c, "sub": a - n * b, "mul": n * a * b * c,
                "div": a * b / draw(st.sampled_from(positive)), "sq": a ** 2 + b,
                "lin": n * a + P_POS * b + c * T, "neg": -a - abs(n) * b * T - c}[op]
        if expr == 0 or expr.is_number:
            expr = expr + T
        sym = sp.Symbol(f"_v{k}", positive=True) if expr.is_positive else (
            sp.Symbol(f"_v{k}", real=True) if expr.is_real else sp.Symbol(f"_v{k}"))
        lines.append((sym, expr))
        values.append(sym)
    returned = [lines[-1][0]] + draw(st.lists(st.sampled_from([s for s, _ in lines]), max_size=2))
    return lines, returned


def _run(body: list[str], returned, env: dict) -> tuple:
    src = f"def _kernel({', '.join(s.name for s in INPUTS)}):\n" + "\n".join(body) + \
        f"\n    return ({', '.join(s.name for s in returned)},)\n"
    namespace: dict = {"numpy": np, "math": math}
    exec(compile(runtime_source(), "<runtime>", "exec"), namespace)  # noqa: S102 - the emitted helpers
    exec(compile(src, "<kernel>", "exec"), namespace)  # noqa: S102 - generated test code
    return namespace["_kernel"](*(env[s.name] for s in INPUTS))


@settings(max_examples=int(os.environ.get("SYMRESP_INPLACE_EXAMPLES", "60")), deadline=None)
@given(prog=programs(), seed=st.integers(0, 2**16))
def test_inplace_kernel_equals_plain_evaluation_and_keeps_inputs(prog, seed):
    lines, returned = prog
    rng = np.random.default_rng(seed)
    env = {"_T": rng.uniform(0.5, 2.0, 9), "_p": float(rng.normal()), "_q": float(rng.uniform(0.5, 2)),
           "_C0": complex(rng.normal(), rng.normal()), "_S0": float(rng.normal()),
           **{c.name: float(v) for c, v in zip(OFFSETS, rng.uniform(0, 3, len(OFFSETS)))}}
    saved = env["_T"].copy()
    printer = ArrayPrinter()
    plain = [f"    {s.name} = {printer.doprint(e)}" for s, e in lines]
    expected = _run(plain, returned, env)
    got = _run(inplace_body(lines, returned, printer, {"_S0"}), returned, env)
    assert np.array_equal(env["_T"], saved), "the temperature grid was modified"
    for g, e in zip(got, expected):
        np.testing.assert_allclose(g, e, rtol=1e-12, atol=1e-12)


def test_inplace_kernel_reuses_its_temporaries():
    # Z = 3 x0 + x1 and chi = N / (T Z): one array for Z, N divided in place.
    x0, x1 = sp.Symbol("_x0", positive=True), sp.Symbol("_x1", positive=True)
    Z, N, chi = sp.Symbol("_Zr", positive=True), sp.Symbol("_N"), sp.Symbol("_chi")
    c0, c1 = sp.Symbol("_c0", nonnegative=True), sp.Symbol("_c1", nonnegative=True)
    lines = [(x0, BoltzmannT(T, c0)), (x1, BoltzmannT(T, c1)), (Z, 3 * x0 + x1),
             (N, P_CPLX * x0), (chi, N / (T * Z))]
    body = inplace_body(lines, [chi], ArrayPrinter())
    assert "    _Zr += _x1" in body and "    _Zr *= _T" in body and "    _N /= _Zr" in body
    assert not any("_C0 *=" in line or "_x0 *=" in line for line in body)


def test_emitted_functions_leave_their_arguments_untouched():
    J, h = sp.Symbol("J", real=True), sp.Symbol("h", real=True)
    a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    r = sr.Model(J * (a.vec @ b.vec) + h * (a.z + b.z), name="dimer").response(a.x + b.x)
    mod = compile_module(numpy_module_source(r.derivation))
    T = np.linspace(0.1, 3.0, 50)
    Js, hs = np.linspace(-1, 1, 50), np.full(50, 0.3)
    copies = [T.copy(), Js.copy(), hs.copy()]
    for f in (mod.chi_isothermal, mod.chi_isolated, mod.jacobian_static):
        f(T, 1.0, 0.3)
        f(T, Js, hs)
        f(T, Js, 0.3)
    for arr, copy in zip((T, Js, hs), copies):
        assert np.array_equal(arr, copy)


def test_stacked_levels_agree_on_every_path():
    # Four levels (dimer in a field): Boltzmann factors as one array, sums as products with
    # it. Grids, parameter arrays and single numbers must give the same numbers.
    J, h = sp.Symbol("J", real=True), sp.Symbol("h", real=True)
    a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    r = sr.Model(J * (a.vec @ b.vec) + h * (a.z + b.z), name="dimer").response(a.z + b.z)
    src = numpy_module_source(r.derivation)
    assert "_bexpt_m(" in src and "_lincomb_m(_X" in src
    mod = compile_module(src)
    T = np.linspace(0.1, 3.0, 12).reshape(3, 4)
    Js, hs = np.linspace(-1, 1, 12).reshape(3, 4), np.linspace(0, 0.5, 12).reshape(3, 4)
    pointwise = np.vectorize(lambda t, j, f: mod.chi_isothermal(float(t), float(j), float(f)))
    np.testing.assert_allclose(mod.chi_isothermal(T, Js, hs), pointwise(T, Js, hs), rtol=1e-13)
    np.testing.assert_allclose(mod.chi_isothermal(T, 0.7, 0.2), pointwise(T, 0.7, 0.2), rtol=1e-13)
    jac = mod.jacobian_static(T, Js, hs)
    scale = np.abs(jac).max()       # the sums are taken in another order: rounding differs
    for idx in np.ndindex(T.shape):
        np.testing.assert_allclose(jac[idx], mod.jacobian_static(T[idx], Js[idx], hs[idx]),
                                   rtol=1e-10, atol=1e-13 * scale)


def test_grid_jacobian_equals_the_scalar_path_across_the_series_threshold():
    # chi_xx of a dimer in a field has Van Vleck pairs; y = |w|/T crosses the series
    # threshold (1e-2) on this grid, so both branches of the grid helpers run, and the scalar
    # path (math, term by term) is an independent implementation.
    J, h = sp.Symbol("J", real=True), sp.Symbol("h", real=True)
    a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    r = sr.Model(J * (a.vec @ b.vec) + h * (a.z + b.z), name="dimer").response(a.x + b.x)
    mod = compile_module(numpy_module_source(r.derivation))
    T = np.geomspace(1e-2, 1e4, 60)
    for kind in ("isothermal", "isolated"):
        for params in ((1.0, 0.3), (-0.7, 1e-3), (0.4, -2.0)):
            grid = mod.jacobian_static(T, *params, kind=kind)
            pointwise = np.array([mod.jacobian_static(float(t), *params, kind=kind) for t in T])
            np.testing.assert_allclose(grid, pointwise, rtol=1e-12, atol=1e-14 * np.abs(pointwise).max())
        # Parameters along the grid too: spacings are arrays there (the general helper path).
        Js, hs = np.linspace(-1.0, 1.0, T.size), np.linspace(-0.5, 0.7, T.size)
        grid = mod.jacobian_static(T, Js, hs, kind=kind)
        pointwise = np.array([mod.jacobian_static(float(t), float(j), float(f), kind=kind)
                              for t, j, f in zip(T, Js, hs)])
        np.testing.assert_allclose(grid, pointwise, rtol=1e-12, atol=1e-14 * np.abs(pointwise).max())
