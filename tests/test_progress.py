"""Progress lines of a command: each step with its time, and reminders during long steps.

A 1,000,000-row build was silent for minutes in one step (issue 17, point 9)."""

from __future__ import annotations

import signal
import time

import pytest

from ttsp.runner import Progress

pytestmark = pytest.mark.skipif(not hasattr(signal, "setitimer"), reason="needs POSIX timers")


def busy(seconds: float) -> None:
    end = time.perf_counter() + seconds
    while time.perf_counter() < end:
        pass


def test_a_long_step_says_it_is_still_running_then_its_time(capsys):
    progress = Progress(quiet=False, heartbeat_s=0.05)
    progress("shift law")
    busy(0.3)
    progress.done()
    err = capsys.readouterr().err
    assert "ttsp: shift law still running (0 s)" in err
    assert err.rstrip().splitlines()[-1].startswith("ttsp: shift law (0.")
    assert signal.getitimer(signal.ITIMER_REAL) == (0.0, 0.0)       # no timer left
    assert signal.getsignal(signal.SIGALRM) == signal.SIG_DFL        # the handler given back


def test_a_short_step_prints_one_line(capsys):
    progress = Progress(quiet=False, heartbeat_s=5.0)
    progress("reading")
    progress.done()
    assert capsys.readouterr().err.splitlines() == ["ttsp: reading (0.0 s)"]


def test_a_failed_step_leaves_no_reminder_behind(capsys):
    progress = Progress(quiet=False, heartbeat_s=0.05)
    progress("checks")
    progress.cancel()
    busy(0.15)
    assert capsys.readouterr().err == ""
    assert signal.getitimer(signal.ITIMER_REAL) == (0.0, 0.0)


def test_quiet_means_silent_and_no_timer(capsys):
    progress = Progress(quiet=True, heartbeat_s=0.05)
    progress("writing")
    assert signal.getitimer(signal.ITIMER_REAL) == (0.0, 0.0)
    busy(0.1)
    progress.done()
    assert capsys.readouterr().err == ""


def test_an_alarm_handler_of_the_caller_is_left_alone(capsys):
    calls = []
    previous = signal.signal(signal.SIGALRM, lambda *_: calls.append(1))
    try:
        progress = Progress(quiet=False, heartbeat_s=0.05)
        progress("shift factors")
        assert signal.getitimer(signal.ITIMER_REAL) == (0.0, 0.0)    # not taken over
        progress.done()
    finally:
        signal.signal(signal.SIGALRM, previous)
    assert "still running" not in capsys.readouterr().err
