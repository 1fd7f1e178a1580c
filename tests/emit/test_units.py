"""Energy units and molar susceptibilities (symresp.emit._units).

Constants are checked against scipy.constants (Source: CODATA via scipy.constants; scipy
ships a newer CODATA adjustment than the 2018 values written in the module, so the two
measured constants, mu_B and mu_0, are compared with a tolerance that covers that revision).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants as C
import sympy as sp

import symresp as sr
from symresp.emit import (AVOGADRO, BOHR_MAGNETON, BOLTZMANN, ELEMENTARY_CHARGE, PLANCK,
                          SPEED_OF_LIGHT, VACUUM_PERMEABILITY, convert_energy, curie_constant,
                          energy_factor, energy_in_joule, molar_susceptibility,
                          molar_susceptibility_times_temperature, numpy_functions)
from symresp.errors import InputError

#: Exact SI constants (2019 SI) agree to rounding.
RTOL_EXACT = 1e-15
#: mu_B and mu_0 changed by about 1.4e-9 and 6.8e-10 (relative) between CODATA 2018 and 2022.
RTOL_MEASURED = 5e-9
#: Derived conversion factors.
RTOL_DERIVED = 5e-9
#: Products of factors that should be exactly inverse, and the same quantity by two routes.
RTOL_ROUNDING = 1e-13
#: Rounded values quoted in the trade (4-5 digits, common practice).
RTOL_QUOTED = 1e-4
#: "About 0.375": the quoted Curie constant is rounded to three digits.
RTOL_CURIE_QUOTED = 1e-3


@pytest.mark.parametrize("ours,name", [
    (PLANCK, "Planck constant"),
    (BOLTZMANN, "Boltzmann constant"),
    (ELEMENTARY_CHARGE, "elementary charge"),
    (SPEED_OF_LIGHT, "speed of light in vacuum"),
    (AVOGADRO, "Avogadro constant"),
])
def test_exact_constants_match_scipy(ours, name):
    # Source: CODATA via scipy.constants
    assert ours == pytest.approx(C.physical_constants[name][0], rel=RTOL_EXACT)


@pytest.mark.parametrize("ours,name", [
    (BOHR_MAGNETON, "Bohr magneton"),
    (VACUUM_PERMEABILITY, "vacuum mag. permeability"),
])
def test_measured_constants_match_scipy(ours, name):
    # Source: CODATA via scipy.constants
    assert ours == pytest.approx(C.physical_constants[name][0], rel=RTOL_MEASURED)


@pytest.mark.parametrize("unit,joules", [
    ("J", 1.0),
    ("K", C.k),
    ("meV", 1e-3 * C.e),
    ("cm^-1", C.h * C.c * 100.0),
    ("GHz", C.h * 1e9),
    ("THz", C.h * 1e12),
])
def test_energy_units_match_scipy(unit, joules):
    # Source: CODATA via scipy.constants
    assert energy_in_joule(unit) == pytest.approx(joules, rel=RTOL_EXACT)


def test_conversions_are_consistent_and_known_values_hold():
    units = ["J", "K", "meV", "cm^-1", "GHz", "THz"]
    for a in units:
        for b in units:
            assert energy_factor(a, b) * energy_factor(b, a) == pytest.approx(1.0, rel=RTOL_ROUNDING)
    # Source: CODATA via scipy.constants (Bohr magneton in K/T, electron-volt-kelvin relation)
    assert energy_factor("meV", "K") == pytest.approx(
        1e-3 * C.physical_constants["electron volt-kelvin relationship"][0], rel=RTOL_DERIVED)
    assert energy_factor("cm^-1", "K") == pytest.approx(
        C.physical_constants["inverse meter-kelvin relationship"][0] * 100, rel=RTOL_DERIVED)
    assert energy_factor("GHz", "K") == pytest.approx(
        C.physical_constants["hertz-kelvin relationship"][0] * 1e9, rel=RTOL_DERIVED)
    # 1 THz is about 33.356 cm^-1 and 4.1357 meV (common practice)
    assert energy_factor("THz", "cm^-1") == pytest.approx(33.356, rel=RTOL_QUOTED)
    assert energy_factor("THz", "meV") == pytest.approx(4.1357, rel=RTOL_QUOTED)
    np.testing.assert_allclose(convert_energy(np.array([1.0, 2.0]), "K", "K"), [1.0, 2.0])
    assert convert_energy(1.0, "cm-1", "K") == convert_energy(1.0, "cm^-1", "K")


def test_curie_constant_of_a_spin_half_with_g_2():
    # C = N_A g^2 mu_B^2 S(S+1)/(3 k_B) is about 0.375 cm^3 K mol^-1 for S = 1/2, g = 2
    # (common practice in magnetochemistry); the precise value is 0.37515.
    assert curie_constant(0.5, g=2.0) == pytest.approx(0.375, rel=RTOL_CURIE_QUOTED)
    # Source: CODATA via scipy.constants (N_A mu_B^2 / k_B in cgs-emu = SI value / 10)
    exact = C.N_A * C.physical_constants["Bohr magneton"][0] ** 2 / C.k * 0.1
    assert curie_constant(0.5, g=2.0) == pytest.approx(exact * 4 * 0.75 / 3, rel=RTOL_DERIVED)
    assert curie_constant(0.5, g=2.0, system="SI") == pytest.approx(
        4e-6 * math.pi * curie_constant(0.5, g=2.0), rel=RTOL_DERIVED)


def test_free_spin_evaluator_gives_the_curie_law_in_molar_units():
    s = sr.spin("s", sp.Rational(1, 2))
    f = numpy_functions(sr.Model(0 * s.z).response(s.z).derivation)
    T = np.array([2.0, 10.0, 300.0])                       # kelvin
    chiT = molar_susceptibility_times_temperature(f.chi_isothermal(T), T, g=2.0)
    np.testing.assert_allclose(chiT, curie_constant(0.5, g=2.0), rtol=RTOL_ROUNDING)
    # Same physics with energies in meV: chi is per meV, T given in meV.
    T_meV = convert_energy(T, "K", "meV")
    chiT_meV = molar_susceptibility_times_temperature(f.chi_isothermal(T_meV), T_meV, g=2.0, energy_unit="meV")
    np.testing.assert_allclose(chiT_meV, chiT, rtol=RTOL_ROUNDING)


def test_molar_susceptibility_systems():
    chi = 0.1
    cgs = molar_susceptibility(chi, g=2.0)
    si = molar_susceptibility(chi, g=2.0, system="SI")
    assert si == pytest.approx(4e-6 * math.pi * cgs, rel=RTOL_DERIVED)


@pytest.mark.parametrize("call", [
    lambda: energy_in_joule("eV/c"),
    lambda: energy_factor("K", 3),
    lambda: molar_susceptibility(1.0, g=0.0),
    lambda: molar_susceptibility(1.0, g=True),
    lambda: molar_susceptibility(1.0, g=2.0, system="gaussian"),
    lambda: molar_susceptibility_times_temperature(1.0, 1.0, g=2.0, energy_unit="furlong"),
    lambda: curie_constant(-0.5, g=2.0),
    lambda: curie_constant(sp.Rational(1, 2), g=float("nan")),
])
def test_units_reject_bad_arguments(call):
    with pytest.raises(InputError):
        call()
