r"""Sample points and the values of both sides there (layer: checks).

:class:`_Comparison` holds one comparison's working state: random points in each parameter's
domain (several inverse temperatures per parameter point), the values of the hand formula and
of the derived quantity there, and the level data that lets a slip be re-tested without
symbolic work. Imports sympy, mpmath, :mod:`symresp.conventions`, :mod:`symresp.errors`,
:mod:`symresp.response`.
"""

from __future__ import annotations

import random
from collections.abc import Mapping
from dataclasses import dataclass

import mpmath as mp
import sympy as sp

from ..conventions import beta, eta, omega, t
from ..errors import InputError
from ..models import checkpoint
from ..response import Derivation, to_mp
from ._formula import _Units, _parameters
from ._points import (WORKING_DIGITS, LevelData, draw_beta, draw_parameters, draw_real,
                      lehmann_value, level_data)

#: Two numbers agree when |a - b| <= AGREE_RTOL max(|a|, |b|) + AGREE_ATOL * scale, scale being
#: the largest magnitude met on either side. Evaluation carries 30 digits, so 1e-15 leaves a wide
#: margin for cancellation inside a formula while no genuine slip comes anywhere near it.
AGREE_RTOL = 1e-15
AGREE_ATOL = 1e-20
#: How many inverse temperatures share one parameter point (needed to recognise factors
#: exp(-beta c) with c independent of beta).
BETAS_PER_POINT = 3
#: Random complex frequencies: Re omega in [-3, 3], |Im omega| in [1/10, 1]; times in [1/10, 4].
_OMEGA_RE = (sp.Integer(-3), sp.Integer(3))
_OMEGA_IM = (sp.Rational(1, 10), sp.Integer(1))
_TIME = (sp.Rational(1, 10), sp.Integer(4))

Number = complex | float


def _py(v: mp.mpc) -> Number:
    """mpmath number -> Python float (when real) or complex, for reports."""
    c = complex(v)
    return c.real if abs(c.imag) <= 1e-14 * max(abs(c.real), 1e-300) else c


@dataclass(frozen=True, slots=True, eq=False)
class _Sample:
    group: int
    params: dict
    beta: sp.Rational
    x: sp.Rational
    y: sp.Rational
    t: sp.Rational


class _Comparison:
    """Working state of one comparison: samples, both sides' values, cached level data."""

    def __init__(self, d: Derivation, quantity: str, theirs: sp.Expr, original: sp.Expr,
                 units: _Units | None, samples: int, seed: int) -> None:
        self.d = d
        self.quantity = quantity
        self.theirs_expr = theirs
        self.original = original
        self.units = units
        self.params = _parameters(d)
        conv = d.convention
        # Half plane where the physical branch lives (docs/conventions.md, section 6).
        self.half = (1 if conv.prescription == "retarded" else -1) * conv.frequency_sign
        self.uses_eta = eta in theirs.free_symbols
        self.rng = random.Random(seed)
        self._cache: dict[tuple, LevelData] = {}
        self.samples: list[_Sample] = []
        self.theirs: list[mp.mpc] = []
        self.ours: list[mp.mpc] = []
        self._fill(samples)

    # ------------------------------------------------------------ drawing and evaluating
    def _draw_group(self, group: int, n: int) -> list[_Sample]:
        params = draw_parameters(self.rng, self.params)
        return [_Sample(group, params, draw_beta(self.rng), draw_real(self.rng, *_OMEGA_RE),
                        draw_real(self.rng, *_OMEGA_IM), draw_real(self.rng, *_TIME))
                for _ in range(n)]

    def _fill(self, n: int) -> None:
        group, failures = 0, 0
        while len(self.samples) < n:
            for s in self._draw_group(group, min(BETAS_PER_POINT, n - len(self.samples))):
                a, b = self.eval_theirs(s), self.eval_ours(s)
                if a is None or b is None:
                    failures += 1
                    if failures > 2 * n + 5:
                        raise InputError(
                            "compare: the formula (or the derived quantity) could not be evaluated "
                            "at most random points of the parameter domain (division by zero?)")
                    continue
                self.samples.append(s)
                self.theirs.append(a)
                self.ours.append(b)
            group += 1

    def data(self, params: Mapping[sp.Symbol, sp.Expr]) -> LevelData:
        key = tuple(sorted((s.name, v) for s, v in params.items()))
        if key not in self._cache:
            self._cache[key] = level_data(self.d, params)
        return self._cache[key]

    def z(self, s: _Sample, half: int | None = None) -> mp.mpc:
        h = self.half if half is None else half
        return mp.mpc(to_mp(s.x).real, h * to_mp(s.y).real)

    def eval_ours(self, s: _Sample, *, params: Mapping | None = None, quantity: str | None = None,
                  beta_value: sp.Expr | None = None, z: mp.mpc | None = None,
                  time: mp.mpf | None = None, energies=None) -> mp.mpc | None:
        q = quantity or self.quantity
        checkpoint("evaluating the derived quantity at the sample points")
        try:
            data = self.data(s.params if params is None else params)
            b = to_mp(s.beta if beta_value is None else beta_value).real
            val = lehmann_value(data, q, b, z=self.z(s) if z is None else z,
                                time=to_mp(s.t).real if time is None else time, energies=energies)
        except (ZeroDivisionError, ValueError, InputError):
            return None
        return val if mp.isfinite(val) else None

    def their_subs(self, s: _Sample, beta_value: sp.Expr | None = None) -> dict:
        subs = dict(s.params)
        subs[beta] = s.beta if beta_value is None else beta_value
        if self.quantity == "frequency":
            if self.uses_eta:
                subs[omega] = s.x
                subs[eta] = s.y
            else:
                subs[omega] = s.x + sp.I * self.half * s.y
        if self.quantity == "time":
            subs[t] = s.t
        return subs

    def eval_theirs(self, s: _Sample, beta_value: sp.Expr | None = None,
                    expr: sp.Expr | None = None) -> mp.mpc | None:
        e = self.theirs_expr if expr is None else expr
        subs = self.their_subs(s, beta_value)
        checkpoint("evaluating the hand formula at the sample points")
        try:
            val = e.xreplace({k: v for k, v in subs.items() if k in e.free_symbols})
            val = val.evalf(n=WORKING_DIGITS)
        except (ValueError, TypeError, ZeroDivisionError, ArithmeticError):
            return None
        if val.free_symbols or val.has(sp.nan, sp.zoo, sp.oo, -sp.oo):
            return None
        try:
            out = to_mp(val)
        except InputError:
            return None
        return out if mp.isfinite(out) else None

    # ------------------------------------------------------------ agreement
    def scale(self, values: list[mp.mpc] | None = None) -> mp.mpf:
        """Magnitude of the quantity for the absolute part of the tolerance: the largest of the
        derived values over the samples (1 when they all vanish).

        Only the derived values set it. A formula that is astronomically large somewhere (say
        exp(exp(1000 beta))) must not make the absolute tolerance so wide that any slip, or
        agreement, seems to reproduce it; far from zero the relative part decides. ``values``
        is accepted for the callers' symmetry and does not enter.
        """
        m = max([abs(v) for v in self.ours] + [mp.mpf(0)])
        return m if m > 0 else mp.mpf(1)

    def close(self, a: mp.mpc, b: mp.mpc, scale: mp.mpf) -> bool:
        return abs(a - b) <= AGREE_RTOL * max(abs(a), abs(b)) + AGREE_ATOL * scale

    def matches(self, values: list[mp.mpc | None], theirs: list[mp.mpc] | None = None) -> bool:
        """True when ``values`` reproduce the formula at every sample."""
        th = self.theirs if theirs is None else theirs
        if any(v is None for v in values):
            return False
        sc = self.scale(values)
        return all(self.close(a, b, sc) for a, b in zip(th, values))

    def point(self, s: _Sample) -> dict[str, Number]:
        """The sample in the user's names and units (for the counterexample)."""
        kB = float(self.units.k_B) if self.units else 1.0
        hb = float(self.units.hbar) if self.units else 1.0
        out: dict[str, Number] = {p.name: float(v) for p, v in s.params.items()}
        used = {x.name for x in self.original.free_symbols}
        b = float(s.beta)
        if "T" in used and "beta" not in used:
            out["T"] = 1.0 / (kB * b)
        else:
            out["beta"] = b
        if self.quantity == "frequency":
            if self.uses_eta:
                out["omega"] = float(s.x) / hb
                out["eta"] = float(s.y) / hb
            else:
                out["omega"] = complex(float(s.x), self.half * float(s.y)) / hb
        if self.quantity == "time":
            out["t"] = float(s.t) * hb
        return out

    def their_value(self, v: mp.mpc) -> Number:
        """A value of the formula in the user's units."""
        if self.quantity == "time" and self.units is not None:
            return _py(v / to_mp(self.units.hbar).real)
        return _py(v)

    def counterexample(self) -> tuple[dict[str, Number], Number, Number] | None:
        sc = self.scale(self.ours)
        for s, a, b in zip(self.samples, self.theirs, self.ours):
            if not self.close(a, b, sc):
                return self.point(s), self.their_value(a), self.their_value(b)
        return None
