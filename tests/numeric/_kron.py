"""Kronecker-product helpers for the numeric tests (plain numpy, independent of symresp.algebra).

Basis convention: spin states ordered m = S, S-1, ..., -S; product basis ordered with the first
site as the most significant factor (``numpy.kron`` order).
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np

SIGMA_X = np.array([[0, 1], [1, 0]], dtype=complex)
SIGMA_Y = np.array([[0, -1j], [1j, 0]], dtype=complex)
SIGMA_Z = np.array([[1, 0], [0, -1]], dtype=complex)


def spin_matrices(spin: float | Fraction) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(S_x, S_y, S_z) for spin S on the 2S+1 states m = S, ..., -S."""
    two_s = int(round(2 * float(spin)))
    s = two_s / 2
    m = s - np.arange(two_s + 1)
    # <m+1| S+ |m> = sqrt(S(S+1) - m(m+1)); S+ raises m, i.e. moves one index up.
    raise_elements = np.sqrt(s * (s + 1) - m[1:] * (m[1:] + 1))
    s_plus = np.diag(raise_elements, k=1).astype(complex)
    s_minus = s_plus.conj().T
    sx = (s_plus + s_minus) / 2
    sy = (s_plus - s_minus) / 2j
    sz = np.diag(m).astype(complex)
    return sx, sy, sz


def embed(op: np.ndarray, site: int, dims: tuple[int, ...]) -> np.ndarray:
    """``1 x ... x op x ... x 1`` with ``op`` acting on ``site`` of a product of ``dims``."""
    out = np.ones((1, 1), dtype=complex)
    for k, d in enumerate(dims):
        out = np.kron(out, op if k == site else np.eye(d))
    return out


def heisenberg_dimer(j: float, spin_a: float = 0.5, spin_b: float = 0.5) -> np.ndarray:
    """J S_a . S_b on the product space of two spins."""
    a, b = spin_matrices(spin_a), spin_matrices(spin_b)
    dims = (a[2].shape[0], b[2].shape[0])
    return j * sum(embed(sa, 0, dims) @ embed(sb, 1, dims) for sa, sb in zip(a, b))


def total(component: int, spins: tuple[float, ...]) -> np.ndarray:
    """Sum over sites of S^component (0, 1, 2 = x, y, z)."""
    mats = [spin_matrices(s)[component] for s in spins]
    dims = tuple(m.shape[0] for m in mats)
    return sum(embed(m, k, dims) for k, m in enumerate(mats))
