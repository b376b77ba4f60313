"""Cell-level helpers for the workbook: safe text, number formats, palette, sheet names.

Two rules hold for every cell the report writes:

* Text from input files (lot ids, pair keys, file names, reasons) is always stored as text. A
  string such as ``=HYPERLINK("x")``, ``+1``, ``@SUM(A1)`` or ``#N/A`` never becomes a formula
  or an error value (:func:`put` forces the string type).
* Stored values are never rounded; only the number format decides what a reader sees. ``None``
  and NaN leave the cell empty (never the text "nan"); an infinite bound of a one-sided interval
  is written as the text ``-∞`` or ``+∞``.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable

import numpy as np
from openpyxl.styles import Alignment, Border, PatternFill, Side

from .cell_styles import (
    align_top,
    cell_at,
    merge,
    row_dimension,
    shared_font,
    style,
)
from .safe_text import XML_ILLEGAL as XML_ILLEGAL  # re-exported for the sheet writers
from .safe_text import xml_safe

EXCEL_CELL_MAX = 32_767  # characters in one cell
SHEET_NAME_FORBIDDEN = re.compile(r"[\[\]:*?/\\]")
SHEET_NAME_MAX = 31

# --- palette (our own) ------------------------------------------------------------------------
INK = "1F2A33"  # body text
MUTED = "6B7680"  # excluded rows, notes
ACCENT = "245E7A"  # section titles
HEADER_FILL = "DCE6EC"
BAND_FILL = "F3F6F8"
CAUTION_FILL = "FBF1D9"
CAUTION_EDGE = "9A6B12"
DECISION_COLOURS = {
    # decision: (fill, text)
    "PASS": ("2E7D57", "FFFFFF"),
    "HOLD": ("A3392B", "FFFFFF"),
    "PENDING": ("E3A72F", "1F2A33"),
}

# light tints of the decision colours, for cells that carry text to read (check outcomes)
OUTCOME_TINTS = {"PASS": "DDEFE4", "HOLD": "F5D6D1", "PENDING": "FBEBC7"}

THIN = Side(style="thin", color="B7C3CC")
BOX = Border(left=THIN, right=THIN, top=THIN, bottom=THIN)
HEADER_FONT = shared_font(bold=True, color=INK)
HEADER = PatternFill("solid", fgColor=HEADER_FILL)
TITLE_FONT = shared_font(bold=True, size=16, color=ACCENT)
SECTION_FONT = shared_font(bold=True, size=12, color=ACCENT)
NOTE_FONT = shared_font(italic=True, color=MUTED)
FLAG_FONT = shared_font(bold=True, color="8A4B00")  # a diagnostic's flag, a part beyond the limits
LABEL_FONT = shared_font(bold=True, color=INK)  # a row's label in a table
CENTRE = Alignment(horizontal="center")
LEFT = Alignment(horizontal="left")
WRAP = Alignment(wrap_text=True, vertical="top")
TOP = Alignment(vertical="top")

# --- number formats ---------------------------------------------------------------------------
# p-values: 4 decimals, and "< 0.0001" below that, as decide.fmt_p writes them in sentences
P_FORMAT = '[<0.0001]"< 0.0001";0.0000'
STAT_FORMAT = "0.000"
DF_FORMAT = "0.0#"
POWER_FORMAT = "0.0%"
LEVEL_FORMAT = "0%"  # a confidence level: 95%
INT_FORMAT = "0"
RATIO_FORMAT = "0.000"
CPK_FORMAT = "0.00"
MAX_DECIMALS = 6


def fixed(decimals: int | None) -> str:
    """A fixed-decimals number format; ``None`` (resolution unknown) gives ``General``."""
    if decimals is None:
        return "General"
    decimals = max(0, min(int(decimals), 10))
    return "0" if decimals == 0 else "0." + "0" * decimals


def resolution_decimals(values) -> int | None:
    """The number of decimals the values were recorded to (0..6), or None when finer.

    A value counts as recorded to ``d`` decimals when rounding it to ``d`` decimals changes it
    by less than 1e-9 relative (binary floats such as 12.003 are never exact).

    Examples
    --------
    >>> resolution_decimals([12.003, 11.998, 12.0])
    3
    >>> resolution_decimals([1, 2, 3])
    0
    """
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return None
    tol = 1e-9 * np.maximum(1.0, np.abs(v))
    for d in range(MAX_DECIMALS + 1):
        if np.all(np.abs(np.round(v, d) - v) <= tol):
            return d
    return None


def formats_for(decimals: int | None) -> dict[str, str]:
    """Number formats for one characteristic, from the resolution of its values."""
    d = 4 if decimals is None else decimals
    return {
        "value": fixed(decimals),
        "mean": fixed(d + 1),
        "sd": fixed(d + 2),
        "difference": fixed(d + 1),  # a difference of means (new - old or new - target)
        "se": fixed(d + 2),
    }


# --- text -------------------------------------------------------------------------------------


def clean_text(text: object) -> str:
    """Text safe for a cell: characters XML cannot carry replaced visibly
    (:func:`~verify.report.safe_text.xml_safe`), length within Excel's limit.

    A text longer than a cell holds is cut with a visible marker, never silently.
    """
    s = xml_safe(str(text))
    if len(s) > EXCEL_CELL_MAX:
        marker = f" ...[cut: {len(s)} characters in full]"
        s = s[: EXCEL_CELL_MAX - len(marker)] + marker
    return s


def infinity_text(x: float) -> str:
    return "+∞" if x > 0 else "-∞"


def put(
    ws,
    row: int,
    col: int,
    value,
    *,
    fmt: str | None = None,
    font=None,
    fill=None,
    align=None,
    border=None,
):
    """Write one cell by the rules above and return it.

    Strings are forced to the text type (no formulas, no error values). Numbers keep full
    precision; ``fmt`` sets only how they look.
    """
    cell = cell_at(ws, row, col)
    # Values are stored as openpyxl's ``cell.value = ...`` stores them (its type codes: "n"
    # number, "b" logical, "s" text) without its per-value type dispatch; text has been made
    # safe by clean_text, which leaves nothing for openpyxl's own check of text to refuse.
    number = None  # the number format, set only on a number
    right = False
    kind = type(value)
    if kind is str:  # the common types first, then the general tests below
        cell._value, cell.data_type = clean_text(value), "s"
    elif kind is float and math.isfinite(value):
        cell._value, cell.data_type = value, "n"
        number = fmt or None
    elif kind is int:
        cell._value, cell.data_type = value, "n"
        number = fmt or None
    elif value is None:
        pass
    elif isinstance(value, (bool, np.bool_)):
        cell._value, cell.data_type = bool(value), "b"
    elif isinstance(value, (int, np.integer)):
        cell._value, cell.data_type = int(value), "n"
        number = fmt or None
    elif isinstance(value, (float, np.floating)):
        x = float(value)
        if math.isnan(x):
            pass
        elif math.isinf(x):
            cell._value, cell.data_type = infinity_text(x), "s"
            right = True
        else:
            cell._value, cell.data_type = x, "n"
            number = fmt or None
    else:
        # never a formula, never an error value
        cell._value, cell.data_type = clean_text(value), "s"
    # each distinct combination of style parts is looked up once per workbook (cell_styles)
    style(cell, fmt=number, right=right, font=font, fill=fill, align=align, border=border)
    return cell


def put_row(ws, row: int, col: int, values: Iterable, *, fmts=None, **style) -> None:
    """Write values across a row from ``col``; ``fmts`` is a parallel sequence (or None)."""
    values = list(values)
    fmts = list(fmts) if fmts is not None else [None] * len(values)
    for i, (v, f) in enumerate(zip(values, fmts, strict=True)):
        put(ws, row, col + i, v, fmt=f, **style)


def header_row(ws, row: int, col: int, labels: Iterable[str]) -> None:
    for i, label in enumerate(labels):
        put(ws, row, col + i, label, font=HEADER_FONT, fill=HEADER, align=WRAP, border=BOX)


def section(ws, row: int, title: str, col: int = 1) -> None:
    put(ws, row, col, title, font=SECTION_FONT)


# --- sheet names ------------------------------------------------------------------------------

# Excel refuses "History" as a sheet name (it keeps it for change tracking): common practice.
_RESERVED = {"history"}


DIAGNOSTIC_HEADERS = ["Diagnostic", "Method", "Group", "Statistic", "p-value", "Flag", "Note"]


def diagnostic_rows(ws, row: int, diagnostics, last_col: int, stat_format) -> int:
    """A row per diagnostic (the note merged to ``last_col``, a flag in bold brown); the
    statistic's number format is ``stat_format(diagnostic)``. Returns the next free row."""
    for d in diagnostics:
        values = [d.name, d.method, d.group, d.statistic, d.p_value,
                  "review" if d.flag else "no", d.note]
        fl = [None, None, None, stat_format(d), P_FORMAT, None, None]
        for j, (v, fm) in enumerate(zip(values, fl, strict=True), start=1):
            put(ws, row, j, v, fmt=fm, border=BOX, align=WRAP if j in (2, 7) else None)
        if d.flag:
            style(ws.cell(row, 6), font=FLAG_FONT)
        merge(ws, row, 7, row, last_col)
        row += 1
    return row


def sheet_name(name: str, taken: set[str], *, fallback: str = "Sheet") -> str:
    """A sheet name by Excel's rules, unique (case-insensitively) against ``taken``.

    At most 31 characters, none of ``[]:*?/\\``, not starting or ending with an apostrophe,
    not blank, not "History". A clash gets a suffix " (2)", " (3)" ... within the limit. The
    chosen name is added to ``taken`` (lower-cased).

    Examples
    --------
    >>> sheet_name("Bore Ø [mm] / left: 1*2?", set())
    'Bore Ø _mm_ _ left_ 1_2_'
    """
    s = xml_safe(SHEET_NAME_FORBIDDEN.sub("_", str(name)))
    s = s.replace("\t", " ").replace("\n", " ").replace("\r", " ")
    s = s.strip().strip("'").strip()
    if not s:
        s = fallback
    base = s[:SHEET_NAME_MAX].rstrip().rstrip("'") or fallback
    candidate = base
    k = 2
    while candidate.lower() in taken or candidate.lower() in _RESERVED:
        suffix = f" ({k})"
        candidate = base[: SHEET_NAME_MAX - len(suffix)].rstrip().rstrip("'") + suffix
        k += 1
    taken.add(candidate.lower())
    return candidate


def quote_sheet(name: str) -> str:
    """A sheet name quoted for a formula or a defined range: ``'It''s'``."""
    return "'" + name.replace("'", "''") + "'"


def column_widths(ws):
    """``width(col)``: the width of column number ``col`` of ``ws`` (8.43, the default, where
    none is set), each column looked up once; what :func:`fit_rows` measures text against."""
    from openpyxl.utils import get_column_letter

    widths: dict[int, float] = {}

    def width(col: int) -> float:
        w = widths.get(col)
        if w is None:
            w = ws.column_dimensions[get_column_letter(col)].width
            w = widths[col] = float(w) if w else 8.43
        return w

    return width


#: The tallest row a worksheet can have, in points (Excel refuses a file with a taller one).
ROW_HEIGHT_MAX = 409.0


def fit_rows(ws, *, line_height: float = 14.5) -> None:
    """Give rows with wrapped text the height their text needs, up to :data:`ROW_HEIGHT_MAX`.

    Spreadsheet programs do not grow rows on opening a file, so wrapped text would overlap the
    next row. The estimate counts characters against the column width (merged cells: the
    widths of the merged columns); a row keeps a larger height set earlier. Text that needs
    more than the tallest row stays whole in its cell (the formula bar shows it all).
    """
    width = column_widths(ws)

    spans = {}
    for rng in ws.merged_cells.ranges:
        spans[(rng.min_row, rng.min_col)] = (
            sum(width(c) for c in range(rng.min_col, rng.max_col + 1)),
            rng.max_row - rng.min_row + 1,
        )
    cells = ws._cells
    if not ws._current_row:
        return
    max_row = ws.max_row
    # Every row from 1 to the last has a cell afterwards, and A1 exists, as when this iterated
    # ws.iter_rows() (which creates every missing cell of the used rectangle): the saved sheet
    # keeps the same (empty) row elements and dimension. Empty unstyled cells are not saved,
    # so one per row is enough.
    rows_present = {r for r, _c in cells}
    if (1, 1) not in cells:
        ws._get_cell(1, 1)
    for r in range(1, max_row + 1):
        if r not in rows_present:
            ws._get_cell(r, 1)
    valued = sorted((rc, cell) for rc, cell in cells.items() if cell._value is not None)
    # the alignments and fonts by their index in the workbook's lists (an unstyled cell has
    # the defaults at index 0), read once per index rather than through a proxy per cell
    aligns, fonts = ws.parent._alignments, ws.parent._fonts
    wraps: dict[int, bool] = {}
    sizes: dict[int, float] = {}
    i, n = 0, len(valued)
    while i < n:
        r = valued[i][0][0]
        j = i
        while j < n and valued[j][0][0] == r:
            j += 1
        row = [cell for _rc, cell in valued[i:j]]
        i = j
        need = 1
        font_scale = 1.0
        for cell in row:
            value = cell._value
            if not isinstance(value, str):
                continue
            st = cell._style
            a = 0 if st is None else st[5]
            wrap = wraps.get(a)
            if wrap is None:
                wrap = wraps[a] = bool(aligns[a].wrap_text)
            if not wrap:
                continue
            own = width(cell.column)
            cap, n_rows = spans.get((r, cell.column), (own, 1))
            f = st[0]  # a wrapped cell has a style array
            size = sizes.get(f)
            if size is None:
                size = sizes[f] = (fonts[f].sz or 11) / 11
            room = max(cap * 1.05, 1)
            if "\n" in value:
                lines = sum(max(1, math.ceil(len(part) * size / room))
                            for part in value.split("\n"))
            else:  # (one line: the same sum without the split)
                lines = max(1, math.ceil(len(value) * size / room))
            lines = math.ceil(lines / n_rows)  # a cell merged down shares the rows
            if lines > need:
                need, font_scale = lines, max(1.0, size)
        if need > 1:
            h = min(ROW_HEIGHT_MAX, need * line_height * font_scale + 2)
            dim = row_dimension(ws, r)
            if dim.ht is None or dim.ht < h:
                dim.ht = h
            for cell in row:  # in a tall row, everything reads from the top
                st = cell._style
                if aligns[0 if st is None else st[5]].vertical is None:
                    align_top(cell)


# --- paper ------------------------------------------------------------------------------------


def page_setup(
    ws,
    area: str | None,
    *,
    landscape: bool = True,
    one_page: bool = False,
    footer: str = "",
    title_rows: str | None = None,
    title_cols: str | None = None,
    scale: int | None = None,
    row_breaks=(),
    margins: tuple[float, float] = (0.4, 0.5),
) -> None:
    """How a sheet prints: orientation, fit to the page width (and height for ``one_page``),
    repeated header rows (and columns), margins, and a footer naming the sheet and the page.

    ``scale`` (percent) prints at that scale instead of fitting the page width, the pages
    across in turn before the next rows (the repeated columns ``title_cols`` name a row on each
    page). ``row_breaks`` are rows after which a new page starts (kept blocks, charts).
    """
    from openpyxl.worksheet.pagebreak import Break

    if area:
        ws.print_area = area
    ws.page_setup.orientation = "landscape" if landscape else "portrait"
    if scale is None:
        ws.page_setup.fitToWidth = 1
        ws.page_setup.fitToHeight = 1 if one_page else 0
        ws.sheet_properties.pageSetUpPr.fitToPage = True
    else:
        ws.page_setup.scale = scale
        ws.page_setup.pageOrder = "overThenDown"
    if title_rows:
        ws.print_title_rows = title_rows
    if title_cols:
        ws.print_title_cols = title_cols
    side, top = margins
    ws.page_margins.left = ws.page_margins.right = side
    ws.page_margins.top = top
    ws.page_margins.bottom = top + 0.15
    ws.page_margins.footer = 0.25
    ws.oddFooter.left.text = "&A" + (f": {footer}" if footer else "")
    ws.oddFooter.left.size = 8
    ws.oddFooter.right.text = "page &P of &N"
    ws.oddFooter.right.size = 8
    for r in sorted(set(row_breaks)):
        if r > 0:
            ws.row_breaks.append(Break(id=r))
