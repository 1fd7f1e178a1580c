r"""One time budget for a whole command or API call (layer: models).

Owns :class:`Budget` (limits, a value), :class:`Clock` (a running budget) and the helpers
:func:`current_clock` and :func:`checkpoint`. Imports the standard library and
:mod:`symresp.errors` only.

How the budget reaches every step
---------------------------------
An entry point (a command of the command line, a method of ``Model`` or ``Response``)
starts one clock and runs its work inside ``with clock.running():``. Every step below it,
in any layer, calls :func:`checkpoint` (or ``clock.check``) inside each loop that can grow;
once the deadline has passed, that raises :class:`~symresp.errors.BudgetExceeded` naming the
step and what to try. The running clock is found through a context variable, so the layers
in between need no extra argument (see ``DEVELOPERS.md``); a clock started while another
runs never ends later than the outer one.

Two further mechanisms keep the promise that a run stops within 10 % (or 2 s) of its budget:

* a step that has a cheaper form runs on a *portion* of what is left
  (:meth:`Clock.portion`); when the portion runs out the step falls back to the cheap form and
  leaves a note (:attr:`Clock.notes`), e.g. the plain Lehmann sum instead of a factored
  presentation;
* a watchdog: in the main thread, when no other handler owns ``SIGALRM``, a timer interrupts
  a single long library call (a factorisation, a numeric evaluation of a huge number) shortly
  after the innermost deadline and raises the same error there. Elsewhere (worker threads,
  a program that uses ``SIGALRM`` itself) only the cooperative checks apply.
"""

from __future__ import annotations

import contextlib
import contextvars
import math
import signal
import threading
import time
from collections.abc import Iterator
from dataclasses import dataclass

from ..errors import BudgetExceeded, InputError

__all__ = ["Budget", "Clock", "current_clock", "checkpoint", "WATCHDOG_GRACE",
           "DEFAULT_SECONDS"]

#: Default time budget of one command or call, in seconds.
DEFAULT_SECONDS = 600.0
#: Seconds after the innermost deadline at which the watchdog interrupts a long library call
#: (and again every this many seconds, should a library swallow the first interruption).
WATCHDOG_GRACE = 0.25

_ACTIVE: contextvars.ContextVar[Clock | None] = contextvars.ContextVar("symresp_clock",
                                                                      default=None)


@dataclass(frozen=True, slots=True)
class Budget:
    """Limits on one command or API call.

    Parameters
    ----------
    seconds : float
        Wall-clock limit for the whole call: parsing, derivation, simplification,
        presentation, printing, emitting and checking.
    max_symbolic_block : int
        Largest block whose entries mix several parameters (no common scale) that is solved
        symbolically.
    max_block : int
        Largest block solved exactly at all.

    Examples
    --------
    >>> from symresp.models import Budget
    >>> Budget().seconds
    600.0
    >>> with Budget(seconds=5).start().running() as clock:
    ...     clock.remaining() <= 5
    True
    """

    seconds: float = DEFAULT_SECONDS
    max_symbolic_block: int = 12
    max_block: int = 400

    def __post_init__(self) -> None:
        s = self.seconds
        if isinstance(s, bool) or not isinstance(s, (int, float)) or not (0 < s < math.inf):
            raise InputError(f"Budget: seconds={s!r} must be a positive finite number of seconds")
        for name in ("max_symbolic_block", "max_block"):
            v = getattr(self, name)
            if isinstance(v, bool) or not isinstance(v, int) or v < 1:
                raise InputError(f"Budget: {name}={v!r} must be a positive integer")

    def start(self) -> Clock:
        """A running clock for one call; it never ends after a clock already running."""
        deadline = time.monotonic() + float(self.seconds)
        outer = _ACTIVE.get()
        if outer is not None:
            deadline = min(deadline, outer.deadline)
        return Clock(self, deadline)


class Clock:
    """A budget with its deadline, the step in progress and the notes of fallbacks.

    A clock is a running timer, hence not a value object: :attr:`step` and :attr:`notes`
    change while the call runs. It belongs to one call and is not shared between threads.
    """

    __slots__ = ("budget", "deadline", "step", "notes", "parent", "portion_of", "_armed")

    def __init__(self, budget: Budget, deadline: float, *, portion_of: Clock | None = None) -> None:
        self.budget = budget
        self.deadline = deadline
        self.step: tuple[str, str] = ("the start of the call", "")
        self.notes: list[str] = [] if portion_of is None else portion_of.notes
        self.parent: Clock | None = None
        self.portion_of = portion_of
        self._armed = False

    # ------------------------------------------------------------ checking
    def remaining(self) -> float:
        """Seconds left (negative once the deadline has passed)."""
        return self.deadline - time.monotonic()

    def expired(self) -> bool:
        """True once the deadline has passed."""
        return time.monotonic() > self.deadline

    def check(self, step: str, where: str = "") -> None:
        """Record ``step`` as the step in progress; raise :class:`BudgetExceeded` naming it
        (and ``where``) if the deadline has passed."""
        self.step = (step, where)
        if time.monotonic() > self.deadline:
            raise self.exceeded()

    def exceeded(self) -> BudgetExceeded:
        """The error for this clock, naming the step in progress."""
        step, where = self.step
        at = f" in {where}" if where else ""
        if self.portion_of is not None:
            return _PortionExceeded(self, f"{step}{at} used its share of the time budget")
        return BudgetExceeded(
            f"the call ran out of its time budget ({self.budget.seconds:g} s) during "
            f"{step}{at}; raise the budget (--budget SECONDS, or Budget(seconds=...) in Python) "
            f"or reduce the model (a symmetry sector, fewer sites, numeric values for some "
            f"parameters)")

    def note(self, text: str) -> None:
        """Record a fallback the user should know about (printed by the command line)."""
        if text not in self.notes:
            self.notes.append(text)

    # ------------------------------------------------------------ running
    @contextlib.contextmanager
    def running(self) -> Iterator[Clock]:
        """Make this the clock that :func:`checkpoint` checks, for the ``with`` body."""
        self.parent = _ACTIVE.get()
        if self.parent is not None and self.parent.deadline < self.deadline:
            self.deadline = self.parent.deadline
        token = _ACTIVE.set(self)
        _WATCHDOG.push(self)
        try:
            yield self
        finally:
            _WATCHDOG.pop(self)
            _ACTIVE.reset(token)

    def portion(self, fraction: float, step: str) -> Clock:
        """A clock for a step that has a cheaper form: ``fraction`` of the time left.

        Run the step inside ``with part.running():``; its checks (and the watchdog) raise a
        private subclass of :class:`BudgetExceeded` once the portion is used up, which
        :meth:`is_fallback` tells apart from the end of the whole budget.
        """
        sub = Clock(self.budget, min(self.deadline, time.monotonic() + fraction * max(
            self.remaining(), 0.0)), portion_of=self)
        sub.step = (step, "")
        return sub

    @staticmethod
    def is_fallback(err: BaseException, portion: Clock) -> bool:
        """True when ``err`` ends ``portion`` (and not the whole budget): fall back then."""
        return Clock.owns(err, portion) and not (
            portion.portion_of is not None and portion.portion_of.expired())

    @staticmethod
    def owns(err: BaseException, portion: Clock) -> bool:
        """True when ``err`` is the end of ``portion`` or of a portion inside it (whether or
        not the clock ``portion`` was taken from has ended too)."""
        if not isinstance(err, _PortionExceeded):
            return False
        owner = err.clock                   # a portion inside ``portion`` ends with it
        while owner is not None and owner is not portion:
            owner = owner.portion_of
        return owner is portion

    def __repr__(self) -> str:
        return f"Clock({self.budget.seconds:g} s, {self.remaining():.2f} s left, step={self.step[0]!r})"


class _PortionExceeded(BudgetExceeded):
    """The portion of a step with a cheaper form is used up (caught by that step)."""

    def __init__(self, clock: Clock, message: str) -> None:
        super().__init__(message)
        self.clock = clock


def current_clock() -> Clock | None:
    """The clock of the call in progress, or None outside any budgeted call."""
    return _ACTIVE.get()


def checkpoint(step: str, where: str = "") -> None:
    """Check the running clock (if any): call this inside every loop that can grow.

    Examples
    --------
    >>> from symresp.models import Budget, checkpoint
    >>> checkpoint("anything")                 # no call in progress: nothing to check
    >>> with Budget(seconds=60).start().running() as clock:
    ...     checkpoint("summing terms", "block 3")
    ...     clock.step
    ('summing terms', 'block 3')
    """
    clock = _ACTIVE.get()
    if clock is not None:
        clock.check(step, where)


class _Watchdog:
    """Interrupts a long library call shortly after the innermost deadline (main thread only).

    The timer is armed only while a budgeted call runs, only when ``SIGALRM`` has no handler of
    another program part, and it is disarmed (and the previous handler put back) when the
    outermost call ends.
    """

    def __init__(self) -> None:
        self.stack: list[Clock] = []
        self.previous = None
        self.enabled = False

    def push(self, clock: Clock) -> None:
        if threading.current_thread() is not threading.main_thread() or not hasattr(signal, "setitimer"):
            return
        if not self.stack:
            try:
                current = signal.getsignal(signal.SIGALRM)
            except (ValueError, OSError):
                return
            if current not in (signal.SIG_DFL, None) or signal.getitimer(signal.ITIMER_REAL)[0] > 0:
                return                      # someone else owns SIGALRM: cooperative checks only
            self.previous = current
            signal.signal(signal.SIGALRM, self._fire)
            self.enabled = True
        if not self.enabled:
            return
        clock._armed = True
        self.stack.append(clock)
        self._arm()

    def pop(self, clock: Clock) -> None:
        if not clock._armed:
            return
        clock._armed = False
        if self.stack and self.stack[-1] is clock:
            self.stack.pop()
        elif clock in self.stack:
            self.stack.remove(clock)
        if self.stack:
            self._arm()
            return
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, self.previous if self.previous is not None else signal.SIG_DFL)
        self.enabled = False

    def _arm(self) -> None:
        deadline = min(c.deadline for c in self.stack)
        delay = max(deadline - time.monotonic(), 0.0) + WATCHDOG_GRACE
        signal.setitimer(signal.ITIMER_REAL, delay, WATCHDOG_GRACE)

    def _fire(self, signum, frame) -> None:
        now = time.monotonic()
        for clock in reversed(self.stack):
            if now > clock.deadline:
                raise clock.exceeded()
        self._arm()                         # woken early (a portion ended): aim again


_WATCHDOG = _Watchdog()
