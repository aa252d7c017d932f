"""Output folders that appear whole or not at all.

Everything is written into a hidden temporary folder beside the destination; only when the run
completes is it renamed into place (a rename within one file system is atomic on POSIX). A run
killed part-way leaves the previous complete folder, or none, plus at most a hidden
``.ttsp-tmp-*`` folder that the next run into the same destination removes.

A temporary folder is named ``.ttsp-tmp-<destination>.<process id>.<random>``: a later run
removes only the folders of its own destination whose process is gone, never those of a build
still running into it or into another destination (``out1`` and ``out10`` of one batch).
"""

from __future__ import annotations

import contextlib
import os
import re
import shutil
import tempfile
from pathlib import Path

from ..exceptions import DataError

__all__ = ["atomic_output_dir", "write_text_atomic", "scratch_dir"]

_PREFIX = ".ttsp-tmp-"


def _tmp_prefix(dest: Path) -> str:
    return f"{_PREFIX}{dest.name}.{os.getpid()}."


def _process_alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OSError):
        return True  # someone else's live process, or it cannot be told: leave its folder
    return True


def _remove_stale(dest: Path) -> None:
    """Remove temporary folders of earlier runs into ``dest`` whose process has ended."""
    own = re.compile(re.escape(f"{_PREFIX}{dest.name}.") + r"(\d+)\.[^.]+$")
    for stale in dest.parent.glob(f"{_PREFIX}*"):
        m = own.match(stale.name)
        if m and not _process_alive(int(m.group(1))):
            shutil.rmtree(stale, ignore_errors=True)


def scratch_dir(destination) -> Path:
    """A private temporary folder beside ``destination``, named like the output's own temporary
    folders, so that a later run removes it if this process is killed before it does."""
    dest = Path(destination).resolve()
    dest.parent.mkdir(parents=True, exist_ok=True)
    return Path(tempfile.mkdtemp(prefix=_tmp_prefix(dest), dir=dest.parent))


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
    _remove_stale(dest)
    tmp = Path(tempfile.mkdtemp(prefix=_tmp_prefix(dest), dir=dest.parent))
    os.chmod(tmp, 0o777 & ~_umask())  # mkdtemp makes 0700; give the folder the usual mode
    try:
        yield tmp
        if dest.exists():
            old = Path(tempfile.mkdtemp(prefix=_tmp_prefix(dest), dir=dest.parent))
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
