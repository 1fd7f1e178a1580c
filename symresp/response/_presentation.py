r"""A derived response written as a careful author writes it (layer: response).

Owns :class:`Presentation` and its parts (:class:`Definition`, :class:`LevelRow`,
:class:`TransitionRow`, :class:`Line`, :class:`Formula`) and :func:`present_response`.
Imports sympy, :mod:`symresp.conventions`, :mod:`symresp.errors`, :mod:`symresp.models`,
:mod:`symresp.spectrum` and the response modules :mod:`._derive`, :mod:`._present`,
:mod:`._render`.

What an author does, and how it is done here
--------------------------------------------
* **Names defined once** in a *where* list and used in every formula: the radicals of the
  level energies (:math:`R = \sqrt{E^2 + h^2}`), the implicit roots of semi-closed blocks, the
  partition function :math:`Z` with energies counted from the lowest level, the populations
  :math:`p_i = e^{-\beta(E_i - E_1)}/Z` per state, the thermal means :math:`\langle A\rangle`,
  the pole frequencies :math:`\Omega_k` and weights :math:`w_k`.
* **Levels sorted by energy** at an ordering point (the default parameter values of a case, or
  a generic point), labelled 1, 2, ... from the lowest.
* **Pole pairs merged**: for a Hermitian pair (:math:`W_{ab} = W_{ba}`) the poles at
  :math:`\pm\Omega` give :math:`2\Omega w/(\Omega^2 - \omega^2)`, :math:`2w/\Omega` statically
  and :math:`2w\sin\Omega t`; pairs at the same :math:`\Omega` share one term.
* **Several equivalent forms** of every formula are built: the pole form (in the named
  :math:`\Omega_k, w_k`), the population form (a linear combination of the :math:`p_i`, common
  factors pulled out) and, when small enough, the closed form of :mod:`._present` (Boltzmann
  factors relative to the lowest level, tanh/coth/cosh/sinh). The printed choice minimises a
  measured cost: the length of the printed text of all formulas together with the where-list
  lines they need.
* **A budget**: the closed forms are tried only while the clock allows and only on expressions
  of moderate size; when time is short the population forms (cheap Lehmann sums) are used and
  a note says so. No step builds a polynomial whose degree grows with a coefficient.

The presentation never changes a value: :meth:`Presentation.expand` substitutes the where-list
back, and the tests compare the result with the raw Lehmann sums at random points.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from functools import lru_cache

import sympy as sp
from sympy.core.mul import _keep_coeff

from ..conventions import RESERVED_NAMES, beta, omega, t
from ..errors import BudgetExceeded, InputError
from ..models import Clock, checkpoint, current_clock
from ..spectrum import BlockWeight, LevelRoot
from ._derive import Derivation, _equal_weights, _sample_point, present, present_shortest
from ._present import boltzmann_form, merge_exponentials
from ._render import formula_text, presentation_text

__all__ = ["Presentation", "Definition", "LevelRow", "TransitionRow", "Line", "Formula",
           "present_response", "PRESENTED_QUANTITIES", "DEFINITION_KINDS"]

#: Quantities a presentation can hold, in printing order.
PRESENTED_QUANTITIES = ("isothermal", "isolated", "frequency", "time", "correlation")
#: Kinds of where-list entries, in the order they are listed.
DEFINITION_KINDS = ("root", "constant", "radical", "partition", "population", "mean",
                    "frequency", "weight")
#: Explicit where-list lines of one kind longer than this in total are printed generically.
COLLAPSE_LENGTH = 300
#: Names of the formulas (plain text; LaTeX names live in the emitters).
FORMULA_NAMES = {"isothermal": "chi_isothermal", "isolated": "chi_isolated",
                 "frequency": "chi(omega)", "time": "chi(t)"}
#: Closed forms are tried only on expressions with at most this many operations.
CLOSED_MAX_OPS = 400
#: Coefficients are factored / cancelled only up to this many operations.
TIDY_MAX_OPS = 300
#: Boltzmann forms of the partition function are tried up to this many levels.
Z_FORM_MAX_LEVELS = 24
#: Share of the time left that the presentation may use before it falls back to the plain
#: population sums (see :meth:`symresp.models.Clock.portion`).
PRESENT_SHARE = 0.5
#: The note left when the presentation falls back.
CHEAP_NOTE = ("presentation budget reached: the formulas are plain Lehmann sums over the "
              "populations p_i (raise --budget for the shortest forms)")
#: Closed forms of whole formulas are tried up to this many levels...
CLOSED_MAX_LEVELS = 16
#: ...and while Z has at most this many Boltzmann factors: a closed form carries Z written out,
#: so past this it is never the shorter form and only costs time to build.
CLOSED_MAX_FACTORS = 6
#: A thermal mean whose text is longer than this gets a name in the where-list.
MEAN_NAME_LENGTH = 30


# ------------------------------------------------------------------------------- values
@dataclass(frozen=True, slots=True)
class Definition:
    """One entry of the where-list: ``symbol = value`` (value in the parameters, ``beta`` and
    symbols defined earlier in the list), its ``kind`` (one of :data:`DEFINITION_KINDS`) and
    a one-line ``meaning``."""

    symbol: sp.Symbol
    value: sp.Expr
    kind: str
    meaning: str


@dataclass(frozen=True, slots=True)
class LevelRow:
    """A row of the level table: ``label`` counts from 1 at the lowest level (at the ordering
    point); ``level`` is the index into ``Derivation.levels``; ``marks`` flag levels a reader
    must treat with care (implicit roots of a semi-closed block, truncation artefacts)."""

    label: int
    level: int
    symbol: sp.Symbol
    energy: sp.Expr
    degeneracy: int
    quantum_numbers: tuple[tuple[tuple[str, sp.Expr], ...], ...]
    marks: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class TransitionRow:
    r"""A pair of levels joined by A and B: ``lower`` < ``upper`` (labels), frequency
    :math:`\Omega = E_{\rm upper} - E_{\rm lower}`, weights :math:`W_{\rm lower,upper}` (``up``)
    and :math:`W_{\rm upper,lower}` (``down``), :math:`W_{ab} = \mathrm{Tr}(P_a A P_b B)`."""

    lower: int
    upper: int
    frequency: sp.Expr
    up: sp.Expr
    down: sp.Expr
    #: True when :math:`W_{ab} = W_{ba}` (e.g. A = B Hermitian): one merged pole pair.
    symmetric: bool = field(default=False)


@dataclass(frozen=True, slots=True)
class Line:
    r"""A line of the correlation function,
    :math:`S(\omega) = 2\pi\sum_k s_k\,\delta(\omega - \Omega_k)`."""

    frequency: sp.Expr
    weight: sp.Expr


@dataclass(frozen=True, slots=True)
class Formula:
    """A presented formula: its quantity, printed name, expression in the where-list symbols
    and the form chosen ("closed", "poles", "populations" or "lehmann")."""

    quantity: str
    name: str
    expr: sp.Expr
    form: str


@dataclass(frozen=True, slots=True, eq=False)
class Presentation:
    r"""A derived response as a results section prints it: level table, transitions, where-list
    and formulas (see the module docstring). Built by :func:`present_response` (public access:
    ``symresp.Response.presented()``).

    ``quantum_numbers`` are (name, definition) of the conserved quantities that label the
    levels; ``correlation`` holds the lines of :math:`S_{AB}(\omega)` when asked for;
    ``notes`` say where a cheaper form was used because of the budget. ``collapsed`` lists the
    kinds of where-list entries ("population", "partition") that are printed in their generic
    form (``symresp.response.GENERIC_FORMS``) because the explicit lines would be long; their
    explicit values stay in ``definitions``.
    """

    levels: tuple[LevelRow, ...]
    transitions: tuple[TransitionRow, ...]
    definitions: tuple[Definition, ...]
    formulas: tuple[Formula, ...]
    correlation: tuple[Line, ...]
    quantum_numbers: tuple[tuple[str, str], ...]
    notes: tuple[str, ...]
    convention: str
    formula_symbols: tuple[tuple[str, sp.Symbol], ...] = ()
    print_order: tuple[tuple[sp.Basic, int], ...] = ()
    collapsed: tuple[str, ...] = ()

    @property
    def rank(self) -> dict[sp.Basic, int]:
        """Print order of the terms of a sum: populations and Boltzmann factors by level."""
        return dict(self.print_order)

    def formula(self, quantity: str) -> Formula:
        """The formula of ``quantity`` (InputError if it was not presented)."""
        for f in self.formulas:
            if f.quantity == quantity:
                return f
        raise InputError(f"Presentation.formula: {quantity!r} was not presented "
                         f"(presented: {', '.join(f.quantity for f in self.formulas) or 'none'})")

    def substitutions(self) -> dict[sp.Symbol, sp.Expr]:
        """Every where-list symbol (and formula symbol) mapped to its value in the parameters
        and ``beta`` alone."""
        out: dict[sp.Symbol, sp.Expr] = {}
        for d in self.definitions:
            out[d.symbol] = d.value.xreplace(out)
        for q, sym in self.formula_symbols:
            out[sym] = self.formula(q).expr.xreplace(out)
        return out

    def expand(self, expr: sp.Expr) -> sp.Expr:
        """``expr`` with the where-list substituted: an expression in the parameters, ``beta``
        and ``omega`` / ``t`` only."""
        return sp.sympify(expr).xreplace(self.substitutions())  # safe: a sympy object from symresp

    def value(self, quantity: str) -> sp.Expr:
        """The presented formula of ``quantity`` with the where-list substituted."""
        return self.expand(self.formula(quantity).expr)

    def text(self) -> str:
        """Plain text: levels, transitions, where-list and formulas (see ``._render``)."""
        return "\n".join(presentation_text(self))


# ------------------------------------------------------------------------------- names
class _Names:
    """Fresh symbol names that clash with no parameter and no reserved name."""

    def __init__(self, taken: set[str]) -> None:
        self.taken = set(taken) | set(RESERVED_NAMES)

    def __call__(self, name: str, **assumptions) -> sp.Symbol:
        while name in self.taken:
            name += "_"
        self.taken.add(name)
        return sp.Symbol(name, **assumptions)


#: Note under a presentation with semi-closed weights (Tr(P[E]*A*P[E']*B) kept as such).
SEMI_NOTE = ("Tr(P[E]*A*P[E']*B) is the weight of a semi-closed block, P[E] the projector onto "
             "the eigenspace of level E of its exact block matrix; found numerically where "
             "numbers are given")


def poly_text(poly: sp.Expr, x: sp.Symbol) -> str:
    """A polynomial in x by descending powers, each coefficient factored when short:
    ``x**3 - 2*U*x**2 + (U**2 - 8*tc**2)*x + 2*U*tc**2``."""
    terms = []
    for (k,), c in sp.Poly(poly, x).terms():
        power = "" if k == 0 else ("x" if k == 1 else f"x**{k}")
        if c.free_symbols and len(sp.Add.make_args(c)) < 8:
            c = sp.factor(c)
        if power and c in (1, -1):
            term = ("-" if c == -1 else "") + power
        elif power:
            body = sp.sstr(c)
            term = f"({body})*{power}" if isinstance(c, sp.Add) else f"{body}*{power}"
        else:
            term = sp.sstr(c)
        terms.append(term)
    return " + ".join(terms).replace("+ -", "- ") if terms else "0"


@lru_cache(maxsize=4096)
def _cost(expr: sp.Expr) -> int:
    """The measured cost of a form: the length of its printed text."""
    return len(formula_text(expr))


def _small(expr: sp.Expr, limit: int) -> bool:
    """True when ``expr`` has at most ``limit`` tree nodes (stops counting early, unlike
    ``count_ops`` on a large expression)."""
    return sum(1 for _ in itertools.islice(sp.preorder_traversal(expr), limit + 1)) <= limit


def _implicit(expr: sp.Expr, roots: frozenset = frozenset()) -> bool:
    """Whether ``expr`` holds implicit roots (or the names ``roots`` given to them)."""
    expr = sp.sympify(expr)  # safe: a sympy object
    return expr.has(sp.CRootOf, LevelRoot) or bool(roots and expr.free_symbols & roots)


def _same(a: sp.Expr, b: sp.Expr, point: dict, roots: dict | None = None,
          names: dict | None = None) -> bool:
    """Exact equality of two weights; numeric at 30 digits for the (large) weights of
    semi-closed blocks (``roots`` maps the names of implicit roots back to the roots, ``names``
    the other names of the where-list, radicals and constants, back to their values), where
    expanding would cost far more than it decides."""
    if a == b:
        return True
    if not (_implicit(a, frozenset(roots or ())) or _implicit(b, frozenset(roots or ()))):
        return _equal_weights(a, b)
    back = {**(names or {}), **(roots or {})}
    diff = (a - b).xreplace(back)
    shifted = {k: v + sp.Rational(1, 7) for k, v in point.items()}
    values = [complex(sp.N(diff.subs(pt), 30)) for pt in (point, shifted)]
    scale = max(1.0, abs(complex(sp.N(a.xreplace(back).subs(point), 30))))
    return all(abs(v) <= 1e-20 * scale for v in values)


def _shortest(candidates) -> sp.Expr:
    """The candidate of least measured cost (printed length, then operation count)."""
    best, best_key = None, None
    for c in candidates:
        if c is None:
            continue
        key = (_cost(c), sp.count_ops(c) if _small(c, 4 * TIDY_MAX_OPS) else 0)
        if best_key is None or key < best_key:
            best, best_key = c, key
    return best


def _long_number(r: sp.Rational) -> bool:
    """A rational with more than 12 digits in all: better named than repeated."""
    return r.is_Rational and len(str(abs(r.p))) + len(str(r.q)) > 12


def _value_at(expr: sp.Expr, point: dict) -> float:
    try:
        return float(complex(sp.N(sp.sympify(expr).subs(point), 30)).real)  # safe: sympy object
    except (TypeError, ValueError):
        return 0.0


def _linear(terms: dict[sp.Symbol, sp.Expr], rank: dict, roots: frozenset = frozenset()) -> sp.Expr:
    """:math:`\\sum_i c_i p_i` with equal coefficients grouped: ``c*(p1 + p2)``."""
    groups: dict[sp.Expr, list[sp.Symbol]] = {}
    for p, c in terms.items():
        c = sp.cancel(c) if _small(c, TIDY_MAX_OPS) and not _implicit(c, roots) else c
        if c == 0:
            continue
        for key in groups:
            if key == c:
                groups[key].append(p)
                break
            if key == -c:
                groups[key].append(-p)
                break
        else:
            groups[c] = [p]
    out = []
    for c, ps in groups.items():
        inner = sp.Add(*ps)
        out.append(_keep_coeff(c, inner) if c.is_Number else c * inner)
    return sp.Add(*out)


# ------------------------------------------------------------------------------- builder
class _Builder:
    """All the pieces of one presentation (see the module docstring for the method)."""

    def __init__(self, d: Derivation, point: dict | None, clock: Clock | None) -> None:
        self.d = d
        self.clock = clock
        self.notes: list[str] = []
        params = d.system.parameters
        base = _sample_point(params)
        if point:
            base.update({k: v for k, v in point.items() if k in base})
        self.point = base
        taken = {s.name for s in params}
        for e in (*[lv.energy for lv in d.levels], *d.level_weights.values(),
                  *d.expect_A.values(), *d.expect_B.values()):
            taken |= {s.name for s in sp.sympify(e).free_symbols}  # safe: derivation values
        self.names = _Names(taken)
        L = len(d.levels)
        vals = [_value_at(lv.energy, self.point) for lv in d.levels]
        self.order = sorted(range(L), key=lambda a: (vals[a], a))
        self.label = {a: k + 1 for k, a in enumerate(self.order)}
        self.ref = self.order[0]
        self.defs: list[Definition] = []
        self.closed_allowed = True
        self.cheap = False
        self._roots()
        self.roots = frozenset(self.root_map.values())
        self.root_values = {sym: r for r, sym in self.root_map.items()}
        self._radicals()
        self._constants()
        self.energy = {a: self.named(lv.energy) for a, lv in enumerate(d.levels)}
        self.E = {a: self.names(f"E{self.label[a]}", real=True) for a in range(L)}

    # -------------------------------------------------------------- budget
    def out_of_time(self) -> bool:
        """Past the share of time of the presentation: take the cheaper step."""
        return self.cheap or (self.clock is not None and self.clock.expired())

    # -------------------------------------------------------------- radicals and roots
    def _roots(self) -> None:
        atoms: list = []
        for a in self.order:
            for r in sorted(self.d.levels[a].energy.atoms(sp.CRootOf, LevelRoot),
                            key=sp.default_sort_key):
                if r not in atoms:
                    atoms.append(r)
        for e in (*self.d.level_weights.values(), *self.d.expect_A.values(),
                  *self.d.expect_B.values()):
            found = sp.sympify(e).atoms(sp.CRootOf, LevelRoot)  # safe: a sympy object
            for r in sorted(found, key=sp.default_sort_key):
                if r not in atoms:
                    atoms.append(r)
        x = sp.Symbol("x")
        polys: list[sp.Expr] = []
        self.root_map: dict[sp.Expr, sp.Symbol] = {}
        found = []
        for r in atoms:
            if isinstance(r, LevelRoot):
                poly, index = r.polynomial(x), int(r.args[0])
            else:
                poly, index = r.poly.as_expr().subs(r.poly.gen, x), r.index
            if poly not in polys:
                polys.append(poly)
            found.append((r, polys.index(poly) + 1, index))
        # One meaning per root set: "the roots of p(x) = ..." (the where-list prints it once).
        meanings = {}
        for k, poly in enumerate(polys, 1):
            degree = sp.Poly(poly, x).degree()
            meaning = f"the roots of p(x) = {poly_text(poly, x)}, k = 0..{degree - 1} ascending"
            if poly.free_symbols - {x}:
                meaning += "; parameter-dependent: found numerically where numbers are given"
            meanings[k] = meaning
        for r, k, index in sorted(found, key=lambda f: (f[1], f[2])):
            sym = self.names(f"r{k}_{index}", real=True)
            self.root_map[r] = sym
            meaning = meanings[k]
            if not r.free_symbols:
                meaning += f"; value {sym.name} = {sp.N(r, 15)}"
            self.defs.append(Definition(sym, r, "root", meaning))

    def _radicals(self) -> None:
        bases: list[sp.Expr] = []
        sources = [self.d.levels[a].energy for a in self.order]
        sources += [*self.d.level_weights.values(), *self.d.expect_A.values(),
                    *self.d.expect_B.values()]
        for e in sources:
            for p in sorted(sp.Integer(e).atoms(sp.Pow) if isinstance(e, int) else e.atoms(sp.Pow),
                           key=sp.default_sort_key):
                if (p.exp.is_Rational and p.exp.q == 2 and p.base.free_symbols
                        and not p.base.has(sp.CRootOf, LevelRoot) and p.base not in bases):
                    bases.append(p.base)
        self.radicals: dict[sp.Expr, sp.Symbol] = {}
        for k, X in enumerate(bases):
            name = "R" if len(bases) == 1 else f"R{k + 1}"
            R = self.names(name, nonnegative=True)
            self.radicals[X] = R
            self.defs.append(Definition(R, sp.sqrt(X), "radical", "radical of the level energies"))

    def _constants(self) -> None:
        """Long exact numbers (a conversion factor such as mu_B in cm^-1/T) get a name; other
        long numbers that are simple multiples of a named one are written with it."""
        self.constants: dict[sp.Rational, sp.Symbol] = {}
        sources = [self.d.levels[a].energy for a in self.order]
        sources += [*self.d.level_weights.values(), *self.d.expect_A.values(),
                    *self.d.expect_B.values()]
        found: list[sp.Rational] = []
        for e in sources:
            e = self._rooted(sp.sympify(e))  # safe: a sympy object from the derivation
            for r in sorted(e.atoms(sp.Rational), key=abs):
                if _long_number(r) and abs(r) not in found:
                    found.append(abs(r))
        for r in found:
            if self._constant_multiple(r) is not None:
                continue
            k = self.names(f"k{len(self.constants) + 1}", positive=True)
            self.constants[r] = k
            self.defs.append(Definition(k, r, "constant", "a constant of the model"))

    def _constant_multiple(self, r: sp.Rational) -> sp.Expr | None:
        for value, k in self.constants.items():
            ratio = r / value
            if not _long_number(ratio) and ratio != 0:
                return ratio * k
        return None

    def name_values(self) -> dict[sp.Symbol, sp.Expr]:
        """The radicals and constants of the where-list: name -> value."""
        out: dict[sp.Symbol, sp.Expr] = {k: r for r, k in self.constants.items()}
        out.update({R: sp.sqrt(X) for X, R in self.radicals.items()})
        return out

    def _rooted(self, expr: sp.Expr) -> sp.Expr:
        """``expr`` with its implicit roots replaced by their names."""
        if not self.root_map:
            return expr
        # (the levels of a semi-closed weight sit inside its block, out of reach of has())
        semi = expr.has(BlockWeight)
        return expr.xreplace({r: s for r, s in self.root_map.items() if semi or expr.has(r)})

    def named(self, expr: sp.Expr) -> sp.Expr:
        """``expr`` with implicit roots, radicals and long constants replaced by their names."""
        expr = self._rooted(sp.sympify(expr))  # safe: a sympy object from the derivation
        if self.constants:           # (after the roots: the numbers inside a root stay there)
            rep = {}
            for r in expr.atoms(sp.Rational):
                if _long_number(r):
                    m = self._constant_multiple(abs(r))
                    if m is not None:
                        rep[r] = m if r > 0 else -m
            expr = expr.xreplace(rep) if rep else expr
        if not self.radicals:
            return expr
        rep = {}
        for p in expr.atoms(sp.Pow):
            if p.exp.is_Rational and p.exp.q == 2 and p.base in self.radicals:
                rep[p] = self.radicals[p.base] ** int(2 * p.exp)
        if rep:
            expr = expr.xreplace(rep)
        if _small(expr, TIDY_MAX_OPS):
            for X, R in self.radicals.items():
                if expr.free_symbols & X.free_symbols:
                    expr = expr.subs(X, R**2)
        return expr

    def tidy(self, expr: sp.Expr) -> sp.Expr:
        """Shortest of the expression, its cancelled and its factored form."""
        expr = sp.sympify(expr)  # safe: a sympy object from the derivation
        if expr.is_Atom or self.out_of_time() or not _small(expr, TIDY_MAX_OPS):
            return expr
        if expr.has(sp.exp) or _implicit(expr, self.roots):
            return expr
        return _shortest([expr, sp.cancel(expr), sp.factor(expr)])

    def gap(self, a: int, b: int) -> sp.Expr:
        """:math:`E_b - E_a` with named radicals, expanded where exact."""
        diff = self.energy[b] - self.energy[a]
        if self.d.levels[a].implicit or self.d.levels[b].implicit:
            return diff
        return sp.expand(diff)

    # -------------------------------------------------------------- thermal names
    def thermal(self) -> None:
        """Z, populations p_i and the Boltzmann factors relative to the lowest level."""
        L = len(self.d.levels)
        self.x = {a: sp.exp(-beta * self.gap(self.ref, a)) for a in range(L)}
        plain = sp.Add(*[self.d.levels[a].degeneracy * self.x[a] for a in self.order])
        self.z_plain = plain
        self.z_rank = {self.x[a]: self.label[a] for a in range(L)}
        candidates = [plain]
        if (L <= Z_FORM_MAX_LEVELS and not self.out_of_time()
                and not plain.has(sp.CRootOf, LevelRoot)):
            nice = boltzmann_form(plain)
            if nice is not None:
                nice = merge_exponentials(nice)
                # An overall factor e^{c} means the body is counted from another level: taken
                # into the terms, every Boltzmann factor is again relative to the lowest level.
                pre, body = nice.as_independent(sp.Add, as_Add=False)
                if pre.has(sp.exp) and body.is_Add:
                    nice = sp.Add(*[merge_exponentials(pre * term) for term in body.args])
                if not (nice.is_Mul and any(isinstance(f, sp.exp) for f in nice.args)):
                    candidates.append(nice)
        self.z_value = _shortest(candidates)
        self.Z = self.names("Z", positive=True)
        self.p = {a: self.names(f"p{self.label[a]}", positive=True) for a in range(L)}

    # -------------------------------------------------------------- transitions
    def transitions(self) -> list[TransitionRow]:
        W = self.d.level_weights
        seen: set = set()
        rows = []
        for (a, b) in W:
            if a == b or (a, b) in seen:
                continue
            checkpoint("presenting the transitions")
            lo, hi = (a, b) if self.label[a] < self.label[b] else (b, a)
            seen |= {(a, b), (b, a)}
            up = self.tidy(self.named(W.get((lo, hi), sp.Integer(0))))
            down = self.tidy(self.named(W.get((hi, lo), sp.Integer(0))))
            rows.append((lo, hi, TransitionRow(self.label[lo], self.label[hi], self.gap(lo, hi),
                                               up, down, _same(up, down, self.point,
                                                                  self.root_values,
                                                                  self.name_values()))))
        rows.sort(key=lambda r: (r[2].lower, r[2].upper))
        self.pairs = [(lo, hi, row) for lo, hi, row in rows]
        return [row for _, _, row in rows]


def _pole_groups(b: _Builder):
    """Pairs grouped by frequency: (Omega, symmetric, [(lo, hi, row), ...]) in ascending order."""
    groups: dict[sp.Expr, list] = {}
    order: list[sp.Expr] = []
    for lo, hi, row in b.pairs:
        key = row.frequency
        if key not in groups:
            groups[key] = []
            order.append(key)
        groups[key].append((lo, hi, row))
    order.sort(key=lambda k: (_value_at(k, b.point), sp.default_sort_key(k)))
    return [(k, all(r.symmetric for _, _, r in groups[k]), groups[k]) for k in order]


class _Poles:
    """Per pole group the frequency and the weights in their shortest forms, and the names
    chosen for them (a name is defined when that costs less than repeating the expression)."""

    def __init__(self, b: _Builder, quantities: tuple[str, ...]) -> None:
        self.b = b
        self.rank = {b.p[a]: b.label[a] for a in b.p}
        self.groups = []
        groups = _pole_groups(b)
        for k, (Om, sym, members) in enumerate(groups):
            checkpoint("presenting the pole weights", f"group {k + 1} of {len(groups)}")
            g = {"Omega": Om, "symmetric": sym, "members": members, "index": k + 1}
            # +Omega: sum (p_lo - p_hi) W_up;  -Omega: sum (p_hi - p_lo) W_down
            g["up"], g["up_closed"] = self._weight(members, "up")
            if sym:
                g["down"] = -g["up"]
                g["down_closed"] = None if g["up_closed"] is None else -g["up_closed"]
            else:
                g["down"], g["down_closed"] = self._weight(members, "down")
            self.groups.append(g)
        self.closed = bool(self.groups) and all(
            g["up_closed"] is not None and g["down_closed"] is not None for g in self.groups)
        self._choose_names(quantities)

    def _weight(self, members, direction: str) -> tuple[sp.Expr, sp.Expr | None]:
        """(shortest form in the where-list names, closed form in the parameters or None)."""
        b = self.b
        coef: dict[sp.Symbol, sp.Expr] = {}
        pairs: dict[sp.Expr, sp.Expr] = {}
        raw = sp.Integer(0)
        for lo, hi, row in members:
            W = row.up if direction == "up" else row.down
            if W == 0:
                continue
            first, second = (lo, hi) if direction == "up" else (hi, lo)
            coef[b.p[first]] = coef.get(b.p[first], 0) + W
            coef[b.p[second]] = coef.get(b.p[second], 0) - W
            pairs[W] = pairs.get(W, sp.Integer(0)) + b.p[first] - b.p[second]
            raw += (b.x[first] - b.x[second]) * W
        pair_form = sp.Add(*[_keep_coeff(W, s) if W.is_Number else W * s
                             for W, s in pairs.items()])
        if (b.cheap or _implicit(pair_form, b.roots)
                or not _small(pair_form, 4 * TIDY_MAX_OPS)):
            return pair_form, None           # large exact weights of a semi-closed block
        pop = _linear(coef, self.rank, b.roots)
        candidates = [pop, sp.factor_terms(pop), pair_form, sp.factor_terms(pair_form)]
        closed = None
        if (b.closed_allowed and not b.out_of_time() and not _implicit(raw, b.roots)
                and _small(raw, 2 * CLOSED_MAX_OPS) and sp.count_ops(raw) <= CLOSED_MAX_OPS):
            candidates.append(present(raw) / b.Z)
            # The whole weight in closed form, Z written out (tanh/coth forms live here).
            closed = present_shortest(raw / b.z_plain)
        return _shortest(candidates), closed

    def _choose_names(self, quantities) -> None:
        uses_w = sum(q in quantities for q in ("isolated", "frequency", "time"))
        uses_om = sum({"isolated": 1, "frequency": 2, "time": 1}.get(q, 0) for q in quantities)
        uses_om += 2 if "correlation" in quantities else 0
        b = self.b
        for g in self.groups:
            k = g["index"]
            g["Omega_symbol"] = None
            Om, L = g["Omega"], _cost(g["Omega"])
            name = f"Omega{k}"
            if not Om.is_Atom and len(name) + 3 + L + uses_om * len(name) < uses_om * (L + 2):
                g["Omega_symbol"] = b.names(name, real=True)
            for which in (("up",) if g["symmetric"] else ("up", "down")):
                w, Lw = g[which], _cost(g[which])
                name = f"w{k}" if which == "up" else f"wm{k}"
                g[which + "_symbol"] = None
                if (uses_w and not w.is_Atom
                        and len(name) + 3 + Lw + uses_w * len(name) < uses_w * (Lw + 2)):
                    g[which + "_symbol"] = b.names(name)

    def Om(self, g) -> sp.Expr:
        return g["Omega_symbol"] if g["Omega_symbol"] is not None else g["Omega"]

    def w(self, g, which: str = "up") -> sp.Expr:
        if g["symmetric"] and which == "down":
            return -self.w(g, "up")
        s = g.get(which + "_symbol")
        return s if s is not None else g[which]

    def definitions(self) -> list[Definition]:
        out = []
        for g in self.groups:
            if g["Omega_symbol"] is not None:
                out.append(Definition(g["Omega_symbol"], g["Omega"], "frequency",
                                      "pole frequency (a level spacing)"))
        for g in self.groups:
            for which in ("up", "down"):
                s = g.get(which + "_symbol")
                if s is None:
                    continue
                if g["symmetric"]:
                    what = "weight of the pole pair at +-Omega (w at +Omega, -w at -Omega)"
                else:
                    what = f"weight of the pole at {'+' if which == 'up' else '-'}Omega"
                out.append(Definition(s, g[which], "weight", what))
        return out


def _needed(expr: sp.Expr, defs: dict[sp.Symbol, Definition]) -> set[sp.Symbol]:
    """Where-list symbols ``expr`` needs, directly or through other definitions."""
    need: set[sp.Symbol] = set()
    todo = [s for s in sp.sympify(expr).free_symbols if s in defs]  # safe: sympy object
    while todo:
        s = todo.pop()
        if s in need:
            continue
        need.add(s)
        todo += [x for x in defs[s].value.free_symbols if x in defs and x not in need]
    return need


def present_response(d: Derivation, quantities: tuple[str, ...] | list[str] = (
        "isothermal", "isolated", "frequency", "time"), *, point: dict | None = None,
        clock: Clock | None = None) -> Presentation:
    r"""Present a derived response: level table, transitions, where-list and formulas.

    Parameters
    ----------
    d : Derivation
    quantities : sequence of str
        Any of :data:`PRESENTED_QUANTITIES` ("correlation" adds the lines of
        :math:`S_{AB}(\omega)`).
    point : dict, optional
        Parameter values (sympy numbers) that order the levels; missing ones take a generic
        value (positive parameters of order one, sign-free ones small).
    clock : symresp.models.Clock, optional
        The presentation may use a share of its time; past it, cheaper forms are used
        (population sums instead of closed forms) and a note says so. When ``clock`` is a
        clock of its own inside a running call (a summary's few seconds), its end also leads
        to the cheap forms; the end of the call's whole budget is an error.

    Returns
    -------
    Presentation

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.response import derive, present_response
    >>> from symresp.models import System
    >>> Delta = sp.Symbol("Delta", positive=True); q = sr.spin("q", sp.Rational(1, 2))
    >>> p = present_response(derive(System.build(Delta * q.z), 2 * q.x, 2 * q.x))
    >>> p.formula("frequency").expr
    2*Delta*tanh(Delta*beta/2)/(Delta**2 - omega**2)
    >>> [(row.label, row.energy) for row in p.levels]
    [(1, -Delta/2), (2, Delta/2)]
    """
    if not isinstance(d, Derivation):
        raise InputError(f"present_response: d={d!r} must be a Derivation")
    if isinstance(quantities, str):
        quantities = (quantities,)
    qs = tuple(quantities)
    bad = [q for q in qs if q not in PRESENTED_QUANTITIES]
    if bad:
        raise InputError(f"present_response: unknown quantity {bad[0]!r} (choose from "
                         f"{', '.join(PRESENTED_QUANTITIES)})")
    qs = tuple(q for q in PRESENTED_QUANTITIES if q in qs)
    call = current_clock()
    outer = clock if clock is not None else call
    if outer is None:
        return _present(d, qs, point, None, cheap=False)
    part = outer.portion(PRESENT_SHARE, "presenting the formulas")
    try:
        with part.running():
            return _present(d, qs, point, part, cheap=False)
    except BudgetExceeded as err:
        # The presentation's share is up: the cheap forms follow, unless the whole budget is
        # over (the running call's clock; ``clock`` itself when no other call runs).
        whole = outer if call is None or call is outer else call
        if not Clock.owns(err, part) or whole.expired():
            raise
    outer.note(CHEAP_NOTE)
    return _present(d, qs, point, None, cheap=True)


def _present(d: Derivation, qs: tuple[str, ...], point: dict | None, clock: Clock | None, *,
             cheap: bool) -> Presentation:
    """The presentation (see :func:`present_response`); ``cheap``: the plain population sums
    only (no closed forms, no factoring), the fallback when time is short."""
    b = _Builder(d, point, clock)
    b.cheap = cheap
    b.closed_allowed = len(d.levels) <= CLOSED_MAX_LEVELS and not cheap
    if cheap:
        b.notes.append(CHEAP_NOTE)
    b.thermal()
    b.closed_allowed = b.closed_allowed and len(b.z_plain.atoms(sp.exp)) <= CLOSED_MAX_FACTORS
    transitions = b.transitions()
    poles = _Poles(b, qs)
    conv = d.convention
    s, sig = conv.sign, conv.frequency_sign
    iso_sym = b.names("chi_isolated")
    if b.out_of_time() and not cheap:
        b.notes.append(CHEAP_NOTE)

    def closed(getter) -> sp.Expr | None:
        """A closed form of the derivation with the where-list names, or None if too big."""
        if not b.closed_allowed or b.out_of_time():
            return None
        expr = getter()
        if (_implicit(expr) or not _small(expr, 2 * CLOSED_MAX_OPS)
                or sp.count_ops(expr) > CLOSED_MAX_OPS):
            return None
        return b.named(expr)

    # ------------------------------------------------------------ candidate formulas
    cands: dict[str, list[tuple[sp.Expr, str]]] = {}
    iso_terms = []
    for g in poles.groups:
        Om = poles.Om(g)
        if g["symmetric"]:
            iso_terms.append(2 * poles.w(g) / Om)
        else:
            iso_terms.append((poles.w(g, "up") - poles.w(g, "down")) / Om)
    iso_poles = s * sp.Add(*iso_terms)

    def pole_sums(weight) -> dict[str, sp.Expr]:
        """isolated, frequency and time as sums over the pole groups, weights from ``weight``."""
        iso, freq, tim = [], [], []
        for g in poles.groups:
            Om = poles.Om(g)
            up, down = weight(g, "up"), weight(g, "down")
            if g["symmetric"]:
                iso.append(2 * up / Om)
                freq.append(2 * Om * up / (Om**2 - omega**2))
                tim.append(2 * up * sp.sin(Om * t))
            else:
                iso.append((up - down) / Om)
                freq.append(up / (Om - sig * omega) + down / (-Om - sig * omega))
                tim.append(sp.I * (up * sp.exp(-sp.I * Om * t) + down * sp.exp(sp.I * Om * t)))
        return {"isolated": s * sp.Add(*iso), "frequency": s * sp.Add(*freq),
                "time": s * sp.Add(*tim)}

    closed_poles = pole_sums(lambda g, which: g[which + "_closed"]) if poles.closed else {}
    # Population form: chi_isol = sum_a c_a p_a, c_a = sum_b (W_ab + W_ba)/(E_b - E_a).
    coef: dict[sp.Symbol, sp.Expr] = {}
    for lo, hi, row in b.pairs:
        S = (row.up + row.down) / row.frequency
        coef[b.p[lo]] = coef.get(b.p[lo], 0) + S
        coef[b.p[hi]] = coef.get(b.p[hi], 0) - S
    iso_pop = s * _linear({p: b.tidy(c) for p, c in coef.items()}, poles.rank, b.roots)
    if "isolated" in qs:
        cands["isolated"] = [(iso_poles, "poles"), (iso_pop, "populations"),
                             (closed(lambda: d.static("isolated")), "closed"),
                             (closed_poles.get("isolated"), "closed")]
    mean_defs: list[Definition] = []
    if "isothermal" in qs:
        elastic = _linear({b.p[a]: b.tidy(b.named(W)) for (a, c), W in d.level_weights.items()
                           if a == c}, poles.rank, b.roots)
        means = []
        pairs_ab = (("A", d.expect_A),) if d.A == d.B else (("A", d.expect_A), ("B", d.expect_B))
        for name, ex in pairs_ab:
            m = _linear({b.p[a]: b.tidy(b.named(v)) for a, v in ex.items()}, poles.rank, b.roots)
            if _cost(m) > MEAN_NAME_LENGTH:
                sym = b.names(f"{name}_mean")
                mean_defs.append(Definition(sym, m, "mean",
                                            f"thermal mean <{name}> = sum_i p_i Tr(P_i {name})"))
                m = sym
            means.append(m)
        curie = elastic - (means[0] ** 2 if d.A == d.B else means[0] * means[1])
        forms = [(iso_poles + s * beta * curie, "poles"),
                 (iso_pop + s * beta * curie, "populations"),
                 (closed(lambda: d.static("isothermal")), "closed")]
        if "isolated" in qs and iso_poles != 0:
            forms.append((iso_sym + s * beta * curie, "poles"))
        cands["isothermal"] = forms
    if "frequency" in qs:
        terms = []
        for g in poles.groups:
            Om = poles.Om(g)
            if g["symmetric"]:
                terms.append(2 * Om * poles.w(g) / (Om**2 - omega**2))
            else:
                terms.append(poles.w(g, "up") / (Om - sig * omega)
                             + poles.w(g, "down") / (-Om - sig * omega))
        cands["frequency"] = [(s * sp.Add(*terms), "poles"),
                              (closed_poles.get("frequency"), "closed")]
    if "time" in qs and conv.prescription != "advanced":
        terms = []
        for g in poles.groups:
            Om = poles.Om(g)
            if g["symmetric"]:
                terms.append(2 * poles.w(g) * sp.sin(Om * t))
            else:
                terms.append(sp.I * (poles.w(g, "up") * sp.exp(-sp.I * Om * t)
                                     + poles.w(g, "down") * sp.exp(sp.I * Om * t)))
        cands["time"] = [(s * sp.Add(*terms), "poles"), (closed_poles.get("time"), "closed")]
    elif "time" in qs:
        b.notes.append("chi(t) of the advanced convention vanishes for t > 0")

    # ------------------------------------------------------------ where-list
    defs: list[Definition] = list(b.defs)
    defs.append(Definition(b.Z, b.z_value, "partition",
                           "partition function, energies counted from the lowest level: "
                           "Z = sum_i g_i exp(-beta*(E_i - E1))"))
    for a in b.order:
        defs.append(Definition(b.p[a], b.x[a] / b.Z, "population",
                               f"population of each state of level {b.label[a]}"))
    defs += mean_defs
    defs += poles.definitions()
    by_symbol = {df.symbol: df for df in defs}
    def_cost = {df.symbol: len(df.symbol.name) + 3 + _cost(df.value) for df in defs}

    # Correlation lines (population form; they need the p_i).
    lines: list[Line] = []
    fixed_need: set[sp.Symbol] = set(b.root_map.values()) | set(b.radicals.values())
    if "correlation" in qs:
        elastic = _linear({b.p[a]: b.tidy(b.named(W)) for (a, c), W in d.level_weights.items()
                           if a == c}, poles.rank, b.roots)
        if elastic != 0:
            lines.append(Line(sp.Integer(0), elastic))
        for g in poles.groups:
            Om = poles.Om(g)
            upw: dict = {}
            dnw: dict = {}
            for lo, hi, row in g["members"]:
                if row.up != 0:
                    upw[b.p[lo]] = upw.get(b.p[lo], 0) + row.up
                if row.down != 0:
                    dnw[b.p[hi]] = dnw.get(b.p[hi], 0) + row.down
            if upw:
                lines.append(Line(sig * Om, _linear(upw, poles.rank, b.roots)))
            if dnw:
                lines.append(Line(-sig * Om, _linear(dnw, poles.rank, b.roots)))
        subs_all = {df.symbol: df.value for df in defs}
        lines.sort(key=lambda ln: _value_at(ln.frequency.xreplace(subs_all).xreplace(subs_all),
                                            b.point))
        for ln in lines:
            fixed_need |= _needed(ln.weight, by_symbol) | _needed(ln.frequency, by_symbol)

    # ------------------------------------------------------------ choose by measured cost
    scored: dict[str, list[tuple[sp.Expr, str, int, frozenset]]] = {}
    for q, forms in cands.items():
        seen: set = set()
        options = []
        for e, form in forms:
            if e is None:
                continue
            variants = [e]
            if not b.cheap and _small(e, 4 * TIDY_MAX_OPS) and not _implicit(e, b.roots):
                variants.append(sp.factor_terms(e))          # common factors pulled out
            for v in variants:
                if v in seen:
                    continue
                seen.add(v)
                options.append((v, form, _cost(v), frozenset(_needed(v, by_symbol))))
        scored[q] = options
    order_q = [q for q in PRESENTED_QUANTITIES if q in scored]
    best, best_cost = None, None
    for n, combo in enumerate(itertools.product(*[scored[q] for q in order_q])):
        if n % 256 == 0:
            checkpoint("choosing the shortest forms")
        if "isolated" not in order_q and any(e.has(iso_sym) for e, *_ in combo):
            continue
        need = set(fixed_need).union(*[n for *_, n in combo]) if combo else set(fixed_need)
        cost = sum(c for _, _, c, _ in combo) + sum(def_cost[x] for x in need)
        if best_cost is None or cost < best_cost:
            best, best_cost = combo, cost
    formulas, formula_symbols = [], []
    need = set(fixed_need)
    for q, (e, form, _c, n) in zip(order_q, best or ()):
        formulas.append(Formula(q, FORMULA_NAMES[q], e, form))
        need |= n
        if e.has(iso_sym):
            formula_symbols.append(("isolated", iso_sym))
    # Roots, constants and Z are always listed: the level table and the reader need them.
    kept = tuple(df for df in defs
                 if df.symbol in need or df.kind in ("root", "constant", "partition"))
    levels = tuple(
        LevelRow(b.label[a], a, b.E[a], b.energy[a], d.levels[a].degeneracy,
                 d.levels[a].quantum_numbers, _level_marks(d, a))
        for a in b.order)
    qn = tuple((q.name, q.definition) for q in d.spectrum.structure.quantum_numbers)
    truncation = getattr(d, "truncation", None)
    if truncation is not None and truncation.level_weights:
        b.notes.append("levels marked [cutoff] are touched by the " + truncation.describe())
    order = [(iso_sym, 0)] + [(b.p[a], b.label[a]) for a in b.order]
    order += [(b.x[a], b.label[a]) for a in b.order]
    for g in poles.groups:
        for key in ("Omega_symbol", "up_symbol", "down_symbol"):
            if g.get(key) is not None:
                order.append((g[key], 1000 + g["index"]))
    order += [(omega, 10**6), (t, 10**6)]
    collapsed = []
    for kind in ("partition", "population"):
        explicit = sum(len(df.symbol.name) + 5 + _cost(df.value) for df in kept if df.kind == kind)
        if explicit > COLLAPSE_LENGTH:
            collapsed.append(kind)
    if any(lv.implicit for lv in d.levels) and any(
            sp.sympify(w).has(BlockWeight) for w in d.level_weights.values()):  # safe: sympy objects from the derivation
        b.notes.append(SEMI_NOTE)
    return Presentation(levels, tuple(transitions), kept, tuple(formulas), tuple(lines), qn,
                        tuple(b.notes), conv.describe(), tuple(formula_symbols), tuple(order),
                        tuple(collapsed))


def _level_marks(d: Derivation, a: int) -> tuple[str, ...]:
    """Flags of level ``a`` for the table: an implicit root of a semi-closed block (and, where
    the model records them, truncation artefacts)."""
    marks = []
    if d.levels[a].implicit:
        marks.append("implicit root")
    truncation = getattr(d, "truncation", None)
    if truncation is not None and a in truncation.level_weights:
        marks.append("cutoff")
    return tuple(marks)
