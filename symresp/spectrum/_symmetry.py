r"""Symmetry sectors inside a block: translations, reflections, spin flip, particle-hole and
total spin (layer: spectrum).

Owns :class:`Sector`, :class:`Operation`, :func:`find_symmetries`, :func:`split_block`,
:func:`transform` and the Fock-space actions :func:`mode_permutation` and
:func:`particle_hole`. Imports sympy, python-flint and :mod:`symresp.algebra`.

A block of the product basis (a connected component of H, see :mod:`._blocks`) can still be
large: the :math:`S^z = 0` block of an 8-site ring has 70 states. Symmetries split it further,
with exact rational arithmetic only (no roots of unity, no surds):

*Translations.* When all sites are alike (spins, or n-level sites) or all are fermion
orbitals, and the cyclic shift :math:`T: i \to i+1 \bmod N` (in creation order) leaves H
unchanged, the group algebra :math:`\mathbb{Q}[T]/(T^N - 1)` splits by the cyclotomic factors
:math:`\Phi_d`, :math:`d \mid N`. The idempotent :math:`e_d(x) \equiv 1 \pmod{\Phi_d}`,
:math:`\equiv 0` modulo the other factors, gives the projector :math:`e_d(T)` onto all momenta
:math:`k = 2\pi j/N` with :math:`N/\gcd(j, N) = d` at once (``k=0``, ``k=pi``, ``k=+-pi/2``, ...): a
rational matrix, which a single momentum would not be.

*Involutions* (fermion lattices): the reflection, the spin flip and the particle-hole map
split each sector by :math:`(1 \pm U)/2`. On Fock states they act as signed permutations:
the Jordan-Wigner sign of reordering the created modes (:func:`mode_permutation`,
:func:`particle_hole`).

*Total spin.* When all sites are spins (or spinful fermion orbitals), :math:`S^2` has rational
matrix elements in the block's basis and commutes with H there, its eigenspaces are split off
with the Lagrange projectors :math:`\prod_{S' \ne S}(S^2 - S'(S'+1))/(S(S+1) - S'(S'+1))`.

A sector is given by a basis :math:`V` (columns, n x m) of its subspace and the dual rows
:math:`V^+` (m x n) with :math:`V^+V = 1` and :math:`\sum_s V_sV_s^+ = 1`. H and every operator
are carried over as :math:`V_s^+ X V_t`; the block solver then works on the sector exactly as
on a block (its matrix need not be symmetric: projectors are polynomials in it). Operators of
blocks whose matrix needed a diagonal rescaling D (spins >= 3/2) are taken as
:math:`D^{-1} X D` and used only where that is rational. See docs/engine.md, section 2.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from fractions import Fraction

import flint
import sympy as sp

from ..algebra import SPIN, Basis, Operator, SparseForm, dagger, sparse_form
from ..models import checkpoint

__all__ = ["Sector", "Operation", "Symmetries", "SECTOR_NAMES", "find_symmetries", "split_block",
           "transform_blocks", "transform", "decompose_entries", "fermion_orbitals", "mode_permutation", "particle_hole"]

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
class Operation:
    r"""A symmetry candidate that maps basis states to basis states with a sign.

    :math:`U|s\rangle = \mathrm{sign}[s]\,|\mathrm{perm}[s]\rangle`; ``perm[s]`` is -1 where
    the image lies outside the basis (a sector); such an operation is used only on blocks it
    maps into themselves. ``order`` is N for a translation (its powers give the momentum
    sectors) and 2 for an involution (sectors :math:`U = \pm 1`). Whether U commutes with H is
    decided block by block (:func:`split_block`), so an operation that is a symmetry of some
    blocks only (spin flip at zero magnetisation in a field) is still used there.
    """

    name: str                       # sector label: "k", "R", "F", "C"
    perm: tuple[int, ...]
    sign: tuple[int, ...]
    order: int
    checked: bool = False           # True: already known to commute with the whole H


@dataclass(frozen=True, slots=True, eq=False)
class Symmetries:
    """Symmetries found for a system: translations, involutions and S^2."""

    operations: tuple[Operation, ...]        # at most one named "k", first
    order: int                               # N, the number of sites (orbitals) of a ring
    total_spin: dict | None                  # S^2 with exact entries (sympy), or None

    @property
    def translation(self) -> Operation | None:
        """The cyclic shift by one site (orbital), if H may have it."""
        for op in self.operations:
            if op.name == "k":
                return op
        return None

    @property
    def names(self) -> tuple[str, ...]:
        out = []
        for op in self.operations:
            if op.name not in out:
                out.append(op.name)
        if self.total_spin is not None:
            out.append("S")
        return tuple(out)


#: Readable names of the sector labels (``Spectrum.describe`` and the summaries).
SECTOR_NAMES = {"k": "k (ring translation)", "R": "R (reflection)", "S": "S (total spin)",
                "F": "F (spin flip)", "C": "C (particle-hole)"}


def _q(v) -> flint.fmpq:
    if isinstance(v, Fraction):
        return flint.fmpq(v.numerator, v.denominator)
    r = sp.Rational(v)
    return flint.fmpq(int(r.p), int(r.q))


def _equal(x: sp.Expr, y: sp.Expr) -> bool:
    return x == y or sp.expand(x - y) == 0


def _translation(basis: Basis, H: SparseForm) -> Operation | None:
    """The cyclic shift of identical spin or n-level sites, if it leaves H unchanged."""
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
    op = Operation("k", tuple(perm), (1,) * len(perm), N, checked=True)
    return op if _leaves_invariant(op, H) else None


def _leaves_invariant(op: Operation, H: SparseForm) -> bool:
    """U H U^-1 = H on the whole basis (U maps the basis onto itself)."""
    perm, sign = op.perm, op.sign
    if any(p < 0 for p in perm):
        return False
    for (r, c), v in H.items():
        w = H.get((perm[r], perm[c]))
        if w is None or not _equal(v * sign[r] * sign[c], w):
            return False
    return True


# ------------------------------------------------------------------ fermion lattices
def fermion_orbitals(sites) -> tuple[tuple[int, ...], ...] | None:
    """Orbitals of an all-fermion model: (position of up, position of down) per spinful
    orbital (modes named ``X_up``, ``X_dn``), or (position,) per spinless mode; None when the
    model has other sites or mixes the two kinds. Orbitals are ordered by creation."""
    if not sites or not all(s.is_fermion for s in sites):
        return None
    ups = {s.name[:-3]: i for i, s in enumerate(sites) if s.name.endswith("_up")}
    dns = {s.name[:-3]: i for i, s in enumerate(sites) if s.name.endswith("_dn")}
    if not ups and not dns:
        return tuple((i,) for i in range(len(sites)))
    if set(ups) != set(dns) or len(ups) + len(dns) != len(sites):
        return None
    return tuple((ups[b], dns[b]) for b in sorted(ups, key=lambda b: min(ups[b], dns[b])))


def mode_permutation(state: tuple[int, ...], image: tuple[int, ...]) -> tuple[tuple[int, ...], int]:
    r"""Image of a Fock state under the mode map :math:`c_p^\dagger \to c_{\pi(p)}^\dagger`.

    :math:`|n\rangle = (c_0^\dagger)^{n_0}(c_1^\dagger)^{n_1}\cdots|0\rangle` (Jordan-Wigner
    order = creation order) goes to :math:`\prod_{p:\,n_p=1} c^\dagger_{\pi(p)}|0\rangle`,
    which is the state with the modes :math:`\pi(p)` occupied times the sign of the
    permutation that sorts them into creation order (one -1 per inversion). With
    :math:`U|0\rangle = |0\rangle` this is a group action: :math:`U_\sigma U_\tau =
    U_{\sigma\tau}`, so the N-th power of a translation is exactly 1.
    """
    targets = [image[p] for p, n in enumerate(state) if n]
    inversions = sum(1 for i in range(len(targets)) for j in range(i + 1, len(targets))
                     if targets[i] > targets[j])
    new = [0] * len(state)
    for q in targets:
        new[q] = 1
    return tuple(new), -1 if inversions % 2 else 1


def particle_hole(state: tuple[int, ...], eps: tuple[int, ...]) -> tuple[tuple[int, ...], int]:
    r"""Image of a Fock state under :math:`U c_p^\dagger U^{-1} = \epsilon_p c_p`,
    :math:`U|0\rangle = c_0^\dagger c_1^\dagger\cdots|0\rangle` (the filled state).

    :math:`U|n\rangle = \prod_{p:\,n_p=1}(\epsilon_p c_p)\,|\mathrm{full}\rangle`: the
    annihilators act right to left, each with the Jordan-Wigner sign of the occupied modes
    before it.
    """
    st = [1] * len(state)
    sign = 1
    for p in reversed([p for p, n in enumerate(state) if n]):
        if sum(st[:p]) % 2:
            sign = -sign
        st[p] = 0
        sign *= eps[p]
    return tuple(st), sign


def _fermion_operations(basis: Basis) -> tuple[Operation, ...]:
    """Candidate lattice operations of an all-fermion model (checked per block later).

    Orbitals in creation order are taken as the sites of a ring or chain: the translation
    i -> i+1 mod L, the reflections i -> L-1-i (chains and rings) and i -> -i mod L (rings),
    the spin flip up <-> down, and the particle-hole map c -> (-1)^i c^dagger (bipartite
    lattices; alone, and combined with the spin flip, which keeps S^z != 0 blocks at half
    filling in place). Each acts on Fock states with its Jordan-Wigner sign.
    """
    orbitals = fermion_orbitals(basis.sites)
    if orbitals is None:
        return ()
    L = len(orbitals)
    M = len(basis.sites)
    spinful = len(orbitals[0]) == 2
    index = {st: i for i, st in enumerate(basis.states)}

    def of_orbitals(sigma, flip: bool = False) -> tuple[int, ...]:
        image = [0] * M
        for i, modes in enumerate(orbitals):
            for f, p in enumerate(modes):
                image[p] = orbitals[sigma(i)][(1 - f) if flip else f]
        return tuple(image)

    def action(name: str, order: int, fn) -> Operation | None:
        perm, sign = [], []
        for st in basis.states:
            new, s = fn(st)
            perm.append(index.get(new, -1))
            sign.append(s)
        if all(p == i and s == 1 for i, (p, s) in enumerate(zip(perm, sign))):
            return None                        # the identity (e.g. a reflection of 1 orbital)
        return Operation(name, tuple(perm), tuple(sign), order)

    cands: list[Operation | None] = []
    if L >= 3:
        shift = of_orbitals(lambda i: (i + 1) % L)
        cands.append(action("k", L, lambda st: mode_permutation(st, shift)))
    if L >= 2:
        for sigma in (lambda i: L - 1 - i, lambda i: (-i) % L):
            image = of_orbitals(sigma)
            cands.append(action("R", 2, lambda st, im=image: mode_permutation(st, im)))
    if spinful:
        flip = of_orbitals(lambda i: i, flip=True)
        cands.append(action("F", 2, lambda st: mode_permutation(st, flip)))
    eps = [0] * M
    for i, modes in enumerate(orbitals):
        for p in modes:
            eps[p] = -1 if i % 2 else 1
    eps_t = tuple(eps)
    cands.append(action("C", 2, lambda st: particle_hole(st, eps_t)))
    if spinful:
        flip = of_orbitals(lambda i: i, flip=True)

        def ph_flip(st):
            mid, s1 = mode_permutation(st, flip)
            new, s2 = particle_hole(mid, eps_t)
            return new, s1 * s2

        cands.append(action("C", 2, ph_flip))
    return tuple(c for c in cands if c is not None)


def _rational_sqrt(x: Fraction) -> Fraction | None:
    p, q = math.isqrt(x.numerator), math.isqrt(x.denominator)
    return Fraction(p, q) if p * p == x.numerator and q * q == x.denominator else None


def _total_spin(basis: Basis) -> dict[tuple[int, int], sp.Expr] | None:
    r"""S^2 on ``basis`` if all sites are spins (exact entries; surds for mixed or large spins)
    or all are spinful fermion orbitals.

    :math:`S^2 = \sum_i S_i(S_i+1) + 2\sum_{i<j} S^z_iS^z_j + \sum_{i \ne j} S^+_iS^-_j`
    (local index k has m = S - k). Whether H conserves it is decided block by block, in the
    block's rescaled basis, where the entries are rational (:func:`split_block`).
    """
    sites = basis.sites
    orbitals = fermion_orbitals(sites)
    if orbitals is not None:
        return _fermion_total_spin(basis, orbitals) if len(orbitals[0]) == 2 else None
    if len(sites) < 2 or any(s.kind != SPIN for s in sites):
        return None
    spins = [Fraction(int(s.spin.p), int(s.spin.q)) for s in sites]
    index = {st: i for i, st in enumerate(basis.states)}
    S2: dict[tuple[int, int], sp.Expr] = {}
    const = sum((S * (S + 1) for S in spins), Fraction(0))
    n = len(sites)
    amp: dict[Fraction, sp.Expr] = {}
    for r, st in enumerate(basis.states):
        if r % 256 == 0:
            checkpoint("finding the total-spin symmetry", f"state {r} of {len(basis.states)}")
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


def _fermion_total_spin(basis: Basis, orbitals) -> dict[tuple[int, int], sp.Expr]:
    r"""S^2 of spinful fermion orbitals, :math:`S^-S^+ + S^z(S^z + 1)` with
    :math:`S^+ = \sum_i c^\dagger_{i\uparrow}c_{i\downarrow}`, built in the operator algebra."""
    sites = basis.sites
    c = [Operator.local(s, ("u", 0, 1)) for s in sites]
    cd = [dagger(x) for x in c]
    Sp = sum((cd[u] * c[d] for u, d in orbitals), Operator.scalar(0))
    Sz = sum(((cd[u] * c[u] - cd[d] * c[d]) * sp.Rational(1, 2) for u, d in orbitals),
             Operator.scalar(0))
    S2 = dagger(Sp) * Sp + Sz * Sz + Sz
    return sparse_form(S2, basis)


def find_symmetries(basis: Basis, H: SparseForm) -> Symmetries:
    """Candidate symmetries of H on ``basis``: translations, lattice involutions, S^2."""
    orbitals = fermion_orbitals(basis.sites)
    if orbitals is not None:
        # Translations and reflections are lattice symmetries of the whole H or not used (a
        # block where they happen to commute would get labels the model does not have);
        # spin flip and particle-hole change S^z or N and are decided block by block.
        ops = []
        for op in _fermion_operations(basis):
            if op.name in ("k", "R"):
                if not _leaves_invariant(op, H):
                    continue
                op = Operation(op.name, op.perm, op.sign, op.order, checked=True)
            ops.append(op)
        return Symmetries(tuple(ops), len(orbitals), _total_spin(basis))
    T = _translation(basis, H)
    return Symmetries((T,) if T is not None else (), len(basis.sites), _total_spin(basis))


def decompose_entries(blk: dict) -> dict[sp.Expr, dict[tuple[int, int], Fraction]]:
    """Write a sparse matrix as sum_g g * R_g with scalar atoms g and rational matrices R_g."""
    out: dict[sp.Expr, dict[tuple[int, int], Fraction]] = {}
    seen: dict = {}                 # a block repeats a few distinct entries (J/2, J/4 + h, ...)
    for key, v in blk.items():
        terms = seen.get(v)
        if terms is None:
            terms = [(atom, Fraction(int(c.p), int(c.q)))
                     for atom, c in sp.expand(v).as_coefficients_dict().items()]
            seen[v] = terms
        for atom, c in terms:
            out.setdefault(atom, {})[key] = c
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
        checkpoint("carrying the Hamiltonian into a symmetry sector", f"size {shape[0]}")
        X = _sparse_fmpq(comp, *shape)
        if left is not None:
            X = left * X
        if right is not None:
            X = X * right
        for i in range(X.nrows()):
            if i % 64 == 0:
                checkpoint("carrying the Hamiltonian into a symmetry sector", f"size {shape[0]}")
            for j in range(X.ncols()):
                v = X[i, j]
                if v != 0:
                    out[(i, j)] = out.get((i, j), sp.Integer(0)) + atom * sp.Rational(int(v.p), int(v.q))
    return {k: v for k, v in out.items() if v != 0}


def transform_blocks(blk: dict, lefts: list, rights: list, shape: tuple[int, int]
                     ) -> dict[tuple[int, int], dict[tuple[int, int], sp.Expr]]:
    """``left_i @ X @ right_j`` for every pair (i, j) of sectors of a row and a column block.

    ``lefts`` are the dual rows of the sectors of the row block, ``rights`` the bases of the
    sectors of the column block (both complete: together they span the block). The rows are
    stacked into one matrix and the columns into another, so X is carried over by two
    rational products in all, not two per pair of sectors; the result is cut into the pairs.
    Pairs without a non-zero entry are left out.
    """
    n, m = shape
    left = _stack([L.entries() for L in lefts], [L.nrows() for L in lefts], n)
    right = _stack([R.transpose().entries() for R in rights], [R.ncols() for R in rights], m
                   ).transpose()
    row_of = [(i, r) for i, L in enumerate(lefts) for r in range(L.nrows())]
    col_of = [(j, c) for j, R in enumerate(rights) for c in range(R.ncols())]
    out: dict[tuple[int, int], dict[tuple[int, int], sp.Expr]] = {}
    for (r, c), v in transform(blk, left, right, shape).items():
        (i, rr), (j, cc) = row_of[r], col_of[c]
        out.setdefault((i, j), {})[(rr, cc)] = v
    return out


def _stack(entries: list[list], rows: list[int], width: int) -> flint.fmpq_mat:
    """The matrices given by their entries (row-major, ``width`` columns) one under another."""
    return flint.fmpq_mat(sum(rows), width, [x for e in entries for x in e])


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


def _block_operator(op: Operation, positions: tuple[int, ...], local: dict[int, int],
                    gauge) -> flint.fmpq_mat | None:
    """U on the block (D^-1 U D in the rescaled basis); None if U leaves the block or is
    not rational there."""
    n = len(positions)
    U = flint.fmpq_mat(n, n)
    for p in positions:
        q = op.perm[p]
        if q < 0 or q not in local:
            return None
        i, j = local[q], local[p]
        v = _gauged(sp.Integer(op.sign[p]), gauge, i, j)
        if v is None:
            return None
        U[i, j] = flint.fmpq(v.numerator, v.denominator)
    return U


def _split_by_involution(sectors: list, U: flint.fmpq_mat, name: str) -> list | None:
    """Each sector split into U = +1 and U = -1 (None if U does not keep every sector)."""
    new = []
    for labels, V, dual in sectors:
        checkpoint("symmetry sectors", f"operation {name}")
        W = U * V
        Us = dual * W
        if V * Us != W:
            return None                    # U leaves the sector
        m = Us.nrows()
        one = _scalar(m, Fraction(1))
        if Us * Us != one:
            return None                    # U^2 = -1 here: no rational split
        half = flint.fmpq(1, 2)
        for value in (1, -1):
            P = (one + Us) * half if value == 1 else (one - Us) * half
            wd = _column_basis(P)
            if wd is None:
                continue
            Wb, Wd = wd
            if Wb.ncols() == m:
                new.append((labels + ((name, sp.Integer(value)),), V, dual))
            else:
                new.append((labels + ((name, sp.Integer(value)),), V * Wb, Wd * dual))
    return new


def _split_by_spin(sectors: list, S2: flint.fmpq_mat) -> list:
    new = []
    for labels, V, dual in sectors:
        checkpoint("total-spin sectors")
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
            Q = _scalar(m, Fraction(1))
            for c2 in values:
                checkpoint("total-spin projectors")
                if c2 != c:
                    gap = c - c2
                    Q = Q * (S2s - _scalar(m, c2)) * flint.fmpq(gap.denominator, gap.numerator)
            wd = _column_basis(Q)
            if wd is not None:
                W, Wd = wd
                new.append((labels + (("S", _spin_of(c)),), V * W, Wd * dual))
    return new


def _block_spin(sym: Symmetries, local: dict[int, int], n: int, gauge, Hb: dict
                ) -> flint.fmpq_mat | None:
    """S^2 on the block if the block is invariant under it and H conserves it there."""
    if sym.total_spin is None:
        return None
    S2 = flint.fmpq_mat(n, n)
    for (r, c), v in sym.total_spin.items():
        if (r in local) != (c in local):
            return None                    # S^2 leaves the block: not a label of its states
        if r in local:
            q = _gauged(v, gauge, local[r], local[c])
            if q is None:
                return None
            S2[local[r], local[c]] = flint.fmpq(q.numerator, q.denominator)
    return S2 if _commutes(S2, Hb) else None


def split_block(positions: tuple[int, ...], sym: Symmetries, Hb: dict,
                gauge: list | None = None) -> list[Sector] | None:
    """Sectors of the block on ``positions``; None when no symmetry splits or labels it.

    ``Hb`` is the block matrix in the block's local basis, rescaled by ``gauge`` (the
    diagonal D of the solver, or None): the symmetry operators are taken in the same basis,
    D^-1 X D, and used only where they are rational there.

    Order: momentum sectors of the translation (cyclotomic idempotents), then the reflection
    (it maps k to -k, so it commutes with the idempotent of each pair +-k), total spin, spin
    flip (only where S^2 is not used: there it is fixed by S) and particle-hole. An involution
    U splits each sector into U = +1 and U = -1 with the projectors (1 +- U)/2; it is used
    only where it commutes with the block matrix, maps every sector so far into itself and
    squares to 1 there (checked exactly).
    """
    n = len(positions)
    local = {p: i for i, p in enumerate(positions)}
    identity = _scalar(n, Fraction(1))
    sectors: list[tuple[tuple, flint.fmpq_mat, flint.fmpq_mat]] = [((), identity, identity)]
    T = None
    k_op = sym.translation
    if k_op is not None:
        T = _block_operator(k_op, positions, local, gauge)
        if T is not None and not k_op.checked and not _commutes(T, Hb):
            T = None                       # fermion translations are checked block by block
    if T is not None:
        new = []
        for d, e in _cyclotomic_idempotents(sym.order):
            checkpoint("ring-translation sectors")
            vd = _column_basis(_polynomial_of(T, e))
            if vd is not None:
                new.append(((("k", _momentum_label(d, sym.order)),), *vd))
        sectors = new

    def involution(name: str) -> None:
        nonlocal sectors
        for op in sym.operations:
            if op.name != name:
                continue
            U = _block_operator(op, positions, local, gauge)
            if U is None or not (op.checked or _commutes(U, Hb)):
                continue
            split = _split_by_involution(sectors, U, name)
            if split is not None:
                sectors = split
                return

    involution("R")
    S2 = _block_spin(sym, local, n, gauge, Hb)
    if S2 is not None:
        sectors = _split_by_spin(sectors, S2)
    else:
        involution("F")
    involution("C")
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
    return sp.nsimplify(S)  # safe: sympy objects computed here, never user text
