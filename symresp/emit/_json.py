"""JSON records of presented responses (layer: emit).

Owns :func:`presentation_record`: one response as plain data (levels sorted by energy,
transitions, where-list, formulas, correlation lines, notes), every formula both as text in
sympy syntax (readable by the formula parser once the where-list symbols are known, in list
order) and as LaTeX. :mod:`symresp.cases` wraps records of a case into the document printed by
``symresp derive --json``. Imports sympy, :mod:`symresp.response` and :mod:`._report`.
"""

from __future__ import annotations

from typing import Any

from ..errors import InputError
from ..response import Presentation, formula_text
from ._report import formula_latex, latex_names

__all__ = ["presentation_record", "JSON_FORMAT"]

#: Version of the record layout; bumped when a field changes meaning.
JSON_FORMAT = 2


def presentation_record(p: Presentation) -> dict[str, Any]:
    """One presented response as JSON-ready data.

    Keys: ``levels`` (label, symbol, energy, degeneracy, quantum_numbers, marks), ``conserved``,
    ``transitions`` (lower, upper, frequency, weight, reverse_weight), ``where`` (name, kind,
    meaning, text, latex, in dependency order), ``collapsed``, ``quantities`` (per quantity
    text, latex and form), ``correlation`` (frequency, weight), ``notes``, ``convention``.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> q = sr.spin("q", sp.Rational(1, 2)); D = sp.Symbol("Delta", positive=True)
    >>> rec = presentation_record(sr.Model(D * q.z).response(2 * q.x).presented())
    >>> rec["quantities"]["frequency"]["text"]
    '2*Delta*tanh(Delta*beta/2)/(Delta**2 - omega**2)'
    >>> [lv["energy"] for lv in rec["levels"]]
    ['-Delta/2', 'Delta/2']
    """
    if not isinstance(p, Presentation):
        raise InputError(f"presentation_record: p={p!r} must be a symresp Presentation")
    rank = p.rank
    names = latex_names(p)

    def both(expr) -> dict[str, str]:
        return {"text": formula_text(expr, rank), "latex": formula_latex(expr, rank, names)}

    return {
        "format": JSON_FORMAT,
        "convention": p.convention,
        "levels": [{"label": row.label, "symbol": row.symbol.name,
                    "energy": formula_text(row.energy), "degeneracy": row.degeneracy,
                    "quantum_numbers": [{n: formula_text(v) for n, v in lab}
                                        for lab in row.quantum_numbers],
                    "marks": list(row.marks)} for row in p.levels],
        "conserved": [{"name": n, "definition": d} for n, d in p.quantum_numbers],
        "transitions": [{"lower": tr.lower, "upper": tr.upper,
                         "frequency": formula_text(tr.frequency),
                         "weight": formula_text(tr.up), "reverse_weight": formula_text(tr.down)}
                        for tr in p.transitions],
        "where": [{"name": d.symbol.name, "kind": d.kind, "meaning": d.meaning,
                   **(both(d.value) if d.kind != "root" else
                      {"text": formula_text(d.value), "latex": names[d.symbol]})}
                  for d in p.definitions],
        "formula_symbols": {q: sym.name for q, sym in p.formula_symbols},
        "collapsed": list(p.collapsed),
        "quantities": {f.quantity: {**both(f.expr), "form": f.form} for f in p.formulas},
        "correlation": [{"frequency": formula_text(ln.frequency),
                         "weight": formula_text(ln.weight, rank)} for ln in p.correlation],
        "notes": list(p.notes),
    }
