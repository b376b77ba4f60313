"""Read a spec's data file into one tidy table of measurements, strictly.

:func:`load_measurements` reads CSV/TSV (delimiter sniffed from the header line among comma,
semicolon and tab; UTF-8 with or without BOM, UTF-16 with BOM, Latin-1 as a reported fallback)
or xlsx (the named sheet, else the first), in the wide layout (one column per characteristic)
or the long layout (``data.characteristic`` + ``data.value``), and returns a
:class:`~verify.model.Measurements` with a row per measurement.

Nothing is guessed: a cell that is neither a number (with the declared decimal separator) nor a
declared missing text, an infinite value, a missing column, a process value that is neither old
nor new, a lot in both lots lists, a duplicate pair key or an exclusion that matches nothing is
a :class:`~verify.errors.DataError` naming file, row and column; all such problems of a file are
reported together. Missing cells are excluded ("not measured") and counted, never read as zero.
Cells in rows that are left out anyway (excluded by the spec, a lot in neither list, a process
value ignored by ``data.ignore_other``) are not checked; their value is kept where it reads as
a number, else NaN.

Source rows are counted as a spreadsheet user counts them: the header is row 1, the first data
row is row 2 (blank rows count but give no measurements).

The package by topic: :mod:`~verify.data.load` (the source -> a reader -> the tidy table ->
``Measurements``), the readers by file type (:mod:`~verify.data.text` for CSV/TSV and their
encodings, :mod:`~verify.data.xlsx`, and :mod:`verify.sources` for parquet, SQL, snapshots and
DataFrames), the layout (:mod:`~verify.data.tidy`, with :mod:`~verify.data.pass_fail` for
per-lot counts), process assignment (:mod:`~verify.data.assign`: lots or a process column ->
old/new, order, exclusions, corrections, duplicate keys), and what the analysis reads
(:mod:`~verify.data.values`). :mod:`~verify.data.cells` holds what they share.
"""

from .cells import MAX_ABS_VALUE, MAX_REPORTED, NEITHER_LIST, NOT_MEASURED, SHOWN_CHARS
from .load import display_path, load_measurements
from .text import DELIMITERS, sniff_delimiter
from .values import (
    AnalysisValues,
    PairedValues,
    analysis_values,
    paired_values,
    stream_values,
)

__all__ = [
    "DELIMITERS", "MAX_ABS_VALUE", "MAX_REPORTED", "NEITHER_LIST", "NOT_MEASURED", "SHOWN_CHARS",
    "AnalysisValues", "PairedValues", "analysis_values", "display_path", "load_measurements",
    "paired_values", "sniff_delimiter", "stream_values",
]
