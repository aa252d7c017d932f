"""The worker processes of a batch on this machine: a process pool from a warm fork server,
replaced when a worker dies (its campaigns retried one at a time, so that a crash names its
campaign), stopped at once on SIGTERM and ended with the batch's process however it ends.

Layer 5 (a shell). Workers run single-threaded BLAS (``OPENBLAS_NUM_THREADS`` and its kin set
to 1 for them unless already set): the parallelism is across campaigns.
"""

from __future__ import annotations

import concurrent.futures as cf
import contextlib
import multiprocessing as mp
import os
import sys
import time
from collections import deque
from collections.abc import Callable, Sequence
from concurrent.futures.process import BrokenProcessPool

from .._lifetime import Terminated
from .rows import error_text, failed_row
from .worker import worker_init

__all__ = ["default_workers", "run_local", "single_threaded_blas"]

_BLAS_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS",
                   "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS")
# Imported once by the fork server, so that every worker starts warm.
PRELOAD = ("ttsp.batch", "ttsp.runner", "ttsp.workflow", "ttsp.io.readers", "ttsp.io.writers",
           "ttsp.shifting", "ttsp.laws.fit", "ttsp.prony", "ttsp.checks", "ttsp.model",
           "ttsp.transition", "ttsp.interconvert", "pandas", "lmfit", "threadpoolctl")


def default_workers() -> int:
    """Every core available to this process."""
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


@contextlib.contextmanager
def single_threaded_blas():
    """Set the BLAS thread variables to 1 (those not set already) while workers start."""
    added = [v for v in _BLAS_VARIABLES if v not in os.environ]
    for v in added:
        os.environ[v] = "1"
    try:
        yield
    finally:
        for v in added:
            os.environ.pop(v, None)


def _mp_context():
    """Fork server where there is one (workers fork from a warm, single-threaded server), else
    the platform's default (spawn on Windows)."""
    if "forkserver" in mp.get_all_start_methods():
        ctx = mp.get_context("forkserver")
        ctx.set_forkserver_preload(list(PRELOAD))
        return ctx
    return mp.get_context()


def _new_pool(workers: int, ctx):
    return cf.ProcessPoolExecutor(max_workers=workers, mp_context=ctx, initializer=worker_init,
                                  initargs=(os.getpid(),))


def _settle(fut, payload, suspects, on_done) -> None:
    """Report a finished future's row; a payload whose worker died becomes a suspect."""
    exc = fut.exception()
    if exc is None:
        on_done(fut.result())
    elif isinstance(exc, BrokenProcessPool):
        suspects.append(payload)
    else:  # e.g. a result that could not be sent back
        on_done(failed_row(payload, error_text(exc)))


def _drain(pool, queue, workers: int, task, on_done, inflight: dict) -> list:
    """Keep the pool fed from ``queue`` until it is empty or the pool breaks; returns the
    payloads that were in flight when a worker died (the suspects)."""
    suspects: list = []
    broken = False
    while (queue or inflight) and not suspects and not broken:
        while queue and len(inflight) < 2 * workers and not broken:
            payload = queue.popleft()
            try:
                inflight[pool.submit(task, payload)] = payload
            except BrokenProcessPool:  # a worker died while idle: a new pool takes it
                queue.appendleft(payload)
                broken = True
        done, _ = cf.wait(inflight, return_when=cf.FIRST_COMPLETED)
        for fut in done:
            _settle(fut, inflight.pop(fut), suspects, on_done)
    # a broken pool resolves every future it holds: collect them all
    for fut in cf.wait(inflight).done:
        _settle(fut, inflight.pop(fut), suspects, on_done)
    return suspects


def _stop_on_interrupt(exc: BaseException, pool, inflight: dict, workers: int, on_done) -> None:
    """Ctrl-C: let running builds finish, record them, stop the rest; SIGTERM: stop every
    worker now."""
    if isinstance(exc, Terminated):
        stop_workers(pool)
    else:   # said at once: the running builds may take a while
        running = min(workers, sum(1 for f in inflight if f.running()))
        print(f"ttsp batch: interrupted: finishing {running} running, then stopping "
              f"(the rest stays to do: run the same command again to resume)",
              file=sys.stderr, flush=True)
    pool.shutdown(wait=True, cancel_futures=True)
    for fut in inflight:
        if fut.done() and not fut.cancelled() and fut.exception() is None:
            on_done(fut.result())


def run_local(payloads: Sequence[dict], workers: int, task: Callable[[dict], dict],
              on_done: Callable[[dict], object]) -> None:
    """Run the payloads in a process pool; a broken pool is replaced and its suspects isolated.

    Parameters
    ----------
    payloads : sequence of dict
        Made by :func:`ttsp.batch.worker.payload_for`.
    workers : int
        Worker processes at most.
    task : callable
        ``task(payload) -> row``, importable by name in a worker
        (:func:`ttsp.batch.worker.build_one`).
    on_done : callable
        Called with each row as it arrives, in this process.
    """
    ctx = _mp_context()
    queue = deque(payloads)
    while queue:
        pool = _new_pool(max(1, min(workers, len(queue))), ctx)
        inflight: dict = {}   # future -> its payload
        try:
            suspects = _drain(pool, queue, workers, task, on_done, inflight)
        except BaseException as exc:
            _stop_on_interrupt(exc, pool, inflight, workers, on_done)
            raise
        pool.shutdown(wait=True, cancel_futures=True)
        for payload in suspects:  # one at a time, so that a crash names its campaign
            on_done(_run_isolated(payload, task, ctx))


def stop_workers(pool) -> None:
    """Kill the worker processes of a pool (their unfinished builds leave hidden temporary
    folders, which the next run removes)."""
    for process in list((getattr(pool, "_processes", None) or {}).values()):
        with contextlib.suppress(OSError, AttributeError, ValueError):
            process.kill()


def _run_isolated(payload: dict, task, ctx) -> dict:
    t0 = time.perf_counter()
    with _new_pool(1, ctx) as pool:
        try:
            return pool.submit(task, payload).result()
        except Terminated:
            stop_workers(pool)
            raise
        except BrokenProcessPool:
            return failed_row(payload, "the worker process died while building this campaign "
                                       "(a crash or the memory limit); the batch went on",
                              time.perf_counter() - t0)
        except Exception as exc:
            return failed_row(payload, error_text(exc), time.perf_counter() - t0)
