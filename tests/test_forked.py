"""Work done by forked children of a command-line build (ttsp._forked, ttsp.runner): the
result never depends on whether a child did it, a failed child is made good by its caller, and
no child outlives the work it was started for."""

from __future__ import annotations

import os
import time
import warnings

import pytest
from _campaigns import shift_test_campaign

import ttsp
from ttsp._drawing import _DRAW_COST, _OWN_EXTRA, _UNKNOWN_COST
from ttsp._drawing import drawing_shares as _drawing_shares
from ttsp._forked import AsideWork, can_fork

needs_fork = pytest.mark.skipif(not can_fork(), reason="needs os.fork and two cores")


def test_drawing_shares_give_every_figure_once_and_finish_together():
    names = list(_DRAW_COST) + ["a_new_figure"]
    shares = _drawing_shares(names)
    assert len(shares) == 3
    drawn = [name for share in shares for name in share]
    assert sorted(drawn) == sorted(names)
    loads = [sum(_DRAW_COST.get(n, _UNKNOWN_COST) for n in share) for share in shares]
    loads[-1] += _OWN_EXTRA              # the last share is the drawing process's own
    # longest-processing-time-first is within 4/3 of the best split (Graham 1969), and the
    # best split is no shorter than the mean load or the costliest figure
    bound = max(sum(loads) / 3, max(_DRAW_COST.values()))
    assert max(loads) <= 4 / 3 * bound
    assert _drawing_shares([]) == [[], [], []]
    assert _drawing_shares(["prony_fit"]) == [["prony_fit"], [], []]   # not this process


@needs_fork
def test_work_aside_gives_the_value_computed_in_a_child():
    parent = os.getpid()
    with AsideWork() as aside:
        value = aside(lambda: (os.getpid(), [1.5, "x"]))
        pid, payload = value()
    assert pid != parent and payload == [1.5, "x"]


def _fails_in_a_child(parent):
    if os.getpid() != parent:
        raise RuntimeError("the child's failure")
    return "computed here"


@needs_fork
def test_a_failed_child_is_made_good_by_computing_here():
    parent = os.getpid()
    with AsideWork() as aside:
        assert aside(lambda: _fails_in_a_child(parent))() == "computed here"


@needs_fork
def test_a_child_not_waited_for_is_stopped_and_collected():
    with AsideWork() as aside:
        aside(lambda: time.sleep(60))
        (pid,) = aside._open
    with pytest.raises(ChildProcessError):   # collected, not left a zombie
        os.waitpid(pid, os.WNOHANG)
    with pytest.raises(ProcessLookupError):
        os.kill(pid, 0)             # and gone


def test_disabled_work_is_computed_here_when_asked():
    calls = []
    with AsideWork(enabled=False) as aside:
        value = aside(lambda: calls.append(os.getpid()) or "v")
        assert calls == []                   # nothing computed before it is asked for
        assert value() == "v"
    assert calls == [os.getpid()]


@needs_fork
def test_cross_validation_done_aside_equals_the_inline_one():
    campaign, _ = shift_test_campaign(noise=0.01, seed=4)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        inline = ttsp.build(campaign, law="wlf")
        with AsideWork() as aside:
            forked = ttsp.build(campaign, law="wlf", aside=aside)
    assert inline.cross_validation.per_isotherm          # there is something to compare
    assert forked.cross_validation == inline.cross_validation
    assert forked.summary() == inline.summary()
