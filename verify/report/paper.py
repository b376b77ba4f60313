"""Where printed pages end: keep blocks of rows (a heading with its table, a band of charts) on
one page by putting a manual page break before a block that would not fit in what is left.

Spreadsheet programs break pages by row heights once the sheet is scaled to the page width, so
the arithmetic can be done here: the printable height of the paper less the margins, divided by
the scale that fitting the print area's width to the page needs, is the height of sheet rows a
page holds. Every row in a kept block gets an explicit height, so no program's default row
height changes the sums. The paper is taken as the smaller of A4 and US Letter in each
direction (595 x 792 points), so a page computed here holds on either.
"""

from __future__ import annotations

import math

from openpyxl.utils import get_column_letter

from .cell_styles import cell_at, row_dimension

# points (1/72 inch): A4's width (210 mm) and US Letter's length (11 in)
PAPER_SHORT, PAPER_LONG = 595.0, 792.0
DEFAULT_ROW_PT = 15.0
KEEP_FIRST = 3  # rows kept with a heading when its whole block cannot fit a page
SAFETY = 0.95  # programs round the scale down to whole percent and pad headers and footers


def column_points(width_chars: float | None) -> float:
    """A column width in characters as points (the usual 7-pixel digit plus 5 pixels padding at
    96 pixels an inch: common practice for the default font)."""
    w = 8.43 if width_chars is None else float(width_chars)
    return math.trunc(w * 7 + 5) * 0.75


def print_width_pt(ws, last_col: int) -> float:
    return sum(
        column_points(ws.column_dimensions[get_column_letter(j)].width)
        for j in range(1, last_col + 1)
    )


def page_rows_pt(ws, last_col: int) -> float:
    """The height of sheet rows (in points, unscaled) one printed page holds."""
    landscape = ws.page_setup.orientation == "landscape"
    paper_w, paper_h = (PAPER_LONG, PAPER_SHORT) if landscape else (PAPER_SHORT, PAPER_LONG)
    m = ws.page_margins
    usable_w = paper_w - 72 * (m.left + m.right)
    usable_h = paper_h - 72 * (m.top + m.bottom)
    scale = min(1.0, usable_w / max(1.0, print_width_pt(ws, last_col)))
    return SAFETY * usable_h / scale


def row_pt(ws, r: int) -> float:
    h = row_dimension(ws, r).ht
    return DEFAULT_ROW_PT if h is None else float(h)


def fix_heights(ws, first: int, last: int) -> None:
    """Give rows without a height the default one explicitly (programs differ otherwise)."""
    for r in range(first, last + 1):
        d = row_dimension(ws, r)
        if d.ht is None:
            d.ht = DEFAULT_ROW_PT


def keep_together(
    ws, blocks: list[tuple[int, int]], *, last_row: int, last_col: int, title_rows: int = 0
) -> list[int]:
    """Rows after which a page break keeps each block (first, last row) on one page.

    A block taller than a page starts a page and runs on. ``title_rows`` rows repeated at the
    top of every page (from row 1) take their height from every page after the first.
    Every page end is returned, not only those before kept blocks: with all of them explicit,
    a program that would fit more rows on a page (wider fonts scale the sheet down further)
    still ends each page where it was reckoned here. Returns the break rows (a break after
    row r starts the next page with row r + 1).
    """
    fix_heights(ws, 1, last_row)
    capacity = page_rows_pt(ws, last_col)
    repeat = sum(row_pt(ws, r) for r in range(1, title_rows + 1)) if title_rows else 0.0
    starts = {a: b for a, b in blocks}
    breaks: list[int] = []
    used = 0.0
    room = capacity
    r = 1
    while r <= last_row:
        h = row_pt(ws, r)
        if r in starts:
            b = starts[r]
            need = sum(row_pt(ws, k) for k in range(r, b + 1))
            if need > capacity - repeat:  # too tall for a page: keep its first rows together
                need = sum(row_pt(ws, k) for k in range(r, min(b, r + KEEP_FIRST) + 1))
            if used > 0 and used + need > room:
                breaks.append(r - 1)
                used, room = 0.0, capacity - repeat
        if used + h > room and used > 0:
            # the page is full: break here explicitly, so that every program starts the next
            # page at this row (one with wider columns would scale smaller and fill a page
            # further, and the blocks after it would no longer fall as reckoned)
            breaks.append(r - 1)
            used, room = 0.0, capacity - repeat
        used += h
        r += 1
    return breaks


def apply_breaks(ws, rows) -> None:
    """Put a manual page break after each row in ``rows``."""
    from openpyxl.worksheet.pagebreak import Break

    for r in sorted(set(rows)):
        if r > 0:
            ws.row_breaks.append(Break(id=r))


def section_blocks(ws, last_row: int, *, size: float = 12) -> list[tuple[int, int]]:
    """Blocks from each section heading (a bold heading of ``size`` pt in column A) to the row
    before the next heading's blank line."""
    fonts = ws.parent._fonts
    heading: dict[int, bool] = {}  # font index -> bold of this size (read once per font)
    starts = []
    for r in range(1, last_row + 1):
        cell = cell_at(ws, r, 1)  # (as ws.cell: created when missing)
        if not isinstance(cell._value, str):
            continue
        style = cell._style
        f = 0 if style is None else style[0]
        hit = heading.get(f)
        if hit is None:
            font = fonts[f]
            hit = heading[f] = bool(font.b) and font.sz == size
        if hit:
            starts.append(r)
    ends = [s - 2 for s in starts[1:]] + [last_row]
    return [(a, max(a, b)) for a, b in zip(starts, ends, strict=True)]


def keep_sections(
    ws, *, last_row: int, last_col: int, title_rows: int = 0, whole: bool = False
) -> None:
    """Keep each section heading with its first rows (``whole``: the whole section, where it
    fits a page) on one page. Call after the page set-up."""
    blocks = section_blocks(ws, last_row)
    if not whole:
        blocks = [(a, min(b, a + KEEP_FIRST)) for a, b in blocks]
    apply_breaks(ws, keep_together(ws, blocks, last_row=last_row, last_col=last_col,
                                   title_rows=title_rows))
