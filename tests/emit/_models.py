"""Models of the emit tests: each built twice, symbolically (symresp API) and as plain matrices.

The matrices come from the Kronecker helpers of ``tests/numeric/_kron.py`` (plain numpy), never
from symresp.algebra, so the reference shares nothing with the symbolic path it judges.
Each case names its parameters; the matrix builder takes them as floats by name.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import Callable

import numpy as np
import sympy as sp

import symresp as sr
from symresp.emit import compile_module, numpy_module_source

from ..numeric._kron import embed, spin_matrices

HALF = sp.Rational(1, 2)
J = sp.Symbol("J", real=True)
h = sp.Symbol("h", real=True)
D = sp.Symbol("D", real=True)
Delta = sp.Symbol("Delta", positive=True)
E_r = sp.Symbol("E_r", real=True)          # rhombic zero-field splitting
hx = sp.Symbol("hx", real=True)            # transverse field


@dataclass(frozen=True)
class Case:
    """A response to test: symbolic model, measured and driving operators, matrix builder."""

    name: str
    build: Callable[[], sr.Response]
    matrices: Callable[..., tuple[np.ndarray, np.ndarray, np.ndarray]]
    energy_scale: str      # parameter setting the energy scale (for T = 1e-3 |scale|)
    positive: tuple[str, ...] = ()


def _ring_symbolic(n: int, measure: str):
    s = [sr.spin(f"s{i}", HALF) for i in range(n)]
    bonds = [(0, 1)] if n == 2 else [(i, (i + 1) % n) for i in range(n)]
    H = sum((J * (s[i].vec @ s[j].vec) for i, j in bonds), 0 * s[0].z)
    Sz = sum((x.z for x in s), 0 * s[0].z)
    Sx = sum((x.x for x in s), 0 * s[0].z)
    Sy = sum((x.y for x in s), 0 * s[0].z)
    H = H + h * Sz
    ops = {"zz": (Sz, Sz), "xx": (Sx, Sx), "xy": (Sx, Sy), "s0z": (s[0].z, s[0].z),
           "s0x": (s[0].x, s[0].x)}
    A, B = ops[measure]
    return sr.Model(H, name=f"ring{n}").response(A, B)


def _ring_matrices(n: int, measure: str, *, J: float, h: float):
    dims = (2,) * n
    sx, sy, sz = spin_matrices(0.5)
    S = [[embed(op, i, dims) for op in (sx, sy, sz)] for i in range(n)]
    bonds = [(0, 1)] if n == 2 else [(i, (i + 1) % n) for i in range(n)]
    H = sum(J * sum(S[i][k] @ S[j][k] for k in range(3)) for i, j in bonds)
    tot = [sum(S[i][k] for i in range(n)) for k in range(3)]
    H = H + h * tot[2]
    ops = {"zz": (tot[2], tot[2]), "xx": (tot[0], tot[0]), "xy": (tot[0], tot[1]),
           "s0z": (S[0][2], S[0][2]), "s0x": (S[0][0], S[0][0])}
    A, B = ops[measure]
    return H, A, B


def _spin1_symbolic(measure: str):
    s = sr.spin("s", 1)
    A = {"zz": s.z, "xx": s.x}[measure]
    return sr.Model(D * s.z**2 + h * s.z, name="spin1").response(A)


def _spin1_matrices(measure: str, *, D: float, h: float):
    sx, _, sz = spin_matrices(1)
    A = {"zz": sz, "xx": sx}[measure]
    return D * sz @ sz + h * sz, A, A


def _rhombic_symbolic():
    # The {+1, -1} block mixes with angle atan(E_r / h): its weights hold h / sqrt(E_r^2 + h^2),
    # a removable singularity at E_r = h = 0.
    s = sr.spin("s", 1)
    return sr.Model(D * s.z**2 + E_r * (s.x**2 - s.y**2) + h * s.z, name="rhombic ion").response(s.z)


def _rhombic_matrices(*, D: float, E_r: float, h: float):
    sx, sy, sz = spin_matrices(1)
    return D * sz @ sz + E_r * (sx @ sx - sy @ sy) + h * sz, sz, sz


def _two_level_symbolic():
    q = sr.spin("q", HALF)
    return sr.Model(Delta * q.z, name="two-level").response(2 * q.x)


def _two_level_matrices(*, Delta: float):
    sx, _, sz = spin_matrices(0.5)
    return Delta * sz, 2 * sx, 2 * sx


def _tilted_pair_symbolic():
    # A spin 1 and a spin 1/2 with an anisotropy tilted off z: one block has a cubic
    # characteristic polynomial, so three levels are implicit roots (semi-closed form).
    a, b = sr.spin("a", 1), sr.spin("b", HALF)
    H = J * (a.vec @ b.vec + a.z**2 + a.x / 3)
    return sr.Model(H, name="tilted pair").response(a.z + b.z)


def _tilted_pair_matrices(*, J: float):
    dims = (3, 2)
    A1 = [embed(op, 0, dims) for op in spin_matrices(1)]
    B1 = [embed(op, 1, dims) for op in spin_matrices(0.5)]
    H = J * (sum(A1[k] @ B1[k] for k in range(3)) + A1[2] @ A1[2] + A1[0] / 3)
    Sz = A1[2] + B1[2]
    return H, Sz, Sz


def _tilted_field_symbolic():
    # A spin 1 with axial anisotropy in a field with z and x components: the whole 3 x 3 matrix
    # mixes three parameters and its characteristic polynomial is an irreducible cubic, so the
    # levels are implicit roots with parameter-dependent coefficients (semi-closed form), solved
    # numerically at every point by the evaluator.
    s = sr.spin("s", 1)
    return sr.Model(D * s.z**2 + h * s.z + hx * s.x, name="tilted field").response(s.x)


def _tilted_field_matrices(*, D: float, h: float, hx: float):
    sx, _, sz = spin_matrices(1)
    return D * sz @ sz + h * sz + hx * sx, sx, sx


CASES = {
    "dimer_zz": Case("dimer_zz", lambda: _ring_symbolic(2, "zz"),
                     functools.partial(_ring_matrices, 2, "zz"), "J"),
    "dimer_xx": Case("dimer_xx", lambda: _ring_symbolic(2, "xx"),
                     functools.partial(_ring_matrices, 2, "xx"), "J"),
    "dimer_xy": Case("dimer_xy", lambda: _ring_symbolic(2, "xy"),
                     functools.partial(_ring_matrices, 2, "xy"), "J"),
    "triangle_zz": Case("triangle_zz", lambda: _ring_symbolic(3, "zz"),
                        functools.partial(_ring_matrices, 3, "zz"), "J"),
    "triangle_s0x": Case("triangle_s0x", lambda: _ring_symbolic(3, "s0x"),
                         functools.partial(_ring_matrices, 3, "s0x"), "J"),
    "ring4_zz": Case("ring4_zz", lambda: _ring_symbolic(4, "zz"),
                     functools.partial(_ring_matrices, 4, "zz"), "J"),
    "ring4_s0z": Case("ring4_s0z", lambda: _ring_symbolic(4, "s0z"),
                      functools.partial(_ring_matrices, 4, "s0z"), "J"),
    "spin1_zz": Case("spin1_zz", lambda: _spin1_symbolic("zz"),
                     functools.partial(_spin1_matrices, "zz"), "D"),
    "spin1_xx": Case("spin1_xx", lambda: _spin1_symbolic("xx"),
                     functools.partial(_spin1_matrices, "xx"), "D"),
    "rhombic": Case("rhombic", _rhombic_symbolic, _rhombic_matrices, "D"),
    "two_level": Case("two_level", _two_level_symbolic, _two_level_matrices, "Delta",
                      positive=("Delta",)),
    "tilted_pair": Case("tilted_pair", _tilted_pair_symbolic, _tilted_pair_matrices, "J"),
    "tilted_field": Case("tilted_field", _tilted_field_symbolic, _tilted_field_matrices, "D"),
}


@functools.lru_cache(maxsize=None)
def response(name: str) -> sr.Response:
    """The derived response of a case (derived once per test session)."""
    return CASES[name].build()


@functools.lru_cache(maxsize=None)
def source(name: str) -> str:
    """Emitted module source of a case."""
    return numpy_module_source(response(name).derivation)


@functools.lru_cache(maxsize=None)
def module(name: str):
    """The compiled evaluator module of a case (in this process)."""
    return compile_module(source(name))
