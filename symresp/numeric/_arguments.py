"""Argument checks of the numeric reference (layer: numeric).

Every public function validates its arguments here and raises :class:`InputError` that names
the argument and quotes the bad value. Also the shared parameter descriptions of the
docstrings. Imports numpy and :mod:`symresp.errors` only.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from numbers import Real
from string import Template
from typing import TypeVar

import numpy as np

from symresp._tolerances import HERMITIAN_RTOL, hermitian_tolerance
from symresp.errors import InputError, NotHermitianError


_F = TypeVar("_F", bound=Callable)


def _short(value: object) -> str:
    text = repr(value)
    return text if len(text) <= 80 else text[:77] + "..."


def _as_array(name: str, value: object, *, kinds: str, what: str) -> np.ndarray:
    """``value`` as an array whose dtype kind is one of ``kinds`` (numpy's letters)."""
    try:
        arr = np.asarray(value)
    except Exception as exc:  # ragged lists and the like
        raise InputError(f"{name}={_short(value)} is not an array: {exc}") from None
    if arr.dtype.kind not in kinds:
        raise InputError(f"{name}={_short(value)} must be {what}, got dtype {arr.dtype}")
    return arr


def _finite(name: str, value: object, arr: np.ndarray) -> np.ndarray:
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{name}={_short(value)} has non-finite entries")
    return arr


def _as_matrix(name: str, value: object) -> np.ndarray:
    arr = _as_array(name, value, kinds="iufc", what="a numeric array")
    if arr.ndim != 2 or arr.shape[0] != arr.shape[1] or arr.shape[0] == 0:
        raise InputError(f"{name} must be a non-empty square matrix, got shape {arr.shape}")
    return _finite(name, value, arr.astype(np.complex128))


def _as_hamiltonian(H: object) -> np.ndarray:
    h = _as_matrix("H", H)
    scale = float(np.max(np.abs(h)))
    defect = float(np.max(np.abs(h - h.conj().T)))
    if defect > hermitian_tolerance(scale):
        raise NotHermitianError(
            f"H={_short(H)} is not Hermitian: max|H - H^dagger| = {defect:.3g} "
            f"exceeds {HERMITIAN_RTOL:g} * max|H| = {hermitian_tolerance(scale):.3g}"
        )
    # Symmetrise so that rounding noise in the input cannot make eigh see a different matrix.
    return 0.5 * (h + h.conj().T)


def _as_operators(H: object, A: object, B: object) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    h = _as_hamiltonian(H)
    a = _as_matrix("A", A)
    b = _as_matrix("B", B)
    for name, op in (("A", a), ("B", b)):
        if op.shape != h.shape:
            raise InputError(f"{name} has shape {op.shape} but H has shape {h.shape}")
    return h, a, b


def _as_beta(beta: object) -> float:
    if isinstance(beta, (bool, np.bool_)) or not isinstance(beta, Real):
        raise InputError(f"beta={_short(beta)} must be a real number > 0 (or numpy.inf)")
    value = float(beta)
    if not value > 0:  # also catches nan
        raise InputError(f"beta={_short(beta)} must be > 0 (or numpy.inf for T = 0)")
    return value


def _as_positive(name: str, value: object) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, Real):
        raise InputError(f"{name}={_short(value)} must be a finite real number > 0")
    out = float(value)
    if not (math.isfinite(out) and out > 0):
        raise InputError(f"{name}={_short(value)} must be a finite real number > 0")
    return out


def _as_tolerance(name: str, value: object) -> float | None:
    if value is None:
        return None
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, Real):
        raise InputError(f"{name}={_short(value)} must be None or a finite real number >= 0")
    out = float(value)
    if not (math.isfinite(out) and out >= 0):
        raise InputError(f"{name}={_short(value)} must be None or a finite real number >= 0")
    return out


def _as_real_array(name: str, value: object) -> np.ndarray:
    arr = _as_array(name, value, kinds="iuf", what="real numbers")
    return _finite(name, value, arr.astype(np.float64))


def _as_complex_array(name: str, value: object) -> np.ndarray:
    arr = _as_array(name, value, kinds="iufc", what="numbers")
    return _finite(name, value, arr.astype(np.complex128))


def _as_integer_array(name: str, value: object) -> np.ndarray:
    arr = _as_array(name, value, kinds="iu", what="integers (Matsubara indices)")
    return arr.astype(np.int64)


def _scalar_or_array(values: np.ndarray) -> complex | np.ndarray:
    """Return a Python complex for 0-d input, the array otherwise."""
    return complex(values) if values.ndim == 0 else values


def _readonly(arr: np.ndarray) -> np.ndarray:
    arr = np.array(arr)  # private copy, so no caller can change it behind our back
    arr.setflags(write=False)
    return arr


# Parameter descriptions shared by the docstrings of the public functions.
_DOCS = {
    "H": """H : array_like, shape (d, d)
        Hermitian Hamiltonian.""",
    "HAB": """H, A, B : array_like, shape (d, d)
        Hermitian Hamiltonian, measured and driving operator.""",
    "beta": """beta : float
        Inverse temperature ``> 0`` (``numpy.inf`` allowed).""",
    "degeneracy_tol": """degeneracy_tol : float, optional
        Level grouping tolerance; default ``1e-9 * max|E|``.""",
    "omega_eta": """omega : float or array_like of float
        Real frequencies.
    eta : float
        Broadening (Lorentzian half width) ``> 0``.""",
    "same_shape": """complex or ndarray of complex
        Same shape as the grid.""",
}


def _documented(function: _F) -> _F:
    """Fill the ``$H``, ``$HAB``, ... lines of a docstring from :data:`_DOCS`."""
    function.__doc__ = Template(function.__doc__).substitute(_DOCS)
    return function
