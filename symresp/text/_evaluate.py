r"""Meaning of the formula language: scalar formulas and operator expressions (layer: text).

Owns :func:`parse_scalar` and :func:`parse_operator`. Imports sympy, :mod:`symresp.errors`,
:mod:`symresp.algebra` and the text modules. Text is never handed to ``eval``, ``exec``,
``sympify`` or any other interpreter: the grammar of :mod:`._grammar` builds a tree, and this
module walks it, calling sympy constructors and the operator algebra on checked values only.

Vocabulary
----------
* numbers, exact: ``2``, ``0.5`` (= 1/2), ``1e-3`` (= 1/1000);
* ``+ - * /``, powers ``^`` or ``**``, parentheses; a product needs ``*``;
* functions ``exp log sqrt sin cos tan sinh cosh tanh coth sech csch abs`` and the constants
  ``pi`` and ``I`` (imaginary unit);
* names from the scope: parameters, and in operator expressions sites:

  - spin site ``a``: ``a.x a.y a.z a.plus a.minus`` (:math:`S^\pm = S^x \pm i S^y`);
  - n-level site ``q``: ``q(i, j)`` is :math:`|i\rangle\langle j|`, ``q.proj(i)`` is
    :math:`|i\rangle\langle i|`;
  - fermion or boson mode ``c``: the annihilator itself;

* ``adj(X)`` adjoint, ``n(c)`` = ``adj(c)*c``, ``dot(a, b)`` = ``a.x*b.x + a.y*b.y + a.z*b.z``,
  ``[X, Y]`` = ``X*Y - Y*X``.

Guards: at most ``MAX_LENGTH`` characters and ``MAX_DEPTH`` levels of nesting; exact numbers
of at most ``MAX_DIGITS`` digits; symbolic integer powers up to ``MAX_SYMBOLIC_POWER``;
operator powers up to ``MAX_OPERATOR_POWER``; operator expressions of at most ``MAX_TERMS``
terms and at most ``MAX_WORK`` products of terms in all. Each guard stops with a
:class:`ParseError` naming it, so no input hangs.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Callable, Mapping
from typing import Union

import sympy as sp

from ..algebra import LevelSite, Operator, SpinSite, commutator, dagger
from ..errors import InputError
from ._errors import ParseError
from ._grammar import (Attr, Bracket, Call, Name, Neg, Node, Num, Power, Product, Sum,
                       parse_tree, start_of)

__all__ = ["parse_scalar", "parse_operator", "SCALAR_FUNCTIONS", "OPERATOR_FUNCTIONS",
           "CONSTANTS", "RESERVED_WORDS", "SPIN_ATTRIBUTES", "MAX_DIGITS", "MAX_SYMBOLIC_POWER",
           "MAX_OPERATOR_POWER", "MAX_TERMS", "MAX_WORK"]

#: One-argument functions of scalars, by their name in formulas.
SCALAR_FUNCTIONS: Mapping[str, Callable[[sp.Expr], sp.Expr]] = {
    "exp": sp.exp, "log": sp.log, "sqrt": sp.sqrt, "sin": sp.sin, "cos": sp.cos, "tan": sp.tan,
    "sinh": sp.sinh, "cosh": sp.cosh, "tanh": sp.tanh, "coth": sp.coth, "sech": sp.sech,
    "csch": sp.csch, "abs": sp.Abs,
}
#: Functions that build operators.
OPERATOR_FUNCTIONS = ("adj", "n", "dot")
# Spellings that are not part of the language, with the one to use instead.
_RENAMED_FUNCTIONS: Mapping[str, str] = {"dag": "adj(X)", "dagger": "adj(X)"}
#: Named constants.
CONSTANTS: Mapping[str, sp.Expr] = {"pi": sp.pi, "I": sp.I}
#: Names a scope may not define (they belong to the language).
RESERVED_WORDS = frozenset(SCALAR_FUNCTIONS) | frozenset(OPERATOR_FUNCTIONS) | frozenset(CONSTANTS)
#: Operators of a spin site, by attribute name.
SPIN_ATTRIBUTES = ("x", "y", "z", "plus", "minus")
#: Largest exact number (in decimal digits) a formula may produce.
MAX_DIGITS = 1000
#: Largest integer power of a symbolic scalar, e.g. (J + h)^32.
MAX_SYMBOLIC_POWER = 32
#: Largest power of an operator, e.g. (a.x)^12.
MAX_OPERATOR_POWER = 12
#: Largest number of terms of an operator expression.
MAX_TERMS = 10000
#: Largest total work of the operator algebra in one formula, counted in products of two terms
#: (a Hamiltonian of a few dozen couplings needs a few hundred).
MAX_WORK = 20000

# Temperature, frequency and time symbols: named in errors when they appear where they cannot.
_VARIABLES = ("beta", "T", "omega", "t", "eta", "nu")

Value = Union[sp.Expr, Operator, SpinSite, LevelSite]
_HANDLES = (SpinSite, LevelSite)


def parse_scalar(text: str, symbols: Mapping[str, sp.Expr], *, source: str = "<formula>") -> sp.Expr:
    r"""Parse a scalar formula into an exact sympy expression.

    Parameters
    ----------
    text : str
        The formula, e.g. ``"2*beta/(3 + exp(beta*J))"``.
    symbols : mapping of str to sympy expression
        The names the formula may use (parameters, and reserved symbols such as ``beta`` or
        ``T`` when the caller allows them). A name may stand for any expression, e.g.
        ``{"T": 1/beta}``.
    source : str
        Where the text came from, for error messages.

    Returns
    -------
    sympy.Expr
        Exact: decimal numbers become rationals.

    Raises
    ------
    ParseError
        With line, column and a caret under the fault; unknown names come with the nearest
        known name.
    InputError
        If ``symbols`` is not a mapping of names to sympy expressions, or uses a name of the
        language (``exp``, ``pi``, ...).

    Examples
    --------
    >>> import sympy as sp
    >>> from symresp.text import parse_scalar
    >>> from symresp.conventions import beta
    >>> J = sp.Symbol("J", positive=True)
    >>> parse_scalar("2*beta/(3 + exp(beta*J))", {"J": J, "beta": beta})
    2*beta/(exp(J*beta) + 3)
    >>> parse_scalar("0.5e-1 + 2^-1", {})
    11/20

    See Also
    --------
    parse_operator
    """
    scope = _check_scope(symbols, scalar_only=True)
    tree = parse_tree(text, source=source)
    value = _Evaluator(text, source, scope, "scalar", "").run(tree)
    assert isinstance(value, sp.Expr)
    return value


def parse_operator(text: str, scope: Mapping[str, object], *, source: str = "<formula>",
                   unknown_hint: str = "") -> Operator:
    r"""Parse an operator expression over the sites and parameters of ``scope``.

    Parameters
    ----------
    text : str
        The expression, e.g. ``"J*dot(a, b) - h*(a.z + b.z)"``.
    scope : mapping of str to site handle, Operator or sympy expression
        Spin sites (:class:`~symresp.algebra.SpinSite`), n-level sites
        (:class:`~symresp.algebra.LevelSite`), operators (fermion or boson annihilators,
        named observables) and scalar parameters.
    source : str
        Where the text came from, for error messages.
    unknown_hint : str
        Appended to the message about an unknown name (e.g. where to declare it).

    Returns
    -------
    Operator
        A scalar formula gives a multiple of the identity.

    Raises
    ------
    ParseError
        With line, column and a caret under the fault.
    InputError
        If ``scope`` holds something other than sites, operators and scalars, or a name of
        the language.

    Examples
    --------
    >>> import sympy as sp, symresp as sr
    >>> from symresp.text import parse_operator
    >>> J = sp.Symbol("J", positive=True)
    >>> a, b = sr.spin("a", sp.Rational(1, 2)), sr.spin("b", sp.Rational(1, 2))
    >>> H = parse_operator("J*dot(a, b)", {"a": a, "b": b, "J": J})
    >>> H == J * (a.vec @ b.vec)
    True
    >>> c = sr.fermion("c")
    >>> parse_operator("[c, adj(c)] + 2*n(c)", {"c": c}) == 1    # c c^+ - c^+ c = 1 - 2 n
    True

    See Also
    --------
    parse_scalar
    """
    checked = _check_scope(scope, scalar_only=False)
    tree = parse_tree(text, source=source)
    ev = _Evaluator(text, source, checked, "operator", unknown_hint)
    value = ev.run(tree)
    if isinstance(value, _HANDLES):
        raise ev.handle_error(value, tree)
    if isinstance(value, Operator):
        return value
    return Operator.scalar(value)


def _check_scope(scope: object, *, scalar_only: bool) -> dict[str, Value]:
    if not isinstance(scope, Mapping):
        raise InputError(f"formula scope: expected a mapping of names, got {type(scope).__name__}")
    out: dict[str, Value] = {}
    for name, value in scope.items():
        if not isinstance(name, str) or not name.isidentifier() or not name.isascii():
            raise InputError(f"formula scope: {name!r} is not a valid name")
        if name in RESERVED_WORDS:
            raise InputError(f"formula scope: the name {name!r} belongs to the formula language "
                             f"(reserved: {', '.join(sorted(RESERVED_WORDS))}); rename it")
        if isinstance(value, sp.Expr) and not isinstance(value, sp.Float) and not value.has(sp.Float):
            out[name] = value
        elif not scalar_only and isinstance(value, (Operator, SpinSite, LevelSite)):
            out[name] = value
        else:
            kinds = "sympy expressions" if scalar_only else "sites, operators or exact sympy expressions"
            raise InputError(f"formula scope: {name!r} maps to {value!r}; expected {kinds}")
    return out


def _bad_number(v: sp.Expr) -> bool:
    """True for infinities and undefined values, at the top or one level down."""
    bad = (sp.zoo, sp.nan, sp.oo, -sp.oo)
    if v in bad:
        return True
    return any(a in bad for a in v.args) if isinstance(v, (sp.Add, sp.Mul, sp.Pow)) else False


def _digits(r: sp.Rational) -> float:
    """Decimal digits of the larger of numerator and denominator (at least 1)."""
    return max(math.log10(max(abs(int(r.p)), abs(int(r.q)), 2)), 1.0)


class _Evaluator:
    """Walks one syntax tree against a checked scope; one use only."""

    __slots__ = ("text", "source", "scope", "mode", "unknown_hint", "work")

    def __init__(self, text: str, source: str, scope: dict[str, Value], mode: str,
                 unknown_hint: str) -> None:
        self.text = text
        self.source = source
        self.scope = scope
        self.mode = mode
        self.unknown_hint = unknown_hint
        self.work = 0

    def spend(self, pairs: int, off: int) -> None:
        """Count operator-algebra work; stop before a formula can take minutes."""
        self.work += pairs
        if self.work > MAX_WORK:
            raise self.error(off, f"the formula needs too much operator algebra (more than "
                                  f"{MAX_WORK} products of terms); expand it less, e.g. avoid "
                                  f"high powers of long sums")

    def error(self, offset: int, reason: str) -> ParseError:
        return ParseError.at(self.text, offset, reason, source=self.source)

    def run(self, tree: Node) -> Value:
        try:
            value = self.value_of(tree)
        except RecursionError:
            raise self.error(start_of(tree), "the formula is too deeply nested to evaluate") from None
        if isinstance(value, sp.Expr):
            if value.has(sp.zoo, sp.nan, sp.oo):
                raise self.error(start_of(tree), "the formula has no finite value (a division by "
                                                 "zero or a logarithm of zero)")
            self.check_size(value, start_of(tree))
        return value

    # ------------------------------------------------------------ dispatch
    def value_of(self, node: Node) -> Value:
        if isinstance(node, Num):
            return sp.Rational(node.value.numerator, node.value.denominator)
        if isinstance(node, Name):
            return self.name(node)
        if isinstance(node, Sum):
            return self.sum(node)
        if isinstance(node, Product):
            return self.product(node)
        if isinstance(node, Neg):
            v = self.operand(node.operand, "'-'")
            return -v
        if isinstance(node, Power):
            return self.power(node)
        if isinstance(node, Attr):
            return self.attribute(node)
        if isinstance(node, Call):
            return self.call(node)
        if isinstance(node, Bracket):
            return self.bracket(node)
        raise AssertionError(f"unknown node {node!r}")  # the grammar builds no other node

    def operand(self, node: Node, where: str) -> sp.Expr | Operator:
        """Evaluate ``node`` and refuse a bare site handle."""
        v = self.value_of(node)
        if isinstance(v, _HANDLES):
            raise self.handle_error(v, node, where)
        return v

    def handle_error(self, handle: SpinSite | LevelSite, node: Node, where: str = "") -> ParseError:
        name = handle.name
        ctx = f" in {where}" if where else ""
        if isinstance(handle, SpinSite):
            return self.error(start_of(node), f"'{name}' is a spin-{handle.S} site, not an "
                                              f"operator{ctx}: use {name}.x, {name}.y, {name}.z, "
                                              f"{name}.plus or {name}.minus")
        return self.error(start_of(node), f"'{name}' is an n-level site, not an operator{ctx}: "
                                          f"use {name}(i, j) for |i><j| or {name}.proj(i)")

    # ------------------------------------------------------------ names
    def name(self, node: Name) -> Value:
        n = node.name
        if n in self.scope:
            return self.scope[n]
        if n in CONSTANTS:
            return CONSTANTS[n]
        if n in SCALAR_FUNCTIONS or n in OPERATOR_FUNCTIONS:
            raise self.error(node.offset, f"'{n}' is a function: write {n}(...)")
        raise self.error(node.offset, self.unknown(n))

    def unknown(self, n: str, *, what: str = "name") -> str:
        candidates = list(self.scope) + list(CONSTANTS)
        if what == "function":
            candidates = list(SCALAR_FUNCTIONS)
            if self.mode == "operator":
                candidates += list(OPERATOR_FUNCTIONS)
            candidates += [k for k, v in self.scope.items() if isinstance(v, LevelSite)]
        close = difflib.get_close_matches(n, candidates, n=1, cutoff=0.6)
        if not close:
            close = [c for c in candidates if c.lower() == n.lower()][:1]
        msg = f"unknown {what} '{n}'"
        if close:
            msg += f" (did you mean '{close[0]}'?)"
        if what == "name" and n in _VARIABLES and self.mode == "operator":
            msg += (f"; '{n}' is a temperature, frequency or time variable and cannot appear in "
                    f"an operator expression")
        elif what == "name" and self.unknown_hint:
            msg += f"; {self.unknown_hint}"
        elif what == "name" and not close:
            known = ", ".join(sorted(self.scope)) or "none"
            msg += f"; known names: {known}"
        return msg

    # ------------------------------------------------------------ arithmetic
    def sum(self, node: Sum) -> Value:
        scalars: list[sp.Expr] = []
        ops: list[Operator] = []
        for sign, term, off in node.terms:
            v = self.operand(term, "a sum")
            if isinstance(v, Operator):
                ops.append(v if sign > 0 else -v)
            else:
                scalars.append(v if sign > 0 else -v)
        total = sp.Add(*scalars)
        if not ops:
            return total
        self.check_size(total, node.offset)
        # pairwise summation keeps a long sum of operators near-linear in its length
        while len(ops) > 1:
            ops = [ops[k] + ops[k + 1] if k + 1 < len(ops) else ops[k] for k in range(0, len(ops), 2)]
        return ops[0] + total if total != 0 else ops[0]

    def product(self, node: Product) -> Value:
        value: sp.Expr | Operator = sp.Integer(1)
        scalars: list[sp.Expr] = []
        for op, factor, off in node.factors:
            v = self.operand(factor, "a product")
            if op == "/":
                if isinstance(v, Operator):
                    raise self.error(off, "cannot divide by an operator; only by a scalar")
                if v.is_zero:
                    raise self.error(off, "division by zero")
                v = 1 / v
            if isinstance(v, Operator):
                if scalars:
                    value = self.times(value, sp.Mul(*scalars), off)
                    scalars = []
                value = self.times(value, v, off)
            else:
                scalars.append(v)
        if scalars:
            value = self.times(value, sp.Mul(*scalars), node.offset)
        return value

    def times(self, x: sp.Expr | Operator, y: sp.Expr | Operator, off: int) -> sp.Expr | Operator:
        if not isinstance(x, Operator) and not isinstance(y, Operator):
            r = x * y
            if _bad_number(r):
                raise self.error(off, "the product has no finite value")
            coefficient = r.as_coeff_Mul()[0]
            if coefficient.is_Rational and _digits(coefficient) > MAX_DIGITS:
                # each factor passed the limit, their product may not: 10^999*10^999
                raise self.error(off, f"the product has a number of more than {MAX_DIGITS} digits")
            return r
        for v in (x, y):
            if not isinstance(v, Operator):
                self.check_size(v, off)
        self.spend(max(len(x.terms), 1) * max(len(y.terms), 1) if isinstance(x, Operator) and
                   isinstance(y, Operator) else len((x if isinstance(x, Operator) else y).terms), off)
        try:
            r = x * y
        except InputError as err:
            raise self.error(off, str(err)) from None
        if len(r.terms) > MAX_TERMS:
            raise self.error(off, f"the operator expression grows beyond {MAX_TERMS} terms")
        return r

    def power(self, node: Power) -> Value:
        base = self.operand(node.base, "a power")
        exponent = self.operand(node.exponent, "an exponent")
        if isinstance(exponent, Operator):
            raise self.error(start_of(node.exponent), "an exponent must be a number, not an operator")
        if isinstance(base, Operator):
            if not (exponent.is_Integer and 0 <= exponent <= MAX_OPERATOR_POWER):
                raise self.error(start_of(node.exponent),
                                 f"an operator power needs an integer exponent from 0 to "
                                 f"{MAX_OPERATOR_POWER}, got {_short(exponent)}")
            result = Operator(Operator.scalar(1).terms, base.sites)
            for _ in range(int(exponent)):
                result = self.times(result, base, node.offset)
            return result
        self.check_power(base, exponent, node)
        r = base ** exponent
        if _bad_number(r):
            raise self.error(node.offset, "the power has no finite value (zero to a negative power)")
        self.check_size(r, node.offset)
        return r

    def check_power(self, base: sp.Expr, exponent: sp.Expr, node: Power) -> None:
        """Refuse powers whose exact value would be huge (they would hang sympy)."""
        if exponent.is_Rational and base.is_Rational:
            if abs(exponent) * _digits(base) > MAX_DIGITS and base not in (0, 1, -1):
                raise self.error(node.offset, f"the number {_short(base)}^{_short(exponent)} has "
                                              f"more than {MAX_DIGITS} digits")
        elif exponent.is_Rational and base.is_number:
            if abs(exponent) > MAX_DIGITS:
                raise self.error(node.offset, f"the exponent {_short(exponent)} is too large "
                                              f"(limit {MAX_DIGITS})")
        elif exponent.is_Rational and abs(exponent) > MAX_SYMBOLIC_POWER:
            raise self.error(node.offset, f"the exponent {_short(exponent)} is too large for a "
                                          f"symbolic base (limit {MAX_SYMBOLIC_POWER})")
        if isinstance(base, sp.Pow) and base.exp.is_Rational and exponent.is_Rational:
            total = abs(base.exp * exponent)
            if total > MAX_DIGITS or (not base.base.is_number and total > MAX_SYMBOLIC_POWER):
                raise self.error(node.offset, "the nested power is too large")

    def check_size(self, value: sp.Expr, off: int) -> None:
        """Refuse symbolic integer powers above the limit, wherever sympy combined them.

        Such powers are harmless until something expands them (operator coefficients are kept
        expanded), and then (J + h + K)^300 would take hours.
        """
        for p in value.atoms(sp.Pow):
            if p.exp.is_Rational and abs(p.exp) > MAX_SYMBOLIC_POWER and not p.base.is_number:
                raise self.error(off, f"the power {_short(p)} is too large for a symbolic base "
                                      f"(limit {MAX_SYMBOLIC_POWER})")

    # ------------------------------------------------------------ sites and calls
    def attribute(self, node: Attr) -> Value:
        base = self.name(node.base)
        if isinstance(base, SpinSite):
            if node.attr in SPIN_ATTRIBUTES:
                return getattr(base, node.attr)
            close = difflib.get_close_matches(node.attr, SPIN_ATTRIBUTES, n=1, cutoff=0.5)
            hint = f" (did you mean '{base.name}.{close[0]}'?)" if close else ""
            raise self.error(node.offset, f"spin site '{base.name}' has no component "
                                          f"'{node.attr}'{hint}; components: "
                                          f"{', '.join(SPIN_ATTRIBUTES)}")
        if isinstance(base, LevelSite):
            if node.attr == "proj":
                raise self.error(node.offset, f"{base.name}.proj needs a level: write "
                                              f"{base.name}.proj(i)")
            raise self.error(node.offset, f"n-level site '{base.name}' has no attribute "
                                          f"'{node.attr}': write {base.name}(i, j) for |i><j| or "
                                          f"{base.name}.proj(i)")
        what = "an operator" if isinstance(base, Operator) else "a scalar"
        raise self.error(node.offset, f"'{node.base.name}' is {what}, it has no attribute "
                                      f"'.{node.attr}'; attributes .x .y .z .plus .minus belong to "
                                      f"spin sites")

    def call(self, node: Call) -> Value:
        func = node.func
        if isinstance(func, Attr):
            base = self.name(func.base)
            if isinstance(base, LevelSite) and func.attr == "proj":
                self.arity(node, 1, f"{base.name}.proj(i)")
                i = self.level_index(base, node.args[0])
                return base.proj(i)
            self.attribute(func)      # an unknown attribute is the better message: raised first
            raise self.error(node.offset, "missing operator before '(': write '*' for a product")
        name = func.name
        if name in self.scope:
            target = self.scope[name]
            if isinstance(target, LevelSite):
                self.arity(node, 2, f"{name}(i, j) (for a projector use {name}.proj(i))")
                i = self.level_index(target, node.args[0])
                j = self.level_index(target, node.args[1])
                return target.op(i, j)
            if isinstance(target, SpinSite):
                raise self.error(func.offset, f"'{name}' is a spin site, not a function: use "
                                              f"{name}.x, {name}.y, {name}.z, {name}.plus or "
                                              f"{name}.minus")
            what = "an operator" if isinstance(target, Operator) else "a parameter"
            raise self.error(node.offset, f"'{name}' is {what}, not a function: write "
                                          f"'{name}*(...)' for a product")
        if name in SCALAR_FUNCTIONS:
            self.arity(node, 1, f"{name}(x)")
            arg = self.operand(node.args[0], f"{name}()")
            if isinstance(arg, Operator):
                raise self.error(start_of(node.args[0]),
                                 f"{name}() of an operator is not available; functions apply to "
                                 f"scalars only")
            r = SCALAR_FUNCTIONS[name](arg)
            if _bad_number(r):
                raise self.error(func.offset, f"{name}() has no finite value here")
            return r
        if name in OPERATOR_FUNCTIONS:
            if self.mode != "operator":
                raise self.error(func.offset, f"{name}() builds operators and cannot appear in a "
                                              f"scalar formula")
            return getattr(self, "op_" + name)(node)
        if name in CONSTANTS:
            raise self.error(node.offset, f"'{name}' is a constant, not a function: write "
                                          f"'{name}*(...)' for a product")
        if name in _RENAMED_FUNCTIONS:
            raise self.error(func.offset, f"{name}() is not a function of the formula language: "
                                          f"the adjoint is written {_RENAMED_FUNCTIONS[name]}")
        raise self.error(func.offset, self.unknown(name, what="function"))

    def arity(self, node: Call, n: int, usage: str) -> None:
        if len(node.args) != n:
            got = len(node.args)
            raise self.error(node.offset, f"expected {n} argument{'s' if n > 1 else ''}, got "
                                          f"{got}: write {usage}")

    def level_index(self, site: LevelSite, arg: Node) -> int:
        v = self.operand(arg, "a level index")
        if isinstance(v, Operator) or not v.is_Integer or not 0 <= v < site.n:
            raise self.error(start_of(arg), f"a level of '{site.name}' must be an integer from 0 "
                                            f"to {site.n - 1}, got {_short(v)}")
        return int(v)

    def op_adj(self, node: Call) -> Value:
        self.arity(node, 1, "adj(X)")
        v = self.operand(node.args[0], "adj()")
        if isinstance(v, Operator):
            self.spend(4 * len(v.terms), node.offset)
            return dagger(v)
        return sp.conjugate(v)

    def op_n(self, node: Call) -> Value:
        self.arity(node, 1, "n(c)")
        v = self.operand(node.args[0], "n()")
        if not isinstance(v, Operator):
            raise self.error(start_of(node.args[0]), "n() takes a fermion or boson mode, e.g. n(c_up)")
        self.spend(4 * len(v.terms), node.offset)
        return self.times(dagger(v), v, node.offset)

    def op_dot(self, node: Call) -> Value:
        self.arity(node, 2, "dot(a, b) with spin sites a and b")
        sites = []
        for arg in node.args:
            v = self.value_of(arg)
            if not isinstance(v, SpinSite):
                raise self.error(start_of(arg), "dot() takes two spin site names, e.g. dot(a, b)")
            sites.append(v)
        return sites[0].vec @ sites[1].vec

    def bracket(self, node: Bracket) -> Value:
        x = self.operand(node.left, "a commutator")
        y = self.operand(node.right, "a commutator")
        if not isinstance(x, Operator) and not isinstance(y, Operator):
            return sp.Integer(0)
        sizes = [len(v.terms) if isinstance(v, Operator) else 1 for v in (x, y)]
        self.spend(2 * max(sizes[0], 1) * max(sizes[1], 1), node.offset)
        try:
            r = commutator(x, y)
        except InputError as err:
            raise self.error(node.offset, str(err)) from None
        if len(r.terms) > MAX_TERMS:
            raise self.error(node.offset, f"the operator expression grows beyond {MAX_TERMS} terms")
        return r


def _short(v: object) -> str:
    s = str(v)
    return s if len(s) <= 40 else s[:37] + "..."
