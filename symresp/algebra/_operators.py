r"""Operator expressions: immutable sums of products of local operators (layer: algebra).

Owns :class:`Operator` and the canonical form. Imports sympy, :mod:`symresp.errors` and
:mod:`._sites`.

Canonical form
--------------
An operator is a sum of terms ``coefficient * monomial``. A monomial is a product of at most
one local factor per site, written in site order (creation order). Local factors are

* finite sites: matrix units :math:`|i\rangle\langle j|` other than :math:`|0\rangle\langle 0|`,
  which is eliminated through :math:`|0\rangle\langle 0| = 1 - \sum_{i>0}|i\rangle\langle i|`,
  so the local identity and the units form a basis and the form is unique;
* boson modes: normal-ordered :math:`(a^\dagger)^p a^q` with :math:`(p, q) \ne (0, 0)`, reduced with
  :math:`a^q (a^\dagger)^r = \sum_k \binom{q}{k}\binom{r}{k} k!\,(a^\dagger)^{r-k} a^{q-k}`.

Moving an odd fermion factor past another odd fermion factor on a different mode gives a sign
-1; everything else commutes between sites. Two operators are equal exactly when their
canonical forms are equal.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from fractions import Fraction
from typing import Union

import sympy as sp

from ..errors import InputError
from ._sites import LocalKey, Site, local_parity

__all__ = ["Operator", "Monomial", "as_coefficient", "as_operator", "dagger", "commutator",
           "anticommutator", "exact_decimal"]

Monomial = tuple[tuple[Site, LocalKey], ...]
Scalar = Union[int, Fraction, sp.Expr]


def exact_decimal(value: float, *, where: str = "number") -> sp.Rational:
    """The exact rational of a float: the shortest decimal that rounds to it (``repr``).

    This is the one rule by which symresp turns floating-point input into exact numbers:
    ``2.0023`` becomes ``20023/10000`` and ``0.1`` becomes ``1/10``, the numbers the user
    typed, not the binary approximations a float holds. A sympy ``Float`` is first rounded
    to a Python float (15-17 significant digits). NaN and infinities raise InputError.

    Examples
    --------
    >>> from symresp.algebra import exact_decimal
    >>> exact_decimal(2.0023), exact_decimal(0.1), exact_decimal(1e-30)
    (20023/10000, 1/10, 1/1000000000000000000000000000000)
    """
    x = float(value)
    if not math.isfinite(x):
        raise InputError(f"{where}: {value!r} is not a finite number")
    f = Fraction(repr(x))
    return sp.Rational(f.numerator, f.denominator)


def _exact_floats(expr: sp.Expr, where: str) -> sp.Expr:
    return expr.xreplace({f: exact_decimal(f, where=where) for f in expr.atoms(sp.Float)})


def as_coefficient(value: object, *, where: str = "coefficient") -> sp.Expr:
    """Convert a scalar to an exact sympy expression; floats become the decimals they print
    as (:func:`exact_decimal`); other objects raise InputError."""
    if isinstance(value, bool):
        raise InputError(f"{where}: {value!r} is a bool, not a number")
    if isinstance(value, int):
        return sp.Integer(value)
    if isinstance(value, Fraction):
        return sp.Rational(value.numerator, value.denominator)
    if isinstance(value, float):
        return exact_decimal(value, where=where)
    if isinstance(value, complex):
        return exact_decimal(value.real, where=where) + sp.I * exact_decimal(value.imag, where=where)
    if isinstance(value, sp.Basic):
        if not isinstance(value, sp.Expr):
            raise InputError(f"{where}: {value!r} is not a scalar expression")
        if value.has(sp.Float):
            value = _exact_floats(value, where)
        if value.has(sp.nan, sp.zoo, sp.oo, -sp.oo):
            raise InputError(f"{where}: {value} is not a finite number")
        return value
    raise InputError(f"{where}: cannot use {value!r} (type {type(value).__name__}) as a scalar")


def _norm(c: sp.Expr) -> sp.Expr:
    return sp.expand(c)


def _monomial_key(m: Monomial) -> tuple:
    return tuple((s.order, k) for s, k in m)


# ---------------------------------------------------------------- local products

def _canon_local(site: Site, key: LocalKey) -> list[tuple[LocalKey | None, sp.Expr]]:
    """Expand one local factor in the canonical local basis (None stands for the identity)."""
    if key[0] == "u" and key[1] == 0 and key[2] == 0:
        out: list[tuple[LocalKey | None, sp.Expr]] = [(None, sp.Integer(1))]
        out += [(("u", i, i), sp.Integer(-1)) for i in range(1, site.dim)]
        return out
    if key[0] == "b" and key[1] == 0 and key[2] == 0:
        return [(None, sp.Integer(1))]
    return [(key, sp.Integer(1))]


def _local_product(site: Site, k1: LocalKey, k2: LocalKey) -> list[tuple[LocalKey | None, sp.Expr]]:
    """Product k1 * k2 of two local factors on the same site, in canonical local form."""
    if k1[0] == "u":
        _, i, j = k1
        _, k, l = k2
        if j != k:
            return []
        return _canon_local(site, ("u", i, l))
    _, p, q = k1
    _, r, s = k2
    out = []
    for k in range(min(q, r) + 1):
        c = sp.Integer(math.comb(q, k) * math.comb(r, k) * math.factorial(k))
        for key, c2 in _canon_local(site, ("b", p + r - k, q + s - k)):
            out.append((key, c * c2))
    return out


def _mul_monomials(m1: Monomial, m2: Monomial) -> dict[Monomial, sp.Expr]:
    """Canonical expansion of the product m1 * m2 (both canonical), fermion signs included."""
    # Sign: each factor g of m2 moves left past every factor f of m1 on a later site.
    sign = 1
    odd2 = [(s.order, local_parity(s, k)) for s, k in m2 if local_parity(s, k)]
    if odd2:
        for s1, k1 in m1:
            if local_parity(s1, k1):
                for order2, _ in odd2:
                    if s1.order > order2:
                        sign = -sign
    by_site: dict[int, list] = {}
    sites: dict[int, Site] = {}
    for s, k in m1:
        by_site.setdefault(s.order, []).append(k)
        sites[s.order] = s
    for s, k in m2:
        by_site.setdefault(s.order, []).append(k)
        sites[s.order] = s
    options: list[list[tuple[tuple[Site, LocalKey] | None, sp.Expr]]] = []
    for order in sorted(by_site):
        site = sites[order]
        keys = by_site[order]
        if len(keys) == 1:
            prod = [(keys[0], sp.Integer(1))]
        else:
            prod = _local_product(site, keys[0], keys[1])
            if not prod:
                return {}
        options.append([((site, k) if k is not None else None, c) for k, c in prod])
    result: dict[Monomial, sp.Expr] = {}
    partial: list[tuple[tuple, sp.Expr]] = [((), sp.Integer(sign))]
    for opts in options:
        partial = [(mono + ((f,) if f is not None else ()), c * c2) for mono, c in partial
                   for f, c2 in opts]
    for mono, c in partial:
        result[mono] = result.get(mono, sp.Integer(0)) + c
    return result


# ---------------------------------------------------------------- the operator type

@dataclass(frozen=True, slots=True, eq=False)
class Operator:
    r"""An operator expression: an immutable sum of products of local operators.

    Build operators from site constructors (``spin``, ``nlevel``, ``fermion``, ``boson``) and
    combine them with ``+``, ``-``, ``*``, ``/`` by scalars, ``**`` with a non-negative integer,
    :func:`dagger` and :func:`commutator`. Coefficients are exact sympy expressions.

    Attributes
    ----------
    terms : tuple of (monomial, coefficient)
        Canonical terms in a deterministic order.
    sites : frozenset of Site
        Every site the expression was built from, kept even when its terms cancel, so that
        ``0 * s.z`` still declares the site ``s`` to a model.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> a = sr.spin("a", 1)
    >>> (a.x * a.x + a.y * a.y + a.z * a.z) == 2      # S(S+1) for S = 1
    True
    >>> sr.commutator(a.x, a.y) == sp.I * a.z
    True
    """

    terms: tuple[tuple[Monomial, sp.Expr], ...]
    sites: frozenset[Site]

    # sympy defers to objects with a higher priority, so J * op reaches __rmul__.
    _op_priority = 20.0

    # ------------------------------------------------------------ construction
    @classmethod
    def _from_dict(cls, d: Mapping[Monomial, sp.Expr], sites: Iterable[Site]) -> Operator:
        items = []
        for mono, c in d.items():
            c = _norm(c)
            if c != 0:
                items.append((mono, c))
        items.sort(key=lambda it: _monomial_key(it[0]))
        return cls(tuple(items), frozenset(sites))

    @classmethod
    def scalar(cls, value: object) -> Operator:
        """The operator ``value * 1`` on no site."""
        return cls._from_dict({(): as_coefficient(value)}, ())

    @classmethod
    def local(cls, site: Site, key: LocalKey, coefficient: object = 1) -> Operator:
        """A single local factor ``coefficient * key`` on ``site`` (in canonical form)."""
        c = as_coefficient(coefficient)
        d: dict[Monomial, sp.Expr] = {}
        for k, c2 in _canon_local(site, key):
            mono: Monomial = ((site, k),) if k is not None else ()
            d[mono] = d.get(mono, sp.Integer(0)) + c * c2
        return cls._from_dict(d, (site,))

    def as_dict(self) -> dict[Monomial, sp.Expr]:
        """The terms as a fresh dictionary monomial -> coefficient."""
        return dict(self.terms)

    # ------------------------------------------------------------ arithmetic
    def __add__(self, other: object) -> Operator:
        o = as_operator(other)
        d = self.as_dict()
        for mono, c in o.terms:
            d[mono] = d.get(mono, sp.Integer(0)) + c
        return Operator._from_dict(d, self.sites | o.sites)

    __radd__ = __add__

    def __neg__(self) -> Operator:
        return Operator(tuple((m, -c) for m, c in self.terms), self.sites)

    def __pos__(self) -> Operator:
        return self

    def __sub__(self, other: object) -> Operator:
        return self + (-as_operator(other))

    def __rsub__(self, other: object) -> Operator:
        return as_operator(other) + (-self)

    def __mul__(self, other: object) -> Operator:
        if not isinstance(other, Operator):
            c = as_coefficient(other, where="operator * scalar")
            return Operator._from_dict({m: v * c for m, v in self.terms}, self.sites)
        d: dict[Monomial, sp.Expr] = {}
        for m1, c1 in self.terms:
            for m2, c2 in other.terms:
                for m, c in _mul_monomials(m1, m2).items():
                    d[m] = d.get(m, sp.Integer(0)) + c1 * c2 * c
        return Operator._from_dict(d, self.sites | other.sites)

    def __rmul__(self, other: object) -> Operator:
        c = as_coefficient(other, where="scalar * operator")
        return Operator._from_dict({m: c * v for m, v in self.terms}, self.sites)

    def __truediv__(self, other: object) -> Operator:
        if isinstance(other, Operator):
            raise InputError("cannot divide by an operator; only by a scalar")
        c = as_coefficient(other, where="operator / scalar")
        if c == 0:
            raise InputError("division of an operator by zero")
        return self * (1 / c)

    def __pow__(self, n: object) -> Operator:
        if not isinstance(n, int) or isinstance(n, bool) or n < 0:
            raise InputError(f"operator power: exponent {n!r} must be a non-negative integer")
        result = Operator.scalar(1)
        result = Operator(result.terms, self.sites)
        for _ in range(n):
            result = result * self
        return result

    # ------------------------------------------------------------ comparison
    def __eq__(self, other: object) -> bool:
        try:
            o = as_operator(other)
        except InputError:
            return NotImplemented
        return self.terms == o.terms

    def __hash__(self) -> int:
        return hash(self.terms)

    @property
    def is_zero(self) -> bool:
        """True when every coefficient vanishes identically."""
        return not self.terms

    def is_hermitian(self) -> bool:
        """True when the operator equals its adjoint for all allowed parameter values."""
        return (self - dagger(self)).is_zero

    @property
    def free_symbols(self) -> set[sp.Symbol]:
        """Parameters appearing in the coefficients."""
        out: set[sp.Symbol] = set()
        for _, c in self.terms:
            out |= c.free_symbols
        return out

    def subs(self, mapping: Mapping) -> Operator:
        """Substitute parameters in every coefficient."""
        return Operator._from_dict({m: c.subs(mapping) for m, c in self.terms}, self.sites)

    def scalar_part(self) -> sp.Expr:
        """Coefficient of the identity."""
        for m, c in self.terms:
            if m == ():
                return c
        return sp.Integer(0)

    # ------------------------------------------------------------ printing
    def __repr__(self) -> str:
        if not self.terms:
            return "0"
        parts = []
        for mono, c in self.terms:
            factors = "*".join(_factor_str(s, k) for s, k in mono)
            if not factors:
                parts.append(f"({c})")
            elif c == 1:
                parts.append(factors)
            else:
                parts.append(f"({c})*{factors}")
        return " + ".join(parts)

    __str__ = __repr__


def _factor_str(site: Site, key: LocalKey) -> str:
    n = site.name
    if key[0] == "b":
        _, p, q = key
        cre = f"{n}^+" + (f"^{p}" if p > 1 else "") if p else ""
        ann = f"{n}" + (f"^{q}" if q > 1 else "") if q else ""
        return "*".join(x for x in (cre, ann) if x)
    _, i, j = key
    if site.is_fermion:
        return {(0, 1): n, (1, 0): f"{n}^+", (1, 1): f"n_{n}"}[(i, j)]
    return f"{n}|{site.label(i)}><{site.label(j)}|"


def as_operator(value: object) -> Operator:
    """Return ``value`` as an Operator (scalars become multiples of the identity)."""
    if isinstance(value, Operator):
        return value
    return Operator.scalar(value)


def dagger(op: object) -> Operator:
    r"""Adjoint :math:`X^\dagger` of an operator expression.

    Parameters
    ----------
    op : Operator or scalar

    Returns
    -------
    Operator
        The adjoint, in canonical form; coefficients are complex-conjugated under their
        assumptions (real parameters stay unchanged).

    Examples
    --------
    >>> import symresp as sr
    >>> c1, c2 = sr.fermion("c1"), sr.fermion("c2")
    >>> sr.dagger(c1 * c2) == sr.dagger(c2) * sr.dagger(c1)
    True
    """
    x = as_operator(op)
    total = Operator((), x.sites)
    for mono, c in x.terms:
        term = Operator.scalar(sp.conjugate(c))
        for site, key in reversed(mono):
            term = term * Operator.local(site, (key[0], key[2], key[1]))
        total = total + term
    return Operator(total.terms, x.sites)


def commutator(x: object, y: object) -> Operator:
    """Commutator ``[x, y] = x y - y x``.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> s = sr.spin("s", sp.Rational(1, 2))
    >>> sr.commutator(s.plus, s.minus) == 2 * s.z
    True
    """
    a, b = as_operator(x), as_operator(y)
    return a * b - b * a


def anticommutator(x: object, y: object) -> Operator:
    """Anticommutator ``{x, y} = x y + y x``.

    Examples
    --------
    >>> import symresp as sr
    >>> c = sr.fermion("c")
    >>> sr.anticommutator(c, sr.dagger(c)) == 1
    True
    """
    a, b = as_operator(x), as_operator(y)
    return a * b + b * a
