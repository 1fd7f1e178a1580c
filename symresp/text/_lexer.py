"""Tokenizer of the formula language (layer: text).

Owns :class:`Token` and :func:`tokenize`. Imports :mod:`._errors` only.

Tokens: numbers (``12``, ``0.5``, ``.5``, ``1e-3``), ASCII names (``J``, ``c_up``), the
operators ``+ - * / ^ **``, ``( ) [ ] ,`` and ``.`` (site attributes). Whitespace, including
newlines, separates tokens. Every other character is an error, so text such as quotes,
colons, backslashes or non-ASCII letters can never reach the grammar.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from ._errors import ParseError

__all__ = ["Token", "TokenKind", "tokenize", "MAX_LENGTH", "MAX_NUMBER_DIGITS"]

#: Longest text accepted (characters); longer input is refused before any work is done.
MAX_LENGTH = 20000
#: Longest number literal accepted (digits); Python itself refuses to convert much longer ones.
MAX_NUMBER_DIGITS = 400
#: Largest decimal exponent of a literal such as ``1e-30``.
MAX_LITERAL_EXPONENT = 400

TokenKind = Literal["num", "name", "op", "(", ")", "[", "]", ",", ".", "end"]

_SINGLE = {"(": "(", ")": ")", "[": "[", "]": "]", ",": ",", "+": "op", "-": "op", "/": "op",
           "^": "op"}
_ASCII_LETTERS = frozenset("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ_")
_DIGITS = frozenset("0123456789")
_NAME_CHARS = _ASCII_LETTERS | _DIGITS
_SPACE = frozenset(" \t\r\n")

# Characters people commonly type from other notations, with the fix to suggest.
_HINTS = {
    "'": "quotes are not part of the formula language; write names without quotes",
    '"': "quotes are not part of the formula language; write names without quotes",
    ":": "':' has no meaning in a formula",
    "=": "'=' has no meaning in a formula (parameter values go in the [parameters] table)",
    "{": "braces are not part of the formula language; use parentheses",
    "}": "braces are not part of the formula language; use parentheses",
    "!": "'!' (factorial) is not supported",
    "%": "'%' is not supported",
    "@": "'@' is not supported; write dot(a, b) for the spin scalar product",
    "&": "'&' is not supported",
    "|": "'|' is not supported; write q(i, j) for the transition |i><j| of an n-level site",
    "<": "'<' is not supported; write q(i, j) for the transition |i><j| of an n-level site",
    ">": "'>' is not supported; write q(i, j) for the transition |i><j| of an n-level site",
    "\\": "backslashes are not part of the formula language",
    ";": "';' is not supported; one expression per formula",
    "#": "comments are not allowed inside a formula",
    "$": "'$' is not supported",
    "~": "'~' is not supported",
    "`": "backquotes are not part of the formula language",
    "?": "'?' is not supported",
}


@dataclass(frozen=True, slots=True)
class Token:
    """One token: kind, its text and the offset of its first character."""

    kind: TokenKind
    text: str
    offset: int


def tokenize(text: str, *, source: str = "<formula>") -> tuple[Token, ...]:
    """Split ``text`` into tokens, ending with an ``end`` token.

    Raises
    ------
    ParseError
        On a character outside the language, a malformed number or text that is too long.

    Examples
    --------
    >>> from symresp.text import tokenize
    >>> [t.text for t in tokenize("2*a.z + J^2")]
    ['2', '*', 'a', '.', 'z', '+', 'J', '^', '2', '']
    """
    if not isinstance(text, str):
        raise ParseError(f"expected the text of a formula, got {type(text).__name__}",
                         source=source)
    if len(text) > MAX_LENGTH:
        raise ParseError(f"the formula has {len(text)} characters, more than the limit of "
                         f"{MAX_LENGTH}", source=source)
    out: list[Token] = []
    i, n = 0, len(text)
    while i < n:
        ch = text[i]
        if ch in _SPACE:
            i += 1
            continue
        if ch in _DIGITS or (ch == "." and i + 1 < n and text[i + 1] in _DIGITS):
            j = _scan_number(text, i, source)
            out.append(Token("num", text[i:j], i))
            i = j
            continue
        if ch in _ASCII_LETTERS:
            j = i + 1
            while j < n and text[j] in _NAME_CHARS:
                j += 1
            out.append(Token("name", text[i:j], i))
            i = j
            continue
        if ch == "*":
            if i + 1 < n and text[i + 1] == "*":
                out.append(Token("op", "**", i))
                i += 2
            else:
                out.append(Token("op", "*", i))
                i += 1
            continue
        if ch == ".":
            out.append(Token(".", ".", i))
            i += 1
            continue
        kind = _SINGLE.get(ch)
        if kind is not None:
            out.append(Token(kind, ch, i))  # type: ignore[arg-type]
            i += 1
            continue
        raise ParseError.at(text, i, _bad_character(ch), source=source)
    out.append(Token("end", "", n))
    return tuple(out)


def _bad_character(ch: str) -> str:
    hint = _HINTS.get(ch)
    shown = repr(ch) if ch.isprintable() else f"U+{ord(ch):04X}"
    if hint:
        return f"unexpected character {shown}: {hint}"
    if ch.isalpha():
        return (f"unexpected character {shown}: names use ASCII letters, digits and '_' only")
    return f"unexpected character {shown}"


def _scan_number(text: str, i: int, source: str) -> int:
    """End offset of the number literal starting at ``i``."""
    n = len(text)
    j = i
    while j < n and text[j] in _DIGITS:
        j += 1
    if j < n and text[j] == "." and not (j + 1 < n and text[j + 1] in _ASCII_LETTERS):
        j += 1
        while j < n and text[j] in _DIGITS:
            j += 1
    if j < n and text[j] in "eE":
        k = j + 1
        if k < n and text[k] in "+-":
            k += 1
        if k < n and text[k] in _DIGITS:
            e0 = k
            while k < n and text[k] in _DIGITS:
                k += 1
            if k - e0 > 6 or int(text[e0:k]) > MAX_LITERAL_EXPONENT:
                raise ParseError.at(
                    text, j, f"the exponent of the number {text[i:k]!r} is larger than the limit "
                             f"of {MAX_LITERAL_EXPONENT}", source=source)
            j = k
        elif k > j + 1:
            raise ParseError.at(text, j, f"malformed number {text[i:k]!r}: an exponent needs "
                                         f"digits, as in 1e-3", source=source)
    digits = sum(1 for c in text[i:j] if c in _DIGITS)
    if digits > MAX_NUMBER_DIGITS:
        raise ParseError.at(text, i, f"the number literal has {digits} digits, more than the "
                                     f"limit of {MAX_NUMBER_DIGITS}", source=source)
    if j < n and text[j] in _ASCII_LETTERS:
        raise ParseError.at(
            text, j, f"a number cannot be followed directly by a name: write "
                     f"'{text[i:j]}*{_name_at(text, j)}' for a product", source=source)
    return j


def _name_at(text: str, j: int) -> str:
    k = j
    while k < len(text) and text[k] in _NAME_CHARS:
        k += 1
    return text[j:k]
