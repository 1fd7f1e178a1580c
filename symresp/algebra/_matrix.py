r"""Matrix forms of operators on a product basis (layer: algebra).

Owns :class:`Basis` (an ordered product basis, optionally restricted to a subset of states) and
the sparse matrix form of an :class:`~symresp.algebra._operators.Operator`. Imports sympy,
numpy, :mod:`symresp.errors` and the algebra modules.

A basis state is a tuple of local indices, one per site in site order. Fermion signs follow
the Jordan–Wigner order: an odd factor on mode j acting on a state picks up
:math:`(-1)^{\sum_{i<j} n_i}` over the modes i before j.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

import numpy as np
import sympy as sp

from ..errors import InputError
from ._operators import Monomial, Operator
from ._sites import Site, local_parity

__all__ = ["Basis", "SparseForm", "sparse_form", "to_sympy_matrix", "to_array"]

#: Largest product-basis dimension for which matrix forms are built.
MAX_DIMENSION = 4096

SparseForm = dict[tuple[int, int], sp.Expr]


@dataclass(frozen=True, slots=True)
class Basis:
    """An ordered list of product states over ``sites`` (all of them, or a sector).

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.algebra import Basis
    >>> a = sr.spin("a", sp.Rational(1, 2)); q = sr.nlevel("q", 3)
    >>> Basis.product((a.site, q.site)).dimension
    6
    """

    sites: tuple[Site, ...]
    states: tuple[tuple[int, ...], ...]

    @classmethod
    def product(cls, sites: Iterable[Site]) -> Basis:
        """The full product basis over ``sites`` (sorted into site order)."""
        ordered = tuple(sorted(set(sites), key=lambda s: s.order))
        dim = math.prod(s.dim for s in ordered)
        if dim > MAX_DIMENSION:
            raise InputError(
                f"the product space of {len(ordered)} sites has dimension {dim}, above the "
                f"limit {MAX_DIMENSION} for exact treatment; use fewer sites, smaller spins or "
                f"a lower boson cutoff, or restrict to a sector"
            )
        states = tuple(itertools.product(*(range(s.dim) for s in ordered)))
        return cls(ordered, states)

    @property
    def dimension(self) -> int:
        """Number of basis states."""
        return len(self.states)

    def index(self) -> dict[tuple[int, ...], int]:
        """Map state -> position."""
        return {s: i for i, s in enumerate(self.states)}

    def restrict(self, keep: Iterable[int]) -> Basis:
        """The sub-basis of the states at positions ``keep`` (in the given order)."""
        return Basis(self.sites, tuple(self.states[i] for i in keep))

    def label(self, position: int) -> str:
        """Readable ket label, e.g. ``|1/2,-1/2>``."""
        st = self.states[position]
        return "|" + ",".join(s.label(i) for s, i in zip(self.sites, st)) + ">"


def _apply_monomial(mono: Monomial, state: tuple[int, ...], where: Mapping[Site, int],
                    fermion_positions: tuple[int, ...]) -> tuple[tuple[int, ...], sp.Expr] | None:
    st = list(state)
    coeff: sp.Expr = sp.Integer(1)
    sign = 1
    for site, key in reversed(mono):
        pos = where[site]
        n = st[pos]
        if key[0] == "u":
            _, i, j = key
            if n != j:
                return None
            if local_parity(site, key):
                occupied = sum(st[p] for p in fermion_positions if p < pos)
                if occupied % 2:
                    sign = -sign
            st[pos] = i
        else:
            _, p, q = key
            if n < q:
                return None
            m = n - q + p
            if m >= site.dim:  # truncated by the cutoff
                return None
            coeff *= sp.sqrt(sp.Integer(math.perm(n, q) * math.perm(m, p)))
            st[pos] = m
    return tuple(st), coeff * sign


def sparse_form(op: Operator, basis: Basis, *, columns: Basis | None = None) -> SparseForm:
    """Sparse matrix elements ``{(row, col): value}`` of ``op`` between basis states.

    Rows run over ``basis``; columns over ``columns`` (default: ``basis``). Matrix elements
    to states outside ``basis`` are dropped, which is exact when ``op`` preserves the
    subspace (checked by the callers that need it).
    """
    cols = columns if columns is not None else basis
    missing = op.sites - set(basis.sites)
    if missing:
        names = ", ".join(sorted(s.name for s in missing))
        raise InputError(f"operator acts on site(s) {names} that are not part of this model")
    where = {s: i for i, s in enumerate(basis.sites)}
    fpos = tuple(i for i, s in enumerate(basis.sites) if s.is_fermion)
    row_index = basis.index()
    terms: dict[tuple[int, int], list[sp.Expr]] = {}
    # Monomials of matrix units without a fermion sign act on every column state the same
    # way: found for all columns at once with numpy (mixed-radix codes of the states).
    plain, other = [], []
    for mono, coeff in op.terms:
        sites_of = [site for site, _ in mono]
        if all(key[0] == "u" and not local_parity(site, key) for site, key in mono) and \
                len(set(sites_of)) == len(sites_of):
            plain.append((mono, coeff))
        else:
            other.append((mono, coeff))
    if plain and cols.states and basis.states:
        dims = [s.dim for s in basis.sites]
        strides = np.array([math.prod(dims[p + 1:]) for p in range(len(dims))], dtype=np.int64)
        C = np.array(cols.states, dtype=np.int64).reshape(len(cols.states), len(dims))
        col_code = C @ strides
        row_code = np.array(basis.states, dtype=np.int64).reshape(len(basis.states), len(dims)) @ strides
        order = np.argsort(row_code)
        sorted_codes = row_code[order]
        for mono, coeff in plain:
            mask = np.ones(len(col_code), dtype=bool)
            shift = 0
            for site, (_, i, j) in mono:
                p = where[site]
                mask &= C[:, p] == j
                shift += (i - j) * int(strides[p])
            cidx = np.flatnonzero(mask)
            if not len(cidx):
                continue
            target = col_code[cidx] + shift
            pos = np.searchsorted(sorted_codes, target)
            pos[pos >= len(sorted_codes)] = 0
            found = sorted_codes[pos] == target
            for r, c in zip(order[pos[found]].tolist(), cidx[found].tolist()):
                terms.setdefault((r, c), []).append(coeff)
    for c, state in enumerate(cols.states):
        for mono, coeff in other:
            hit = _apply_monomial(mono, state, where, fpos)
            if hit is None:
                continue
            new_state, factor = hit
            r = row_index.get(new_state)
            if r is None:
                continue
            terms.setdefault((r, c), []).append(coeff * factor)
    out: SparseForm = {}
    for k in sorted(terms, key=lambda rc: (rc[1], rc[0])):
        v = sp.expand(sp.Add(*terms[k]))
        if v != 0:
            out[k] = v
    return out


def to_sympy_matrix(op: Operator, basis: Basis) -> sp.Matrix:
    """Dense sympy matrix of ``op`` on ``basis`` (built from the sparse form)."""
    n = basis.dimension
    return sp.SparseMatrix(n, n, sparse_form(op, basis)).as_mutable()


def to_array(op: Operator, basis: Basis, params: Mapping[sp.Symbol, complex] | None = None) -> np.ndarray:
    """Complex numpy array of ``op`` on ``basis`` at numeric parameter values ``params``."""
    n = basis.dimension
    arr = np.zeros((n, n), dtype=complex)
    subs = dict(params or {})
    for (r, c), v in sparse_form(op, basis).items():
        val = v.subs(subs) if subs else v
        try:
            arr[r, c] = complex(val)
        except TypeError:
            free = ", ".join(sorted(map(str, sp.sympify(val).free_symbols)))  # safe: a sympy object or number from symresp, never user text
            raise InputError(f"no numeric value given for parameter(s) {free} (pass params=...)") from None
    return arr
