"""Evaluators of semi-closed derivations (every block diagonalised at the points): single ions
S = 7/2 and S = 10 with axial, rhombic and Zeeman terms, the field along z, along x or in any
direction, against exact diagonalisation of spin matrices built here (numpy, independently of
the symbolic path) and against the Curie law at high temperature."""

from __future__ import annotations

import functools

import numpy as np
import pytest
import sympy as sp
from hypothesis import example, given, settings
from hypothesis import strategies as st

import symresp as sr
from symresp import numeric
from symresp._tolerances import DEGENERACY_RTOL

from ..conftest import ATOL_LOOSE, RTOL_LOOSE, assert_close

D, E, h = sp.Symbol("D", real=True), sp.Symbol("E", real=True), sp.Symbol("h", real=True)
hx, hy, hz = (sp.Symbol(n, real=True) for n in ("hx", "hy", "hz"))

#: Sums over up to 21 x 21 pairs of states in double precision: exact diagonalisation and the
#: evaluator each carry rounding of about 1e-15 * ||H|| per level, and the high-temperature
#: sums cancel between close levels (measured up to 8e-9 relative at T = 20 on S = 10).
RTOL, ATOL = RTOL_LOOSE, ATOL_LOOSE


def _spin_matrices(S2: int):
    """(Sx, Sy, Sz) of spin S = S2/2 in the basis m = S, ..., -S (common practice:
    <m+1|S+|m> = sqrt(S(S+1) - m(m+1)))."""
    S = S2 / 2
    m = S - np.arange(S2 + 1)
    up = np.zeros((S2 + 1, S2 + 1))
    for k in range(1, S2 + 1):
        up[k - 1, k] = np.sqrt(S * (S + 1) - m[k] * (m[k] + 1))
    return (up + up.T) / 2, (up - up.T) / 2j, np.diag(m)


@functools.lru_cache(maxsize=None)
def _ion(S2: int, field: str):
    """Single ion D Sz^2 + E (Sx^2 - Sy^2) + h S_field, response of Sz; its evaluator."""
    s = sr.spin("s", sp.Rational(S2, 2))
    H = D * s.z**2 + E * (s.x**2 - s.y**2) + h * {"z": s.z, "x": s.x}[field]
    r = sr.Model(H).response(s.z)
    return r, r.numpy()


#: Levels and pole frequencies the reference merges for chi(omega), chi''(omega), chi(t):
#: relative to max|E|. Merged frequencies sit at their mean, which moves chi(t) by about
#: (spread x t) where distinct frequencies lie within the grouping tolerance (seen: 1e-8 of
#: chi(t) at t = 0.9 with two pair frequencies 1e-8 apart); the evaluator merges none.
DYNAMIC_RTOL = 1e-14


def _solve(H, A, B, T, rtol=DEGENERACY_RTOL):
    """The numeric reference with the evaluators' rule for equal levels (relative to max|E|)."""
    tol = rtol * np.abs(np.linalg.eigvalsh(H)).max()
    return numeric.solve(H, A, B, 1.0 / T, degeneracy_tol=tol)


def _ion_reference(S2: int, field: str, Dv, Ev, hv, T, rtol=DEGENERACY_RTOL):
    sx, sy, sz = _spin_matrices(S2)
    H = Dv * sz @ sz + Ev * (sx @ sx - sy @ sy) + hv * {"z": sz, "x": sx}[field]
    return _solve(H, sz, sz, T, rtol)


def _compare_ion(S2, field, Dv, Ev, hv, T):
    _, f = _ion(S2, field)
    ref = _ion_reference(S2, field, Dv, Ev, hv, T)
    at = dict(D=Dv, E=Ev, h=hv)
    scale = max(1.0, abs(ref.isothermal))
    where = f"S = {S2}/2, field along {field}, D={Dv}, E={Ev}, h={hv}, T={T}"
    assert_close(f.chi_isothermal(T, **at) / scale, ref.isothermal / scale, RTOL, ATOL,
                 what=f"isothermal at {where}")
    assert_close(f.chi_isolated(T, **at) / scale, ref.isolated / scale, RTOL, ATOL,
                 what=f"isolated at {where}")
    ref = _ion_reference(S2, field, Dv, Ev, hv, T, DYNAMIC_RTOL)
    omega = np.array([-0.7, 0.4, 2.5])
    assert_close(f.chi_omega(omega, T, **at, eta=0.3), ref.frequency(omega, 0.3), RTOL, ATOL,
                 what=f"chi(omega) at {where}")
    assert_close(f.chi_spectral(omega, T, **at, eta=0.3), ref.spectral(omega, 0.3), RTOL, ATOL,
                 what=f"chi''(omega) at {where}")
    times = np.array([0.0, 0.9, 3.1])
    assert_close(f.chi_time(times, T, **at), ref.time(times), RTOL, ATOL, what=f"chi(t) at {where}")


# ---------------------------------------------------------------- S = 10
@settings(max_examples=4)
@given(Dv=st.floats(-1.0, 1.0), Ev=st.floats(0.0, 0.3), hv=st.floats(-1.0, 1.0),
       T=st.sampled_from([0.05, 0.7, 3.0]))
# Ground doublet split by 1e-6: the reference's default grouping of levels merged it.
@example(Dv=2.6547885525205735e-10, Ev=0.25, hv=0.0, T=0.05)
def test_spin_ten_field_along_z_matches_exact_diagonalisation(Dv, Ev, hv, T):
    _compare_ion(20, "z", Dv, Ev, hv, T)


@settings(max_examples=4)
@given(Dv=st.floats(-1.0, 1.0), Ev=st.floats(0.0, 0.3), hv=st.floats(-1.0, 1.0),
       T=st.sampled_from([0.05, 0.7, 3.0]))
def test_spin_ten_field_along_x_matches_exact_diagonalisation(Dv, Ev, hv, T):
    _compare_ion(20, "x", Dv, Ev, hv, T)


@pytest.mark.parametrize("field", ["z", "x"])
def test_spin_ten_at_degenerate_points_matches_exact_diagonalisation(field):
    # Zero field (Kramers-like pairs m, -m), no rhombic term, both: levels cross exactly.
    for Dv, Ev, hv in [(0.8, 0.0, 0.0), (-0.5, 0.2, 0.0), (0.3, 0.0, 0.6), (0.0, 0.0, 0.0)]:
        _compare_ion(20, field, Dv, Ev, hv, 1.3)


def test_spin_ten_levels_are_those_of_exact_diagonalisation():
    r, f = _ion(20, "x")
    assert f.DEGENERACIES == tuple(lv.degeneracy for lv in r.levels)
    sx, sy, sz = _spin_matrices(20)
    got = np.sort(f.energies(0.7, 0.15, -0.4))
    want = np.linalg.eigvalsh(0.7 * sz @ sz + 0.15 * (sx @ sx - sy @ sy) - 0.4 * sx)
    assert_close(got, want, RTOL, ATOL, what="levels")
    # The levels in ENERGIES order: the k-th root of each polynomial, ascending.
    E = f.energies(np.array([0.7, -0.3]), 0.15, -0.4)
    assert E.shape == (2, 21)
    assert_close(E[0], f.energies(0.7, 0.15, -0.4), what="energies at two points")
    assert all(text.startswith("root") for text in f.ENERGIES)


def test_spin_ten_follows_the_curie_law_at_high_temperature():
    # chi_zz T -> S(S + 1)/3 for T >> |D|, |E|, |h| (Curie law, from memory); the first
    # correction is of relative order S^2 D/T (about 1e-4 at D/T = 4e-6 for S = 10).
    _, f = _ion(20, "x")
    T = 1.0e8
    assert_close(f.chi_isothermal(T, D=0.4, E=0.1, h=0.3) * T, 110.0 / 3.0, rtol=1e-6,
                 what="Curie constant")


def test_spin_ten_evaluator_is_vectorised_over_parameter_points():
    _, f = _ion(20, "z")
    rng = np.random.default_rng(5)
    Dv, Ev, hv = rng.uniform(-1, 1, 5), rng.uniform(0, 0.3, 5), rng.uniform(-1, 1, 5)
    T = np.array([0.4, 1.0, 2.0, 5.0, 9.0])
    got = f.chi_isothermal(T[:, None], Dv, Ev, hv)
    assert np.shape(got) == (5, 5)
    want = [[_ion_reference(20, "z", a, b, c, t).isothermal for a, b, c in zip(Dv, Ev, hv)]
            for t in T]
    assert_close(got, want, RTOL, ATOL, what="isothermal on a T x parameter grid")
    assert isinstance(f.chi_isothermal(1.0, 0.5, 0.1, 0.2), float)


def test_spin_ten_jacobian_agrees_with_differences_of_the_reference():
    _, f = _ion(20, "x")
    p, T, step = np.array([0.6, 0.12, -0.35]), 0.8, 1e-5
    J = f.jacobian_static(T, *p)
    assert J.shape == (3,)
    for i in range(3):
        up, dn = p.copy(), p.copy()
        up[i] += step
        dn[i] -= step
        fd = (_ion_reference(20, "x", *up, T).isothermal
              - _ion_reference(20, "x", *dn, T).isothermal) / (2 * step)
        assert_close(J[i], fd, rtol=1e-6, atol=1e-8, what=f"d chi / d {f.PARAMETERS[i]}")


def test_spin_ten_evaluator_source_does_not_grow_with_the_pairs():
    # 21 levels, 210 pairs: the text holds the block matrices and the level polynomials
    # (printed once), not one line per pair.
    r, _ = _ion(20, "x")
    text = r.evaluator_source()
    assert text.count("\n") < 2000
    assert text.count("P0(lambda) =") == 1
    assert "import sympy" not in text


# ---------------------------------------------------------------- S = 7/2, any direction
@functools.lru_cache(maxsize=None)
def _tilted(which: str):
    s = sr.spin("s", sp.Rational(7, 2))
    H = D * s.z**2 + E * (s.x**2 - s.y**2) + hx * s.x + hz * s.z
    if which == "xy":
        H = H + hy * s.y
        r = sr.Model(H).response(s.x, s.y)
    else:
        r = sr.Model(H).response(s.z + s.x)
    return r, r.numpy()


@settings(max_examples=6)
@given(Dv=st.floats(-2.0, 2.0), Ev=st.floats(0.0, 0.6), hxv=st.floats(-1.5, 1.5),
       hzv=st.floats(-1.5, 1.5), T=st.sampled_from([0.2, 1.0, 4.0]))
def test_spin_seven_halves_in_a_tilted_field_matches_exact_diagonalisation(Dv, Ev, hxv, hzv, T):
    _, f = _tilted("xz")
    sx, sy, sz = _spin_matrices(7)
    H = Dv * sz @ sz + Ev * (sx @ sx - sy @ sy) + hxv * sx + hzv * sz
    ref = _solve(H, sz + sx, sz + sx, T)
    at = dict(D=Dv, E=Ev, hx=hxv, hz=hzv)
    scale = max(1.0, abs(ref.isothermal))
    assert_close(f.chi_isothermal(T, **at) / scale, ref.isothermal / scale, RTOL, ATOL,
                 what="isothermal")
    assert_close(f.chi_isolated(T, **at) / scale, ref.isolated / scale, RTOL, ATOL,
                 what="isolated")
    ref = _solve(H, sz + sx, sz + sx, T, DYNAMIC_RTOL)
    assert_close(f.chi_omega(0.37, T, **at, eta=0.21), ref.frequency(0.37, 0.21), RTOL, ATOL,
                 what="chi(omega)")
    om = np.linspace(-3, 3, 7)
    assert_close(f.correlation_spectral(om, T, **at, eta=0.2),
                 numeric.correlation_spectrum(H, sz + sx, sz + sx, 1.0 / T, om, 0.2),
                 RTOL, ATOL, what="S(omega)")


@settings(max_examples=4)
@given(Dv=st.floats(-2.0, 2.0), hxv=st.floats(-1.0, 1.0), hyv=st.floats(-1.0, 1.0),
       hzv=st.floats(-1.0, 1.0), T=st.sampled_from([0.3, 2.0]))
def test_spin_seven_halves_cross_response_in_any_field_matches_exact_diagonalisation(
        Dv, hxv, hyv, hzv, T):
    # A field with a y component makes the block complex Hermitian; A = Sx, B = Sy.
    _, f = _tilted("xy")
    sx, sy, sz = _spin_matrices(7)
    H = Dv * sz @ sz + 0.2 * (sx @ sx - sy @ sy) + hxv * sx + hyv * sy + hzv * sz
    ref = _solve(H, sx, sy, T)
    at = dict(D=Dv, E=0.2, hx=hxv, hy=hyv, hz=hzv)
    assert_close(f.chi_isothermal(T, **at), ref.isothermal, RTOL, ATOL, what="isothermal")
    assert_close(f.chi_isolated(T, **at), ref.isolated, RTOL, ATOL, what="isolated")
    ref = _solve(H, sx, sy, T, DYNAMIC_RTOL)
    assert_close(f.chi_omega(0.5, T, **at, eta=0.2), ref.frequency(0.5, 0.2), RTOL, ATOL,
                 what="chi(omega)")
    assert_close(f.chi_time(1.3, T, **at), ref.time(1.3), RTOL, ATOL, what="chi(t)")


# ---------------------------------------------------------------- grids and numerics
def test_temperature_grid_equals_the_values_point_by_point():
    # One spectrum on a grid of temperatures: pairs far apart through temperature-free
    # coefficients, close pairs (here split by 1e-9) pair by pair; both against the
    # per-point path (temperatures and parameters as arrays of the same shape).
    _, f = _ion(20, "x")
    T = np.geomspace(1e-3, 1e4, 40)
    for Dv, Ev, hv in [(0.7, 0.1, 0.4), (0.5, 0.0, 1e-9), (-0.4, 0.25, 0.0)]:
        for kind in ("isothermal", "isolated"):
            grid = f.chi_static(T, Dv, Ev, hv, kind=kind)
            one = f.chi_static(T, np.full(T.shape, Dv), Ev, hv, kind=kind)
            assert_close(grid, one, RTOL, ATOL, what=f"{kind} at D={Dv}, E={Ev}, h={hv}")
            for t in T[::9]:
                ref = _ion_reference(20, "x", Dv, Ev, hv, t)
                want = ref.isothermal if kind == "isothermal" else ref.isolated
                scale = max(1.0, abs(want))
                assert_close(f.chi_static(t, Dv, Ev, hv, kind=kind) / scale, want / scale,
                             RTOL, ATOL, what=f"{kind} at T={t}")


def test_block_evaluator_raises_no_floating_point_error_over_the_documented_range():
    # T from 1e-6 to 1e8 and couplings up to 1e6 (docs/evaluators.md), numpy errors raised.
    _, f = _tilted("xz")
    with np.errstate(over="raise", divide="raise", invalid="raise", under="ignore"):
        for T in (1e-6, 1e-2, 1.0, 1e8):
            for p in ((1e6, 0.3, 0.2, -0.1), (1.0, 0.0, 0.0, 0.0), (-2.0, 0.5, 1e-12, 1e6)):
                values = [f.chi_isothermal(T, *p), f.chi_isolated(T, *p),
                          f.chi_omega(np.array([0.0, 1.0]), T, *p, eta=0.1),
                          f.chi_time(np.array([0.0, 2.0]), T, *p),
                          f.chi_spectral(np.array([0.5]), T, *p, eta=0.1, shape="gaussian")]
                assert all(np.isfinite(v).all() for v in values), (T, p)


def test_block_evaluator_runs_block_by_block_on_dask_arrays():
    da = pytest.importorskip("dask.array")
    _, f = _tilted("xz")
    T = np.linspace(0.3, 3.0, 12).reshape(-1, 1)
    hv = np.linspace(-1.0, 1.0, 8)
    lazy = f.chi_isothermal(da.from_array(T, chunks=(5, 1)), 1.0, 0.2, da.from_array(hv, chunks=3), 0.4)
    assert_close(lazy.compute(), f.chi_isothermal(T, 1.0, 0.2, hv, 0.4), what="chunked sweep")


def test_symmetry_sectors_of_a_ring_are_diagonalised_in_their_own_basis():
    # Three spins 1 on a ring with single-ion anisotropy in a transverse field: ring
    # translations split the blocks into sectors with a rational, non-orthogonal basis (Gram
    # matrix G, similarity G^-1/2), and their factors are semi-closed.
    J, Dp, hp = (sp.Symbol(n, real=True) for n in ("J", "D", "h"))
    s = [sr.spin(f"s{i}", 1) for i in range(3)]
    H = sum(J * (s[i].vec @ s[(i + 1) % 3].vec) for i in range(3)) \
        + Dp * sum(x.z**2 for x in s) + hp * sum(x.x for x in s)
    r = sr.Model(H).response(sum(x.z for x in s))
    assert any(sol.kind == "semi" and sol.block.sector is not None
               for sol in r.derivation.spectrum.solutions)
    f = r.numpy()
    sx, sy, sz = _spin_matrices(2)

    def site(op, i):
        m = [np.eye(3)] * 3
        m[i] = op
        return np.kron(np.kron(m[0], m[1]), m[2])

    S = [[site(o, i) for o in (sx, sy, sz)] for i in range(3)]
    M = sum(S[i][2] for i in range(3))
    for Jv, Dv, hv, T in [(1.0, 0.4, 0.3, 0.7), (-0.5, 1.2, 0.8, 2.0)]:
        Hm = sum(Jv * S[i][k] @ S[(i + 1) % 3][k] for i in range(3) for k in range(3)) \
            + Dv * sum(S[i][2] @ S[i][2] for i in range(3)) + hv * sum(S[i][0] for i in range(3))
        ref = _solve(Hm, M, M, T)
        at = dict(J=Jv, D=Dv, h=hv)
        assert_close(f.chi_isothermal(T, **at), ref.isothermal, RTOL, ATOL, what="isothermal")
        assert_close(f.chi_isolated(T, **at), ref.isolated, RTOL, ATOL, what="isolated")
        assert_close(f.chi_omega(0.3, T, **at, eta=0.1),
                     _solve(Hm, M, M, T, DYNAMIC_RTOL).frequency(0.3, 0.1), RTOL, ATOL,
                     what="chi(omega)")
