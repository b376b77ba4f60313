"""The xlsx reader: a workbook's named sheet (else the first) -> a
:class:`~verify.data.cells._Sheet` of typed cells (python-calamine values; openpyxl where it is
not installed). The formula cells are checked by :mod:`verify.sources.formula_cells`."""

from __future__ import annotations

import io

import numpy as np
import pandas as pd

from ..errors import DataError, DataIssue
from .cells import _cell_text, _is_blank, _Sheet


def _read_xlsx(raw: bytes, shown: str, sheet_name: str | None) -> _Sheet:
    values, sheet_name = _xlsx_rows(raw, shown, sheet_name)
    if not values:
        raise DataError([DataIssue(shown, f"sheet {sheet_name!r} is empty: it needs a header "
                                   "row", row=1)])
    width = max(len(r) for r in values)
    header = [_cell_text(v) for v in values[0]] + [""] * (width - len(values[0]))
    body_rows = [tuple(r) + (None,) * (width - len(r)) for r in values[1:]]
    body = pd.DataFrame(body_rows, columns=range(width), dtype=object)
    rows = np.arange(2, len(body) + 2)
    if len(body):
        blank = body.map(_is_blank).all(axis=1).to_numpy()
    else:
        blank = np.zeros(0, bool)
    return _Sheet(header=header, cells=body[~blank].reset_index(drop=True), rows=rows[~blank],
                  rows_read=int((~blank).sum()), encoding="xlsx", typed=True, sheet=sheet_name)


def _xlsx_rows(raw: bytes, shown: str, sheet_name: str | None) -> tuple[list, str]:
    """The sheet's rows from A1 (empty cells None) through python-calamine, which reads values
    about ten times faster than openpyxl; openpyxl where python-calamine is not installed."""
    try:
        from ..sources.xlsx_values import read_values
    except ImportError:  # pragma: no cover - python-calamine is a dependency
        return _xlsx_rows_openpyxl(raw, shown, sheet_name)
    try:
        return read_values(raw, sheet_name)
    except ValueError as exc:
        raise DataError([DataIssue(shown, f"cannot be read as an .xlsx workbook ({exc})")]
                        ) from None
    except LookupError as exc:
        if len(exc.args) == 2:
            raise DataError([DataIssue(shown, _no_sheet(*exc.args))]) from None
        raise DataError([DataIssue(shown, str(exc.args[0]))]) from None


def _no_sheet(sheet_name: str, names: list[str]) -> str:
    msg = f"has no sheet {sheet_name!r}; the sheets are: {', '.join(names)}"
    import difflib  # only when a name is not found: not at start-up

    near = difflib.get_close_matches(sheet_name, names, n=1, cutoff=0.6)
    return msg + (f"; did you mean {near[0]!r}?" if near else "")


def _xlsx_rows_openpyxl(raw: bytes, shown: str, sheet_name: str | None) -> tuple[list, str]:
    import openpyxl  # heavy: imported where it is used

    try:
        wb = openpyxl.load_workbook(io.BytesIO(raw), read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many kinds on a damaged file
        raise DataError([DataIssue(shown, f"cannot be read as an .xlsx workbook "
                                   f"({type(exc).__name__}: {exc})")]) from None
    try:
        names = wb.sheetnames
        if sheet_name is None:
            if not names:
                raise DataError([DataIssue(shown, "the workbook has no sheets")])
            sheet_name = names[0]
        elif sheet_name not in names:
            raise DataError([DataIssue(shown, _no_sheet(sheet_name, names))])
        ws = wb[sheet_name]
        if not hasattr(ws, "iter_rows"):
            raise DataError([DataIssue(shown, f"sheet {sheet_name!r} is a chart, not a table")])
        try:
            values = list(ws.iter_rows(values_only=True))
        except Exception as exc:  # damaged sheet XML
            raise DataError([DataIssue(shown, f"sheet {sheet_name!r} cannot be read "
                                       f"({type(exc).__name__}: {exc})")]) from None
    finally:
        wb.close()
    return values, sheet_name
