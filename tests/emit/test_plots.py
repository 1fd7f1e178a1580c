"""Pictures: each test checks what is drawn (data of the lines, arrows and their order by
weight, crossings, the map's values), against the numeric reference where there is one."""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy as sp

import symresp as sr
from symresp import numeric
from symresp.emit import (HAVE_MATPLOTLIB, draw_levels, draw_map, draw_spectrum, draw_static,
                          draw_sweep, level_scheme, level_sweep, save_figure, spectral_map,
                          spectrum, static_curves)

from ..conftest import assert_close

pytestmark = pytest.mark.skipif(not HAVE_MATPLOTLIB, reason="matplotlib (plot extra) missing")

HALF = sp.Rational(1, 2)
D, E_r = sp.Symbol("D", real=True), sp.Symbol("E_r", nonnegative=True)
h = sp.Symbol("h", real=True)
PARAMS = {"D": 4.2, "E_r": 0.7, "h": 0.5}


def _spin1(A: str):
    s = sr.spin("s", 1)
    model = sr.Model(D * (s.z**2 - sp.Rational(2, 3)) + E_r * (s.x**2 - s.y**2) - h * s.z)
    return model.response(getattr(s, A)), model


def _reference(r, T):
    H = r.model.array(params=PARAMS)
    A = r.model.array(r.derivation.A, params=PARAMS)
    return H, A, numeric.solve(H, A, A, 1 / T)


def test_level_diagram_draws_every_level_and_arrows_by_weight():
    r, _ = _spin1("x")
    T = 3.0
    scheme = level_scheme(r.derivation, PARAMS, T)
    fig = draw_levels(scheme, unit="K")
    ax = fig.axes[0]
    energies = sorted(line.get_ydata()[0] for line in ax.lines)
    H, A, ref = _reference(r, T)
    assert_close(energies, np.linalg.eigvalsh(H), what="level lines")
    arrows = ax.patches
    # Two transitions from the m = 0 ground level; the arrows follow the weights
    # w = (p_a - p_b) W_ab of the numeric reference, strongest first and widest.
    ref_w = sorted((abs(w) for f, w in zip(*ref.poles) if f > 0), reverse=True)
    assert len(arrows) == len(ref_w) == 2
    assert_close([a[3] for a in scheme.arrows], ref_w, what="arrow weights")
    widths = [p.get_linewidth() for p in arrows]
    assert widths == sorted(widths, reverse=True) and widths[0] > widths[1]
    starts = [p.get_path().vertices[0][1] for p in arrows]
    assert all(abs(y - energies[0]) < 1e-9 for y in starts)          # all from the ground level
    labels = [t.get_text() for t in ax.get_xticklabels()]
    assert len(labels) == 2 and all(t.startswith(scheme.group_name) for t in labels)


def test_level_sweep_marks_the_crossings():
    # Levels -2D/3 and D/3 - sqrt(E^2 + h^2) cross where sqrt(E^2 + h^2) = D, i.e. at
    # h = +-sqrt(D^2 - E^2) (exact diagonalisation of the 3 x 3 matrix, common practice).
    r, _ = _spin1("x")
    sweep = level_sweep(r.derivation, PARAMS, "h", np.linspace(-6, 6, 481))
    fig = draw_sweep(sweep, unit="K")
    ax = fig.axes[0]
    assert len(ax.lines) == 3
    for k, x in enumerate((-6.0, 0.0, 6.0)):
        i = int(np.argmin(abs(sweep.x - x)))
        H = r.model.array(params={**PARAMS, "h": float(sweep.x[i])})
        drawn = sorted(line.get_ydata()[i] for line in ax.lines)
        assert_close(drawn, np.linalg.eigvalsh(H), what=f"sweep at h = {x}")
    marked = ax.collections[0].get_offsets()
    expected = math.sqrt(4.2**2 - 0.7**2)
    assert len(marked) == 2
    assert_close(sorted(marked[:, 0]), [-expected, expected], rtol=1e-4, atol=1e-4,
                 what="crossings")


def test_stick_spectrum_and_broadened_curve_match_the_reference():
    r, _ = _spin1("x")
    T = 2.0
    spec = spectrum(r.derivation, PARAMS, T, eta=0.1)
    fig = draw_spectrum(spec, unit="K")
    ax = fig.axes[0]
    H, A, ref = _reference(r, T)
    curve = ax.lines[0]
    assert_close(curve.get_ydata(), ref.frequency(curve.get_xdata(), 0.1).imag, rtol=1e-9,
                 atol=1e-12, what="broadened chi''")
    segments = ax.collections[0].get_segments()
    sticks = sorted((s[0][0], s[1][1]) for s in segments)
    ref_sticks = sorted((f, math.pi * w.real) for f, w in zip(*ref.poles) if f >= 0)
    assert_close(sticks, ref_sticks, what="stick lines")


def test_colour_map_holds_chi_double_prime_on_the_grid():
    r, _ = _spin1("x")
    temps = np.linspace(1.0, 10.0, 7)
    m = spectral_map(r.derivation, PARAMS, temps, eta=0.2)
    fig = draw_map(m, unit="K")
    mesh = fig.axes[0].collections[0]
    values = np.asarray(mesh.get_array()).reshape(len(temps), len(m.omega))
    H, A, _ = _reference(r, 1.0)
    for i, T in enumerate(temps):
        ref = numeric.solve(H, A, A, 1 / T)
        assert_close(values[i], ref.frequency(m.omega, 0.2).imag, rtol=1e-9, atol=1e-12,
                     what=f"map row T = {T}")
    assert mesh.get_cmap().name == "cividis"


def test_static_curves_chiT_inverse_and_data_overlay(tmp_path):
    r, _ = _spin1("z")
    temps = np.geomspace(0.5, 50, 60)
    curves = static_curves(r.derivation, PARAMS, temps)
    data = (np.array([1.0, 5.0, 20.0]), np.array([0.3, 0.1, 0.03]))
    fig = draw_static(curves, log_T=True, data=data, data_kind="chi", unit="K")
    chi_ax, chiT_ax, inv_ax = fig.axes[:3]
    H, A, _ = _reference(r, 1.0)
    ref = np.array([numeric.solve(H, A, A, 1 / T).isothermal.real for T in temps])
    assert_close(chi_ax.lines[0].get_ydata(), ref, what="chi(T)")
    assert_close(chiT_ax.lines[0].get_ydata(), ref * temps, what="chi*T")
    assert_close(inv_ax.lines[0].get_ydata(), 1 / ref, what="1/chi")
    assert chi_ax.get_xscale() == "log"
    assert_close(chi_ax.lines[-1].get_xydata(), np.column_stack(data), what="data overlay")
    for suffix in ("png", "svg"):
        path = save_figure(fig, tmp_path / f"static.{suffix}")
        head = path.read_bytes()[:200]
        assert (head.startswith(b"\x89PNG") if suffix == "png" else b"<svg" in head
                or b"<?xml" in head)


def test_pictures_refuse_bad_requests():
    r, _ = _spin1("x")
    with pytest.raises(sr.InputError, match="give values"):
        level_scheme(r.derivation, {"D": 1.0}, 1.0)
    with pytest.raises(sr.InputError, match="not a parameter"):
        level_sweep(r.derivation, PARAMS, "B", [0.0, 1.0])
    with pytest.raises(sr.InputError, match="suffix"):
        save_figure(draw_levels(level_scheme(r.derivation, PARAMS, 1.0)), "x.jpg")
    with pytest.raises(sr.InputError, match="kind"):
        r.plot("histogram")
