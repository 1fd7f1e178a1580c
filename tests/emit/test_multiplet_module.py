"""The compact evaluator of large spectra of total-spin multiplets against exact
diagonalisation built from numpy Kronecker products (independent of symresp)."""

from __future__ import annotations

from fractions import Fraction
from functools import lru_cache, reduce

import numpy as np
import sympy as sp
from hypothesis import given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp.emit._multiplet_module import COMPACT_LEVELS

from ..conftest import assert_close
from ..strategies import spin_matrices

J = sp.Symbol("J", positive=True)
h = sp.Symbol("h", real=True)


def _ops(N: int, S: Fraction):
    m = spin_matrices(S)
    e = np.eye(int(2 * S + 1))
    return [{c: reduce(np.kron, [m[c] if k == i else e for k in range(N)]) for c in "xyz"}
            for i in range(N)]


@lru_cache(maxsize=None)
def _ring(component: str):
    # Four S = 3/2 spins on a ring in a field: 256 states, 117 levels (> COMPACT_LEVELS).
    s = [sr.spin(f"r{i}", "3/2") for i in range(4)]
    H = sum((J * (s[i].vec @ s[(i + 1) % 4].vec) for i in range(4)), sr.Operator.scalar(0)) + \
        h * sum((x.z for x in s), sr.Operator.scalar(0))
    A = sum((x.z for x in s), sr.Operator.scalar(0)) if component == "total" else s[0].x
    r = sr.Model(H).response(A)
    return r, r.evaluator_source(), r.numpy()


class _Lehmann:
    """Lehmann sums from numpy.linalg.eigh (docs/conventions.md: chi(omega) =
    sum_nm (p_n - p_m) |A_nm|^2 / (E_m - E_n - omega - i eta)), vectorised over all pairs."""

    def __init__(self, H: np.ndarray, A: np.ndarray, T: float) -> None:
        E, U = np.linalg.eigh(H)
        self.E = E
        self.W = np.abs(U.conj().T @ A @ U) ** 2
        x = np.exp(-(E - E.min()) / T)
        self.p = x / x.sum()
        self.gap = E[None, :] - E[:, None]                       # E_m - E_n
        self.same = np.abs(self.gap) <= 1e-9 * max(1.0, np.abs(E).max())
        dp = self.p[:, None] - self.p[None, :]
        with np.errstate(divide="ignore", invalid="ignore"):
            self.isolated = np.where(self.same, 0.0, dp * self.W / self.gap).sum()
        mean = float(self.p @ np.diag(U.conj().T @ A @ U).real)
        elastic = (np.where(self.same, self.W, 0.0) * self.p[:, None]).sum()
        self.isothermal = self.isolated + (elastic - mean ** 2) / T
        self.dp = dp

    def frequency(self, omega: np.ndarray, eta: float) -> np.ndarray:
        z = omega[:, None, None] + 1j * eta
        return (self.dp * self.W / (self.gap - z)).sum(axis=(1, 2))


def _reference(component: str, Jv: float, hv: float, T: float):
    ops = _ops(4, Fraction(3, 2))
    H = sum(Jv * sum(ops[i][c] @ ops[(i + 1) % 4][c] for c in "xyz") for i in range(4)) + \
        hv * sum(o["z"] for o in ops)
    A = sum(o["z"] for o in ops) if component == "total" else ops[0]["x"]
    return H, _Lehmann(H, A, T)


@settings(max_examples=6, deadline=None)
@given(Jv=st.floats(0.2, 2.0), hv=st.floats(-1.5, 1.5), T=st.floats(0.2, 4.0),
       component=st.sampled_from(["total", "local"]))
def test_compact_module_matches_exact_diagonalisation(Jv, hv, T, component):
    r, source, mod = _ring(component)
    assert len(r.levels) > COMPACT_LEVELS and "total-spin multiplets (compact)" in source
    H, ref = _reference(component, Jv, hv, T)
    assert_close(mod.chi_isothermal(T, J=Jv, h=hv), ref.isothermal, what="isothermal")
    assert_close(mod.chi_isolated(T, Jv, hv), ref.isolated, atol=1e-10, what="isolated")
    omega = np.array([0.0, 0.45, 1.9])
    assert_close(mod.chi_omega(omega, T, J=Jv, h=hv, eta=0.05), ref.frequency(omega, 0.05),
                 what="chi(omega)")
    E = np.sort(np.repeat(mod.energies(Jv, hv), mod.DEGENERACIES))
    assert_close(E, np.linalg.eigvalsh(H), atol=1e-10, what="energies")


def test_compact_jacobian_matches_finite_differences():
    _, _, mod = _ring("local")
    Jv, hv, T, step = 0.9, 0.35, 0.8, 1e-6
    jac = mod.jacobian_static(T, J=Jv, h=hv)
    fd = [(mod.chi_isothermal(T, J=Jv + step, h=hv) - mod.chi_isothermal(T, J=Jv - step, h=hv)) / (2 * step),
          (mod.chi_isothermal(T, J=Jv, h=hv + step) - mod.chi_isothermal(T, J=Jv, h=hv - step)) / (2 * step)]
    assert_close(jac, fd, rtol=1e-6, atol=1e-8, what="jacobian")
    grid = mod.chi_isothermal(np.array([0.5, 1.0, 2.0]), J=Jv, h=np.array([0.1, 0.2, 0.3]))
    assert grid.shape == (3,)
