"""Text renderings of case headers, derivation results and verifications (layer: cli).

Owns the printing of the ``derive`` and ``verify`` commands. The results are printed from
their presentation (:func:`symresp.response.present_response`): level table, transitions,
formulas and where-list; JSON lives in :mod:`symresp.cases._json` and LaTeX in
:mod:`symresp.emit`. Imports :mod:`symresp.cases` and :mod:`symresp.response`.
"""

from __future__ import annotations

from ..cases import Case, Verification, decimal
from ..response import (GENERIC_FORMS, Derivation, Presentation, formula_lines, level_lines,
                        split_shared, transition_lines, where_lines)

__all__ = ["describe_case", "describe_presentations", "verification_table", "QUANTITY_TITLES",
           "decimal"]

#: Printed names of the quantities.
QUANTITY_TITLES = {
    "isothermal": "chi_isothermal",
    "isolated": "chi_isolated",
    "frequency": "chi(omega)",
    "time": "chi(t)",
}


def _param_line(case: Case) -> str:
    parts = []
    for p in case.parameters:
        rel = {"positive": " > 0", "nonnegative": " >= 0", "real": " real"}[p.assume]
        val = f" = {decimal(p.value)}" if p.value is not None else ""
        unit = f" {p.unit}" if p.unit else ""
        about = f" ({p.description})" if p.description else ""
        parts.append(f"{p.name}{rel}{val}{unit}{about}")
    return "; ".join(parts) or "none"


def describe_case(case: Case) -> list[str]:
    """Header lines: name, description, sites, parameters, H, sector, observables."""
    lines = [f"{case.name}: {case.description}" if case.description else case.name,
             f"  file:        {case.source}"]
    sites = ", ".join(f"{s.name} ({s.kind})" for s in case.sites)
    lines.append(f"  sites:       {sites}; dimension {case.system.basis().dimension}")
    lines.append(f"  parameters:  {_param_line(case)}")
    lines.append(f"  H          = {' '.join(case.hamiltonian_text.split())}")
    if case.magnetism is not None and case.magnetism.zeeman is not None:
        lines.append(f"               {case.magnetism.zeeman.describe(case.energy_unit)}")
    for text, v in case.sector_text:
        lines.append(f"  sector:      {' '.join(text.split())} = {v}")
    for name, text in case.observables_text:
        lines.append(f"  observable:  {name} = {' '.join(text.split())}")
    return lines


def _response_title(label: str, a_text: str, b_text: str) -> str:
    return f"== response '{label}': A = {a_text}, B = {b_text}"


def describe_presentations(presented: list[tuple[str, str, str, Derivation, Presentation]]
                           ) -> list[str]:
    """The results of a case as a results section: the level table and the where-list entries
    the responses share (printed once), then per response its transitions, formulas and own
    where-list entries.

    ``presented`` holds (label, A text, B text, derivation, presentation); the label "levels"
    stands for a case without responses.
    """
    ps = [item[4] for item in presented]
    shared, common, rest = split_shared(ps)
    lines: list[str] = []
    first_d = presented[0][3] if presented else None
    if shared and first_d is not None:
        p0 = ps[0]
        lines += ["", "== levels (shared by the responses below)",
                  f"  blocks: {first_d.spectrum.describe()}"]
        lines += level_lines(p0)
        lines += where_lines(common, p0.rank, collapsed=p0.collapsed, generic=GENERIC_FORMS)
    for (label, a_text, b_text, d, p), own in zip(presented, rest):
        if label == "levels":
            lines += ["", "== levels", f"  blocks: {d.spectrum.describe()}"]
        else:
            lines += ["", _response_title(label, a_text, b_text)]
        if not shared:
            if label != "levels":
                lines.append(f"  blocks: {d.spectrum.describe()}")
            lines += level_lines(p)
        if label != "levels":
            lines += transition_lines(p)
        lines += formula_lines(p, QUANTITY_TITLES)
        title = "where (also the shared list above)" if shared and own else "where"
        lines += where_lines(own, p.rank, collapsed=p.collapsed, generic=GENERIC_FORMS,
                             title=title)
        lines += [f"  note: {n}" for n in p.notes]
    return lines


def _num(z: complex) -> str:
    if abs(z.imag) <= 1e-14 * max(1.0, abs(z.real)):
        return f"{z.real:.10g}"
    return f"{z.real:.6g}{z.imag:+.6g}j"


def verification_table(v: Verification) -> list[str]:
    """A table of every check and a closing verdict."""
    head = ("response", "quantity", "point", "T", "argument", "derived", "reference", "|error|",
            "result")
    rows = []
    for c in v.checks:
        arg = "" if c.argument is None else _num(c.argument)
        derived = _num(c.derived) if c.quantity != "levels" else "max |dE|"
        ref = _num(c.reference) if c.quantity != "levels" else "eigvalsh(H)"
        rows.append((c.response, c.quantity, str(c.point), f"{c.T:.4g}", arg, derived, ref,
                     f"{c.error:.2e}", "ok" if c.ok else "MISMATCH"))
    widths = [max(len(h), *(len(r[i]) for r in rows)) if rows else len(h)
              for i, h in enumerate(head)]
    fmt = "  ".join(f"{{:<{w}}}" for w in widths)
    lines = [fmt.format(*head), fmt.format(*("-" * w for w in widths))]
    lines += [fmt.format(*r) for r in rows]
    seen: list[tuple[int, tuple[tuple[str, float], ...]]] = []
    for c in v.checks:
        if (c.point, c.parameters) not in seen:
            seen.append((c.point, c.parameters))
    lines.append("")
    for point, params in seen:
        shown = ", ".join(f"{n} = {x:.6g}" for n, x in params) or "no parameters"
        lines.append(f"point {point}: {shown}")
    bad = v.failures
    lines.append("")
    if bad:
        lines.append(f"{len(bad)} of {len(v.checks)} checks FAILED")
    else:
        lines.append(f"all {len(v.checks)} checks passed (seed {v.seed}, {v.points} points)")
    return lines
