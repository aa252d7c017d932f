"""Run one build from files to a finished output folder (shared by ``ttsp build`` and batches).

Layer 5: it reads through :mod:`ttsp.io.readers`, computes through :func:`ttsp.workflow.build`,
and writes numbers, figures and the HTML page into an atomic output folder.
"""

from __future__ import annotations

import datetime
import time
import warnings
from pathlib import Path

import typer

from .exceptions import DataError

__all__ = ["Progress", "read_inputs", "run_build", "parse_pairs"]


def parse_pairs(values, option: str) -> dict:
    """Parse repeated ``NAME=VALUE`` options into a dict (usage error on a malformed one)."""
    import typer

    out = {}
    for item in values or []:
        if "=" not in item:
            raise typer.BadParameter(f"must look like NAME=VALUE; got {item!r}", param_hint=option)
        k, v = item.split("=", 1)
        out[k.strip()] = v.strip()
    return out


def read_inputs(inputs, column, unit, sheet, tolerance, modulus_kind):
    from .io.readers import read_campaign

    if modulus_kind not in (None, "tensile", "shear"):
        raise typer.BadParameter("must be tensile or shear", param_hint="--modulus-kind")
    return read_campaign([str(p) for p in inputs], columns=parse_pairs(column, "--column"),
                         units=parse_pairs(unit, "--unit"), sheet=sheet,
                         temperature_tolerance_K=tolerance, modulus_kind=modulus_kind)


class Progress:
    """Step names on stderr with the time each took; silent with --quiet."""

    def __init__(self, quiet: bool):
        self.quiet, self.t0, self.name = quiet, None, None

    def __call__(self, name: str):
        self.done()
        self.name, self.t0 = name, time.perf_counter()

    def done(self):
        if self.name is not None and not self.quiet:
            typer.echo(f"ttsp: {self.name} ({time.perf_counter() - self.t0:.1f} s)", err=True)
        self.name = None


# Figures split into two groups of about equal drawing cost, for two processes.
_FIGURE_GROUPS = (("prony_fit", "isotherms", "superposition_check"),
                  ("master_curve", "shift_factors", "time_functions", "frequency_functions"))


def draw_figures(result, folder, *, parallel: bool = True) -> dict:
    """Render and save every figure as PNG and SVG; with ``parallel``, half of them in a forked
    child process when the machine has two or more cores (drawing dominates the wall time of a
    build with figures). Returns ``{name: {"png": path, "svg": path}}``.

    Falls back to one process where ``os.fork`` is missing or only one core is available.
    """
    import os

    from .plotting import FIGURE_NAMES, render_figures, save_figures

    first = [n for n in FIGURE_NAMES if n in _FIGURE_GROUPS[0]]
    rest = [n for n in FIGURE_NAMES if n not in first]
    if not (parallel and hasattr(os, "fork") and (os.cpu_count() or 1) > 1):
        return save_figures(render_figures(result), folder)
    pid = os.fork()
    if pid == 0:  # the child draws its half and leaves at once, running no cleanup of the parent
        code = 1
        try:
            save_figures(render_figures(result, first), folder)
            code = 0
        finally:
            os._exit(code)
    saved = save_figures(render_figures(result, rest), folder)
    _, status = os.waitpid(pid, 0)
    if os.waitstatus_to_exitcode(status) != 0:  # redo the child's half here rather than fail
        saved.update(save_figures(render_figures(result, first), folder))
    else:
        folder = Path(folder)
        saved.update({k: {"png": folder / f"{k}.png", "svg": folder / f"{k}.svg"} for k in first})
    return {name: saved[name] for name in FIGURE_NAMES if name in saved}


def run_build(inputs, options, out: Path, *, figures: bool, force: bool, quiet: bool,
              column=None, unit=None, sheet=None, tolerance=0.5, modulus_kind=None,
              parallel_figures: bool = True):
    """Read, build and write one campaign's outputs atomically. Returns (result, out folder)."""
    from .io.atomic import atomic_output_dir
    from .io.writers import write_build_numbers
    from .io.readers import hash_inputs
    from .workflow import build

    progress = Progress(quiet)
    progress("reading")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        campaign = read_inputs(inputs, column, unit, sheet, tolerance, modulus_kind)
        try:
            result = build(campaign, options, input_sha256=hash_inputs(inputs),
                           input_files=[Path(p).name for p in inputs], progress=progress)
        except DataError as exc:  # found while fitting: say which input it is about
            source = str(campaign.source)
            if source and not str(exc).startswith(source):
                raise DataError(f"{source}: {exc}") from None
            raise
    progress("writing")
    created = datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
    with atomic_output_dir(out, force=force, protect=inputs) as tmp, \
            warnings.catch_warnings():
        warnings.simplefilter("ignore")  # everything worth saying is in result.warnings already
        write_build_numbers(result, tmp, created_utc=created)
        if figures:
            from .report import render_report

            saved = draw_figures(result, tmp, parallel=parallel_figures)
            svg = {name: Path(paths["svg"]).read_text(encoding="utf-8") for name, paths in saved.items()}
            (tmp / "report.html").write_text(render_report(result, svg, created_utc=created),
                                             encoding="utf-8")
    progress.done()
    return result, Path(out)


