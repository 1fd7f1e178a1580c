r"""Numeric curves from derived formulas, for plots (layer: cases).

Owns :class:`Curves` and :func:`response_curves`. Imports numpy, sympy,
:mod:`symresp.conventions`, :mod:`symresp.errors`, :mod:`symresp.response` and the cases
modules. All values come from the closed forms at the case's default parameter values:

* the spectral function broadened by Lorentzians of half width :math:`\eta`,
  :math:`\chi''_{AB}(\omega) = \sum_k w_k\,\eta/((\Omega_k - \omega)^2 + \eta^2)` (the imaginary
  part of :math:`\chi(\omega + i\eta)` when :math:`A = B^\dagger`), at one temperature;
* the static susceptibilities, isothermal and isolated, against temperature.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import sympy as sp

from ..conventions import beta
from ..errors import InputError, positive_float
from ..response import Derivation, evaluate_arrays, evaluate_precise
from ._read import Case
from ._verify import energy_scale

__all__ = ["Curves", "response_curves"]


@dataclass(frozen=True, slots=True, eq=False)
class Curves:
    """Curves of one response at the default parameter values (arrays are read-only)."""

    label: str
    energy_unit: str
    temperature: float           # temperature of the spectrum
    eta: float                   # Lorentzian half width
    omega: np.ndarray
    spectrum: np.ndarray         # real part of the broadened chi''(omega); empty without poles
    T: np.ndarray
    isothermal: np.ndarray
    isolated: np.ndarray


def _frozen(a: np.ndarray) -> np.ndarray:
    a = np.array(a)
    a.setflags(write=False)
    return a


def response_curves(case: Case, label: str, d: Derivation, *, temperature: float | None = None,
                    eta: float | None = None, points: int = 400) -> Curves:
    """Spectrum and static susceptibilities of one derived response, at the default values.

    Raises
    ------
    InputError
        If a parameter of the model has no default value, or ``temperature``/``eta`` are not
        positive.

    Examples
    --------
    >>> from symresp.cases import derive_case, find_case, read_case, response_curves
    >>> case = read_case(find_case("dimer"))
    >>> label, d = derive_case(case)[1]
    >>> c = response_curves(case, label, d, points=50)
    >>> bool((c.isothermal.real >= c.isolated.real - 1e-12).all())
    True
    """
    defaults = case.defaults
    missing = [s.name for s in d.system.parameters if s not in defaults]
    if missing:
        raise InputError(f"{case.source}: curves need a value for every parameter; add value = ... "
                         f"under [parameters] for {', '.join(missing)}")
    for name, v in (("temperature", temperature), ("eta", eta)):
        if v is not None:
            positive_float(v, f"curves: {name}")
    scale = energy_scale(case)
    params = {s: float(v) for s, v in defaults.items() if s in set(d.system.parameters)}
    T0 = float(temperature) if temperature is not None else scale
    values = dict(params)
    values[beta] = 1.0 / T0
    poles = [(evaluate_precise(Om, values).real, evaluate_precise(w, values))
             for Om, w in d.poles()]
    if poles:
        top = max(abs(Om) for Om, _ in poles)
        top = top if top > 0 else scale
        width = float(eta) if eta is not None else 0.02 * top
        omega_grid = np.linspace(0.0, 1.3 * top + 5 * width, max(points, 2000))
        spec = np.zeros_like(omega_grid, dtype=complex)
        for Om, w in poles:
            spec += w * width / ((Om - omega_grid) ** 2 + width ** 2)
    else:
        width = float(eta) if eta is not None else 0.02 * scale
        omega_grid, spec = np.zeros(0), np.zeros(0, dtype=complex)
    T_grid = np.linspace(0.02 * scale, 5.0 * scale, points)
    env: dict[sp.Symbol, object] = {s: np.float64(v) for s, v in params.items()}
    env[beta] = 1.0 / T_grid
    iso_T = evaluate_arrays(d.static("isothermal"), env)
    iso_l = evaluate_arrays(d.static("isolated"), env)
    return Curves(label, case.energy_unit, T0, width, _frozen(omega_grid), _frozen(spec.real),
                  _frozen(T_grid), _frozen(iso_T), _frozen(iso_l))
