r"""Characteristic polynomials of parametric blocks over QQ[parameters] with python-flint
(layer: spectrum).

Owns :func:`factored_charpoly`. Imports sympy, python-flint and :mod:`symresp.models`.

A block whose entries mix several parameters has a characteristic polynomial in
:math:`\mathbb{Q}[\theta_1, \dots][x]`. It is computed with Berkowitz's division-free
algorithm on FLINT multivariate polynomials (``fmpq_mpoly``) and factored there: for the
21-state block of a spin 10 with axial, rhombic and transverse Zeeman terms this takes 0.2 s,
where sympy's Berkowitz over the field QQ(D, E, h) followed by ``factor_list`` takes minutes.
Complex Hermitian blocks (a field along y) have Gaussian-rational entries; they are carried as
pairs (real part, imaginary part) of ``fmpq_mpoly``, and the characteristic polynomial of a
Hermitian matrix is real.

Reference: S. J. Berkowitz, "On computing the determinant in small parallel time using a small
number of processors", Inf. Process. Lett. 18, 147 (1984).
"""

from __future__ import annotations

import flint
import sympy as sp

from ..models import checkpoint

__all__ = ["factored_charpoly"]


class _Gauss:
    """a + i b with a, b in a FLINT polynomial ring (only what Berkowitz needs)."""

    __slots__ = ("re", "im")

    def __init__(self, re, im) -> None:
        self.re, self.im = re, im

    def __add__(self, o: _Gauss) -> _Gauss:
        return _Gauss(self.re + o.re, self.im + o.im)

    def __sub__(self, o: _Gauss) -> _Gauss:
        return _Gauss(self.re - o.re, self.im - o.im)

    def __neg__(self) -> _Gauss:
        return _Gauss(-self.re, -self.im)

    def __mul__(self, o: _Gauss) -> _Gauss:
        if self.im.is_zero() and o.im.is_zero():
            return _Gauss(self.re * o.re, self.im)
        return _Gauss(self.re * o.re - self.im * o.im, self.re * o.im + self.im * o.re)

    def is_zero(self) -> bool:
        return self.re.is_zero() and self.im.is_zero()


def _berkowitz(M: list[dict[int, object]], n: int, zero, one, clock=None, where: str = "") -> list:
    """Coefficients (highest power first) of det(x - M) for a sparse matrix M (rows as dicts).

    Division free: the characteristic polynomial of each leading k x k submatrix follows from
    the previous one by a Toeplitz product with (1, -a_kk, -R C, -R A C, -R A^2 C, ...), where
    R and C are the row and column bordering it.
    """
    vec = [one]
    for k in range(n):
        if clock:
            clock.check("characteristic polynomial", where)
        checkpoint("characteristic polynomial", where)
        row = M[k]
        a = row.get(k, zero)
        R = {j: v for j, v in row.items() if j < k}
        cur = {i: M[i][k] for i in range(k) if k in M[i]}
        ts = []
        for step in range(k):
            t = zero
            for j, v in R.items():
                c = cur.get(j)
                if c is not None:
                    t = t + v * c
            ts.append(t)
            if step < k - 1:
                nxt = {}
                for i in range(k):
                    s = None
                    for j, v in M[i].items():
                        if j < k:
                            c = cur.get(j)
                            if c is not None:
                                s = v * c if s is None else s + v * c
                    if s is not None and not s.is_zero():
                        nxt[i] = s
                cur = nxt
        col = [one, -a] + [-t for t in ts]
        new = []
        for i in range(k + 2):
            s = zero
            for j in range(min(i + 1, len(vec))):
                if i - j < len(col):
                    s = s + col[i - j] * vec[j]
            new.append(s)
        vec = new
    return vec


def _as_flint(v: sp.Expr, params: tuple[sp.Symbol, ...], ctx) -> tuple | None:
    """(real, imaginary) parts of a polynomial entry as fmpq_mpoly, or None if the entry is not
    a polynomial in the parameters with Gaussian-rational coefficients."""
    try:
        P = sp.Poly(v, *params) if params else sp.Poly(v, sp.Dummy())
    except sp.PolynomialError:
        return None
    if P.domain not in (sp.ZZ, sp.QQ, sp.ZZ_I, sp.QQ_I):
        return None
    re, im = {}, {}
    k = len(params)
    for monom, c in P.terms():
        mono = tuple(monom) if params else ()
        for store, part in ((re, sp.re(c)), (im, sp.im(c))):
            if part != 0:
                q = sp.Rational(part)
                store[(0, *mono[:k])] = flint.fmpq(int(q.p), int(q.q))
    return ctx.from_dict(re), ctx.from_dict(im)


def factored_charpoly(Hb: dict[tuple[int, int], sp.Expr], n: int, params: tuple[sp.Symbol, ...],
                      *, clock=None, where: str = ""
                      ) -> list[tuple[tuple[sp.Expr, ...], int]] | None:
    """Irreducible factors over QQ[params] of det(x - H_block), as (coefficients highest power
    first, multiplicity); ``clock`` (a running budget) is checked between steps. None when an entry is not a polynomial in ``params`` with
    (Gaussian) rational coefficients (square roots, say), so the caller takes another route.

    Examples
    --------
    >>> import sympy as sp
    >>> from symresp.spectrum._charpoly import factored_charpoly
    >>> a, b = sp.symbols("a b", real=True)
    >>> factored_charpoly({(0, 0): a, (0, 1): b, (1, 0): b, (1, 1): a}, 2, (a, b))
    [((1, -a - b), 1), ((1, -a + b), 1)]
    """
    used = tuple(p for p in params if any(v.has(p) for v in Hb.values()))
    names = ("x__", *(f"p{i}__" for i in range(len(used))))
    ctx = flint.fmpq_mpoly_ctx.get(names, "lex")
    zero = ctx.from_dict({})
    M: list[dict[int, object]] = [{} for _ in range(n)]
    gaussian = False
    for (i, j), v in Hb.items():
        pair = _as_flint(v, used, ctx)
        if pair is None:
            return None
        re, im = pair
        gaussian = gaussian or not im.is_zero()
        if not (re.is_zero() and im.is_zero()):
            M[i][j] = (re, im)
    if gaussian:
        rows = [{j: _Gauss(*v) for j, v in r.items()} for r in M]
        coeffs = [c.re for c in _berkowitz(rows, n, _Gauss(zero, zero), _Gauss(zero + 1, zero),
                                           clock, where)]
    else:
        rows = [{j: v[0] for j, v in r.items()} for r in M]
        coeffs = _berkowitz(rows, n, zero, zero + 1, clock, where)
    x = ctx.gens()[0]
    cp = zero
    for i, c in enumerate(coeffs):
        cp = cp + c * x ** (n - i)
    _, factors = cp.factor()
    if clock:
        clock.check("factoring the characteristic polynomial", where)
    syms = (sp.Dummy("x"), *used)
    out = []
    for f, mult in factors:
        terms = f.to_dict()
        deg = max(m[0] for m in terms)
        if deg == 0:
            continue
        parts: list[list[sp.Expr]] = [[] for _ in range(deg + 1)]
        for monom, c in terms.items():
            mono = sp.Mul(*[s ** e for s, e in zip(syms[1:], monom[1:])])
            parts[deg - monom[0]].append(sp.Rational(int(c.p), int(c.q)) * mono)
        cs = [sp.Add(*p) for p in parts]        # one Add per coefficient, not one per term
        lead = cs[0]
        if lead.is_Number and lead < 0:
            cs = [-c for c in cs]
        # Factors of equal degree in a stable order: sympy's sort key, or for long factors
        # (thousands of terms: a spin 10 in a tilted field) the text of the FLINT polynomial,
        # which orders the same factors the same way and costs no tree walk.
        size = len(terms)
        key = (0, sp.default_sort_key(tuple(cs))) if size <= _SORT_KEY_TERMS else (1, str(f))
        out.append(((tuple(cs), int(mult)), key))
    out.sort(key=lambda fk: (len(fk[0][0]), fk[1]))
    return [fm for fm, _ in out]


#: Factors with more terms than this are ordered by their FLINT text (see factored_charpoly).
_SORT_KEY_TERMS = 400
