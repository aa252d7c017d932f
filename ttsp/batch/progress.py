"""Progress of a batch on stderr: a bar at a terminal, one line per campaign in a log file, and
a line for each failed campaign unless quiet.

Layer 5 (a shell): it reports results rows; it decides nothing.
"""

from __future__ import annotations

import contextlib
import sys
import time
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from rich.progress import Progress

__all__ = ["BatchProgress"]


class BatchProgress:
    """A progress bar (terminal) or one line per campaign (log files) on stderr; failures always
    get a line unless quiet."""

    def __init__(self, total: int, *, progress: bool, quiet: bool):
        self.total, self.done, self.failed = total, 0, 0
        self.to_build, self.built = 0, 0
        self.t0: float | None = None
        self.mode = None if quiet else ("lines" if progress else "failures")
        self._bar: Progress | None = None
        if self.mode == "lines" and sys.stderr.isatty():
            with contextlib.suppress(ImportError):
                from rich.console import Console
                from rich.progress import (
                    BarColumn,
                    MofNCompleteColumn,
                    Progress,
                    TextColumn,
                    TimeElapsedColumn,
                    TimeRemainingColumn,
                )

                self._bar = Progress(TextColumn("ttsp batch"), BarColumn(), MofNCompleteColumn(),
                                     TextColumn("{task.fields[failed]} failed"),
                                     TimeElapsedColumn(), TimeRemainingColumn(),
                                     console=Console(stderr=True))
                self._task = self._bar.add_task("", total=total, failed=0)
                self._bar.start()
                self.mode = "bar"

    def _say(self, text: str) -> None:
        if self._bar is not None:
            self._bar.console.print(text, markup=False, highlight=False)
        else:
            print(text, file=sys.stderr, flush=True)

    def start(self, reused: int, unreadable: int, to_build: int, workers) -> None:
        """The start line: campaigns found, reused, unreadable, to build on how many workers."""
        self.to_build, self.t0 = to_build, time.perf_counter()
        if self.mode in ("lines", "bar"):
            where = (f"on {workers} worker{'s' if workers != 1 else ''}"
                     if isinstance(workers, int) else f"on {workers}")
            bad = f", {unreadable} with unreadable inputs" if unreadable else ""
            self._say(f"ttsp batch: {self.total} campaign{'s' if self.total != 1 else ''} found: "
                      f"{reused} reused from an earlier run{bad}, {to_build} to build {where}")

    def _left(self) -> str:
        """', about N s left' from the builds finished so far (none before the first)."""
        if not self.built or self.t0 is None or self.built >= self.to_build:
            return ""
        rate = (time.perf_counter() - self.t0) / self.built
        left = rate * (self.to_build - self.built)
        text = f"{left:.0f} s" if left < 120 else f"{left / 60:.0f} min"
        return f"; about {text} left"

    def advance(self, row: dict) -> None:
        self.done += 1
        failed = row["status"] != "ok"
        self.failed += failed
        if self.t0 is not None and not row.get("skipped"):
            self.built += 1
        if self.mode is None:
            return
        if self.mode == "bar" and self._bar is not None:
            self._bar.update(self._task, advance=1, failed=self.failed)
        if failed and self.mode in ("bar", "failures"):
            self._say(f"ttsp batch: {row['id']} failed: {row['error']}")
        elif self.mode == "lines":
            how = "ok (reused)" if row.get("skipped") else row["status"]
            tail = (f": {row['error']}" if failed else "" if row.get("skipped")
                    else f" ({row['elapsed_s']:.1f} s)")
            self._say(f"ttsp batch: [{self.done}/{self.total}] {row['id']} {how}{tail}"
                      f"{self._left()}")

    def close(self) -> None:
        if self._bar is not None:
            self._bar.stop()
            self._bar = None
