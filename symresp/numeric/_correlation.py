r"""Correlation functions by exact diagonalisation (layer: numeric, a leaf).

The numeric reference for :mod:`symresp.response._correlation`: lines of
:math:`S_{AB}(\omega) = \int dt\,e^{i\omega t}\langle A(t)B\rangle = 2\pi\sum_k s_k
\delta(\omega - \Omega_k)` and their broadened sum, from ``numpy.linalg.eigh``. Imports numpy,
:mod:`symresp.errors` and the public :func:`eigensystem` of this layer.

For levels a, b (energies :math:`E_a`, populations :math:`p_a` per state, weights
:math:`W_{ab} = \sum_{n\in a, m\in b} A_{nm}B_{mn}`), a line at :math:`\Omega = E_b - E_a` has

* ``"plain"``: :math:`s = p_a W_{ab}`;
* ``"symmetrised"``: :math:`s = \tfrac12(p_a + p_b)W_{ab}`;
* ``"canonical"``: :math:`s = (p_a - p_b)W_{ab}/(\beta\Omega)` for :math:`a \ne b`, and
  :math:`p_a W_{aa}` at :math:`\Omega = 0` (every kind).
"""

from __future__ import annotations

import math

import numpy as np

from symresp.errors import InputError, positive_float

from ._levels import eigensystem

__all__ = ["correlation_lines", "correlation_spectrum", "CORRELATION_KINDS"]

#: The correlation functions offered.
CORRELATION_KINDS = ("plain", "symmetrised", "canonical")
#: Lines weaker than this, relative to ||A||_F ||B||_F, are rounding noise and dropped.
_WEIGHT_RTOL = 1e-14


def _matrix(name: str, value: object, d: int | None = None) -> np.ndarray:
    try:
        m = np.asarray(value, dtype=complex)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be a numeric matrix, got {type(value).__name__}") from None
    if m.ndim != 2 or m.shape[0] != m.shape[1] or (d is not None and m.shape[0] != d):
        raise InputError(f"{name} must be a square matrix of the dimension of H, got shape "
                         f"{m.shape}")
    if not np.all(np.isfinite(m)):
        raise InputError(f"{name} has non-finite entries")
    return m


def _check(beta: object, kind: object) -> float:
    if kind not in CORRELATION_KINDS:
        raise InputError(f"kind={kind!r} must be one of {', '.join(map(repr, CORRELATION_KINDS))}")
    return positive_float(beta, "beta")


def correlation_lines(H: object, A: object, B: object, beta: float, *, kind: str = "plain",
                      degeneracy_tol: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    r"""Lines :math:`(\Omega_k, s_k)` of a correlation function, merged by frequency.

    Parameters
    ----------
    H, A, B : array_like, shape (d, d)
        Hermitian H; any A, B.
    beta : float
        Inverse temperature > 0.
    kind : {"plain", "symmetrised", "canonical"}
    degeneracy_tol : float, optional
        Levels (and line frequencies) closer than this are one (default as in
        :func:`eigensystem`).

    Returns
    -------
    (frequencies, weights) : ndarray (float, ascending), ndarray (complex)

    Raises
    ------
    InputError
        On a bad matrix, beta or kind.

    Examples
    --------
    Two levels at :math:`\pm\Delta/2`, :math:`A = B = \sigma_x` (detailed balance):

    >>> import numpy as np
    >>> from symresp.numeric import correlation_lines
    >>> f, s = correlation_lines(np.diag([0.5, -0.5]), [[0, 1], [1, 0]], [[0, 1], [1, 0]], 2.0)
    >>> f.tolist(), bool(np.allclose(s, [np.exp(-2) / (1 + np.exp(-2)), 1 / (1 + np.exp(-2))]))
    ([-1.0, 1.0], True)
    """
    b = _check(beta, kind)
    es = eigensystem(H, degeneracy_tol=degeneracy_tol)
    d = es.dimension
    a_m, b_m = _matrix("A", A, d), _matrix("B", B, d)
    v = es.vectors
    ae = v.conj().T @ a_m @ v
    be = v.conj().T @ b_m @ v
    n = es.n_levels
    sel = np.zeros((n, d))
    sel[es.labels, np.arange(d)] = 1.0
    W = sel @ (ae * be.T) @ sel.T                     # W_ab = sum_{n in a, m in b} A_nm B_mn
    E = es.level_energies
    x = np.exp(-b * (E - E[0]))
    p = x / np.sum(es.degeneracies * x)
    delta = E[None, :] - E[:, None]                   # E_b - E_a
    if kind == "plain":
        s = p[:, None] * W
    elif kind == "symmetrised":
        s = 0.5 * (p[:, None] + p[None, :]) * W
    else:
        # (p_a - p_b)/(beta Omega) = p_a (1 - exp(-beta Omega))/(beta Omega): finite as Omega -> 0
        y = b * delta
        with np.errstate(divide="ignore", invalid="ignore"):
            phi = np.where(y == 0, 1.0, -np.expm1(-y) / np.where(y == 0, 1.0, y))
        s = p[:, None] * phi * W
    floor = _WEIGHT_RTOL * max(float(np.linalg.norm(a_m) * np.linalg.norm(b_m)), 1e-300)
    freqs, weights = [], []
    for i in range(n):
        for j in range(n):
            if abs(s[i, j]) > floor:
                freqs.append(0.0 if i == j else float(delta[i, j]))
                weights.append(complex(s[i, j]))
    order = np.argsort(freqs, kind="stable")
    f_sorted = np.asarray(freqs)[order]
    w_sorted = np.asarray(weights, dtype=complex)[order]
    tol = 2 * es.degeneracy_tol
    out_f: list[float] = []
    out_w: list[complex] = []
    for f, w in zip(f_sorted, w_sorted):
        if out_f and abs(f - out_f[-1]) <= tol:
            out_w[-1] += w
        else:
            out_f.append(float(f))
            out_w.append(complex(w))
    return np.asarray(out_f, dtype=float), np.asarray(out_w, dtype=complex)


def correlation_spectrum(H: object, A: object, B: object, beta: float, omega: object,
                         eta: float, *, kind: str = "plain",
                         shape: str = "lorentzian") -> np.ndarray:
    r"""Broadened :math:`S(\omega) = 2\sum_k s_k L(\omega - \Omega_k)`, L the Lorentzian
    :math:`\eta/(x^2 + \eta^2)` (area :math:`\pi`) or the Gaussian of the same half width at
    half maximum and area: the :math:`\eta \to 0` limit is
    :math:`2\pi\sum_k s_k\delta(\omega - \Omega_k)`.

    Examples
    --------
    >>> import numpy as np
    >>> from symresp.numeric import correlation_spectrum
    >>> w = np.linspace(-40, 40, 160001)
    >>> S = correlation_spectrum(np.diag([0.5, -0.5]), [[0, 1], [1, 0]], [[0, 1], [1, 0]], 2.0,
    ...                          w, 0.01, shape="gaussian")
    >>> round(float(np.sum(S) * (w[1] - w[0]) / (2 * np.pi)), 6)      # sum_k s_k = <A B> = 1
    1.0
    """
    f, s = correlation_lines(H, A, B, beta, kind=kind)
    eta_v = positive_float(eta, "eta")
    w = np.asarray(omega, dtype=float)
    x = w[..., None] - f
    if shape == "lorentzian":
        line = eta_v / (x**2 + eta_v**2)
    elif shape == "gaussian":
        sigma = eta_v / math.sqrt(2 * math.log(2))
        line = math.pi * np.exp(-0.5 * (x / sigma) ** 2) / (sigma * math.sqrt(2 * math.pi))
    else:
        raise InputError(f"shape={shape!r} must be 'lorentzian' or 'gaussian'")
    out = 2 * np.sum(line * s, axis=-1)
    return out.real if np.all(np.abs(out.imag) <= 1e-14 * (1 + np.abs(out.real))) else out
