"""Output folders that appear whole or not at all, and never at the expense of the user's files.

The rules, in the order :func:`atomic_output_dir` applies them:

1. **A lock.** One ttsp run at a time writes an output folder (:func:`ttsp.io.renames.folder_lock`
   on a ``.ttsp-lock-<name>`` file beside it); a second run fails at once, naming the first.
2. **What may be replaced.** A missing or empty folder may be written. An existing one only with
   ``force``, and even then only when it is a ttsp output that holds nothing but what ttsp wrote
   (its ``.ttsp-output`` marker lists every file and its hash, :mod:`ttsp.io.marker`); never the
   current folder, a folder holding it, the home folder or the root.
3. **A hidden temporary folder.** Everything is written into ``.ttsp-tmp-<name>.<pid>.<random>``
   beside the destination, and the marker last.
4. **A re-check and one-step rename.** Right before the rename the destination is examined again:
   a folder that appeared meanwhile, or a file added to the old output, stops the run and is left
   as it is. The new folder then takes the place of the old one in one step (``renameat2`` with
   ``RENAME_EXCHANGE``; or, on a missing destination, ``RENAME_NOREPLACE``), so the old or the
   new output is in place at every instant. Where the system cannot swap, the old folder is
   first renamed to ``.ttsp-old-<name>.<pid>.<random>`` and the new one renamed in.

A run killed part-way leaves the previous complete folder (or none), at most one hidden
``.ttsp-tmp-*`` folder (or, killed between the two renames of the fallback, a ``.ttsp-old-*``
one instead), and an empty ``.ttsp-lock-*`` file. The next run into the same destination removes
the temporary folder of a process that has ended, renames a ``.ttsp-old-*`` folder back when
its destination is missing (and removes it when the new output is in place), and takes over the
lock file. A left-over folder that holds anything ttsp did not write is never removed: it is
renamed ``<name>.kept-by-ttsp-<pid>``, visible, beside the destination. It never touches the temporary folders of a live run, nor those of other
destinations (``out1`` and ``out10`` of one batch).
"""

from __future__ import annotations

import contextlib
import os
import re
import shutil
import tempfile
from pathlib import Path

from ..exceptions import DataError
from .marker import MARKER, protected_place, read_marker, why_not_replaceable, write_marker
from .renames import exchange, folder_lock, rename_noreplace

__all__ = ["atomic_output_dir", "write_text_atomic", "scratch_dir"]

_PREFIX = ".ttsp-tmp-"
_OLD_PREFIX = ".ttsp-old-"


def _tmp_prefix(dest: Path, prefix: str = _PREFIX) -> str:
    return f"{prefix}{dest.name}.{os.getpid()}."


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


def _leftovers(dest: Path, prefix: str):
    """Hidden folders of ended runs into ``dest`` with this prefix."""
    own = re.compile(re.escape(f"{prefix}{dest.name}.") + r"(\d+)\.[^.]+$")
    for stale in dest.parent.glob(f"{prefix}*"):
        m = own.match(stale.name)
        if m and not _process_alive(int(m.group(1))):
            yield stale


def _recover(dest: Path, kinds) -> None:
    """Tidy the leftovers of killed runs into ``dest`` (called under its lock).

    A ``.ttsp-old-*`` folder is a previous output moved aside by a run killed before it renamed
    the new one in: it goes back when ``dest`` is missing. When ``dest`` is in place it is
    removed if it still holds only what ttsp wrote; otherwise it is kept, visible, beside
    ``dest`` (``<name>.kept-by-ttsp-<pid>``), so nothing the user put there is lost.
    """
    for old in _leftovers(dest, _OLD_PREFIX):
        if not os.path.lexists(dest):
            with contextlib.suppress(OSError):   # failing, it stays where it is
                rename_noreplace(old, dest)
            continue
        _remove_or_keep(old, dest, kinds)
    for stale in _leftovers(dest, _PREFIX):
        if read_marker(stale) is None:   # a new output cut short: all of it ttsp's
            shutil.rmtree(stale, ignore_errors=True)
        else:   # complete: a new one not yet renamed, or an old one swapped out
            _remove_or_keep(stale, dest, kinds)


def _remove_or_keep(folder: Path, dest: Path, kinds) -> None:
    """Remove a left-over output folder that holds only what ttsp wrote; rename one holding
    anything else to ``<name>.kept-by-ttsp-<pid>`` beside ``dest``, visible."""
    if why_not_replaceable(folder, kinds) is None:
        shutil.rmtree(folder, ignore_errors=True)
        return
    pid = folder.name.split(".")[-2]
    with contextlib.suppress(OSError):
        rename_noreplace(folder, dest.parent / f"{dest.name}.kept-by-ttsp-{pid}")


_LEFTOVER = re.compile(r"^\.ttsp-(?:(?:tmp|old)-(.+)\.\d+\.[^.]+|lock-(.+))$")


def tidy_leftovers(folder: str | Path, kinds=("build", "demo")) -> None:
    """Tidy what killed runs left in ``folder`` for any destination in it (a batch's folder):
    for each destination no live run holds, the recovery of :func:`atomic_output_dir`, and its
    stale lock file removed. Destinations a live run is writing are left alone."""
    folder = Path(folder)
    names = set()
    for entry in folder.glob(".ttsp-*"):
        m = _LEFTOVER.match(entry.name)
        if m:
            names.add(m.group(1) or m.group(2))
    for name in sorted(names):
        try:
            with folder_lock(folder.resolve() / name, folder / name):
                _recover(folder.resolve() / name, kinds)
        except DataError:   # a live run holds it
            continue


def scratch_dir(destination: str | Path) -> Path:
    """A private temporary folder beside ``destination``, named like the output's own temporary
    folders, so that a later run removes it if this process is killed before it does."""
    dest = Path(destination).resolve()
    dest.parent.mkdir(parents=True, exist_ok=True)
    return Path(tempfile.mkdtemp(prefix=_tmp_prefix(dest), dir=dest.parent))


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _is_empty_dir(path: Path) -> bool:
    try:
        with os.scandir(path) as entries:
            return next(entries, None) is None
    except (NotADirectoryError, FileNotFoundError):
        return False


def _check_place(dest: Path, shown) -> None:
    """Refuse a file, and the places no output folder may take (see :func:`protected_place`)."""
    if os.path.lexists(dest) and not dest.is_dir():
        raise DataError(f"{shown}: exists and is not a folder")
    place = protected_place(dest)
    if place:
        raise DataError(f"{shown}: ttsp never writes an output folder here: {place}; "
                        f"choose another --out")


def _check_start(dest: Path, shown, force: bool, kinds, kind: str) -> None:
    """Refuse a destination that this run may not write, naming why (see the module rules)."""
    _check_place(dest, shown)
    if not dest.exists() or _is_empty_dir(dest):
        return
    why = why_not_replaceable(dest, kinds)
    if why is None and not force:
        raise DataError(f"{shown}: the output folder exists; use --force to replace it")
    if why is not None:
        even = " (not even with --force)" if kind == "build" else ""
        raise DataError(f"{shown}: the folder exists and ttsp will not replace it{even}: {why}; "
                        f"choose another --out")


def _state(dest: Path) -> str:
    """``"missing"``, ``"empty"`` (an empty folder) or ``"full"``."""
    if not os.path.lexists(dest):
        return "missing"
    return "empty" if _is_empty_dir(dest) else "full"


def _put_in_place(tmp: Path, dest: Path, shown, was: str, kinds) -> None:
    """The final step: re-check ``dest`` (``was`` what the start found there) and move ``tmp``
    there without losing anything."""
    changed = (f"{shown}: the folder changed while ttsp was writing (%s); it is left as it is "
               f"and the new output was discarded; run again")
    if not os.path.lexists(dest):
        try:
            rename_noreplace(tmp, dest)
            return
        except FileExistsError:
            raise DataError(changed % "it appeared meanwhile") from None
    if _is_empty_dir(dest):
        try:
            os.rename(tmp, dest)   # replaces an empty folder, refuses one that is not
            return
        except OSError:
            raise DataError(changed % "a file appeared in it") from None
    why = {"missing": "it appeared meanwhile", "empty": "a file appeared in it"}.get(was)
    why = why or why_not_replaceable(dest, kinds)
    if why is not None:
        raise DataError(changed % why)
    if exchange(tmp, dest):
        why = why_not_replaceable(tmp, kinds)   # the old folder, now at tmp
        if why is not None:   # the user added a file in the last instant: put it back
            exchange(tmp, dest)
            raise DataError(changed % why)
        shutil.rmtree(tmp, ignore_errors=True)
        return
    old = dest.parent / (_tmp_prefix(dest, _OLD_PREFIX) + os.urandom(4).hex())
    os.rename(dest, old)
    try:
        rename_noreplace(tmp, dest)
    except BaseException:
        with contextlib.suppress(OSError):
            rename_noreplace(old, dest)
        raise
    _remove_or_keep(old, dest, kinds)


@contextlib.contextmanager
def atomic_output_dir(destination: str | Path, *, force: bool = False, protect=(),
                      kind: str = "build", replaces=None):
    """Yield a temporary folder; on success move it to ``destination`` (see the module rules).

    Parameters
    ----------
    destination : path
        The output folder to create.
    force : bool
        Replace an existing ``destination`` that ttsp wrote and nobody changed since. Without it
        an existing non-empty folder is an error.
    protect : iterable of paths
        Input files; a destination that contains any of them is refused, so inputs are never
        replaced or removed.
    kind : str
        The kind written into the marker (``"build"`` or ``"demo"``).
    replaces : tuple of str, optional
        Marker kinds that ``force`` may replace (default: ``("build", "demo")``).

    Raises
    ------
    DataError
        A destination that is a file, a protected place, a folder that is not a ttsp output or
        holds files ttsp did not write, one that exists without ``force``, one that another run
        is writing, or one that changed while this run was writing (left as it is).
    """
    dest = Path(destination).resolve()
    kinds = tuple(replaces) if replaces is not None else ("build", "demo")
    for p in protect:
        p = Path(p).resolve()
        if p == dest or dest in p.parents:
            raise DataError(f"{destination}: the output folder must not contain the input {p.name}")
    _check_place(dest, destination)
    dest.parent.mkdir(parents=True, exist_ok=True)
    with folder_lock(dest, destination):
        _recover(dest, kinds)   # first: a killed replace may have left the old folder aside
        _check_start(dest, destination, force, kinds, kind)
        was = _state(dest)
        tmp = Path(tempfile.mkdtemp(prefix=_tmp_prefix(dest), dir=dest.parent))
        os.chmod(tmp, 0o777 & ~_umask())  # mkdtemp makes 0700; give the folder the usual mode
        try:
            yield tmp
            write_marker(tmp, kind)
            _put_in_place(tmp, dest, destination, was, kinds)
        except BaseException:
            shutil.rmtree(tmp, ignore_errors=True)
            raise


def output_kind(folder: str | Path) -> str | None:
    """The kind of ttsp output ``folder`` is (``"build"``, ``"demo"``, ``"batch"``), or None."""
    marker = read_marker(folder)
    return None if marker is None else marker.get("kind")


def write_text_atomic(path: str | Path, text: str) -> None:
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


__all__ += ["output_kind", "tidy_leftovers", "MARKER"]
