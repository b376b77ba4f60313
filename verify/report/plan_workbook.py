"""The planning workbook of ``verify plan``: inputs, results, method, and power curves.

Two sheets: "Plan" (the inputs with where each came from, a row per planned check, the method
in words) and "Power curves" (for each check the power at each lot size, and a native scatter
chart of power against n with the target power as a line and the n needed marked). The layer
only lays out a :class:`~verify.plan.Plan`; it computes nothing. Every text, including names
and units from the spec, is written as text by :func:`verify.report.cells.put`, never as a
formula.
"""

from __future__ import annotations

from pathlib import Path

from openpyxl import Workbook
from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.chart.shapes import GraphicalProperties
from openpyxl.utils import get_column_letter

from ..plan import Plan, PlanRow, requirement
from .cells import (
    ACCENT,
    CAUTION_EDGE,
    DECISION_COLOURS,
    INT_FORMAT,
    MUTED,
    NOTE_FONT,
    POWER_FORMAT,
    TITLE_FONT,
    WRAP,
    header_row,
    put,
    put_row,
    section,
)
from .safe_text import xml_safe

PLAN_SHEET = "Plan"
CURVES_SHEET = "Power curves"
CHART_ROWS = 18  # rows a chart covers (its height is about 0.5 cm per row)

RESULT_HEADERS = (
    "Characteristic",
    "Unit",
    "Check",
    "Test",
    "Design",
    "Harmful side",
    "sd used",
    "sd from",
    "Margin / detect",
    "Assumed true shift",
    "Target power",
    "n needed (new)",
    "n needed (old)",
    "Power at n needed",
    "Power at n needed - 1",
    "n reported (new)",
    "n reported (old)",
    "n reported from",
    "Power at n reported",
    "Detectable shift at n reported",
    "Note",
)
RESULT_WIDTHS = (18, 9, 8, 30, 11, 11, 11, 40, 16, 11, 10, 10, 10, 11, 11, 10, 10, 11, 11, 13, 50)


def _label(row: PlanRow) -> str:
    s = row.scenario
    who = f"{s.characteristic}: " if s.characteristic else ""
    return xml_safe(f"{who}{s.check}, {s.test}")  # a chart title: no XML-illegal characters


def _results(ws, start: int, plan: Plan) -> int:
    section(ws, start, "Results")
    header_row(ws, start + 1, 1, RESULT_HEADERS)
    r = start + 2
    for row in plan.rows:
        s = row.scenario
        values = (
            s.characteristic or "",
            s.unit,
            s.check,
            s.test,
            s.design,
            s.side,
            s.sd,
            s.sd_source,
            requirement(s),
            s.true_shift,
            s.target_power,
            row.n_new,
            row.n_old,
            row.power,
            row.power_below,
            row.eval_n_new,
            row.eval_n_old,
            s.eval_source,
            row.power_at_eval,
            row.detectable_shift,
            row.note or "",
        )
        fmts = (
            None,
            None,
            None,
            None,
            None,
            None,
            "General",
            None,
            None,
            "General",
            POWER_FORMAT,
            INT_FORMAT,
            INT_FORMAT,
            POWER_FORMAT,
            POWER_FORMAT,
            INT_FORMAT,
            INT_FORMAT,
            None,
            POWER_FORMAT,
            "General",
            None,
        )
        put_row(ws, r, 1, values, fmts=fmts)
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
    put(ws, 1, 1, "Trial plan", font=TITLE_FONT)
    put(ws, 2, 1, plan.title)
    if plan.source:
        put(ws, 3, 1, f"spec: {plan.source}")
    section(ws, 5, "Inputs")
    # the results' columns are narrow at the left: each input cell spans several of them
    spans = ((1, 3), (4, 7), (8, 9))
    r = 6
    for k, texts in enumerate((("Input", "Value", "From"), *plan.inputs)):
        for (c0, c1), text in zip(spans, texts, strict=True):
            ws.merge_cells(start_row=r, start_column=c0, end_row=r, end_column=c1)
            if k == 0:
                header_row(ws, r, c0, (text,))
            else:
                put(ws, r, c0, text)
        r += 1
    r = _results(ws, r + 1, plan) if plan.rows else r
    if plan.conformance:
        r = _conformance(ws, r + 1, plan)
    section(ws, r + 1, "Method")
    r += 2
    for paragraph in plan.method:
        ws.merge_cells(start_row=r, start_column=1, end_row=r, end_column=10)
        put(ws, r, 1, paragraph, align=WRAP)
        ws.row_dimensions[r].height = 15 * (1 + len(paragraph) // 140)
        r += 1
    for note in plan.notes:
        put(ws, r, 1, f"note: {note}", font=NOTE_FONT)
        r += 1
    for i, width in enumerate(RESULT_WIDTHS, start=1):
        ws.column_dimensions[get_column_letter(i)].width = width
    ws.freeze_panes = "A2"
    # print on landscape pages, one page wide
    ws.page_setup.orientation = "landscape"
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0


def _line(series: Series, colour: str, dash: str | None = None, width: int = 28575) -> Series:
    series.marker.symbol = "none"
    series.smooth = False
    series.graphicalProperties.line.solidFill = colour
    series.graphicalProperties.line.width = width  # EMU; 28575 = 2.25 pt
    if dash:
        series.graphicalProperties.line.dashStyle = dash
    return series


def _point_series(x_ref, y_ref, title: str, symbol: str, colour: str, size: int = 10) -> Series:
    s = Series(y_ref, x_ref, title=title)
    s.marker.symbol = symbol
    s.marker.size = size
    s.marker.graphicalProperties = GraphicalProperties(solidFill=colour)
    s.marker.graphicalProperties.line.solidFill = colour
    s.graphicalProperties.line.noFill = True
    return s


def _curve_block(ws, top: int, row: PlanRow) -> int:
    """One check's curve data and chart from row ``top``; returns the next free row."""
    s = row.scenario
    section(ws, top, _label(row))
    header_row(ws, top + 1, 1, ("n (new)", "n (old)", "Power"))
    first = top + 2
    for i, p in enumerate(row.curve):
        put_row(
            ws,
            first + i,
            1,
            (p.n_new, p.n_old, p.power),
            fmts=(INT_FORMAT, INT_FORMAT, POWER_FORMAT),
        )
    last = first + len(row.curve) - 1

    # the marks: target power as a line across the curve, the n needed, the n reported
    header_row(ws, top + 1, 5, ("Mark", "n (new)", "Power"))
    n_lo, n_hi = row.curve[0].n_new, row.curve[-1].n_new
    marks = [("target power", n_lo, s.target_power), ("", n_hi, s.target_power)]
    if row.n_new is not None:
        marks += [("n needed", row.n_new, row.power), ("", row.n_new, 0.0)]
    show_eval = s.eval_source != "n needed" and row.eval_n_new != row.n_new
    if show_eval:
        marks.append((f"n reported ({s.eval_source})", row.eval_n_new, row.power_at_eval))
    for i, (label, n, p) in enumerate(marks):
        put_row(ws, first + i, 5, (label, n, p), fmts=(None, INT_FORMAT, POWER_FORMAT))

    chart = ScatterChart(scatterStyle="lineMarker")
    chart.title = _label(row)[:250]
    chart.legend.position = "b"
    chart.x_axis.title = "n per process" + (" (lots)" if s.unit_of_analysis == "lot" else "")
    chart.y_axis.title = "power"
    chart.y_axis.scaling.min = 0.0
    chart.y_axis.scaling.max = 1.0
    chart.y_axis.number_format = "0%"
    chart.x_axis.scaling.min = n_lo
    chart.x_axis.scaling.max = n_hi
    # openpyxl hides axes unless told otherwise (delete=True by default in recent versions)
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.height = 9
    chart.width = 18

    def ref(col: int, lo: int, hi: int | None = None) -> Reference:
        return Reference(ws, min_col=col, min_row=lo, max_row=lo if hi is None else hi)

    chart.series.append(
        _line(Series(ref(3, first, last), ref(1, first, last), title="power"), ACCENT)
    )
    chart.series.append(
        _line(
            Series(
                ref(7, first, first + 1),
                ref(6, first, first + 1),
                title=f"target power {s.target_power:.0%}",
            ),
            MUTED,
            "dash",
            19050,
        )
    )
    needed = DECISION_COLOURS["HOLD"][0]
    if row.n_new is not None:
        chart.series.append(
            _point_series(
                ref(6, first + 2), ref(7, first + 2), f"n needed = {row.n_new}", "circle", needed
            )
        )
        chart.series.append(
            _line(
                Series(
                    ref(7, first + 2, first + 3), ref(6, first + 2, first + 3), title="n needed"
                ),
                needed,
                "sysDot",
                15875,
            )
        )
    if show_eval:
        k = first + len(marks) - 1
        label = f"n reported = {row.eval_n_new} ({s.eval_source})"
        chart.series.append(_point_series(ref(6, k), ref(7, k), label, "diamond", CAUTION_EDGE))
    ws.add_chart(chart, f"I{top}")
    return max(last, first + len(marks), top + CHART_ROWS) + 2


def _curves_sheet(ws, plan: Plan) -> None:
    r = 1
    for row in plan.rows:
        r = _curve_block(ws, r, row)
    for col, width in zip("ABCDEFG", (9, 9, 9, 2, 22, 9, 9), strict=True):
        ws.column_dimensions[col].width = width


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
