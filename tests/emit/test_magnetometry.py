"""Zeeman term from g and tesla, molar magnetometry, corrections and the magnetisation from the
closed-form levels (symresp.emit._magnet, _magnetometry, _levelfunctions).

Outside references: CODATA 2018 values (and scipy.constants for the newer adjustment), the
Curie constant, the Brillouin function, and the numeric reference (exact diagonalisation with
the tests' own Kronecker products, tests/numeric/_kron.py).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.constants as C
import sympy as sp

import symresp as sr
from symresp import numeric
from symresp.emit import (EXACT, AVOGADRO, BOHR_MAGNETON, BOLTZMANN, PLANCK, Corrections,
                          VACUUM_PERMEABILITY, brillouin, effective_moment, g_tensor,
                          level_functions, molar_factor, moment_factor, numpy_functions,
                          orientation_quadrature, temperature_factor, zeeman_constant)
from symresp.errors import InputError
from symresp.models import System
from symresp.response import derive
from tests.conftest import RTOL_EXACT, RTOL_LOOSE, assert_close
from tests.numeric._kron import embed, spin_matrices

HALF = sp.Rational(1, 2)
#: Quoted 4-5 digit values of the trade.
RTOL_QUOTED = 1e-4
#: mu_B changed by about 1.4e-9 (relative) between CODATA 2018 and 2022 (scipy's values).
RTOL_CODATA = 5e-9
#: Relative step of the finite differences that check analytic Jacobians, and their tolerance.
FD_STEP = 1e-6
RTOL_FD = 1e-5


# ------------------------------------------------------------------------------ constants
def test_exact_constants_are_the_float_constants():
    # Source: CODATA 2018 (the quoted digits, written twice: exactly and as floats)
    assert float(EXACT["h"]) == PLANCK
    assert float(EXACT["k_B"]) == BOLTZMANN
    assert float(EXACT["N_A"]) == AVOGADRO
    assert float(EXACT["mu_B"]) == BOHR_MAGNETON
    assert float(EXACT["mu_0"]) == VACUUM_PERMEABILITY


def test_bohr_magneton_in_kelvin_and_gigahertz_per_tesla():
    # mu_B/k_B = 0.67171 K/T and mu_B/h = 13.996 GHz/T (Source: CODATA 2018)
    assert float(zeeman_constant("K")) == pytest.approx(0.67171, rel=RTOL_QUOTED)
    assert float(zeeman_constant("GHz")) == pytest.approx(13.996, rel=RTOL_QUOTED)
    # Source: CODATA via scipy.constants (2022 adjustment, differs by ~1e-9)
    assert float(zeeman_constant("K")) == pytest.approx(
        C.physical_constants["Bohr magneton in K/T"][0], rel=RTOL_CODATA)
    assert float(zeeman_constant("GHz")) == pytest.approx(
        C.physical_constants["Bohr magneton in Hz/T"][0] / 1e9, rel=RTOL_CODATA)
    assert float(zeeman_constant("cm^-1")) == pytest.approx(
        C.physical_constants["Bohr magneton in inverse meter per tesla"][0] / 100, rel=RTOL_CODATA)


def test_temperature_factor_converts_kelvin_to_the_energy_unit():
    # Source: CODATA via scipy.constants (kelvin-inverse meter relationship)
    assert temperature_factor("K", "cm^-1") == pytest.approx(
        C.physical_constants["kelvin-inverse meter relationship"][0] / 100, rel=RTOL_CODATA)
    assert temperature_factor("mK", "K") == pytest.approx(1e-3, rel=RTOL_EXACT)
    with pytest.raises(InputError):
        temperature_factor("furlong", "K")


def test_curie_constant_of_a_spin_half_with_g_2():
    # chi*T of S = 1/2, g = 2 is 0.3751 cm^3 K/mol: N_A mu_B^2/(3 k_B) = 0.12505 cm^3 K/mol
    # times g^2 S(S+1) (Source: CODATA 2018 constants; common practice)
    assert molar_factor("K") / 3 == pytest.approx(0.12505, rel=RTOL_QUOTED)
    s = sr.spin("s", HALF)
    f = numpy_functions(sr.Model(0 * s.z).response(sr.magnetic_moment({s: 2})).derivation)
    T = np.array([1.0, 30.0, 300.0])
    chiT = molar_factor("K") * f.chi_isothermal(T) * T
    assert np.all(np.round(chiT, 4) == 0.3751)
    # the same with energies in cm^-1 and temperatures in K
    Tcm = T * temperature_factor("K", "cm^-1")
    np.testing.assert_allclose(molar_factor("cm^-1") * f.chi_isothermal(Tcm) * T, chiT,
                               rtol=RTOL_EXACT)
    # SI: 4 pi 1e-6 times the cgs value (common practice)
    assert molar_factor("K", "SI") == pytest.approx(4e-6 * math.pi * molar_factor("K"), rel=1e-9)


def test_effective_moment_and_moment_factor():
    # mu_eff = g sqrt(S(S+1)) = sqrt(3) for S = 1/2, g = 2; mu_eff ~ 2.828 sqrt(chi T)
    # (common practice)
    curie = molar_factor("K") * 2**2 * 0.75 / 3            # C of S = 1/2, g = 2
    assert effective_moment(curie) == pytest.approx(math.sqrt(3), rel=RTOL_EXACT)
    assert effective_moment(1.0) == pytest.approx(2.828, rel=RTOL_QUOTED)
    # k_M chi_mol B is the moment in mu_B; both systems give the same moment
    assert moment_factor("cgs") * molar_factor("K") == pytest.approx(
        moment_factor("SI") * molar_factor("K", "SI"), rel=1e-12)


# ------------------------------------------------------------------------------ Zeeman term
def test_zeeman_term_levels_are_g_mu_B_B_m():
    s = sr.spin("s", sp.Integer(1))
    B = sp.Symbol("B", nonnegative=True)
    g = sp.Symbol("g", positive=True)
    levels = sr.Model(sr.zeeman({s: g}, B, energy_unit="K")).levels()
    c = sp.Rational(zeeman_constant("K").numerator, zeeman_constant("K").denominator)
    assert sorted((lv.energy for lv in levels), key=lambda e: float(e.subs({B: 1, g: 2}))) == \
        [-c * B * g, sp.Integer(0), c * B * g]


def test_g_tensor_forms_and_errors():
    gp, gq = sp.symbols("gp gq", positive=True)
    assert g_tensor({"parallel": gp, "perpendicular": gq}).matrix == (
        (gq, 0, 0), (0, gq, 0), (0, 0, gp))
    assert g_tensor(2.0023).matrix[0][0] == sp.Rational(20023, 10000)
    assert g_tensor([[2, 0, 0], [0, 2, 0], [0, 0, gp]]).kind == "tensor"
    for bad in ({"par": 2}, [[1, 2], [3, 4]], "g", sp.I, float("nan")):
        with pytest.raises(InputError):
            g_tensor(bad)
    s = sr.spin("s", HALF)
    with pytest.raises(InputError):
        sr.zeeman({s: 2}, 1, direction=[0, 0, 0])
    with pytest.raises(InputError):
        sr.zeeman({s: 2}, 1, energy_unit="furlong")
    with pytest.raises(InputError):
        sr.zeeman({sr.fermion("c"): 2}, 1)


def test_zeeman_of_a_tensor_matches_the_numeric_construction():
    # H_Z = mu_B B n.g.S with rows of g the field components (docs/conventions.md section 8)
    s = sr.spin("s", sp.Integer(1))
    g = [[2, sp.Rational(1, 10), 0], [0, sp.Rational(19, 10), 0], [sp.Rational(1, 5), 0, 2]]
    H = sr.zeeman({s: g}, sp.Rational(3, 2), direction=[1, 2, 2], energy_unit="K")
    ours = sr.Model(H).array()
    n = np.array([1, 2, 2]) / 3.0
    gm = np.array([[float(x) for x in row] for row in g])
    S = spin_matrices(1)
    ref = float(zeeman_constant("K")) * 1.5 * sum((n @ gm)[b] * S[b] for b in range(3))
    assert_close(ours, ref, what="tensor Zeeman term")


# ------------------------------------------------------------------------------ corrections
def test_brillouin_function_against_tanh_and_the_free_ion():
    x = np.array([1e-5, 1e-3, 0.3, 2.0, 40.0])
    v, d = brillouin(0.5, x)
    # B_1/2(x) = tanh(x) (common practice)
    np.testing.assert_allclose(v, np.tanh(x), rtol=RTOL_LOOSE)
    np.testing.assert_allclose(d, 1 / np.cosh(x) ** 2, rtol=RTOL_LOOSE)
    # a free S = 5/2 ion: g S B_S(g mu_B S B/kT) = <-g S_z> by exact diagonalisation
    S, g, T, B = 2.5, 2.0, 3.0, 1.7
    c = float(zeeman_constant("K"))
    Sz = spin_matrices(S)[2]
    H = g * c * B * Sz
    ref = numeric.expectation(H, -g * Sz, 1.0 / T).real
    v, _ = brillouin(S, g * c * B * S / T)
    assert g * S * v == pytest.approx(ref, rel=RTOL_EXACT)


def _fd(fun, x, h):
    return (fun(x + h) - fun(x - h)) / (2 * h)


def test_correction_partials_match_finite_differences():
    base = dict(tip=2e-4, diamagnetic=-1e-4, impurity_fraction=0.03, impurity_spin=1.5,
                impurity_g=2.05, mean_field=-0.7, mean_field_g=2.1, energy_unit="cm^-1")
    chi0 = np.array([0.02, 0.5, 0.1])
    T = np.array([3.0, 20.0, 150.0])
    chi, part = Corrections(**base).susceptibility(chi0, T)
    for key in ("tip", "diamagnetic", "impurity_fraction", "impurity_g", "mean_field",
                "mean_field_g"):
        h = FD_STEP * max(1.0, abs(base[key]))

        def f(v, key=key):
            return Corrections(**{**base, key: v}).susceptibility(chi0, T)[0]
        np.testing.assert_allclose(part[key], _fd(f, base[key], h), rtol=RTOL_FD, atol=1e-12)
    np.testing.assert_allclose(
        part["chi0"], _fd(lambda v: Corrections(**base).susceptibility(v, T)[0], chi0,
                          FD_STEP * chi0), rtol=RTOL_FD)
    # the mean-field convention: chi = chi0 / (1 + zJ chi0 / (F g^2)) (docs/conventions.md)
    only_mf = Corrections(mean_field=-0.7, mean_field_g=2.1, energy_unit="cm^-1")
    F = molar_factor("cm^-1")
    np.testing.assert_allclose(only_mf.susceptibility(chi0, T)[0],
                               chi0 / (1 + (-0.7) * chi0 / (F * 2.1**2)), rtol=RTOL_EXACT)
    mbase = {k: v for k, v in base.items() if k != "mean_field"}
    M, mpart = Corrections(**mbase).magnetisation(np.array([0.3, 1.2]), np.array([0.5, 5.0]),
                                                  np.array([2.0, 10.0]))
    for key in ("tip", "impurity_fraction", "impurity_g"):
        h = FD_STEP * max(1.0, abs(base[key]))

        def fm(v, key=key):
            return Corrections(**{**mbase, key: v}).magnetisation(
                np.array([0.3, 1.2]), np.array([0.5, 5.0]), np.array([2.0, 10.0]))[0]
        np.testing.assert_allclose(mpart[key], _fd(fm, base[key], h), rtol=RTOL_FD, atol=1e-12)
    with pytest.raises(InputError):
        Corrections(mean_field=1.0).magnetisation(0.1, 1.0, 1.0)


# ------------------------------------------------------------------------------ quadrature
@pytest.mark.parametrize("symmetry", ["axial", "general"])
def test_orientation_quadrature_integrates_low_harmonics_exactly(symmetry):
    q = orientation_quadrature(symmetry, 4)
    x, y, z = q.directions.T
    w = q.weights
    # averages over the sphere: <z^2> = 1/3, <z^4> = 1/5, <x^2 y^2> = 1/15 (common practice)
    assert (w * z**2).sum() == pytest.approx(1 / 3, rel=RTOL_EXACT)
    assert (w * z**4).sum() == pytest.approx(1 / 5, rel=RTOL_EXACT)
    if symmetry == "general":
        assert (w * x**2 * y**2).sum() == pytest.approx(1 / 15, rel=RTOL_EXACT)
        assert (w * x**2).sum() == pytest.approx(1 / 3, rel=RTOL_EXACT)
    np.testing.assert_allclose(np.linalg.norm(q.directions, axis=1), 1.0, rtol=RTOL_EXACT)
    with pytest.raises(InputError):
        orientation_quadrature("cubic")


# ------------------------------------------------------------------------------ M from levels
def _anisotropic_ion():
    """Spin 1 with D, E and an axial g in a field with two symbolic components (semi-closed)."""
    D, E = sp.Symbol("D", real=True), sp.Symbol("Erh", real=True)
    gpar, gperp = sp.Symbol("gpar", positive=True), sp.Symbol("gperp", positive=True)
    Fx, Fz = sp.Symbol("Fx", real=True), sp.Symbol("Fz", real=True)
    s = sr.spin("s", sp.Integer(1))
    g = {s: {"parallel": gpar, "perpendicular": gperp}}
    H = (D * s.z * s.z + E * (s.x * s.x - s.y * s.y) + sr.zeeman(g, Fx, direction="x")
         + sr.zeeman(g, Fz, direction="z"))
    return H, (D, E, gpar, gperp), (Fx, Fz)


def _reference_M(values, B, n, T):
    """<mu_n>/mu_B = -<n.g.S> by exact diagonalisation (kelvin, the tests' own matrices)."""
    D, E, gpar, gperp = values
    Sx, Sy, Sz = spin_matrices(1)
    c = float(zeeman_constant("K"))
    gn = (gperp * n[0], gperp * n[1], gpar * n[2])
    V = gn[0] * Sx + gn[1] * Sy + gn[2] * Sz
    H = D * Sz @ Sz + E * (Sx @ Sx - Sy @ Sy) + c * B * V
    return numeric.expectation(H, -V, 1.0 / T).real


def test_magnetisation_from_levels_matches_exact_diagonalisation():
    H, params, fields = _anisotropic_ion()
    zero = sr.Operator((), frozenset())
    der = derive(System.build(H), zero, zero)
    assert any(lv.implicit for lv in der.levels)          # the semi-closed path is tested
    lf = level_functions(der, params, fields, float(zeeman_constant("K")))
    values = (3.1, 0.4, 2.2, 1.95)
    p = dict(zip([s.name for s in params], values))
    for B, theta, T in ((0.7, 0.3, 2.0), (4.0, 1.1, 5.0), (9.0, 1.5, 1.5)):
        n = (math.sin(theta), 0.0, math.cos(theta))
        M, dM, dMdB = lf.magnetisation(T, p, B, n, [(1, 0, 0), (0, 0, 1)])
        assert float(M) == pytest.approx(_reference_M(values, B, n, T), rel=RTOL_LOOSE)
        h = 1e-5 * B
        fd = (_reference_M(values, B + h, n, T) - _reference_M(values, B - h, n, T)) / (2 * h)
        assert float(dMdB) == pytest.approx(fd, rel=1e-6)
        for j, name in enumerate(p):
            hj = 1e-6 * max(1.0, abs(p[name]))
            up = list(values)
            dn = list(values)
            up[j] += hj
            dn[j] -= hj
            fdj = (_reference_M(up, B, n, T) - _reference_M(dn, B, n, T)) / (2 * hj)
            assert float(dM[j]) == pytest.approx(fdj, rel=1e-5, abs=1e-9), name


def test_dM_dB_equals_the_emitted_susceptibility_in_the_field():
    # two routes to the differential susceptibility: levels (Hellmann-Feynman) and the emitted
    # isothermal chi of the moment with the field in H. The field enters in energy units,
    # F = (mu_B/E_u) B, so dM/dF is chi itself.
    J, g = sp.Symbol("J", real=True), sp.Symbol("g", positive=True)
    F = sp.Symbol("F", nonnegative=True)
    a, b = sr.spin("a", HALF), sr.spin("b", sp.Integer(1))
    gs = {a: g, b: g}
    mu = sr.magnetic_moment(gs)
    r = sr.Model(J * (a.vec @ b.vec) - F * mu).response(mu)
    f = r.numpy()
    lf = level_functions(r.derivation, [J, g], [F], 1.0)
    T = np.array([1.5, 7.0, 60.0])
    M, _, dMdF = lf.magnetisation(T, {"J": 4.3, "g": 2.04}, 2.5, (0, 0, 1), [(0, 0, 1)])
    chi = f.chi_isothermal(T, F=2.5, J=4.3, g=2.04)
    np.testing.assert_allclose(dMdF, chi, rtol=RTOL_LOOSE)
    # and M itself against exact diagonalisation (the tests' own matrices)
    ops = [spin_matrices(0.5), spin_matrices(1)]
    dims = (2, 3)
    Sa = [embed(o, 0, dims) for o in ops[0]]
    Sb = [embed(o, 1, dims) for o in ops[1]]
    muz = -2.04 * (Sa[2] + Sb[2])
    H = 4.3 * sum(x @ y for x, y in zip(Sa, Sb)) - 2.5 * muz
    ref = [numeric.expectation(H, muz, 1 / t).real for t in T]
    np.testing.assert_allclose(M, ref, rtol=RTOL_LOOSE)
