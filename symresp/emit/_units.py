r"""Physical units for numbers from the evaluators (layer: emit).

symresp computes with :math:`\hbar = k_B = 1`: temperature, couplings and frequencies share one
energy unit. This module converts that unit (kelvin, meV, cm^-1, GHz, THz, joule) and turns a
spin susceptibility into the molar magnetic susceptibility of magnetochemistry (cgs-emu and
SI). The constants are the CODATA 2018 recommended values, written out here (scipy is only a
test dependency; the tests compare these numbers with ``scipy.constants``). Since the 2019 SI
revision h, k_B, e, c and N_A are exact; mu_B and mu_0 are measured.

Molar susceptibility (see ``docs/units.md``): for a Zeeman term :math:`-g\mu_B B S^z_{\rm tot}`
the field couples to :math:`S^z_{\rm tot}` with :math:`f = g\mu_B B`, so with
:math:`\chi = \chi_{S^zS^z}` per molecule in units of 1/energy,

.. math::

    \chi_{\rm mol}^{\rm SI} = \mu_0 N_A g^2\mu_B^2\,\chi\ \ [\mathrm{m^3\,mol^{-1}}], \qquad
    \chi_{\rm mol}^{\rm cgs} = \chi_{\rm mol}^{\rm SI}/(4\pi\cdot 10^{-6})\ \ [\mathrm{cm^3\,mol^{-1}}],

with :math:`\chi` expressed per joule. For energies in kelvin the cgs prefactor is
:math:`N_A\mu_B^2/k_B = 0.37515\ \mathrm{cm^3\,K\,mol^{-1}}`.

Exact forms. Every constant is also held as an exact rational (:data:`EXACT`, a
:class:`fractions.Fraction` of the quoted CODATA 2018 digits), so that a Zeeman coefficient
:math:`\mu_B/E_u` put into a symbolic Hamiltonian (:func:`zeeman_constant`) is an exact number
and the derivation stays exact; the float constants are the same numbers rounded once.

Imports: math, fractions and :mod:`symresp.errors` only.
"""

from __future__ import annotations

import math
from fractions import Fraction
from numbers import Real

from ..errors import InputError

__all__ = [
    "PLANCK", "BOLTZMANN", "ELEMENTARY_CHARGE", "SPEED_OF_LIGHT", "AVOGADRO", "BOHR_MAGNETON",
    "VACUUM_PERMEABILITY", "ENERGY_UNITS", "energy_in_joule", "energy_factor",
    "convert_energy", "molar_susceptibility", "molar_susceptibility_times_temperature",
    "curie_constant", "EXACT", "TEMPERATURE_UNITS", "energy_in_joule_exact", "zeeman_constant",
    "temperature_factor", "energy_unit_name", "temperature_unit_name",
]

#: The CODATA 2018 values below as exact rationals of their quoted digits. Source: CODATA 2018
#: (h, k_B, e, c, N_A exact since the 2019 SI revision; mu_B = 9.2740100783(28)e-24 J/T and
#: mu_0 = 1.25663706212(19)e-6 N/A^2 measured, their quoted central values).
EXACT: dict[str, Fraction] = {
    "h": Fraction(662607015, 10**42),
    "k_B": Fraction(1380649, 10**29),
    "e": Fraction(1602176634, 10**28),
    "c": Fraction(299792458),
    "N_A": Fraction(602214076 * 10**15),
    "mu_B": Fraction(92740100783, 10**34),
    "mu_0": Fraction(125663706212, 10**17),
}

#: Planck constant h in J s. Source: CODATA 2018 (exact).
PLANCK = 6.62607015e-34
#: Boltzmann constant k_B in J/K. Source: CODATA 2018 (exact).
BOLTZMANN = 1.380649e-23
#: Elementary charge e in C. Source: CODATA 2018 (exact).
ELEMENTARY_CHARGE = 1.602176634e-19
#: Speed of light in vacuum c in m/s. Source: CODATA 2018 (exact).
SPEED_OF_LIGHT = 299792458.0
#: Avogadro constant N_A in 1/mol. Source: CODATA 2018 (exact).
AVOGADRO = 6.02214076e23
#: Bohr magneton mu_B in J/T. Source: CODATA 2018 (9.2740100783(28)e-24).
BOHR_MAGNETON = 9.2740100783e-24
#: Vacuum magnetic permeability mu_0 in N/A^2. Source: CODATA 2018 (1.25663706212(19)e-6).
VACUUM_PERMEABILITY = 1.25663706212e-6

#: One unit of each supported energy scale, in joules.
ENERGY_UNITS: dict[str, float] = {
    "J": 1.0,
    "K": BOLTZMANN,                                   # k_B * 1 K
    "meV": 1e-3 * ELEMENTARY_CHARGE,                  # 1 meV
    "cm^-1": PLANCK * SPEED_OF_LIGHT * 100.0,         # h c * (1 cm^-1)
    "GHz": PLANCK * 1e9,                              # h * 1 GHz
    "THz": PLANCK * 1e12,                             # h * 1 THz
}
_ALIASES = {"cm-1": "cm^-1", "1/cm": "cm^-1", "kelvin": "K", "joule": "J"}
#: One unit of each supported energy scale in joules, exactly (same keys as ENERGY_UNITS).
_ENERGY_EXACT: dict[str, Fraction] = {
    "J": Fraction(1),
    "K": EXACT["k_B"],
    "meV": EXACT["e"] / 1000,
    "cm^-1": EXACT["h"] * EXACT["c"] * 100,
    "GHz": EXACT["h"] * 10**9,
    "THz": EXACT["h"] * 10**12,
}
#: Units a temperature may be given in: kelvin, millikelvin, or any energy unit (k_B T).
TEMPERATURE_UNITS: dict[str, Fraction] = {"K": EXACT["k_B"], "mK": EXACT["k_B"] / 1000,
                                          **{u: v for u, v in _ENERGY_EXACT.items() if u != "K"}}
#: SI molar susceptibility per cgs-emu one: chi_SI [m^3/mol] = 4 pi 1e-6 chi_cgs [cm^3/mol].
_SI_PER_CGS = 4e-6 * math.pi
_SYSTEMS = ("cgs", "SI")


def _canonical(name: str, unit: object, table: dict, what: str) -> str:
    """The spelling of ``unit`` that keys ``table`` (aliases resolved); InputError otherwise."""
    canon = _ALIASES.get(unit, unit) if isinstance(unit, str) else unit
    if not isinstance(canon, str) or canon not in table:
        raise InputError(f"{name}={unit!r} is not {what} (use one of {', '.join(table)})")
    return canon


def _unit(name: str, unit: object) -> str:
    return _canonical(name, unit, ENERGY_UNITS, "an energy unit")


def _positive(name: str, value: object) -> float:
    if isinstance(value, bool) or not isinstance(value, Real) or not (
            math.isfinite(float(value)) and float(value) > 0):
        raise InputError(f"{name}={value!r} must be a finite number > 0")
    return float(value)


def _system(system: object) -> str:
    if system not in _SYSTEMS:
        raise InputError(f"system={system!r} must be 'cgs' (cm^3/mol) or 'SI' (m^3/mol)")
    return system  # type: ignore[return-value]


def energy_in_joule(unit: str) -> float:
    """Size of one ``unit`` of energy in joules (k_B T for K, h nu for GHz/THz, h c nu~ for cm^-1).

    Parameters
    ----------
    unit : {"J", "K", "meV", "cm^-1", "GHz", "THz"}

    Returns
    -------
    float

    Raises
    ------
    InputError
        For an unknown unit.

    Examples
    --------
    >>> from symresp.emit import energy_in_joule
    >>> energy_in_joule("K")
    1.380649e-23

    See Also
    --------
    energy_factor, convert_energy
    """
    return ENERGY_UNITS[_unit("unit", unit)]


def energy_factor(from_unit: str, to_unit: str) -> float:
    """Multiply an energy in ``from_unit`` by this number to express it in ``to_unit``.

    Parameters
    ----------
    from_unit, to_unit : {"J", "K", "meV", "cm^-1", "GHz", "THz"}

    Returns
    -------
    float

    Raises
    ------
    InputError
        For an unknown unit.

    Examples
    --------
    >>> from symresp.emit import energy_factor
    >>> round(energy_factor("meV", "K"), 4)       # 1 meV is about 11.6 K (common practice)
    11.6045

    See Also
    --------
    convert_energy
    """
    return ENERGY_UNITS[_unit("from_unit", from_unit)] / ENERGY_UNITS[_unit("to_unit", to_unit)]


def convert_energy(value, from_unit: str, to_unit: str):
    """Express ``value`` (a number or a numpy array) given in ``from_unit`` in ``to_unit``.

    Parameters
    ----------
    value : float or array_like
    from_unit, to_unit : {"J", "K", "meV", "cm^-1", "GHz", "THz"}

    Returns
    -------
    float or ndarray

    Raises
    ------
    InputError
        For an unknown unit.

    Examples
    --------
    >>> from symresp.emit import convert_energy
    >>> round(convert_energy(1.0, "cm^-1", "K"), 5)
    1.43878

    See Also
    --------
    energy_factor
    """
    return value * energy_factor(from_unit, to_unit)


def molar_susceptibility(chi, *, g: float, energy_unit: str = "K", system: str = "cgs"):
    r"""Molar magnetic susceptibility from the spin susceptibility :math:`\chi_{S^zS^z}`.

    .. math:: \chi_{\rm mol} = N_A g^2 \mu_B^2\,\chi / E_u \times
              \begin{cases} 10^{-1}\ \mathrm{cm^3\,mol^{-1}} & \text{cgs-emu}\\
              \mu_0\ \mathrm{m^3\,mol^{-1}} & \text{SI}\end{cases}

    with :math:`E_u` one ``energy_unit`` in joules (SI numbers for :math:`N_A, \mu_B`; the
    factor 1e-1 converts :math:`\mathrm{J\,T^{-2}}` per mole to emu: :math:`\mu_B` in erg/G
    is 1e3 times its J/T value, energies in erg are 1e7 times joules).

    Parameters
    ----------
    chi : float or array_like
        Isothermal susceptibility per molecule of A = B = total S^z, in 1/``energy_unit``
        (the output of the evaluators with temperatures and couplings in that unit).
    g : float
        g factor (> 0).
    energy_unit : str
        Unit of the model energies (default kelvin).
    system : {"cgs", "SI"}
        cm^3 mol^-1 (cgs-emu) or m^3 mol^-1 (SI).

    Returns
    -------
    float or ndarray

    Raises
    ------
    InputError
        On a bad ``g``, ``energy_unit`` or ``system``.

    Examples
    --------
    Curie law of a spin 1/2, :math:`\chi = 1/(4T)`: :math:`\chi_{\rm mol} T = 0.375` for g = 2.

    >>> from symresp.emit import molar_susceptibility
    >>> round(molar_susceptibility(1 / (4 * 300.0), g=2.0) * 300.0, 4)
    0.3751

    See Also
    --------
    molar_susceptibility_times_temperature, curie_constant
    """
    g = _positive("g", g)
    e_unit = energy_in_joule(energy_unit)
    factor = AVOGADRO * g * g * BOHR_MAGNETON**2 / e_unit
    factor *= 1e-1 if _system(system) == "cgs" else VACUUM_PERMEABILITY
    return chi * factor


def molar_susceptibility_times_temperature(chi, T, *, g: float, energy_unit: str = "K",
                                           system: str = "cgs"):
    r""":math:`\chi_{\rm mol} T` with T in kelvin (cm^3 K mol^-1 or m^3 K mol^-1).

    Parameters
    ----------
    chi : float or array_like
        Spin susceptibility per molecule in 1/``energy_unit``.
    T : float or array_like
        Temperatures in ``energy_unit`` (the values the evaluator was called with).
    g : float
    energy_unit : str
    system : {"cgs", "SI"}

    Returns
    -------
    float or ndarray

    Raises
    ------
    InputError
        On a bad ``g``, ``energy_unit`` or ``system``.

    Examples
    --------
    >>> from symresp.emit import molar_susceptibility_times_temperature
    >>> round(molar_susceptibility_times_temperature(1 / (4 * 2.0), 2.0, g=2.0), 4)
    0.3751

    See Also
    --------
    molar_susceptibility
    """
    kelvin = energy_factor(energy_unit, "K")
    return molar_susceptibility(chi, g=g, energy_unit=energy_unit, system=system) * (T * kelvin)


def curie_constant(spin: float, *, g: float, system: str = "cgs") -> float:
    r"""Curie constant :math:`C = N_A g^2\mu_B^2 S(S+1)/(3k_B)` of independent spins S.

    Parameters
    ----------
    spin : float
        Spin quantum number S (> 0).
    g : float
    system : {"cgs", "SI"}
        cm^3 K mol^-1 or m^3 K mol^-1.

    Returns
    -------
    float

    Raises
    ------
    InputError
        On a bad ``spin``, ``g`` or ``system``.

    Examples
    --------
    >>> from symresp.emit import curie_constant
    >>> round(curie_constant(0.5, g=2.0), 4)        # about 0.375 (common practice)
    0.3751

    See Also
    --------
    molar_susceptibility
    """
    S = _positive("spin", spin)
    return molar_susceptibility(S * (S + 1) / 3.0, g=g, energy_unit="K", system=system)


def energy_unit_name(unit: object, *, name: str = "energy_unit") -> str:
    """The canonical spelling of an energy unit (``"cm-1"`` -> ``"cm^-1"``); InputError otherwise.

    Examples
    --------
    >>> from symresp.emit import energy_unit_name
    >>> energy_unit_name("1/cm")
    'cm^-1'
    """
    return _unit(name, unit)


def temperature_unit_name(unit: object, *, name: str = "temperature_unit") -> str:
    """The canonical spelling of a temperature unit (``"K"``, ``"mK"`` or an energy unit).

    Examples
    --------
    >>> from symresp.emit import temperature_unit_name
    >>> temperature_unit_name("kelvin")
    'K'
    """
    return _canonical(name, unit, TEMPERATURE_UNITS, "a temperature unit")


def energy_in_joule_exact(unit: str) -> Fraction:
    """One ``unit`` of energy in joules as an exact rational of the CODATA 2018 digits.

    Examples
    --------
    >>> from symresp.emit import energy_in_joule_exact
    >>> energy_in_joule_exact("K")
    Fraction(1380649, 100000000000000000000000000000)
    """
    return _ENERGY_EXACT[_unit("unit", unit)]


def zeeman_constant(energy_unit: str) -> Fraction:
    r"""The Bohr magneton per tesla in ``energy_unit``, :math:`\mu_B/E_u`, as an exact rational.

    This is the coefficient of :math:`B\,g\,S` in a Hamiltonian written in ``energy_unit``
    with the field in tesla (CODATA 2018 digits, exact arithmetic).

    Parameters
    ----------
    energy_unit : {"J", "K", "meV", "cm^-1", "GHz", "THz"}

    Returns
    -------
    fractions.Fraction

    Raises
    ------
    InputError
        For an unknown unit.

    Examples
    --------
    :math:`\mu_B/k_B = 0.67171` K/T and :math:`\mu_B/h = 13.996` GHz/T (CODATA 2018):

    >>> from symresp.emit import zeeman_constant
    >>> round(float(zeeman_constant("K")), 5), round(float(zeeman_constant("GHz")), 3)
    (0.67171, 13.996)

    See Also
    --------
    energy_in_joule_exact
    """
    return EXACT["mu_B"] / energy_in_joule_exact(energy_unit)


def temperature_factor(temperature_unit: str, energy_unit: str) -> float:
    r"""Multiply a temperature in ``temperature_unit`` by this number to get :math:`k_B T` in
    ``energy_unit`` (the temperature the evaluators take, :math:`k_B = 1`).

    Examples
    --------
    >>> from symresp.emit import temperature_factor
    >>> round(temperature_factor("K", "cm^-1"), 6)        # 1 K is 0.695035 cm^-1
    0.695035
    >>> temperature_factor("K", "K")
    1.0
    """
    t_unit = temperature_unit_name(temperature_unit)
    return float(TEMPERATURE_UNITS[t_unit] / energy_in_joule_exact(energy_unit))
