"""The conformance plans in the workbook (the ``plan_sheet`` hook): a section of the Plan
sheet with the new parts each check needs. Layout only."""

from __future__ import annotations

from ...plan.model import Plan, PlanPart
from ...report.cells import INT_FORMAT, header_row, put_row, section

CONFORMANCE_HEADERS = ("Characteristic", "Unit", "Check", "Interval", "Coverage",
                       "Confidence", "Lower limit", "Upper limit", "Assumed mean", "Mean from",
                       "sd used", "sd from", "n needed (new parts)", "Factor k at n", "Note")


def plan_section(ws, start: int, plan: Plan, part: PlanPart) -> int:
    """The n each conformance check needs, for the assumed mean and sd; returns the next
    free row."""
    section(ws, start, "Conformance: new parts needed to pass")
    r = start + 1
    header_row(ws, r, 1, CONFORMANCE_HEADERS)
    r += 1
    for c in part.rows:
        values = [c.characteristic, c.unit, c.check, c.side, c.coverage, c.confidence,
                  c.lower, c.upper, c.mean, c.mean_source, c.sd, c.sd_source, c.n_needed,
                  c.k_at_n, c.note or c.method]
        fmts = [None, None, None, None, "0.###", "0.###", None, None, None, None, None, None,
                INT_FORMAT, "0.0000", None]
        put_row(ws, r, 1, values, fmts=fmts)
        r += 1
    return r


__all__ = ["CONFORMANCE_HEADERS", "plan_section"]
