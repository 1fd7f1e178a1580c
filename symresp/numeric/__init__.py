r"""Reference exact diagonalisation on numpy arrays (layer: numeric, a leaf).

The judge every symbolic result is compared with. Imports numpy and :mod:`symresp.errors`
only; no other layer of symresp is used, so a bug elsewhere cannot hide itself here.

Conventions (the pinned ones of symresp, :math:`\hbar = k_B = 1`, :math:`\beta = 1/T`):

* :math:`H = \sum_a E_a P_a` with eigenspace projectors :math:`P_a` of the *levels*
  (eigenvalues equal within ``degeneracy_tol`` are one level, of degeneracy
  :math:`g_a = \operatorname{Tr} P_a`).
* :math:`p_a = e^{-\beta (E_a - E_0)} / Z'` is the probability of *each* state of level
  :math:`a` (so :math:`\sum_a g_a p_a = 1`); :math:`Z' = \sum_a g_a e^{-\beta(E_a - E_0)}`.
* Weights :math:`W_{ab} = \operatorname{Tr}(P_a A P_b B)`, independent of the basis chosen
  inside a degenerate level.
* :math:`\chi_{AB}(z) = \sum_{a \ne b} \frac{(p_a - p_b) W_{ab}}{E_b - E_a - z}`, retarded
  for :math:`z = \omega + i\eta`, :math:`\eta > 0`.
* :math:`\chi_{AB}(t) = i\,\theta(t)\,\langle[A(t), B]\rangle
  = i\,\theta(t) \sum_k w_k e^{-i\Omega_k t}` with poles :math:`\Omega_k = E_b - E_a` and
  weights :math:`w_k = (p_a - p_b) W_{ab}`.

Modules: ``_arguments`` (argument checks), ``_levels`` (eigensystem, degenerate levels,
populations), ``_lehmann`` (weights, poles, static values, sums on grids), ``_response``
(:func:`solve` and :class:`NumericResponse`), ``_functions`` (the free functions),
``_correlation`` (correlation lines and broadened correlation functions).
"""

from ._functions import (
    chi_matsubara,
    chi_omega,
    chi_time,
    expectation,
    log_partition_function,
    partition_function,
    poles,
    spectral_function,
    static_isolated,
    static_isothermal,
)
from ._correlation import CORRELATION_KINDS, correlation_lines, correlation_spectrum
from ._levels import Eigensystem, eigensystem
from ._response import NumericResponse, solve
from ._roots import real_roots

__all__ = [
    "CORRELATION_KINDS",
    "correlation_lines",
    "correlation_spectrum",
    "Eigensystem",
    "NumericResponse",
    "chi_matsubara",
    "chi_omega",
    "chi_time",
    "eigensystem",
    "expectation",
    "log_partition_function",
    "partition_function",
    "poles",
    "real_roots",
    "solve",
    "spectral_function",
    "static_isolated",
    "static_isothermal",
]
