r"""Molar magnetometry: units, effective moment and the corrections added to a cluster model
(layer: emit).

Owns :func:`molar_factor`, :func:`moment_factor`, :func:`effective_moment`,
:func:`brillouin`, :class:`Corrections` and :func:`powder_average`. Imports numpy,
:mod:`symresp.errors` and :mod:`._units`.

Notation. :math:`\chi_{\mu\mu}` is the isothermal susceptibility of the moment operator in Bohr
magnetons (``magnetic_moment``), per formula unit, in 1/``energy_unit``; :math:`M` the
magnetisation per formula unit in :math:`\mu_B`. With :math:`E_u` one energy unit in joules:

.. math::

    \chi_{\rm mol} = F\,\chi_{\mu\mu}, \qquad
    F = \frac{N_A\mu_B^2}{E_u}\times\begin{cases}10^{-1} & \mathrm{cm^3\,mol^{-1}}\ \text{(cgs-emu)}\\
    \mu_0 & \mathrm{m^3\,mol^{-1}}\ \text{(SI)}\end{cases}

and a molar susceptibility :math:`\chi_{\rm mol}` in a field :math:`B` (tesla) gives the moment
:math:`M = k_M\,\chi_{\rm mol}B` per formula unit in :math:`\mu_B`, with
:math:`k_M = 10^4/(N_A\mu_B^{\rm cgs})` (cgs-emu, :math:`\mu_B^{\rm cgs}` in erg/G) or
:math:`1/(\mu_0 N_A\mu_B)` (SI).

Corrections (the conventions are stated in ``docs/conventions.md``, section 8):

.. math::

    \chi = (1 - \rho)\,\frac{\chi_0}{1 + zJ'\,\chi_0/(F g^2)}
         + \rho\,\frac{F g_i^2 S_i(S_i + 1)}{3\,k_BT} + \chi_{\rm TIP} + \chi_{\rm dia},

with :math:`\chi_0` the molar susceptibility of the cluster, :math:`zJ'` the mean-field coupling
between clusters (same sign convention as the exchange in the Hamiltonian: positive is
antiferromagnetic), :math:`\rho` the fraction of formula units replaced by a paramagnetic
impurity of spin :math:`S_i` and g factor :math:`g_i`, :math:`\chi_{\rm TIP}` the
temperature-independent paramagnetism and :math:`\chi_{\rm dia}` the diamagnetic correction
(negative), both molar. For the magnetisation the impurity adds
:math:`\rho\, g_iS_i\,\mathcal B_{S_i}(g_i\mu_B S_i B/k_BT)` and the two constant
susceptibilities add :math:`k_M(\chi_{\rm TIP} + \chi_{\rm dia})B`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ._units import EXACT, energy_in_joule_exact, zeeman_constant

__all__ = ["molar_factor", "moment_factor", "effective_moment", "brillouin", "Corrections",
           "powder_average", "SYSTEMS"]

#: Unit systems of molar susceptibilities.
SYSTEMS = ("cgs", "SI")


def _system(system: object) -> str:
    if system not in SYSTEMS:
        raise InputError(f"system={system!r} must be 'cgs' (cm^3/mol) or 'SI' (m^3/mol)")
    return system  # type: ignore[return-value]


def molar_factor(energy_unit: str, system: str = "cgs") -> float:
    r"""F with :math:`\chi_{\rm mol} = F\,\chi_{\mu\mu}` (:math:`\chi_{\mu\mu}` per formula unit in
    :math:`\mu_B^2` per ``energy_unit``).

    Examples
    --------
    :math:`N_A\mu_B^2/(3k_B) = 0.12505` cm^3 K/mol (CODATA 2018):

    >>> from symresp.emit import molar_factor
    >>> round(molar_factor("K") / 3, 5)
    0.12505
    """
    e_unit = energy_in_joule_exact(energy_unit)
    base = EXACT["N_A"] * EXACT["mu_B"] ** 2 / e_unit
    return float(base / 10) if _system(system) == "cgs" else float(base * EXACT["mu_0"])


def moment_factor(system: str = "cgs") -> float:
    r""":math:`k_M`: a molar susceptibility times a field in tesla, times :math:`k_M`, is a moment
    per formula unit in Bohr magnetons.

    Examples
    --------
    >>> from symresp.emit import moment_factor
    >>> round(moment_factor("cgs"), 5)        # 1e4 G/T over N_A mu_B = 5585 emu/mol
    1.79053
    """
    if _system(system) == "cgs":
        # N_A mu_B in erg/(G mol): mu_B in erg/G is 1e3 times its value in J/T
        return float(10**4 / (EXACT["N_A"] * EXACT["mu_B"] * 1000))
    return float(1 / (EXACT["mu_0"] * EXACT["N_A"] * EXACT["mu_B"]))


def effective_moment(chi_T, system: str = "cgs"):
    r"""Effective moment :math:`\mu_{\rm eff}/\mu_B = \sqrt{3k_B\chi T/(N_A\mu_B^2)}` from
    :math:`\chi T` in cm^3 K/mol (cgs-emu) or m^3 K/mol (SI).

    Examples
    --------
    A spin 1/2 with g = 2: :math:`\mu_{\rm eff} = g\sqrt{S(S+1)} = \sqrt3`.

    >>> from symresp.emit import curie_constant, effective_moment
    >>> round(effective_moment(curie_constant(0.5, g=2.0)), 6)
    1.732051
    """
    per_kelvin = molar_factor("K", system)          # N_A mu_B^2/k_B in the system's units
    return np.sqrt(3.0 * np.asarray(chi_T, dtype=float) / per_kelvin) if np.ndim(chi_T) else \
        math.sqrt(3.0 * float(chi_T) / per_kelvin)


def brillouin(S: float, x):
    r"""Brillouin function :math:`\mathcal B_S(x) = \frac{2S+1}{2S}\coth\frac{(2S+1)x}{2S}
    - \frac1{2S}\coth\frac{x}{2S}` and its derivative, stable at small x (series below
    :math:`|x| < 10^{-3}`: :math:`\mathcal B_S \approx (S+1)x/(3S)`).

    Returns
    -------
    (value, derivative)

    Examples
    --------
    >>> from symresp.emit import brillouin
    >>> v, d = brillouin(0.5, 1.0)           # B_1/2(x) = tanh(x)
    >>> round(v, 12), round(d, 12)
    (0.761594155956, 0.419974341614)
    """
    x = np.asarray(x, dtype=float)
    a, b = (2 * S + 1) / (2 * S), 1 / (2 * S)
    small = np.abs(x) < 1e-3
    xs = np.where(small, 1.0, x)

    def coth(u):
        return 1.0 / np.tanh(u)

    def dcoth(u):
        e = np.exp(-2.0 * np.abs(u))          # -1/sinh(u)^2 without overflow
        return -4.0 * e / (1.0 - e) ** 2

    val = a * coth(a * xs) - b * coth(b * xs)
    der = a * a * dcoth(a * xs) - b * b * dcoth(b * xs)
    c1 = (S + 1) / (3 * S)
    c3 = -((2 * S + 1) ** 4 - 1) / (45 * (2 * S) ** 4)
    val = np.where(small, c1 * x + c3 * x ** 3, val)
    der = np.where(small, c1 + 3 * c3 * x ** 2, der)
    if val.ndim == 0:
        return float(val), float(der)
    return val, der


@dataclass(frozen=True, slots=True)
class Corrections:
    r"""Values of the corrections added to a cluster model (see the module docstring).

    Attributes
    ----------
    tip, diamagnetic : float
        Molar susceptibilities in the units of ``system``.
    impurity_fraction : float
        :math:`\rho` in [0, 1].
    impurity_spin, impurity_g : float
        Spin and g factor of the impurity.
    mean_field : float
        :math:`zJ'` in ``energy_unit``.
    mean_field_g : float
        The g factor that converts the moment of a cluster to its spin in the mean-field term.
    system : {"cgs", "SI"}
    energy_unit : str
    """

    tip: float = 0.0
    diamagnetic: float = 0.0
    impurity_fraction: float = 0.0
    impurity_spin: float = 0.5
    impurity_g: float = 2.0
    mean_field: float = 0.0
    mean_field_g: float = 2.0
    system: str = "cgs"
    energy_unit: str = "K"

    def susceptibility(self, chi0, T) -> tuple[np.ndarray, dict[str, np.ndarray]]:
        r"""The corrected molar susceptibility and its partial derivatives.

        Parameters
        ----------
        chi0 : array_like
            Molar susceptibility of the cluster model.
        T : array_like
            :math:`k_BT` in ``energy_unit``.

        Returns
        -------
        (chi, partials)
            ``partials`` maps ``"chi0"``, ``"tip"``, ``"diamagnetic"``, ``"impurity_fraction"``,
            ``"impurity_g"``, ``"mean_field"``, ``"mean_field_g"`` to derivatives of chi.

        Examples
        --------
        >>> from symresp.emit import Corrections
        >>> chi, d = Corrections(tip=1e-4).susceptibility(0.01, 10.0)
        >>> round(float(chi), 6), float(d["tip"])
        (0.0101, 1.0)
        """
        chi0 = np.asarray(chi0, dtype=float)
        T = np.asarray(T, dtype=float)
        F = molar_factor(self.energy_unit, self.system)
        a = self.mean_field / (F * self.mean_field_g ** 2)
        den = 1.0 + a * chi0
        mf = chi0 / den
        rho = self.impurity_fraction
        S, gi = self.impurity_spin, self.impurity_g
        curie = F * S * (S + 1) / (3.0 * T)
        imp = gi * gi * curie
        chi = (1.0 - rho) * mf + rho * imp + self.tip + self.diamagnetic
        ones = np.ones_like(chi)
        partials = {
            "chi0": (1.0 - rho) / den ** 2 * ones,
            "tip": ones,
            "diamagnetic": ones,
            "impurity_fraction": (imp - mf) * ones,
            "impurity_g": rho * 2.0 * gi * curie * ones,
            "mean_field": -(1.0 - rho) * chi0 ** 2 / (den ** 2 * F * self.mean_field_g ** 2) * ones,
            "mean_field_g": (1.0 - rho) * chi0 ** 2 * 2.0 * a / (self.mean_field_g * den ** 2) * ones,
        }
        return chi, partials

    def magnetisation(self, M0, B, T) -> tuple[np.ndarray, dict[str, np.ndarray]]:
        r"""The corrected magnetisation per formula unit (:math:`\mu_B`) and its partials.

        Parameters
        ----------
        M0 : array_like
            Magnetisation of the cluster model per formula unit, in :math:`\mu_B`.
        B : array_like
            Field in tesla.
        T : array_like
            :math:`k_BT` in ``energy_unit``.

        Raises
        ------
        InputError
            With a mean-field coupling, which needs a self-consistent field (not offered for M).

        Examples
        --------
        >>> from symresp.emit import Corrections
        >>> M, d = Corrections(impurity_fraction=0.5, impurity_g=2.0).magnetisation(0.0, 50.0, 0.01)
        >>> round(float(M), 6)                 # half a saturated spin 1/2 with g = 2
        0.5
        """
        if self.mean_field != 0:
            raise InputError("a mean-field coupling zJ' between clusters is applied to "
                             "susceptibilities only; for M(B) it needs a self-consistent field, "
                             "which is not offered: set it to 0")
        M0 = np.asarray(M0, dtype=float)
        B = np.asarray(B, dtype=float)
        T = np.asarray(T, dtype=float)
        rho, S, gi = self.impurity_fraction, self.impurity_spin, self.impurity_g
        c = float(zeeman_constant(self.energy_unit))
        x = gi * c * B * S / T
        bs, dbs = brillouin(S, x)
        imp = gi * S * bs
        kM = moment_factor(self.system)
        M = (1.0 - rho) * M0 + rho * imp + kM * (self.tip + self.diamagnetic) * B
        ones = np.ones_like(M)
        partials = {
            "M0": (1.0 - rho) * ones,
            "tip": kM * B * ones,
            "diamagnetic": kM * B * ones,
            "impurity_fraction": (imp - M0) * ones,
            "impurity_g": rho * (S * bs + gi * S * dbs * c * B * S / T) * ones,
        }
        return M, partials


def powder_average(chi_parallel, chi_perpendicular):
    r"""Powder average of an axial susceptibility, :math:`(\chi_\parallel + 2\chi_\perp)/3`.

    Examples
    --------
    >>> from symresp.emit import powder_average
    >>> powder_average(3.0, 0.0)
    1.0
    """
    return (np.asarray(chi_parallel) + 2 * np.asarray(chi_perpendicular)) / 3 \
        if np.ndim(chi_parallel) or np.ndim(chi_perpendicular) else \
        (chi_parallel + 2 * chi_perpendicular) / 3
