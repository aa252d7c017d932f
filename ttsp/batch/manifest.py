"""The campaigns of a batch: a manifest (CSV or JSON Lines) or a folder of campaigns, read into
validated :class:`BatchItem` s.

Layer 5 (a shell). The per-campaign option columns are the fields of
:class:`ttsp.workflow.BuildOptions` (read from the dataclass, so a new build option is a
manifest column at once) plus the batch's own ``modulus_kind``; ``id`` and ``path`` name the
campaign. The rules of ids and cells are in the package docstring (:mod:`ttsp.batch`).
"""

from __future__ import annotations

import csv
import dataclasses
import json
import math
import os
import re
import typing
from dataclasses import dataclass, field
from pathlib import Path

from .._validation import bad_value, where
from ..exceptions import DataError
from ..io.readers import TABLE_SUFFIXES
from ..workflow import BuildOptions
from .results_table import RESULT_FILES

__all__ = ["BatchItem", "MANIFEST_COLUMNS", "OPTION_COLUMNS", "check_unique", "read_manifest"]

#: how a cell of a structured option (a list or a mapping, such as ``exclude_C``) is read: a
#: JSON Lines manifest gives the JSON value, which :class:`BuildOptions` checks and normalises
STRUCTURED = "structured"
_TYPE_NAMES = {"float": float, "int": int, "bool": bool, "str": str}


def _cell_kind(annotation):
    """``float``, ``bool`` or ``str`` for an option of that type (``None`` allowed beside it),
    else :data:`STRUCTURED`. ``annotation`` is a type, or its text when it could not be
    evaluated."""
    if isinstance(annotation, str):
        names = {a.strip() for a in annotation.split("|")} - {"None"}
        kinds = [_TYPE_NAMES.get(n, n) for n in names]
    else:
        kinds = [a for a in typing.get_args(annotation) if a is not type(None)] or [annotation]
    if len(kinds) == 1 and kinds[0] in (float, int):
        return float
    if len(kinds) == 1 and kinds[0] in (bool, str):
        return kinds[0]
    return STRUCTURED


def option_columns(options_class=BuildOptions) -> dict:
    """``{field name: cell kind}`` for every field of a build-settings dataclass, in its order."""
    try:
        hints = typing.get_type_hints(options_class)
    except Exception:   # a hint naming a type that is not importable at run time: its text
        hints = {}
    return {f.name: _cell_kind(hints.get(f.name, f.type))
            for f in dataclasses.fields(options_class)}


#: Per-campaign options a manifest may give (every field of BuildOptions, in its order), with
#: the kind of their values: ``float``, ``bool``, ``str`` or :data:`STRUCTURED`.
OPTION_COLUMNS = option_columns()
#: Columns only a batch has: the modulus kind, overriding detection from the headers.
BATCH_ONLY_COLUMNS = ("modulus_kind",)
MANIFEST_COLUMNS = ("id", "path", *OPTION_COLUMNS, *BATCH_ONLY_COLUMNS)
JSON_LINES_SUFFIXES = (".jsonl", ".ndjson", ".json")

_ID = re.compile(r"^\w(?:[\w.+=,@() -]*[\w+=,@()-])?$")
_ID_RULE = ("a folder name: letters, digits, '_', and inside also . - + = , @ ( ) or spaces; "
            "at most 100 characters")
_WINDOWS_RESERVED = {"con", "prn", "aux", "nul", *(f"com{i}" for i in range(1, 10)),
                     *(f"lpt{i}" for i in range(1, 10))}


@dataclass(frozen=True)
class BatchItem:
    """One campaign of a batch (settings only).

    Parameters
    ----------
    id : str
        Name of the campaign and of its output folder (see :mod:`ttsp.batch` for the rule).
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
        check_id(self.id, self.origin)
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


def check_id(value, origin: str = "") -> None:
    """Refuse an id that cannot name an output folder everywhere (:class:`DataError`)."""
    if not isinstance(value, str) or not value.strip():
        raise DataError(f"{_prefix(origin)}id must be a non-empty name; got {value!r}")
    if (len(value) > 100 or not _ID.match(value) or value in RESULT_FILES
            or value.split(".")[0].lower() in _WINDOWS_RESERVED):
        raise DataError(f"{_prefix(origin)}id must be {_ID_RULE}; got {value!r}")


def check_unique(items) -> None:
    """Refuse ids that repeat, also ignoring letter case (file systems that ignore it)."""
    seen: dict[str, BatchItem] = {}   # casefolded id -> its first item
    for item in items:
        key = item.id.casefold()
        if key in seen:
            first = seen[key]
            same = "repeats" if first.id == item.id else "differs only in letter case from"
            raise DataError(f"{_prefix(item.origin)}id {item.id!r} {same} the id of "
                            f"{first.origin or repr(first.id)}; ids name output folders and must "
                            f"be unique")
        seen[key] = item


def read_manifest(path_or_folder: str | Path) -> list:
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
    check_unique(items)
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
    for (line, _), cells in zip(lines[1:], parsed[1:], strict=True):
        if len(cells) != len(names):
            raise DataError(f"{where(file, row=line)}{len(cells)} cells where the header has "
                            f"{len(names)}")
        rows.append((line, {n: (c.strip() or None) for n, c in zip(names, cells, strict=True)}))
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


def _option_value(name, kind, value, file, row):
    """One option cell as the value :class:`BuildOptions` takes."""
    if kind is float:
        return _number(name, value, file, row)
    if kind is bool:
        return _flag(name, value, file, row)
    if kind is STRUCTURED:   # a list or a mapping: only JSON Lines can give one
        if isinstance(value, (list, dict)):
            return value
        raise bad_value(name, "a JSON list or object (in a JSON Lines manifest)", value,
                        file=file, column=name, row=row)
    if not isinstance(value, str):
        raise bad_value(name, "a text value", value, file=file, column=name, row=row)
    return value.strip()


def _build_options(values: dict, ident: str, origin: str, file: str, row: int) -> BuildOptions:
    options = {}
    for name, kind in OPTION_COLUMNS.items():
        value = values.get(name)
        if value is None or (isinstance(value, str) and not value.strip()):
            continue
        options[name] = _option_value(name, kind, value, file, row)
    try:
        return BuildOptions(**options)
    except DataError as exc:
        raise DataError(f"{origin} (id {ident!r}): {exc}") from None


def _item_id(values: dict, file: str, row: int) -> str:
    ident = values.get("id")
    if isinstance(ident, (int, float)) and not isinstance(ident, bool):
        ident = str(ident)  # JSON ids written as numbers
    if not isinstance(ident, str):
        raise DataError(f"{where(file, 'id', row)}id must be a non-empty name; got {ident!r}")
    ident = ident.strip()
    check_id(ident, where(file, "id", row)[:-2])
    return ident


def _item_paths(values: dict, base: Path, file: str, row: int) -> tuple:
    raw = values.get("path")
    raw = [raw] if isinstance(raw, str) else raw
    if (not isinstance(raw, list) or not raw
            or not all(isinstance(r, str) and r.strip() for r in raw)):
        raise bad_value("path", "a file or folder (or, in JSON Lines, a list of files)",
                        values.get("path"), file=file, column="path", row=row)
    return tuple(q if q.is_absolute() else base / q
                 for q in (Path(r.strip()).expanduser() for r in raw))


def _item_modulus_kind(values: dict, file: str, row: int):
    kind = values.get("modulus_kind")
    kind = kind.strip() if isinstance(kind, str) and kind.strip() else (None if kind in ("", None)
                                                                         else kind)
    if kind not in (None, "tensile", "shear"):
        raise bad_value("modulus_kind", "tensile, shear or empty", kind, file=file,
                        column="modulus_kind", row=row)
    return kind


def _item_from_row(values: dict, base: Path, file: str, row: int) -> BatchItem:
    origin = where(file, row=row)[:-2]
    ident = _item_id(values, file, row)
    paths = _item_paths(values, base, file, row)
    options = _build_options(values, ident, origin, file, row)
    return BatchItem(ident, paths, options, _item_modulus_kind(values, file, row), origin)


def _read_folder(folder: Path) -> list:
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
    check_unique(items)
    return items
