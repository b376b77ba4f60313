"""The recheck sheet's body written as XML rows, without a cell object per value.

The recheck sheet of a large layout holds tens of thousands of rows of formulas (about 400 a
characteristic). Written cell by cell (an openpyxl cell per value, styled, measured for its
height, then serialized by :mod:`verify.report.sheet_xml`) it was the largest part of the
workbook's cost per characteristic. :class:`Body` writes the rows below the column headings
(from :data:`~verify.report.recheck_sheet.FIRST_BODY_ROW`) straight as the XML that route
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
from collections.abc import Iterator

from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE, Cell
from openpyxl.styles.cell_style import StyleArray
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.dimensions import RowDimension

from .cell_styles import align_top, style
from .cells import EXCEL_CELL_MAX, clean_text
from .sheet_xml import _cdata, _row_head
from .xlsx_fast import StreamedSheet

_FORMULA, _TEXT, _NUMBER = 0, 1, 2
_AGREES, _HOW = 5, 6  # the columns the table styles on every row


class Body:
    """The body rows of one recheck sheet, from ``first_row`` down.

    Build with :meth:`build`; then, in the cell route's order, :meth:`style_rows` (the table's
    styles), :meth:`fit` (heights), :meth:`fold` (outline); :meth:`streamed` gives the rows for
    the save.
    """

    def __init__(self, first_row: int):
        self.first_row = first_row
        # per row: [(column, kind, value as stored)] for the cells holding a value, by column
        self.valued: list[list[tuple[int, int, object]]] = []
        self.xml: list[list[tuple[int, str]]] = []  # per row: (column, text after s="..")
        self.styles: list[dict[int, tuple | None]] = []  # per row: column -> style tuple
        self.widths: dict[int, int] = {}  # column -> width asked for (columns beyond the table)
        self.heights: dict[int, float] = {}  # body index -> row height
        self.folded: set[int] = set()  # body indices of the folded helper rows
        self._attrs: list[str] | None = None
        self._keys: dict[tuple, int] = {}

    @classmethod
    def build(cls, rows: list[list], first_row: int, fixed_columns: int) -> Body | None:
        """The body of ``rows`` (each a list of cell values from column A), or None when a
        value needs the cell route. Widths are recorded for columns beyond ``fixed_columns``
        (the table sets its own)."""
        body = cls(first_row)
        widths = body.widths
        text_xml: dict[str, tuple[str, int, str]] = {}  # text -> its XML, width, stored text
        for values in rows:
            valued = []
            xml = []
            for j, v in enumerate(values, start=1):
                if v is None:
                    continue
                t = type(v)
                if t is str:
                    if len(v) > 1 and v[0] == "=":
                        if len(v) > EXCEL_CELL_MAX or ILLEGAL_CHARACTERS_RE.search(v):
                            return None  # (openpyxl's own value check decides these)
                        valued.append((j, _FORMULA, v))
                        xml.append((j, f"><f>{_cdata(v[1:])}</f><v /></c>"))
                        w = 14
                    else:
                        hit = text_xml.get(v)
                        if hit is None:
                            stored = clean_text(v)
                            hit = text_xml[v] = (_text_cell(stored), min(60, len(v) + 2), stored)
                        valued.append((j, _TEXT, hit[2]))
                        xml.append((j, hit[0]))
                        w = hit[1]
                elif t is float:
                    if not math.isfinite(v):
                        return None  # NaN leaves a bare cell, an infinity is text: cell route
                    valued.append((j, _NUMBER, v))
                    xml.append((j, f' t="n"><v>{v!r}</v></c>'))
                    w = 16
                elif t is int:
                    valued.append((j, _NUMBER, v))
                    xml.append((j, f' t="n"><v>{v:.16g}</v></c>'))
                    w = 16
                else:
                    return None
                if j > fixed_columns and w > widths.get(j, 0):
                    widths[j] = w
            body.valued.append(valued)
            body.xml.append(xml)
        return body

    def __len__(self) -> int:
        return len(self.valued)

    @property
    def last_row(self) -> int:
        return self.first_row + len(self.valued) - 1

    @property
    def max_column(self) -> int:
        return max([_HOW, *(v[-1][0] for v in self.valued if v)])

    def style_rows(self, ws, *, bold, agrees: dict, wrap_top) -> None:
        """The table's styles, as ``_recheck_as_table`` sets them on each body row: a heading
        (text in the first column, nothing in the second and third) in bold, the Agrees cell
        with the style parts ``agrees`` (its number format, centred), the How cell wrapped
        from the top."""
        memo = _Memo(ws)
        out = self.styles
        for valued in self.valued:
            cols = {j: kind for j, kind, _v in valued}
            st: dict[int, tuple | None] = {}
            if 1 in cols and 2 not in cols and 3 not in cols:  # (a formula is a str too)
                st[1] = memo.style(None, font=bold)
            st[_AGREES] = memo.style(None, **agrees)
            st[_HOW] = memo.style(None, align=wrap_top)
            out.append(st)
        self._memo = memo

    def fit(self, ws, *, line_height: float = 14.5) -> None:
        """Row heights and top alignment as :func:`~verify.report.cells.fit_rows` gives them
        (after the rows above the body were fitted)."""
        wb = ws.parent
        aligns, fonts = wb._alignments, wb._fonts
        memo = self._memo
        col_widths: dict[int, float] = {}

        def width(col: int) -> float:
            w = col_widths.get(col)
            if w is None:
                w = ws.column_dimensions[get_column_letter(col)].width
                w = col_widths[col] = float(w) if w else 8.43
            return w

        wraps: dict[int, bool] = {}
        sizes: dict[int, float] = {}
        for i, valued in enumerate(self.valued):
            st = self.styles[i]
            need = 1
            font_scale = 1.0
            for j, kind, v in valued:
                if kind != _TEXT:
                    continue
                s = st.get(j)
                a = 0 if s is None else s[5]
                wrap = wraps.get(a)
                if wrap is None:
                    wrap = wraps[a] = bool(aligns[a].wrap_text)
                if not wrap:
                    continue
                f = 0 if s is None else s[0]
                size = sizes.get(f)
                if size is None:
                    size = sizes[f] = (fonts[f].sz or 11) / 11
                cap = width(j)
                lines = sum(max(1, math.ceil(len(part) * size / max(cap * 1.05, 1)))
                            for part in v.split("\n"))
                if lines > need:
                    need, font_scale = lines, max(1.0, size)
            if need > 1:
                self.heights[i] = need * line_height * font_scale + 2
                for j, _kind, _v in valued:  # in a tall row, everything reads from the top
                    s = st.get(j)
                    if aligns[0 if s is None else s[5]].vertical is None:
                        st[j] = memo.top(s)

    def fold(self, row: int) -> None:
        """Fold body row ``row`` (a sheet row) into the helper rows' outline group."""
        self.folded.add(row - self.first_row)

    def register(self, attr) -> None:
        """Register the body's cell styles in the workbook at the save, in cell order, as the
        cell route's writer does (``attr`` gives a style's ``s`` attribute)."""
        keys: dict[tuple, int] = {}
        attrs: list[str] = []
        for st in self.styles:
            for j in sorted(st):
                s = st[j]
                if s is not None and s not in keys:
                    keys[s] = len(attrs)
                    attrs.append(attr(StyleArray(s)))
        self._keys, self._attrs = keys, attrs

    def rows(self) -> Iterator[str]:
        """The body's ``<row>`` elements, in chunks (after :meth:`register`)."""
        if self._attrs is None:
            raise RuntimeError("the recheck body's styles were not registered before its rows")
        keys, attrs = self._keys, self._attrs
        attr_of = {s: attrs[k] for s, k in keys.items()}
        attr_of[None] = ""
        tails: dict[tuple, str] = {}
        heads: dict = {}
        letters: dict[int, str] = {}
        out: list[str] = []
        append = out.append
        heights, folded = self.heights, self.folded
        r = self.first_row
        for i, xml in enumerate(self.xml):
            st = self.styles[i]
            key = (heights.get(i), i in folded)
            tail = tails.get(key)
            if tail is None:
                tail = tails[key] = _row_tail(key, heads)
            rs = str(r)
            append(f'<row r="{rs}"{tail}>')
            # the valued cells and the styled ones, by column
            cols = dict(xml)
            for j in sorted(cols.keys() | st.keys()):
                letter = letters.get(j)
                if letter is None:
                    letter = letters[j] = get_column_letter(j)
                a = attr_of[st.get(j)]
                rest = cols.get(j)
                if rest is None:  # a styled cell without a value
                    if a:
                        append(f'<c r="{letter}{rs}"{a} t="n" />')
                    continue
                append(f'<c r="{letter}{rs}"{a}{rest}')
            append("</row>")
            r += 1
            if len(out) > 8192:
                yield "".join(out)
                out.clear()
        yield "".join(out)

    def streamed(self, title: str, dimension: str) -> StreamedSheet:
        return StreamedSheet(title, self.rows, dimension, register=self.register)


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
