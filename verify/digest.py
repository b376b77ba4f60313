"""The morning digest of a nightly run: a small workbook, one text line per spec, progress.

The digest says, for every spec, its state on this run (ran, unchanged, error) and what changed
since its previous result: new lots and their count, a changed decision, drift from the decision
of record, and errors. :func:`write_digest` writes ``<out>/digest-<date>.xlsx`` (openpyxl, a row
per spec); :func:`summary_line` gives the plain-text line printed on stdout.
"""

from __future__ import annotations

import sys
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TextIO

from .caution import DIGEST_CAUTION

EXIT_MEANINGS = (
    (0, "every spec PASS (or unchanged since a PASS), no drift, no error"),
    (1, "some spec HOLD, or drift from a decision of record; no error"),
    (2, "some spec ERROR (bad spec or data, data outside --data-root), or the ledger is locked "
        "by another nightly run, or invalid arguments"),
    (3, "some spec PENDING (planned data still arriving); no HOLD, drift or error"),
)


@dataclass(frozen=True)
class DigestRow:
    """One spec's line of the digest."""

    name: str  # the spec's stem (its output folder's name)
    spec_path: str
    state: str  # RUN | UNCHANGED | ERROR
    decision: str | None = None
    previous_decision: str | None = None  # of the previous result, if any
    standing: str | None = None  # PROVISIONAL | RECORD | MONITORING
    record: str | None = None  # "PASS on 2025-01-02, run <id>"
    drift: bool = False
    drift_note: str | None = None
    new_lots: tuple[str, ...] = ()
    first_result: bool = False  # no previous result to compare with
    error: str | None = None
    workbook: str | None = None
    rerun_reason: str | None = None  # inputs unchanged, run again: why (its files were missing)

    def changes(self) -> list[str]:
        """What changed since the previous result, in words (empty: nothing)."""
        if self.state == "ERROR":
            return [f"error: {_first_line(self.error)}"]
        if self.state == "UNCHANGED":
            out = ["no change since the last run"]
        elif self.first_result:
            out = ["first result"]
        else:
            out = []
            if self.new_lots:
                out.append(f"{len(self.new_lots)} new lot{'s' if len(self.new_lots) > 1 else ''}"
                           f" ({_short_list(self.new_lots)})")
            if self.decision != self.previous_decision:
                out.append(f"decision {self.previous_decision} -> {self.decision}")
            if not out:
                out.append(self.rerun_reason or "inputs changed, same decision")
        if self.standing == "RECORD" and self.state == "RUN":
            out.append(f"decision of record locked: {self.decision}")
        elif self.record:
            out.append(f"decision of record {self.record}")
        elif self.standing == "PROVISIONAL":
            out.append("no decision of record yet")
        if self.drift:
            out.append(f"DRIFT: {self.drift_note}")
        return out


def _first_line(text: str | None) -> str:
    lines = [ln.strip() for ln in (text or "").splitlines() if ln.strip()]
    if not lines:
        return "(no message)"
    return lines[0] + (f" (+{len(lines) - 1} more lines)" if len(lines) > 1 else "")


def _short_list(items: Sequence[str], limit: int = 5) -> str:
    shown = ", ".join(items[:limit])
    return shown + (f", ... {len(items) - limit} more" if len(items) > limit else "")


_STATE_WORD = {"RUN": "ran", "UNCHANGED": "unchanged", "ERROR": "ERROR"}


def summary_line(row: DigestRow, width: int = 0) -> str:
    """The plain-text line of one spec: decision, state, name and what changed.

    Examples
    --------
    >>> summary_line(DigestRow("bushing", "specs/bushing.yaml", "UNCHANGED", decision="PASS"))
    'PASS     unchanged  bushing: no change since the last run'
    """
    decision = row.decision if row.state != "ERROR" else "-"
    label = f"{row.name}:"
    return (f"{decision or '-':<8} {_STATE_WORD[row.state]:<10} {label:<{width + 1}} "
            + "; ".join(row.changes()))


@dataclass
class Progress:
    """Progress on stderr: a bar redrawn in place on a terminal, plain log lines otherwise."""

    total: int
    stream: TextIO = field(default_factory=lambda: sys.stderr)
    done: int = 0

    @property
    def tty(self) -> bool:
        isatty = getattr(self.stream, "isatty", None)
        return bool(isatty and isatty())

    def step(self, row: DigestRow) -> None:
        self.done += 1
        if self.tty:
            width = 30
            filled = int(width * self.done / max(self.total, 1))
            self.stream.write(f"\rnightly [{'#' * filled}{'.' * (width - filled)}] "
                              f"{self.done}/{self.total} {row.name[:30]:<30}")
            if self.done >= self.total:
                self.stream.write("\n")
        else:
            self.stream.write(f"nightly: [{self.done}/{self.total}] {row.name}: "
                              f"{_STATE_WORD[row.state]} {row.decision or ''}".rstrip() + "\n")
        self.stream.flush()

    def note(self, text: str) -> None:
        if self.tty and 0 < self.done < self.total:
            self.stream.write("\n")
        self.stream.write(f"nightly: {text}\n")
        self.stream.flush()


_FILL = {"PASS": "C6EFCE", "HOLD": "FFC7CE", "PENDING": "FFEB9C", "ERROR": "FFC7CE"}
# the first PRINTED_COLUMNS columns are what the Digest sheet prints (a page wide, readable);
# the rest are on screen and, for each spec, on the "By spec" sheet, which prints every field
_HEADERS = ("Spec", "State", "Decision", "Previous decision", "Standing", "Drift", "New lots",
            "Decision of record", "Drift detail", "New lot ids", "What changed", "Error",
            "Workbook", "Spec file")
_WIDTHS = (24, 11, 10, 11, 13, 7, 9, 40, 40, 30, 50, 50, 40, 40)
PRINTED_COLUMNS = 7
HEADER_ROW = 5  # the table's column names (the title, run, ledger head and caution above)

WRAPPED = {"Decision of record", "Drift detail", "New lot ids", "What changed", "Error"}


def write_digest(path: Path, rows: Sequence[DigestRow], *, run: Sequence[tuple[str, str]],
                 ) -> None:
    """Write the digest workbook to ``path`` (the caller renames it into place).

    Every text cell is stored as text: a spec name or a lot id such as ``=HYPERLINK("x")``
    never becomes a formula.
    """
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, PatternFill

    from .report.cell_styles import shared_font

    wb = Workbook()
    ws = wb.active
    ws.title = "Digest"

    from .report.cells import clean_text, fit_rows

    stamps = _Stamps()

    def put(r: int, c: int, value, key=None, **style):
        if isinstance(value, str):
            value = clean_text(value)  # spec paths and messages may hold control characters
        cell = ws.cell(row=r, column=c, value=value)
        if isinstance(value, str):
            cell.data_type = "s"  # text from input files is never a formula
        if key is not None:
            stamps.apply(cell, key, style)
        else:
            for k, v in style.items():
                setattr(cell, k, v)
        return cell

    put(1, 1, "Nightly digest", font=shared_font(bold=True, size=14))
    # the run's line and the ledger head wrap within the printed columns (a long line would
    # be cut at the page's edge)
    top = Alignment(vertical="top", wrap_text=True)
    put(2, 1, "; ".join(f"{k}: {v}" for k, v in run[:3]), alignment=top)
    head = dict(run).get("ledger head")
    if head:  # printed on the page, so a paper digest anchors the ledger's hash chain
        put(3, 1, f"ledger head after this run: {head}", font=shared_font(size=9),
            alignment=top)
    from .report.cells import CAUTION_FILL

    put(4, 1, DIGEST_CAUTION, font=shared_font(size=9, bold=True), alignment=top,
        fill=PatternFill("solid", fgColor=CAUTION_FILL))
    for r in (2, 3, 4):
        ws.merge_cells(start_row=r, start_column=1, end_row=r, end_column=PRINTED_COLUMNS)
    header_row = HEADER_ROW
    for c, h in enumerate(_HEADERS, start=1):
        put(header_row, c, h, font=shared_font(bold=True),
            fill=PatternFill("solid", fgColor="D9D9D9"),
            alignment=Alignment(wrap_text=True, vertical="top"))
    drift_col = _HEADERS.index("Drift") + 1
    # (the stamps apply a kind's styles once; one alignment object per kind, not per cell)
    aligned = {wrap: Alignment(vertical="top", wrap_text=wrap) for wrap in (False, True)}
    for i, row in enumerate(rows, start=header_row + 1):
        values = _values(row)
        for c, (h, v) in enumerate(zip(_HEADERS, values, strict=True), start=1):
            wrap = h in WRAPPED
            put(i, c, v, key=("row", wrap), alignment=aligned[wrap])
        key = "ERROR" if row.state == "ERROR" else row.decision
        if key in _FILL:
            fill = PatternFill("solid", fgColor=_FILL[key])
            ws.cell(row=i, column=2 if row.state == "ERROR" else 3).fill = fill
        if row.drift:
            ws.cell(row=i, column=drift_col).fill = PatternFill("solid", fgColor=_FILL["HOLD"])
    for c, w in enumerate(_WIDTHS, start=1):
        ws.column_dimensions[ws.cell(row=header_row, column=c).column_letter].width = w
    # rows as tall as their wrapped text (the header's "Previous decision" takes two lines):
    # spreadsheet programs do not grow them on opening the file
    fit_rows(ws)
    last = header_row + max(len(rows), 1)
    ws.auto_filter.ref = f"A{header_row}:{ws.cell(row=last, column=len(_HEADERS)).coordinate}"
    ws.freeze_panes = ws.cell(row=header_row + 1, column=2)
    from openpyxl.utils import get_column_letter

    from .report.cells import page_setup

    page_setup(ws, f"A1:{get_column_letter(PRINTED_COLUMNS)}{last}", landscape=False,
               title_rows=f"{header_row}:{header_row}",
               footer="every field of every spec: sheet By spec")
    _by_spec(wb.create_sheet("By spec"), rows)

    info = wb.create_sheet("Run")
    for r, (k, v) in enumerate(run, start=1):
        info.cell(row=r, column=1, value=k).font = shared_font(bold=True)
        cell = info.cell(row=r, column=2, value=v)
        if isinstance(v, str):
            cell.data_type = "s"
    r = len(run) + 2
    info.cell(row=r, column=1, value="Exit status").font = shared_font(bold=True)
    for code, meaning in EXIT_MEANINGS:
        r += 1
        info.cell(row=r, column=1, value=code)
        info.cell(row=r, column=2, value=meaning)
    info.column_dimensions["A"].width = 18
    info.column_dimensions["B"].width = 100
    for row_cells in info.iter_rows(min_row=1, max_row=r):
        for cell in row_cells:  # a label reads beside the top of its value
            cell.alignment = Alignment(vertical="top", wrap_text=cell.column == 2)
    fit_rows(info)  # a wrapped value (the ledger head's line, an exit status) gets its lines
    page_setup(info, f"A1:B{r}", landscape=False, footer="the run")
    # saved as the report workbooks are (every sheet's cells written as XML, the document's
    # times the run's start): about half of openpyxl's own save, at the end of the run
    from .report.sheet_xml import release, save
    from .report.xlsx_fast import zip_time

    save(wb, [], Path(path), timestamp=zip_time(dict(run).get("started") or ""))
    release(wb)


class _Stamps:
    """Cell styles set once per kind of cell, then copied to the cells of that kind.

    openpyxl hashes and compares a style object against its registry on every assignment;
    copying the first cell's style ids (what the assignments stored) gives every later cell of
    the kind the same styles, in the same file, without that work.
    """

    def __init__(self):
        self._ids: dict = {}

    def apply(self, cell, key, style: dict) -> None:
        """Give ``cell`` (fresh, unstyled) the styles in ``style`` (attribute: value), which are
        the same for every cell of ``key``."""
        from copy import copy

        ids = self._ids.get(key)
        if ids is None:
            for k, v in style.items():
                setattr(cell, k, v)
            self._ids[key] = copy(cell._style)
        else:
            cell._style = copy(ids)


def _values(row: DigestRow) -> tuple:
    """The row's cells in _HEADERS order."""
    by = {
        "Spec": row.name, "State": _STATE_WORD[row.state], "Decision": row.decision or "",
        "Previous decision": row.previous_decision or "", "Standing": row.standing or "",
        "Drift": "yes" if row.drift else "no", "New lots": len(row.new_lots),
        "Decision of record": row.record or "", "Drift detail": row.drift_note or "",
        "New lot ids": ", ".join(row.new_lots), "What changed": "; ".join(row.changes()),
        "Error": row.error or "", "Workbook": row.workbook or "", "Spec file": row.spec_path,
    }
    return tuple(by[h] for h in _HEADERS)


def _by_spec(ws, rows: Sequence[DigestRow]) -> None:
    """Every field of every spec as label and value, a block per spec kept on one page."""
    from openpyxl.styles import Alignment

    from .report.cell_styles import shared_font
    from .report.cells import ROW_HEIGHT_MAX, SECTION_FONT, page_setup
    from .report.paper import keep_sections

    ws.column_dimensions["A"].width = 22
    ws.column_dimensions["B"].width = 80
    stamps = _Stamps()
    label_style = {"font": shared_font(bold=True), "alignment": Alignment(vertical="top")}
    value_style = {"alignment": Alignment(vertical="top", wrap_text=True, horizontal="left")}
    r = 1
    for row in rows:
        cell = ws.cell(row=r, column=1, value=row.name)
        cell.data_type, cell.font = "s", SECTION_FONT
        r += 1
        for h, v in zip(_HEADERS[1:], _values(row)[1:], strict=True):
            if v in ("", None):
                continue
            stamps.apply(ws.cell(row=r, column=1, value=h), "label", label_style)
            cell = ws.cell(row=r, column=2, value=v)
            if isinstance(v, str):
                cell.data_type = "s"  # text from input files is never a formula
            stamps.apply(cell, "value", value_style)
            lines = sum(max(1, -(-len(part) // 90)) for part in str(v).split("\n"))
            ws.row_dimensions[r].height = min(ROW_HEIGHT_MAX, 15 * lines)
            r += 1
        r += 1
    last = max(1, r - 2)
    page_setup(ws, f"A1:B{last}", landscape=False, footer="every field, by spec")
    keep_sections(ws, last_row=last, last_col=2, whole=True)
