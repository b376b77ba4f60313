"""The planning workbook of ``verify plan``: inputs, each kind's plan, the method.

The "Plan" sheet holds the inputs with where each came from, then each part's section, then
the method in words; it is written when a part whose kind heads it is in the plan (the location
checks' power plans, which carry the inputs). Each part adds sheets of its own after it (power
curves, the pass-fail plan). The layout of a part is its kind's ``plan_sheet`` hook (see
:mod:`verify.plan`); this module names no check. The layer only lays out a
:class:`~verify.plan.model.Plan`; it computes nothing. Every text, including names and units
from the spec, is written as text by :func:`verify.report.cells.put`, never as a formula.
"""

from __future__ import annotations

from pathlib import Path

from openpyxl import Workbook
from openpyxl.utils import get_column_letter

from ..plan.model import Plan
from .cells import (
    LABEL_FONT,
    NOTE_FONT,
    TITLE_FONT,
    WRAP,
    fit_rows,
    header_row,
    page_setup,
    put,
    section,
)
from .paper import keep_sections

PLAN_SHEET = "Plan"
CHECKS_PER_BLOCK = 5  # columns of checks side by side on the Plan sheet
LABEL_WIDTH = 40
CHECK_WIDTH = 26


def _plan_sheet(ws, plan: Plan, sheets) -> None:
    ws.column_dimensions["A"].width = LABEL_WIDTH
    for j in range(2, 2 + CHECKS_PER_BLOCK):
        ws.column_dimensions[get_column_letter(j)].width = CHECK_WIDTH
    last_col = 1 + CHECKS_PER_BLOCK
    put(ws, 1, 1, "Trial plan", font=TITLE_FONT)
    put(ws, 2, 1, plan.title)
    if plan.source:
        put(ws, 3, 1, f"spec: {plan.source}")
    section(ws, 5, "Inputs")
    r = 6
    header_row(ws, r, 1, ("Input", "Value", "From"))
    ws.merge_cells(start_row=r, start_column=3, end_row=r, end_column=last_col)
    r += 1
    for label, value, source in plan.inputs:
        put(ws, r, 1, label, font=LABEL_FONT)
        put(ws, r, 2, value, align=WRAP)
        put(ws, r, 3, source, font=NOTE_FONT)
        ws.merge_cells(start_row=r, start_column=3, end_row=r, end_column=last_col)
        r += 1
    for part, hook in sheets:
        if hasattr(hook, "plan_section"):
            r = hook.plan_section(ws, r + 1, plan, part)
    section(ws, r, "Method")
    r += 1
    for paragraph in plan.method:
        ws.merge_cells(start_row=r, start_column=1, end_row=r, end_column=last_col)
        put(ws, r, 1, paragraph, align=WRAP)
        r += 1
    for note in plan.notes:
        ws.merge_cells(start_row=r, start_column=1, end_row=r, end_column=last_col)
        put(ws, r, 1, f"note: {note}", font=NOTE_FONT, align=WRAP)
        r += 1
    put(
        ws,
        r + 1,
        1,
        "These numbers size a trial; they decide nothing. verify run reports the achieved "
        "power of every check.",
        font=NOTE_FONT,
    )
    last = r + 1
    fit_rows(ws)
    page_setup(ws, f"A1:{get_column_letter(last_col)}{last}", landscape=False,
               footer=plan.title or "trial plan")
    keep_sections(ws, last_row=last, last_col=last_col)


def write_plan_workbook(plan: Plan, path: str | Path) -> None:
    """Write the planning workbook for ``plan`` to ``path`` (callers write atomically).

    Examples
    --------
    >>> from verify.checks.location.plan import plan_standalone
    >>> plan = plan_standalone(sd=1.0, design="pooled", margin="1")  # doctest: +SKIP
    >>> write_plan_workbook(plan, "plan.xlsx")  # doctest: +SKIP
    """
    from ..plan.compute import sheet_hook

    sheets = [(part, hook) for part in plan.parts if (hook := sheet_hook(part)) is not None]
    wb = Workbook()
    ws = wb.active
    heads = any(getattr(hook, "HEADS_PLAN_SHEET", False) for _, hook in sheets)
    if heads:
        ws.title = PLAN_SHEET
        _plan_sheet(ws, plan, sheets)
    free = [not heads]  # the workbook's first sheet is still free for a part's own sheet

    def new_sheet(title: str):
        if free[0]:
            free[0] = False
            ws.title = title
            return ws
        return wb.create_sheet(title)

    for part, hook in sheets:
        if hasattr(hook, "add_sheets"):
            hook.add_sheets(wb, plan, part, new_sheet)
    wb.save(path)


__all__ = ["CHECKS_PER_BLOCK", "PLAN_SHEET", "write_plan_workbook"]
