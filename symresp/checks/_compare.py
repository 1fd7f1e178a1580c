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
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Literal

import mpmath as mp
import sympy as sp

from .._public import public
from ..conventions import eta, omega, t
from ..errors import InputError
from ..response import CHECKED_QUANTITIES, STATIC_KINDS, Derivation, Quantity, check_quantity
from ._formula import _Units, _allowed_symbols, _as_formula, _check_units, _prove_equal, _to_internal
from ._points import PREC_BITS
from ._sampling import AGREE_RTOL, Number, _Comparison
from ._slips import SLIPS

__all__ = ["Verdict", "compare", "Quantity", "QUANTITIES"]

#: The quantities whose hand formula can be compared (the registry's ``checked`` ones).
QUANTITIES = CHECKED_QUANTITIES
#: Default number of random points.
DEFAULT_SAMPLES = 9


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
    for slip in SLIPS:
        found = slip(c)
        if found is not None:
            code, text = found
            conf = (f"differs at random points; the slip reproduces your expression at all {n}"
                    if code not in ("rounded", "partial") else f"{n} random points")
            return Verdict(False, text, c.counterexample(), conf, "sampling", code, quantity)
    return Verdict(False, None, c.counterexample(), f"differs at random points ({n} tested)",
                   "sampling", None, quantity)


def _ours_expression(d: Derivation, quantity: str, c: _Comparison) -> sp.Expr:
    if quantity in STATIC_KINDS:
        return d.static(quantity)
    if quantity == "frequency":
        expr = d.frequency(omega)
        return expr.xreplace({omega: omega + sp.I * c.half * eta}) if c.uses_eta else expr
    if quantity == "time":
        return d.time(t)
    return d.partition()
