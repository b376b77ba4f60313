"""The recheck sheet's body written as XML rows (verify.report.recheck_xml).

The reference is the cell route the body replaced: every recheck row written as an openpyxl
cell, styled and fitted (``_recheck_as_table``, ``cells.fit_rows``) and saved by
``sheet_xml`` (itself held equal to openpyxl's own writer by tests/test_sheet_xml.py, which
also compares a whole workbook with the body as cells against openpyxl saving every cell).
Each test writes the same evaluation both ways and requires every part of the two packages to
be equal byte for byte: the sheet's cells and row attributes, and the style sheet (the fonts,
alignments and cell formats registered in the same order).
"""

from __future__ import annotations

import zipfile
from pathlib import Path

import pytest

from tests.factory import make_evaluation
from verify.report import recheck_xml
from verify.report import workbook as workbook_module
from verify.report.layout import RECHECK_SHEET
from verify.report.recheck import FIRST_BODY_ROW, HELPER_HEADING
from verify.report.workbook import write_workbook


def _parts(path: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(path) as z:
        return {n: z.read(n) for n in z.namelist()}


def _both(ev, tmp_path: Path, monkeypatch, **kw) -> tuple[dict, dict, int]:
    """The workbook with the body as rows, and as cells; and how many bodies were streamed."""
    built = []
    real = recheck_xml.Body.build.__func__

    def spy(cls, *a, **k):
        body = real(cls, *a, **k)
        built.append(body)
        return body

    fast, ref = tmp_path / "fast.xlsx", tmp_path / "ref.xlsx"
    with monkeypatch.context() as m:
        m.setattr(recheck_xml.Body, "build", classmethod(spy))
        write_workbook(ev, fast, record_json='{"format": "verify-result/1"}', **kw)
    with monkeypatch.context() as m:
        m.setattr(recheck_xml.Body, "build", classmethod(lambda cls, *a, **k: None))
        write_workbook(ev, ref, record_json='{"format": "verify-result/1"}', **kw)
    return _parts(fast), _parts(ref), sum(b is not None for b in built)


def _same(a: dict, b: dict) -> None:
    assert a.keys() == b.keys()
    for name in a:
        assert a[name] == b[name], name


@pytest.mark.parametrize(("design", "kw"), [
    ("all", {}),  # four characteristics, sort-proof helper rows folded under their heading
    ("paired", {}),
    ("lot", {}),
    ("one-sample", {}),
    ("all", {"detail": "compact"}),
])
def test_body_as_rows_equals_the_cell_route(tmp_path, monkeypatch, design, kw):
    ev = make_evaluation(design, seed=5)
    a, b, streamed = _both(ev, tmp_path, monkeypatch, **kw)
    assert streamed == 1
    _same(a, b)


def test_a_wide_table_reads_fixed_ranges_and_still_equals_the_cell_route(tmp_path, monkeypatch):
    """Above SORT_PROOF_MAX_ROWS the formulas read fixed ranges (no helper rows): the note row
    at the top of the body is a tall row (its text wraps)."""
    monkeypatch.setattr("verify.report.recheck.SORT_PROOF_MAX_ROWS", 10)
    ev = make_evaluation("all", seed=7)
    a, b, streamed = _both(ev, tmp_path, monkeypatch)
    assert streamed == 1
    _same(a, b)
    assert b"fixed row ranges" in a[f"xl/worksheets/sheet{_sheet_no(a)}.xml"]


def _sheet_no(parts: dict) -> int:
    """The number of the recheck sheet's part (sheets are numbered in workbook order)."""
    import re

    names = re.findall(rb'<sheet name="([^"]*)"', parts["xl/workbook.xml"])
    return names.index(RECHECK_SHEET.encode()) + 1


def _rows(extra: list[list]):
    """A recheck_rows standing in for the real one: a head as the real one has, then ``extra``."""
    def recheck_rows(evaluation, layout):
        head = [["Recheck: title"], ["An explanation long enough to wrap across the table " * 3],
                ["Tolerance (relative)", 1e-9, None, None, None, "applies"],
                ["alpha", 0.05], ["Rows that agree (of 2 compared)", "=COUNTIF(E8:E20,TRUE)", 2,
                                  "=B5-C5", "=B5=C5", "COUNTIF"], [],
                ["Quantity", "Spreadsheet", "Engine", "Difference", "Agrees", "How"]]
        assert len(head) == FIRST_BODY_ROW - 1
        return head + extra
    return recheck_rows


BODY = [
    ["Characteristic: bore <mm> & more"],  # a heading: bold
    ["=SUM(1,2)"],  # a formula alone in the first column reads as a heading too
    [5.0, None, None, None, None, "x"],  # a number alone in A is no heading: not bold
    [7],
    ["mean", "=AVERAGE(1,2)", 1.5, "=B10-C10", "=ABS(B10-C10)<=$B$3", "how " * 40],  # tall
    ["n", "=COUNT(1,2)", 2, "=B11-C11", "=ABS(B11-C11)<=$B$3", "line\nbreak\nthree\nfour"],
    ["  padded ", "=", "+1", None, None, "@SUM(A1)"],  # text that only looks like a formula
    [None, None, None, None, None, "a note"],
    ["label", ""],  # empty text: a bare text cell
    [],
    [HELPER_HEADING + " by characteristic: grouped"],
    ["Looked-up value", "Value", None, None, None, None, "Lot"],
    ["x", "=SUMIFS(A1:A2,B1:B2,1)", None, None, None, None, "L-01 " * 20],
    ["y", 3, None, None, None, "wrapped " * 30, 12345678901234567890],
    ["z", 4, None, None, None, "=" + "LEN(A1)+" * 30 + "1"],  # a long formula in a wrapped cell
    ["w", 5, None, None, None, "taller than a row can be " * 400],  # capped at 409 points
]


def test_every_kind_of_body_cell_equals_the_cell_route(tmp_path, monkeypatch):
    monkeypatch.setattr(workbook_module, "recheck_rows", _rows(BODY))
    ev = make_evaluation("pooled", n_old=5, n_new=5)
    a, b, streamed = _both(ev, tmp_path, monkeypatch)
    assert streamed == 1
    _same(a, b)
    xml = a[f"xl/worksheets/sheet{_sheet_no(a)}.xml"].decode()
    assert 'outlineLevel="1"' in xml and 'customHeight="1"' in xml  # folded, and tall rows
    assert 'ht="409"' in xml  # the tallest row a sheet can have, for the text beyond it


@pytest.mark.parametrize("odd", [True, float("nan"), float("inf"), "=" + "1+" * 20000 + "1"])
def test_a_value_only_cells_write_leaves_the_sheet_to_them(tmp_path, monkeypatch, odd):
    """A logical, NaN (an empty cell), an infinity (text) or a formula longer than a cell holds
    (openpyxl's own check) in the body: Body.build declines and every row is a cell."""
    monkeypatch.setattr(workbook_module, "recheck_rows", _rows(BODY + [["odd", odd]]))
    ev = make_evaluation("pooled", n_old=5, n_new=5)
    a, b, streamed = _both(ev, tmp_path, monkeypatch)
    assert streamed == 0
    _same(a, b)


def test_a_formula_with_a_control_character_is_left_to_openpyxls_own_check():
    """openpyxl refuses such a formula (IllegalCharacterError): the body declines it, so the
    cell route raises that error as it did."""
    assert recheck_xml.Body.build([["ok", "=SUM(1,2)"]], FIRST_BODY_ROW, 6) is not None
    assert recheck_xml.Body.build([["ok", "=SUM(1,2)"], ["bad", "=A1\x01"]],
                                  FIRST_BODY_ROW, 6) is None


@pytest.mark.parametrize("design", ["welch", "paired"])
def test_the_helper_heading_fits_the_printed_width(tmp_path, design):
    """The heading of the looked-up values is the last printed line of the recheck sheet (its
    rows are folded): its text stays within the printed columns' width, where a longer one
    was cut at the page's edge (seen on the rendered pages)."""
    from openpyxl import load_workbook
    from openpyxl.utils import get_column_letter

    from verify.report.recheck import COLUMNS

    path = tmp_path / "w.xlsx"
    write_workbook(make_evaluation(design, seed=3), path)
    ws = load_workbook(path)[RECHECK_SHEET]
    (text,) = [c.value for c in ws["A"] if isinstance(c.value, str)
               and c.value.startswith(HELPER_HEADING)]
    width = sum(ws.column_dimensions[get_column_letter(j)].width
                for j in range(1, len(COLUMNS) + 1))
    assert len(text) <= width
