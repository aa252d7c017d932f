"""Run one build from files to a finished output folder (shared by ``ttsp build`` and batches).

Layer 5: it reads through :mod:`ttsp.io.readers`, computes through :func:`ttsp.workflow.build`,
and writes numbers, figures and the HTML page into an atomic output folder.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .build_options import BuildOptions
    from .data import Campaign

import contextlib
import datetime
import gc
import os
import shutil
import signal
import sys
import threading
import time
import warnings
from pathlib import Path
from typing import Any

from .exceptions import DataError, OptionValueError

__all__ = ["Progress", "read_inputs", "run_build", "parse_pairs"]


def parse_pairs(values, option: str) -> dict:
    """Parse repeated ``NAME=VALUE`` options into a dict (:class:`OptionValueError` naming
    ``option`` on a malformed one)."""
    out = {}
    for item in values or []:
        if "=" not in item:
            raise OptionValueError(option, f"must look like NAME=VALUE; got {item!r}")
        k, v = item.split("=", 1)
        out[k.strip()] = v.strip()
    return out


def read_inputs(inputs: Sequence[str | Path], column, unit, sheet: str | int | None,
                tolerance: float, modulus_kind: str | None,
                temperature_from_name: bool = False, repeats: str = "merge"):
    from .io.readers import read_campaign

    if modulus_kind not in (None, "tensile", "shear"):
        raise OptionValueError("--modulus-kind", "must be tensile or shear")
    if repeats not in ("merge", "refuse"):
        raise OptionValueError("--repeats", "must be merge or refuse")
    return read_campaign([str(p) for p in inputs], columns=parse_pairs(column, "--column"),
                         units=parse_pairs(unit, "--unit"), sheet=sheet,
                         temperature_tolerance_K=tolerance, modulus_kind=modulus_kind,
                         temperature_from_name=temperature_from_name, repeats=repeats)


def _say(line: str) -> None:
    """One progress line on stderr, at once (the stream in use now: a test may have replaced it)."""
    print(line, file=sys.stderr, flush=True)


class Progress:
    """Step names on stderr with the time each took; silent with --quiet.

    A step that runs longer than ``heartbeat_s`` says so every ``heartbeat_s`` seconds
    (``ttsp: shift law still running (30 s)``): a million-row build was silent for minutes.
    The reminder comes from a SIGALRM interval timer in the main thread (no thread is started,
    so the forks that draw figures stay safe; a forked child inherits no timer); elsewhere, or
    where the platform has no such timer, steps are reported only when they end."""

    def __init__(self, quiet: bool, heartbeat_s: float = 30.0):
        self.quiet = quiet
        self.t0 = 0.0                      # perf_counter at the start of step ``name``
        self.name: str | None = None
        self.heartbeat_s = heartbeat_s
        self._previous_handler: Any = None  # the SIGALRM handler to put back (signal's own type)

    def __call__(self, name: str):
        self.done()
        self.name, self.t0 = name, time.perf_counter()
        self._start_heartbeat()

    def done(self):
        self._stop_heartbeat()
        if self.name is not None and not self.quiet:
            _say(f"ttsp: {self.name} ({time.perf_counter() - self.t0:.1f} s)")
        self.name = None

    def cancel(self):
        """Stop the reminders of the current step without reporting it (it failed)."""
        self._stop_heartbeat()
        self.name = None

    def _beat(self, _signum, _frame):
        if self.name is not None:
            _say(f"ttsp: {self.name} still running ({time.perf_counter() - self.t0:.0f} s)")

    def _start_heartbeat(self):
        if (self.quiet or self.heartbeat_s <= 0 or not hasattr(signal, "setitimer")
                or threading.current_thread() is not threading.main_thread()
                or signal.getsignal(signal.SIGALRM) not in (signal.SIG_DFL, None)):
            return                         # someone else's alarm is not ours to take
        self._previous_handler = signal.signal(signal.SIGALRM, self._beat)
        signal.setitimer(signal.ITIMER_REAL, self.heartbeat_s, self.heartbeat_s)

    def _stop_heartbeat(self):
        if self._previous_handler is None:
            return
        signal.setitimer(signal.ITIMER_REAL, 0.0)
        signal.signal(signal.SIGALRM, self._previous_handler)
        self._previous_handler = None


# The figures drawn after the fit, in groups of about equal drawing cost: all but the last are
# drawn by forked children while this process draws the last (three processes keep two cores
# busy until the end, where two groups left one core idle while the slower group finished; the
# optional spectrum figure has a group of its own); the figures of the measured data alone are
# drawn earlier, while the fit runs.
_FIGURE_GROUPS = (("prony_fit",), ("master_curve", "time_functions"), ("relaxation_spectrum",),
                  ("shift_factors", "frequency_functions"))


def _can_fork() -> bool:
    return hasattr(os, "fork") and (os.cpu_count() or 1) > 1


def _fork_drawing(render, folder: Path, *, private: bool = False) -> int:
    """Fork a child that renders figures with ``render()`` and saves them into ``folder``;
    returns its pid. The child leaves with ``os._exit`` and runs no cleanup of the parent; a
    ``private`` folder it removes itself if the parent was killed meanwhile."""
    from ._lifetime import end_with_parent
    from .plotting import save_figures

    parent = os.getpid()
    pid, arrived = _fork_recording_stops()
    if pid != 0:
        return pid
    # a short-lived drawing process: without the cyclic collector its collections do not
    # walk (and so copy-on-write) the heap it shares with the parent
    gc.disable()
    code = 1
    try:
        for sig in arrived:   # a stop during the fork: the parent's, and so this drawing's
            signal.raise_signal(sig)
        end_with_parent()   # a killed build leaves no drawing process behind
        if os.getppid() != parent:  # it died before the line above
            os._exit(1)
        save_figures(render(), folder)
        code = 0
    finally:
        if private and os.getppid() != parent:  # orphaned: nobody will collect the files
            shutil.rmtree(folder, ignore_errors=True)
        os._exit(code)


def _fork_recording_stops() -> tuple[int, list]:
    """``os.fork()`` with SIGTERM and Ctrl-C recorded, not acted on, until it returns; returns
    the pid and the stops that arrived meanwhile.

    A handler that raises inside fork()'s after-fork callbacks (``logging`` registers some)
    has its exception printed and ignored: a build stopped at that instant ran on to the end
    and exited 0. Blocking the signals in this thread is not enough, since another thread
    (a BLAS pool's) may take them and the handler still runs here at the next chance. So the
    handlers are swapped for ones that only record, and put back once fork() has returned;
    the parent then raises the first recorded stop through the handler it had and, if that
    (or anything else here) raises, stops and collects the child, whose pid its caller would
    never learn. The child raises the stops itself (see :func:`_fork_drawing`) and never
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


def _child_ok(pid: int) -> bool:
    _, status = os.waitpid(pid, 0)
    return os.waitstatus_to_exitcode(status) == 0


def start_campaign_figures(campaign: Campaign, tmp: str | Path):
    """Start drawing the figures of the measured data in a child process (two or more cores),
    so that they are ready when the fit ends. Returns a handle for :func:`draw_figures`, or None.
    The child draws into a hidden sub-folder of the output's temporary folder ``tmp``, so a build
    killed meanwhile leaves one temporary folder, not two.
    """
    if not _can_fork():
        return None
    from .plotting import load_matplotlib, render_campaign_figures

    load_matplotlib()   # once here, not again in every drawing child
    folder = Path(tmp) / ".early-figures"
    folder.mkdir()
    return _fork_drawing(lambda: render_campaign_figures(campaign), folder, private=True), folder


def discard_campaign_figures(handle) -> None:
    """Stop an early drawing child and remove what it drew (the build failed)."""
    if handle is not None:
        with contextlib.suppress(OSError):
            os.kill(handle[0], signal.SIGKILL)
        _child_ok(handle[0])
        shutil.rmtree(handle[1], ignore_errors=True)


def draw_figures(result, folder: str | Path, *, parallel: bool = True, early=None) -> dict:
    """Render and save every figure as PNG and SVG. Returns ``{name: {"png", "svg"}}``.

    With ``parallel`` and two or more cores, two groups of figures are drawn in forked
    children while this process draws the third (drawing dominates the wall time of a build
    with figures); ``early`` is the handle of :func:`start_campaign_figures`, whose files are moved
    in. Whatever a child fails to draw is drawn here, so the result never depends on forking.
    """
    from .plotting import (
        CAMPAIGN_FIGURES,
        figure_files,
        figure_names,
        load_matplotlib,
        render_campaign_figures,
        render_figures,
        save_figures,
    )

    load_matplotlib()   # before forking: the children share the loaded modules
    folder = Path(folder)
    saved = {}
    every = figure_names(result)
    later = [n for n in every if n not in CAMPAIGN_FIGURES]
    children = []   # (pid, names) of forked drawers
    try:
        if parallel and _can_fork():
            for group in _FIGURE_GROUPS[:-1]:
                names = [n for n in later if n in group]
                if names:
                    children.append((_fork_drawing(
                        lambda names=names: render_figures(result, names), folder), names))
            drawn = {n for _, names in children for n in names}
            later = [n for n in later if n not in drawn]
        saved.update(save_figures(render_figures(result, later), folder))
        for pid, names in list(children):
            ok = _child_ok(pid)
            children.remove((pid, names))
            if ok:
                saved.update({k: figure_files(folder, k) for k in names})
            else:
                saved.update(save_figures(render_figures(result, names), folder))
    except BaseException:   # Ctrl-C, SIGTERM: no drawing process goes on writing
        for pid, _ in children:
            with contextlib.suppress(OSError):
                os.kill(pid, signal.SIGKILL)
            with contextlib.suppress(OSError):
                _child_ok(pid)
        raise
    if early is not None and _child_ok(early[0]) and all(
            (early[1] / f"{k}.{e}").is_file() for k in CAMPAIGN_FIGURES for e in ("png", "svg")):
        for k in CAMPAIGN_FIGURES:
            for e in ("png", "svg"):
                shutil.move(early[1] / f"{k}.{e}", folder / f"{k}.{e}")
            saved[k] = figure_files(folder, k)
    else:
        saved.update(save_figures(render_campaign_figures(result.campaign), folder))
    if early is not None:
        shutil.rmtree(early[1], ignore_errors=True)
    return {name: saved[name] for name in every if name in saved}


def run_build(inputs: Sequence[str | Path], options: BuildOptions, out: Path, *, figures: bool,
              force: bool, quiet: bool, column=None, unit=None, sheet: str | int | None = None,
              tolerance: float = 0.5, modulus_kind: str | None = None,
              parallel_figures: bool = True, kind: str = "build", replaces=None,
              temperature_from_name: bool = False, repeats: str = "merge",
              title: str | None = None, units: str = "SI"):
    """Read, build and write one campaign's outputs atomically. Returns (result, out folder).

    The output folder is checked (and locked) before the fit starts, so a folder that may not be
    written is refused before any time is spent; ``kind`` and ``replaces`` are passed to
    :func:`ttsp.io.atomic.atomic_output_dir`; ``title`` is the report's (default: the sample's
    name from the input's metadata); ``units`` those of the CSV tables (``SI`` or
    ``engineering``).
    """
    from .io.atomic import atomic_output_dir
    from .io.readers import hash_inputs
    from .io.writers import write_build_numbers
    from .workflow import build

    progress = Progress(quiet)
    try:
        progress("reading")
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            campaign = read_inputs(inputs, column, unit, sheet, tolerance, modulus_kind,
                                   temperature_from_name, repeats)
        created = datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
        with atomic_output_dir(out, force=force, protect=inputs, kind=kind,
                               replaces=replaces) as tmp, warnings.catch_warnings():
            warnings.simplefilter("ignore")  # all worth saying is in result.warnings already
            early = start_campaign_figures(campaign, tmp) if figures and parallel_figures else None
            try:
                try:
                    result = build(campaign, options, input_sha256=hash_inputs(inputs),
                                   input_files=[Path(p).name for p in inputs], progress=progress)
                except DataError as exc:  # found while fitting: say which input it is about
                    source = str(campaign.source)
                    if source and not str(exc).startswith(source):
                        raise DataError(f"{source}: {exc}") from None
                    raise
                progress("writing")
                write_build_numbers(result, tmp, created_utc=created, units=units)
                if figures:
                    from .report import render_report

                    saved = draw_figures(result, tmp, parallel=parallel_figures, early=early)
                    early = None
                    svg = {name: Path(paths["svg"]).read_text(encoding="utf-8")
                           for name, paths in saved.items()}
                    (tmp / "report.html").write_text(render_report(result, svg, created_utc=created,
                                                                   title=title),
                                                     encoding="utf-8")
            finally:
                discard_campaign_figures(early)
        progress.done()
    finally:
        progress.cancel()   # after an error: no reminder outlives the run
    return result, Path(out)
