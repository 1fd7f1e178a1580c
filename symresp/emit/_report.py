r"""LaTeX of presented responses: a complete document or its body (layer: emit).

Owns :func:`latex_report` (``symresp derive --latex`` / ``--latex-body``),
:func:`presentation_latex` (the body of one presentation), :func:`formula_latex` and
:func:`latex_names`. The structure is that of the text output (:mod:`symresp.response._render`):
the level table as a ``longtable`` (sorted by energy, degeneracies, quantum numbers, marks), the
transitions as a ``longtable``, the formulas in ``align*`` (long ones broken after whole terms,
brackets sized with ``\bigl``/``\bigr`` so they may span rows) and the where-list as an
``align*`` block. All user text (case name, description, labels, operator texts) is escaped.
The document needs only ``amsmath`` and ``longtable`` (both in every TeX distribution).

Imports sympy, :mod:`symresp.errors`, :mod:`symresp.response`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import sympy as sp
from sympy.printing.latex import LatexPrinter

from ..errors import InputError
from ..response import Presentation, split_shared
from ..spectrum import LevelRoot
from ..response._render import merge_labels, term_key
from ._latex import _poly_latex, latex_text

__all__ = ["latex_report", "presentation_latex", "presentation_aligned", "formula_latex", "latex_names", "escape_text",
           "LATEX_TITLES"]

#: LaTeX names of the quantities.
LATEX_TITLES = {
    "isothermal": r"\chi^{T}_{AB}",
    "isolated": r"\chi^{\mathrm{isol}}_{AB}",
    "frequency": r"\chi_{AB}(\omega)",
    "time": r"\chi_{AB}(t)",
}
#: Generic where-list lines (LaTeX) of collapsed kinds, see ``Presentation.collapsed``.
GENERIC_LATEX = {
    "population": r"p_i &= e^{-\beta(E_i - E_1)}/Z \quad\text{(per state of level } i\text{)}",
    "partition": r"Z &= \textstyle\sum_i g_i\, e^{-\beta(E_i - E_1)}",
}
#: A formula row holds about this many characters of plain text before it is broken.
ROW_WIDTH = 55

def escape_text(text: str) -> str:
    r"""``text`` safe in LaTeX text mode: :func:`symresp.emit.latex_text` (the ten special
    characters escaped, control characters made spaces), and ``< > |``, which the default font
    encoding would print as other glyphs, written as their text commands.

    Examples
    --------
    >>> escape_text("50% of {x}_1 & $y$ <a|b>")
    '50\\% of \\{x\\}\\_1 \\& \\$y\\$ \\textless{}a\\textbar{}b\\textgreater{}'
    """
    out = latex_text(str(text))
    return (out.replace("<", r"\textless{}").replace(">", r"\textgreater{}")
            .replace("|", r"\textbar{}"))


def latex_names(p: Presentation) -> dict[sp.Symbol, str]:
    r"""LaTeX of the where-list symbols: :math:`E_1`, :math:`p_3`, :math:`\Omega_2`,
    :math:`w_1`, :math:`w^-_1`, :math:`\langle A\rangle`, :math:`r_{1,0}`, ...

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> q = sr.spin("q", sp.Rational(1, 2)); D = sp.Symbol("Delta", positive=True)
    >>> names = latex_names(sr.Model(D * q.z).response(2 * q.x).presented())
    >>> sorted(names.values())[:2]
    ['E_{1}', 'E_{2}']
    """
    out: dict[sp.Symbol, str] = {}
    for row in p.levels:
        out[row.symbol] = sp.latex(row.symbol)
    for d in p.definitions:
        name = d.symbol.name.rstrip("_")
        if d.kind == "mean":
            out[d.symbol] = rf"\langle {name[0]}\rangle"
        elif d.kind == "weight" and name.startswith("wm"):
            out[d.symbol] = rf"w^{{-}}_{{{name[2:]}}}"
        elif d.kind == "root":
            k, _, idx = name[1:].partition("_")
            out[d.symbol] = rf"r_{{{k},{idx}}}"
        else:
            out[d.symbol] = sp.latex(sp.Symbol(name))
    for q, sym in p.formula_symbols:
        out[sym] = LATEX_TITLES[q]
    return out


class _Printer(LatexPrinter):
    """sympy's LaTeX printer with the terms of every sum in level order."""

    def __init__(self, rank: Mapping, names: Mapping) -> None:
        super().__init__({"symbol_names": dict(names)})
        self._rank = rank

    def _as_ordered_terms(self, expr, order=None):
        terms = expr.as_ordered_terms()
        return sorted(terms, key=term_key(self._rank)) if self._rank else terms


def formula_latex(expr: sp.Expr, rank: Mapping | None = None,
                  names: Mapping | None = None) -> str:
    r"""LaTeX of one expression, sums in level order, where-list symbols named.

    Examples
    --------
    >>> import sympy as sp
    >>> p1, p2 = sp.symbols("p1 p2")
    >>> formula_latex(p2 - p1, {p1: 1, p2: 2})
    '- p_{1} + p_{2}'
    """
    return _Printer(rank or {}, names or {}).doprint(expr)


def _plain_length(expr: sp.Expr) -> int:
    """Estimated printed width in characters: a fraction is as wide as the wider of its
    numerator and denominator, not as their plain-text sum."""
    if expr.is_Add:
        return sum(_plain_length(a) + 3 for a in expr.args) - 3
    if expr.is_Mul:
        num, den = sp.fraction(expr)
        if den != 1:
            return max(_plain_length(num), _plain_length(den)) + 2
        return sum(_plain_length(a) + 1 for a in expr.args) - 1
    if expr.is_Pow and expr.exp.is_Integer and expr.exp > 0:
        return _plain_length(expr.base) + 4
    if isinstance(expr, sp.exp):
        return max(3, _plain_length(expr.args[0]) * 2 // 3)     # a superscript is small
    return len(sp.sstr(expr))


def _chunks(expr: sp.Expr, pr: _Printer, width: int) -> list[str]:
    """LaTeX of ``expr`` in pieces of about ``width`` plain characters, cut after whole terms.

    A long sum is cut between terms; a product whose longest factor is a long sum becomes
    ``factors \bigl( term + ... \bigr)`` (a quotient ``\frac{1}{d}\bigl(...\bigr)``), so the
    brackets may span rows.
    """
    if _plain_length(expr) <= width:
        return [pr.doprint(expr)]
    if expr.is_Add:
        terms = pr._as_ordered_terms(expr)
        out: list[str] = []
        current, length = "", 0
        for i, term in enumerate(terms):
            sign = ""
            if i > 0:
                if term.could_extract_minus_sign():
                    sign, term = "- ", -term
                else:
                    sign = "+ "
            pieces = _chunks(term, pr, width)
            if len(pieces) > 1:
                if current:
                    out.append(current)
                out += [sign + pieces[0], *pieces[1:]]
                current, length = "", 0
                continue
            tex = pr.doprint(term)
            if isinstance(term, sp.Add):
                tex = rf"\left({tex}\right)"
            if current and length + _plain_length(term) + 3 > width:
                out.append(current)
                current, length = "", 0
            current = f"{current} {sign}{tex}".strip()
            length += _plain_length(term) + 3
        if current:
            out.append(current)
        return out
    if expr.is_Pow and expr.base.is_Add and expr.exp.is_Integer and expr.exp > 0:
        inner = _chunks(expr.base, pr, width)
        return _wrap_pieces(inner, r"\bigl(", rf"\bigr)^{{{expr.exp}}}")
    if expr.is_Mul:
        # The factors as they stand (sp.fraction would distribute a number over a sum).
        factors = [f for f in expr.args if not (f.is_Pow and f.exp.is_negative)]
        den = sp.Mul(*[f.base ** (-f.exp) for f in expr.args if f.is_Pow and f.exp.is_negative])
        longest = max(factors, key=_plain_length) if factors else sp.Integer(1)
        rest = sp.Mul(*[f for f in factors if f is not longest])
        head = "" if rest == 1 else ("- " if rest == -1 else pr.doprint(rest) + " ")
        long_den = den != 1 and _plain_length(den) > width // 2
        if den != 1 and not long_den:
            head += rf"\frac{{1}}{{{pr.doprint(den)}}}"
        if longest.is_Add:
            pieces = _wrap_pieces(_chunks(longest, pr, width), head + r"\bigl(", r"\bigr)")
        else:
            pieces = [head + pr.doprint(longest)]
        if long_den:
            # A long denominator goes after the numerator, as a factor (...)^{-1}.
            pieces += _wrap_pieces(_chunks(den, pr, width), r"\times \bigl(", r"\bigr)^{-1}")
        return pieces
    return [pr.doprint(expr)]


def _wrap_pieces(pieces: list[str], left: str, right: str) -> list[str]:
    """``pieces`` with ``left`` before the first and ``right`` after the last."""
    if len(pieces) == 1:
        return [left + pieces[0] + right]
    return [left + pieces[0], *pieces[1:-1], pieces[-1] + right]


def _rows(name: str, expr: sp.Expr, pr: _Printer, width: int = ROW_WIDTH) -> list[str]:
    pieces = _chunks(expr, pr, width)
    rows = [f"{name} &= {pieces[0]}"]
    rows += [rf"&\quad {piece}" for piece in pieces[1:]]
    return rows


def _align(rows: list[str]) -> list[str]:
    if not rows:
        return []
    return [r"\begin{align*}", *[r + r" \\" for r in rows[:-1]], rows[-1], r"\end{align*}"]


def _qn_latex(labels) -> str:
    merged = merge_labels(labels)
    if merged is None:
        return "; ".join(", ".join(rf"{escape_text(n)} $= {sp.latex(v)}$" for n, v in lab)
                         for lab in labels)
    return ", ".join(
        rf"{escape_text(n)} $= {sp.latex(vs[0])}$" if len(vs) == 1 else
        rf"{escape_text(n)} $\in \{{{', '.join(sp.latex(v) for v in vs)}\}}$"
        for n, vs in merged)


def _level_table(p: Presentation, names: Mapping) -> list[str]:
    pr = _Printer({}, names)
    out = [r"\begin{longtable}{llll}", r"\hline",
           r"level & energy & $g$ & quantum numbers \\", r"\hline", r"\endhead"]
    for row in p.levels:
        marks = f" ({escape_text(', '.join(row.marks))})" if row.marks else ""
        out.append(rf"${names[row.symbol]}$ & ${pr.doprint(row.energy)}$ & {row.degeneracy} & "
                   rf"{_qn_latex(row.quantum_numbers)}{marks} \\")
    out += [r"\hline", r"\end{longtable}"]
    unnamed = [(n, d) for n, d in p.quantum_numbers if n.startswith("Q")]
    if unnamed:
        out.append("Conserved: " + "; ".join(
            rf"{escape_text(n)} $=$ \texttt{{{escape_text(d)}}}" for n, d in unnamed) + r"\par")
    return out


def _transition_table(p: Presentation, names: Mapping) -> list[str]:
    if not p.transitions:
        return [r"No transitions: $A$ and $B$ only connect states within levels.\par"]
    pr = _Printer({}, names)
    asym = any(not tr.symmetric for tr in p.transitions)
    cols = "llll" if asym else "lll"
    head = (r"$i \to j$ & $\Omega = E_j - E_i$ & $W_{ij} = \mathrm{Tr}(P_i A P_j B)$"
            + (r" & $W_{ji}$" if asym else "") + r" \\")
    out = [rf"\begin{{longtable}}{{{cols}}}", r"\hline", head, r"\hline", r"\endhead"]
    for tr in p.transitions:
        row = (rf"${tr.lower} \to {tr.upper}$ & ${pr.doprint(tr.frequency)}$ & "
               rf"${pr.doprint(tr.up)}$")
        if asym:
            row += rf" & ${pr.doprint(tr.down)}$"
        out.append(row + r" \\")
    out += [r"\hline", r"\end{longtable}"]
    return out


def _where(defs, p: Presentation, names: Mapping, collapsed) -> list[str]:
    return _align(_where_rows(defs, p, names, collapsed))


def _where_rows(defs, p: Presentation, names: Mapping, collapsed) -> list[str]:
    pr = _Printer(p.rank, names)
    rows: list[str] = []
    done: set = set()
    for d in defs:
        if d.kind in collapsed:
            if d.kind not in done:
                done.add(d.kind)
                rows.append(GENERIC_LATEX[d.kind])
            continue
        if d.kind == "root":
            # One row per root set: r_{1,k}: the roots of p(x) = ... (values of numeric roots).
            k = d.symbol.name.rstrip("_")[1:].partition("_")[0]
            meaning, _, value = d.meaning.partition("; value ")
            if ("root", k, meaning) not in done:
                done.add(("root", k, meaning))
                r, x = d.value, sp.Symbol("x")
                poly = (r.polynomial(x) if isinstance(r, LevelRoot)
                        else r.poly.as_expr().subs(r.poly.gen, x))
                degree = sp.Poly(poly, x).degree()
                row = (rf"r_{{{k},k}} &: \text{{the roots of }} {_poly_latex(sp.Poly(poly, x), None)} = 0,\ "
                       rf"k = 0, \dots, {degree - 1} \text{{ (ascending)}}")
                if poly.free_symbols - {x}:
                    row += r"\text{; found numerically where numbers are given}"
                rows.append(row)
            if value:
                rows.append(rf"{names[d.symbol]} &\approx {value.partition(' = ')[2]}")
            continue
        rows += _rows(names[d.symbol], d.value, pr)
    return rows


def _formulas(p: Presentation, names: Mapping) -> list[str]:
    pr = _Printer(p.rank, names)
    rows: list[str] = []
    for f in p.formulas:
        rows += _rows(LATEX_TITLES[f.quantity], f.expr, pr)
    out = _align(rows)
    if p.correlation:
        out.append(r"Correlation lines, $S_{AB}(\omega) = 2\pi\sum_k s_k\,"
                   r"\delta(\omega - \Omega_k)$:")
        crow = []
        for ln in p.correlation:
            crow += _rows(rf"s\bigl({pr.doprint(ln.frequency)}\bigr)", ln.weight, pr)
        out += _align(crow)
    return out


def presentation_latex(p: Presentation, *, levels: bool = True, where=None,
                       transitions: bool = True) -> str:
    r"""LaTeX body of one presentation: level table (if ``levels``), transitions, formulas and
    the where-list (``where``: the definitions to list, default all of ``p``).

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> q = sr.spin("q", sp.Rational(1, 2)); D = sp.Symbol("Delta", positive=True)
    >>> body = presentation_latex(sr.Model(D * q.z).response(2 * q.x).presented())
    >>> print([line for line in body.splitlines() if line.startswith(r"\chi_{AB}(\omega)")][0])
    \chi_{AB}(\omega) &= \frac{2 \Delta \tanh{\left(\frac{\Delta \beta}{2} \right)}}{\Delta^{2} - \omega^{2}} \\
    """
    if not isinstance(p, Presentation):
        raise InputError(f"presentation_latex: p={p!r} must be a symresp Presentation "
                         "(Response.presented())")
    names = latex_names(p)
    out: list[str] = []
    if levels:
        out += _level_table(p, names)
    if transitions:
        out += _transition_table(p, names)
    out += _formulas(p, names)
    defs = p.definitions if where is None else where
    if defs:
        out.append("where")
        out += _where(defs, p, names, p.collapsed)
    out += [rf"\emph{{Note:}} {escape_text(n)}\par" for n in p.notes]
    return "\n".join(out)


def presentation_aligned(p: Presentation) -> str:
    r"""The formulas of a presentation and their where-list as one ``aligned`` block (math
    mode: for a notebook, or inside an equation of the user's document).

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> q = sr.spin("q", sp.Rational(1, 2)); D = sp.Symbol("Delta", positive=True)
    >>> print(presentation_aligned(sr.Model(D * q.z).response(2 * q.x).presented(["isolated"])))
    \begin{aligned}
    \chi^{\mathrm{isol}}_{AB} &= \frac{2 \tanh{\left(\frac{\Delta \beta}{2} \right)}}{\Delta} \\
    Z &= 1 + e^{- \Delta \beta}
    \end{aligned}
    """
    if not isinstance(p, Presentation):
        raise InputError(f"presentation_aligned: p={p!r} must be a symresp Presentation "
                         "(Response.presented())")
    names = latex_names(p)
    pr = _Printer(p.rank, names)
    rows = [r for f in p.formulas for r in _rows(LATEX_TITLES[f.quantity], f.expr, pr)]
    rows += _where_rows(p.definitions, p, names, p.collapsed)
    return "\n".join([r"\begin{aligned}", *[r + r" \\" for r in rows[:-1]], *rows[-1:],
                      r"\end{aligned}"])


_PREAMBLE = [r"\documentclass[11pt]{article}", r"\usepackage{amsmath}",
             r"\usepackage{longtable}", r"\allowdisplaybreaks",
             r"\setlength{\parindent}{0pt}", r"\begin{document}", r"\raggedright"]


def latex_report(title: str, header: Sequence[str],
                 responses: Sequence[tuple[str, str, str, Presentation]], *,
                 body_only: bool = False) -> str:
    r"""A LaTeX document (or its body, for ``\input``) with the results of several responses
    of one model: the shared level table and where-list once, then per response its
    transitions, formulas and own where-list.

    Parameters
    ----------
    title : str
        Plain text (escaped), e.g. the case name and description.
    header : sequence of str
        Plain-text lines (escaped) printed under the title: sites, parameters, H, convention.
    responses : sequence of (label, A text, B text, Presentation)
        Label "levels" stands for a model without responses (levels only).
    body_only : bool
        Without ``\documentclass`` ... ``\begin{document}`` and ``\end{document}``.

    Returns
    -------
    str

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> q = sr.spin("q", sp.Rational(1, 2)); D = sp.Symbol("Delta", positive=True)
    >>> p = sr.Model(D * q.z).response(2 * q.x).presented()
    >>> doc = latex_report("two levels & a drive", ["H = Delta q.z"], [("x", "2 q.x", "2 q.x", p)])
    >>> doc.splitlines()[0], doc.rstrip().splitlines()[-1]
    ('\\documentclass[11pt]{article}', '\\end{document}')
    >>> r"two levels \& a drive" in doc
    True
    """
    if not all(isinstance(item, tuple) and len(item) == 4 and isinstance(item[3], Presentation)
               for item in responses):
        raise InputError("latex_report: responses must be (label, A text, B text, Presentation) "
                         "tuples")
    out: list[str] = [] if body_only else list(_PREAMBLE)
    out.append(rf"\section*{{{escape_text(title)}}}")
    for line in header:
        out.append(escape_text(line) + r"\par")
    ps = [item[3] for item in responses]
    shared, common, rest = split_shared(ps)
    if shared:
        p0 = ps[0]
        names: dict = {}
        for p in ps:
            names.update(latex_names(p))
        out.append(r"\subsection*{Levels}")
        out += _level_table(p0, names)
        if common:
            out.append("where")
            out += _where(common, p0, names, p0.collapsed)
    for (label, a_text, b_text, p), own in zip(responses, rest):
        if label == "levels":
            out.append(r"\subsection*{Levels}")
        else:
            out.append(rf"\subsection*{{Response {escape_text(label)}: "
                       rf"$A$ = \texttt{{{escape_text(a_text)}}}, "
                       rf"$B$ = \texttt{{{escape_text(b_text)}}}}}")
        body = presentation_latex(p, levels=not shared, where=own if shared else None,
                                  transitions=label != "levels")
        if body:
            out.append(body)
    if not body_only:
        out.append(r"\end{document}")
    return "\n".join(out) + "\n"
