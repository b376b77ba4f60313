"""Native Excel charts for a characteristic sheet, drawn from a helper block beside the print area.

Three charts:

1. values in production order (old lots, then new lots) with the target and limit lines; with
   more than :data:`MAX_POINTS` values a point is the mean of a run of consecutive values (the
   title says so);
2. old against new as histograms on shared bin edges (counts from ``numpy.histogram``; bins
   follow the data's resolution);
3. each interval (target: new minus target; shift: new minus old) as a line segment, with the
   margins as short vertical marks and a line at 0.

The helper block holds only what the charts draw, with full-precision numbers; it is layout,
not statistics.
"""

from __future__ import annotations

import math

import numpy as np
from openpyxl.chart import BarChart, Reference, ScatterChart, Series
from openpyxl.chart.text import RichText, Text
from openpyxl.chart.title import Title
from openpyxl.drawing.text import (
    CharacterProperties,
    Paragraph,
    ParagraphProperties,
    RegularTextRun,
)
from openpyxl.styles import Font

from ..model import CharacteristicResult, Evaluation
from .cells import NOTE_FONT, SECTION_FONT, put

MAX_POINTS = 1000
MAX_BINS = 40
CHART_W = 14.0  # cm
CHART_H = 8.5
BAND_ROWS = 18  # rows a band of charts takes (15 pt rows)
COLOURS = {"old": "5B7C99", "new": "D9822B"}
LINE_COLOURS = {"target": "2E7D57", "limit": "A3392B", "margin": "A3392B", "zero": "6B7680"}


def _col_letter(col: int) -> str:
    from openpyxl.utils import get_column_letter

    return get_column_letter(col)


def _series_values(ev: Evaluation, name: str, process: str):
    """Used values and lots of one process in production order."""
    t = ev.measurements.table
    sel = t[(t["characteristic"] == name) & (t["process"] == process) & ~t["excluded"]]
    sel = sel.sort_values(["order", "source_row"], kind="stable")
    return sel["value"].to_numpy(dtype=float), sel["lot"].astype(str).to_numpy(dtype=object)


def _title(text: str, size: int = 1000) -> Title:
    """A chart title in a modest font (the default is large enough to squeeze the plot)."""
    cp = CharacterProperties(sz=size, b=True)
    para = Paragraph(pPr=ParagraphProperties(defRPr=cp), r=[RegularTextRun(rPr=cp, t=text)])
    return Title(tx=Text(rich=RichText(p=[para])), overlay=False)


def _style_points(s: Series, colour: str) -> None:
    s.marker.symbol = "circle"
    s.marker.size = 4
    s.marker.graphicalProperties.solidFill = colour
    s.marker.graphicalProperties.line.solidFill = colour
    s.graphicalProperties.line.noFill = True
    s.smooth = False


def _style_line(s: Series, colour: str, dash: str | None = None, width: int = 19050) -> None:
    s.marker.symbol = "none"
    s.graphicalProperties.line.solidFill = colour
    s.graphicalProperties.line.width = width
    if dash:
        s.graphicalProperties.line.dashStyle = dash
    s.smooth = False


def _axes(chart, x_title: str, y_title: str, x_fmt: str | None, y_fmt: str | None) -> None:
    chart.x_axis.title = x_title
    chart.y_axis.title = y_title
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    if x_fmt:
        chart.x_axis.number_format = x_fmt
        chart.x_axis.numFmt.sourceLinked = False
    if y_fmt:
        chart.y_axis.number_format = y_fmt
        chart.y_axis.numFmt.sourceLinked = False


def _bounds(values, pad: float = 0.08) -> tuple[float, float]:
    v = [x for x in values if x is not None and math.isfinite(x)]
    lo, hi = min(v), max(v)
    span = hi - lo if hi > lo else max(abs(hi), 1.0) * 0.1
    return lo - pad * span, hi + pad * span


def _nice(lo: float, hi: float) -> tuple[float, float]:
    """Widen [lo, hi] to multiples of a 1-2-5 step, so the axis reads in round numbers."""
    span = hi - lo
    if not span > 0:
        return lo, hi
    raw = span / 6
    mag = 10.0 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 5, 10) if m * mag >= raw)
    return math.floor(lo / step) * step, math.ceil(hi / step) * step


def add_charts(
    ws,
    ev: Evaluation,
    c: CharacteristicResult,
    *,
    anchor_row: int,
    helper_col: int,
    formats: dict,
    col_widths: list[float],
) -> int:
    """Write the helper block and the charts; return how many rows the charts take."""
    put(
        ws,
        anchor_row - 1,
        helper_col,
        "Chart data (what the charts draw; not results)",
        font=SECTION_FONT,
    )
    anchors = _anchors(col_widths, anchor_row)
    col = helper_col
    drawn = 0
    col, ok = _production_chart(ws, ev, c, anchors[drawn], anchor_row, col, formats)
    drawn += ok
    col, ok = _histogram(ws, ev, c, anchors[drawn], anchor_row, col + 1, formats)
    drawn += ok
    col, ok = _interval_chart(ws, c, anchors[drawn], anchor_row, col + 1, formats)
    drawn += ok
    if drawn == 0:
        put(ws, anchor_row, 1, "No values to draw.", font=NOTE_FONT)
        return 1
    return BAND_ROWS * ((drawn + 1) // 2)


def _anchors(col_widths: list[float], row: int) -> list[str]:
    """Two charts a band: at column A and at the first column past the chart's width."""
    cm = 0.0
    second = len(col_widths)
    for j, w in enumerate(col_widths, start=1):
        if cm >= CHART_W + 0.3:
            second = j
            break
        cm += (w * 7 + 5) / 37.8  # column width in characters -> pixels -> cm
    b2 = row + BAND_ROWS
    return [f"A{row}", f"{_col_letter(second)}{row}", f"A{b2}", f"{_col_letter(second)}{b2}"]


def _production_chart(ws, ev, c, anchor, row0, col, formats) -> tuple[int, int]:
    blocks = []
    x0 = 0
    note = ""
    for p in ("old", "new"):
        v, lots = _series_values(ev, c.name, p)
        if v.size == 0:
            continue
        if v.size > MAX_POINTS:
            # a point per lot (or per run of g consecutive lots): the mean of its values,
            # drawn at the middle of the run
            runs = np.flatnonzero(np.r_[True, lots[1:] != lots[:-1]])
            g = math.ceil(len(runs) / MAX_POINTS)
            starts = runs[::g]
            sizes = np.diff(np.r_[starts, v.size])
            pts = np.add.reduceat(v, starts) / sizes
            x = x0 + starts + (sizes + 1) / 2
            lots = lots[starts]
            note = (
                " (a point is a lot mean)"
                if g == 1
                else (f" (a point is the mean of {g} consecutive lots)")
            )
        else:
            pts = v
            x = x0 + np.arange(1, v.size + 1)
        blocks.append((p, x, pts, lots))
        x0 += v.size
    if not blocks:
        return col, 0
    put(ws, row0, col, "Production order", font=Font(bold=True))
    header = ["Position", "Value", "Lot", "Process"]
    for j, h in enumerate(header):
        put(ws, row0 + 1, col + j, h, font=Font(bold=True))
    r = row0 + 2
    chart = ScatterChart()
    chart.title = _title(f"{c.name} in production order: old, then new{note}")
    chart.style = 2
    chart.height, chart.width = CHART_H, CHART_W
    ys = []
    for p, x, pts, lots in blocks:
        first = r
        for xi, yi, lot in zip(x.tolist(), pts.tolist(), lots.tolist(), strict=True):
            ws.cell(r, col, xi)
            ws.cell(r, col + 1, yi).number_format = formats["mean"]
            put(ws, r, col + 2, lot)
            put(ws, r, col + 3, p)
            r += 1
        s = Series(
            Reference(ws, min_col=col + 1, min_row=first, max_row=r - 1),
            Reference(ws, min_col=col, min_row=first, max_row=r - 1),
            title=p,
        )
        _style_points(s, COLOURS[p])
        chart.series.append(s)
        ys.extend(pts.tolist())
    # reference lines: two points each, across the whole run
    spec = c.spec
    lines = [
        ("target", spec.target, "target", None),
        ("lower limit", spec.lower, "limit", "dash"),
        ("upper limit", spec.upper, "limit", "dash"),
    ]
    r += 1
    put(ws, r, col, "Reference lines", font=Font(bold=True))
    r += 1
    xmax = float(x0 + 1)
    for label, y, kind, dash in lines:
        if y is None:
            continue
        put(ws, r, col, label)
        ws.cell(r, col + 1, 0.0)
        ws.cell(r, col + 2, float(y))
        ws.cell(r + 1, col + 1, xmax)
        ws.cell(r + 1, col + 2, float(y))
        s = Series(
            Reference(ws, min_col=col + 2, min_row=r, max_row=r + 1),
            Reference(ws, min_col=col + 1, min_row=r, max_row=r + 1),
            title=label,
        )
        _style_line(s, LINE_COLOURS[kind], dash)
        chart.series.append(s)
        ys.append(float(y))
        r += 2
    _axes(chart, "position in production order", f"{c.name} ({c.unit})", "0", formats["value"])
    lo, hi = _nice(*_bounds(ys))
    chart.y_axis.scaling.min, chart.y_axis.scaling.max = lo, hi
    chart.x_axis.scaling.min, chart.x_axis.scaling.max = 0, xmax
    chart.legend.position = "b"
    ws.add_chart(chart, anchor)
    return col + len(header), 1


def _edges(values: np.ndarray, decimals: int | None) -> np.ndarray:
    lo, hi = float(values.min()), float(values.max())
    res = None if decimals is None else 10.0 ** (-decimals)
    nb = len(np.histogram_bin_edges(values, bins="auto")) - 1
    nb = min(max(nb, 6), MAX_BINS)
    width = (hi - lo) / nb if hi > lo else (res or max(abs(lo), 1.0) * 0.01)
    start = lo
    if res:
        # bins a whole number of resolution steps wide, centred on recordable values
        width = max(res, math.ceil(width / res - 1e-9) * res)
        start = lo - res / 2
    k = max(1, math.ceil((hi - start) / width + 1e-9))
    if start + k * width <= hi:
        k += 1
    k = min(k, MAX_BINS * 3)
    return start + width * np.arange(k + 1)


def _histogram(ws, ev, c, anchor, row0, col, formats) -> tuple[int, int]:
    groups = {p: _series_values(ev, c.name, p)[0] for p in ("old", "new")}
    groups = {p: v for p, v in groups.items() if v.size}
    if not groups:
        return col, 0
    allv = np.concatenate(list(groups.values()))
    decimals = _decimals_of(formats["value"])
    edges = _edges(allv, decimals)
    counts = {p: np.histogram(v, bins=edges)[0] for p, v in groups.items()}
    put(ws, row0, col, "Histogram (shared bins)", font=Font(bold=True))
    header = ["Bin from", "Bin to", "Bin centre", *[f"{p} (n={groups[p].size})" for p in groups]]
    for j, h in enumerate(header):
        put(ws, row0 + 1, col + j, h, font=Font(bold=True))
    label_d = (decimals if decimals is not None else 4) + (0 if decimals is None else 1)
    for i in range(len(edges) - 1):
        r = row0 + 2 + i
        ws.cell(r, col, float(edges[i]))
        ws.cell(r, col + 1, float(edges[i + 1]))
        centre = (edges[i] + edges[i + 1]) / 2
        put(ws, r, col + 2, f"{centre:.{label_d}f}")  # a category label: display text
        for j, p in enumerate(groups):
            ws.cell(r, col + 3 + j, int(counts[p][i]))
    last = row0 + 1 + len(edges) - 1
    chart = BarChart()
    chart.type = "col"
    chart.grouping = "clustered"
    chart.gapWidth = 30
    chart.overlap = 0
    chart.title = _title(f"{c.name}: old against new, counts per bin")
    chart.height, chart.width = CHART_H, CHART_W
    data = Reference(
        ws, min_col=col + 3, max_col=col + 2 + len(groups), min_row=row0 + 1, max_row=last
    )
    chart.add_data(data, titles_from_data=True)
    chart.set_categories(Reference(ws, min_col=col + 2, min_row=row0 + 2, max_row=last))
    for s, p in zip(chart.series, groups, strict=True):
        s.graphicalProperties.solidFill = COLOURS[p]
        s.graphicalProperties.line.solidFill = COLOURS[p]
    _axes(chart, f"{c.name} ({c.unit}), bin centre", "count", None, "0")
    chart.legend.position = "b"
    ws.add_chart(chart, anchor)
    return col + len(header), 1


def _decimals_of(fmt: str) -> int | None:
    if fmt == "General":
        return None
    return len(fmt.split(".")[1]) if "." in fmt else 0


def _interval_chart(ws, c, anchor, row0, col, formats) -> tuple[int, int]:
    rows = [
        r
        for r in c.checks
        if r.check in ("target", "shift")
        and r.ci_low is not None
        and r.ci_high is not None
        and r.estimate is not None
    ]
    if not rows:
        return col, 0
    finite = [0.0]
    for r in rows:
        finite += [r.estimate, r.ci_low, r.ci_high]
        if r.margin:
            finite += list(r.margin)
    lo, hi = _nice(*_bounds(finite, pad=0.15))
    put(ws, row0, col, "Intervals against margins", font=Font(bold=True))
    for j, h in enumerate(["Series", "x", "y"]):
        put(ws, row0 + 1, col + j, h, font=Font(bold=True))
    r = row0 + 2
    series = {}

    def add(name, pts):
        nonlocal r
        first = r
        for x, y in pts:
            put(ws, r, col, name)
            if x is not None:
                ws.cell(r, col + 1, float(x))
                ws.cell(r, col + 2, float(y))
            r += 1
        series[name] = (first, r - 1)

    def clip(x):
        return min(max(x, lo), hi)  # a one-sided bound runs to the edge of the chart

    palette = ("245E7A", "7A4E9C", "2E7D57", "8A4B00")
    est, marks = [], []
    styles = {}
    for k, res in enumerate(rows, start=1):
        level = f" {res.ci_level:.0%}" if res.ci_level else ""
        name = f"{k}: {res.check}{level} interval"
        add(name, [(clip(res.ci_low), k), (clip(res.ci_high), k)])
        colour = palette[(k - 1) % len(palette)]
        styles[name] = lambda s, colour=colour: _style_line(s, colour, None, 38100)
        est.append((res.estimate, k))
        if res.margin:
            for m in res.margin:
                marks += [(m, k - 0.3), (m, k + 0.3), (None, None)]
    add("estimate", est)
    if marks:
        add("margins", marks)
    add("zero", [(0.0, 0.5), (0.0, len(rows) + 0.5)])
    chart = ScatterChart()
    chart.title = _title(f"{c.name}: intervals against the margins")
    chart.height, chart.width = CHART_H, CHART_W
    chart.display_blanks = "gap"  # a blank row ends one margin mark and starts the next
    styles.update(
        {
            "estimate": lambda s: _style_points(s, "1F2A33"),
            "margins": lambda s: _style_line(s, LINE_COLOURS["margin"], None, 28575),
            "zero": lambda s: _style_line(s, LINE_COLOURS["zero"], "dash"),
        }
    )
    for name, (a, b) in series.items():
        s = Series(
            Reference(ws, min_col=col + 2, min_row=a, max_row=b),
            Reference(ws, min_col=col + 1, min_row=a, max_row=b),
            title=name,
        )
        styles[name](s)
        chart.series.append(s)
    whats = []
    if any(r.check == "target" for r in rows):
        whats.append("target: new − target")
    if any(r.check == "shift" for r in rows):
        whats.append("shift: new − old")
    _axes(chart, f"difference in {c.unit} ({'; '.join(whats)})", "", formats["shift"], None)
    chart.x_axis.scaling.min, chart.x_axis.scaling.max = lo, hi
    chart.y_axis.scaling.min, chart.y_axis.scaling.max = 0, len(rows) + 1
    chart.y_axis.delete = True
    chart.legend.position = "b"
    ws.add_chart(chart, anchor)
    return col + 3, 1
