"""Every worksheet's cells written as XML by string building, spliced in at save time.

openpyxl serializes each cell through ElementTree (et_xmlfile, without lxml): about 10 us a
cell, which made the save of a 9,000-cell workbook cost more than loading and evaluating its
spec. :func:`stream_cells` writes the same ``<row>``/``<c>`` XML with plain string building,
then takes the cells out of the worksheet while openpyxl saves it, so openpyxl writes only the
sheet's frame (widths, views, merges, conditional formats, validations, print settings,
drawings, tables); :func:`verify.report.xlsx_fast.splice` inserts the rows into its
``<sheetData>``, as for the streamed measurements.

The XML is what openpyxl 3.1's own writer (``openpyxl/cell/_writer.py``, ``etree_write_cell``
and ``openpyxl/worksheet/_writer.py``, ``write_row``) produces for the same cells, byte for
byte (tests/test_sheet_xml.py compares the two):

- a cell is written when it has a value, a style or a comment; a row is written when it has a
  cell object or a row dimension, with the dimension's attributes (``ht``, ``customHeight``,
  ``hidden``, ``outlineLevel``, ...);
- ``r``, then ``s`` (the cell's style registered in the workbook's ``cellXfs`` exactly as
  openpyxl does, in the same order, so the style sheet is the same), then ``t``: ``inlineStr``
  for text, nothing for a formula, else the data type (``n``, ``b``, ``e``);
- text as an inline string (text stays text: a cell of type ``s`` whose text starts with
  ``=`` is never a formula), ``xml:space="preserve"`` when it has leading or trailing blanks;
  ``&``, ``<`` and ``>`` escaped;
- numbers as the save writes them (:func:`number_text`: floats with every digit);
- a formula as ``<f>`` without the ``=``, and an empty ``<v />``;
- the cells' hyperlinks are handed to openpyxl's writer of the sheet's ``<hyperlinks>`` (it
  collects them from the cells it writes, and there are none left).

Whatever this module does not write exactly (array and data-table formulas, rich text,
dates, comments, an unknown data type) leaves that sheet to openpyxl whole; its
styles are still registered at the point openpyxl would have registered them, so the style
sheet keeps its order.
"""

from __future__ import annotations

import contextlib
import math
from collections.abc import Iterator
from itertools import chain
from types import NoneType

from openpyxl.compat import safe_string
from openpyxl.utils import get_column_letter

from .xlsx_fast import StreamedSheet, guard_text_controls, openpyxl_package, splice

# ElementTree's attribute escaping (xml.etree.ElementTree._escape_attrib)
_ATTRIB = str.maketrans(
    {"&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;", "\r": "&#13;", "\n": "&#10;",
     "\t": "&#09;"}
)


def number_text(value) -> str:
    """A cell's ``<v>`` text as the workbook's save writes it.

    openpyxl formats numbers with ``"%.16g"``, which drops the 17th significant digit some
    doubles need; the save (:func:`full_precision_numbers`) writes
    finite floats with ``repr`` instead (the shortest text that reads back as the same
    double). Everything else (integers, booleans as 1/0, NaN and infinities as empty) is
    openpyxl's ``safe_string``.
    """
    if isinstance(value, float) and math.isfinite(value):
        # float(): numpy's float64 is a float whose repr is "np.float64(...)" (numpy 2)
        return repr(float(value))
    return safe_string(value)


def _cdata(text: str) -> str:
    """ElementTree's escaping of element text (``&``, ``<``, ``>``)."""
    if "&" in text or "<" in text or ">" in text:
        return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    return text


class _Unsupported(Exception):
    """A cell this module does not serialize exactly: openpyxl writes the sheet."""


def _row_head(row_idx: int, dim, heads: dict) -> str:
    """``<row r=".." ...`` with the row dimension's attributes, as openpyxl writes them.

    openpyxl: ``attrs = {"r": ...}; attrs.update(dims.get(row_idx, {}))``: iterating a
    RowDimension yields its set fields as text, in ``__fields__`` order, and registers its
    style (the ``s`` field). Without a style (index 0, not written) the attributes depend only
    on the fields read for the key, so they are built once per distinct key.
    """
    if dim is None:
        return f'<row r="{row_idx}"'
    style = dim._style
    if style is None or not any(style):
        key = (dim.hidden, dim.outlineLevel, dim.collapsed, dim.ht, dim.thickBot, dim.thickTop)
        tail = heads.get(key)
        if tail is None:
            tail = heads[key] = "".join(f' {k}="{v.translate(_ATTRIB)}"' for k, v in dim)
        return f'<row r="{row_idx}"{tail}'
    return f'<row r="{row_idx}"' + "".join(f' {k}="{v.translate(_ATTRIB)}"' for k, v in dim)


class _Styles:
    """The ``s`` attribute of each distinct cell style, registered on first sight.

    openpyxl's writer calls ``wb._cell_styles.add(cell._style)`` for every styled cell; only
    the first call for a style appends it, so registering each distinct style on its first
    appearance, in the same cell order, gives the same indices in the same order.
    """

    def __init__(self, wb):
        self._add = wb._cell_styles.add
        self._attr: dict[bytes, str] = {}
        self.heads: dict[tuple, str] = {}

    def attr(self, style) -> str:
        key = style.tobytes()
        attr = self._attr.get(key)
        if attr is None:
            attr = self._attr[key] = f' s="{self._add(style)}"' if any(style) else ""
        return attr


def sheet_rows(ws, links: list | None = None, styles: _Styles | None = None) -> str:
    """The ``<row>`` elements of ``ws``'s sheetData, as openpyxl would write them.

    Registers the cells' styles in the workbook as openpyxl's writer does, and appends the
    hyperlinks of the cells written to ``links`` in the order openpyxl collects them. Raises
    :class:`_Unsupported` for a cell this module does not write exactly. ``styles`` carries
    the style attributes from sheet to sheet of one workbook.
    """
    from openpyxl.cell.rich_text import CellRichText

    if links is None:
        links = []
    if styles is None:
        styles = _Styles(ws.parent)
    style_attr = styles.attr
    heads = styles.heads
    isfinite = math.isfinite
    dims = ws.row_dimensions
    # rows in order: those with cell objects, merged with those that have only a dimension
    # (openpyxl writes both; a row with a dimension and cells once)
    dim_rows = sorted(dims.keys())
    n_dims = len(dim_rows)
    di = 0
    letters: dict[int, str] = {}
    out: list[str] = []
    append = out.append
    cur = 0
    rs = ""
    for (row, col), cell in sorted(ws._cells.items()):
        if row != cur:
            if cur:
                append("</row>")
            while di < n_dims and dim_rows[di] <= row:
                r = dim_rows[di]
                di += 1
                if r < row:  # (openpyxl writes an empty row with start and end tags)
                    append(_row_head(r, dims.get(r), heads))
                    append("></row>")
            append(_row_head(row, dims.get(row), heads))
            append(">")
            cur = row
            rs = str(row)
        if cell._comment is not None:
            raise _Unsupported("comment")
        value = cell._value
        style = cell._style
        s = "" if style is None else style_attr(style)
        if value is None and not s:
            continue
        if cell.hyperlink:
            links.append(cell.hyperlink)
        letter = letters.get(col)
        if letter is None:
            letter = letters[col] = get_column_letter(col)
        dt = cell.data_type
        if dt == "s":
            if type(value) is not str:
                if isinstance(value, CellRichText) or not isinstance(value, (str, NoneType)):
                    raise _Unsupported("rich text, or a text cell holding another type")
            if value is None or value == "":
                append(f'<c r="{letter}{rs}"{s} t="inlineStr" />')
                continue
            stripped = value.strip()
            preserve = stripped and stripped != value  # openpyxl.xml.functions.whitespace
            value = _cdata(value)
            if preserve:
                append(f'<c r="{letter}{rs}"{s} t="inlineStr"><is><t xml:space="preserve">'
                       f"{value}</t></is></c>")
            else:
                append(f'<c r="{letter}{rs}"{s} t="inlineStr"><is><t>{value}</t></is></c>')
        elif dt == "n":
            t = type(value)
            if t is float:
                if isfinite(value):
                    append(f'<c r="{letter}{rs}"{s} t="n"><v>{value!r}</v></c>')
                else:
                    append(f'<c r="{letter}{rs}"{s} t="n"><v /></c>')
            elif t is int:  # (openpyxl: "%.16g" % value)
                append(f'<c r="{letter}{rs}"{s} t="n"><v>{value:.16g}</v></c>')
            elif value is None:
                append(f'<c r="{letter}{rs}"{s} t="n" />')
            else:
                append(_other_cell(f'{letter}{rs}', s, dt, value))
        elif dt == "f":
            if value is None:
                append(f'<c r="{letter}{rs}"{s} />')
                continue
            if type(value) is not str:
                raise _Unsupported("array or data-table formula")
            append(f'<c r="{letter}{rs}"{s}><f>{_cdata(value[1:])}</f><v /></c>')
        elif dt == "b" or dt == "e":
            append(_other_cell(f'{letter}{rs}', s, dt, value))
        else:
            raise _Unsupported(f"data type {dt!r}")
    if cur:
        append("</row>")
    for r in dim_rows[di:]:
        append(_row_head(r, dims.get(r), heads))
        append("></row>")
    return "".join(out)


def _other_cell(ref: str, s: str, dt: str, value) -> str:
    """A cell of type n (not int or float), b or e, by openpyxl's general rule."""
    if value is None or value == "":
        return f'<c r="{ref}"{s} t="{dt}" />'
    text = number_text(value) if dt != "e" else safe_string(value)
    if text:
        return f'<c r="{ref}"{s} t="{dt}"><v>{_cdata(text)}</v></c>'
    return f'<c r="{ref}"{s} t="{dt}"><v /></c>'


def _register_styles(ws) -> None:
    """Register ``ws``'s styles in the order openpyxl's writer will (for a sheet it writes)."""
    cell_styles = ws.parent._cell_styles
    dims = ws.row_dimensions
    by_row: dict[int, list] = {}
    for (row, _col), cell in sorted(ws._cells.items()):
        by_row.setdefault(row, []).append(cell)
    for r in sorted(by_row.keys() | dims.keys()):
        dim = dims.get(r)
        if dim is not None:
            dict(dim)
        for cell in by_row.get(r, ()):
            style = cell._style
            if style is not None and any(style):
                cell_styles.add(style)


def _init_tables(ws) -> None:
    """Give tables without columns their header names from the cells, as openpyxl's
    ``WorksheetWriter.write_tables`` does at save (it would find no cells there later)."""
    from warnings import warn

    for table in ws.tables.values():
        if table.tableColumns:
            continue
        table._initialise_columns()
        if table.headerRowCount:
            try:
                row = ws[table.ref][0]
                for cell, col in zip(row, table.tableColumns, strict=False):
                    if cell.data_type != "s":
                        warn("File may not be readable: column headings must be strings.",
                             stacklevel=2)
                    col.name = str(cell.value)
            except TypeError:
                warn("Column headings are missing, file may not be readable", stacklevel=2)


def _dimension(ws) -> str:
    """``ws.calculate_dimension()`` (the range of the cell objects), with C-level min/max."""
    if not ws._cells:
        return "A1:A1"
    rows, cols = zip(*ws._cells, strict=True)
    return (f"{get_column_letter(min(cols))}{min(rows)}:"
            f"{get_column_letter(max(cols))}{max(rows)}")


_LINKS = "_verify_streamed_hyperlinks"


_HEADERS: dict = {}  # a sheet's <headerFooter> element (False: none) by what it says
_HF_ITEMS = ("oddHeader", "oddFooter", "evenHeader", "evenFooter", "firstHeader",
             "firstFooter")


def _header_footer_key(hf) -> tuple:
    """Everything a sheet's ``HeaderFooter`` writes: its flags and, for each of its six items,
    each part's text, font, size and colour."""
    items = []
    for name in _HF_ITEMS:
        item = getattr(hf, name)
        items.append(None if item is None else tuple(
            None if part is None else (part.text, part.font, part.size, part.color)
            for part in (item.left, item.center, item.right)))
    return (hf.differentOddEven, hf.differentFirst, hf.scaleWithDoc, hf.alignWithMargins,
            *items)


def _worksheet_writer():
    """openpyxl's WorksheetWriter that also finds the hyperlinks of the cells written here.

    ``WorksheetWriter`` gathers a sheet's hyperlinks while it writes the cells, then writes
    ``<hyperlinks>`` (and their relationships) after the rows; :func:`stream_cells` leaves the
    streamed sheet's links on the worksheet, and this writer puts them where openpyxl's own
    gathering would have (a subclass for this save, not a patch of openpyxl's class). Its
    ``<mergeCells>`` are built without openpyxl's object per range (the same elements).
    """
    from openpyxl.worksheet._writer import WorksheetWriter
    from openpyxl.xml.functions import Element, SubElement

    class Writer(WorksheetWriter):
        def write_header(self):
            # openpyxl: ``if hf: send(hf.to_tree())``; the element is built once per distinct
            # header and footer (every sheet of a workbook has the same footer, and building
            # its text runs openpyxl's formatting of every part each time)
            hf = self.ws.HeaderFooter
            key = _header_footer_key(hf)
            el = _HEADERS.get(key)
            if el is None:
                if len(_HEADERS) >= 1024:
                    _HEADERS.clear()
                el = _HEADERS[key] = hf.to_tree() if hf else False
            if el is not False:
                self.xf.send(el)

        def write_hyperlinks(self):
            self.ws._hyperlinks.extend(getattr(self.ws, _LINKS, ()))
            return super().write_hyperlinks()

        def write_merged_cells(self):
            # openpyxl: MergeCells(mergeCell=[MergeCell(str(ref)) for ref in ...]).to_tree():
            # the same elements built directly (a MergeCell object per range cost 3 ms a
            # workbook of the nightly benchmark)
            merged = self.ws.merged_cells
            if merged:
                refs = [str(ref) for ref in merged]
                el = Element("mergeCells", {"count": str(len(refs))})
                for ref in refs:
                    SubElement(el, "mergeCell", {"ref": ref})
                self.xf.send(el)

    return Writer


def outline_levels(ws, placeholder: StreamedSheet | None = None) -> None:
    """Give the sheet's ``<sheetFormatPr>`` the highest outline level of its rows
    (``outlineLevelRow``: its row dimensions' and, for a placeholder, its streamed rows') and
    of its columns (``outlineLevelCol``); none where nothing is grouped.

    ECMA-376 Part 1, 18.3.1.81 (sheetFormatPr): outlineLevelRow and outlineLevelCol are the
    highest outline levels of the rows and of the columns in the sheet; Excel draws the outline
    (group) buttons from them, so rows given an ``outlineLevel`` without it fold but show no
    button to unfold them. openpyxl's writer writes outlineLevelRow only when
    ``ws.sheet_format.outlineLevelRow`` is set, and outlineLevelCol from the column
    dimensions' ``max_outline``, which it finds only when it writes the columns, after the
    sheetFormatPr (None at a workbook's first save): both are set here, before the save.
    """
    level = max((d.outlineLevel or 0 for d in ws.row_dimensions.values()), default=0)
    if placeholder is not None:
        level = max(level, placeholder.outline_rows)
    ws.sheet_format.outlineLevelRow = level or None
    cols = max((d.outlineLevel or 0 for d in ws.column_dimensions.values()), default=0)
    ws.column_dimensions.max_outline = cols or None


def _register_streamed(sheet: StreamedSheet, styles: _Styles) -> None:
    """Let a streamed sheet register its rows' styles, after those of the sheet's cells."""
    if sheet.register is not None:
        sheet.register(styles.attr)


@contextlib.contextmanager
def stream_cells(wb, streamed: list[StreamedSheet]) -> Iterator[list[StreamedSheet]]:
    """While the block runs, every worksheet's cells are out of the workbook, written as rows.

    Yields the sheets for :func:`~verify.report.xlsx_fast.splice`: ``streamed`` (the
    placeholders' own rows now follow the rows openpyxl would have written there) and one
    per other worksheet with cells or row dimensions. Save the workbook inside the block; the
    cells and row dimensions are put back on leaving it.
    """
    by_title = {s.title: s for s in streamed}
    out: list[StreamedSheet] = []
    taken: list[tuple] = []
    styles = _Styles(wb)
    try:
        for ws in wb.worksheets:
            placeholder = by_title.pop(ws.title, None)
            if not ws._cells and not ws.row_dimensions:
                if placeholder is not None:
                    _register_streamed(placeholder, styles)
                    out.append(placeholder)
                continue
            dimension = _dimension(ws)
            links: list = []
            try:
                xml = sheet_rows(ws, links, styles)
            except _Unsupported:
                _register_styles(ws)
                if placeholder is not None:
                    _register_streamed(placeholder, styles)
                    out.append(placeholder)
                continue
            if placeholder is not None:
                _register_streamed(placeholder, styles)
            _init_tables(ws)
            xml = guard_text_controls(xml)
            if links:
                setattr(ws, _LINKS, links)
            taken.append((ws, ws._cells, dict(ws.row_dimensions)))
            ws._cells = {}
            ws.row_dimensions.clear()
            if placeholder is None:
                out.append(StreamedSheet(ws.title, (lambda x=xml: (x,)), dimension))
            else:
                out.append(StreamedSheet(
                    ws.title,
                    (lambda x=xml, p=placeholder: chain((x,), p.rows())),
                    placeholder.dimension,
                ))
        for placeholder in by_title.values():  # (no such sheet: splice names it)
            _register_streamed(placeholder, styles)
            out.append(placeholder)
        yield out
    finally:
        for ws, cells, dims in taken:
            ws._cells = cells
            ws.row_dimensions.update(dims)
            if hasattr(ws, _LINKS):
                delattr(ws, _LINKS)


@contextlib.contextmanager
def full_precision_numbers():
    """Make openpyxl store floats with every digit while the workbook is saved.

    openpyxl writes numbers through ``"%.16g" % value``, which drops the 17th significant
    digit that some doubles need (12.000433333333332 would come back as 12.00043333333333).
    Stored values must never be rounded, so during the save the cell writer formats floats
    with ``repr`` (:func:`number_text`), as the cells written here are.
    """
    from openpyxl.cell import _writer

    original = _writer.safe_string
    _writer.safe_string = number_text
    try:
        yield
    finally:
        _writer.safe_string = original


def release(wb) -> None:
    """Take a saved workbook apart, so that reference counting frees it.

    Every cell, row dimension and merged range points back to its sheet, which holds them:
    cycles that only the cyclic collector frees, and it walks them all (about 77,000 objects
    for a layout of 300 characteristics, ~15 ms) at its first collection after the pause
    (:func:`verify.collector.paused`). Emptying the sheets' containers breaks those cycles;
    the workbook must not be used afterwards.
    """
    for ws in wb._sheets:
        if hasattr(ws, "_cells"):
            ws._cells = {}
        for holder in ("row_dimensions", "column_dimensions"):
            dims = getattr(ws, holder, None)
            if dims is not None:
                dims.clear()
        merged = getattr(ws, "merged_cells", None)
        if merged is not None:
            merged.ranges = set()


def save(wb, streamed: list[StreamedSheet], path, *, timestamp) -> None:
    """Save a built workbook to ``path``: cells as XML here, the rest by openpyxl, spliced.

    Parameters
    ----------
    wb : openpyxl.Workbook
        The built workbook (its streamed sheets as placeholders).
    streamed : list of StreamedSheet
        The placeholders' rows.
    path : path-like
        Where to write.
    timestamp : datetime
        The run's start (UTC): every zip entry's time and the document's times.
    """
    by_title = {s.title: s for s in streamed}
    for ws in wb.worksheets:
        outline_levels(ws, by_title.get(ws.title))
    with full_precision_numbers(), stream_cells(wb, streamed) as sheets:
        package = openpyxl_package(wb, _worksheet_writer())
    splice(package, sheets, path, timestamp=timestamp)
