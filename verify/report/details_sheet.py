"""The compact detail of a large layout: one streamed sheet instead of a sheet per
characteristic.

A sheet per characteristic (its checks, diagnostics and charts) costs tens of milliseconds to
build with openpyxl; a layout of 300 characteristics would spend most of its run there. Beyond
:data:`DETAIL_SHEETS_MAX` characteristics (or when asked), the workbook carries instead the
sheet ``Details``: a row per check and a row per flagged diagnostic of every characteristic,
with the numbers a reviewer reads on a characteristic sheet (estimate, interval, p-value,
margin, power, planned n, outcome and reason). It is written as XML directly, like the
measurements sheet, so its cost per characteristic is a fraction of a millisecond.
``verify run --full-detail`` writes the sheets per characteristic whatever their number.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Iterator

from openpyxl.utils import get_column_letter

from ..model import Evaluation
from .cells import header_row, infinity_text, put
from .xlsx_fast import StreamedSheet, number_cell, text_cell

DETAILS_SHEET = "Details"
#: Above this many characteristics the workbook has the Details sheet instead of a sheet per
#: characteristic (unless full detail is asked for).
DETAIL_SHEETS_MAX = 40
DETAIL_MODES = ("auto", "full", "compact")

COLUMNS = (
    ("Characteristic", 22), ("Decision", 10), ("Row", 12), ("Method", 34), ("Outcome", 10),
    ("Estimate", 13), ("CI low", 13), ("CI high", 13), ("CI level", 9), ("p-value", 11),
    ("Margin low", 12), ("Margin high", 12), ("Power", 9), ("Planned n", 10), ("n new", 8),
    ("n old", 8), ("Reason or note", 90),
)
HEADER_ROW = 3


def per_characteristic_sheets(n: int, detail: str) -> bool:
    """Whether the workbook gets a sheet per characteristic (else the Details sheet)."""
    if detail not in DETAIL_MODES:
        raise ValueError(f"detail must be one of {DETAIL_MODES}, not {detail!r}")
    return detail == "full" or (detail == "auto" and n <= DETAIL_SHEETS_MAX)


def details_placeholder(ws, ev: Evaluation, styles) -> StreamedSheet:
    """Header and layout of the Details sheet; its rows are streamed by the returned sheet."""
    put(ws, 1, 1, f"Details of {len(ev.characteristics)} characteristics: a row per check "
        "and per flagged diagnostic (verify run --full-detail writes a sheet per "
        "characteristic instead)")
    header_row(ws, HEADER_ROW, 1, [h for h, _ in COLUMNS])
    for j, (_h, width) in enumerate(COLUMNS, start=1):
        ws.column_dimensions[get_column_letter(j)].width = width
    # by reference, not ws.cell(): a cell object would make openpyxl write an empty row 4 in
    # the placeholder, before the streamed row 4 (a row given twice)
    ws.freeze_panes = f"B{HEADER_ROW + 1}"
    from .cells import page_setup

    page_setup(ws, None, landscape=True, title_rows=f"{HEADER_ROW}:{HEADER_ROW}",
               footer="a row per check and per flagged diagnostic")
    text = styles.text()
    rows = list(_rows(ev))
    last = HEADER_ROW + len(rows)
    float_cols = {5, 6, 7, 8, 9, 10, 11, 12}  # 0-based columns holding floats

    letters = [get_column_letter(j + 1) for j in range(len(COLUMNS))]
    texts: dict[str, str] = {}  # a text -> its cell after the reference (names repeat)

    def text_rest(value: str) -> str:
        rest = texts.get(value)
        if rest is None:
            rest = text_cell("", value, text)[len('<c r=""'):]
            if len(texts) < 4096:
                texts[value] = rest
        return rest

    def cell(ref: str, j: int, v) -> str:
        """One cell, as text_cell / number_cell write it (plain types first)."""
        t = type(v)
        if t is str:
            return f'<c r="{ref}"{text_rest(v)}' if v else ""
        if t is float and math.isfinite(v):
            return f'<c r="{ref}"><v>{(v if j in float_cols else int(v))!r}</v></c>'
        if t is int:
            return f'<c r="{ref}"><v>{(float(v) if j in float_cols else v)!r}</v></c>'
        if v is None or (isinstance(v, float) and math.isnan(v)):
            return ""
        if isinstance(v, float) and math.isinf(v):  # a one-sided bound, as text
            return text_cell(ref, infinity_text(v), text)
        if isinstance(v, bool) or not isinstance(v, numbers.Real):
            return text_cell(ref, str(v), text)
        if j in float_cols:
            return number_cell(ref, float(v))
        return number_cell(ref, int(v))

    def chunks() -> Iterator[str]:
        buf = []
        for i, values in enumerate(rows, start=HEADER_ROW + 1):
            cells = "".join([cell(f"{letters[j]}{i}", j, v)
                             for j, v in enumerate(values) if v is not None])
            buf.append(f'<row r="{i}">{cells}</row>')
            if len(buf) >= 2048:
                yield "".join(buf)
                buf.clear()
        yield "".join(buf)

    return StreamedSheet(ws.title, chunks, f"A1:{get_column_letter(len(COLUMNS))}{last}")


def _rows(ev: Evaluation) -> Iterator[tuple]:
    for c in ev.characteristics:
        for r in c.checks:
            margin = r.margin or (None, None)
            extra = r.details_mapping()
            yield (c.name, c.decision, f"check {r.check}", r.method, r.outcome, r.estimate,
                   r.ci_low, r.ci_high, r.ci_level, r.p_value, margin[0], margin[1], r.power,
                   r.planned_n, extra.get("n_new"), extra.get("n_old"), r.reason)
        for d in c.diagnostics:
            if d.flag:
                yield (c.name, c.decision, f"diagnostic {d.name} ({d.group})", d.method,
                       "review", d.statistic, None, None, None, d.p_value, None, None, None,
                       None, None, None, d.note)
        for note in c.review:
            if not note.startswith(f"review: {c.name} ("):  # those are the diagnostics above
                yield (c.name, c.decision, "review", "", "review", None, None, None, None,
                       None, None, None, None, None, None, None, note)
