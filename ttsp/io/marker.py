"""The ``.ttsp-output`` marker: which folders, and which files in them, ttsp wrote.

Every output folder ttsp creates carries a marker file, one JSON line::

    {"tool": "ttsp", "version": "0.1.0", "kind": "build", "files": {"summary.json": ["<sha256>"]}}

``files`` maps each file ttsp wrote there to the SHA-256 of its content (a list: a batch folder's
results table is rewritten as campaigns finish, and the marker then holds the hash before and
after the rewrite, so that a kill between the two writes still finds the file to be ttsp's).

ttsp replaces or rewrites only what a marker vouches for: a folder is replaceable when it has a
marker of an accepted kind and holds exactly the files the marker lists, each with a listed
hash. Anything else (no marker, a file the user added or changed, a sub-folder) is the user's,
and :func:`why_not_replaceable` names it.
"""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

from .. import __version__

__all__ = ["MARKER", "file_sha256", "read_marker", "write_marker", "why_not_replaceable",
           "protected_place"]

MARKER = ".ttsp-output"
_MAX_NAMED = 3


def file_sha256(path: str | Path) -> str:
    """SHA-256 of a file's bytes (hex)."""
    digest = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def read_marker(folder: str | Path) -> dict | None:
    """The marker of ``folder`` as a dict, or None when it has none or an unreadable one."""
    try:
        text = (Path(folder) / MARKER).read_text(encoding="utf-8")
        marker = json.loads(text.splitlines()[0]) if text.strip() else None
    except (OSError, UnicodeDecodeError, ValueError, IndexError):
        return None
    if (not isinstance(marker, dict) or marker.get("tool") != "ttsp"
            or not isinstance(marker.get("files"), dict)):
        return None
    return marker


def write_marker(folder: str | Path, kind: str, files: dict | None = None) -> None:
    """Write the marker of ``folder``.

    Parameters
    ----------
    folder : path
        The output folder (or its temporary folder before the final rename).
    kind : str
        ``"build"``, ``"demo"`` or ``"batch"``.
    files : dict, optional
        File name -> list of accepted SHA-256 hashes. Default: every file now in ``folder``
        (sub-folders are not expected in a build's output and are not listed).
    """
    from .atomic import write_text_atomic

    folder = Path(folder)
    if files is None:
        files = {p.name: [file_sha256(p)] for p in sorted(folder.iterdir())
                 if p.name != MARKER and p.is_file() and not p.is_symlink()}
    line = json.dumps({"tool": "ttsp", "version": __version__, "kind": kind, "files": files},
                      ensure_ascii=False)
    write_text_atomic(folder / MARKER, line + "\n")


def _names(names) -> str:
    names = sorted(names)
    shown = ", ".join(names[:_MAX_NAMED])
    return shown + (f" and {len(names) - _MAX_NAMED} more" if len(names) > _MAX_NAMED else "")


def protected_place(folder: str | Path) -> str | None:
    """Why ``folder`` may never be replaced (the current folder or one holding it, the home
    folder, the file-system root), or None."""
    folder = Path(folder).resolve()
    try:
        cwd = Path.cwd().resolve()
    except OSError:   # the current folder was removed: nothing to protect there
        cwd = None
    if cwd is not None and (folder == cwd or folder in cwd.parents):
        return "it is the current folder or holds it"
    home = Path(os.path.expanduser("~"))
    if home.is_absolute() and folder == home.resolve():
        return "it is the home folder"
    if folder.parent == folder:
        return "it is the root of the file system"
    return None


def why_not_replaceable(folder: str | Path, kinds=("build",)) -> str | None:
    """Why ttsp must not replace ``folder``, as the end of a sentence; None when it may.

    Parameters
    ----------
    folder : path
        An existing folder.
    kinds : tuple of str
        Marker kinds that may be replaced (``ttsp demo`` replaces only demo outputs).
    """
    place = protected_place(folder)
    if place:
        return place
    folder = Path(folder)
    marker = read_marker(folder)
    if marker is None:
        return f"it is not a ttsp output (no readable {MARKER} marker in it)"
    if marker.get("kind") not in kinds:
        return f"it is a ttsp {marker.get('kind')} output, not a {' or '.join(kinds)} output"
    listed = marker["files"]
    present = {p.name: p for p in folder.iterdir() if p.name != MARKER}
    foreign = [n for n, p in present.items() if n not in listed or not p.is_file()
               or p.is_symlink()]
    if foreign:
        return f"it holds {_names(foreign)}, which ttsp did not write"
    changed = [n for n, p in present.items()
               if not isinstance(listed[n], list) or file_sha256(p) not in listed[n]]
    if changed:
        return f"{_names(changed)} changed since ttsp wrote {'them' if len(changed) > 1 else 'it'}"
    return None
