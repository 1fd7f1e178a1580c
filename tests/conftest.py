"""Shared test settings: named tolerances (relative, absolute) and Hypothesis profiles."""

from __future__ import annotations

import os

import numpy as np
from hypothesis import HealthCheck, settings

#: Symbolic result vs numeric exact diagonalisation (issue target: 1e-10 relative).
RTOL_EXACT, ATOL_EXACT = 1e-10, 1e-12
#: Closed forms evaluated in double precision near cancellations.
RTOL_LOOSE, ATOL_LOOSE = 1e-8, 1e-10
#: Stored 70-digit values of exact algebraic roots against sympy's own root isolation.
RTOL_ROOTS, ATOL_ROOTS = 1e-65, 1e-65

settings.register_profile(
    "default", deadline=None, max_examples=20, database=None, derandomize=True,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)
settings.register_profile(
    "thorough", deadline=None, max_examples=300, database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)
# SYMRESP_HYPOTHESIS_PROFILE=thorough runs 300 examples per property (long; not in CI).
settings.load_profile(os.environ.get("SYMRESP_HYPOTHESIS_PROFILE", "default"))


def assert_close(actual, expected, rtol: float = RTOL_EXACT, atol: float = ATOL_EXACT, what: str = "") -> None:
    """np.allclose with a readable failure message."""
    a, e = np.asarray(actual, dtype=complex), np.asarray(expected, dtype=complex)
    ok = np.allclose(a, e, rtol=rtol, atol=atol)
    assert ok, f"{what}: got {a}, expected {e} (rtol={rtol}, atol={atol})"
