"""The JSON document of a derived case and the presentation of its responses (layer: cases).

Owns :func:`present_case` (every response of a case presented with the case's default values
ordering the levels), :func:`case_json` (the document printed by ``symresp derive --json``)
and :func:`decimal`. Imports :mod:`json`, sympy, :mod:`symresp.response`, :mod:`symresp.emit`
and :mod:`._read`.
"""

from __future__ import annotations

import json
from collections.abc import Sequence

import sympy as sp

from ..emit import presentation_record
from ..models import Clock
from ..response import Derivation, Presentation, present_response
from ._read import Case

__all__ = ["present_case", "case_json", "decimal", "Presented"]

#: (label, A text, B text, derivation, presentation) of one response; label "levels" for a
#: case without responses.
Presented = tuple[str, str, str, Derivation, Presentation]


def decimal(value: sp.Rational) -> str:
    """``value`` as a terminating decimal when it is one (25/2 -> 12.5), else as a fraction.

    Examples
    --------
    >>> import sympy as sp
    >>> decimal(sp.Rational(25, 2)), decimal(sp.Rational(1, 3)), decimal(sp.Rational(-1, 20))
    ('12.5', '1/3', '-0.05')
    """
    q = int(value.q)
    for prime in (2, 5):
        while q % prime == 0:
            q //= prime
    if q != 1:
        return str(value)
    digits = 0
    while (value * 10**digits).q != 1:
        digits += 1
    text = f"{int(value * 10**digits)}"
    if digits == 0:
        return text
    sign = "-" if text.startswith("-") else ""
    text = text.lstrip("-").rjust(digits + 1, "0")
    return f"{sign}{text[:-digits]}.{text[-digits:]}"


def present_case(case: Case, derivations: Sequence[tuple[str, Derivation, tuple[str, ...]]], *,
                 clock: Clock | None = None) -> list[Presented]:
    """Present each (label, derivation, quantities) of ``case``; the case's default parameter
    values order the levels (a generic point stands in for parameters without a value).

    Examples
    --------
    >>> from symresp.cases import derive_case, find_case, read_case, present_case
    >>> case = read_case(find_case("dimer"))
    >>> items = [(label, d, ("isothermal",)) for label, d in derive_case(case)]
    >>> [(label, p.levels[0].energy) for label, _a, _b, _d, p in present_case(case, items)]
    [('M', -3*J/4), ('Mx', -3*J/4)]
    """
    texts = {r.label: (r.A_text, r.B_text) for r in case.responses}
    point = dict(case.defaults)
    out: list[Presented] = []
    for label, d, qs in derivations:
        a_text, b_text = texts.get(label, ("", ""))
        out.append((label, a_text, b_text, d, present_response(d, qs, point=point, clock=clock)))
    return out


def case_json(case: Case, presented: Sequence[Presented]) -> str:
    """All results of a case as one JSON document: the case (name, description, file, energy
    unit, sites, parameters, H) and per response its label, A, B and presentation record
    (see :func:`symresp.emit.presentation_record`)."""
    doc = {
        "case": case.name,
        "description": case.description,
        "file": case.source,
        "energy_unit": case.energy_unit,
        "convention": presented[0][3].convention.describe() if presented else "",
        "sites": [{"name": s.name, "kind": s.kind, "modes": list(s.modes)} for s in case.sites],
        "parameters": [{"name": p.name, "assume": p.assume,
                        "value": decimal(p.value) if p.value is not None else None,
                        "unit": p.unit, "description": p.description} for p in case.parameters],
        "hamiltonian": case.hamiltonian_text,
        "responses": [{"label": label, "A": a_text, "B": b_text, **presentation_record(p)}
                      for label, a_text, b_text, _d, p in presented],
    }
    return json.dumps(doc, indent=2)
