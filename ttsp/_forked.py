"""Work done by forked child processes of a command-line build: drawing figures, and a
computation done aside while the build goes on (:class:`AsideWork`).

Layer 5 (running a build). Nothing here is needed for the result: whatever a child fails to
deliver, its caller does itself. A child never outlives the build (:mod:`ttsp._lifetime`), leaves
with ``os._exit`` (none of the parent's cleanup runs in it), and a stop (SIGTERM, Ctrl-C) that
arrives while it is forked reaches both processes (:func:`fork_recording_stops`).
"""

from __future__ import annotations

import contextlib
import copyreg
import gc
import io
import os
import pickle
import signal
import threading
from collections.abc import Callable
from types import MappingProxyType
from typing import Any

__all__ = ["can_fork", "fork_recording_stops", "start_child", "child_ok", "AsideWork",
           "BACKGROUND_NICENESS", "dumps"]

#: niceness of children whose work is not on the build's critical path (work aside: the
#: cross-validation): on two cores the parent's own build is what the user waits for, so it
#: keeps the processor when both compete (measured on the demo: 3.17-3.29 s wall against
#: 3.32-3.43 s at equal priority). The drawing child is not niced: it ends the build.
BACKGROUND_NICENESS = 10


def _read_only_view(d: dict) -> MappingProxyType:
    return MappingProxyType(d)


def dumps(value: Any) -> bytes:
    """``pickle.dumps`` for sending a value to or from a forked child: results keep read-only
    views of dicts (``types.MappingProxyType``), which pickle cannot take; they are sent as
    the dicts they show and come back as views. Only the pickler made here knows this: nothing
    changes for other pickling in the process. (Read-only arrays come back writable.)"""
    buffer = io.BytesIO()
    pickler = pickle.Pickler(buffer, protocol=pickle.HIGHEST_PROTOCOL)
    pickler.dispatch_table = {**copyreg.dispatch_table,
                              MappingProxyType: lambda view: (_read_only_view, (dict(view),))}
    pickler.dump(value)
    return buffer.getvalue()


def can_fork() -> bool:
    """Whether children can be forked and would run beside this process (two or more cores)."""
    return hasattr(os, "fork") and (os.cpu_count() or 1) > 1


def fork_recording_stops() -> tuple[int, list]:
    """``os.fork()`` with SIGTERM and Ctrl-C recorded, not acted on, until it returns; returns
    the pid and the stops that arrived meanwhile.

    A handler that raises inside fork()'s after-fork callbacks (``logging`` registers some)
    has its exception printed and ignored: a build stopped at that instant ran on to the end
    and exited 0. Blocking the signals in this thread is not enough, since another thread
    (a BLAS pool's) may take them and the handler still runs here at the next chance. So the
    handlers are swapped for ones that only record, and put back once fork() has returned;
    the parent then raises the first recorded stop through the handler it had and, if that
    (or anything else here) raises, stops and collects the child, whose pid its caller would
    never learn. The child raises the stops itself (see :func:`start_child`) and never
    raises out of here. An ignored signal stays ignored. Outside the main thread, a plain
    fork."""
    arrived: list[int] = []
    if threading.current_thread() is not threading.main_thread():
        return os.fork(), arrived
    kept = {sig: signal.getsignal(sig) for sig in (signal.SIGTERM, signal.SIGINT)}
    kept = {sig: h for sig, h in kept.items() if h is not None and h != signal.SIG_IGN}
    pid = -1
    try:
        try:
            for sig in kept:
                signal.signal(sig, lambda signum, _frame: arrived.append(signum))
            pid = os.fork()
        finally:
            for sig, handler in kept.items():
                signal.signal(sig, handler)
        if pid != 0 and arrived:
            signal.raise_signal(arrived[0])
    except BaseException:
        if pid == 0:        # the child: nothing of the parent's unwinding runs here
            os._exit(1)
        if pid > 0:
            with contextlib.suppress(OSError):
                os.kill(pid, signal.SIGKILL)
                os.waitpid(pid, 0)
        raise
    return pid, arrived


def start_child(work: Callable[[], object], *, nice: int = 0) -> int:
    """Fork a child that runs ``work()`` and leaves (exit code 0 when it returned, 1 when it
    raised); returns its pid to the parent."""
    from ._lifetime import end_with_parent

    parent = os.getpid()
    pid, arrived = fork_recording_stops()
    if pid != 0:
        return pid
    # a short-lived process: without the cyclic collector its collections do not walk (and so
    # copy-on-write) the heap it shares with the parent
    gc.disable()
    code = 1
    try:
        for sig in arrived:   # a stop during the fork: the parent's, and so this child's
            signal.raise_signal(sig)
        end_with_parent()   # a killed build leaves no child behind
        if os.getppid() != parent:  # it died before the line above
            os._exit(1)
        if nice:
            os.nice(nice)
        work()
        code = 0
    finally:
        os._exit(code)


def child_ok(pid: int) -> bool:
    """Wait for the child ``pid``; whether it ended with exit code 0."""
    _, status = os.waitpid(pid, 0)
    return os.waitstatus_to_exitcode(status) == 0


def _stop(pid: int) -> None:
    with contextlib.suppress(OSError):
        os.kill(pid, signal.SIGKILL)
    with contextlib.suppress(OSError):
        child_ok(pid)


class AsideWork:
    """Computations handed to forked children while this process goes on, for
    ``ttsp.workflow.build(aside=...)``: calling it with a function returns a function that gives
    that value (the child's answer comes back pickled through a pipe). When no child can be
    forked, or the child fails, the value is computed here when asked for, so the result never
    depends on forking. Use as a context manager: children not waited for by its end (the
    build failed or was stopped) are killed and collected.
    """

    def __init__(self, *, enabled: bool = True):
        self._enabled = enabled and can_fork()
        self._open: dict[int, int] = {}    # pid -> read end of its pipe

    def __enter__(self) -> AsideWork:
        return self

    def __exit__(self, *exc) -> None:
        for pid, fd in list(self._open.items()):
            _stop(pid)
            with contextlib.suppress(OSError):
                os.close(fd)
        self._open.clear()

    def __call__(self, compute: Callable[[], Any]) -> Callable[[], Any]:
        if not self._enabled:
            return compute
        read_end, write_end = os.pipe()
        try:
            pid = start_child(lambda: _answer(compute, read_end, write_end), nice=BACKGROUND_NICENESS)
        finally:
            os.close(write_end)
        self._open[pid] = read_end
        return lambda: self._value(pid, compute)

    def _value(self, pid: int, compute: Callable[[], Any]) -> Any:
        with os.fdopen(self._open[pid], "rb") as pipe:
            data = pipe.read()
        del self._open[pid]
        if child_ok(pid):
            with contextlib.suppress(Exception):
                return pickle.loads(data)
        return compute()


def _answer(compute: Callable[[], Any], read_end: int, write_end: int) -> None:
    """In the child: compute and write the pickled value into the pipe."""
    os.close(read_end)
    data = dumps(compute())
    with os.fdopen(write_end, "wb") as pipe:
        pipe.write(data)
