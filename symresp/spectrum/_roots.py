r"""Implicit levels: the k-th real root of a polynomial whose coefficients depend on parameters
(layer: spectrum).

Owns :class:`LevelRoot`. Imports sympy and mpmath only.

A block mixing several parameters may have an irreducible factor of degree >= 3 in its
characteristic polynomial. Its roots have no closed form, so the level is kept exactly as
``LevelRoot(k, c_n, ..., c_0)``: the k-th smallest real root (k = 0, 1, ...) of
:math:`c_n E^n + \dots + c_0`. The roots of a Hermitian block are real. With rational
coefficients (all parameters given exact values) it becomes sympy's exact ``CRootOf``; with
numbers it evaluates numerically to any precision (the semi-closed form).
"""

from __future__ import annotations

import mpmath
import sympy as sp

__all__ = ["LevelRoot", "real_root"]


def real_root(k: int, coeffs, ctx=mpmath.mp, extra: int = 200):
    """k-th smallest real root (k = 0, 1, ...) of ``coeffs`` (highest power first) in the mpmath
    context ``ctx``; imaginary parts of the coefficients and roots (rounding) are dropped."""
    roots = ctx.polyroots([ctx.re(ctx.mpmathify(c)) for c in coeffs], maxsteps=200,
                          extraprec=extra)
    return sorted(ctx.re(r) for r in roots)[int(k)]


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
        dps = mpmath.libmp.prec_to_dps(prec) + 10
        with mpmath.workdps(dps):
            value = real_root(int(k), [sp.N(c, dps) for c in coeffs], extra=4 * dps)
            return sp.Float(value, dps)

    def _latex(self, printer, exp=None):
        k = self.args[0]
        base = rf"\varepsilon_{{{printer._print(k)}}}"
        return base if exp is None else rf"{base}^{{{exp}}}"

    def polynomial(self, var: sp.Symbol) -> sp.Expr:
        """The defining polynomial in ``var``."""
        _, *coeffs = self.args
        n = len(coeffs) - 1
        return sum((c * var ** (n - i) for i, c in enumerate(coeffs)), sp.Integer(0))
