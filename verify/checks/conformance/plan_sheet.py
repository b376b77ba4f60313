"""The conformance plans in the workbook (the ``plan_sheet`` hook): a section of the Plan
sheet with the new parts each check needs. Layout only."""

from __future__ import annotations

from ...plan.model import Plan, PlanPart
from ...report.cells import BOX, HEADER_FONT, INT_FORMAT, WRAP, header_row, put, section

CONFORMANCE_HEADERS = ("Characteristic", "Unit", "Check", "Interval", "Coverage",
                       "Confidence", "Lower limit", "Upper limit", "Assumed mean", "Mean from",
                       "sd used", "sd from", "n needed (new parts)", "Factor k at n", "Note")
_FORMATS = (None, None, None, None, "0.###", "0.###", None, None, "0.######", None,
            "0.######", None, INT_FORMAT, "0.0000", None)
# characteristics side by side, as many as the Plan sheet's results table puts in one block,
# so that the section prints within the sheet's printed width
PER_BLOCK = 5


def plan_section(ws, start: int, plan: Plan, part: PlanPart) -> int:
    """The n each conformance check needs, for the assumed mean and sd: one row per quantity,
    one column per check (blocks of :data:`PER_BLOCK`); returns the next free row."""
    section(ws, start, "Conformance: new parts needed to pass")
    r = start + 1
    rows = list(part.rows)
    for first in range(0, len(rows), PER_BLOCK):
        group = rows[first:first + PER_BLOCK]
        table = [[c.characteristic, c.unit, c.check, c.side, c.coverage, c.confidence,
                  c.lower, c.upper, c.mean, c.mean_source, c.sd, c.sd_source, c.n_needed,
                  c.k_at_n, c.note or c.method] for c in group]
        put(ws, r, 1, CONFORMANCE_HEADERS[0], font=HEADER_FONT, border=BOX)
        header_row(ws, r, 2, [t[0] for t in table])
        r += 1
        for i in range(1, len(CONFORMANCE_HEADERS)):
            put(ws, r, 1, CONFORMANCE_HEADERS[i], font=HEADER_FONT, border=BOX, align=WRAP)
            for j, t in enumerate(table, start=2):
                v = t[i]
                put(ws, r, j, v, fmt=None if isinstance(v, str) else _FORMATS[i], border=BOX,
                    align=WRAP)
            r += 1
        r += 1
    return r


__all__ = ["CONFORMANCE_HEADERS", "PER_BLOCK", "plan_section"]
