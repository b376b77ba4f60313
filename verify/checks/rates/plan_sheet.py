"""The pass-fail plans in the workbook (the ``plan_sheet`` hook): a sheet of their own."""

from __future__ import annotations

from openpyxl.styles import Alignment

from ...plan.model import Plan, PlanPart
from ...report.cells import NOTE_FONT, TITLE_FONT, WRAP, header_row, put

RATE_PLAN_SHEET = "Pass-fail plan"


def add_sheets(wb, plan: Plan, part: PlanPart, new_sheet) -> None:
    """The pass-fail plan as a worksheet: one row per check, then the basis of each."""
    ws = new_sheet(RATE_PLAN_SHEET)
    rows, title = part.rows, plan.title

    put(ws, 1, 1, "Trial plan: pass-fail characteristics", font=TITLE_FONT)
    put(ws, 2, 1, title)
    header_row(ws, 4, 1, ["Characteristic", "Check", "What must be shown", "Parts needed",
                          "min_n in the spec", "Why this n", "Basis"])
    r = 5
    for row in rows:
        for j, v in enumerate([row.characteristic or "-", row.check, row.requirement, row.n,
                               row.n_planned, row.proof, row.basis], start=1):
            put(ws, r, j, v, align=WRAP if j in (3, 6, 7) else Alignment(vertical="top"))
        r += 1
    put(ws, r + 1, 1, "These numbers size the trial; they decide nothing. Both plans are "
        "exact for the assumed rates; a trial sized on an old rate that turns out higher "
        "falls short of its power.", font=NOTE_FONT)
    for col, w in zip("ABCDEFG", (22, 12, 40, 13, 13, 44, 50), strict=True):
        ws.column_dimensions[col].width = w
    ws.page_setup.orientation = "landscape"
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0


__all__ = ["RATE_PLAN_SHEET", "add_sheets"]
