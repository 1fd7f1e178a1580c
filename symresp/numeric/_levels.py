r"""Levels of a Hermitian matrix and their thermal populations (layer: numeric).

Diagonalise, group eigenvalues into degenerate levels, and weigh the levels with Boltzmann
factors that stay finite at any temperature. Imports numpy and :mod:`symresp.errors` only.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from numbers import Integral

import numpy as np

from symresp._tolerances import degeneracy_tolerance
from symresp.errors import InputError

from ._arguments import _as_hamiltonian, _as_tolerance, _readonly, _short

#: Boltzmann factors below exp(-600) are set to exactly zero. They lie some 250 orders of
#: magnitude below double precision relative to the ground level, and clamping keeps every
#: intermediate product a normal float (no underflow, even under ``np.errstate(all="raise")``).
LOG_FLOOR = -600.0


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



def _build_eigensystem(
    energies: np.ndarray, vectors: np.ndarray, degeneracy_tol: float | None
) -> Eigensystem:
    """Group ascending eigenvalues into levels (consecutive gaps <= tol join a level)."""
    energies = np.asarray(energies, dtype=np.float64)
    if degeneracy_tol is None:
        degeneracy_tol = degeneracy_tolerance(float(np.max(np.abs(energies))))
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


def _diagonalise(h: np.ndarray, degeneracy_tol: float | None) -> Eigensystem:
    """Eigensystem of a checked Hermitian matrix."""
    energies, vectors = np.linalg.eigh(h)
    return _build_eigensystem(energies, vectors, degeneracy_tol)


def eigensystem(H: object, *, degeneracy_tol: float | None = None) -> Eigensystem:
    r"""Diagonalise a Hermitian matrix and group its eigenvalues into degenerate levels.

    .. math:: H = \sum_n E_n |n\rangle\langle n| = \sum_a E_a P_a .

    Parameters
    ----------
    H : array_like, shape (d, d)
        Hermitian matrix (within a relative tolerance of 1e-10).
    degeneracy_tol : float, optional
        Eigenvalues whose consecutive gaps are at most this belong to one level. Default
        ``1e-9 * max|E|`` (relative: the same levels in any energy unit).

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
    return _diagonalise(_as_hamiltonian(H), _as_tolerance("degeneracy_tol", degeneracy_tol))


def _populations(es: Eigensystem, beta: float) -> tuple[np.ndarray, float]:
    """Per-state probabilities p_a of each level and log Z (unshifted), stable at low T."""
    energies = es.level_energies
    gaps = energies - energies[0]
    gaps[0] = 0.0  # exact zero for the ground level, so exp(-beta * 0) = 1 even for beta = inf
    if math.isinf(beta):
        log_boltzmann = np.where(gaps > 0, -np.inf, 0.0)
    else:
        log_boltzmann = -beta * gaps
    # Clamp before exponentiating (see LOG_FLOOR): no underflow, factors below the floor are 0.
    boltzmann = np.where(
        log_boltzmann > LOG_FLOOR, np.exp(np.maximum(log_boltzmann, LOG_FLOOR)), 0.0
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
    factor = np.expm1(np.maximum(argument, LOG_FLOOR))  # in [-1, 0]
    return np.where(delta > 0, -populations[:, None] * factor, populations[None, :] * factor)
