"""Models shared by the tests of symresp.checks (built with the public Python API)."""

from __future__ import annotations

import pytest
import sympy as sp

import symresp as sr

HALF = sp.Rational(1, 2)


@pytest.fixture(scope="session")
def dimer():
    """Heisenberg dimer H = J S1.S2 (Bleaney-Bowers), A = B = S1z + S2z."""
    J = sp.Symbol("J", real=True)
    a, b = sr.spin("a", HALF), sr.spin("b", HALF)
    return sr.Model(J * (a.vec @ b.vec)).response(a.z + b.z).derivation


@pytest.fixture(scope="session")
def free_spin():
    """A free spin 1/2, A = B = Sz: Curie law (isothermal) and zero (isolated)."""
    s = sr.spin("s", HALF)
    return sr.Model(0 * s.z).response(s.z).derivation


@pytest.fixture(scope="session")
def spin_one_zfs():
    """Spin 1 with zero-field splitting D Sz^2 (D > 0), A = B = Sx (Van Vleck, chi_perp)."""
    D = sp.Symbol("D", positive=True)
    s = sr.spin("s", 1)
    return sr.Model(D * s.z**2).response(s.x).derivation


@pytest.fixture(scope="session")
def two_level():
    """Two-level system H = Delta Sz, A = B = sigma_x = 2 Sx."""
    Delta = sp.Symbol("Delta", positive=True)
    q = sr.spin("q", HALF)
    return sr.Model(Delta * q.z).response(2 * q.x).derivation


@pytest.fixture(scope="session")
def two_level_ladder():
    """Two-level system H = Delta Sz, A = S-, B = S+: a single pole, not even in omega."""
    Delta = sp.Symbol("Delta", positive=True)
    q = sr.spin("q", HALF)
    return sr.Model(Delta * q.z).response(q.minus, q.plus).derivation


@pytest.fixture(scope="session")
def spin_one_field():
    """Spin 1 with D Sz^2 + h Sz, A = B = Sz: three levels D + h, 0, D - h."""
    D, h = sp.Symbol("D", positive=True), sp.Symbol("h", positive=True)
    s = sr.spin("s", 1)
    return sr.Model(D * s.z**2 + h * s.z).response(s.z).derivation
