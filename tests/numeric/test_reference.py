"""Tests of the numeric reference layer (symresp.numeric).

Reference matrices are built with the local Kronecker helpers in ``_kron`` (plain numpy),
never with symresp.algebra, so the oracle shares nothing with the symbolic path.
"""

from __future__ import annotations

import math
import re
import warnings

import numpy as np
import pytest
import scipy.linalg
from hypothesis import given, settings
from hypothesis import strategies as st

from symresp.errors import InputError, NotHermitianError
from symresp.numeric import (
    NumericResponse,
    chi_matsubara,
    chi_omega,
    chi_time,
    eigensystem,
    expectation,
    log_partition_function,
    partition_function,
    poles,
    solve,
    spectral_function,
    static_isolated,
    static_isothermal,
)
from symresp.numeric import _lehmann, _levels

from ._kron import SIGMA_X, SIGMA_Y, SIGMA_Z, embed, heisenberg_dimer, spin_matrices, total

# Tolerances (a shared tests/conftest.py will hold these later; same names there).
RTOL = 1e-10
ATOL = 1e-12
#: Fourth-order central difference with step FD_STEP: truncation ~ FD_STEP**4, rounding
#: ~ 1e-16 / FD_STEP; both far below these.
FD_STEP = 1e-3
FD_RTOL = 1e-7
FD_ATOL = 1e-9
#: Transverse spin susceptibility -<S^z>/h = beta S(S+1)/3 (1 + O((beta h)^2)) at small h.
LIMIT_FIELD = 1e-5
LIMIT_RTOL = 1e-8
#: scipy.linalg.expm (Pade, scaling and squaring) is accurate to ~1e-13 relative at these norms.
EXPM_RTOL = 1e-7
EXPM_ATOL = 1e-9
#: A Hermitian perturbation of size 1e-13 shifts every result by about that much.
PERTURBATION_RTOL = 1e-9
PERTURBATION_ATOL = 1e-10
#: (p_a - p_b)/(E_b - E_a) at a gap of 1e-7: the stable form keeps nearly full precision.
NEAR_DEGENERATE_RTOL = 1e-12

# database=None: no example database written into the source tree.
HYPOTHESIS = settings(max_examples=50, deadline=None, database=None)


def assert_close(actual, expected, *, rtol=RTOL, atol=ATOL, scale=1.0):
    """assert_allclose with the absolute part scaled to the size of the problem."""
    np.testing.assert_allclose(actual, expected, rtol=rtol, atol=atol * scale)


# ------------------------------------------------------------------------------------------
# Brute-force references, written independently of the module under test
# ------------------------------------------------------------------------------------------


def gibbs_state(h, beta):
    """rho = exp(-beta H) / Tr exp(-beta H) by matrix exponentiation."""
    shifted = h - np.min(np.linalg.eigvalsh(h)) * np.eye(h.shape[0])
    rho = scipy.linalg.expm(-beta * shifted)
    return rho / np.trace(rho)


def raw_chi(h, a, b, beta, z):
    """sum_{n,m} (p_n - p_m) A_nm B_mn / (E_m - E_n - z) over raw eigenvectors, no grouping."""
    e, v = np.linalg.eigh(h)
    p = np.exp(-beta * (e - e[0]))
    p /= p.sum()
    an, bn = v.conj().T @ a @ v, v.conj().T @ b @ v
    z = np.asarray(z, dtype=complex)
    out = np.zeros(z.shape, dtype=complex)
    for n in range(len(e)):
        for m in range(len(e)):
            out += (p[n] - p[m]) * an[n, m] * bn[m, n] / (e[m] - e[n] - z)
    return out


def raw_isolated(h, a, b, beta, gap_tol):
    """sum over |E_m - E_n| > gap_tol of (p_n - p_m) A_nm B_mn / (E_m - E_n)."""
    e, v = np.linalg.eigh(h)
    p = np.exp(-beta * (e - e[0]))
    p /= p.sum()
    an, bn = v.conj().T @ a @ v, v.conj().T @ b @ v
    total_ = 0j
    for n in range(len(e)):
        for m in range(len(e)):
            if abs(e[m] - e[n]) > gap_tol:
                total_ += (p[n] - p[m]) * an[n, m] * bn[m, n] / (e[m] - e[n])
    return total_


def expm_chi_time(h, a, b, beta, times):
    """i <[A(t), B]> with A(t) = e^{iHt} A e^{-iHt}, by scipy.linalg.expm."""
    rho = gibbs_state(h, beta)
    out = []
    for t in times:
        u = scipy.linalg.expm(-1j * h * t)
        a_t = u.conj().T @ a @ u
        out.append(1j * np.trace(rho @ (a_t @ b - b @ a_t)))
    return np.array(out)


def gibbs_expectation(h, x, beta):
    e, v = np.linalg.eigh(h)
    p = np.exp(-beta * (e - e[0]))
    p /= p.sum()
    return np.sum(p * np.einsum("ni,ij,jn->n", v.conj().T, x, v))


def finite_difference_isothermal(h, a, b, beta):
    """d<A>/df at f = 0 for the Gibbs state of H - f B (B Hermitian), fourth-order stencil.

    This is the physical definition of the isothermal susceptibility (common practice).
    """
    def mean_a(f):
        return gibbs_expectation(h - f * b, a, beta)

    s = FD_STEP
    return (8 * (mean_a(s) - mean_a(-s)) - (mean_a(2 * s) - mean_a(-2 * s))) / (12 * s)


def random_unitary(rng, d):
    z = rng.normal(size=(d, d)) + 1j * rng.normal(size=(d, d))
    q, r = np.linalg.qr(z)
    return q * (np.diag(r) / np.abs(np.diag(r)))


def random_matrix(rng, d):
    return (rng.normal(size=(d, d)) + 1j * rng.normal(size=(d, d))) / np.sqrt(d)


@st.composite
def random_models(draw):
    """A random Hermitian H (d = 2..6, possibly with degenerate levels), A, B and beta."""
    d = draw(st.integers(2, 6))
    seed = draw(st.integers(0, 2**32 - 1))
    degenerate = draw(st.booleans())
    beta = draw(st.floats(0.05, 4.0))
    rng = np.random.default_rng(seed)
    if degenerate:
        # Eigenvalues on a coarse grid, so several coincide; rotated by a random unitary.
        energies = 0.7 * rng.integers(-2, 3, size=d)
        v = random_unitary(rng, d)
        h = v @ np.diag(energies) @ v.conj().T
        h = 0.5 * (h + h.conj().T)
    else:
        x = random_matrix(rng, d)
        h = x + x.conj().T
    return h, random_matrix(rng, d), random_matrix(rng, d), beta


def commutator_mean(h, a, b, beta):
    rho = gibbs_state(h, beta)
    return np.trace(rho @ (a @ b - b @ a))


# ------------------------------------------------------------------------------------------
# Two-level system
# ------------------------------------------------------------------------------------------

# Source: common practice (two-level Lehmann sum). H = (Delta/2) sigma_z, A = B = sigma_x,
# |<up|sigma_x|down>| = 1, p_down - p_up = tanh(beta Delta/2):
#   chi(z) = tanh(beta Delta/2) [1/(Delta - z) + 1/(Delta + z)]
#          = 2 Delta tanh(beta Delta/2) / (Delta^2 - z^2),
#   chi(t) = 2 tanh(beta Delta/2) sin(Delta t),  chi_static = 2 tanh(beta Delta/2)/Delta,
#   Z = 2 cosh(beta Delta/2).


def two_level_chi(delta, beta, z):
    return 2 * delta * np.tanh(beta * delta / 2) / (delta**2 - z**2)


TWO_LEVEL_CASES = [(1.0, 2.0), (0.3, 0.5), (-1.7, 1.3), (2.5, 10.0)]


@pytest.mark.parametrize("delta, beta", TWO_LEVEL_CASES)
def test_two_level_chi_omega_matches_closed_form(delta, beta):
    h = delta / 2 * SIGMA_Z
    omega = np.linspace(-3, 3, 13)
    eta = 0.07
    expected = two_level_chi(delta, beta, omega + 1j * eta)
    assert_close(chi_omega(h, SIGMA_X, SIGMA_X, beta, omega, eta), expected)
    assert_close(solve(h, SIGMA_X, SIGMA_X, beta).frequency(omega, eta), expected)


@pytest.mark.parametrize("delta, beta", TWO_LEVEL_CASES)
def test_two_level_chi_time_matches_closed_form(delta, beta):
    h = delta / 2 * SIGMA_Z
    t = np.linspace(0, 6, 11)
    expected = 2 * np.tanh(beta * delta / 2) * np.sin(delta * t)
    assert_close(chi_time(h, SIGMA_X, SIGMA_X, beta, t), expected)
    assert_close(solve(h, SIGMA_X, SIGMA_X, beta).time(t), expected)


@pytest.mark.parametrize("delta, beta", TWO_LEVEL_CASES)
def test_two_level_static_poles_and_partition_function(delta, beta):
    h = delta / 2 * SIGMA_Z
    r = solve(h, SIGMA_X, SIGMA_X, beta)
    static = 2 * np.tanh(beta * delta / 2) / delta
    assert_close(r.isolated, static)
    assert_close(r.isothermal, static)  # W_aa = 0 and <sigma_x> = 0: no extra term
    omegas, weights = r.poles
    gap = abs(delta)
    assert_close(omegas, [-gap, gap])
    th = np.tanh(beta * gap / 2)
    assert_close(weights, [-th, th])
    assert_close(r.Z, 2 * np.cosh(beta * delta / 2))
    assert_close(r.log_Z, np.log(2 * np.cosh(beta * delta / 2)))
    assert_close(partition_function(h, beta), 2 * np.cosh(beta * delta / 2))


def test_two_level_ground_state_limit():
    # T = 0: tanh -> 1, so chi(z) = 2 Delta / (Delta^2 - z^2) and static = 2 / Delta.
    delta = 0.8
    h = delta / 2 * SIGMA_Z
    for beta in (1e6, np.inf):
        r = solve(h, SIGMA_X, SIGMA_X, beta)
        assert_close(r.isolated, 2 / delta)
        assert_close(r.isothermal, 2 / delta)
        assert_close(r.frequency(0.3, 0.05), 2 * delta / (delta**2 - (0.3 + 0.05j) ** 2))
        assert_close(r.populations, [1.0, 0.0])


# ------------------------------------------------------------------------------------------
# Curie law and the transverse susceptibility of a spin in a field
# ------------------------------------------------------------------------------------------

SPINS = [0.5, 1.0, 1.5, 2.0, 2.5]


@pytest.mark.parametrize("spin", SPINS)
@pytest.mark.parametrize("beta", [0.3, 2.0])
def test_free_spin_curie_law_is_isothermal_and_isolated_is_zero(spin, beta):
    # Source: Curie law, e.g. standard statistical mechanics texts; common practice.
    sx, sy, sz = spin_matrices(spin)
    h = np.zeros_like(sz)
    r = solve(h, sz, sz, beta)
    assert_close(r.isothermal, beta * spin * (spin + 1) / 3)
    assert r.isolated == 0  # one level, no pairs: exactly zero, not just small
    assert r.poles[0].size == 0
    assert_close(static_isothermal(h, sx, sx, beta), beta * spin * (spin + 1) / 3)
    assert static_isolated(h, sx, sx, beta) == 0
    # Matsubara n = 0 is the isothermal value; n != 0 vanishes (no poles).
    assert_close(chi_matsubara(h, sz, sz, beta, [0, 1, -2]), [r.isothermal, 0, 0])


@pytest.mark.parametrize("spin", SPINS)
def test_transverse_isolated_susceptibility_in_field(spin):
    # Source: common practice. For H = h S^z (h > 0), summation by parts over the S^x matrix
    # elements |<m+1|S^x|m>|^2 = (S(S+1) - m(m+1))/4 gives chi_xx = -<S^z>/h exactly, and
    # -<S^z>/h -> beta S(S+1)/3 as h -> 0 (the Curie value, now reached as an isolated chi).
    sx, _, sz = spin_matrices(spin)
    beta = 1.7
    for field in (0.3, 1.1):
        h = field * sz
        mean_sz = expectation(h, sz, beta).real
        r = solve(h, sx, sx, beta)
        assert_close(r.isolated, -mean_sz / field)
        assert_close(r.isothermal, r.isolated)  # S^x has no diagonal blocks here
    r = solve(LIMIT_FIELD * sz, sx, sx, beta)
    assert_close(r.isolated, beta * spin * (spin + 1) / 3, rtol=LIMIT_RTOL)


# ------------------------------------------------------------------------------------------
# Bleaney-Bowers dimer
# ------------------------------------------------------------------------------------------


@pytest.mark.parametrize("j", [1.0, -1.0, 0.35, -2.2])
@pytest.mark.parametrize("beta", [0.2, 1.0, 4.0])
def test_bleaney_bowers_dimer(j, beta):
    # Source: B. Bleaney and K. D. Bowers, Proc. R. Soc. A 214, 451 (1952):
    # chi = 2 beta / (3 + exp(beta J)) per dimer for H = J S1.S2, g mu_B = 1.
    h = heisenberg_dimer(j)
    m = total(2, (0.5, 0.5))
    r = solve(h, m, m, beta)
    assert_close(r.isothermal, 2 * beta / (3 + np.exp(beta * j)))
    # Total S^z is conserved, so nothing connects different levels: isolated = 0.
    assert_close(r.isolated, 0.0)
    assert r.poles[0].size == 0
    assert r.degeneracies.tolist() == ([1, 3] if j > 0 else [3, 1])


# ------------------------------------------------------------------------------------------
# Identities that follow from the definitions
# ------------------------------------------------------------------------------------------


@HYPOTHESIS
@given(random_models())
def test_sum_rules_from_the_definitions(model):
    # Common practice, derived from chi(t) = i theta(t) <[A(t), B]>:
    #   sum_k w_k = sum_{n,m} (p_n - p_m) A_nm B_mn = <AB> - <BA> = <[A, B]>,
    #   chi(0+) = i <[A, B]>,
    #   d chi/dt (0+) = sum_k w_k Omega_k = <[[A, H], B]>  (Heisenberg: dA/dt = i[H, A]).
    h, a, b, beta = model
    r = solve(h, a, b, beta)
    omegas, weights = r.poles
    scale = np.linalg.norm(a) * np.linalg.norm(b)
    comm = commutator_mean(h, a, b, beta)
    assert_close(np.sum(weights), comm, scale=scale)
    assert_close(r.time(0.0), 1j * comm, scale=scale)
    assert_close(chi_time(h, a, b, beta, 0.0), 1j * comm, scale=scale)
    ah = a @ h - h @ a
    double = np.trace(gibbs_state(h, beta) @ (ah @ b - b @ ah))
    assert_close(np.sum(weights * omegas), double, scale=scale * np.linalg.norm(h))


def test_sum_rule_sign_on_two_level_system():
    # Fixes the sign of sum_k w_k = <[A, B]> on a case checked by hand: H = (Delta/2) sigma_z,
    # A = sigma_x, B = sigma_y: [sigma_x, sigma_y] = 2i sigma_z, <sigma_z> = -tanh(beta Delta/2).
    beta, delta = 1.3, 0.9
    _, weights = poles(delta / 2 * SIGMA_Z, SIGMA_X, SIGMA_Y, beta)
    assert_close(np.sum(weights), -2j * np.tanh(beta * delta / 2))


@HYPOTHESIS
@given(random_models())
def test_isothermal_minus_isolated_is_nonnegative_for_hermitian_a_equal_b(model):
    # Common practice: for Hermitian A = B the difference is beta times a variance.
    h, a, _, beta = model
    a = a + a.conj().T
    r = solve(h, a, a, beta)
    scale = np.linalg.norm(a) ** 2
    assert abs(r.isothermal.imag) <= ATOL * scale
    assert abs(r.isolated.imag) <= ATOL * scale
    assert r.isothermal.real - r.isolated.real >= -ATOL * scale * beta


@HYPOTHESIS
@given(random_models())
def test_absorption_is_positive_for_a_equal_b_dagger(model):
    # Common practice: for A = B^dagger every weight is real and omega chi''(omega) >= 0.
    h, _, b, beta = model
    a = b.conj().T
    omegas, weights = poles(h, a, b, beta)
    scale = np.linalg.norm(b) ** 2
    assert np.all(np.abs(weights.imag) <= ATOL * scale)
    assert np.all(omegas * weights.real >= -ATOL * scale)
    grid = np.linspace(-4, 4, 17)
    spectral = spectral_function(h, a, b, beta, grid, 0.1)
    assert_close(spectral, chi_omega(h, a, b, beta, grid, 0.1).imag, scale=scale)
    # No positivity check on the broadened curve: the Lorentzian tail of a pole at +Omega
    # reaches omega < 0, so omega chi''(omega) >= 0 holds for the pole weights only.


# ------------------------------------------------------------------------------------------
# Against brute-force formulas (hypothesis)
# ------------------------------------------------------------------------------------------


@HYPOTHESIS
@given(random_models(), st.floats(0.05, 1.0))
def test_chi_at_complex_frequency_matches_raw_lehmann_sum(model, eta):
    h, a, b, beta = model
    omega = np.linspace(-5, 5, 9)
    expected = raw_chi(h, a, b, beta, omega + 1j * eta)
    scale = np.linalg.norm(a) * np.linalg.norm(b) / eta
    assert_close(chi_omega(h, a, b, beta, omega, eta), expected, scale=scale)
    r = solve(h, a, b, beta)
    assert_close(r.frequency(omega, eta), expected, scale=scale)
    # Off the real axis in the lower half plane too (the pole sum is analytic there).
    z = np.array([0.4 - 0.3j, -1.0 + 2.0j])
    assert_close(r.evaluate(z), raw_chi(h, a, b, beta, z), scale=scale)


@HYPOTHESIS
@given(random_models())
def test_chi_time_matches_matrix_exponential(model):
    h, a, b, beta = model
    times = np.array([0.0, 0.37, 1.9, 4.4])
    expected = expm_chi_time(h, a, b, beta, times)
    scale = np.linalg.norm(a) * np.linalg.norm(b)
    tol = {"rtol": EXPM_RTOL, "atol": EXPM_ATOL, "scale": scale}
    assert_close(chi_time(h, a, b, beta, times), expected, **tol)
    assert_close(solve(h, a, b, beta).time(times), expected, **tol)


@HYPOTHESIS
@given(random_models())
def test_static_isothermal_is_derivative_of_gibbs_expectation(model):
    # Physical definition (common practice): chi_iso = d<A>/df at fixed beta, H -> H - f B.
    h, a, b, beta = model
    b = b + b.conj().T  # H - f B must stay Hermitian for a Gibbs state
    expected = finite_difference_isothermal(h, a, b, beta)
    scale = np.linalg.norm(a) * np.linalg.norm(b)
    assert_close(static_isothermal(h, a, b, beta), expected, rtol=FD_RTOL, atol=FD_ATOL,
                 scale=scale * beta)


@HYPOTHESIS
@given(random_models())
def test_static_isolated_matches_raw_sum_and_zero_frequency_limit(model):
    h, a, b, beta = model
    es = eigensystem(h)
    gap_tol = es.degeneracy_tol
    scale = np.linalg.norm(a) * np.linalg.norm(b)
    r = solve(h, a, b, beta)
    assert_close(r.isolated, raw_isolated(h, a, b, beta, gap_tol), scale=scale)
    assert_close(static_isolated(h, a, b, beta), r.isolated)
    assert_close(r.evaluate(0.0), r.isolated, scale=scale)


@HYPOTHESIS
@given(random_models(), st.lists(st.integers(-5, 5), min_size=1, max_size=4))
def test_matsubara_values(model, indices):
    h, a, b, beta = model
    r = solve(h, a, b, beta)
    n = np.array(indices)
    nu = 2 * np.pi * n / beta
    values = chi_matsubara(h, a, b, beta, n)
    away_from_zero = 1j * np.where(n == 0, 1.0, nu)  # n = 0 is not a pole sum; see below
    expected = np.where(n == 0, r.isothermal, raw_chi(h, a, b, beta, away_from_zero))
    scale = np.linalg.norm(a) * np.linalg.norm(b) * max(1.0, beta)
    assert_close(values, expected, scale=scale)
    assert_close(r.matsubara(n), values, scale=scale)


@HYPOTHESIS
@given(random_models())
def test_thermodynamics_match_direct_traces(model):
    h, a, b, beta = model
    rho = gibbs_state(h, beta)
    scale = np.linalg.norm(a)
    assert_close(expectation(h, a, beta), np.trace(rho @ a), scale=scale)
    r = solve(h, a, b, beta)
    assert_close(r.expectation_A, np.trace(rho @ a), scale=scale)
    assert_close(r.expectation_B, np.trace(rho @ b), scale=np.linalg.norm(b))
    e = np.linalg.eigvalsh(h)
    assert_close(r.log_Z, np.log(np.sum(np.exp(-beta * e))), scale=1.0)
    assert_close(log_partition_function(h, beta), r.log_Z)
    assert_close(np.sum(r.degeneracies * r.populations), 1.0)


# ------------------------------------------------------------------------------------------
# Degeneracy robustness and low temperature
# ------------------------------------------------------------------------------------------


def degenerate_model(seed=7):
    """Two spin-1 with a uniaxial term: several degenerate levels, arbitrary A, B."""
    rng = np.random.default_rng(seed)
    sx, sy, sz = spin_matrices(1)
    dims = (3, 3)
    h = heisenberg_dimer(0.8, 1, 1) + 0.3 * (embed(sz @ sz, 0, dims) + embed(sz @ sz, 1, dims))
    return h, random_matrix(rng, 9), random_matrix(rng, 9)


def test_rotation_inside_degenerate_levels_changes_nothing():
    h, a, b = degenerate_model()
    beta = 1.4
    energies, vectors = np.linalg.eigh(h)
    es = _levels._build_eigensystem(energies, vectors, None)
    assert np.any(es.degeneracies > 1)
    # Rotate the eigenvectors of every level by its own random unitary.
    rng = np.random.default_rng(3)
    rotated = vectors.copy()
    for level, g in enumerate(es.degeneracies):
        cols = np.flatnonzero(es.labels == level)
        rotated[:, cols] = vectors[:, cols] @ random_unitary(rng, int(g))
    es_rot = _levels._build_eigensystem(energies, rotated, None)
    ref = _lehmann._lehmann(es, a, b, beta)
    rot = _lehmann._lehmann(es_rot, a, b, beta)
    scale = np.linalg.norm(a) * np.linalg.norm(b)
    assert_close(rot.isolated, ref.isolated, scale=scale)
    assert_close(rot.isothermal, ref.isothermal, scale=scale)
    assert_close(rot.pair_weights, ref.pair_weights, scale=scale)


def test_splitting_below_tolerance_does_not_leak_basis_choice():
    # A perturbation far below the degeneracy tolerance reshuffles eigh's basis inside each
    # degenerate level arbitrarily; the projector-based results must not notice.
    h, a, b = degenerate_model()
    beta = 0.9
    rng = np.random.default_rng(11)
    x = random_matrix(rng, 9)
    h_perturbed = h + 1e-13 * (x + x.conj().T)
    ref, pert = solve(h, a, b, beta), solve(h_perturbed, a, b, beta)
    scale = np.linalg.norm(a) * np.linalg.norm(b)
    assert pert.degeneracies.tolist() == ref.degeneracies.tolist()
    # The perturbation itself changes results at the 1e-13 level; that is the tolerance here.
    tol = {"rtol": PERTURBATION_RTOL, "atol": PERTURBATION_ATOL, "scale": scale}
    assert_close(pert.isothermal, ref.isothermal, **tol)
    assert_close(pert.isolated, ref.isolated, **tol)
    assert_close(pert.poles[0], ref.poles[0], rtol=PERTURBATION_RTOL, atol=PERTURBATION_ATOL)
    assert_close(pert.poles[1], ref.poles[1], **tol)


@pytest.mark.parametrize("beta", [1e6, np.inf])
def test_low_temperature_is_finite_without_floating_point_warnings(beta):
    h2 = 0.5 * SIGMA_Z
    sx, _, sz = spin_matrices(1.5)
    dimer_ferro = heisenberg_dimer(-1.0)  # triplet ground level, degenerate
    m = total(2, (0.5, 0.5))
    mx = total(0, (0.5, 0.5))
    with np.errstate(all="raise"), warnings.catch_warnings():
        warnings.simplefilter("error")
        two_level = solve(h2, SIGMA_X, SIGMA_X, beta)
        field = solve(0.2 * sz, sx, sx, beta)
        ferro_z = solve(dimer_ferro, m, m, beta)
        ferro_x = solve(dimer_ferro, mx, mx, beta)
        degenerate = solve(*degenerate_model(), beta)
        values = [
            two_level.isothermal, field.isolated, field.isothermal, ferro_x.isolated,
            degenerate.isolated, two_level.frequency(0.3, 0.01), field.time(2.0),
        ]
    assert all(np.isfinite(v) for v in values)
    assert_close(two_level.isothermal, 2.0)
    # Field along z, T = 0: ground state m = -3/2, chi_xx = -<S^z>/h = 1.5 / 0.2.
    assert_close(field.isolated, 1.5 / 0.2)
    # Ferromagnetic dimer, degenerate triplet ground level: Curie term beta * <M^2> = 2 beta/3.
    if np.isinf(beta):
        assert ferro_z.isothermal.real == np.inf and ferro_z.isothermal.imag == 0
    else:
        assert_close(ferro_z.isothermal, 2 * beta / 3)
    # log Z = -beta E_0 with E_0 = -1/2 (excited level negligible or absent).
    if np.isinf(beta):
        assert two_level.log_Z == np.inf and two_level.Z == np.inf
    else:
        assert_close(two_level.log_Z, beta * 0.5)


def test_matsubara_needs_finite_beta():
    with pytest.raises(InputError, match="beta"):
        chi_matsubara(SIGMA_Z, SIGMA_X, SIGMA_X, np.inf, [1])
    with pytest.raises(InputError, match="beta"):
        solve(SIGMA_Z, SIGMA_X, SIGMA_X, np.inf).matsubara(1)


def test_near_degenerate_levels_above_tolerance_stay_accurate():
    # Two levels split by 1e-7 (above the 1e-9 tolerance): (p_a - p_b)/(E_b - E_a) must tend
    # to beta p (derivative of the Boltzmann factor) without cancellation. Common practice.
    split, beta = 1e-7, 2.0
    h = split / 2 * SIGMA_Z
    expected = 2 * np.tanh(beta * split / 2) / split  # 2 tanh(x)/split with x tiny
    assert_close(static_isolated(h, SIGMA_X, SIGMA_X, beta), expected, rtol=NEAR_DEGENERATE_RTOL)


def test_results_are_immutable():
    r = solve(0.5 * SIGMA_Z, SIGMA_X, SIGMA_X, 1.0)
    assert isinstance(r, NumericResponse)
    with pytest.raises(AttributeError):
        r.isolated = 0  # type: ignore[misc]
    with pytest.raises(ValueError):
        r.poles[1][0] = 0
    with pytest.raises(ValueError):
        eigensystem(SIGMA_Z).energies[0] = 0


# ------------------------------------------------------------------------------------------
# Bad arguments: one table for every public function
# ------------------------------------------------------------------------------------------

#: Valid arguments, in signature order, for every public function of the (H, A, B, beta) family.
GOOD = {"H": 0.5 * SIGMA_Z, "A": SIGMA_X, "B": SIGMA_X, "beta": 1.0}
CALLS = {
    "solve": (solve, ()),
    "poles": (poles, ()),
    "static_isolated": (static_isolated, ()),
    "static_isothermal": (static_isothermal, ()),
    "chi_omega": (chi_omega, (("omega", 0.1), ("eta", 0.1))),
    "chi_time": (chi_time, (("t", 0.1),)),
    "chi_matsubara": (chi_matsubara, (("n", 1),)),
    "spectral_function": (spectral_function, (("omega", 0.1), ("eta", 0.1))),
}


def call_with(fname, arg, value):
    """Call a public function with valid arguments except ``arg = value``."""
    function, extra = CALLS[fname]
    positional = {**GOOD, **dict(extra)}
    keywords = {}
    if arg in positional:
        positional[arg] = value
    else:
        keywords[arg] = value
    return function(*positional.values(), **keywords)


BAD_MATRIX_ARGS = [
    ("H", np.zeros((2, 3))),
    ("H", np.array([[0, 1], [0, 0]])),  # not Hermitian
    ("H", np.array([[np.nan, 0], [0, 0]])),
    ("H", [["a", "b"], ["c", "d"]]),
    ("H", np.zeros((0, 0))),
    ("A", np.eye(3)),
    ("B", np.ones(2)),
    ("A", np.array([[np.inf, 0], [0, 0]])),
    ("beta", 0.0),
    ("beta", -1.0),
    ("beta", np.nan),
    ("beta", "1"),
    ("beta", True),
    ("beta", 1 + 0j),
    ("degeneracy_tol", -1e-9),
    ("degeneracy_tol", np.nan),
]

BAD_EXTRA_ARGS = [
    ("chi_omega", "eta", 0.0),
    ("chi_omega", "eta", -0.1),
    ("chi_omega", "eta", np.inf),
    ("chi_omega", "omega", [0.0, np.nan]),
    ("chi_omega", "omega", [1j]),
    ("spectral_function", "eta", 0.0),
    ("spectral_function", "omega", "x"),
    ("chi_time", "t", [np.inf]),
    ("chi_time", "t", None),
    ("chi_matsubara", "n", 0.5),
    ("chi_matsubara", "n", [1.0]),
    ("solve", "weight_tol", -1.0),
    ("poles", "weight_tol", "small"),
]


def _bad_cases():
    for fname in CALLS:
        for arg, value in BAD_MATRIX_ARGS:
            yield pytest.param(fname, arg, value, id=f"{fname}-{arg}-{value!r:.20}")
    for fname, arg, value in BAD_EXTRA_ARGS:
        yield pytest.param(fname, arg, value, id=f"{fname}-{arg}-{value!r:.20}")


@pytest.mark.parametrize("fname, arg, value", list(_bad_cases()))
def test_bad_arguments_raise_input_error_naming_the_argument(fname, arg, value):
    with pytest.raises(InputError) as info:
        call_with(fname, arg, value)
    assert_names_argument(info.value, arg)


def assert_names_argument(err, arg):
    """The message starts with the argument's name: ``arg=<value> ...`` or ``arg has ...``.

    A bare ``arg in message`` would accept any message containing the letter (``H`` of
    "Hermitian", ``t`` of almost anything).
    """
    assert re.match(rf"{re.escape(arg)}(=| has | must )", str(err)), str(err)


@pytest.mark.parametrize(
    "call, arg",
    [
        (lambda: eigensystem([[0, 1j], [1j, 0]]), "H"),
        (lambda: eigensystem(SIGMA_Z, degeneracy_tol=-1), "degeneracy_tol"),
        (lambda: eigensystem(SIGMA_Z).projector(2), "level"),
        (lambda: partition_function(SIGMA_Z, -2.0), "beta"),
        (lambda: log_partition_function(np.ones((2, 3)), 1.0), "H"),
        (lambda: expectation(SIGMA_Z, np.eye(3), 1.0), "X"),
        (lambda: expectation(SIGMA_Z, SIGMA_X, float("nan")), "beta"),
        (lambda: solve(SIGMA_Z, SIGMA_X, SIGMA_X, 1.0).frequency([0.0], 0.0), "eta"),
        (lambda: solve(SIGMA_Z, SIGMA_X, SIGMA_X, 1.0).time([np.nan]), "t"),
        (lambda: solve(SIGMA_Z, SIGMA_X, SIGMA_X, 1.0).spectral(0.0, -1.0), "eta"),
        (lambda: solve(SIGMA_Z, SIGMA_X, SIGMA_X, 1.0).matsubara(1.5), "n"),
        (lambda: solve(SIGMA_Z, SIGMA_X, SIGMA_X, 1.0).evaluate([np.inf]), "z"),
    ],
)
def test_bad_arguments_of_other_entry_points(call, arg):
    with pytest.raises(InputError) as info:
        call()
    assert_names_argument(info.value, arg)


def test_non_hermitian_h_raises_the_specific_error():
    with pytest.raises(NotHermitianError, match="H="):
        static_isothermal([[0, 1], [0, 0]], SIGMA_X, SIGMA_X, 1.0)


def test_negative_times_give_zero_by_causality():
    values = chi_time(0.5 * SIGMA_Z, SIGMA_X, SIGMA_X, 1.0, [-1.0, -0.1])
    assert np.all(values == 0)


def test_scalar_inputs_give_python_complex():
    r = solve(0.5 * SIGMA_Z, SIGMA_X, SIGMA_X, 1.0)
    assert isinstance(r.frequency(0.2, 0.1), complex)
    assert isinstance(chi_time(0.5 * SIGMA_Z, SIGMA_X, SIGMA_X, 1.0, 0.3), complex)
    assert r.frequency([0.2, 0.3], 0.1).shape == (2,)
    assert math.isfinite(r.Z)


@pytest.mark.parametrize("unit", [1.0, 1.380649e-23, 1e6])
def test_levels_and_hermiticity_do_not_depend_on_the_energy_unit(unit):
    # The same model in kelvin, in joules (k_B T) or in micro-units: the same levels, the same
    # degeneracies, and a non-Hermitian H is refused at every scale (relative tolerances).
    H = np.diag([0.0, 1.0, 1.0, 3.0]) * unit
    es = eigensystem(H)
    assert es.degeneracies.tolist() == [1, 2, 1]
    assert_close(es.level_energies / unit, [0.0, 1.0, 3.0])
    r = solve(H, np.eye(4), np.eye(4), 1.0 / unit)
    assert r.degeneracies.tolist() == [1, 2, 1]
    bad = H.astype(complex)
    bad[0, 3] = 1e-6 * unit
    with pytest.raises(NotHermitianError, match="is not Hermitian"):
        eigensystem(bad)
