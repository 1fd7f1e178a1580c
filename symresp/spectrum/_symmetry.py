r"""Symmetry sectors inside a block: ring translations and total spin (layer: spectrum).

Owns :class:`Sector`, :func:`find_symmetries`, :func:`split_block` and :func:`transform`.
Imports sympy, python-flint and :mod:`symresp.algebra`.

A block of the product basis (a connected component of H, see :mod:`._blocks`) can still be
large: the :math:`S^z = 0` block of an 8-site ring has 70 states. Two symmetries split it
further, with exact rational arithmetic only (no roots of unity, no surds):

*Translations.* When all sites are alike (spins, or n-level sites; no fermions) and the cyclic
shift of the sites :math:`T: i \to i+1 \bmod N` (in creation order) leaves H unchanged, the
group algebra :math:`\mathbb{Q}[T]/(T^N - 1)` splits by the cyclotomic factors
:math:`\Phi_d`, :math:`d \mid N`. The idempotent :math:`e_d(x) \equiv 1 \pmod{\Phi_d}`,
:math:`\equiv 0` modulo the other factors, gives the projector :math:`e_d(T)` onto all momenta
:math:`k = 2\pi j/N` with :math:`N/\gcd(j, N) = d` at once (``k=0``, ``k=pi``, ``k=+-pi/2``, ...): a
rational matrix, which a single momentum would not be.

*Total spin.* When all sites are spins, :math:`S^2` has rational matrix elements in the
product basis (S = 1/2 and 1 always do) and commutes with H, its eigenspaces are split off with
the Lagrange projectors :math:`\prod_{S' \ne S}(S^2 - S'(S'+1))/(S(S+1) - S'(S'+1))`.

A sector is given by a basis :math:`V` (columns, n x m) of its subspace and the dual rows
:math:`V^+` (m x n) with :math:`V^+V = 1` and :math:`\sum_s V_sV_s^+ = 1`. H and every operator
are carried over as :math:`V_s^+ X V_t`; the block solver then works on the sector exactly as
on a block (its matrix need not be symmetric: projectors are polynomials in it). Blocks whose
matrix needed a diagonal rescaling to remove square roots (spins >= 3/2) are not split.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from fractions import Fraction

import flint
import sympy as sp

from ..algebra import Basis, SparseForm

__all__ = ["Sector", "Symmetries", "find_symmetries", "split_block", "transform",
           "decompose_entries"]

@dataclass(frozen=True, slots=True, eq=False)
class Sector:
    """A symmetry sector of a block: extra labels, basis V (n x m) and dual rows (m x n)."""

    labels: tuple[tuple[str, sp.Expr], ...]
    V: flint.fmpq_mat | None          # None: the whole block is this one sector
    dual: flint.fmpq_mat | None

    @property
    def size(self) -> int:
        return self.V.ncols()


@dataclass(frozen=True, slots=True, eq=False)
class Symmetries:
    """Symmetries found for a system: the translation (as a map of basis positions) and S^2."""

    translation: tuple[int, ...] | None      # position -> position of the shifted state
    order: int                               # N, the number of sites
    total_spin: dict | None                  # S^2 with exact entries (sympy), or None

    @property
    def names(self) -> tuple[str, ...]:
        out = []
        if self.translation is not None:
            out.append("k")
        if self.total_spin is not None:
            out.append("S")
        return tuple(out)


def _q(v) -> flint.fmpq:
    if isinstance(v, Fraction):
        return flint.fmpq(v.numerator, v.denominator)
    r = sp.Rational(v)
    return flint.fmpq(int(r.p), int(r.q))


def _equal(x: sp.Expr, y: sp.Expr) -> bool:
    return x == y or sp.expand(x - y) == 0


def _translation(basis: Basis, H: SparseForm) -> tuple[int, ...] | None:
    sites = basis.sites
    N = len(sites)
    if N < 3 or any(s.is_fermion for s in sites):
        return None
    if len({(s.kind, s.dim, s.spin) for s in sites}) != 1:
        return None
    index = {st: i for i, st in enumerate(basis.states)}
    perm = []
    for st in basis.states:
        shifted = tuple(st[(i - 1) % N] for i in range(N))
        j = index.get(shifted)
        if j is None:                  # the sector is not translation invariant
            return None
        perm.append(j)
    for (r, c), v in H.items():
        w = H.get((perm[r], perm[c]))
        if w is None or not _equal(v, w):
            return None
    return tuple(perm)


def _rational_sqrt(x: Fraction) -> Fraction | None:
    p, q = math.isqrt(x.numerator), math.isqrt(x.denominator)
    return Fraction(p, q) if p * p == x.numerator and q * q == x.denominator else None


def _total_spin(basis: Basis) -> dict[tuple[int, int], sp.Expr] | None:
    r"""S^2 on ``basis`` if all sites are spins (exact entries; surds for mixed or large spins).

    :math:`S^2 = \sum_i S_i(S_i+1) + 2\sum_{i<j} S^z_iS^z_j + \sum_{i \ne j} S^+_iS^-_j`
    (local index k has m = S - k). Whether H conserves it is decided block by block, in the
    block's rescaled basis, where the entries are rational (:func:`split_block`).
    """
    sites = basis.sites
    if len(sites) < 2 or any(s.kind != "spin" for s in sites):
        return None
    spins = [Fraction(int(s.spin.p), int(s.spin.q)) for s in sites]
    index = {st: i for i, st in enumerate(basis.states)}
    S2: dict[tuple[int, int], sp.Expr] = {}
    const = sum((S * (S + 1) for S in spins), Fraction(0))
    n = len(sites)
    amp: dict[Fraction, sp.Expr] = {}
    for r, st in enumerate(basis.states):
        m = [S - k for S, k in zip(spins, st)]
        total = sum(m, Fraction(0))
        d = const + total * total - sum((x * x for x in m), Fraction(0))
        S2[(r, r)] = sp.Rational(d.numerator, d.denominator)
        for i in range(n):
            if m[i] + 1 > spins[i]:
                continue
            up = spins[i] * (spins[i] + 1) - m[i] * (m[i] + 1)
            for j in range(n):
                if j == i or m[j] - 1 < -spins[j]:
                    continue
                sq = up * (spins[j] * (spins[j] + 1) - m[j] * (m[j] - 1))
                if sq not in amp:
                    root = _rational_sqrt(sq)
                    amp[sq] = (sp.Rational(root.numerator, root.denominator) if root is not None
                               else sp.sqrt(sp.Rational(sq.numerator, sq.denominator)))
                new = list(st)
                new[i] -= 1
                new[j] += 1
                c = index.get(tuple(new))
                if c is None:
                    return None
                S2[(c, r)] = S2.get((c, r), sp.Integer(0)) + amp[sq]
    return {k: v for k, v in S2.items() if v != 0}


def find_symmetries(basis: Basis, H: SparseForm) -> Symmetries:
    """Translation and total-spin symmetry of H on ``basis`` (None where absent)."""
    return Symmetries(_translation(basis, H), len(basis.sites), _total_spin(basis))


def decompose_entries(blk: dict) -> dict[sp.Expr, dict[tuple[int, int], Fraction]]:
    """Write a sparse matrix as sum_g g * R_g with scalar atoms g and rational matrices R_g."""
    out: dict[sp.Expr, dict[tuple[int, int], Fraction]] = {}
    for key, v in blk.items():
        for atom, c in sp.expand(v).as_coefficients_dict().items():
            out.setdefault(atom, {})[key] = Fraction(int(c.p), int(c.q))
    return out


def _sparse_fmpq(blk: dict, n: int, m: int) -> flint.fmpq_mat:
    M = flint.fmpq_mat(n, m)
    for (i, j), v in blk.items():
        if isinstance(v, Fraction):
            M[i, j] = flint.fmpq(v.numerator, v.denominator)
        else:
            M[i, j] = _q(v)
    return M


def transform(blk: dict, left: flint.fmpq_mat | None, right: flint.fmpq_mat | None,
              shape: tuple[int, int]) -> dict[tuple[int, int], sp.Expr]:
    """``left @ X @ right`` for a sparse symbolic X of ``shape`` (None: identity)."""
    if left is None and right is None:
        return dict(blk)
    out: dict[tuple[int, int], sp.Expr] = {}
    for atom, comp in decompose_entries(blk).items():
        X = _sparse_fmpq(comp, *shape)
        if left is not None:
            X = left * X
        if right is not None:
            X = X * right
        for i in range(X.nrows()):
            for j in range(X.ncols()):
                v = X[i, j]
                if v != 0:
                    out[(i, j)] = out.get((i, j), sp.Integer(0)) + atom * sp.Rational(int(v.p), int(v.q))
    return {k: v for k, v in out.items() if v != 0}


# ----------------------------------------------------------------------------- projectors
@functools.lru_cache(maxsize=32)
def _cyclotomic_idempotents(N: int) -> tuple[tuple[int, tuple[Fraction, ...]], ...]:
    """(d, coefficients of e_d(x) low -> high) for each d | N (a pure function of N, cached)."""
    x = sp.Symbol("x")
    full = sp.Poly(x**N - 1, x, domain=sp.QQ)
    out = []
    for d in sorted(k for k in range(1, N + 1) if N % k == 0):
        phi = sp.Poly(sp.cyclotomic_poly(d, x), x, domain=sp.QQ)
        rest = full.exquo(phi)
        inv = rest.rem(phi).invert(phi)
        e = (rest * inv).rem(full)
        coeffs = tuple(Fraction(int(c.p), int(c.q)) for c in reversed(e.all_coeffs()))
        out.append((d, coeffs))
    return tuple(out)


def _momentum_label(d: int, N: int) -> sp.Expr:
    """The momenta 2 pi j / N of order d, as a readable symbol such as +-pi/2."""
    js = [j for j in range(N) if N // math.gcd(j, N) == d]
    ks = sorted({sp.Rational(2 * j, N) if 2 * j <= N else sp.Rational(2 * j, N) - 2 for j in js},
                key=lambda r: (abs(r), r))
    text = []
    seen = set()
    for k in ks:
        if k in seen:
            continue
        if -k in ks and k != 0 and -k not in seen:
            text.append("+-" + _pi_text(abs(k)))
            seen |= {k, -k}
        else:
            text.append(_pi_text(k))
            seen.add(k)
    return sp.Symbol(",".join(text))


def _pi_text(r: sp.Rational) -> str:
    if r == 0:
        return "0"
    num = "" if abs(r.p) == 1 else str(abs(r.p))
    sign = "-" if r < 0 else ""
    return f"{sign}{num}pi" + ("" if r.q == 1 else f"/{r.q}")


def _column_basis(P: flint.fmpq_mat) -> tuple[flint.fmpq_mat, flint.fmpq_mat] | None:
    """(V, dual) for a projector P: V spans its range, dual = (V^T V)^-1 V^T P."""
    R, rank = P.transpose().rref()
    if rank == 0:
        return None
    n = P.nrows()
    V = flint.fmpq_mat(n, rank, [R[j, i] for i in range(n) for j in range(rank)])
    Vt = V.transpose()
    dual = (Vt * V).inv() * Vt * P
    return V, dual


def _polynomial_of(M: flint.fmpq_mat, coeffs: tuple[Fraction, ...]) -> flint.fmpq_mat:
    n = M.nrows()
    out = flint.fmpq_mat(n, n)
    for c in reversed(coeffs):
        out = out * M
        if c:
            for i in range(n):
                out[i, i] += flint.fmpq(c.numerator, c.denominator)
    return out


def _gauged(value: sp.Expr, gauge, i: int, j: int) -> Fraction | None:
    """Entry (i, j) of D^-1 X D for the block's diagonal rescaling D, if rational."""
    v = value if gauge is None else sp.radsimp(value * gauge[j] / gauge[i])
    if not v.is_Rational:
        return None
    return Fraction(int(v.p), int(v.q))


def _commutes(S: flint.fmpq_mat, Hb: dict) -> bool:
    """[H_block, S] = 0, term by term of the block matrix (exact)."""
    n = S.nrows()
    for comp in decompose_entries(Hb).values():
        R = _sparse_fmpq(comp, n, n)
        if R * S != S * R:
            return False
    return True


def split_block(positions: tuple[int, ...], sym: Symmetries, Hb: dict,
                gauge: list | None = None) -> list[Sector] | None:
    """Sectors of the block on ``positions``; None when no symmetry splits or labels it.

    ``Hb`` is the block matrix in the block's local basis, rescaled by ``gauge`` (the
    diagonal D of the solver, or None): the symmetry operators are taken in the same basis,
    D^-1 X D, and used only where they are rational there.
    """
    n = len(positions)
    local = {p: i for i, p in enumerate(positions)}
    sectors: list[tuple[tuple, flint.fmpq_mat, flint.fmpq_mat]] = []
    identity = flint.fmpq_mat(n, n)
    for i in range(n):
        identity[i, i] = 1
    sectors.append(((), identity, identity))
    T = None
    if sym.translation is not None and all(sym.translation[p] in local for p in positions):
        T = flint.fmpq_mat(n, n)
        for p in positions:
            i, j = local[sym.translation[p]], local[p]
            v = _gauged(sp.Integer(1), gauge, i, j)
            if v is None:
                T = None
                break
            T[i, j] = flint.fmpq(v.numerator, v.denominator)
    if T is not None:
        new = []
        for d, e in _cyclotomic_idempotents(sym.order):
            vd = _column_basis(_polynomial_of(T, e))
            if vd is not None:
                new.append(((("k", _momentum_label(d, sym.order)),), *vd))
        sectors = new
    S2 = None
    if sym.total_spin is not None:
        S2 = flint.fmpq_mat(n, n)
        for (r, c), v in sym.total_spin.items():
            if (r in local) != (c in local):
                S2 = None                  # S^2 leaves the block: not a label of its states
                break
            if r in local:
                q = _gauged(v, gauge, local[r], local[c])
                if q is None:
                    S2 = None
                    break
                S2[local[r], local[c]] = flint.fmpq(q.numerator, q.denominator)
        if S2 is not None and not _commutes(S2, Hb):
            S2 = None                      # H does not conserve the total spin here
    if S2 is not None:
        new = []
        for labels, V, dual in sectors:
            S2s = dual * S2 * V
            values = _eigenvalues(S2s)
            if values is None:
                new.append((labels, V, dual))
                continue
            if len(values) == 1:
                new.append((labels + (("S", _spin_of(values[0])),), V, dual))
                continue
            m = S2s.nrows()
            for c in values:
                Q = flint.fmpq_mat(m, m)
                for i in range(m):
                    Q[i, i] = 1
                for c2 in values:
                    if c2 != c:
                        gap = c - c2
                        Q = Q * (S2s - _scalar(m, c2)) * flint.fmpq(gap.denominator, gap.numerator)
                wd = _column_basis(Q)
                if wd is not None:
                    W, Wd = wd
                    new.append((labels + (("S", _spin_of(c)),), V * W, Wd * dual))
        sectors = new
    if not sectors or not sectors[0][0]:
        return None
    if len(sectors) == 1:
        return [Sector(sectors[0][0], None, None)]     # labels only: the block is one sector
    return [Sector(labels, V, dual) for labels, V, dual in sectors]


def _scalar(m: int, c: Fraction) -> flint.fmpq_mat:
    out = flint.fmpq_mat(m, m)
    for i in range(m):
        out[i, i] = flint.fmpq(c.numerator, c.denominator)
    return out


def _eigenvalues(M: flint.fmpq_mat) -> list[Fraction] | None:
    """The distinct eigenvalues of M, ascending, if all are rational (S^2: always)."""
    out = []
    for f, _ in M.charpoly().factor()[1]:
        if f.degree() != 1:
            return None
        b, a = f.coeffs()
        r = -flint.fmpq(b) / flint.fmpq(a)
        out.append(Fraction(int(r.p), int(r.q)))
    return sorted(set(out))


def _spin_of(c: Fraction) -> sp.Rational:
    """S from S(S+1) = c."""
    S = (sp.sqrt(1 + 4 * sp.Rational(c.numerator, c.denominator)) - 1) / 2
    return sp.nsimplify(S)
