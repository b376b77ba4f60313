"""The cached style setting and merging (verify.report.cell_styles) leave a workbook exactly as
openpyxl's own setters and ``Worksheet.merge_cells`` do: the same cells (``MergedCell`` under a
merge), the same style index arrays, the same lists of fonts, fills, borders, alignments and
protections in the same order, the same merged ranges. Reference: openpyxl 3.1's
``StyleableObject`` descriptors and ``MergedCellRange.format``, run side by side."""

from __future__ import annotations

import random

import pytest
from openpyxl import Workbook
from openpyxl.cell.cell import MergedCell
from openpyxl.styles import Alignment, Border, Font, PatternFill, Protection, Side

from verify.report.cell_styles import (
    align_top,
    merge,
    shared_alignment,
    shared_fill,
    shared_font,
    style,
)

THIN = Side(style="thin", color="B7C3CC")
MEDIUM = Side(style="medium", color="9A6B12")
FONTS = [None, Font(bold=True), Font(italic=True, color="6B7680"), Font(size=16)]
FILLS = [None, PatternFill("solid", fgColor="DCE6EC"), PatternFill("solid", fgColor="2E7D57")]
BORDERS = [None, Border(left=THIN, right=THIN, top=THIN, bottom=THIN),
           Border(left=MEDIUM, right=MEDIUM, top=MEDIUM, bottom=MEDIUM), Border(bottom=THIN)]
ALIGNS = [None, Alignment(wrap_text=True, vertical="top"), Alignment(horizontal="center")]
FORMATS = [None, "0.000", "0", '[<0.0001]"< 0.0001";0.0000', "0.0%"]


def _state(wb):
    sheets = []
    for ws in wb.worksheets:
        cells = {k: (type(c).__name__, None if c._style is None else tuple(c._style),
                     getattr(c, "_value", None))
                 for k, c in ws._cells.items()}
        merged = sorted(str(r) for r in ws.merged_cells.ranges)
        sheets.append((cells, merged))
    lists = [list(getattr(wb, name)) for name in
             ("_fonts", "_fills", "_borders", "_alignments", "_protections", "_number_formats")]
    return sheets, lists


def _plain(cell, fmt, font, fill, align, border):
    if fmt is not None:
        cell.number_format = fmt
    if font is not None:
        cell.font = font
    if fill is not None:
        cell.fill = fill
    if align is not None:
        cell.alignment = align
    if border is not None:
        cell.border = border


def _script(seed: int):
    rng = random.Random(seed)
    steps = []
    for _ in range(300):
        r, c = rng.randint(1, 12), rng.randint(1, 8)
        if rng.random() < 0.2:
            steps.append(("merge", r, c, r + rng.choice([0, 0, 1, 3]), c + rng.randint(0, 4)))
        elif rng.random() < 0.1:
            steps.append(("top", r, c))
        else:
            steps.append(("style", r, c, rng.choice(FORMATS), rng.choice(FONTS),
                          rng.choice(FILLS), rng.choice(ALIGNS), rng.choice(BORDERS)))
    return steps


def test_styles_and_merges_match_openpyxl():
    for seed in range(6):
        wa, wb = Workbook(), Workbook()
        a, b = wa.active, wb.active
        for step in _script(seed):
            if step[0] == "style":
                _, r, c, *parts = step
                ca, cb = a.cell(r, c), b.cell(r, c)
                if isinstance(ca, MergedCell):
                    continue
                ca.value = cb.value = f"{r},{c}"
                _plain(ca, *parts)
                fmt, font, fill, align, border = parts
                style(cb, fmt=fmt, font=font, fill=fill, align=align, border=border)
            elif step[0] == "top":
                _, r, c = step
                ca, cb = a.cell(r, c), b.cell(r, c)
                if isinstance(ca, MergedCell):
                    continue
                al = ca.alignment
                ca.alignment = Alignment(horizontal=al.horizontal, vertical="top",
                                         wrap_text=al.wrap_text)
                align_top(cb)
            else:
                _, r1, c1, r2, c2 = step
                a.merge_cells(start_row=r1, start_column=c1, end_row=r2, end_column=c2)
                merge(b, r1, c1, r2, c2)
        assert _state(wa) == _state(wb), seed


def test_merge_spreads_a_protection_and_a_box():
    wa, wb = Workbook(), Workbook()
    box = Border(left=MEDIUM, right=MEDIUM, top=MEDIUM, bottom=MEDIUM)
    for ws in (wa.active, wb.active):
        ws.cell(3, 2).protection = Protection(locked=False)
        ws.cell(3, 2).border = box
        ws.cell(5, 6).border = Border(right=THIN, bottom=THIN)
    wa.active.merge_cells(start_row=3, start_column=2, end_row=5, end_column=6)
    merge(wb.active, 3, 2, 5, 6)
    assert _state(wa) == _state(wb)
    # every cell of the range carries the protection; the edges carry the sides
    assert wb.active.cell(4, 4).protection.locked is False
    assert wb.active.cell(5, 4).border.bottom.style == "medium"


def test_merged_ranges_hold_what_openpyxl_stores_and_bad_bounds_raise_its_errors():
    wa, wb = Workbook(), Workbook()
    for r1, c1, r2, c2 in [(1, 1, 1, 3), (4, 2, 6, 2), (1048575, 18277, 1048576, 18278)]:
        wa.active.merge_cells(start_row=r1, start_column=c1, end_row=r2, end_column=c2)
        merge(wb.active, r1, c1, r2, c2)
    got = sorted((r.bounds, {k: v for k, v in vars(r).items() if k not in ("ws", "start_cell")})
                 for r in wb.active.merged_cells.ranges)
    expected = sorted((r.bounds, {k: v for k, v in vars(r).items()
                                  if k not in ("ws", "start_cell")})
                      for r in wa.active.merged_cells.ranges)
    assert got == expected
    for bad in [(3, 1, 2, 2), (1, 3, 2, 2), (1, 1, 1048577, 1), (1, 1, 2, 18279)]:
        with pytest.raises(ValueError) as theirs:
            Workbook().active.merge_cells(start_row=bad[0], start_column=bad[1],
                                          end_row=bad[2], end_column=bad[3])
        with pytest.raises(ValueError) as ours:
            merge(Workbook().active, *bad)
        assert str(ours.value) == str(theirs.value)


def test_shared_style_objects_are_one_object_per_value():
    assert shared_font(bold=True, color="1F2A33") is shared_font(color="1F2A33", bold=True)
    # every font names the body text's typeface unless it names another (a font without one
    # is drawn in the program's default: LibreOffice's is a serif)
    assert shared_font(bold=True) == Font(name="Calibri", bold=True)
    assert shared_font(name="Courier New").name == "Courier New"
    assert shared_fill("solid", fgColor="DCE6EC") == PatternFill("solid", fgColor="DCE6EC")
    assert shared_alignment(horizontal="center") is shared_alignment(horizontal="center")


def test_cells_numbers_formulas_and_row_dimensions_as_openpyxl_makes_them():
    """cell_at, store, set_formula and row_dimension leave the same objects as ws.cell,
    ws.cell(row, col, value), cell.value = "=..." and ws.row_dimensions[r] (openpyxl 3.1's
    Worksheet._get_cell, Cell._bind_value and DimensionHolder)."""
    from openpyxl.cell.cell import IllegalCharacterError

    from verify.report.cell_styles import cell_at, row_dimension, set_formula, store

    wa, wb = Workbook(), Workbook()
    a, b = wa.active, wb.active
    for r, c, v in [(3, 2, 1.5), (7, 1, float("nan")), (2, 5, 4), (9, 3, "text"), (4, 4, None),
                    (12, 2, True)]:
        a.cell(r, c, v)
        store(b, r, c, v)
    a.cell(5, 6)
    cell_at(b, 5, 6)
    for r, c, f in [(6, 1, "=SUM(A1:A3)"), (8, 2, "=1+" + "1" * 40000)]:
        a.cell(r, c).value = f
        set_formula(cell_at(b, r, c), f)
    for r, h in [(2, 15.0), (30, None), (4, 44)]:
        da, db = a.row_dimensions[r], row_dimension(b, r)
        if h is not None:
            da.height = h
            db.ht = h
    row_dimension(b, 31).outlineLevel = 1
    a.row_dimensions[31].outline_level = 1

    def cells(ws):
        return {k: (c.row, c.column, c._value, c.data_type, c._style, c._hyperlink, c._comment)
                for k, c in ws._cells.items()}

    def dims(ws):
        return {k: (dict(d), d.__dict__, d._style) for k, d in ws.row_dimensions.items()}

    assert cells(a) == cells(b)
    assert list(a._cells) == list(b._cells)  # created in the same order
    assert a._current_row == b._current_row and a.max_row == b.max_row
    assert dims(a) == dims(b) and list(a.row_dimensions) == list(b.row_dimensions)
    # text openpyxl refuses is refused as before
    try:
        set_formula(cell_at(b, 1, 1), "=A1\x01")
    except IllegalCharacterError:
        pass
    else:
        raise AssertionError("a control character in a formula must be refused")
