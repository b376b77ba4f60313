"""The planning workbook of ``verify plan``: inputs, the plan per check, method, and charts.

Two sheets. "Plan": the inputs with where each came from, then the plan with one column per
planned check and one row per quantity (so a check reads down its column and the page stays
readable however many checks there are: more than :data:`CHECKS_PER_BLOCK` continue in a
further block below), then the method in words. "Power curves": for each check a table of the
power at each trial size and a column chart of it, with the sizes that reach the wanted power
in one colour and those that fall short in another, so the smallest sufficient trial is where
the colour changes. The layer only lays out a :class:`~verify.plan.Plan`; it computes nothing.
Every text, including names and units from the spec, is written as text by
:func:`verify.report.cells.put`, never as a formula.
"""

from __future__ import annotations

from pathlib import Path

from openpyxl import Workbook
from openpyxl.chart import BarChart, Reference
from openpyxl.styles import Alignment, Font
from openpyxl.utils import get_column_letter

from ..plan import Plan, PlanRow, requirement
from .cells import (
    BOX,
    DECISION_COLOURS,
    INK,
    INT_FORMAT,
    MUTED,
    NOTE_FONT,
    POWER_FORMAT,
    TITLE_FONT,
    WRAP,
    fit_rows,
    header_row,
    page_setup,
    put,
    put_row,
    section,
)
from .charts import chart_title
from .paper import keep_sections
from .safe_text import xml_safe

PLAN_SHEET = "Plan"
CURVES_SHEET = "Power curves"
CHART_ROWS = 17  # rows a chart covers (8.5 cm at 15 pt a row)

CHECKS_PER_BLOCK = 5
FREE_FORMAT = "0.000###"  # planning inputs of any scale: 3 to 6 decimals
LABEL_WIDTH = 40
CHECK_WIDTH = 26

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


def _results(ws, start: int, plan: Plan) -> int:
    """The plan, one column per check (in blocks of CHECKS_PER_BLOCK), one row per quantity."""
    section(ws, start, "Results")
    r = start + 1
    rows = list(plan.rows)
    spec_rows = _plan_rows()
    for k in range(0, len(rows), CHECKS_PER_BLOCK):
        group = rows[k : k + CHECKS_PER_BLOCK]
        put(ws, r, 1, "Characteristic", font=Font(bold=True, color=INK), border=BOX)
        header_row(ws, r, 2, [g.scenario.characteristic or "" for g in group])
        r += 1
        put(ws, r, 1, "Check", font=Font(bold=True, color=INK), border=BOX)
        header_row(ws, r, 2, [g.scenario.check for g in group])
        put(ws, r, 2 + len(group), "")
        r += 1
        put(ws, r, 1, "Unit", font=Font(bold=True, color=INK), border=BOX)
        for j, g in enumerate(group, start=2):
            put(ws, r, j, g.scenario.unit, border=BOX)
        r += 1
        for label, get, fmt in spec_rows:
            values = [get(g) for g in group]
            if all(v in (None, "") for v in values):
                continue
            put(ws, r, 1, label, font=Font(bold=True, color=INK), border=BOX, align=WRAP)
            for j, v in enumerate(values, start=2):
                put(ws, r, j, v, fmt=fmt if not isinstance(v, str) else None, border=BOX,
                    align=WRAP if isinstance(v, str) else Alignment(horizontal="right"))
            r += 1
        r += 1
    return r


CONFORMANCE_HEADERS = ("Characteristic", "Unit", "Check", "Interval", "Coverage",
                       "Confidence", "Lower limit", "Upper limit", "Assumed mean", "Mean from",
                       "sd used", "sd from", "n needed (new parts)", "Factor k at n", "Note")


def _conformance(ws, start: int, plan: Plan) -> int:
    """The n each conformance check needs, for the assumed mean and sd."""
    section(ws, start, "Conformance: new parts needed to pass")
    r = start + 1
    header_row(ws, r, 1, CONFORMANCE_HEADERS)
    r += 1
    for c in plan.conformance:
        values = [c.characteristic, c.unit, "conformance", c.side, c.coverage, c.confidence,
                  c.lower, c.upper, c.mean, c.mean_source, c.sd, c.sd_source, c.n_needed,
                  c.k_at_n, c.note or c.method]
        fmts = [None, None, None, None, "0.###", "0.###", None, None, None, None, None, None,
                INT_FORMAT, "0.0000", None]
        put_row(ws, r, 1, values, fmts=fmts)
        r += 1
    return r


def _plan_sheet(ws, plan: Plan) -> None:
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
        put(ws, r, 1, label, font=Font(bold=True, color=INK))
        put(ws, r, 2, value, align=WRAP)
        put(ws, r, 3, source, font=NOTE_FONT)
        ws.merge_cells(start_row=r, start_column=3, end_row=r, end_column=last_col)
        r += 1
    r = _results(ws, r + 1, plan) if plan.rows else r + 1
    if plan.conformance:
        r = _conformance(ws, r + 1, plan)
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


def _curves_sheet(ws, plan: Plan) -> None:
    r = 1
    breaks = []
    for k, row in enumerate(plan.rows):
        if k:
            breaks.append(r - 1)  # a check a page: its chart and its table stay together
        r = _curve_block(ws, r, row)
    for col, width in zip("ABCDEF", (9, 9, 9, 11, 11, 2), strict=True):
        ws.column_dimensions[col].width = width
    fit_rows(ws)
    page_setup(ws, f"A1:O{max(1, r - 2)}", landscape=False, footer="power by trial size",
               row_breaks=breaks)


RATE_PLAN_SHEET = "Pass-fail plan"


def write_plan_workbook(plan: Plan, path: str | Path) -> None:
    """Write the planning workbook for ``plan`` to ``path`` (callers write atomically).

    Examples
    --------
    >>> from verify.plan import plan_standalone
    >>> plan = plan_standalone(sd=1.0, design="pooled", margin="1")  # doctest: +SKIP
    >>> write_plan_workbook(plan, "plan.xlsx")  # doctest: +SKIP
    """
    wb = Workbook()
    ws = wb.active
    if plan.rows:
        ws.title = PLAN_SHEET
        _plan_sheet(ws, plan)
        _curves_sheet(wb.create_sheet(CURVES_SHEET), plan)
    if plan.rate_rows:
        from ..plan_rates import write_rate_plan_sheet

        rws = wb.create_sheet(RATE_PLAN_SHEET) if plan.rows else ws
        rws.title = RATE_PLAN_SHEET
        write_rate_plan_sheet(rws, plan.rate_rows, plan.title)
    wb.save(path)
