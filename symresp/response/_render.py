r"""Plain-text rendering of presented formulas (layer: response).

Owns :func:`formula_text` (one expression on one line, terms in the order of the levels they
belong to), :func:`wrap` (a long line broken after whole terms, never longer than
:data:`MAX_LINE`) and :data:`ORDER_LIMIT`. The presentation measures the cost of a form by the
length of exactly this text, so what is chosen as shortest is what gets printed. Imports sympy
only.
"""

from __future__ import annotations

from collections.abc import Mapping

import sympy as sp
from sympy.printing.str import StrPrinter

__all__ = ["formula_text", "wrap", "MAX_LINE", "WIDTH", "ORDER_LIMIT", "term_key", "level_lines",
           "transition_lines", "formula_lines", "where_lines", "presentation_text",
           "GENERIC_FORMS", "split_shared", "SHARED_KINDS"]

#: Lines are packed to this width when a formula is broken...
WIDTH = 100
#: ... and no printed line of a formula is ever longer than this.
MAX_LINE = 400
#: Above this many tree nodes the terms of a sum are printed in sympy's internal order:
#: sorting very large sums for display costs more than deriving them.
ORDER_LIMIT = 2000


#: Generic text of where-list kinds printed collapsed (see ``Presentation.collapsed``).
GENERIC_FORMS = {
    "population": "p_i = exp(-beta*(E_i - E1))/Z  (per state of level i)",
    "partition": "Z = sum_i g_i*exp(-beta*(E_i - E1))",
}
#: Rank of the terms that contain no ranked atom (ranked atoms go from 0 to about 1000; the
#: frequency and time variables come last, at 10**6).
_UNRANKED = 10**5


def _ranked(expr: sp.Basic, rank: Mapping[sp.Basic, int]) -> int:
    """Smallest rank of a ranked atom (a named symbol, a Boltzmann factor) in ``expr``."""
    found = [r for node in sp.preorder_traversal(expr) if (r := rank.get(node)) is not None]
    return min(found) if found else _UNRANKED


def term_key(rank: Mapping[sp.Basic, int]):
    """Sort key of the terms of a sum: the first level a term refers to, then sympy's order."""
    def key(term: sp.Basic):
        return _ranked(term, rank)
    return key


class _Printer(StrPrinter):
    """sympy's text printer with the terms of every sum ordered by :func:`term_key`."""

    def __init__(self, rank: Mapping[sp.Basic, int], big: bool) -> None:
        super().__init__({"order": "none" if big else None})
        self._rank = rank
        self._big = big

    def _as_ordered_terms(self, expr, order=None):
        if self._big:
            return list(expr.args)
        terms = expr.as_ordered_terms()
        if not self._rank:
            return terms
        return sorted(terms, key=term_key(self._rank))     # stable: sympy's order breaks ties


def _is_big(expr: sp.Basic) -> bool:
    return any(k >= ORDER_LIMIT for k, _ in enumerate(sp.preorder_traversal(expr)))


def formula_text(expr: sp.Basic, rank: Mapping[sp.Basic, int] | None = None) -> str:
    """One-line text of ``expr`` (sympy syntax; readable back by the formula parser once the
    named symbols are known), sums ordered by ``rank``.

    Examples
    --------
    >>> import sympy as sp
    >>> p1, p2, p10 = sp.symbols("p1 p2 p10")
    >>> formula_text(p10 + p2 + p1, {p1: 1, p2: 2, p10: 10})
    'p1 + p2 + p10'
    """
    expr = sp.sympify(expr)  # safe: a sympy object or number from symresp, never user text
    return _Printer(rank or {}, _is_big(expr)).doprint(expr)


# ------------------------------------------------------------------------------- wrapping
def _breaks(text: str) -> list[tuple[int, int, int]]:
    """Candidate break points (position, depth, quality) of a formula's text: before ' + ' and
    ' - ' (quality 0), after '*', '/' and ', ' (quality 1); depth weighs open brackets."""
    out, depth, stack = [], 0, []
    for i, ch in enumerate(text):
        if ch in "([{":
            # Inside a function call (exp(...), sqrt(...)) a break reads worse than inside a
            # grouping bracket: it counts as three levels.
            step = 3 if i > 0 and (text[i - 1].isalnum() or text[i - 1] == "_") else 1
            stack.append(step)
            depth += step
        elif ch in ")]}":
            depth -= stack.pop() if stack else 1
        elif ch == " " and text[i:i + 3] in (" + ", " - ") and i > 0:
            out.append((i + 1, depth, 0))          # the next line starts with the sign
        elif ch == "/" and depth == 0:
            out.append((i + 1, depth, 0.5))        # before a denominator: reads well
        elif ch in "*/," and text[i + 1:i + 2] != "*" and text[i - 1:i] != "*":
            out.append((i + 1, depth, 1))
    return out


def _break_lines(text: str, width: int, indent: str) -> list[str]:
    lines: list[str] = []
    first = True
    while len(text) > (width if first else width - len(indent)):
        limit = width if first else width - len(indent)
        fits = [b for b in _breaks(text) if limit // 2 <= b[0] <= limit]
        fits = fits or [b for b in _breaks(text) if 0 < b[0] <= limit]
        if not fits:
            cut = limit
        else:
            # A sign at bracket depth 1 beats a product sign at depth 0; rightmost among equals.
            cut = min(fits, key=lambda b: (b[1] + 1.5 * b[2], -b[0]))[0]
        piece, text = text[:cut].rstrip(), text[cut:].lstrip()
        lines.append(piece if first else indent + piece)
        first = False
    lines.append(text if first else indent + text)
    return lines


def wrap(head: str, text: str, *, width: int = WIDTH, indent: str = "      ") -> list[str]:
    """``head + text`` broken into lines of at most ``width`` characters (at the outermost
    ' + ' or ' - ' that fits, else after an operator), continuation lines indented; no line is
    ever longer than :data:`MAX_LINE`.

    Examples
    --------
    >>> wrap("  Z = ", "1 + 3*exp(-beta*J)")
    ['  Z = 1 + 3*exp(-beta*J)']
    >>> lines = wrap("x = ", " + ".join(["a"] * 60), width=40)
    >>> max(len(line) for line in lines) <= 40, len(lines)
    (True, 8)
    """
    width = min(width, MAX_LINE)
    return _break_lines(head + text, width, indent)


# ------------------------------------------------------------------------------- blocks
def merge_labels(labels) -> list[tuple[str, list]]:
    """Quantum numbers of the parts of one level, merged where only one of them varies:
    ``[("Sz", [1, 0, -1]), ("S", [1])]``; None when the parts do not merge that way."""
    labels = [tuple(lab) for lab in labels]
    if len(labels) < 2:
        return [(n, [v]) for n, v in labels[0]] if labels else []
    keys = [n for n, _ in labels[0]]
    if any([n for n, _ in lab] != keys for lab in labels):
        return None
    values = [[dict(lab)[k] for lab in labels] for k in keys]
    varying = [i for i, vs in enumerate(values) if len(set(vs)) > 1]
    if len(varying) > 1:
        return None
    out = []
    for k, vs in zip(keys, values):
        unique: list = []
        for v in vs:
            if v not in unique:
                unique.append(v)
        out.append((k, unique))
    return out


def _qn_text(labels) -> str:
    merged = merge_labels(labels)
    if merged is None:
        return "; ".join(", ".join(f"{n}={v}" for n, v in lab) for lab in labels)
    return ", ".join(f"{n}={vs[0]}" if len(vs) == 1 else f"{n} in {{{', '.join(map(str, vs))}}}"
                     for n, vs in merged)


def level_lines(p, *, indent: str = "  ") -> list[str]:
    """The level table of a :class:`~symresp.response.Presentation`: sorted by energy, with
    degeneracies, quantum numbers and marks."""
    rows = [(f"{row.symbol.name} = {formula_text(row.energy)}", row) for row in p.levels]
    width = min(max((len(text) for text, _ in rows), default=0), 48)
    out = [f"{indent}levels ({len(p.levels)}), lowest first: energy E_i, degeneracy g, "
           "quantum numbers"]
    for text, row in rows:
        marks = f"   [{', '.join(row.marks)}]" if row.marks else ""
        line = f"{indent}  {text:<{width}}  g = {row.degeneracy:<3} {_qn_text(row.quantum_numbers)}"
        out += wrap("", line.rstrip() + marks, indent=indent + "      ")
    named = [f"{n} = {d}" for n, d in p.quantum_numbers if n.startswith("Q")]
    if named:
        out += wrap(f"{indent}  conserved: ", "; ".join(named), indent=indent + "    ")
    return out


def transition_lines(p, *, indent: str = "  ") -> list[str]:
    """Transitions i -> j (i below j): frequency and the weights W_ij, W_ji."""
    if not p.transitions:
        return [f"{indent}transitions: none (A and B only connect states within levels)"]
    out = [f"{indent}transitions i -> j: Omega = E_j - E_i, W = Tr(P_i A P_j B) "
           "(W_ji shown where it differs)"]
    for tr in p.transitions:
        head = f"{indent}  {tr.lower} -> {tr.upper}  Omega = {formula_text(tr.frequency)},  W = "
        text = formula_text(tr.up)
        if not tr.symmetric:
            text += f",  W_ji = {formula_text(tr.down)}"
        out += wrap(head, text, indent=indent + "      ")
    return out


def formula_lines(p, names: dict[str, str] | None = None, *, indent: str = "  ") -> list[str]:
    """The formulas, each broken after whole terms where it is long."""
    out = []
    rank = p.rank
    for f in p.formulas:
        name = (names or {}).get(f.quantity, f.name)
        out += wrap(f"{indent}{name} = ", formula_text(f.expr, rank), indent=indent + "    ")
    if p.correlation:
        out.append(f"{indent}correlation lines, S(omega) = 2*pi*sum_k s_k*delta(omega - Omega_k):")
        for ln in p.correlation:
            out += wrap(f"{indent}  Omega = {formula_text(ln.frequency)}:  s = ",
                        formula_text(ln.weight, rank), indent=indent + "      ")
    return out


def where_lines(definitions, rank, *, indent: str = "  ", title: str = "where",
                collapsed=(), generic=None) -> list[str]:
    """The where-list; short definitions of one kind share a line; kinds in ``collapsed`` are
    printed once in their generic form (``generic[kind]``)."""
    if not definitions:
        return []
    out = [f"{indent}{title}"]
    done: set = set()
    pending: list[str] = []

    def flush() -> None:
        if pending:
            out.extend(wrap(f"{indent}  ", ";   ".join(pending), indent=indent + "    "))
            pending.clear()

    kind = None
    for d in definitions:
        if d.kind != kind:
            flush()
            kind = d.kind
        if d.kind in collapsed:
            if d.kind not in done:
                flush()
                done.add(d.kind)
                out += wrap(f"{indent}  ", generic[d.kind], indent=indent + "    ")
            continue
        if d.kind == "root":
            # One line per root set (r1_0, r1_1, ... share "r1_k: the roots of p(x) = ...").
            flush()
            head, _, _ = d.symbol.name.rpartition("_")
            meaning, _, value = d.meaning.partition("; value ")
            if (head, meaning) not in done:
                done.add((head, meaning))
                out += wrap(f"{indent}  {head}_k: ", meaning, indent=indent + "    ")
            if value:
                out += wrap(f"{indent}    ", value, indent=indent + "    ")
            continue
        text = f"{d.symbol.name} = {formula_text(d.value, rank)}"
        if len(text) <= 40 and d.kind in ("population", "frequency", "radical", "constant"):
            if pending and len(";   ".join([*pending, text])) > WIDTH - len(indent) - 2:
                flush()
            pending.append(text)
            continue
        flush()
        out += wrap(f"{indent}  {d.symbol.name} = ", formula_text(d.value, rank),
                    indent=indent + "    ")
    flush()
    return out


def presentation_text(p) -> list[str]:
    """All blocks of a presentation: levels, transitions, formulas, where-list, notes."""
    lines = level_lines(p) + transition_lines(p) + formula_lines(p)
    lines += where_lines(p.definitions, p.rank, collapsed=p.collapsed, generic=GENERIC_FORMS)
    lines += [f"  note: {n}" for n in p.notes]
    return lines


#: Where-list kinds that depend on the levels alone and can be shared by several responses.
SHARED_KINDS = ("root", "constant", "radical", "partition", "population")


def split_shared(presentations) -> tuple[bool, list, list[list]]:
    """(levels shared, shared where-list, the remaining where-list of each presentation).

    Presentations of one model share the level table and its where-list entries (roots,
    radicals, Z, populations) when their level tables agree and no name means two things;
    otherwise nothing is shared.
    """
    ps = list(presentations)
    if len(ps) < 2 or any(p.levels != ps[0].levels for p in ps):
        return False, [], [list(p.definitions) for p in ps]
    shared: dict = {}
    order: list = []
    for p in ps:
        for d in p.definitions:
            if d.kind not in SHARED_KINDS:
                continue
            old = shared.get(d.symbol)
            if old is None:
                shared[d.symbol] = d
                order.append(d.symbol)
            elif old.value != d.value:
                return False, [], [list(p.definitions) for p in ps]
    rank = {s: k for k, s in enumerate(order)}
    kinds = {k: i for i, k in enumerate(SHARED_KINDS)}
    by_level: dict = {}
    for p in ps:
        by_level.update(p.rank)
    # Kind order first, then the order of first appearance; populations by level.
    common = sorted((shared[s] for s in order),
                    key=lambda d: (kinds[d.kind], by_level.get(d.symbol, 0)
                                   if d.kind == "population" else rank[d.symbol]))
    rest = [[d for d in p.definitions if d.kind not in SHARED_KINDS] for p in ps]
    return True, common, rest
