"""Child processes that do not outlive the process they work for.

A batch's worker processes and a build's drawing processes must end when the ttsp process that
started them ends, however it ends (``kill -9`` included): otherwise they go on building for
minutes, holding memory and writing into temporary folders nobody will collect.

On Linux the kernel sends a chosen signal to a process when its parent dies
(``prctl(PR_SET_PDEATHSIG)``, see prctl(2)); everywhere, a daemon thread polls whether the
process to follow is still alive and ends this one when it is not.
"""

from __future__ import annotations

import contextlib
import ctypes
import os
import signal
import threading

__all__ = ["end_with_parent", "watch_process", "Terminated", "sigterm_raises"]

_PR_SET_PDEATHSIG = 1
WATCH_INTERVAL_S = 0.5


def end_with_parent(sig: int = signal.SIGKILL) -> bool:
    """Ask the kernel to send ``sig`` to this process when its parent dies (Linux only).

    Returns True when set. A parent that died before the call is caught by comparing the
    parent's id afterwards: the caller passes it to :func:`watch_process` as well.
    """
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        return libc.prctl(_PR_SET_PDEATHSIG, int(sig), 0, 0, 0) == 0
    except (OSError, AttributeError, ImportError):
        return False


def process_alive(pid: int) -> bool:
    """Whether a process with this id exists (one we may not signal counts as alive)."""
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True
    return True


def watch_process(pid: int, *, sig: int = signal.SIGKILL,
                  interval_s: float = WATCH_INTERVAL_S) -> threading.Thread:
    """Start a daemon thread that ends this process with ``sig`` once process ``pid`` is gone
    (or this process's own parent changes: it died and this process was adopted).

    Parameters
    ----------
    pid : int
        The process to follow (a batch's main process; a fork server stands between it and
        the workers, so the parent-death signal alone would follow the fork server).
    sig : int
        Signal this process sends itself (default SIGKILL: no cleanup code of an unfinished
        build runs; its temporary folder is removed by the next run).
    interval_s : float
        Seconds between two polls.
    """
    me, parent = os.getpid(), os.getppid()

    def watch():
        event = threading.Event()
        while not event.wait(interval_s):
            if not process_alive(pid) or os.getppid() != parent:
                os.kill(me, sig)
                return

    thread = threading.Thread(target=watch, name="ttsp-parent-watch", daemon=True)
    thread.start()
    return thread


class Terminated(KeyboardInterrupt):
    """SIGTERM arrived (what schedulers and service managers send): like Ctrl-C, it unwinds the
    program so that temporary folders are removed and worker processes stopped; the command
    line exits with 143 (128 + SIGTERM)."""

    exit_code = 128 + signal.SIGTERM


def _raise_terminated(signum, frame):
    raise Terminated("terminated (SIGTERM)")


@contextlib.contextmanager
def sigterm_raises():
    """Within the block, SIGTERM raises :class:`Terminated` in the main thread (elsewhere, or
    where signals cannot be set, the block runs unchanged); the previous handler comes back
    after it."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    try:
        previous = signal.signal(signal.SIGTERM, _raise_terminated)
    except (ValueError, OSError):
        yield
        return
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)
