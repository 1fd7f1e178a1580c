"""The numeric reference of correlation functions (symresp.numeric.correlation_lines)."""

from __future__ import annotations

import numpy as np
import pytest

from symresp import numeric
from symresp.errors import InputError

from ..conftest import assert_close


def _random_hermitian(rng, d):
    m = rng.normal(size=(d, d)) + 1j * rng.normal(size=(d, d))
    return (m + m.conj().T) / 2


def test_lines_sum_to_the_equal_time_correlation():
    # sum_k s_k = <A B> (S(omega) integrates to 2 pi <AB>), common practice.
    rng = np.random.default_rng(1)
    H, A, B = _random_hermitian(rng, 5), rng.normal(size=(5, 5)), rng.normal(size=(5, 5))
    beta = 0.8
    f, s = numeric.correlation_lines(H, A, B, beta)
    rho = np.diag(np.exp(-beta * np.linalg.eigvalsh(H)))
    E, V = np.linalg.eigh(H)
    rho = V @ np.diag(np.exp(-beta * (E - E[0]))) @ V.conj().T
    rho /= np.trace(rho)
    assert_close(np.sum(s), np.trace(rho @ A @ B), what="sum of lines")


def test_detailed_balance_and_fluctuation_dissipation_line_by_line():
    # S_AB(-Omega) = exp(-beta Omega) S_BA(Omega), i.e. s_BA(-f) = exp(-beta f) s_AB(f), and
    # w = (1 - exp(-beta Omega)) s.
    # Source: H. B. Callen and T. A. Welton, Phys. Rev. 83, 34 (1951); R. Kubo, J. Phys. Soc.
    # Jpn. 12, 570 (1957).
    rng = np.random.default_rng(2)
    H, A, B = _random_hermitian(rng, 6), rng.normal(size=(6, 6)), rng.normal(size=(6, 6))
    beta = 1.3
    f_ab, s_ab = numeric.correlation_lines(H, A, B, beta)
    f_ba, s_ba = numeric.correlation_lines(H, B, A, beta)
    lookup = dict(zip(np.round(f_ba, 9), s_ba))
    for f, s in zip(f_ab, s_ab):
        if abs(f) > 1e-9:
            assert_close(np.exp(-beta * f) * s, lookup[np.round(-f, 9)], what=f"line {f}")
    poles = numeric.poles(H, A, B, beta)
    chi_lines = dict(zip(np.round(poles[0], 9), poles[1]))
    for f, s in zip(f_ab, s_ab):
        if abs(f) > 1e-9:
            assert_close(chi_lines[np.round(f, 9)], -np.expm1(-beta * f) * s, what=f"FDT at {f}")


def test_canonical_correlation_gives_the_isothermal_susceptibility():
    # chi_T = beta (sum_k s^K_k - <A><B>) (Kubo's canonical correlation; R. Kubo, J. Phys. Soc.
    # Jpn. 12, 570 (1957)).
    rng = np.random.default_rng(4)
    H, A = _random_hermitian(rng, 5), _random_hermitian(rng, 5)
    beta = 0.6
    _, s = numeric.correlation_lines(H, A, A, beta, kind="canonical")
    ref = numeric.solve(H, A, A, beta)
    mean = ref.expectation_A
    assert_close(beta * (np.sum(s) - mean * mean), ref.isothermal, what="canonical sum rule")


@pytest.mark.parametrize("kwargs", [{"kind": "quantum"}, {"beta": -1.0}, {"beta": "hot"}])
def test_bad_arguments_are_refused(kwargs):
    args = {"H": np.diag([0.0, 1.0]), "A": np.eye(2), "B": np.eye(2), "beta": 1.0}
    args.update(kwargs)
    with pytest.raises(InputError):
        numeric.correlation_lines(args.pop("H"), args.pop("A"), args.pop("B"), args.pop("beta"),
                                  **args)
