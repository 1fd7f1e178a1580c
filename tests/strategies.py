"""Hypothesis strategies: random small models built twice, independently.

Each random model is built as a symresp operator expression *and*, in parallel, as a plain numpy
matrix from this file's own Kronecker products and Jordan-Wigner strings (never through
``symresp.algebra``'s matrix form), so a bug in the matrix form cannot hide itself.

Local basis conventions (the documented ones): spin index i <-> m = S - i; fermion 0 empty,
1 occupied, Jordan-Wigner string (-1)^n on every earlier mode; boson number states 0..cutoff.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import numpy as np
import sympy as sp
from hypothesis import strategies as st

import symresp as sr


# ---------------------------------------------------------------- independent local matrices

def spin_matrices(S: Fraction) -> dict[str, np.ndarray]:
    """x, y, z, plus, minus for spin S on the states m = S, S-1, ..., -S."""
    d = int(2 * S + 1)
    m = np.array([float(S) - i for i in range(d)])
    plus = np.zeros((d, d), dtype=complex)
    for i in range(1, d):               # S+ |m_i> = c |m_{i-1}>
        plus[i - 1, i] = np.sqrt(float(S) * (float(S) + 1) - m[i] * (m[i] + 1))
    minus = plus.conj().T
    return {"x": (plus + minus) / 2, "y": (plus - minus) / 2j, "z": np.diag(m).astype(complex),
            "plus": plus, "minus": minus}


FERMION_C = np.array([[0, 1], [0, 0]], dtype=complex)
PARITY = np.diag([1.0, -1.0]).astype(complex)


def boson_annihilator(cutoff: int) -> np.ndarray:
    """Truncated a on |0>..|cutoff>."""
    return np.diag(np.sqrt(np.arange(1, cutoff + 1)), k=1).astype(complex)


@dataclass
class Factor:
    """A local factor: the symresp operator and its full-space numpy matrix."""

    op: object
    matrix: np.ndarray


class Lattice:
    """Sites built with symresp, and their embeddings built with numpy alone."""

    def __init__(self, kinds: list[tuple]):
        self.kinds = kinds
        self.handles = []
        self.dims = []
        for k, spec in enumerate(kinds):
            name = f"s{k}"
            if spec[0] == "spin":
                self.handles.append(sr.spin(name, sp.Rational(spec[1])))
                self.dims.append(int(2 * spec[1] + 1))
            elif spec[0] == "level":
                self.handles.append(sr.nlevel(name, spec[1]))
                self.dims.append(spec[1])
            elif spec[0] == "fermion":
                self.handles.append(sr.fermion(name))
                self.dims.append(2)
            else:
                self.handles.append(sr.boson(name, spec[1]))
                self.dims.append(spec[1] + 1)

    @property
    def dimension(self) -> int:
        return int(np.prod(self.dims))

    def embed(self, site: int, local: np.ndarray, odd: bool) -> np.ndarray:
        out = np.ones((1, 1), dtype=complex)
        for k, d in enumerate(self.dims):
            if k == site:
                block = local
            elif odd and k < site and self.kinds[k][0] == "fermion":
                block = PARITY
            else:
                block = np.eye(d, dtype=complex)
            out = np.kron(out, block)
        return out

    def vocabulary(self, site: int) -> list[Factor]:
        spec, h = self.kinds[site], self.handles[site]
        if spec[0] == "spin":
            mats = spin_matrices(Fraction(spec[1]))
            return [Factor(getattr(h, c), self.embed(site, mats[c], False)) for c in mats]
        if spec[0] == "level":
            n = spec[1]
            out = []
            for i in range(n):
                for j in range(n):
                    loc = np.zeros((n, n), dtype=complex)
                    loc[i, j] = 1
                    out.append(Factor(h.op(i, j), self.embed(site, loc, False)))
            return out
        if spec[0] == "fermion":
            c = h
            return [Factor(c, self.embed(site, FERMION_C, True)),
                    Factor(sr.dagger(c), self.embed(site, FERMION_C.T.copy(), True)),
                    Factor(sr.dagger(c) * c, self.embed(site, FERMION_C.T @ FERMION_C, False))]
        a = boson_annihilator(spec[1])
        return [Factor(h, self.embed(site, a, False)),
                Factor(sr.dagger(h), self.embed(site, a.conj().T.copy(), False)),
                Factor(sr.dagger(h) * h, self.embed(site, a.conj().T @ a, False))]


SITE_KINDS = st.sampled_from([
    ("spin", Fraction(1, 2)), ("spin", Fraction(1)), ("spin", Fraction(3, 2)),
    ("level", 2), ("level", 3), ("fermion",), ("boson", 2),
])

SMALL_RATIONALS = st.fractions(min_value=-2, max_value=2, max_denominator=4).filter(lambda q: q != 0)


@dataclass
class RandomModel:
    lattice: Lattice
    H: object                 # symresp Operator
    H_num: object             # callable(params dict name->float) -> numpy matrix
    A: object
    A_mat: np.ndarray
    B: object
    B_mat: np.ndarray
    params: tuple             # sympy Symbols


@st.composite
def random_models(draw, *, max_sites: int = 3, max_dim: int = 8, symbolic: bool = True):
    """A random Hermitian model (1..max_sites sites), with random A and B, built twice."""
    kinds = []
    n_sites = draw(st.integers(1, max_sites))
    for _ in range(n_sites):
        kinds.append(draw(SITE_KINDS))
        if int(np.prod([_dim(k) for k in kinds])) > max_dim:
            kinds.pop()
            break
    lat = Lattice(kinds)
    vocab = [lat.vocabulary(s) for s in range(len(kinds))]
    params = (sp.Symbol("J1", real=True), sp.Symbol("J2", positive=True)) if symbolic else ()
    n_params = draw(st.integers(0, len(params)))
    params = params[:n_params]

    def draw_term():
        sites = draw(st.lists(st.integers(0, len(kinds) - 1), min_size=1, max_size=min(2, len(kinds)),
                              unique=True))
        op, mat = sp.Integer(1), np.eye(lat.dimension, dtype=complex)
        for s in sites:
            f = draw(st.sampled_from(vocab[s]))
            op = f.op if op == 1 else op * f.op
            mat = mat @ f.matrix
        return op, mat

    terms = []
    for _ in range(draw(st.integers(1, 4))):
        q = draw(SMALL_RATIONALS)
        which = draw(st.integers(-1, len(params) - 1)) if params else -1
        op, mat = draw_term()
        terms.append((sp.Rational(q.numerator, q.denominator), which, op, mat))

    H = sr.Operator.scalar(0)
    for s in range(len(kinds)):  # declare every site, even if no term touches it
        H = H + 0 * vocab[s][0].op
    for q, which, op, mat in terms:
        coeff = q * (params[which] if which >= 0 else 1)
        H = H + coeff * op + coeff * sr.dagger(op)

    def H_num(values: dict) -> np.ndarray:
        out = np.zeros((lat.dimension, lat.dimension), dtype=complex)
        for q, which, _, mat in terms:
            c = float(q) * (values[params[which].name] if which >= 0 else 1.0)
            out += c * (mat + mat.conj().T)
        return out

    A_op, A_mat = draw_term()
    hermitian_pair = draw(st.booleans())
    if hermitian_pair:
        A_op, A_mat = A_op + sr.dagger(A_op), A_mat + A_mat.conj().T
        B_op, B_mat = A_op, A_mat
    else:
        B_op, B_mat = draw_term()
    return RandomModel(lat, H, H_num, A_op, A_mat, B_op, B_mat, params)


def _dim(spec) -> int:
    if spec[0] == "spin":
        return int(2 * spec[1] + 1)
    if spec[0] == "level":
        return spec[1]
    if spec[0] == "fermion":
        return 2
    return spec[1] + 1


@st.composite
def parameter_points(draw, params):
    """Random numeric values: real parameters in [-2, 2], positive ones in [0.2, 2]."""
    out = {}
    for p in params:
        # Away from 0: closed forms have removable singularities on measure-zero sets (e.g.
        # 1/J at J = 0); the emitted evaluators are the tool for such points.
        magnitude = round(draw(st.floats(0.2, 2.0, allow_nan=False)), 6)
        sign = 1 if p.is_positive else draw(st.sampled_from([-1, 1]))
        out[p.name] = sign * magnitude
    return out
