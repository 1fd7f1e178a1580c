"""Safe text input (layer: text): a formula language of our own for scalars and operators.

Imports sympy, :mod:`symresp.errors` and :mod:`symresp.algebra` only. User text is tokenized
and parsed by a small recursive-descent grammar; it never reaches ``eval``, ``exec``,
``sympify`` or any other interpreter. See ``docs/case-files.md`` for the language.
"""

from ._errors import ParseError, position_of
from ._evaluate import (CONSTANTS, MAX_DIGITS, MAX_OPERATOR_POWER, MAX_SYMBOLIC_POWER, MAX_TERMS,
                        MAX_WORK, OPERATOR_FUNCTIONS, RESERVED_WORDS, SCALAR_FUNCTIONS,
                        SPIN_ATTRIBUTES, parse_operator, parse_scalar)
from ._grammar import MAX_DEPTH, parse_tree
from ._lexer import MAX_LENGTH, MAX_NUMBER_DIGITS, Token, tokenize

__all__ = [
    "parse_scalar", "parse_operator", "ParseError", "position_of", "parse_tree", "tokenize",
    "Token", "MAX_LENGTH", "MAX_DEPTH", "MAX_DIGITS", "MAX_NUMBER_DIGITS", "MAX_SYMBOLIC_POWER",
    "MAX_OPERATOR_POWER", "MAX_TERMS", "MAX_WORK", "SCALAR_FUNCTIONS", "OPERATOR_FUNCTIONS",
    "CONSTANTS", "RESERVED_WORDS", "SPIN_ATTRIBUTES",
]
