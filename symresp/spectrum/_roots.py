r"""Implicit levels: the k-th real root of a polynomial whose coefficients depend on parameters
(layer: spectrum).

Owns :class:`LevelRoot`. Imports sympy, mpmath and numpy.

A block mixing several parameters may have an irreducible factor of degree >= 3 in its
characteristic polynomial. Its roots have no closed form, so the level is kept exactly as
``LevelRoot(k, c_n, ..., c_0)``: the k-th smallest real root (k = 0, 1, ...) of
:math:`c_n E^n + \dots + c_0`. The roots of a Hermitian block are real. With rational
coefficients (all parameters given exact values) it becomes sympy's exact ``CRootOf``; with
numbers it evaluates numerically to any precision (the semi-closed form).
"""

from __future__ import annotations

import mpmath
import numpy
import sympy as sp

__all__ = ["LevelRoot", "real_root", "real_roots", "root_value", "root_float", "freeze_roots",
           "atoms_outside_roots", "replace_outside_roots", "number_value", "ROOT_DIGITS"]


def real_roots(coeffs, ctx=mpmath.mp, extra: int = 200) -> tuple:
    """All real roots, ascending, of ``coeffs`` (highest power first) in the mpmath context
    ``ctx``; imaginary parts of the coefficients and roots (rounding) are dropped.

    The roots of a Hermitian block's characteristic factor are real and, for an irreducible
    factor, simple: double-precision guesses (eigenvalues of the companion matrix) are polished
    by Newton's method at the context's precision, and checked; where that fails (roots that
    nearly coincide at this point) mpmath's ``polyroots`` takes over. Cached per coefficients
    and precision (a formula holds each root many times).
    """
    if not hasattr(ctx, "prec"):          # the mpmath module itself: its global context
        ctx = mpmath.mp
    cs = tuple(ctx.re(ctx.mpmathify(c)) for c in coeffs)
    key = (cs, ctx.prec)
    hit = _ALL_ROOTS.get(key)
    if hit is not None:
        return hit
    out = _newton_roots(cs, ctx)
    if out is None:
        roots = ctx.polyroots(list(cs), maxsteps=200, extraprec=extra)
        out = tuple(sorted(ctx.re(r) for r in roots))
    if len(_ALL_ROOTS) > 4096:
        _ALL_ROOTS.clear()
    _ALL_ROOTS[key] = out
    return out


def _newton_roots(cs: tuple, ctx) -> tuple | None:
    n = len(cs) - 1
    lead = cs[0]
    if n < 1 or lead == 0:
        return None
    try:
        guesses = numpy.roots([float(c / lead) for c in cs])
    except (OverflowError, ValueError, numpy.linalg.LinAlgError):
        return None
    if not numpy.all(numpy.isfinite(guesses)):
        return None
    dcs = [c * (n - i) for i, c in enumerate(cs[:-1])]
    tol = ctx.mpf(2) ** (8 - ctx.prec)
    out = []
    for g in sorted(guesses.real):
        x = ctx.mpf(float(g))
        for _ in range(100):
            p = ctx.mpf(0)
            for c in cs:
                p = p * x + c
            dp = ctx.mpf(0)
            for c in dcs:
                dp = dp * x + c
            if dp == 0:
                return None
            step = p / dp
            x -= step
            if abs(step) <= tol * max(1, abs(x)):
                break
        else:
            return None
        out.append(x)
    out.sort()
    scale = max(1, max(abs(x) for x in out))
    if any(b - a <= ctx.mpf(2) ** (16 - ctx.prec) * scale for a, b in zip(out, out[1:])):
        return None                    # two guesses met one root: let polyroots decide
    return tuple(out)


def real_root(k: int, coeffs, ctx=mpmath.mp, extra: int = 200):
    """k-th smallest real root (k = 0, 1, ...) of ``coeffs`` (highest power first) in the mpmath
    context ``ctx`` (see :func:`real_roots`)."""
    return real_roots(coeffs, ctx, extra)[int(k)]


# All real roots of numeric polynomials by precision (immutable keys; pure function values).
_ALL_ROOTS: dict = {}


#: Digits of the stored value of every exact algebraic root (``CRootOf``): the zero tests of
#: weights work at 60 digits, the evaluators' constants at 30.
ROOT_DIGITS = 70


def root_value(x: sp.Expr):
    """The value of an exact algebraic constant (``CRootOf``, or any exact number the caller
    meets in its place) at ROOT_DIGITS digits, as an mpmath number (an ``mpc`` for a complex
    root).

    The first root asked for of a polynomial brings all its roots (:func:`_all_roots`), so a
    large derivation solves each polynomial once, however many levels, weights and constants
    hold its roots (sympy isolates and refines a ``CRootOf`` again on every evaluation, and
    refining a complex root to 70 digits takes it seconds).
    """
    if not isinstance(x, sp.CRootOf):
        with mpmath.workdps(ROOT_DIGITS):
            return mpmath.mpmathify(sp.N(x, ROOT_DIGITS))
    key = (x.poly, int(x.index))
    hit = _ROOT_VALUES.get(key)
    if hit is None:
        if len(_ROOT_VALUES) > 1 << 14:
            _ROOT_VALUES.clear()
        values = _all_roots(x.poly)
        if values is not None:
            for k, v in enumerate(values):
                _ROOT_VALUES[(x.poly, k)] = v
            hit = values[key[1]]
        else:                           # not resolved: sympy's refinement of this root
            with mpmath.workdps(ROOT_DIGITS):
                hit = mpmath.mpmathify(sp.N(x, ROOT_DIGITS))
            _ROOT_VALUES[key] = hit
    return hit


def _all_roots(poly) -> list | None:
    """The roots of an irreducible integer polynomial in the index order of ``CRootOf``, as
    ROOT_DIGITS-digit mpmath numbers, or None where they are not resolved.

    The real roots come first, ascending: when the exact count of real roots (Sturm sequence)
    equals the degree, :func:`real_roots` finds them all. Otherwise :func:`mpmath.polyroots`
    finds every root at raised precision; the real ones are those the exact count says, and each
    complex root is matched to sympy's own isolation of it at 15 digits (cheap), which fixes
    sympy's order of the complex roots. Roots of an irreducible polynomial are simple, so two
    computed roots closer than the matching precision mean "not resolved".
    """
    degree = poly.degree()
    n_real = poly.count_roots()
    coeffs = [mpmath.mpf(int(c.p)) / int(c.q) for c in poly.all_coeffs()]
    extra = 4 * ROOT_DIGITS + 10 * degree
    if n_real == degree:
        with mpmath.workdps(ROOT_DIGITS + 10):
            found = real_roots(coeffs, extra=extra)
        if len(found) != degree:
            return None
        with mpmath.workdps(ROOT_DIGITS):
            return [+v for v in found]
    with mpmath.workdps(ROOT_DIGITS + 20):
        try:
            found = mpmath.polyroots(coeffs, maxsteps=200, extraprec=extra)
        except mpmath.NoConvergence:
            return None
        found = sorted(found, key=lambda z: abs(mpmath.im(z)))
        reals = sorted(mpmath.re(z) for z in found[:n_real])
        others = found[n_real:]
        size = max(abs(z) for z in found) + 1
        if any(abs(mpmath.im(z)) > size * mpmath.mpf(10) ** (-ROOT_DIGITS) for z in found[:n_real]):
            return None
        out = list(reals)
        for k in range(n_real, degree):
            guess = complex(sp.CRootOf(poly, k).evalf(15))
            near = sorted(others, key=lambda z: abs(z - guess))
            if len(near) > 1 and abs(near[1] - guess) < 1e-6 * (1 + abs(guess)):
                return None
            if abs(near[0] - guess) > 1e-10 * (1 + abs(guess)):
                return None
            out.append(near[0])
    with mpmath.workdps(ROOT_DIGITS):
        return [+v for v in out]


def root_float(x: sp.CRootOf) -> sp.Expr:
    """:func:`root_value` as a sympy Float (or Float plus i times Float) of ROOT_DIGITS digits."""
    v = root_value(x)
    if isinstance(v, mpmath.mpc):
        return sp.Float(v.real, ROOT_DIGITS) + sp.I * sp.Float(v.imag, ROOT_DIGITS)
    return sp.Float(v, ROOT_DIGITS)


def freeze_roots(expr: sp.Expr) -> sp.Expr:
    """``expr`` with every exact algebraic constant (``CRootOf``) replaced by :func:`root_float`."""
    roots = atoms_outside_roots(expr, sp.CRootOf)
    return replace_outside_roots(expr, {r: root_float(r) for r in roots}) if roots else expr


def number_value(expr: sp.Expr):
    """The value of an exact number (rationals, radicals, ``I``, exact roots, Floats) as an
    mpmath number at ROOT_DIGITS digits, read directly off the expression tree with each
    ``CRootOf`` taken from :func:`root_value` (no sympy expression is rebuilt; anything else,
    such as a function of a number, goes through :func:`sympy.N`)."""
    with mpmath.workdps(ROOT_DIGITS + 10):
        v = _number_mp(expr, {})
    with mpmath.workdps(ROOT_DIGITS):
        return +v


def _number_mp(e: sp.Expr, memo: dict):
    hit = memo.get(e)
    if hit is not None:
        return hit
    if isinstance(e, sp.CRootOf):
        v = root_value(e)
    elif e.is_Integer:
        v = mpmath.mpf(int(e))
    elif e.is_Rational:
        v = mpmath.mpf(int(e.p)) / int(e.q)
    elif e.is_Float:
        v = mpmath.mpf(e._mpf_)
    elif e is sp.I:
        v = mpmath.mpc(0, 1)
    elif e.is_Add:
        v = mpmath.fsum(_number_mp(a, memo) for a in e.args)
    elif e.is_Mul:
        v = mpmath.mpf(1)
        for a in e.args:
            v *= _number_mp(a, memo)
    elif e.is_Pow:
        v = _number_mp(e.base, memo) ** _number_mp(e.exp, memo)
    else:
        v = mpmath.mpmathify(sp.N(freeze_roots(e), ROOT_DIGITS + 10))
    memo[e] = v
    return v


def atoms_outside_roots(expr: sp.Expr, *types: type) -> set:
    """``expr.atoms(*types)``, except that an exact root (``CRootOf``) is not entered.

    sympy rebuilds a ``CRootOf``'s polynomial as an expression each time its ``args`` are read,
    and a traversal then walks that polynomial too: a weight of a few dozen terms in the roots
    of a degree-8 factor took tens of milliseconds per traversal, and a large derivation makes
    thousands of them. A root holds no parameter, so nothing is missed.
    """
    out: set = set()
    seen: set = set()
    stack = [expr]
    while stack:
        e = stack.pop()
        if isinstance(e, types):
            out.add(e)
        if isinstance(e, sp.CRootOf) or not isinstance(e, sp.Basic):
            continue
        for a in e.args:
            if a not in seen:
                seen.add(a)
                stack.append(a)
    return out


def replace_outside_roots(expr: sp.Expr, rule: dict) -> sp.Expr:
    """``expr.xreplace(rule)``, except that an exact root (``CRootOf``) is not entered (see
    :func:`atoms_outside_roots`); a ``CRootOf`` itself may be a key of ``rule``."""
    memo: dict = {}

    def go(e):
        hit = rule.get(e)
        if hit is not None:
            return hit
        if isinstance(e, sp.CRootOf) or not e.args:
            return e
        done = memo.get(e)
        if done is None:
            args = tuple(go(a) for a in e.args)
            done = e if all(x is y for x, y in zip(args, e.args)) else e.func(*args)
            memo[e] = done
        return done

    return go(expr) if isinstance(expr, sp.Basic) else expr


# Values of exact algebraic roots by (polynomial, index) (immutable keys; values are pure
# functions of them).
_ROOT_VALUES: dict[tuple, object] = {}


class LevelRoot(sp.Function):
    r"""k-th smallest real root of :math:`\sum_i c_i E^{n-i}` (coefficients highest power first).

    Examples
    --------
    >>> import sympy as sp
    >>> from symresp.spectrum import LevelRoot
    >>> a = sp.Symbol("a", positive=True)
    >>> r = LevelRoot(0, 1, 0, -a, 1)            # smallest real root of E^3 - a E + 1
    >>> r.subs(a, 3)                             # exact once the coefficients are rational
    CRootOf(x**3 - 3*x + 1, 0)
    >>> round(float(r.subs(a, sp.Float(3.0))), 10)
    -1.8793852416
    """

    is_real = True

    @classmethod
    def eval(cls, k, *coeffs):  # safe: sympy Function API (automatic evaluation), not Python eval
        if not k.is_Integer:
            return None
        if all(c.is_Rational for c in coeffs):
            x = sp.Symbol("x")
            poly = sp.Poly(list(coeffs), x)
            return sp.CRootOf(poly, int(k))
        return None

    def _eval_evalf(self, prec):
        k, *coeffs = self.args
        if any(c.free_symbols for c in coeffs):
            return None
        dps = 15 * (1 + (mpmath.libmp.prec_to_dps(prec) + 10) // 15)  # shared by nearby precisions
        hit = _VALUES.get((self, dps))
        if hit is not None:
            return hit
        with mpmath.workdps(dps):
            value = real_root(int(k), [sp.N(c, dps) for c in coeffs], extra=4 * dps)
            out = sp.Float(value, dps)
        if len(_VALUES) > 4096:
            _VALUES.clear()
        _VALUES[(self, dps)] = out
        return out

    def _latex(self, printer, exp=None):
        k = self.args[0]
        base = rf"\varepsilon_{{{printer._print(k)}}}"
        return base if exp is None else rf"{base}^{{{exp}}}"

    def polynomial(self, var: sp.Symbol) -> sp.Expr:
        """The defining polynomial in ``var``."""
        _, *coeffs = self.args
        n = len(coeffs) - 1
        return sum((c * var ** (n - i) for i, c in enumerate(coeffs)), sp.Integer(0))


# Values of parameter-free implicit roots by precision (immutable keys; the values are pure
# functions of them): one formula holds the same root many times.
_VALUES: dict = {}
