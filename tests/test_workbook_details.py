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


def _former_cells(rows, text_style):
    """The Details rows as the sheet wrote them before the per-type fast path (the reference:
    every value through the general tests)."""
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
                cells.append(text_cell(ref, infinity_text(v), text_style))
                continue
            if isinstance(v, bool) or not isinstance(v, numbers.Real):
                cells.append(text_cell(ref, str(v), text_style))
            elif j in float_cols:
                cells.append(number_cell(ref, float(v)))
            else:
                cells.append(number_cell(ref, int(v)))
        out.append(f'<row r="{i}">{"".join(cells)}</row>')
    return "".join(out)


def test_streamed_rows_equal_the_general_route_for_every_kind_of_value(monkeypatch):
    """Texts (empty, escaped, padded), floats (finite, NaN, infinities, in float and integer
    columns), ints, bools and numpy numbers, as the general route wrote them."""
    import numpy as np

    from verify.report import details_sheet
    from verify.report.styles import StyleBook

    odd = ["a < b & c", "", "  padded ", float("nan"), float("inf"), -float("inf"), 2.5, 3.0,
           7, True, False, np.float64(0.1), np.int64(4), np.float64("nan"), None, "x\ny"]
    rows = [tuple(odd[(k + j) % len(odd)] for j in range(len(details_sheet.COLUMNS)))
            for k in range(len(odd))]
    monkeypatch.setattr(details_sheet, "_rows", lambda ev: iter(rows))
    wb = openpyxl.Workbook()
    styles = StyleBook(wb)
    sheet = details_sheet.details_placeholder(wb.active, make_evaluation("welch"), styles)
    assert "".join(sheet.rows()) == _former_cells(rows, styles.text())
