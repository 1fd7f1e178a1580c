"""Emitted correlation_spectral against the numeric reference (independent matrices)."""

from __future__ import annotations

import numpy as np
import pytest

from symresp import numeric

from ..conftest import assert_close
from ._models import CASES, module


@pytest.mark.parametrize("name", ["dimer_xy", "triangle_s0x", "rhombic", "two_level",
                                  "tilted_pair", "tilted_field"])
@pytest.mark.parametrize("kind", ["plain", "symmetrised", "canonical"])
def test_emitted_correlation_equals_exact_diagonalisation(name, kind):
    case, mod = CASES[name], module(name)
    rng = np.random.default_rng(3)
    params = {}
    for p in mod.PARAMETERS:
        params[p] = float(rng.uniform(0.4, 1.6)) * (1 if p in case.positive else
                                                   float(rng.choice([-1, 1])))
    H, A, B = case.matrices(**params)
    omega = np.linspace(-4, 4, 41)
    for T, shape in ((0.3, "lorentzian"), (2.0, "gaussian")):
        got = mod.correlation_spectral(omega, T, *[params[p] for p in mod.PARAMETERS], eta=0.15,
                                       shape=shape, kind=kind)
        ref = numeric.correlation_spectrum(H, A, B, 1 / T, omega, 0.15, kind=kind, shape=shape)
        assert_close(got, ref, rtol=1e-9, atol=1e-11, what=f"{name} S(omega) {kind} {shape}")


def test_emitted_correlation_checks_its_arguments():
    mod = module("two_level")
    with pytest.raises(ValueError, match="kind"):
        mod.correlation_spectral(0.1, 1.0, 1.0, eta=0.1, kind="quantum")
    with pytest.raises(ValueError, match="eta"):
        mod.correlation_spectral(0.1, 1.0, 1.0, eta=-1.0)
    with pytest.raises(ValueError, match="T must be"):
        mod.correlation_spectral(0.1, -1.0, 1.0, eta=0.1)
