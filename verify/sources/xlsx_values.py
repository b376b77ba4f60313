"""xlsx cell values through python-calamine, formula cells through openpyxl.

python-calamine (a binding to the Rust calamine reader) reads an xlsx's values about ten times
faster than openpyxl; openpyxl is kept only for what calamine does not give: the text of formula
cells. Whether a sheet has formula cells at all is seen from its XML without parsing it, so the
common file (values only) never pays for openpyxl.
"""

from __future__ import annotations

import datetime as _dt
import io
import re
import zipfile

# a <f> element (a cell formula), with or without a namespace prefix; not <formula1> and the
# like of data validations, which hold no cell values
_FORMULA_ELEMENT = re.compile(rb"<(?:[A-Za-z_][\w.-]*:)?f[\s>/]")


def read_values(raw: bytes, sheet_name: str | None):
    """All rows of a sheet from A1 as lists of Python values, and the sheet's name.

    Empty cells are ``None``; dates are ``datetime.datetime`` (midnight for a date), times
    ``datetime.time``, numbers ``float`` or ``int``, as openpyxl gives them, so that both readers
    yield the same tidy table.

    Raises
    ------
    LookupError
        ``sheet_name`` is not in the workbook (the message lists the sheets).
    ValueError
        The file cannot be read as a workbook.
    """
    import python_calamine as pc

    try:
        wb = pc.CalamineWorkbook.from_filelike(io.BytesIO(raw))
    except Exception as exc:  # calamine raises its own kinds on a damaged file
        raise ValueError(f"{type(exc).__name__}: {exc}") from None
    try:
        names = list(wb.sheet_names)
        if sheet_name is None:
            if not names:
                raise LookupError("the workbook has no sheets")
            sheet_name = names[0]
        elif sheet_name not in names:
            raise LookupError(sheet_name, names)
        kinds = {m.name: m.typ for m in wb.sheets_metadata}
        if str(kinds.get(sheet_name, "")).lower().endswith("chartsheet"):
            raise LookupError(f"sheet {sheet_name!r} is a chart, not a table")
        try:
            rows = wb.get_sheet_by_name(sheet_name).to_python(skip_empty_area=False)
        except Exception as exc:  # damaged sheet XML
            raise ValueError(f"sheet {sheet_name!r} cannot be read "
                             f"({type(exc).__name__}: {exc})") from None
    finally:
        wb.close()
    return [[_value(v) for v in row] for row in rows], sheet_name


def _value(v):
    if isinstance(v, str):
        return v if v != "" else None
    if type(v) is _dt.date:
        return _dt.datetime(v.year, v.month, v.day)
    return v


def has_formulas(raw: bytes) -> bool:
    """Whether any worksheet of the xlsx holds a cell formula (a scan of the XML bytes)."""
    try:
        with zipfile.ZipFile(io.BytesIO(raw)) as z:
            for name in z.namelist():
                if name.startswith("xl/worksheets/") and name.endswith(".xml"):
                    with z.open(name) as f:
                        tail = b""
                        while chunk := f.read(1 << 20):
                            if _FORMULA_ELEMENT.search(tail + chunk):
                                return True
                            tail = chunk[-32:]
    except (zipfile.BadZipFile, OSError, KeyError):
        return False
    return False


def formula_cells(raw: bytes, sheet_name: str) -> dict[tuple[int, int], str]:
    """Formula text of every formula cell of a sheet: ``{(row, column index): "=..."}``, rows
    counted from 1 as a spreadsheet does, columns from 0."""
    import openpyxl  # heavy: imported only when a sheet has formulas

    wb = openpyxl.load_workbook(io.BytesIO(raw), read_only=True, data_only=False)
    try:
        out = {}
        for r, row in enumerate(wb[sheet_name].iter_rows(values_only=True), start=1):
            for j, v in enumerate(row):
                if isinstance(v, str) and v.startswith("="):
                    out[(r, j)] = v
                elif v is not None and type(v).__name__ in ("ArrayFormula", "DataTableFormula"):
                    out[(r, j)] = str(getattr(v, "text", v))
    finally:
        wb.close()
    return out
