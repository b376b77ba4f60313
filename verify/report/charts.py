"""Native Excel charts for a characteristic sheet, drawn from a helper block beside the print area.

Up to four charts, two to a band:

1. values in production order (old lots, then new lots) with the target and limit lines, thin
   lines where one lot ends and the next begins, and the old process's natural limits (its
   mean +- 3 sd, part values); with more than :data:`MAX_POINTS` values a point is the mean of
   a run of consecutive values (the title says so);
2. old against new as the outline of each process's share of parts per bin (relative
   frequencies, so unequal n compare), on shared bin edges (``numpy.histogram``; bins follow
   the data's resolution), with the specification limits as vertical lines;
3. each interval (target: new minus target; shift: new minus old) as a labelled line segment,
   with only the margin ends that exist (a one-sided check has one) and a line at 0;
4. for a paired design, the difference new minus old of every pair in production order, with
   its mean, zero and the margin of the mean difference (only the side that exists).

The helper block holds only what the charts draw, with full-precision numbers; it is layout,
not statistics.
"""

from __future__ import annotations

import math

import numpy as np

from ..model import CharacteristicResult, Evaluation
from .cell_styles import FormatOnce, cell_at, row_dimension, shared_font, store
from .cells import NOTE_FONT, SECTION_FONT, clean_text, put
from .chart_model import (  # noqa: F401  (chart_title, style_*: other sheets' charts)
    ScatterPlan,
    cell_range,
    chart_title,
    line,
    points,
    style_line,
    style_points,
)
from .hooks import has_report, report_hook
from .layout import production_positions

MAX_POINTS = 1000
MAX_BINS = 40
CHART_W = 15.5  # cm
CHART_H = 9.0
BAND_ROWS = 19  # rows a band of charts takes (15 pt rows: 285 pt, the chart 255 pt)
ROW_PT = 15.0  # the height of the rows under the charts, in points
COLOURS = {"old": "5B7C99", "new": "D9822B"}
LINE_COLOURS = {
    "target value": "2E7D57",  # the characteristic's target
    "limit": "A3392B",
    "margin": "A3392B",
    "zero": "6B7680",
    "natural": "5B7C99",
    "lot": "C9D2D9",
    "mean": "1F2A33",
}
MAX_LOT_LINES = 80  # more lots than this: no boundary lines (they would fill the chart)


def _col_letter(col: int) -> str:
    from openpyxl.utils import get_column_letter

    return get_column_letter(col)


_COLUMNS: dict = {}


def _columns(t):
    """The table's value and lot (as text) columns as arrays, once per table (a chart asks
    for one characteristic and process at a time)."""
    hit = _COLUMNS.get(id(t))
    if hit is None or hit[0] is not t:
        cols = (t["value"].to_numpy(dtype=float), t["lot"].astype(str).to_numpy(dtype=object))
        if len(_COLUMNS) >= 8:
            _COLUMNS.clear()
        hit = _COLUMNS[id(t)] = (t, cols)
    return hit[1]


def _series_values(ev: Evaluation, name: str, process: str):
    """Used values and lots of one process in production order."""
    t = ev.measurements.table
    # the rows (characteristic == name) & (process == process) & ~excluded, from the table's
    # cached row groups rather than a mask over the whole table per question
    pos = production_positions(t, name, process)
    values, lots = _columns(t)
    return values[pos], lots[pos]


def _axes(chart: ScatterPlan, x_title: str, y_title: str, x_fmt, y_fmt) -> None:
    # both axes shown, tick labels at the low edge wherever the axes cross (differences run
    # below zero) - ScatterPlan's axes always are; no vertical grid: vertical lines on these
    # charts mean something (lot ends, limits) - its x axis has none
    chart.x.title, chart.y.title = x_title, y_title
    chart.x.fmt, chart.y.fmt = x_fmt or None, y_fmt or None


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
    col, ok = _paired_chart(ws, ev, c, anchors[drawn], anchor_row, col + 1, formats)
    drawn += ok
    if drawn == 0:
        put(ws, anchor_row, 1, "No values to draw.", font=NOTE_FONT)
        return 1
    bands = (drawn + 1) // 2
    # rows of a known height, so that a chart's extent in rows is fixed on every program
    for r in range(anchor_row, anchor_row + BAND_ROWS * bands):
        row_dimension(ws, r).ht = ROW_PT
    return BAND_ROWS * bands


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


class _Block:
    """Helper-block writer: consecutive (x, y) rows under a name, blank rows as gaps."""

    def __init__(self, ws, row: int, col: int, title: str):
        self.ws, self.col, self.row = ws, col, row
        put(ws, row, col, title, font=shared_font(bold=True))
        for j, h in enumerate(["Series", "x", "y"]):
            put(ws, row + 1, col + j, h, font=shared_font(bold=True))
        self.row = row + 2
        self.series: list[tuple[str, int, int]] = []

    def add(self, name: str, pts, *, y_fmt: str | None = None) -> None:
        """Rows of ``name`` and each point, as ``put(name); store(x); style(store(y),
        fmt=y_fmt)`` write them (the name made safe once, the y style found once and copied
        to each fresh cell; ``tests/test_chart_rows.py``)."""
        first = self.row
        ws, col = self.ws, self.col
        safe = clean_text(name) if type(name) is str else None
        y_style = FormatOnce(y_fmt) if y_fmt else None
        for x, y in pts:
            if safe is None:
                put(ws, self.row, col, name)
            else:
                cell = cell_at(ws, self.row, col)
                cell._value, cell.data_type = safe, "s"
            if x is not None and y is not None:
                store(ws, self.row, col + 1, float(x))
                cell = store(ws, self.row, col + 2, float(y))
                if y_style is not None:
                    y_style.apply(cell)
            self.row += 1
        self.series.append((name, first, self.row - 1))

    def to_chart(self, chart: ScatterPlan, styles: dict) -> None:
        for name, a, b in self.series:
            xref = cell_range(self.ws, self.col + 1, a, b)
            chart.add(name, xref, cell_range(self.ws, self.col + 2, a, b), styles[name])


def _vertical_lines(xs, lo: float, hi: float) -> list:
    """Vertical segments at each x from lo to hi, separated by gaps."""
    pts = []
    for x in xs:
        pts += [(x, lo), (x, hi), (None, None)]
    return pts


class ProductionRows:
    """The production chart's data rows (position, value, lot, process), a row at a time, as
    ``store(x); style(store(y), fmt=fmt); put(lot); put(process)`` write them: the value's
    style found once and copied to each fresh cell, each distinct text made safe once (a
    chart has a row per part; ``tests/test_chart_rows.py`` holds it to those calls)."""

    def __init__(self, ws, fmt):
        self.ws, self.value_style = ws, FormatOnce(fmt)
        self.texts: dict[str, str] = {}

    def write(self, r: int, col: int, x, y, lot, process) -> None:
        ws = self.ws
        store(ws, r, col, x)
        self.value_style.apply(store(ws, r, col + 1, y))
        for j, text in ((2, lot), (3, process)):
            if type(text) is not str:
                put(ws, r, col + j, text)
                continue
            safe = self.texts.get(text)
            if safe is None:
                safe = self.texts[text] = clean_text(text)
            cell = cell_at(ws, r, col + j)
            cell._value, cell.data_type = safe, "s"


def _production_chart(ws, ev, c, anchor, row0, col, formats) -> tuple[int, int]:
    blocks = []
    x0 = 0
    note = ""
    boundaries: list[float] = []
    for p in ("old", "new"):
        v, lots = _series_values(ev, c.name, p)
        if v.size == 0:
            continue
        if x0 > 0:
            boundaries.append(x0 + 0.5)  # old ends, new begins
        starts = np.flatnonzero(np.r_[True, lots[1:] != lots[:-1]])
        if v.size > MAX_POINTS:
            # a point per lot (or per run of g consecutive lots): the mean of its values,
            # drawn at the middle of the run
            g = math.ceil(len(starts) / MAX_POINTS)
            runs = starts[::g]
            sizes = np.diff(np.r_[runs, v.size])
            pts = np.add.reduceat(v, runs) / sizes
            x = x0 + runs + (sizes + 1) / 2
            lots = lots[runs]
            note = (
                " (a point is a lot mean)"
                if g == 1
                else (f" (a point is the mean of {g} consecutive lots)")
            )
        else:
            pts = v
            x = x0 + np.arange(1, v.size + 1)
        boundaries += [x0 + float(k) + 0.5 for k in starts[1:]]
        blocks.append((p, x, pts, lots))
        x0 += v.size
    if not blocks:
        return col, 0
    put(ws, row0, col, "Production order", font=shared_font(bold=True))
    header = ["Position", "Value", "Lot", "Process"]
    for j, h in enumerate(header):
        put(ws, row0 + 1, col + j, h, font=shared_font(bold=True))
    r = row0 + 2
    chart = ScatterPlan(f"{c.name} in production order: old, then new{note}", CHART_W, CHART_H)
    ys = []
    rows = ProductionRows(ws, formats["mean"])
    for p, x, pts, lots in blocks:
        first = r
        for xi, yi, lot in zip(x.tolist(), pts.tolist(), lots.tolist(), strict=True):
            rows.write(r, col, xi, yi, lot, p)
            r += 1
        chart.add(
            f"{p} process",
            cell_range(ws, col, first, r - 1),
            cell_range(ws, col + 1, first, r - 1),
            points(COLOURS[p]),
        )
        ys.extend(pts.tolist())
    # reference lines: two points each, across the whole run
    spec = c.spec
    xmax = float(x0 + 1)
    lines = [
        ("target", spec.target, "target value", None),
        ("lower limit", spec.lower, "limit", "dash"),
        ("upper limit", spec.upper, "limit", "dash"),
    ]
    old = c.processes.get("old")
    if (
        ev.spec.unit_of_analysis == "part"
        and old is not None
        and old.mean is not None
        and old.sd is not None
    ):
        # the old process's natural limits: where its parts fall (mean +- 3 sd)
        lines += [
            ("old process mean - 3 sd", old.mean - 3 * old.sd, "natural", "sysDot"),
            ("old process mean + 3 sd", old.mean + 3 * old.sd, "natural", "sysDot"),
        ]
    for _label, y, _kind, _dash in lines:
        if y is not None:
            ys.append(float(y))
    lo, hi = _nice(*_bounds(ys))
    block = _Block(ws, r + 1, col, "Reference lines")
    styles = {}
    for label, y, kind, dash in lines:
        if y is None:
            continue
        block.add(label, [(0.0, y), (xmax, y)])
        styles[label] = line(LINE_COLOURS[kind], dash)
    if boundaries and len(boundaries) <= MAX_LOT_LINES and not note:
        block.add("lot boundaries", _vertical_lines(boundaries, lo, hi))
        styles["lot boundaries"] = line(LINE_COLOURS["lot"], None, 9525)
    chart.gaps = True
    block.to_chart(chart, styles)
    _axes(chart, "position in production order", f"{c.name} ({c.unit})", "0", formats["value"])
    chart.y.lo, chart.y.hi = lo, hi
    chart.x.lo, chart.x.hi = 0, xmax
    ws.add_chart(chart, anchor)
    return col + len(header), 1


def auto_bin_count(values: np.ndarray) -> int:
    """``len(np.histogram_bin_edges(values, bins="auto")) - 1``: the number of bins numpy's
    "auto" rule gives (the smaller of the Sturges width and the Freedman-Diaconis width, the
    latter at least half the square-root rule's), computed with numpy's own operations in its
    order (numpy 2.x ``_histograms_impl``; the quartiles as ``np.percentile``'s default linear
    method finds them) from one sort, without the general route's checks and conversions (a
    tenth of its cost, on every histogram). Anything but finite float64 values, two or more,
    takes numpy's own route."""
    n = values.size
    if values.dtype != np.float64 or values.ndim != 1 or n < 2:
        return len(np.histogram_bin_edges(values, bins="auto")) - 1
    s = np.sort(values)
    first, last = s[0], s[-1]
    if not (np.isfinite(first) and np.isfinite(last)):
        return len(np.histogram_bin_edges(values, bins="auto")) - 1  # numpy's own error
    ptp = last - first
    if ptp == 0:
        return 1  # no width: numpy's one bin around the value
    q75, q25 = (_linear_quantile(s, q) for q in (0.75, 0.25))
    fd = 2.0 * (q75 - q25) * n ** (-1.0 / 3.0)
    sturges = ptp / (np.log2(n) + 1.0)
    fd_corrected = max(fd, ptp / np.sqrt(n) / 2)
    width = min(fd_corrected, sturges)
    if not width:
        return 1
    return int(np.ceil((last - first) / width))


def _linear_quantile(s: np.ndarray, q: float):
    """``np.percentile(s, 100 * q)`` of sorted finite ``s`` (n >= 2), numpy's linear method:
    the virtual index ``(n - 1) * q``, its floor and the next, and numpy's ``_lerp``."""
    n = s.size
    virtual = np.float64((n - 1) * q)
    if virtual >= n - 1:
        return s[-1]
    below = np.floor(virtual)
    i = int(below)
    a, b = s[i], s[i + 1]
    t = virtual - below
    diff = b - a
    return b - diff * (1 - t) if t >= 0.5 else a + diff * t


def _edges(values: np.ndarray, decimals: int | None) -> np.ndarray:
    lo, hi = float(values.min()), float(values.max())
    res = None if decimals is None else 10.0 ** (-decimals)
    nb = auto_bin_count(values)
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
    # each process's share of its own parts per bin (percent), so unequal n compare
    shares = {p: 100.0 * np.histogram(v, bins=edges)[0] / v.size for p, v in groups.items()}
    block = _Block(ws, row0, col, "Share of parts per bin (shared bins), %")
    styles = {}
    top = max(float(f.max()) for f in shares.values())
    for p, f in shares.items():
        # the outline of the bars: up and down at every edge
        pts = [(edges[0], 0.0)]
        for i in range(len(f)):
            pts += [(edges[i], f[i]), (edges[i + 1], f[i])]
        pts.append((edges[-1], 0.0))
        name = f"{p} process (n = {groups[p].size})"
        block.add(name, pts, y_fmt="0.0")
        styles[name] = line(COLOURS[p], None, 25400)
    xs = [float(edges[0]), float(edges[-1])]
    spec = c.spec
    y_hi = _nice(0.0, top * 1.1)[1]
    for label, x, kind in (
        ("lower limit", spec.lower, "limit"),
        ("upper limit", spec.upper, "limit"),
        ("target", spec.target, "target value"),
    ):
        if x is None:
            continue
        block.add(label, [(x, 0.0), (x, y_hi)])
        styles[label] = line(LINE_COLOURS[kind], "dash" if kind == "limit" else None)
        xs.append(float(x))
    chart = ScatterPlan(f"{c.name}: share of each process's parts per bin", CHART_W, CHART_H)
    block.to_chart(chart, styles)
    _axes(chart, f"{c.name} ({c.unit})", "% of the process's parts", formats["value"], "0")
    lo, hi = _nice(*_bounds(xs, pad=0.03))
    chart.x.lo, chart.x.hi = lo, hi
    chart.y.lo, chart.y.hi = 0, y_hi
    ws.add_chart(chart, anchor)
    return col + 3, 1


def _decimals_of(fmt: str) -> int | None:
    if fmt == "General":
        return None
    return len(fmt.split(".")[1]) if "." in fmt else 0


def existing_margin_ends(r) -> list[float]:
    """The margin ends a check tests: both for two-sided, the harmful side's only otherwise."""
    if r.margin is None:
        return []
    low, high = r.margin
    if r.alternative == "greater":  # lower values harmful: the low end alone
        return [low]
    if r.alternative == "less":
        return [high]
    return [low, high]


def _row_label(k: int, r) -> str:
    level = f", {r.ci_level:.0%} interval" if r.ci_level else ", interval"
    return f"{r.check}{level}"


def _interval_chart(ws, c, anchor, row0, col, formats) -> tuple[int, int]:
    rows = [
        r
        for r in c.checks
        if has_report(r.check, "interval_axis")
        and r.ci_low is not None
        and r.ci_high is not None
        and r.estimate is not None
    ]
    if not rows:
        return col, 0
    finite = [0.0]
    for r in rows:
        finite += [r.estimate, r.ci_low, r.ci_high, *existing_margin_ends(r)]
    lo, hi = _nice(*_bounds(finite, pad=0.15))

    def clip(x):
        return min(max(x, lo), hi)  # a one-sided bound runs to the edge of the chart

    block = _Block(ws, row0, col, "Intervals against margins")
    palette = ("245E7A", "7A4E9C", "2E7D57", "8A4B00")
    styles = {}
    est, marks = [], []
    for k, res in enumerate(rows, start=1):
        name = _row_label(k, res)
        block.add(name, [(clip(res.ci_low), k), (clip(res.ci_high), k)])
        colour = palette[(k - 1) % len(palette)]
        styles[name] = line(colour, None, 38100)
        est.append((res.estimate, k))
        for m in existing_margin_ends(res):
            marks += [(m, k - 0.3), (m, k + 0.3), (None, None)]
    block.add("estimate", est)
    styles["estimate"] = points("1F2A33")
    if marks:
        block.add("margin (only the ends that exist)", marks)
        styles["margin (only the ends that exist)"] = line(LINE_COLOURS["margin"], None, 28575)
    block.add("zero", [(0.0, 0.5), (0.0, len(rows) + 0.5)])
    styles["zero"] = line(LINE_COLOURS["zero"], "dash")
    chart = ScatterPlan(f"{c.name}: intervals against the margins", CHART_W, CHART_H)
    chart.gaps = True  # a blank row ends one margin mark and starts the next
    block.to_chart(chart, styles)
    # what each kind's difference is (its report hook's interval_axis), in the checks' order
    whats = list(dict.fromkeys(report_hook(r.check, "interval_axis") for r in rows))
    _axes(chart, f"difference in {c.unit} ({'; '.join(whats)})", "", formats["difference"], None)
    chart.x.lo, chart.x.hi = lo, hi
    chart.y.lo, chart.y.hi = 0, len(rows) + 1
    # each row named on the vertical axis: a number format that shows tick 1 as the first
    # check's name, tick 2 as the second's and nothing elsewhere (at most two rows, the two
    # location checks; a format holds two conditions)
    names = [_row_label(k, r) for k, r in enumerate(rows, start=1)][:2]
    fmt = ";".join(f'[={k}]"{n}"' for k, n in enumerate(names, start=1)) + ';""'
    if len(names) == 1:
        fmt = f'[=1]"{names[0]}";[=0]"";""'
    chart.y.fmt = fmt
    chart.y.major_unit = 1
    chart.y.grid = False
    ws.add_chart(chart, anchor)
    return col + 3, 1


def _paired_chart(ws, ev, c, anchor, row0, col, formats) -> tuple[int, int]:
    # the location check that ran on the matched pairs
    shift = next(
        (r for r in c.checks if r.design == "paired" and has_report(r.check, "interval_axis")), None
    )
    if shift is None or ev.spec.data.pair is None:
        return col, 0
    from ..data import paired_values

    try:
        pv = paired_values(ev.measurements, ev.spec, c.name)
    except ValueError:
        return col, 0
    if len(pv.keys) == 0:
        return col, 0
    d = np.asarray(pv.new, dtype=float) - np.asarray(pv.old, dtype=float)
    x = np.arange(1, d.size + 1)
    block = _Block(ws, row0, col, "Paired differences (new - old)")
    block.add(
        "difference of a pair",
        zip(x.tolist(), d.tolist(), strict=True),
        y_fmt=formats["difference"],
    )
    styles = {"difference of a pair": points(COLOURS["new"])}
    xmax = float(d.size + 1)
    ys = d.tolist() + [0.0]
    block.add("zero", [(0.0, 0.0), (xmax, 0.0)])
    styles["zero"] = line(LINE_COLOURS["zero"], "dash")
    if shift.estimate is not None:
        block.add("mean difference", [(0.0, shift.estimate), (xmax, shift.estimate)])
        styles["mean difference"] = line(LINE_COLOURS["mean"])
    for m in existing_margin_ends(shift):
        name = f"margin for the mean difference ({m:+g})"
        block.add(name, [(0.0, m), (xmax, m)])
        styles[name] = line(LINE_COLOURS["margin"], None, 28575)
        ys.append(m)
    chart = ScatterPlan(f"{c.name}: new − old for each of the {d.size} pairs", CHART_W, CHART_H)
    block.to_chart(chart, styles)
    _axes(chart, "pair, in production order", f"new − old ({c.unit})", "0", formats["difference"])
    lo, hi = _nice(*_bounds(ys))
    chart.y.lo, chart.y.hi = lo, hi
    chart.x.lo, chart.x.hi = 0, xmax
    ws.add_chart(chart, anchor)
    return col + 3, 1
