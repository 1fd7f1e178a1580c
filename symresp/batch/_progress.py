"""The progress bar of a batch on the terminal (layer: batch).

Owns :class:`ProgressBar`. One line on stderr, redrawn in place: a bar, tasks done out of all,
how many failed, are running and were skipped as fresh, and the elapsed time. It draws only
when the stream is a terminal (and the user did not ask for quiet), so logs and pipes stay
clean. Imports the standard library only.
"""

from __future__ import annotations

import shutil
import sys
import time
from typing import TextIO

__all__ = ["ProgressBar"]


class ProgressBar:
    """A one-line progress display; silent unless enabled and ``stream`` is a terminal.

    Parameters
    ----------
    total : int
        Tasks to run (not counting the skipped ones).
    skipped : int
        Tasks skipped because their results are fresh.
    stream : text stream, optional
        Default ``sys.stderr``.
    enabled : bool
        False for ``--quiet``.
    """

    def __init__(self, total: int, skipped: int = 0, *, stream: TextIO | None = None,
                 enabled: bool = True) -> None:
        self.stream = stream if stream is not None else sys.stderr
        try:
            tty = self.stream.isatty()
        except (AttributeError, ValueError):
            tty = False
        self.enabled = enabled and tty
        self.total, self.skipped = total, skipped
        self.done = self.failed = self.running = 0
        self.start = time.monotonic()
        self._drawn = 0.0
        self.draw()

    def line(self, width: int) -> str:
        """The text of the display, at most ``width`` characters."""
        seconds = int(time.monotonic() - self.start)
        clock = f"{seconds // 3600}:{seconds // 60 % 60:02d}:{seconds % 60:02d}"
        tail = (f" {self.done}/{self.total} done"
                + (f", {self.failed} failed" if self.failed else "")
                + (f", {self.running} running" if self.running else "")
                + (f", {self.skipped} fresh" if self.skipped else "") + f"  {clock}")
        room = max(0, min(40, width - len(tail) - 3))
        if room < 5:
            return tail.strip()[:width]
        filled = room * self.done // self.total if self.total else room
        return f"[{'#' * filled}{'.' * (room - filled)}]{tail}"[:width]

    def draw(self, force: bool = True) -> None:
        """Redraw (at most ten times a second unless ``force``)."""
        if not self.enabled:
            return
        now = time.monotonic()
        if not force and now - self._drawn < 0.1:
            return
        self._drawn = now
        width = shutil.get_terminal_size((80, 24)).columns - 1
        self.stream.write("\r" + self.line(width).ljust(width))
        self.stream.flush()

    def update(self, *, running: int | None = None) -> None:
        """Change the number of running tasks and redraw now and then."""
        if running is not None:
            self.running = running
        self.draw(force=False)

    def finished(self, ok: bool) -> None:
        """One more task finished (``ok`` False when it failed)."""
        self.done += 1
        self.failed += not ok
        self.draw()

    def close(self) -> None:
        """Clear the line, so the final report starts at the left margin."""
        if self.enabled:
            width = shutil.get_terminal_size((80, 24)).columns - 1
            self.stream.write("\r" + " " * width + "\r")
            self.stream.flush()
