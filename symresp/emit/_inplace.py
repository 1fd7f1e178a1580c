r"""Array kernels written with in-place updates of their own temporaries (layer: emit).

A stage-B kernel runs on every call of a fit, over grids of a few thousand temperatures, where
numpy spends about as long allocating each intermediate array as computing it. Printed as
plain expressions, ``(3*x0 + x1)*T`` makes two fresh arrays; written as ``t = 3*x0; t += x1;
t *= T`` it makes one. This module turns the straight-line program into such statements.

Rules, each one needed for correctness:

* only a temporary made here (a *fresh* value) is updated in place, never an argument, a
  stage-P value or a helper's result (a helper may return one of its inputs);
* a named line is fresh if its value was; it may be updated in place at its last use only,
  if it occurs once in that expression and is not returned; a line that is just another
  name, or passes a name to a helper, takes that name's freshness away (they may be one
  array);
* ``t op= v`` only when v is known real (sympy assumptions of the program's symbols, the
  inputs the caller knows real, and lines computed from real values): a real v leaves the
  dtype of t (float or complex) unchanged, a complex one would not fit a float t;
* factors that do not depend on temperature (stage-P values, numbers) are multiplied
  together first: they are numbers on the fitting path, so the product costs nothing;
* with :data:`STACK_MIN` levels or more, and sums over them with :data:`STACKED_TERMS` terms
  per level or more, the Boltzmann factors are computed as one array
  ``_X`` (a row per level; ``_x{a}`` are views of its rows, never updated in place) and a sum
  of temperature-free coefficients times Boltzmann factors (or times scaled factors such as a
  Jacobian's -beta E'_a x_a) is a product with it: a partition sum over 12 levels is one BLAS
  call, not 23 passes. Lines that are such sums and nothing else are computed together, one
  matrix product ``_S`` when ``_X`` is made (their coefficients are inputs); each then owns a
  row of ``_S`` and may update it in place. A sum with other terms takes its linear part as
  one vector-matrix product (``_lincomb_a``). Rows nobody reads are not written.

The arrays of one kernel call all have the grid's shape or are numbers, so an in-place update
never needs to grow its target.

Imports: sympy only.
"""

from __future__ import annotations

from dataclasses import dataclass

import sympy as sp

from ._functions import Boltzmann, BoltzmannT

__all__ = ["inplace_body", "STACK_MIN"]

_TEMPERATURE = ("_T", "_beta")
#: From this many levels on, the Boltzmann factors are one (levels x grid) array ``_X`` and the
#: sums over levels (partition sum, means, elastic terms) are vector-matrix products with it.
STACK_MIN = 4
#: ... and when the sums over them have at least this many terms per level (two whole sums).
STACKED_TERMS = 2


@dataclass(frozen=True, slots=True)
class _Val:
    code: str           # a name, a literal or a parenthesised expression
    fresh: bool         # a temporary nobody else refers to: may be updated in place
    real: bool          # known real


def _counts(expr: sp.Expr) -> dict:
    """How often each symbol occurs in ``expr`` (one pass over the tree)."""
    out: dict = {}
    for node in sp.preorder_traversal(expr):
        if node.is_Symbol:
            out[node] = out.get(node, 0) + 1
    return out


def _known_real(e: sp.Expr, real_names: set) -> bool:
    """True when ``e`` is known real: sums, products and integer powers of real parts, real
    numbers, symbols real by assumption or named in ``real_names``, and any other node that
    sympy's assumptions find real (with the names of ``real_names`` taken real).

    Read off the structure: a line of a large program is a sum of hundreds of products of
    symbols, and sympy's assumption system re-derives the realness of each sub-expression on
    every query of the whole (the costliest part of writing a kernel, measured). A sum with
    a part not known real counts as not known real, even where sympy might prove it (``x +
    conjugate(x)``): such a value is then not updated in place, which is the safe side.
    """
    if e.is_Symbol:
        return bool(e.is_real) or e.name in real_names
    if e.is_Number:
        return bool(e.is_real)
    if e.is_Add or e.is_Mul:
        return all(_known_real(a, real_names) for a in e.args)
    if e.is_Pow and e.exp.is_Integer:
        return _known_real(e.base, real_names)
    if e.is_real:
        return True
    subs = {s: sp.Symbol(s.name, real=True) for s in e.free_symbols
            if s.name in real_names and not s.is_real}
    return bool(subs) and e.xreplace(subs).is_real is True


class _Writer:
    def __init__(self, printer, tdep: set, consumable: set, real_names: set, rows: dict,
                 scaled: dict, linears: dict | None = None):
        self.printer = printer
        # term -> linear(term), shared by the writers of one kernel (same rows and scaled rows)
        self.linears = {} if linears is None else linears
        self.rows = rows                  # Boltzmann factor symbol -> its row of _X
        self.scaled = scaled              # symbol -> (row, coefficient, temperature factor)
        self.used: set = set()            # symbols the written statements read
        self.real_names = real_names      # names of values known real beyond their symbols
        self.tdep = tdep                  # names of the values that depend on the temperature
        self.consumable = consumable      # fresh named values dead after this line
        self.out: list[str] = []
        self.n = 0

    # ------------------------------------------------------------------ helpers
    def temp(self, target: str | None) -> str:
        if target is not None:
            return target
        self.n += 1
        return f"_t{self.n}"

    def emit(self, name: str, code: str) -> None:
        self.out.append(f"    {name} = {code}")

    def plain(self, e: sp.Expr) -> _Val:
        self.used |= e.free_symbols
        code = self.printer.doprint(e)
        if not (e.is_Symbol or e.is_Number):
            code = f"({code})"
        fresh = e.is_Symbol and e in self.consumable
        return _Val(code, bool(fresh), self.is_real(e))

    def is_real(self, e: sp.Expr) -> bool:
        return _known_real(e, self.real_names)

    def varies(self, e: sp.Expr) -> bool:
        return any(f.name in self.tdep for f in e.free_symbols)

    # ------------------------------------------------------------------ nodes
    def value(self, e: sp.Expr, target: str | None = None) -> _Val:
        if e.is_Add and self.varies(e):
            return self.add(e, target)
        if e.is_Mul and self.varies(e):
            return self.mul(e, target)
        if e.is_Pow and e.exp.is_Integer and e.exp > 1 and self.varies(e.base):
            base = self.value(e.base)
            name = self.temp(target)
            self.emit(name, f"{base.code}**{int(e.exp)}")
            return _Val(name, True, base.real)
        return self.plain(e)

    def will_be_fresh(self, e: sp.Expr) -> bool:
        if e.is_Symbol:
            return e in self.consumable
        return self.varies(e) and (e.is_Add or e.is_Mul or e.is_Pow)

    def combine(self, acc: _Val, op: str, v: _Val, target: str | None) -> _Val:
        """acc op v, in place when acc is fresh and v real (the operands swapped for + and *
        when only v is fresh: both are exactly commutative in floating point)."""
        if op in "+*" and v.fresh and not acc.fresh and acc.real:
            acc, v = v, acc
        real = acc.real and v.real
        if acc.fresh and v.real and acc.code.isidentifier():
            self.out.append(f"    {acc.code} {op}= {v.code}")
            return _Val(acc.code, True, real)
        name = self.temp(target)
        self.emit(name, f"{acc.code} {op} {v.code}")
        return _Val(name, True, real)

    def start(self, exprs: list, target: str | None) -> tuple[_Val, list[_Val]]:
        """The accumulator (a term expected fresh, written to ``target``) and the others."""
        k = next((i for i, x in enumerate(exprs) if self.will_be_fresh(x)), 0)
        acc = self.value(exprs[k], target)
        return acc, [self.value(x) for i, x in enumerate(exprs) if i != k]

    def linear(self, t: sp.Expr) -> tuple[sp.Expr, int, sp.Expr] | None:
        """(coefficient, row, factor) if t = coefficient * factor * (row of _X), with a
        temperature-free coefficient; a scaled row (``x_a`` times such factors, e.g. the
        derivative -beta E'_a x_a) counts as its row."""
        if t not in self.linears:
            self.linears[t] = self._linear(t)
        return self.linears[t]

    def _linear(self, t: sp.Expr) -> tuple[sp.Expr, int, sp.Expr] | None:
        factors = list(t.args) if t.is_Mul else [t]
        hits = [k for k, f in enumerate(factors) if f in self.rows or f in self.scaled]
        if len(hits) != 1:
            return None
        x = factors.pop(hits[0])
        row, coef, factor = (self.rows[x], sp.Integer(1), sp.Integer(1)) if x in self.rows \
            else self.scaled[x]
        for f in factors:
            if self.varies(f):
                factor *= f
            else:
                coef *= f
        return coef, row, factor

    def lincomb(self, terms: list, target: str | None) -> _Val | None:
        """The part of a sum that is factor * sum_a coef_a x_a, as one product with _X
        (removed from ``terms``); None where fewer than STACK_MIN levels take part."""
        if not self.rows:
            return None
        groups: dict[sp.Expr, dict[int, tuple[sp.Expr, sp.Expr]]] = {}
        for t in terms:
            lin = self.linear(t)
            if lin is not None and lin[1] not in groups.setdefault(lin[2], {}):
                groups[lin[2]][lin[1]] = (lin[0], t)
        factor, best = max(groups.items(), key=lambda kv: len(kv[1]), default=(None, {}))
        if len(best) < STACK_MIN:
            return None
        for _, t in best.values():
            terms.remove(t)
        vec = ", ".join(self.printer.doprint(best[k][0] if k in best else sp.Integer(0))
                        for k in range(len(self.rows)))
        self.used |= set().union(*[best[k][0].free_symbols for k in best])
        name = self.temp(target)
        self.emit(name, f"_lincomb_a(_X, ({vec},))")
        acc = _Val(name, True, all(self.is_real(c) for c, _ in best.values()))
        return acc if factor == 1 else self.combine(acc, "*", self.value(factor), target)

    def add(self, e: sp.Expr, target: str | None) -> _Val:
        terms = list(e.args)
        stacked = self.lincomb(terms, target)
        plus = [t for t in terms if not t.could_extract_minus_sign()]
        minus = [-t for t in terms if t.could_extract_minus_sign()]
        if stacked is not None:
            acc, rest = stacked, [self.value(t) for t in plus]
        elif plus:
            acc, rest = self.start(plus, target)
        else:                                   # -a - b - ...: negate the first term
            first, rest = self.value(minus.pop(0)), []
            name = self.temp(target)
            self.emit(name, f"-{first.code}")
            acc = _Val(name, True, first.real)
        for v in rest:
            acc = self.combine(acc, "+", v, target)
        for t in minus:
            acc = self.combine(acc, "-", self.value(t), target)
        return self.settle(acc, target)

    def mul(self, e: sp.Expr, target: str | None) -> _Val:
        num_c, num_v, den_c, den_v = [], [], [], []
        for f in e.args:
            if f.is_Pow and f.exp.is_Integer and f.exp < 0:
                base = f.base if f.exp == -1 else f.base ** (-f.exp)
                (den_v if self.varies(base) else den_c).append(base)
            else:
                (num_v if self.varies(f) else num_c).append(f)
        if den_c:
            num_c.append(1 / sp.Mul(*den_c))
        den = None
        if den_v:
            den, rest = self.start(den_v, None)
            for v in rest:
                den = self.combine(den, "*", v, None)
        if not num_v:
            name = self.temp(target)
            self.emit(name, f"{self.plain(sp.Mul(*num_c)).code}/{den.code}")
            return _Val(name, True, den.real and self.is_real(sp.Mul(*num_c)))
        acc, rest = self.start(num_v, target)
        if num_c:
            rest.append(self.plain(sp.Mul(*num_c)))
        for v in rest:
            acc = self.combine(acc, "*", v, target)
        if den is not None:
            acc = self.combine(acc, "/", den, target)
        return self.settle(acc, target)

    def settle(self, acc: _Val, target: str | None) -> _Val:
        if target is not None and acc.code != target:
            self.emit(target, acc.code)
            return _Val(target, acc.fresh, acc.real)
        return acc


def inplace_body(lines, returns, printer, real_inputs=frozenset()) -> list[str]:
    """Statements of an array kernel computing ``lines`` (pairs (symbol, expression)).

    The temperature-dependent values are ``_T``, ``_beta`` and every line computed from them.
    ``real_inputs`` names inputs known real beyond their symbols' assumptions (the weights of
    a response the plan shows real); a line whose value is found real is known real too.
    """
    real_names = set(real_inputs)
    tdep = set(_TEMPERATURE)
    for sym, expr in lines:
        if any(f.name in tdep for f in expr.free_symbols):
            tdep.add(sym.name)
    returned = set().union(*[sp.sympify(r).free_symbols for r in returns]) if returns else set()  # safe: sympy objects from symresp, never user text
    last_use: dict[sp.Symbol, int] = {}
    for i, (_, expr) in enumerate(lines):
        for f in expr.free_symbols:
            last_use[f] = i
    boltzmann = [(sym, expr) for sym, expr in lines if isinstance(expr, (Boltzmann, BoltzmannT))]
    rows = {sym: k for k, (sym, _) in enumerate(boltzmann)} if len(boltzmann) >= STACK_MIN else {}
    scaled = _scaled_rows(lines, rows, tdep)
    probe = _Writer(printer, tdep, set(), real_names, rows, scaled, {})
    terms = sum(probe.linear(t) is not None for _, e in lines if e.is_Add for t in e.args)
    if terms < STACKED_TERMS * len(rows):
        # Too few sums to pay for the stacked array: it also computes the lowest level's
        # factor, which the level-by-level form skips (measured: one partition sum over four
        # levels, 22 us level by level against 26 us stacked at 1e3 points).
        rows, scaled = {}, {}
        probe = _Writer(printer, tdep, set(), real_names, rows, scaled, {})
    batch = _pure_sums(lines, returned, probe)
    batch_real = all(probe.is_real(c) for _, coefs, _ in batch.values() for c in coefs)
    fresh_names: set = set()
    blocks: list[tuple[sp.Symbol, list[str], set]] = []     # (symbol, statements, reads)
    for i, (sym, expr) in enumerate(lines):
        if sym in rows:
            head = []
            if rows[sym] == 0:            # all levels at once (their offsets are inputs)
                cs = "".join(f"{printer.doprint(e.args[1])}, " for _, e in boltzmann)
                helper = "_bexpt_m" if isinstance(expr, BoltzmannT) else "_bexp_m"
                head.append(f"    _X = {helper}({printer.doprint(expr.args[0])}, ({cs}))")
                if batch:
                    mat = "".join("(" + "".join(f"{printer.doprint(c)}, " for c in coefs) + "), "
                                  for _, coefs, _ in sorted(batch.values(), key=lambda b: b[0]))
                    head.append(f"    _S = _lincomb_m(_X, ({mat}))")
            blocks.append((None, head, set()))
            blocks.append((sym, [f"    {sym.name} = _X[{rows[sym]}]"], set()))   # a view
            real_names.add(sym.name)
            continue
        if sym in batch:                  # a row of _S, this line's alone: fresh
            k, _, factor = batch[sym]
            stmts = [f"    {sym.name} = _S[{k}]"]
            w = _Writer(printer, tdep, set(), real_names, rows, scaled, probe.linears)
            real = batch_real
            if factor != 1:
                fv = w.value(factor)
                real = real and fv.real
                stmts += w.out + [f"    {sym.name} *= {fv.code}" if fv.real
                                  else f"    {sym.name} = {sym.name} * {fv.code}"]
            if real:
                real_names.add(sym.name)
            blocks.append((sym, stmts, w.used))
            fresh_names.add(sym)
            continue
        dying = [s for s in fresh_names if last_use.get(s) == i and s not in returned]
        counts = _counts(expr) if dying else {}
        consumable = {s for s in dying if counts.get(s, 0) == 1}
        w = _Writer(printer, tdep, consumable, real_names, rows, scaled, probe.linears)
        v = w.value(expr, sym.name)
        if v.real or w.is_real(expr):
            real_names.add(sym.name)
        if v.code != sym.name:
            w.used |= expr.free_symbols
            w.out.append(f"    {sym.name} = {printer.doprint(expr)}")
        blocks.append((sym, w.out, w.used))
        fresh_names -= consumable | _shared(expr)
        if v.fresh and not expr.is_Symbol:
            fresh_names.add(sym)
    # Rows and scaled rows that no statement kept reads (the sums took them from _X) go.
    live = set(returned)
    kept: list[list[str]] = []
    for sym, stmts, reads in reversed(blocks):
        if sym is not None and (sym in rows or sym in scaled) and sym not in live:
            continue
        live |= reads
        kept.append(stmts)
    return [line for stmts in reversed(kept) for line in stmts]


def _pure_sums(lines, returned: set, probe: _Writer) -> dict:
    """Lines that are whole sums ``factor * sum_a coef_a x_a`` over STACK_MIN levels or more,
    with coefficients read from the kernel's inputs: sym -> (index, coefficients, factor).
    They are computed together, as one matrix product with _X, when _X is made."""
    if not probe.rows:
        return {}
    defined = {sym for sym, _ in lines}
    out: dict = {}
    for sym, expr in lines:
        if not expr.is_Add or sym in returned or sym in probe.rows or sym in probe.scaled:
            continue
        lins = [probe.linear(t) for t in expr.args]
        if any(lin is None for lin in lins) or len({lin[2] for lin in lins}) != 1:
            continue
        coefs: dict[int, sp.Expr] = {}
        for coef, row, _ in lins:
            coefs[row] = coefs.get(row, sp.Integer(0)) + coef
        if len(coefs) < STACK_MIN or any(c.free_symbols & defined for c in coefs.values()):
            continue
        out[sym] = (len(out), [coefs.get(k, sp.Integer(0)) for k in range(len(probe.rows))],
                    lins[0][2])
    return out


def _scaled_rows(lines, rows: dict, tdep: set) -> dict:
    """Lines ``s = coefficient * factor * x_a`` (one row of _X, a temperature-free coefficient,
    a factor of the temperature alone, e.g. beta): s -> (row, coefficient, factor)."""
    out = {}
    for sym, expr in lines:
        if not rows or not expr.is_Mul:
            continue
        xs = [f for f in expr.args if f in rows]
        if len(xs) != 1:
            continue
        coef, factor = sp.Integer(1), sp.Integer(1)
        for f in expr.args:
            if f is xs[0]:
                continue
            names = {g.name for g in f.free_symbols}
            if names & set(_TEMPERATURE) and names <= set(_TEMPERATURE):
                factor *= f
            elif names & tdep:
                break
            else:
                coef *= f
        else:
            out[sym] = (rows[xs[0]], coef, factor)
    return out


def _shared(expr: sp.Expr) -> set:
    """Symbols whose value ``expr`` may hand on as it is: the whole expression, or arguments
    of a helper call (a helper may return one of its inputs). They are no longer fresh."""
    if expr.is_Symbol:
        return {expr}
    if expr.is_Add or expr.is_Mul or expr.is_Pow:
        return set().union(*[_shared(a) for a in expr.args if not a.is_Symbol])
    return set(expr.free_symbols)
