"""Text, LaTeX and JSON renderings of derivations and verifications (layer: cli).

Owns the printing of the ``derive`` and ``verify`` commands. Imports sympy, :mod:`json`,
:mod:`symresp.conventions`, :mod:`symresp.response` and :mod:`symresp.cases`.
"""

from __future__ import annotations

import json
from collections.abc import Iterable

import sympy as sp

from ..cases import Case, Verification
from ..conventions import omega, t
from ..models import checkpoint
from ..response import Derivation
from ..spectrum import LevelRoot

__all__ = ["describe_case", "describe_derivation", "derivation_json", "verification_table",
           "QUANTITY_TITLES", "decimal", "text", "RootNames"]

#: Printed names of the quantities.
QUANTITY_TITLES = {
    "isothermal": "chi_isothermal",
    "isolated": "chi_isolated",
    "frequency": "chi(omega)",
    "time": "chi(t)",
}
_LATEX_TITLES = {
    "isothermal": r"\chi^{T}_{AB}",
    "isolated": r"\chi^{\mathrm{isol}}_{AB}",
    "frequency": r"\chi_{AB}(\omega)",
    "time": r"\chi_{AB}(t)",
}


# Above this many tree nodes a formula is printed in sympy's internal (canonical, deterministic)
# term order: sorting the terms of very large sums for display costs more than deriving them.
_SORT_LIMIT = 2000


def text(expr: sp.Expr) -> str:
    """Plain-text form of a formula, readable back by :func:`symresp.text.parse_scalar`."""
    checkpoint("printing the formulas")
    big = any(k >= _SORT_LIMIT for k, _ in enumerate(sp.preorder_traversal(expr)))
    return sp.sstr(expr, order="none") if big else sp.sstr(expr)


class RootNames:
    """Short names for the exact implicit levels (``CRootOf``) of one derivation.

    ``CRootOf(x**3 - 4*x**2 + x + 4, 1)`` prints as ``r1_1`` and the legend states once that
    ``r1_k`` is root k (ascending, counted from 0) of ``x**3 - 4*x**2 + x + 4``. Names avoid
    the symbols already used by the derivation.
    """

    def __init__(self, d: Derivation) -> None:
        taken = {s.name for s in d.system.parameters}
        self.prefix = "r"
        while any(name.startswith(self.prefix) for name in taken):
            self.prefix += "r"
        self.polys: list[sp.Expr] = []
        self.symbols: dict[sp.Expr, sp.Symbol] = {}

    def rename(self, expr: sp.Expr) -> sp.Expr:
        """``expr`` with every implicit root replaced by its short name."""
        roots = expr.atoms(sp.CRootOf, LevelRoot)
        if not roots:
            return expr
        mapping = {}
        x = sp.Symbol("x")
        for r in sorted(roots, key=sp.default_sort_key):
            if r not in self.symbols:
                if isinstance(r, LevelRoot):
                    poly, index = r.polynomial(x), int(r.args[0])
                else:
                    poly, index = r.poly.as_expr().subs(r.poly.gen, x), r.index
                if poly not in self.polys:
                    self.polys.append(poly)
                k = self.polys.index(poly) + 1
                self.symbols[r] = sp.Symbol(f"{self.prefix}{k}_{index}", real=True)
            mapping[r] = self.symbols[r]
        return expr.xreplace(mapping)

    def text(self, expr: sp.Expr) -> str:
        """Plain text with short root names."""
        return text(self.rename(expr))

    def legend(self) -> list[str]:
        """One line per implicit root: name, defining polynomial, numeric value."""
        out = []
        for r, sym in sorted(self.symbols.items(), key=lambda item: item[1].name):
            poly = sp.sstr(self.polys[int(sym.name[len(self.prefix):].split("_")[0]) - 1])
            if isinstance(r, LevelRoot):
                out.append(f"{sym.name} = root {int(r.args[0])} (ascending) of {poly}, in x "
                           "(parameter-dependent: solved numerically where numbers are given)")
            else:
                out.append(f"{sym.name} = root {r.index} (ascending) of {poly} = {sp.N(r, 15)}")
        return out


def quantity(d: Derivation, name: str) -> sp.Expr:
    """The closed form of one quantity."""
    if name in ("isothermal", "isolated"):
        return d.static(name)  # type: ignore[arg-type]
    if name == "frequency":
        return d.frequency(omega)
    return d.time(t)


def decimal(value: sp.Rational) -> str:
    """``value`` as a terminating decimal when it is one (25/2 -> 12.5), else as a fraction."""
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


def describe_derivation(label: str, d: Derivation, quantities: Iterable[str], *,
                        texts: tuple[str, str] = ("", ""), latex: bool = False) -> list[str]:
    """Levels, transitions, Z and the requested quantities of one derived response.

    ``texts`` are A and B as written in the case file (the operators are printed otherwise).
    """
    qs = list(quantities)
    roots = RootNames(d)
    a_text, b_text = (texts[0] or str(d.A)), (texts[1] or str(d.B))
    lines = ["", f"== response '{label}': A = {a_text}, B = {b_text}" if label != "levels" else
             "== levels", f"  blocks: {d.spectrum.describe()}"]
    if not d.spectrum.is_closed_form:
        lines.append("  note: some levels are exact roots of irreducible polynomials of degree >= 3: "
                     "semi-closed form (names and polynomials at the end)")
    lines.append(f"  levels ({len(d.levels)}): energy, degeneracy g, quantum numbers")
    for k, lv in enumerate(d.levels):
        qn = "; ".join(", ".join(f"{n}={v}" for n, v in lab) for lab in lv.quantum_numbers)
        lines.append(f"    [{k}] E = {roots.text(lv.energy):<34} g = {lv.degeneracy:<3} {qn}")
    trs = d.transitions() if label != "levels" else ()
    if label != "levels":
        lines.append("  transitions a -> b: Omega = E_b - E_a, W = Tr(P_a A P_b B)")
        for tr in trs:
            lines.append(f"    [{tr.lower}] -> [{tr.upper}]  Omega = {roots.text(tr.frequency)},  "
                         f"W = {roots.text(tr.matrix_weight)}")
        if not trs:
            lines.append("    none (A and B only connect states within levels)")
    lines.append(f"  Z = {roots.text(d.partition())}")
    for q in qs:
        expr = quantity(d, q)
        if latex:
            lines.append(f"  {_LATEX_TITLES[q]} = {sp.latex(roots.rename(expr))}")
        else:
            lines.append(f"  {QUANTITY_TITLES[q]} = {roots.text(expr)}")
    legend = roots.legend()
    if legend:
        lines.append("  implicit levels (exact real roots):")
        lines += [f"    {line}" for line in legend]
    return lines


def derivation_json(case: Case, derivations: list[tuple[str, Derivation, tuple[str, ...]]]) -> str:
    """All results as a JSON document; formulas as text (re-readable by the formula parser)
    and as LaTeX."""
    doc = {
        "case": case.name,
        "description": case.description,
        "file": case.source,
        "energy_unit": case.energy_unit,
        "convention": derivations[0][1].convention.describe() if derivations else "",
        "sites": [{"name": s.name, "kind": s.kind, "modes": list(s.modes)} for s in case.sites],
        "parameters": [{"name": p.name, "assume": p.assume,
                        "value": decimal(p.value) if p.value is not None else None,
                        "unit": p.unit, "description": p.description} for p in case.parameters],
        "hamiltonian": case.hamiltonian_text,
        "responses": [],
    }
    texts = {r.label: (r.A_text, r.B_text) for r in case.responses}
    for label, d, qs in derivations:
        a_text, b_text = texts.get(label, ("", ""))
        roots = RootNames(d)
        show = roots.text  # formulas with short names for implicit levels
        entry = {
            "label": label,
            "A": a_text, "B": b_text,
            "levels": [{"energy": show(lv.energy), "degeneracy": lv.degeneracy,
                        "quantum_numbers": [{n: show(v) for n, v in lab}
                                            for lab in lv.quantum_numbers]} for lv in d.levels],
            "transitions": [] if label == "levels" else [
                {"lower": tr.lower, "upper": tr.upper, "frequency": show(tr.frequency),
                 "matrix_weight": show(tr.matrix_weight)} for tr in d.transitions()],
            "partition_function": show(d.partition()),
            "quantities": {q: {"text": show(quantity(d, q)),
                               "latex": sp.latex(roots.rename(quantity(d, q)))} for q in qs},
        }
        entry["implicit_levels"] = roots.legend()
        doc["responses"].append(entry)  # type: ignore[union-attr]
    return json.dumps(doc, indent=2)


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
