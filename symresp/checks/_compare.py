r"""Comparison of a hand-derived formula with a derivation (layer: checks).

Owns :func:`compare` and its result :class:`Verdict`. Imports sympy, mpmath,
:mod:`symresp.conventions`, :mod:`symresp.errors`, :mod:`symresp.response`,
:mod:`symresp.text` (the safe parser: user text never reaches ``eval``, ``sympify`` or
``parse_expr``) and :mod:`._points`.

How a verdict is reached
------------------------
1. The formula is parsed against the names it may use: the model parameters, ``beta`` and
   ``T`` (:math:`T = 1/\beta`), ``omega`` and ``eta`` for ``"frequency"``, ``t`` for
   ``"time"``, and ``k_B``, ``hbar`` when units are given.
2. Both sides are evaluated with 30 significant digits at random points of the declared domain
   (positive or real parameters, :math:`\beta > 0`, complex :math:`\omega` in the analytic half
   plane of the convention, :math:`t > 0`). Any differing point is a counterexample.
3. When every point agrees and the expressions are small, the difference is reduced to zero
   symbolically (``tanh``/``cosh`` rewritten as exponentials, each independent exponential
   replaced by a symbol) and the verdict is marked exact.
4. When they differ, each common slip is applied to our result (or to the formula) and tested
   at the same points; the first that reproduces the formula everywhere is named.
"""

from __future__ import annotations

import math
import random
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from fractions import Fraction
from numbers import Real
from typing import Literal

import mpmath as mp
import sympy as sp

from .._public import public
from ..conventions import T, beta, eta, omega, t
from ..errors import InputError
from ..models import checkpoint
from ..response import CHECKED_QUANTITIES, Derivation, Quantity, check_quantity, to_mp
from ..text import ParseError, parse_scalar
from ._points import (PREC_BITS, WORKING_DIGITS, LevelData, draw_beta, draw_parameters, draw_real,
                      lehmann_value, level_data)

__all__ = ["Verdict", "compare", "Quantity", "QUANTITIES"]

#: The quantities whose hand formula can be compared (the registry's ``checked`` ones).
QUANTITIES = CHECKED_QUANTITIES

#: Two numbers agree when |a - b| <= AGREE_RTOL max(|a|, |b|) + AGREE_ATOL * scale, scale being
#: the largest magnitude met on either side. Evaluation carries 30 digits, so 1e-15 leaves a wide
#: margin for cancellation inside a formula while no genuine slip comes anywhere near it.
AGREE_RTOL = 1e-15
AGREE_ATOL = 1e-20
#: A formula within this relative deviation everywhere (but not within AGREE_RTOL) is reported
#: as "agrees only to N digits" (rounded constants).
ROUNDED_RTOL = 1e-3
#: Largest ``count_ops`` of either side for the symbolic proof (about a second on this size);
#: larger expressions are decided by sampling.
MAX_EXACT_OPS = 400
#: Default number of random points, and how many inverse temperatures share one parameter point
#: (needed to recognise factors exp(-beta c) with c independent of beta).
DEFAULT_SAMPLES = 9
BETAS_PER_POINT = 3
#: Partition-function and level-energy fits are attempted for at most this many levels.
MAX_FIT_LEVELS = 10
#: Denominators allowed when a fitted energy is written back as a rational combination.
_MAX_DENOMINATOR = 24
#: Random complex frequencies: Re omega in [-3, 3], |Im omega| in [1/10, 1]; times in [1/10, 4].
_OMEGA_RE = (sp.Integer(-3), sp.Integer(3))
_OMEGA_IM = (sp.Rational(1, 10), sp.Integer(1))
_TIME = (sp.Rational(1, 10), sp.Integer(4))
#: Factors tested as overall-factor slips, with their names.
_FACTORS = ((sp.Integer(2), "2"), (sp.Rational(1, 2), "1/2"), (sp.Integer(4), "4"),
            (sp.Rational(1, 4), "1/4"), (sp.Integer(-2), "-2"), (sp.Rational(-1, 2), "-1/2"))
#: Coupling conventions: the formula equals ours with p -> k p.
_COUPLINGS = (sp.Integer(2), sp.Rational(1, 2), sp.Integer(-1), sp.Integer(-2), sp.Rational(-1, 2))

Number = complex | float


@public
@dataclass(frozen=True, slots=True)
class Verdict:
    r"""Outcome of comparing a hand-derived formula with a derivation.

    Attributes
    ----------
    agrees : bool
        True when the formula equals the derived quantity.
    diagnosis : str or None
        For a formula that differs, the recognised slip in words (``"overall sign: ..."``);
        None when it agrees or when no common slip reproduces it.
    counterexample : tuple or None
        ``(point, theirs, ours)``: a point (names as used in the formula, plus the model
        parameters) where the two differ, and both values there.
    confidence : str
        How the verdict was reached (a symbolic proof, or how many random points agree).
    method : {"exact", "sampling"}
        ``"exact"`` when the agreement was proved symbolically.
    slip : str or None
        A short machine-readable code of the diagnosis (``"sign"``, ``"factor"``,
        ``"T-beta"``, ``"isolated-for-isothermal"``, ``"isothermal-for-isolated"``,
        ``"advanced"``, ``"omega-reversed"``, ``"t-reversed"``, ``"partition-missing"``,
        ``"partition-extra"``, ``"partition-level-missing"``, ``"partition-degeneracy"``,
        ``"partition-constant"``, ``"partition-extra-term"``, ``"energy-zero"``, ``"coupling"``,
        ``"mean-product-missing"``, ``"multiplet-energy"``, ``"level-energy"``, ``"rounded"``,
        ``"partial"``).
    quantity : str
        The quantity compared.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.checks import compare
    >>> s = sr.spin("s", sp.Rational(1, 2))
    >>> d = sr.Model(0 * s.z).response(s.z).derivation
    >>> v = compare(d, "beta/4")              # Curie law of a free spin 1/2
    >>> v.agrees, v.method
    (True, 'exact')
    >>> print(compare(d, "beta/4", "isolated").text().splitlines()[0])
    differs: your expression is the isothermal susceptibility; the isolated one (chi(omega -> 0)) leaves out beta/4

    See Also
    --------
    compare
    """

    agrees: bool
    diagnosis: str | None
    counterexample: tuple[dict[str, Number], Number, Number] | None
    confidence: str
    method: Literal["exact", "sampling"]
    slip: str | None = None
    quantity: str = "isothermal"

    def text(self) -> str:
        """The verdict in words: ``"agrees (exact)"``, ``"differs: overall sign"`` plus details."""
        if self.agrees:
            return "agrees (exact)" if self.method == "exact" else f"agrees (sampling: {self.confidence})"
        head = f"differs: {self.diagnosis}" if self.diagnosis else "differs (no common slip recognised)"
        lines = [head, f"  checked: {self.confidence}"]
        if self.counterexample is not None:
            point, theirs, ours = self.counterexample
            where = ", ".join(f"{k} = {_fmt(v)}" for k, v in point.items())
            lines.append(f"  at {where}: yours = {_fmt(theirs)}, ours = {_fmt(ours)}")
        return "\n".join(lines)

    def __str__(self) -> str:
        return self.text()


def _fmt(v: Number) -> str:
    if isinstance(v, complex):
        return f"{v.real:.10g}{v.imag:+.10g}j"
    return f"{v:.10g}"


def _py(v: mp.mpc) -> Number:
    """mpmath number -> Python float (when real) or complex, for reports."""
    c = complex(v)
    return c.real if abs(c.imag) <= 1e-14 * max(abs(c.real), 1e-300) else c


# ----------------------------------------------------------------------------- input
@dataclass(frozen=True, slots=True)
class _Units:
    k_B: sp.Rational
    hbar: sp.Rational


def _check_units(units: object) -> _Units | None:
    if units is None:
        return None
    if not isinstance(units, Mapping):
        raise InputError(f"compare: units={units!r} must be None or a mapping like {{'k_B': 1, 'hbar': 1}}")
    values = {"k_B": sp.Integer(1), "hbar": sp.Integer(1)}
    for key, val in units.items():
        if key not in values:
            raise InputError(f"compare: units key {key!r} is not one of 'k_B', 'hbar'")
        if isinstance(val, bool) or not isinstance(val, (Real, sp.Rational)):
            raise InputError(f"compare: units[{key!r}]={val!r} must be a positive number")
        exact = sp.Rational(repr(val)) if isinstance(val, float) else sp.Rational(val)
        if not exact > 0 or not math.isfinite(float(exact)):
            raise InputError(f"compare: units[{key!r}]={val!r} must be a positive finite number")
        values[key] = exact
    return _Units(values["k_B"], values["hbar"])


def _unit_symbols() -> dict[str, sp.Symbol]:
    return {"k_B": sp.Symbol("k_B", positive=True), "hbar": sp.Symbol("hbar", positive=True)}


def _parameters(d: Derivation) -> tuple[sp.Symbol, ...]:
    syms = set(d.system.parameters) | d.A.free_symbols | d.B.free_symbols
    return tuple(sorted(syms, key=lambda s: s.name))


def _allowed_symbols(d: Derivation, quantity: str, units: _Units | None) -> dict[str, sp.Symbol]:
    names: dict[str, sp.Symbol] = {p.name: p for p in _parameters(d)}
    names["beta"] = beta
    names["T"] = T
    if quantity == "frequency":
        names["omega"] = omega
        names["eta"] = eta
    if quantity == "time":
        names["t"] = t
    if units is not None:
        names.update(_unit_symbols())
    return names


def _as_formula(formula: object, names: Mapping[str, sp.Symbol], quantity: str,
                units: _Units | None) -> sp.Expr:
    """Parse text with the safe parser, or validate a sympy expression; map names to our symbols."""
    if isinstance(formula, str):
        try:
            expr = parse_scalar(formula, names, source="<formula>")
        except ParseError as err:
            # a name of another quantity (omega in a static formula): say why it is refused
            word = err.reason.split("'")[1] if err.reason.startswith("unknown name '") else ""
            hint = _hint([word], quantity, units) if word else ""
            if not hint:
                raise
            raise ParseError(f"{err.reason}{hint}", source=err.source, line=err.line,
                             column=err.column, excerpt=err.excerpt) from None
    elif isinstance(formula, sp.Expr):
        expr = formula
    elif isinstance(formula, (int, Fraction)) and not isinstance(formula, bool):
        expr = sp.Rational(formula)
    else:
        raise InputError(f"compare: formula={formula!r} must be a string or a sympy expression")
    unknown = sorted(s.name for s in expr.free_symbols if s.name not in names)
    if unknown:
        hint = _hint(unknown, quantity, units)
        raise InputError(f"compare: the formula uses {', '.join(map(repr, unknown))}, which is not "
                         f"one of the allowed names {', '.join(sorted(names))}{hint}")
    # A sympy Symbol('J') typed by the user carries other assumptions than the model's J:
    # identify symbols by name.
    return expr.xreplace({s: names[s.name] for s in expr.free_symbols})


def _hint(unknown: list[str], quantity: str, units: _Units | None) -> str:
    if "omega" in unknown or "eta" in unknown:
        return f" (omega and eta belong to quantity 'frequency', not {quantity!r})"
    if "t" in unknown:
        return f" (t belongs to quantity 'time', not {quantity!r})"
    if ("k_B" in unknown or "hbar" in unknown) and units is None:
        return " (k_B and hbar are accepted when units={'k_B': ..., 'hbar': ...} is given)"
    return ""


def _to_internal(expr: sp.Expr, quantity: str, units: _Units | None) -> sp.Expr:
    r"""Rewrite the formula in symresp's variables (:math:`\hbar = k_B = 1`, :math:`\beta`).

    :math:`T \to 1/(k_B\beta)`, :math:`\omega \to \omega/\hbar`, :math:`\eta \to \eta/\hbar`,
    :math:`t \to \hbar t`; a response in time carries the factor :math:`1/\hbar`, so
    :math:`\chi_{\rm ours}(t) = \hbar\,\chi_{\rm yours}(\hbar t)`.
    """
    kB = units.k_B if units else sp.Integer(1)
    hb = units.hbar if units else sp.Integer(1)
    subs: dict[sp.Symbol, sp.Expr] = {T: 1 / (kB * beta)}
    if quantity == "frequency":
        subs[omega] = omega / hb
        subs[eta] = eta / hb
    if quantity == "time":
        subs[t] = hb * t
    if units is not None:
        us = _unit_symbols()
        subs[us["k_B"]] = kB
        subs[us["hbar"]] = hb
    out = expr.xreplace(subs)
    return hb * out if quantity == "time" else out


# ----------------------------------------------------------------------------- exact proof
def _exp_to_symbols(expr: sp.Expr) -> sp.Expr:
    """Replace every exponential by powers of one fresh symbol per independent exponent.

    ``exp(c1*m + c2*n)`` with rational c's becomes ``X_m**(c1*L_m) * X_n**(c2*L_n)``. This is a
    ring homomorphism, so a zero polynomial proves a zero function (the converse is not claimed).
    """
    exps = list(expr.atoms(sp.exp))
    terms: dict[sp.exp, list[tuple[sp.Rational, sp.Expr]]] = {}
    denominators: dict[sp.Expr, int] = {}
    for e in exps:
        parts = []
        for term in sp.Add.make_args(sp.expand(e.args[0])):
            c, m = term.as_coeff_Mul()
            if not c.is_Rational:
                c, m = sp.Integer(1), term
            parts.append((c, m))
            if m != 1:
                denominators[m] = math.lcm(denominators.get(m, 1), int(c.q))
        terms[e] = parts
    symbols = {m: sp.Dummy("X") for m in denominators}
    repl = {}
    for e, parts in terms.items():
        val = sp.Integer(1)
        for c, m in parts:
            val *= sp.exp(c) if m == 1 else symbols[m] ** (c * denominators[m])
        repl[e] = val
    return expr.xreplace(repl)


def _prove_equal(a: sp.Expr, b: sp.Expr) -> bool:
    """True when a - b reduces to zero symbolically (False means: not proved)."""
    if a.has(sp.Float, sp.CRootOf) or b.has(sp.Float, sp.CRootOf):
        return False
    diff = a - b
    if diff == 0:
        return True
    if sp.count_ops(a) > MAX_EXACT_OPS or sp.count_ops(b) > MAX_EXACT_OPS:
        return False
    diff = diff.rewrite(sp.exp)
    diff = _exp_to_symbols(diff)
    num, _ = sp.fraction(sp.together(diff))
    return sp.expand(num) == 0


# ----------------------------------------------------------------------------- sampling
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
    def scale(self, values: list[mp.mpc]) -> mp.mpf:
        m = max([abs(v) for v in self.theirs] + [abs(v) for v in values] + [mp.mpf(0)])
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


# ----------------------------------------------------------------------------- slips
Slip = tuple[str, str]  # (code, diagnosis)


def _slip_factor(c: _Comparison) -> Slip | None:
    if c.matches([-v for v in c.ours]):
        return "sign", "overall sign: your expression is minus ours"
    for k, name in _FACTORS:
        kk = to_mp(k).real
        if c.matches([kk * v for v in c.ours]):
            if k < 0:
                return "factor", f"overall sign and factor {name[1:]}: your expression is {name} times ours"
            return "factor", f"overall factor {name}: your expression is {name} times ours"
    return None


def _slip_temperature(c: _Comparison) -> Slip | None:
    if beta not in c.theirs_expr.free_symbols:
        return None
    kB = c.units.k_B if c.units else sp.Integer(1)
    swapped = [c.eval_theirs(s, beta_value=1 / (kB * s.beta)) for s in c.samples]
    if any(v is None for v in swapped):
        return None
    sc = c.scale(c.ours)
    if all(c.close(a, b, sc) for a, b in zip(swapped, c.ours)):
        return "T-beta", ("T and beta swapped: your expression becomes ours when T and beta = 1/T "
                          "are exchanged")
    return None


def _slip_static_kind(c: _Comparison) -> Slip | None:
    if c.quantity not in ("isothermal", "isolated"):
        return None
    other = "isolated" if c.quantity == "isothermal" else "isothermal"
    if not c.matches([c.eval_ours(s, quantity=other) for s in c.samples]):
        return None
    term = sp.sstr(c.d.variance_term())
    if c.quantity == "isothermal":
        return ("isolated-for-isothermal",
                f"your expression is the isolated susceptibility; the isothermal one adds {term}")
    return ("isothermal-for-isolated",
            f"your expression is the isothermal susceptibility; the isolated one (chi(omega -> 0)) "
            f"leaves out {term}")


def _slip_prescription(c: _Comparison) -> Slip | None:
    if c.quantity == "frequency":
        if c.matches([c.eval_ours(s, z=c.z(s, -c.half)) for s in c.samples]):
            if c.half > 0:
                return "advanced", ("advanced instead of retarded: your expression is ours at "
                                    "omega - i0+ (the complex conjugate for A = B^dagger); the "
                                    "retarded function is analytic for Im omega > 0")
            return "advanced", ("retarded instead of advanced: your expression is ours at omega + i0+, "
                                "while the convention of this derivation puts the physical branch "
                                "at omega - i0+")
        if c.matches([c.eval_ours(s, z=-c.z(s)) for s in c.samples]):
            return "omega-reversed", ("advanced instead of retarded (omega -> -omega): your expression "
                                      "is ours with omega replaced by -omega (reversed Fourier sign)")
    if c.quantity == "time":
        if c.matches([c.eval_ours(s, time=-to_mp(s.t).real) for s in c.samples]):
            return "t-reversed", "time reversed: your expression is ours with t -> -t"
    return None


def _groups(c: _Comparison) -> dict[int, list[int]]:
    out: dict[int, list[int]] = {}
    for i, s in enumerate(c.samples):
        out.setdefault(s.group, []).append(i)
    return out


def _exp_shift(c: _Comparison, ratios: list[mp.mpc | None]) -> list[tuple[dict, mp.mpf]] | None:
    """If ratio_i = exp(-beta_i c_g) with one real c_g per parameter point g, the list of (params, c_g)."""
    out = []
    for g, idx in _groups(c).items():
        if len(idx) < 2:
            continue
        cs = []
        for i in idx:
            r = ratios[i]
            if r is None or abs(r.imag) > AGREE_RTOL * abs(r) or not r.real > 0:
                return None
            cs.append(-mp.log(r.real) / to_mp(c.samples[i].beta).real)
        ref = cs[0]
        if any(abs(x - ref) > 1e-12 * (1 + abs(ref)) for x in cs[1:]):
            return None
        out.append((c.samples[idx[0]].params, ref))
    return out or None


def _reduced_z(c: _Comparison, s: _Sample) -> mp.mpf:
    return c.data(s.params).reduced_partition(to_mp(s.beta).real)


def _slip_partition(c: _Comparison) -> Slip | None:
    """Missing or extra partition function, or (for Z itself) a shifted energy zero."""
    if any(abs(v) == 0 for v in c.ours) or any(abs(v) == 0 for v in c.theirs):
        return None
    ratio = [a / b for a, b in zip(c.theirs, c.ours)]
    if c.quantity == "partition":
        shift = _exp_shift(c, ratio)
        if shift and any(abs(x) > 1e-12 for _, x in shift):
            cexpr = _identify(c, shift)
            return "energy-zero", (f"an overall factor exp(-beta*c): energy zero shifted by "
                                   f"c = {cexpr} (Z depends on it, the susceptibilities do not)")
        return None
    zr = [_reduced_z(c, s) for s in c.samples]
    Z = sp.sstr(c.d.partition())
    if _exp_shift(c, [r / z for r, z in zip(ratio, zr)]):
        return "partition-missing", (f"missing partition function: your expression is ours times Z; "
                                     f"divide by Z = {Z}")
    if _exp_shift(c, [r * z for r, z in zip(ratio, zr)]):
        return "partition-extra", f"your expression is ours divided by Z = {Z} once more"
    shift = _exp_shift(c, ratio)
    if shift and any(abs(x) > 1e-12 for _, x in shift):
        cexpr = _identify(c, shift)
        return "energy-zero", (f"differs by a factor exp(-beta*c) with c = {cexpr}: numerator and Z "
                               f"use different energy zeros")
    return None


def _slip_coupling(c: _Comparison) -> Slip | None:
    for p in c.params:
        for k in _COUPLINGS:
            values = []
            for s in c.samples:
                params = dict(s.params)
                params[p] = k * params[p]
                values.append(c.eval_ours(s, params=params))
            if c.matches(values):
                new = sp.sstr(k * p)
                return "coupling", (f"coupling convention: your expression is ours with {p.name} -> {new}; "
                                    f"it belongs to the Hamiltonian with {new} in place of {p.name}")
    return None


def _fit_samples(c: _Comparison, n: int, params: Mapping | None = None) -> list[_Sample]:
    """n inverse temperatures spread over [1/5, 3] (with random frequencies / times) at one point."""
    rng = random.Random(len(c.samples) * 7919 + n)
    base = c.samples[0]
    params = base.params if params is None else params
    out = []
    for k in range(n):
        # spread beta deterministically so that the exponential fits are well posed
        b = sp.Rational(1, 5) + sp.Rational(k * 14, 5 * max(n - 1, 1))
        out.append(_Sample(-1, params, b, draw_real(rng, *_OMEGA_RE), draw_real(rng, *_OMEGA_IM),
                           draw_real(rng, *_TIME)))
    return out


def _level_text(c: _Comparison, a: int) -> str:
    lv = c.d.levels[a]
    return f"E = {sp.sstr(lv.energy)} (degeneracy {lv.degeneracy})"


def _their_partition(c: _Comparison, params: Mapping, n: int) -> list[tuple[mp.mpf, mp.mpc]] | None:
    r"""The reduced partition function hidden in the formula at ``n`` inverse temperatures.

    For Z itself :math:`Y = Z_{\rm yours}\,e^{\beta E_0}`; for a susceptibility, assuming the
    numerator is right, :math:`Y = Z'\,\chi_{\rm ours}/\chi_{\rm yours}` (a shifted energy zero
    cancels in the ratio). :math:`E_0` is the lowest level at this point.
    """
    data = c.data(params)
    out = []
    for s in _fit_samples(c, n, params):
        b = to_mp(s.beta).real
        th = c.eval_theirs(s)
        if th is None or th == 0:
            return None
        if c.quantity == "partition":
            y = th * mp.exp(b * min(data.energies))
        elif c.quantity == "isothermal":
            y = _isothermal_partition(data, b, th)
            if y is None:
                return None
        else:
            ours = c.eval_ours(s)
            if ours is None or ours == 0:
                return None
            y = data.reduced_partition(b) * ours / th
        out.append((b, y))
    return out


def _isothermal_partition(data: LevelData, b: mp.mpf, theirs: mp.mpc) -> mp.mpc | None:
    r"""Solve :math:`\chi_T = s(T_1 u - T_2 u^2)` for :math:`u = 1/Y`.

    With :math:`x_a` the Boltzmann factors, :math:`T_1 = \sum_{a\ne b}(x_a - x_b)W_{ab}/(E_b - E_a)
    + \beta\sum_a x_a W_{aa}` and :math:`T_2 = \beta(\sum_a x_a\langle A\rangle_a)
    (\sum_a x_a\langle B\rangle_a)`; of the two roots the one nearer :math:`1/Z'` is taken.
    """
    E = data.energies
    x = data.boltzmann(b)
    t1 = mp.fsum((x[i] - x[j]) * W / (E[j] - E[i]) for (i, j), W in data.weights if i != j)
    t1 += b * mp.fsum(x[i] * W for (i, j), W in data.weights if i == j)
    t2 = b * mp.fsum(x[i] * v for i, v in data.expect_A) * mp.fsum(x[i] * v for i, v in data.expect_B)
    target = theirs / data.sign
    if t2 == 0:
        return None if target == 0 else t1 / target
    disc = mp.sqrt(t1 * t1 - 4 * t2 * target)
    roots = [(t1 + disc) / (2 * t2), (t1 - disc) / (2 * t2)]
    u0 = 1 / data.reduced_partition(b)
    u = min(roots, key=lambda r: abs(r - u0))
    return None if u == 0 else 1 / u


def _single_exponential(values: list[tuple[mp.mpf, mp.mpc]]) -> tuple[mp.mpf, mp.mpf] | None:
    """(g, E) when every value equals g exp(-beta E) with real g != 0 and real E."""
    if len(values) < 3 or any(abs(v.imag) > 1e-20 * (1 + abs(v)) for _, v in values):
        return None
    (b0, r0), (b1, r1) = values[0], values[1]
    r0, r1 = r0.real, r1.real
    if r0 == 0 or r1 == 0 or (r0 > 0) != (r1 > 0):
        return None
    E = -mp.log(r1 / r0) / (b1 - b0)
    g = r0 * mp.exp(b0 * E)
    for b, r in values[2:]:
        if abs(g * mp.exp(-b * E) - r) > 1e-12 * (1 + abs(r)):
            return None
    return g, E


def _slip_partition_fit(c: _Comparison) -> Slip | None:
    r"""Recognise a wrong partition function inside the formula.

    With :math:`x_a = e^{-\beta(E_a - E_0)}` and :math:`Z' = \sum_a d_a x_a`: an exact fit of
    :math:`Y = Z' + \sum_a \delta_a x_a` (missing level, wrong degeneracy), a constant
    :math:`Y` (Z replaced by a number), or :math:`Y - Z' + d_a x_a` a single exponential
    (level a at a wrong energy in Z only, or an extra term at an energy not in the spectrum).
    """
    L = len(c.d.levels)
    if L > MAX_FIT_LEVELS:
        return None
    params = c.samples[0].params
    values = _their_partition(c, params, L + 3)
    if values is None:
        return None
    data = c.data(params)
    zr = [data.reduced_partition(b) for b, _ in values]
    X = [data.boltzmann(b) for b, _ in values]
    found = _degeneracy_fit(c, values, zr, X)
    if found is not None:
        return found
    y0 = values[0][1]
    if L > 1 and all(abs(y - y0) <= 1e-12 * abs(y0) for _, y in values):
        n = _rational_text(y0.real) if abs(y0.imag) <= 1e-20 else None
        total = sum(lv.degeneracy for lv in c.d.levels)
        what = f"the constant {n or mp.nstr(y0, 12)}"
        if n is not None and sp.Rational(n) == total:
            what += " (its infinite-temperature value, the number of states)"
        return "partition-constant", f"wrong partition function: your expression uses {what} for Z"
    e0 = min(data.energies)
    for a in [None, *range(L)]:
        res = [(b, y - z + (0 if a is None else data.degeneracies[a] * x[a]))
               for (b, y), z, x in zip(values, zr, X)]
        fit = _single_exponential(res)
        if fit is None:
            continue
        g, E = fit
        E_abs = E + e0
        if any(abs(E_abs - e) <= 1e-12 * (1 + abs(e)) for e in data.energies):
            continue
        energy = _identify_energy(c, a, E_abs)
        if a is not None and abs(g - data.degeneracies[a]) <= 1e-12 * abs(g):
            return "level-energy", (f"wrong level energy in Z: your partition function has the level "
                                    f"{_level_text(c, a)} at E = {energy}")
        gq = _rational_text(g) or mp.nstr(g, 12)
        term = "exp(-beta*E)" if gq == "1" else f"{gq}*exp(-beta*E)"
        return "partition-extra-term", (f"wrong partition function: your Z has an extra term "
                                        f"{term} with E = {energy}, not an energy of the "
                                        f"spectrum" + ("" if a is None else
                                                       f", in place of the level {_level_text(c, a)}"))
    return None


def _identify_energy(c: _Comparison, a: int | None, first: mp.mpf) -> str:
    """Repeat the single-exponential fit at further parameter points and write E as a formula."""
    found = [(c.samples[0].params, first)]
    for _ in range(len(c.params) + 1):
        params = draw_parameters(c.rng, c.params)
        values = _their_partition(c, params, 3)
        if values is None:
            break
        data = c.data(params)
        res = [(b, y - data.reduced_partition(b) + (0 if a is None else data.degeneracies[a] * data.boltzmann(b)[a]))
               for b, y in values]
        fit = _single_exponential(res)
        if fit is None:
            break
        found.append((params, fit[1] + min(data.energies)))
    return _identify(c, found)


def _degeneracy_fit(c: _Comparison, values, zr, X) -> Slip | None:
    L = len(c.d.levels)
    if L < 2:
        return None
    with mp.workdps(WORKING_DIGITS + 10):
        rhs = [y - z for (_, y), z in zip(values, zr)]
        try:
            delta = mp.lu_solve(mp.matrix(X[:L]), mp.matrix(rhs[:L]))
        except ZeroDivisionError:
            return None
        for r, y in zip(X[L:], rhs[L:]):
            pred = mp.fsum(d * x for d, x in zip(delta, r))
            if abs(pred - y) > 1e-12 * (1 + abs(y)):
                return None
        ints = []
        for dval in delta:
            n = int(mp.nint(dval.real))
            if abs(dval - n) > 1e-10:
                return None
            ints.append(n)
    changed = [(a, n) for a, n in enumerate(ints) if n != 0]
    if not changed or len(changed) == L:
        # every level re-weighted is an overall factor in disguise, not a partition-function slip
        return None
    parts, missing = [], True
    for a, n in changed:
        g = c.d.levels[a].degeneracy
        if g + n == 0:
            parts.append(f"leaves out the level {_level_text(c, a)}")
        else:
            missing = False
            parts.append(f"counts the level E = {sp.sstr(c.d.levels[a].energy)} with degeneracy "
                         f"{g + n} instead of {g}")
    if missing:
        return "partition-level-missing", "a level is missing from Z: your partition function " + "; ".join(parts)
    return "partition-degeneracy", "wrong partition function: your Z " + "; ".join(parts)


def _solve_level(c: _Comparison, a: int, fit: list[_Sample]) -> mp.mpf | None:
    """Energy of level ``a`` that makes ours reproduce the formula at every sample of ``fit``."""
    data = c.data(fit[0].params)
    E = list(data.energies)
    th = [c.eval_theirs(s) for s in fit]
    if any(v is None for v in th):
        return None
    spread = max(abs(e) for e in E) + 1

    def with_level(eps, s):
        energies = list(E)
        energies[a] = eps
        return c.eval_ours(s, energies=energies)

    def f(eps):
        v = with_level(eps, fit[0])
        if v is None:
            return mp.mpf(1e30)
        diff = v - th[0]
        return diff.real + diff.imag

    sc = max([abs(v) for v in th] + [mp.mpf(1e-30)])
    for step in (0.5, -0.5, 1, -1, 2, -2, 4, -4):
        try:
            eps = mp.findroot(f, E[a] + step * spread, verify=False)
        except (ValueError, ZeroDivisionError):
            continue
        eps = mp.mpf(eps.real) if isinstance(eps, mp.mpc) else eps
        if abs(eps - E[a]) < 1e-10 * spread:
            continue
        vals = [with_level(eps, s) for s in fit]
        if all(v is not None and c.close(v, w, sc) for v, w in zip(vals, th)):
            return eps
    return None


def _mean_product(c: _Comparison, s: _Sample) -> mp.mpc | None:
    r""":math:`s\beta\langle A\rangle\langle B\rangle` at a sample (the term the isothermal
    susceptibility subtracts)."""
    try:
        data = c.data(s.params)
    except (ZeroDivisionError, ValueError, InputError):
        return None
    b = to_mp(s.beta).real
    with mp.workprec(PREC_BITS):
        x = data.boltzmann(b)
        zr = mp.fsum(d * xa for d, xa in zip(data.degeneracies, x))
        mA = mp.fsum(x[a] * v for a, v in data.expect_A) / zr
        mB = mp.fsum(x[a] * v for a, v in data.expect_B) / zr
        return mp.mpc(data.sign * b * mA * mB)


def _slip_mean_product(c: _Comparison) -> Slip | None:
    r"""The isothermal susceptibility without its :math:`-\beta\langle A\rangle\langle B\rangle`
    term: invisible in zero field (where :math:`\langle A\rangle = 0` by symmetry), wrong in a
    field."""
    if c.quantity != "isothermal":
        return None
    terms = [_mean_product(c, s) for s in c.samples]
    if any(t is None for t in terms) or all(t == 0 for t in terms):
        return None
    if not c.matches([v + t for v, t in zip(c.ours, terms)]):
        return None
    mean_a = sp.sstr(sp.factor(c.d.expectation("A")))
    return ("mean-product-missing",
            f"missing -beta*<A>*<B>: your expression is beta*(<AB> + ...) without subtracting "
            f"beta*<A>*<B>; it vanishes only where <A> = 0 (zero field), here <A> = {mean_a}")


def _multiplets(c: _Comparison) -> list[tuple[int, ...]]:
    """Groups of levels that form one multiplet: the same quantum numbers apart from the
    magnetic one (Sz), or levels that coincide when one parameter (a field) is zero."""
    levels = c.d.levels
    groups: list[tuple[int, ...]] = []
    by_label: dict[tuple, list[int]] = {}
    for k, lv in enumerate(levels):
        keys = {tuple(sorted((n, v) for n, v in lab if n != "Sz")) for lab in lv.quantum_numbers}
        if len(keys) == 1 and next(iter(keys)):
            by_label.setdefault(next(iter(keys)), []).append(k)
    groups += [tuple(v) for v in by_label.values()]
    for p in c.params:
        by_zero: dict[sp.Expr, list[int]] = {}
        for k, lv in enumerate(levels):
            if lv.implicit or p not in lv.energy.free_symbols:
                continue
            by_zero.setdefault(sp.expand(lv.energy.subs(p, 0)), []).append(k)
        groups += [tuple(v) for v in by_zero.values()]
    out = []
    for g in groups:
        if 2 <= len(g) < len(levels) and g not in out:
            out.append(g)
    return out


def _solve_shift(c: _Comparison, group: tuple[int, ...], fit: list[_Sample]) -> mp.mpf | None:
    """Common shift of the levels of ``group`` that makes ours reproduce the formula at every
    sample of ``fit`` (None if there is none)."""
    data = c.data(fit[0].params)
    E = list(data.energies)
    th = [c.eval_theirs(s) for s in fit]
    if any(v is None for v in th):
        return None
    spread = max(abs(e) for e in E) + 1

    def shifted(delta, s):
        energies = [e + delta if k in group else e for k, e in enumerate(E)]
        return c.eval_ours(s, energies=energies)

    def f(delta):
        v = shifted(delta, fit[0])
        if v is None:
            return mp.mpf(1e30)
        diff = v - th[0]
        return diff.real + diff.imag

    sc = max([abs(v) for v in th] + [mp.mpf(1e-30)])
    for step in (0.5, -0.5, 1, -1, 2, -2, 4, -4):
        try:
            delta = mp.findroot(f, step * spread, verify=False)
        except (ValueError, ZeroDivisionError):
            continue
        delta = mp.mpf(delta.real) if isinstance(delta, mp.mpc) else delta
        if abs(delta) < 1e-10 * spread:
            continue
        vals = [shifted(delta, s) for s in fit]
        if all(v is not None and c.close(v, w, sc) for v, w in zip(vals, th)):
            return delta
    return None


def _slip_multiplet_energy(c: _Comparison) -> Slip | None:
    """A whole multiplet (all its Zeeman components) placed at a wrong energy."""
    L = len(c.d.levels)
    if L < 3 or L > MAX_FIT_LEVELS:
        return None
    fit = _fit_samples(c, 4)
    for group in _multiplets(c):
        delta = _solve_shift(c, group, fit)
        if delta is None:
            continue
        found = [(fit[0].params, delta)]
        for _ in range(len(c.params) + 1):
            params = draw_parameters(c.rng, c.params)
            more = [_Sample(-1, params, s.beta, s.x, s.y, s.t) for s in fit]
            d2 = _solve_shift(c, group, more)
            if d2 is None:
                break
            found.append((params, d2))
        shift = _identify(c, found)
        lv = c.d.levels
        energies = ", ".join(sp.sstr(lv[k].energy) for k in group)
        labels = {tuple((n, v) for n, v in lab if n != "Sz") for k in group
                  for lab in lv[k].quantum_numbers}
        name = ""
        if len(labels) == 1 and next(iter(labels)):
            name = " " + ", ".join(f"{n}={v}" for n, v in next(iter(labels)))
        rest = tuple(k for k in range(L) if k not in group)
        also = ""
        if len(rest) == 1:
            also = (f"; equivalently the level E = {sp.sstr(lv[rest[0]].energy)} moved the "
                    f"other way (only differences of levels enter)")
        elif rest in _multiplets(c):
            other = {tuple((n, v) for n, v in lab if n != "Sz") for k in rest
                     for lab in lv[k].quantum_numbers}
            oname = (" " + ", ".join(f"{n}={v}" for n, v in next(iter(other)))
                     if len(other) == 1 and next(iter(other)) else "")
            also = (f"; equivalently the other multiplet{oname} moved the other way (only "
                    f"differences of levels enter)")
        return "multiplet-energy", (f"wrong multiplet energy: your expression matches ours with "
                                    f"the whole multiplet{name} ({len(group)} levels, E = "
                                    f"{energies}) shifted by {shift}{also}")
    return None


def _slip_level_energy(c: _Comparison) -> Slip | None:
    L = len(c.d.levels)
    if L < 2 or L > MAX_FIT_LEVELS:
        return None
    fit = _fit_samples(c, 4)
    for a in range(L):
        eps = _solve_level(c, a, fit)
        if eps is None:
            continue
        found = [(fit[0].params, eps)]
        # the same level at further parameter points, to write the new energy as a formula
        for _ in range(len(c.params) + 1):
            params = draw_parameters(c.rng, c.params)
            more = [_Sample(-1, params, s.beta, s.x, s.y, s.t) for s in fit]
            e2 = _solve_level(c, a, more)
            if e2 is None:
                break
            found.append((params, e2))
        new = _identify(c, found)
        return "level-energy", (f"wrong level energy: your expression matches ours with the level "
                                f"{_level_text(c, a)} moved to E = {new}")
    return None


def _identify(c: _Comparison, values: list[tuple[dict, mp.mpf]]) -> str:
    """Write values known at parameter points as a rational linear combination of the parameters.

    Falls back to the number at the first point when the values do not fit such a form.
    """
    n = len(c.params)
    first = values[0]
    numeric = f"{float(first[1]):.10g} at " + ", ".join(f"{p.name} = {float(v):.6g}" for p, v in first[0].items())
    if n == 0:
        return _rational_text(first[1]) or numeric
    if len(values) < n + 2:
        return numeric
    with mp.workdps(WORKING_DIGITS + 10):
        rows = [[to_mp(params[p]).real for p in c.params] + [mp.mpf(1)] for params, _ in values]
        rhs = [v for _, v in values]
        try:
            coef = mp.lu_solve(mp.matrix(rows[:n + 1]), mp.matrix(rhs[:n + 1]))
        except ZeroDivisionError:
            return numeric
        for r, y in zip(rows[n + 1:], rhs[n + 1:]):
            if abs(mp.fsum(a * b for a, b in zip(coef, r)) - y) > 1e-15 * (1 + abs(y)):
                return numeric
    expr = sp.Integer(0)
    for k, sym in enumerate(list(c.params) + [sp.Integer(1)]):
        q = _rational(coef[k])
        if q is None:
            return numeric
        expr += q * sym
    return sp.sstr(expr)


def _rational(x: mp.mpf) -> sp.Rational | None:
    frac = Fraction(str(mp.nstr(x, WORKING_DIGITS))).limit_denominator(_MAX_DENOMINATOR)
    if abs(x - mp.mpf(frac.numerator) / frac.denominator) > 1e-15 * (1 + abs(x)):
        return None
    return sp.Rational(frac.numerator, frac.denominator)


def _rational_text(x: mp.mpf) -> str | None:
    q = _rational(x)
    return None if q is None else sp.sstr(q)


def _slip_rounded(c: _Comparison) -> Slip | None:
    worst = mp.mpf(0)
    for a, b in zip(c.theirs, c.ours):
        m = max(abs(a), abs(b))
        if m == 0:
            continue
        worst = max(worst, abs(a - b) / m)
    if 0 < worst < ROUNDED_RTOL:
        digits = int(mp.floor(-mp.log10(worst)))
        return "rounded", (f"agrees to about {digits} digits only: rounded constants in your "
                           f"expression?")
    return None


def _slip_partial(c: _Comparison) -> Slip | None:
    sc = c.scale(c.ours)
    good = sum(c.close(a, b, sc) for a, b in zip(c.theirs, c.ours))
    if 0 < good < len(c.samples):
        return "partial", (f"agrees at {good} of {len(c.samples)} random points only: a formula valid "
                           f"on part of the parameter domain (sign of a coupling, ordering of levels)?")
    return None


#: Slips in the order they are tested; the first that reproduces the formula is reported.
_SLIPS: tuple[Callable[[_Comparison], Slip | None], ...] = (
    _slip_factor, _slip_temperature, _slip_static_kind, _slip_mean_product, _slip_prescription,
    _slip_partition, _slip_coupling, _slip_multiplet_energy, _slip_partition_fit,
    _slip_level_energy, _slip_rounded, _slip_partial,
)


# ----------------------------------------------------------------------------- entry point
@public
def compare(derivation: Derivation, formula: object, quantity: Quantity = "isothermal", *,
            samples: int = DEFAULT_SAMPLES, seed: int = 0, units: Mapping | None = None) -> Verdict:
    r"""Compare a hand-derived formula with the derived quantity and name the slip if they differ.

    Parameters
    ----------
    derivation : symresp.response.Derivation
        The derivation (``response.derivation``).
    formula : str or sympy.Expr
        The hand result. Text is read with the safe expression parser. Allowed names: the model
        parameters, ``beta``, ``T`` (:math:`T = 1/\beta`), ``omega`` and ``eta`` for
        ``"frequency"`` (a formula with ``eta`` is compared with ours at :math:`\omega + i\eta`),
        ``t`` for ``"time"``, and ``k_B``, ``hbar`` when ``units`` is given.
    quantity : {"isothermal", "isolated", "frequency", "time", "partition"}
        The static susceptibility of either kind, :math:`\chi_{AB}(\omega)`,
        :math:`\chi_{AB}(t)` for t > 0, or the partition function :math:`Z`.
    samples : int
        Number of random points (at least 3).
    seed : int
        Seed of the random points; the verdict is deterministic for a given seed.
    units : mapping, optional
        ``{"k_B": value, "hbar": value}`` (missing entries are 1): the formula is read in units
        where :math:`\beta = 1/(k_B T)`, its :math:`\hbar\omega` is our :math:`\omega`, and
        :math:`\chi(t)` carries :math:`1/\hbar`.

    Returns
    -------
    Verdict

    Raises
    ------
    InputError
        On a bad argument, or a formula with unknown names (a ``ParseError`` for malformed text).

    Notes
    -----
    Slips tested, in order: overall sign and factors 2, 1/2, 4, 1/4 (also negative); T and
    beta swapped; isolated given for isothermal and the reverse; the isothermal susceptibility
    without its :math:`-\beta\langle A\rangle\langle B\rangle` term (wrong in a field); advanced
    instead of retarded
    (:math:`\omega - i0^+`, or :math:`\omega \to -\omega`), t -> -t; a missing or extra
    partition function, or a shifted energy zero; a coupling convention
    (:math:`p \to 2p, p/2, -p, -2p, -p/2` for each parameter); a wrong partition function (a
    missing level or a wrong degeneracy, by an exact fit of
    :math:`Z'_{\rm yours} = Z' + \sum_a \delta_a e^{-\beta(E_a - E_0)}`); a whole multiplet (the
    levels of one total spin, or those that meet at zero field) shifted by a common energy; one
    wrong level energy
    (by a root search for the energy that reproduces the formula); rounded constants.

    Examples
    --------
    Bleaney–Bowers dimer :math:`H = J\,\mathbf S_1\cdot\mathbf S_2`:

    >>> import sympy as sp, symresp as sr
    >>> from symresp.checks import compare
    >>> J = sp.Symbol("J", real=True)
    >>> a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    >>> d = sr.Model(J * (a.vec @ b.vec)).response(a.z + b.z).derivation
    >>> print(compare(d, "2*beta/(3 + exp(J/T))"))
    agrees (exact)
    >>> compare(d, "2*beta/(3 + exp(2*J*beta))").slip
    'coupling'

    See Also
    --------
    consistency
    """
    if not isinstance(derivation, Derivation):
        raise InputError(f"compare: derivation={derivation!r} must be a symresp Derivation "
                         f"(use response.derivation)")
    check_quantity(quantity, QUANTITIES, "compare: quantity")
    if isinstance(samples, bool) or not isinstance(samples, int) or samples < 3:
        raise InputError(f"compare: samples={samples!r} must be an integer >= 3")
    if isinstance(seed, bool) or not isinstance(seed, int):
        raise InputError(f"compare: seed={seed!r} must be an integer")
    if quantity == "time" and derivation.convention.prescription == "advanced":
        raise InputError("compare: the advanced function vanishes for t > 0; compare 'time' with a "
                         "retarded derivation")
    u = _check_units(units)
    names = _allowed_symbols(derivation, quantity, u)
    original = _as_formula(formula, names, quantity, u)
    theirs = _to_internal(original, quantity, u)
    with mp.workprec(PREC_BITS):
        return _decide(derivation, quantity, theirs, original, u, samples, seed)


def _decide(derivation: Derivation, quantity: str, theirs: sp.Expr, original: sp.Expr,
            u: _Units | None, samples: int, seed: int) -> Verdict:
    c = _Comparison(derivation, quantity, theirs, original, u, samples, seed)
    n = len(c.samples)
    if c.matches(c.ours):
        if _prove_equal(theirs, _ours_expression(derivation, quantity, c)):
            return Verdict(True, None, None, "proved symbolically (the difference reduces to 0)",
                           "exact", None, quantity)
        digits = round(-math.log10(AGREE_RTOL))
        return Verdict(True, None, None, f"{n} of {n} random points agree to {digits} digits",
                       "sampling", None, quantity)
    for slip in _SLIPS:
        found = slip(c)
        if found is not None:
            code, text = found
            conf = (f"differs at random points; the slip reproduces your expression at all {n}"
                    if code not in ("rounded", "partial") else f"{n} random points")
            return Verdict(False, text, c.counterexample(), conf, "sampling", code, quantity)
    return Verdict(False, None, c.counterexample(), f"differs at random points ({n} tested)",
                   "sampling", None, quantity)


def _ours_expression(d: Derivation, quantity: str, c: _Comparison) -> sp.Expr:
    if quantity in ("isothermal", "isolated"):
        return d.static(quantity)
    if quantity == "frequency":
        expr = d.frequency(omega)
        return expr.xreplace({omega: omega + sp.I * c.half * eta}) if c.uses_eta else expr
    if quantity == "time":
        return d.time(t)
    return d.partition()

