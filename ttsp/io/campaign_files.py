"""Files, or a folder, read into one validated :class:`~ttsp.data.Campaign`.

A campaign is one file in long format (a temperature column) or one file per isotherm (the
temperature from a preamble line such as ``Temperature: 35 °C`` or the file name, such as
``sweep_35C.csv``; :mod:`ttsp.io.file_temperature`), a folder of them, or several files. Each
file is cut into cells (:mod:`ttsp.io.tables`) and its columns read into SI and kelvin
(:mod:`ttsp.io.table_columns`); with several files each is validated on its own first, so that
a message names the file. The files must agree on the modulus kind (tensile or shear) and the
domain (frequency or time); their rows are joined and validated once more by
:meth:`ttsp.data.Campaign.from_frame`, so every error names the file, the column and the first
bad row. Rows left out for a stated reason are counted in ``dropped_rows`` and said in one
:class:`~ttsp.exceptions.DroppedRowsWarning`.
"""

from __future__ import annotations

import hashlib
import os
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

from .._validation import check_positive, printable, where
from ..data import Campaign
from ..exceptions import DataError, DroppedRowsWarning
from .size_limit import points_limit, too_large_error
from .skipped_rows import describe_skipped
from .table_columns import FileFrame, table_to_frame
from .tables import TABLE_SUFFIXES, RawTable, read_table

__all__ = ["read_campaign", "hash_inputs", "expand_paths"]


def read_campaign(paths: str | Path | Sequence[str | Path], *,
                  columns: Mapping[str, str] | None = None, units: Mapping[str, str] | None = None,
                  sheet: str | int | None = None, domain: str | None = None,
                  modulus_kind: str | None = None, temperature_tolerance_K: float = 0.5,
                  temperature_C: float | Mapping[str, float] | None = None,
                  max_points: int | None = None, temperature_from_name: bool = False,
                  repeats: str = "merge") -> Campaign:
    """Read one or more files (or a folder) into a validated :class:`~ttsp.data.Campaign`.

    Parameters
    ----------
    paths : path or sequence of paths
        Files (.csv, .txt, .tsv, .dat, .xlsx) or folders of them.
    columns : mapping, optional
        Explicit header -> role mapping for anything detection gets wrong, such as
        ``{"Mod1": "storage_modulus_Pa"}``. Roles are the SI column names of :mod:`ttsp.data`.
    units : mapping, optional
        Unit override by header or by role, such as ``{"Mod1": "MPa"}`` or
        ``{"temperature_K": "°F"}``.
    sheet : str or int, optional
        Sheet of an .xlsx workbook (default: the first).
    domain, modulus_kind : str, optional
        Override detection ("frequency"/"time", "tensile"/"shear").
    temperature_tolerance_K : float
        Points within this distance in temperature belong to one isotherm (default 0.5 K).
    temperature_C : float or mapping, optional
        Temperature in °C of one-isotherm files. A number is used for every file that states
        no temperature (no column, preamble line or temperature in the name); a mapping from
        path or file name to °C gives each file its own, before anything the file says.
    max_points : int, optional
        Refuse campaigns with more data rows than this, before they fill the memory (default:
        the environment variable ``TTSP_MAX_POINTS``, else
        :data:`ttsp.io.size_limit.DEFAULT_MAX_POINTS`).
    temperature_from_name : bool
        Read a file name holding one number without a unit letter (``sweep_130.csv``) as the
        temperature in °C, for files that state no temperature otherwise (default False: such a
        file is refused with a message that suggests this option).
    repeats : {"merge", "refuse"}
        Time-domain rows of one isotherm at the same printed time: merged into one point (mean
        in log, counted in ``dropped_rows``) unless they conflict, or all refused
        (:meth:`ttsp.data.Campaign.from_frame`).

    Returns
    -------
    Campaign
        Validated, SI and kelvin inside; ``units_as_read`` and ``metadata`` record what was read
        and ``dropped_rows`` counts rows left out for a stated reason. Rows that are clearly not
        data (text after the data, a word such as ``overload`` in a number column) are left
        out, each listed by row and text under ``metadata["skipped rows"]``.

    Raises
    ------
    DataError
        With the file, column and first bad row.
    """
    import pandas as pd

    options = _ReadOptions.checked(
        columns=columns, units=units, sheet=sheet, domain=domain, modulus_kind=modulus_kind,
        temperature_tolerance_K=temperature_tolerance_K, temperature_C=temperature_C,
        max_points=max_points, temperature_from_name=temperature_from_name, repeats=repeats)
    files = expand_paths(paths)
    _refuse_sheet_of_text_tables(files, sheet)
    reads = _read_files(files, options)
    campaign_kind, campaign_domain = _kind_and_domain(reads, modulus_kind, domain)
    source = files[0] if len(files) == 1 else f"{len(files)} files in {_common_folder(files)}"
    metadata, dropped, skipped_listing = _metadata_and_dropped(reads, several=len(files) > 1)
    labels, units_read = _labels_and_units(reads)
    combined = (pd.concat([r.frame for r in reads], ignore_index=True) if len(reads) > 1
                else reads[0].frame)
    campaign = Campaign.from_frame(
        combined, domain=campaign_domain, modulus_kind=campaign_kind, source=source,
        temperature_tolerance_K=options.temperature_tolerance_K, column_labels=labels,
        units_as_read=units_read, metadata=metadata, dropped_rows=dropped, repeats=repeats)
    if dropped:
        listed = f" ({skipped_listing})" if skipped_listing is not None else ""
        warnings.warn(f"{source}: left out " + ", ".join(f"{v} {k}" for k, v in dropped.items())
                      + listed, DroppedRowsWarning, stacklevel=2)
    return campaign


@dataclass(frozen=True)
class _ReadOptions:
    """The options of one :func:`read_campaign` call, checked; ``max_points`` is the limit in
    force (:func:`ttsp.io.size_limit.points_limit`)."""

    columns: Mapping[str, str] | None
    units: Mapping[str, str] | None
    sheet: str | int | None
    domain: str | None
    modulus_kind: str | None
    temperature_tolerance_K: float
    temperature_C: float | Mapping[str, float] | None
    max_points: int
    temperature_from_name: bool
    repeats: str

    @classmethod
    def checked(cls, *, temperature_tolerance_K, temperature_C, max_points,
                **options) -> _ReadOptions:
        tolerance_K = check_positive("temperature_tolerance_K", temperature_tolerance_K,
                                     allow_zero=True)
        if isinstance(temperature_C, Mapping):
            temperature_C = {str(k): v for k, v in temperature_C.items()}
        return cls(temperature_tolerance_K=tolerance_K, temperature_C=temperature_C,
                   max_points=points_limit(max_points), **options)


def _refuse_sheet_of_text_tables(files: list, sheet) -> None:
    """A sheet names a sheet of a workbook: refused when no file is one."""
    if sheet is not None and not any(f.lower().endswith(".xlsx") for f in files):
        raise DataError(f"{where(files[0])}sheet (--sheet) applies to .xlsx workbooks only; got "
                        f"{sheet!r} for {'a text table' if len(files) == 1 else 'text tables'}")


def _read_files(files: list, options: _ReadOptions) -> list:
    """Each file read into a :class:`~ttsp.io.table_columns.FileFrame`, in turn; the rows read
    so far are counted against the size limit before a file's columns are read."""
    reads, total = [], 0
    for path in files:
        table = read_table(path, sheet=options.sheet, max_points=options.max_points)
        total += len(table.rows)
        if total > options.max_points:
            what = (f"the file has {total:,} data rows" if len(files) == 1 else
                    f"the campaign has {total:,} data rows up to and including this file")
            raise too_large_error(path, what, options.max_points)
        reads.append(_file_frame(table, options, several=len(files) > 1))
    return reads


def _file_frame(table: RawTable, options: _ReadOptions, *, several: bool) -> FileFrame:
    """One table's frame; one of several files is validated on its own (one isotherm is fine
    there) and its rows tagged with ``source_file``, so that a message about the joined
    campaign names the file. A single file is validated once, by the caller, with the same
    messages."""
    one = table_to_frame(table, columns=options.columns, units=options.units,
                         temperature_C=options.temperature_C,
                         temperature_from_name=options.temperature_from_name)
    if "frequency_rad_s" not in one.frame.columns and "time_s" not in one.frame.columns:
        raise DataError(f"{where(table.path)}missing a frequency or time column; columns found: "
                        f"{', '.join(table.header)}")
    if several:
        Campaign.from_frame(one.frame, domain=_domain_of(one.frame, options.domain),
                            modulus_kind=options.modulus_kind or one.modulus_kind or "tensile",
                            source=one.path,
                            temperature_tolerance_K=options.temperature_tolerance_K,
                            column_labels=one.column_labels, units_as_read=one.units_as_read,
                            min_isotherms=1, repeats=options.repeats)
        one.frame["source_file"] = one.path
    return one


def _domain_of(frame, domain: str | None) -> str:
    """The domain given, else the one the frame's columns say."""
    return domain or ("frequency" if "frequency_rad_s" in frame.columns else "time")


def _kind_and_domain(reads: list, modulus_kind: str | None, domain: str | None) -> tuple:
    """The campaign's modulus kind and domain: as given, else as the files say, refusing files
    that say different things."""
    first_of: dict[str, str] = {}    # the first file of each kind and domain
    for r in reads:
        if r.modulus_kind:
            first_of.setdefault(r.modulus_kind, r.path)
        first_of.setdefault(_domain_of(r.frame, domain), r.path)
    kinds = {r.modulus_kind for r in reads if r.modulus_kind}
    if len(kinds) > 1 and modulus_kind is None:
        raise DataError(f"{where(first_of['shear'])}shear (G, J) data, but "
                        f"{printable(first_of['tensile'])} holds tensile (E, D) data: the files "
                        f"mix the two; give the modulus kind (--modulus-kind)")
    domains = {_domain_of(r.frame, None) for r in reads}
    if domain is None and len(domains) > 1:
        raise DataError(f"{where(first_of['time'])}a time-domain test, but "
                        f"{printable(first_of['frequency'])} holds frequency sweeps: the files "
                        f"mix the two; read them separately")
    return (modulus_kind or (kinds.pop() if kinds else "tensile")), (domain or domains.pop())


def _metadata_and_dropped(reads: list, *, several: bool) -> tuple:
    """``(metadata, dropped_rows, skipped_listing)`` of the campaign: each file's preamble (its
    keys prefixed by the file name when there are several files), the units assumed and the
    rows skipped; the lines and rows left out, counted by reason; the skipped rows listed by
    row and text (None when there are none)."""
    metadata: dict[str, str] = {}
    dropped: dict[str, int] = {}
    skipped_text: list[str] = []
    assumed: list[str] = []
    for r in reads:
        for k, v in r.preamble.items():
            metadata[f"{Path(r.path).name}: {k}" if several else k] = v
        for k, v in r.lines_dropped.items():
            dropped[k] = dropped.get(k, 0) + v
        for row in r.skipped:
            key = f"rows of {row.reason}"
            dropped[key] = dropped.get(key, 0) + 1
        if r.skipped:
            skipped_text.append(describe_skipped(r.skipped, r.path if several else None))
        assumed.extend(r.assumed_units)
    if assumed:
        metadata["assumed units"] = "; ".join(dict.fromkeys(assumed))
    skipped_listing = "; ".join(skipped_text) if skipped_text else None
    if skipped_listing is not None:
        metadata["skipped rows"] = skipped_listing
    return metadata, dropped, skipped_listing


def _labels_and_units(reads: list) -> tuple:
    """The header of each role and the unit of each header over all files (a later file's
    entry replacing an earlier one's)."""
    labels, units_read = {}, {}
    for r in reads:
        labels.update(r.column_labels)
        units_read.update(r.units_as_read)
    return labels, units_read


def expand_paths(paths: str | Path | Sequence[str | Path]) -> list:
    """The files named, a folder standing for its data files (not hidden ones, nor the lock
    files of a spreadsheet program), in order, each file once."""
    if isinstance(paths, (str, os.PathLike)):
        paths = [paths]
    files = []
    for p in paths:
        p = str(p)
        if os.path.isdir(p):
            inside = sorted(str(q) for q in Path(p).iterdir()
                            if q.is_file() and q.suffix.lower() in TABLE_SUFFIXES
                            and not q.name.startswith(".") and not q.name.startswith("~$"))
            if not inside:
                raise DataError(f"{where(p)}the folder holds no data files "
                                f"({', '.join(TABLE_SUFFIXES)})")
            files.extend(inside)
        else:
            files.append(p)
    if not files:
        raise DataError("no input files given")
    # one file named twice (data/a.csv and /home/me/data/a.csv) is read once
    seen, unique = set(), []
    for f in files:
        key = os.path.realpath(f)
        if key not in seen:
            seen.add(key)
            unique.append(f)
    return unique


def _common_folder(files) -> str:
    """The folder that holds all files, relative if they are all named relatively."""
    try:
        return os.path.commonpath(files) or "."
    except ValueError:   # relative and absolute names together
        return os.path.commonpath([os.path.abspath(f) for f in files])


def hash_inputs(paths: str | Path | Sequence[str | Path]) -> str:
    """SHA-256 over the names and bytes of the input files (folders expanded as
    :func:`read_campaign` expands them), in file-name order, so the same inputs give the same
    hash wherever they lie."""
    h = hashlib.sha256()
    for f in sorted((Path(q) for q in expand_paths(paths)), key=lambda q: q.name):
        h.update(f.name.encode("utf-8") + b"\0")
        h.update(f.read_bytes())
    return h.hexdigest()
