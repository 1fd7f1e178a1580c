r"""Total-spin (recoupled) sectors of isotropic spin clusters (layer: spectrum).

Owns :class:`Recoupling`, :class:`MultipletSector` and :func:`recouple`. Imports numpy,
sympy, python-flint, :mod:`symresp.algebra`, :mod:`symresp.models` and the sector type of
:mod:`._symmetry`.

When every site is a spin and

.. math:: H = H_0 + c\,S^z, \qquad [H_0, S^+] = [H_0, S^-] = [H_0, S^z] = 0

(total spin operators; isotropic exchange of spins of any sizes, with or without a field
along z, whose coefficient c may be any expression in the parameters), the states of fixed
total spin :math:`S_T` and :math:`M` are eigenspaces that H does not mix. They are built
here with exact rational arithmetic only, without projectors of :math:`S^2`:

*Rational basis.* The states :math:`e_k = (S^-)^k|S\rangle` of each site (norm squared
:math:`\prod_{i \le k}(S(S+1) - m_i(m_i+1))`, an integer, with :math:`m_i = S - i`) make
:math:`S^-` a matrix of ones, :math:`S^+` a matrix of integers :math:`k(2S - k + 1)`, and H a
rational matrix in each parameter. This is the diagonal rescaling D of the block solver
(:mod:`._solve`), known in closed form here, applied to each monomial of H once.

*Highest-weight states.* Inside the block of total :math:`M = S_T`, the kernel of
:math:`S^+` (a rational null space) holds exactly one state of every multiplet of total spin
:math:`S_T`. :math:`H_0` maps that kernel into itself, so its matrix there, in any rational
basis, has the multiplet energies as eigenvalues; lattice translations, which commute with
:math:`S^\pm`, split the kernel further (cyclotomic idempotents, as in :mod:`._symmetry`).

*The other M.* :math:`V_M = (S^-)^{S_T - M} V_{S_T}` is a basis of the copy of the same
multiplets at M, and since :math:`H_0` commutes with :math:`S^-`, the matrix of :math:`H_0`
there is the same rational matrix: a multiplet's energies are found once and every copy is
shifted by :math:`cM`. The dual rows :math:`(V^TGV)^{-1}V^TG`, with G the diagonal Gram
matrix of the rational basis, satisfy :math:`V^+V = 1` and annihilate every other sector
(different :math:`S_T`, M or momentum are orthogonal), so the sectors of a block are complete
and operators that change :math:`S_T` (a single site's :math:`S^x`) are carried between them
as :math:`V_s^+ X V_t` like any other symmetry sector.

Where these conditions fail (an anisotropy, a field along x, a sector restriction, sites
that are not spins, blocks finer than the M eigenspaces) :func:`recouple` returns None and
the block solver uses the general sectors of :mod:`._symmetry`. See docs/engine.md.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import flint
import numpy as np
import sympy as sp

from ..algebra import SPIN
from ..models import System, checkpoint
from ._blocks import BlockStructure
from ._symmetry import Sector, _column_basis, _cyclotomic_idempotents, _momentum_label, _polynomial_of

__all__ = ["Recoupling", "MultipletSector", "recouple"]


@dataclass(frozen=True, slots=True, eq=False)
class MultipletSector:
    r"""One sector of fixed momentum class, total spin :math:`S_T` and M inside a block.

    ``atoms`` is :math:`H_0` in the sector as pairs (parameter monomial g, rational m x m
    matrix :math:`A_g`), the same objects for every M of the multiplets: H restricted to the
    sector is :math:`\sum_g g A_g + c M`. ``family`` identifies the multiplets (momentum
    class, :math:`S_T`) across M.
    """

    labels: tuple[tuple[str, sp.Expr], ...]
    sector: Sector
    atoms: tuple[tuple[sp.Expr, flint.fmpq_mat], ...]
    M: sp.Rational
    family: tuple


@dataclass(frozen=True, slots=True, eq=False)
class Recoupling:
    """The total-spin sectors of every block, the Zeeman coefficient c and the rescaling."""

    zeeman: sp.Expr
    gauges: dict           # block index -> tuple of sympy norms (the diagonal D)
    sectors: dict          # block index -> tuple of MultipletSector


# ------------------------------------------------------------------ rational matrices
def _site_norms(S: Fraction, dim: int) -> list[Fraction]:
    """Squared norms of e_k = (S^-)^k |S> on one site."""
    out = [Fraction(1)]
    for k in range(1, dim):
        m = S - (k - 1)                       # e_k = S^- e_{k-1}, from m to m - 1
        out.append(out[-1] * (S * (S + 1) - m * (m - 1)))
    return out


def _is_monomial_atom(atom: sp.Expr) -> bool:
    """A product of parameters and functions of them (or 1), free of numbers such as
    sqrt(2) or I, which would make the matrix irrational."""
    return atom == 1 or all(not f.is_number for f in sp.Mul.make_args(atom))


class _Rational:
    """Sparse rational matrix on the product basis: integers {row: {col: int}} over one
    common denominator ``den`` (exact; integer arithmetic is what makes the commutators
    cheap)."""

    __slots__ = ("rows", "den")

    def __init__(self, den: int = 1) -> None:
        self.rows: dict[int, dict[int, int]] = {}
        self.den = den

    def add(self, r: int, c: int, v: int) -> None:
        row = self.rows.setdefault(r, {})
        w = row.get(c, 0) + v
        if w:
            row[c] = w
        else:
            row.pop(c, None)

    def items(self):
        for r, row in self.rows.items():
            for c, v in row.items():
                yield r, c, v

    def get(self, r: int, c: int) -> int:
        return self.rows.get(r, {}).get(c, 0)

    def is_zero(self) -> bool:
        return not any(self.rows.values())


def _commutator(R: _Rational, X: _Rational, Xcols: dict[int, list[tuple[int, int]]]
                ) -> dict[tuple[int, int], int]:
    """den_R den_X [R, X] as integers; ``Xcols`` is X by columns (col -> [(row, value)])."""
    out: dict[tuple[int, int], int] = {}
    get = out.get
    for r, row in R.rows.items():
        xc = Xcols.get(r, ())
        for k, v in row.items():
            for c, w in X.rows.get(k, {}).items():      # (R X)[r, c] += R[r, k] X[k, c]
                out[(r, c)] = get((r, c), 0) + v * w
            for q, w in xc:                             # (X R)[q, k] += X[q, r] R[r, k]
                out[(q, k)] = get((q, k), 0) - w * v
    return {key: v for key, v in out.items() if v}


def _by_columns(X: _Rational) -> dict[int, list[tuple[int, int]]]:
    out: dict[int, list[tuple[int, int]]] = {}
    for r, c, v in X.items():
        out.setdefault(c, []).append((r, v))
    return out


def _block_matrix(R: _Rational, rows: list[int], cols: list[int]) -> flint.fmpq_mat:
    """R restricted to the given global rows and columns, as a dense rational matrix."""
    where = {p: j for j, p in enumerate(cols)}
    out = flint.fmpq_mat(len(rows), len(cols))
    for i, p in enumerate(rows):
        for c, v in R.rows.get(p, {}).items():
            j = where.get(c)
            if j is not None:
                out[i, j] = flint.fmpq(v, R.den)
    return out


def _null_basis(A: flint.fmpq_mat) -> tuple[flint.fmpq_mat, list[int]]:
    """Columns spanning {x : A x = 0}, each with one free coordinate 1 and the others 0 at
    the free positions (returned too: the coordinates of a vector of the span are its entries
    there)."""
    n = A.ncols()
    R, rank = A.rref()
    pivots: list[int] = []
    row = 0
    for j in range(n):
        if row < rank and R[row, j] != 0:
            pivots.append(j)
            row += 1
    free = [j for j in range(n) if j not in set(pivots)]
    K = flint.fmpq_mat(n, len(free))
    for col, f in enumerate(free):
        K[f, col] = 1
        for r, pj in enumerate(pivots):
            K[pj, col] = -R[r, f]
    return K, free


# ------------------------------------------------------------------ detection
def recouple(system: System, structure: BlockStructure) -> Recoupling | None:
    """The total-spin sectors of every block, or None where H does not have the form
    :math:`H_0 + c S^z` with :math:`H_0` commuting with the total spin (see the module
    docstring); the decision is exact (commutators of rational matrices)."""
    basis = structure.basis
    sites = basis.sites
    H = system.hamiltonian
    if system.sector or len(sites) < 2 or any(s.kind != SPIN for s in sites):
        return None
    dims = [s.dim for s in sites]
    N = math.prod(dims)
    if basis.dimension != N or basis.states[-1] != tuple(d - 1 for d in dims):
        return None
    strides = [math.prod(dims[p + 1:]) for p in range(len(sites))]
    spins = [Fraction(int(s.spin.p), int(s.spin.q)) for s in sites]
    K = np.array(basis.states, dtype=np.int64).reshape(N, len(sites))
    Mval = [sum(spins, Fraction(0)) - int(x) for x in K.sum(axis=1)]
    # Every block must be a whole eigenspace of the total S^z.
    block_M: dict[int, Fraction] = {}
    seen: set[Fraction] = set()
    for b in structure.blocks:
        M = Mval[b.positions[0]]
        if M in seen:
            return None
        seen.add(M)
        block_M[b.index] = M
    norms = [_site_norms(S, d) for S, d in zip(spins, dims)]
    where = {s: p for p, s in enumerate(sites)}
    # H in the rational basis, one sparse matrix per parameter monomial.
    found: dict[sp.Expr, list[tuple[list[int], int, Fraction]]] = {}
    for mono, coeff in H.terms:
        checkpoint("recoupling: the Hamiltonian in the rational basis")
        ratio = Fraction(1)
        mask = np.ones(N, dtype=bool)
        shift = 0
        used: set[int] = set()
        for site, key in mono:
            p = where[site]
            if key[0] != "u" or p in used:
                return None
            used.add(p)
            _, i, j = key
            ratio *= norms[p][j] / norms[p][i]
            mask &= K[:, p] == j
            shift += (i - j) * strides[p]
        g = sp.expand(coeff * sp.sqrt(sp.Rational(ratio.numerator, ratio.denominator)))
        cols = np.flatnonzero(mask).tolist()
        for atom, c in g.as_coefficients_dict().items():
            if not c.is_Rational or not _is_monomial_atom(atom):
                return None
            found.setdefault(atom, []).append((cols, shift, Fraction(int(c.p), int(c.q))))
    atoms: dict[sp.Expr, _Rational] = {}
    for atom, terms in found.items():
        R = _Rational(math.lcm(*(v.denominator for _, _, v in terms)))
        for cols, shift, v in terms:
            iv = int(v * R.den)
            for col in cols:
                R.add(col + shift, col, iv)
        if not R.is_zero():
            atoms[atom] = R
    # Total S^+ and S^- in the same basis (integers).
    Sp, Sm = _Rational(), _Rational()
    for p, (S, d) in enumerate(zip(spins, dims)):
        col = K[:, p]
        for st in np.flatnonzero(col > 0).tolist():
            k = int(col[st])
            Sp.add(st - strides[p], st, int(k * (2 * S - k + 1)))
        for st in np.flatnonzero(col < d - 1).tolist():
            Sm.add(st + strides[p], st, 1)
    Sp_cols, Sm_cols = _by_columns(Sp), _by_columns(Sm)
    ref = next(iter(Sp.items()))
    zeeman = sp.Integer(0)
    H0: dict[sp.Expr, _Rational] = {}
    two_M = [int(2 * x) for x in Mval]
    for g, R in atoms.items():
        # [R, S^+] = c_g S^+ and [R, S^-] = -c_g S^- (then R - c_g S^z commutes with the
        # total spin), and R keeps S^z.
        checkpoint("recoupling: commutators with the total spin")
        if any(two_M[r] != two_M[c] for r, c, _ in R.items()):
            return None
        C = _commutator(R, Sp, Sp_cols)
        cg = Fraction(C.get((ref[0], ref[1]), 0), ref[2] * R.den)
        if any(Sp.get(r, c) == 0 for r, c in C) or any(Fraction(C.get((r, c), 0), R.den) != cg * v for r, c, v in Sp.items()):
            return None
        C = _commutator(R, Sm, Sm_cols)
        if any(Fraction(C.get((r, c), 0), R.den) != -cg * v for r, c, v in Sm.items()) or \
                any(Sm.get(r, c) == 0 for r, c in C):
            return None
        zeeman += g * sp.Rational(cg.numerator, cg.denominator)
        den = math.lcm(R.den, cg.denominator * 2)
        R0 = _Rational(den)
        for r, c, v in R.items():
            R0.add(r, c, v * (den // R.den))
        if cg:
            for r in range(N):
                R0.add(r, r, int(-cg * Mval[r] * den))
        if not R0.is_zero():
            H0[g] = R0
    return _sectors(structure, sites, spins, dims, strides, K, Mval, norms, block_M, H0,
                    Sp, Sm, zeeman)


def _translation(sites, dims, strides, K: np.ndarray, H0: dict) -> list[int] | None:
    """The cyclic shift of alike sites as a permutation of states, if H0 is invariant."""
    n = len(sites)
    if n < 3 or len({(s.dim, s.spin) for s in sites}) != 1:
        return None
    perm = (np.roll(K, 1, axis=1) @ np.array(strides, dtype=np.int64)).tolist()
    for R in H0.values():
        for r, c, v in R.items():
            if R.get(perm[r], perm[c]) != v:
                return None
    return perm


def _sectors(structure, sites, spins, dims, strides, K, Mval, norms, block_M, H0, Sp, Sm,
             zeeman) -> Recoupling:
    by_M = {M: b for b, M in block_M.items()}
    positions = {b.index: list(b.positions) for b in structure.blocks}
    perm = _translation(sites, dims, strides, K, H0)
    order = len(sites)
    state_norm = [math.prod((norms[p][int(k)] for p, k in enumerate(row)), start=Fraction(1))
                  for row in K.tolist()]
    lowering: dict[Fraction, flint.fmpq_mat] = {}

    def lower(M: Fraction) -> flint.fmpq_mat:
        """S^- from the block of M to that of M - 1."""
        if M not in lowering:
            lowering[M] = _block_matrix(Sm, positions[by_M[M - 1]], positions[by_M[M]])
        return lowering[M]

    gauges = {}
    for b in structure.blocks:
        gauges[b.index] = tuple(sp.sqrt(sp.Rational(state_norm[p].numerator,
                                                    state_norm[p].denominator))
                                for p in b.positions)
    out: dict[int, list[MultipletSector]] = {b.index: [] for b in structure.blocks}
    for b in structure.blocks:
        S_T = block_M[b.index]
        if S_T < 0:
            continue
        checkpoint("recoupling: highest-weight states", f"S={S_T}")
        rows = positions[b.index]
        n = len(rows)
        if S_T + 1 in by_M:
            Kb, free = _null_basis(_block_matrix(Sp, positions[by_M[S_T + 1]], rows))
        else:
            Kb = flint.fmpq_mat(n, n, [int(i == j) for i in range(n) for j in range(n)])
            free = list(range(n))
        r = len(free)
        if r == 0:
            continue
        pieces: list[tuple[tuple, flint.fmpq_mat, list[int]]] = []
        if perm is not None:
            local = {p: i for i, p in enumerate(rows)}
            inv = [0] * len(perm)
            for i, j in enumerate(perm):
                inv[j] = i
            TK = flint.fmpq_mat(r, r)
            for i, f in enumerate(free):
                src = local[inv[rows[f]]]
                for j in range(r):
                    TK[i, j] = Kb[src, j]
            for d, e in _cyclotomic_idempotents(order):
                checkpoint("recoupling: momentum sectors", f"S={S_T}")
                vd = _column_basis(_polynomial_of(TK, e))
                if vd is None:
                    continue
                W = vd[0]
                piv = [next(i for i in range(r) if W[i, j] != 0) for j in range(W.ncols())]
                pieces.append(((("k", _momentum_label(d, order)),), Kb * W, [free[i] for i in piv]))
        else:
            pieces.append(((), Kb, free))
        S_label = sp.Rational(S_T.numerator, S_T.denominator)
        for labels, V, coords in pieces:
            m = V.ncols()
            mats = []
            for g, R in H0.items():
                X = _block_matrix(R, rows, rows) * V
                A = flint.fmpq_mat(m, m, [X[i, j] for i in coords for j in range(m)])
                if any(x != 0 for x in A.entries()):
                    mats.append((g, A))
            family = (labels, S_label)
            VM, M = V, S_T
            while True:
                bi = by_M[M]
                out[bi].append(MultipletSector(labels + (("S", S_label),),
                                               Sector(labels + (("S", S_label),), VM,
                                                      _dual(VM, positions[bi], state_norm)),
                                               tuple(mats), sp.Rational(M.numerator, M.denominator),
                                               family))
                if M == -S_T:
                    break
                checkpoint("recoupling: lowering multiplets", f"S={S_T}, M={M}")
                VM = lower(M) * VM
                M -= 1
    return Recoupling(zeeman, gauges, {k: tuple(v) for k, v in out.items()})


def _dual(V: flint.fmpq_mat, rows: list[int], state_norm: list[Fraction]) -> flint.fmpq_mat:
    """(V^T G V)^-1 V^T G with G the diagonal Gram matrix of the rational basis."""
    n, m = V.nrows(), V.ncols()
    g = [flint.fmpq(state_norm[p].numerator, state_norm[p].denominator) for p in rows]
    ent = V.transpose().entries()
    VtG = flint.fmpq_mat(m, n, [ent[i * n + j] * g[j] for i in range(m) for j in range(n)])
    return (VtG * V).inv() * VtG
