"""The save path: every worksheet's cells written as XML by verify.report.sheet_xml.

The reference is openpyxl 3.1's own writer (``openpyxl/cell/_writer.py`` and
``openpyxl/worksheet/_writer.py``) saving the same workbook: each test builds a workbook twice
(the builders are deterministic), saves one through :func:`verify.report.sheet_xml.save` and
the other through openpyxl's writer alone (with the same full-precision numbers and the same
splice, so the same control-character guard and zip times), and requires

- every part of the two packages to be equal byte for byte, except that a streamed sheet's
  ``<dimension>`` and empty ``<sheetData>`` are spelled without the blank (the same XML);
- openpyxl's reading of the two files to be equal: every cell's value, data type and style.

XML escaping and ``xml:space`` follow the XML 1.0 specification (sections 2.4 and 2.10), the
cell and row elements ECMA-376 Part 1, 18.3.1.4 (c) and 18.3.1.73 (row).
"""

from __future__ import annotations

import contextlib
import datetime as dt
import io
import re
import zipfile
from pathlib import Path

import openpyxl
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from openpyxl.comments import Comment
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.worksheet.datavalidation import DataValidation
from openpyxl.worksheet.formula import ArrayFormula
from openpyxl.worksheet.hyperlink import Hyperlink
from openpyxl.worksheet.table import Table

from tests.factory import make_evaluation
from verify.report import recheck_xml, sheet_xml
from verify.report.cells import put
from verify.report.sheet_xml import full_precision_numbers, save
from verify.report.workbook import write_workbook
from verify.report.xlsx_fast import splice

STAMP = dt.datetime(2025, 3, 4, 5, 6, 7)


def _openpyxl_save(wb, _worksheet_writer=None) -> bytes:
    """openpyxl's own ``Workbook.save`` (every cell, temporary files, deflate)."""
    buf = io.BytesIO()
    wb.save(buf)
    return buf.getvalue()


def _reference_save(wb, path: Path) -> None:
    """openpyxl's writer for every cell (no streaming), then the same splice; the sheets'
    outline levels set as the save sets them (openpyxl leaves outlineLevelRow out: tested on
    its own in test_outline_levels_*)."""
    for ws in wb.worksheets:
        sheet_xml.outline_levels(ws)
    with full_precision_numbers():
        package = _openpyxl_save(wb)
    splice(package, [], path, timestamp=STAMP)


def _parts(path: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as z:
        return {n: z.read(n) for n in z.namelist()}


def _norm(data: bytes) -> bytes:
    data = re.sub(rb'<dimension ref="([^"]*)"\s*/>', rb'<dimension ref="\1"/>', data)
    return re.sub(rb"<sheetData\s*/>", b"<sheetData></sheetData>", data)


def _value(v):
    if isinstance(v, ArrayFormula):
        return ("array", v.ref, v.text)
    return (type(v).__name__, str(v)) if not isinstance(v, (str, int, float)) else v


def _reading(path: Path) -> list:
    wb = openpyxl.load_workbook(path)
    out = []
    for ws in wb.worksheets:
        out.append(("sheet", ws.title, ws.dimensions, sorted(map(str, ws.merged_cells.ranges))))
        for row in ws.iter_rows():
            for c in row:
                out.append((c.coordinate, _value(c.value), c.data_type, c.style_id, c.number_format,
                            repr(c.font), repr(c.fill), repr(c.border), repr(c.alignment),
                            c.hyperlink.location if c.hyperlink else None,
                            c.hyperlink.target if c.hyperlink else None))
        for i, d in sorted(ws.row_dimensions.items()):
            out.append(("row", i, d.ht, d.customHeight, d.hidden, d.outlineLevel))
    return out


def _compare(build, tmp_path: Path) -> tuple[Path, Path]:
    """Build twice, save both ways, require the same parts and the same reading."""
    fast, ref = tmp_path / "fast.xlsx", tmp_path / "ref.xlsx"
    save(build(), [], fast, timestamp=STAMP)
    _reference_save(build(), ref)
    a, b = _parts(fast), _parts(ref)
    assert a.keys() == b.keys()
    for name in a:
        assert _norm(a[name]) == _norm(b[name]), name
    assert _reading(fast) == _reading(ref)
    return fast, ref


def _streamed(path: Path, n: int = 1) -> bool:
    """Whether sheet n's rows were written here (splice spells its dimension without a blank;
    openpyxl writes ``<dimension ref=".." />``)."""
    return re.search(r'<dimension ref="[^"]*"/>', _sheet_xml(path, n)) is not None


def _sheet_xml(path: Path, n: int = 1) -> str:
    with zipfile.ZipFile(path) as z:
        return z.read(f"xl/worksheets/sheet{n}.xml").decode("utf-8")


# --- values -----------------------------------------------------------------------------------

TEXTS = [
    "plain", "a < b & c > d", "&amp; stays four characters", 'quote " and apostrophe \'',
    "  leading", "trailing  ", "   ", "\tTab", "line\nbreak", "carriage\r\nreturn",
    "=SUM(A1:A2)", "=1+1", "+1", "-1", "@SUM(A1)", "#N/A", '=HYPERLINK("x")',
    "é ü ß 温度 \U0001d54f", "x" * 32_767,
]


def _values_book():
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Values"
    for i, text in enumerate(TEXTS, start=1):
        put(ws, i, 1, text)  # text stays text: the project's writer forces type s
    numbers = [0, -5, 7, 10**17, 2**53 + 1, 0.1, 1e-300, -0.0, 12.000433333333332,
               1 / 3, -2.5e17, float("nan"), float("inf"), True, False]
    for i, v in enumerate(numbers, start=1):
        ws.cell(i, 2).value = v
    ws.cell(1, 3).value = "=SUM(B1:B3)"
    ws.cell(2, 3).value = '=IF(B1<2,"a&b","c>d")'
    ws.cell(3, 3).value = "#N/A"  # assigned plainly: openpyxl makes it an error value
    ws.cell(4, 3).value = ""  # an empty text cell: written as an empty inline string
    ws.cell(5, 3).value = "=T.TEST(B1:B4,B5:B8,2,3)"
    ws.cell(6, 3)  # a cell object without value or style: not written
    return wb


def test_values_escaping_numbers_booleans_formulas(tmp_path):
    fast, _ = _compare(_values_book, tmp_path)
    assert _streamed(fast)
    ws = openpyxl.load_workbook(fast)["Values"]
    for i, text in enumerate(TEXTS, start=1):
        got = ws.cell(i, 1)
        # an XML parser folds a literal CR to LF (XML 1.0, 2.11): openpyxl writes it so too
        assert got.value == text.replace("\r\n", "\n")
        assert got.data_type == "s"  # text that looks like a formula or an error stays text
    assert ws["B4"].value == 10**17 and ws["B9"].value == 12.000433333333332
    assert ws["B14"].value is True and ws["B15"].value is False
    assert ws["B12"].value is None  # NaN: openpyxl writes an empty value
    assert ws["C1"].data_type == "f" and ws["C1"].value == "=SUM(B1:B3)"
    assert ws["C2"].value == '=IF(B1<2,"a&b","c>d")'
    assert ws["C3"].data_type == "e"
    xml = _sheet_xml(fast)
    assert "a &lt; b &amp; c &gt; d" in xml and "&amp;amp; stays" in xml
    assert '<t xml:space="preserve">  leading</t>' in xml
    assert "<t>   </t>" in xml  # blank-only text: openpyxl sets no xml:space
    assert '<c r="C6"' not in xml
    assert '<c r="A11" t="inlineStr"><is><t>=SUM(A1:A2)</t></is></c>' in xml


def test_numpy_numbers_are_written_as_numbers(tmp_path):
    """numpy 2 spells a float64's repr "np.float64(1.5)"; a cell holding one (openpyxl takes
    it as a number) must still carry the number's shortest text."""
    import numpy as np

    def build():
        wb = openpyxl.Workbook()
        ws = wb.active
        ws["A1"] = np.float64(0.1) * 3
        ws["A2"] = np.int64(7)
        ws["A3"] = np.float32(1.5)
        return wb

    fast, _ = _compare(build, tmp_path)
    assert _streamed(fast)
    ws = openpyxl.load_workbook(fast).active
    assert ws["A1"].value == 0.30000000000000004 and ws["A2"].value == 7
    assert ws["A3"].value == 1.5
    assert "<v>0.30000000000000004</v>" in _sheet_xml(fast)


def test_xml_illegal_control_characters_are_replaced_visibly(tmp_path):
    def build():
        wb = openpyxl.Workbook()
        ws = wb.active
        ws["A1"] = "ok"
        # openpyxl refuses these on assignment; a cell reached around that check still must
        # not break the file: the same guard as for openpyxl's parts (U+FFFD)
        ws["A1"]._value = "bell\x07 and nul\x00 here"
        # and one in the frame openpyxl writes around the rows (a validation's prompt)
        dv = DataValidation(type="whole", prompt="prompt\x01", showInputMessage=True)
        dv.add("A1")
        ws.add_data_validation(dv)
        return wb

    fast, _ = _compare(build, tmp_path)
    assert _streamed(fast)
    assert openpyxl.load_workbook(fast).active["A1"].value == "bell\ufffd and nul\ufffd here"
    assert "\x01" not in _sheet_xml(fast) and 'prompt="prompt\ufffd"' in _sheet_xml(fast)


def test_row_dimensions_styles_merges_and_empty_rows(tmp_path):
    thin = Side(style="thin")

    def build():
        wb = openpyxl.Workbook()
        ws = wb.active
        put(ws, 1, 1, "Heading", font=Font(bold=True, size=13),
            fill=PatternFill("solid", fgColor="DDEBF7"), align=Alignment(wrap_text=True),
            border=Border(top=thin, bottom=thin))
        ws.merge_cells("A1:D2")  # MergedCell objects with the border
        ws.row_dimensions[1].height = 31.5
        ws.row_dimensions[3].height = 15  # a row with a height and no cell
        ws.row_dimensions[4].hidden = True
        ws.row_dimensions[4].outline_level = 1
        ws.row_dimensions[5].font = Font(italic=True)  # a row style: s and customFormat
        ws.cell(6, 2).number_format = "0.000"  # styled, no value
        put(ws, 7, 3, 1.25, fmt="0.00")
        put(ws, 7, 1, "later column first")
        ws.cell(9, 1)  # a cell object only: an empty row
        return wb

    fast, _ = _compare(build, tmp_path)
    assert _streamed(fast)
    xml = _sheet_xml(fast)
    assert '<row r="3" ht="15" customHeight="1"></row>' in xml
    assert '<row r="4" hidden="1" outlineLevel="1">' in xml
    assert '<row r="9"></row>' in xml
    ws = openpyxl.load_workbook(fast).active
    assert ws.row_dimensions[1].height == 31.5 and ws["A1"].font.b
    assert [str(r) for r in ws.merged_cells.ranges] == ["A1:D2"]


def test_empty_sheet_and_sheet_of_row_heights_only(tmp_path):
    def build():
        wb = openpyxl.Workbook()
        wb.active.title = "Empty"
        wb.create_sheet("Heights").row_dimensions[2].height = 40
        around = wb.create_sheet("Around")  # heights before, between, on and after the cells
        for r, h in ((1, 20), (3, 22), (4, 24), (8, 30)):
            around.row_dimensions[r].height = h
        for r in (2, 4, 6):
            put(around, r, 2, f"row {r}")
        return wb

    fast, _ = _compare(build, tmp_path)
    assert not _streamed(fast, 1) and _streamed(fast, 2) and _streamed(fast, 3)
    rows = re.findall(r'<row r="(\d+)"', _sheet_xml(fast, 3))
    assert rows == ["1", "2", "3", "4", "6", "8"]
    assert "<sheetData" in _sheet_xml(fast, 1) and "<row" not in _sheet_xml(fast, 1)
    assert openpyxl.load_workbook(fast)["Heights"].row_dimensions[2].height == 40


def test_hyperlinks_internal_and_external(tmp_path):
    def build():
        wb = openpyxl.Workbook()
        ws = wb.active
        ws.title = "Links"
        wb.create_sheet("Target")
        put(ws, 1, 1, "to the target sheet")
        ws["A1"].hyperlink = Hyperlink(ref="A1", location="'Target'!A1")
        ws["B2"].hyperlink = "https://example.invalid/a?b=1&c=2"
        return wb

    fast, _ = _compare(build, tmp_path)
    assert _streamed(fast)
    ws = openpyxl.load_workbook(fast)["Links"]
    assert ws["A1"].hyperlink.location == "'Target'!A1"
    assert ws["B2"].hyperlink.target == "https://example.invalid/a?b=1&c=2"


def test_table_columns_named_from_the_header_cells(tmp_path):
    def build():
        wb = openpyxl.Workbook()
        ws = wb.active
        for j, h in enumerate(("Lot", "Value & unit"), start=1):
            put(ws, 1, j, h)
        put(ws, 2, 1, "L1")
        put(ws, 2, 2, 1.5)
        ws.add_table(Table(displayName="T1", ref="A1:B2"))  # no columns given
        return wb

    fast, _ = _compare(build, tmp_path)
    assert _streamed(fast)
    table = openpyxl.load_workbook(fast).active.tables["T1"]
    assert [c.name for c in table.tableColumns] == ["Lot", "Value & unit"]


@pytest.mark.parametrize("kind", ["comment", "date", "array", "rich"])
def test_what_is_not_written_here_is_left_to_openpyxl_whole(tmp_path, kind):
    """A sheet with a cell this module does not write is saved by openpyxl, and the styles of
    every sheet keep openpyxl's order (the style sheet is equal byte for byte)."""
    from openpyxl.cell.rich_text import CellRichText, TextBlock
    from openpyxl.cell.text import InlineFont

    def build():
        wb = openpyxl.Workbook()
        first = wb.active
        put(first, 1, 1, "first", font=Font(bold=True))
        ws = wb.create_sheet("Odd")
        put(ws, 1, 1, "x", font=Font(color="FF0000"))
        if kind == "comment":
            ws["B2"].comment = Comment("a note", "verify")
        elif kind == "date":
            ws["B2"] = dt.date(2025, 1, 2)
        elif kind == "array":
            ws["B2"] = ArrayFormula("B2:B3", "=A1:A2*2")
        else:
            ws["B2"] = CellRichText("plain ", TextBlock(InlineFont(b=True), "bold"))
        put(wb.create_sheet("Last"), 1, 1, 2.5, fmt="0.0", font=Font(italic=True))
        return wb

    fast, _ = _compare(build, tmp_path)
    assert _streamed(fast, 1) and not _streamed(fast, 2) and _streamed(fast, 3)


def test_dimension_is_openpyxls():
    wb = _values_book()
    assert sheet_xml._dimension(wb.active) == wb.active.calculate_dimension() == "A1:C19"
    ws = wb.create_sheet("Sparse")
    assert sheet_xml._dimension(ws) == ws.calculate_dimension() == "A1:A1"
    ws.cell(7, 30)
    ws.cell(3, 4)
    assert sheet_xml._dimension(ws) == ws.calculate_dimension() == "D3:AD7"


def test_cells_are_back_in_the_workbook_after_the_save(tmp_path):
    wb = _values_book()
    ws = wb.active
    ws.row_dimensions[2].height = 20
    cells, n_dims = dict(ws._cells), len(ws.row_dimensions)
    save(wb, [], tmp_path / "a.xlsx", timestamp=STAMP)
    assert ws._cells == cells and len(ws.row_dimensions) == n_dims
    assert ws.row_dimensions[2].height == 20


def test_same_workbook_same_bytes(tmp_path):
    save(_values_book(), [], tmp_path / "a.xlsx", timestamp=STAMP)
    save(_values_book(), [], tmp_path / "b.xlsx", timestamp=STAMP)
    assert (tmp_path / "a.xlsx").read_bytes() == (tmp_path / "b.xlsx").read_bytes()


@settings(max_examples=40, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(texts=st.lists(st.text(max_size=60), min_size=1, max_size=8),
       numbers=st.lists(st.floats(allow_nan=True, allow_infinity=True) | st.integers(
           min_value=-(10**20), max_value=10**20), max_size=8))
def test_any_text_and_number_reads_as_openpyxl_writes_it(tmp_path, texts, numbers):
    def build():
        wb = openpyxl.Workbook()
        ws = wb.active
        for i, t in enumerate(texts, start=1):
            put(ws, i, 1, t)
        for i, v in enumerate(numbers, start=1):
            ws.cell(i, 2).value = v
        return wb

    assert _streamed(_compare(build, tmp_path)[0])


# --- the workbook of an evaluation ------------------------------------------------------------


@contextlib.contextmanager
def _openpyxl_writes_cells(wb, streamed):
    yield streamed


@pytest.mark.parametrize(
    ("design", "detail"), [("all", "auto"), ("paired", "auto"), ("all", "compact")]
)
def test_workbook_of_an_evaluation_equals_openpyxls_writing(tmp_path, monkeypatch, design,
                                                            detail):
    """The whole package (every sheet, style sheet, charts, tables) is the same as when
    openpyxl's Workbook.save writes every cell, apart from the spelling of dimension and empty
    sheetData."""
    ev = make_evaluation(design, seed=5)
    fast, ref = tmp_path / "fast.xlsx", tmp_path / "ref.xlsx"
    write_workbook(ev, fast, record_json='{"format": "verify-result/1"}', detail=detail)
    with monkeypatch.context() as m:
        m.setattr(sheet_xml, "stream_cells", _openpyxl_writes_cells)
        m.setattr(sheet_xml, "openpyxl_package", _openpyxl_save)
        # the recheck sheet's body as cells too (recheck_xml writes it as rows otherwise)
        m.setattr(recheck_xml.Body, "build", classmethod(lambda cls, *a, **k: None))
        write_workbook(ev, ref, record_json='{"format": "verify-result/1"}', detail=detail)
    a, b = _parts(fast), _parts(ref)
    assert a.keys() == b.keys()
    for name in a:
        assert _norm(a[name]) == _norm(b[name]), name
    assert a != b  # (the first really streamed its sheets)


@pytest.mark.parametrize("detail", ["auto", "compact"])
def test_rows_of_every_sheet_are_unique_and_ascending(tmp_path, detail):
    """ECMA-376 Part 1, 18.3.1.73: a row's r is its 1-based index; rows are written in order,
    each once (Excel repairs a file that gives a row twice). The compact Details sheet's
    placeholder once held an empty row 4 before the streamed row 4."""
    ev = make_evaluation("all", seed=5)
    path = tmp_path / "wb.xlsx"
    write_workbook(ev, path, record_json='{"format": "verify-result/1"}', detail=detail)
    with zipfile.ZipFile(path) as z:
        sheets = [n for n in z.namelist() if n.startswith("xl/worksheets/sheet")]
        assert sheets
        for name in sheets:
            rows = [int(r) for r in re.findall(rb'<row r="(\d+)"', z.read(name))]
            assert rows == sorted(set(rows)), name


# --- the streamed rows' writer ----------------------------------------------------------------


@settings(max_examples=60, deadline=None)
@given(n=st.integers(min_value=1, max_value=30), r=st.integers(min_value=1, max_value=1048576),
       text=st.text(max_size=20))
def test_row_writer_equals_the_format_template_it_replaced(n, r, text):
    """xlsx_fast.row_writer against the measurements sheet's former ``str.format`` template
    (the same row element: ``<row r>`` and each cell's reference, then the given rest, which
    may hold braces or quotes: it is an argument, never part of a template)."""
    from openpyxl.utils import get_column_letter

    from verify.report.xlsx_fast import row_writer

    template = (
        '<row r="{0}">'
        + "".join(f'<c r="{get_column_letter(j)}{{0}}"{{{j}}}' for j in range(1, n + 1))
        + "</row>"
    ).format
    cells = [f'{{}}"{text}"{j}/>' for j in range(n)]
    assert row_writer(n)(str(r), *cells) == template(r, *cells)


def test_a_written_workbook_leaves_no_cell_to_the_cyclic_collector(tmp_path):
    """sheet_xml.release: once write_workbook returns, its cells were freed by reference
    counting (each cell points back to its sheet; left as cycles, the collector would walk
    them all after its pause). Python's gc module: DEBUG_SAVEALL keeps what a collection
    finds unreachable in gc.garbage."""
    import gc

    from openpyxl.cell.cell import Cell, MergedCell

    ev = make_evaluation("all", seed=5)
    gc.collect()
    gc.set_debug(gc.DEBUG_SAVEALL)
    try:
        write_workbook(ev, tmp_path / "wb.xlsx", record_json='{"format": "verify-result/1"}')
        gc.collect()
        left = sum(isinstance(o, (Cell, MergedCell)) for o in gc.garbage)
    finally:
        gc.set_debug(0)
        gc.garbage.clear()
    assert left == 0


# --- outline levels ---------------------------------------------------------------------------

def _outline_claims(xml: bytes) -> tuple[int, int | None, int | None, int]:
    """(highest row outlineLevel, sheetFormatPr's outlineLevelRow, its outlineLevelCol,
    highest column outlineLevel) of a sheet's XML; None where the attribute is absent."""
    rows = [int(x) for x in re.findall(rb'<row [^>]*outlineLevel="(\d+)"', xml)]
    cols = [int(x) for x in re.findall(rb'<col [^>]*outlineLevel="(\d+)"', xml)]
    fmt = re.search(rb"<sheetFormatPr[^>]*>", xml).group()
    row_attr = re.search(rb'outlineLevelRow="(\d+)"', fmt)
    col_attr = re.search(rb'outlineLevelCol="(\d+)"', fmt)
    return (max(rows, default=0), row_attr and int(row_attr.group(1)),
            col_attr and int(col_attr.group(1)), max(cols, default=0))


@pytest.mark.parametrize(("body", "detail"), [("rows", "auto"), ("cells", "auto"),
                                              ("rows", "compact")])
def test_outline_levels_of_every_sheet_are_its_rows_highest(tmp_path, monkeypatch, body,
                                                            detail):
    """ECMA-376 Part 1, 18.3.1.81 (sheetFormatPr): outlineLevelRow is the highest outline
    level of the sheet's rows (Excel draws the group buttons from it). The recheck sheet folds
    its helper rows at level 1, its body written as XML rows or as cells; no other sheet has
    outline rows, and none gets the attribute."""
    ev = make_evaluation("all", seed=5)
    path = tmp_path / "wb.xlsx"
    if body == "cells":
        monkeypatch.setattr(recheck_xml.Body, "build", classmethod(lambda cls, *a, **k: None))
    write_workbook(ev, path, record_json='{"format": "verify-result/1"}', detail=detail)
    grouped = 0
    with zipfile.ZipFile(path) as z:
        for name in z.namelist():
            if not name.startswith("xl/worksheets/sheet"):
                continue
            highest, row_attr, col_attr, cols = _outline_claims(z.read(name))
            assert row_attr == (highest or None), name
            assert col_attr == (cols or None), name
            grouped += highest > 0
    assert grouped == 1  # the recheck sheet


def test_outline_levels_where_openpyxl_writes_the_sheet_whole_and_of_columns(tmp_path):
    """Rows at levels 1 and 2 on a sheet left to openpyxl whole (a comment) and on a streamed
    one, grouped columns: outlineLevelRow and outlineLevelCol are the highest levels
    (ECMA-376 Part 1, 18.3.1.81); a sheet without outline has neither."""
    wb = openpyxl.Workbook()
    whole = wb.active
    put(whole, 1, 1, "x")
    whole["B2"].comment = Comment("a note", "verify")
    streamed = wb.create_sheet("Streamed")
    plain = wb.create_sheet("Plain")
    for ws in (whole, streamed):
        for r in range(3, 9):
            put(ws, r, 1, r)
        ws.row_dimensions.group(3, 8, outline_level=1)
        ws.row_dimensions.group(5, 6, outline_level=2, hidden=True)
    streamed.column_dimensions.group("B", "C", outline_level=1)
    put(plain, 1, 1, "nothing grouped")
    save(wb, [], tmp_path / "o.xlsx", timestamp=STAMP)
    assert not _streamed(tmp_path / "o.xlsx", 1) and _streamed(tmp_path / "o.xlsx", 2)
    with zipfile.ZipFile(tmp_path / "o.xlsx") as z:
        claims = [_outline_claims(z.read(f"xl/worksheets/sheet{n}.xml")) for n in (1, 2, 3)]
    assert claims == [(2, 2, None, 0), (2, 2, 1, 1), (0, None, None, 0)]
    back = openpyxl.load_workbook(tmp_path / "o.xlsx")["Streamed"]
    assert back.sheet_format.outlineLevelRow == 2 and back.sheet_format.outlineLevelCol == 1
