"""The fenced blocks of a Markdown page and how each is run (see DEVELOPERS.md, "Docs that run").

A block is labelled by its fence:

* ``python``: run. A block with ``>>>`` prompts is a session whose shown output is compared
  (doctest rules, ``...`` stands for any text); a block without prompts is a script. All
  Python blocks of a page share one namespace, in page order.
* ``console``: a shell session. Each ``$ command`` is run (a trailing ``\\`` continues it on
  the next line); the lines after it, up to the next ``$``, are its expected output, stdout
  and stderr together. A command shown without output must succeed (exit status 0).
* ``toml``: checked to be valid TOML; with a file marker it is also written to that file.
* ``text``: shown only, never run: usage lines with placeholders, installation commands,
  excerpts of output, data samples.

An unlabelled fence is an error: every block says what it is.

Markers are HTML comments (invisible on the rendered page) on the lines just above a fence:

* ``<!-- docs: file NAME -->``: the block's text is written to the file NAME in the page's
  working directory before the blocks after it run (any label; typically ``toml`` or ``text``);
* ``<!-- docs: slow -->``: the block runs in the slow tier only (``pytest -m slow``); later
  blocks must not need it.

Expected output is compared after removing trailing spaces and trailing blank lines, with
progress time stamps (``[   0.1 s]``) ignored. ``...`` inside a line matches any text; a line
that is only ``...`` matches any number of lines (abridged output).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

#: Labels a fence may carry.
LABELS = ("python", "console", "toml", "text")

_FENCE = re.compile(r"^(?P<fence>`{3,}|~{3,})(?P<label>[^`\s]*)\s*$")
_MARKER = re.compile(r"^<!--\s*docs:\s*(?P<what>.*?)\s*-->\s*$")
_TIME_STAMP = re.compile(r"\[\s*\d+(?:\.\d+)?\s*s\]")


class PageError(Exception):
    """A page that breaks the block conventions."""


@dataclass(frozen=True)
class Block:
    """One fenced block of a page."""

    page: str
    line: int           # line of the opening fence (1-based)
    label: str
    text: str           # the content, ending with a newline
    file: str | None    # from a file marker
    slow: bool          # from a slow marker

    @property
    def where(self) -> str:
        return f"{self.page}:{self.line}"


@dataclass(frozen=True)
class Command:
    """One ``$`` command of a console block with the output shown under it."""

    line: int
    text: str
    expected: str | None  # None when no output is shown


def read_blocks(path: Path, *, name: str | None = None) -> list[Block]:
    """The fenced blocks of a Markdown page, in order."""
    return parse_blocks(path.read_text(encoding="utf-8"), name or path.name)


def parse_blocks(text: str, page: str) -> list[Block]:
    """The fenced blocks of Markdown ``text``; ``page`` names it in messages."""
    lines = text.splitlines()
    blocks: list[Block] = []
    i = 0
    while i < len(lines):
        m = _FENCE.match(lines[i])
        if not m:
            i += 1
            continue
        start, fence, label = i, m.group("fence"), m.group("label")
        end = start + 1
        while end < len(lines) and not _closes(lines[end], fence):
            end += 1
        if end == len(lines):
            raise PageError(f"{page}:{start + 1}: the fence is never closed")
        if label not in LABELS:
            what = "has no label" if not label else f"has the label {label!r}"
            raise PageError(f"{page}:{start + 1}: the block {what}; label it with one of "
                            f"{', '.join(LABELS)} ('text' for what is shown but not run)")
        file, slow = _markers(lines, start, page)
        body = "\n".join(lines[start + 1:end]) + "\n"
        blocks.append(Block(page, start + 1, label, body, file, slow))
        i = end + 1
    return blocks


def _closes(line: str, fence: str) -> bool:
    """A closing fence: the fence character only, at least as many as the opening one."""
    mark = line.rstrip()
    return len(mark) >= len(fence) and set(mark) == {fence[0]}


def _markers(lines: list[str], fence: int, page: str) -> tuple[str | None, bool]:
    file, slow = None, False
    k = fence - 1
    while k >= 0 and _MARKER.match(lines[k]):
        what = _MARKER.match(lines[k]).group("what")
        if what == "slow":
            slow = True
        elif what.startswith("file "):
            file = what[5:].strip()
            if not re.fullmatch(r"[\w.-]+", file):
                raise PageError(f"{page}:{k + 1}: a file marker takes a plain file name, got {file!r}")
        else:
            raise PageError(f"{page}:{k + 1}: unknown marker {what!r} (known: 'file NAME', 'slow')")
        k -= 1
    return file, slow


def console_commands(block: Block) -> list[Command]:
    """The commands of a console block with their expected output."""
    lines = block.text.splitlines()
    if not lines or not lines[0].startswith("$ "):
        raise PageError(f"{block.where}: a console block starts with a '$ ' command line")
    commands: list[Command] = []
    i = 0
    while i < len(lines):
        line_no = block.line + 1 + i
        text = lines[i][2:]
        while text.endswith("\\") and i + 1 < len(lines):
            i += 1
            text = text[:-1] + " " + lines[i].strip()
        i += 1
        out = []
        while i < len(lines) and not lines[i].startswith("$ "):
            out.append(lines[i])
            i += 1
        shown = "\n".join(out).rstrip()
        commands.append(Command(line_no, text, shown if shown else None))
    return commands


def normalise(text: str) -> str:
    """Output as compared: no trailing spaces or blank lines, time stamps masked."""
    lines = [_TIME_STAMP.sub("[TIME]", line.rstrip()) for line in text.splitlines()]
    while lines and not lines[-1]:
        lines.pop()
    return "\n".join(lines)


def output_matches(expected: str, actual: str) -> bool:
    """True when ``actual`` is what ``expected`` shows (``...`` as described above)."""
    parts = []
    for line in normalise(expected).splitlines():
        if line.strip() == "...":
            parts.append(r"(?:[^\n]*\n)*?")
        else:
            parts.append(".*?".join(re.escape(p) for p in line.split("...")) + r"\n")
    pattern = "".join(parts)
    return re.fullmatch(pattern, normalise(actual) + "\n") is not None
