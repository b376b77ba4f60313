"""The per-stream block of a characteristic sheet (data.stream: cavities, spindles, machines).

A table with a row per new stream (n, mean, sd, each check's outcome, the decision and the
reason of its worst check) and a bar chart of the stream means beside the old process's mean,
so that a stream that runs off stands out. Layout only: the numbers come from the
:class:`~verify.model.StreamResult` objects.
"""

from __future__ import annotations

from openpyxl.chart import BarChart, Reference

from ..decide import combine
from ..model import CharacteristicResult
from .cell_styles import merge, shared_alignment
from .cells import BOX, INT_FORMAT, NOTE_FONT, WRAP, header_row, put, section
from .summary import decision_style

CHART_ROWS = 15  # rows the chart covers below the table


def write_streams(ws, row: int, c: CharacteristicResult, fmts: dict, last_col: int) -> int:
    """Write the block from ``row``; return the first free row after it."""
    if not c.streams:
        return row
    section(ws, row, "Streams of the new process (each against the old process)")
    row += 1
    kinds = list(dict.fromkeys(k.check for st in c.streams for k in st.checks))
    headers = ["Stream", "n", "Mean", "SD", *kinds, "Decision"]
    header_row(ws, row, 1, headers)
    row += 1
    first = row
    for st in c.streams:
        by = {k.check: k for k in st.checks}
        values = [st.name, st.n, st.mean, st.sd]
        formats = [None, INT_FORMAT, fmts["mean"], fmts["sd"]]
        for j, (v, f) in enumerate(zip(values, formats, strict=True), start=1):
            put(ws, row, j, v, fmt=f, border=BOX)
        for j, kind in enumerate([*kinds, None], start=5):
            k = by.get(kind) if kind is not None else None
            outcome = st.decision if kind is None else (k.outcome if k is not None else None)
            fill, font = decision_style(outcome) if outcome else (None, None)
            put(ws, row, j, outcome or "", fill=fill, font=font, border=BOX,
                align=shared_alignment(horizontal="center"))
        row += 1
    last = row - 1
    # the reason of each stream's worst check, a full-width line each
    for st in c.streams:
        worst = combine(k.outcome for k in st.checks)
        reason = next((f"{k.check}: {k.reason}" for k in st.checks if k.outcome == worst), "")
        put(ws, row, 1, f"{st.name}: {st.decision} - {reason}", align=WRAP)
        merge(ws, row, 1, row, last_col)
        ws.row_dimensions[row].height = 15 * (1 + len(reason) // 150)
        row += 1
    old = c.processes.get("old")
    put(ws, row, 1, "Stream means against the old process's mean"
        + (f" ({old.mean:.6g})" if old is not None and old.mean is not None else "")
        + "; the multiplicity family includes every stream's tests.", font=NOTE_FONT)
    row += 1
    chart = BarChart()
    chart.type = "col"
    chart.title = f"{c.name}: mean by stream"
    chart.y_axis.title = c.unit or "value"
    chart.x_axis.title = "stream"
    chart.legend = None
    data = Reference(ws, min_col=3, min_row=first - 1, max_row=last)
    cats = Reference(ws, min_col=1, min_row=first, max_row=last)
    chart.add_data(data, titles_from_data=True)
    chart.set_categories(cats)
    means = [st.mean for st in c.streams if st.mean is not None]
    if old is not None and old.mean is not None:
        means.append(old.mean)
    if means:
        spread = max(means) - min(means)
        pad = spread * 0.5 if spread > 0 else abs(means[0]) * 0.01 or 1.0
        chart.y_axis.scaling.min = min(means) - pad
        chart.y_axis.scaling.max = max(means) + pad
    chart.y_axis.number_format = fmts["mean"]
    chart.y_axis.delete = False
    chart.x_axis.delete = False
    chart.height = 7
    chart.width = 16
    ws.add_chart(chart, f"A{row}")
    return row + CHART_ROWS

