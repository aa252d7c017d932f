"""The batch folder: locked for the run, refused when its results table is not one ttsp wrote,
and cleared of what killed runs left in it.

Layer 5 (a shell); the mechanisms are those of every output folder (:mod:`ttsp.io.atomic`,
:mod:`ttsp.io.marker`, :mod:`ttsp.io.renames`).
"""

from __future__ import annotations

import contextlib
import os
from pathlib import Path

from ..exceptions import DataError
from ..io.atomic import output_kind, tidy_leftovers
from ..io.marker import MARKER, file_sha256, read_marker
from ..io.renames import folder_lock
from .results_table import RESULT_FILES

__all__ = ["batch_lock", "check_results_files", "tidy"]


def batch_lock(out: Path):
    """The lock of a batch folder: a ``.ttsp-lock`` file inside it (the batch writes there
    anyway; the folder above may not be writable, as when ``--out .`` is the home folder)."""
    return folder_lock(out.resolve(), out, lock_file=out / ".ttsp-lock")


def check_results_files(out: Path) -> None:
    """Refuse a batch folder whose results table ttsp did not write (or that was changed since):
    it is the user's, and the batch would overwrite it."""
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


def tidy(out: Path) -> None:
    """Remove what killed runs of this batch left in its folder (the caller holds its lock):
    the hidden temporary folders and lock files of killed builds (their previous outputs
    recovered), and half-written copies of the results table and of the marker."""
    tidy_leftovers(out)
    for name in (*RESULT_FILES, MARKER):   # write_text_atomic's temporary copies
        for stale in out.glob(f".{name}.*"):
            with contextlib.suppress(OSError):
                stale.unlink()
