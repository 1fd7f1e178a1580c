r"""Semi-closed blocks diagonalised numerically inside the evaluator (layer: emit).

Owns :class:`EigenBlock` and :func:`eigen_plan`. Imports sympy, mpmath, :mod:`symresp.algebra`,
:mod:`symresp.response`, :mod:`symresp.spectrum` and :mod:`._plan`.

A block whose characteristic polynomial has an irreducible cubic factor with
parameter-dependent coefficients has implicit levels (``LevelRoot``). Its exact weights are
rational functions of the roots with the root differences :math:`\lambda_a - \lambda_b` in
the denominator: evaluated in floating point they lose all digits where two roots nearly
coincide (at zero field, say), although the response itself is smooth there. So the value
functions of an emitted module diagonalise that block numerically at every point, and only
that block:

* the block matrix :math:`M` (in the engine's local basis, where it may be a similarity
  transform of a Hermitian matrix: diagonal rescaling of spin matrix elements, or a symmetry
  sector) is brought to Hermitian form :math:`H_s = R^{-1} M R` with constant :math:`R`
  (:math:`R = D^{-1}` for a rescaling :math:`D`, :math:`R = G^{-1/2}` with the Gram matrix
  :math:`G = V^TV` of a sector basis), and ``numpy.linalg.eigh`` gives eigenvalues and
  orthonormal eigenvectors;
* at each point the eigenvalue nearest to each explicit level of the block is set aside; the
  rest, ascending, are the implicit levels :math:`k = 0, 1, \dots` (the order of
  ``LevelRoot(k, ...)``), with the local projectors :math:`P = R\,uu^\dagger R^{-1}`;
* every weight that involves an implicit level is written as a trace,
  :math:`W_{ab} = \mathrm{Tr}(P_a A_{XY} P_b B_{YX})`, with the numeric projectors as symbols
  of the generated program and the exact projectors of the other (closed-form) levels.

Near-coincident levels then cost nothing: eigenvectors inside a near-degenerate pair may
rotate, but their contributions enter the Lehmann sums with continuous factors. The Jacobian
keeps the exact weights and differentiates through the roots (``_plan.RootSet``).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import mpmath
import sympy as sp

from ..algebra import sparse_form
from ..errors import ClosedFormError
from ..response import Derivation
from ..spectrum import ImplicitBlock, LevelRoot
from ..spectrum._implicit import block_spec, gram_root
from ._functions import RootPick, SemiEigen, SemiWeights
from ._plan import Pair, Plan

__all__ = ["EigenBlock", "eigen_plan"]

#: Digits of the constant similarity matrices R and R^-1 (printed as float literals).
_DIGITS = 30


@dataclass(frozen=True, slots=True)
class EigenBlock:
    """One semi-closed block, diagonalised at run time (see the module docstring)."""

    holder: sp.Symbol                               # the tuple the runtime helper returns
    deg: int                                        # number of implicit levels in the block
    mult: int                                       # states per implicit level
    others: tuple[sp.Expr, ...]                     # the block's explicit eigenvalues
    matrix: tuple[sp.Expr, ...]                     # M, row-major, in the code-safe parameters
    R: tuple[sp.Float, ...]                         # row-major, () for the identity
    Rinv: tuple[sp.Float, ...]
    roots: tuple[tuple[sp.Symbol | None, int], ...]  # energy symbol (or None) of root k
    projectors: tuple[tuple[sp.Symbol, ...], ...]   # per root k: n*n symbols of P (row-major)



def _similarity(sol) -> tuple[tuple, tuple]:
    """(R, R^-1) flat, making R^-1 M R Hermitian for the block's local basis.

    The local coordinates c of a block are x = L c in the product basis, with L = D V: the
    solver's diagonal rescaling D (or 1) and a sector basis V (or 1). With the Gram matrix
    G = L^T L, R = G^(-1/2) gives R^-1 M R = G^(-1/2) L^T H L G^(-1/2), Hermitian.
    """
    sector = sol.block.sector
    V = sector.V if sector is not None and sector.V is not None else None
    if sol.gauge is None and V is None:
        return (), ()
    n = sol.block.size
    with mpmath.workdps(_DIGITS + 10):
        rows = len(sol.gauge) if sol.gauge is not None else V.nrows()
        g = [mpmath.mpf(1)] * rows if sol.gauge is None else \
            [mpmath.mpmathify(sp.N(x, _DIGITS + 10)) for x in sol.gauge]
        if V is None:
            L = mpmath.diag(g)
        else:
            L = mpmath.matrix([[g[i] * mpmath.mpf(int(V[i, j].p)) / int(V[i, j].q)
                                for j in range(V.ncols())] for i in range(V.nrows())])
        E, Q = mpmath.eigsy(L.T * L)
        half = Q * mpmath.diag([mpmath.sqrt(e) for e in E]) * Q.T
        inv_half = Q * mpmath.diag([1 / mpmath.sqrt(e) for e in E]) * Q.T
        R = tuple(sp.Float(inv_half[i, j], _DIGITS) for i in range(n) for j in range(n))
        Ri = tuple(sp.Float(half[i, j], _DIGITS) for i in range(n) for j in range(n))
    return R, Ri


def _local_projector(sol, factor: int, root: int) -> sp.Matrix:
    nums, den = sol.alpha(factor, root)
    P = sp.zeros(sol.block.size, sol.block.size)
    for k, c in enumerate(nums):
        if c != 0:
            P += c * sol.sympy_power(k)
    return P / den


def eigen_plan(d: Derivation, plan: Plan) -> Plan:
    """``plan`` with every quantity that involves an implicit level rewritten with numeric
    projectors (unchanged when the derivation has no parametric implicit level)."""
    if any(sol.kind == "semi" for sol in d.spectrum.solutions):
        return semi_plan(d, plan)
    if not plan.roots:
        return plan
    spec = d.spectrum
    rename = dict(zip(plan.original, plan.parameters))

    def sub(e) -> sp.Expr:
        return sp.sympify(e).xreplace(rename)  # safe: derivation values are already sympy objects

    energy_symbol = {}
    for rs in plan.roots:
        for sym, k in rs.picks:
            energy_symbol[(tuple(rs.coeffs), k)] = sym
    blocks: list[EigenBlock] = []
    numeric: dict[int, sp.Matrix] = {}          # part index -> its projector (symbol matrix)
    used: set = set()
    for bi, sol in enumerate(spec.solutions):
        implicit = [fi for fi, f in enumerate(sol.factors)
                    if f.implicit and any(isinstance(r, LevelRoot) for r in f.roots)]
        if not implicit:
            continue
        if len(implicit) > 1:                    # not produced by the engine (one cubic per block)
            raise ClosedFormError(f"emit: block {bi} has {len(implicit)} parametric implicit "
                                  "factors; evaluators diagonalise blocks with one only")
        fi = implicit[0]
        f = sol.factors[fi]
        n = sol.block.size
        coeffs = tuple(sub(c) for c in f.roots[0].args[1:])
        M = sol.powers[1].to_Matrix()
        others = tuple(sub(r) for gi, g in enumerate(sol.factors) if gi != fi
                       for r in g.roots for _ in range(g.multiplicity))
        roots, projs = [], []
        for k in range(f.degree):
            key = (coeffs, k)
            sym = energy_symbol.get(key) if key not in used else None
            used.add(key)
            roots.append((sym, k))
            P = tuple(sp.Symbol(f"_P{bi}_{k}_{i}_{j}") for i in range(n) for j in range(n))
            projs.append(P)
            numeric[spec.index[(bi, fi, k)]] = sp.Matrix(n, n, P)
        R, Ri = _similarity(sol)
        blocks.append(EigenBlock(sp.Symbol(f"_eig{bi}"), f.degree, f.multiplicity, others,
                                 tuple(sub(M[i, j]) for i in range(n) for j in range(n)),
                                 R, Ri, tuple(roots), tuple(projs)))

    basis = spec.structure.basis
    As = spec.split(sparse_form(d.A, basis))
    Bs = spec.split(sparse_form(d.B, basis))
    explicit_P: dict[int, sp.Matrix] = {}

    def projector(p: int) -> sp.Matrix:
        if p in numeric:
            return numeric[p]
        if p not in explicit_P:
            part = spec.parts[p]
            explicit_P[p] = _local_projector(spec.solutions[part.block], part.factor, part.root)
        return explicit_P[p]

    def size(p: int) -> int:
        return spec.solutions[spec.parts[p].block].block.size

    def weight(pa: int, pb: int) -> sp.Expr:
        """Tr(P_a A P_b B) for two parts, at least one of them numeric."""
        X, Y = spec.parts[pa].block, spec.parts[pb].block
        A = sp.Matrix(sp.SparseMatrix(size(pa), size(pb), As.get((X, Y), {})))
        B = sp.Matrix(sp.SparseMatrix(size(pb), size(pa), Bs.get((Y, X), {})))
        if A.is_zero_matrix or B.is_zero_matrix:
            return sp.Integer(0)
        return sub(sp.expand((projector(pa) * A * projector(pb) * B).trace()))

    def expectation(Ss: dict, pa: int) -> sp.Expr:
        X = spec.parts[pa].block
        A = sp.Matrix(sp.SparseMatrix(size(pa), size(pa), Ss.get((X, X), {})))
        return sub(sp.expand((projector(pa) * A).trace()))

    levels = d.levels
    touched = {a for a, lv in enumerate(levels) if any(p in numeric for p in lv.parts)}
    # A complex Hermitian block gives complex projectors; where the exact values are real
    # (A = B Hermitian), keep the real part (the imaginary one is rounding).
    real = not plan.is_complex(*[p.S for p in plan.pairs], *plan.fluctuation, *plan.mean_a,
                               *plan.mean_b)
    complex_block = any(sp.sympify(e).has(sp.I) for eb in blocks for e in eb.matrix)  # safe: sympy objects
    tidy = (lambda e: sp.re(e) if e != 0 else e) if (real and complex_block) else (lambda e: e)

    def level_weight(a: int, b: int) -> sp.Expr:
        return sp.Add(*[weight(pa, pb) for pa in levels[a].parts for pb in levels[b].parts])

    pairs = []
    for p in plan.pairs:
        if p.a in touched or p.b in touched:
            wab, wba = level_weight(p.a, p.b), level_weight(p.b, p.a)
            pairs.append(Pair(p.a, p.b, p.w, tidy(wab + wba) if p.S != 0 else sp.Integer(0),
                              wab - wba if p.D != 0 else sp.Integer(0)))
        else:
            pairs.append(p)
    fluct, mean_a, mean_b = list(plan.fluctuation), list(plan.mean_a), list(plan.mean_b)
    for a in touched:
        g = levels[a].degeneracy
        ea = sp.Add(*[expectation(As, pa) for pa in levels[a].parts])
        eb = sp.Add(*[expectation(Bs, pa) for pa in levels[a].parts])
        if plan.fluctuation[a] != 0:             # zero exactly stays zero
            fluct[a] = tidy(level_weight(a, a) - ea * eb / g)
        mean_a[a] = tidy(ea / g) if plan.mean_a[a] != 0 else sp.Integer(0)
        mean_b[a] = tidy(eb / g) if plan.mean_b[a] != 0 else sp.Integer(0)
    return replace(plan, pairs=tuple(pairs), fluctuation=tuple(fluct), mean_a=tuple(mean_a),
                   mean_b=tuple(mean_b), eigen=tuple(blocks))


def _similarity_floats(X: ImplicitBlock) -> tuple[tuple, tuple]:
    """(R, R^-1) of :func:`symresp.spectrum._implicit.gram_root` as _DIGITS-digit Floats."""
    if not len(X.gram):
        return (), ()
    n = X.n
    with mpmath.workdps(_DIGITS + 10):
        R, Ri = gram_root(X, _DIGITS + 10)
        return (tuple(sp.Float(R[i, j], _DIGITS) for i in range(n) for j in range(n)),
                tuple(sp.Float(Ri[i, j], _DIGITS) for i in range(n) for j in range(n)))


def semi_plan(d: Derivation, plan: Plan) -> Plan:
    """``plan`` with the stage-P lines that diagonalise every semi-closed block (and every block
    a semi-closed weight couples to) at the point: the implicit roots (``_lam`` symbols) and the
    weights (``_bw`` symbols of ``plan.block_weights``) read from them (see
    :mod:`symresp.spectrum._eigen_numeric`)."""
    spec = d.spectrum
    rename = dict(zip(plan.original, plan.parameters))
    blocks: list[ImplicitBlock] = []
    for bi, sol in enumerate(spec.solutions):
        if sol.kind == "semi":
            blocks.append(spec.implicit_block(bi).xreplace(rename))
    for _, w in plan.block_weights:
        for X in (w.args[1], w.args[3]):
            if X not in blocks:
                blocks.append(X)
    lines: list[tuple[sp.Symbol, sp.Expr]] = []
    holders: dict[ImplicitBlock, tuple[sp.Symbol, ImplicitBlock]] = {}
    similarity = {}
    rsym = {sym: (tuple(rs.coeffs), k) for rs in plan.roots for sym, k in rs.picks}
    where_root: dict = {}
    for h, X in enumerate(blocks):
        holder = sp.Symbol(f"_sb{h}")
        spec_, explicit, factors = block_spec(X)
        T = _similarity_floats(X)
        similarity[X] = T
        lines.append((holder, SemiEigen(X.n, sp.Tuple(*[sp.Tuple(*row) for row in spec_]),
                                        sp.Tuple(*explicit),
                                        sp.Tuple(*[sp.Tuple(*c) for c in factors]),
                                        sp.Tuple(*X.dense()), sp.Tuple(*T[0]), sp.Tuple(*T[1]))))
        holders[X] = (holder, X)
        for p, (energy, _) in enumerate(X.parts):
            if isinstance(energy, LevelRoot):
                where_root.setdefault((tuple(energy.args[1:]), int(energy.args[0])), (holder, p))
    for sym, key in rsym.items():
        if key not in where_root:
            raise AssertionError(f"emit: no semi-closed block holds the root {sym}")  # engine invariant
        holder, p = where_root[key]
        lines.append((sym, RootPick(holder, p)))
    groups: dict[tuple, list] = {}
    for sym, w in plan.block_weights:
        kind, X, a, Y, b, L, R = w.args
        groups.setdefault((X, Y, L, R), []).append((sym, w))
    for g, ((X, Y, L, R), members) in enumerate(groups.items()):
        hX, _ = holders[X]
        hY, _ = holders[Y]
        holder = sp.Symbol(f"_sw{g}")
        offs = []
        for B in (X, Y):
            o = [0]
            for _, mult in B.parts:
                o.append(o[-1] + int(mult))
            offs.append(sp.Tuple(*o))
        dense = [sp.Integer(0)] * (X.n * Y.n)
        for i, j, v in L:
            dense[int(i) * Y.n + int(j)] = v
        rdense = []
        if len(R):
            rdense = [sp.Integer(0)] * (X.n * Y.n)
            for i, j, v in R:
                rdense[int(i) * X.n + int(j)] = v
        real = all(sym.is_real for sym, _ in members)
        TX, TY = similarity[X], similarity[Y]
        lines.append((holder, SemiWeights(
            RootPick(hX, len(X.parts)), RootPick(hY, len(Y.parts)), offs[0], offs[1], X.n, Y.n,
            sp.Tuple(*dense), sp.Tuple(*rdense),
            sp.Tuple(sp.Tuple(*TX[0]), sp.Tuple(*TX[1])) if TX[0] else sp.Tuple(),
            sp.Tuple(sp.Tuple(*TY[0]), sp.Tuple(*TY[1])) if TY[0] else sp.Tuple(),
            sp.true if real else sp.false)))
        for sym, w in members:
            a, b = int(w.args[2]), int(w.args[4])
            lines.append((sym, RootPick(holder, a * len(Y.parts) + b)))
    return replace(plan, semi=tuple(lines))
