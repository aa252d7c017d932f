"""Read temperature campaigns from the files people have: delimited text and .xlsx.

The public face of reading; the work is done, one step a module, by:

* :mod:`ttsp.io.tables`: a file into a table of text cells (delimiter and decimal mark
  detected, header, a line of units under it, preamble lines kept as metadata, text lines after
  the data skipped and listed), with :mod:`ttsp.io.text_decoding` for the bytes (UTF-8, UTF-16,
  Windows-1252 / Latin-1), :mod:`ttsp.io.workbook` for the sheets of an .xlsx workbook and
  :mod:`ttsp.io.size_limit` for the points read at most;
* :mod:`ttsp.io.cell_numbers`: text cells as numbers (decimal commas; thousands separators
  and ambiguous marks refused by row);
* :mod:`ttsp.io.table_columns`: the columns given a meaning and a unit (:mod:`ttsp.io.headers`,
  a line of units, or given explicitly), converted to SI and kelvin, rows with a word such as
  ``overload`` in a number column skipped and listed (:mod:`ttsp.io.skipped_rows`);
* :mod:`ttsp.io.file_temperature`: the temperature of a one-isotherm file, from a preamble line
  such as ``Temperature: 35 °C`` or the file name (``sweep_35C.csv``);
* :mod:`ttsp.io.campaign_files`: a file, several files or a folder as one campaign, validated
  by :meth:`ttsp.data.Campaign.from_frame`, so every error names the file, the column and the
  first bad row.
"""

from __future__ import annotations

from .campaign_files import hash_inputs, read_campaign
from .cell_numbers import column_floats as _column_floats  # noqa: F401  (the former name)
from .cell_numbers import to_float as _to_float  # noqa: F401  (the former name)
from .size_limit import DEFAULT_MAX_POINTS, MAX_POINTS_ENV
from .tables import TABLE_SUFFIXES, TEXT_SUFFIXES, RawTable, read_table

__all__ = ["read_campaign", "hash_inputs", "read_table", "RawTable", "TEXT_SUFFIXES",
           "TABLE_SUFFIXES",
           "DEFAULT_MAX_POINTS", "MAX_POINTS_ENV"]
