r"""Finite operator spaces closed under commutation with H (layer: algebra).

Owns :class:`OperatorSpace` and :func:`close_under`. Imports sympy, :mod:`symresp.errors` and
the algebra modules.

The Liouvillian :math:`\mathcal{L}X = [H, X]` acts on operators. Starting from seed operators
(the measured and driving operators and their adjoints), repeated commutators with H either
stay inside a finite-dimensional space :math:`V` — quadratic bosons and fermions with linear
or bilinear observables, oscillators with linear couplings and displacements, a spin in a
field — or keep producing new operators (a qubit coupled to an oscillator). The closure is
exact: operators are vectors over their canonical monomials (:mod:`._operators`, boson
operators normal-ordered without any cutoff), with coefficients in the field of the
parameters; linear independence is decided by exact elimination (``sympy.cancel`` of every
pivot), never numerically.

The result is a basis :math:`b_1 \dots b_d` of :math:`V` and the matrix
:math:`L_{ij}` with :math:`[H, b_j] = \sum_i L_{ij} b_i`. Budgets bound both the number of
commutators taken and the dimension; when either is exceeded the space is reported as not
closed (``None``), with the reason.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass

import sympy as sp

from ._operators import Monomial, Operator, as_operator, commutator, dagger

__all__ = ["OperatorSpace", "close_under", "coordinates"]

#: Largest dimension of a closed operator space (the Liouvillian is solved symbolically).
MAX_SPACE_DIMENSION = 12
#: Largest number of commutators [H, X] taken while looking for closure.
MAX_COMMUTATORS = 24


def _key(m: Monomial) -> tuple:
    return tuple((s.order, k) for s, k in m)


def _tidy(c: sp.Expr) -> sp.Expr:
    return sp.cancel(c) if c.free_symbols else sp.expand(c)


@dataclass(frozen=True, slots=True, eq=False)
class OperatorSpace:
    r"""A finite operator space closed under :math:`X \mapsto [H, X]`.

    Attributes
    ----------
    basis : tuple of Operator
        Linearly independent operators spanning the space (in echelon form: each has a pivot
        monomial that no earlier one has).
    liouvillian : tuple of tuple of sympy.Expr
        ``liouvillian[i][j]`` is the component along ``basis[i]`` of :math:`[H, b_j]`.
    pivots : tuple of Monomial
        The pivot monomial of each basis operator.
    commutators : int
        Commutators with H taken to close the space.
    """

    basis: tuple[Operator, ...]
    liouvillian: tuple[tuple[sp.Expr, ...], ...]
    pivots: tuple[Monomial, ...]
    commutators: int

    @property
    def dimension(self) -> int:
        """Number of basis operators."""
        return len(self.basis)

    def matrix(self) -> sp.Matrix:
        """The Liouvillian as a sympy Matrix."""
        return sp.Matrix(self.liouvillian) if self.basis else sp.zeros(0, 0)


def _symbols(X: Operator) -> set:
    return set().union(*[c.free_symbols for _, c in X.terms])


def _at(X: Operator, point: dict) -> Operator:
    """``X`` with its parameters set to the numbers of ``point``."""
    return Operator._from_dict({m: c.xreplace(point) for m, c in X.terms},
                               X.sites)


def _reduce(vec: dict[Monomial, sp.Expr], basis: list[dict], pivots: list[Monomial],
            check: Callable[[], None] | None = None) -> tuple[dict[Monomial, sp.Expr], list[sp.Expr]]:
    """Remainder of ``vec`` after elimination against the echelon basis, and the multiples."""
    v = dict(vec)
    coeffs = []
    for b, p in zip(basis, pivots):
        if check is not None:
            check()
        c = v.get(p, sp.Integer(0))
        c = _tidy(c) if c != 0 else c
        coeffs.append(c)
        if c == 0:
            continue
        ratio = _tidy(c / b[p])
        for m, x in b.items():
            y = _tidy(v.get(m, sp.Integer(0)) - ratio * x)
            if y == 0:
                v.pop(m, None)
            else:
                v[m] = y
        coeffs[-1] = ratio
    return {m: x for m, x in v.items() if x != 0}, coeffs


def coordinates(op: Operator, space: OperatorSpace) -> list[sp.Expr] | None:
    """Components of ``op`` along the basis of ``space`` (None if it lies outside)."""
    basis = [dict(b.terms) for b in space.basis]
    rest, coeffs = _reduce(dict(op.terms), basis, list(space.pivots))
    return None if rest else coeffs


def close_under(H: Operator, seeds: Iterable[object], *, max_dimension: int = MAX_SPACE_DIMENSION,
                max_commutators: int = MAX_COMMUTATORS, check: Callable[[], None] | None = None
                ) -> tuple[OperatorSpace | None, str]:
    r"""The smallest operator space containing ``seeds`` (and their adjoints) closed under
    :math:`[H, \cdot]`, or ``(None, reason)`` when the budgets are exceeded.

    Parameters
    ----------
    H : Operator
    seeds : iterable of Operator
    max_dimension, max_commutators : int
        Budgets: the space may not grow beyond ``max_dimension`` operators, and at most
        ``max_commutators`` commutators with H are taken.
    check : callable, optional
        Called once per commutator (a running budget clock).

    Returns
    -------
    (OperatorSpace or None, str)
        The space and an empty string, or None and the reason it did not close.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.algebra import close_under
    >>> w = sp.Symbol("w", positive=True); a = sr.boson("a", 4)
    >>> space, _ = close_under(w * sr.dagger(a) * a, [a + sr.dagger(a)])
    >>> space.dimension, sorted(space.matrix().eigenvals(), key=str)   # [H, a^+] = w a^+
    (2, [-w, w])
    >>> close_under(w * sr.dagger(a) * a + w * (a + sr.dagger(a))**3, [a])[0] is None
    True
    """
    H = as_operator(H)
    seeds = [as_operator(s) for s in seeds]
    symbols = set().union(*[_symbols(X) for X in (H, *seeds)])
    if symbols:
        # Screen at a generic rational point first (fast, exact arithmetic over QQ): the
        # dimension of the space can only drop when parameters take values, so a space that
        # does not close there does not close for symbolic parameters either.
        point = {x: sp.Rational(2 * k + 3, 7 + k) for k, x in enumerate(sorted(symbols, key=str))}
        screened, reason = close_under(_at(H, point), [_at(X, point) for X in seeds],
                                       max_dimension=max_dimension,
                                       max_commutators=max_commutators, check=check)
        if screened is None:
            return None, reason
    queue: list[Operator] = []
    for s in seeds:
        queue += [s, dagger(s)]
    basis: list[dict] = []
    pivots: list[Monomial] = []
    ops: list[Operator] = []
    images: list[Operator] = []
    taken = 0
    while queue:
        X = queue.pop(0)
        rest, _ = _reduce(dict(X.terms), basis, pivots, check)
        if not rest:
            continue
        if len(basis) >= max_dimension:
            return None, (f"the operators reached by repeated commutators with H span more than "
                          f"{max_dimension} dimensions")
        pivot = min(rest, key=_key)
        # Earlier basis vectors keep their own pivots; the new one has none of them (reduced).
        # Scaled to a unit pivot coefficient, so that basis operators read like the seeds.
        lead = rest[pivot]
        rest = {m: _tidy(x / lead) for m, x in rest.items()}
        basis.append(rest)
        pivots.append(pivot)
        new = Operator._from_dict(rest, X.sites)
        ops.append(new)
        if taken >= max_commutators:
            return None, f"no closure within {max_commutators} commutators with H"
        taken += 1
        if check is not None:
            check()
        image = commutator(H, new)
        images.append(image)
        queue.append(image)
    L = [[sp.Integer(0)] * len(ops) for _ in ops]
    for j, image in enumerate(images):
        rest, coeffs = _reduce(dict(image.terms), basis, pivots)
        if rest:                      # cannot happen: every image was reduced into the space
            return None, "the commutator images left the space (internal inconsistency)"
        for i, c in enumerate(coeffs):
            L[i][j] = c
    return OperatorSpace(tuple(ops), tuple(tuple(r) for r in L), tuple(pivots), taken), ""
