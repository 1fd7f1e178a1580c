"""Positions of keys and string values inside the raw text of a TOML case file (layer: cases).

Owns :class:`Locator`. Imports only :mod:`symresp.text` (for :class:`ParseError`).

``tomllib`` returns values without positions, so error messages would otherwise name a key but
not a line. The locator re-scans the raw text line by line, best effort: it understands table
headers (``[a.b]``, ``[[a]]``) and ``key = value`` lines, which is how case files are written.
When it cannot be sure (inline tables, escapes inside strings) it returns nothing and the
message falls back to the key alone.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from ..text import ParseError

__all__ = ["Locator", "KeyPlace"]

_HEADER = re.compile(r"^\s*(\[\[?)\s*([^\]]+?)\s*(\]\]?)\s*(#.*)?$")
_KEY = re.compile(r"""^\s*("(?:[^"\\]|\\.)*"|'[^']*'|[A-Za-z0-9_\-.]+)\s*=\s*""")


@dataclass(frozen=True, slots=True)
class KeyPlace:
    """Line (1-based) of a key, the column where its value starts, and the line's text."""

    line: int
    value_column: int
    text: str


def _split_header(raw: str) -> tuple[str, ...]:
    parts = []
    for piece in re.findall(r"""("(?:[^"\\]|\\.)*"|'[^']*'|[^.\s]+)""", raw):
        parts.append(piece[1:-1] if piece[:1] in "\"'" else piece)
    return tuple(parts)


def _unquote(key: str) -> str:
    return key[1:-1] if key[:1] in "\"'" and len(key) >= 2 else key


class Locator:
    """Finds keys in the raw text of one case file.

    Examples
    --------
    >>> from symresp.cases._locate import Locator
    >>> loc = Locator('[model]\\nhamiltonian = "J*a.z"\\n', "x.toml")
    >>> loc.key(("model",), "hamiltonian").line
    2
    """

    def __init__(self, text: str, source: str) -> None:
        self.lines = text.splitlines()
        self.source = source
        # sections: (header path, index among equal array headers or None, first line, end line)
        self.sections: list[tuple[tuple[str, ...], int | None, int, int]] = []
        current: tuple[tuple[str, ...], int | None, int] = ((), None, 0)
        counts: dict[tuple[str, ...], int] = {}
        for i, line in enumerate(self.lines):
            m = _HEADER.match(line)
            if m and not _KEY.match(line):
                self.sections.append((current[0], current[1], current[2], i))
                path = _split_header(m.group(2))
                if m.group(1) == "[[":
                    idx = counts.get(path, 0)
                    counts[path] = idx + 1
                    current = (path, idx, i + 1)
                else:
                    current = (path, None, i + 1)
        self.sections.append((current[0], current[1], current[2], len(self.lines)))

    def key(self, table: tuple[str, ...], key: str, index: int | None = None) -> KeyPlace | None:
        """Where ``key`` is set inside ``table`` (the ``index``-th one for arrays of tables).

        Also finds ``[table.key]`` headers and dotted keys ``key.sub = ...`` written in the
        parent table.
        """
        for path, idx, start, end in self.sections:
            if path == table and (index is None or idx == index):
                found = self._scan(start, end, key)
                if found is not None:
                    return found
        for path, idx, start, end in self.sections:
            if path == table + (key,) and index is None:
                return KeyPlace(start, 1, self.lines[start - 1]) if start else None
        return None

    def table(self, table: tuple[str, ...], index: int | None = None) -> KeyPlace | None:
        """Where the header of ``table`` is (None for the root or a table set inline)."""
        for path, idx, start, _ in self.sections:
            if path == table and (index is None or idx == index) and start:
                return KeyPlace(start, 1, self.lines[start - 1])
        if len(table) >= 2 and index is None:
            return self.key(table[:-1], table[-1])
        return None

    def _scan(self, start: int, end: int, key: str) -> KeyPlace | None:
        for i in range(start, end):
            m = _KEY.match(self.lines[i])
            if not m:
                continue
            raw = m.group(1)
            name = _unquote(raw) if raw[:1] in "\"'" else raw
            first = name.split(".")[0] if raw[:1] not in "\"'" else name
            if name == key or first == key:
                return KeyPlace(i + 1, m.end() + 1, self.lines[i])
        return None

    # ------------------------------------------------------------ expressions
    def expression_error(self, err: ParseError, place: KeyPlace | None, expr: str,
                         where: str) -> ParseError:
        """Re-anchor an expression's ParseError to the file when the string maps back exactly."""
        mapped = self._map(place, expr, err.line, err.column) if err.line is not None else None
        if mapped is not None:
            line, column = mapped
            return ParseError(err.reason, source=self.source, line=line, column=column,
                              excerpt=self.lines[line - 1], where=where)
        return ParseError(err.reason, source=self.source, line=err.line, column=err.column,
                          excerpt=err.excerpt, where=where, relative=err.line is not None)

    def _map(self, place: KeyPlace | None, expr: str, line: int | None,
             column: int | None) -> tuple[int, int] | None:
        if place is None or line is None or column is None:
            return None
        rest = place.text[place.value_column - 1:]
        expr_lines = expr.split("\n")
        for quote in ('"""', "'''"):
            if rest.startswith(quote):
                # multi-line string: a newline right after the opening quotes is dropped
                after = rest[len(quote):]
                if after.strip() == "" and place.line < len(self.lines):
                    first_line = place.line + 1
                    if all(first_line - 1 + k < len(self.lines)
                           and self.lines[first_line - 1 + k].startswith(expr_lines[k])
                           for k in range(len(expr_lines))):
                        return first_line + line - 1, column
                    return None
                if after.startswith(expr_lines[0]) and line == 1:
                    return place.line, place.value_column + len(quote) + column - 1
                return None
        if rest[:1] in "\"'" and len(expr_lines) == 1 and rest[1:].startswith(expr + rest[0]):
            return place.line, place.value_column + column
        return None
