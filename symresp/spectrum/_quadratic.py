r"""Exact arithmetic in quadratic extensions K(R), R**2 = D, over a sympy domain K (layer: spectrum).

Owns :class:`Surd`, the representation x + y*R of an element of K(sqrt(D)) used for roots of
quadratic factors and for the eigenspace coefficients :math:`\alpha_k(\lambda)`. Imports sympy only.
Working in the domain (QQ, QQ(params), gaussian rationals, ...) keeps every intermediate
canonical and cancelled, instead of growing expression trees.
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy as sp

__all__ = ["Surd", "Radical"]


@dataclass(frozen=True, slots=True)
class Radical:
    """sqrt(D) with D an element of the domain K, and its sympy form for printing."""

    K: object
    D: object
    expr: sp.Expr

    def convert(self, K2) -> Radical:
        """The same radical over a larger domain K2."""
        return Radical(K2, K2.convert_from(self.D, self.K), self.expr)


@dataclass(frozen=True, slots=True)
class Surd:
    """x + y*R in K(R) with R = radical (y is zero and radical None for elements of K)."""

    K: object
    x: object
    y: object
    radical: Radical | None

    @classmethod
    def of(cls, K, x, radical: Radical | None = None) -> Surd:
        return cls(K, x, K.zero, radical)

    def _d(self):
        return self.radical.D if self.radical is not None else self.K.zero

    def __add__(self, other: Surd) -> Surd:
        return Surd(self.K, self.x + other.x, self.y + other.y, self.radical or other.radical)

    def __mul__(self, other: Surd) -> Surd:
        rad = self.radical or other.radical
        D = rad.D if rad is not None else self.K.zero
        return Surd(self.K, self.x * other.x + self.y * other.y * D,
                    self.x * other.y + self.y * other.x, rad)

    def scale(self, c) -> Surd:
        """Multiply by an element c of K."""
        return Surd(self.K, self.x * c, self.y * c, self.radical)

    def inverse(self) -> Surd:
        """1/(x + yR) = (x - yR)/(x**2 - y**2 D)."""
        den = self.x * self.x - self.y * self.y * self._d()
        return Surd(self.K, self.x / den, -self.y / den, self.radical)

    def convert(self, K2) -> Surd:
        """The same element over a larger domain K2."""
        rad = self.radical.convert(K2) if self.radical is not None else None
        return Surd(K2, K2.convert_from(self.x, self.K), K2.convert_from(self.y, self.K), rad)

    def to_sympy(self) -> sp.Expr:
        """x + y*sqrt(D) as a sympy expression with each coefficient factored."""
        out = _tidy(self.K.to_sympy(self.x))
        if self.y != self.K.zero:
            out += _tidy(self.K.to_sympy(self.y)) * self.radical.expr
        return out


def _tidy(e: sp.Expr) -> sp.Expr:
    return sp.factor(e) if e.free_symbols else e


def bilinear(K, pairs: list[tuple[Surd, Surd]]) -> sp.Expr:
    """sum_i u_i * v_i for Surds u_i in K(R_a) and v_i in K(R_b), returned as a sympy expression.

    R_a and R_b are treated as one radical when their D agree; otherwise the result is
    w00 + w10 R_a + w01 R_b + w11 R_a R_b.
    """
    zero = K.zero
    w = [zero, zero, zero, zero]
    ra = rb = None
    for u, v in pairs:
        ra = ra or u.radical
        rb = rb or v.radical
        w[0] += u.x * v.x
        w[1] += u.y * v.x
        w[2] += u.x * v.y
        w[3] += u.y * v.y
    if ra is not None and rb is not None and ra.D == rb.D:
        w = [w[0] + w[3] * ra.D, w[1] + w[2], zero, zero]
        rb = None
    out = _tidy(K.to_sympy(w[0]))
    if w[1] != zero:
        out += _tidy(K.to_sympy(w[1])) * ra.expr
    if w[2] != zero:
        out += _tidy(K.to_sympy(w[2])) * rb.expr
    if w[3] != zero:
        out += _tidy(K.to_sympy(w[3])) * ra.expr * rb.expr
    return out
