"""The Excel workbook: :func:`write_workbook` turns an Evaluation into the engineer's deliverable.

Sheets, in order:

1. the decision sheet (:data:`~verify.report.layout.SUMMARY_SHEET`), one landscape page;
2. one sheet per characteristic, named from the characteristic by Excel's rules;
3. the measurements sheet(s) (:data:`~verify.report.layout.MEASUREMENTS_SHEET`, then
   ``Measurements (2)`` ... beyond Excel's row limit), an Excel table with a filter;
4. the spec text (:data:`~verify.report.layout.SPEC_SHEET`), verbatim;
5. the audit trail (:data:`~verify.report.layout.AUDIT_SHEET`);
6. the recheck sheet (:data:`~verify.report.layout.RECHECK_SHEET`) with live formulas;
7. with ``record_json``, a very hidden sheet ``_record`` holding the JSON result.

Reading back (:func:`read_spec_text`, :func:`read_record`)
----------------------------------------------------------
*Spec text*: column A holds the lines of ``Spec.text.split("\\n")`` from A1 down, one per row,
an empty line as an empty cell; cell :data:`SPEC_LINE_COUNT_CELL` holds their number N. The
text is ``"\\n".join`` of A1..AN (empty cells as ""). A trailing newline is the empty last
line; a carriage return stays in its line.

*Record*: column A of ``_record`` holds the JSON in chunks of at most 32,000 characters (UTF-16
code units) from A1 down; :data:`RECORD_CHUNK_COUNT_CELL` holds their number. The JSON is the
concatenation.

Determinism: the document's created/modified properties and every zip entry's timestamp come
from ``Evaluation.run.started``, never the clock, so the same Evaluation gives the same file.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

from .. import collector
from ..model import Evaluation
from .audit_sheet import write_audit
from .cell_styles import cell_at, row_dimension, set_formula
from .cells import EXCEL_CELL_MAX, XML_ILLEGAL, clean_text, page_setup, put, sheet_name
from .characteristic_sheet import write_characteristic
from .details_sheet import DETAILS_SHEET, details_placeholder, per_characteristic_sheets
from .layout import (
    AUDIT_SHEET,
    EXCEL_MAX_ROWS,
    MEASUREMENTS_SHEET,
    RECHECK_SHEET,
    SPEC_SHEET,
    SUMMARY_SHEET,
    MeasurementLayout,
    measurement_layout,
)
from .measurements_sheet import add_placeholders, decimals_by_characteristic
from .recheck import HELPER_HEADING, recheck_rows
from .safe_text import escape_json_for_xml, has_xml_illegal, xml_safe_evaluation
from .sheet_xml import release, save
from .styles import StyleBook
from .summary import DECISION_COLOURS, write_summary
from .xlsx_fast import StreamedSheet, t_element, zip_time

RECORD_SHEET = "_record"
RECORD_CHUNK = 32_000
RECORD_CHUNK_COUNT_CELL = "B1"
SPEC_LINE_COUNT_CELL = "C2"


@collector.paused()  # (a burst of objects: see verify.collector)
def write_workbook(
    evaluation: Evaluation,
    path,
    *,
    record_json: str | None = None,
    rows_per_sheet: int = EXCEL_MAX_ROWS - 1,
    detail: str = "auto",
) -> None:
    """Write the workbook for one evaluation.

    Parameters
    ----------
    evaluation : Evaluation
        The only input: every number, word and decision comes from it.
    path : str or Path
        Where to write (the caller writes to a temporary name and renames).
    record_json : str, optional
        The JSON result to embed on the very hidden sheet ``_record`` (read by replay).
    rows_per_sheet : int
        Data rows per measurements sheet; Excel's limit less the header unless a test wants
        continuation sheets sooner.
    detail : {"auto", "full", "compact"}
        A sheet per characteristic ("full"), or the one streamed Details sheet ("compact");
        "auto" writes sheets up to :data:`~verify.report.details_sheet.DETAIL_SHEETS_MAX`
        characteristics and the Details sheet beyond.

    Examples
    --------
    >>> from tests.factory import make_evaluation  # doctest: +SKIP
    >>> write_workbook(make_evaluation("welch"), "cc-2025-0117.xlsx")  # doctest: +SKIP
    """
    from openpyxl import Workbook

    # every text from the spec and the data, made safe for the workbook's XML in one place
    # (the JSON result keeps the original text)
    ev = xml_safe_evaluation(evaluation)
    layout = measurement_layout(ev, rows_per_sheet=rows_per_sheet)
    decimals = decimals_by_characteristic(layout.table)
    started = zip_time(ev.run.started)

    wb = Workbook()
    summary = wb.active
    summary.title = SUMMARY_SHEET
    styles = StyleBook(wb)

    taken = {
        s.lower()
        for s in (
            SUMMARY_SHEET,
            SPEC_SHEET,
            AUDIT_SHEET,
            RECHECK_SHEET,
            RECORD_SHEET,
            "_styles_scratch",
            *layout.sheets,
        )
    }
    char_sheets: dict[str, str] = {}
    sheets_each = per_characteristic_sheets(len(ev.characteristics), detail)
    details = None
    if not sheets_each:
        # a large layout: one streamed Details sheet instead of a sheet per characteristic
        details = wb.create_sheet(sheet_name(DETAILS_SHEET, taken, fallback="Details 1"))
        char_sheets = {c.name: details.title for c in ev.characteristics}
    for i, c in enumerate(ev.characteristics if sheets_each else (), start=1):
        title = sheet_name(c.name, taken, fallback=f"Characteristic {i}")
        char_sheets[c.name] = title
        ws = wb.create_sheet(title)
        ws.sheet_properties.tabColor = DECISION_COLOURS.get(c.decision, ("7F7F7F",))[0]
        if c.spec.pass_fail:
            from .pass_fail_sheet import write_pass_fail  # the pass-fail kind's own sheet

            write_pass_fail(ws, ev, c)
        else:
            write_characteristic(ws, ev, c, decimals.get(c.name))

    streamed: list[StreamedSheet] = add_placeholders(wb, layout, styles, decimals)
    if details is not None:
        streamed.append(details_placeholder(details, ev, styles))

    spec_ws = wb.create_sheet(SPEC_SHEET)
    streamed.append(_spec_placeholder(spec_ws, ev.spec.text, styles))

    write_audit(wb.create_sheet(AUDIT_SHEET), ev)
    recheck_body = _write_recheck(wb.create_sheet(RECHECK_SHEET), ev, layout)
    if recheck_body is not None:
        streamed.append(recheck_body)

    if record_json is not None:
        rec = wb.create_sheet(RECORD_SHEET)
        rec.sheet_state = "veryHidden"
        streamed.append(_record_placeholder(rec, record_json))

    summary.sheet_properties.tabColor = DECISION_COLOURS.get(ev.decision, ("7F7F7F",))[0]
    write_summary(
        summary, ev, sheet_names=char_sheets, measurement_sheets=layout.sheets, decimals=decimals
    )
    styles.close()
    wb.active = 0

    props = wb.properties
    props.created = props.modified = started
    props.creator = props.lastModifiedBy = f"verify {ev.run.tool_version}"
    props.title = clean_text(ev.spec.title)
    props.subject = clean_text(ev.spec.change_id or "")
    props.description = clean_text(f"run {ev.run.run_id}: {ev.decision}")
    wb.calculation.fullCalcOnLoad = True  # formulas carry no cached values: compute on open

    save(wb, streamed, Path(path), timestamp=started)
    release(wb)


# --- spec text --------------------------------------------------------------------------------


def _spec_placeholder(ws, text: str, styles: StyleBook) -> StreamedSheet:
    lines = text.split("\n")
    for i, line in enumerate(lines, start=1):
        if len(line) > EXCEL_CELL_MAX or XML_ILLEGAL.search(line):
            # replay needs the text back exactly: refuse rather than store it altered
            raise ValueError(
                f"spec line {i} cannot be stored verbatim in a workbook cell (longer than "
                f"{EXCEL_CELL_MAX:,} characters, or a control character XML cannot carry)"
            )
    mono = styles.mono()
    ws.column_dimensions["A"].width = 100
    ws.column_dimensions["B"].width = 3
    ws.column_dimensions["C"].width = 46
    ws.sheet_view.showGridLines = False
    n = len(lines)
    notes = {
        1: "Number of lines N in column A:",
        3: "Column A holds the spec text verbatim, one line",
        4: "per row from A1; an empty cell is an empty line.",
        5: "The text is A1..AN joined with line feeds.",
    }
    last = max(n, max(notes))

    def rows() -> Iterator[str]:
        buf = []
        for i in range(1, last + 1):
            cells = ""
            line = lines[i - 1] if i <= n else ""
            if line:
                cells += f'<c r="A{i}" t="inlineStr" s="{mono}"><is>{t_element(line)}</is></c>'
            if i in notes:
                cells += f'<c r="C{i}" t="inlineStr"><is>{t_element(notes[i])}</is></c>'
            if i == 2:
                cells += f'<c r="C2"><v>{n}</v></c>'
            buf.append(f'<row r="{i}">{cells}</row>')
            if len(buf) >= 4096:
                yield "".join(buf)
                buf.clear()
        yield "".join(buf)

    page_setup(ws, f"A1:A{max(n, 1)}", landscape=False, footer="the spec text, verbatim")
    return StreamedSheet(ws.title, rows, f"A1:C{last}")


def read_spec_text(wb) -> str:
    """The spec text from an (openpyxl) workbook written by :func:`write_workbook`."""
    ws = wb[SPEC_SHEET]
    n = int(ws[SPEC_LINE_COUNT_CELL].value)
    lines = []
    for (value,) in ws.iter_rows(min_row=1, max_row=n, min_col=1, max_col=1, values_only=True):
        lines.append("" if value is None else str(value))
    return "\n".join(lines)


# --- the embedded record ----------------------------------------------------------------------


def record_chunks(text: str, limit: int = RECORD_CHUNK) -> list[str]:
    """Split text into chunks of at most ``limit`` UTF-16 code units (Excel counts those)."""
    out = []
    i = 0
    n = len(text)
    while i < n:
        j = min(n, i + limit)
        chunk = text[i:j]
        units = len(chunk.encode("utf-16-le")) // 2
        while units > limit:  # characters beyond the BMP take two units each
            j -= max(1, (units - limit + 1) // 2)
            chunk = text[i:j]
            units = len(chunk.encode("utf-16-le")) // 2
        out.append(chunk)
        i = j
    return out


def _record_placeholder(ws, record_json: str) -> StreamedSheet:
    record_json = escape_json_for_xml(record_json)
    if has_xml_illegal(record_json):  # json.dumps escapes control characters
        raise ValueError("record_json holds characters a workbook cannot store")
    chunks = record_chunks(record_json)

    def rows() -> Iterator[str]:
        for i, chunk in enumerate(chunks, start=1):
            extra = f'<c r="B1"><v>{len(chunks)}</v></c>' if i == 1 else ""
            cell = f'<c r="A{i}" t="inlineStr"><is>{t_element(chunk)}</is></c>'
            yield f'<row r="{i}">{cell}{extra}</row>'
        if not chunks:
            yield '<row r="1"><c r="B1"><v>0</v></c></row>'

    return StreamedSheet(ws.title, rows, f"A1:B{max(1, len(chunks))}")


def read_record(wb) -> str | None:
    """The embedded JSON record from an (openpyxl) workbook, or None when there is none."""
    if RECORD_SHEET not in wb.sheetnames:
        return None
    ws = wb[RECORD_SHEET]
    n = int(ws[RECORD_CHUNK_COUNT_CELL].value or 0)
    parts = []
    for (value,) in ws.iter_rows(min_row=1, max_row=n, min_col=1, max_col=1, values_only=True):
        parts.append("" if value is None else str(value))
    return "".join(parts)


# --- recheck ----------------------------------------------------------------------------------


_RECHECK_WIDTHS = (44, 21, 21, 12, 9, 64)  # the table's columns


def _write_recheck(ws, ev: Evaluation, layout: MeasurementLayout) -> StreamedSheet | None:
    """The recheck sheet: the rows above the body as cells, the body as XML rows
    (:class:`~verify.report.recheck_xml.Body`, returned for the save) unless it holds a value
    only the cell route writes (then every row is a cell, and None is returned)."""
    from .recheck import FIRST_BODY_ROW
    from .recheck_xml import Body

    rows = recheck_rows(ev, layout)
    first = FIRST_BODY_ROW - 1  # rows before the body
    body = (Body.build(rows[first:], FIRST_BODY_ROW, len(_RECHECK_WIDTHS))
            if len(rows) > first else None)
    widths: dict[int, int] = {}
    for i, values in enumerate(rows if body is None else rows[:first], start=1):
        for j, v in enumerate(values, start=1):
            if v is None:
                continue
            if isinstance(v, str):
                if len(v) > 1 and v.startswith("="):
                    set_formula(cell_at(ws, i, j), v)  # a formula, as recheck_rows asks
                    w = 14
                else:
                    put(ws, i, j, v)  # text stays text
                    w = min(60, len(v) + 2)
            else:
                put(ws, i, j, v)  # numbers keep full precision
                w = (16 if isinstance(v, (int, float)) and not isinstance(v, bool)
                     else min(60, len(str(v)) + 2))
            if w > widths.get(j, 0):
                widths[j] = w
    if body is not None:  # (the table's own columns get the table's widths below)
        for j, w in body.widths.items():
            if w > widths.get(j, 0):
                widths[j] = w
    from openpyxl.utils import get_column_letter

    for j, w in widths.items():
        ws.column_dimensions[get_column_letter(j)].width = max(10, w)
    _recheck_as_table(ws, len(rows), body)
    # the looked-up values the formulas read: grouped and folded, so the printed recheck stays
    # the computation (an auditor expands the group to see every value)
    heading = next((i for i, r in enumerate(rows, start=1) if r and isinstance(r[0], str)
                    and r[0].startswith(HELPER_HEADING)), None)
    if heading is not None:
        ws.sheet_properties.outlinePr.summaryBelow = False
        for i in range(heading + 1, len(rows) + 1):
            if body is not None and i >= FIRST_BODY_ROW:
                body.fold(i)
                continue
            dim = row_dimension(ws, i)
            dim.outlineLevel = 1
            dim.hidden = True
    if body is None:
        return None
    # the sheet's used range, as the cells would have given it (A1 is always a cell)
    columns = max(max(c for _r, c in ws._cells), body.max_column)
    return body.streamed(ws.title, f"A1:{get_column_letter(columns)}{body.last_row}")


# The Agrees cells hold comparisons. Excel shows a logical result as TRUE or FALSE whatever the
# number format; LibreOffice keeps it as 1 or 0 and shows it through the cell's number format, so
# in a General cell it printed 1 where the sheet's note says TRUE. This format (LibreOffice's own
# code for logical values) makes both print TRUE and FALSE.
AGREES_FORMAT = '"TRUE";"TRUE";"FALSE"'


def _recheck_as_table(ws, n_rows: int, body=None) -> None:
    """Print the recheck sheet as a readable table: widths, heading, grid, header repeated.

    ``body`` (a :class:`~verify.report.recheck_xml.Body`) holds the rows from
    ``FIRST_BODY_ROW`` down, styled here in the cells' order.

    (No conditional colours on the Agrees column: LibreOffice 7.4 stops converting such a
    sheet when a cell-value rule compares the logical results with TRUE.)"""
    from openpyxl.utils import get_column_letter

    from .cell_styles import merge, shared_alignment, shared_font, style
    from .cells import HEADER, HEADER_FONT, fit_rows, page_setup
    from .recheck import COLUMNS, HEADER_ROW, SUMMARY_ROW

    for j, w in enumerate(_RECHECK_WIDTHS, start=1):
        ws.column_dimensions[get_column_letter(j)].width = w
    for j in range(1, len(COLUMNS) + 1):
        style(ws.cell(HEADER_ROW, j), font=HEADER_FONT, fill=HEADER,
              align=shared_alignment(wrap_text=True, vertical="bottom"))
    style(ws.cell(1, 1), font=shared_font(bold=True, size=13))
    if all(ws.cell(2, j).value is None for j in range(2, len(COLUMNS) + 1)):
        # the explanation line: wrapped across the table's width
        merge(ws, 2, 1, 2, len(COLUMNS))
        style(ws.cell(2, 1), align=shared_alignment(wrap_text=True, vertical="top"))
    # each distinct style looked up once per workbook, not per cell (cell_styles)
    bold, centre = shared_font(bold=True), shared_alignment(horizontal="center")
    wrap_top = shared_alignment(wrap_text=True, vertical="top")
    cells = ws._cells

    def value(r: int, c: int):  # without creating the cell (an empty one is not saved)
        cell = cells.get((r, c))
        return None if cell is None else cell.value

    last = n_rows if body is None else HEADER_ROW
    for r in (SUMMARY_ROW, *range(HEADER_ROW + 1, last + 1)):
        if isinstance(value(r, 1), str) and value(r, 2) is None and value(r, 3) is None:
            style(cells[r, 1], font=bold)  # a block's heading: the characteristic or check
        style(cell_at(ws, r, 5), fmt=AGREES_FORMAT, align=centre)
        style(cell_at(ws, r, 6), align=wrap_top)
    if body is not None:
        body.style_rows(ws, bold=bold, agrees={"fmt": AGREES_FORMAT, "align": centre},
                        wrap_top=wrap_top)
    fit_rows(ws)
    if body is not None:
        body.fit(ws)
    ws.freeze_panes = f"A{HEADER_ROW + 1}"
    ws.print_options.gridLines = True
    page_setup(
        ws,
        f"A1:{get_column_letter(len(COLUMNS))}{max(n_rows, HEADER_ROW)}",
        landscape=True,
        title_rows=f"{HEADER_ROW}:{HEADER_ROW}",
        footer="live formulas against the engine's numbers",
    )


__all__ = ["write_workbook", "read_spec_text", "read_record", "RECORD_SHEET", "MEASUREMENTS_SHEET"]
