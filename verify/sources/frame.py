"""Measurements handed over as a pandas DataFrame (the Python API): read like a sheet of
typed cells, rows numbered as in a CSV export of the frame (the header is row 1, the frame's
first row is row 2)."""

from __future__ import annotations

import datetime as _dt
import math

import numpy as np
import pandas as pd


def read_frame(frame: pd.DataFrame):
    """The frame as a ``data.cells._Sheet`` and the canonical CSV bytes its hash is taken of."""
    from ..data.cells import _Sheet
    from .sql import canonical_csv

    header = [str(c) for c in frame.columns]
    columns = [[_value(v) for v in frame.iloc[:, j].tolist()] for j in range(frame.shape[1])]
    cells = pd.DataFrame(dict(enumerate(columns)), columns=range(len(header)), dtype=object)
    if not len(header):
        cells = pd.DataFrame(index=range(len(frame)), columns=[], dtype=object)
    rows = np.arange(2, len(frame) + 2)
    blank = (cells.isna().all(axis=1).to_numpy() if len(header)
             else np.ones(len(cells), bool))
    raw = canonical_csv(header, zip(*columns, strict=True) if columns else [])
    sheet = _Sheet(header=header, cells=cells[~blank].reset_index(drop=True), rows=rows[~blank],
                   rows_read=int((~blank).sum()), encoding="dataframe", typed=True)
    return sheet, raw


def _value(v):
    """Python scalars as the tidy step knows cells (None for missing)."""
    if v is None or v is pd.NA or v is pd.NaT:
        return None
    if isinstance(v, float) and math.isnan(v):
        return None
    if isinstance(v, pd.Timestamp):
        return v.to_pydatetime()
    if isinstance(v, np.generic):
        return v.item()
    if type(v) is _dt.date:
        return _dt.datetime(v.year, v.month, v.day)
    return v
