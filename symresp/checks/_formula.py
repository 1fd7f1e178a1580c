r"""The formula side of a comparison (layer: checks).

A hand formula (text or sympy) is read with the names it may use, brought to internal units
(k_B = hbar = 1), and, when both sides agree at every sample point, proved equal exactly:
exponentials become powers of fresh symbols, a ring homomorphism, so a zero numerator proves the
identity. Imports sympy, :mod:`symresp.conventions`, :mod:`symresp.errors`,
:mod:`symresp.response`, :mod:`symresp.text`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from fractions import Fraction
from numbers import Real

import sympy as sp

from ..conventions import T, beta, eta, omega, t
from ..errors import InputError
from ..response import Derivation
from ..text import ParseError, parse_scalar

#: Largest ``count_ops`` of either side for the symbolic proof (about a second on this size);
#: larger expressions are decided by sampling.
MAX_EXACT_OPS = 400


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
