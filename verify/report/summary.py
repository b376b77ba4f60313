"""The decision sheet: one landscape page an engineer, a quality reviewer and an auditor read first.

Top to bottom: what was verified, the overall decision in a large coloured cell, a row per
characteristic, the notes that qualify a decision (review notes, trials smaller than planned,
monitoring, multiplicity, continued measurement sheets), the caution, and a blank sign-off block.
"""

from __future__ import annotations

from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.hyperlink import Hyperlink

from ..model import CharacteristicResult, CheckResult, Evaluation
from .cells import (
    BOX,
    CAUTION_EDGE,
    CAUTION_FILL,
    DECISION_COLOURS,
    INK,
    NOTE_FONT,
    P_FORMAT,
    TITLE_FONT,
    WRAP,
    fit_rows,
    formats_for,
    header_row,
    put,
    quote_sheet,
    section,
)

COLUMNS = (
    # header, width
    ("Characteristic", 24),
    ("Unit", 7),
    ("n old", 7),
    ("n new", 7),
    ("Mean old", 11),
    ("Mean new", 11),
    ("Check shown", 17),
    ("Shift", 11),
    ("Margin", 10),
    ("Interval low", 11),
    ("Interval high", 11),
    ("p-value", 9),
    ("Decision", 11),
    ("Reason", 58),
)
LAST_COL = len(COLUMNS)

SIGN_OFF = (
    (
        "Process engineer",
        "I have reviewed the evidence in this workbook together with the engineering reasons "
        "for the change, and I judge the changed process technically sound.",
    ),
    (
        "Quality engineer",
        "I have checked that the data, the exclusions and the decision rules are those of the "
        "approved plan, and I accept the decision recorded here.",
    ),
    (
        "Change approver",
        "I release (or refuse) the change under the change-control procedure, weighing this "
        "evidence with every other review the procedure requires.",
    ),
)


def decision_style(decision: str) -> tuple[PatternFill, Font]:
    fill, text = DECISION_COLOURS.get(decision, ("7F7F7F", "FFFFFF"))
    return PatternFill("solid", fgColor=fill), Font(bold=True, color=text)


def put_decision_badge(ws, row: int, col: int, decision: str, size: int) -> PatternFill:
    """Write ``decision`` as a large centred cell in its colours; return the fill."""
    fill, font = decision_style(decision)
    put(
        ws,
        row,
        col,
        decision,
        fill=fill,
        font=Font(bold=True, size=size, color=font.color),
        align=Alignment(horizontal="center", vertical="center"),
    )
    return fill


def main_check(c: CharacteristicResult) -> CheckResult | None:
    """The check the summary row shows: the shift, else the target, else the first."""
    for kind in ("shift", "target"):
        for r in c.checks:
            if r.check == kind:
                return r
    return c.checks[0] if c.checks else None


def _plan_words(ev: Evaluation) -> str:
    min_n = ev.spec.min_n_text
    unit = {"part": "parts", "lot": "lots"}.get(ev.spec.unit_of_analysis, "units")
    if min_n is not None and ev.spec.min_n_old is not None:  # a plan per process
        return (f"{unit}: {min_n}" + ("; final run" if ev.final else
                                      "; below it a characteristic is PENDING"))
    if min_n is None:
        return "none declared (min_n): the checks decide on the data there are"
    if ev.final:
        return f"{min_n} {unit} per process; final run: the checks decide on the data there are"
    return f"{min_n} {unit} (or pairs) per process; below it a characteristic is PENDING"


def margin_text(margin: tuple[float, float] | None, side: str = "two-sided") -> str:
    """The margin as a reader needs it: only the harmful side counts for side lower/upper."""
    if margin is None:
        return "none"
    low, high = margin
    if side == "lower":
        return f"not below {low:+g}"
    if side == "upper":
        return f"not above {high:+g}"
    if abs(low + high) <= 1e-12 * max(abs(low), abs(high), 1.0):
        return f"±{high:g}"
    return f"{low:+g} to {high:+g}"


def rate_limit_text(r: CheckResult) -> str:
    """A pass-fail check's criterion: "max 1%" (rate) or "below +0.5 points" (rate_shift)."""
    if r.check == "rate" and r.extra.get("max") is not None:
        return f"max {100 * r.extra['max']:g}%"
    if r.check == "rate_shift" and r.extra.get("margin") is not None:
        return f"below +{100 * r.extra['margin']:g} points"
    return "none (exact test)" if r.check == "rate_shift" else "none"


def check_n(c: CharacteristicResult, r: CheckResult) -> int | None:
    """The n a check rests on: the smaller process for a comparison, the new one otherwise."""
    if r.check == "shift" and c.pairs is not None:
        return c.pairs
    ns = [p.n for k, p in c.processes.items() if r.check == "shift" or k == "new"]
    return min(ns) if ns else None


def planning_notes(ev: Evaluation) -> list[str]:
    """A note for each PASS that rests on fewer units than the plan asks, with its power."""
    notes = []
    unit = "lots" if ev.spec.unit_of_analysis == "lot" else "parts"
    for c in ev.characteristics:
        for r in c.checks:
            n = check_n(c, r)
            if r.outcome != "PASS" or r.planned_n is None or n is None or n >= r.planned_n:
                continue
            text = (
                f"{c.name}, {r.check}: PASS rests on {n} {unit} per process; the plan asks "
                f"for {r.planned_n} to reach {ev.spec.plan.power:.0%} power."
            )
            if r.power is not None:
                text += f" Achieved power {r.power:.1%}"
                text += f" ({r.power_note})." if r.power_note else "."
            notes.append(text)
    return notes


def multiplicity_text(ev: Evaluation) -> list[str]:
    out = []
    uses_margin = any(r.margin is not None for c in ev.characteristics for r in c.checks)
    family = ", ".join(ev.family) if ev.family else "none"
    if ev.spec.multiplicity == "none":
        out.append(
            "Multiplicity: none. Each test that holds on significance (a difference test, a "
            f"check without a margin, or a spread test) is judged on its own p-value at alpha = "
            f"{ev.spec.alpha:g}. These tests: {family}."
        )
    else:
        m = len(ev.family)
        out.append(
            f"Multiplicity: {ev.spec.multiplicity} adjustment across all characteristics of "
            f"the family of {m} test(s) that hold on significance (difference tests and spread "
            f"tests): {family}. The adjusted p-value is compared with alpha = "
            f"{ev.spec.alpha:g}; their intervals, critical values and power use alpha / {m}."
        )
    if ev.family_excluded:
        out.append(
            "Left out of the family because they cannot be computed (each HOLDs with its "
            "reason): " + ", ".join(ev.family_excluded) + "."
        )
    if uses_margin:
        out.append(
            "Equivalence tests (checks with a margin) need no adjustment: the change passes "
            "only if every one of them passes (an intersection-union test), so the chance of "
            f"passing a change that is not equivalent stays at most alpha = {ev.spec.alpha:g}."
        )
    return out


def write_summary(
    ws, ev: Evaluation, *, sheet_names: dict[str, str], measurement_sheets, decimals: dict
) -> int:
    """Fill the decision sheet; return its last row.

    ``sheet_names`` maps characteristic name -> its sheet; ``decimals`` maps characteristic
    name -> the decimals its values were recorded to (number formats only).
    """
    for j, (_h, width) in enumerate(COLUMNS, start=1):
        ws.column_dimensions[get_column_letter(j)].width = width
    title = "Process change verification"
    if ev.spec.title:
        title += f": {ev.spec.title}"
    put(ws, 1, 1, title, font=TITLE_FONT)
    ws.row_dimensions[1].height = 24

    info = (
        ("Change", ev.spec.change_id or "(no change id in the spec)"),
        ("Spec file", str(ev.spec.path)),
        ("Run (UTC)", f"{ev.run.started} to {ev.run.finished}"),
        ("Run id", ev.run.run_id),
        (
            "Planned n",
            _plan_words(ev),
        ),
    )
    for i, (label, value) in enumerate(info, start=2):
        put(ws, i, 1, label, font=Font(bold=True, color=INK))
        put(ws, i, 2, value)
        ws.merge_cells(start_row=i, start_column=2, end_row=i, end_column=7)

    # the overall decision: a large coloured cell
    put(ws, 2, 9, "Overall decision", font=Font(bold=True, color=INK))
    ws.merge_cells(start_row=2, start_column=9, end_row=2, end_column=11)
    fill = put_decision_badge(ws, 3, 9, ev.decision, size=26)
    ws.merge_cells(start_row=3, start_column=9, end_row=6, end_column=11)
    for r in range(3, 7):
        for col in range(9, 12):
            ws.cell(r, col).fill = fill
    reasons = "\n".join(ev.reasons) if ev.reasons else "Every characteristic passed."
    put(ws, 2, 13, "Why", font=Font(bold=True, color=INK))
    put(ws, 3, 13, reasons, align=WRAP)
    ws.merge_cells(start_row=3, start_column=13, end_row=6, end_column=14)

    row = 8
    section(ws, row, "Characteristics")
    row += 1
    header_row(ws, row, 1, [h for h, _w in COLUMNS])
    ws.row_dimensions[row].height = 30
    row += 1
    for c in ev.characteristics:
        _characteristic_row(ws, row, c, sheet_names.get(c.name), decimals.get(c.name))
        row += 1

    blocks: list[tuple[str, list[str], Font | None]] = []
    if ev.review:
        blocks.append(("Review notes (diagnostics never decide alone)", list(ev.review), None))
    notes = planning_notes(ev)
    if notes:
        blocks.append(("Trials smaller than planned", notes, None))
    if ev.monitoring:
        blocks.append(("Monitoring", [ev.monitoring], Font(bold=True, color=INK)))
    blocks.append(("Multiplicity", multiplicity_text(ev), None))
    if len(measurement_sheets) > 1:
        blocks.append(
            (
                "Measurements continued",
                [
                    f"The {ev.measurements.table.shape[0]:,} measurements exceed one sheet "
                    "(Excel holds at most 1,048,576 rows) and continue over "
                    f"{len(measurement_sheets)} sheets: {', '.join(measurement_sheets)}. "
                    "None are left out."
                ],
                Font(bold=True, color=INK),
            )
        )
    for title_text, lines, font in blocks:
        row += 1
        section(ws, row, title_text)
        row += 1
        for line in lines:
            put(ws, row, 1, line, align=WRAP, font=font)
            ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=LAST_COL)
            ws.row_dimensions[row].height = _height(line, 200)
            row += 1

    # the caution, prominent
    row += 1
    edge = Side(style="medium", color=CAUTION_EDGE)
    box = Border(left=edge, right=edge, top=edge, bottom=edge)
    put(
        ws,
        row,
        1,
        ev.caution,
        font=Font(bold=True, size=12, color=INK),
        fill=PatternFill("solid", fgColor=CAUTION_FILL),
        align=Alignment(wrap_text=True, vertical="center"),
    )
    ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=LAST_COL)
    for col in range(1, LAST_COL + 1):
        ws.cell(row, col).border = box
        ws.cell(row, col).fill = PatternFill("solid", fgColor=CAUTION_FILL)
    ws.row_dimensions[row].height = max(34, _height(ev.caution, 170, 16))
    row += 2

    section(ws, row, "Sign-off (complete by hand or in the change-control system)")
    row += 1
    header_row(ws, row, 1, ["Role", "Name", "", "", "", "", "What this signature means"])
    header_row(ws, row, 11, ["Signature", "", "Date", ""])
    ws.merge_cells(start_row=row, start_column=2, end_row=row, end_column=6)
    ws.merge_cells(start_row=row, start_column=7, end_row=row, end_column=10)
    ws.merge_cells(start_row=row, start_column=11, end_row=row, end_column=12)
    ws.merge_cells(start_row=row, start_column=13, end_row=row, end_column=14)
    row += 1
    for role, meaning in SIGN_OFF:
        put(ws, row, 1, role, font=Font(bold=True, color=INK), align=WRAP)
        put(ws, row, 7, meaning, align=WRAP, font=NOTE_FONT)
        ws.merge_cells(start_row=row, start_column=2, end_row=row, end_column=6)
        ws.merge_cells(start_row=row, start_column=7, end_row=row, end_column=10)
        ws.merge_cells(start_row=row, start_column=11, end_row=row, end_column=12)
        ws.merge_cells(start_row=row, start_column=13, end_row=row, end_column=14)
        for col in range(1, LAST_COL + 1):
            ws.cell(row, col).border = BOX
        ws.row_dimensions[row].height = 44
        row += 1

    last = row - 1
    fit_rows(ws)
    ws.print_area = f"A1:{get_column_letter(LAST_COL)}{last}"
    ws.page_setup.orientation = "landscape"
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 1
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.print_options.horizontalCentered = True
    ws.page_margins.left = ws.page_margins.right = 0.4
    ws.page_margins.top = ws.page_margins.bottom = 0.5
    ws.oddFooter.left.text = f"verify run {ev.run.run_id}"
    ws.oddFooter.right.text = "page &P of &N"
    ws.sheet_view.showGridLines = False
    return last


def _height(text: str, chars_per_line: int, per_line: float = 15.0) -> float:
    lines = sum(max(1, -(-len(part) // chars_per_line)) for part in text.split("\n"))
    return max(15.0, per_line * lines)


def _characteristic_row(
    ws, row: int, c: CharacteristicResult, sheet: str | None, decimals: int | None
) -> None:
    r = main_check(c)
    fmts = formats_for(decimals)
    old, new = c.processes.get("old"), c.processes.get("new")
    name_cell = put(ws, row, 1, c.name, align=WRAP)
    if sheet is not None:
        name_cell.hyperlink = Hyperlink(
            ref=name_cell.coordinate, location=f"{quote_sheet(sheet)}!A1"
        )
        name_cell.font = Font(color="245E7A", underline="single")
    put(ws, row, 2, c.unit)
    put(ws, row, 3, old.n if old else None)
    put(ws, row, 4, new.n if new else None)
    put(ws, row, 5, old.mean if old else None, fmt=fmts["mean"])
    put(ws, row, 6, new.mean if new else None, fmt=fmts["mean"])
    if r is not None:
        shown = r.check + (f", {r.method}" if r.method else "")
        put(ws, row, 7, shown, align=WRAP)
        # pass-fail: rates and their differences are fractions, shown as percentages
        efmt = "0.00%" if c.spec.pass_fail else fmts["shift"]
        put(ws, row, 8, r.estimate, fmt=efmt)
        put(ws, row, 9, rate_limit_text(r) if c.spec.pass_fail
            else margin_text(r.margin, c.spec.side))
        put(ws, row, 10, r.ci_low, fmt=efmt)
        put(ws, row, 11, r.ci_high, fmt=efmt)
        p = r.p_adjusted if r.p_adjusted is not None else r.p_value
        put(ws, row, 12, p, fmt=P_FORMAT)
    fill, font = decision_style(c.decision)
    put(ws, row, 13, c.decision, fill=fill, font=font, align=Alignment(horizontal="center"))
    reason = "; ".join(c.reasons)
    put(ws, row, 14, reason, align=WRAP)
    for col in range(1, LAST_COL + 1):
        ws.cell(row, col).border = BOX
        if ws.cell(row, col).alignment.vertical is None:
            ws.cell(row, col).alignment = Alignment(
                vertical="top", horizontal=ws.cell(row, col).alignment.horizontal
            )
    shown = "" if r is None else f"{r.check}, {r.method}"
    ws.row_dimensions[row].height = max(30, _height(reason, 64), _height(shown, 18))
