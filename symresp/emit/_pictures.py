r"""The numbers behind the pictures of a response (layer: emit).

Owns the picture data :class:`LevelScheme`, :class:`Sweep`, :class:`Spectrum`,
:class:`SpectralMap`, :class:`StaticCurves` and the functions that compute them at numeric
parameter values. Drawing lives in :mod:`._plots` (the one module that imports matplotlib);
nothing here needs it. Imports numpy, sympy, :mod:`symresp.conventions`,
:mod:`symresp.errors`, :mod:`symresp.response` and the emitted evaluators
(:func:`._numpy_module.numpy_functions`), which give every curve on whole grids at once.

Definitions (pinned convention): a transition a -> b (levels a below b) has frequency
:math:`\Omega = E_b - E_a` and weight :math:`w = (p_a - p_b) W_{ab}` at the chosen temperature,
the line strength of :math:`\chi''(\omega) = \pi\sum_k w_k\delta(\omega - \Omega_k)`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import sympy as sp

from ..conventions import beta
from ..errors import InputError, positive_float
from ..response import Derivation
from ._numpy_module import numpy_functions

__all__ = ["LevelScheme", "Sweep", "Spectrum", "SpectralMap", "StaticCurves", "level_scheme",
           "level_sweep", "spectrum", "spectral_map", "static_curves", "parameter_values"]


def parameter_values(d: Derivation, params: Mapping | None) -> dict[str, float]:
    """Real values of every parameter of ``d`` by name (keys may be names or symbols)."""
    out: dict[str, float] = {}
    names = [p.name for p in d.system.parameters]
    for k, v in (params or {}).items():
        name = k if isinstance(k, str) else getattr(k, "name", None)
        if name not in names:
            raise InputError(f"params: unknown parameter {k!r} (model parameters: "
                             f"{', '.join(names) or 'none'})")
        try:
            x = float(v)
        except (TypeError, ValueError):
            raise InputError(f"params: value {v!r} for {name} is not a real number") from None
        if not math.isfinite(x):
            raise InputError(f"params: value {v!r} for {name} is not finite")
        out[name] = x
    missing = [n for n in names if n not in out]
    if missing:
        raise InputError(f"params: give values for {', '.join(missing)}")
    return out


def _positive(name: str, value: object) -> float:
    return positive_float(value, name)


def _args(mod, values: Mapping[str, float]) -> list[float]:
    return [values[n] for n in mod.PARAMETERS_ORIGINAL] if hasattr(mod, "PARAMETERS_ORIGINAL") \
        else [values[n] for n in _original_names(mod, values)]


def _original_names(mod, values: Mapping[str, float]) -> list[str]:
    # Emitted parameter names are the model's, made Python identifiers where needed.
    out = []
    for name in mod.PARAMETERS:
        if name in values:
            out.append(name)
            continue
        match = [n for n in values if name.rstrip("_") == n or name == "p" + n]
        if not match:
            raise InputError(f"pictures: no value for the evaluator parameter {name!r}")
        out.append(match[0])
    return out


def _number(expr: sp.Expr, subs: Mapping) -> complex:
    return complex(sp.N(sp.sympify(expr).xreplace(subs), 20))  # safe: a sympy object


def _subs(d: Derivation, values: Mapping[str, float], T: float | None = None) -> dict:
    subs: dict = {p: sp.Float(values[p.name], 20) for p in d.system.parameters}
    if T is not None:
        subs[beta] = sp.Float(1 / T, 20)
    return subs


# ----------------------------------------------------------------------------- level scheme
@dataclass(frozen=True, slots=True, eq=False)
class LevelScheme:
    """Levels grouped into columns by a quantum number, and the transitions of the response.

    ``energies``, ``degeneracies``, ``groups`` (column value per level, as text) and
    ``labels`` (quantum numbers as text) are per level, sorted by energy; ``arrows`` are
    (lower, upper, frequency, weight) with level positions in that order, sorted by
    decreasing weight; ``group_name`` names the quantity of the columns.
    """

    energies: np.ndarray
    degeneracies: tuple[int, ...]
    groups: tuple[str, ...]
    labels: tuple[str, ...]
    group_name: str
    arrows: tuple[tuple[int, int, float, float], ...]
    temperature: float


def level_scheme(d: Derivation, params: Mapping | None, T: float, *,
                 group: str | None = None) -> LevelScheme:
    """Levels and transitions of ``d`` at ``params`` and temperature ``T``.

    ``group`` is the quantum number that sorts levels into columns (default: the first one
    the levels carry, e.g. ``Sz``; one column when they carry none).
    """
    values = parameter_values(d, params)
    T = _positive("T", T)
    subs = _subs(d, values, T)
    E = np.array([_number(lv.energy, subs).real for lv in d.levels])
    order = np.argsort(E, kind="stable")
    rank = {int(a): k for k, a in enumerate(order)}
    names = [n for lv in d.levels for lab in lv.quantum_numbers for n, _ in lab]
    if group is None:
        group = names[0] if names else ""
    elif group not in names:
        raise InputError(f"level_scheme: group={group!r} is not a quantum number of the levels "
                         f"(they carry: {', '.join(dict.fromkeys(names)) or 'none'})")
    groups, labels = [], []
    for a in order:
        lv = d.levels[int(a)]
        first = lv.quantum_numbers[0] if lv.quantum_numbers else ()
        value = dict(first).get(group, "") if group else ""
        groups.append(str(value))
        labels.append("; ".join(", ".join(f"{n}={v}" for n, v in lab)
                                for lab in lv.quantum_numbers))
    x = np.exp(-(E - E.min()) / T)
    Zr = float(np.sum(np.array([lv.degeneracy for lv in d.levels]) * x))
    pop = x / Zr
    weights: dict[tuple[int, int], float] = {}
    for (a, b), W in d.level_weights.items():
        if a == b:
            continue
        lo, hi = (a, b) if E[a] <= E[b] else (b, a)
        w = abs(((pop[a] - pop[b]) * _number(W, subs)).real)
        weights[(lo, hi)] = max(weights.get((lo, hi), 0.0), w)
    arrows = sorted(((rank[lo], rank[hi], float(E[hi] - E[lo]), w)
                     for (lo, hi), w in weights.items() if w > 0),
                    key=lambda t: (-t[3], t[0], t[1]))
    return LevelScheme(E[order], tuple(int(d.levels[int(a)].degeneracy) for a in order),
                       tuple(groups), tuple(labels), group, tuple(arrows), T)


# ----------------------------------------------------------------------------- sweep
@dataclass(frozen=True, slots=True, eq=False)
class Sweep:
    """Level energies along one parameter: ``energies[i, a]`` at ``x[i]``; ``crossings`` are
    (x, E, a, b) where levels a and b cross (linear interpolation between grid points)."""

    parameter: str
    x: np.ndarray
    energies: np.ndarray
    degeneracies: tuple[int, ...]
    crossings: tuple[tuple[float, float, int, int], ...]


def level_sweep(d: Derivation, params: Mapping | None, parameter: str,
                values: Sequence[float]) -> Sweep:
    """Energies of every level of ``d`` as ``parameter`` runs through ``values`` (the other
    parameters at ``params``), and the points where two levels cross."""
    names = [p.name for p in d.system.parameters]
    if parameter not in names:
        raise InputError(f"level_sweep: parameter={parameter!r} is not a parameter of the model "
                         f"({', '.join(names) or 'none'})")
    x = np.asarray(values, dtype=float)
    if x.ndim != 1 or x.size < 2 or not np.all(np.isfinite(x)):
        raise InputError("level_sweep: values must be at least two finite numbers")
    base = dict(params or {})
    base[parameter] = float(x[0])
    fixed = parameter_values(d, base)
    mod = numpy_functions(d)
    args = []
    for n in _original_names(mod, fixed):
        args.append(x if n == parameter else np.full_like(x, fixed[n]))
    E = np.asarray(mod.energies(*args), dtype=float)
    if E.ndim == 1:
        E = E[None, :].repeat(x.size, axis=0)
    crossings = []
    L = E.shape[1]
    for a in range(L):
        for b in range(a + 1, L):
            diff = E[:, a] - E[:, b]
            tol = 1e-9 * max(1.0, float(np.max(np.abs(E))))
            for i in range(x.size - 1):
                d0, d1 = diff[i], diff[i + 1]
                if abs(d0) <= tol and abs(d1) <= tol:
                    continue                      # degenerate along the way: not a crossing
                if d0 * d1 < 0 or (abs(d1) <= tol < abs(d0) and i + 1 < x.size - 1
                                   and diff[i + 2] * d0 < 0):
                    t = d0 / (d0 - d1) if d0 != d1 else 0.0
                    xc = float(x[i] + t * (x[i + 1] - x[i]))
                    ec = float(E[i, a] + t * (E[i + 1, a] - E[i, a]))
                    crossings.append((xc, ec, a, b))
    degs = tuple(int(g) for g in mod.DEGENERACIES)
    return Sweep(parameter, x, E, degs, tuple(sorted(crossings)))


# ----------------------------------------------------------------------------- spectra
@dataclass(frozen=True, slots=True, eq=False)
class Spectrum:
    r"""Lines :math:`(\Omega_k, \pi w_k)` of :math:`\chi''` and the broadened curve
    :math:`\chi''(\omega)` (Lorentzian half width ``eta``) on ``omega``."""

    lines: tuple[tuple[float, float], ...]
    omega: np.ndarray
    curve: np.ndarray
    temperature: float
    eta: float


def _poles_at(d: Derivation, values: Mapping[str, float], T: float) -> list[tuple[float, float]]:
    subs = _subs(d, values, T)
    return [(_number(Om, subs).real, _number(w, subs).real) for Om, w in d.poles()]


def spectrum(d: Derivation, params: Mapping | None, T: float, *, eta: float | None = None,
             omega: Sequence[float] | None = None) -> Spectrum:
    """Stick lines and the broadened :math:`\\chi''(\\omega)` at temperature ``T``."""
    values = parameter_values(d, params)
    T = _positive("T", T)
    poles = _poles_at(d, values, T)
    top = max([abs(f) for f, _ in poles] + [0.0]) or 1.0
    width = _positive("eta", eta) if eta is not None else 0.02 * top
    # Absorption side by default: chi'' of A = B^dagger is odd in omega.
    grid = (np.asarray(omega, dtype=float) if omega is not None
            else np.linspace(0.0, 1.25 * top + 4 * width, 1201))
    mod = numpy_functions(d)
    curve = np.asarray(mod.chi_spectral(grid, T, *[values[n] for n in _original_names(mod, values)],
                                        eta=width), dtype=complex).real
    lo, hi = float(grid.min()), float(grid.max())
    lines = tuple(sorted((f, math.pi * w) for f, w in poles if lo <= f <= hi))
    return Spectrum(lines, grid, curve, T, width)


@dataclass(frozen=True, slots=True, eq=False)
class SpectralMap:
    r""":math:`\chi''(\omega, T)`: ``values[i, j]`` at ``temperatures[i]``, ``omega[j]``."""

    omega: np.ndarray
    temperatures: np.ndarray
    values: np.ndarray
    eta: float


def spectral_map(d: Derivation, params: Mapping | None, temperatures: Sequence[float], *,
                 eta: float | None = None, omega: Sequence[float] | None = None) -> SpectralMap:
    """The broadened :math:`\\chi''(\\omega)` on a grid of temperatures."""
    values = parameter_values(d, params)
    Ts = np.asarray(temperatures, dtype=float)
    if Ts.ndim != 1 or Ts.size < 2 or not np.all(Ts > 0):
        raise InputError("spectral_map: temperatures must be at least two positive numbers")
    poles = _poles_at(d, values, float(Ts[0]))
    top = max([abs(f) for f, _ in poles] + [0.0]) or 1.0
    width = _positive("eta", eta) if eta is not None else 0.02 * top
    grid = (np.asarray(omega, dtype=float) if omega is not None
            else np.linspace(0.0, 1.25 * top + 4 * width, 401))
    mod = numpy_functions(d)
    vals = np.asarray(mod.chi_spectral(grid[None, :], Ts[:, None],
                                       *[values[n] for n in _original_names(mod, values)],
                                       eta=width), dtype=complex).real
    return SpectralMap(grid, Ts, np.broadcast_to(vals, (Ts.size, grid.size)).copy(), width)


# ----------------------------------------------------------------------------- static
@dataclass(frozen=True, slots=True, eq=False)
class StaticCurves:
    """Isothermal and isolated static susceptibilities on a temperature grid."""

    temperatures: np.ndarray
    isothermal: np.ndarray
    isolated: np.ndarray


def static_curves(d: Derivation, params: Mapping | None,
                  temperatures: Sequence[float]) -> StaticCurves:
    """:math:`\\chi_T(T)` and :math:`\\chi^{\\rm isol}(T)` (real parts) on ``temperatures``."""
    values = parameter_values(d, params)
    Ts = np.asarray(temperatures, dtype=float)
    if Ts.ndim != 1 or Ts.size < 2 or not np.all(Ts > 0) or not np.all(np.isfinite(Ts)):
        raise InputError("static_curves: temperatures must be at least two positive numbers")
    mod = numpy_functions(d)
    args = [values[n] for n in _original_names(mod, values)]
    iso_t = np.asarray(mod.chi_isothermal(Ts, *args), dtype=complex).real
    iso_l = np.asarray(mod.chi_isolated(Ts, *args), dtype=complex).real
    return StaticCurves(Ts, np.broadcast_to(iso_t, Ts.shape).copy(),
                        np.broadcast_to(iso_l, Ts.shape).copy())
