r"""Paper-ready LaTeX of a derived response (layer: emit).

:func:`latex_document` writes one ``aligned`` environment: the partition function, the table of
levels (energy and degeneracy, with quantum numbers), the pole sum of :math:`\chi_{AB}(\omega)`
with its pole table, and both static susceptibilities. Symbols print as physicists write them
(``beta`` as :math:`\beta`, ``Delta`` as :math:`\Delta`, ``J_1`` with a subscript), implicit
roots as named numbers :math:`r_k` defined by their polynomial, and named combinations
(``substitutions``) are put back before printing.

Imports: sympy, :mod:`symresp.errors`, :mod:`symresp.response`, :mod:`._plan`.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

import sympy as sp

from ..algebra import describe
from ..conventions import beta
from ..errors import InputError
from ..response import Derivation
from ..response import present as _present
from ..spectrum import BlockWeight, LevelRoot, implicit_roots
from ._plan import fingerprint

__all__ = ["latex_document", "latex_text", "latex_comment"]

#: Characters of user text that LaTeX would read as commands, and their text-mode spelling.
_TEXT_ESCAPES = {
    "\\": r"\textbackslash{}", "{": r"\{", "}": r"\}", "$": r"\$", "&": r"\&", "#": r"\#",
    "_": r"\_", "%": r"\%", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}",
}


def latex_text(text: str) -> str:
    r"""User text (a description, a model or observable name) for LaTeX text mode.

    The ten special characters are escaped, and line breaks and other control characters
    become spaces (a blank line would end a paragraph inside an ``aligned`` environment).

    Examples
    --------
    >>> from symresp.emit import latex_text
    >>> print(latex_text("50% of A_1 & B #2, cost $3 {x} ~ y^2 \\ z"))
    50\% of A\_1 \& B \#2, cost \$3 \{x\} \textasciitilde{} y\textasciicircum{}2 \textbackslash{} z
    """
    if not isinstance(text, str):
        raise InputError(f"latex_text: expected a string, got {type(text).__name__}")
    out = []
    for ch in text:
        if ch in _TEXT_ESCAPES:
            out.append(_TEXT_ESCAPES[ch])
        elif ch in "\n\r\t" or not ch.isprintable():
            out.append(" ")
        else:
            out.append(ch)
    return "".join(out)


def latex_comment(text: str) -> str:
    r"""User text for a LaTeX comment line: one line (a line break would end the comment and
    let the rest be typeset), other control characters removed.

    Examples
    --------
    >>> from symresp.emit import latex_comment
    >>> latex_comment("model 'a'\n\\input{x}")
    "model 'a' \\input{x}"
    """
    if not isinstance(text, str):
        raise InputError(f"latex_comment: expected a string, got {type(text).__name__}")
    return "".join(" " if ch in "\n\r\t" else ch for ch in text if ch.isprintable() or
                   ch in "\n\r\t")

#: Expressions with more operations than this are printed as they are (no factoring).
_PRESENT_MAX_OPS = 400


def _check_substitutions(substitutions: object) -> list[tuple[sp.Symbol, sp.Expr]]:
    if substitutions is None:
        return []
    if not isinstance(substitutions, Mapping):
        raise InputError(f"latex_document: substitutions={substitutions!r} must be a mapping "
                         "{symbol: expression}")
    out = []
    for k, v in substitutions.items():
        if not isinstance(k, sp.Symbol):
            raise InputError(f"latex_document: substitution key {k!r} must be a sympy Symbol")
        try:
            expr = sp.sympify(v, strict=True)  # safe: strict mode rejects strings; only sympy objects or Python numbers
        except (sp.SympifyError, TypeError):
            raise InputError(f"latex_document: substitution {k} = {v!r} is not an expression") from None
        if not isinstance(expr, sp.Expr) or expr.has(sp.Float):
            raise InputError(f"latex_document: substitution {k} = {v!r} must be an exact expression")
        out.append((k, expr))
    return out


def _substitute(expr: sp.Expr, subs: list[tuple[sp.Symbol, sp.Expr]]) -> sp.Expr:
    r"""Write the named combinations back as their symbols.

    For a square root :math:`\Delta = \sqrt{X}` the radicand is replaced as well
    (:math:`X \to \Delta^2`), so both forms produced by simplification are recognised.
    """
    for sym, e in subs:
        expr = expr.subs(e, sym)
        if isinstance(e, sp.Pow) and e.exp == sp.Rational(1, 2):
            expr = expr.subs(e.base, sym**2)
        elif isinstance(e, sp.Mul):
            expr = expr.subs(-e, -sym)
    return expr


def _label(name: str) -> str:
    """Quantum-number label: ``Sz`` -> ``S^z``, otherwise sympy's rendering of the name."""
    m = re.fullmatch(r"S([xyz])", name)
    return f"S^{m.group(1)}" if m else sp.latex(sp.Symbol(name))


_X = sp.Symbol("x")


def _root_poly(r: sp.Expr) -> tuple[sp.Expr, int]:
    """Defining polynomial in x and ascending index (0-based) of an implicit root."""
    if isinstance(r, LevelRoot):
        return r.polynomial(_X), int(r.args[0])
    return r.poly.as_expr().subs(r.poly.gens[0], _X), r.index


def _roots(exprs: list[sp.Expr]) -> dict[sp.Expr, sp.Symbol]:
    """``r_{j,k}``: root k (ascending, from 0) of the j-th defining polynomial, numbered in order
    of first appearance (roots inside the weights of semi-closed blocks included)."""
    atoms: dict = {}
    for e in exprs:
        for r in implicit_roots(sp.sympify(e)):  # safe: a sympy object or number from symresp, never user text
            atoms.setdefault(r, None)
    polys: list[sp.Expr] = []
    out = {}
    for r in atoms:
        poly, index = _root_poly(r)
        if poly not in polys:
            polys.append(poly)
        out[r] = sp.Symbol(f"r_{{{polys.index(poly) + 1},{index}}}")
    return out


def _poly_latex(P: sp.Poly, symbol_names) -> str:
    """A polynomial in x by descending powers, each coefficient factored when short."""
    names = dict(symbol_names or {})
    out = ""
    for (k,), c in P.terms():
        c = sp.factor(c) if c.free_symbols and len(sp.Add.make_args(c)) < 8 else c
        power = "" if k == 0 else ("x" if k == 1 else f"x^{{{k}}}")
        if power and c in (1, -1):
            term = ("-" if c == -1 else "") + power
        elif power:
            body = sp.latex(c, symbol_names=names)
            term = (rf"\left({body}\right) {power}" if isinstance(c, sp.Add) else f"{body} {power}")
        else:
            term = sp.latex(c, symbol_names=names)
        out += term if not out else (f" - {term[1:].lstrip()}" if term.startswith("-") else f" + {term}")
    return out or "0"


def _root_rows(roots: dict, symbol_names) -> list[str]:
    """One row per root set: ``r_{j,k} : the roots of p_j(x) = 0`` (and the values of numeric
    roots)."""
    sets: dict = {}
    for r, name in roots.items():
        poly, _ = _root_poly(r)
        sets.setdefault(poly, []).append((r, name))
    rows = []
    for j, (poly, members) in enumerate(sets.items()):
        P = sp.Poly(poly, _X)
        row = (rf"r_{{{j + 1},k}} &: \text{{the roots of }} "
               rf"{_poly_latex(P, symbol_names)} = 0, "
               rf"\ k = 0, \dots, {P.degree() - 1} \text{{ (ascending)}}")
        if not poly.free_symbols - {_X}:
            members = sorted(members, key=lambda m: _root_poly(m[0])[1])
            row += ", & " + r",\ ".join(rf"{sp.latex(name)} \approx {sp.N(r, 15)}" for r, name in members)
        rows.append(row)
    return rows


def latex_document(derivation: Derivation, *, substitutions: Mapping | None = None,
                   symbol_names: Mapping | None = None) -> str:
    r"""LaTeX of a derived response, ready for a paper.

    One ``aligned`` environment with, in order: the partition function
    :math:`Z = \sum_a d_a e^{-\beta E_a}`; the levels :math:`E_a` with degeneracies and quantum
    numbers; the pole sum :math:`\chi_{AB}(\omega) = \sum_k w_k/(\Omega_k - \omega - i0^+)`
    with its poles :math:`\Omega_k` and weights :math:`w_k`; the closed form of
    :math:`\chi_{AB}(\omega)`; the isothermal and isolated static susceptibilities. LaTeX
    comments above it state A, B, the convention and the model fingerprint.

    Parameters
    ----------
    derivation : symresp.response.Derivation
        The derived response (``Response.derivation``).
    substitutions : mapping, optional
        ``{symbol: expression}``: named combinations (say ``Delta: sqrt(U**2 + 16*t**2)``)
        written back as the symbol wherever the expression appears; each is defined in a
        closing line.
    symbol_names : mapping, optional
        ``{symbol: latex}`` overrides passed to :func:`sympy.latex`.

    Returns
    -------
    str

    Raises
    ------
    InputError
        On a bad ``derivation``, ``substitutions`` or ``symbol_names``.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.emit import latex_document
    >>> Delta = sp.Symbol("Delta", positive=True); q = sr.spin("q", sp.Rational(1, 2))
    >>> doc = latex_document(sr.Model(Delta * q.z).response(2 * q.x).derivation)
    >>> print("\n".join(l for l in doc.splitlines() if l.startswith(("E_", r"\Omega"))))
    E_{1} &= \frac{\Delta}{2}, & d_{1} &= 1 \quad (S^z = \frac{1}{2}) \\
    E_{2} &= - \frac{\Delta}{2}, & d_{2} &= 1 \quad (S^z = - \frac{1}{2}) \\
    \Omega_{1} &= - \Delta, & w_{1} &= - \tanh{\left(\frac{\Delta \beta}{2} \right)} \\
    \Omega_{2} &= \Delta, & w_{2} &= \tanh{\left(\frac{\Delta \beta}{2} \right)} \\

    See Also
    --------
    numpy_module_source
    """
    if not isinstance(derivation, Derivation):
        raise InputError(f"latex_document: derivation={derivation!r} must be a "
                         "symresp.response.Derivation (use response.derivation)")
    subs = _check_substitutions(substitutions)
    if symbol_names is not None and not (isinstance(symbol_names, Mapping) and all(
            isinstance(k, sp.Symbol) and isinstance(v, str) for k, v in symbol_names.items())):
        raise InputError(f"latex_document: symbol_names={symbol_names!r} must map sympy "
                         "Symbols to LaTeX strings")
    d = derivation
    poles = d.poles()
    statics = [d.static("isothermal"), d.static("isolated")]
    freq = d.frequency()
    energies = [lv.energy for lv in d.levels]
    roots = _roots([*energies, *statics, freq, *[x for p in poles for x in p], d.partition()])

    def tex(e: sp.Expr, present: bool = True) -> str:
        e = sp.sympify(e).xreplace(roots)  # safe: a sympy object or number from symresp, never user text
        named = _substitute(e, subs)
        if present and named != e and sp.count_ops(named) <= _PRESENT_MAX_OPS and not roots:
            # The derivation's forms are presented already; tidy again only what the
            # substitutions changed.
            named = _substitute(_present(named), subs)
        e = named
        return sp.latex(e, symbol_names=dict(symbol_names or {}))

    rows: list[str] = []
    Z = sp.Add(*[lv.degeneracy * sp.exp(-beta * lv.energy) for lv in d.levels])
    rows.append(r"Z &= \sum_a d_a\, e^{-\beta E_a} = " + tex(Z, present=False))
    for a, lv in enumerate(d.levels):
        qn = "; ".join(", ".join(f"{_label(n)} = {sp.latex(v)}" for n, v in lab)
                       for lab in lv.quantum_numbers)
        label = rf" \quad ({qn})" if qn else ""
        rows.append(rf"E_{{{a + 1}}} &= {tex(lv.energy)}, & d_{{{a + 1}}} &= {lv.degeneracy}{label}")
    # poles() is the table of the converted function: chi = sum_k w_k/(Omega_k - omega - i q 0+)
    # with q = (Fourier sign) * (prescription sign), see docs/conventions.md section 6.
    q = d.convention.frequency_sign * (1 if d.convention.prescription == "retarded" else -1)
    if poles:
        rows.append(rf"\chi_{{AB}}(\omega) &= \sum_k \frac{{w_k}}{{\Omega_k - \omega {'-' if q > 0 else '+'} i0^+}}")
        for k, (Om, w) in enumerate(poles):
            rows.append(rf"\Omega_{{{k + 1}}} &= {tex(Om)}, & w_{{{k + 1}}} &= {tex(w)}")
        rows.append(rf"\chi_{{AB}}(\omega) &= {tex(freq)}")
    else:
        rows.append(r"\chi_{AB}(\omega) &= 0 \quad (\text{no transitions})")
    rows.append(rf"\chi^{{T}}_{{AB}} &= {tex(statics[0])}")
    rows.append(rf"\chi^{{\mathrm{{isol}}}}_{{AB}} &= {tex(statics[1])}")
    for sym, e in subs:
        rows.append(rf"{sp.latex(sym, symbol_names=dict(symbol_names or {}))} &= "
                    rf"{sp.latex(e, symbol_names=dict(symbol_names or {}))}")
    rows += _root_rows(roots, symbol_names)
    if any(sp.sympify(e).has(BlockWeight) for e in [*statics, freq, *[x for p in poles for x in p]]):  # safe: sympy objects from symresp
        rows.append(r"\operatorname{Tr}(P_E A P_{E'} B) &: \text{weight of a semi-closed block; "
                    r"} P_E \text{ projects onto the eigenspace of level } E \text{ of its exact "
                    r"block matrix}")
    header = [latex_comment(f"% Linear response of model {d.system.name!r}, generated by symresp"),
              latex_comment(f"% A = {describe(d.A)}"), latex_comment(f"% B = {describe(d.B)}"),
              f"% Convention: {d.convention.describe()}", f"% Model fingerprint: {fingerprint(d)}"]
    body = " \\\\\n".join(rows)
    return "\n".join(header) + "\n\\begin{aligned}\n" + body + " \\\\\n\\end{aligned}\n"
