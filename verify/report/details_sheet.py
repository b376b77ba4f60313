"""The compact detail of a large layout: one streamed sheet instead of a sheet per
characteristic.

A sheet per characteristic (its checks, diagnostics and charts) costs tens of milliseconds to
build with openpyxl; a layout of 300 characteristics would spend most of its run there. Beyond
:data:`DETAIL_SHEETS_MAX` characteristics (or when asked), the workbook carries instead the
sheet ``Details``: a row per check and a row per flagged diagnostic of every characteristic,
with the numbers a reviewer reads on a characteristic sheet (estimate, interval, p-value,
margin, power, planned n, outcome and reason). It is written as XML directly, like the
measurements sheet, so its cost per characteristic is a fraction of a millisecond. It prints
for a change board to read: a whole row on one landscape page at about 72%, its long texts
wrapped in rows tall enough for them, the header and the identifying columns on every page.
``verify run --full-detail`` writes the sheets per characteristic whatever their number.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Iterator

from openpyxl.utils import get_column_letter

from ..model import Evaluation
from .cells import (
    LEVEL_FORMAT,
    P_FORMAT,
    POWER_FORMAT,
    ROW_HEIGHT_MAX,
    fit_rows,
    header_row,
    infinity_text,
    page_setup,
    put,
)
from .paper import PAPER_LONG, print_width_pt
from .xlsx_fast import StreamedSheet, number_cell, text_cell

DETAILS_SHEET = "Details"
#: Above this many characteristics the workbook has the Details sheet instead of a sheet per
#: characteristic (unless full detail is asked for).
DETAIL_SHEETS_MAX = 40
DETAIL_MODES = ("auto", "full", "compact")

#: (heading, width in characters). The widths are for paper: at :func:`print_scale` (about 72%)
#: the sheet is one landscape page wide (A4 or US Letter, by the usual 7-pixel digit of the
#: default font), so a row is read whole on one sheet of paper. The texts that run long
#: (characteristic, row, method, reason) wrap in their columns (WRAPPED) and each row is as
#: tall as its longest text; a number in the General format shows as many digits as its column
#: holds (the cell keeps them all).
COLUMNS = (
    ("Characteristic", 15), ("Decision", 9), ("Row", 12), ("Method", 20), ("Outcome", 9),
    ("Estimate", 9), ("CI low", 9), ("CI high", 9), ("CI level", 6), ("p-value", 8),
    ("Margin low", 9), ("Margin high", 9), ("Power", 8), ("Planned n", 8), ("n new", 5),
    ("n old", 5), ("Reason or note", 34),
)
WRAPPED = frozenset({0, 2, 3, 16})  # 0-based columns whose text wraps
P_VALUE = 9  # 0-based: the p-value column, in the p-value format of the other sheets
#: 0-based columns with a number format, the one the characteristic sheets give the same figure
#: (the others show their numbers in the general format)
FORMATS = {8: LEVEL_FORMAT, P_VALUE: P_FORMAT, 12: POWER_FORMAT}
#: Printed on every page: the identifying columns (where a program's wider font makes the sheet
#: run onto a second page across, that page still names its rows) and the header row.
TITLE_COLUMNS = "A:C"
#: Side and top margins (inches) of the printed page: the sides a little narrower than the
#: other sheets' 0.4, for a larger scale.
MARGINS = (0.3, 0.5)
LINE_HEIGHT = 14.5  # points a line of wrapped text takes, as verify.report.cells.fit_rows
HEADER_ROW = 3


def per_characteristic_sheets(n: int, detail: str) -> bool:
    """Whether the workbook gets a sheet per characteristic (else the Details sheet)."""
    if detail not in DETAIL_MODES:
        raise ValueError(f"detail must be one of {DETAIL_MODES}, not {detail!r}")
    return detail == "full" or (detail == "auto" and n <= DETAIL_SHEETS_MAX)


def details_placeholder(ws, ev: Evaluation, styles) -> StreamedSheet:
    """Header and layout of the Details sheet; its rows are streamed by the returned sheet.

    On paper: landscape at :func:`print_scale` (one page wide where the default font's digit
    is the 7 pixels the widths are counted in), the header row and the identifying columns
    (:data:`TITLE_COLUMNS`) on every page, each row as tall as its longest wrapped text
    (:func:`row_lines`; spreadsheet programs do not grow rows on opening a file), every cell
    read from the top.
    """
    put(ws, 1, 1, f"Details of {len(ev.characteristics)} characteristics: a row per check "
        "and per flagged diagnostic (verify run --full-detail writes a sheet per "
        "characteristic instead)")
    header_row(ws, HEADER_ROW, 1, [h for h, _ in COLUMNS])
    for j, (_h, width) in enumerate(COLUMNS, start=1):
        ws.column_dimensions[get_column_letter(j)].width = width
    fit_rows(ws)  # the header's labels wrap in the narrow number columns
    # by reference, not ws.cell(): a cell object would make openpyxl write an empty row 4 in
    # the placeholder, before the streamed row 4 (a row given twice)
    ws.freeze_panes = f"D{HEADER_ROW + 1}"  # the identifying columns, as on paper
    # a fixed scale rather than fit to the page width: where a program's font is wider than
    # the one the widths are counted in (a spreadsheet program without the default font), the
    # sheet runs onto a second page across, at the same readable scale, instead of shrinking
    page_setup(ws, None, landscape=True, title_rows=f"{HEADER_ROW}:{HEADER_ROW}",
               title_cols=TITLE_COLUMNS, scale=print_scale(ws),
               footer="a row per check and per flagged diagnostic", margins=MARGINS)
    # every cell reads from the top (a tall row's numbers beside its wrapped reason)
    text, wrapped = styles.top(), styles.top(wrap=True)
    number_styles = [styles.top(fmt=FORMATS.get(j)) for j in range(len(COLUMNS))]
    rows = list(_rows(ev))
    last = HEADER_ROW + len(rows)
    float_cols = {5, 6, 7, 8, 9, 10, 11, 12}  # 0-based columns holding floats

    letters = [get_column_letter(j + 1) for j in range(len(COLUMNS))]
    text_styles = [wrapped if j in WRAPPED else text for j in range(len(COLUMNS))]
    number_attrs = [f' s="{st}"' for st in number_styles]
    widths = [w for _h, w in COLUMNS]
    # (column, characters on one line): a shorter text without a line break takes one line
    wrapped_rooms = [(j, widths[j] * 1.05) for j in sorted(WRAPPED)]
    # a text -> its cell after the reference, for each text style (names repeat)
    texts: dict[int, dict[str, str]] = {text: {}, wrapped: {}}
    cached = [0]

    def text_rest(value: str, st: int) -> str:
        rest = texts[st].get(value)
        if rest is None:
            rest = text_cell("", value, st)[len('<c r=""'):]
            if cached[0] < 4096:
                texts[st][value] = rest
                cached[0] += 1
        return rest

    def cell(ref: str, j: int, v) -> str:
        """One cell, as text_cell / number_cell write it (plain types first)."""
        t = type(v)
        if t is str:
            return f'<c r="{ref}"{text_rest(v, text_styles[j])}' if v else ""
        if t is float and math.isfinite(v):
            x = v if j in float_cols else int(v)
            return f'<c r="{ref}"{number_attrs[j]}><v>{x!r}</v></c>'
        if t is int:
            x = float(v) if j in float_cols else v
            return f'<c r="{ref}"{number_attrs[j]}><v>{x!r}</v></c>'
        if v is None or (isinstance(v, float) and math.isnan(v)):
            return ""
        if isinstance(v, float) and math.isinf(v):  # a one-sided bound, as text
            return text_cell(ref, infinity_text(v), text_styles[j])
        if isinstance(v, bool) or not isinstance(v, numbers.Real):
            return text_cell(ref, str(v), text_styles[j])
        if j in float_cols:
            return number_cell(ref, float(v), number_styles[j])
        return number_cell(ref, int(v), number_styles[j])

    def chunks() -> Iterator[str]:
        buf = []
        for i, values in enumerate(rows, start=HEADER_ROW + 1):
            cells = "".join([cell(f"{letters[j]}{i}", j, v)
                             for j, v in enumerate(values) if v is not None])
            lines = 1
            for j, room in wrapped_rooms:
                v = values[j]
                if type(v) is str and (len(v) > room or "\n" in v):
                    lines = max(lines, row_lines(v, widths[j]))
            if lines > 1:
                buf.append(f'<row r="{i}" ht="{row_height(lines)}" customHeight="1">'
                           f'{cells}</row>')
            else:
                buf.append(f'<row r="{i}">{cells}</row>')
            if len(buf) >= 2048:
                yield "".join(buf)
                buf.clear()
        yield "".join(buf)

    return StreamedSheet(ws.title, chunks, f"A1:{get_column_letter(len(COLUMNS))}{last}")


def print_scale(ws) -> int:
    """The print scale (whole percent) at which the sheet's columns are one landscape page
    wide on the smaller of A4 and US Letter, within the side margins."""
    usable = PAPER_LONG - 72 * 2 * MARGINS[0]
    return min(100, math.floor(100 * usable / print_width_pt(ws, len(COLUMNS))))


def row_height(lines: int) -> str:
    """The height (points, as text) of a row of ``lines`` lines of wrapped text, as
    :func:`verify.report.cells.fit_rows` gives it, within the 409 points a row can have."""
    h = min(ROW_HEIGHT_MAX, lines * LINE_HEIGHT + 2)
    return f"{h:.2f}".rstrip("0").rstrip(".")


def row_lines(value, width: float) -> int:
    """The lines a wrapped text takes in a column ``width`` characters wide, as
    :func:`verify.report.cells.fit_rows` counts them (default font); 1 for anything else."""
    if type(value) is not str or not value:
        return 1
    room = max(width * 1.05, 1)
    if "\n" not in value:
        return max(1, math.ceil(len(value) / room))
    return sum(max(1, math.ceil(len(part) / room)) for part in value.split("\n"))


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
