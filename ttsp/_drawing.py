"""The figures of a command-line build: drawn here, or by a forked child that loads matplotlib
while this process reads and fits (:class:`DrawingChild`).

Layer 5 (running a build). Drawing is most of the wall time of a build with figures, and loading
matplotlib half a second of it. A child forked when the build starts loads matplotlib on the
otherwise idle second core, draws the campaign's figures as soon as it is sent the campaign, and
the rest once it is sent the result, sharing them with two children of its own; this process
never loads matplotlib. Whatever the child fails to deliver is drawn here, so the files never
depend on forking.
"""

from __future__ import annotations

import contextlib
import os
import signal
from functools import partial
from pathlib import Path

from ._forked import can_fork, child_ok, dumps, start_child

__all__ = ["DrawingChild", "draw_figures", "drawing_shares"]

# What each figure drawn after the fit costs to draw and save (tenths of a second of one core,
# measured on the demo campaign; relative costs are what matter): the drawing is shared out by
# these between the drawing processes (see :func:`drawing_shares`).
_DRAW_COST = {"prony_fit": 4.1, "time_functions": 3.3, "master_curve": 2.8,
              "frequency_functions": 2.6, "relaxation_spectrum": 2.6, "shift_factors": 2.3,
              "isochrone": 2.0, "cross_validation": 1.4}
_UNKNOWN_COST = 2.6
_OWN_EXTRA = 1.0   # the drawing process also reads the result and forks the other drawers


def drawing_shares(names, processes: int = 3) -> list[list[str]]:
    """Share the figures ``names`` out between ``processes`` drawers so that they finish
    together: the costliest figure first, each to the drawer with the least work so far
    (longest-processing-time-first; Graham 1969, within 4/3 of the best share). Three drawers
    keep two cores busy to the end, where two left one core idle while the slower finished.
    Returns the shares, the drawing process's own last; empty shares are kept."""
    load = [0.0] * (processes - 1) + [_OWN_EXTRA]
    shares: list[list[str]] = [[] for _ in range(processes)]
    for name in sorted(names, key=lambda n: -_DRAW_COST.get(n, _UNKNOWN_COST)):
        k = load.index(min(load))
        shares[k].append(name)
        load[k] += _DRAW_COST.get(name, _UNKNOWN_COST)
    return shares


def draw_figures(result, folder: str | Path, names=None) -> dict:
    """Render and save the figures ``names`` (default: all) of ``result`` as PNG and SVG in
    this process. Returns ``{name: {"png", "svg"}}`` in the order of
    :func:`ttsp.plotting.figure_names`."""
    from .plotting import (
        CAMPAIGN_FIGURES,
        figure_names,
        render_campaign_figures,
        render_figures,
        save_figures,
    )

    every = figure_names(result)
    wanted = every if names is None else [n for n in every if n in names]
    saved = {}
    campaign = [n for n in wanted if n in CAMPAIGN_FIGURES]
    if campaign:
        figures = render_campaign_figures(result.campaign)
        saved.update(save_figures({n: figures[n] for n in campaign}, folder))
    later = [n for n in wanted if n not in CAMPAIGN_FIGURES]
    if later:
        saved.update(save_figures(render_figures(result, later), folder))
    return {name: saved[name] for name in wanted}


class DrawingChild:
    """A forked child that draws every figure of one build into its output folder.

    Start it (:meth:`start`) before reading: it loads matplotlib meanwhile. Send it the
    campaign and the folder (:meth:`send_campaign`) as soon as they are known, and the result
    (:meth:`finish`) once it is built; :meth:`finish` waits and says which figures are saved.
    :meth:`stop` (safe to call twice) kills and collects the child and its own drawers, as
    every way out of a build must.
    """

    def __init__(self, pid: int, pipe):
        self.pid: int | None = pid
        self._pipe = pipe            # write end; messages are pickles, one after the other
        self._folder: Path | None = None

    @classmethod
    def start(cls) -> DrawingChild | None:
        """Fork the child; None where children cannot be forked (see :func:`can_fork`)."""
        if not can_fork():
            return None
        read_end, write_end = os.pipe()
        try:
            pid = start_child(lambda: _serve(read_end, write_end))
        except BaseException:
            os.close(write_end)
            raise
        finally:
            os.close(read_end)
        return cls(pid, os.fdopen(write_end, "wb"))

    def send_campaign(self, campaign, folder: str | Path) -> None:
        """Have the child draw the campaign's figures into ``folder`` now."""
        self._folder = Path(folder)
        self._send((campaign, str(folder)))

    def finish(self, result) -> list:
        """Send the result, wait for the child, and return the names of the figures it saved
        (empty when it failed: the caller draws them)."""
        from .plotting import figure_files, figure_names

        self._send(result)
        self._close()
        pid, self.pid = self.pid, None
        if pid is None or not child_ok(pid) or self._folder is None:
            return []
        return [n for n in figure_names(result)
                if all(p.is_file() for p in figure_files(self._folder, n).values())]

    def stop(self) -> None:
        self._close()
        if self.pid is not None:
            pid, self.pid = self.pid, None
            with contextlib.suppress(OSError):
                os.kill(pid, signal.SIGKILL)
            with contextlib.suppress(OSError):
                child_ok(pid)

    def _send(self, message) -> None:
        if self._pipe is None:
            return
        try:
            self._pipe.write(dumps(message))
            self._pipe.flush()
        except OSError:          # the child is gone: finish() finds it failed
            self._close()

    def _close(self) -> None:
        if self._pipe is not None:
            with contextlib.suppress(OSError):
                self._pipe.close()
            self._pipe = None


def _serve(read_end: int, write_end: int) -> None:
    """In the child: load matplotlib, draw the campaign's figures when it arrives, then the
    result's, two shares of them in children of its own. Raises (so exits 1) when a figure
    could not be saved."""
    import pickle

    from .plotting import (
        CAMPAIGN_FIGURES,
        figure_names,
        load_matplotlib,
        render_campaign_figures,
        render_figures,
        save_figures,
    )

    os.close(write_end)
    load_matplotlib()
    import pandas  # noqa: F401  (the figures read the result's tables; not loaded before reading)
    with os.fdopen(read_end, "rb") as pipe:
        try:
            campaign, folder = pickle.load(pipe)
        except EOFError:         # the build ended before it was read
            return
        save_figures(render_campaign_figures(campaign), folder)
        try:
            result = pickle.load(pipe)
        except EOFError:         # the build failed
            return
    def draw(names):
        save_figures(render_figures(result, names), folder)

    *others, own = drawing_shares([n for n in figure_names(result) if n not in CAMPAIGN_FIGURES])
    drawers = [(start_child(partial(draw, names)), names) for names in others if names]
    draw(own)
    for pid, names in drawers:
        if not child_ok(pid):
            draw(names)
