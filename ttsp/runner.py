"""Run one build from files to a finished output folder (shared by ``ttsp build`` and batches).

Layer 5: it reads through :mod:`ttsp.io.readers`, computes through :func:`ttsp.workflow.build`,
and writes numbers, figures and the HTML page into an atomic output folder.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .build_options import BuildOptions

import datetime
import signal
import sys
import threading
import time
import warnings
from pathlib import Path
from typing import Any

from ._drawing import DrawingChild, draw_figures
from ._forked import AsideWork
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
    parallel = figures and parallel_figures
    drawing = DrawingChild.start() if parallel else None   # loads matplotlib meanwhile
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
            if drawing is not None:
                drawing.send_campaign(campaign, tmp)
            try:
                with AsideWork(enabled=parallel) as work_aside:
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
                _write_figures_and_report(result, tmp, drawing, created=created, title=title)
        progress.done()
    finally:
        progress.cancel()   # after an error: no reminder outlives the run
        if drawing is not None:
            drawing.stop()  # after an error: no drawing goes on; after success, a no-op
    return result, Path(out)


def _write_figures_and_report(result, folder: Path, drawing: DrawingChild | None, *,
                              created: str, title: str | None) -> None:
    """Every figure as PNG and SVG and the HTML report with the SVGs inside. The figures the
    drawing child (if any) did not deliver are drawn here."""
    from .plotting import figure_files, figure_names
    from .report import render_report

    delivered = drawing.finish(result) if drawing is not None else []
    missing = [n for n in figure_names(result) if n not in delivered]
    if missing:
        draw_figures(result, folder, missing)
    svg = {name: figure_files(folder, name)["svg"].read_text(encoding="utf-8")
           for name in figure_names(result)}
    (folder / "report.html").write_text(render_report(result, svg, created_utc=created,
                                                      title=title), encoding="utf-8")
