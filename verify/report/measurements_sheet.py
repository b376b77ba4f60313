"""The measurements sheet(s): every row used or excluded, as an Excel table, streamed.

Rows follow :func:`verify.report.layout.measurement_layout` (the recheck formulas rely on it):
the header is row 1 of each sheet, data from row 2, columns in ``MEASUREMENT_HEADERS`` order.
Beyond Excel's row limit the table continues on ``Measurements (2)`` and so on; each sheet
then says, to the right of its table, which rows it holds and where the rest are.

openpyxl writes each placeholder sheet (widths, frozen header, header row, the table part with
its filter); :mod:`verify.report.xlsx_fast` streams the data rows into it.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np
import pandas as pd
from openpyxl.styles import Alignment
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.filters import AutoFilter
from openpyxl.worksheet.table import Table, TableColumn, TableStyleInfo

from .cell_styles import shared_font
from .cells import MUTED, NOTE_FONT, clean_text, fixed, page_setup, put, resolution_decimals
from .layout import MEASUREMENT_HEADERS, MeasurementLayout, code_groups, measurement_headers
from .styles import StyleBook
from .xlsx_fast import StreamedSheet, row_writer, t_element

_WIDTHS = {
    "characteristic": 22,
    "process": 9,
    "lot": 16,
    "pair": 12,
    "value": 12,
    "used": 7,
    "exclusion_reason": 34,
    "source_file": 30,
    "source_row": 10,
    "order": 12,
    "part": 14,
    "process_value": 16,
    "original": 12,
    "correction": 40,
}
NOTE_COLUMN = len(MEASUREMENT_HEADERS) + 2  # one empty column after the table
CHUNK_ROWS = 20_000
HEADER_ALIGN = Alignment(wrap_text=True, vertical="bottom")
PRINT_FOOTER = "every row read, used or excluded"


def continuation_note(layout: MeasurementLayout, sheet: str) -> str | None:
    """The note beside a measurements table when the rows fill more than one sheet."""
    if len(layout.sheets) < 2:
        return None
    t = layout.table
    on = t["sheet"] == sheet
    n_here = int(on.sum())
    i = layout.sheets.index(sheet)
    first = int(np.flatnonzero(on.to_numpy())[0]) + 1 if n_here else 0
    text = (
        f"Measurements {first:,} to {first + n_here - 1:,} of {len(t):,}: the rows do not fit "
        f"one sheet (Excel's limit is 1,048,576 rows), so they continue over "
        f"{len(layout.sheets)} sheets: {', '.join(layout.sheets)}."
    )
    if i > 0:
        text += f" Continued from '{layout.sheets[i - 1]}'."
    if i + 1 < len(layout.sheets):
        text += f" Continues on '{layout.sheets[i + 1]}'."
    return text


def add_placeholders(wb, layout: MeasurementLayout, styles: StyleBook,
                     decimals: dict[str, int | None] | None = None) -> list[StreamedSheet]:
    """Create the measurements sheet(s) with header, table and filter; return what to stream.

    ``decimals``: :func:`decimals_by_characteristic` of the layout's table, where the caller
    has it already."""
    columns = measurement_headers(layout.table)
    headers = [label for _key, label in columns]
    ncols = len(headers)
    note_column = ncols + 2
    last_col = get_column_letter(ncols)
    streamed = []
    if decimals is None:
        decimals = decimals_by_characteristic(layout.table)
    # register every style the streamed rows use before openpyxl saves the style sheet
    for excluded in (False, True):
        styles.text(excluded)
        styles.boolean(excluded)
        styles.number("0", excluded)
        for d in set(decimals.values()):
            styles.number(fixed(d), excluded)
    for i, title in enumerate(layout.sheets):
        ws = wb.create_sheet(title)
        # (one sheet holds every row: the table itself, never changed, not a masked copy)
        rows = layout.table if len(layout.sheets) == 1 else layout.table.loc[
            layout.table["sheet"] == title]
        n = len(rows)
        for j, label in enumerate(headers, start=1):
            put(ws, 1, j, label, font=shared_font(bold=True), align=HEADER_ALIGN)
        ws.row_dimensions[1].height = 30  # two-line headings never run into each other
        for j, (key, _label) in enumerate(columns, start=1):
            ws.column_dimensions[get_column_letter(j)].width = _WIDTHS.get(key, 12)
        ws.freeze_panes = "A2"
        # the header on every printed page
        page_setup(ws, None, landscape=True, title_rows="1:1", footer=PRINT_FOOTER)
        last_row = max(n + 1, 2)  # a table needs one data row, even an empty one
        ref = f"A1:{last_col}{last_row}"
        table = Table(
            displayName=f"Measurements{'' if i == 0 else f'_{i + 1}'}",
            ref=ref,
            tableColumns=[TableColumn(id=j, name=h) for j, h in enumerate(headers, start=1)],
            tableStyleInfo=TableStyleInfo(name="TableStyleLight1", showRowStripes=True),
        )
        # tableColumns are given, so openpyxl does not read the header cells back (and never
        # touches the 500k rows that are not there yet)
        table.autoFilter = AutoFilter(ref=ref)
        ws.add_table(table)
        note = continuation_note(layout, title)
        dim_col = last_col
        if note:
            put(ws, 1, note_column, note, font=NOTE_FONT)
            ws.column_dimensions[get_column_letter(note_column)].width = 60
            dim_col = get_column_letter(note_column)
        if n == 0:
            put(ws, 3, 1, "No measurements were read.", font=NOTE_FONT)
        streamed.append(
            StreamedSheet(
                title=title,
                rows=_row_generator(rows, styles, decimals, columns),
                dimension=f"A1:{dim_col}{last_row}",
            )
        )
    return streamed


def decimals_by_characteristic(table: pd.DataFrame) -> dict[str, int | None]:
    """The decimals each characteristic's values are recorded to (``resolution_decimals`` of
    its values, in table order), by name in order of first appearance: what iterating
    ``table.groupby("characteristic", sort=False)["value"]`` gives, grouped on the column's
    codes (a row without a name left out)."""
    codes, names = pd.factorize(table["characteristic"], sort=False)
    values = table["value"].to_numpy(dtype=float)
    return {str(names[code]): resolution_decimals(values[rows])
            for code, rows in code_groups(codes)}


class _TextColumn:
    """A text column factorised once per sheet: each distinct text is escaped once."""

    def __init__(self, series: pd.Series, style_used: int, style_excl: int):
        if isinstance(series.dtype, pd.StringDtype):
            # text already: a missing value's code is -1, the empty cell that the text "" it
            # would be filled with gives (the same cells, without a converted copy)
            codes, uniques = pd.factorize(series, sort=False)
        else:
            codes, uniques = pd.factorize(series.fillna("").astype(str), sort=False)
        self.codes = codes
        frag_u = np.empty(len(uniques) + 1, dtype=object)
        frag_x = np.empty(len(uniques) + 1, dtype=object)
        for k, u in enumerate(uniques):
            if u == "":  # empty text: an empty cell
                frag_u[k], frag_x[k] = f"{_s(style_used)}/>", f"{_s(style_excl)}/>"
                continue
            t = t_element(clean_text(u))  # within a cell's limit, cut visibly if ever longer
            frag_u[k] = f' t="inlineStr"{_s(style_used)}><is>{t}</is></c>'
            frag_x[k] = f' t="inlineStr"{_s(style_excl)}><is>{t}</is></c>'
        frag_u[-1], frag_x[-1] = f"{_s(style_used)}/>", f"{_s(style_excl)}/>"  # code -1
        self.frag_u, self.frag_x = frag_u, frag_x

    def fragments(self, start: int, stop: int, used: np.ndarray) -> list[str]:
        codes = self.codes[start:stop]
        return np.where(used, self.frag_u[codes], self.frag_x[codes]).tolist()


def _s(style: int) -> str:
    return f' s="{style}"' if style else ""


def _row_generator(rows: pd.DataFrame, styles: StyleBook, decimals: dict,
                   columns=MEASUREMENT_HEADERS):
    """A callable yielding the sheet's data rows as XML chunks (row 2 onwards).

    Every row carries all columns; an empty value is an empty cell element (``<c r="D7"/>``),
    so one template formats a whole row.
    """
    keys = [k for k, _ in columns]
    row_xml = row_writer(len(keys))

    def generate() -> Iterator[str]:
        text_u, text_x = styles.text(False), styles.text(True)
        text_cols = {
            k: _TextColumn(rows[k], text_u, text_x)
            for k in keys
            if k not in ("value", "used", "source_row", "order")
        }
        value_style = {
            c: (styles.number(fixed(d), False), styles.number(fixed(d), True))
            for c, d in decimals.items()
        }
        for start in range(0, len(rows), CHUNK_ROWS):
            stop = min(start + CHUNK_ROWS, len(rows))
            columns = _chunk_columns(
                rows.iloc[start:stop], start, stop, keys, text_cols, value_style, styles
            )
            row_no = map(str, rows["row"].to_numpy()[start:stop].tolist())
            # (strict: a column of another length is an error, never rows cut short)
            yield "".join([row_xml(*cells) for cells in zip(row_no, *columns, strict=True)])

    return generate


def _chunk_columns(chunk, start, stop, keys, text_cols, value_style, styles) -> list[list]:
    used = chunk["used"].to_numpy(dtype=bool)
    # value: number format from the characteristic's resolution; NaN gives an empty cell
    # the style of each row's characteristic (``chars.map(dict)``: a name not in the dict
    # gives NaN), looked up once per distinct name
    codes, names = pd.factorize(chunk["characteristic"], sort=False)
    per_u = np.array([*(_s(value_style[c][0]) if c in value_style else np.nan for c in names),
                      np.nan], dtype=object)
    per_x = np.array([*(_s(value_style[c][1]) if c in value_style else np.nan for c in names),
                      np.nan], dtype=object)  # (a missing name's code -1 takes the last)
    vstyle = np.where(used, per_u[codes], per_x[codes]).tolist()
    values = chunk["value"].to_numpy(dtype=float)
    finite = np.isfinite(values).tolist()
    value_frag = [
        f"{s}><v>{v!r}</v></c>" if ok else f"{s}/>"
        for v, s, ok in zip(values.tolist(), vstyle, finite, strict=True)
    ]
    bool_u, bool_x = _s(styles.boolean(False)), _s(styles.boolean(True))
    used_frag = np.where(
        used, f' t="b"{bool_u}><v>1</v></c>', f' t="b"{bool_x}><v>0</v></c>'
    ).tolist()
    int_style = np.where(used, _s(styles.number("0", False)), _s(styles.number("0", True))).tolist()

    def integers(key, offset=0):
        data = chunk[key].to_numpy()
        if data.dtype.kind in "iu":
            return [
                f"{s}><v>{x + offset}</v></c>"
                for x, s in zip(data.tolist(), int_style, strict=True)
            ]
        out = []
        for x, s in zip(data.tolist(), int_style, strict=True):
            ok = x is not None and x == x  # None or NaN: an empty cell
            out.append(f"{s}><v>{int(x) + offset}</v></c>" if ok else f"{s}/>")
        return out

    columns = []
    for key in keys:
        if key == "value":
            columns.append(value_frag)
        elif key == "used":
            columns.append(used_frag)
        elif key == "source_row":
            columns.append(integers(key))
        elif key == "order":
            columns.append(integers(key, 1))  # a reader counts production order from 1
        else:  # text, including any column a later layout adds
            columns.append(text_cols[key].fragments(start, stop, used))
    return columns


def read_measurements(wb) -> pd.DataFrame:
    """The tidy measurements table back from the measurements sheet(s) of a verify workbook.

    For ``verify replay --from-sheet``: the columns of :data:`~verify.model.MEASUREMENT_COLUMNS`
    rebuilt from the sheet's header labels (``Used`` gives ``excluded``), values as stored.
    """
    from ..model import MEASUREMENT_COLUMNS
    from .layout import MEASUREMENTS_SHEET

    by_label = {label: key for key, label in MEASUREMENT_HEADERS}
    frames = []
    i = 0
    while True:
        title = MEASUREMENTS_SHEET if i == 0 else f"{MEASUREMENTS_SHEET} ({i + 1})"
        if title not in wb.sheetnames:
            break
        rows = wb[title].iter_rows(values_only=True)
        header = next(rows, ())
        keys = [by_label.get(h) for h in header]
        missing = [label for key, label in MEASUREMENT_HEADERS
                   if key in ("characteristic", "process", "lot", "value", "used")
                   and key not in keys]
        if missing:
            raise ValueError(f"sheet {title!r} lacks the column(s) {', '.join(missing)}")
        data = {k: [] for k in keys if k is not None}
        for r in rows:
            if r is None or all(v is None for v in r[: len(keys)]):
                continue
            if r[0] is not None and r[keys.index("characteristic")] is None:
                continue  # a note beside or below the table
            for j, k in enumerate(keys):
                if k is not None:
                    data[k].append(r[j] if j < len(r) else None)
        frames.append(pd.DataFrame(data))
        i += 1
    if not frames:
        raise ValueError(f"no sheet {MEASUREMENTS_SHEET!r}")
    t = pd.concat(frames, ignore_index=True)

    def text(col: str) -> pd.Series:
        if col not in t:
            return pd.Series([""] * len(t), dtype=object)
        return t[col].map(lambda v: "" if v is None else str(v)).astype(str)

    used = t["used"].map(lambda v: v is True or v == 1 or str(v).upper() == "TRUE")
    out = pd.DataFrame({
        "source_file": text("source_file"),
        "source_row": pd.to_numeric(t.get("source_row"), errors="coerce").fillna(0).astype(
            np.int64) if "source_row" in t else np.zeros(len(t), np.int64),
        # the sheet counts production order from 1; the table from 0
        "order": pd.to_numeric(t["order"], errors="coerce").fillna(1).astype(np.int64) - 1
        if "order" in t else np.arange(len(t), dtype=np.int64),
        "lot": text("lot"),
        "process": text("process"),
        "pair": text("pair"),
        "characteristic": text("characteristic"),
        "value": pd.to_numeric(t["value"], errors="coerce").astype(float),
        "excluded": ~used.astype(bool),
        "exclusion_reason": text("exclusion_reason"),
    }, columns=list(MEASUREMENT_COLUMNS))
    return out.reset_index(drop=True)


__all__ = ["add_placeholders", "continuation_note", "read_measurements", "MUTED"]
