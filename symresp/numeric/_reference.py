r"""Reference exact diagonalisation on numpy arrays (layer: numeric, a leaf).

This module is the judge every symbolic result is compared with, so it is written to be read
line by line: diagonalise, group degenerate levels, build eigenspace projectors, sum the
Lehmann representation. Nothing here is clever except where a comment says why.

Imports: numpy and :mod:`symresp.errors` only.

Conventions (the pinned ones of symresp, :math:`\hbar = k_B = 1`, :math:`\beta = 1/T`):

* :math:`H = \sum_a E_a P_a` with eigenspace projectors :math:`P_a` of the *levels* (eigenvalues
  equal within ``degeneracy_tol`` are one level, of degeneracy :math:`g_a = \operatorname{Tr} P_a`).
* :math:`p_a = e^{-\beta (E_a - E_0)} / Z'` is the probability of *each* state of level
  :math:`a` (so :math:`\sum_a g_a p_a = 1`); :math:`Z' = \sum_a g_a e^{-\beta(E_a - E_0)}`.
* Weights :math:`W_{ab} = \operatorname{Tr}(P_a A P_b B)`, independent of the basis chosen
  inside a degenerate level.
* :math:`\chi_{AB}(z) = \sum_{a \ne b} \frac{(p_a - p_b) W_{ab}}{E_b - E_a - z}`, retarded for
  :math:`z = \omega + i\eta`, :math:`\eta > 0`.
* :math:`\chi_{AB}(t) = i\,\theta(t)\,\langle[A(t), B]\rangle
  = i\,\theta(t) \sum_k w_k e^{-i\Omega_k t}` with poles :math:`\Omega_k = E_b - E_a` and
  weights :math:`w_k = (p_a - p_b) W_{ab}`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from numbers import Integral, Real

import numpy as np

from symresp.errors import InputError, NotHermitianError

__all__ = [
    "Eigensystem",
    "NumericResponse",
    "eigensystem",
    "solve",
    "partition_function",
    "log_partition_function",
    "expectation",
    "poles",
    "static_isolated",
    "static_isothermal",
    "chi_omega",
    "chi_time",
    "chi_matsubara",
    "spectral_function",
]

#: Relative part of the default degeneracy tolerance: ``1e-9 * max(1, max|E|)``.
_DEGENERACY_RTOL = 1e-9
#: ``H`` counts as Hermitian when ``max|H - H^dagger| <= 1e-10 * max(1, max|H|)``.
_HERMITIAN_RTOL = 1e-10
#: Default pole-weight threshold, relative to ``||A||_F ||B||_F``: rounding noise of a weight
#: that vanishes by symmetry is about ``d * 1e-16`` of that scale.
_WEIGHT_RTOL = 1e-14
#: Relative threshold below which the T = 0 fluctuation term counts as zero (beta = inf only).
_FLUCTUATION_RTOL = 1e-12
#: Boltzmann factors below exp(-600) are set to exactly zero. They lie some 250 orders of
#: magnitude below double precision relative to the ground level, and clamping keeps every
#: intermediate product a normal float (no underflow, even under ``np.errstate(all="raise")``).
_LOG_FLOOR = -600.0


# --------------------------------------------------------------------------------------------
# Argument checks: every public function validates its arguments and raises InputError that
# names the argument and quotes the bad value.
# --------------------------------------------------------------------------------------------


def _short(value: object) -> str:
    text = repr(value)
    return text if len(text) <= 80 else text[:77] + "..."


def _as_matrix(name: str, value: object) -> np.ndarray:
    try:
        arr = np.asarray(value)
    except Exception as exc:  # ragged lists and the like
        raise InputError(f"{name}={_short(value)} is not an array: {exc}") from None
    if not (np.issubdtype(arr.dtype, np.number) and not np.issubdtype(arr.dtype, np.bool_)):
        raise InputError(f"{name}={_short(value)} must be a numeric array, got dtype {arr.dtype}")
    if arr.ndim != 2 or arr.shape[0] != arr.shape[1] or arr.shape[0] == 0:
        raise InputError(f"{name} must be a non-empty square matrix, got shape {arr.shape}")
    arr = arr.astype(np.complex128)
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{name}={_short(value)} has non-finite entries")
    return arr


def _as_hamiltonian(H: object) -> np.ndarray:
    h = _as_matrix("H", H)
    scale = max(1.0, float(np.max(np.abs(h))))
    defect = float(np.max(np.abs(h - h.conj().T)))
    if defect > _HERMITIAN_RTOL * scale:
        raise NotHermitianError(
            f"H={_short(H)} is not Hermitian: max|H - H^dagger| = {defect:.3g} "
            f"exceeds {_HERMITIAN_RTOL:g} * {scale:.3g}"
        )
    # Symmetrise so that rounding noise in the input cannot make eigh see a different matrix.
    return 0.5 * (h + h.conj().T)


def _as_operators(H: object, A: object, B: object) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    h = _as_hamiltonian(H)
    a = _as_matrix("A", A)
    b = _as_matrix("B", B)
    for name, op in (("A", a), ("B", b)):
        if op.shape != h.shape:
            raise InputError(f"{name} has shape {op.shape} but H has shape {h.shape}")
    return h, a, b


def _as_beta(beta: object) -> float:
    if isinstance(beta, (bool, np.bool_)) or not isinstance(beta, Real):
        raise InputError(f"beta={_short(beta)} must be a real number > 0 (or numpy.inf)")
    value = float(beta)
    if not value > 0:  # also catches nan
        raise InputError(f"beta={_short(beta)} must be > 0 (or numpy.inf for T = 0)")
    return value


def _as_positive(name: str, value: object) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, Real):
        raise InputError(f"{name}={_short(value)} must be a finite real number > 0")
    out = float(value)
    if not (math.isfinite(out) and out > 0):
        raise InputError(f"{name}={_short(value)} must be a finite real number > 0")
    return out


def _as_tolerance(name: str, value: object) -> float | None:
    if value is None:
        return None
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, Real):
        raise InputError(f"{name}={_short(value)} must be None or a finite real number >= 0")
    out = float(value)
    if not (math.isfinite(out) and out >= 0):
        raise InputError(f"{name}={_short(value)} must be None or a finite real number >= 0")
    return out


def _as_real_array(name: str, value: object) -> np.ndarray:
    try:
        arr = np.asarray(value)
    except Exception as exc:
        raise InputError(f"{name}={_short(value)} is not an array: {exc}") from None
    if not (np.issubdtype(arr.dtype, np.integer) or np.issubdtype(arr.dtype, np.floating)):
        raise InputError(f"{name}={_short(value)} must be real numbers, got dtype {arr.dtype}")
    arr = arr.astype(np.float64)
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{name}={_short(value)} has non-finite entries")
    return arr


def _as_complex_array(name: str, value: object) -> np.ndarray:
    try:
        arr = np.asarray(value)
    except Exception as exc:
        raise InputError(f"{name}={_short(value)} is not an array: {exc}") from None
    if not (np.issubdtype(arr.dtype, np.number) and not np.issubdtype(arr.dtype, np.bool_)):
        raise InputError(f"{name}={_short(value)} must be numbers, got dtype {arr.dtype}")
    arr = arr.astype(np.complex128)
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{name}={_short(value)} has non-finite entries")
    return arr


def _as_integer_array(name: str, value: object) -> np.ndarray:
    try:
        arr = np.asarray(value)
    except Exception as exc:
        raise InputError(f"{name}={_short(value)} is not an array: {exc}") from None
    if not np.issubdtype(arr.dtype, np.integer):
        raise InputError(f"{name}={_short(value)} must be integers (Matsubara indices)")
    return arr.astype(np.int64)


def _scalar_or_array(values: np.ndarray) -> complex | np.ndarray:
    """Return a Python complex for 0-d input, the array otherwise."""
    return complex(values) if values.ndim == 0 else values


# --------------------------------------------------------------------------------------------
# Eigensystem and levels
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True, eq=False)
class Eigensystem:
    r"""Eigenvalues, eigenvectors and degenerate levels of a Hermitian matrix.

    Attributes
    ----------
    energies : ndarray, shape (d,)
        Eigenvalues :math:`E_n` in ascending order (as returned by ``numpy.linalg.eigh``).
    vectors : ndarray, shape (d, d)
        Orthonormal eigenvectors, column ``n`` belongs to ``energies[n]``.
    labels : ndarray of int, shape (d,)
        Level index of each eigenvector; levels are numbered from the ground level up.
    level_energies : ndarray, shape (L,)
        Energy :math:`E_a` of each level (the mean of its eigenvalues).
    degeneracies : ndarray of int, shape (L,)
        :math:`g_a = \operatorname{Tr} P_a`.
    degeneracy_tol : float
        Two consecutive eigenvalues closer than this belong to the same level.

    Notes
    -----
    Arrays are read-only; the object is immutable but, holding arrays, compares by identity.

    Examples
    --------
    >>> import numpy as np
    >>> from symresp.numeric import eigensystem
    >>> es = eigensystem(np.diag([1.0, 0.0, 1.0]))
    >>> es.level_energies.tolist(), es.degeneracies.tolist()
    ([0.0, 1.0], [1, 2])
    >>> bool(np.allclose(es.projector(1), np.diag([1.0, 0.0, 1.0])))
    True
    """

    energies: np.ndarray
    vectors: np.ndarray
    labels: np.ndarray
    level_energies: np.ndarray
    degeneracies: np.ndarray
    degeneracy_tol: float

    @property
    def dimension(self) -> int:
        """Hilbert-space dimension ``d``."""
        return int(self.energies.shape[0])

    @property
    def n_levels(self) -> int:
        """Number ``L`` of distinct levels."""
        return int(self.level_energies.shape[0])

    def projector(self, level: int) -> np.ndarray:
        r"""Eigenspace projector :math:`P_a = \sum_{n \in a} |n\rangle\langle n|` of a level.

        Parameters
        ----------
        level : int
            Level index ``0 <= level < n_levels``.

        Returns
        -------
        ndarray, shape (d, d)

        Raises
        ------
        InputError
            If ``level`` is not a valid level index.

        Examples
        --------
        >>> import numpy as np
        >>> from symresp.numeric import eigensystem
        >>> P0 = eigensystem(np.diag([0.0, 2.0])).projector(0)
        >>> bool(np.allclose(P0, [[1, 0], [0, 0]]))
        True
        """
        if isinstance(level, (bool, np.bool_)) or not isinstance(level, Integral) or not (
            0 <= int(level) < self.n_levels
        ):
            raise InputError(f"level={_short(level)} must be an integer in [0, {self.n_levels})")
        v = self.vectors[:, self.labels == int(level)]
        return v @ v.conj().T


def _readonly(arr: np.ndarray) -> np.ndarray:
    arr = np.array(arr)  # private copy, so no caller can change it behind our back
    arr.setflags(write=False)
    return arr


def _build_eigensystem(
    energies: np.ndarray, vectors: np.ndarray, degeneracy_tol: float | None
) -> Eigensystem:
    """Group ascending eigenvalues into levels (consecutive gaps <= tol join a level)."""
    energies = np.asarray(energies, dtype=np.float64)
    if degeneracy_tol is None:
        degeneracy_tol = _DEGENERACY_RTOL * max(1.0, float(np.max(np.abs(energies))))
    # A new level starts wherever the gap to the previous eigenvalue exceeds the tolerance.
    labels = np.concatenate([[0], np.cumsum(np.diff(energies) > degeneracy_tol)]).astype(np.int64)
    degeneracies = np.bincount(labels)
    level_energies = np.bincount(labels, weights=energies) / degeneracies
    return Eigensystem(
        energies=_readonly(energies),
        vectors=_readonly(vectors),
        labels=_readonly(labels),
        level_energies=_readonly(level_energies),
        degeneracies=_readonly(degeneracies),
        degeneracy_tol=float(degeneracy_tol),
    )


def eigensystem(H: object, *, degeneracy_tol: float | None = None) -> Eigensystem:
    r"""Diagonalise a Hermitian matrix and group its eigenvalues into degenerate levels.

    .. math:: H = \sum_n E_n |n\rangle\langle n| = \sum_a E_a P_a .

    Parameters
    ----------
    H : array_like, shape (d, d)
        Hermitian matrix (within a relative tolerance of 1e-10).
    degeneracy_tol : float, optional
        Eigenvalues whose consecutive gaps are at most this belong to one level. Default
        ``1e-9 * max(1, max|E|)``.

    Returns
    -------
    Eigensystem

    Raises
    ------
    InputError
        If ``H`` is not a finite square numeric matrix or ``degeneracy_tol`` is negative.
    NotHermitianError
        If ``H`` is not Hermitian (a subclass of :class:`InputError`).

    See Also
    --------
    solve : the full linear-response result built on this.

    Examples
    --------
    Two coupled spin-1/2 with :math:`H = S_1\cdot S_2` have a singlet at -3/4 and a triplet at 1/4:

    >>> import numpy as np
    >>> from symresp.numeric import eigensystem
    >>> sx = np.array([[0, 1], [1, 0]]) / 2; sy = np.array([[0, -1j], [1j, 0]]) / 2
    >>> sz = np.diag([0.5, -0.5])
    >>> H = sum(np.kron(s, s) for s in (sx, sy, sz))
    >>> es = eigensystem(H)
    >>> es.level_energies.round(12).tolist(), es.degeneracies.tolist()
    ([-0.75, 0.25], [1, 3])
    """
    h = _as_hamiltonian(H)
    tol = _as_tolerance("degeneracy_tol", degeneracy_tol)
    energies, vectors = np.linalg.eigh(h)
    return _build_eigensystem(energies, vectors, tol)


# --------------------------------------------------------------------------------------------
# Thermal populations
# --------------------------------------------------------------------------------------------


def _populations(es: Eigensystem, beta: float) -> tuple[np.ndarray, float]:
    """Per-state probabilities p_a of each level and log Z (unshifted), stable at low T."""
    energies = es.level_energies
    gaps = energies - energies[0]
    gaps[0] = 0.0  # exact zero for the ground level, so exp(-beta * 0) = 1 even for beta = inf
    if math.isinf(beta):
        log_boltzmann = np.where(gaps > 0, -np.inf, 0.0)
    else:
        log_boltzmann = -beta * gaps
    # Clamp before exponentiating (see _LOG_FLOOR): no underflow, factors below the floor are 0.
    boltzmann = np.where(
        log_boltzmann > _LOG_FLOOR, np.exp(np.maximum(log_boltzmann, _LOG_FLOOR)), 0.0
    )
    z_shifted = float(np.sum(es.degeneracies * boltzmann))  # >= g_0 >= 1
    populations = boltzmann / z_shifted
    # log Z = -beta E_0 + log Z'; at beta = inf with E_0 = 0 the first term is 0, not nan.
    e0 = float(energies[0])
    log_z = (0.0 if e0 == 0.0 else -beta * e0) + math.log(z_shifted)
    return populations, log_z


def _population_differences(es: Eigensystem, populations: np.ndarray, beta: float) -> np.ndarray:
    r"""Matrix :math:`D_{ab} = p_a - p_b`, computed without cancellation.

    For :math:`E_b > E_a`, :math:`p_a - p_b = -p_a\,\mathrm{expm1}(-\beta(E_b - E_a))`, and the
    mirror form otherwise. The plain difference loses all digits when two levels are close
    (relative error ~ eps / (beta * gap)); this form keeps (p_a - p_b)/(E_b - E_a) accurate
    right down to the degeneracy tolerance, and never overflows because the argument of expm1
    is always <= 0.
    """
    e = es.level_energies
    delta = e[None, :] - e[:, None]  # delta[a, b] = E_b - E_a
    if math.isinf(beta):
        argument = np.where(delta == 0, 0.0, -np.inf)
    else:
        argument = -beta * np.abs(delta)
    factor = np.expm1(np.maximum(argument, _LOG_FLOOR))  # in [-1, 0]
    return np.where(delta > 0, -populations[:, None] * factor, populations[None, :] * factor)


# --------------------------------------------------------------------------------------------
# Lehmann data shared by every public function
# --------------------------------------------------------------------------------------------


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
        cutoff = _FLUCTUATION_RTOL * max(weight_scale, np.finfo(float).tiny)
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
    energies, vectors = np.linalg.eigh(h)
    return _lehmann(_build_eigensystem(energies, vectors, tol), a, b, beta_value)


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


# Sums over poles; the frequency / time grids are the trailing axis.


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


def _sum_matsubara(data: _Lehmann, n: np.ndarray) -> np.ndarray:
    if math.isinf(data.beta):
        raise InputError("beta=inf: Matsubara frequencies 2 pi n / beta need a finite beta")
    nu = 2.0 * math.pi * n.astype(np.float64) / data.beta
    values = _sum_resolvent(data.pair_frequencies, data.pair_weights, 1j * nu)
    # nu_n = 0 is the isothermal value (it contains the degenerate / Curie term), not the
    # isolated one obtained from the pole sum at z = 0.
    return np.where(n == 0, data.isothermal, values)


# --------------------------------------------------------------------------------------------
# The result type
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True, eq=False)
class NumericResponse:
    r"""Linear response of a matrix model, from exact diagonalisation.

    Produced by :func:`solve`. Arrays are read-only; the object is immutable but, holding
    arrays, compares by identity.

    Attributes
    ----------
    beta : float
        Inverse temperature (``numpy.inf`` for T = 0).
    energies : ndarray, shape (L,)
        Level energies :math:`E_a`, ascending.
    degeneracies : ndarray of int, shape (L,)
        :math:`g_a`.
    populations : ndarray, shape (L,)
        Probability :math:`p_a = e^{-\beta E_a}/Z` of *each* state of level :math:`a`
        (so ``sum(degeneracies * populations) == 1``).
    poles : tuple of ndarray
        ``(Omega, w)``: :math:`\chi(\omega) = \sum_k w_k/(\Omega_k - \omega - i0^+)`, with
        :math:`\Omega_k = E_b - E_a` merged when equal within the degeneracy tolerance and
        weights :math:`|w_k|` at most ``weight_tol`` dropped. Sorted by :math:`\Omega`.
    isolated : complex
        :math:`\chi^{\mathrm{isol}} = \sum_{a \ne b} (p_a - p_b) W_{ab} / (E_b - E_a)`.
    isothermal : complex
        :math:`\chi^{\mathrm{isol}} + \beta(\sum_a p_a W_{aa} - \langle A\rangle\langle B\rangle)`.
    Z : float
        :math:`Z = \sum_n e^{-\beta E_n}` (may overflow to ``inf``; use ``log_Z``).
    log_Z : float
        :math:`\log Z`, computed stably.
    expectation_A, expectation_B : complex
        :math:`\langle A\rangle`, :math:`\langle B\rangle` in the Gibbs state of ``H``.

    Examples
    --------
    Two-level system :math:`H = (\Delta/2)\sigma_z`, :math:`A = B = \sigma_x`: poles at
    :math:`\pm\Delta` with weights :math:`\mp\tanh(\beta\Delta/2)`.

    >>> import numpy as np
    >>> from symresp.numeric import solve
    >>> r = solve(np.diag([0.5, -0.5]), [[0, 1], [1, 0]], [[0, 1], [1, 0]], 2.0)
    >>> r.poles[0].tolist()
    [-1.0, 1.0]
    >>> bool(np.allclose(r.poles[1], [-np.tanh(1.0), np.tanh(1.0)]))
    True
    """

    beta: float
    energies: np.ndarray
    degeneracies: np.ndarray
    populations: np.ndarray
    poles: tuple[np.ndarray, np.ndarray]
    isolated: complex
    isothermal: complex
    Z: float
    log_Z: float
    expectation_A: complex
    expectation_B: complex

    def evaluate(self, z: object) -> complex | np.ndarray:
        r"""Pole sum :math:`\sum_k w_k / (\Omega_k - z)` at arbitrary complex ``z``.

        Parameters
        ----------
        z : complex or array_like of complex
            Points off the real poles; ``Im z > 0`` gives the retarded function.

        Returns
        -------
        complex or ndarray of complex
            Same shape as ``z``.

        Raises
        ------
        InputError
            If ``z`` is not finite numbers.

        Examples
        --------
        >>> import numpy as np
        >>> from symresp.numeric import solve
        >>> sx = [[0, 1], [1, 0]]
        >>> r = solve(np.diag([0.5, -0.5]), sx, sx, 2.0)
        >>> bool(np.isclose(r.evaluate(0.3 + 0.1j), np.tanh(1.0) * 2 / (1 - (0.3 + 0.1j) ** 2)))
        True
        """
        values = _as_complex_array("z", z)
        return _scalar_or_array(_sum_resolvent(*self.poles, values))

    def frequency(self, omega: object, eta: float) -> complex | np.ndarray:
        r"""Retarded :math:`\chi_{AB}(\omega + i\eta) = \sum_k w_k/(\Omega_k - \omega - i\eta)`.

        Parameters
        ----------
        omega : float or array_like of float
            Real frequencies.
        eta : float
            Broadening, ``eta > 0``.

        Returns
        -------
        complex or ndarray of complex
            Same shape as ``omega``.

        Raises
        ------
        InputError
            If ``omega`` is not finite real numbers or ``eta`` is not > 0.

        Examples
        --------
        >>> import numpy as np
        >>> from symresp.numeric import solve
        >>> sx = [[0, 1], [1, 0]]
        >>> r = solve(np.diag([0.5, -0.5]), sx, sx, 2.0)
        >>> z = 0.3 + 0.01j
        >>> bool(np.isclose(r.frequency(0.3, 0.01), 2 * np.tanh(1.0) / (1 - z**2)))
        True
        """
        w = _as_real_array("omega", omega)
        e = _as_positive("eta", eta)
        return _scalar_or_array(_sum_resolvent(*self.poles, w + 1j * e))

    def time(self, t: object) -> complex | np.ndarray:
        r""":math:`\chi_{AB}(t) = i\,\theta(t) \sum_k w_k e^{-i\Omega_k t}`.

        The value at ``t = 0`` is the limit :math:`t \to 0^+`, i.e.
        :math:`i\langle[A, B]\rangle`; negative times give 0 (causality).

        Parameters
        ----------
        t : float or array_like of float
            Times.

        Returns
        -------
        complex or ndarray of complex
            Same shape as ``t``.

        Raises
        ------
        InputError
            If ``t`` is not finite real numbers.

        Examples
        --------
        >>> import numpy as np
        >>> from symresp.numeric import solve
        >>> sx = [[0, 1], [1, 0]]
        >>> r = solve(np.diag([0.5, -0.5]), sx, sx, 2.0)
        >>> bool(np.isclose(r.time(0.7), 2 * np.tanh(1.0) * np.sin(0.7)))
        True
        """
        times = _as_real_array("t", t)
        return _scalar_or_array(_sum_time(*self.poles, times))

    def spectral(self, omega: object, eta: float) -> complex | np.ndarray:
        r"""Lorentzian-broadened spectral function
        :math:`\chi''_{AB}(\omega) = \sum_k w_k\,\eta / ((\Omega_k - \omega)^2 + \eta^2)`.

        Equal to :math:`\operatorname{Im}\chi_{AB}(\omega + i\eta)` when :math:`A = B^\dagger`
        (then every :math:`w_k` is real); in general it is
        :math:`[\chi(\omega + i\eta) - \chi(\omega - i\eta)]/(2i)` with :math:`\chi(z)` the
        pole sum.

        Parameters
        ----------
        omega : float or array_like of float
            Real frequencies.
        eta : float
            Lorentzian half width, ``eta > 0``.

        Returns
        -------
        complex or ndarray of complex
            Same shape as ``omega``.

        Raises
        ------
        InputError
            If ``omega`` is not finite real numbers or ``eta`` is not > 0.

        Examples
        --------
        >>> import numpy as np
        >>> from symresp.numeric import solve
        >>> sx = [[0, 1], [1, 0]]
        >>> r = solve(np.diag([0.5, -0.5]), sx, sx, 2.0)
        >>> bool(np.isclose(r.spectral(1.0, 0.05), r.frequency(1.0, 0.05).imag))
        True
        """
        w = _as_real_array("omega", omega)
        e = _as_positive("eta", eta)
        return _scalar_or_array(_sum_spectral(*self.poles, w, e))

    def matsubara(self, n: object) -> complex | np.ndarray:
        r"""Matsubara function :math:`\chi_{AB}(i\nu_n)`, :math:`\nu_n = 2\pi n/\beta`.

        For :math:`n \ne 0`, :math:`\chi(i\nu_n) = \sum_k w_k/(\Omega_k - i\nu_n)`. At
        :math:`n = 0` it equals the *isothermal* static value (the degenerate-level and
        :math:`-\beta\langle A\rangle\langle B\rangle` terms survive only there), not the
        isolated one.

        Parameters
        ----------
        n : int or array_like of int
            Matsubara indices.

        Returns
        -------
        complex or ndarray of complex
            Same shape as ``n``.

        Raises
        ------
        InputError
            If ``n`` is not integers, or ``beta`` is infinite.

        Examples
        --------
        A free spin-1/2: no poles, so only :math:`n = 0` (the Curie value :math:`\beta/4`)
        survives.

        >>> import numpy as np
        >>> from symresp.numeric import solve
        >>> sz = np.diag([0.5, -0.5])
        >>> r = solve(np.zeros((2, 2)), sz, sz, 2.0)
        >>> r.matsubara([0, 1]).real.tolist()
        [0.5, 0.0]
        """
        idx = _as_integer_array("n", n)
        if math.isinf(self.beta):
            raise InputError("beta=inf: Matsubara frequencies 2 pi n / beta need a finite beta")
        nu = 2.0 * math.pi * idx.astype(np.float64) / self.beta
        values = np.where(idx == 0, self.isothermal, _sum_resolvent(*self.poles, 1j * nu))
        return _scalar_or_array(values)


def _z_from_log(log_z: float) -> float:
    try:
        return math.exp(log_z)
    except OverflowError:
        return math.inf


def solve(
    H: object,
    A: object,
    B: object,
    beta: float,
    *,
    degeneracy_tol: float | None = None,
    weight_tol: float | None = None,
) -> NumericResponse:
    r"""Full linear response of ``A`` to a field coupling to ``B``, by exact diagonalisation.

    Perturbation :math:`H(t) = H - f(t) B`; response
    :math:`\delta\langle A\rangle(t) = \int \chi_{AB}(t - t') f(t')\,dt'` with

    .. math::

        \chi_{AB}(\omega) = \sum_{a \ne b} \frac{(p_a - p_b)\,\operatorname{Tr}(P_a A P_b B)}
        {E_b - E_a - \omega - i0^+} .

    Parameters
    ----------
    H : array_like, shape (d, d)
        Hermitian Hamiltonian.
    A : array_like, shape (d, d)
        Measured operator.
    B : array_like, shape (d, d)
        Driving operator.
    beta : float
        Inverse temperature, ``> 0``; ``numpy.inf`` means T = 0 (ground level only).
    degeneracy_tol : float, optional
        Level grouping tolerance; default ``1e-9 * max(1, max|E|)``.
    weight_tol : float, optional
        Merged pole weights with ``|w| <= weight_tol`` are dropped from ``poles``; default
        ``1e-14 * ||A||_F ||B||_F``. Static values never drop anything.

    Returns
    -------
    NumericResponse

    Raises
    ------
    InputError
        On malformed matrices, shapes that differ, ``beta <= 0`` or nan, negative tolerances.
    NotHermitianError
        If ``H`` is not Hermitian.

    See Also
    --------
    static_isothermal, static_isolated, chi_omega, chi_time, poles

    Examples
    --------
    Bleaney-Bowers dimer :math:`H = J S_1\cdot S_2`, :math:`A = B = S_1^z + S_2^z`: the
    isothermal susceptibility is :math:`2\beta/(3 + e^{\beta J})` and, as the total
    :math:`S^z` is conserved, the isolated one vanishes.

    >>> import numpy as np
    >>> from symresp.numeric import solve
    >>> sx = np.array([[0, 1], [1, 0]]) / 2; sy = np.array([[0, -1j], [1j, 0]]) / 2
    >>> sz = np.diag([0.5, -0.5]); one = np.eye(2)
    >>> J, beta = 1.0, 2.0
    >>> H = J * sum(np.kron(s, s) for s in (sx, sy, sz))
    >>> M = np.kron(sz, one) + np.kron(one, sz)
    >>> r = solve(H, M, M, beta)
    >>> bool(np.isclose(r.isothermal, 2 * beta / (3 + np.exp(beta * J))))
    True
    >>> abs(r.isolated) < 1e-14, r.degeneracies.tolist()
    (True, [1, 3])
    """
    data = _prepare(H, A, B, beta, degeneracy_tol)
    wtol = _as_tolerance("weight_tol", weight_tol)
    if wtol is None:
        wtol = _WEIGHT_RTOL * data.weight_scale
    omegas, weights = _merge_poles(
        data.pair_frequencies, data.pair_weights, data.system.degeneracy_tol, wtol
    )
    return NumericResponse(
        beta=data.beta,
        energies=data.system.level_energies,
        degeneracies=data.system.degeneracies,
        populations=_readonly(data.populations),
        poles=(_readonly(omegas), _readonly(weights)),
        isolated=data.isolated,
        isothermal=data.isothermal,
        Z=_z_from_log(data.log_z),
        log_Z=data.log_z,
        expectation_A=data.expectation_a,
        expectation_B=data.expectation_b,
    )


# --------------------------------------------------------------------------------------------
# Free functions (each one a thin view of the same Lehmann data)
# --------------------------------------------------------------------------------------------


def _thermal_only(H: object, beta: object, degeneracy_tol: object) -> tuple[Eigensystem, float]:
    h = _as_hamiltonian(H)
    beta_value = _as_beta(beta)
    tol = _as_tolerance("degeneracy_tol", degeneracy_tol)
    energies, vectors = np.linalg.eigh(h)
    return _build_eigensystem(energies, vectors, tol), beta_value


def log_partition_function(
    H: object, beta: float, *, degeneracy_tol: float | None = None
) -> float:
    r"""Logarithm of the partition function, :math:`\log Z`, computed stably.

    .. math:: \log Z = -\beta E_0 + \log \sum_a g_a e^{-\beta (E_a - E_0)} .

    Parameters
    ----------
    H : array_like, shape (d, d)
        Hermitian Hamiltonian.
    beta : float
        Inverse temperature ``> 0`` (``numpy.inf`` allowed).
    degeneracy_tol : float, optional
        Level grouping tolerance.

    Returns
    -------
    float

    Raises
    ------
    InputError
        On a malformed ``H`` or ``beta``.

    See Also
    --------
    partition_function

    Examples
    --------
    >>> import numpy as np
    >>> from symresp.numeric import log_partition_function
    >>> round(log_partition_function(np.diag([1000.0, 1001.0]), 1.0), 9)
    -999.686738312
    """
    es, beta_value = _thermal_only(H, beta, degeneracy_tol)
    return _populations(es, beta_value)[1]


def partition_function(H: object, beta: float, *, degeneracy_tol: float | None = None) -> float:
    r"""Partition function :math:`Z = \operatorname{Tr} e^{-\beta H} = \sum_n e^{-\beta E_n}`.

    Unshifted, so it may overflow to ``inf`` or underflow to 0; see
    :func:`log_partition_function`.

    Parameters
    ----------
    H : array_like, shape (d, d)
        Hermitian Hamiltonian.
    beta : float
        Inverse temperature ``> 0`` (``numpy.inf`` allowed).
    degeneracy_tol : float, optional
        Level grouping tolerance.

    Returns
    -------
    float

    Raises
    ------
    InputError
        On a malformed ``H`` or ``beta``.

    See Also
    --------
    log_partition_function

    Examples
    --------
    Two-level system :math:`H = (\Delta/2)\sigma_z`: :math:`Z = 2\cosh(\beta\Delta/2)`.

    >>> import numpy as np
    >>> from symresp.numeric import partition_function
    >>> bool(np.isclose(partition_function(np.diag([0.5, -0.5]), 2.0), 2 * np.cosh(1.0)))
    True
    """
    return _z_from_log(log_partition_function(H, beta, degeneracy_tol=degeneracy_tol))


def expectation(
    H: object, X: object, beta: float, *, degeneracy_tol: float | None = None
) -> complex:
    r"""Thermal expectation value :math:`\langle X\rangle = \operatorname{Tr}(\rho X)`,
    :math:`\rho = \sum_n p_n |n\rangle\langle n|`.

    Parameters
    ----------
    H : array_like, shape (d, d)
        Hermitian Hamiltonian.
    X : array_like, shape (d, d)
        Operator.
    beta : float
        Inverse temperature ``> 0`` (``numpy.inf`` allowed).
    degeneracy_tol : float, optional
        Level grouping tolerance.

    Returns
    -------
    complex

    Raises
    ------
    InputError
        On malformed matrices, mismatched shapes or a bad ``beta``.

    Examples
    --------
    Spin-1/2 in a field, :math:`H = h S^z`: :math:`\langle S^z\rangle = -\tanh(\beta h/2)/2`.

    >>> import numpy as np
    >>> from symresp.numeric import expectation
    >>> sz = np.diag([0.5, -0.5])
    >>> bool(np.isclose(expectation(0.4 * sz, sz, 3.0), -np.tanh(0.6) / 2))
    True
    """
    h = _as_hamiltonian(H)
    x = _as_matrix("X", X)
    if x.shape != h.shape:
        raise InputError(f"X has shape {x.shape} but H has shape {h.shape}")
    beta_value = _as_beta(beta)
    tol = _as_tolerance("degeneracy_tol", degeneracy_tol)
    energies, vectors = np.linalg.eigh(h)
    es = _build_eigensystem(energies, vectors, tol)
    populations, _ = _populations(es, beta_value)
    x_diag = np.einsum("ni,ij,jn->n", vectors.conj().T, x, vectors)
    return complex(np.sum(populations[es.labels] * x_diag))


def poles(
    H: object,
    A: object,
    B: object,
    beta: float,
    *,
    degeneracy_tol: float | None = None,
    weight_tol: float | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    r"""Pole table ``(Omega, w)`` of
    :math:`\chi_{AB}(\omega) = \sum_k w_k/(\Omega_k - \omega - i0^+)`.

    :math:`\Omega_k = E_b - E_a` and :math:`w_k = (p_a - p_b)\operatorname{Tr}(P_a A P_b B)`
    over pairs of distinct levels, merged when the frequencies agree within the degeneracy
    tolerance, with merged weights :math:`|w_k| \le` ``weight_tol`` dropped; sorted by
    :math:`\Omega`.

    Parameters
    ----------
    H, A, B : array_like, shape (d, d)
        Hermitian Hamiltonian, measured and driving operator.
    beta : float
        Inverse temperature ``> 0`` (``numpy.inf`` allowed).
    degeneracy_tol : float, optional
        Level and pole merging tolerance; default ``1e-9 * max(1, max|E|)``.
    weight_tol : float, optional
        Default ``1e-14 * ||A||_F ||B||_F``.

    Returns
    -------
    Omega : ndarray of float
    w : ndarray of complex

    Raises
    ------
    InputError
        On malformed input.

    See Also
    --------
    solve

    Examples
    --------
    The weights sum to :math:`\langle[A, B]\rangle`; for :math:`H = (\Delta/2)\sigma_z`,
    :math:`A = \sigma_x`, :math:`B = \sigma_y` that is :math:`2i\langle\sigma_z\rangle`.

    >>> import numpy as np
    >>> from symresp.numeric import poles
    >>> sx = [[0, 1], [1, 0]]; sy = [[0, -1j], [1j, 0]]
    >>> Omega, w = poles(np.diag([0.5, -0.5]), sx, sy, 2.0)
    >>> bool(np.isclose(w.sum(), 2j * -np.tanh(1.0)))
    True
    """
    return solve(H, A, B, beta, degeneracy_tol=degeneracy_tol, weight_tol=weight_tol).poles


def static_isolated(
    H: object, A: object, B: object, beta: float, *, degeneracy_tol: float | None = None
) -> complex:
    r"""Isolated (Kubo) static susceptibility :math:`\chi_{AB}(\omega \to 0)`.

    .. math::

        \chi^{\mathrm{isol}}_{AB} = \sum_{a \ne b} \frac{(p_a - p_b)\,W_{ab}}{E_b - E_a},
        \qquad W_{ab} = \operatorname{Tr}(P_a A P_b B) .

    Pairs within one degenerate level are excluded, so a free spin has
    :math:`\chi^{\mathrm{isol}} = 0`.

    Parameters
    ----------
    H, A, B : array_like, shape (d, d)
        Hermitian Hamiltonian, measured and driving operator.
    beta : float
        Inverse temperature ``> 0`` (``numpy.inf`` allowed).
    degeneracy_tol : float, optional
        Level grouping tolerance.

    Returns
    -------
    complex

    Raises
    ------
    InputError
        On malformed input.

    See Also
    --------
    static_isothermal

    Examples
    --------
    Two-level system :math:`H = (\Delta/2)\sigma_z`, :math:`A = B = \sigma_x`:
    :math:`\chi^{\mathrm{isol}} = 2\tanh(\beta\Delta/2)/\Delta`.

    >>> import numpy as np
    >>> from symresp.numeric import static_isolated
    >>> sx = [[0, 1], [1, 0]]
    >>> bool(np.isclose(static_isolated(np.diag([0.5, -0.5]), sx, sx, 2.0), 2 * np.tanh(1.0)))
    True
    """
    return _prepare(H, A, B, beta, degeneracy_tol).isolated


def static_isothermal(
    H: object, A: object, B: object, beta: float, *, degeneracy_tol: float | None = None
) -> complex:
    r"""Isothermal static susceptibility :math:`\partial\langle A\rangle / \partial f` at fixed T,
    for the Gibbs state of :math:`H - f B` at :math:`f = 0`.

    .. math::

        \chi^{\mathrm{isoth}}_{AB} = \chi^{\mathrm{isol}}_{AB}
        + \beta\Big(\sum_a p_a W_{aa} - \langle A\rangle\langle B\rangle\Big).

    At ``beta = inf`` the bracket is the ground-level fluctuation: zero (within a relative
    1e-12) gives the isolated value, anything else an infinite component.

    Parameters
    ----------
    H, A, B : array_like, shape (d, d)
        Hermitian Hamiltonian, measured and driving operator.
    beta : float
        Inverse temperature ``> 0`` (``numpy.inf`` allowed).
    degeneracy_tol : float, optional
        Level grouping tolerance.

    Returns
    -------
    complex

    Raises
    ------
    InputError
        On malformed input.

    See Also
    --------
    static_isolated

    Examples
    --------
    Curie law of a free spin-1/2, :math:`\chi = \beta S(S+1)/3 = \beta/4`:

    >>> import numpy as np
    >>> from symresp.numeric import static_isothermal
    >>> sz = np.diag([0.5, -0.5])
    >>> bool(np.isclose(static_isothermal(np.zeros((2, 2)), sz, sz, 2.0), 2.0 / 4))
    True
    """
    return _prepare(H, A, B, beta, degeneracy_tol).isothermal


def chi_omega(
    H: object,
    A: object,
    B: object,
    beta: float,
    omega: object,
    eta: float,
    *,
    degeneracy_tol: float | None = None,
) -> complex | np.ndarray:
    r"""Retarded dynamical susceptibility at :math:`z = \omega + i\eta`.

    .. math::

        \chi_{AB}(\omega + i\eta) = \sum_{a \ne b}
        \frac{(p_a - p_b)\,\operatorname{Tr}(P_a A P_b B)}{E_b - E_a - \omega - i\eta} .

    Every pair of distinct levels is summed (nothing is dropped).

    Parameters
    ----------
    H, A, B : array_like, shape (d, d)
        Hermitian Hamiltonian, measured and driving operator.
    beta : float
        Inverse temperature ``> 0`` (``numpy.inf`` allowed).
    omega : float or array_like of float
        Real frequencies.
    eta : float
        Broadening ``> 0``.
    degeneracy_tol : float, optional
        Level grouping tolerance.

    Returns
    -------
    complex or ndarray of complex
        Same shape as ``omega``.

    Raises
    ------
    InputError
        On malformed input, non-finite ``omega`` or ``eta <= 0``.

    See Also
    --------
    chi_time, spectral_function, solve

    Examples
    --------
    Two-level system: :math:`\chi(z) = 2\Delta\tanh(\beta\Delta/2)/(\Delta^2 - z^2)`.

    >>> import numpy as np
    >>> from symresp.numeric import chi_omega
    >>> sx = [[0, 1], [1, 0]]
    >>> chi = chi_omega(np.diag([0.5, -0.5]), sx, sx, 2.0, [0.0, 0.5], 0.1)
    >>> z = np.array([0.0, 0.5]) + 0.1j
    >>> bool(np.allclose(chi, 2 * np.tanh(1.0) / (1 - z**2)))
    True
    """
    data = _prepare(H, A, B, beta, degeneracy_tol)
    w = _as_real_array("omega", omega)
    e = _as_positive("eta", eta)
    return _scalar_or_array(_sum_resolvent(data.pair_frequencies, data.pair_weights, w + 1j * e))


def chi_time(
    H: object,
    A: object,
    B: object,
    beta: float,
    t: object,
    *,
    degeneracy_tol: float | None = None,
) -> complex | np.ndarray:
    r"""Retarded response function in time.

    .. math::

        \chi_{AB}(t) = i\,\theta(t)\,\langle[A(t), B]\rangle
        = i\,\theta(t)\sum_{a \ne b} (p_a - p_b)\,W_{ab}\,e^{-i(E_b - E_a)t},

    with :math:`A(t) = e^{iHt} A e^{-iHt}`. The value at ``t = 0`` is the limit
    :math:`t \to 0^+`, :math:`i\langle[A, B]\rangle`; negative times give 0.

    Parameters
    ----------
    H, A, B : array_like, shape (d, d)
        Hermitian Hamiltonian, measured and driving operator.
    beta : float
        Inverse temperature ``> 0`` (``numpy.inf`` allowed).
    t : float or array_like of float
        Times.
    degeneracy_tol : float, optional
        Level grouping tolerance.

    Returns
    -------
    complex or ndarray of complex
        Same shape as ``t``.

    Raises
    ------
    InputError
        On malformed input or non-finite ``t``.

    See Also
    --------
    chi_omega

    Examples
    --------
    Two-level system: :math:`\chi(t) = 2\tanh(\beta\Delta/2)\sin(\Delta t)`.

    >>> import numpy as np
    >>> from symresp.numeric import chi_time
    >>> sx = [[0, 1], [1, 0]]
    >>> t = np.array([0.0, 0.4, 2.0])
    >>> chi = chi_time(np.diag([0.5, -0.5]), sx, sx, 2.0, t)
    >>> bool(np.allclose(chi, 2 * np.tanh(1.0) * np.sin(t)))
    True
    """
    data = _prepare(H, A, B, beta, degeneracy_tol)
    times = _as_real_array("t", t)
    return _scalar_or_array(_sum_time(data.pair_frequencies, data.pair_weights, times))


def chi_matsubara(
    H: object,
    A: object,
    B: object,
    beta: float,
    n: object,
    *,
    degeneracy_tol: float | None = None,
) -> complex | np.ndarray:
    r"""Matsubara susceptibility :math:`\chi_{AB}(i\nu_n)`, :math:`\nu_n = 2\pi n/\beta`.

    .. math::

        \chi_{AB}(i\nu_n) = \sum_{a \ne b} \frac{(p_a - p_b) W_{ab}}{E_b - E_a - i\nu_n}
        \quad (n \ne 0), \qquad \chi_{AB}(i\nu_0) = \chi^{\mathrm{isoth}}_{AB} .

    At :math:`n = 0` the imaginary-time integral
    :math:`\int_0^\beta \langle \delta A(\tau)\,\delta B\rangle d\tau` keeps the degenerate-level
    and :math:`-\beta\langle A\rangle\langle B\rangle` terms, so it equals the *isothermal*
    value, not the isolated value :math:`\chi(\omega \to 0)`.

    Parameters
    ----------
    H, A, B : array_like, shape (d, d)
        Hermitian Hamiltonian, measured and driving operator.
    beta : float
        Finite inverse temperature ``> 0``.
    n : int or array_like of int
        Matsubara indices.
    degeneracy_tol : float, optional
        Level grouping tolerance.

    Returns
    -------
    complex or ndarray of complex
        Same shape as ``n``.

    Raises
    ------
    InputError
        On malformed input, non-integer ``n`` or ``beta = inf``.

    Examples
    --------
    Two-level system: :math:`\chi(i\nu) = 2\Delta\tanh(\beta\Delta/2)/(\Delta^2 + \nu^2)`.

    >>> import numpy as np
    >>> from symresp.numeric import chi_matsubara
    >>> sx = [[0, 1], [1, 0]]
    >>> nu = 2 * np.pi * 3 / 2.0
    >>> chi = chi_matsubara(np.diag([0.5, -0.5]), sx, sx, 2.0, 3)
    >>> bool(np.isclose(chi, 2 * np.tanh(1.0) / (1 + nu**2)))
    True
    """
    data = _prepare(H, A, B, beta, degeneracy_tol)
    idx = _as_integer_array("n", n)
    return _scalar_or_array(_sum_matsubara(data, idx))


def spectral_function(
    H: object,
    A: object,
    B: object,
    beta: float,
    omega: object,
    eta: float,
    *,
    degeneracy_tol: float | None = None,
) -> complex | np.ndarray:
    r"""Lorentzian-broadened spectral function.

    .. math::

        \chi''_{AB}(\omega) = \sum_{a \ne b} (p_a - p_b)\,W_{ab}\,
        \frac{\eta}{(E_b - E_a - \omega)^2 + \eta^2}
        \;\xrightarrow{\eta \to 0}\; \pi \sum (p_a - p_b) W_{ab}\,\delta(\omega - (E_b - E_a)).

    For :math:`A = B^\dagger` this is :math:`\operatorname{Im}\chi_{AB}(\omega + i\eta)` and is
    real, with :math:`\omega\,\chi''(\omega) \ge 0`.

    Parameters
    ----------
    H, A, B : array_like, shape (d, d)
        Hermitian Hamiltonian, measured and driving operator.
    beta : float
        Inverse temperature ``> 0`` (``numpy.inf`` allowed).
    omega : float or array_like of float
        Real frequencies.
    eta : float
        Lorentzian half width ``> 0``.
    degeneracy_tol : float, optional
        Level grouping tolerance.

    Returns
    -------
    complex or ndarray of complex
        Same shape as ``omega``.

    Raises
    ------
    InputError
        On malformed input, non-finite ``omega`` or ``eta <= 0``.

    See Also
    --------
    chi_omega

    Examples
    --------
    >>> import numpy as np
    >>> from symresp.numeric import chi_omega, spectral_function
    >>> sx = [[0, 1], [1, 0]]; H = np.diag([0.5, -0.5])
    >>> w = np.linspace(-2, 2, 5)
    >>> spectral = spectral_function(H, sx, sx, 2.0, w, 0.1)
    >>> bool(np.allclose(spectral, chi_omega(H, sx, sx, 2.0, w, 0.1).imag))
    True
    """
    data = _prepare(H, A, B, beta, degeneracy_tol)
    w = _as_real_array("omega", omega)
    e = _as_positive("eta", eta)
    return _scalar_or_array(_sum_spectral(data.pair_frequencies, data.pair_weights, w, e))
