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
import os
import shutil
import signal
import sys
import threading
import time
import warnings
from pathlib import Path
from typing import Any

from ._forked import BACKGROUND_NICENESS, AsideWork, can_fork, child_ok, start_child
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


# What each figure drawn after the fit costs to draw and save (tenths of a second of one core,
# measured on the demo campaign; relative costs are what matter): the drawing is shared out by
# these between forked children and this process (see :func:`_drawing_shares`).
_DRAW_COST = {"prony_fit": 4.1, "time_functions": 3.3, "master_curve": 2.8,
              "frequency_functions": 2.6, "relaxation_spectrum": 2.6, "shift_factors": 2.3,
              "isochrone": 2.0, "cross_validation": 1.4}
_UNKNOWN_COST = 2.6
_REPORT_COST = 1.0   # this process also writes the report once its share is drawn


def _drawing_shares(names, processes: int = 3) -> list[list[str]]:
    """Share the figures ``names`` out between ``processes`` drawers, the last of them this
    process, so that they finish together: the costliest figure first, each to the drawer with
    the least work so far (longest-processing-time-first; Graham 1969, within 4/3 of the best
    share). Three drawers keep two cores busy to the end, where two left one core idle while the
    slower finished. Returns the shares, this process's last; empty shares are kept."""
    load = [0.0] * (processes - 1) + [_REPORT_COST]
    shares: list[list[str]] = [[] for _ in range(processes)]
    for name in sorted(names, key=lambda n: -_DRAW_COST.get(n, _UNKNOWN_COST)):
        k = load.index(min(load))
        shares[k].append(name)
        load[k] += _DRAW_COST.get(name, _UNKNOWN_COST)
    return shares


def _fork_drawing(render, folder: Path, *, private: bool = False) -> int:
    """Fork a child that renders figures with ``render()`` and saves them into ``folder``;
    returns its pid. A ``private`` folder (the campaign's figures, drawn while the build runs)
    the child removes itself if the parent was killed meanwhile; that child runs at
    :data:`~ttsp._forked.BACKGROUND_NICENESS`, since the build is what the user waits for."""
    from .plotting import save_figures

    return start_child(lambda: save_figures(render(), folder),
                       orphaned=(lambda: shutil.rmtree(folder, ignore_errors=True))
                       if private else None, nice=BACKGROUND_NICENESS if private else 0)


def start_campaign_figures(campaign: Campaign, tmp: str | Path):
    """Start drawing the figures of the measured data in a child process (two or more cores),
    so that they are ready when the fit ends. Returns a handle for :func:`draw_figures`, or None.
    The child draws into a hidden sub-folder of the output's temporary folder ``tmp``, so a build
    killed meanwhile leaves one temporary folder, not two.
    """
    if not can_fork():
        return None
    from .plotting import render_campaign_figures

    folder = Path(tmp) / ".early-figures"
    folder.mkdir()
    # the child loads matplotlib itself; this process does so while it waits for the
    # cross-validation (see run_build), before it forks the other drawing children
    return _fork_drawing(lambda: render_campaign_figures(campaign), folder, private=True), folder


def _load_matplotlib() -> None:
    from .plotting import load_matplotlib

    load_matplotlib()


def discard_campaign_figures(handle) -> None:
    """Stop an early drawing child and remove what it drew (the build failed)."""
    if handle is not None:
        with contextlib.suppress(OSError):
            os.kill(handle[0], signal.SIGKILL)
        child_ok(handle[0])
        shutil.rmtree(handle[1], ignore_errors=True)


def draw_figures(result, folder: str | Path, *, parallel: bool = True, early=None) -> dict:
    """Render and save every figure as PNG and SVG. Returns ``{name: {"png", "svg"}}``.

    With ``parallel`` and two or more cores, two shares of the figures are drawn in forked
    children while this process draws the third (:func:`_drawing_shares`; drawing dominates the
    wall time of a build with figures); ``early`` is the handle of :func:`start_campaign_figures`, whose files are moved
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
        if parallel and can_fork():
            *forked, later = _drawing_shares(later)
            for names in filter(None, forked):
                children.append((_fork_drawing(
                    lambda names=names: render_figures(result, names), folder), names))
        saved.update(save_figures(render_figures(result, later), folder))
        for pid, names in list(children):
            ok = child_ok(pid)
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
                child_ok(pid)
        raise
    if early is not None and child_ok(early[0]) and all(
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
            aside = figures and parallel_figures
            early = start_campaign_figures(campaign, tmp) if aside else None
            try:
                try:
                    with AsideWork(meanwhile=_load_matplotlib, enabled=aside) as work_aside:
                        result = build(campaign, options, input_sha256=hash_inputs(inputs),
                                       input_files=[Path(p).name for p in inputs],
                                       progress=progress, aside=work_aside)
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
