r"""The linear response of a matrix model as one value (layer: numeric).

:func:`solve` diagonalises once and returns a :class:`NumericResponse`: levels, populations,
the merged pole table, static susceptibilities, Z, and methods for chi on any grid. Imports
numpy and :mod:`symresp.errors` only.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ._arguments import (_as_complex_array, _as_tolerance, _documented, _readonly,
                         _scalar_or_array)
from ._lehmann import (_merge_poles, _prepare, _sum_resolvent, frequency_values,
                       matsubara_values, spectral_values, time_values)

#: Default pole-weight threshold, relative to ``||A||_F ||B||_F``: rounding noise of a weight
#: that vanishes by symmetry is about ``d * 1e-16`` of that scale.
WEIGHT_RTOL = 1e-14


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
        return frequency_values(*self.poles, omega, eta)

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
        return time_values(*self.poles, t)

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
        return spectral_values(*self.poles, omega, eta)

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
        return matsubara_values(*self.poles, self.isothermal, self.beta, n)


def _z_from_log(log_z: float) -> float:
    try:
        return math.exp(log_z)
    except OverflowError:
        return math.inf


@_documented
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
    $HAB
    beta : float
        Inverse temperature, ``> 0``; ``numpy.inf`` means T = 0 (ground level only).
    $degeneracy_tol
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
        wtol = WEIGHT_RTOL * data.weight_scale
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
