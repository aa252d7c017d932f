"""A whole batch run, as named steps: read the campaigns, check the arguments and the batch
folder, lock it, plan what is done already, build the rest on local workers or a Dask cluster,
and write the results table as campaigns finish.

Layer 5 (a shell). What each step does is told in :mod:`ttsp.batch`.
"""

from __future__ import annotations

import os
from pathlib import Path

from .._lifetime import Terminated, sigterm_raises
from .._validation import bad_value
from ..exceptions import DataError
from .dask_cluster import run_on_dask
from .folder import batch_lock, check_results_files, tidy
from .manifest import BatchItem, check_unique, read_manifest
from .pool import default_workers, run_local, single_threaded_blas
from .progress import BatchProgress
from .results_table import ResultsTable
from .resume import plan_campaigns
from .worker import build_one

__all__ = ["batch_exit_code", "run_batch"]


def run_batch(manifest, out_dir: str | Path, *, workers: int | None = None, figures: bool = False,
              force: bool = False, scheduler: str | None = None, client=None,
              progress: bool = True, quiet: bool = False, _task=None):
    """Build every campaign of a manifest into ``out_dir/<id>/`` and return the results table.

    Parameters
    ----------
    manifest : path or sequence of BatchItem
        A manifest file or a folder of campaigns (see :func:`read_manifest`), or items already
        read.
    out_dir : path
        Output folder of the batch: one sub-folder per campaign id, plus ``results.jsonl`` and
        ``results.csv``. Created when missing.
    workers : int, optional
        Worker processes on this machine (default: every core available to this process).
        Ignored on a Dask cluster.
    figures : bool
        Write figures and ``report.html`` for each campaign too (default: numbers only).
    force : bool
        Rebuild campaigns that are complete already (same input hash, options and version).
    scheduler : str, optional
        Address of a Dask distributed scheduler (``"tcp://host:8786"``); the work goes there.
        The workers need ttsp installed and the same paths to inputs and ``out_dir``.
    client : distributed.Client, optional
        A connected Dask client to use instead of ``scheduler`` (it is not closed).
    progress : bool
        A progress bar on stderr (one line per campaign when stderr is not a terminal).
    quiet : bool
        Nothing on stderr at all (without it, a failed campaign gets one line even when
        ``progress`` is off).

    Returns
    -------
    pandas.DataFrame
        One row per campaign in manifest order; the columns are listed in :mod:`ttsp.batch`.
        Give it to :func:`batch_exit_code` for the command's exit code.

    Notes
    -----
    Worker processes start from a fork server (or are spawned, on Windows), so a script that
    calls this function must do so under ``if __name__ == "__main__":``, as every script using
    :mod:`multiprocessing` must on Windows and macOS. The command line and notebooks need
    nothing.

    Raises
    ------
    DataError
        For a bad manifest, bad arguments, an ``out_dir`` that is a file or the campaign folder
        itself, or a Dask run without Dask installed or with an unreachable scheduler. A bad
        campaign never raises: it is a ``failed`` row.
    """
    items, source = _read_items(manifest)
    _check_run_arguments(workers, scheduler, client)
    out, items = _prepare_batch_folder(out_dir, source, items)
    try:
        with sigterm_raises(), batch_lock(out):
            check_results_files(out)
            tidy(out)
            return _run_items(items, out, workers=workers, figures=figures, force=force,
                              scheduler=scheduler, client=client, progress=progress, quiet=quiet,
                              task=_task or build_one)
    except Terminated:
        raise Terminated(f"terminated (SIGTERM); the campaigns finished so far are in "
                         f"{out / 'results.csv'}: run the same command again to resume") from None


def _read_items(manifest):
    """(the campaigns, the manifest's path or None when items were given)."""
    if isinstance(manifest, (str, os.PathLike)):
        source = Path(manifest)
        return read_manifest(source), source
    items = list(manifest)
    if not items or not all(isinstance(i, BatchItem) for i in items):
        raise bad_value("manifest", "a manifest path, a folder, or a non-empty sequence of "
                                    "BatchItem", type(manifest).__name__)
    check_unique(items)
    return items, None


def _check_run_arguments(workers, scheduler, client) -> None:
    if workers is not None and (isinstance(workers, bool) or not isinstance(workers, int)
                                or workers < 1):
        raise bad_value("workers", "a whole number >= 1", workers)
    if scheduler is not None and client is not None:
        raise DataError("give either scheduler (an address) or client (a Dask client), not both")


def _prepare_batch_folder(out_dir, source, items):
    """Create the batch folder (refusing a file, or the folder of campaigns itself); a batch
    folder inside the folder of campaigns is not one of its campaigns."""
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise DataError(f"{out}: exists and is not a folder")
    if source is not None and source.is_dir():
        if out.resolve() == source.resolve():
            raise DataError(f"{out}: the output folder must not be the folder of campaigns "
                            f"itself; choose another, such as {source / 'out'}")
        items = [i for i in items if i.paths[0].resolve() != out.resolve()]
    out.mkdir(parents=True, exist_ok=True)
    return out, items


def _run_items(items, out: Path, *, workers, figures, force, scheduler, client, progress, quiet,
               task):
    """Plan (reuse what is done) and run the campaigns of a batch; the caller holds the lock."""
    table = ResultsTable(out, [i.id for i in items])
    reporter = BatchProgress(len(items), progress=progress, quiet=quiet)

    def on_done(row):
        table.add(row)
        reporter.advance(row)

    try:
        plan = plan_campaigns(items, out, figures=figures, force=force)
        dask = scheduler is not None or client is not None
        reporter.start(plan.reused, plan.unreadable, len(plan.pending),
                       "a Dask cluster" if dask else (workers or default_workers()))
        for row in plan.finished:   # reported after the start line
            on_done(row)
        if plan.pending and dask:
            run_on_dask(plan.pending, scheduler, client, task, on_done)
        elif plan.pending:
            with single_threaded_blas():
                run_local(plan.pending, workers or default_workers(), task, on_done)
    finally:
        reporter.close()
        table.write()
    return table.frame()


def batch_exit_code(table) -> int:
    """Exit code of ``ttsp batch`` for a results table.

    0 when every campaign is ``ok`` (built or reused), 2 when any campaign failed: a failed
    campaign is bad input in the sense of the command line's codes (0 done · 2 bad input ·
    3 check failed under ``--strict`` · 1 internal error). Failed checks of campaigns that were
    built are not failures of the batch; they are in the ``checks_failed`` column.
    """
    if len(table) == 0:
        return 0
    return 0 if bool((table["status"] == "ok").all()) else 2
