"""Parse errors that point at the fault (layer: text).

Owns :class:`ParseError`. Imports :mod:`symresp.errors` only.

A parse error carries the name of its source (a file, a TOML key, ``"<formula>"``), the line
and column of the fault (1-based) and the offending line of text, and prints as::

    <formula>:1:5: unknown name 'Jx' (did you mean 'J'?)
        J + Jx*a.z
            ^
"""

from __future__ import annotations

from ..errors import InputError

__all__ = ["ParseError", "position_of"]

# Excerpts longer than this are cut to a window around the fault, so a 20000-character line
# does not flood a terminal.
_EXCERPT_WIDTH = 100


def position_of(text: str, offset: int) -> tuple[int, int, str]:
    """Line, column (both 1-based) and the text of the line holding character ``offset``."""
    offset = max(0, min(offset, len(text)))
    start = text.rfind("\n", 0, offset) + 1
    end = text.find("\n", offset)
    if end < 0:
        end = len(text)
    return text.count("\n", 0, offset) + 1, offset - start + 1, text[start:end]


class ParseError(InputError):
    """Malformed text: names the source, the place (line and column) and the fix.

    Parameters
    ----------
    reason : str
        What is wrong and how to fix it, without the location.
    source : str
        Where the text came from (file name, ``"<formula>"``).
    line, column : int or None
        1-based position of the fault; None when the fault has no single place.
    excerpt : str
        The offending line, printed with a caret under ``column``.
    where : str
        Optional context inside the source, e.g. ``"[model] hamiltonian"``.
    relative : bool
        True when ``line``/``column`` count inside the expression rather than inside the
        source file (used when a case file position could not be recovered).

    Examples
    --------
    >>> from symresp.text import ParseError
    >>> err = ParseError("unexpected ')'", source="<formula>", line=1, column=3, excerpt="1+)")
    >>> print(err)
    <formula>:1:3: unexpected ')'
        1+)
          ^
    """

    def __init__(self, reason: str, *, source: str = "<formula>", line: int | None = None,
                 column: int | None = None, excerpt: str = "", where: str = "",
                 relative: bool = False) -> None:
        self.reason = reason
        self.source = source
        self.line = line
        self.column = column
        self.excerpt = excerpt
        self.where = where
        self.relative = relative
        super().__init__(self._render())

    @classmethod
    def at(cls, text: str, offset: int, reason: str, *, source: str = "<formula>") -> ParseError:
        """The error for character ``offset`` of ``text``."""
        line, column, excerpt = position_of(text, offset)
        return cls(reason, source=source, line=line, column=column, excerpt=excerpt)

    def _render(self) -> str:
        if self.line is None:
            head = f"{self.source}: {self.where + ': ' if self.where else ''}{self.reason}"
        elif self.relative:
            where = f"{self.where}: " if self.where else ""
            head = (f"{self.source}: {where}line {self.line}, column {self.column} of the "
                    f"expression: {self.reason}")
        else:
            where = f" {self.where}:" if self.where else ""
            head = f"{self.source}:{self.line}:{self.column}:{where} {self.reason}"
        if self.line is None or self.column is None:
            return head
        excerpt, col = _window(self.excerpt.replace("\t", " "), self.column)
        return f"{head}\n    {excerpt}\n    {' ' * (col - 1)}^"

    def __str__(self) -> str:
        return self._render()


def _window(line: str, column: int) -> tuple[str, int]:
    """Cut ``line`` to at most ``_EXCERPT_WIDTH`` characters around ``column``."""
    if len(line) <= _EXCERPT_WIDTH:
        return line, column
    start = max(0, column - 1 - _EXCERPT_WIDTH // 2)
    piece = line[start:start + _EXCERPT_WIDTH]
    prefix = "..." if start else ""
    suffix = "..." if start + _EXCERPT_WIDTH < len(line) else ""
    return prefix + piece + suffix, column - start + len(prefix)
