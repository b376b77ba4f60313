"""Parquet data files through pyarrow (the extra ``verify[parquet]``), with row filters.

A Parquet file carries typed columns, so numbers arrive as numbers and text as text; the tidy
step treats them as it treats xlsx cells. Rows are numbered as in a CSV export of the same
table (the header is row 1, the first record row 2), before any filter, so that a row named in
a message or in ``exclude: {row: N}`` is the same record whatever the filter keeps and
whatever format the table is exported to.
"""

from __future__ import annotations

import datetime as _dt
import io

import numpy as np
import pandas as pd

from ..errors import DataError, DataIssue

_ROW = "__verify_row__"


def read_parquet(raw: bytes, shown: str, filters=()):
    """The file's rows (those that pass ``filters``) as a ``data.cells._Sheet`` of typed cells."""
    from ..data.cells import _Sheet

    try:
        import pyarrow as pa
        import pyarrow.compute as pc
        import pyarrow.parquet as pq
    except ImportError:
        raise DataError([DataIssue(shown, "reading .parquet files needs pyarrow: pip install "
                                   "'verify-process-change[parquet]' (or pip install pyarrow)")]
                        ) from None
    try:
        table = pq.read_table(io.BytesIO(raw))
    except (pa.ArrowException, OSError, ValueError) as exc:
        raise DataError([DataIssue(shown, f"cannot be read as a Parquet file "
                                   f"({type(exc).__name__}: {exc})")]) from None
    header = [str(n) for n in table.column_names]
    n_file = table.num_rows
    table = table.append_column(_ROW, pa.array(np.arange(2, n_file + 2, dtype=np.int64)))
    notes = []
    if filters:
        issues = []
        for i, (col, _o, _v) in enumerate(filters):
            if col not in header:
                issues.append(DataIssue(shown, f"data.filter[{i}] names column {col!r}, which "
                                        f"is not in the file; the columns are: "
                                        f"{', '.join(header)}", column=col))
        if issues:
            raise DataError(issues)
        for i, (col, op, value) in enumerate(filters):
            try:
                table = table.filter(_expression(pc, col, op, value))
            except (pa.ArrowException, TypeError, ValueError) as exc:
                raise DataError([DataIssue(shown, f"data.filter[{i}] [{col!r}, {op!r}, "
                                           f"{value!r}] cannot be applied to column {col!r} "
                                           f"(type {table.schema.field(col).type}): {exc}",
                                           column=col)]) from None
        notes.append(f"{shown}: data.filter kept {table.num_rows} of {n_file} rows")
    rows = np.asarray(table.column(_ROW).to_numpy(), dtype=np.int64)
    cells = pd.DataFrame({j: [_value(v) for v in table.column(j).to_pylist()]
                          for j in range(len(header))}, columns=range(len(header)),
                         dtype=object)
    blank = (cells.isna().all(axis=1).to_numpy() if len(header)
             else np.ones(len(cells), bool))
    return _Sheet(header=header, cells=cells[~blank].reset_index(drop=True), rows=rows[~blank],
                  rows_read=int((~blank).sum()), encoding="parquet", typed=True, notes=notes)


def _expression(pc, col: str, op: str, value):
    field = pc.field(col)
    if op == "in":
        return field.isin(list(value))
    if op == "not in":
        return ~field.isin(list(value))
    return {"==": field == value, "!=": field != value, "<": field < value,
            "<=": field <= value, ">": field > value, ">=": field >= value}[op]


def _value(v):
    """Python values as the tidy step knows them from xlsx cells."""
    if isinstance(v, float) and np.isnan(v):
        return None  # a NaN stored in the file is no measurement: it reads as an empty cell
    if type(v) is _dt.date:
        return _dt.datetime(v.year, v.month, v.day)
    if isinstance(v, bytes):
        return v.decode("utf-8", "replace")
    return v
