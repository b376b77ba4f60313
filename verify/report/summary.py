"""The decision sheet: one landscape page an engineer, a quality reviewer and an auditor read first.

Top to bottom: what was verified, the overall decision in a large coloured cell, a row per
characteristic, the notes that qualify a decision (review notes, trials smaller than planned,
monitoring, multiplicity, continued measurement sheets), the caution, and a blank sign-off block.
"""

from __future__ import annotations

from openpyxl.styles import Border, Font, PatternFill, Side
from openpyxl.styles.cell_style import StyleArray
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.hyperlink import Hyperlink

from ..model import CharacteristicResult, CheckResult, Evaluation
from .cell_styles import alignment_of, merge, shared_alignment, shared_fill, shared_font, style
from .cells import (
    BOX,
    CAUTION_EDGE,
    CAUTION_FILL,
    DECISION_COLOURS,
    INK,
    INT_FORMAT,
    NOTE_FONT,
    OUTCOME_TINTS,
    TITLE_FONT,
    WRAP,
    fit_rows,
    header_row,
    page_setup,
    put,
    quote_sheet,
    section,
)
from .decision_cells import beyond_text, cell_outcome, cell_text, check_kinds, heading
from .hooks import has_report, report_hook

# up to this many characteristics the decision sheet prints on one page; beyond it the table
# runs over pages with its header repeated
ONE_PAGE_CHARACTERISTICS = 12
# the "Why" cell lists at most this many characteristics that did not pass (HOLD first): a
# cell is one row, and 300 lines would run off the printed page; the rest are counted there
# and every reason stands in the Reasons block below the table (one row each)
WHY_LINES = 12
DECISION_CELL_NAME = "overall_decision"  # a defined name: where the overall decision is

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
    return shared_fill("solid", fgColor=fill), shared_font(bold=True, color=text)


def put_decision_badge(ws, row: int, col: int, decision: str, size: int) -> PatternFill:
    """Write ``decision`` as a large centred cell in its colours; return the fill."""
    fill, font = decision_style(decision)
    put(
        ws,
        row,
        col,
        decision,
        fill=fill,
        font=shared_font(bold=True, size=size, color=font.color),
        align=shared_alignment(horizontal="center", vertical="center"),
    )
    return fill


DRIFT_COLOURS = ("5B4B8A", "FFFFFF")  # drift: neither a decision's colour nor the caution's


def sign_off_withheld(ev: Evaluation) -> str | None:
    """Why this workbook carries no sign-off block, or None when it does.

    Only the workbook of the run that made the decision of record is signed; a monitoring
    or provisional nightly workbook says where the one to sign is (or will be).
    """
    st = ev.standing
    if st is None or st.kind == "RECORD":
        return None
    if st.kind == "MONITORING":
        return (f"This is a monitoring workbook and is not for sign-off. The decision of record "
                f"is {st.decision}, made on {(st.decided or '')[:10]} by run {st.run_id}; sign "
                "the workbook of that run. These newer data are shown for monitoring only"
                + (" and would decide differently (drift): raise it with the change owner."
                   if st.drift else "."))
    return ("This is a provisional workbook and is not for sign-off: no decision of record is "
            "locked yet (the plan is not complete). The workbook of the run that locks it "
            "carries the sign-off block.")


def _decision_cell(ws, ev: Evaluation, badge: tuple[int, int]) -> None:
    """The large decision cell: on a monitoring workbook the decision of record (its date and
    run id), with what these newer data would decide beneath it as drift, in its own colour."""
    c0, c1 = badge
    st = ev.standing
    if st is None or st.kind != "MONITORING":
        label = "Overall decision" if st is None else (
            "Decision of record (this run)" if st.kind == "RECORD"
            else "Provisional (no record yet)")
        put(ws, 2, c0, label, font=shared_font(bold=True, color=INK))
        merge(ws, 2, c0, 2, c1)
        fill = put_decision_badge(ws, 3, c0, ev.decision, size=26)
        _name_cell(ws, DECISION_CELL_NAME, 3, c0)
        merge(ws, 3, c0, 6, c1)
        for r in range(3, 7):
            for col in range(c0, c1 + 1):
                style(ws.cell(r, col), fill=fill)
        return
    put(ws, 2, c0, "Decision of record", font=shared_font(bold=True, color=INK))
    merge(ws, 2, c0, 2, c1)
    fill = put_decision_badge(ws, 3, c0, st.decision or "", size=26)
    _name_cell(ws, DECISION_CELL_NAME, 3, c0)
    merge(ws, 3, c0, 4, c1)
    for r in range(3, 5):
        for col in range(c0, c1 + 1):
            style(ws.cell(r, col), fill=fill)
    put(ws, 5, c0, f"on {(st.decided or '')[:10]}, run {st.run_id}", align=WRAP,
        font=shared_font(bold=True, color=INK, size=9))
    merge(ws, 5, c0, 5, c1)
    if st.drift:
        text, fill_hex, ink = (f"DRIFT: these newer data would decide {ev.decision}",
                               *DRIFT_COLOURS)
    else:
        text, fill_hex, ink = (f"no drift: these newer data also decide {ev.decision}",
                               "FFFFFF", INK)
    put(ws, 6, c0, text, align=WRAP, fill=shared_fill("solid", fgColor=fill_hex),
        font=shared_font(bold=True, color=ink))
    merge(ws, 6, c0, 6, c1)
    for col in range(c0, c1 + 1):
        style(ws.cell(6, col), fill=shared_fill("solid", fgColor=fill_hex))


def why_text(ev: Evaluation, limit: int = WHY_LINES) -> str:
    """The decision page's "Why": the leading reason of each characteristic that did not pass,
    HOLD before the others (each group in the characteristics' order), at most ``limit``
    lines; beyond them one line counts the rest by decision and points to the Reasons block,
    which lists them all.

    ``ev.reasons`` holds one line per characteristic not PASS, ``"<name>: <decision> - ..."``.
    """
    if not ev.reasons:
        return "Every characteristic passed."
    if len(ev.reasons) <= limit:
        return "\n".join(ev.reasons)
    heads = [(f"{c.name}: {c.decision} - ", c.decision) for c in ev.characteristics
             if c.decision != "PASS"]

    def decision(line: str) -> str:
        return next((d for head, d in heads if line.startswith(head)), "other")

    lines = [(decision(text), k, text) for k, text in enumerate(ev.reasons)]
    shown = sorted(lines, key=lambda x: (x[0] != "HOLD", x[1]))[: limit - 1]
    kept = {k for _, k, _ in shown}
    rest = [d for d, k, _ in lines if k not in kept]
    counts = ", ".join(f"{rest.count(d)} {d}"
                       for d in dict.fromkeys(sorted(rest, key=lambda d: d != "HOLD")))
    return "\n".join([text for _, k, text in lines if k in kept] + [
        f"... and {len(rest)} more characteristics not passing ({counts}): every reason is "
        "listed under Reasons below the table"])


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


def check_n(c: CharacteristicResult, r: CheckResult) -> int | None:
    """The n a check rests on: as the kind's report hook says (``rests_on``; e.g. the smaller
    process for a comparison), else the new process's."""
    if has_report(r.check, "rests_on"):
        return report_hook(r.check, "rests_on", c, r)
    ns = [p.n for k, p in c.processes.items() if k == "new"]
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


def _columns(ev: Evaluation, kinds: list[str]) -> list[tuple[str, float]]:
    """(header, width) of the characteristics table: fixed columns, a column per check kind."""
    unit_w = max(6, *(len(c.unit) + 2 for c in ev.characteristics)) if ev.characteristics else 6
    fixed = [("Characteristic", 24), ("Unit", min(unit_w, 24)), ("n old", 7), ("n new", 7)]
    tail = [("Parts beyond limits\n(seen; model, ppm)", 24), ("Decision", 11)]
    room = 165 - sum(w for _h, w in fixed + tail)
    check_w = min(40, max(25, room / max(1, len(kinds))))
    return fixed + [(heading(k), check_w) for k in kinds] + tail


def _groups(widths: list[float], first: int, shares: list[float]) -> list[tuple[int, int]]:
    """Split columns first..len(widths) into consecutive groups near the given width shares."""
    cols = list(range(first, len(widths) + 1))
    total = sum(widths[c - 1] for c in cols)
    out, start, acc, goal = [], cols[0], 0.0, 0.0
    for k, share in enumerate(shares):
        goal += share * total
        left = len(shares) - k - 1
        end = start
        acc += widths[end - 1]
        while end < cols[-1] - left and acc + widths[end] / 2 < goal:
            end += 1
            acc += widths[end - 1]
        if k == len(shares) - 1:
            end = cols[-1]
        out.append((start, end))
        start = end + 1
    return out


def write_summary(
    ws, ev: Evaluation, *, sheet_names: dict[str, str], measurement_sheets, decimals: dict
) -> int:
    """Fill the decision sheet; return its last row.

    ``sheet_names`` maps characteristic name -> its sheet; ``decimals`` maps characteristic
    name -> the decimals its values were recorded to (number formats only).
    """
    kinds = check_kinds(ev)
    columns = _columns(ev, kinds)
    last_col = len(columns)
    widths = [w for _h, w in columns]
    for j, w in enumerate(widths, start=1):
        ws.column_dimensions[get_column_letter(j)].width = w
    title = "Process change verification"
    if ev.spec.title:
        title += f": {ev.spec.title}"
    put(ws, 1, 1, title, font=TITLE_FONT)
    ws.row_dimensions[1].height = 24

    # the top block: what was verified, and the overall decision in the last two columns;
    # below them, why, across the page
    badge = (last_col - 1, last_col)
    info = (
        ("Change", ev.spec.change_id or "(no change id in the spec)"),
        ("Spec file", str(ev.spec.path)),
        ("Run (UTC)", f"{ev.run.started} to {ev.run.finished}"),
        ("Run id", ev.run.run_id),
        ("Planned n", _plan_words(ev)),
    )
    for i, (label, value) in enumerate(info, start=2):
        put(ws, i, 1, label, font=shared_font(bold=True, color=INK))
        put(ws, i, 2, value, align=shared_alignment(vertical="top"))
        merge(ws, i, 2, i, badge[0] - 2)
    # the overall decision: a large coloured cell (on a monitoring workbook, the decision of
    # record; these data's own outcome shows only as drift, in its own colour)
    _decision_cell(ws, ev, badge)
    reasons = why_text(ev)
    put(ws, 7, 1, "Why", font=shared_font(bold=True, color=INK),
        align=shared_alignment(vertical="top"))
    put(ws, 7, 2, reasons, align=WRAP, font=shared_font(bold=True, color=INK))
    merge(ws, 7, 2, 7, last_col)

    row = 9
    section(ws, row, "Characteristics: every check, with the number that decided it")
    row += 1
    header = row
    header_row(ws, row, 1, [h for h, _w in columns])
    row += 1
    boxed: dict = {}
    for c in ev.characteristics:
        _characteristic_row(ws, row, c, ev, kinds, sheet_names.get(c.name),
                            decimals.get(c.name), boxed)
        row += 1
    table_end = row - 1
    # a sortable, filterable table (no merged cells inside it); its header repeats on paper
    ws.auto_filter.ref = f"A{header}:{get_column_letter(last_col)}{table_end}"
    ws.print_title_rows = f"{header}:{header}"
    ws.freeze_panes = f"B{header + 1}"

    blocks: list[tuple[str, list[str], Font | None]] = [
        (
            "Reasons",
            [f"{c.name} ({c.decision}): " + "; ".join(c.reasons) for c in ev.characteristics],
            None,
        )
    ]
    if ev.review:
        blocks.append(("Review notes (diagnostics never decide alone)", list(ev.review), None))
    notes = planning_notes(ev)
    if notes:
        blocks.append(("Trials smaller than planned", notes, None))
    if ev.monitoring:
        blocks.append(("Monitoring", [ev.monitoring], shared_font(bold=True, color=INK)))
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
                shared_font(bold=True, color=INK),
            )
        )
    breaks = []
    for title_text, lines, font in blocks:
        row += 1
        section(ws, row, title_text)
        row += 1
        for line in lines:
            put(ws, row, 1, line, align=WRAP, font=font)
            merge(ws, row, 1, row, last_col)
            row += 1

    # the caution, prominent
    row += 1
    caution_row = row
    edge = Side(style="medium", color=CAUTION_EDGE)
    box = Border(left=edge, right=edge, top=edge, bottom=edge)
    put(
        ws,
        row,
        1,
        ev.caution,
        font=shared_font(bold=True, size=12, color=INK),
        fill=shared_fill("solid", fgColor=CAUTION_FILL),
        align=shared_alignment(wrap_text=True, vertical="center"),
    )
    merge(ws, row, 1, row, last_col)
    for col in range(1, last_col + 1):
        style(ws.cell(row, col), border=box)
        style(ws.cell(row, col), fill=shared_fill("solid", fgColor=CAUTION_FILL))
    ws.row_dimensions[row].height = max(34, _height(ev.caution, 170, 16))
    row += 2

    not_for_signing = sign_off_withheld(ev)
    if not_for_signing is not None:
        # only the workbook of the run that made the decision of record is signed
        section(ws, row, "Not for sign-off")
        row += 1
        put(ws, row, 1, not_for_signing, align=WRAP, font=shared_font(bold=True, color=INK))
        merge(ws, row, 1, row, last_col)
        ws.row_dimensions[row].height = _height(not_for_signing, 200)
        row += 1
    else:
        section(ws, row, "Sign-off (complete by hand or in the change-control system)")
        row += 1
        groups = _groups(widths, 2, [0.22, 0.40, 0.22, 0.16])
        labels = ["Name", "What this signature means", "Signature", "Date"]
        header_row(ws, row, 1, ["Role"])
        for (a, b), label in zip(groups, labels, strict=True):
            header_row(ws, row, a, [label] + [""] * (b - a))
            if b > a:
                merge(ws, row, a, row, b)
        row += 1
        for role, meaning in SIGN_OFF:
            put(ws, row, 1, role, font=shared_font(bold=True, color=INK), align=WRAP)
            put(ws, row, groups[1][0], meaning, align=WRAP, font=NOTE_FONT)
            for a, b in groups:
                if b > a:
                    merge(ws, row, a, row, b)
            for col in range(1, last_col + 1):
                style(ws.cell(row, col), border=BOX)
            ws.row_dimensions[row].height = 44
            row += 1
    last = row - 1
    fit_rows(ws)
    # keep the caution and the sign-off together: a page break before the caution when the
    # sheet runs over a page (a long table of characteristics)
    if len(ev.characteristics) > ONE_PAGE_CHARACTERISTICS:
        breaks.append(caution_row - 1)
    page_setup(
        ws,
        f"A1:{get_column_letter(last_col)}{last}",
        landscape=True,
        one_page=len(ev.characteristics) <= ONE_PAGE_CHARACTERISTICS,
        footer=f"verify run {ev.run.run_id}",
        row_breaks=breaks,
    )
    ws.print_options.horizontalCentered = True
    ws.sheet_view.showGridLines = False
    return last


def _name_cell(ws, name: str, row: int, col: int) -> None:
    """A workbook-level defined name for one cell: readers find it wherever the layout puts it."""
    from openpyxl.workbook.defined_name import DefinedName

    ref = f"{quote_sheet(ws.title)}!${get_column_letter(col)}${row}"
    ws.parent.defined_names[name] = DefinedName(name, attr_text=ref)


def decision_cell(wb):
    """The overall decision cell of a workbook written by verify (openpyxl cell)."""
    dn = wb.defined_names[DECISION_CELL_NAME]
    sheet, coord = next(iter(dn.destinations))
    return wb[sheet][coord.replace("$", "")]


def _height(text: str, chars_per_line: int, per_line: float = 15.0) -> float:
    lines = sum(max(1, -(-len(part) // chars_per_line)) for part in text.split("\n"))
    return max(15.0, per_line * lines)


def _characteristic_row(
    ws,
    row: int,
    c: CharacteristicResult,
    ev: Evaluation,
    kinds: list[str],
    sheet: str | None,
    decimals: int | None,
    boxed: dict,
) -> None:
    """One characteristic's row of the table. ``boxed`` remembers, for this workbook, the
    style each starting style ends with once boxed and aligned to the top (each distinct step
    is taken once, at its first cell, as the cell route takes it)."""
    # differences and intervals one decimal finer than the values were recorded
    d = (4 if decimals is None else decimals) + 1
    old, new = c.processes.get("old"), c.processes.get("new")
    name_cell = put(ws, row, 1, c.name, align=WRAP)
    if sheet is not None:
        name_cell.hyperlink = Hyperlink(
            ref=name_cell.coordinate, location=f"{quote_sheet(sheet)}!A1"
        )
        style(name_cell, font=shared_font(color="245E7A", underline="single"))
    put(ws, row, 2, c.unit, align=WRAP)
    put(ws, row, 3, old.n if old else None, fmt=INT_FORMAT)
    put(ws, row, 4, new.n if new else None, fmt=INT_FORMAT)
    by_kind = {r.check: r for r in c.checks}
    col = 5
    for kind in kinds:
        r = by_kind.get(kind)
        if r is None:
            put(ws, row, col, "not run", font=NOTE_FONT, align=WRAP)
        else:
            # the tint of the worst of the pooled check and its streams (the cell's first line)
            tint = shared_fill("solid",
                               fgColor=OUTCOME_TINTS.get(cell_outcome(c, r)[0], "FFFFFF"))
            put(ws, row, col, cell_text(c, r, ev, d), fill=tint, align=WRAP,
                font=shared_font(color=INK))
        col += 1
    text, flagged = beyond_text(c)
    put(ws, row, col, text, align=WRAP,
        fill=shared_fill("solid", fgColor=OUTCOME_TINTS["PENDING"]) if flagged else None,
        font=shared_font(bold=flagged, color=INK))
    col += 1
    fill, font = decision_style(c.decision)
    put(ws, row, col, c.decision, fill=fill, font=font,
        align=shared_alignment(horizontal="center", vertical="top"))
    for j in range(1, col + 1):
        cell = ws.cell(row, j)
        start = cell._style
        key = None if start is None else start.tobytes()
        done = boxed.get(key)
        if done is not None:  # the same steps from the same style give the same style
            cell._style = StyleArray(done)
            continue
        style(cell, border=BOX)
        a = alignment_of(cell)
        if a.vertical is None:
            style(cell, align=shared_alignment(vertical="top", horizontal=a.horizontal,
                                               wrap_text=a.wrap_text))
        boxed[key] = StyleArray(cell._style)
