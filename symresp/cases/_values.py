r"""Parameter values given on the command line or from Python (layer: cases).

Owns :func:`parse_assignments`, :func:`parameter_values` and :func:`with_values`. Imports
sympy, :mod:`symresp.errors`, :mod:`symresp.models` and the case reader.

``--set NAME=VALUE`` (every command) and ``load_case(..., params={...})`` fix a declared
parameter at an exact value: :func:`with_values` replaces the symbol by the number everywhere in
the case (Hamiltonian, observables, responses, ``[zeeman]``, ``[sample]``), as if the case file
had the number written in place of the name, and records it as the parameter's value. Values
are read exactly: ``0.1`` is 1/10, ``"3/2"`` is 3/2.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Mapping, Sequence
from dataclasses import replace
from fractions import Fraction
from numbers import Rational as _Rational
from numbers import Real

import sympy as sp

from ..errors import InputError
from ..models import System
from ._read import Case, Parameter

__all__ = ["parse_assignments", "parameter_values", "with_values"]


def parse_assignments(items: Sequence[str] | None, *, option: str = "--set") -> dict[str, str]:
    """``["J=1.5", "h=0"]`` -> ``{"J": "1.5", "h": "0"}`` (later entries win).

    Examples
    --------
    >>> from symresp.cases import parse_assignments
    >>> parse_assignments(["J=1.5", " h = 0 "])
    {'J': '1.5', 'h': '0'}
    """
    out: dict[str, str] = {}
    for item in items or ():
        name, sep, value = item.partition("=")
        if not sep or not name.strip() or not value.strip():
            raise InputError(f"{option} {item!r}: write NAME=VALUE, e.g. {option} J=1.5")
        out[name.strip()] = value.strip()
    return out


def _exact(value: object, where: str) -> sp.Rational:
    if isinstance(value, bool):
        raise InputError(f"{where}: {value!r} is not a number")
    if isinstance(value, sp.Rational):
        return value
    if isinstance(value, (int, Fraction, _Rational)) and not isinstance(value, float):
        f = Fraction(value)  # type: ignore[arg-type]
        return sp.Rational(f.numerator, f.denominator)
    if isinstance(value, float):
        if not math.isfinite(value):
            raise InputError(f"{where}: {value!r} is not a finite number")
        f = Fraction(repr(value))
        return sp.Rational(f.numerator, f.denominator)
    if isinstance(value, str):
        text = value.strip()
        try:
            f = Fraction(text)
        except (ValueError, ZeroDivisionError):
            raise InputError(f"{where}: {value!r} is not a number such as 2, 0.5, 1e-3 or "
                             f"3/2") from None
        if len(text) > 400:
            raise InputError(f"{where}: the number has more than 400 characters")
        return sp.Rational(f.numerator, f.denominator)
    if isinstance(value, Real):
        return _exact(float(value), where)
    raise InputError(f"{where}: {value!r} (type {type(value).__name__}) is not a number")


def parameter_values(case: Case, values: Mapping[object, object] | None, *,
                     option: str = "--set") -> dict[Parameter, sp.Rational]:
    """Check ``{name: value}`` against the declared parameters of ``case``.

    Raises
    ------
    InputError
        For an undeclared name (with the nearest declared one), a value that is not a number
        or that breaks the parameter's ``assume``.
    """
    by_name = {p.name: p for p in case.parameters}
    out: dict[Parameter, sp.Rational] = {}
    for key, raw in (values or {}).items():
        name = key.name if isinstance(key, sp.Symbol) else key
        if not isinstance(name, str) or name not in by_name:
            close = difflib.get_close_matches(str(name), list(by_name), n=1, cutoff=0.5)
            hint = f" (did you mean '{close[0]}'?)" if close else ""
            known = ", ".join(by_name) or "none"
            raise InputError(f"{option} {name}: {case.source} declares no parameter {name!r}{hint}; "
                             f"parameters: {known}")
        p = by_name[name]
        v = _exact(raw, f"{option} {name}")
        if p.assume == "positive" and not v > 0:
            raise InputError(f"{option} {name}={raw}: the parameter is declared assume = "
                             f"\"positive\" in {case.source}")
        if p.assume == "nonnegative" and v < 0:
            raise InputError(f"{option} {name}={raw}: the parameter is declared assume = "
                             f"\"nonnegative\" in {case.source}")
        out[p] = v
    return out


def with_values(case: Case, values: Mapping[object, object] | None, *,
                option: str = "--set") -> Case:
    """The case with the given parameters replaced by exact numbers everywhere.

    Parameters
    ----------
    case : Case
    values : mapping
        ``{name: value}``; values are numbers or number text (``"3/2"``, ``"0.1"``).
    option : str
        How the values were given, for error messages.

    Returns
    -------
    Case
        The same parameters are still declared (with the new values), but the model no longer
        depends on them.

    Examples
    --------
    >>> from symresp.cases import find_case, read_case, with_values
    >>> case = with_values(read_case(find_case("dimer")), {"h": 0})
    >>> [p.name for p in case.system.parameters]
    ['J']
    """
    checked = parameter_values(case, values, option=option)
    if not checked:
        return case
    mapping = {p.symbol: v for p, v in checked.items()}
    system = case.system
    H = system.hamiltonian.subs(mapping)
    observables = tuple((n, o.subs(mapping)) for n, o in system.observables)
    sites = set(system.sites)
    extra = tuple(sorted(sites - H.sites, key=lambda s: s.order))
    new_system = System(H, system.sector, observables, extra, system.name)
    responses = tuple(replace(r, A=r.A.subs(mapping), B=r.B.subs(mapping)) for r in case.responses)
    parameters = tuple(replace(p, value=checked[p]) if p in checked else p for p in case.parameters)
    magnetism = None if case.magnetism is None else case.magnetism.subs(mapping)
    return replace(case, system=new_system, responses=responses, parameters=parameters,
                   magnetism=magnetism)
