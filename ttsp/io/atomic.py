"""Output folders that appear whole or not at all.

Everything is written into a hidden temporary folder beside the destination; only when the run
completes is it renamed into place (a rename within one file system is atomic on POSIX). A run
killed part-way leaves the previous complete folder, or none, plus at most a hidden
``.ttsp-tmp-*`` folder that the next run removes.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
from pathlib import Path

from ..exceptions import DataError

__all__ = ["atomic_output_dir", "write_text_atomic"]

_PREFIX = ".ttsp-tmp-"


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


@contextlib.contextmanager
def atomic_output_dir(destination, *, force: bool = False, protect=()):
    """Yield a temporary folder; on success move it to ``destination``.

    Parameters
    ----------
    destination : path
        The output folder to create.
    force : bool
        Replace an existing ``destination``. Without it an existing non-empty folder is an error.
    protect : iterable of paths
        Input files; a destination that contains any of them is refused, so inputs are never
        replaced or removed.
    """
    dest = Path(destination).resolve()
    for p in protect:
        p = Path(p).resolve()
        if p == dest or dest in p.parents:
            raise DataError(f"{destination}: the output folder must not contain the input {p.name}")
    if dest.exists() and not dest.is_dir():
        raise DataError(f"{destination}: exists and is not a folder")
    if dest.exists() and any(dest.iterdir()) and not force:
        raise DataError(f"{destination}: the output folder exists; use --force to replace it")
    dest.parent.mkdir(parents=True, exist_ok=True)
    for stale in dest.parent.glob(f"{_PREFIX}{dest.name}-*"):
        shutil.rmtree(stale, ignore_errors=True)
    tmp = Path(tempfile.mkdtemp(prefix=f"{_PREFIX}{dest.name}-", dir=dest.parent))
    os.chmod(tmp, 0o777 & ~_umask())  # mkdtemp makes 0700; give the folder the usual mode
    try:
        yield tmp
        if dest.exists():
            old = Path(tempfile.mkdtemp(prefix=f"{_PREFIX}{dest.name}-old-", dir=dest.parent))
            os.rename(dest, old / "previous")
            os.rename(tmp, dest)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.rename(tmp, dest)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise


def write_text_atomic(path, text: str) -> None:
    """Write a text file through a temporary file and a rename, so readers never see half of it."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
        os.chmod(tmp, 0o666 & ~_umask())  # mkstemp makes 0600; give the file the usual mode
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise
