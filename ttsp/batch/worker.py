"""One campaign of a batch, as a worker process builds it: the payload it is sent (plain values,
so that it pickles for a process pool or a Dask cluster), the build itself, which never raises,
and the set-up of a worker process.

Layer 5 (a shell): the build is :func:`ttsp.runner.run_build`, exactly as ``ttsp build`` runs
it.
"""

from __future__ import annotations

import contextlib
import inspect
import json
import signal
import time
from pathlib import Path
from typing import Any

from .._lifetime import end_with_parent, watch_process
from ..runner import run_build
from ..workflow import BuildOptions
from .rows import error_text, failed_row, row_from_summary

__all__ = ["build_one", "payload_for", "worker_init"]


def payload_for(item, folder: Path, *, figures: bool, force: bool) -> dict:
    """What a worker needs to build ``item`` (a :class:`~ttsp.batch.manifest.BatchItem`) into
    ``folder``; ``input_sha256`` is filled in once the inputs are hashed."""
    return {"id": item.id, "path": ";".join(str(p) for p in item.paths),
            "paths": [str(p.resolve()) for p in item.paths],
            "options": item.options.to_dict(), "modulus_kind": item.modulus_kind,
            "out": str(folder.resolve()), "figures": bool(figures),
            "force": bool(force),
            "input_sha256": None}


def build_one(payload: dict) -> dict:
    """Build one campaign into its output folder; return its results row. Never raises."""
    t0 = time.perf_counter()
    try:
        # an earlier build of this campaign (and only that) may be replaced
        replace = payload["force"] or (Path(payload["out"]) / "summary.json").is_file()
        # the batch is parallel across campaigns already: no extra drawing process per build
        extra: dict[str, Any] = ({"parallel_figures": False}
                 if "parallel_figures" in inspect.signature(run_build).parameters else {})
        _, folder = run_build([Path(p) for p in payload["paths"]],
                              BuildOptions(**payload["options"]), Path(payload["out"]),
                              figures=payload["figures"], force=replace, quiet=True,
                              modulus_kind=payload["modulus_kind"], **extra)
        summary = json.loads((Path(folder) / "summary.json").read_text(encoding="utf-8"))
        return row_from_summary(payload, summary, skipped=False,
                                elapsed_s=time.perf_counter() - t0)
    except Exception as exc:  # fault isolation: every failure becomes a row
        return failed_row(payload, error_text(exc), time.perf_counter() - t0)


def worker_init(batch_pid: int | None = None) -> None:
    """Workers leave Ctrl-C to the parent, which lets running builds finish and stops the rest;
    they end with the batch's main process ``batch_pid`` however it ends (``kill -9`` included):
    the kernel's parent-death signal (Linux) follows the fork server between them, a watch
    thread follows the main process itself."""
    with contextlib.suppress(ValueError, OSError):
        signal.signal(signal.SIGINT, signal.SIG_IGN)
    end_with_parent()
    if batch_pid is not None:
        watch_process(batch_pid)
