"""One time budget per call: cooperative checks, portions with a cheaper form, the watchdog."""

from __future__ import annotations

import math
import signal
import time

import pytest
import sympy as sp

import symresp as sr
from symresp.errors import BudgetExceeded, InputError
from symresp.models import Budget, Clock, checkpoint, current_clock
from symresp.response import present

#: Allowed lateness of a stop: 10 % of the budget or 2 s, whichever is larger (and a
#: generous margin for a loaded test machine).
def _late_limit(seconds: float) -> float:
    return max(0.1 * seconds, 2.0) + 1.0


@pytest.mark.parametrize("seconds", [0, -1, math.inf, math.nan, True, "5", None])
def test_a_budget_needs_a_positive_finite_number_of_seconds(seconds):
    with pytest.raises(InputError, match="seconds"):
        Budget(seconds=seconds)


def test_checkpoint_outside_a_call_does_nothing():
    assert current_clock() is None
    checkpoint("anything", "anywhere")


def test_checks_raise_after_the_deadline_naming_the_step():
    clock = Budget(seconds=0.05).start()
    with clock.running():
        time.sleep(0.1)
        with pytest.raises(BudgetExceeded, match=r"during summing poles in block 7; raise the budget"):
            checkpoint("summing poles", "block 7")
    assert current_clock() is None


def test_an_inner_clock_never_ends_after_the_outer_one():
    with Budget(seconds=1).start().running() as outer:
        inner = Budget(seconds=100).start()
        assert inner.deadline <= outer.deadline
        with inner.running():
            assert current_clock() is inner
        assert current_clock() is outer


def _spin_forever():
    x = sp.Symbol("x")
    while True:
        sp.factor(sp.expand((x + 1) ** 40 * (x - 2) ** 3))


@pytest.mark.skipif(not hasattr(signal, "setitimer"), reason="no interval timer on this platform")
def test_the_watchdog_stops_a_long_library_call_without_checks():
    if signal.getsignal(signal.SIGALRM) not in (signal.SIG_DFL, None):
        pytest.skip("another handler owns SIGALRM here")
    start = time.monotonic()
    with pytest.raises(BudgetExceeded, match="time budget"):
        with Budget(seconds=0.5).start().running():
            _spin_forever()
    assert time.monotonic() - start < 0.5 + _late_limit(0.5)
    # The handler and the timer are put back.
    assert signal.getsignal(signal.SIGALRM) in (signal.SIG_DFL, None)
    assert signal.getitimer(signal.ITIMER_REAL)[0] == 0


def test_the_watchdog_leaves_a_foreign_sigalrm_handler_alone():
    fired = []
    old = signal.signal(signal.SIGALRM, lambda *a: fired.append(1))
    try:
        with Budget(seconds=5).start().running():
            assert signal.getsignal(signal.SIGALRM) is not None
            assert signal.getitimer(signal.ITIMER_REAL)[0] == 0
    finally:
        signal.signal(signal.SIGALRM, old)


def test_the_end_of_a_portion_is_told_apart_from_the_end_of_the_budget():
    with Budget(seconds=30).start().running() as clock:
        part = clock.portion(0.0, "presenting a formula")
        time.sleep(0.01)
        with pytest.raises(BudgetExceeded) as info:
            with part.running():
                checkpoint("factoring")
        assert Clock.is_fallback(info.value, part)
        assert not clock.expired()


def test_a_portion_inside_a_portion_that_ends_belongs_to_the_outer_one():
    # A formula presented inside the presentation of a whole response: when the outer
    # portion ends first, the inner step's error is the outer portion's fallback (not a crash).
    with Budget(seconds=30).start().running() as clock:
        outer = clock.portion(0.0, "presenting the formulas")
        time.sleep(0.01)
        with pytest.raises(BudgetExceeded) as info:
            with outer.running():
                inner = outer.portion(0.5, "presenting a formula")
                with inner.running():
                    checkpoint("factoring")
        assert not Clock.is_fallback(info.value, inner)      # its parent ended too
        assert Clock.is_fallback(info.value, outer)
        assert not Clock.is_fallback(info.value, clock.portion(0.5, "another step"))


def test_present_keeps_the_plain_form_when_its_share_is_used_up(monkeypatch):
    from symresp.response import _derive

    def slow(expr, max_ops):
        checkpoint("factoring")
        time.sleep(0.3)
        checkpoint("factoring")
        return sp.Integer(0)
    monkeypatch.setattr(_derive, "_present_now", slow)
    monkeypatch.setattr(_derive, "PRESENT_SHARE", 0.01)
    expr = sp.exp(-sr.beta) + 1
    with Budget(seconds=10).start().running() as clock:
        assert present(expr) == expr
        assert any("plain" in n for n in clock.notes)


def test_a_response_call_has_its_own_clock_with_the_derivation_budget():
    s = sr.spin("s", sp.Rational(1, 2))
    r = sr.Model(0 * s.z).response(s.z, budget=Budget(seconds=30))
    time.sleep(0.01)
    assert r.derivation.budget.seconds == 30
    assert r.static("isothermal") == sr.beta / 4


def test_a_derivation_over_budget_stops_in_time_and_names_the_step():
    # A 10-site ring does not finish in 0.5 s on any machine we know of.
    n = 10
    J = sp.Symbol("J", positive=True)
    h = sp.Symbol("h", real=True)
    s = [sr.spin(f"s{i}", sp.Rational(1, 2)) for i in range(n)]
    H = sum((J * (s[i].vec @ s[(i + 1) % n].vec) for i in range(n)), 0) + h * sum((x.z for x in s), 0)
    model = sr.Model(H)
    start = time.monotonic()
    with pytest.raises(BudgetExceeded, match=r"time budget \(0\.5 s\) during \w"):
        model.response(sum((x.z for x in s), 0), budget=Budget(seconds=0.5)).static()
    assert time.monotonic() - start < 0.5 + _late_limit(0.5)
