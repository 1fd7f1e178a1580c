"""Resonance (ESR) fields at a fixed frequency (symresp.emit._resonance).

Outside references: h nu = g mu_B B (common practice), the spin-1 levels D, D +- g mu_B B in a
field along the axis (from memory, any ESR text), and the numeric reference (exact
diagonalisation with the tests' own matrices) for positions and intensities.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants as C
import sympy as sp

import symresp as sr
from symresp import numeric
from symresp.emit import resonance_fields, zeeman_constant
from symresp.errors import InputError
from tests.conftest import RTOL_LOOSE
from tests.numeric._kron import spin_matrices

HALF = sp.Rational(1, 2)
#: Quoted 4-digit value of the trade.
RTOL_QUOTED = 2e-4
#: A resonance found by root-finding meets the condition to this relative precision.
RTOL_ROOT = 1e-9


def test_free_electron_g_at_x_band():
    # g = 2.0023 at 9.4 GHz resonates at 0.3354 T (h nu = g mu_B B; common practice)
    s = sr.spin("s", HALF)
    (line,) = resonance_fields(0 * s.z, {s: 2.0023}, frequency=9.4, temperature=10.0)
    assert round(line.field, 4) == 0.3354
    assert line.method == "exact"
    # Source: CODATA via scipy.constants
    assert line.field == pytest.approx(
        C.h * 9.4e9 / (2.0023 * C.physical_constants["Bohr magneton"][0]), rel=1e-8)
    # exact: h nu / (g mu_B) as a rational of the CODATA 2018 digits
    assert line.exact.is_Rational
    # W = |<-|g S_x|+>|^2 = g^2/4; intensity = (p_- - p_+) W
    assert line.weight == pytest.approx(2.0023**2 / 4, rel=1e-12)
    x = math.exp(-2 * 0.5 * float(zeeman_constant("K")) * 2.0023 * line.field / 10.0)
    assert line.population == pytest.approx((1 - x) / (1 + x), rel=1e-9)


def _spin_one_reference(D, g, B, n, v, T):
    """Levels and |<a|V|b>|^2 of D Sz^2 + g mu_B B n.S (kelvin) by exact diagonalisation."""
    Sx, Sy, Sz = spin_matrices(1)
    c = float(zeeman_constant("K"))
    H = D * Sz @ Sz + c * g * B * (n[0] * Sx + n[1] * Sy + n[2] * Sz)
    V = -g * (v[0] * Sx + v[1] * Sy + v[2] * Sz)
    E, U = np.linalg.eigh(H)
    Vm = U.conj().T @ V @ U
    return E, np.abs(Vm) ** 2


def test_spin_one_along_the_axis_is_exact_and_matches_the_reference():
    # D Sz^2 + g mu_B B Sz: levels 0, D +- g mu_B B; allowed Delta m = +-1 lines at
    # B = (h nu -+ D)/(g mu_B) (from memory; any ESR text)
    t = sr.spin("t", sp.Integer(1))
    D = sp.Rational(1, 10)                 # kelvin
    lines = resonance_fields(D * t.z**2, {t: 2}, frequency=9.4, temperature=4.0)
    hnu = C.h * 9.4e9 / C.k                # K (Source: CODATA via scipy.constants)
    muB = float(zeeman_constant("K"))
    expected = sorted([(hnu - 0.1) / (2 * muB), (hnu + 0.1) / (2 * muB)])
    assert [ln.field for ln in lines] == pytest.approx(expected, rel=1e-8)
    assert all(ln.method == "exact" for ln in lines)
    for ln in lines:
        E, W = _spin_one_reference(0.1, 2.0, ln.field, (0, 0, 1), (1, 0, 0), 4.0)
        gaps = [E[j] - E[i] for i in range(3) for j in range(i + 1, 3) if W[i, j] > 1e-12]
        assert min(abs(gap - hnu) for gap in gaps) <= RTOL_ROOT * hnu * 10
        p = np.exp(-(E - E.min()) / 4.0)
        p /= p.sum()
        pairs = [(i, j) for i in range(3) for j in range(i + 1, 3)
                 if abs(E[j] - E[i] - hnu) < 1e-6 * hnu]
        (i, j), = pairs
        assert ln.weight == pytest.approx(W[i, j], rel=RTOL_LOOSE)
        assert ln.intensity == pytest.approx((p[i] - p[j]) * W[i, j], rel=RTOL_LOOSE)


def test_tilted_field_uses_root_finding_and_matches_the_reference():
    # field at 45 degrees: the spacings are roots of a cubic (numeric route); the half-field
    # line (Delta m = 2) appears with a small weight
    t = sr.spin("t", sp.Integer(1))
    D = sp.Rational(1, 10)
    n = (1 / math.sqrt(2), 0.0, 1 / math.sqrt(2))
    lines = resonance_fields(D * t.z**2, {t: 2}, frequency=9.4, temperature=4.0,
                             direction=[1, 0, 1])
    assert len(lines) == 3 and all(ln.method == "numeric" for ln in lines)
    hnu = float(9.4e9 * C.h / C.k)
    for ln in lines:
        E, W = _spin_one_reference(0.1, 2.0, ln.field, n, (0, 1, 0), 4.0)
        p = np.exp(-(E - E.min()) / 4.0)
        p /= p.sum()
        (i, j), = [(i, j) for i in range(3) for j in range(i + 1, 3)
                   if abs(E[j] - E[i] - hnu) < 1e-7 * hnu]
        assert ln.weight == pytest.approx(W[i, j], rel=1e-7)
        assert ln.intensity == pytest.approx((p[i] - p[j]) * W[i, j], rel=1e-7)
    assert min(ln.weight for ln in lines) < 0.2 * max(ln.weight for ln in lines)


def test_resonance_rejects_symbolic_parameters_and_bad_numbers():
    s = sr.spin("s", HALF)
    J = sp.Symbol("J", real=True)
    with pytest.raises(InputError):
        resonance_fields(J * s.z, {s: 2})
    with pytest.raises(InputError):
        resonance_fields(0 * s.z, {s: 2}, frequency=-1.0)
    with pytest.raises(InputError):
        resonance_fields(0 * s.z, {s: 2}, temperature=float("inf"))
    with pytest.raises(InputError):
        resonance_fields(0 * s.z, {"s": 2})
