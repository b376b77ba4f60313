"""The sheet of one pass-fail characteristic: counts, the rate checks and their chart.

Top to bottom: name and decision, the reasons and review notes, what the spec asks, the counts
by process and by lot, the checks (one row each: the estimate, its interval against the maximum
or the margin, the outcome and the reason), the rules in words, the diagnostics, and a chart of
each interval against its maximum or margin (drawn from a helper block right of the printed
area). Self-contained so that a registry of check kinds can take it as it is.
"""

from __future__ import annotations

import math

from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.chart.text import RichText, Text
from openpyxl.chart.title import Title
from openpyxl.drawing.text import (
    CharacterProperties,
    Paragraph,
    ParagraphProperties,
    RegularTextRun,
)
from openpyxl.utils import get_column_letter

from ..checks import kinds
from ..model import CharacteristicResult, CheckResult, Evaluation
from .cell_styles import merge, shared_alignment, shared_font
from .cells import (
    BOX,
    DIAGNOSTIC_HEADERS,
    INK,
    INT_FORMAT,
    NOTE_FONT,
    P_FORMAT,
    SECTION_FONT,
    TITLE_FONT,
    WRAP,
    diagnostic_rows,
    fit_rows,
    header_row,
    put,
    section,
)
from .charts import style_line, style_points
from .hooks import report_hook
from .summary import decision_style, put_decision_badge

RATE_FORMAT = "0.00%"
LAST_COL = 9
MAX_LOT_ROWS = 200  # lots listed per process; every one is on the measurements sheet
#: Column widths; the first holds the spec rows' labels, the longest "Largest allowed increase
#: (margin)" (33 characters in bold)
WIDTHS = (35, 16, 14, 14, 14, 14, 14, 14, 40)
PALETTE = ("245E7A", "7A4E9C")
LIMIT_COLOUR = "A3392B"



def _boxed_row(ws, row: int, values: list, formats: list) -> int:
    """One boxed table row from column 1; the next row."""
    for j, (v, fm) in enumerate(zip(values, formats, strict=True), start=1):
        put(ws, row, j, v, fmt=fm, border=BOX)
    return row + 1

def _bold(ws, row: int, col: int, text: str) -> None:
    put(ws, row, col, text, font=shared_font(bold=True, color=INK))


def _asks(ev: Evaluation, c: CharacteristicResult) -> list[tuple[str, object, str | None]]:
    s = c.spec
    rows: list[tuple[str, object, str | None]] = [("Kind", "pass-fail (failure rate)", None)]
    if s.counts is not None:
        rows.append(("Counts per lot from", f"inspected: column {s.counts[0]!r}; failed: "
                     f"column {s.counts[1]!r} (one row per lot)", None))
    else:
        where = (f"column {s.column!r}" if s.column is not None
                 else f"rows where {ev.spec.data.characteristic!r} is {s.match!r}")
        rows.append(("Per-part results from", where, None))
        rows.append(("Fail results", ", ".join(s.fail_texts), None))
        rows.append(("Pass results", ", ".join(s.pass_texts), None))
    for k in kinds():
        conf = getattr(s.checks, k.name, None)
        if conf is not None and k.has_hook("report") and hasattr(k.hook("report"), "asks"):
            rows.extend(k.hook("report").asks(k, conf))
    rows.append(("Harmful direction", "a higher failure rate", None))
    rows.append(("Alpha", ev.spec.alpha, "General"))
    rows.append(("Planned parts (min_n)", ev.spec.min_n_text or "none declared", None))
    return rows


def _limit(r: CheckResult) -> float | None:
    """The number the check compares with (its report hook's ``criterion_value``)."""
    return report_hook(r.check, "criterion_value", r, default=None)


def write_pass_fail(ws, ev: Evaluation, c: CharacteristicResult) -> None:
    """Fill the sheet of one pass-fail characteristic."""
    for j, w in enumerate(WIDTHS, start=1):
        ws.column_dimensions[get_column_letter(j)].width = w
    put(ws, 1, 1, f"{c.name} (pass-fail)", font=TITLE_FONT)
    put_decision_badge(ws, 1, 5, c.decision, size=16)
    ws.row_dimensions[1].height = 26
    row = 2
    for text, font in [(r, None) for r in c.reasons] + [
            (n, shared_font(italic=True, color="8A4B00")) for n in c.review]:
        put(ws, row, 1, text, align=WRAP, font=font)
        merge(ws, row, 1, row, LAST_COL)
        row += 1

    row += 1
    section(ws, row, "What the spec asks")
    row += 1
    for label, value, fmt in _asks(ev, c):
        _bold(ws, row, 1, label)
        put(ws, row, 2, value, fmt=fmt, align=shared_alignment(horizontal="left"))
        row += 1

    row += 1
    section(ws, row, "Counts by process")
    row += 1
    header_row(ws, row, 1, ["Process", "Parts inspected", "Failed", "Failure rate", "Lots"])
    row += 1
    for key in ("old", "new"):
        p = c.processes.get(key)
        if p is None:
            continue
        row = _boxed_row(ws, row, [key, p.n, p.failures, p.rate, len(p.lots)],
                         [None, INT_FORMAT, INT_FORMAT, RATE_FORMAT, INT_FORMAT])

    row += 1
    section(ws, row, "Counts by lot")
    row += 1
    header_row(ws, row, 1, ["Process", "Lot", "Parts inspected", "Failed", "Failure rate"])
    row += 1
    for key in ("old", "new"):
        p = c.processes.get(key)
        if p is None:
            continue
        for lot, n, x in p.lot_counts[:MAX_LOT_ROWS]:
            row = _boxed_row(ws, row, [key, lot, n, x, x / n if n else None],
                             [None, None, INT_FORMAT, INT_FORMAT, RATE_FORMAT])
        if len(p.lot_counts) > MAX_LOT_ROWS:
            put(ws, row, 1, f"{key}: {len(p.lot_counts) - MAX_LOT_ROWS} more lots on the "
                "measurements sheet", font=NOTE_FONT)
            row += 1

    row += 1
    section(ws, row, "Checks")
    row += 1
    header_row(ws, row, 1, ["Check", "Method", "Estimate", "Interval low", "Interval high",
                            "Confidence", "Max or margin", "p-value", "Outcome"])
    row += 1
    for r in c.checks:
        values = [r.check, r.method, r.estimate, r.ci_low, r.ci_high, r.ci_level, _limit(r),
                  r.p_adjusted if r.p_adjusted is not None else r.p_value, None]
        fmts = [None, None, RATE_FORMAT, RATE_FORMAT, RATE_FORMAT, "0.0%", RATE_FORMAT,
                P_FORMAT, None]
        for j, (v, fm) in enumerate(zip(values, fmts, strict=True), start=1):
            put(ws, row, j, v, fmt=fm, border=BOX, align=WRAP if j == 2 else None)
        f, fo = decision_style(r.outcome)
        put(ws, row, 9, r.outcome, fill=f, font=fo, border=BOX,
            align=shared_alignment(horizontal="center"))
        row += 1
        put(ws, row, 2, f"What is shown: {r.hypothesis}. {r.reason}", align=WRAP)
        merge(ws, row, 2, row, LAST_COL)
        row += 1
        if r.power_note:
            put(ws, row, 2, r.power_note, font=NOTE_FONT)
            row += 1
    if not c.checks:
        put(ws, row, 1, "No checks ran for this characteristic.", font=NOTE_FONT)
        row += 1
    put(ws, row, 1, "Rates and differences are fractions shown as percentages; a difference is "
        "the new rate minus the old one.", font=NOTE_FONT)
    row += 1

    row += 1
    section(ws, row, "The rules in words")
    row += 1
    present = {r.check for r in c.checks}
    for rule in (rule for k in kinds() if k.name in present
                 for rule in k.hook("rule").rules(k)):
        put(ws, row, 1, rule.describe(ev.spec.alpha), align=WRAP)
        merge(ws, row, 1, row, LAST_COL)
        row += 1

    row += 1
    section(ws, row, "Diagnostics (they never decide alone; a flag asks for review)")
    row += 1
    header_row(ws, row, 1, DIAGNOSTIC_HEADERS)
    merge(ws, row, 7, row, LAST_COL)
    row += 1
    row = diagnostic_rows(ws, row, c.diagnostics, LAST_COL, lambda d: "0.000")

    fit_rows(ws)
    row += 1
    section(ws, row, "Chart")
    row += 1
    chart_rows = _interval_chart(ws, c, row, LAST_COL + 3)
    last_row = row + chart_rows
    ws.print_area = f"A1:{get_column_letter(LAST_COL)}{last_row}"
    ws.page_setup.orientation = "landscape"
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.oddFooter.left.text = f"{c.name}: verify run {ev.run.run_id}"
    ws.oddFooter.right.text = "page &P of &N"
    ws.sheet_view.showGridLines = False


def _interval_chart(ws, c: CharacteristicResult, row0: int, col: int) -> int:
    """Each check's interval (rate: 0 to the upper bound; rate_shift: the difference's
    interval) as a bar at its own height, its maximum or margin as a red mark, the estimate
    as a point. Returns the rows the chart takes."""
    rows = [r for r in c.checks if r.ci_high is not None and r.estimate is not None]
    if not rows:
        put(ws, row0, 1, "No interval to draw: no check could be computed.", font=NOTE_FONT)
        return 1
    put(ws, row0 - 1, col, "Chart data (what the chart draws; not results)", font=SECTION_FONT)
    for j, h in enumerate(["Series", "x", "y"]):
        put(ws, row0, col + j, h, font=shared_font(bold=True))
    r = row0 + 1
    series: list[tuple[str, int, int, object]] = []

    def add(name: str, pts, style) -> None:
        nonlocal r
        first = r
        for x, y in pts:
            put(ws, r, col, name)
            if x is not None:
                ws.cell(r, col + 1, float(x))
                ws.cell(r, col + 2, float(y))
            r += 1
        series.append((name, first, r - 1, style))

    xs = [0.0]
    marks = []
    for k, res in enumerate(rows, start=1):
        low = res.ci_low if res.ci_low is not None else 0.0
        add(f"{k}: {res.check} {res.ci_level:.0%} interval", [(low, k), (res.ci_high, k)],
            lambda s, k=k: style_line(s, PALETTE[(k - 1) % 2], width=38100))
        limit = _limit(res)
        xs += [low, res.ci_high, res.estimate] + ([limit] if limit is not None else [])
        if limit is not None:
            marks += [(limit, k - 0.3), (limit, k + 0.3), (None, None)]
    add("estimate", [(res.estimate, k) for k, res in enumerate(rows, start=1)],
        lambda s: style_points(s, INK, size=6))
    if marks:
        add("max or margin", marks, lambda s: style_line(s, LIMIT_COLOUR, width=28575))
    add("zero", [(0.0, 0.5), (0.0, len(rows) + 0.5)],
        lambda s: style_line(s, "6B7680", width=19050, dash="dash"))
    chart = ScatterChart()
    # a modest title font: the default squeezes the plot
    cp = CharacterProperties(sz=1000, b=True)
    text = f"{c.name}: failure-rate intervals against the max or margin"
    chart.title = Title(tx=Text(rich=RichText(p=[Paragraph(
        pPr=ParagraphProperties(defRPr=cp), r=[RegularTextRun(rPr=cp, t=text)])])),
        overlay=False)
    chart.height, chart.width = 8.5, 17
    chart.display_blanks = "gap"
    for name, a, b, style in series:
        s = Series(Reference(ws, min_col=col + 2, min_row=a, max_row=b),
                   Reference(ws, min_col=col + 1, min_row=a, max_row=b), title=name)
        style(s)
        chart.series.append(s)
    lo, hi = min(xs), max(xs)
    pad = (hi - lo) * 0.1 or 0.01
    lo, hi = lo - pad, hi + pad
    # round the axis to a 1-2-5 step so that it reads in round percentages
    mag = 10.0 ** math.floor(math.log10((hi - lo) / 6))
    step = next(m * mag for m in (1, 2, 5, 10) if m * mag >= (hi - lo) / 6)
    chart.x_axis.scaling.min = math.floor(lo / step) * step
    chart.x_axis.scaling.max = math.ceil(hi / step) * step
    chart.x_axis.majorUnit = step
    chart.x_axis.title = "failure rate (rate) or new - old (rate_shift)"
    chart.x_axis.number_format = "0.0%"
    chart.x_axis.numFmt.sourceLinked = False
    chart.x_axis.delete = False
    chart.y_axis.scaling.min, chart.y_axis.scaling.max = 0, len(rows) + 1
    chart.y_axis.delete = True
    chart.legend.position = "b"
    ws.add_chart(chart, f"A{row0}")
    return 18
