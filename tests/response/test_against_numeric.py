"""Backbone property test: every symbolic output equals numeric exact diagonalisation.

Random Hermitian models (spins 1/2..3/2, n-level sites, fermion and boson modes on 1-3 sites,
with and without symbolic parameters) are built twice, independently (tests/strategies.py);
the derived closed forms are evaluated at random parameter points and compared with
``symresp.numeric`` run on the independently built matrices.
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy as sp
from hypothesis import given
from hypothesis import strategies as st

import symresp as sr
from symresp import numeric

from ..conftest import ATOL_EXACT, RTOL_EXACT, assert_close
from ..strategies import parameter_points, random_models
from ._exact import at_point, number, regular_point, response_or_skip


@given(model=random_models(), data=st.data())
def test_symbolic_response_equals_exact_diagonalisation(model, data):
    r = response_or_skip(model)
    exact = data.draw(parameter_points(model.params))
    T = data.draw(st.sampled_from([0.3, 1.0, 4.0]))
    ref = numeric.solve(model.H_num(exact), model.A_mat, model.B_mat, 1.0 / T)
    values = regular_point(r, exact, T)
    # Off a singular point the weights can cancel to second order: 60 digits there.
    digits = 30 if values is exact else 60
    iso_t = number(at_point(r.static("isothermal"), values, T), digits)
    iso_l = number(at_point(r.static("isolated"), values, T), digits)
    scale = max(1.0, abs(ref.isothermal), abs(ref.isolated))
    assert_close(iso_t / scale, ref.isothermal / scale, what="isothermal")
    if values is exact:
        # (At a point where levels of the closed form meet, the isolated susceptibility jumps
        # by definition: degenerate pairs leave it. Only the other quantities are continuous.)
        assert_close(iso_l / scale, ref.isolated / scale, what="isolated")
    z = 0.37 + 0.21j
    chi_w = number(at_point(r.frequency(), values, T).subs(sr.omega, sp.nsimplify(z.real) + sp.I * sp.nsimplify(z.imag)), digits)
    assert_close(chi_w, ref.frequency(z.real, z.imag), rtol=RTOL_EXACT, atol=ATOL_EXACT * 10, what="chi(omega)")
    chi_t = number(at_point(r.time(), values, T).subs(sr.t, sp.Rational(7, 10)), digits)
    assert_close(chi_t, ref.time(0.7), rtol=RTOL_EXACT, atol=ATOL_EXACT * 10, what="chi(t)")
    # The pole table reproduces chi at a complex frequency.
    poles = [(number(at_point(Om, values, T), digits), number(at_point(w, values, T), digits)) for Om, w in r.poles()]
    from_poles = sum((w / (Om - z) for Om, w in poles), 0j)
    assert_close(from_poles, ref.frequency(z.real, z.imag), rtol=RTOL_EXACT, atol=ATOL_EXACT * 10, what="poles")
    Z = number(at_point(r.partition_function(), values, T), digits)
    # Z itself must be real and positive; log|Z| alone would hide a sign or a phase.
    assert Z.real > 0 and abs(Z.imag) <= RTOL_EXACT * Z.real, f"Z = {Z}"
    assert_close(np.log(Z.real), ref.log_Z, what="log Z")


def _imaginary_scale_models():
    # Found by the thorough profile: H = i J1 R with R real antisymmetric, so the block is
    # solved as a scale i J1 times a rational matrix whose characteristic polynomial
    # 16 x^4 + 24 x^2 + 1 has imaginary roots (complex CRootOf; the energies are real); and
    # H proportional to (J1 + 1), where every level meets at J1 = -1.
    J1 = sp.Symbol("J1", real=True)
    s, q = sr.spin("s0", sp.Rational(1, 2)), sr.nlevel("s1", 2)
    up, dn, i = s.plus, s.minus, sp.I
    H1 = (-i * J1) * up + (-i * J1 / 2) * up * q.op(0, 1) + (-i * J1 / 2) * up * q.op(1, 0) \
        + (i * J1) * up * q.op(1, 1) + (i * J1) * dn + (i * J1 / 2) * dn * q.op(0, 1) \
        + (i * J1 / 2) * dn * q.op(1, 0) + (-i * J1) * dn * q.op(1, 1)
    H2 = (J1 + 1) * (-i * up + i * up * q.op(1, 1) + i * dn - i * dn * q.op(1, 1))
    return [(H1, up + dn), (H2, up + dn)]


@pytest.mark.parametrize("which", [0, 1])
@pytest.mark.parametrize("J", [-1.0, 0.7])
def test_imaginary_scale_and_meeting_levels_evaluate_to_exact_diagonalisation(which, J):
    H, A = _imaginary_scale_models()[which]
    r = sr.Model(H).response(A)
    p = {"J1": J}
    ref = r.reference(params=p, T=0.3)
    assert_close(r.evaluate("isothermal", params=p, T=0.3), ref.isothermal, what="isothermal")
    assert_close(r.evaluate("frequency", params=p, T=0.3, omega_value=0.4 + 0.1j),
                 ref.frequency(0.4, 0.1), what="chi(omega)")
    f = r.numpy()
    assert_close(f.chi_isothermal(0.3, J), ref.isothermal, what="emitted isothermal")
