r"""The numeric reference as free functions (layer: numeric).

Each function is one view of the Lehmann data of :mod:`._lehmann` (or of the levels alone);
:func:`~symresp.numeric.solve` gives all of them at once. Imports numpy and
:mod:`symresp.errors` only.
"""

from __future__ import annotations

import numpy as np

from symresp.errors import InputError

from ._arguments import _as_beta, _as_hamiltonian, _as_matrix, _as_tolerance, _documented
from ._lehmann import (_prepare, frequency_values, matsubara_values, spectral_values,
                       time_values)
from ._levels import Eigensystem, _diagonalise, _populations
from ._response import _z_from_log, solve


def _thermal_only(H: object, beta: object, degeneracy_tol: object) -> tuple[Eigensystem, float]:
    h = _as_hamiltonian(H)
    beta_value = _as_beta(beta)
    return _diagonalise(h, _as_tolerance("degeneracy_tol", degeneracy_tol)), beta_value


@_documented
def log_partition_function(
    H: object, beta: float, *, degeneracy_tol: float | None = None
) -> float:
    r"""Logarithm of the partition function, :math:`\log Z`, computed stably.

    .. math:: \log Z = -\beta E_0 + \log \sum_a g_a e^{-\beta (E_a - E_0)} .

    Parameters
    ----------
    $H
    $beta
    $degeneracy_tol

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


@_documented
def partition_function(H: object, beta: float, *, degeneracy_tol: float | None = None) -> float:
    r"""Partition function :math:`Z = \operatorname{Tr} e^{-\beta H} = \sum_n e^{-\beta E_n}`.

    Unshifted, so it may overflow to ``inf`` or underflow to 0; see
    :func:`log_partition_function`.

    Parameters
    ----------
    $H
    $beta
    $degeneracy_tol

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


@_documented
def expectation(
    H: object, X: object, beta: float, *, degeneracy_tol: float | None = None
) -> complex:
    r"""Thermal expectation value :math:`\langle X\rangle = \operatorname{Tr}(\rho X)`,
    :math:`\rho = \sum_n p_n |n\rangle\langle n|`.

    Parameters
    ----------
    $H
    X : array_like, shape (d, d)
        Operator.
    $beta
    $degeneracy_tol

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
    es = _diagonalise(h, _as_tolerance("degeneracy_tol", degeneracy_tol))
    populations, _ = _populations(es, beta_value)
    x_diag = np.einsum("ni,ij,jn->n", es.vectors.conj().T, x, es.vectors)
    return complex(np.sum(populations[es.labels] * x_diag))


@_documented
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
    $HAB
    $beta
    degeneracy_tol : float, optional
        Level and pole merging tolerance; default ``1e-9 * max|E|``.
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


@_documented
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
    $HAB
    $beta
    $degeneracy_tol

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


@_documented
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
    $HAB
    $beta
    $degeneracy_tol

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


@_documented
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
    $HAB
    $beta
    $omega_eta
    $degeneracy_tol

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
    return frequency_values(data.pair_frequencies, data.pair_weights, omega, eta)


@_documented
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
    $HAB
    $beta
    t : float or array_like of float
        Times.
    $degeneracy_tol

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
    return time_values(data.pair_frequencies, data.pair_weights, t)


@_documented
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
    $HAB
    beta : float
        Finite inverse temperature ``> 0``.
    n : int or array_like of int
        Matsubara indices.
    $degeneracy_tol

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
    return matsubara_values(data.pair_frequencies, data.pair_weights, data.isothermal, data.beta, n)


@_documented
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
    $HAB
    $beta
    $omega_eta
    $degeneracy_tol

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
    return spectral_values(data.pair_frequencies, data.pair_weights, omega, eta)
