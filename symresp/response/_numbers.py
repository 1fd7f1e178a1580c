r"""Numbers from derived formulas: every way symresp evaluates an expression (layer: response).

Four routes, one module:

* :func:`evaluate_exact` substitutes exact numbers and lets sympy evaluate to ``digits``
  correct digits (adaptive precision: safe next to cancellations; slow). For single values
  asked through the API.
* :func:`evaluate_mp` does the same into an mpmath number at a given binary precision (the
  checks keep working in mpmath).
* :func:`evaluate_precise` and :func:`evaluate_arrays` walk the expression tree node by node,
  in fixed ``digits``-digit mpmath arithmetic or with numpy arrays (broadcast); no code is
  generated or executed, each shared sub-expression is evaluated once. For verification
  points and curves.
* :func:`compile_expression` prints a symresp-built expression to a Python function with
  ``sympy.lambdify`` (never user text), for the many evaluations of the consistency checks.

Implicit levels: ``CRootOf`` of rational polynomials are exact constants, evaluated once to the
working precision; parametric ones (``LevelRoot``) are solved at every point (mpmath
``polyroots``-style root finding, batched companion matrices with numpy).

Imports sympy, numpy, mpmath, :mod:`symresp.errors`, :mod:`symresp.numeric` and
:mod:`symresp.spectrum`. The precise evaluator works in a private mpmath context, so no global
precision setting is touched.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence

import mpmath as mp
import numpy as np
import sympy as sp
from mpmath.ctx_mp import MPContext

from ..errors import InputError
from ..numeric import real_roots
from ..spectrum import BlockWeight, LevelRoot, freeze_roots, real_root
from ..spectrum._roots import ROOT_DIGITS
from ..spectrum._implicit import weight_arrays, weight_mp

__all__ = ["evaluate_exact", "evaluate_mp", "to_mp", "evaluate_precise", "evaluate_arrays",
           "compile_expression", "PRECISE_DIGITS", "PREC_BITS"]

#: Decimal digits of the precise evaluators.
PRECISE_DIGITS = 30
#: Binary precision of the mpmath evaluations (a guard of 10 digits over PRECISE_DIGITS).
PREC_BITS = int((PRECISE_DIGITS + 10) * 3.33)


def _exact_roots(expr: sp.Expr, digits: int) -> sp.Expr:
    """Each ``CRootOf`` replaced by a float of at least ``digits`` digits (it would isolate its
    root again on every evaluation)."""
    roots = expr.atoms(sp.CRootOf)
    if not roots:
        return expr
    if digits <= ROOT_DIGITS:
        return freeze_roots(expr)
    return expr.xreplace({r: r.evalf(digits) for r in roots})


def _substitute(expr: object, point: Mapping[sp.Symbol, sp.Expr], where: str) -> sp.Expr:
    value = expr if isinstance(expr, sp.Basic) else sp.Integer(expr)
    if value.free_symbols:
        value = value.xreplace(dict(point))
    if value.free_symbols:
        names = ", ".join(sorted(map(str, value.free_symbols)))
        raise InputError(f"{where}: no value for {names}")
    return value


def evaluate_exact(expr: sp.Expr, point: Mapping[sp.Symbol, sp.Expr], *,
                   digits: int = PRECISE_DIGITS, where: str = "numeric evaluation") -> complex:
    """Value of ``expr`` at exact numbers ``point``, correct to ``digits`` digits (sympy).

    Examples
    --------
    >>> import sympy as sp
    >>> from symresp.response import evaluate_exact
    >>> from symresp.conventions import beta
    >>> J = sp.Symbol("J", positive=True)
    >>> evaluate_exact(2*beta/(3 + sp.exp(beta*J)), {beta: 1, J: 0})
    (0.5+0j)
    """
    value = _substitute(expr, point, where)
    return complex(sp.N(_exact_roots(value, digits + 20), digits))


def to_mp(value: sp.Expr, where: str = "value", *, prec: int = PREC_BITS) -> mp.mpc:
    """An exact sympy number (possibly with ``CRootOf``) as an mpmath complex number."""
    try:
        out = value._to_mpmath(prec)
    except (AttributeError, TypeError, ValueError) as err:
        raise InputError(f"{where}: {value} could not be evaluated to a number ({err})") from None
    return mp.mpc(out)


def evaluate_mp(expr: sp.Expr, point: Mapping[sp.Symbol, sp.Expr], where: str, *,
                prec: int = PREC_BITS) -> mp.mpc:
    """Value of ``expr`` at exact numbers ``point`` as an mpmath number of ``prec`` bits."""
    return to_mp(_substitute(expr, point, where), where, prec=prec)


def evaluate_precise(expr: sp.Expr, values: Mapping[sp.Symbol, complex | float],
                     *, digits: int = PRECISE_DIGITS) -> complex:
    """Value of ``expr`` at ``values`` (a number per free symbol: Python or exact sympy), in
    ``digits``-digit arithmetic.

    Examples
    --------
    >>> import sympy as sp
    >>> from symresp.response import evaluate_precise
    >>> from symresp.conventions import beta
    >>> J = sp.Symbol("J", positive=True)
    >>> round(evaluate_precise(2*beta/(3 + sp.exp(beta*J)), {beta: 1.0, J: 0.0}).real, 12)
    0.5
    """
    ctx = MPContext()
    ctx.dps = digits
    backend = _mp_backend(ctx, digits)
    env = {k: backend.number(v) if isinstance(v, sp.Basic) else
           ctx.mpmathify(complex(v)) if complex(v).imag else ctx.mpf(float(complex(v).real))
           for k, v in values.items()}
    return complex(_Walker(backend, env).value_of(_as_basic(expr)))


def evaluate_arrays(expr: sp.Expr, values: Mapping[sp.Symbol, object]) -> np.ndarray:
    """Value of ``expr`` with numpy arrays (broadcast) for the free symbols; complex result.

    Overflowing exponentials give ``inf``/``nan`` entries rather than errors.

    Examples
    --------
    >>> import numpy as np
    >>> from symresp.response import evaluate_arrays
    >>> from symresp.conventions import beta
    >>> evaluate_arrays(beta/4, {beta: np.array([1.0, 2.0])}).real.tolist()
    [0.25, 0.5]
    """
    env = {k: np.asarray(v, dtype=complex) for k, v in values.items()}
    with np.errstate(all="ignore"):
        v = _Walker(_np_backend(), env).value_of(_as_basic(expr))
        shape = np.broadcast_shapes(*[a.shape for a in env.values()]) if env else ()
        return np.broadcast_to(np.asarray(v, dtype=complex), shape).copy()


def _as_basic(expr: object) -> sp.Basic:
    if isinstance(expr, sp.Basic):
        return expr
    if isinstance(expr, int) and not isinstance(expr, bool):
        return sp.Integer(expr)
    raise InputError(f"numeric evaluation: expected a sympy expression, got {type(expr).__name__}")


class _Backend:
    """Number system: constants and functions of one arithmetic."""

    __slots__ = ("number", "constant", "functions", "power", "root", "weight")

    def __init__(self, number: Callable, constant: Mapping, functions: Mapping,
                 power: Callable, root: Callable, weight: Callable) -> None:
        self.number = number
        self.constant = constant
        self.functions = functions
        self.power = power
        self.root = root          # root(k, coefficients): k-th smallest real root
        self.weight = weight      # weight(w, evaluate, cache): a semi-closed weight (BlockWeight)


def _mp_backend(ctx: MPContext, digits: int) -> _Backend:
    def number(x: sp.Expr):
        if isinstance(x, sp.Rational):
            return ctx.mpf(int(x.p)) / int(x.q)
        v = sp.N(x, digits + 5)
        re, im = v.as_real_imag()
        return ctx.mpc(ctx.mpf(str(re)), ctx.mpf(str(im))) if im != 0 else ctx.mpf(str(re))

    def power(b, e):
        return ctx.power(b, e)

    functions = {
        sp.exp: ctx.exp, sp.log: ctx.log, sp.sin: ctx.sin, sp.cos: ctx.cos, sp.tan: ctx.tan,
        sp.sinh: ctx.sinh, sp.cosh: ctx.cosh, sp.tanh: ctx.tanh, sp.coth: ctx.coth,
        sp.sech: ctx.sech, sp.csch: ctx.csch, sp.Abs: ctx.fabs, sp.re: ctx.re, sp.im: ctx.im,
        sp.conjugate: ctx.conj,
    }
    def root(k: int, coeffs: list):
        return real_root(k, coeffs, ctx, extra=4 * digits)

    def weight(w, evaluate, cache):
        # Tr(P_a L P_b R) of the exact block matrices, diagonalised at this precision
        v = weight_mp(w, lambda e: mp.mpmathify(evaluate(e)), digits + 5, cache)
        return ctx.mpc(v) if mp.mpmathify(v).imag else ctx.mpf(mp.mpmathify(v).real)

    return _Backend(number, {sp.pi: ctx.pi, sp.E: ctx.e, sp.I: ctx.mpc(0, 1)}, functions, power,
                    root, weight)


def _np_backend() -> _Backend:
    def number(x: sp.Expr):
        if isinstance(x, sp.Rational):
            return complex(int(x.p) / int(x.q))
        return complex(sp.N(x, 20))

    def power(b, e):
        if isinstance(e, complex) and e.imag == 0 and float(e.real).is_integer():
            return np.asarray(b) ** int(e.real)
        return np.power(np.asarray(b, dtype=complex), e)

    functions = {
        sp.exp: np.exp, sp.log: np.log, sp.sin: np.sin, sp.cos: np.cos, sp.tan: np.tan,
        sp.sinh: np.sinh, sp.cosh: np.cosh, sp.tanh: np.tanh, sp.coth: lambda x: 1 / np.tanh(x),
        sp.sech: lambda x: 1 / np.cosh(x), sp.csch: lambda x: 1 / np.sinh(x), sp.Abs: np.abs,
        sp.re: np.real, sp.im: np.imag, sp.conjugate: np.conj,
    }
    def root(k: int, coeffs: list):
        return real_roots(coeffs)[..., k].astype(complex)

    def weight(w, evaluate, cache):
        def real_part(e):       # the block matrices are evaluated as real where they are real
            v = np.asarray(evaluate(e))
            return v.real if np.iscomplexobj(v) and not np.any(v.imag) else v
        return np.asarray(weight_arrays(w, real_part, cache), dtype=complex)

    return _Backend(number, {sp.pi: complex(np.pi), sp.E: complex(np.e), sp.I: 1j}, functions,
                    power, root, weight)


class _Walker:
    """Evaluates one expression tree with a backend; memoises shared sub-trees."""

    __slots__ = ("backend", "env", "memo", "blocks")

    def __init__(self, backend: _Backend, env: Mapping[sp.Symbol, object]) -> None:
        self.backend = backend
        self.env = env
        self.memo: dict[sp.Basic, object] = {}
        self.blocks: dict = {}         # diagonalised semi-closed blocks, shared by their weights

    def value_of(self, node: sp.Basic):
        hit = self.memo.get(node)
        if hit is not None:
            return hit
        v = self._eval(node)
        self.memo[node] = v
        return v

    def _eval(self, node: sp.Basic):
        b = self.backend
        if node.is_Symbol:
            if node not in self.env:
                raise InputError(f"numeric evaluation: no value for the symbol {node}")
            return self.env[node]
        if node in b.constant:
            return b.constant[node]
        if node.is_Rational or node.is_Float or isinstance(node, sp.CRootOf):
            return b.number(node)
        if node.is_Add:
            args = [self.value_of(a) for a in node.args]
            total = args[0]
            for a in args[1:]:
                total = total + a
            return total
        if node.is_Mul:
            args = [self.value_of(a) for a in node.args]
            total = args[0]
            for a in args[1:]:
                total = total * a
            return total
        if node.is_Pow:
            base = self.value_of(node.base)
            if node.exp.is_Integer:
                e = int(node.exp)
                return base ** e if e >= 0 else 1 / (base ** (-e))
            return b.power(base, self.value_of(node.exp))
        if isinstance(node, LevelRoot):
            return b.root(int(node.args[0]), [self.value_of(c) for c in node.args[1:]])
        if isinstance(node, BlockWeight):
            return b.weight(node, self.value_of, self.blocks)
        f = b.functions.get(node.func)
        if f is not None and len(node.args) == 1:
            return f(self.value_of(node.args[0]))
        if node.is_number:
            return b.number(node)
        raise InputError(f"numeric evaluation: cannot evaluate {node.func.__name__} "
                         f"(in {sp.sstr(node)[:60]})")


def _level_root_mp(k, *coeffs):
    """k-th smallest real root of a parametric characteristic factor, in mpmath."""
    return real_root(k, coeffs, mp, extra=2 * mp.mp.prec)


def _level_root_np(k, *coeffs):
    """The same with numpy arrays of coefficients."""
    return real_roots(coeffs)[..., int(k)]


def compile_expression(expr: sp.Expr, args: Sequence[sp.Symbol], backend: str = "mpmath", *,
                       digits: int = PRECISE_DIGITS + 10) -> Callable:
    """A fast numeric function of ``args`` for a symresp-produced expression.

    ``sympy.lambdify`` prints the expression tree to code; it is only ever given expressions
    built by symresp itself (never user text). Implicit roots with rational coefficients become
    ``digits``-digit constants; parametric ones (``LevelRoot``) are solved at each call.

    Examples
    --------
    >>> import sympy as sp
    >>> from symresp.response import compile_expression
    >>> x = sp.Symbol("x")
    >>> float(compile_expression(x**2 + 1, [x])(2))
    5.0
    """
    e = expr if isinstance(expr, sp.Basic) else sp.Integer(expr)
    if e.has(BlockWeight):
        # Semi-closed weights are definitions on exact block matrices, not printable code:
        # the tree walk diagonalises the blocks at each call.
        return _walking_function(e, tuple(args), backend, digits)
    roots = {"LevelRoot": _level_root_mp if backend == "mpmath" else _level_root_np}
    return sp.lambdify(tuple(args), _exact_roots(e, digits), modules=[roots, backend])


def _walking_function(expr: sp.Expr, args: tuple, backend: str, digits: int) -> Callable:
    """``compile_expression`` for expressions with semi-closed weights: a tree walk per call."""
    if backend == "mpmath":
        def f(*vals):
            ctx = MPContext()
            ctx.dps = digits
            env = {k: ctx.mpmathify(v) for k, v in zip(args, vals)}
            return mp.mpmathify(_Walker(_mp_backend(ctx, digits), env).value_of(expr))
        return f

    def g(*vals):
        return evaluate_arrays(expr, dict(zip(args, vals)))
    return g
