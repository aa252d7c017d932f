"""Folder renames that never replace what they should not, and a lock per output folder.

On Linux (glibc 2.28 or later, and a file system that supports it) ``renameat2`` renames without
replacing (``RENAME_NOREPLACE``) and swaps two paths in one step (``RENAME_EXCHANGE``), so that
the old or the new output folder is in place at every instant. Elsewhere the fallbacks are a
check followed by ``os.rename`` (which never replaces a non-empty folder on POSIX) and two
renames, whose half-done state :func:`ttsp.io.atomic.atomic_output_dir` recovers at the next
run.
"""

from __future__ import annotations

import contextlib
import ctypes
import errno
import os
from collections.abc import Callable
from pathlib import Path

from .._lifetime import process_alive
from ..exceptions import DataError

__all__ = ["rename_noreplace", "exchange", "folder_lock", "lock_path"]

_AT_FDCWD = -100
_RENAME_NOREPLACE = 1
_RENAME_EXCHANGE = 2
_UNSUPPORTED = {errno.EINVAL, errno.ENOSYS, errno.EOPNOTSUPP, errno.ENOTSUP}
_renameat2: Callable[..., int] | bool | None = None


def _libc_renameat2():
    """The C library's renameat2, or False where there is none."""
    global _renameat2
    if _renameat2 is None:
        _renameat2 = False
        try:
            func = ctypes.CDLL(None, use_errno=True).renameat2
            func.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p,
                             ctypes.c_uint]
            func.restype = ctypes.c_int
            _renameat2 = func
        except (OSError, AttributeError, ImportError):
            pass
    return _renameat2


def _call_renameat2(src, dst, flags) -> bool:
    """True when done, False when renameat2 or this flag is not available; raises OSError."""
    func = _libc_renameat2()
    if not func:
        return False
    if func(_AT_FDCWD, os.fsencode(src), _AT_FDCWD, os.fsencode(dst), flags) == 0:
        return True
    err = ctypes.get_errno()
    if err in _UNSUPPORTED:
        return False
    raise OSError(err, os.strerror(err), str(src), None, str(dst))


def rename_noreplace(src: str | Path, dst: str | Path) -> None:
    """Rename ``src`` to ``dst``, which must not exist (``FileExistsError`` if it does).

    With renameat2 the check and the rename are one step; without it a path that appears in
    between is still never replaced when it is a file or a non-empty folder (os.rename refuses),
    only an empty folder could be.
    """
    if _call_renameat2(src, dst, _RENAME_NOREPLACE):
        return
    if os.path.lexists(dst):
        raise FileExistsError(errno.EEXIST, os.strerror(errno.EEXIST), str(dst))
    os.rename(src, dst)


def exchange(a: str | Path, b: str | Path) -> bool:
    """Swap two paths in one step; False (nothing done) where the system cannot."""
    return _call_renameat2(a, b, _RENAME_EXCHANGE)


def lock_path(destination: str | Path) -> Path:
    """The lock file of an output folder: ``.ttsp-lock-<name>`` beside it."""
    dest = Path(destination)
    return dest.parent / f".ttsp-lock-{dest.name}"


@contextlib.contextmanager
def folder_lock(destination: str | Path, shown: str | Path | None = None,
                lock_file: str | Path | None = None):
    """Hold an exclusive lock on the output folder ``destination`` (not the folder itself: a lock
    file beside it, or ``lock_file``) for the duration of the block; a second ttsp run into the
    same folder fails at once with a :class:`DataError` naming the process that holds it.

    The lock is an ``flock`` (the kernel releases it when its process dies, so a killed run never
    leaves the folder locked); the lock file is removed on leaving, and a leftover of a killed
    run is taken over and removed by the next one. Where there is no ``fcntl`` (Windows) the
    lock file is created exclusively instead, holding the process id.
    """
    path = Path(lock_file) if lock_file is not None else lock_path(destination)
    shown = shown if shown is not None else destination
    try:
        import fcntl
    except ImportError:  # pragma: no cover - not POSIX
        fcntl = None  # type: ignore[assignment]  # the module is absent there
    if fcntl is None:  # pragma: no cover
        yield from _exclusive_file_lock(path, shown)
        return
    while True:
        fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o644)
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            holder = os.read(fd, 32).decode("ascii", "replace").strip() or "unknown"
            os.close(fd)
            raise DataError(f"{shown}: another ttsp run (process {holder}) is writing this output "
                            f"folder; wait for it to end or choose another --out") from None
        try:  # the file we locked may have been removed by the holder just before: retry
            same = os.fstat(fd).st_ino == os.stat(path).st_ino
        except FileNotFoundError:
            same = False
        if same:
            break
        os.close(fd)
    try:
        os.ftruncate(fd, 0)
        os.write(fd, str(os.getpid()).encode("ascii"))
        yield path
    finally:
        with contextlib.suppress(OSError):
            os.unlink(path)  # while still locked: a waiting run then retries on a fresh file
        os.close(fd)


def _exclusive_file_lock(path: Path, shown):  # pragma: no cover - not POSIX
    try:
        fd = os.open(path, os.O_RDWR | os.O_CREAT | os.O_EXCL, 0o644)
    except FileExistsError:
        holder = path.read_text(encoding="ascii", errors="replace").strip()
        if holder.isdigit() and not process_alive(int(holder)):
            path.unlink()
            fd = os.open(path, os.O_RDWR | os.O_CREAT | os.O_EXCL, 0o644)
        else:
            raise DataError(f"{shown}: another ttsp run (process {holder or 'unknown'}) is "
                            f"writing this output folder; wait for it to end or choose another "
                            f"--out") from None
    try:
        os.write(fd, str(os.getpid()).encode("ascii"))
        yield path
    finally:
        os.close(fd)
        with contextlib.suppress(OSError):
            os.unlink(path)
    return True
