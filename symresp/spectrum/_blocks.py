r"""Symmetry blocks and quantum numbers (layer: spectrum).

Owns the split of the (sector) product basis into blocks that H does not mix and the labelling
of blocks by additive conserved quantities. Imports sympy, :mod:`symresp.errors`,
:mod:`symresp.algebra` and :mod:`symresp.models`.

Method
------
* Blocks are the connected components of the graph whose edges are the non-zero off-diagonal
  matrix elements of H (identically non-zero as expressions in the parameters). This is the
  finest split the product basis allows; every additive conserved quantity is constant on it.
* Additive conserved quantities :math:`Q = \sum_s q_s(n_s)` (a sum of single-site diagonal
  operators) satisfy :math:`q(\text{row}) = q(\text{column})` on every non-zero element of H:
  a linear system over QQ in the unknowns :math:`q_s(k)`. Its solutions are reported with the
  familiar names first (total :math:`S^z`, particle numbers, boson number) and the rest as
  ``Q1, Q2, ...`` with their local form.
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy as sp

from ..algebra import Basis, Site, SparseForm, sparse_form
from ..models import Clock, System

__all__ = ["Block", "QuantumNumber", "BlockStructure", "decompose"]


@dataclass(frozen=True, slots=True)
class QuantumNumber:
    """An additive conserved quantity: name, readable definition, and its local values."""

    name: str
    definition: str
    local: tuple[tuple[sp.Expr, ...], ...]  # local[s][k]: contribution of site s in state k

    def value(self, state: tuple[int, ...]) -> sp.Expr:
        """Value on a product state."""
        return sum((self.local[s][k] for s, k in enumerate(state)), sp.Integer(0))


@dataclass(frozen=True, slots=True)
class Block:
    """A set of basis states that H does not connect to any other state."""

    index: int
    positions: tuple[int, ...]
    labels: tuple[tuple[str, sp.Expr], ...]
    parent: int = -1                 # for a symmetry sector: index of the block it splits
    sector: object = None            # symmetry sector (spectrum._symmetry.Sector) or None

    @property
    def size(self) -> int:
        """Number of states (of the sector's subspace, for a symmetry sector)."""
        return len(self.positions) if self.sector is None else self.sector.size

    def label_text(self) -> str:
        """Quantum numbers as ``Sz=1/2, N=1`` (empty when none were found)."""
        return ", ".join(f"{n}={v}" for n, v in self.labels)


@dataclass(frozen=True, slots=True)
class BlockStructure:
    """Basis, sparse H, blocks and quantum numbers of a system."""

    basis: Basis
    hamiltonian: SparseForm
    blocks: tuple[Block, ...]
    quantum_numbers: tuple[QuantumNumber, ...]

    def locations(self) -> dict[int, tuple[int, int]]:
        """Map basis position -> (block index, position inside the block)."""
        return {p: (b.index, li) for b in self.blocks for li, p in enumerate(b.positions)}

    def describe(self) -> str:
        """One line per block size class, e.g. ``12 blocks; sizes 1 x4, 3 x6, 6 x2``."""
        sizes: dict[int, int] = {}
        for b in self.blocks:
            sizes[b.size] = sizes.get(b.size, 0) + 1
        parts = ", ".join(f"{k} x{v}" for k, v in sorted(sizes.items()))
        qn = ", ".join(q.name for q in self.quantum_numbers) or "none"
        return f"{len(self.blocks)} blocks (sizes {parts}); conserved: {qn}"


def _components(n: int, H: SparseForm) -> list[list[int]]:
    parent = list(range(n))

    def find(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    for r, c in H:
        if r != c:
            a, b = find(r), find(c)
            if a != b:
                parent[max(a, b)] = min(a, b)
    groups: dict[int, list[int]] = {}
    for i in range(n):
        groups.setdefault(find(i), []).append(i)
    return sorted(groups.values(), key=lambda g: g[0])


def _named_candidates(sites: tuple[Site, ...]) -> list[tuple[str, str, list[list[sp.Expr]]]]:
    """Familiar conserved quantities: (name, definition, local values)."""
    zero = [[sp.Integer(0)] * s.dim for s in sites]
    out = []
    spins = [i for i, s in enumerate(sites) if s.kind == "spin"]
    ups = [i for i, s in enumerate(sites) if s.kind == "fermion" and s.name.endswith("_up")]
    dns = [i for i, s in enumerate(sites) if s.kind == "fermion" and s.name.endswith("_dn")]
    ferms = [i for i, s in enumerate(sites) if s.kind == "fermion"]
    bos = [i for i, s in enumerate(sites) if s.kind == "boson"]
    if spins or (ups and dns):
        loc = [row[:] for row in zero]
        for i in spins:
            loc[i] = [sites[i].m_of(k) for k in range(sites[i].dim)]
        for i in ups:
            loc[i] = [sp.Integer(0), sp.Rational(1, 2)]
        for i in dns:
            loc[i] = [sp.Integer(0), sp.Rational(-1, 2)]
        out.append(("Sz", "total S^z", loc))
    if ferms:
        loc = [row[:] for row in zero]
        for i in ferms:
            loc[i] = [sp.Integer(0), sp.Integer(1)]
        out.append(("N", "fermion number", loc))
        for tag, idx in (("N_up", ups), ("N_dn", dns)):
            if idx and len(idx) < len(ferms):
                loc = [row[:] for row in zero]
                for i in idx:
                    loc[i] = [sp.Integer(0), sp.Integer(1)]
                out.append((tag, tag.replace("N_", "number of ") + " fermions", loc))
    if bos:
        loc = [row[:] for row in zero]
        for i in bos:
            loc[i] = [sp.Integer(k) for k in range(sites[i].dim)]
        out.append(("Nb", "boson number", loc))
    return out


def _quantum_numbers(basis: Basis, H: SparseForm) -> tuple[QuantumNumber, ...]:
    sites = basis.sites
    offsets, n_unknowns = [], 0
    for s in sites:
        offsets.append(n_unknowns)
        n_unknowns += s.dim
    rows: set[tuple[int, ...]] = set()
    for r, c in H:
        if r == c:
            continue
        vec = [0] * n_unknowns
        for si, (kr, kc) in enumerate(zip(basis.states[r], basis.states[c])):
            if kr != kc:
                vec[offsets[si] + kr] += 1
                vec[offsets[si] + kc] -= 1
        rows.add(tuple(vec))
    # Gauge: q_s(0) = 0 removes the per-site constants, which label nothing.
    for si in range(len(sites)):
        vec = [0] * n_unknowns
        vec[offsets[si]] = 1
        rows.add(tuple(vec))
    system = sp.Matrix(sorted(rows)) if rows else sp.zeros(0, n_unknowns)
    null = system.nullspace() if system.rows else [sp.eye(n_unknowns)[:, i] for i in range(n_unknowns)]
    if not null:
        return ()

    def gauge(loc: list[list[sp.Expr]]) -> sp.Matrix:
        return sp.Matrix([v - row[0] for row in loc for v in row])

    span = sp.Matrix.hstack(*null)
    chosen: list[QuantumNumber] = []
    chosen_vecs: list[sp.Matrix] = []

    def independent(v: sp.Matrix) -> bool:
        return sp.Matrix.hstack(*chosen_vecs, v).rank() > len(chosen_vecs)

    for name, definition, loc in _named_candidates(sites):
        v = gauge(loc)
        if v.is_zero_matrix:
            continue
        in_span = sp.Matrix.hstack(span, v).rank() == span.shape[1]
        if in_span and independent(v):
            chosen.append(QuantumNumber(name, definition, tuple(tuple(r) for r in loc)))
            chosen_vecs.append(v)
    extra = 0
    for v in null:
        if len(chosen_vecs) == span.shape[1]:
            break
        if not independent(v):
            continue
        extra += 1
        loc = [[v[offsets[si] + k] for k in range(s.dim)] for si, s in enumerate(sites)]
        terms = []
        for si, s in enumerate(sites):
            for k in range(1, s.dim):
                if loc[si][k] != 0:
                    terms.append(f"{loc[si][k]}*{s.name}|{s.label(k)}><{s.label(k)}|")
        chosen.append(QuantumNumber(f"Q{extra}", " + ".join(terms), tuple(tuple(r) for r in loc)))
        chosen_vecs.append(v)
    return tuple(chosen)


def decompose(system: System, clock: Clock | None = None) -> BlockStructure:
    """Split the basis of ``system`` into blocks of H and label them.

    Parameters
    ----------
    system : System
    clock : Clock, optional
        Running budget; checked between steps.

    Returns
    -------
    BlockStructure

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.models import System
    >>> from symresp.spectrum import decompose
    >>> J = sp.Symbol("J", positive=True)
    >>> a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    >>> decompose(System.build(J * (a.vec @ b.vec))).describe()
    '3 blocks (sizes 1 x2, 2 x1); conserved: Sz'
    """
    memo = system._memo.get("blocks")
    if memo is not None:
        return memo
    basis = system.basis()
    H = sparse_form(system.hamiltonian, basis)
    if clock:
        clock.check("building the Hamiltonian matrix")
    groups = _components(basis.dimension, H)
    qns = _quantum_numbers(basis, H)
    blocks = []
    for i, g in enumerate(groups):
        labels = tuple((q.name, q.value(basis.states[g[0]])) for q in qns)
        blocks.append(Block(i, tuple(g), labels))
    out = BlockStructure(basis, H, tuple(blocks), qns)
    system._memo["blocks"] = out
    return out
