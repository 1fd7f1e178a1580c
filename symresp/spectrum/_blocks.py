r"""Symmetry blocks and quantum numbers (layer: spectrum).

Owns the split of the (sector) product basis into blocks that H does not mix and the labelling
of blocks by additive conserved quantities. Imports sympy, python-flint, :mod:`symresp.errors`,
:mod:`symresp.algebra` and :mod:`symresp.models`.

Method
------
* Blocks are the connected components of the graph whose edges are the non-zero off-diagonal
  matrix elements of H (identically non-zero as expressions in the parameters). This is the
  finest split the product basis allows; every additive conserved quantity is constant on it.
* Additive conserved quantities :math:`Q = \sum_s q_s(n_s)` (a sum of single-site diagonal
  operators) satisfy :math:`q(\text{row}) = q(\text{column})` on every non-zero element of H.
  Reported is an independent set, each named by what it is (see :func:`_quantum_numbers`):
  linear combinations of the sites' natural observables (total :math:`S^z`, particle numbers,
  boson number, ``n(a)+q.z``), conserved residues (``s.z mod 2``), and only where those leave
  blocks unlabelled apart, single-site functions. The linear algebra is exact, on small
  integer/rational matrices with python-flint (rows: the distinct changes along H, at most a
  few hundred even for dimension 4096).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction

import flint
import numpy as np
import sympy as sp

from ..algebra import (FERMION, SITE_KINDS, SPIN, Basis, Site, SparseForm, ladder_value,
                       natural_term, natural_value, sparse_form)
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
class _Residue(QuantumNumber):
    """A conserved residue: the local values add up modulo ``modulus``."""

    modulus: int = 2

    def value(self, state: tuple[int, ...]) -> sp.Expr:
        """Value on a product state, in 0 .. modulus - 1."""
        return sp.Integer(int(QuantumNumber.value(self, state)) % self.modulus)


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


def _flavour(site: Site) -> str | None:
    if site.is_fermion:
        for tag in ("up", "dn"):
            if site.name.endswith("_" + tag):
                return tag
    return None


def _named_linear(sites: tuple[Site, ...]) -> list[tuple[str, str, tuple[Fraction, ...]]]:
    """Familiar linear conserved quantities as (name, definition, coefficient per site)."""
    out = []
    kinds = [s.kind for s in sites]
    flav = [_flavour(s) for s in sites]
    zero = [Fraction(0)] * len(sites)
    for kind, info in SITE_KINDS.items():
        if info.family is None:
            continue
        name, description = info.family
        if kind == SPIN and ("up" in flav and "dn" in flav):
            # spinful fermions carry S^z = (n_up - n_dn)/2 into the total
            c = zero[:]
            for i, s in enumerate(sites):
                c[i] = Fraction(1) if s.kind == SPIN else Fraction(
                    {"up": 1, "dn": -1}.get(flav[i], 0), 2)
            out.append((name, description, tuple(c)))
        elif kind in kinds:
            out.append((name, description, tuple(Fraction(int(k == kind)) for k in kinds)))
        if kind == FERMION and kind in kinds:
            for tag in ("up", "dn"):
                idx = [i for i, f in enumerate(flav) if f == tag]
                if idx and len(idx) < kinds.count(FERMION):
                    out.append((f"N_{tag}", f"number of {tag} fermions",
                                tuple(Fraction(int(f == tag)) for f in flav)))
    return out


def _coefficient_text(c: Fraction, first: bool) -> str:
    sign = "-" if c < 0 else ("" if first else "+")
    a = abs(c)
    return sign + ("" if a == 1 else f"{a}*")


def _linear_name(sites: tuple[Site, ...], c: tuple[Fraction, ...]) -> str:
    """``n(a)+q.z``, ``Sz-2*N`` ...: whole families (all spins, all fermions, all bosons) with
    one coefficient are written by their familiar name, other sites one by one."""
    parts: list[tuple[Fraction, str]] = []
    done: set[int] = set()
    families = [(kind, info.family[0]) for kind, info in SITE_KINDS.items() if info.family]
    for kind, name in families:
        idx = [i for i, s in enumerate(sites) if s.kind == kind]
        if len(idx) > 1 and c[idx[0]] != 0 and len({c[i] for i in idx}) == 1:
            parts.append((c[idx[0]], name))
            done |= set(idx)
    for i, s in enumerate(sites):
        if i not in done and c[i] != 0:
            parts.append((c[i], natural_term(s)))
    return "".join(_coefficient_text(v, k == 0) + t for k, (v, t) in enumerate(parts))


def _primitive(v: list[Fraction]) -> tuple[Fraction, ...]:
    """The integer multiple of v with coprime entries and a positive first non-zero entry."""
    den = math.lcm(*(x.denominator for x in v))
    ints = [int(x * den) for x in v]
    g = math.gcd(*ints) or 1
    sign = -1 if next((x for x in ints if x), 0) < 0 else 1
    return tuple(Fraction(sign * x // g) for x in ints)


def _sparsest(v: tuple[Fraction, ...], chosen: list[tuple[Fraction, ...]]) -> tuple[Fraction, ...]:
    """v or v minus a multiple of one chosen quantity, whichever has the fewest sites (then the
    smallest coefficients): N - (n(l_up)+n(l_dn)+n(r_up)) is better named n(r_dn)."""
    best = v
    for u in chosen:
        for i, x in enumerate(u):
            if x != 0 and v[i] != 0:
                cand = _primitive([a - v[i] / x * b for a, b in zip(v, u)])
                if any(cand) and (sum(map(bool, cand)), max(map(abs, cand))) < \
                        (sum(map(bool, best)), max(map(abs, best))):
                    best = cand
    return best


def _rank(vectors: list[tuple[Fraction, ...]]) -> int:
    if not vectors:
        return 0
    return flint.fmpq_mat([[flint.fmpq(x.numerator, x.denominator) for x in v]
                           for v in vectors]).rank()


def _null_basis(rows: list[tuple[int, ...]], n: int) -> list[list[Fraction]]:
    """A basis of {c : row . c = 0 for every row} over QQ, from the reduced row echelon form
    (each basis vector has one free coordinate equal to 1)."""
    if not rows:
        return [[Fraction(int(i == j)) for j in range(n)] for i in range(n)]
    R, rank = flint.fmpq_mat([list(r) for r in rows]).rref()
    pivots, row = [], 0
    for j in range(n):
        if row < rank and R[row, j] != 0:
            pivots.append(j)
            row += 1
    out = []
    for f in (j for j in range(n) if j not in pivots):
        v = [Fraction(0)] * n
        v[f] = Fraction(1)
        for r, pj in enumerate(pivots):
            x = -R[r, f]
            v[pj] = Fraction(int(x.p), int(x.q))
        out.append(v)
    return out


def _residues(rows: list[tuple[int, ...]], n: int, free: list[tuple[Fraction, ...]]
              ) -> list[tuple[int, tuple[int, ...]]]:
    """Conserved residues: (p, c) with sum_s c_s u_s (mod p) constant on every block, for the
    primes p of the torsion of Z^n / (row lattice), c not the reduction of a linear quantity.

    The torsion primes are those dividing an invariant factor of the Smith normal form of the
    rows; for each, the null space mod p of the rows, minus the span of the linear quantities
    reduced mod p, gives the Z_p charges (only the Z_p part of a Z_{p^k} factor is found).
    """
    if not rows:
        return []
    snf = flint.fmpz_mat([list(r) for r in rows]).snf()
    primes: set[int] = set()
    for i in range(min(snf.nrows(), snf.ncols())):
        d = abs(int(snf[i, i]))
        q = 2
        while d > 1 and q * q <= d:
            while d % q == 0:
                primes.add(q)
                d //= q
            q += 1
        if d > 1:
            primes.add(d)
    out = []
    for p in sorted(primes):
        base = [[int(x) % p for x in v] for v in free]   # linear quantities are primitive integers

        def rank_mod(vs: list[list[int]]) -> int:
            return flint.nmod_mat(vs, p).rank() if vs else 0

        X, nullity = flint.nmod_mat([list(r) for r in rows], p).nullspace()
        for j in range(nullity):
            c = [int(X[i, j]) for i in range(n)]
            if rank_mod(base + [c]) > rank_mod(base):
                base.append(c)
                lead = next(x for x in c if x)
                inv = pow(lead, -1, p)
                out.append((p, tuple(x * inv % p for x in c)))
    return out


def _residue_name(sites: tuple[Site, ...], p: int, c: tuple[int, ...]) -> str:
    """``(n(a)+q.z+1/2) mod 2``: the residue written with the natural observables
    (u = m + S for spins, so the constant sum_s c_s S_s, reduced mod p, is added)."""
    offset = sum((sp.Integer(ci) * s.spin for ci, s in zip(c, sites) if s.kind == SPIN),
                 sp.Integer(0))
    offset = offset - p * sp.floor(offset / p)
    body = _linear_name(sites, tuple(Fraction(x) for x in c))
    if offset != 0:
        body += f"+{offset}"
    return f"({body}) mod {p}" if ("+" in body or "-" in body[1:]) else f"{body} mod {p}"


def _local_name(sites: tuple[Site, ...], q: list[list[Fraction]]) -> str:
    terms = []
    for si, s in enumerate(sites):
        for k in range(1, s.dim):
            if q[si][k] != 0:
                terms.append(_coefficient_text(q[si][k], not terms)
                             + f"|{s.label(k)}><{s.label(k)}|({s.name})")
    return "".join(terms)


def _quantum_numbers(basis: Basis, H: SparseForm, groups: list[list[int]],
                     clock: Clock | None = None) -> tuple[QuantumNumber, ...]:
    r"""An independent set of named additive conserved quantities labelling the blocks.

    1. *Linear* quantities :math:`Q = \sum_s c_s\,\ell_s` with :math:`\ell_s` the natural
       observable of each site (:math:`S^z`, the occupation number, the level index): the
       rational null space of the changes of :math:`\ell` along the non-zero elements of H.
       The familiar ones (total :math:`S^z`, N, N per flavour, boson number) are chosen first;
       the rest are completed with small integer combinations, named by what they are
       (``n(a)+q.z``).
    2. *Residues* :math:`\sum_s c_s u_s \bmod p` (:math:`u_s` the ladder index): the parities of
       an ion with rhombic anisotropy, of the Rabi model.
    3. Only where these leave two blocks with the same labels, single-site diagonal functions
       :math:`\sum_s q_s(k_s)` that tell them apart (a dark level of an n-level site).

    A single oscillator (H = w n) conserves every function of n; n alone labels its blocks, so
    the boson number is the only quantity reported.
    """
    sites = basis.sites
    n = len(sites)
    states = basis.states
    nat = [[natural_value(s, k) for k in range(s.dim)] for s in sites]
    lad = [[ladder_value(s, k) for k in range(s.dim)] for s in sites]
    # Distinct changes of the local states along the off-diagonal elements of H (vectorised:
    # 28 000 elements of a 4096-state ring reduce to a few dozen patterns).
    keys = np.array(list(H), dtype=np.int64).reshape(-1, 2)
    keys = keys[keys[:, 0] != keys[:, 1]]
    changes: set[tuple[tuple[int, int, int], ...]] = set()
    lin_rows: set[tuple[int, ...]] = set()
    lad_rows: set[tuple[int, ...]] = set()
    if len(keys):
        S = np.array(states, dtype=np.int32).reshape(len(states), n)
        dims = np.array([s.dim for s in sites], dtype=np.int32)
        A, B = S[keys[:, 0]], S[keys[:, 1]]
        code = np.where(A != B, A * dims + B + 1, 0).astype(np.int32)
        for raw in {row.tobytes() for row in code}:
            row = np.frombuffer(raw, dtype=np.int32).tolist()
            changes.add(tuple((i, (x - 1) // sites[i].dim, (x - 1) % sites[i].dim)
                              for i, x in enumerate(row) if x))
    for ch in changes:
        v, u = [0] * n, [0] * n
        for i, a, b in ch:
            v[i] = int(nat[i][a] - nat[i][b])
            u[i] = lad[i][a] - lad[i][b]
        lin_rows.add(tuple(v))
        lad_rows.add(tuple(u))
    if clock:
        clock.check("finding conserved quantities")
    rows = sorted(lin_rows)
    null = _null_basis(rows, n)

    def conserved(c: tuple[Fraction, ...]) -> bool:
        return all(sum((Fraction(x) * y for x, y in zip(r, c)), Fraction(0)) == 0 for r in rows)

    chosen: list[QuantumNumber] = []
    vecs: list[tuple[Fraction, ...]] = []

    def add_linear(name: str, definition: str, c: tuple[Fraction, ...]) -> None:
        loc = tuple(tuple(c[i] * nat[i][k] for k in range(s.dim)) for i, s in enumerate(sites))
        loc = tuple(tuple(sp.Rational(x.numerator, x.denominator) if isinstance(x, Fraction)
                          else sp.Rational(x) for x in row) for row in loc)
        chosen.append(QuantumNumber(name, definition, loc))
        vecs.append(c)

    for name, definition, c in _named_linear(sites):
        if any(c) and conserved(c) and _rank(vecs + [c]) > len(vecs):
            add_linear(name, definition, c)
    for v in null:
        if len(vecs) == len(null):
            break
        c = _sparsest(_primitive(v), vecs)
        if _rank(vecs + [c]) > len(vecs):
            name = _linear_name(sites, c)
            add_linear(name, name, c)
    for p, c in _residues(sorted(lad_rows), n, vecs):
        name = _residue_name(sites, p, c)
        loc = tuple(tuple(sp.Integer(c[i] * lad[i][k] % p) for k in range(s.dim))
                    for i, s in enumerate(sites))
        chosen.append(_Residue(name, f"{name} (conserved residue)", loc, p))
    # 3. Blocks that still share their labels: single-site functions that separate them.
    first = [g[0] for g in groups]

    def labels() -> dict:
        seen: dict = {}
        for s0 in first:
            seen.setdefault(tuple(q.value(states[s0]) for q in chosen), []).append(s0)
        return seen

    clash = [v for v in labels().values() if len(v) > 1]
    if not clash:
        return tuple(chosen)
    offsets, m = [], 0
    for s in sites:
        offsets.append(m)
        m += s.dim
    full_rows = []
    for ch in sorted(changes):
        vec = [0] * m
        for i, a, b in ch:
            vec[offsets[i] + a] += 1
            vec[offsets[i] + b] -= 1
        full_rows.append(tuple(vec))
    for i in range(n):                       # gauge q_s(0) = 0
        vec = [0] * m
        vec[offsets[i]] = 1
        full_rows.append(tuple(vec))
    if clock:
        clock.check("finding conserved quantities")
    for v in _null_basis(full_rows, m):
        q = [[v[offsets[i] + k] for k in range(s.dim)] for i, s in enumerate(sites)]
        values = {s0: sum((q[i][k] for i, k in enumerate(states[s0])), Fraction(0))
                  for group in clash for s0 in group}
        if all(len({values[s0] for s0 in group}) == 1 for group in clash):
            continue
        name = _local_name(sites, q)
        chosen.append(QuantumNumber(name, name, tuple(
            tuple(sp.Rational(x.numerator, x.denominator) for x in row) for row in q)))
        clash = [v for v in labels().values() if len(v) > 1]
        if not clash:
            break
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
    qns = _quantum_numbers(basis, H, groups, clock)
    blocks = []
    for i, g in enumerate(groups):
        labels = tuple((q.name, q.value(basis.states[g[0]])) for q in qns)
        blocks.append(Block(i, tuple(g), labels))
    out = BlockStructure(basis, H, tuple(blocks), qns)
    system._memo["blocks"] = out
    return out
