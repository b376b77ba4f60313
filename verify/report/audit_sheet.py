"""The audit sheet: which data, which rules and which software produced the decision.

Sections: the run (id, times, user, host, command line), the software (tool version, git
commit, library versions), the spec (file and sha256), each data file (path, sha256, size,
rows read, used, excluded with reasons), unmatched pairs and other loading notes, every
resolved parameter with whether it came from a default, the decision rules in words and the
caution.
"""

from __future__ import annotations

from ..model import Evaluation
from .cell_styles import cell_at, merge, shared_alignment, shared_font, style
from .cells import (
    INK,
    INT_FORMAT,
    NOTE_FONT,
    ROW_HEIGHT_MAX,
    TITLE_FONT,
    WRAP,
    fit_rows,
    header_row,
    page_setup,
    put,
    section,
)
from .paper import keep_sections

_LABEL = shared_font(bold=True, color=INK)


def _pairs(ws, row: int, items) -> int:
    for label, value in items:
        put(ws, row, 1, label, font=_LABEL)
        put(ws, row, 2, value, fmt=INT_FORMAT if isinstance(value, int) else None, align=WRAP)
        row += 1
    return row


def _table_pairs(table) -> tuple:
    """The characteristics table (characteristics_from), when the spec names one."""
    if table is None:
        return ()
    where = str(table.file) + (f" (sheet {table.sheet})" if table.sheet else "")
    return (("Characteristics table", table.file_text),
            ("Characteristics table sha256", table.sha256),
            ("Characteristics table rows", table.rows),
            ("Characteristics table resolved path", where))


def write_audit(ws, ev: Evaluation) -> None:
    ws.column_dimensions["A"].width = 34
    ws.column_dimensions["B"].width = 70
    for col, w in zip("CDEFGH", (14, 12, 12, 12, 12, 48), strict=True):
        ws.column_dimensions[col].width = w
    put(ws, 1, 1, "Audit trail", font=TITLE_FONT)
    put(ws, 2, 1, "Everything needed to trace this decision and to replay the run.", font=NOTE_FONT)
    # the caution first: a heading at the foot of a page cannot lose it there
    put(ws, 3, 1, ev.caution, font=shared_font(bold=True, color=INK), align=WRAP)
    merge(ws, 3, 1, 3, 8)
    ws.row_dimensions[3].height = 15 * max(2, -(-len(ev.caution) // 170))
    run = ev.run
    row = 5
    section(ws, row, "Run")
    row = _pairs(
        ws,
        row + 1,
        (
            ("Run id", run.run_id),
            ("Started (UTC)", run.started),
            ("Finished (UTC)", run.finished),
            ("User", run.user),
            ("Host", run.host),
            ("Command line", run.command),
            ("Final run (--final)", "yes" if ev.final else "no"),
            ("Data snapshots", ev.snapshots.note if ev.snapshots else "not recorded"),
        ),
    )
    row += 1
    section(ws, row, "Software")
    items = [
        ("verify version", run.tool_version),
        ("git commit", run.git_commit or "(not run from a git checkout)"),
    ]
    items += [(f"{k} version", v) for k, v in run.versions.items()]
    row = _pairs(ws, row + 1, items)
    row += 1
    section(ws, row, "Spec")
    row = _pairs(
        ws,
        row + 1,
        (
            ("Spec file", str(ev.spec.path)),
            ("Spec sha256", ev.spec.sha256),
            ("Format", ev.spec.format),
            ("Title", ev.spec.title),
            ("Change id", ev.spec.change_id or ""),
            ("Supersedes reason", ev.spec.supersedes_reason or ""),
            ("Spec text", "verbatim on the sheet 'Spec text'"),
            *_table_pairs(ev.spec.characteristics_table),
        ),
    )
    row += 1
    section(ws, row, "Data files")
    row += 1
    header_row(
        ws,
        row,
        1,
        [
            "Path (as in the spec)",
            "sha256",
            "Size (bytes)",
            "Rows read",
            "Rows used",
            "Rows excluded",
            "Encoding",
            "Resolved path / sheet",
        ],
    )
    row += 1
    for f in ev.measurements.files:
        where = f.resolved_path + (f" (sheet {f.sheet})" if f.sheet else "")
        values = [
            f.path,
            f.sha256,
            f.size,
            f.rows_read,
            f.rows_used,
            f.rows_excluded,
            f.encoding,
            where,
        ]
        for j, v in enumerate(values, start=1):
            put(ws, row, j, v, fmt=INT_FORMAT if isinstance(v, int) else None, align=WRAP)
        row += 1
        if ev.snapshots is not None:
            put(ws, row, 1, "  snapshot", font=NOTE_FONT)
            put(ws, row, 2, ev.snapshots.path_of(f.sha256) or "none kept", align=WRAP)
            row += 1
        for key, value in _source_lines(f.origin):
            put(ws, row, 1, f"  {key}", font=NOTE_FONT)
            put(ws, row, 2, value, align=WRAP)
            row += 1
        for reason, n in f.exclusions:
            put(ws, row, 1, "  excluded", font=NOTE_FONT)
            put(ws, row, 2, reason, align=WRAP)
            put(ws, row, 3, n, fmt=INT_FORMAT)
            put(ws, row, 4, "measurements", font=NOTE_FONT)
            row += 1
    if not ev.measurements.files:
        put(ws, row, 1, "No data files.", font=NOTE_FONT)
        row += 1

    row += 1
    section(ws, row, "Corrections declared in the spec (the data file is untouched)")
    row += 1
    from .json_result import corrections

    fixes = corrections(ev)
    if fixes:
        header_row(ws, row, 1, ["Source row / part", "Characteristic (column)", "Original text",
                                "Corrected to", "Reason", "By"])
        row += 1
        for k in fixes:
            where = f"row {k['source_row']}" + (f", part {k['part']}" if k["part"] else "")
            for j, v in enumerate((where, f"{k['characteristic']} ({k['column']})",
                                   k["original"], k["value"], k["reason"], k["by"]), start=1):
                put(ws, row, j, v, align=WRAP)
            row += 1
    else:
        put(ws, row, 1, "None.", font=NOTE_FONT)
        row += 1
    trace = ev.spec.data
    if trace.part is not None or trace.keep:
        row += 1
        section(ws, row, "Traceability")
        row = _pairs(ws, row + 1, (
            ("Part column (data.part)", trace.part or "(none)"),
            ("Kept columns (data.keep)", ", ".join(trace.keep) or "(none)"),
            ("Where", "on the Measurements sheet, beside each measurement"),
        ))

    row += 1
    section(ws, row, "Exclusions declared in the spec")
    row += 1
    if ev.spec.exclude:
        header_row(ws, row, 1, ["Reason", "By", "Lot", "Row", "Spec line", "Part"])
        row += 1
        for e in ev.spec.exclude:
            for j, v in enumerate((e.reason, e.by, e.lot, e.row, e.line, e.part), start=1):
                put(ws, row, j, v, align=WRAP)
            row += 1
    else:
        put(ws, row, 1, "None.", font=NOTE_FONT)
        row += 1

    row += 1
    section(ws, row, "Unmatched pairs and other loading notes")
    row += 1
    any_note = False
    for c in ev.characteristics:
        if c.unmatched_pairs:
            any_note = True
            put(
                ws,
                row,
                1,
                f"{c.name}: {len(c.unmatched_pairs)} pair keys with one side only",
                font=_LABEL,
                align=WRAP,
            )
            put(ws, row, 2, ", ".join(c.unmatched_pairs), align=WRAP)
            row += 1
    if ev.measurements.unassigned_lots:
        any_note = True
        put(ws, row, 1, "Lots in neither lot list", font=_LABEL, align=WRAP)
        put(ws, row, 2, ", ".join(ev.measurements.unassigned_lots), align=WRAP)
        row += 1
    for note in ev.measurements.notes:
        any_note = True
        put(ws, row, 1, "Note", font=_LABEL)
        put(ws, row, 2, note, align=WRAP)
        row += 1
    if not any_note:
        put(ws, row, 1, "None.", font=NOTE_FONT)
        row += 1

    row += 1
    section(ws, row, "Resolved parameters")
    row += 1
    header_row(ws, row, 1, ["Key path", "Value", "From"])
    row += 1
    for key, value, is_default in ev.spec.resolved:
        put(ws, row, 1, key)
        put(ws, row, 2, value, align=WRAP)
        put(ws, row, 3, "default" if is_default else "spec")
        row += 1

    row += 1
    section(ws, row, "Decision rules")
    row += 1
    for i, rule in enumerate(ev.rules, start=1):
        put(ws, row, 1, f"Rule {i}", font=_LABEL)
        put(ws, row, 2, rule, align=WRAP)
        merge(ws, row, 2, row, 8)
        ws.row_dimensions[row].height = min(ROW_HEIGHT_MAX, 15 * max(1, -(-len(rule) // 150)))
        row += 1
    last = row - 1
    fit_rows(ws)
    aligns = ws.parent._alignments
    top: dict[int, object] = {}  # alignment index -> the top alignment (None: already set)
    for r in range(1, last + 1):  # a label reads beside the top of its (wrapped) value
        cell = cell_at(ws, r, 1)  # (as ws.cell: created when missing)
        if cell._value is None:
            continue
        st = cell._style
        a = 0 if st is None else st[5]
        align = top.get(a, False)
        if align is False:
            old = aligns[a]
            align = top[a] = (shared_alignment(vertical="top", wrap_text=old.wrap_text)
                              if old.vertical is None else None)
        if align is not None:
            style(cell, align=align)
    page_setup(ws, f"A1:H{last}", landscape=True, footer=f"verify run {ev.run.run_id}")
    keep_sections(ws, last_row=last, last_col=8)


def _source_lines(origin: dict | None) -> list[tuple[str, str]]:
    """What the audit trail says of a SQL source: the rows came from this query, on this
    server, and their canonical CSV (hashed above) is kept beside the result as its snapshot."""
    if not origin:
        return []
    import json

    out = [("source", "SQL query; the sha256 above is that of the fetched rows as canonical "
            "CSV, kept beside the JSON result as <result>.rows.csv for replay"),
           ("query", str(origin.get("query", ""))),
           ("url", str(origin.get("url") or "") + (f" (from ${origin['url_env']})"
                                                   if origin.get("url_env") else "")),
           ("server", str(origin.get("server", "")))]
    if origin.get("params"):
        out.append(("params", json.dumps(origin["params"], ensure_ascii=False, sort_keys=True)))
    return out
