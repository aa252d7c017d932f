"""The results table of a batch: its rows as campaigns finish, written atomically to
``results.jsonl`` and ``results.csv`` (text cells that a spreadsheet would run as formulas
neutralised), and returned as a pandas frame.

Layer 5 (a shell). The columns are listed in the package docstring (:mod:`ttsp.batch`).
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import math
import time
from pathlib import Path

from ..io.atomic import write_text_atomic
from ..io.marker import file_sha256, write_marker
from ..io.writers import neutralise_formula
from .rows import HEAD_COLUMNS, TAIL_COLUMNS

__all__ = ["RESULT_FILES", "ResultsTable", "result_hashes"]

RESULT_FILES = ("results.jsonl", "results.csv")


def _columns(rows) -> list:
    """Fixed columns first, then the law parameters (sorted, each beside its stderr), then the
    tail, then anything else; the same order whatever order the campaigns finish in."""
    keys = set().union(*rows) - set(HEAD_COLUMNS) - set(TAIL_COLUMNS)
    law = sorted(k for k in keys if k.startswith("law_"))
    return [*HEAD_COLUMNS, *law, *TAIL_COLUMNS, *sorted(keys - set(law))]


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


def result_hashes(out: Path) -> dict:
    """SHA-256 of the results files now in ``out`` (checked to be ttsp's before the run)."""
    return {name: file_sha256(out / name) for name in RESULT_FILES if (out / name).is_file()}


class ResultsTable:
    """Rows as they arrive; written atomically to results.jsonl and results.csv.

    Each row is formatted once (again only when a new column appears), so a rewrite costs little
    more than the file write. After each completion the files are rewritten, unless the last
    write took more than a twentieth of the time since (very large batches): then less often,
    and always at the end. Nothing is lost by that: finished campaigns are found from their
    output folders when a batch resumes.

    Parameters
    ----------
    out : pathlib.Path
        The batch folder (its results files were checked to be ttsp's).
    order : sequence of str
        The campaign ids in manifest order: the order of the rows.
    """

    def __init__(self, out: Path, order):
        self.out, self.order = out, list(order)
        self.rows: dict[str, dict] = {}
        self._last_end, self._last_cost = 0.0, 0.0
        self._columns: list[str] | None = None
        self._lines: dict[str, tuple[dict, str, str]] = {}   # id -> (row, JSON line, CSV line)
        self._keys: dict[str, None] = {}   # every column name seen, in order
        self._hashes = result_hashes(out)

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

    def _texts(self) -> dict:
        """The whole text of each results file, from the rows so far."""
        columns = _columns([self._keys])
        if columns != self._columns:
            self._columns, self._lines = columns, {}
        header = io.StringIO()
        csv.writer(header, lineterminator="\n").writerow(columns)
        formatted = [self._formatted(r, columns) for r in self.ordered()]
        return {"results.jsonl": "".join(j for j, _ in formatted),
                "results.csv": header.getvalue() + "".join(c for _, c in formatted)}

    def write(self) -> None:
        t0 = time.perf_counter()
        texts = self._texts()
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
        """The table as a pandas DataFrame, one row per finished campaign in manifest order."""
        return _frame(self.ordered(), _columns([self._keys]))
