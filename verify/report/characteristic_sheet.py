"""One sheet per characteristic: the evidence behind its decision.

Top to bottom: name and decision, the reasons and review notes, what the spec asks, statistics
by process, the checks (one column per check, one row per quantity, so a check reads down a
column), the diagnostics, then the charts (drawn from a helper block to the right of the
printed area).
"""

from __future__ import annotations

from openpyxl.utils import get_column_letter

from ..checks import kind
from ..model import CharacteristicResult, CheckResult, Evaluation
from .cell_styles import merge, shared_alignment, shared_font
from .cells import (
    BOX,
    DF_FORMAT,
    DIAGNOSTIC_HEADERS,
    INK,
    INT_FORMAT,
    LEVEL_FORMAT,
    NOTE_FONT,
    P_FORMAT,
    POWER_FORMAT,
    STAT_FORMAT,
    TITLE_FONT,
    WRAP,
    diagnostic_rows,
    fit_rows,
    formats_for,
    header_row,
    page_setup,
    put,
    section,
)
from .charts import BAND_ROWS, add_charts
from .hooks import own_block, report_hook
from .paper import KEEP_FIRST, apply_breaks, keep_together
from .stream_block import write_streams
from .summary import decision_style, put_decision_badge

LABEL_WIDTH = 30
SHORT_SECTION = 12  # rows: a section this short is kept whole on a page
EXTRA_FORMAT = "0.000###"
PPM_FORMAT = '[<0.1]"< 0.1";[<10]0.0;#,##0'
CHECK_WIDTH = 24
MAX_LISTED_LOTS = 40
SIDE_WORDS = {
    "two-sided": "either direction (too low or too high)",
    "lower": "downwards only (a lower value is harmful)",
    "upper": "upwards only (a higher value is harmful)",
}
ALTERNATIVE_WORDS = {
    "two-sided": "two-sided",
    "less": "one-sided: below",
    "greater": "one-sided: above",
}


def _formats(r: CheckResult, fmts: dict) -> dict:
    """The number formats of one check's column: in the data's unit unless the kind's report
    hook says otherwise (``sheet_formats``)."""
    out = {"estimate": fmts["difference"], "standard_error": STAT_FORMAT, "statistic": STAT_FORMAT,
           "critical_value": STAT_FORMAT}
    out.update(report_hook(r.check, "sheet_formats", r, fmts, default={}))
    return out


def _kind_rows(checks) -> list:
    """The rows the checks' kinds add to the table, each once, in the checks' order."""
    rows: dict = {}
    for r in checks:
        for label, get, fmt in report_hook(r.check, "sheet_rows", default=[]):
            rows.setdefault(label, (label, get, fmt))
    return list(rows.values())


def _rows_for_checks(checks, fmts):
    """(label, getter, format) for each quantity shown; rows empty for every check are dropped."""
    each = [_formats(r, fmts) for r in checks]
    est = [f["estimate"] for f in each]
    se = [f["standard_error"] for f in each]
    crit = [f["critical_value"] for f in each]
    stat = [f["statistic"] for f in each]
    spec = [
        ("What is shown", lambda r: r.hypothesis, None),
        ("Method", lambda r: r.method, None),
        ("Design", lambda r: r.design, None),
        ("Alternative", lambda r: ALTERNATIVE_WORDS.get(r.alternative, r.alternative), None),
        ("Estimate", lambda r: r.estimate, est),
        ("Standard error", lambda r: r.standard_error, se),
        ("Statistic", lambda r: r.statistic, stat),
        ("Degrees of freedom", lambda r: r.df, DF_FORMAT),
        ("p-value", lambda r: r.p_value, P_FORMAT),
        ("p-value, adjusted", lambda r: r.p_adjusted, P_FORMAT),
        # the kinds' own rows (report hook ``sheet_rows``), e.g. TOST's one-sided tests
        *_kind_rows(checks),
        ("Interval: low", lambda r: r.ci_low, est),
        ("Interval: high", lambda r: r.ci_high, est),
        ("Interval: confidence", lambda r: r.ci_level, LEVEL_FORMAT),
        ("Critical value", lambda r: r.critical_value, crit),
        # only the margin ends that exist: a one-sided check tests its harmful side alone
        (
            "Margin: low",
            lambda r: None if r.margin is None or r.alternative == "less" else r.margin[0],
            fmts["difference"],
        ),
        (
            "Margin: high",
            lambda r: None if r.margin is None or r.alternative == "greater" else r.margin[1],
            fmts["difference"],
        ),
        ("Achieved power", lambda r: r.power, POWER_FORMAT),
        ("Power of what", lambda r: r.power_note, None),
        ("Smallest shift seen at 80% power", lambda r: r.detectable_shift, fmts["difference"]),
        ("Planned n per process", lambda r: r.planned_n, INT_FORMAT),
    ]
    details = [r.details_mapping() for r in checks]
    detail_keys = list(dict.fromkeys(k for x in details for k in x))
    for k in detail_keys:
        label = EXTRA_LABELS.get(k, k.replace("_", " ").capitalize())
        spec.append((label, lambda r, k=k: r.details_mapping().get(k), None))
    rows = []
    for label, get, fmt in spec:
        values = [get(r) for r in checks]
        if all(v is None for v in values):
            continue
        fl = fmt if isinstance(fmt, list) else [fmt] * len(checks)
        # extra quantities have no known scale: whole numbers as such, others 3 to 6 decimals
        fl = [
            f
            if f is not None or not isinstance(v, (int, float)) or isinstance(v, bool)
            else (INT_FORMAT if isinstance(v, int) else EXTRA_FORMAT)
            for f, v in zip(fl, values, strict=True)
        ]
        rows.append((label, values, fl))
    return rows


EXTRA_LABELS = {
    "n_new": "n new", "n_old": "n old", "sd": "sd entering the standard error",
    "df_num": "df, numerator", "df_den": "df, denominator", "F": "F = var new / var old",
    "cp": "Cp", "cpk": "Cpk", "cpl": "Cpl", "cpu": "Cpu", "pp": "Pp", "ppk": "Ppk", "cpm": "Cpm",
    "sigma_within": "sigma, within", "sigma_overall": "sigma, overall",
    "sigma_method": "sigma, how estimated", "mean": "mean (new)", "n": "n (new parts)",
    "min_cpk": "Cpk required", "cpk_lower_95": "Cpk, lower 95% bound",
    "correlation": "correlation old/new",
    "pairs": "matched pairs used",
    "pairs_ignored": "pairs ignored",
    "mad_old": "mean abs. deviation from median, old",
    "mad_new": "mean abs. deviation from median, new",
    "sd_ratio_descriptive": "sd ratio new/old (descriptive, not the test)",
    "sd_ratio_low_descriptive": "sd ratio interval low (descriptive F)",
    "sd_ratio_high_descriptive": "sd ratio interval high (descriptive F)",
    "sd_within_lot_old": "sd within lots, old",
    "sd_within_lot_new": "sd within lots, new",
    "sd_between_lot_old": "sd between lots, old",
    "sd_between_lot_new": "sd between lots, new",
    "between_lot_ratio": "between-lot sd ratio new/old (reported only)",
    "compared": "what the spread test compares",
    "index": "capability index judged",
    "judge": "judged on",
    "min": "minimum required",
    "confidence": "confidence of the lower bound",
    "lower_bound": "lower bound of the judged index",
    "bound_df": "df behind the lower bound (effective for Cpk)",
    "coverage": "coverage: share of parts the tolerance interval holds",
    "coverage_confidence": "confidence of the tolerance interval",
    "k": "tolerance factor k (limits = mean -/+ k sd)",
    "side": "tolerance interval: two-sided or one-sided bound",
    "sd_parts": "sd (new parts)",
    "distribution": "distribution assumed",
    "within_limits": "tolerance limits within the spec limits (1 = yes)",
}


def _beyond_table(ws, row: int, c: CharacteristicResult, fmts: dict) -> int:
    """Parts beyond the specification limits per process, beside the model's ppm (the
    characteristic's distribution; its note where it gives none)."""
    procs = [(k, c.processes[k]) for k in ("old", "new") if k in c.processes]
    if not any(p.beyond_limits is not None for _k, p in procs):
        return row
    s = c.spec
    row += 1
    header_row(
        ws,
        row,
        1,
        [
            "Parts beyond the limits",
            "below " + ("none" if s.lower is None else f"{s.lower:g}"),
            "above " + ("none" if s.upper is None else f"{s.upper:g}"),
            f"expected ({c.spec.distribution} model), ppm",
            "of parts",
        ],
    )
    row += 1
    for key, p in procs:
        b = p.beyond_limits
        if b is None:
            continue
        flagged = key == "new" and b.total > 0
        font = shared_font(bold=True, color="8A4B00") if flagged else None
        put(ws, row, 1, key, border=BOX, font=font)
        put(ws, row, 2, b.below if s.lower is not None else None, fmt=INT_FORMAT, border=BOX,
            font=font)
        put(ws, row, 3, b.above if s.upper is not None else None, fmt=INT_FORMAT, border=BOX,
            font=font)
        if b.expected_ppm is None and b.note is not None:
            put(ws, row, 4, b.note, border=BOX, font=NOTE_FONT, align=WRAP)
        else:
            put(ws, row, 4, b.expected_ppm, fmt=PPM_FORMAT, border=BOX)
        put(ws, row, 5, p.n_parts, fmt=INT_FORMAT, border=BOX)
        row += 1
    return row


def _checks_table(ws, row: int, c: CharacteristicResult, checks, fmts: dict) -> int:
    """One column per check, one row per quantity, so a check reads down its column."""
    if not checks:
        put(ws, row, 1, "No checks ran for this characteristic.", font=NOTE_FONT)
        return row + 1
    put(ws, row, 1, "Check", font=shared_font(bold=True, color=INK), border=BOX)
    header_row(ws, row, 2, [r.check for r in checks])
    row += 1
    for label, values, fl in _rows_for_checks(checks, fmts):
        put(ws, row, 1, label, font=shared_font(bold=True, color=INK), border=BOX, align=WRAP)
        for j, (v, fm) in enumerate(zip(values, fl, strict=True), start=2):
            put(ws, row, j, v, fmt=fm, border=BOX, align=WRAP if isinstance(v, str) else None)
        row += 1
    put(ws, row, 1, "Margin as written", font=shared_font(bold=True, color=INK), border=BOX)
    for j, r in enumerate(checks, start=2):
        put(
            ws,
            row,
            j,
            report_hook(r.check, "margin_text", r, c.spec.side, default=None),
            border=BOX,
        )
    row += 1
    put(ws, row, 1, "Outcome", font=shared_font(bold=True, color=INK), border=BOX)
    for j, r in enumerate(checks, start=2):
        f, fo = decision_style(r.outcome)
        put(ws, row, j, r.outcome, fill=f, font=fo, border=BOX,
            align=shared_alignment(horizontal="center"))
    row += 1
    put(ws, row, 1, "Reason", font=shared_font(bold=True, color=INK), border=BOX)
    for j, r in enumerate(checks, start=2):
        put(ws, row, j, r.reason, align=WRAP, border=BOX)
    return row + 1


def write_characteristic(ws, ev: Evaluation, c: CharacteristicResult, decimals: int | None):
    """Fill one characteristic's sheet."""
    fmts = formats_for(decimals)
    n_checks = max(1, len(c.checks))
    last_col = max(8, 1 + n_checks)
    ws.column_dimensions["A"].width = LABEL_WIDTH
    for j in range(2, last_col + 1):
        ws.column_dimensions[get_column_letter(j)].width = CHECK_WIDTH if j <= 6 else 14
    unit = f" ({c.unit})" if c.unit else ""
    put(ws, 1, 1, f"{c.name}{unit}", font=TITLE_FONT)
    put_decision_badge(ws, 1, 5, c.decision, size=16)
    ws.row_dimensions[1].height = 26
    row = 2
    for reason in c.reasons:
        put(ws, row, 1, reason, align=WRAP)
        merge(ws, row, 1, row, last_col)
        row += 1
    for note in c.review:
        put(ws, row, 1, note, align=WRAP, font=shared_font(italic=True, color="8A4B00"))
        merge(ws, row, 1, row, last_col)
        row += 1

    row += 1
    sections = [row]  # first rows of the sections: each kept whole on a page where it fits
    section(ws, row, "What the spec asks")
    row += 1
    s = c.spec
    lower, upper = s.lower, s.upper
    asks = [
        ("Target", s.target, fmts["value"]),
        ("Lower limit", lower, fmts["value"]),
        ("Upper limit", upper, fmts["value"]),
        ("Harmful direction", SIDE_WORDS.get(s.side, s.side), None),
        ("Unit of analysis", ev.spec.unit_of_analysis, None),
        ("Alpha", ev.spec.alpha, "General"),
        (
            "Values recorded to",
            "unknown resolution" if decimals is None else f"{decimals} decimals",
            None,
        ),
    ]
    for label, value, fmt in asks:
        put(ws, row, 1, label, font=shared_font(bold=True, color=INK))
        put(
            ws,
            row,
            2,
            "none" if value is None else value,
            fmt=fmt,
            align=shared_alignment(horizontal="left"),
        )
        row += 1

    row += 1
    sections.append(row)
    section(ws, row, "Statistics by process")
    row += 1
    unit_name = "lots" if ev.spec.unit_of_analysis == "lot" else "parts"
    header_row(
        ws,
        row,
        1,
        ["Process", f"n ({unit_name})", "Mean", "SD", "Min", "Max", "Lots", "Measurements used"],
    )
    row += 1
    for key in ("old", "new"):
        p = c.processes.get(key)
        if p is None:
            continue
        values = [key, p.n, p.mean, p.sd, p.minimum, p.maximum, len(p.lots), p.n_parts]
        f = [
            None,
            INT_FORMAT,
            fmts["mean"],
            fmts["sd"],
            fmts["value"],
            fmts["value"],
            INT_FORMAT,
            INT_FORMAT,
        ]
        for j, (v, fm) in enumerate(zip(values, f, strict=True), start=1):
            put(ws, row, j, v, fmt=fm, border=BOX)
        row += 1
    row = _beyond_table(ws, row, c, fmts)
    if ev.spec.unit_of_analysis == "lot":
        put(
            ws,
            row,
            1,
            "n counts lots; mean and SD are of the lot means (the location checks use "
            "them); min and max are of the single values. The spread check compares the "
            "pooled within-lot variances, not the lot means.",
            font=NOTE_FONT,
        )
        row += 1
    # a line per process: both on one line ran past the printed page
    for key in ("old", "new"):
        p = c.processes.get(key)
        if p is None:
            continue
        if p.sd_within_lot is None:
            words = "not estimable (needs 2 lots of 2 or more parts)"
        else:
            zero = " (negative estimate set to 0)" if p.between_lot_set_to_zero else ""
            words = (f"sd within lots {p.sd_within_lot:.4g}, between lots "
                     f"{p.sd_between_lot:.4g}{zero}")
        put(ws, row, 1, f"Lots as variance components, {key} (one-way random-effects ANOVA, "
            f"method of moments): {words}", font=NOTE_FONT)
        row += 1
    if c.pairs is not None:
        put(ws, row, 1, f"Matched pairs: {c.pairs}", font=NOTE_FONT)
        row += 1
    if c.unmatched_pairs:
        put(
            ws,
            row,
            1,
            f"Pair keys with one side only ({len(c.unmatched_pairs)}): "
            + ", ".join(c.unmatched_pairs[:MAX_LISTED_LOTS])
            + (" ..." if len(c.unmatched_pairs) > MAX_LISTED_LOTS else ""),
            font=NOTE_FONT,
        )
        row += 1
    for key in ("old", "new"):
        p = c.processes.get(key)
        if p is None or not p.lots:
            continue
        if len(p.lots) <= MAX_LISTED_LOTS:
            text = f"Lots, {key}: " + ", ".join(p.lots)
        else:
            text = (
                f"Lots, {key}: {len(p.lots)} lots, from {p.lots[0]} to {p.lots[-1]} "
                "(every one is on the measurements sheet)"
            )
        put(ws, row, 1, text, font=NOTE_FONT)
        row += 1

    # a kind whose report hook writes a block of its own (BLOCK_TITLE, write_block) has it
    # below the table of the tests
    blocks = [r for r in c.checks if own_block(r.check) is not None]
    tests = [r for r in c.checks if own_block(r.check) is None]
    if tests or not blocks:
        row += 1
        sections.append(row)
        section(ws, row, "Checks")
        row += 1
        row = _checks_table(ws, row, c, tests, fmts)
    for r in blocks:
        hook = own_block(r.check)
        row += 1
        sections.append(row)
        section(ws, row, hook.BLOCK_TITLE)
        row += 1
        row = hook.write_block(kind(r.check), ws, row, c, r, last_col)

    if c.streams:
        row = write_streams(ws, row + 1, c, fmts, last_col)
    row += 1
    sections.append(row)
    section(ws, row, "Diagnostics (they never decide alone; a flag asks for review)")
    row += 1
    if c.diagnostics:
        header_row(ws, row, 1, DIAGNOSTIC_HEADERS)
        merge(ws, row, 7, row, last_col)
        row += 1

        def stat_format(d):
            whole = d.statistic is not None and float(d.statistic).is_integer()
            return INT_FORMAT if whole else STAT_FORMAT

        row = diagnostic_rows(ws, row, c.diagnostics, last_col, stat_format)
    else:
        put(ws, row, 1, "No diagnostics were run.", font=NOTE_FONT)
        row += 1

    fit_rows(ws)
    row += 1
    sections.append(row)
    section(ws, row, "Charts")
    row += 1
    helper_col = last_col + 3
    chart_rows = add_charts(
        ws,
        ev,
        c,
        anchor_row=row,
        helper_col=helper_col,
        formats=fmts,
        col_widths=[
            ws.column_dimensions[get_column_letter(j)].width for j in range(1, last_col + 1)
        ],
    )
    last_row = row + chart_rows
    page_setup(
        ws,
        f"A1:{get_column_letter(last_col)}{last_row}",
        landscape=True,
        footer=f"verify run {ev.run.run_id}",
    )
    # keep each short section whole and a long one's heading with its first rows,
    # and every band of charts on one page with the Charts heading before the first band
    blocks = []
    ends = [*sections[1:], last_row + 1]
    for start, nxt in zip(sections[:-1], ends[:-1], strict=True):
        # a heading with its first rows (a whole section only when it is short)
        end = nxt - 2
        blocks.append((start, end if end - start <= SHORT_SECTION else start + KEEP_FIRST))
    bands = [(row + k * BAND_ROWS, row + (k + 1) * BAND_ROWS - 1)
             for k in range(chart_rows // BAND_ROWS)]
    if bands:
        blocks.append((sections[-1], bands[0][1]))
        blocks += bands[1:]
    apply_breaks(ws, keep_together(ws, blocks, last_row=last_row, last_col=last_col))
    ws.sheet_view.showGridLines = False
