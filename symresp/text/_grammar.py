"""Recursive-descent grammar of the formula language (layer: text).

Owns the syntax tree node types and :func:`parse_tree`. Imports :mod:`._lexer` and
:mod:`._errors` only. The tree says nothing about what names mean; :mod:`._evaluate` gives it
meaning against a scope.

Grammar (lowest precedence first; ``^`` and ``**`` are the same operator)::

    sum      := product (("+" | "-") product)*
    product  := unary (("*" | "/") unary)*
    unary    := ("+" | "-") unary | power
    power    := postfix (("^" | "**") unary)?          # right-associative; -x^2 = -(x^2)
    postfix  := atom ("." NAME)? call?                  # a.z   q.proj(0)
    call     := "(" [sum ("," sum)*] ")"                # only directly after a name
    atom     := NUMBER | NAME | "(" sum ")" | "[" sum "," sum "]"

A product must be written with ``*``: ``2J`` and ``J (a.z)`` are errors that say so. Sums and
products are n-ary nodes, so a long sum is a shallow tree; nesting (parentheses, calls, unary
signs, exponents) is limited to :data:`MAX_DEPTH` levels so that no input can exhaust the
Python stack.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import Union

from ._errors import ParseError, position_of
from ._lexer import Token, tokenize

__all__ = ["Node", "Num", "Name", "Attr", "Call", "Neg", "Sum", "Product", "Power", "Bracket",
           "parse_tree", "MAX_DEPTH"]

#: Deepest nesting accepted (parentheses, calls, signs and exponents all count).
MAX_DEPTH = 100


@dataclass(frozen=True, slots=True)
class Num:
    """A number literal, converted exactly (``0.5`` is 1/2)."""

    value: Fraction
    offset: int


@dataclass(frozen=True, slots=True)
class Name:
    """A bare name: a parameter, a site, a constant or a function."""

    name: str
    offset: int


@dataclass(frozen=True, slots=True)
class Attr:
    """``base.attr``: a site attribute such as ``a.z``; ``offset`` is that of ``attr``."""

    base: Name
    attr: str
    offset: int


@dataclass(frozen=True, slots=True)
class Call:
    """``func(args)``; ``offset`` is that of the opening parenthesis."""

    func: Union[Name, Attr]
    args: tuple[Node, ...]
    offset: int


@dataclass(frozen=True, slots=True)
class Neg:
    """Unary minus."""

    operand: Node
    offset: int


@dataclass(frozen=True, slots=True)
class Sum:
    """``t0 +- t1 +- ...``: ``terms`` holds (sign, node, offset of the sign)."""

    terms: tuple[tuple[int, Node, int], ...]
    offset: int


@dataclass(frozen=True, slots=True)
class Product:
    """``f0 */ f1 */ ...``: ``factors`` holds (operator, node, offset of the operator)."""

    factors: tuple[tuple[str, Node, int], ...]
    offset: int


@dataclass(frozen=True, slots=True)
class Power:
    """``base ^ exponent``; ``offset`` is that of the ``^``."""

    base: Node
    exponent: Node
    offset: int


@dataclass(frozen=True, slots=True)
class Bracket:
    """``[X, Y]``: the commutator."""

    left: Node
    right: Node
    offset: int


Node = Union[Num, Name, Attr, Call, Neg, Sum, Product, Power, Bracket]


def start_of(node: Node) -> int:
    """Offset of the first character of ``node``."""
    while True:
        if isinstance(node, Sum):
            node = node.terms[0][1]
        elif isinstance(node, Product):
            node = node.factors[0][1]
        elif isinstance(node, Power):
            node = node.base
        elif isinstance(node, Attr):
            node = node.base
        elif isinstance(node, Call):
            node = node.func
        else:
            return node.offset


def parse_tree(text: str, *, source: str = "<formula>") -> Node:
    """Parse ``text`` into a syntax tree (no meaning is given to names yet).

    Raises
    ------
    ParseError
        With the line, column and a caret under the fault.

    Examples
    --------
    >>> from symresp.text import parse_tree
    >>> parse_tree("-J^2")
    Neg(operand=Power(base=Name(name='J', offset=1), exponent=Num(value=Fraction(2, 1), offset=3), offset=2), offset=0)
    """
    tokens = tokenize(text, source=source)
    if tokens[0].kind == "end":
        raise ParseError("the formula is empty", source=source)
    return _Parser(text, tokens, source).parse()


class _Parser:
    """One use only: holds the position in the token list and the nesting depth."""

    __slots__ = ("text", "tokens", "source", "i", "depth")

    def __init__(self, text: str, tokens: tuple[Token, ...], source: str) -> None:
        self.text = text
        self.tokens = tokens
        self.source = source
        self.i = 0
        self.depth = 0

    # ------------------------------------------------------------ helpers
    def error(self, offset: int, reason: str) -> ParseError:
        return ParseError.at(self.text, offset, reason, source=self.source)

    def peek(self) -> Token:
        return self.tokens[self.i]

    def take(self) -> Token:
        tok = self.tokens[self.i]
        if tok.kind != "end":
            self.i += 1
        return tok

    def enter(self, tok: Token) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            raise self.error(tok.offset, f"the formula is nested more than {MAX_DEPTH} levels "
                                         f"deep (parentheses, calls, signs and exponents)")

    def leave(self) -> None:
        self.depth -= 1

    def is_op(self, tok: Token, *ops: str) -> bool:
        return tok.kind == "op" and tok.text in ops

    # ------------------------------------------------------------ grammar
    def parse(self) -> Node:
        node = self.sum()
        tok = self.peek()
        if tok.kind != "end":
            raise self.unexpected_after(tok)
        return node

    def sum(self) -> Node:
        # every nested sum (parentheses, brackets, call arguments) is one level of nesting
        self.enter(self.peek())
        first = self.product()
        terms: list[tuple[int, Node, int]] = [(1, first, 0)]
        while self.is_op(self.peek(), "+", "-"):
            tok = self.take()
            terms.append((1 if tok.text == "+" else -1, self.product(), tok.offset))
        self.leave()
        if len(terms) == 1:
            return first
        return Sum(tuple(terms), start_of(first))

    def product(self) -> Node:
        first = self.unary()
        factors: list[tuple[str, Node, int]] = [("*", first, 0)]
        while self.is_op(self.peek(), "*", "/"):
            tok = self.take()
            factors.append((tok.text, self.unary(), tok.offset))
        if len(factors) == 1:
            return first
        return Product(tuple(factors), start_of(first))

    def unary(self) -> Node:
        tok = self.peek()
        if self.is_op(tok, "+", "-"):
            self.take()
            self.enter(tok)
            operand = self.unary()
            self.leave()
            return Neg(operand, tok.offset) if tok.text == "-" else operand
        return self.power()

    def power(self) -> Node:
        base = self.postfix()
        tok = self.peek()
        if self.is_op(tok, "^", "**"):
            self.take()
            self.enter(tok)
            exponent = self.unary()
            self.leave()
            return Power(base, exponent, tok.offset)
        return base

    def postfix(self) -> Node:
        node = self.atom()
        tok = self.peek()
        if tok.kind == ".":
            if not isinstance(node, Name):
                raise self.error(tok.offset, "'.' can only follow a site name, as in a.z")
            self.take()
            name = self.take()
            if name.kind != "name":
                raise self.error(name.offset, f"expected an attribute name after '{node.name}.', "
                                              f"as in {node.name}.z")
            node = Attr(node, name.text, name.offset)
            tok = self.peek()
            if tok.kind == ".":
                raise self.error(tok.offset, f"'{node.base.name}.{node.attr}' has no attributes")
        if tok.kind == "(":
            if not isinstance(node, (Name, Attr)):
                raise self.error(tok.offset, "missing operator before '(': write '*' for a "
                                             "product, e.g. 2*(a.z + b.z)")
            node = self.call(node)
            tok = self.peek()
            if tok.kind == "(":
                raise self.error(tok.offset, "missing operator before '(': write '*' for a "
                                             "product")
            if tok.kind == ".":
                raise self.error(tok.offset, "the result of a call has no attributes")
        return node

    def call(self, func: Name | Attr) -> Call:
        open_tok = self.take()
        args: list[Node] = []
        if self.peek().kind == ")":
            self.take()
        else:
            while True:
                args.append(self.sum())
                tok = self.take()
                if tok.kind == ")":
                    break
                if tok.kind != ",":
                    raise self.unclosed(tok, open_tok, "')' or ','")
        return Call(func, tuple(args), open_tok.offset)

    def atom(self) -> Node:
        tok = self.take()
        if tok.kind == "num":
            return Num(Fraction(tok.text), tok.offset)
        if tok.kind == "name":
            return Name(tok.text, tok.offset)
        if tok.kind == "(":
            inner = self.sum()
            close = self.take()
            if close.kind != ")":
                raise self.unclosed(close, tok, "')'")
            return inner
        if tok.kind == "[":
            left = self.sum()
            comma = self.take()
            if comma.kind != ",":
                raise self.unclosed(comma, tok, "',' (a commutator is written [X, Y])")
            right = self.sum()
            close = self.take()
            if close.kind != "]":
                raise self.unclosed(close, tok, "']'")
            return Bracket(left, right, tok.offset)
        if tok.kind == "end":
            raise self.error(tok.offset, "the formula ends too early: expected a number, a name "
                                         "or '('")
        if tok.kind == "op":
            return self.misplaced_operator(tok)
        if tok.kind == ")":
            raise self.error(tok.offset, "unexpected ')': expected a number, a name or '('")
        if tok.kind == "]":
            raise self.error(tok.offset, "unexpected ']': expected a number, a name or '('")
        if tok.kind == ".":
            raise self.error(tok.offset, "unexpected '.': attributes follow a site name, as in a.z")
        raise self.error(tok.offset, f"unexpected {tok.text!r}: expected a number, a name or '('")

    # ------------------------------------------------------------ error messages
    def misplaced_operator(self, tok: Token) -> Node:
        if tok.text in ("*", "**") and self.i >= 2 and self.tokens[self.i - 2].kind == "op":
            raise self.error(tok.offset, f"unexpected '{tok.text}' after "
                                         f"'{self.tokens[self.i - 2].text}'")
        raise self.error(tok.offset, f"unexpected '{tok.text}': expected a number, a name or "
                                     f"'(' before it")

    def unexpected_after(self, tok: Token) -> ParseError:
        if tok.kind in ("num", "name", "(", "["):
            prev = self.tokens[self.i - 1].text if self.i else ""
            return self.error(tok.offset, f"missing operator between {prev!r} and {tok.text!r}: "
                                          f"write '*' for a product (implicit multiplication is "
                                          f"not allowed)")
        if tok.kind == ")":
            return self.error(tok.offset, "unmatched ')'")
        if tok.kind == "]":
            return self.error(tok.offset, "unmatched ']'")
        if tok.kind == ",":
            return self.error(tok.offset, "unexpected ',' outside a call or commutator")
        if tok.kind == ".":
            return self.error(tok.offset, "unexpected '.': attributes follow a site name, as "
                                          "in a.z")
        return self.error(tok.offset, f"unexpected {tok.text!r}")

    def unclosed(self, tok: Token, open_tok: Token, expected: str) -> ParseError:
        line, col, _ = position_of(self.text, open_tok.offset)
        if tok.kind == "end":
            return self.error(tok.offset, f"missing {expected} to close the '{open_tok.text}' "
                                          f"at line {line}, column {col}")
        if tok.kind in ("num", "name", "(", "["):
            return self.unexpected_after(tok)
        return self.error(tok.offset, f"expected {expected} (to close the '{open_tok.text}' at "
                                      f"line {line}, column {col}), found {tok.text!r}")
