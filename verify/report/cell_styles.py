"""Styles and merges for the built sheets, looked up once per workbook instead of once per cell.

openpyxl keeps a workbook's fonts, fills, borders, alignments and protections in indexed lists;
every ``cell.font = f`` looks ``f`` up in its list by value, which hashes and compares the style
object field by field (recursively). Measured on the nightly benchmark that lookup was the
largest single cost of building a workbook. Here each distinct combination of style parts is
looked up by openpyxl's own setters once per workbook, the resulting index array
(``StyleArray``) remembered, and every later cell with the same combination gets a copy of it:
the same indices, added to the same lists in the same order, as setting the parts one by one.

:func:`merge` does what ``Worksheet.merge_cells`` does (the merged range, the cells under it
replaced by ``MergedCell`` objects, the top-left cell's border spread to the range's edges and
its protection to every cell) on the style indices, again with each distinct step computed
by openpyxl once per workbook.

Style objects handed to these functions are remembered by identity for the workbook's life
(which keeps them alive, so an identity is never reused): they must not be changed after
use, which openpyxl's style objects are not meant to be either.
"""

from __future__ import annotations

import functools
import weakref

from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE, Cell, MergedCell
from openpyxl.styles import Alignment, Border, Font, PatternFill
from openpyxl.styles.cell_style import StyleArray
from openpyxl.worksheet.cell_range import CellRange
from openpyxl.worksheet.dimensions import RowDimension
from openpyxl.worksheet.merge import MergedCellRange

RIGHT = Alignment(horizontal="right")  # an infinite bound's text, aligned as a number

_BORDER, _PROTECTION, _ALIGNMENT = 2, 4, 5  # positions in a StyleArray
_EDGES = ("top", "left", "right", "bottom")  # the order MergedCellRange.format spreads them
_MAX_ROW, _MAX_COLUMN = 1048576, 18278  # CellRange's bounds (openpyxl 3.1)


class _Book:
    """What one workbook has looked up: style combinations and the merge's border steps."""

    __slots__ = ("combos", "steps", "keep", "__weakref__")

    def __init__(self):
        self.combos: dict = {}
        self.steps: dict = {}
        self.keep: list = []  # the style objects whose identities key ``combos``


_BOOKS: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


_LAST: list = [lambda: None, None]  # the workbook asked for last (weakly) and its _Book


def _book(wb) -> _Book:
    if _LAST[0]() is wb:  # a sheet asks for its workbook thousands of times in a row
        return _LAST[1]
    book = _BOOKS.get(wb)
    if book is None:
        book = _BOOKS[wb] = _Book()
    _LAST[0], _LAST[1] = weakref.ref(wb), book
    return book


def style(cell, *, fmt=None, right=False, font=None, fill=None, align=None, border=None):
    """Set a cell's style parts as openpyxl's setters would, in this order: ``fmt`` (number
    format), ``right`` (the right alignment of an infinite bound), ``font``, ``fill``,
    ``align``, ``border``; a part given as None is left as it is."""
    if fmt is None and not right and font is None and fill is None and align is None \
            and border is None:
        return
    book = _book(cell.parent.parent)
    old = cell._style
    key = (None if old is None else tuple(old), fmt, right,
           id(font), id(fill), id(align), id(border))
    done = book.combos.get(key)
    if done is None:
        if fmt is not None:
            cell.number_format = fmt
        if right:
            cell.alignment = RIGHT
        if font is not None:
            cell.font = font
        if fill is not None:
            cell.fill = fill
        if align is not None:
            cell.alignment = align
        if border is not None:
            cell.border = border
        book.combos[key] = done = StyleArray(cell._style)
        book.keep.append((font, fill, align, border))
        return
    cell._style = StyleArray(done)


class FormatOnce:
    """``style(cell, fmt=fmt)`` for a column of cells: the style found once on a fresh cell
    and copied to each later fresh cell (a cell styled before takes ``style`` itself)."""

    __slots__ = ("fmt", "proto")

    def __init__(self, fmt):
        self.fmt, self.proto = fmt, None

    def apply(self, cell) -> None:
        if self.proto is not None and cell._style is None:
            cell._style = StyleArray(self.proto)
            return
        fresh = cell._style is None
        style(cell, fmt=self.fmt)
        if fresh and cell._style is not None:
            self.proto = cell._style


def _step(book: _Book, wb, kind: str, a: int, b, make) -> int:
    """The index of a derived style (``make()``, added to its list once), remembered by
    (kind, a, b): the derived value depends only on those indices."""
    key = (kind, a, b)
    hit = book.steps.get(key)
    if hit is None:
        hit = book.steps[key] = make()
    return hit


_STARTS: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()


def _add_range(ws, mcr, start_was_merged: bool) -> None:
    """``ws.merged_cells.add(mcr)``: added unless a merged range already holds it, without
    comparing it with every range (which made a sheet's merges cost their number squared).

    A range can only hold ``mcr`` if it covers ``mcr``'s top-left cell: then that cell is a
    MergedCell (merging replaced it) or the range's own top-left cell. The top-left cells of
    the sheet's ranges are kept here, rebuilt whenever ranges were added some other way.
    """
    ranges = ws.merged_cells.ranges
    known = _STARTS.get(ws)
    if known is None or known[0] != len(ranges):
        known = (len(ranges), {(r.min_row, r.min_col) for r in ranges})
    corner = (mcr.min_row, mcr.min_col)
    if start_was_merged or corner in known[1]:
        ws.merged_cells.add(mcr)  # openpyxl's own test
    else:
        ranges.add(mcr)
    known[1].add(corner)
    _STARTS[ws] = (len(ranges), known[1])


def merge(ws, start_row: int, start_column: int, end_row: int, end_column: int) -> None:
    """Merge a range as ``ws.merge_cells(start_row=..., ...)`` does, with the same result."""
    if start_row == end_row and start_column == end_column:
        ws.merge_cells(start_row=start_row, start_column=start_column, end_row=end_row,
                       end_column=end_column)
        return
    wb = ws.parent
    book = _book(wb)
    borders = wb._borders
    cells = ws._cells
    start = cells.get((start_row, start_column))
    start_was_merged = isinstance(start, MergedCell)
    if start is None:
        start = ws.cell(row=start_row, column=start_column)
    end = cells.get((end_row, end_column))

    mcr = MergedCellRange.__new__(MergedCellRange)
    mcr.ws = ws
    if (type(start_row) is int and type(end_row) is int and type(start_column) is int
            and type(end_column) is int and 1 <= start_row <= end_row <= _MAX_ROW
            and 1 <= start_column <= end_column <= _MAX_COLUMN):
        # what CellRange.__init__ stores once its bounds pass its checks (these do)
        mcr.__dict__.update(min_col=start_column, min_row=start_row, max_col=end_column,
                            max_row=end_row, title=None)
    else:
        CellRange.__init__(mcr, min_col=start_column, min_row=start_row, max_col=end_column,
                           max_row=end_row)  # openpyxl's own checks and errors
    mcr.start_cell = start

    # MergedCellRange._get_borders: the top-left cell takes the bottom-right cell's right and
    # bottom border
    if end is not None:
        if start._style is None:
            start._style = StyleArray()
        if end._style is None:
            end._style = StyleArray()
        s, e = start._style[_BORDER], end._style[_BORDER]

        def corner(s=s, e=e):
            far = borders[e]
            return borders.add(borders[s] + Border(right=far.right, bottom=far.bottom))

        start._style[_BORDER] = _step(book, wb, "corner", s, e, corner)
    _add_range(ws, mcr, start_was_merged)

    # Worksheet._clean_merge_range: every cell but the top-left becomes a MergedCell
    for row in range(start_row, end_row + 1):
        for col in range(start_column, end_column + 1):
            if row != start_row or col != start_column:
                cells[row, col] = MergedCell(ws, row, col)

    # MergedCellRange.format: the top-left cell's sides spread along the range's edges
    if start._style is None:
        start._style = StyleArray()
    for name in _EDGES:
        src = start._style[_BORDER]
        side = getattr(borders[src], name)
        if side and side.style is None:
            continue
        for coord in getattr(mcr, name):
            cell = cells[coord]
            if cell._style is None:
                cell._style = StyleArray()
            cur = cell._style[_BORDER]

            def spread(cur=cur, side=side, name=name):
                return borders.add(borders[cur] + Border(**{name: side}))

            cell._style[_BORDER] = _step(book, wb, "edge:" + name, cur, src, spread)
    # ... and its protection to every cell of the range (the same value: the same index)
    protection = start._style[_PROTECTION]
    for row in range(start_row, end_row + 1):
        for col in range(start_column, end_column + 1):
            cell = cells[row, col]
            if cell._style is None:
                cell._style = StyleArray()
            cell._style[_PROTECTION] = protection


def ensure_style(cell) -> StyleArray:
    """The cell's style array, created (all defaults) as openpyxl's style getters do."""
    if cell._style is None:
        cell._style = StyleArray()
    return cell._style


def alignment_of(cell):
    """The cell's alignment (a shared object: never change it), as ``cell.alignment`` reads
    it but without a proxy per read."""
    return cell.parent.parent._alignments[ensure_style(cell)[_ALIGNMENT]]


def font_of(cell):
    """The cell's font (a shared object: never change it)."""
    return cell.parent.parent._fonts[ensure_style(cell)[0]]


def align_top(cell) -> None:
    """Read from the top: the cell's alignment with ``vertical="top"`` (and only its horizontal
    and wrap kept), as ``cell.alignment = Alignment(horizontal=a.horizontal, vertical="top",
    wrap_text=a.wrap_text)``."""
    wb = cell.parent.parent
    arr = ensure_style(cell)
    aligns = wb._alignments

    def top(a=arr[_ALIGNMENT]):
        old = aligns[a]
        return aligns.add(Alignment(horizontal=old.horizontal, vertical="top",
                                    wrap_text=old.wrap_text))

    arr[_ALIGNMENT] = _step(_book(wb), wb, "top", arr[_ALIGNMENT], None, top)


@functools.cache
def _shared(cls, args: tuple, kw: tuple):
    return cls(*args, **dict(kw))


#: The typeface every font of our workbooks names unless it names another: the body text's
#: (openpyxl's default cell style). A font without a name is drawn in whatever the spreadsheet
#: program defaults to (LibreOffice: a serif), so headings would not match the cells below them.
FONT_NAME = "Calibri"


def shared_font(*args, **kw) -> Font:
    """``Font(*args, **kw)`` naming :data:`FONT_NAME` unless ``name`` is given, one shared
    object per distinct set of arguments (so its style combinations are found by identity;
    never change it)."""
    if not args:
        kw.setdefault("name", FONT_NAME)
    return _shared(Font, args, tuple(sorted(kw.items())))


def shared_fill(*args, **kw) -> PatternFill:
    """``PatternFill(*args, **kw)``, shared like :func:`shared_font`."""
    return _shared(PatternFill, args, tuple(sorted(kw.items())))


def shared_alignment(*args, **kw) -> Alignment:
    """``Alignment(*args, **kw)``, shared like :func:`shared_font`."""
    return _shared(Alignment, args, tuple(sorted(kw.items())))


_ROW_STATE: dict = {}


def row_dimension(ws, r: int):
    """``ws.row_dimensions[r]``, created as openpyxl creates a missing one (a RowDimension with
    its defaults) but with the state copied from a template rather than set through its
    checked attributes one by one (each sheet asks for every row: a measured share of the
    cost of building a sheet)."""
    dims = ws.row_dimensions
    d = dict.get(dims, r)
    if d is not None:
        return d
    if not _ROW_STATE:
        _ROW_STATE.update(RowDimension(worksheet=None).__dict__)
    d = RowDimension.__new__(RowDimension)
    d.__dict__.update(_ROW_STATE)
    d.__dict__["index"] = r  # what the row dimensions' dictionary sets on every access
    d.parent = ws
    d._style = None
    dict.__setitem__(dims, r, d)
    return d


def cell_at(ws, row: int, column: int):
    """``ws.cell(row, column)``: the cell, created empty when missing exactly as openpyxl's
    ``Worksheet._get_cell`` creates it, without its call layers (every written cell passes
    here)."""
    cell = ws._cells.get((row, column))
    if cell is not None:
        return cell
    if not (0 < row < 1048577 and column > 0):
        return ws.cell(row=row, column=column)  # openpyxl's own error
    cell = Cell.__new__(Cell)
    cell.parent = ws
    cell._style = None
    cell.row = row
    cell.column = column
    cell._value = None
    cell._hyperlink = None
    cell.data_type = "n"
    cell._comment = None
    if row > ws._current_row:
        ws._current_row = row
    ws._cells[row, column] = cell
    return cell


def store(ws, row: int, column: int, value):
    """``ws.cell(row, column, value)`` (a number stored as openpyxl stores it, NaN included);
    returns the cell."""
    cell = cell_at(ws, row, column)
    if type(value) is float or type(value) is int:
        cell._value, cell.data_type = value, "n"
    elif value is not None:
        cell.value = value
    return cell


def set_formula(cell, text: str) -> None:
    """``cell.value = text`` for a formula (``text`` starts with "=" and is longer than that):
    stored as openpyxl stores it, without its per-value type dispatch; text its own check would
    cut or refuse takes openpyxl's path."""
    if type(text) is not str or len(text) > 32767 or ILLEGAL_CHARACTERS_RE.search(text):
        cell.value = text
        return
    cell._value, cell.data_type = text, "f"
