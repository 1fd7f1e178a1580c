r"""Numbers for the public facade: checked parameter values, closed forms at numbers, the
numeric reference at the same numbers (layer: facade, beside :mod:`._api`).

``Response.evaluate``, ``Response.reference`` and ``Model.array`` delegate here. Numbers come
from Python code only (text is never evaluated); a float becomes the decimal it prints as.
Imports the layers below the facade.
"""

from __future__ import annotations

import cmath
import math
import numbers
from collections.abc import Mapping

import numpy as np
import sympy as sp

from . import numeric
from .algebra import exact_decimal, to_array
from .conventions import beta, omega, t
from .errors import InputError
from .models import System
from .response import CHECKED_QUANTITIES, Derivation, check_quantity, evaluate_exact, quantity_expression

__all__ = ["numeric_params", "evaluate_at", "reference_at"]


def _is_number(value: object, *, real: bool) -> bool:
    """A number given from Python code (never a string: text is not evaluated here)."""
    if isinstance(value, (bool, np.bool_, str, bytes)):
        return False
    kinds = (numbers.Real,) if real else (numbers.Complex,)
    if isinstance(value, kinds):
        return True
    return isinstance(value, sp.Expr) and bool(value.is_number) and (not real or bool(value.is_real))


def _real_number(value: object, what: str) -> float:
    """A finite real number from Python code, as a float; strings and other objects raise."""
    if not _is_number(value, real=True):
        shown = f"{value!r}" if not isinstance(value, str) else f"the string {value!r}"
        raise InputError(f"{what}={shown} must be a real number (int or float), not "
                         f"{type(value).__name__}; text is never evaluated")
    v = float(value)
    if not math.isfinite(v):
        raise InputError(f"{what}={value!r} must be finite")
    return v


def _complex_number(value: object, not_number: str, not_finite: str) -> complex:
    """A finite (complex) number from Python code, as a complex; strings and other objects raise
    InputError with the message ``not_number``, infinities and nan with ``not_finite``."""
    if not _is_number(value, real=False):
        raise InputError(not_number)
    z = complex(value)
    if not cmath.isfinite(z):
        raise InputError(not_finite)
    return z


def _exact(value: float) -> sp.Rational:
    """The exact value of a number given as a float: the decimal it prints as."""
    return exact_decimal(value)


def response_parameters(d) -> tuple[sp.Symbol, ...]:
    """The model's parameters, then those that appear only in A or B (by name)."""
    extra = set().union(*[c.free_symbols for X in (d.A, d.B) for _, c in X.terms])
    extra -= set(d.system.parameters)
    return tuple(d.system.parameters) + tuple(sorted(extra, key=lambda x: x.name))


def numeric_params(system: System, params: Mapping | None,
                   parameters: tuple[sp.Symbol, ...] | None = None) -> dict[sp.Symbol, complex]:
    """``params`` (names or symbols to Python numbers) as a checked mapping symbol -> complex;
    ``parameters`` are the accepted symbols (default: the model's)."""
    out: dict[sp.Symbol, complex] = {}
    if params is not None and not isinstance(params, Mapping):
        raise InputError(f"params={params!r} must be a mapping {{name: number}}")
    known_symbols = tuple(system.parameters) if parameters is None else parameters
    by_name = {p.name: p for p in known_symbols}
    for k, v in (params or {}).items():
        sym = by_name.get(k) if isinstance(k, str) else (k if k in known_symbols else None)
        if sym is None:
            known = ", ".join(by_name) or "none"
            raise InputError(f"params: unknown parameter {k!r} (model parameters: {known})")
        out[sym] = _complex_number(
            v, f"params: value {v!r} for {k} is not a number (give an int, float or complex; "
               f"text is never evaluated)",
            f"params: value {v!r} for {k} is not finite")
    return out


def reference_at(d: Derivation, *, params: Mapping | None, T: object) -> numeric.NumericResponse:
    """The numeric reference (exact diagonalisation) of a derivation at numbers."""
    T_value = _real_number(T, "reference: T")
    if not T_value > 0:
        raise InputError(f"reference: T={T!r} must be a positive finite number")
    system = d.system
    p = numeric_params(system, params, response_parameters(d))
    basis = system.basis()
    H = to_array(system.hamiltonian, basis, p)
    A = to_array(d.A, basis, p)
    B = to_array(d.B, basis, p)
    return numeric.solve(H, A, B, 1.0 / T_value)


#: Relative step off a removable singularity of a closed form in :func:`evaluate_at`.
_NUDGE = sp.Rational(1, 10**15)


def evaluate_at(d: Derivation, quantity: str, *, params: Mapping | None, T: float | None,
                omega_value: complex | None = None, time_value: float | None = None) -> complex:
    """Numeric value of one of the derivation's closed forms (30 digits, via sympy)."""
    system = d.system
    accepted = response_parameters(d)
    p = numeric_params(system, params, accepted)
    missing = set(accepted) - set(p)
    check_quantity(quantity, CHECKED_QUANTITIES, "evaluate: quantity")
    expr = quantity_expression(d, quantity)
    missing &= expr.free_symbols
    if missing:
        raise InputError(f"evaluate: give values for {', '.join(sorted(map(str, missing)))} in params=")
    subs: dict = {k: _exact(v.real) + (sp.I * _exact(v.imag) if v.imag else 0) for k, v in p.items()}
    T_value = None if T is None else _real_number(T, "evaluate: T")
    if expr.has(beta):
        if T_value is None or not T_value > 0:
            raise InputError(f"evaluate: T={T!r} must be a positive temperature")
        subs[beta] = 1 / _exact(T_value)
    if quantity == "frequency":
        if omega_value is None:
            raise InputError("evaluate: give omega_value for the 'frequency' quantity")
        z = _complex_number(
            omega_value, f"evaluate: omega_value={omega_value!r} must be a number (complex "
                         f"allowed), not {type(omega_value).__name__}",
            f"evaluate: omega_value={omega_value!r} must be finite")
        subs[omega] = _exact(z.real) + sp.I * _exact(z.imag)
    if quantity == "time":
        if time_value is None:
            raise InputError("evaluate: give time_value for the 'time' quantity")
        subs[t] = _exact(_real_number(time_value, "evaluate: time_value"))
    value = evaluate_exact(expr, subs, where="evaluate")
    if cmath.isfinite(value) or not p:
        return value
    # A removable singularity of the closed form: two levels meet at this point, e.g. a term
    # (p_a - p_b) W / (E_b - E_a) at E_a = E_b. The response is analytic there, so its value
    # is the limit, taken 1e-15 (relative) away in 30-digit arithmetic. The isolated
    # susceptibility is the exception: it drops degenerate pairs by definition, so it jumps.
    if quantity == "isolated":
        raise InputError("evaluate: levels of the closed form meet at these parameters, where the "
                         "isolated susceptibility is discontinuous (degenerate pairs leave it); use "
                         "Response.reference(...) or the emitted evaluator (Response.numpy()) there")
    nudged = dict(subs)
    for i, k in enumerate(sorted(p, key=lambda s: s.name)):
        v = subs[k]
        nudged[k] = v * (1 + (i + 1) * _NUDGE) if v != 0 else (i + 1) * _NUDGE
    # Weights of a block whose eigenvectors are undefined at the point can be singular to
    # second order: 60 digits leave 30 after the cancellation.
    return evaluate_exact(expr, nudged, digits=60, where="evaluate")
