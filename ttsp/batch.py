"""Many campaigns in one run: parallel, fault-isolated, resumable, optionally on a Dask cluster.

Layer 5 (a shell). A *manifest* lists the campaigns; every campaign is built by
:func:`ttsp.runner.run_build`, exactly as ``ttsp build`` builds it, into its own output folder
``OUT/<id>/`` (same contract: ``summary.json``, the CSV tables and, with figures, the figures and
``report.html``). One results table for the whole batch, one row per campaign in manifest order,
is written as ``OUT/results.jsonl`` and ``OUT/results.csv``.

Manifest
    A CSV file (comma, semicolon or tab) or a JSON Lines file (one object per line) with the
    columns ``id`` and ``path`` and, optionally, per-campaign options: ``reference_temperature_C``,
    ``law``, ``vertical``, ``expansion_coefficient_per_K``, ``shift_on``, ``gaps``,
    ``prony_terms_per_decade``, ``glass_transition_C``, ``spectrum`` (true/false),
    ``master_curve`` (auto/spectrum/splines), ``cross_validation`` (true/false) (the fields of
    :class:`ttsp.workflow.BuildOptions`) and ``modulus_kind`` (``tensile`` or ``shear``). An empty
    cell (or ``null``) means the default. ``path`` is a file or a folder of one campaign, relative
    to the manifest's folder; in JSON Lines it may also be a list of files. Blank lines and lines
    starting with ``#`` are ignored. Or a *folder of campaigns*: each table file (``.csv``,
    ``.txt``, ``.xlsx`` ...) or sub-folder in it is one campaign whose id is its name (without the
    suffix); hidden entries and folders that hold ttsp outputs are left out.

Ids name output folders, so they must be unique (also ignoring letter case, for file systems that
ignore it) and usable as folder names everywhere: letters, digits, ``_``, and inside also
``. - + = , @ ( )`` and spaces; at most 100 characters.

Fault isolation
    A campaign that cannot be built (unreadable file, bad data, a failed fit, any exception) gets
    ``status`` ``failed`` and a one-line ``error``; the batch goes on. A worker process that dies
    (a crash in a native library, the kernel's out-of-memory killer) breaks the process pool; the
    campaigns that were in flight are then retried one at a time in a fresh worker, and only the
    one that kills its worker again is recorded as failed; a new pool takes the rest.

Resuming
    A campaign whose output folder already holds a complete build (``summary.json`` with the same
    ``input_sha256``, the same options and the same ttsp version; ``report.html`` too when figures
    are asked for) is not rebuilt but reported from its ``summary.json`` with ``skipped`` true,
    unless ``force``. So a batch that was interrupted continues where it stopped, and a campaign
    whose input file or options changed is rebuilt. Output folders appear whole or not at all
    (:func:`ttsp.io.atomic.atomic_output_dir`); the results table is replaced atomically as
    campaigns finish.

Safety
    The batch folder is locked for the run (a second batch into it fails at once) and carries a
    ``.ttsp-output`` marker of kind ``batch`` with the hashes of the results files: a
    ``results.csv`` or ``results.jsonl`` that ttsp did not write, or that was edited since, is
    never overwritten (the batch stops before any work). A campaign folder that is not an
    untouched ttsp output is a ``failed`` row, never replaced. SIGTERM kills the workers at once,
    records the finished campaigns and raises :class:`ttsp._lifetime.Terminated` (exit 143 on
    the command line); workers also end when the batch's process dies (``kill -9``). Text cells
    of ``results.csv`` that a spreadsheet would run as formulas get a leading ``'``.

Results table columns
    ``id``, ``status`` (``ok`` | ``failed``), ``error`` (empty when ok), ``skipped``, ``path``,
    ``input_sha256``, ``domain``, ``modulus_kind``, ``isotherms``, ``reference_temperature_C``,
    ``law_model``, ``law_<parameter>`` and ``law_<parameter>_stderr`` for each parameter of the
    fitted law (``law_C1``, ``law_C2_K``, ``law_activation_energy_kJ_per_mol`` ...; absolute
    temperatures in °C like every temperature of the table: ``law_glass_transition_C``,
    ``law_T_inf_C``; C2 and B are temperature differences, in K),
    ``prony_terms``, ``prony_rms_percent``, ``master_curve`` (``spectrum`` | ``splines``),
    ``collapse_ratio`` (neighbour mismatch over chained pairwise shifts'),
    ``cv_median_rms_percent_at_law_aT``, ``cv_worst_rms_percent_at_law_aT`` and
    ``cv_median_rms_percent_at_best_aT`` (held-out isotherms; empty without cross-validation),
    ``checks_worst`` (``pass`` | ``warn`` | ``fail``),
    ``checks_failed`` and ``checks_warned`` (check names joined by ``;``), ``warnings`` (their
    count), ``elapsed_s`` (wall time of this run for the campaign).

Worker processes run single-threaded BLAS (``OPENBLAS_NUM_THREADS`` and its kin are set to 1 for
them unless already set): the parallelism is across campaigns, and the small dense problems of
one build run slower, not faster, with several BLAS threads competing for the same cores.
"""

from __future__ import annotations

import contextlib
import csv
import hashlib
import inspect
import io
import json
import math
import os
import re
import signal
import sys
import time
import uuid
from collections import deque
from dataclasses import dataclass, field
from pathlib import Path

from . import __version__
from ._lifetime import Terminated, sigterm_raises
from ._validation import bad_value, where
from .exceptions import DataError, TtspError
from .io.writers import neutralise_formula
from .workflow import BuildOptions

__all__ = ["MANIFEST_COLUMNS", "RESULT_FILES", "BatchItem", "batch_exit_code", "read_manifest",
           "run_batch"]

#: Per-campaign options a manifest may give, with the type of their values.
OPTION_COLUMNS = {
    "reference_temperature_C": float,
    "law": str,
    "vertical": str,
    "expansion_coefficient_per_K": float,
    "shift_on": str,
    "gaps": str,
    "prony_terms_per_decade": float,
    "glass_transition_C": float,
    "spectrum": bool,
    "master_curve": str,
    "cross_validation": bool,
}
MANIFEST_COLUMNS = ("id", "path", *OPTION_COLUMNS, "modulus_kind")
RESULT_FILES = ("results.jsonl", "results.csv")
JSON_LINES_SUFFIXES = (".jsonl", ".ndjson", ".json")

_ID = re.compile(r"^\w(?:[\w.+=,@() -]*[\w+=,@()-])?$")
_ID_RULE = ("a folder name: letters, digits, '_', and inside also . - + = , @ ( ) or spaces; "
            "at most 100 characters")
_WINDOWS_RESERVED = {"con", "prn", "aux", "nul", *(f"com{i}" for i in range(1, 10)),
                     *(f"lpt{i}" for i in range(1, 10))}
_BLAS_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS",
                   "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS")
# Imported once by the fork server, so that every worker starts warm.
_PRELOAD = ("ttsp.batch", "ttsp.runner", "ttsp.workflow", "ttsp.io.readers", "ttsp.io.writers",
            "ttsp.shifting", "ttsp.laws.fit", "ttsp.prony", "ttsp.checks", "ttsp.model",
            "ttsp.transition", "ttsp.interconvert", "pandas", "lmfit", "threadpoolctl")

_HEAD = ("id", "status", "error", "skipped", "path", "input_sha256", "domain", "modulus_kind",
         "isotherms", "reference_temperature_C", "law_model")
_TAIL = ("prony_terms", "prony_rms_percent", "master_curve", "collapse_ratio",
         "cv_median_rms_percent_at_law_aT", "cv_worst_rms_percent_at_law_aT",
         "cv_median_rms_percent_at_best_aT", "checks_worst", "checks_failed", "checks_warned",
         "warnings", "elapsed_s")
_CHECK_ORDER = {"pass": 0, "warn": 1, "fail": 2}


# ---- the manifest -----------------------------------------------------------------------------
@dataclass(frozen=True)
class BatchItem:
    """One campaign of a batch (settings only).

    Parameters
    ----------
    id : str
        Name of the campaign and of its output folder (see the module docstring for the rule).
    paths : tuple of pathlib.Path
        The files, or one folder, of the campaign.
    options : BuildOptions
        Build settings of this campaign.
    modulus_kind : str, optional
        ``"tensile"`` or ``"shear"`` to override detection from the headers.
    origin : str
        Where the item was read (``"manifest.csv, row 4"``), for messages.
    """

    id: str
    paths: tuple
    options: BuildOptions = field(default_factory=BuildOptions)
    modulus_kind: str | None = None
    origin: str = ""

    def __post_init__(self):
        _check_id(self.id, self.origin)
        paths = (self.paths,) if isinstance(self.paths, (str, os.PathLike)) else tuple(self.paths)
        if not paths:
            raise DataError(f"{_prefix(self.origin)}path must name at least one file or folder; "
                            f"got none")
        object.__setattr__(self, "paths", tuple(Path(p) for p in paths))
        if not isinstance(self.options, BuildOptions):
            raise bad_value("options", "a ttsp BuildOptions", type(self.options).__name__)
        if self.modulus_kind not in (None, "tensile", "shear"):
            raise DataError(f"{_prefix(self.origin)}modulus_kind must be one of ('tensile', "
                            f"'shear') or empty; got {self.modulus_kind!r}")

    def to_dict(self) -> dict:
        return {"id": self.id, "paths": [str(p) for p in self.paths],
                "options": self.options.to_dict(), "modulus_kind": self.modulus_kind}


def _prefix(origin: str) -> str:
    return f"{origin}: " if origin else ""


def _check_id(value, origin: str = "") -> None:
    if not isinstance(value, str) or not value.strip():
        raise DataError(f"{_prefix(origin)}id must be a non-empty name; got {value!r}")
    if (len(value) > 100 or not _ID.match(value) or value in RESULT_FILES
            or value.split(".")[0].lower() in _WINDOWS_RESERVED):
        raise DataError(f"{_prefix(origin)}id must be {_ID_RULE}; got {value!r}")


def read_manifest(path_or_folder) -> list:
    """Read a batch manifest (CSV, JSON Lines, or a folder of campaigns) into :class:`BatchItem` s.

    Parameters
    ----------
    path_or_folder : path
        A ``.csv`` (or ``.tsv``/``.txt``) file, a JSON Lines file (``.jsonl``, ``.ndjson``,
        ``.json``, or any file whose first data line starts with ``{``), or a folder whose table
        files and sub-folders are the campaigns. Relative paths in a manifest are relative to the
        manifest's folder.

    Returns
    -------
    list of BatchItem
        In manifest order (a folder: sorted by name).

    Raises
    ------
    DataError
        Naming the file, column and row: a missing ``id`` or ``path`` column, an unknown column,
        an id that repeats or is unusable as a folder name, an option value out of its rules, an
        empty manifest, or a file that cannot be read as text.
    """
    p = Path(path_or_folder)
    if p.is_dir():
        return _read_folder(p)
    if not p.is_file():
        raise DataError(f"{p}: no such manifest file or folder")
    try:
        text = p.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError as exc:
        raise DataError(f"{p.name}: a manifest must be UTF-8 text ({exc.reason} at byte "
                        f"{exc.start})") from None
    first = next((ln.strip() for ln in text.splitlines() if ln.strip()
                  and not ln.lstrip().startswith("#")), "")
    if p.suffix.lower() in JSON_LINES_SUFFIXES or first.startswith("{"):
        rows = _json_lines_rows(text, p.name)
    else:
        rows = _csv_rows(text, p.name)
    items = [_item_from_row(values, p.parent, p.name, line) for line, values in rows]
    if not items:
        raise DataError(f"{p.name}: the manifest lists no campaigns")
    _check_unique(items)
    return items


def _check_columns(names, file: str) -> None:
    unknown = [n for n in names if n not in MANIFEST_COLUMNS]
    if unknown:
        raise DataError(f"{file}: unknown manifest column(s) {', '.join(map(repr, unknown))}; "
                        f"known: {', '.join(MANIFEST_COLUMNS)}")
    missing = [n for n in ("id", "path") if n not in names]
    if missing:
        raise DataError(f"{file}: the manifest needs the column(s) {', '.join(missing)}; found "
                        f"{', '.join(map(repr, names)) or 'none'}")


def _csv_rows(text: str, file: str):
    lines = [(i + 1, ln) for i, ln in enumerate(text.splitlines())
             if ln.strip() and not ln.lstrip().startswith("#")]
    if not lines:
        raise DataError(f"{file}: the manifest is empty")
    header_line, header = lines[0]
    delimiter = max(",;\t", key=header.count)
    parsed = list(csv.reader([ln for _, ln in lines], delimiter=delimiter))
    names = [h.strip() for h in parsed[0]]
    _check_columns(names, file)
    if len(set(names)) != len(names):
        raise DataError(f"{where(file, row=header_line)}a manifest column appears twice: "
                        f"{', '.join(names)}")
    rows = []
    for (line, _), cells in zip(lines[1:], parsed[1:]):
        if len(cells) != len(names):
            raise DataError(f"{where(file, row=line)}{len(cells)} cells where the header has "
                            f"{len(names)}")
        rows.append((line, {n: (c.strip() or None) for n, c in zip(names, cells)}))
    return rows


def _json_lines_rows(text: str, file: str):
    rows = []
    for i, ln in enumerate(text.splitlines()):
        if not ln.strip() or ln.lstrip().startswith("#"):
            continue
        try:
            values = json.loads(ln)
        except json.JSONDecodeError as exc:
            raise DataError(f"{where(file, row=i + 1)}not a JSON object ({exc.msg})") from None
        if not isinstance(values, dict):
            raise DataError(f"{where(file, row=i + 1)}not a JSON object; got "
                            f"{type(values).__name__}")
        _check_columns(list(values), f"{file}, row {i + 1}")
        rows.append((i + 1, values))
    return rows


def _number(name, value, file, row):
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise bad_value(name, "a number", value, file=file, column=name, row=row)
    try:
        number = float(value)
    except ValueError:
        raise bad_value(name, "a number", value, file=file, column=name, row=row) from None
    if not math.isfinite(number):
        raise bad_value(name, "a finite number", value, file=file, column=name, row=row)
    return number


def _flag(name, value, file, row):
    """true/false, yes/no, 1/0 (any case) or a JSON boolean."""
    if isinstance(value, bool):
        return value
    text = str(value).strip().lower()
    if text in ("true", "yes", "1"):
        return True
    if text in ("false", "no", "0"):
        return False
    raise bad_value(name, "true or false", value, file=file, column=name, row=row)


def _item_from_row(values: dict, base: Path, file: str, row: int) -> BatchItem:
    origin = where(file, row=row)[:-2]
    ident = values.get("id")
    if isinstance(ident, (int, float)) and not isinstance(ident, bool):
        ident = str(ident)  # JSON ids written as numbers
    if not isinstance(ident, str):
        raise DataError(f"{where(file, 'id', row)}id must be a non-empty name; got {ident!r}")
    ident = ident.strip()
    _check_id(ident, where(file, "id", row)[:-2])
    raw = values.get("path")
    raw = [raw] if isinstance(raw, str) else raw
    if (not isinstance(raw, list) or not raw
            or not all(isinstance(r, str) and r.strip() for r in raw)):
        raise bad_value("path", "a file or folder (or, in JSON Lines, a list of files)",
                        values.get("path"), file=file, column="path", row=row)
    paths = tuple(q if q.is_absolute() else base / q
                  for q in (Path(r.strip()).expanduser() for r in raw))
    options = {}
    for name, kind in OPTION_COLUMNS.items():
        value = values.get(name)
        if value is None or (isinstance(value, str) and not value.strip()):
            continue
        if kind is float:
            options[name] = _number(name, value, file, row)
        elif kind is bool:
            options[name] = _flag(name, value, file, row)
        elif not isinstance(value, str):
            raise bad_value(name, "a text value", value, file=file, column=name, row=row)
        else:
            options[name] = value.strip()
    try:
        build_options = BuildOptions(**options)
    except DataError as exc:
        raise DataError(f"{origin} (id {ident!r}): {exc}") from None
    kind = values.get("modulus_kind")
    kind = kind.strip() if isinstance(kind, str) and kind.strip() else (None if kind in ("", None)
                                                                         else kind)
    if kind not in (None, "tensile", "shear"):
        raise bad_value("modulus_kind", "tensile, shear or empty", kind, file=file,
                        column="modulus_kind", row=row)
    return BatchItem(ident, paths, build_options, kind, origin)


def _read_folder(folder: Path) -> list:
    from .io.readers import TABLE_SUFFIXES

    items = []
    for q in sorted(folder.iterdir(), key=lambda q: q.name):
        if q.name.startswith((".", "~$")):
            continue
        if q.is_dir():
            if any((q / n).exists() for n in (*RESULT_FILES, "summary.json", ".ttsp-output")):
                continue  # a batch's or a build's output, not a campaign
            ident = q.name
        elif q.suffix.lower() in TABLE_SUFFIXES:
            ident = q.stem
        else:
            continue
        items.append(BatchItem(ident, (q,), BuildOptions(), None, f"{folder}, entry {q.name!r}"))
    if not items:
        raise DataError(f"{folder}: the folder holds no campaigns (table files or sub-folders)")
    _check_unique(items)
    return items


def _check_unique(items) -> None:
    seen = {}
    for item in items:
        key = item.id.casefold()
        if key in seen:
            first = seen[key]
            same = "repeats" if first.id == item.id else "differs only in letter case from"
            raise DataError(f"{_prefix(item.origin)}id {item.id!r} {same} the id of "
                            f"{first.origin or repr(first.id)}; ids name output folders and must "
                            f"be unique")
        seen[key] = item


# ---- one campaign (runs in a worker) ------------------------------------------------------------
def _error_text(exc: BaseException) -> str:
    """One line saying what went wrong, as the command line would say it."""
    if isinstance(exc, TtspError):
        text = str(exc)
    elif isinstance(exc, OSError) and getattr(exc, "filename", None):
        text = f"{exc.filename}: {exc.strerror or exc}"
    elif hasattr(exc, "format_message"):
        text = exc.format_message()  # a usage error of the command-line framework
    else:
        text = f"internal error ({type(exc).__name__}: {exc}); please report it"
    lines = [ln.strip() for ln in str(text).splitlines() if ln.strip()]
    return lines[0] if lines else type(exc).__name__


def _failed_row(payload: dict, error: str, elapsed_s: float | None = None) -> dict:
    row = dict.fromkeys(_HEAD + _TAIL)
    row.update(id=payload["id"], status="failed", error=error, skipped=False,
               path=payload["path"], input_sha256=payload.get("input_sha256"),
               elapsed_s=elapsed_s)
    return row


#: law parameters that are absolute temperatures in K (summary.json); °C in the results table
_ABSOLUTE_TEMPERATURE_PARAMETERS = ("glass_transition_K", "T_inf_K")


def _row_from_summary(payload: dict, summary: dict, *, skipped: bool, elapsed_s: float) -> dict:
    """The results-table row of a finished build, from its ``summary.json``."""
    row = dict.fromkeys(_HEAD)
    row.update(id=payload["id"], status="ok", error="", skipped=skipped, path=payload["path"],
               input_sha256=summary.get("input_sha256"), domain=summary.get("domain"),
               modulus_kind=summary.get("modulus_kind"),
               isotherms=len(summary.get("shift_factors") or []),
               reference_temperature_C=summary.get("reference_temperature_C"))
    law = summary.get("shift_law") or {}
    row["law_model"] = law.get("model")
    stderr = law.get("parameter_stderr") or {}
    for name, value in (law.get("parameters") or {}).items():
        se = stderr.get(name)
        if name in _ABSOLUTE_TEMPERATURE_PARAMETERS and isinstance(value, (int, float)):
            # one temperature unit in the table: absolute temperatures in °C (a stderr, a
            # difference, is the same in K and °C); C2_K and B_K are differences and stay K
            name, value = name[:-2] + "_C", value - 273.15
        row[f"law_{name}"] = value
        row[f"law_{name}_stderr"] = se
    prony = summary.get("prony") or {}
    checks = summary.get("checks") or []
    statuses = [c.get("status") for c in checks]
    master = summary.get("master_model") or {}
    cv = summary.get("cross_validation") or {}
    row.update(
        prony_terms=len(prony.get("terms") or []),
        prony_rms_percent=prony.get("fit_rms_percent"),
        master_curve=master.get("chosen"),
        collapse_ratio=master.get("collapse_ratio"),
        cv_median_rms_percent_at_law_aT=cv.get("median_rms_percent_at_law_aT"),
        cv_worst_rms_percent_at_law_aT=cv.get("worst_rms_percent_at_law_aT"),
        cv_median_rms_percent_at_best_aT=cv.get("median_rms_percent_at_best_aT"),
        checks_worst=max(statuses, key=lambda s: _CHECK_ORDER.get(s, -1)) if statuses else None,
        checks_failed=";".join(c["name"] for c in checks if c.get("status") == "fail"),
        checks_warned=";".join(c["name"] for c in checks if c.get("status") == "warn"),
        warnings=len(summary.get("warnings") or []),
        elapsed_s=elapsed_s)
    return row


def _build_one(payload: dict) -> dict:
    """Build one campaign into its output folder; return its results row. Never raises."""
    t0 = time.perf_counter()
    try:
        from .runner import run_build

        # an earlier build of this campaign (and only that) may be replaced
        replace = payload["force"] or (Path(payload["out"]) / "summary.json").is_file()
        # the batch is parallel across campaigns already: no extra drawing process per build
        extra = ({"parallel_figures": False}
                 if "parallel_figures" in inspect.signature(run_build).parameters else {})
        _, folder = run_build([Path(p) for p in payload["paths"]],
                              BuildOptions(**payload["options"]), Path(payload["out"]),
                              figures=payload["figures"], force=replace, quiet=True,
                              modulus_kind=payload["modulus_kind"], **extra)
        summary = json.loads((Path(folder) / "summary.json").read_text(encoding="utf-8"))
        return _row_from_summary(payload, summary, skipped=False,
                                 elapsed_s=time.perf_counter() - t0)
    except Exception as exc:  # fault isolation: every failure becomes a row
        return _failed_row(payload, _error_text(exc), time.perf_counter() - t0)


def _worker_init(batch_pid: int | None = None) -> None:
    """Workers leave Ctrl-C to the parent, which lets running builds finish and stops the rest;
    they end with the batch's main process ``batch_pid`` however it ends (``kill -9`` included):
    the kernel's parent-death signal (Linux) follows the fork server between them, a watch
    thread follows the main process itself."""
    from ._lifetime import end_with_parent, watch_process

    with contextlib.suppress(ValueError, OSError):
        signal.signal(signal.SIGINT, signal.SIG_IGN)
    end_with_parent()
    if batch_pid is not None:
        watch_process(batch_pid)


# ---- planning: what is done already -----------------------------------------------------------
def _jsonable(value):
    return json.loads(json.dumps(value))


def _reusable(item: BatchItem, folder: Path, sha: str, figures: bool):
    """The summary of a complete earlier build of the same input and options, else None."""
    from .io.writers import NUMBER_FILES

    try:
        summary = json.loads((folder / "summary.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(summary, dict) or (
            summary.get("input_sha256") != sha
            # options a build of an earlier version did not record have their defaults
            or not isinstance(summary.get("options"), dict)
            or {**_jsonable(BuildOptions().to_dict()), **summary["options"]}
            != _jsonable(item.options.to_dict())
            or summary.get("tool_version") != __version__
            or item.modulus_kind not in (None, summary.get("modulus_kind"))):
        return None
    wanted = NUMBER_FILES + (("report.html",) if figures else ())
    if not all((folder / name).is_file() for name in wanted):
        return None
    return summary


# ---- the results table ------------------------------------------------------------------------
def _columns(rows) -> list:
    """Fixed columns first, then the law parameters (sorted, each beside its stderr), then the
    tail, then anything else; the same order whatever order the campaigns finish in."""
    keys = set().union(*rows) - set(_HEAD) - set(_TAIL)
    law = sorted(k for k in keys if k.startswith("law_"))
    return [*_HEAD, *law, *_TAIL, *sorted(keys - set(law))]


def _json_value(v):
    if isinstance(v, float) and not math.isfinite(v):
        return None
    if hasattr(v, "item") and not isinstance(v, (str, bytes)):
        return _json_value(v.item())
    return v


def _frame(rows, columns):
    import pandas as pd

    frame = pd.DataFrame([[row.get(c) for c in columns] for row in rows], columns=columns)
    for col in ("id", "status", "error", "path"):
        frame[col] = frame[col].astype(object)
    frame["error"] = frame["error"].fillna("")
    frame["skipped"] = frame["skipped"].fillna(False).astype(bool)
    for col in ("isotherms", "prony_terms", "warnings"):
        frame[col] = frame[col].astype("Int64")  # whole numbers, empty for failed campaigns
    return frame


def _csv_cell(value):
    """A CSV cell as the build's CSV writers write it: 10 significant digits, empty for none;
    text that a spreadsheet would run as a formula (an id, a path or a message quoting it)
    gets a leading ``'`` (:func:`ttsp.io.writers.neutralise_formula`)."""
    if value is None:
        return ""
    if isinstance(value, float):
        return f"{value:.10g}" if math.isfinite(value) else ""
    if isinstance(value, str):
        return neutralise_formula(value)
    return value


def _result_hashes(out: Path) -> dict:
    """SHA-256 of the results files now in ``out`` (checked to be ttsp's before the run)."""
    from .io.marker import file_sha256

    return {name: file_sha256(out / name) for name in RESULT_FILES if (out / name).is_file()}


class _Table:
    """Rows as they arrive; written atomically to results.jsonl and results.csv.

    Each row is formatted once (again only when a new column appears), so a rewrite costs little
    more than the file write. After each completion the files are rewritten, unless the last
    write took more than a twentieth of the time since (very large batches): then less often,
    and always at the end. Nothing is lost by that: finished campaigns are found from their
    output folders when a batch resumes.
    """

    def __init__(self, out: Path, order):
        self.out, self.order, self.rows = out, list(order), {}
        self._last_end, self._last_cost = 0.0, 0.0
        self._columns, self._lines, self._keys = None, {}, {}
        self._hashes = _result_hashes(out)

    def add(self, row: dict) -> None:
        self.rows[row["id"]] = row
        self._keys.update(dict.fromkeys(row))
        if time.perf_counter() - self._last_end >= 20 * self._last_cost:
            self.write()

    def ordered(self):
        return [self.rows[i] for i in self.order if i in self.rows]

    def _formatted(self, row, columns):
        cached = self._lines.get(row["id"])
        if cached is not None and cached[0] is row:
            return cached[1], cached[2]
        text = json.dumps({c: _json_value(row.get(c)) for c in columns}, ensure_ascii=False,
                          allow_nan=False) + "\n"
        buffer = io.StringIO()
        csv.writer(buffer, lineterminator="\n").writerow([_csv_cell(row.get(c)) for c in columns])
        self._lines[row["id"]] = (row, text, buffer.getvalue())
        return text, buffer.getvalue()

    def write(self) -> None:
        from .io.atomic import write_text_atomic
        from .io.marker import write_marker

        t0 = time.perf_counter()
        rows = self.ordered()
        columns = _columns([self._keys])
        if columns != self._columns:
            self._columns, self._lines = columns, {}
        header = io.StringIO()
        csv.writer(header, lineterminator="\n").writerow(columns)
        formatted = [self._formatted(r, columns) for r in rows]
        texts = {"results.jsonl": "".join(j for j, _ in formatted),
                 "results.csv": header.getvalue() + "".join(c for _, c in formatted)}
        # the marker first, vouching for the files as they are and as they are about to be,
        # so that a run killed between the writes still finds both to be its own
        new = {name: hashlib.sha256(text.encode("utf-8")).hexdigest()
               for name, text in texts.items()}
        write_marker(self.out, "batch", {name: list(dict.fromkeys(
            [h for h in (self._hashes.get(name), new[name]) if h])) for name in texts})
        for name, text in texts.items():
            write_text_atomic(self.out / name, text)
        self._hashes = new
        self._last_end = time.perf_counter()
        self._last_cost = self._last_end - t0

    def frame(self):
        return _frame(self.ordered(), _columns([self._keys]))


# ---- progress on stderr -----------------------------------------------------------------------
class _Reporter:
    """A progress bar (terminal) or one line per campaign (log files) on stderr; failures always
    get a line unless quiet."""

    def __init__(self, total: int, *, progress: bool, quiet: bool):
        self.total, self.done, self.failed = total, 0, 0
        self.to_build, self.built, self.t0 = 0, 0, None
        self.mode = None if quiet else ("lines" if progress else "failures")
        self._bar = None
        if self.mode == "lines" and sys.stderr.isatty():
            with contextlib.suppress(ImportError):
                from rich.console import Console
                from rich.progress import (BarColumn, MofNCompleteColumn, Progress, TextColumn,
                                           TimeElapsedColumn, TimeRemainingColumn)

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
        if self.mode == "bar":
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


# ---- running the work -------------------------------------------------------------------------
@contextlib.contextmanager
def _single_threaded_blas():
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
    import multiprocessing as mp

    if "forkserver" in mp.get_all_start_methods():
        ctx = mp.get_context("forkserver")
        ctx.set_forkserver_preload(list(_PRELOAD))
        return ctx
    return mp.get_context()


def _run_local(payloads, workers: int, task, on_done) -> None:
    """Run the payloads in a process pool; a broken pool is replaced and its suspects isolated."""
    import concurrent.futures as cf
    from concurrent.futures.process import BrokenProcessPool

    ctx = _mp_context()
    queue = deque(payloads)

    def settle(fut, payload, suspects) -> None:
        exc = fut.exception()
        if exc is None:
            on_done(fut.result())
        elif isinstance(exc, BrokenProcessPool):
            suspects.append(payload)
        else:  # e.g. a result that could not be sent back
            on_done(_failed_row(payload, _error_text(exc)))

    while queue:
        pool = cf.ProcessPoolExecutor(max_workers=max(1, min(workers, len(queue))),
                                      mp_context=ctx, initializer=_worker_init,
                                      initargs=(os.getpid(),))
        inflight, suspects, broken = {}, [], False
        try:
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
                    settle(fut, inflight.pop(fut), suspects)
            # a broken pool resolves every future it holds: collect them all
            for fut in cf.wait(inflight).done:
                settle(fut, inflight.pop(fut), suspects)
        except BaseException as exc:  # Ctrl-C: let running builds finish, record them, stop
            if isinstance(exc, Terminated):  # the rest; SIGTERM: stop every worker now
                _stop_workers(pool)
            else:   # said at once: the running builds may take a while
                running = min(workers, sum(1 for f in inflight if f.running()))
                print(f"ttsp batch: interrupted: finishing {running} running, then stopping "
                      f"(the rest stays to do: run the same command again to resume)",
                      file=sys.stderr, flush=True)
            pool.shutdown(wait=True, cancel_futures=True)
            for fut, payload in inflight.items():
                if fut.done() and not fut.cancelled() and fut.exception() is None:
                    on_done(fut.result())
            raise
        pool.shutdown(wait=True, cancel_futures=True)
        for payload in suspects:  # one at a time, so that a crash names its campaign
            on_done(_run_isolated(payload, task, ctx))


def _stop_workers(pool) -> None:
    """Kill the worker processes of a pool (their unfinished builds leave hidden temporary
    folders, which the next run removes)."""
    for process in list((getattr(pool, "_processes", None) or {}).values()):
        with contextlib.suppress(OSError, AttributeError, ValueError):
            process.kill()


def _run_isolated(payload: dict, task, ctx) -> dict:
    import concurrent.futures as cf
    from concurrent.futures.process import BrokenProcessPool

    t0 = time.perf_counter()
    with cf.ProcessPoolExecutor(max_workers=1, mp_context=ctx, initializer=_worker_init,
                                initargs=(os.getpid(),)) as pool:
        try:
            return pool.submit(task, payload).result()
        except Terminated:
            _stop_workers(pool)
            raise
        except BrokenProcessPool:
            return _failed_row(payload, "the worker process died while building this campaign "
                                        "(a crash or the memory limit); the batch went on",
                               time.perf_counter() - t0)
        except Exception as exc:
            return _failed_row(payload, _error_text(exc), time.perf_counter() - t0)


def _dask_client(scheduler, client):
    try:
        import distributed
    except ImportError:
        raise DataError("running on a Dask cluster needs the optional extra: "
                        "pip install 'ttsp[dask]' (dask[distributed])") from None
    if client is not None:
        return distributed, client, False
    try:
        return distributed, distributed.Client(scheduler, timeout="30s"), True
    except (OSError, TimeoutError) as exc:
        raise DataError(f"cannot reach the Dask scheduler at {scheduler!r}: {exc}") from None


def _run_dask(payloads, scheduler, client, task, on_done) -> None:
    """Submit every payload to a Dask cluster (workers need ttsp and the same file system)."""
    distributed, client, own = _dask_client(scheduler, client)
    token = uuid.uuid4().hex[:12]
    futures = {}
    try:
        for i, payload in enumerate(payloads):
            fut = client.submit(task, payload, key=f"ttsp-batch-{token}-{i}", pure=False)
            futures[fut] = payload
        for fut in distributed.as_completed(list(futures)):
            payload = futures[fut]
            try:
                row = fut.result()
            except Exception as exc:  # KilledWorker (the worker died) and the like
                row = _failed_row(payload, f"the Dask worker failed: {type(exc).__name__}: "
                                           f"{_error_text(exc)}")
            on_done(row)
    except BaseException:
        with contextlib.suppress(Exception):
            client.cancel(list(futures))
        raise
    finally:
        if own:
            with contextlib.suppress(Exception):
                client.close()


def _default_workers() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def run_batch(manifest, out_dir, *, workers: int | None = None, figures: bool = False,
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
        One row per campaign in manifest order; the columns are listed in the module docstring.
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
    if isinstance(manifest, (str, os.PathLike)):
        source = Path(manifest)
        items = read_manifest(source)
    else:
        source = None
        items = list(manifest)
        if not items or not all(isinstance(i, BatchItem) for i in items):
            raise bad_value("manifest", "a manifest path, a folder, or a non-empty sequence of "
                                        "BatchItem", type(manifest).__name__)
        _check_unique(items)
    if workers is not None and (isinstance(workers, bool) or not isinstance(workers, int)
                                or workers < 1):
        raise bad_value("workers", "a whole number >= 1", workers)
    if scheduler is not None and client is not None:
        raise DataError("give either scheduler (an address) or client (a Dask client), not both")
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise DataError(f"{out}: exists and is not a folder")
    if source is not None and source.is_dir():
        if out.resolve() == source.resolve():
            raise DataError(f"{out}: the output folder must not be the folder of campaigns "
                            f"itself; choose another, such as {source / 'out'}")
        items = [i for i in items if i.paths[0].resolve() != out.resolve()]
    out.mkdir(parents=True, exist_ok=True)
    try:
        with sigterm_raises(), _batch_lock(out):
            _check_results_files(out)
            _tidy(out)
            return _run_items(items, out, workers=workers, figures=figures, force=force,
                              scheduler=scheduler, client=client, progress=progress, quiet=quiet,
                              task=_task or _build_one)
    except Terminated:
        raise Terminated(f"terminated (SIGTERM); the campaigns finished so far are in "
                         f"{out / 'results.csv'}: run the same command again to resume") from None


def _batch_lock(out: Path):
    """The lock of a batch folder: a ``.ttsp-lock`` file inside it (the batch writes there
    anyway; the folder above may not be writable, as when ``--out .`` is the home folder)."""
    from .io.renames import folder_lock

    return folder_lock(out.resolve(), out, lock_file=out / ".ttsp-lock")


def _check_results_files(out: Path) -> None:
    """Refuse a batch folder whose results table ttsp did not write (or that was changed since):
    it is the user's, and the batch would overwrite it."""
    from .io.atomic import output_kind
    from .io.marker import file_sha256, read_marker

    kind = output_kind(out)
    if kind not in (None, "batch"):
        raise DataError(f"{out}: is the output folder of a ttsp {kind}, not of a batch; choose "
                        f"another --out")
    listed = (read_marker(out) or {}).get("files", {})
    for name in RESULT_FILES:
        path = out / name
        if os.path.lexists(path) and (not path.is_file() or path.is_symlink() or not isinstance(
                listed.get(name), list) or file_sha256(path) not in listed[name]):
            raise DataError(f"{path}: exists and is not a results table that ttsp batch wrote "
                            f"(or it was changed since); ttsp will not overwrite it: move it or "
                            f"choose another --out")


def _tidy(out: Path) -> None:
    """Remove what killed runs of this batch left in its folder (the caller holds its lock):
    the hidden temporary folders and lock files of killed builds (their previous outputs
    recovered), and half-written copies of the results table and of the marker."""
    from .io.atomic import tidy_leftovers
    from .io.marker import MARKER

    tidy_leftovers(out)
    for name in (*RESULT_FILES, MARKER):   # write_text_atomic's temporary copies
        for stale in out.glob(f".{name}.*"):
            with contextlib.suppress(OSError):
                stale.unlink()


def _run_items(items, out: Path, *, workers, figures, force, scheduler, client, progress, quiet,
               task):
    """Plan (reuse what is done) and run the campaigns of a batch; the caller holds the lock."""
    from .io.readers import hash_inputs

    table = _Table(out, [i.id for i in items])
    reporter = _Reporter(len(items), progress=progress, quiet=quiet)

    def on_done(row):
        table.add(row)
        reporter.advance(row)

    try:
        pending, finished = [], []   # finished: reported after the start line
        for item in items:
            folder = out / item.id
            t0 = time.perf_counter()
            payload = {"id": item.id, "path": ";".join(str(p) for p in item.paths),
                       "paths": [str(p.resolve()) for p in item.paths],
                       "options": item.options.to_dict(), "modulus_kind": item.modulus_kind,
                       "out": str(folder.resolve()), "figures": bool(figures),
                       "force": bool(force),
                       "input_sha256": None}
            try:
                payload["input_sha256"] = sha = hash_inputs(item.paths)
            except Exception as exc:  # a missing or unreadable input: this campaign fails
                finished.append(_failed_row(payload, _error_text(exc), time.perf_counter() - t0))
                continue
            summary = None if force else _reusable(item, folder, sha, figures)
            if summary is not None:
                finished.append(_row_from_summary(payload, summary, skipped=True,
                                                  elapsed_s=time.perf_counter() - t0))
            else:
                pending.append(payload)
        dask = scheduler is not None or client is not None
        unreadable = sum(row["status"] != "ok" for row in finished)
        reporter.start(len(finished) - unreadable, unreadable, len(pending),
                       "a Dask cluster" if dask else (workers or _default_workers()))
        for row in finished:
            on_done(row)
        if pending and dask:
            _run_dask(pending, scheduler, client, task, on_done)
        elif pending:
            with _single_threaded_blas():
                _run_local(pending, workers or _default_workers(), task, on_done)
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
