r"""The Lehmann representation on numpy arrays (layer: numeric).

From an :class:`Eigensystem` and the operators A and B: level weights
:math:`W_{ab} = \operatorname{Tr}(P_a A P_b B)`, pole frequencies and weights, the static
susceptibilities and the sums over poles on a grid of frequencies, times or Matsubara indices.
Imports numpy and :mod:`symresp.errors` only.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from symresp.errors import InputError

from ._arguments import (_as_beta, _as_integer_array, _as_operators, _as_positive,
                         _as_real_array, _as_tolerance, _scalar_or_array)
from ._levels import Eigensystem, _diagonalise, _population_differences, _populations

#: Relative threshold below which the T = 0 fluctuation term counts as zero (beta = inf only).
FLUCTUATION_RTOL = 1e-12


@dataclass(frozen=True, slots=True, eq=False)
class _Lehmann:
    """Everything the public functions need; built once by :func:`_lehmann`."""

    system: Eigensystem
    beta: float
    populations: np.ndarray  # p_a per state of level a
    log_z: float
    pair_frequencies: np.ndarray  # Omega = E_b - E_a for every ordered pair a != b
    pair_weights: np.ndarray  # w = (p_a - p_b) W_ab for the same pairs
    isolated: complex
    isothermal: complex
    expectation_a: complex
    expectation_b: complex
    weight_scale: float  # ||A||_F ||B||_F


def _lehmann(es: Eigensystem, a: np.ndarray, b: np.ndarray, beta: float) -> _Lehmann:
    populations, log_z = _populations(es, beta)
    v = es.vectors
    a_eig = v.conj().T @ a @ v  # A_nm = <n|A|m>
    b_eig = v.conj().T @ b @ v
    n_levels = es.n_levels
    # S[a, n] = 1 if eigenvector n lies in level a, so W = S M S^T sums blocks of M.
    s = np.zeros((n_levels, es.dimension))
    s[es.labels, np.arange(es.dimension)] = 1.0
    # W_ab = Tr(P_a A P_b B) = sum_{n in a, m in b} A_nm B_mn: basis-free inside each level.
    weights = s @ (a_eig * b_eig.T) @ s.T

    e = es.level_energies
    delta = e[None, :] - e[:, None]  # E_b - E_a
    diff = _population_differences(es, populations, beta)  # p_a - p_b
    off = ~np.eye(n_levels, dtype=bool)
    pair_frequencies = delta[off]
    pair_weights = (diff * weights)[off]
    # chi(omega -> 0): only pairs of distinct levels; the degenerate ("Curie") term is absent.
    isolated = complex(np.sum(pair_weights / pair_frequencies)) if n_levels > 1 else 0j

    # Expectation values <X> = Tr(rho X) = sum_n p_n X_nn.
    p_state = populations[es.labels]
    expectation_a = complex(np.sum(p_state * np.diag(a_eig)))
    expectation_b = complex(np.sum(p_state * np.diag(b_eig)))
    # Fluctuation term sum_a p_a W_aa - <A><B>, computed as sum_a p_a Tr(P_a dA P_a dB) with the
    # centred operators dX = X - <X>. The two forms are equal because sum_a g_a p_a = 1; the
    # centred one avoids the cancellation between two nearly equal numbers at low T, where it
    # would be multiplied by a huge beta.
    identity = np.eye(es.dimension)
    da = a_eig - expectation_a * identity
    db = b_eig - expectation_b * identity
    same_level = es.labels[:, None] == es.labels[None, :]
    fluctuation = complex(np.sum(np.where(same_level, p_state[:, None] * da * db.T, 0.0)))
    weight_scale = float(np.linalg.norm(a) * np.linalg.norm(b))
    if math.isinf(beta):
        # T = 0: the term is beta times the ground-level fluctuation. Zero stays zero (no
        # inf * 0 = nan); a genuine degenerate-ground fluctuation gives an infinite Curie term.
        cutoff = FLUCTUATION_RTOL * max(weight_scale, np.finfo(float).tiny)
        re = 0.0 if abs(fluctuation.real) <= cutoff else math.copysign(math.inf, fluctuation.real)
        im = 0.0 if abs(fluctuation.imag) <= cutoff else math.copysign(math.inf, fluctuation.imag)
        isothermal = isolated + complex(re, im)
    else:
        isothermal = isolated + beta * fluctuation

    return _Lehmann(
        system=es,
        beta=beta,
        populations=populations,
        log_z=log_z,
        pair_frequencies=pair_frequencies,
        pair_weights=pair_weights,
        isolated=isolated,
        isothermal=isothermal,
        expectation_a=expectation_a,
        expectation_b=expectation_b,
        weight_scale=weight_scale,
    )


def _prepare(
    H: object, A: object, B: object, beta: object, degeneracy_tol: object
) -> _Lehmann:
    h, a, b = _as_operators(H, A, B)
    beta_value = _as_beta(beta)
    tol = _as_tolerance("degeneracy_tol", degeneracy_tol)
    return _lehmann(_diagonalise(h, tol), a, b, beta_value)


def _merge_poles(
    frequencies: np.ndarray, weights: np.ndarray, tol: float, weight_tol: float
) -> tuple[np.ndarray, np.ndarray]:
    """Merge pair frequencies equal within ``tol``, then drop merged weights <= ``weight_tol``."""
    if frequencies.size == 0:
        return np.zeros(0), np.zeros(0, dtype=np.complex128)
    order = np.argsort(frequencies, kind="stable")
    f, w = frequencies[order], weights[order]
    group = np.concatenate([[0], np.cumsum(np.diff(f) > tol)])
    counts = np.bincount(group)
    merged_f = np.bincount(group, weights=f) / counts
    merged_w = np.zeros(counts.size, dtype=np.complex128)
    np.add.at(merged_w, group, w)
    keep = np.abs(merged_w) > weight_tol
    return merged_f[keep], merged_w[keep]


# Sums over poles on a grid (any shape).


def _sum_resolvent(frequencies: np.ndarray, weights: np.ndarray, z: np.ndarray) -> np.ndarray:
    """sum_k w_k / (Omega_k - z), broadcast over the array z."""
    z = np.asarray(z)  # 0-d arithmetic hands back numpy scalars
    zf = z.reshape(-1)
    terms = weights[:, None] / (frequencies[:, None] - zf[None, :])
    return terms.sum(axis=0).reshape(z.shape)


def _sum_time(frequencies: np.ndarray, weights: np.ndarray, t: np.ndarray) -> np.ndarray:
    """i theta(t) sum_k w_k exp(-i Omega_k t); the value at t = 0 is the limit t -> 0+."""
    t = np.asarray(t)
    tf = t.reshape(-1)
    phases = np.exp(-1j * frequencies[:, None] * tf[None, :])
    values = 1j * (weights[:, None] * phases).sum(axis=0)
    return np.where(tf >= 0, values, 0.0).reshape(t.shape)


def _sum_spectral(
    frequencies: np.ndarray, weights: np.ndarray, omega: np.ndarray, eta: float
) -> np.ndarray:
    """sum_k w_k eta / ((Omega_k - omega)^2 + eta^2)."""
    omega = np.asarray(omega)
    of = omega.reshape(-1)
    lorentz = eta / ((frequencies[:, None] - of[None, :]) ** 2 + eta**2)
    return (weights[:, None] * lorentz).sum(axis=0).reshape(omega.shape)


def frequency_values(frequencies: np.ndarray, weights: np.ndarray, omega: object,
                     eta: object) -> complex | np.ndarray:
    """Checked ``omega``, ``eta``: sum_k w_k / (Omega_k - omega - i eta)."""
    w = _as_real_array("omega", omega)
    e = _as_positive("eta", eta)
    return _scalar_or_array(_sum_resolvent(frequencies, weights, w + 1j * e))


def time_values(frequencies: np.ndarray, weights: np.ndarray, t: object) -> complex | np.ndarray:
    """Checked ``t``: i theta(t) sum_k w_k exp(-i Omega_k t)."""
    return _scalar_or_array(_sum_time(frequencies, weights, _as_real_array("t", t)))


def spectral_values(frequencies: np.ndarray, weights: np.ndarray, omega: object,
                    eta: object) -> complex | np.ndarray:
    """Checked ``omega``, ``eta``: sum_k w_k eta / ((Omega_k - omega)^2 + eta^2)."""
    w = _as_real_array("omega", omega)
    e = _as_positive("eta", eta)
    return _scalar_or_array(_sum_spectral(frequencies, weights, w, e))


def matsubara_values(frequencies: np.ndarray, weights: np.ndarray, isothermal: complex,
                     beta: float, n: object) -> complex | np.ndarray:
    """Checked ``n``: chi(i nu_n), nu_n = 2 pi n / beta."""
    idx = _as_integer_array("n", n)
    if math.isinf(beta):
        raise InputError("beta=inf: Matsubara frequencies 2 pi n / beta need a finite beta")
    nu = 2.0 * math.pi * idx.astype(np.float64) / beta
    values = _sum_resolvent(frequencies, weights, 1j * nu)
    # nu_n = 0 is the isothermal value (it contains the degenerate / Curie term), not the
    # isolated one obtained from the pole sum at z = 0.
    return _scalar_or_array(np.where(idx == 0, isothermal, values))
