r"""The registry of response quantities (layer: response).

One table of what can be asked of a derivation: its name (as the API, the command line, case
files and the checker spell it), the printed name, the variable it depends on besides the
temperature, and where it is accepted. Imports sympy, :mod:`symresp.conventions`,
:mod:`symresp.errors`.
"""

from __future__ import annotations

import difflib
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Literal

import sympy as sp

from ..conventions import nu, omega, t
from ..errors import InputError

if TYPE_CHECKING:
    from ._derive import Derivation

__all__ = ["QuantityInfo", "QUANTITIES", "Quantity", "STATIC_KINDS", "CASE_QUANTITIES",
           "DEFAULT_CASE_QUANTITIES", "CHECKED_QUANTITIES", "quantity_expression",
           "check_quantity"]

Quantity = Literal["isothermal", "isolated", "frequency", "time", "correlation", "partition",
                   "matsubara"]


@dataclass(frozen=True, slots=True)
class QuantityInfo:
    """One quantity a derivation offers.

    Attributes
    ----------
    name : str
        Its name everywhere a quantity is chosen (``Response.evaluate``, ``--quantity``,
        ``quantities = [...]`` in a case file, ``compare``).
    title : str
        How printed output names it (``chi_isothermal``, ``chi(omega)``, ``Z``).
    variable : sympy.Symbol or None
        The variable besides the temperature (``omega``, ``t``, ``nu``), or None.
    description : str
        One line for help texts.
    in_case_files : bool
        May be listed in the ``quantities`` of a case file's ``[[response]]``.
    checked : bool
        A hand formula of it can be compared (``compare``, ``symresp check``).
    expression : callable
        The derivation's closed form of it.
    """

    name: str
    title: str
    variable: sp.Symbol | None
    description: str
    in_case_files: bool
    checked: bool
    expression: Callable[["Derivation"], sp.Expr]


QUANTITIES: Mapping[str, QuantityInfo] = {q.name: q for q in (
    QuantityInfo("isothermal", "chi_isothermal", None,
                 "isothermal static susceptibility d<A>/df at fixed T", True, True,
                 lambda d: d.static("isothermal")),
    QuantityInfo("isolated", "chi_isolated", None,
                 "isolated (Kubo) static susceptibility chi(omega -> 0)", True, True,
                 lambda d: d.static("isolated")),
    QuantityInfo("frequency", "chi(omega)", omega,
                 "dynamical susceptibility chi(omega), retarded", True, True,
                 lambda d: d.frequency()),
    QuantityInfo("time", "chi(t)", t, "response function chi(t) for t > 0", True, True,
                 lambda d: d.time()),
    QuantityInfo("correlation", "S(omega)", omega,
                 "correlation function S_AB(omega) = 2 pi sum_k s_k delta(omega - Omega_k)",
                 True, False,
                 lambda d: 2 * sp.pi * sp.Add(*(s_k * sp.DiracDelta(omega - om)
                                                 for om, s_k in d.correlation_lines()))),
    QuantityInfo("partition", "Z", None, "partition function Z", False, True,
                 lambda d: d.partition()),
    QuantityInfo("matsubara", "chi(i nu)", nu, "Matsubara function chi(i nu_n)", False, False,
                 lambda d: d.matsubara()),
)}

#: The two static susceptibilities, which differ by the degenerate-level terms.
STATIC_KINDS = ("isothermal", "isolated")
#: Quantities a case file may ask for, in printing order.
CASE_QUANTITIES = tuple(q.name for q in QUANTITIES.values() if q.in_case_files)
#: What a case file asks for when it names no quantities.
DEFAULT_CASE_QUANTITIES = ("isothermal", "isolated", "frequency")
#: Quantities whose hand formula can be compared with the derived one.
CHECKED_QUANTITIES = tuple(q.name for q in QUANTITIES.values() if q.checked)


def quantity_expression(derivation: "Derivation", name: str) -> sp.Expr:
    """The closed form of quantity ``name`` of a derivation.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.response import derive, quantity_expression
    >>> s = sr.spin("s", sp.Rational(1, 2))
    >>> d = sr.Model(0 * s.z).response(s.z).derivation
    >>> quantity_expression(d, "isothermal")
    beta/4
    """
    return QUANTITIES[check_quantity(name, tuple(QUANTITIES), "quantity")].expression(derivation)


def check_quantity(name: object, allowed: Sequence[str], where: str) -> str:
    """``name`` if it is one of ``allowed``, else an :class:`InputError` naming ``where``, the
    choices and the nearest one."""
    if isinstance(name, str) and name in allowed:
        return name
    close = difflib.get_close_matches(name, allowed, n=1) if isinstance(name, str) else []
    hint = f" (did you mean {close[0]!r}?)" if close else ""
    raise InputError(f"{where}={name!r} must be one of {', '.join(allowed)}{hint}")
