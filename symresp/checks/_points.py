r"""Random parameter points and a high-precision Lehmann evaluator (layer: checks).

Owns the sampling domains used by every check and :class:`LevelData`, the numbers of a
:class:`~symresp.response.Derivation` (level energies, degeneracies, weights
:math:`W_{ab} = \mathrm{Tr}(P_a A P_b B)`, level expectations) at one parameter point, evaluated
with mpmath. From them :func:`lehmann_value` rebuilds, in the convention of the derivation,

.. math::

    Z = \sum_a d_a e^{-\beta E_a}, \qquad
    \chi^{\rm isol} = s\sum_{a \ne b}\frac{(p_a - p_b) W_{ab}}{E_b - E_a}, \qquad
    \chi^{\rm T} = \chi^{\rm isol} + s\beta\Big(\sum_a p_a W_{aa} - \langle A\rangle\langle B\rangle\Big),

    \chi(z) = s\sum_{a \ne b}\frac{(p_a - p_b) W_{ab}}{E_b - E_a - \sigma z}, \qquad
    \chi(t) = s\,i\sum_{a \ne b}(p_a - p_b) W_{ab}\, e^{-i(E_b - E_a)t},

with :math:`s` the perturbation sign and :math:`\sigma` the Fourier sign of the convention.
Because the energies enter as plain numbers, a check can move one level (or rescale a
coupling) and re-evaluate without any symbolic work.

Imports sympy, mpmath, :mod:`symresp.errors`, :mod:`symresp.response`.
"""

from __future__ import annotations

import random
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import mpmath as mp
import sympy as sp

from ..errors import InputError
from ..response import PREC_BITS, PRECISE_DIGITS, STATIC_KINDS, Derivation, evaluate_mp

__all__ = [
    "WORKING_DIGITS",
    "PREC_BITS",
    "LevelData",
    "level_data",
    "lehmann_value",
    "draw_parameters",
    "draw_beta",
    "draw_real",
]

#: Decimal digits of every high-precision evaluation in the checks.
WORKING_DIGITS = PRECISE_DIGITS
#: Magnitudes of random parameter values: |p| in [1/3, 3] (energies of order one).
PARAMETER_RANGE = (sp.Rational(1, 3), sp.Integer(3))
#: Random inverse temperatures: beta in [1/4, 3], from hot to moderately cold.
BETA_RANGE = (sp.Rational(1, 4), sp.Integer(3))
#: Resolution of random rationals: values are lo + (hi - lo) k / _GRID.
_GRID = 997


def draw_real(rng: random.Random, lo: sp.Rational, hi: sp.Rational) -> sp.Rational:
    """A random rational in ``[lo, hi]`` (exact, so both sides of a comparison see one number)."""
    return lo + (hi - lo) * sp.Rational(rng.randint(0, _GRID), _GRID)


def draw_parameters(rng: random.Random, symbols: Sequence[sp.Symbol]) -> dict[sp.Symbol, sp.Rational]:
    """Random values inside the declared domain of each symbol.

    ``positive`` (or ``nonnegative``) symbols get values in ``PARAMETER_RANGE``; other real
    symbols get either sign.
    """
    out: dict[sp.Symbol, sp.Rational] = {}
    for s in symbols:
        v = draw_real(rng, *PARAMETER_RANGE)
        if not (s.is_positive or s.is_nonnegative):
            v = v if rng.random() < 0.5 else -v
        out[s] = v
    return out


def draw_beta(rng: random.Random) -> sp.Rational:
    """A random inverse temperature in ``BETA_RANGE``."""
    return draw_real(rng, *BETA_RANGE)


@dataclass(frozen=True, slots=True, eq=False)
class LevelData:
    """Level energies, degeneracies, weights and expectations of a derivation at one point."""

    energies: tuple[mp.mpf, ...]
    degeneracies: tuple[int, ...]
    weights: tuple[tuple[tuple[int, int], mp.mpc], ...]
    expect_A: tuple[tuple[int, mp.mpc], ...]
    expect_B: tuple[tuple[int, mp.mpc], ...]
    sign: int
    frequency_sign: int

    def reduced_partition(self, beta: mp.mpf, energies: Sequence[mp.mpf] | None = None) -> mp.mpf:
        r""":math:`Z' = \sum_a d_a e^{-\beta(E_a - E_{\min})}` with the lowest level at this point."""
        E = self.energies if energies is None else energies
        e0 = min(E)
        return mp.fsum(d * mp.exp(-beta * (e - e0)) for d, e in zip(self.degeneracies, E))

    def boltzmann(self, beta: mp.mpf, energies: Sequence[mp.mpf] | None = None) -> list[mp.mpf]:
        r""":math:`x_a = e^{-\beta(E_a - E_{\min})}` per level."""
        E = self.energies if energies is None else energies
        e0 = min(E)
        return [mp.exp(-beta * (e - e0)) for e in E]


def level_data(derivation: Derivation, point: Mapping[sp.Symbol, sp.Expr]) -> LevelData:
    """Evaluate the level data of ``derivation`` at the parameter values ``point``."""
    with mp.workprec(PREC_BITS):
        def value(expr: sp.Expr, where: str) -> mp.mpc:
            return evaluate_mp(expr, point, where)

        energies = tuple(value(lv.energy, "level energy").real for lv in derivation.levels)
        weights = tuple((k, value(w, "weight")) for k, w in sorted(derivation.level_weights.items()))
        eA = tuple((a, value(v, "expectation")) for a, v in sorted(derivation.expect_A.items()))
        eB = tuple((a, value(v, "expectation")) for a, v in sorted(derivation.expect_B.items()))
    conv = derivation.convention
    return LevelData(energies, tuple(lv.degeneracy for lv in derivation.levels), weights, eA, eB,
                     conv.sign, conv.frequency_sign)


def lehmann_value(data: LevelData, quantity: str, beta: mp.mpf, *, z: mp.mpc | None = None,
                  time: mp.mpf | None = None, energies: Sequence[mp.mpf] | None = None) -> mp.mpc:
    """One quantity of the response rebuilt from level data (formulas in the module docstring).

    ``energies`` overrides the level energies (same order as the derivation's levels).
    Raises ``ZeroDivisionError`` when an override makes two coupled levels degenerate.
    """
    E = list(data.energies if energies is None else energies)
    with mp.workprec(PREC_BITS):
        x = data.boltzmann(beta, E)
        zr = mp.fsum(d * xa for d, xa in zip(data.degeneracies, x))
        if quantity == "partition":
            return mp.mpc(mp.exp(-beta * min(E)) * zr)
        p = [xa / zr for xa in x]
        s = data.sign
        if quantity in STATIC_KINDS:
            iso = mp.fsum((p[a] - p[b]) * W / (E[b] - E[a]) for (a, b), W in data.weights if a != b)
            if quantity == "isolated":
                return mp.mpc(s * iso)
            diag = mp.fsum(p[a] * W for (a, b), W in data.weights if a == b)
            mA = mp.fsum(p[a] * v for a, v in data.expect_A)
            mB = mp.fsum(p[a] * v for a, v in data.expect_B)
            return mp.mpc(s * (iso + beta * (diag - mA * mB)))
        if quantity == "frequency":
            if z is None:
                raise InputError("lehmann_value: 'frequency' needs z")
            sig = data.frequency_sign
            return mp.mpc(s * mp.fsum((p[a] - p[b]) * W / (E[b] - E[a] - sig * z)
                                      for (a, b), W in data.weights if a != b))
        if quantity == "time":
            if time is None:
                raise InputError("lehmann_value: 'time' needs time")
            return mp.mpc(s * 1j * mp.fsum((p[a] - p[b]) * W * mp.exp(-1j * (E[b] - E[a]) * time)
                                           for (a, b), W in data.weights if a != b))
    raise InputError(f"lehmann_value: unknown quantity {quantity!r}")
