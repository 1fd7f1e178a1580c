"""Fitting invented magnetometry data with an emitted evaluator and its analytic Jacobian.

Demo scenario (invented): the "Tandrel salt", a made-up compound of antiferromagnetically
coupled spin-1/2 pairs, H = J S_1.S_2 with J = 14.2 K and g = 2.11. Its molar susceptibility is
simulated on 2-300 K by the numerical reference (exact diagonalisation in symresp.numeric,
tests/cases/synthetic.py; not the evaluator that is fitted) with 1 % Gaussian noise from a
seeded generator and fitted with scipy.optimize.curve_fit; J and g must come back within their
error bars. The command-line route (symresp fit) is tested in tests/cases/test_fit.py and
tests/cli/test_fit_command.py.
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy as sp
from scipy.optimize import curve_fit

import symresp as sr
from symresp.emit import molar_susceptibility, numpy_functions
from tests.cases.synthetic import dimer_chi_mol

#: Invented "true" values of the demo compound.
J_TRUE = 14.2      # K
G_TRUE = 2.11
#: Relative noise of the simulated data and the seed of its generator.
NOISE = 0.01
SEED = 17
#: A fitted value counts as recovered within this many standard errors.
N_SIGMA = 3.0
#: The 60 points at 1 % noise must pin J and g at least this well (the fit is informative).
MAX_ERR_J = 0.5     # K
MAX_ERR_G = 0.02
#: The fits with and without the analytic Jacobian agree to this relative precision.
RTOL_JAC_VS_NUMERIC = 1e-6


@pytest.fixture(scope="module")
def qx17():
    J = sp.Symbol("J", real=True)
    a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    r = sr.Model(J * (a.vec @ b.vec), name="Tandrel salt").response(a.z + b.z)
    f = numpy_functions(r.derivation)
    # chi_mol = K g^2 chi(T, J), chi per molecule in 1/K (A = B = total S^z).
    K = molar_susceptibility(1.0, g=1.0, energy_unit="K", system="cgs")

    def model(T, J_, g):
        return K * g * g * f.chi_isothermal(T, J_)

    def jacobian(T, J_, g):
        chi = f.chi_isothermal(T, J_)
        dchi_dJ = f.jacobian_static(T, J_)[..., 0]
        return np.stack([K * g * g * dchi_dJ, 2 * K * g * chi], axis=-1)

    T = np.geomspace(2.0, 300.0, 60)
    rng = np.random.default_rng(SEED)
    clean = dimer_chi_mol(J_TRUE, G_TRUE, T, unit="K")
    data = clean * (1 + NOISE * rng.standard_normal(T.size))
    return model, jacobian, T, data, NOISE * clean


def test_fit_recovers_exchange_and_g_within_error_bars(qx17):
    model, jacobian, T, data, sigma = qx17
    p, cov = curve_fit(model, T, data, p0=(10.0, 2.0), sigma=sigma, absolute_sigma=True,
                       jac=jacobian)
    err = np.sqrt(np.diag(cov))
    assert abs(p[0] - J_TRUE) <= N_SIGMA * err[0], (p, err)
    assert abs(p[1] - G_TRUE) <= N_SIGMA * err[1], (p, err)
    assert err[0] < MAX_ERR_J and err[1] < MAX_ERR_G


def test_analytic_jacobian_gives_the_same_fit_as_finite_differences(qx17):
    model, jacobian, T, data, sigma = qx17
    p_jac, _ = curve_fit(model, T, data, p0=(10.0, 2.0), sigma=sigma, jac=jacobian)
    p_num, _ = curve_fit(model, T, data, p0=(10.0, 2.0), sigma=sigma)
    np.testing.assert_allclose(p_jac, p_num, rtol=RTOL_JAC_VS_NUMERIC)
