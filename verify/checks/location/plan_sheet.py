"""The location checks' plan in the workbook (the ``plan_sheet`` hook).

On the "Plan" sheet, which these power plans head (:data:`HEADS_PLAN_SHEET`): the plan with
one column per check and one row per quantity (so a check reads down its column and the page
stays readable however many checks there are: more than
:data:`~verify.report.plan_workbook.CHECKS_PER_BLOCK` continue in a further block below). On
"Power curves": for each check a table of the power at each trial size and a column chart of
it, with the sizes that reach the wanted power in one colour and those that fall short in
another, so the smallest sufficient trial is where the colour changes. Layout only; every text
is written as text by :func:`verify.report.cells.put`, never as a formula.
"""

from __future__ import annotations

from openpyxl.chart import BarChart, Reference
from openpyxl.styles import Alignment

from ...plan.model import Plan, PlanPart
from ...report.cells import (
    BOX,
    DECISION_COLOURS,
    INT_FORMAT,
    LABEL_FONT,
    MUTED,
    POWER_FORMAT,
    WRAP,
    fit_rows,
    header_row,
    page_setup,
    put,
    put_row,
    section,
)
from ...report.charts import chart_title
from ...report.plan_workbook import CHECKS_PER_BLOCK
from ...report.safe_text import xml_safe
from .plan_model import PlanRow
from .plan_words import requirement

HEADS_PLAN_SHEET = True  # the power plans carry the plan's inputs: they open the Plan sheet
CURVES_SHEET = "Power curves"
CHART_ROWS = 17  # rows a chart covers (8.5 cm at 15 pt a row)
FREE_FORMAT = "0.000###"  # planning inputs of any scale: 3 to 6 decimals


# (label, getter, number format): the rows of the plan, in our own words
def _plan_rows():
    def n_pair(new, old, design):
        if new is None:
            return "not reachable"
        if design in ("welch", "pooled") and old is not None and old != new:
            return f"{new} new / {old} old"
        return new

    return (
        ("Test", lambda r: r.scenario.test, None),
        ("Design", lambda r: r.scenario.design, None),
        ("Harmful side", lambda r: r.scenario.side, None),
        ("Must show / must not miss", lambda r: requirement(r.scenario), None),
        ("Assumed true shift", lambda r: r.scenario.true_shift, FREE_FORMAT),
        ("sd assumed", lambda r: r.scenario.sd, FREE_FORMAT),
        ("sd taken from", lambda r: r.scenario.sd_source, None),
        ("Wanted power", lambda r: r.scenario.target_power, POWER_FORMAT),
        (
            "Smallest trial that reaches it (per process)",
            lambda r: n_pair(r.n_new, r.n_old, r.scenario.design),
            INT_FORMAT,
        ),
        ("Power with that trial", lambda r: r.power, POWER_FORMAT),
        ("Power with one unit fewer", lambda r: r.power_below, POWER_FORMAT),
        (
            "Trial size looked at",
            lambda r: n_pair(r.eval_n_new, r.eval_n_old, r.scenario.design),
            INT_FORMAT,
        ),
        ("... taken from", lambda r: _source_words(r.scenario.eval_source), None),
        ("Power with the size looked at", lambda r: r.power_at_eval, POWER_FORMAT),
        (
            "Smallest shift a t-test finds with the wanted power at that size",
            lambda r: r.detectable_shift,
            FREE_FORMAT,
        ),
        ("Note", lambda r: r.note or "", None),
    )


def _source_words(source: str) -> str:
    return {"n needed": "the smallest trial above"}.get(source, source)


def _label(row: PlanRow) -> str:
    s = row.scenario
    who = f"{s.characteristic}: " if s.characteristic else ""
    return xml_safe(f"{who}{s.check}, {s.test}")  # a chart title: no XML-illegal characters


def plan_section(ws, start: int, plan: Plan, part: PlanPart) -> int:
    """The plan, one column per check (in blocks of CHECKS_PER_BLOCK), one row per quantity;
    returns the next free row."""
    section(ws, start, "Results")
    r = start + 1
    rows = list(part.rows)
    spec_rows = _plan_rows()
    for k in range(0, len(rows), CHECKS_PER_BLOCK):
        group = rows[k : k + CHECKS_PER_BLOCK]
        put(ws, r, 1, "Characteristic", font=LABEL_FONT, border=BOX)
        header_row(ws, r, 2, [g.scenario.characteristic or "" for g in group])
        r += 1
        put(ws, r, 1, "Check", font=LABEL_FONT, border=BOX)
        header_row(ws, r, 2, [g.scenario.check for g in group])
        put(ws, r, 2 + len(group), "")
        r += 1
        put(ws, r, 1, "Unit", font=LABEL_FONT, border=BOX)
        for j, g in enumerate(group, start=2):
            put(ws, r, j, g.scenario.unit, border=BOX)
        r += 1
        for label, get, fmt in spec_rows:
            values = [get(g) for g in group]
            if all(v in (None, "") for v in values):
                continue
            put(ws, r, 1, label, font=LABEL_FONT, border=BOX, align=WRAP)
            for j, v in enumerate(values, start=2):
                put(ws, r, j, v, fmt=fmt if not isinstance(v, str) else None, border=BOX,
                    align=WRAP if isinstance(v, str) else Alignment(horizontal="right"))
            r += 1
        r += 1
    return r


def _curve_block(ws, top: int, row: PlanRow) -> int:
    """One check's table of power by trial size and its chart from row ``top``; returns the
    next free row."""
    s = row.scenario
    section(ws, top, _label(row))
    wanted = s.target_power
    lots = " (lots)" if s.unit_of_analysis == "lot" else ""
    header_row(
        ws,
        top + 1,
        1,
        (
            f"n new{lots}",
            f"n old{lots}",
            "Power",
            f"Short of {wanted:.0%}",
            f"{wanted:.0%} or more",
        ),
    )
    first = top + 2
    for i, p in enumerate(row.curve):
        reaches = p.power >= wanted
        put_row(
            ws,
            first + i,
            1,
            (p.n_new, p.n_old, p.power, None if reaches else p.power, p.power if reaches else None),
            fmts=(INT_FORMAT, INT_FORMAT, POWER_FORMAT, POWER_FORMAT, POWER_FORMAT),
        )
    last = first + len(row.curve) - 1

    chart = BarChart()
    chart.type = "col"
    chart.grouping = "clustered"
    chart.overlap = 100  # one bar per size, coloured by whether it reaches the wanted power
    chart.gapWidth = 40
    if row.n_new is not None:
        title = f"{_label(row)}: plan for {row.n_new} per process"
    else:
        title = f"{_label(row)}: no trial size reaches {wanted:.0%}"
    chart.title = chart_title(title[:250])
    chart.legend.position = "b"
    chart.x_axis.title = "units per process" + lots
    chart.y_axis.title = "power"
    chart.y_axis.scaling.min = 0.0
    chart.y_axis.scaling.max = 1.0
    chart.y_axis.majorUnit = 0.2
    chart.y_axis.number_format = "0%"
    chart.y_axis.numFmt.sourceLinked = False
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.height = 8.5
    chart.width = 17
    data = Reference(ws, min_col=4, max_col=5, min_row=top + 1, max_row=last)
    chart.add_data(data, titles_from_data=True)
    chart.set_categories(Reference(ws, min_col=1, min_row=first, max_row=last))
    for series, colour in zip(chart.series, (MUTED, DECISION_COLOURS["PASS"][0]), strict=True):
        series.graphicalProperties.solidFill = colour
        series.graphicalProperties.line.solidFill = colour
    ws.add_chart(chart, f"G{top + 1}")
    return max(last, top + 1 + CHART_ROWS) + 2


def add_sheets(wb, plan: Plan, part: PlanPart, new_sheet) -> None:
    """The "Power curves" sheet: for each check its power by trial size, as a table and bars."""
    ws = new_sheet(CURVES_SHEET)
    r = 1
    breaks = []
    for k, row in enumerate(part.rows):
        if k:
            breaks.append(r - 1)  # a check a page: its chart and its table stay together
        r = _curve_block(ws, r, row)
    for col, width in zip("ABCDEF", (9, 9, 9, 11, 11, 2), strict=True):
        ws.column_dimensions[col].width = width
    fit_rows(ws)
    page_setup(ws, f"A1:O{max(1, r - 2)}", landscape=False, footer="power by trial size",
               row_breaks=breaks)


__all__ = ["CURVES_SHEET", "HEADS_PLAN_SHEET", "add_sheets", "plan_section"]
