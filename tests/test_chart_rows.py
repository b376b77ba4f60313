"""The charts' data rows are the cells the plain calls write: the production chart's
(:class:`verify.report.charts.ProductionRows`: ``store`` the position, ``store`` and ``style``
the value, ``put`` the lot and the process) and a helper block's series (``_Block.add``: ``put``
the name, ``store`` x, ``store`` and ``style`` y). Software regression checks of each route
against the route it replaced.
"""

from __future__ import annotations

import math

import pytest
from openpyxl import Workbook

from verify.report.cell_styles import shared_font, store, style
from verify.report.cells import put
from verify.report.charts import ProductionRows, _Block

ROWS = [
    (1, 12.0004333333333332, "L-01", "old"),
    (2, -0.5, "L-01", "old"),
    (3, 1e-300, "L-02\x07bell", "old"),  # a control character: made visible, once
    (4, float("nan"), "L-02\x07bell", "new"),
    (5.5, 3.0, "=HYPERLINK(\"x\")", "new"),  # text, never a formula
    (6, 2, 17, "new"),  # a lot that is not text takes put's own route
    (7, 1.25, "x" * 40000, "new"),  # longer than a cell holds: cut visibly
]


def _plain(ws, r, col, x, y, lot, process, fmt) -> None:
    store(ws, r, col, x)
    style(store(ws, r, col + 1, y), fmt=fmt)
    put(ws, r, col + 2, lot)
    put(ws, r, col + 3, process)


def _sheet(styled_before: bool):
    wb = Workbook()
    ws = wb.active
    if styled_before:  # cells already there, styled: their style is combined, not replaced
        put(ws, 3, 6, "already", font=shared_font(bold=True))
        put(ws, 5, 6, 1.0, fmt="0.0")
    return wb, ws


def _cells(ws) -> dict:
    out = {}
    for (r, c), cell in sorted(ws._cells.items()):
        value = cell._value
        if isinstance(value, float) and math.isnan(value):
            value = "nan"
        out[(r, c)] = (value, cell.data_type, None if cell._style is None else tuple(cell._style))
    return out


@pytest.mark.parametrize("styled_before", [False, True])
@pytest.mark.parametrize("fmt", ["0.0000", None])
def test_production_rows_are_the_plain_calls_cells(styled_before, fmt):
    wb_fast, fast = _sheet(styled_before)
    wb_plain, plain = _sheet(styled_before)
    rows = ProductionRows(fast, fmt)
    for r, (x, y, lot, process) in enumerate(ROWS, start=2):
        rows.write(r, 5, x, y, lot, process)
        _plain(plain, r, 5, x, y, lot, process, fmt)
    assert _cells(fast) == _cells(plain)
    # the same styles in the same order: the indices above mean the same formats
    assert list(wb_fast._cell_styles) == list(wb_plain._cell_styles)
    assert list(wb_fast._number_formats) == list(wb_plain._number_formats)
    lot_cell = fast.cell(row=4, column=7)
    assert lot_cell.data_type == "s" and "\x07" not in lot_cell.value


def _plain_add(ws, row, col, name, pts, y_fmt):
    for x, y in pts:
        put(ws, row, col, name)
        if x is not None and y is not None:
            store(ws, row, col + 1, float(x))
            cell = store(ws, row, col + 2, float(y))
            if y_fmt:
                style(cell, fmt=y_fmt)
        row += 1
    return row


SERIES = [
    ("target", [(0.0, 12.0), (61.0, 12.0)], None),
    ("lot boundaries", [(10.5, 11.9), (10.5, 12.1), (None, None), (20.5, 11.9), (20.5, 12.1)],
     None),
    ("old process", [(11.95, 0), (11.96, 3), (11.97, 7), (11.98, 0.0)], "0"),
    ("new\x07process", [(11.95, 1), (11.96, 2)], "0.00"),  # made safe, once
]


@pytest.mark.parametrize("styled_before", [False, True])
def test_block_rows_are_the_plain_calls_cells(styled_before):
    wb_fast, fast = _sheet(styled_before)
    wb_plain, plain = _sheet(styled_before)
    block = _Block(fast, 2, 4, "Reference lines")
    row = 4
    put(plain, 2, 4, "Reference lines", font=shared_font(bold=True))
    for j, h in enumerate(["Series", "x", "y"]):
        put(plain, 3, 4 + j, h, font=shared_font(bold=True))
    for name, pts, y_fmt in SERIES:
        block.add(name, pts, y_fmt=y_fmt)
        row = _plain_add(plain, row, 4, name, pts, y_fmt)
    assert block.row == row
    assert _cells(fast) == _cells(plain)
    assert list(wb_fast._cell_styles) == list(wb_plain._cell_styles)
    assert [s[0] for s in block.series] == [name for name, _p, _f in SERIES]
