"""The compact detail of a large layout: the streamed Details sheet instead of a sheet per
characteristic, beyond DETAIL_SHEETS_MAX characteristics or when asked; full detail on demand.

The expectations are the workbook's own contract (every check of every characteristic has a
row with the numbers of its result), not a statistics reference.
"""

from __future__ import annotations

import openpyxl
import pytest

from tests.factory import make_evaluation
from verify.report.details_sheet import (
    DETAIL_SHEETS_MAX,
    DETAILS_SHEET,
    HEADER_ROW,
    per_characteristic_sheets,
)
from verify.report.workbook import write_workbook


def test_threshold_and_modes():
    assert per_characteristic_sheets(DETAIL_SHEETS_MAX, "auto")
    assert not per_characteristic_sheets(DETAIL_SHEETS_MAX + 1, "auto")
    assert per_characteristic_sheets(300, "full")
    assert not per_characteristic_sheets(1, "compact")
    with pytest.raises(ValueError, match="detail must be one of"):
        per_characteristic_sheets(3, "brief")


def _rows(path):
    wb = openpyxl.load_workbook(path)
    return wb, [r for r in wb[DETAILS_SHEET].iter_rows(min_row=HEADER_ROW + 1,
                                                       values_only=True)]


def test_compact_workbook_has_a_row_per_check_and_no_characteristic_sheets(tmp_path):
    ev = make_evaluation("all", seed=3)
    path = tmp_path / "compact.xlsx"
    write_workbook(ev, path, detail="compact")
    wb, rows = _rows(path)
    names = {c.name for c in ev.characteristics}
    assert not names & set(wb.sheetnames)  # no sheet per characteristic
    checks = [(c, r) for c in ev.characteristics for r in c.checks]
    by_key = {(row[0], row[2]): row for row in rows}
    for c, r in checks:
        row = by_key[(c.name, f"check {r.check}")]
        assert row[1] == c.decision and row[4] == r.outcome and row[16] == r.reason
        for got, want in ((row[5], r.estimate), (row[9], r.p_value), (row[6], r.ci_low)):
            if want is None:
                assert got is None
            elif abs(want) == float("inf"):
                assert got == ("+∞" if want > 0 else "-∞")  # as on the characteristic sheets
            else:
                assert got == pytest.approx(want, rel=1e-15)  # stored at full precision
    flagged = [(c.name, d) for c in ev.characteristics for d in c.diagnostics if d.flag]
    assert len([r for r in rows if str(r[2]).startswith("diagnostic")]) == len(flagged)
    # the CI level, p-value and power read as on the characteristic sheets (95%, < 0.0001,
    # 87.3%), not as bare fractions
    from verify.report.cells import LEVEL_FORMAT, P_FORMAT, POWER_FORMAT

    ws = wb[DETAILS_SHEET]
    shown = {(c.column_letter, c.number_format)
             for row in ws.iter_rows(min_row=HEADER_ROW + 1, min_col=9, max_col=13)
             for c in row if isinstance(c.value, float)}
    assert {("I", LEVEL_FORMAT), ("J", P_FORMAT), ("M", POWER_FORMAT)} <= shown
    assert {f for col, f in shown if col in "KL"} == {"General"}  # margins in their own units
    assert (LEVEL_FORMAT, POWER_FORMAT) == ("0%", "0.0%")
    # the decision page links each characteristic to the Details sheet
    links = [c.hyperlink.location for row in wb.worksheets[0].iter_rows() for c in row
             if c.hyperlink is not None and c.value in names]
    assert links and all(DETAILS_SHEET in loc for loc in links)


def test_full_detail_keeps_a_sheet_per_characteristic(tmp_path):
    ev = make_evaluation("all", seed=3)
    write_workbook(ev, tmp_path / "full.xlsx", detail="full")
    wb = openpyxl.load_workbook(tmp_path / "full.xlsx", read_only=True)
    assert DETAILS_SHEET not in wb.sheetnames
    assert len(wb.sheetnames) >= len(ev.characteristics) + 3
    wb.close()


def _general_cells(rows, text_styles, number_styles, heights):
    """The Details rows as the general route writes them (the reference: every value through
    the general tests of text_cell / number_cell, as the sheet wrote them before its per-type
    fast path), each cell in its column's style, each row with the height ``heights`` gives
    (the rows without one: no height)."""
    import math
    import numbers

    from openpyxl.utils import get_column_letter

    from verify.report.cells import infinity_text
    from verify.report.xlsx_fast import number_cell, text_cell

    float_cols = {5, 6, 7, 8, 9, 10, 11, 12}
    out = []
    for i, values in enumerate(rows, start=HEADER_ROW + 1):
        cells = []
        for j, v in enumerate(values):
            ref = f"{get_column_letter(j + 1)}{i}"
            if v is None or (isinstance(v, float) and math.isnan(v)):
                continue
            if isinstance(v, float) and math.isinf(v):
                cells.append(text_cell(ref, infinity_text(v), text_styles[j]))
                continue
            if isinstance(v, bool) or not isinstance(v, numbers.Real):
                cells.append(text_cell(ref, str(v), text_styles[j]))
            elif j in float_cols:
                cells.append(number_cell(ref, float(v), number_styles[j]))
            else:
                cells.append(number_cell(ref, int(v), number_styles[j]))
        h = heights.get(i)
        head = f'<row r="{i}"' + ("" if h is None else f' ht="{h:g}" customHeight="1"')
        out.append(f'{head}>{"".join(cells)}</row>')
    return "".join(out)


def _fit_rows_heights(rows):
    """Row -> height as verify.report.cells.fit_rows gives it to the same texts in cells of
    the same widths, wrapped as the Details sheet wraps them (the workbook's rule for rows of
    wrapped text, applied by the cell route everywhere else)."""
    from openpyxl.utils import get_column_letter

    from verify.report import details_sheet
    from verify.report.cells import WRAP, fit_rows, put

    ws = openpyxl.Workbook().active
    for j, (_h, width) in enumerate(details_sheet.COLUMNS, start=1):
        ws.column_dimensions[get_column_letter(j)].width = width
    for i, values in enumerate(rows, start=HEADER_ROW + 1):
        for j in details_sheet.WRAPPED:
            if isinstance(values[j], str) and values[j]:
                put(ws, i, j + 1, values[j], align=WRAP)
    fit_rows(ws)
    return {r: d.ht for r, d in ws.row_dimensions.items() if d.ht is not None}


def test_streamed_rows_equal_the_general_route_for_every_kind_of_value(monkeypatch):
    """Texts (empty, escaped, padded, long, over several lines), floats (finite, NaN,
    infinities, in float and integer columns), ints, bools and numpy numbers, as the general
    route writes them; row heights as fit_rows gives them."""
    import numpy as np

    from verify.report import details_sheet
    from verify.report.styles import StyleBook

    odd = ["a < b & c", "", "  padded ", float("nan"), float("inf"), -float("inf"), 2.5, 3.0,
           7, True, False, np.float64(0.1), np.int64(4), np.float64("nan"), None, "x\ny",
           "a reason that runs on " * 9, "two lines\n" + "z" * 95]
    rows = [tuple(odd[(k + j) % len(odd)] for j in range(len(details_sheet.COLUMNS)))
            for k in range(len(odd))]
    monkeypatch.setattr(details_sheet, "_rows", lambda ev: iter(rows))
    wb = openpyxl.Workbook()
    styles = StyleBook(wb)
    sheet = details_sheet.details_placeholder(wb.active, make_evaluation("welch"), styles)
    n = len(details_sheet.COLUMNS)
    text_styles = [styles.top(wrap=j in details_sheet.WRAPPED) for j in range(n)]
    number_styles = [styles.top(fmt=details_sheet.FORMATS.get(j)) for j in range(n)]
    heights = _fit_rows_heights(rows)
    assert len(heights) >= 4  # the long and the multi-line texts make rows taller
    assert "".join(sheet.rows()) == _general_cells(rows, text_styles, number_styles, heights)


def test_row_height_stays_within_the_tallest_row():
    """A text of hundreds of lines gets the tallest row a sheet can have, 409 points (Excel's
    specifications and limits: row height 409 points), not more."""
    from verify.report.details_sheet import row_height, row_lines

    assert row_lines("word " * 2000, 36) > 200
    assert row_height(row_lines("word " * 2000, 36)) == "409"
    assert row_height(3) == "45.5"  # 3 lines of 14.5 points and 2 of padding, as fit_rows


def test_fitted_rows_stay_within_the_tallest_row():
    """fit_rows (every other sheet's wrapped text) caps a row at the same 409 points: a spec's
    note of thousands of words keeps its whole text in the cell, in a row a sheet can have;
    a short text keeps its own height."""
    from verify.report.cells import ROW_HEIGHT_MAX, WRAP, fit_rows, put

    ws = openpyxl.Workbook().active
    ws.column_dimensions["A"].width = 40
    put(ws, 1, 1, "a note that runs on and on " * 400, align=WRAP)
    put(ws, 2, 1, "two\nlines", align=WRAP)
    fit_rows(ws)
    assert ROW_HEIGHT_MAX == 409.0
    assert ws.row_dimensions[1].height == 409.0
    assert ws.row_dimensions[2].height == 2 * 14.5 + 2
    assert ws["A1"].value == "a note that runs on and on " * 400


# --- paper ------------------------------------------------------------------------------------

LETTER_LONG_PT = 792.0  # US Letter's long side, 11 in (A4's is longer: 297 mm = 842 pt)


def _excel_width_pt(width_chars: float) -> float:
    """A column's width in points by ECMA-376 Part 1, 18.3.1.13 (col, ``width``): a width of
    n characters is Truncate(n * {maximum digit width} + 5) pixels, here with the default
    font's 7-pixel digit (Calibri 11 at 96 pixels an inch), 0.75 points a pixel."""
    import math

    return math.trunc(width_chars * 7 + 5) * 0.75


def test_details_sheet_prints_whole_rows_at_a_readable_scale(tmp_path):
    """The page setup of the saved sheet: landscape at a fixed scale of at least 70% at which
    its columns are one page wide on US Letter (the narrower paper), the header row and the
    identifying columns repeated, the long texts wrapped and read from the top, each row as
    tall as its longest text needs (fit_rows's count), the identifying columns frozen."""
    from openpyxl.utils import get_column_letter

    from verify.report.details_sheet import COLUMNS, WRAPPED

    ev = make_evaluation("all", seed=3)
    path = tmp_path / "compact.xlsx"
    write_workbook(ev, path, detail="compact")
    ws = openpyxl.load_workbook(path)[DETAILS_SHEET]
    setup = ws.page_setup
    assert setup.orientation == "landscape"
    assert not ws.sheet_properties.pageSetUpPr.fitToPage  # a fixed scale, never shrunk below
    scale = int(setup.scale)
    assert scale >= 70
    widths = [ws.column_dimensions[get_column_letter(j)].width for j in range(1, 18)]
    assert widths == [w for _h, w in COLUMNS]
    assert widths[16] <= 40  # the reason wraps in a column of a page's width, not 90
    usable = LETTER_LONG_PT - 72 * (ws.page_margins.left + ws.page_margins.right)
    printed = sum(_excel_width_pt(w) for w in widths) * scale / 100
    assert usable - 20 < printed <= usable  # one page wide, using the page
    assert setup.pageOrder == "overThenDown"  # a row's pages across come together
    assert ws.print_title_rows == f"${HEADER_ROW}:${HEADER_ROW}"
    assert ws.print_title_cols == "$A:$C"  # Characteristic, Decision, Row on every page
    assert ws.freeze_panes == f"D{HEADER_ROW + 1}"
    tall = 0
    for r in range(HEADER_ROW + 1, ws.max_row + 1):
        need = 1
        for j in range(1, 18):
            cell = ws.cell(r, j)
            if cell.value is None:
                continue
            assert cell.alignment.vertical == "top"
            assert bool(cell.alignment.wrap_text) == (j - 1 in WRAPPED)
            if j - 1 in WRAPPED and isinstance(cell.value, str):
                # fit_rows's count: characters against 1.05 characters a unit of width
                need = max(need, -(-len(cell.value) // (widths[j - 1] * 1.05)))
        height = ws.row_dimensions[r].ht
        if need > 1:
            tall += 1
            assert height == min(409, need * 14.5 + 2)
        else:
            assert height is None
    assert tall > 0  # the reasons of this evaluation run over several lines


def _overlapping_words(bbox_html: str) -> list[tuple[str, str]]:
    """Pairs of words whose boxes (``pdftotext -bbox``) overlap by more than a point across
    and by more than 40% of their height: text printed over text. (Consecutive lines of one
    wrapped text touch: a font's box, ascent to descent, is about as tall as its line.)"""
    import re

    words = sorted((float(y0), float(x0), float(x1), float(y1), w) for x0, y0, x1, y1, w in
                   re.findall(r'<word xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" '
                              r'yMax="([\d.]+)">([^<]*)</word>', bbox_html))
    out = []
    for i, (y0, x0, x1, y1, w) in enumerate(words):
        for v0, u0, u1, _v1, other in words[i + 1:]:
            if v0 > y1 - 0.4 * (y1 - y0):  # sorted by top: no later word reaches into it
                break
            if min(x1, u1) - max(x0, u0) > 1:
                out.append((w, other))
    return out


@pytest.mark.slow
def test_details_sheet_as_libreoffice_prints_it(tmp_path):
    """Rendered by LibreOffice to PDF (its own profile), read back with poppler: every page of
    the Details sheet carries the header and the identifying columns, every reason is printed
    whole (a row too short for its wrapped text would cut lines off), and the sheet prints at
    its page setup's scale (the distance between two rows' tops on paper against their height
    in the sheet). Without LibreOffice or poppler the test skips loudly."""
    import re
    import shutil
    import subprocess

    exe = shutil.which("soffice") or shutil.which("libreoffice")
    if exe is None or not shutil.which("pdftotext") or not shutil.which("pdfinfo"):
        pytest.skip("LibreOffice (soffice) or poppler-utils (pdftotext, pdfinfo) is not "
                    "installed: the printed Details sheet was NOT checked")
    ev = make_evaluation("all", seed=3)
    path = tmp_path / "compact.xlsx"
    write_workbook(ev, path, detail="compact")
    wb = openpyxl.load_workbook(path)
    for name in wb.sheetnames:  # the Details sheet alone
        if name != DETAILS_SHEET:
            del wb[name]
    wb.save(tmp_path / "details.xlsx")
    ws = wb[DETAILS_SHEET]
    done = subprocess.run(
        [exe, f"-env:UserInstallation={(tmp_path / 'lo-profile').as_uri()}", "--headless",
         "--norestore", "--convert-to", "pdf", "--outdir", str(tmp_path),
         str(tmp_path / "details.xlsx")], capture_output=True, text=True, timeout=300)
    pdf = tmp_path / "details.pdf"
    assert pdf.is_file(), done.stderr
    info = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True).stdout
    pages = int(re.search(r"^Pages:\s+(\d+)", info, re.M).group(1))
    texts = [subprocess.run(["pdftotext", "-f", str(p), "-l", str(p), "-raw", str(pdf), "-"],
                            capture_output=True, text=True).stdout for p in range(1, pages + 1)]
    for t in texts:
        assert "Characteristic" in t and "Decision" in t and "Row" in t
    printed = re.sub(r"\s+", "", "".join(texts))
    reasons = [ws.cell(r, 17).value for r in range(HEADER_ROW + 1, ws.max_row + 1)]
    assert reasons and all(re.sub(r"\s+", "", x) in printed for x in reasons if x)
    for p in range(1, pages + 1):  # no line of a wrapped text printed over the next row's
        boxes = subprocess.run(["pdftotext", "-f", str(p), "-l", str(p), "-bbox", str(pdf),
                                "-"], capture_output=True, text=True).stdout
        assert _overlapping_words(boxes) == []
    # the scale: the first page's first two body rows, the tops of their first words in the
    # first column (left of 40 points) on paper
    words = subprocess.run(["pdftotext", "-f", "1", "-l", "1", "-bbox", str(pdf), "-"],
                           capture_output=True, text=True).stdout
    first = ev.characteristics[0].name.split()[0]
    tops = [float(y) for x, y in re.findall(
        r'<word xMin="([\d.]+)" yMin="([\d.]+)"[^>]*>' + re.escape(first) + "</word>", words)
        if float(x) < 40]
    assert len(tops) >= 2
    height = ws.row_dimensions[HEADER_ROW + 1].ht
    assert height is not None  # (a row of wrapped text: its height is set)
    assert (tops[1] - tops[0]) / height == pytest.approx(ws.page_setup.scale / 100, rel=0.03)
