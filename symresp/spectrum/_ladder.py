r"""Ladders of blocks: one boson mode with a conserved excitation number (layer: spectrum).

Owns :class:`Family`, :class:`LadderSpectrum` and :func:`solve_ladder`. Imports sympy,
:mod:`symresp.errors`, :mod:`symresp.algebra`, :mod:`symresp.models` and the spectrum modules.

A qubit or spin coupled to one oscillator with a conserved excitation number (the
Jaynes-Cummings model, :math:`n + s^z` conserved) has a block for every excitation number K;
at cutoff 200 there are 200 of them. Away from the two ends of the ladder all blocks look
alike: the same finite-site states, and boson occupations :math:`\nu + c_i` that differ only
by the offset :math:`\nu`. Their matrices are one matrix :math:`M(\nu)` whose entries are
polynomials in :math:`\nu` times square roots of products of :math:`\nu + c` (the boson
matrix elements :math:`\sqrt{n}`), the same function for every member. So the ladder is
solved once, with :math:`\nu` a symbol:

* the members are found by their signature (size, finite-site states, relative occupations),
  at least ``MIN_MEMBERS`` consecutive offsets;
* :math:`M(\nu)` is built by applying the monomials of H to states with occupation
  :math:`\nu + c` (boson factor :math:`(a^\dagger)^p a^q|n\rangle =
  \sqrt{n(n-1)\cdots(n-q+1)\,(n-q+1)\cdots(n-q+p)}\,|n-q+p\rangle`);
* its characteristic polynomial is factored over the field of the parameters and
  :math:`\nu`; factors of degree <= 2 give explicit roots :math:`\lambda(\nu)` (otherwise no
  ladder is used and the blocks are solved one by one), and the eigenspace projectors are the
  Lagrange polynomials :math:`P_\lambda = \prod_{\mu\ne\lambda}(M - \mu)/(\lambda - \mu)`;
* weights :math:`\mathrm{Tr}(P_a A P_b B)` between members :math:`\nu` and :math:`\nu + \Delta`
  are computed once per pair of ladders and :math:`\Delta`, with the operator blocks built on
  the same generic states, and then evaluated at each member's offset.

Substituting an integer offset is exact; it is refused (and that member solved directly) where
two generic roots coincide at that offset, since the projector formula divides by their
difference. Blocks at the ends of the ladder (incomplete doublets at the cutoff, the ground
state) are solved directly, with the same projector formulas. The result is a
:class:`~._solve.Spectrum` whose levels and weights are those of the block-by-block solution,
at a cost that does not grow with the cutoff beyond substitutions.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import sympy as sp

from ..algebra import Basis, Operator, SparseForm
from ..models import Clock, System
from ._blocks import Block, BlockStructure, decompose
from ._solve import BlockSolution, Factor, Part, Spectrum

__all__ = ["Family", "LadderSpectrum", "WeightTable", "solve_ladder", "MIN_MEMBERS",
           "MAX_LADDER_BLOCK", "edge_positions", "edge_weights"]

#: Fewest members for which a ladder is solved generically.
MIN_MEMBERS = 4
#: Largest block of a ladder (the generic solution needs explicit roots).
MAX_LADDER_BLOCK = 4
#: Fewest blocks in a model before ladders are looked for (small models: block by block).
MIN_BLOCKS = 6

_x = sp.Symbol("x__ladder")


@dataclass(frozen=True, slots=True, eq=False)
class Projector:
    r"""An eigenspace projector :math:`P = U + \sigma\rho V` with radical-free matrices U, V.

    For a root of a quadratic factor, :math:`\rho = \sqrt{D}` is the factor's radical and
    :math:`\sigma = \pm 1` picks the root; the conjugate root has the same U, V and the other
    sign (every formula is rational in :math:`\rho`). Rational roots have V = None.
    """

    U: sp.Matrix
    V: sp.Matrix | None
    rho: sp.Expr | None
    sign: int
    factor: int                      # index of the factor the root belongs to

    def matrix(self) -> sp.Matrix:
        """U + sign * rho * V."""
        return self.U if self.V is None else self.U + self.sign * self.rho * self.V

    def at(self, sub: dict) -> Projector:
        """The projector with symbols substituted (a ladder member's offset)."""
        return Projector(self.U.xreplace(sub), None if self.V is None else self.V.xreplace(sub),
                         None if self.rho is None else self.rho.xreplace(sub), self.sign, self.factor)


@dataclass(frozen=True, slots=True, eq=False)
class Eigen:
    """Eigenspaces of one block matrix: distinct roots, multiplicities, projectors."""

    roots: tuple[sp.Expr, ...]
    multiplicities: tuple[int, ...]
    projectors: tuple[Projector, ...]
    factors: tuple[tuple[tuple[sp.Expr, ...], tuple[int, ...]], ...]   # (coeffs, root indices)


@dataclass(frozen=True, slots=True, eq=False)
class Family:
    """A ladder: blocks that are one matrix M(nu) at different offsets nu."""

    index: int
    blocks: tuple[int, ...]                  # structure block indices
    offsets: tuple[int, ...]                 # nu of each member block
    finite: tuple[tuple[int, ...], ...]      # finite-site local indices of each generic state
    relative: tuple[int, ...]                # boson occupation - nu of each generic state
    eigen: Eigen                             # the generic solution, in nu


# ----------------------------------------------------------------------------- generic states
def _split_state(state: tuple[int, ...], boson: int) -> tuple[tuple[int, ...], int]:
    return state[:boson] + state[boson + 1:], state[boson]


def _apply(mono, finite: tuple[int, ...], n: sp.Expr, basis: Basis, boson: int,
           fermions: tuple[int, ...]) -> tuple[tuple[int, ...], sp.Expr, sp.Expr] | None:
    """A monomial on a generic product state (finite part, boson occupation n): the image
    (finite part, occupation) and the coefficient, or None when it vanishes identically."""
    where = {s: i for i, s in enumerate(basis.sites)}
    st = list(finite[:boson]) + [None] + list(finite[boson:])
    occ = n
    coeff = sp.Integer(1)
    sign = 1
    for site, key in reversed(mono):
        pos = where[site]
        if pos == boson:
            _, p, q = key
            c = sp.Integer(1)
            for i in range(q):
                c *= occ - i
            for i in range(1, p + 1):
                c *= occ - q + i
            coeff *= sp.sqrt(sp.factor(c)) if c != 1 else 1
            occ = occ - q + p
            continue
        _, i, j = key
        if st[pos] != j:
            return None
        if site.is_fermion and (i + j) % 2:
            if sum(st[f] for f in fermions if f < pos) % 2:
                sign = -sign
        st[pos] = i
    fin = tuple(st[:boson] + st[boson + 1:])
    return fin, sp.expand(occ), coeff * sign


def generic_block(op: Operator, rows: list[tuple[tuple[int, ...], sp.Expr]],
                  cols: list[tuple[tuple[int, ...], sp.Expr]], basis: Basis,
                  boson: int) -> sp.Matrix:
    """Matrix of ``op`` between generic states (finite part, occupation expression)."""
    fermions = tuple(i for i, s in enumerate(basis.sites) if s.is_fermion)
    index = {(f, sp.expand(n)): r for r, (f, n) in enumerate(rows)}
    M = sp.zeros(len(rows), len(cols))
    for c, (fin, n) in enumerate(cols):
        for mono, coeff in op.terms:
            hit = _apply(mono, fin, n, basis, boson, fermions)
            if hit is None:
                continue
            f2, n2, k = hit
            r = index.get((f2, n2))
            if r is not None:
                M[r, c] += coeff * k
    return M.applyfunc(sp.expand)


# ----------------------------------------------------------------------------- small blocks
def _mul(x: tuple, y: tuple, D: sp.Expr) -> tuple:
    """(u1 + v1 r)(u2 + v2 r) with r**2 = D; u, v scalars or matrices (scalar first)."""
    u1, v1 = x
    u2, v2 = y
    return (u1 * u2 + D * v1 * v2, u1 * v2 + v1 * u2)


def small_eigen(M: sp.Matrix, symbols: tuple[sp.Symbol, ...]) -> Eigen | None:
    r"""Explicit eigenspaces of a small matrix (factors of degree <= 2), else None.

    The projector of a root :math:`\lambda` of the factor f is
    :math:`P_\lambda = \prod_{g \ne f} g(M)/g(\lambda)\cdot\prod_{\lambda'}(M - \lambda')/(\lambda - \lambda')`
    (the second product over the other root of f, if quadratic), computed in
    :math:`K(\rho)` with :math:`\rho = \sqrt{D_f}`: :math:`1/g(\lambda)` is rationalised by its
    conjugate, so :math:`P_\lambda = U + \sigma\rho V` with U, V free of :math:`\rho`.
    """
    n = M.shape[0]
    cp = sp.expand(M.charpoly(_x).as_expr())
    _, flist = sp.factor_list(cp, _x, *[s for s in symbols if cp.has(s)])
    facs = []
    for f, mult in flist:
        P = sp.Poly(f, _x)
        if P.degree() == 0:
            continue
        if P.degree() > 2:
            return None
        facs.append((P, int(mult)))
    if sum(P.degree() * m for P, m in facs) != n:
        return None
    eye = sp.eye(n)
    roots: list[sp.Expr] = []
    mults: list[int] = []
    projs: list[Projector] = []
    factors = []
    for fi, (P, mult) in enumerate(facs):
        cs = P.all_coeffs()
        # G(M) and G(x) for the product of the other factors (monic).
        others = [Q.monic() for j, (Q, _) in enumerate(facs) if j != fi]
        GM = eye
        for Q in others:
            qc = Q.all_coeffs()
            QM = sp.zeros(n, n)
            for c in qc:
                QM = QM * M + c * eye
            GM = GM * QM
        if P.degree() == 1:
            lam = sp.expand(-cs[1] / cs[0])
            Gl = sp.Integer(1)
            for Q in others:
                Gl *= Q.as_expr().subs(_x, lam)
            U = (GM / Gl).applyfunc(sp.cancel)
            factors.append((tuple(cs), (len(roots),)))
            roots.append(lam)
            mults.append(mult)
            projs.append(Projector(U, None, None, 1, fi))
            continue
        a, b, c = cs
        D = sp.factor(b * b - 4 * a * c)
        rho = sp.sqrt(D)
        alpha, beta_ = sp.expand(-b / (2 * a)), 1 / (2 * a)     # lambda = alpha + sign*beta*rho
        if rho.is_Rational:
            return None                   # a reducible quadratic: factor_list would have split it
        # G(lambda) in K(rho) for the root with sign +1: evaluate each monic factor.
        g = (sp.Integer(1), sp.Integer(0))
        for Q in others:
            acc = (sp.Integer(0), sp.Integer(0))
            for coef in Q.all_coeffs():
                acc = _mul(acc, (alpha, beta_), D)
                acc = (acc[0] + coef, acc[1])
            g = _mul(g, acc, D)
        g = (sp.cancel(g[0]), sp.cancel(g[1]))
        norm = sp.cancel(g[0] ** 2 - D * g[1] ** 2)
        ginv = (sp.cancel(g[0] / norm), sp.cancel(-g[1] / norm))
        # (M - lambda')/(lambda - lambda') = 1/2 + (M - alpha) rho / (2 beta D)
        inner = (eye / 2, (M - alpha * eye) / (2 * beta_ * D))
        U, V = _mul((ginv[0] * GM, ginv[1] * GM), inner, D)
        U, V = U.applyfunc(sp.cancel), V.applyfunc(sp.cancel)
        idx = []
        for sign in (-1, 1):
            idx.append(len(roots))
            roots.append(alpha + sign * beta_ * rho)
            mults.append(mult)
            projs.append(Projector(U, V, rho, sign, fi))
        factors.append((tuple(cs), tuple(idx)))
    return Eigen(tuple(roots), tuple(mults), tuple(projs), tuple(factors))


def tidy(w: sp.Expr) -> sp.Expr:
    """A radical-free scalar (a trace), cancelled and factored."""
    w = sp.sympify(w)  # safe: sympy objects built here
    if w == 0:
        return w
    return sp.factor(sp.cancel(w)) if w.free_symbols else sp.radsimp(sp.expand(w))


class _Traces:
    """Traces Tr(X A Y B) for the U and V parts of two projectors, shared by conjugate roots."""

    def __init__(self, A: sp.Matrix, B: sp.Matrix | None) -> None:
        self.A, self.B = A, B
        self.memo: dict = {}

    def pair(self, Pa: Projector, Pb: Projector) -> sp.Expr:
        key = (Pa.factor, Pb.factor)
        T = self.memo.get(key)
        if T is None:
            Xs = [Pa.U] + ([Pa.V] if Pa.V is not None else [])
            Ys = [Pb.U] + ([Pb.V] if Pb.V is not None else [])
            T = [[tidy(sp.expand((X * self.A * Y * self.B).trace())) for Y in Ys] for X in Xs]
            self.memo[key] = T
        rational = T[0][0]
        out = sp.Integer(0)
        if Pa.V is not None:
            out += Pa.sign * Pa.rho * T[1][0]
        if Pb.V is not None:
            if Pa.V is not None and Pa.rho == Pb.rho:
                # one radical: rho^2 = D joins the rational part, the cross terms add up
                rational = tidy(rational + Pa.sign * Pb.sign * sp.expand(Pa.rho**2) * T[1][1])
                out = Pa.rho * tidy(Pa.sign * T[1][0] + Pb.sign * T[0][1])
            else:
                out += Pb.sign * Pb.rho * T[0][1]
                if Pa.V is not None:
                    out += Pa.sign * Pb.sign * Pa.rho * Pb.rho * T[1][1]
        return rational + out

    def single(self, Pa: Projector) -> sp.Expr:
        key = ("e", Pa.factor)
        T = self.memo.get(key)
        if T is None:
            T = [tidy(sp.expand((X * self.A).trace()))
                 for X in [Pa.U] + ([Pa.V] if Pa.V is not None else [])]
            self.memo[key] = T
        out = T[0]
        if Pa.V is not None:
            out += Pa.sign * Pa.rho * T[1]
        return out


@dataclass(frozen=True, slots=True, eq=False)
class WeightTable:
    """Weights (or expectations) of a ladder spectrum, in the compact form emitters use.

    ``generic[(f1, f2, delta)][(ra, rb)]`` is a weight in the offset symbol ``nu`` between
    root ra of ladder f1 at offset nu and root rb of ladder f2 at offset nu + delta;
    ``members[(f1, f2, delta)]`` lists the (block, block, offset nu) it applies to;
    ``explicit[(part a, part b)]`` holds the weights of all other pairs of blocks.
    """

    generic: dict
    members: dict
    explicit: dict


# ----------------------------------------------------------------------------- the spectrum
@dataclass(frozen=True, slots=True, eq=False)
class LadderSpectrum(Spectrum):
    """A spectrum whose ladder blocks were solved once, generically (module docstring).

    ``solutions`` hold the factors and roots of every block (for levels and descriptions);
    weights and expectations come from :meth:`operator_weights` and
    :meth:`operator_expectations`, which need the operators themselves.
    """

    families: tuple[Family, ...] = ()
    member: dict = field(default_factory=dict)          # solution index -> (family, offset)
    eigens: dict = field(default_factory=dict)          # solution index -> Eigen (concrete)
    boson: int = -1                                     # position of the boson site
    nu: sp.Symbol = sp.Dummy("n_offset")
    _cache: dict = field(default_factory=dict)

    def describe(self) -> str:
        base = Spectrum.describe(self)
        sizes = ", ".join(f"{len(f.blocks)} blocks of {len(f.relative)}" for f in self.families)
        return base + f"; ladders solved once for all excitation numbers ({sizes})"

    def projectors(self, sol_index: int) -> tuple[Projector, ...]:
        """Eigenspace projectors of a block (a member's: the generic ones at its offset)."""
        fam_off = self.member.get(sol_index)
        if fam_off is None:
            return self.eigens[sol_index].projectors
        key = ("P", sol_index)
        if key not in self._cache:
            sub = {self.nu: fam_off[1]}
            self._cache[key] = tuple(P.at(sub) for P in self.families[fam_off[0]].eigen.projectors)
        return self._cache[key]

    def part_of(self, sol_index: int, root: int) -> int:
        """Index in ``parts`` of the root-th distinct root of a block."""
        return self.index[(sol_index, *self._locate(sol_index, root))]

    def weight_table(self, A: Operator, B: Operator, As: SparseForm, Bs: SparseForm,
                     clock: Clock | None = None) -> WeightTable:
        r"""Weights :math:`\mathrm{Tr}(P_a A P_b B)`: generic per (ladder, ladder, offset
        difference) with the member pairs they apply to, explicit for the other blocks."""
        key = ("table", A, B)
        if key in self._cache:
            return self._cache[key]
        Asp, Bsp = self.split(As), self.split(Bs)
        generic: dict[tuple[int, int, int], dict[tuple[int, int], sp.Expr]] = {}
        members: dict[tuple[int, int, int], list[tuple[int, int, int]]] = {}
        explicit: dict[tuple[int, int], sp.Expr] = {}
        for (bi, bj), a_blk in sorted(Asp.items()):
            b_blk = Bsp.get((bj, bi))
            if not b_blk:
                continue
            if clock:
                clock.check("ladder weights", f"blocks {bi} -> {bj}")
            mi, mj = self.member.get(bi), self.member.get(bj)
            if mi is not None and mj is not None:
                k = (mi[0], mj[0], mj[1] - mi[1])
                if k not in generic:
                    generic[k] = self._generic_weights(*k, A, B)
                members.setdefault(k, []).append((bi, bj, mi[1]))
                continue
            ni, nj = self.solutions[bi].block.size, self.solutions[bj].block.size
            tr = _Traces(sp.Matrix(sp.SparseMatrix(ni, nj, a_blk)),
                         sp.Matrix(sp.SparseMatrix(nj, ni, b_blk)))
            for ra, Pa in enumerate(self.projectors(bi)):
                for rb, Pb in enumerate(self.projectors(bj)):
                    w = tr.pair(Pa, Pb)
                    if w != 0:
                        explicit[(self.part_of(bi, ra), self.part_of(bj, rb))] = w
        out = WeightTable(generic, {k: tuple(v) for k, v in members.items()}, explicit)
        self._cache[key] = out
        return out

    def operator_weights(self, A: Operator, B: Operator, As: SparseForm, Bs: SparseForm,
                         clock: Clock | None = None) -> dict[tuple[int, int], sp.Expr]:
        r"""Exact :math:`\mathrm{Tr}(P_a A P_b B)` for every pair of parts with a non-zero value."""
        table = self.weight_table(A, B, As, Bs, clock)
        out = dict(table.explicit)
        # With A = B, Tr(P_b A P_a A) = Tr(P_a A P_b A) (cyclic trace): each unordered pair of
        # members is substituted once (substitution is most of the cost at large cutoffs).
        mirror = A == B
        for k, entries in table.generic.items():
            for bi, bj, offset in table.members[k]:
                if clock:
                    clock.check("ladder weights", f"blocks {bi} -> {bj}")
                sub = {self.nu: offset}
                for (ra, rb), w in entries.items():
                    pa, pb = self.part_of(bi, ra), self.part_of(bj, rb)
                    if mirror and (pb, pa) in out:
                        out[(pa, pb)] = out[(pb, pa)]
                        continue
                    v = w.xreplace(sub)
                    if v != 0:
                        out[(pa, pb)] = v
        return out

    def expectation_table(self, A: Operator, As: SparseForm) -> WeightTable:
        r""":math:`\mathrm{Tr}(P_a A)`: generic per ladder (key (f, f, 0), entries (ra, ra))
        with its members, explicit for the other blocks (keys (part, part))."""
        key = ("expectations", A)
        if key in self._cache:
            return self._cache[key]
        Asp = self.split(As)
        generic: dict = {}
        members: dict = {}
        explicit: dict = {}
        for (bi, bj), a_blk in Asp.items():
            if bi != bj:
                continue
            mi = self.member.get(bi)
            if mi is not None:
                k = (mi[0], mi[0], 0)
                if k not in generic:
                    F = self.families[mi[0]]
                    states = [(f, self.nu + r) for f, r in zip(F.finite, F.relative)]
                    Ag = generic_block(A, states, states, self.structure.basis, self.boson)
                    tr = _Traces(Ag, None)
                    generic[k] = {(ra, ra): v for ra, P in enumerate(F.eigen.projectors)
                                  if (v := tr.single(P)) != 0}
                members.setdefault(k, []).append((bi, bi, mi[1]))
                continue
            n = self.solutions[bi].block.size
            tr = _Traces(sp.Matrix(sp.SparseMatrix(n, n, a_blk)), None)
            for ra, P in enumerate(self.projectors(bi)):
                v = tr.single(P)
                if v != 0:
                    explicit[(self.part_of(bi, ra), self.part_of(bi, ra))] = v
        out = WeightTable(generic, {k: tuple(v) for k, v in members.items()}, explicit)
        self._cache[key] = out
        return out

    def operator_expectations(self, A: Operator, As: SparseForm) -> dict[int, sp.Expr]:
        r"""Exact :math:`\mathrm{Tr}(P_a A)` for every part a with a non-zero value."""
        table = self.expectation_table(A, As)
        out = {pa: v for (pa, _), v in table.explicit.items()}
        for k, entries in table.generic.items():
            for bi, _, offset in table.members[k]:
                for (ra, _), v in entries.items():
                    v = v.xreplace({self.nu: offset})
                    if v != 0:
                        out[self.part_of(bi, ra)] = v
        return out

    def _locate(self, sol_index: int, root: int) -> tuple[int, int]:
        """(factor, root within factor) of the root-th distinct root of a block."""
        eig = self.eigens.get(sol_index)
        if eig is None:
            eig = self.families[self.member[sol_index][0]].eigen
        for fi, (_, idx) in enumerate(eig.factors):
            if root in idx:
                return fi, idx.index(root)
        raise KeyError(root)

    def _generic_weights(self, f1: int, f2: int, delta: int, A: Operator, B: Operator
                         ) -> dict[tuple[int, int], sp.Expr]:
        F1, F2 = self.families[f1], self.families[f2]
        nu = self.nu
        rows = [(f, nu + r) for f, r in zip(F1.finite, F1.relative)]
        cols = [(f, nu + delta + r) for f, r in zip(F2.finite, F2.relative)]
        basis = self.structure.basis
        Ag = generic_block(A, rows, cols, basis, self.boson)
        Bg = generic_block(B, cols, rows, basis, self.boson)
        P2 = [P.at({nu: nu + delta}) for P in F2.eigen.projectors]
        tr = _Traces(Ag, Bg)
        out = {}
        for ra, Pa in enumerate(F1.eigen.projectors):
            for rb, Pb in enumerate(P2):
                w = tr.pair(Pa, Pb)
                if w != 0:
                    out[(ra, rb)] = w
        return out


def _families(structure: BlockStructure, boson: int) -> list[tuple[tuple, list[tuple[int, int]]]]:
    """Blocks grouped by signature: [(signature, [(block index, offset), ...]), ...]."""
    basis = structure.basis
    groups: dict[tuple, list[tuple[int, int]]] = {}
    for b in structure.blocks:
        if b.size > MAX_LADDER_BLOCK:
            continue
        states = [_split_state(basis.states[p], boson) for p in b.positions]
        nu = states[0][1]
        sig = (b.size, tuple(f for f, _ in states), tuple(n - nu for _, n in states))
        groups.setdefault(sig, []).append((b.index, nu))
    out = []
    for sig, members in groups.items():
        members.sort(key=lambda m: m[1])
        if len(members) >= MIN_MEMBERS:
            out.append((sig, members))
    return out


def solve_ladder(system: System, *, clock: Clock | None = None) -> LadderSpectrum | None:
    """The spectrum of a model with one boson mode whose blocks form ladders, or None.

    None (use the block-by-block solver) when the model has no single boson mode, too few
    blocks, no ladder of at least ``MIN_MEMBERS`` members, a sector, or a block whose
    characteristic polynomial has a factor of degree > 2 or whose size exceeds
    ``MAX_LADDER_BLOCK``.
    """
    sites = system.sites
    bosons = [i for i, s in enumerate(sites) if s.kind == "boson"]
    if len(bosons) != 1 or system.sector:
        return None
    structure = decompose(system, clock)
    if len(structure.blocks) < MIN_BLOCKS or any(b.size > MAX_LADDER_BLOCK for b in structure.blocks):
        return None
    boson = bosons[0]
    basis = structure.basis
    H = system.hamiltonian
    params = system.parameters
    nu = sp.Dummy("n_offset", integer=True, nonnegative=True)
    families: list[Family] = []
    member_of: dict[int, tuple[int, int]] = {}
    for sig, members in _families(structure, boson):
        size, finite, rel = sig
        states = [(f, nu + r) for f, r in zip(finite, rel)]
        M = generic_block(H, states, states, basis, boson)
        eig = small_eigen(M, tuple(params) + (nu,))
        if clock:
            clock.check("solving a ladder generically")
        if eig is None:
            return None
        F = Family(len(families), tuple(b for b, _ in members), tuple(o for _, o in members),
                   finite, rel, eig)
        families.append(F)
        for b, o in members:
            member_of[b] = (F.index, o)
    if not families:
        return None
    sols: list[BlockSolution] = []
    eigens: dict[int, Eigen] = {}
    member: dict[int, tuple[int, int]] = {}
    for b in structure.blocks:
        k = len(sols)
        blk = Block(k, b.positions, b.labels, parent=b.index)
        fo = member_of.get(b.index)
        eig = None
        if fo is not None:
            F = families[fo[0]]
            sub = {nu: fo[1]}
            # Substituted expressions are canonical already (sums collect like terms); the two
            # roots of a quadratic differ by 2 beta rho, roots of different factors may meet.
            roots = [r.xreplace(sub) for r in F.eigen.roots]
            projs = F.eigen.projectors
            distinct = all(
                (projs[i].rho.xreplace(sub) != 0) if projs[i].factor == projs[j].factor
                else sp.expand(roots[i] - roots[j]) != 0
                for i in range(len(roots)) for j in range(i))
            if distinct:
                member[k] = fo
                eig = Eigen(tuple(roots), F.eigen.multiplicities, (), tuple(
                    (tuple(c.xreplace(sub) for c in cs), idx) for cs, idx in F.eigen.factors))
        if eig is None:
            local = {p: i for i, p in enumerate(b.positions)}
            Mb = sp.zeros(b.size, b.size)
            for (r, c), v in structure.hamiltonian.items():
                if r in local and c in local:
                    Mb[local[r], local[c]] = v
            eig = small_eigen(Mb, tuple(params))
            if eig is None:
                return None
            eigens[k] = eig
        if clock:
            clock.check("solving the ladder members")
        factors = []
        for cs, idx in eig.factors:
            factors.append(Factor(tuple(cs), eig.multiplicities[idx[0]],
                                  tuple(eig.roots[i] for i in idx), False))
        sols.append(BlockSolution(blk, "symbolic", sp.Integer(0), sp.Integer(1), tuple(factors),
                                  len(eig.roots), (), (), ()))
    parts = []
    for s in sols:
        for fi, f in enumerate(s.factors):
            for ri, r in enumerate(f.roots):
                parts.append(Part(s.block.index, fi, ri, r, f.multiplicity, False))
    index = {(p.block, p.factor, p.root): i for i, p in enumerate(parts)}
    # Members keep the generic projectors (via their family) and their offsets.
    out = LadderSpectrum(structure, tuple(sols), tuple(parts), index, tuple(families), member,
                         eigens, boson, nu)
    return out


# ----------------------------------------------------------------------------- truncation
def edge_positions(basis: Basis, ops) -> tuple[int, ...]:
    """Basis positions from which one of ``ops`` leads above the cutoff of a boson mode.

    A monomial leads above the cutoff from a state when its finite-site factors apply, its
    annihilators find enough quanta, and the final occupation of some boson mode exceeds the
    cutoff (the matrix element the truncated matrix drops).
    """
    bosons = [i for i, s in enumerate(basis.sites) if s.kind == "boson"]
    if not bosons:
        return ()
    where = {s: i for i, s in enumerate(basis.sites)}
    monos = [m for op in ops for m, _ in op.terms
             if any(where.get(site) in bosons and key[1] > key[2] for site, key in m)]
    out = []
    for pos, state in enumerate(basis.states):
        for mono in monos:
            st = list(state)
            ok = True
            for site, key in reversed(mono):
                i = where[site]
                if site.kind == "boson":
                    _, p, q = key
                    if st[i] < q:
                        ok = False
                        break
                    st[i] = st[i] - q + p
                else:
                    _, a, b = key
                    if st[i] != b:
                        ok = False
                        break
                    st[i] = a
            if ok and any(st[i] > basis.sites[i].dim - 1 for i in bosons):
                out.append(pos)
                break
    return tuple(out)


def edge_weights(spec: Spectrum, positions: tuple[int, ...]) -> dict[int, sp.Expr]:
    r""":math:`\mathrm{Tr}(P_a \Pi)` per part a for the projector :math:`\Pi` onto ``positions``."""
    form = {(p, p): sp.Integer(1) for p in positions}
    if not isinstance(spec, LadderSpectrum):
        return spec.expectations(form)
    out: dict[int, sp.Expr] = {}
    for (bi, bj), blk in spec.split(form).items():
        if bi != bj:
            continue
        for ra, P in enumerate(spec.projectors(bi)):
            M = P.matrix()
            v = sp.Add(*[M[i, i] * val for (i, _), val in blk.items()])
            v = tidy(v) if not v.is_Number else v
            if v != 0:
                out[spec.part_of(bi, ra)] = v
    return out
