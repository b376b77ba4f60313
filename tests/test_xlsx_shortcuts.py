"""The workbook's shortcuts past openpyxl's serialisation give openpyxl's own bytes.

- the styles part (:mod:`verify.report.stylesheet_xml`), against openpyxl's
  ``tostring(write_stylesheet(wb))`` on the same workbook;
- the drawings of charts remembered by their anchors (:mod:`verify.report.xlsx_fast`) and the
  sheets' header and footer remembered by their text (:mod:`verify.report.sheet_xml`), against
  the same workbooks written the plain way;
- the parts openpyxl's writer hands over in memory (``xlsx_fast.openpyxl_package``), against the
  zip archive it wrote them into before (stored, uncompressed): the same parts, in the same order.

These are software regression checks (each shortcut against the route it replaces), not
statistics checks.
"""

from __future__ import annotations

import pytest
from openpyxl import Workbook
from openpyxl.styles import Alignment, Border, Font, PatternFill, Protection, Side
from openpyxl.styles.stylesheet import write_stylesheet
from openpyxl.xml.functions import tostring

from tests.factory import DESIGNS, make_evaluation
from verify.report import stylesheet_xml as sx
from verify.report.workbook import write_workbook


def _openpyxl(wb) -> bytes:
    return tostring(write_stylesheet(wb))


def _styled_workbook(order: int) -> Workbook:
    """Cells with many combinations of font, fill, border, number format, alignment and
    protection; ``order`` changes the order in which they first appear (so the workbook's
    style indices differ from one workbook to the next)."""
    wb = Workbook()
    ws = wb.active
    aligns = [Alignment(horizontal="center"), Alignment(wrap_text=True, vertical="top"),
              Alignment(horizontal="right", indent=2), Alignment()]
    fonts = [Font(bold=True), Font(italic=True, color="FF0000"), Font(size=9)]
    fmts = ["0.000", "0.00E+00", "General", "0%", "yyyy-mm-dd"]
    combos = [(a, f, m, p) for a in range(len(aligns)) for f in range(len(fonts))
              for m in range(len(fmts)) for p in (0, 1)]
    if order:
        combos = combos[order:] + combos[:order]
        combos.reverse()
    for r, (a, f, m, p) in enumerate(combos, start=1):
        cell = ws.cell(row=r, column=1, value=r * 0.5)
        cell.alignment = aligns[a]
        cell.font = fonts[f]
        cell.number_format = fmts[m]
        if p:
            cell.protection = Protection(locked=False, hidden=True)
        if r % 7 == 0:
            cell.fill = PatternFill("solid", fgColor="DDEEFF")
        if r % 5 == 0:
            cell.border = Border(bottom=Side(style="thin"))
    return wb


@pytest.mark.parametrize("order", [0, 7, 31])
def test_the_styles_part_is_openpyxls_on_first_and_remembered_formats(order):
    wb = _styled_workbook(order)
    # the cells' formats are registered as a save registers them
    for row in wb.active.iter_rows():
        for cell in row:
            wb._cell_styles.add(cell._style)
    expected = _openpyxl(wb)
    sx._XF.clear()
    assert sx.stylesheet_xml(wb) == expected  # every format serialised here
    assert len(sx._XF) > 50
    assert sx.stylesheet_xml(wb) == expected  # every format remembered


def test_formats_are_remembered_by_their_text_across_workbooks():
    # two workbooks whose alignment indices mean different alignments: a format remembered
    # from the first must not be reused for a different alignment in the second
    first, second = _styled_workbook(0), _styled_workbook(31)
    for wb in (first, second):
        for row in wb.active.iter_rows():
            for cell in row:
                wb._cell_styles.add(cell._style)
    sx._XF.clear()
    assert sx.stylesheet_xml(first) == _openpyxl(first)
    assert sx.stylesheet_xml(second) == _openpyxl(second)


@pytest.mark.parametrize("design", DESIGNS)
def test_every_report_workbook_gets_openpyxls_styles_part(design, tmp_path, monkeypatch):
    seen = []
    route = sx.stylesheet_xml

    def checked(wb):
        ours = route(wb)
        assert ours == _openpyxl(wb)
        seen.append(len(ours))
        return ours

    monkeypatch.setattr(sx, "stylesheet_xml", checked)
    for i in range(2):  # the second workbook meets remembered formats
        write_workbook(make_evaluation(design, seed=3 + i), tmp_path / f"{design}-{i}.xlsx")
    assert len(seen) == 2 and min(seen) > 1000


# --- the drawings of charts (verify.report.xlsx_fast: remembered drawing text) ----------------


def _parts(path) -> dict[str, bytes]:
    import zipfile

    with zipfile.ZipFile(path) as z:
        return {name: z.read(name) for name in z.namelist()}


@pytest.mark.parametrize("design", ["welch", "paired", "all"])
def test_remembered_drawings_equal_openpyxls_own(design, tmp_path, monkeypatch):
    from verify.report import xlsx_fast

    evs = [make_evaluation(design, seed=11), make_evaluation(design, seed=12, n_old=24, n_new=24)]
    xlsx_fast._DRAWINGS.clear()
    xlsx_fast._DRAWING_RELS.clear()
    for i, ev in enumerate(evs):  # the second workbook meets remembered drawings
        write_workbook(ev, tmp_path / f"fast-{i}.xlsx")
    assert xlsx_fast._DRAWINGS and xlsx_fast._DRAWING_RELS
    monkeypatch.setattr(xlsx_fast, "_plain_drawing", lambda drawing: True)  # openpyxl's way
    for i, ev in enumerate(evs):
        write_workbook(ev, tmp_path / f"plain-{i}.xlsx")
    for i in range(len(evs)):
        fast, plain = _parts(tmp_path / f"fast-{i}.xlsx"), _parts(tmp_path / f"plain-{i}.xlsx")
        assert any(name.startswith("xl/drawings/") for name in plain)
        assert fast == plain


def test_remembered_headers_and_footers_equal_openpyxls_own(tmp_path, monkeypatch):
    from verify.report import sheet_xml

    class Forgetful(dict):  # nothing remembered: every element built by openpyxl
        def __setitem__(self, key, value):
            pass

    evs = [make_evaluation("all", seed=21), make_evaluation("welch", seed=22)]
    sheet_xml._HEADERS.clear()
    for i, ev in enumerate(evs):
        write_workbook(ev, tmp_path / f"fast-{i}.xlsx")
    assert len(sheet_xml._HEADERS) >= 2  # one footer per workbook (its run id), remembered
    monkeypatch.setattr(sheet_xml, "_HEADERS", Forgetful())
    for i, ev in enumerate(evs):
        write_workbook(ev, tmp_path / f"plain-{i}.xlsx")
        fast, plain = _parts(tmp_path / f"fast-{i}.xlsx"), _parts(tmp_path / f"plain-{i}.xlsx")
        assert b"<headerFooter>" in plain["xl/worksheets/sheet1.xml"]
        assert fast == plain


def test_a_different_footer_is_not_taken_for_a_remembered_one():
    from openpyxl.worksheet.header_footer import HeaderFooter

    from verify.report.sheet_xml import _header_footer_key

    a, b = HeaderFooter(), HeaderFooter()
    for hf in (a, b):
        hf.oddFooter.left.text = "&A: verify run 1"
        hf.oddFooter.left.size = 8
    assert _header_footer_key(a) == _header_footer_key(b)
    b.oddFooter.left.size = 9
    assert _header_footer_key(a) != _header_footer_key(b)
    b.oddFooter.left.size = 8
    b.evenHeader.center.color = "FF0000"
    assert _header_footer_key(a) != _header_footer_key(b)
    b.evenHeader.center.color = None
    b.differentFirst = True
    assert _header_footer_key(a) != _header_footer_key(b)


@pytest.mark.parametrize("design", ["welch", "paired", "all"])
def test_the_parts_in_memory_are_those_of_openpyxls_zip_archive(design, tmp_path, monkeypatch):
    import io
    import zipfile

    from verify.report import sheet_xml, xlsx_fast

    def zipped(wb, worksheet_writer=None) -> bytes:
        """The route before: openpyxl's writer into a stored zip archive in memory."""
        buf = io.BytesIO()
        archive = zipfile.ZipFile(buf, "w", zipfile.ZIP_STORED, allowZip64=True)
        xlsx_fast._in_memory_writer(worksheet_writer)(wb, archive).save()  # closes it
        return buf.getvalue()

    handed: list = []

    def in_memory(wb, worksheet_writer=None):
        parts = xlsx_fast.openpyxl_package(wb, worksheet_writer)
        handed.append(parts)
        return parts

    ev = make_evaluation(design, seed=5)
    monkeypatch.setattr(sheet_xml, "openpyxl_package", in_memory)
    write_workbook(ev, tmp_path / "parts.xlsx")
    monkeypatch.setattr(sheet_xml, "openpyxl_package", zipped)
    write_workbook(ev, tmp_path / "zipped.xlsx")
    assert isinstance(handed[0], dict) and any(n.startswith("xl/worksheets/") for n in handed[0])
    # splice got the same parts in the same order: the same file, byte for byte
    assert (tmp_path / "parts.xlsx").read_bytes() == (tmp_path / "zipped.xlsx").read_bytes()


def test_a_part_written_twice_is_an_error():
    from verify.report.xlsx_fast import _Parts

    parts = _Parts()
    parts.writestr("xl/a.xml", "<a>é</a>")
    assert parts.parts == {"xl/a.xml": "<a>é</a>".encode()}
    assert parts.namelist() == ["xl/a.xml"]
    with pytest.raises(ValueError, match="twice"):
        parts.writestr("xl/a.xml", b"<a/>")
