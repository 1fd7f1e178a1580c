r"""Resonance (ESR) fields at a fixed microwave frequency (layer: emit).

Owns :class:`Resonance` and :func:`resonance_fields`. Imports numpy, sympy,
:mod:`symresp.algebra`, :mod:`symresp.models`,
:mod:`symresp.response`, :mod:`symresp.checks` (compiling closed forms to numpy) and the emit
modules for units and the Zeeman term.

A field :math:`\mathbf B = B\mathbf n` (``zeeman``) makes the levels :math:`E_a(B)`; the
microwave field, linearly polarised along :math:`\mathbf v \perp \mathbf n`, drives the moment
:math:`V = \mu_v/\mu_B` (``magnetic_moment``). A transition :math:`a \to b` with
:math:`W_{ab} = \mathrm{Tr}(P_aVP_bV) \ne 0` (allowed) resonates where

.. math:: |E_b(B) - E_a(B)| = h\nu,

its intensity at temperature T is :math:`I = (p_a - p_b)\,W_{ab}` (lower level a, per-state
populations :math:`p = e^{-E/k_BT}/Z`), the line strength of :math:`\chi''` at that field in
units of :math:`\mu_B^2`. The integrated intensity of a field-swept line carries the further
factor :math:`1/|\partial(E_b - E_a)/\partial B|`, reported as ``slope``.

The resonance fields are exact where the level spacing is an explicit closed form: the
equation is solved by sympy (``exact`` holds the expression, e.g. :math:`h\nu/(g\mu_B)`);
otherwise, or when sympy finds no closed solution, the spacing is scanned on a grid and every
bracketed root refined by bisection to a relative width of 1e-15 (``method = "numeric"``).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from fractions import Fraction

import numpy as np
import sympy as sp

from .._public import public
from ..algebra import Operator, SpinSite
from ..errors import InputError
from ..models import Budget, System
from ..response import compile_expression, derive
from ..spectrum import LevelRoot
from ._magnet import field_direction, magnetic_moment
from ._units import (EXACT, TEMPERATURE_UNITS, energy_in_joule_exact, temperature_unit_name,
                     zeeman_constant)

__all__ = ["Resonance", "resonance_fields", "DEFAULT_FREQUENCY_GHZ", "DEFAULT_MAX_FIELD"]

#: X-band frequency used when none is given (GHz; common practice).
DEFAULT_FREQUENCY_GHZ = 9.4
#: Upper end of the field sweep (tesla) when none is given.
DEFAULT_MAX_FIELD = 2.0
#: Grid of the numeric scan and the tolerance of a resonance.
_SCAN_POINTS = 4001
_RESONANCE_RTOL = 1e-9


@dataclass(frozen=True, slots=True)
class Resonance:
    """One resonance line at the fixed frequency.

    Attributes
    ----------
    field : float
        Resonance field in tesla.
    exact : sympy.Expr or None
        The field as an exact expression when it was solved symbolically.
    lower, upper : int
        Levels of the derivation (lower in energy at the resonance field first).
    energies : (float, float)
        Their energies at the resonance field, in the energy unit.
    weight : float
        :math:`W_{ab}` at the resonance field (:math:`\\mu_B^2`).
    population : float
        :math:`p_a - p_b` per state at the temperature.
    intensity : float
        ``population * weight``.
    slope : float
        :math:`\\partial(E_b - E_a)/\\partial B` at resonance (energy unit per tesla).
    method : {"exact", "numeric"}
    """

    field: float
    exact: sp.Expr | None
    lower: int
    upper: int
    energies: tuple[float, float]
    weight: float
    population: float
    intensity: float
    slope: float
    method: str


def _perpendicular(n: Sequence[sp.Expr]) -> tuple[sp.Expr, sp.Expr, sp.Expr]:
    """A unit vector perpendicular to n: along z x n, or x when n is along z."""
    cross = (-n[1], n[0], sp.Integer(0))
    norm2 = sp.nsimplify(cross[0] ** 2 + cross[1] ** 2)  # safe: sympy objects computed here, never user text
    if norm2 == 0:
        return (sp.Integer(1), sp.Integer(0), sp.Integer(0))
    return tuple(sp.radsimp(c / sp.sqrt(norm2)) for c in cross)  # type: ignore[return-value]


def _along(handles, direction, build) -> Operator:
    """sum over the axes of build(component, axis): an operator along an exact unit vector."""
    total = Operator((), frozenset(h.site for h in handles))
    for c, axis in zip(direction, ("x", "y", "z")):
        if c != 0:
            total = total + build(c, axis)
    return total


def _exact_number(value: object, where: str) -> sp.Rational:
    if isinstance(value, bool) or not isinstance(value, (int, float, Fraction, sp.Rational)):
        raise InputError(f"{where}={value!r} must be a positive number")
    if isinstance(value, float) and not np.isfinite(value):
        raise InputError(f"{where}={value!r} must be a positive finite number")
    q = sp.Rational(repr(value)) if isinstance(value, float) else sp.Rational(value)
    if not q > 0 or not np.isfinite(float(q)):
        raise InputError(f"{where}={value!r} must be a positive finite number")
    return q


@public
def resonance_fields(hamiltonian: object, g_by_site: Mapping, *,
                     frequency: float = DEFAULT_FREQUENCY_GHZ, temperature: float = 4.0,
                     direction: object = "z", microwave: object | None = None,
                     energy_unit: str = "K", temperature_unit: str = "K",
                     max_field: float = DEFAULT_MAX_FIELD, budget: Budget = Budget()
                     ) -> tuple[Resonance, ...]:
    r"""Resonance fields of the allowed transitions at a fixed microwave frequency.

    Parameters
    ----------
    hamiltonian : Operator
        The zero-field Hamiltonian in ``energy_unit``, with numbers for every parameter.
    g_by_site : mapping
        ``{spin_site: g}`` (see :func:`symresp.zeeman`).
    frequency : float
        Microwave frequency in GHz (default 9.4, X band).
    temperature : float
        Temperature of the populations, in ``temperature_unit``.
    direction : {"x", "y", "z"} or three numbers
        Direction of the static field.
    microwave : {"x", "y", "z"}, three numbers or None
        Polarisation of the microwave field (default: perpendicular to ``direction``, along
        :math:`\mathbf z\times\mathbf n`, or x for a field along z).
    energy_unit, temperature_unit : str
    max_field : float
        Resonances are searched for in (0, max_field] tesla.
    budget : Budget
        Time limit of the derivation.

    Returns
    -------
    tuple of Resonance
        Sorted by field.

    Raises
    ------
    InputError
        If the Hamiltonian still has symbolic parameters, or on bad arguments.

    Examples
    --------
    A free spin 1/2 with g = 2.0023 at 9.4 GHz resonates at :math:`h\nu/(g\mu_B)` = 0.3354 T:

    >>> import sympy as sp, symresp as sr
    >>> from symresp.emit import resonance_fields
    >>> s = sr.spin("s", sp.Rational(1, 2))
    >>> (line,) = resonance_fields(0 * s.z, {s: 2.0023}, temperature=4.0)
    >>> round(line.field, 4), line.method
    (0.3354, 'exact')
    """
    H0 = hamiltonian if isinstance(hamiltonian, Operator) else None
    if H0 is None:
        raise InputError("resonance_fields: hamiltonian must be an operator expression")
    if H0.free_symbols:
        names = ", ".join(sorted(s.name for s in H0.free_symbols))
        raise InputError(f"resonance_fields: give numbers to {names} first (the resonance fields "
                         f"are found at fixed parameters)")
    nu = _exact_number(frequency, "frequency")
    Tq = _exact_number(temperature, "temperature")
    Bmax = float(_exact_number(max_field, "max_field"))
    t_unit = temperature_unit_name(temperature_unit)
    e_unit = energy_in_joule_exact(energy_unit)
    T = float(TEMPERATURE_UNITS[t_unit] * Fraction(Tq.p, Tq.q) / e_unit)
    hnu = EXACT["h"] * Fraction(nu.p, nu.q) * 10**9 / e_unit           # h nu in the energy unit
    w0 = sp.Rational(hnu.numerator, hnu.denominator)
    n = field_direction(direction, where="resonance_fields: direction")
    v = _perpendicular(n) if microwave is None else field_direction(
        microwave, where="resonance_fields: microwave")
    handles = {site: g for site, g in g_by_site.items()} if isinstance(g_by_site, Mapping) else None
    if not handles or any(not isinstance(s, SpinSite) for s in handles):
        raise InputError("resonance_fields: g_by_site must map spin sites to their g")
    # The field enters in energy units, F = (mu_B/E_u) B: the Zeeman term without the large
    # exact rational mu_B/E_u in the symbolic work; B = F/(mu_B/E_u) exactly at the end.
    Bsym = sp.Symbol("F_res", nonnegative=True)
    c = zeeman_constant(energy_unit)
    cq = sp.Rational(c.numerator, c.denominator)
    Hz = -Bsym * _along(handles, n, lambda k, axis: k * magnetic_moment(handles, direction=axis))
    V = _along(handles, v,
               lambda k, axis: k * magnetic_moment(handles, direction=axis))
    sites = tuple(h.site for h in handles) + tuple(H0.sites)
    system = System.build(H0 + Hz, extra_sites=sites)
    d = derive(system, V, V, budget=budget)
    clock = budget.start()
    energies = [compile_expression(lv.energy, [Bsym], backend="numpy") for lv in d.levels]
    degeneracy = np.array([lv.degeneracy for lv in d.levels], dtype=float)
    out: list[Resonance] = []
    for tr in d.transitions():
        clock.check("the resonance search", f"transition {tr.lower} -> {tr.upper}")
        if tr.lower > tr.upper:
            continue
        Om = sp.sympify(tr.frequency)  # safe: sympy object of the derivation
        Wf = compile_expression(tr.matrix_weight, [Bsym], backend="numpy")
        Fmax = Bmax * float(c)
        fields = _solve_exact(Om, Bsym, w0, Fmax)
        method = "exact"
        if fields is None:
            method = "numeric"
            fields = [(f, None) for f in _solve_numeric(energies[tr.upper], energies[tr.lower],
                                                        float(w0), Fmax)]
        for b, exact in fields:
            E = np.array([float(np.real(f(b))) for f in energies])
            a_, b_ = (tr.lower, tr.upper) if E[tr.lower] <= E[tr.upper] else (tr.upper, tr.lower)
            x = np.exp(-(E - E.min()) / T)
            p = x / (degeneracy * x).sum()
            W = float(np.real(Wf(b)))
            if W <= 0:
                continue
            h = 1e-6 * max(b, 1e-3)
            slope = (float(np.real(energies[b_](b + h) - energies[a_](b + h)))
                     - float(np.real(energies[b_](b - h) - energies[a_](b - h)))) / (2 * h)
            field = float(b) / float(c)
            exact_B = (None if exact is None else sp.nsimplify(exact / cq)  # safe: sympy numbers
                       if exact.is_Rational else exact / cq)
            out.append(Resonance(field, exact_B, a_, b_, (float(E[a_]), float(E[b_])), W,
                                 float(p[a_] - p[b_]), float((p[a_] - p[b_]) * W),
                                 slope * float(c), method))
    return tuple(sorted(out, key=lambda r: (r.field, r.lower, r.upper)))


def _solve_exact(Om: sp.Expr, B: sp.Symbol, w0: sp.Rational, Bmax: float):
    """Exact roots of |Om(B)| = w0 in (0, Bmax] (B in the unit of the symbol), or None when the
    spacing is implicit or sympy
    gives no closed solution."""
    if Om.has(LevelRoot, sp.CRootOf):
        return None
    roots = []
    for target in (w0, -w0):
        try:
            sols = sp.solve(sp.Eq(Om, target), B, dict=False)
        except (NotImplementedError, ValueError):
            return None
        for s in sols:
            if s.has(sp.CRootOf, sp.RootOf) or s.free_symbols:
                return None
            val = complex(sp.N(s, 30))
            if abs(val.imag) > 1e-12 * max(1.0, abs(val.real)):
                continue
            b = val.real
            if 0 < b <= Bmax * (1 + 1e-12):
                check = complex(sp.N(Om.subs(B, s), 30))
                if abs(abs(check) - float(w0)) <= _RESONANCE_RTOL * float(w0):
                    roots.append((b, sp.nsimplify(s) if s.is_Rational else s))  # safe: sympy objects computed here, never user text
    roots.sort(key=lambda r: r[0])
    dedup = []
    for b, e in roots:
        if not dedup or abs(b - dedup[-1][0]) > 1e-12 * max(1.0, b):
            dedup.append((b, e))
    return dedup


def _bisect(g, lo: float, hi: float) -> float:
    """A root of g in [lo, hi], where g changes sign, by bisection (to rounding)."""
    glo = g(lo)
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if mid <= lo or mid >= hi or hi - lo <= 1e-15 * max(abs(lo), abs(hi)):
            break
        gm = g(mid)
        if gm == 0:
            return mid
        if (gm > 0) == (glo > 0):
            lo, glo = mid, gm
        else:
            hi = mid
    return 0.5 * (lo + hi)


def _solve_numeric(Eb, Ea, w0: float, Bmax: float) -> list[float]:
    """Roots of |Eb(B) - Ea(B)| - w0 on (0, Bmax]: sign changes on a grid, refined by bisection."""
    grid = np.linspace(0.0, Bmax, _SCAN_POINTS)
    f = np.abs(np.real(np.asarray(Eb(grid) - Ea(grid), dtype=complex))) - w0

    def g(b: float) -> float:
        return abs(float(np.real(Eb(b) - Ea(b)))) - w0

    out = []
    for i in range(len(grid) - 1):
        if f[i] == 0 and grid[i] > 0:
            out.append(float(grid[i]))
        elif f[i] * f[i + 1] < 0:
            out.append(_bisect(g, float(grid[i]), float(grid[i + 1])))
    if f[-1] == 0:
        out.append(float(grid[-1]))
    return out
