"""``load_measurements``: the spec's data source -> a reader by file type -> the tidy table
(:class:`~verify.data.tidy._Tidy`) -> :class:`~verify.model.Measurements` with the file's
record (hash, size, rows read and used, exclusions)."""

from __future__ import annotations

import hashlib
import os
from collections import Counter
from pathlib import Path

import pandas as pd

from ..errors import DataError, DataIssue
from ..model import DataFileInfo, Measurements
from ..safe_open import (
    DATA_LIMIT_HINT,
    FileRefused,
    check_xlsx_archive,
    max_data_bytes,
    read_regular,
)
from ..spec_model import Spec
from .cells import _Sheet
from .text import _read_text
from .tidy import _Tidy
from .xlsx import _read_xlsx


def load_measurements(spec: Spec, *, max_bytes: int | None = None) -> Measurements:
    """Read the spec's data file into the tidy measurements table.

    Parameters
    ----------
    spec
        A spec from :func:`verify.spec.load_spec`.
    max_bytes
        Refuse a larger data file (default :data:`verify.safe_open.DEFAULT_MAX_DATA_MB`); an
        .xlsx is also refused when its parts would expand far beyond it
        (:func:`verify.safe_open.check_xlsx_archive`).

    Returns
    -------
    Measurements
        ``table`` with exactly :data:`~verify.model.MEASUREMENT_COLUMNS`, ordered by
        characteristic (spec order) then production order; per-file information; the lots in
        neither lots list; and notes (e.g. the file was read as Latin-1).

    Raises
    ------
    DataError
        Every problem found in the file, each naming file, row and column.

    Examples
    --------
    >>> from verify.spec import load_spec
    >>> m = load_measurements(load_spec("specs/bushing-supplier.yaml"))  # doctest: +SKIP
    >>> m.table.columns.tolist() == list(MEASUREMENT_COLUMNS)  # doctest: +SKIP
    True
    """
    ds = spec.data
    if ds.source == "dataframe":
        raise DataError([DataIssue(str(spec.path), "the spec's data come from a DataFrame "
                                   "(data.source: dataframe): pass it to "
                                   "verify.evaluate(spec, frame), or give data.file")])
    if ds.source == "sql":  # a query's rows; their canonical CSV stands in for the file
        from ..sources.sql import read_sql

        sheet, raw, shown = read_sql(spec)
    else:
        shown = display_path(ds.file)
        limit = max_bytes if max_bytes is not None else max_data_bytes(None)
        raw = _read_bytes(ds.file, shown, spec, limit)
        suffix = ds.file.suffix.lower()
        if suffix == ".xlsx":
            from ..sources.formula_cells import check_formula_cells

            try:
                check_xlsx_archive(raw, shown, max_bytes=limit)
            except FileRefused as exc:
                raise DataError([DataIssue(shown, exc.reason)]) from None
            sheet = _read_xlsx(raw, shown, ds.sheet)
            sheet.notes.extend(check_formula_cells(raw, sheet, spec, shown))
        elif suffix == ".parquet":
            from ..sources.parquet import read_parquet

            sheet = read_parquet(raw, shown, ds.filters)
        else:
            sheet = _read_text(raw, shown, tab=suffix == ".tsv", encoding=ds.encoding)
    tidy = _Tidy(spec, sheet, shown)
    table, notes, unassigned = tidy.run()
    info = _file_info(spec, table, sheet, raw)
    return Measurements(table=table, files=(info,), unassigned_lots=unassigned,
                        notes=tuple(sheet.notes + notes), trace=tidy.trace)


def display_path(path: Path) -> str:
    """``path`` relative to the working folder when it lies below it, else absolute."""
    try:
        return str(Path(os.path.abspath(path)).relative_to(Path.cwd()))
    except ValueError:
        return str(path)


def _read_bytes(path: Path, shown: str, spec: Spec, max_bytes: int) -> bytes:
    """The data file's bytes: a regular file (links followed) within the size limit."""
    why = (f"data.file {spec.data.file_text!r} in {spec.path} is read relative to the spec's "
           "folder")
    if not path.exists() and not path.is_symlink():
        raise DataError([DataIssue(shown, f"data file not found ({why})")])
    try:
        return read_regular(path, what="data file", shown=shown, max_bytes=max_bytes,
                            limit_hint=DATA_LIMIT_HINT)
    except FileRefused as exc:
        raise DataError([DataIssue(shown, f"{exc.reason} ({why})")]) from None


def _file_info(spec: Spec, table: pd.DataFrame, sheet: _Sheet, raw: bytes) -> DataFileInfo:
    excluded = table["excluded"].to_numpy(dtype=bool)
    # the distinct source rows with a used measurement (what Series.nunique counts)
    rows_used = len(pd.unique(table["source_row"].to_numpy()[~excluded]))
    # the excluded measurements by reason (what Series.value_counts counts: no missing value)
    reasons = Counter(r for r in table["exclusion_reason"].to_numpy(dtype=object)[excluded]
                      if not pd.isna(r))
    exclusions = tuple(sorted(((str(r), int(n)) for r, n in reasons.items()),
                              key=lambda x: (-x[1], x[0])))
    return DataFileInfo(
        path=spec.data.file_text, resolved_path=str(spec.data.file),
        sha256=hashlib.sha256(raw).hexdigest(), size=len(raw), encoding=sheet.encoding,
        rows_read=sheet.rows_read, rows_used=rows_used,
        rows_excluded=sheet.rows_read - rows_used, exclusions=exclusions, sheet=sheet.sheet,
        origin=sheet.origin,
    )
