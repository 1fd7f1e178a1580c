r"""Exact eigen-solution of each block and exact eigenspace weights (layer: spectrum).

Owns :class:`Spectrum`, :class:`Part` and the weight computation
:math:`W_{ab} = \mathrm{Tr}(P_a A P_b B)`. Imports sympy, python-flint, :mod:`symresp.errors`,
:mod:`symresp.algebra`, :mod:`symresp.models` and :mod:`._blocks`.

Method (no basis choice inside degenerate levels)
-------------------------------------------------
For a block matrix :math:`M` with minimal polynomial :math:`m(x)` (square-free, since H is
Hermitian) the projector onto the eigenspace of a root :math:`\lambda` is the Lagrange–Sylvester
polynomial

.. math:: P_\lambda = \frac{g_\lambda(M)}{m'(\lambda)}, \qquad
          g_\lambda(y) = \frac{m(y)}{y - \lambda} = \sum_{k<D} h_k(\lambda)\, y^k ,

so :math:`\mathrm{Tr}(P_a A P_b B) = \sum_{k,l} \alpha_k(\lambda_a)\,\alpha_l(\lambda_b)\,
\mathrm{Tr}(M_i^k A M_j^l B)` with :math:`\alpha_k = h_k/m'`.

*Scaled blocks* (the common case: :math:`H_{\rm block} = c\,1 + s\,M` with one parameter scale
:math:`s` and an exact rational matrix :math:`M`) are solved over QQ with FLINT: characteristic
polynomial, factorisation, matrix powers and traces are exact rational arithmetic, and
:math:`\alpha_k` is reduced modulo each irreducible factor :math:`f`, so a weight is an exact
polynomial in the roots of :math:`f`. Factors of degree 1 and 2 give explicit roots; a factor
of degree >= 3 is kept as its exact real roots (``CRootOf``): the semi-closed form.

*Symbolic blocks* (several parameters mixed inside one block) are solved with sympy: the
characteristic polynomial is factored over the field of the parameters, roots of factors of
degree <= 2 are explicit, and :math:`\alpha_k(\lambda)` is simplified with targeted operations.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from fractions import Fraction
from typing import Literal

import flint
import mpmath
import sympy as sp
from sympy.polys.constructor import construct_domain
from sympy.polys.matrices import DomainMatrix

from ..algebra import SparseForm
from ..errors import BudgetExceeded
from ..models import Clock, System, checkpoint
from ._blocks import Block, BlockStructure, decompose
from ._charpoly import factored_charpoly
from ._implicit import BlockWeight, ImplicitBlock, weights_mp, weights_numpy
from ._quadratic import Radical, Surd, bilinear
from ._roots import LevelRoot, number_value, root_value
from ._recouple import MultipletSector, Recoupling, recouple
from ._symmetry import (SECTOR_NAMES, _sparse_fmpq, decompose_entries, find_symmetries,
                        split_block, transform, transform_blocks)

__all__ = ["Spectrum", "Part", "Factor", "BlockSolution", "solve", "clean", "is_zero_number"]

#: Blocks with a parametric implicit factor up to these sizes get exact weights, rational in
#: the implicit roots. Larger ones (a higher degree, a larger block, more distinct levels) are
#: semi-closed: their weights Tr(P_a A P_b B) are kept as exact definitions evaluated
#: numerically (:class:`BlockWeight`), because the rational forms grow too large to be useful
#: (measured: a 6-ring XXZ chain whose +-k sectors of 6 states repeat a cubic derives in 72 s
#: with exact weights, and its evaluator takes minutes to generate).
MAX_IMPLICIT_DEGREE = 3
MAX_IMPLICIT_MINIMAL = 3
MAX_IMPLICIT_BLOCK = 3
#: ... and at most this many parameters in a factor unless its coefficients are short (at
#: most MAX_IMPLICIT_TERMS terms in all): a cubic block of a spin 5/2 with D, E and h (13
#: terms) has exact weights of thousands of terms (measured: 12 s to derive, 36 s to write
#: its evaluator; 0.9 s and 2.2 s semi-closed), a spin 1 in a tilted field (6 terms) has
#: short ones.
MAX_IMPLICIT_PARAMETERS = 2
MAX_IMPLICIT_TERMS = 8

_x = sp.Symbol("x__block")  # block variable; a plain Symbol survives polys round trips


def clean(e: sp.Expr) -> sp.Expr:
    """Targeted simplification of a weight or energy containing square roots of parameters.

    Each square root sqrt(D) is replaced by a symbol R with R**2 = D; the expression is brought
    to one fraction, reduced modulo R**2 - D, the denominator is rationalised one root at a
    time, and each coefficient of the remaining monomials in the roots is cancelled. No blanket
    simplify() is used, so the cost stays polynomial in the size of the expression.
    """
    e = sp.sympify(e)  # safe: e is always a sympy expression built by symresp
    if e.is_Rational or e.has(sp.CRootOf, LevelRoot):
        return sp.expand(e)
    rads = sorted({p for p in e.atoms(sp.Pow) if p.exp == sp.S.Half and p.base.free_symbols},
                  key=sp.default_sort_key)
    if not rads:
        return sp.factor(sp.cancel(e)) if e.free_symbols else sp.radsimp(sp.expand(e))
    R = [sp.Dummy(f"R{i}", positive=True) for i in range(len(rads))]
    D = [r.base for r in rads]
    e2 = e.xreplace(dict(zip(rads, R)))
    num, den = sp.fraction(sp.together(e2))

    def reduce(x: sp.Expr) -> sp.Expr:
        x = sp.expand(x)
        for Ri, Di in zip(R, D):
            x = sp.rem(x, Ri**2 - Di, Ri) if x.has(Ri) else x
        return sp.expand(x)

    num, den = reduce(num), reduce(den)
    for Ri in R:
        if not den.has(Ri):
            continue
        b = den.coeff(Ri, 1)
        a = sp.expand(den - b * Ri)
        conj = a - b * Ri
        num, den = reduce(num * conj), reduce(den * conj)
    out = sp.Integer(0)
    poly = sp.Poly(num, *R)
    den = sp.factor(den)
    for monom, coeff in poly.terms():
        mono = sp.Mul(*[Ri**k for Ri, k in zip(R, monom)])
        out += sp.factor(sp.cancel(coeff / den)) * mono
    return out.xreplace(dict(zip(R, rads)))


def _q(v) -> sp.Rational:
    """flint fmpq / fmpz -> sympy Rational."""
    if isinstance(v, flint.fmpz):
        return sp.Integer(int(v))
    return sp.Rational(int(v.p), int(v.q))


@dataclass(frozen=True, slots=True)
class Factor:
    """An irreducible factor of a block's characteristic polynomial.

    ``coeffs`` (highest power first) define :math:`f(x)` in the block variable x: the energies
    are ``shift + scale * root`` for each root of f. ``implicit`` marks degree >= 3.
    """

    coeffs: tuple[sp.Expr, ...]
    multiplicity: int
    roots: tuple[sp.Expr, ...]
    implicit: bool

    @property
    def degree(self) -> int:
        """Degree of f."""
        return len(self.coeffs) - 1


@dataclass(frozen=True, slots=True)
class Part:
    """The eigenspace of one root of one factor inside one block."""

    block: int
    factor: int
    root: int
    energy: sp.Expr
    multiplicity: int
    implicit: bool


@dataclass(frozen=True, slots=True, eq=False)
class BlockSolution:
    """Exact solution of one block (internal representation; see the module docstring)."""

    block: Block
    kind: Literal["scaled", "symbolic", "semi"]
    shift: sp.Expr
    scale: sp.Expr
    factors: tuple[Factor, ...]
    degree: int                       # D, degree of the minimal polynomial
    powers: tuple                     # M^k, k < D: flint fmpq_mat (scaled) or sympy Matrix
    reducers: tuple                   # scaled: per factor, D x deg(f) fmpq_mat of alpha_k mod f
    alphas: tuple                     # symbolic: per factor, per root, tuple of alpha_k
    gauge: tuple | None = None        # diagonal rescaling D (block matrix is D^-1 H D), or None
    domain: object = None             # symbolic: the sympy domain K of the block entries
    kalphas: tuple = ()               # symbolic: per factor, per root, tuple of Surd (None if implicit)
    alpha_dens: tuple = ()            # symbolic: per factor, per root, denominator of alphas (1 if explicit)
    entries: tuple = ()               # the block matrix, sparse (i, j, value) (set by solve)

    def domain_alpha(self, factor: int, root: int) -> tuple:
        """alpha_k(lambda) as Surds over :meth:`field` (explicit roots only)."""
        if self.kind == "symbolic":
            return self.kalphas[factor][root]
        f = self.factors[factor]
        K = sp.QQ
        red = self.reducers[factor]
        if f.degree == 1:
            return tuple(Surd.of(K, K.convert(_q(red[k, 0]))) for k in range(self.degree))
        a, b, c = (int(v) for v in f.coeffs)
        rad = Radical(K, K.convert(b * b - 4 * a * c), sp.sqrt(sp.Integer(b * b - 4 * a * c)))
        sign = -1 if root == 0 else 1
        lam = Surd(K, K.convert(sp.Rational(-b, 2 * a)), K.convert(sp.Rational(sign, 2 * a)), rad)
        out = []
        for k in range(self.degree):
            r0, r1 = K.convert(_q(red[k, 0])), K.convert(_q(red[k, 1]))
            out.append(Surd.of(K, r0, rad) + lam.scale(r1))
        return tuple(out)

    def field(self):
        """The domain over which :meth:`domain_alpha` and :meth:`domain_power` are exact."""
        return self.domain if self.kind == "symbolic" else sp.QQ

    def domain_power(self, k: int) -> DomainMatrix:
        """M^k as a DomainMatrix over :meth:`field`."""
        P = self.powers[k]
        if self.kind == "symbolic":
            return P
        n = P.nrows()
        return DomainMatrix([[sp.QQ.convert(_q(P[i, j])) for j in range(n)] for i in range(n)], (n, n), sp.QQ)

    def alpha(self, factor: int, root: int) -> tuple[tuple[sp.Expr, ...], sp.Expr]:
        """:math:`\\alpha_k(\\lambda)` for k < D as (numerators, common denominator).

        The denominator is 1 except for implicit roots of symbolic blocks, where it is
        :math:`m'(\\lambda) = \\prod_{\\mu \\ne \\lambda} (\\lambda - \\mu)`.
        """
        if self.kind == "symbolic":
            return self.alphas[factor][root], self.alpha_dens[factor][root]
        red = self.reducers[factor]
        r = self.factors[factor].roots[root]
        deg = self.factors[factor].degree
        tidy = sp.expand if self.factors[factor].implicit or r.is_Rational else clean
        return tuple(
            tidy(sum((_q(red[k, p]) * r**p for p in range(deg)), sp.Integer(0)))
            for k in range(self.degree)
        ), sp.Integer(1)

    def sympy_power(self, k: int) -> sp.Matrix:
        """M^k as a sympy Matrix."""
        P = self.powers[k]
        if self.kind == "symbolic":
            return P.to_Matrix()
        n = P.nrows()
        return sp.Matrix(n, n, lambda i, j: _q(P[i, j]))


@dataclass(frozen=True, slots=True, eq=False)
class Spectrum:
    """Exact spectrum of a system: blocks, their solutions and the list of eigenspace parts."""

    structure: BlockStructure
    solutions: tuple[BlockSolution, ...]
    parts: tuple[Part, ...]
    index: dict[tuple[int, int, int], int]   # (block, factor, root) -> position in parts

    @property
    def is_closed_form(self) -> bool:
        """False when some energy is an implicit root (semi-closed form)."""
        return not any(p.implicit for p in self.parts)

    def describe(self) -> str:
        """Solved blocks by size, conserved quantities and symmetries, on one line."""
        sizes: dict[int, int] = {}
        for s in self.solutions:
            sizes[s.block.size] = sizes.get(s.block.size, 0) + 1
        parts = ", ".join(f"{k} x{v}" for k, v in sorted(sizes.items()))
        qn = ", ".join(q.name for q in self.structure.quantum_numbers) or "none"
        text = f"{len(self.solutions)} blocks (sizes {parts}); conserved: {qn}"
        sym = [s for s in SECTOR_NAMES
               if any(n == s for sol in self.solutions for n, _ in sol.block.labels)]
        return text + (f"; symmetry sectors: {', '.join(SECTOR_NAMES[x] for x in sym)}" if sym else "")

    def split(self, op: SparseForm) -> dict[tuple[int, int], dict[tuple[int, int], sp.Expr]]:
        """Matrix elements of an operator grouped by (row block, column block) in local indices.

        For a symmetry sector the local matrix is :math:`V_s^+ X V_t` (see ``_symmetry``).
        """
        key = ("split", len(op), hash(frozenset(op.items())))
        hit = _memo_of(self).get(key)
        if hit is not None and hit[0] == op:
            return hit[1]
        where = self.structure.locations()
        raw: dict[tuple[int, int], dict[tuple[int, int], sp.Expr]] = {}
        gauges = {s.block.parent: s.gauge for s in self.solutions}
        for (r, c), v in op.items():
            pi, li = where[r]
            pj, lj = where[c]
            gi, gj = gauges[pi], gauges[pj]
            if gi is not None or gj is not None:
                v = sp.expand(v * (gj[lj] if gj else 1) / (gi[li] if gi else 1))
            raw.setdefault((pi, pj), {})[(li, lj)] = v
        children: dict[int, list[int]] = {}
        for k, s in enumerate(self.solutions):
            children.setdefault(s.block.parent, []).append(k)
        out: dict[tuple[int, int], dict[tuple[int, int], sp.Expr]] = {}
        sizes = {b.index: len(b.positions) for b in self.structure.blocks}
        for (pi, pj), blk in raw.items():
            ci, cj = children[pi], children[pj]
            secs_i = [self.solutions[b].block.sector for b in ci]
            secs_j = [self.solutions[b].block.sector for b in cj]
            if len(ci) * len(cj) > 1 and all(x is not None and x.V is not None
                                             for x in secs_i + secs_j):
                # Every pair of sectors at once (two rational products per parent pair).
                for (i, j), t in transform_blocks(blk, [x.dual for x in secs_i],
                                                  [x.V for x in secs_j],
                                                  (sizes[pi], sizes[pj])).items():
                    out[(ci[i], cj[j])] = t
                continue
            for bi in children[pi]:
                for bj in children[pj]:
                    si, sj = self.solutions[bi].block.sector, self.solutions[bj].block.sector
                    if si is None and sj is None:
                        out[(bi, bj)] = blk
                        continue
                    t = transform(blk, si.dual if si is not None else None,
                                  sj.V if sj is not None else None, (sizes[pi], sizes[pj]))
                    if t:
                        out[(bi, bj)] = t
        _memo_of(self)[key] = (op, out)
        return out

    # ---------------------------------------------------------------- weights
    def weights(self, A: SparseForm, B: SparseForm, clock: Clock | None = None
                ) -> dict[tuple[int, int], sp.Expr]:
        r"""Exact :math:`\mathrm{Tr}(P_a A P_b B)` for every pair of parts (a, b) with a non-zero value."""
        return self.split_weights(self.split(A), self.split(B), clock)

    def split_weights(self, As: dict, Bs: dict, clock: Clock | None = None
                      ) -> dict[tuple[int, int], sp.Expr]:
        """:meth:`weights` from operators already grouped by :meth:`split` (split once, used
        for the weights and the expectations, and once only when A = B). When ``As is Bs``
        (A = B) the weights of the pair of blocks (j, i) are those of (i, j), transposed."""
        out: dict[tuple[int, int], sp.Expr] = {}
        same = As is Bs
        for (bi, bj), a_blk in sorted(As.items()):
            b_blk = Bs.get((bj, bi))
            if not b_blk or (same and bi > bj):
                continue                # A = B: the pair (bj, bi) gives these (see below)
            if clock:
                clock.check("computing transition weights", f"blocks {bi} -> {bj}")
            si, sj = self.solutions[bi], self.solutions[bj]
            ca, cb = _scalar(a_blk, si.block.size), _scalar(b_blk, si.block.size)
            if bi == bj and ca is not None and cb is not None:
                # A = ca 1 and B = cb 1 on the block: Tr(P_a A P_b B) = ca cb Tr(P_a) d_ab.
                for fa, f in enumerate(si.factors):
                    for ra in range(f.degree):
                        pa = self.index[(bi, fa, ra)]
                        out[(pa, pa)] = ca * cb * self.parts[pa].multiplicity
                continue
            if "semi" in (si.kind, sj.kind):
                semi = self._semi_weights(bi, bj, a_blk, b_blk, same or As == Bs)
                out.update(semi)
                if same:                # the pair (bj, bi) is skipped: W_ba = W_ab (A = B)
                    out.update({(pb, pa): w for (pa, pb), w in semi.items()})
                continue
            for (fa, ra, fb, rb), w in _pair_weights(si, sj, a_blk, b_blk).items():
                if w != 0:
                    pa = self.index[(bi, fa, ra)]
                    pb = self.index[(bj, fb, rb)]
                    out[(pa, pb)] = w
                    if same:            # Tr(P_a A P_b A) = Tr(P_b A P_a A)
                        out[(pb, pa)] = w
        return out

    def expectations(self, A: SparseForm, which: Literal["A", "B"] = "A") -> dict[int, sp.Expr]:
        r"""Exact :math:`\mathrm{Tr}(P_a A)` for every part a with a non-zero value (``which``
        names the operator in semi-closed weights)."""
        return self.split_expectations(self.split(A), which)

    def split_expectations(self, As: dict, which: Literal["A", "B"] = "A") -> dict[int, sp.Expr]:
        """:meth:`expectations` from an operator already grouped by :meth:`split`."""
        out: dict[int, sp.Expr] = {}
        for (bi, bj), a_blk in As.items():
            if bi != bj:
                continue
            s = self.solutions[bi]
            c = _scalar(a_blk, s.block.size)
            if c is not None:
                # A = c 1 on the block: Tr(P_a A) = c Tr(P_a).
                for fa, f in enumerate(s.factors):
                    for ra in range(f.degree):
                        pa = self.index[(bi, fa, ra)]
                        out[pa] = c * self.parts[pa].multiplicity
                continue
            if s.kind == "semi":
                out.update(self._semi_expectations(bi, a_blk, 1 if which == "A" else 2))
                continue
            # Tr(M^k A) depends on the block only: computed once for all its roots.
            t = [_trace_q(s.powers[k], a_blk) for k in range(s.degree)] if s.kind == "scaled" else []
            for fa, f in enumerate(s.factors):
                for ra in range(f.degree):
                    if s.kind == "scaled":
                        red = s.reducers[fa]
                        coeff = [sum((_q(red[k, p]) * t[k] for k in range(s.degree)), sp.Integer(0))
                                 for p in range(f.degree)]
                        val = _eval_root_poly(coeff, f.roots[ra])
                    elif f.implicit:
                        al, den = s.alpha(fa, ra)
                        val = _tidy_implicit(sum((al[k] * _trace_sym(s.sympy_power(k), a_blk)
                                                  for k in range(s.degree)), sp.Integer(0)), den)
                    else:
                        val = _domain_expectation(s, fa, ra, a_blk)
                    if val != 0:
                        out[self.index[(bi, fa, ra)]] = val
        return out

    # ---------------------------------------------------------------- semi-closed blocks
    def block_parts(self, bi: int) -> list[int]:
        """Indices (into ``parts``) of the parts of block ``bi``, in the block's part order."""
        key = ("parts", bi)
        if key not in _memo_of(self):
            _memo_of(self)[key] = [k for k, p in enumerate(self.parts) if p.block == bi]
        return _memo_of(self)[key]

    def implicit_block(self, bi: int) -> ImplicitBlock:
        """The exact data of block ``bi`` for numerical evaluation (see :mod:`._implicit`)."""
        key = ("implicit", bi)
        if key in _memo_of(self):
            return _memo_of(self)[key]
        sol = self.solutions[bi]
        n = sol.block.size
        sector = sol.block.sector
        V = sector.V if sector is not None and sector.V is not None else None
        gram: list = []
        if sol.gauge is not None or V is not None:
            rows = len(sol.gauge) if sol.gauge is not None else V.nrows()
            d2 = [sp.Integer(1)] * rows if sol.gauge is None else \
                [sp.Rational(sp.expand(g ** 2)) for g in sol.gauge]
            if V is None:
                G = flint.fmpq_mat(n, n)
                for i in range(n):
                    G[i, i] = flint.fmpq(int(d2[i].p), int(d2[i].q))
            else:
                D2 = flint.fmpq_mat(rows, rows)
                for i in range(rows):
                    D2[i, i] = flint.fmpq(int(d2[i].p), int(d2[i].q))
                G = V.transpose() * D2 * V
            gram = [_q(G[i, j]) for i in range(n) for j in range(n)]
        parts = [(self.parts[k].energy, self.parts[k].multiplicity) for k in self.block_parts(bi)]
        out = ImplicitBlock(n, sol.entries, gram, parts)
        _memo_of(self)[key] = out
        return out

    def _semi_weights(self, bi: int, bj: int, a_blk: dict, b_blk: dict, symmetric: bool
                      ) -> dict[tuple[int, int], sp.Expr]:
        """Weights between the parts of two blocks, one of them semi-closed, as BlockWeights.

        With A = B the weight W_ab = Tr(P_a A P_b A) = W_ba is written once, with the part of
        lower index first, so both directions are the same object.
        """
        X, Y = self.implicit_block(bi), self.implicit_block(bj)
        L, R = _sparse_tuple(a_blk), _sparse_tuple(b_blk)
        pa, pb = self.block_parts(bi), self.block_parts(bj)
        if _several_factors(self.solutions[bi]) or _several_factors(self.solutions[bj]):
            keep = [True] * (len(pa) * len(pb))
        else:
            keep = _nonzero_weights(X, Y, L, R)
        out = {}
        for a, ka in enumerate(pa):
            for b, kb in enumerate(pb):
                if not keep[a * len(pb) + b]:
                    continue
                if symmetric and (bj, b) < (bi, a):
                    w = BlockWeight(0, Y, b, X, a, R, L)
                else:
                    w = BlockWeight(0, X, a, Y, b, L, R)
                out[(ka, kb)] = w
        return out

    def _semi_expectations(self, bi: int, a_blk: dict, kind: int) -> dict[int, sp.Expr]:
        X = self.implicit_block(bi)
        L = _sparse_tuple(a_blk)
        pa = self.block_parts(bi)
        keep = [True] * (len(pa) ** 2) if _several_factors(self.solutions[bi]) else \
            _nonzero_weights(X, X, L, sp.Tuple())
        return {k: BlockWeight(kind, X, a, X, a, L, sp.Tuple()) for a, k in enumerate(pa)
                if keep[a * len(pa) + a]}


def _into_sectors(Hb: dict, sectors, n: int) -> list[dict]:
    """dual_s H V_s for every sector s of a block: one decomposition H = sum_g g R_g and one
    rational matrix per atom g for all sectors (flint products)."""
    comps = [(g, _sparse_fmpq(comp, n, n)) for g, comp in decompose_entries(Hb).items()]
    out = []
    for sec in sectors:
        checkpoint("carrying the Hamiltonian into a symmetry sector", f"size {n}")
        t: dict[tuple[int, int], sp.Expr] = {}
        for g, X in comps:
            for (i, j), v in _nonzero_entries(sec.dual * X * sec.V):
                t[(i, j)] = t.get((i, j), sp.Integer(0)) + g * v
        out.append({k: v for k, v in t.items() if v != 0})
    return out


def _memo_of(spec: Spectrum) -> dict:
    """Derived data of one spectrum (operators carried into its sectors, implicit blocks),
    kept beside it rather than in a field, so that subclasses keep their own constructor
    signature. Bounded: the spectra themselves are cached on their systems."""
    hit = _SPECTRUM_MEMO.get(id(spec))
    if hit is None or hit[0] is not spec:
        if len(_SPECTRUM_MEMO) >= 16:
            _SPECTRUM_MEMO.clear()
        hit = _SPECTRUM_MEMO[id(spec)] = (spec, {})
    return hit[1]


# id(spectrum) -> (spectrum, memo); see _memo_of.
_SPECTRUM_MEMO: dict = {}


def _several_factors(sol: BlockSolution) -> bool:
    """Whether a block's characteristic polynomial has more than one distinct factor.

    Evaluated numerically, the eigenvalues of such a block are told apart by factor only as
    well as rounding allows: roots of two factors may nearly coincide (the tunnel-split
    doublets of a large spin, whose two factors are the two parities of a hidden C2 axis), and
    then the eigenvectors of the pair mix. Sums over all pairs of its parts are unchanged by
    such a mix, so every weight of these parts is kept, also those that vanish identically
    (they evaluate to zero), rather than dropping some on the strength of the exact labels.
    """
    return len(sol.factors) > 1


def _nonzero_entries(Y: flint.fmpq_mat):
    """((i, j), value) of the non-zero entries of a rational matrix, values as sympy Rationals."""
    cols = Y.ncols()
    for k, v in enumerate(Y.entries()):
        if v != 0:
            yield (k // cols, k % cols), sp.Rational(int(v.p), int(v.q))


def _sparse_tuple(blk: dict) -> sp.Tuple:
    return sp.Tuple(*[sp.Tuple(i, j, v) for (i, j), v in sorted(blk.items()) if v != 0])


#: Relative size below which a semi-closed weight counts as zero in double precision, and the
#: range [ZERO_DOUBLE, SURE_DOUBLE) where it is confirmed at ZERO_TEST_DIGITS digits.
ZERO_DOUBLE, SURE_DOUBLE = 1e-12, 1e-6


def _sample_values(symbols, k: int) -> dict:
    """Fixed irrational-looking rational values (positive ones positive, the others of
    alternating sign): generic points for the zero test of semi-closed weights."""
    out = {}
    for i, s in enumerate(sorted(symbols, key=lambda x: x.name)):
        v = sp.Rational(1000 + 37 * (i + 1) * (k + 2), 997 + 13 * i + 5 * k)
        out[s] = v if s.is_positive or s.is_nonnegative or (i + k) % 2 == 0 else -v
    return out


def _nonzero_weights(X: ImplicitBlock, Y: ImplicitBlock, L, R) -> list[bool]:
    """Which weights Tr(P_a L P_b R) between the parts of X and Y are not identically zero.

    They are algebraic functions of the parameters; one that vanishes at two generic points is
    zero (common practice for exact zero tests of such functions). Double precision decides
    values far from zero at either point, or at rounding level at both; the few others (tiny
    but possibly real weights, e.g. between distant levels of a large spin) are evaluated at
    SEMI_ZERO_DIGITS digits.
    """
    checkpoint("testing semi-closed weights for zero", f"blocks of {X.n} and {Y.n} states")
    syms = X.free_symbols | Y.free_symbols | L.free_symbols | R.free_symbols
    points = [_sample_values(syms, k) for k in range(2)]
    sure: list[bool] | None = None
    small: list[bool] | None = None
    scale = 1.0
    for point in points:
        def num(e, point=point):
            return complex(e.xreplace(point)) if e.free_symbols else complex(e)
        size = (sum(abs(num(v)) for _, _, v in L) or 1.0) * \
            ((sum(abs(num(v)) for _, _, v in R) or 1.0) if len(R) else 1.0)
        scale = size
        values = [abs(complex(w)) for w in weights_numpy(X, Y, L, R, num)]
        s_ = [v >= SURE_DOUBLE * size for v in values]
        z_ = [v < ZERO_DOUBLE * size for v in values]
        sure = s_ if sure is None else [a or b for a, b in zip(sure, s_)]
        small = z_ if small is None else [a and b for a, b in zip(small, z_)]
    unsure = [i for i, (a, b) in enumerate(zip(sure, small)) if not a and not b]
    keep = list(sure)
    if unsure:
        point = points[0]
        with mpmath.workdps(SEMI_ZERO_DIGITS):
            precise = weights_mp(X, Y, L, R, lambda e: mpmath.mpmathify(
                sp.N(e.xreplace(point), SEMI_ZERO_DIGITS)), SEMI_ZERO_DIGITS, {})
        cut = mpmath.mpf(10) ** (10 - SEMI_ZERO_DIGITS) * scale
        for i in unsure:
            keep[i] = bool(abs(precise[i]) > cut)
    return keep


#: Digits of the evaluation that decides semi-closed weights between 1e-12 and 1e-6 of their
#: scale in double precision (an exact zero is then below ~1e-28 of the scale; the cut is 1e-22).
SEMI_ZERO_DIGITS = 32


def _scalar(blk: dict, n: int) -> sp.Expr | None:
    """c when the sparse n x n block is c times the identity (c != 0), else None."""
    if len(blk) != n:
        return None
    c = blk.get((0, 0))
    if c is None or any(blk.get((i, i)) != c for i in range(n)):
        return None
    return c


#: Digits used to recognise weights that are exactly zero among implicit (algebraic) roots.
ZERO_TEST_DIGITS = 60


def _vanishes(coeffs: dict[tuple[int, int], sp.Expr], xa: sp.Expr, xb: sp.Expr) -> bool:
    """True when sum_pq c_pq xa^p xb^q is zero, tested at ZERO_TEST_DIGITS digits.

    The value is an algebraic number of small height (rational c_pq, roots of integer
    polynomials of low degree), so a value below 10**-(digits - 15) of the size of its terms
    is zero; this recognises the many exactly vanishing weights between distinct roots of one
    factor (e.g. Tr(P_a M P_b M) = 0 when M commutes with H) without a Groebner reduction.
    Only numeric (rational-coefficient) weights are tested; others return False.
    """
    if any(not c.is_number for c in coeffs.values()):
        return False
    with mpmath.workdps(ZERO_TEST_DIGITS):
        va, vb = root_value(xa), root_value(xb)
        total = mpmath.mpf(0)
        size = mpmath.mpf(0)
        for (p, q), c in coeffs.items():
            cm = (mpmath.mpf(int(c.p)) / int(c.q) if c.is_Rational
                  else mpmath.mpmathify(sp.N(c, ZERO_TEST_DIGITS)))
            term = cm * va**p * vb**q
            total += term
            size += abs(term)
        return bool(abs(total) <= size * mpmath.mpf(10) ** (15 - ZERO_TEST_DIGITS))


def _tidy_implicit(w: sp.Expr, den: sp.Expr = sp.Integer(1)) -> sp.Expr:
    """A weight ``w / den`` with ``w`` a polynomial in implicit roots.

    Numeric weights (roots of rational polynomials only) are tested for an exact zero at
    ZERO_TEST_DIGITS digits and otherwise kept as they are (expanding products of root
    polynomials costs far more than evaluating them); parametric numerators are expanded and
    the denominator (a product of root differences) is kept as a product.
    """
    if w.free_symbols or den.free_symbols:
        w = sp.expand(w)
        return sp.Integer(0) if w == 0 else w / den
    w = w / den
    return sp.Integer(0) if is_zero_number(w) else w


def is_zero_number(w: sp.Expr) -> bool:
    """Whether a parameter-free exact number (possibly with CRootOf) is zero.

    Exact rationals and radicals are decided exactly; expressions with implicit roots by a
    ZERO_TEST_DIGITS-digit evaluation with each root evaluated once (see :func:`_vanishes`).
    """
    if not w.has(sp.CRootOf):
        return sp.expand(w) == 0
    return abs(number_value(w)) < mpmath.mpf(10) ** (15 - ZERO_TEST_DIGITS)


def _unified_domain(K, entries: list[sp.Expr]):
    """The smallest domain holding K and the given sympy entries (EX as the last resort)."""
    if not entries:
        return K
    try:
        K2, _ = construct_domain(entries, field=True)
    except (sp.polys.polyerrors.CoercionFailed, sp.polys.polyerrors.OptionError, NotImplementedError):
        K2 = sp.EX
    try:
        return K.unify(K2)
    except sp.polys.polyerrors.UnificationFailed:
        return sp.EX


def _dtrace(K, M: DomainMatrix):
    """Trace of a square DomainMatrix over K."""
    out = K.zero
    for v in M.diagonal():
        out += v
    return out


def _to_domain_matrix(blk: dict, shape: tuple[int, int], K) -> DomainMatrix:
    rows = [[K.zero] * shape[1] for _ in range(shape[0])]
    for (i, j), v in blk.items():
        rows[i][j] = K.from_sympy(v)
    return DomainMatrix(rows, shape, K)


def _domain_expectation(s: BlockSolution, fa: int, ra: int, a_blk: dict) -> sp.Expr:
    K = _unified_domain(s.field(), list(a_blk.values()))
    n = s.block.size
    A = _to_domain_matrix(a_blk, (n, n), K)
    al = [x.convert(K) for x in s.domain_alpha(fa, ra)]
    pairs = []
    for k in range(s.degree):
        t = _dtrace(K, s.domain_power(k).convert_to(K) * A)
        pairs.append((al[k], Surd.of(K, t)))
    return bilinear(K, pairs)


def _domain_pair_weights(si: BlockSolution, sj: BlockSolution, a_blk: dict, b_blk: dict
                         ) -> dict[tuple[int, int, int, int], sp.Expr]:
    """Weights over a common domain K: T_kl = Tr(M_i^k A M_j^l B), W = alpha_a^T T alpha_b."""
    ni, nj = si.block.size, sj.block.size
    K = _unified_domain(si.field(), list(a_blk.values()) + list(b_blk.values()))
    try:
        K = K.unify(sj.field())
    except sp.polys.polyerrors.UnificationFailed:
        K = sp.EX
    A = _to_domain_matrix(a_blk, (ni, nj), K)
    B = _to_domain_matrix(b_blk, (nj, ni), K)
    X = [si.domain_power(k).convert_to(K) * A for k in range(si.degree)]
    Y = [sj.domain_power(l).convert_to(K) * B for l in range(sj.degree)]
    T = [[_dtrace(K, X[k] * Y[l]) for l in range(sj.degree)] for k in range(si.degree)]
    out: dict[tuple[int, int, int, int], sp.Expr] = {}
    for fa, fA in enumerate(si.factors):
        for ra in range(fA.degree):
            al = [x.convert(K) for x in si.domain_alpha(fa, ra)]
            u = []
            for l in range(sj.degree):
                acc = Surd.of(K, K.zero, al[0].radical)
                for k in range(si.degree):
                    acc = acc + al[k].scale(T[k][l])
                u.append(acc)
            for fb, fB in enumerate(sj.factors):
                for rb in range(fB.degree):
                    be = [x.convert(K) for x in sj.domain_alpha(fb, rb)]
                    w = bilinear(K, list(zip(u, be)))
                    if w != 0:
                        out[(fa, ra, fb, rb)] = w
    return out


def _trace_q(P: flint.fmpq_mat, a_blk: dict) -> sp.Expr:
    """Tr(P A) = sum_ij P[j, i] A[i, j] for a rational P and a sparse (possibly symbolic) A."""
    return sum((_q(P[j, i]) * v for (i, j), v in a_blk.items()), sp.Integer(0))


def _trace_sym(P: sp.Matrix, a_blk: dict) -> sp.Expr:
    return sum((P[j, i] * v for (i, j), v in a_blk.items()), sp.Integer(0))


def _eval_root_poly(coeff: list, root: sp.Expr) -> sp.Expr:
    """sum_p coeff[p] root**p, exact."""
    if root.is_Rational:
        return sp.expand(sum((c * root**p for p, c in enumerate(coeff)), sp.Integer(0)))
    return clean(sum((c * root**p for p, c in enumerate(coeff)), sp.Integer(0)))


def _flat_products(powers, comp: dict[tuple[int, int], Fraction], nrow: int, ncol: int,
                   transpose: bool) -> flint.fmpq_mat:
    """Rows k: vec(M^k R) (or vec((M^k R)^T)) for a sparse rational R of shape nrow x ncol."""
    D = len(powers)
    R = flint.fmpq_mat(nrow, ncol)
    for (i, j), v in comp.items():
        R[i, j] = flint.fmpq(v.numerator, v.denominator)
    rows = []
    for k in range(D):
        X = powers[k] * R
        if transpose:
            X = X.transpose()
        rows.extend(X.entries())
    width = nrow * ncol
    return flint.fmpq_mat(D, width, rows)


def _root_polynomial(total: dict[tuple[int, int], sp.Expr], xa: sp.Expr, xb: sp.Expr) -> sp.Expr:
    """sum_pq c_pq xa^p xb^q for rational c_pq, one term per monomial, built without sympy's
    automatic evaluation: the sum is already in expanded form, and evaluating it (or expanding
    it) asks the assumptions of every product of roots again, about 15 times the cost, for
    thousands of weights of a large ring."""
    if xa == xb:
        merged: dict[tuple[int, int], sp.Expr] = {}
        for (p, q), c in total.items():
            merged[(p + q, 0)] = merged.get((p + q, 0), sp.Integer(0)) + c
        total = merged
    terms = []
    for (p, q), c in sorted(total.items()):
        if c == 0:
            continue
        factors = [x if k == 1 else sp.Pow(x, k) for x, k in ((xa, p), (xb, q)) if k]
        if not factors:
            terms.append(c)
        elif c == 1 and len(factors) == 1:
            terms.append(factors[0])
        else:
            terms.append(sp.Mul(*([] if c == 1 else [c]), *factors, evaluate=False))
    if not terms:
        return sp.Integer(0)
    return terms[0] if len(terms) == 1 else sp.Add(*terms, evaluate=False)


def _pair_weights(si: BlockSolution, sj: BlockSolution, a_blk: dict, b_blk: dict
                  ) -> dict[tuple[int, int, int, int], sp.Expr]:
    """Weights Tr(P_a A P_b B) for all parts a of block i and b of block j."""
    out: dict[tuple[int, int, int, int], sp.Expr] = {}
    ni, nj = si.block.size, sj.block.size
    if si.kind == "scaled" and sj.kind == "scaled":
        Ad, Bd = decompose_entries(a_blk), decompose_entries(b_blk)
        Xs = {g: _flat_products(si.powers, comp, ni, nj, transpose=False) for g, comp in Ad.items()}
        Ys = {g: _flat_products(sj.powers, comp, nj, ni, transpose=True) for g, comp in Bd.items()}
        for fa, fA in enumerate(si.factors):
            for fb, fB in enumerate(sj.factors):
                total: dict[tuple[int, int], sp.Expr] = {}
                for ga, X in Xs.items():
                    GA = si.reducers[fa].transpose() * X          # deg_a x (ni nj)
                    for gb, Y in Ys.items():
                        GB = sj.reducers[fb].transpose() * Y      # deg_b x (ni nj)
                        Wc = GA * GB.transpose()                  # deg_a x deg_b
                        scal = ga * gb
                        for p in range(fA.degree):
                            for q in range(fB.degree):
                                c = Wc[p, q]
                                if c != 0:
                                    total[(p, q)] = total.get((p, q), sp.Integer(0)) + scal * _q(c)
                implicit_pair = fA.implicit or fB.implicit
                for ra, xa in enumerate(fA.roots):
                    for rb, xb in enumerate(fB.roots):
                        if implicit_pair and _vanishes(total, xa, xb):
                            continue
                        if implicit_pair and all(c.is_Rational for c in total.values()):
                            w = _root_polynomial(total, xa, xb)
                            if w != 0:
                                out[(fa, ra, fb, rb)] = w
                            continue
                        w = sp.Add(*[c * xa**p * xb**q for (p, q), c in total.items()])
                        if implicit_pair:
                            w = sp.expand(w)
                        elif xa.is_Rational and xb.is_Rational:
                            w = sp.expand(w)
                        else:
                            w = clean(w)
                        if w != 0:
                            out[(fa, ra, fb, rb)] = w
        return out
    if not any(f.implicit for f in si.factors + sj.factors):
        return _domain_pair_weights(si, sj, a_blk, b_blk)
    # Implicit roots in a general block: sympy matrices and explicit alpha coefficients.
    A = sp.SparseMatrix(ni, nj, a_blk)
    B = sp.SparseMatrix(nj, ni, b_blk)
    X = [si.sympy_power(k) * A for k in range(si.degree)]
    Y = [sj.sympy_power(l) * B for l in range(sj.degree)]
    T = [[sum((X[k][r, c] * Y[l][c, r] for r in range(ni) for c in range(nj)), sp.Integer(0))
          for l in range(sj.degree)] for k in range(si.degree)]
    for fa, fA in enumerate(si.factors):
        for ra in range(fA.degree):
            al, den_a = si.alpha(fa, ra)
            row = [sum((al[k] * T[k][l] for k in range(si.degree)), sp.Integer(0)) for l in range(sj.degree)]
            for fb, fB in enumerate(sj.factors):
                for rb in range(fB.degree):
                    be, den_b = sj.alpha(fb, rb)
                    w = sum((row[l] * be[l] for l in range(sj.degree)), sp.Integer(0))
                    if fA.implicit or fB.implicit:
                        w = _tidy_implicit(w, den_a * den_b)
                    else:
                        w = clean(w / (den_a * den_b))
                    if w != 0:
                        out[(fa, ra, fb, rb)] = w
    return out


# ---------------------------------------------------------------- solving one block

def _scaled_form(Hb: dict[tuple[int, int], sp.Expr], n: int):
    """Return (shift, scale, {(i,j): Fraction}) if Hb = shift*1 + scale*M with rational M, else None."""
    comps = decompose_entries(Hb)
    shift = sp.Integer(0)
    scale_atom = None
    M: dict[tuple[int, int], Fraction] = {}
    for atom, comp in comps.items():
        diag = {comp.get((i, i), Fraction(0)) for i in range(n)}
        offdiag = any(i != j and v != 0 for (i, j), v in comp.items())
        if not offdiag and len(diag) == 1:
            d = diag.pop()
            shift += atom * sp.Rational(d.numerator, d.denominator)
            continue
        if scale_atom is not None:
            return None
        scale_atom, M = atom, comp
    if scale_atom is None:
        return shift, sp.Integer(1), {}
    return shift, scale_atom, M


def _surd(e: sp.Expr) -> sp.Expr | None:
    """Common real irrational numeric factor (a square-root product) of all terms of e.

    Returns 1 when every term is rational up to parameters and the imaginary unit, the common
    factor when there is one, and None when the terms carry different surds.
    """
    common: sp.Expr | None = None
    for atom, c in sp.expand(e).as_coefficients_dict().items():
        num = c * (atom.as_independent(*atom.free_symbols, as_Add=False)[0] if atom.free_symbols else atom)
        _, irr = sp.Mul(num).as_coeff_Mul()
        if irr.has(sp.I):
            irr = sp.expand(irr / sp.I)
        if common is None:
            common = irr
        elif not (irr / common).is_Rational:
            return None
    return sp.Integer(1) if common is None else common


def _gauge(Hb: dict[tuple[int, int], sp.Expr], n: int) -> list[sp.Expr] | None:
    """Diagonal similarity D with D^-1 H D free of square roots, found along a spanning forest.

    Spin operators of S >= 1 have matrix elements sqrt(S(S+1) - m(m+1)); rescaling the basis
    states removes them, so the block can be solved over the rationals (the spectrum is
    unchanged and projectors transform as D^-1 P D). Returns None when no rescaling is needed
    or none exists.
    """
    surds = {k: _surd(v) for k, v in Hb.items()}
    if all(v == 1 for v in surds.values()):
        return None
    adj: dict[int, list[int]] = {}
    for (i, j) in Hb:
        if i != j:
            adj.setdefault(i, []).append(j)
    d: list[sp.Expr | None] = [None] * n
    for root in range(n):
        if d[root] is not None:
            continue
        d[root] = sp.Integer(1)
        stack = [root]
        while stack:
            i = stack.pop()
            for j in adj.get(i, []):
                if d[j] is None:
                    sv = surds[(i, j)]
                    if sv is None:
                        return None
                    d[j] = sp.radsimp(d[i] / sv)
                    stack.append(j)
    for (i, j), v in Hb.items():
        if _surd(sp.expand(v * d[j] / d[i])) != 1:
            return None
    return d  # type: ignore[return-value]


def _roots_of_int_factor(coeffs: list[int], where: str) -> tuple[tuple[sp.Expr, ...], bool]:
    deg = len(coeffs) - 1
    if deg == 1:
        a, b = coeffs
        return (sp.Rational(-b, a),), False
    if deg == 2:
        a, b, c = coeffs
        disc = sp.Integer(b * b - 4 * a * c)
        r = sp.sqrt(disc)
        return (sp.expand((-b - r) / (2 * a)), sp.expand((-b + r) / (2 * a))), False
    poly = sp.Poly(coeffs, _x)
    return tuple(sp.CRootOf(poly, k) for k in range(deg)), True


def _solve_scaled(block: Block, shift, scale, Mq: dict, clock: Clock | None) -> BlockSolution:
    n = block.size
    M = flint.fmpq_mat(n, n)
    for (i, j), v in Mq.items():
        M[i, j] = flint.fmpq(v.numerator, v.denominator)
    where = f"block {block.index} ({block.label_text() or 'no labels'}, size {n})"
    cp = M.charpoly()
    _, flist = cp.factor()
    m = M.minpoly()
    if clock:
        clock.check("factoring the characteristic polynomial", where)
    D = m.degree()
    mc = [m.coeffs()[k] for k in range(D + 1)]  # low -> high
    mprime = m.derivative()
    factors, reducers = [], []
    for fpoly, mult in flist:
        fc = [int(fpoly.coeffs()[k] * fpoly.denom()) if hasattr(fpoly, 'denom') else int(fpoly.coeffs()[k])
              for k in range(fpoly.degree() + 1)]
        f = flint.fmpq_poly(fc)
        deg = f.degree()
        roots, implicit = _roots_of_int_factor(list(reversed(fc)), where)
        g, s, _ = (mprime % f).xgcd(f)
        inv = s * (1 / g.coeffs()[0]) if deg > 0 else s
        red = flint.fmpq_mat(D, deg)
        for k in range(D):
            hk = flint.fmpq_poly(mc[k + 1:]) * inv % f
            hc = hk.coeffs()
            for p in range(min(deg, len(hc))):
                red[k, p] = hc[p]
        factors.append(Factor(tuple(sp.Integer(c) for c in reversed(fc)), int(mult), roots, implicit))
        reducers.append(red)
    powers = [flint.fmpq_mat(n, n, [1 if i == j else 0 for i in range(n) for j in range(n)])]
    for _ in range(1, D):
        powers.append(powers[-1] * M)
        if clock:
            clock.check("matrix powers", where)
    return BlockSolution(block, "scaled", shift, scale, tuple(factors), D, tuple(powers),
                         tuple(reducers), ())


def _poly_mul(K, p: list, q: list) -> list:
    """Product of coefficient lists (highest power first) over K."""
    out = [K.zero] * (len(p) + len(q) - 1)
    for i, a in enumerate(p):
        for j, b in enumerate(q):
            out[i + j] += a * b
    return out


def _explicit_roots(cs: tuple[sp.Expr, ...]) -> tuple[sp.Expr, ...]:
    """Roots of a factor of degree 1 or 2 (ascending for a positive leading coefficient)."""
    if len(cs) == 2:
        return (sp.cancel(-cs[1] / cs[0]),)
    a, b, c = cs
    disc = sp.factor(sp.expand(b * b - 4 * a * c))
    r = sp.sqrt(disc)
    mid = sp.cancel(-b / (2 * a))
    return (mid - r / (2 * a), mid + r / (2 * a))


def _solve_semi(block: Block, flist: list[tuple[tuple[sp.Expr, ...], int]]) -> BlockSolution:
    """A semi-closed block: exact factors and roots; weights are left to :class:`BlockWeight`."""
    factors = []
    for cs, mult in flist:
        deg = len(cs) - 1
        if deg <= 2:
            factors.append(Factor(cs, mult, _explicit_roots(cs), True))
        elif all(c.is_Rational for c in cs):
            poly = sp.Poly(list(cs), _x)
            factors.append(Factor(cs, mult, tuple(sp.CRootOf(poly, k) for k in range(deg)), True))
        else:
            factors.append(Factor(cs, mult, tuple(LevelRoot(k, *cs) for k in range(deg)), True))
    D = sum(f.degree for f in factors)
    return BlockSolution(block, "semi", sp.Integer(0), sp.Integer(1), tuple(factors), D, (), (), ())


def _needs_semi(flist: list[tuple[tuple[sp.Expr, ...], int]], n: int) -> bool:
    """Whether exact weights of this block would be too large (see MAX_IMPLICIT_*)."""
    minimal = sum(len(cs) - 1 for cs, _ in flist)
    return any(len(cs) >= 4 and not all(c.is_Rational for c in cs) and (
        len(cs) - 1 > MAX_IMPLICIT_DEGREE or n > MAX_IMPLICIT_BLOCK or minimal > MAX_IMPLICIT_MINIMAL
        or (len(set().union(*[c.free_symbols for c in cs])) > MAX_IMPLICIT_PARAMETERS
            and sum(len(sp.Add.make_args(sp.expand(c))) for c in cs) > MAX_IMPLICIT_TERMS))
        for cs, _ in flist)


def _solve_symbolic(block: Block, Hb: dict, budget_max: int, clock: Clock | None,
                    params: tuple[sp.Symbol, ...], semi: bool = False) -> BlockSolution:
    n = block.size
    where = f"block {block.index} ({block.label_text() or 'no labels'}, size {n})"
    # Characteristic polynomial and its factors over QQ[parameters] with FLINT; entries that
    # are not polynomials with (Gaussian) rational coefficients take sympy's domains below.
    fl = factored_charpoly(Hb, n, params, clock=clock, where=where)
    if fl is not None and (semi or n > budget_max or _needs_semi(fl, n)):
        return _solve_semi(block, fl)
    if n > budget_max:
        raise BudgetExceeded(
            f"{where} mixes several parameters and has size {n} > {budget_max}, too large for a "
            f"symbolic characteristic polynomial; give numeric values to some parameters, add a "
            f"sector, or raise Budget(max_symbolic_block=...)"
        )
    K = _unified_domain(sp.QQ, list(Hb.values()))
    M = _to_domain_matrix(Hb, (n, n), K)
    if fl is not None:
        flist = [(sp.Add(*[c * _x ** (len(cs) - 1 - i) for i, c in enumerate(cs)]), mult)
                 for cs, mult in fl]
    else:
        cp = M.charpoly()
        if clock:
            clock.check("characteristic polynomial", where)
        cp_expr = sp.expand(sum((K.to_sympy(c) * _x ** (n - i) for i, c in enumerate(cp)), sp.Integer(0)))
        content, flist = sp.factor_list(cp_expr, _x, *params) if params else sp.factor_list(cp_expr, _x)
        # factor_list may leave a monomial factor x**k inside the returned content.
        flist = list(flist)
        for atom in sp.Mul.make_args(content):
            base, e = atom.as_base_exp()
            if base.has(_x):
                flist.append((base, int(e)))
        pl = [(tuple(sp.Poly(f, _x).all_coeffs()), int(m)) for f, m in flist if f.has(_x)]
        if semi or _needs_semi(pl, n):
            return _solve_semi(block, pl)
    factors: list[Factor] = []
    kroots: list[tuple[Surd, ...] | None] = []
    mcoeffs = [K.one]
    for f, mult in flist:
        if not f.has(_x):
            continue
        P = sp.Poly(f, _x)
        deg = P.degree()
        cs = P.all_coeffs()
        kc = [K.from_sympy(c) for c in cs]
        mcoeffs = _poly_mul(K, mcoeffs, kc)
        if deg == 1:
            lam = Surd.of(K, -kc[1] / kc[0])
            kroots.append((lam,))
            factors.append(Factor(tuple(cs), int(mult), (lam.to_sympy(),), False))
        elif deg == 2:
            a, b, c = kc
            Dk = b * b - 4 * a * c
            rad = Radical(K, Dk, sp.sqrt(sp.factor(K.to_sympy(Dk))))
            lams = tuple(Surd(K, -b / (2 * a), K.convert(sg) / (2 * a), rad) for sg in (-1, 1))
            kroots.append(lams)
            factors.append(Factor(tuple(cs), int(mult), tuple(lm.to_sympy() for lm in lams), False))
        else:
            # No closed form: exact implicit roots (CRootOf for rational coefficients, LevelRoot
            # for parameter-dependent ones), evaluated numerically only where a number is asked for.
            kroots.append(None)
            roots = tuple(LevelRoot(k, *cs) for k in range(deg))
            factors.append(Factor(tuple(cs), int(mult), roots, True))
        if clock:
            clock.check("roots", where)
    lead = mcoeffs[0]
    mcoeffs = [c / lead for c in mcoeffs]
    D = len(mcoeffs) - 1
    mc = list(reversed(mcoeffs))  # low -> high
    dmc = [mc[j] * K.convert(j) for j in range(1, D + 1)]  # m'(x), low -> high
    kalphas, alphas, alpha_dens = [], [], []
    all_roots = [r for f in factors for r in f.roots]
    for f, lams in zip(factors, kroots):
        if lams is None:
            # Unreduced Lagrange-Sylvester form alpha_k = h_k(lambda) / m'(lambda), with
            # m'(lambda) = prod (lambda - mu) over the other roots of the minimal polynomial.
            # Reducing modulo f instead inverts m' in K[x]/f, whose coefficients carry the
            # discriminant of f: thousands of operations per weight for a 3 x 3 block.
            hs = [sp.Poly.from_list(mc[k + 1:][::-1], _x, domain=K).as_expr() for k in range(D)]
            nums, dens = [], []
            for lam in f.roots:
                nums.append(tuple(sp.expand(h.subs(_x, lam)) for h in hs))
                dens.append(sp.Mul(*[lam - mu for mu in all_roots if mu != lam]))
            alphas.append(tuple(nums))
            alpha_dens.append(tuple(dens))
            kalphas.append(None)
            continue
        per_root, per_root_sym = [], []
        for lam in lams:
            pw = [Surd.of(K, K.one, lam.radical)]
            for _ in range(D):
                pw.append(pw[-1] * lam)
            mprime = Surd.of(K, K.zero, lam.radical)
            for j, c in enumerate(dmc):
                mprime = mprime + pw[j].scale(c)
            inv = mprime.inverse()
            al = []
            for k in range(D):
                hk = Surd.of(K, K.zero, lam.radical)
                for j in range(k + 1, D + 1):
                    hk = hk + pw[j - k - 1].scale(mc[j])
                al.append(hk * inv)
            per_root.append(tuple(al))
            per_root_sym.append(tuple(x.to_sympy() for x in al))
        kalphas.append(tuple(per_root))
        alphas.append(tuple(per_root_sym))
        alpha_dens.append(tuple(sp.Integer(1) for _ in lams))
    powers = [DomainMatrix.eye(n, K)]
    for _ in range(1, D):
        powers.append(powers[-1] * M)
    return BlockSolution(block, "symbolic", sp.Integer(0), sp.Integer(1), tuple(factors), D,
                         tuple(powers), (), tuple(alphas), domain=K, kalphas=tuple(kalphas),
                         alpha_dens=tuple(alpha_dens))


def _solve_recoupled(b: Block, rec: Recoupling, start: int, multiplets: dict,
                     clock: Clock | None, max_symbolic_block: int, max_block: int,
                     params: tuple[sp.Symbol, ...]) -> list[tuple[BlockSolution, dict]]:
    """The total-spin sectors of block ``b`` solved (see :mod:`._recouple`).

    In each sector H = sum_g g A_g + c M with the same rational A_g for every M of a family of
    multiplets; where one parameter scales the A_g that are not multiples of 1, the family is
    solved once (characteristic polynomial, projectors) and each M copy only gets its shift.
    """
    out = []
    gauge = rec.gauges[b.index]
    for k, ms in enumerate(rec.sectors[b.index]):
        blk = Block(start + k, b.positions, b.labels + ms.labels, parent=b.index, sector=ms.sector)
        if blk.size > max_block:
            raise BudgetExceeded(
                f"block {blk.index} ({blk.label_text()}) has {blk.size} states, above the "
                f"limit {max_block} for exact solution; restrict to a sector or raise "
                f"Budget(max_block=...)")
        n = blk.size
        shift = rec.zeeman * ms.M
        rest = []
        for g, A in ms.atoms:
            c = _scalar_of(A)
            if c is None:
                rest.append((g, A))
            else:
                shift += g * c
        if len(rest) <= 1:
            hit = multiplets.get(ms.family)
            if hit is None:
                g, A = rest[0] if rest else (sp.Integer(1), flint.fmpq_mat(n, n))
                Mq = {(i, j): Fraction(int(A[i, j].p), int(A[i, j].q))
                      for i in range(n) for j in range(n) if A[i, j] != 0}
                hit = multiplets[ms.family] = _solve_scaled(blk, sp.Integer(0), g, Mq, clock)
            sol = replace(hit, block=blk, shift=sp.expand(shift), gauge=gauge)
            out.append((sol, {}))
        else:
            Hs: dict[tuple[int, int], sp.Expr] = {}
            for g, A in ms.atoms:
                for i in range(n):
                    for j in range(n):
                        if A[i, j] != 0:
                            Hs[(i, j)] = Hs.get((i, j), sp.Integer(0)) + g * _q(A[i, j])
            for i in range(n):
                Hs[(i, i)] = Hs.get((i, i), sp.Integer(0)) + rec.zeeman * ms.M
            Hs = {key: v for key, v in ((key, sp.expand(v)) for key, v in Hs.items()) if v != 0}
            sol = _solve_symbolic(blk, Hs, max_symbolic_block, clock, params)
            sol = replace(sol, gauge=gauge,
                          entries=tuple((i, j, v) for (i, j), v in sorted(Hs.items())))
            out.append((sol, Hs))
        if clock:
            clock.check("solving blocks", f"block {blk.index}")
    return out


def _scalar_of(A: flint.fmpq_mat) -> sp.Rational | None:
    """c when the square rational matrix A is c times the identity, else None."""
    n = A.nrows()
    c = A[0, 0]
    for i in range(n):
        for j in range(n):
            if A[i, j] != (c if i == j else 0):
                return None
    return _q(c)


def solve(system: System, *, clock: Clock | None = None, max_symbolic_block: int = 12,
          max_block: int = 400, symmetry: bool = True) -> Spectrum:
    """Exact spectrum of ``system`` (cached on the system).

    Parameters
    ----------
    system : System
    clock : Clock, optional
        Running budget, checked between steps.
    max_symbolic_block, max_block : int
        Size limits (see :class:`symresp.models.Budget`).
    symmetry : bool
        Split blocks further by ring translations and total spin where H has them (see
        :mod:`._symmetry`); False solves the blocks of the product basis as they are.

    Returns
    -------
    Spectrum

    Raises
    ------
    BudgetExceeded
        A block is too large or the time budget ran out (the message names the block).
    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.models import System
    >>> from symresp.spectrum import solve
    >>> J = sp.Symbol("J", positive=True)
    >>> a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    >>> sorted({p.energy for p in solve(System.build(J * (a.vec @ b.vec))).parts}, key=str)
    [-3*J/4, J/4]
    """
    key = "spectrum" if symmetry else "spectrum-plain"
    memo = system._memo.get(key)
    if memo is not None:
        return memo
    structure = decompose(system, clock)
    H = structure.hamiltonian
    local: dict[int, dict] = {b.index: {} for b in structure.blocks}
    where = structure.locations()
    for (r, c), v in H.items():
        bi, li = where[r]
        _, lj = where[c]
        local[bi][(li, lj)] = v
    rec = recouple(system, structure) if symmetry else None
    sym = find_symmetries(structure.basis, H) if symmetry and rec is None else None
    if clock and sym is not None:
        clock.check("symmetry sectors")
    sols: list[BlockSolution] = []
    matrices: list[dict] = []
    params = system.parameters
    multiplets: dict = {}
    for b in structure.blocks:
        if rec is not None:
            for sol, Hs in _solve_recoupled(b, rec, len(sols), multiplets, clock,
                                            max_symbolic_block, max_block, params):
                sols.append(sol)
                matrices.append(Hs)
            continue
        Hb = local[b.index]
        gauge = _gauge(Hb, b.size)
        if gauge is not None:
            Hb = {(i, j): sp.expand(v * gauge[j] / gauge[i]) for (i, j), v in Hb.items()}
        sectors = None
        if sym is not None and sym.names:
            sectors = split_block(b.positions, sym, Hb, gauge)
        if sectors is not None and sectors[0].V is None:
            pieces = [(Block(len(sols), b.positions, b.labels + sectors[0].labels,
                             parent=b.index), Hb)]
        elif sectors is None:
            pieces = [(Block(len(sols), b.positions, b.labels, parent=b.index), Hb)]
        else:
            n = b.size
            carried = _into_sectors(Hb, sectors, n)
            pieces = [(Block(len(sols) + k, b.positions, b.labels + sec.labels, parent=b.index,
                             sector=sec), carried[k])
                      for k, sec in enumerate(sectors)]
        for blk, Hs in pieces:
            if blk.size > max_block:
                raise BudgetExceeded(
                    f"block {blk.index} ({blk.label_text()}) has {blk.size} states, above the "
                    f"limit {max_block} for exact solution; restrict to a sector or raise "
                    f"Budget(max_block=...)"
                )
            sf = _scaled_form(Hs, blk.size)
            if sf is not None:
                sol = _solve_scaled(blk, *sf, clock)
            else:
                sol = _solve_symbolic(blk, Hs, max_symbolic_block, clock, params)
            sol = replace(sol, gauge=tuple(gauge) if gauge is not None else None,
                          entries=tuple((i, j, v) for (i, j), v in sorted(Hs.items()) if v != 0))
            sols.append(sol)
            matrices.append(Hs)
            if clock:
                clock.check("solving blocks", f"block {blk.index}")
    if any(s.kind == "semi" for s in sols):
        # One representation for every parametric implicit level of a system: a block with
        # exact (rational-in-the-roots) weights next to a semi-closed one is made semi-closed.
        for k, s in enumerate(sols):
            if s.kind == "symbolic" and any(isinstance(r, LevelRoot) for f in s.factors for r in f.roots):
                sols[k] = replace(_solve_symbolic(s.block, matrices[k], max_symbolic_block, clock,
                                                  params, semi=True),
                                  gauge=s.gauge, entries=s.entries)
    parts = []
    for s in sols:
        for fi, f in enumerate(s.factors):
            for ri, r in enumerate(f.roots):
                E = s.shift + s.scale * r
                E = sp.expand(E) if not f.implicit else E
                parts.append(Part(s.block.index, fi, ri, E, f.multiplicity, f.implicit))
    index = {(p.block, p.factor, p.root): i for i, p in enumerate(parts)}
    out = Spectrum(structure, tuple(sols), tuple(parts), index)
    system._memo[key] = out
    if rec is not None:
        system._memo["recoupled-spectrum"] = out     # read by the compact evaluator writer
    return out
