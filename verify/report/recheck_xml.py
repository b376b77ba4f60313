"""The recheck sheet's body written as XML rows, without a cell object per value.

The recheck sheet of a large layout holds tens of thousands of rows of formulas (well over a
hundred a characteristic in the benchmark layouts, with the lookup rows of its values).
Written cell by cell (an openpyxl cell per value, styled, measured for its height, then
serialized by :mod:`verify.report.sheet_xml`) it was the largest part of the workbook's cost
per characteristic. :class:`Body` writes the rows below the column headings (from
:data:`~verify.report.recheck_sheet.FIRST_BODY_ROW`) straight as the XML that route
gives, byte for byte:

- the cells: those holding a value, and the Agrees and How cells of every row, which the
  table styles (a logical number format, centred; wrapped, from the top); a block's heading
  (text in the first column only) in bold;
- the row heights :func:`verify.report.cells.fit_rows` gives (wrapped text counted against the
  column width), and in a tall row every valued cell read from the top
  (:func:`~verify.report.cell_styles.align_top`); the folded helper rows' outline level;
- each style looked up with the same functions (:func:`~verify.report.cell_styles.style`,
  ``align_top``) in the same order as the cell route, so the workbook's lists of fonts and
  alignments come out the same; the cells' ``s`` indices are registered at the save, where the
  sheet's place among the workbook's sheets puts them (:meth:`Body.register`, called by
  :func:`verify.report.sheet_xml.stream_cells`), so ``cellXfs`` keeps its order too.

The rows above the body (title, explanation, tolerance, alpha, summary, headings) stay cells.
A body holding a value this module does not write exactly (anything but text, a formula, a
finite float or an int) leaves the whole sheet to the cell route (:func:`Body.build` returns
None). tests/test_recheck_xml.py compares both routes' files part by part.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator

from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE, Cell
from openpyxl.styles.cell_style import StyleArray
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.dimensions import RowDimension

from .cell_styles import align_top, style
from .cells import EXCEL_CELL_MAX, ROW_HEIGHT_MAX, clean_text, column_widths
from .sheet_xml import _cdata, _row_head
from .xlsx_fast import StreamedSheet

_AGREES, _HOW = 5, 6  # the columns the table styles on every row


class Body:
    """The body rows of one recheck sheet, from ``first_row`` down.

    Build with :meth:`build`; then, in the cell route's order, :meth:`style_rows` (the table's
    styles), :meth:`fit` (heights), :meth:`fold` (outline); :meth:`streamed` gives the rows for
    the save.

    A row's styles and height depend only on its *shape*: which columns hold a value, whether
    it is a heading, its height and whether it is folded. Each distinct shape (a few dozen on
    a sheet of tens of thousands of rows) is styled once and written by a function compiled for
    it (:func:`_shape_writer`), which takes the row's number and its cells' texts.
    """

    def __init__(self, first_row: int):
        self.first_row = first_row
        self.cols: list[tuple[int, ...]] = []  # per row: the columns holding a value
        self.rests: list[list[str]] = []  # per row: each valued cell's XML after its s=".."
        self.texts: list[list[tuple[int, str]]] = []  # per row: (column, text or formula)
        self.heading: list[bool] = []  # per row: text in column A, nothing in B and C
        self.widths: dict[int, int] = {}  # column -> width asked for (columns beyond the table)
        self.heights: dict[int, float] = {}  # body index -> row height
        self.folded: set[int] = set()  # body indices of the folded helper rows
        self._base: dict[int, tuple | None] = {}  # (the table's styles, by role: see _role)
        self._tall: dict[tuple, tuple] = {}  # (columns, heading) -> styles in a tall row
        self._memo: _Memo | None = None
        self._shapes: dict[tuple, tuple] | None = None  # shape -> (its cells, writer)

    @classmethod
    def build(cls, rows: list[list], first_row: int, fixed_columns: int) -> Body | None:
        """The body of ``rows`` (each a list of cell values from column A), or None when a
        value needs the cell route. Widths are recorded for columns beyond ``fixed_columns``
        (the table sets its own)."""
        body = cls(first_row)
        widths = body.widths
        all_cols, all_rests, all_texts, headings = body.cols, body.rests, body.texts, body.heading
        text_xml: dict[str, tuple[str, int, str]] = {}  # text -> its XML, width, stored text
        isfinite = math.isfinite
        formulas: list[str] = []  # checked for control characters together, at the end
        for values in rows:
            cols = []
            rests = []
            texts = []
            j = 0
            for v in values:
                j += 1
                if v is None:
                    continue
                t = type(v)
                if t is str:
                    if len(v) > 1 and v[0] == "=":
                        if len(v) > EXCEL_CELL_MAX:
                            return None  # (openpyxl's own value check decides these)
                        formulas.append(v)
                        f = v[1:]
                        if "&" in f or "<" in f or ">" in f:  # (sheet_xml._cdata)
                            f = f.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
                        rests.append(f"><f>{f}</f><v /></c>")
                        texts.append((j, v))  # (fit_rows measures a formula's text too)
                        w = 14
                    else:
                        hit = text_xml.get(v)
                        if hit is None:
                            stored = clean_text(v)
                            hit = text_xml[v] = (_text_cell(stored), min(60, len(v) + 2), stored)
                        rests.append(hit[0])
                        texts.append((j, hit[2]))
                        w = hit[1]
                elif t is float:
                    if not isfinite(v):
                        return None  # NaN leaves a bare cell, an infinity is text: cell route
                    rests.append(f' t="n"><v>{v!r}</v></c>')
                    w = 16
                elif t is int:
                    rests.append(f' t="n"><v>{v:.16g}</v></c>')
                    w = 16
                else:
                    return None
                cols.append(j)
                if j > fixed_columns and w > widths.get(j, 0):
                    widths[j] = w
            all_cols.append(tuple(cols))
            all_rests.append(rests)
            all_texts.append(texts)
            # a block's heading: text (a formula is a str as well) in A, nothing in B and C
            headings.append(bool(cols) and cols[0] == 1 and type(values[0]) is str
                            and (len(cols) == 1 or cols[1] > 3))
        if formulas and ILLEGAL_CHARACTERS_RE.search("\n".join(formulas)):
            return None  # a control character openpyxl's own value check refuses
        return body

    def __len__(self) -> int:
        return len(self.cols)

    @property
    def last_row(self) -> int:
        return self.first_row + len(self.cols) - 1

    @property
    def max_column(self) -> int:
        return max([_HOW, *(c[-1] for c in self.cols if c)])

    def style_rows(self, ws, *, bold, agrees: dict, wrap_top) -> None:
        """The table's styles, as ``_recheck_as_table`` sets them on each body row: a heading
        (text in the first column, nothing in the second and third) in bold, the Agrees cell
        with the style parts ``agrees`` (its number format, centred), the How cell wrapped
        from the top.

        The cell route styles each row in turn (the bold first, then the Agrees, then the How
        cell); only the first use of each style adds to the workbook's lists, so each is done
        here once, in the order of those first uses."""
        memo = self._memo = _Memo(ws)
        if not self.cols:
            return
        first_heading = next((i for i, h in enumerate(self.heading) if h), None)
        base = self._base
        if first_heading == 0:
            base[1] = memo.style(None, font=bold)
        base[_AGREES] = memo.style(None, **agrees)
        base[_HOW] = memo.style(None, align=wrap_top)
        if first_heading is not None and first_heading > 0:
            base[1] = memo.style(None, font=bold)

    def _style(self, j: int, heading: bool) -> tuple | None:
        """A cell's style from the table (before the heights)."""
        if j == 1:
            return self._base[1] if heading else None
        if j == _AGREES or j == _HOW:
            return self._base[j]
        return None

    def fit(self, ws, *, line_height: float = 14.5) -> None:
        """Row heights and top alignment as :func:`~verify.report.cells.fit_rows` gives them
        (after the rows above the body were fitted)."""
        wb = ws.parent
        aligns, fonts = wb._alignments, wb._fonts
        memo = self._memo
        width = column_widths(ws)  # as fit_rows measures

        wrapping: dict[tuple, tuple | None] = {}  # (column, heading) -> (width, size) if wrapped
        lines_of: dict[tuple, int] = {}
        heights, tall = self.heights, self._tall
        style_of = self._style
        for i, texts in enumerate(self.texts):
            if not texts:
                continue
            heading = self.heading[i]
            need = 1
            font_scale = 1.0
            for j, v in texts:
                how = wrapping.get((j, heading), False)
                if how is False:
                    s = style_of(j, heading)
                    how = None
                    if aligns[0 if s is None else s[5]].wrap_text:
                        how = (width(j), (fonts[0 if s is None else s[0]].sz or 11) / 11)
                    wrapping[(j, heading)] = how
                if how is None:
                    continue
                cap, size = how
                key = (v, cap, size)
                lines = lines_of.get(key)
                if lines is None:
                    lines = lines_of[key] = sum(
                        max(1, math.ceil(len(part) * size / max(cap * 1.05, 1)))
                        for part in v.split("\n"))
                if lines > need:
                    need, font_scale = lines, max(1.0, size)
            if need > 1:
                heights[i] = min(ROW_HEIGHT_MAX, need * line_height * font_scale + 2)
                key = (self.cols[i], heading)
                if key not in tall:  # in a tall row, everything reads from the top
                    styles = []
                    for j in key[0]:
                        s = style_of(j, heading)
                        if aligns[0 if s is None else s[5]].vertical is None:
                            s = memo.top(s)
                        styles.append(s)
                    tall[key] = tuple(styles)

    def fold(self, row: int) -> None:
        """Fold body row ``row`` (a sheet row) into the helper rows' outline group."""
        self.folded.add(row - self.first_row)

    def _shape_cells(self, cols: tuple, heading: bool, is_tall: bool) -> list[tuple]:
        """(column, style, index of its text among the row's valued cells or None) for each
        cell of a row of this shape: the valued ones and the table's styled ones, by column."""
        valued = dict(zip(cols, self._tall[(cols, heading)] if is_tall
                          else [self._style(j, heading) for j in cols], strict=True))
        out = []
        for j in sorted(set(cols) | {_AGREES, _HOW}):
            if j in valued:
                out.append((j, valued[j], cols.index(j)))
            else:
                out.append((j, self._style(j, heading), None))
        return out

    def _shape_keys(self) -> Iterator[tuple[int, tuple]]:
        heights, folded = self.heights, self.folded
        for i, cols in enumerate(self.cols):
            yield i, (cols, self.heading[i], heights.get(i), i in folded)

    def register(self, attr) -> None:
        """Register the body's cell styles in the workbook at the save, in cell order, as the
        cell route's writer does (``attr`` gives a style's ``s`` attribute), and compile a
        writer for each row shape. (A shape's styles were all seen at its first row, so taking
        the shapes in the order of their first rows registers the styles in cell order.)"""
        attrs: dict[tuple, str] = {}
        shapes: dict[tuple, tuple] = {}
        heads: dict = {}
        for _i, shape in self._shape_keys():
            if shape in shapes:
                continue
            cols, heading, height, is_folded = shape
            cells = []
            for j, s, k in self._shape_cells(cols, heading, height is not None):
                a = ""
                if s is not None:
                    a = attrs.get(s)
                    if a is None:
                        a = attrs[s] = attr(StyleArray(s))
                if k is None and not a:
                    continue  # an empty cell without a style is not written
                cells.append((get_column_letter(j), a, k))
            shapes[shape] = (cells, _shape_writer(_row_tail((height, is_folded), heads), cells))
        self._shapes = shapes

    def rows(self) -> Iterator[str]:
        """The body's ``<row>`` elements, in chunks (after :meth:`register`)."""
        shapes = self._shapes
        if shapes is None:
            raise RuntimeError("the recheck body's styles were not registered before its rows")
        rests = self.rests
        out: list[str] = []
        append = out.append
        r = self.first_row
        for i, shape in self._shape_keys():
            append(shapes[shape][1](str(r + i), *rests[i]))
            if len(out) >= 4096:
                yield "".join(out)
                out.clear()
        yield "".join(out)

    def streamed(self, title: str, dimension: str) -> StreamedSheet:
        return StreamedSheet(title, self.rows, dimension, register=self.register,
                             outline_rows=1 if self.folded else 0)


def _shape_writer(tail: str, cells: list[tuple]) -> Callable[..., str]:
    """``f(r, *texts)``: the ``<row>`` element of sheet row ``r`` (its number as text) for a
    row shape: ``<row r=".."`` and ``tail``, then for each cell (letter, ``s`` attribute, index
    of its text or None for an empty styled cell) ``<c r="{letter}{r}"{s}`` and its text, or
    `` t="n" />`` when empty (as sheet_xml.sheet_rows writes a styled empty cell).

    An f-string compiled for the shape: the attributes and the row's tail are constants bound
    by name, the source holds nothing but markup, column letters and argument names."""
    names = {"T": tail}
    parts = []
    for n, (letter, a, k) in enumerate(cells):
        names[f"S{n}"] = a
        rest = f"{{c{k}}}" if k is not None else ' t="n" />'
        parts.append(f'<c r="{letter}{{r}}"{{S{n}}}{rest}')
    n_texts = sum(k is not None for _l, _a, k in cells)
    args = ", ".join(["r", *(f"c{k}" for k in range(n_texts))])
    source = (f"def row({args}):\n"
              f"    return f'<row r=\"{{r}}\"{{T}}>{''.join(parts)}</row>'\n")
    namespace = dict(names)
    exec(compile(source, "<verify.report.recheck_xml row shape>", "exec"), namespace)
    return namespace["row"]


def _text_cell(value: str) -> str:
    """What follows ``<c r=".."[ s=".."]`` for a text cell, as sheet_xml.sheet_rows writes it."""
    if value == "":
        return ' t="inlineStr" />'
    stripped = value.strip()
    esc = _cdata(value)
    if stripped and stripped != value:
        return f' t="inlineStr"><is><t xml:space="preserve">{esc}</t></is></c>'
    return f' t="inlineStr"><is><t>{esc}</t></is></c>'


def _row_tail(key: tuple, heads: dict) -> str:
    """The attributes after ``<row r=".."`` of a body row of height ``ht`` (or None), folded
    or not, as openpyxl writes its RowDimension (built on a real one)."""
    ht, folded = key
    if ht is None and not folded:
        return ""
    dim = RowDimension(worksheet=None, index=1)
    if ht is not None:
        dim.ht = ht
    if folded:
        dim.outlineLevel = 1
        dim.hidden = True
    return _row_head(1, dim, heads)[len('<row r="1"'):]


class _Memo:
    """Each distinct styling step done once, on a scratch cell, with the cell route's own
    functions (which add any new font or alignment to the workbook's lists on first use)."""

    def __init__(self, ws):
        self._cell = Cell(ws, row=1, column=1)  # not placed in the sheet
        self._done: dict[tuple, tuple] = {}

    def _start(self, s: tuple | None):
        cell = self._cell
        cell._style = None if s is None else StyleArray(s)
        return cell

    def style(self, s: tuple | None, **parts) -> tuple:
        key = (s, "style", tuple((k, v if type(v) is str else id(v)) for k, v in parts.items()))
        hit = self._done.get(key)
        if hit is None:
            cell = self._start(s)
            style(cell, **parts)
            hit = self._done[key] = None if cell._style is None else tuple(cell._style)
        return hit

    def top(self, s: tuple | None) -> tuple:
        key = (s, "top")
        hit = self._done.get(key)
        if hit is None:
            cell = self._start(s)
            align_top(cell)
            hit = self._done[key] = tuple(cell._style)
        return hit
