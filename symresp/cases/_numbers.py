r"""Numbers from derived formulas: a tree-walking evaluator (layer: cases).

Owns :func:`evaluate_precise` (mpmath, for verification) and :func:`evaluate_arrays` (numpy,
for curves). Imports sympy, numpy, mpmath, :mod:`symresp.errors`, :mod:`symresp.numeric` and
:mod:`symresp.spectrum`.

Derived expressions are walked node by node; no code is generated or executed. Each distinct
sub-expression is evaluated once per call (sympy shares equal sub-trees). Implicit levels
(``CRootOf`` of polynomials with rational coefficients) are exact constants and are evaluated
with sympy to the working precision; parametric ones (``LevelRoot``) are found at every point
(mpmath ``polyroots`` in the precise evaluator, batched companion matrices with numpy).

The precise evaluator works in a private mpmath context, so no global precision setting is
touched.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping

import numpy as np
import sympy as sp
from mpmath.ctx_mp import MPContext

from ..errors import InputError
from ..numeric import real_roots
from ..spectrum import LevelRoot, real_root

__all__ = ["evaluate_precise", "evaluate_arrays", "PRECISE_DIGITS"]

#: Decimal digits of the precise evaluator.
PRECISE_DIGITS = 30


def evaluate_precise(expr: sp.Expr, values: Mapping[sp.Symbol, complex | float],
                     *, digits: int = PRECISE_DIGITS) -> complex:
    """Value of ``expr`` at ``values`` (a number per free symbol), in ``digits``-digit arithmetic.

    Examples
    --------
    >>> import sympy as sp
    >>> from symresp.cases import evaluate_precise
    >>> from symresp.conventions import beta
    >>> J = sp.Symbol("J", positive=True)
    >>> round(evaluate_precise(2*beta/(3 + sp.exp(beta*J)), {beta: 1.0, J: 0.0}).real, 12)
    0.5
    """
    ctx = MPContext()
    ctx.dps = digits
    env = {k: ctx.mpmathify(complex(v)) if complex(v).imag else ctx.mpf(float(complex(v).real))
           for k, v in values.items()}
    walker = _Walker(_mp_backend(ctx, digits), env)
    return complex(walker.value_of(_as_basic(expr)))


def evaluate_arrays(expr: sp.Expr, values: Mapping[sp.Symbol, object]) -> np.ndarray:
    """Value of ``expr`` with numpy arrays (broadcast) for the free symbols; complex result.

    Overflowing exponentials give ``inf``/``nan`` entries rather than errors.

    Examples
    --------
    >>> import numpy as np
    >>> from symresp.cases import evaluate_arrays
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

    __slots__ = ("number", "constant", "functions", "power", "root")

    def __init__(self, number: Callable, constant: Mapping, functions: Mapping,
                 power: Callable, root: Callable) -> None:
        self.number = number
        self.constant = constant
        self.functions = functions
        self.power = power
        self.root = root          # root(k, coefficients): k-th smallest real root


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

    return _Backend(number, {sp.pi: ctx.pi, sp.E: ctx.e, sp.I: ctx.mpc(0, 1)}, functions, power,
                    root)


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

    return _Backend(number, {sp.pi: complex(np.pi), sp.E: complex(np.e), sp.I: 1j}, functions,
                    power, root)


class _Walker:
    """Evaluates one expression tree with a backend; memoises shared sub-trees."""

    __slots__ = ("backend", "env", "memo")

    def __init__(self, backend: _Backend, env: Mapping[sp.Symbol, object]) -> None:
        self.backend = backend
        self.env = env
        self.memo: dict[sp.Basic, object] = {}

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
        f = b.functions.get(node.func)
        if f is not None and len(node.args) == 1:
            return f(self.value_of(node.args[0]))
        if node.is_number:
            return b.number(node)
        raise InputError(f"numeric evaluation: cannot evaluate {node.func.__name__} "
                         f"(in {sp.sstr(node)[:60]})")
