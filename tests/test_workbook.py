"""The Excel workbook: sheets, content, text safety, round trips, continuation, determinism.

Expected values come from the Evaluation the factory built (tests/factory.py computes every
statistic with numpy/scipy); the workbook must carry them unrounded. Excel's limits (31
characters and no []:*?/\\ in a sheet name, 1,048,576 rows, 32,767 characters a cell) are
Microsoft's published specifications; "common practice" marks the rest.
"""

from __future__ import annotations

import dataclasses
import json
import math
import shutil
import subprocess
from pathlib import Path

import openpyxl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from openpyxl.utils import get_column_letter

from tests.factory import make_evaluation
from verify.report import layout as L
from verify.report import workbook as workbook_module
from verify.report.cells import put, resolution_decimals, sheet_name
from verify.report.summary import decision_cell
from verify.report.workbook import (
    RECORD_SHEET,
    read_record,
    read_spec_text,
    record_chunks,
    write_workbook,
)

FORBIDDEN = set("[]:*?/\\")
INJECTIONS = ['=HYPERLINK("x")', "+1", "-1", "@SUM(A1)", "#N/A", "=1+1", " padded lot "]


def _write(ev, tmp_path, name="out.xlsx", **kw) -> Path:
    path = tmp_path / name
    write_workbook(ev, path, **kw)
    return path


@pytest.fixture(scope="module")
def all_book(tmp_path_factory):
    """The four-characteristic evaluation and its workbook, written once for many tests."""
    ev = make_evaluation("all", seed=3, monitoring="monitoring; decision of record: PASS")
    path = tmp_path_factory.mktemp("wb") / "all.xlsx"
    write_workbook(ev, path, record_json=json.dumps({"format": "verify-result/1"}))
    return ev, path, openpyxl.load_workbook(path)


def _all_text(ws) -> str:
    return "\n".join(str(v) for row in ws.iter_rows(values_only=True) for v in row if v is not None)


# --- sheets -----------------------------------------------------------------------------------


def test_sheets_present_in_order(all_book):
    ev, _path, wb = all_book
    names = [c.name for c in ev.characteristics]
    assert wb.sheetnames == [
        L.SUMMARY_SHEET,
        *names,
        L.MEASUREMENTS_SHEET,
        L.SPEC_SHEET,
        L.AUDIT_SHEET,
        L.RECHECK_SHEET,
        RECORD_SHEET,
    ]
    assert wb[RECORD_SHEET].sheet_state == "veryHidden"
    assert wb.active.title == L.SUMMARY_SHEET


def test_characteristic_sheet_names_follow_excel_rules(tmp_path):
    long_bad = "Bore [Ø]: left/right * top? \\ bottom, measured at three heights"
    ev = make_evaluation("welch", name=long_bad)
    wb = openpyxl.load_workbook(_write(ev, tmp_path))
    title = wb.sheetnames[1]
    # Excel: at most 31 characters, none of []:*?/\ (Microsoft, Excel specifications)
    assert len(title) <= 31
    assert not FORBIDDEN & set(title)
    assert title.startswith("Bore _Ø__ left_right _ top_")
    # the summary links to the sheet and names the characteristic in full
    summary = wb[L.SUMMARY_SHEET]
    cell = next(c for row in summary.iter_rows() for c in row if c.value == long_bad)
    assert cell.hyperlink.location == f"'{title}'!A1"


def test_sheet_name_clashes_and_reserved():
    taken = {s.lower() for s in (L.SUMMARY_SHEET, L.MEASUREMENTS_SHEET)}
    a = sheet_name("x" * 40, taken)
    b = sheet_name("x" * 40, taken)
    assert a == "x" * 31 and b == "x" * 27 + " (2)"
    assert sheet_name("measurements", taken) == "measurements (2)"
    assert sheet_name("History", taken) == "History (2)"  # Excel reserves it: common practice
    assert sheet_name("'quoted'", taken) == "quoted"
    assert sheet_name("///", taken) == "___"
    assert sheet_name("   ", taken, fallback="Characteristic 1") == "Characteristic 1"


@settings(max_examples=60, deadline=None)
@given(st.lists(st.text(min_size=0, max_size=45), min_size=1, max_size=6))
def test_sheet_name_always_valid_and_unique(names):
    taken: set[str] = set()
    out = [sheet_name(n, taken, fallback="Sheet") for n in names]
    for s in out:
        assert 1 <= len(s) <= 31
        assert not FORBIDDEN & set(s)
        assert not s.startswith("'") and not s.endswith("'")
    assert len({s.lower() for s in out}) == len(out)


# --- summary ----------------------------------------------------------------------------------


def test_summary_content(all_book):
    ev, _path, wb = all_book
    ws = wb[L.SUMMARY_SHEET]
    text = _all_text(ws)
    assert ev.spec.title in text and ev.spec.change_id in text
    assert str(ev.spec.path) in text and ev.run.started in text
    for c in ev.characteristics:
        assert c.name in text
        assert "; ".join(c.reasons) in text
    for note in ev.review:
        assert note in text
    assert ev.caution in text
    assert ev.monitoring in text
    assert "intersection-union" in text  # margins are used in this spec
    assert "holm" in text
    for role in ("Process engineer", "Quality engineer", "Change approver"):
        assert role in text
    assert "Signature" in text and "Date" in text


def test_summary_decision_cell(all_book):
    ev, _path, wb = all_book
    cell = decision_cell(wb)
    assert cell.parent.title == L.SUMMARY_SHEET
    assert cell.value == ev.decision
    assert cell.font.sz >= 20
    merged = next(r for r in cell.parent.merged_cells.ranges if cell.coordinate in r)
    assert merged.size["rows"] == 4 and merged.size["columns"] == 2
    fills = {"PASS": "2E7D57", "HOLD": "A3392B", "PENDING": "E3A72F"}
    assert cell.fill.fgColor.rgb.endswith(fills[ev.decision])


@pytest.mark.parametrize("decision", ["PASS", "HOLD", "PENDING"])
def test_decision_cell_colour_per_decision(tmp_path, decision):
    ev = make_evaluation("pooled", n_old=8, n_new=8, decision=decision)
    cell = decision_cell(openpyxl.load_workbook(_write(ev, tmp_path)))
    fills = {"PASS": "2E7D57", "HOLD": "A3392B", "PENDING": "E3A72F"}
    assert cell.value == decision
    assert cell.fill.fgColor.rgb.endswith(fills[decision])


def _table(ws):
    """The characteristics table of the decision sheet: {header: column}, {name: row}."""
    head = next(r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value == "Characteristic")
    cols = {
        ws.cell(head, j).value: j
        for j in range(1, ws.max_column + 1)
        if ws.cell(head, j).value
    }
    rows = {}
    r = head + 1
    while ws.cell(r, 1).value:
        rows[ws.cell(r, 1).value] = r
        r += 1
    return head, cols, rows


def test_summary_has_a_column_per_check_kind(all_book):
    ev, _path, wb = all_book
    ws = wb[L.SUMMARY_SHEET]
    head, cols, rows = _table(ws)
    kinds = list(dict.fromkeys(k.check for c in ev.characteristics for k in c.checks))
    assert len(kinds) >= 4
    check_headers = [h for h in cols if h.split("\n")[0].lower() in kinds]
    assert [h.split("\n")[0].lower() for h in check_headers] == kinds
    tints = {"PASS": "DDEFE4", "HOLD": "F5D6D1", "PENDING": "FBEBC7"}
    for c in ev.characteristics:
        by_kind = {k.check: k for k in c.checks}
        for h in check_headers:
            cell = ws.cell(rows[c.name], cols[h])
            k = by_kind.get(h.split("\n")[0].lower())
            if k is None:
                assert cell.value == "not run"
                continue
            # the outcome first, in its colour, then the number that decided it
            assert str(cell.value).split("\n")[0] == k.outcome
            assert cell.fill.fgColor.rgb.endswith(tints[k.outcome])
            if k.check in ("target", "shift") and k.margin is not None:
                assert "interval" in cell.value and "margin" in cell.value
            if k.check == "spread":
                assert f"{k.estimate:.3f}" in cell.value and f"{k.ci_low:.3f}" in cell.value
            if k.check == "capability":
                assert f"{k.estimate:.2f}" in cell.value
                minimum = k.details.min if k.details is not None else k.critical_value
                assert f"{minimum:.2f}" in cell.value
        assert ws.cell(rows[c.name], cols["Decision"]).value == c.decision
    # sortable: an autofilter over exactly the table; its header repeats on every printed page
    assert ws.auto_filter.ref == f"A{head}:{get_column_letter(len(cols))}{head + len(rows)}"
    assert ws.print_title_rows.replace("$", "") == f"{head}:{head}"


def test_one_sided_margin_names_only_its_side(tmp_path):
    ev = make_evaluation("all", seed=3)
    wb = openpyxl.load_workbook(_write(ev, tmp_path))
    ws = wb[L.SUMMARY_SHEET]
    _head, cols, rows = _table(ws)
    shift_col = next(j for h, j in cols.items() if h.startswith("Shift"))
    for c in ev.characteristics:
        k = next((k for k in c.checks if k.check == "shift" and k.margin is not None), None)
        if k is None:
            continue
        text = ws.cell(rows[c.name], shift_col).value
        if k.alternative == "greater":
            assert "not below" in text and "±" not in text
        elif k.alternative == "less":
            assert "not above" in text and "±" not in text


def test_summary_p_values_use_one_format(all_book):
    from verify.decide import fmt_p
    from verify.report.cells import P_FORMAT

    # the number format shows what decide.fmt_p writes in sentences: 4 decimals, "< 0.0001"
    # below; checked by reading the two sections of the format
    tiny, plain = P_FORMAT.split(";")
    assert tiny.startswith("[<0.0001]") and tiny.endswith('"< 0.0001"')
    assert fmt_p(3.9e-13) == "< 0.0001" and plain == "0.0000" and fmt_p(0.01234) == "0.0123"
    _ev, _path, wb = all_book
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if "E+" in str(cell.number_format):
                    raise AssertionError(f"{ws.title}!{cell.coordinate}: {cell.number_format}")


def test_units_are_never_cut(tmp_path):
    ev = make_evaluation("all", seed=3)
    c0 = dataclasses.replace(ev.characteristics[0], unit="N/15 mm per strip")
    ev = dataclasses.replace(ev, characteristics=(c0, *ev.characteristics[1:]))
    ws = openpyxl.load_workbook(_write(ev, tmp_path))[L.SUMMARY_SHEET]
    _head, cols, _rows = _table(ws)
    width = ws.column_dimensions[get_column_letter(cols["Unit"])].width
    assert width >= len("N/15 mm per strip")


def test_summary_prints_on_one_landscape_page(all_book):
    _ev, _path, wb = all_book
    ws = wb[L.SUMMARY_SHEET]
    assert ws.page_setup.orientation == "landscape"
    assert ws.sheet_properties.pageSetUpPr.fitToPage is True
    assert ws.page_setup.fitToWidth == 1 and ws.page_setup.fitToHeight == 1
    assert ws.print_area is not None and "$A$1:$" in ws.print_area
    assert "&A" in ws.oddFooter.left.text and "&P" in ws.oddFooter.right.text


def test_summary_of_many_characteristics_runs_over_pages(tmp_path):
    ev = make_evaluation("all", seed=3)
    many = tuple(
        dataclasses.replace(ev.characteristics[i % len(ev.characteristics)], name=f"dim_{i:03d}")
        for i in range(300)
    )
    ev = dataclasses.replace(ev, characteristics=many)
    ws = openpyxl.load_workbook(_write(ev, tmp_path))[L.SUMMARY_SHEET]
    head, _cols, rows = _table(ws)
    assert len(rows) == 300
    assert ws.page_setup.fitToHeight == 0  # as many pages as it takes, full width
    assert ws.print_title_rows.replace("$", "") == f"{head}:{head}"
    assert not any(r.min_row > head and r.min_row <= head + 300 for r in ws.merged_cells.ranges)


def test_summary_notes_trial_smaller_than_planned(tmp_path):
    ev = make_evaluation("paired")
    c = ev.characteristics[0]
    shift = next(k for k in c.checks if k.check == "shift")
    assert shift.outcome == "PASS"
    bigger = dataclasses.replace(shift, planned_n=500, power=0.41)
    checks = tuple(bigger if k is shift else k for k in c.checks)
    ev = dataclasses.replace(ev, characteristics=(dataclasses.replace(c, checks=checks),))
    text = _all_text(openpyxl.load_workbook(_write(ev, tmp_path))[L.SUMMARY_SHEET])
    assert "PASS rests on 30 parts per process; the plan asks for 500" in text
    assert "Achieved power 41.0%" in text


def test_no_nan_none_or_inf_text_anywhere(all_book):
    _ev, _path, wb = all_book
    for ws in wb.worksheets:
        for row in ws.iter_rows(values_only=True):
            for v in row:
                if isinstance(v, str):
                    # Python's spellings of missing values; our own word "none" is fine
                    assert v.strip() not in ("nan", "NaN", "None", "inf", "-inf")
                if isinstance(v, float):
                    assert math.isfinite(v)


# --- characteristic sheets --------------------------------------------------------------------


def test_characteristic_sheet_content_and_charts(all_book):
    ev, _path, wb = all_book
    c = ev.characteristics[0]
    ws = wb[c.name]
    assert ws["A1"].value == f"{c.name} ({c.unit})"
    assert ws["E1"].value == c.decision
    text = _all_text(ws)
    for r in c.checks:
        assert r.hypothesis in text and r.method in text and r.reason in text
    for d in c.diagnostics:
        assert d.method in text and d.note in text
    # every number of a check is stored exactly
    labels = {ws.cell(r, 1).value: r for r in range(1, ws.max_row + 1)}
    shift_col = 2 + [r.check for r in c.checks].index("shift")
    shift = c.checks[shift_col - 2]
    assert ws.cell(labels["p-value"], shift_col).value == shift.p_value
    assert ws.cell(labels["Degrees of freedom"], shift_col).value == shift.df
    assert ws.cell(labels["TOST: p-value, lower test"], shift_col).value == shift.details.p_lower
    assert ws.cell(labels["Interval: low"], shift_col).value == shift.ci_low
    assert ws.cell(labels["Critical value"], shift_col).value == shift.critical_value
    assert ws.cell(labels["Achieved power"], shift_col).value == shift.power
    old = c.processes["old"]
    stats_row = next(r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value == "old")
    assert [ws.cell(stats_row, j).value for j in range(2, 9)] == [
        old.n,
        old.mean,
        old.sd,
        old.minimum,
        old.maximum,
        len(old.lots),
        old.n_parts,
    ]
    assert len(ws._charts) == 3  # production order, histogram, interval against margins
    # the lots as variance components: a note line per process (both on one line ran past the
    # printed page), each with the process's own within- and between-lot sds
    notes = [t for t in text.splitlines() if t.startswith("Lots as variance")]
    assert [n.split(" (")[0] for n in notes] == [
        f"Lots as variance components, {k}" for k in ("old", "new")]
    assert (f"sd within lots {old.sd_within_lot:.4g}" if old.sd_within_lot is not None
            else "not estimable") in notes[0]


def test_one_sample_characteristic_has_no_old_process(all_book):
    ev, _path, wb = all_book
    c = ev.characteristics[3]
    ws = wb[c.name]
    col_a = [ws.cell(r, 1).value for r in range(1, ws.max_row + 1)]
    assert "new" in col_a and "old" not in col_a
    assert len(ws._charts) == 3


# --- measurements -----------------------------------------------------------------------------


def test_measurements_table_filter_and_frozen_header(all_book):
    ev, _path, wb = all_book
    ws = wb[L.MEASUREMENTS_SHEET]
    n = len(ev.measurements.table)
    table = ws.tables["Measurements"]
    assert table.ref == f"A1:J{n + 1}"
    assert table.autoFilter.ref == table.ref
    assert [c.name for c in table.tableColumns] == [h for _k, h in L.MEASUREMENT_HEADERS]
    assert ws.freeze_panes == "A2"
    assert [c.value for c in ws[1]] == [h for _k, h in L.MEASUREMENT_HEADERS]
    assert ws.max_row == n + 1


def test_measurements_rows_follow_layout_unrounded(all_book):
    ev, _path, wb = all_book
    ws = wb[L.MEASUREMENTS_SHEET]
    lay = L.measurement_layout(ev)
    keys = [k for k, _h in L.MEASUREMENT_HEADERS]
    got = list(ws.iter_rows(min_row=2, values_only=True))
    assert len(got) == len(lay.table)
    for row, (_i, exp) in zip(got, lay.table.iterrows(), strict=True):
        for k, v in zip(keys, row, strict=True):
            e = exp[k]
            if k == "value" and isinstance(e, float) and math.isnan(e):
                assert v is None  # a declared missing value stays an empty cell
            elif isinstance(e, str) and e == "":
                assert v is None
            elif k == "order":
                assert v == e + 1  # the sheet counts production order from 1
            else:
                assert v == e, (k, v, e)
    # an excluded row carries its reason; every used row has none
    reasons = {r[6] for r in got if r[5] is False}
    assert "gauge G-114 out of calibration (NCR 2291)" in reasons and None not in reasons


def test_value_format_follows_resolution(all_book):
    ev, _path, wb = all_book
    ws = wb[L.MEASUREMENTS_SHEET]
    formats = {}
    for row in ws.iter_rows(min_row=2):
        formats.setdefault(row[0].value, set()).add(row[4].number_format)
    assert formats["Bore diameter"] == {"0.000"}
    assert formats["Wall thickness"] == {"0.00"}
    assert formats["Clamp torque"] == {"0.0"}
    assert resolution_decimals([0.1, 0.25, 1e-7]) is None
    assert resolution_decimals([5.0, 6.0]) == 0


def test_text_injection_stays_text(tmp_path):
    ev = make_evaluation("welch", n_old=10, n_new=10, lot_ids=INJECTIONS, parts_per_lot=2)
    path = _write(ev, tmp_path)
    wb = openpyxl.load_workbook(path)
    ws = wb[L.MEASUREMENTS_SHEET]
    lots = [row[2] for row in ws.iter_rows(min_row=2)]
    seen = {c.value for c in lots}
    assert set(INJECTIONS) <= seen
    assert all(c.data_type == "s" for c in lots if c.value is not None)
    # the characteristic sheet's lot lists and the helper block also keep them as text
    for sheet in wb.worksheets:
        for row in sheet.iter_rows():
            for cell in row:
                if cell.data_type == "f":
                    assert sheet.title == L.RECHECK_SHEET
                if cell.data_type == "e":
                    pytest.fail(f"error value in {sheet.title}!{cell.coordinate}")


def test_put_never_writes_a_formula_or_error():
    wb = openpyxl.Workbook()
    ws = wb.active
    for i, text in enumerate([*INJECTIONS, "a\x00b\x1fc", "x" * 40_000], start=1):
        cell = put(ws, i, 1, text)
        assert cell.data_type == "s"
        assert len(cell.value) <= 32_767  # Excel's cell limit (Microsoft specifications)
    # characters XML 1.0 cannot carry are replaced visibly by their Unicode control pictures
    # (U+2400 block: U+0000 -> U+2400, U+001F -> U+241F)
    assert ws["A8"].value == "a\u2400b\u241fc"
    assert ws["A9"].value.endswith("[cut: 40000 characters in full]")  # never silently cut
    assert put(ws, 10, 1, float("nan")).value is None
    assert put(ws, 11, 1, None).value is None
    assert put(ws, 12, 1, float("inf")).value == "+∞"


def test_continuation_onto_further_sheets(tmp_path):
    ev = make_evaluation("welch")  # 64 measurement rows
    n = len(ev.measurements.table)
    path = _write(ev, tmp_path, rows_per_sheet=25)
    wb = openpyxl.load_workbook(path)
    sheets = [L.MEASUREMENTS_SHEET, f"{L.MEASUREMENTS_SHEET} (2)", f"{L.MEASUREMENTS_SHEET} (3)"]
    assert [s for s in wb.sheetnames if s.startswith(L.MEASUREMENTS_SHEET)] == sheets
    rows = []
    for i, s in enumerate(sheets):
        ws = wb[s]
        count = ws.max_row - 1
        assert ws.tables[f"Measurements{'' if i == 0 else f'_{i + 1}'}"].ref == f"A1:J{count + 1}"
        assert ws.freeze_panes == "A2"
        note = ws["L1"].value
        assert "continue over 3 sheets" in note
        if i > 0:
            assert f"Continued from '{sheets[i - 1]}'" in note
        if i < 2:
            assert f"Continues on '{sheets[i + 1]}'" in note
        rows += list(ws.iter_rows(min_row=2, max_col=10, values_only=True))
    assert len(rows) == n  # nothing cut
    lay = L.measurement_layout(ev, rows_per_sheet=25)
    assert [r[8] for r in rows] == lay.table["source_row"].tolist()
    summary = _all_text(wb[L.SUMMARY_SHEET])
    assert "continue over 3 sheets" in summary and "None are left out" in summary


# --- spec text, audit, record ------------------------------------------------------------------


@pytest.mark.parametrize(
    "text",
    [
        "format: verify/1\n\ntitle: x\n",
        "no trailing newline",
        "two trailing\n\n",
        "\n\nleading empty lines",
        "crlf: yes\r\nnext: line\r\n",
        "  indented:\n    - '=SUM(A1)'\n   \n\t tab\nµ Ø ✓ 𝔁\n",
        "",
        "\n",
    ],
)
def test_spec_text_round_trip(tmp_path, text):
    ev = make_evaluation("pooled", n_old=5, n_new=5, min_n=0, spec_text=text or " ")
    ev = dataclasses.replace(ev, spec=dataclasses.replace(ev.spec, text=text))
    wb = openpyxl.load_workbook(_write(ev, tmp_path))
    assert read_spec_text(wb) == text
    ws = wb[L.SPEC_SHEET]
    assert ws["C2"].value == len(text.split("\n"))


def test_audit_content(tmp_path):
    ev = make_evaluation("paired", seed=5)
    ws = openpyxl.load_workbook(_write(ev, tmp_path))[L.AUDIT_SHEET]
    text = _all_text(ws)
    run = ev.run
    for item in (
        run.run_id,
        run.started,
        run.finished,
        run.user,
        run.host,
        run.command,
        run.tool_version,
        run.git_commit,
        ev.spec.sha256,
        ev.caution,
    ):
        assert item in text
    for lib, version in run.versions.items():
        assert f"{lib} version" in text and version in text
    f = ev.measurements.files[0]
    assert f.path in text and f.sha256 in text
    row = next(r for r in ws.iter_rows(values_only=True) if r[0] == f.path)
    assert list(row[2:6]) == [f.size, f.rows_read, f.rows_used, f.rows_excluded]
    for reason, count in f.exclusions:
        assert any(r[1] == reason and r[2] == count for r in ws.iter_rows(values_only=True))
    assert ev.characteristics[0].unmatched_pairs[0] in text
    for key, value, is_default in ev.spec.resolved:
        row = next(r for r in ws.iter_rows(values_only=True) if r[0] == key)
        assert row[1] == value and row[2] == ("default" if is_default else "spec")
    for rule in ev.rules:
        assert rule in text


def test_record_round_trip_and_chunks(tmp_path):
    payload = {"format": "verify-result/1", "notes": ["é𝔁" * 9000, "x" * 50_000]}
    record = json.dumps(payload, ensure_ascii=False)
    ev = make_evaluation("pooled", n_old=5, n_new=5)
    wb = openpyxl.load_workbook(_write(ev, tmp_path, record_json=record))
    assert read_record(wb) == record
    ws = wb[RECORD_SHEET]
    assert ws.sheet_state == "veryHidden"
    cells = [c.value for c in ws["A"] if c.value is not None]
    assert len(cells) == ws["B1"].value > 2
    assert all(len(c.encode("utf-16-le")) // 2 <= 32_000 for c in cells)
    assert read_record(openpyxl.load_workbook(_write(ev, tmp_path, "b.xlsx"))) is None


@settings(max_examples=60, deadline=None)
@given(st.text(max_size=300), st.integers(min_value=2, max_value=40))
def test_record_chunks_round_trip(text, limit):
    chunks = record_chunks(text, limit)
    assert "".join(chunks) == text
    assert all(0 < len(c.encode("utf-16-le")) // 2 <= limit for c in chunks)


# --- recheck, determinism, properties ---------------------------------------------------------


def test_recheck_rows_written_as_formulas_only_where_asked(tmp_path, monkeypatch):
    seen = {}

    def recheck_rows(evaluation, layout):
        seen["sheets"] = layout.sheets
        return [
            ["Quantity", "Engine", "Sheet"],
            ["mean", 1.25, "=AVERAGE(1,2)"],
            ["label", "=", "+1"],
            [None, True, "@SUM(A1)"],
        ]

    monkeypatch.setattr(workbook_module, "recheck_rows", recheck_rows)
    ev = make_evaluation("pooled", n_old=5, n_new=5)
    ws = openpyxl.load_workbook(_write(ev, tmp_path))[L.RECHECK_SHEET]
    assert seen["sheets"] == (L.MEASUREMENTS_SHEET,)
    assert ws["C2"].data_type == "f" and ws["C2"].value == "=AVERAGE(1,2)"
    assert ws["B2"].value == 1.25
    assert ws["B3"].data_type == "s" and ws["B3"].value == "="
    assert ws["C3"].data_type == "s" and ws["C4"].data_type == "s"
    assert ws["A4"].value is None and ws["B4"].value is True


def test_determinism(tmp_path):
    ev = make_evaluation("all", seed=11)
    a = _write(ev, tmp_path, "a.xlsx", record_json="{}")
    b = _write(ev, tmp_path, "b.xlsx", record_json="{}")
    wa, wb = openpyxl.load_workbook(a), openpyxl.load_workbook(b)
    assert wa.sheetnames == wb.sheetnames
    for name in wa.sheetnames:
        va = list(wa[name].iter_rows(values_only=True))
        vb = list(wb[name].iter_rows(values_only=True))
        assert va == vb, name
    # zip timestamps and document times come from the run, so the bytes agree as well
    assert a.read_bytes() == b.read_bytes()


def test_document_times_come_from_the_run(tmp_path):
    ev = make_evaluation("pooled", n_old=5, n_new=5)
    wb = openpyxl.load_workbook(_write(ev, tmp_path))
    assert wb.properties.created.isoformat() == "2025-01-14T02:15:00"
    assert wb.properties.modified.isoformat() == "2025-01-14T02:15:00"


# --- LibreOffice ------------------------------------------------------------------------------


@pytest.mark.slow
def test_libreoffice_reads_text_as_text_and_spec_back(tmp_path):
    soffice = shutil.which("soffice")
    if soffice is None:
        pytest.skip("LibreOffice (soffice) is not installed: cannot check the file in it")
    text = "format: verify/1\n\n  lot: '=HYPERLINK(\"x\")'\n"
    ev = make_evaluation("welch", n_old=10, n_new=10, lot_ids=INJECTIONS, parts_per_lot=2)
    ev = dataclasses.replace(ev, spec=dataclasses.replace(ev.spec, text=text))
    src = _write(ev, tmp_path, "src.xlsx")
    out = tmp_path / "lo"
    subprocess.run(
        [
            soffice,
            f"-env:UserInstallation=file://{tmp_path}/profile",
            "--headless",
            "--convert-to",
            "xlsx",
            "--outdir",
            str(out),
            str(src),
        ],
        check=True,
        capture_output=True,
        timeout=180,
    )
    wb = openpyxl.load_workbook(out / "src.xlsx")
    assert wb.sheetnames[:2] == [L.SUMMARY_SHEET, ev.characteristics[0].name]
    lots = {row[2] for row in wb[L.MEASUREMENTS_SHEET].iter_rows(min_row=2, values_only=True)}
    assert set(INJECTIONS) - {" padded lot "} <= lots
    assert read_spec_text(wb) == text


# --- every design, and thin evaluations ---------------------------------------------------------


@pytest.mark.parametrize("design", ["welch", "pooled", "paired", "one-sample", "lot"])
def test_every_design_writes_and_reads_back(tmp_path, design):
    ev = make_evaluation(design, n_old=12, n_new=12, seed=2)
    wb = openpyxl.load_workbook(_write(ev, tmp_path))
    c = ev.characteristics[0]
    ws = wb[c.name]
    assert ws["E1"].value == c.decision
    has_interval = any(r.check in ("target", "shift") and r.ci_low is not None for r in c.checks)
    # production order, histogram, intervals (when any), paired differences (paired designs)
    assert len(ws._charts) == 2 + has_interval + (design == "paired")
    assert decision_cell(wb).value == ev.decision
    if design == "lot":
        assert "n counts lots" in _all_text(ws)


def test_characteristic_without_checks_and_values(tmp_path):
    ev = make_evaluation("pooled", n_old=5, n_new=5)
    c = dataclasses.replace(
        ev.characteristics[0],
        checks=(),
        diagnostics=(),
        decision="HOLD",
        reasons=("new: 1 value: at least 2 are needed to estimate the spread",),
    )
    empty = ev.measurements.table.iloc[0:0]
    ev = dataclasses.replace(
        ev,
        characteristics=(c,),
        measurements=dataclasses.replace(ev.measurements, table=empty),
    )
    wb = openpyxl.load_workbook(_write(ev, tmp_path))
    text = _all_text(wb[c.name])
    assert "No checks ran" in text and "No diagnostics" in text and "No values to draw" in text
    ws = wb[L.MEASUREMENTS_SHEET]
    assert ws.tables["Measurements"].ref == "A1:J2"  # a table keeps one (empty) data row
    assert ws["A3"].value == "No measurements were read."


def test_streamed_text_replaces_xml_illegal_characters_visibly(tmp_path):
    ev = make_evaluation("pooled", n_old=4, n_new=4, lot_ids=["L\x07-1", "L&<2>"], parts_per_lot=2)
    ws = openpyxl.load_workbook(_write(ev, tmp_path))[L.MEASUREMENTS_SHEET]
    lots = {row[2] for row in ws.iter_rows(min_row=2, values_only=True)}
    # the bell character cannot exist in XML (XML 1.0, production Char): it shows as its
    # Unicode control picture U+2407; & and < can exist (escaped)
    assert {"L\u2407-1", "L&<2>"} <= lots


def test_spec_text_that_cannot_be_stored_verbatim_is_refused(tmp_path):
    ev = make_evaluation("pooled", n_old=4, n_new=4)
    ev = dataclasses.replace(ev, spec=dataclasses.replace(ev.spec, text="a\n" + "x" * 33_000))
    with pytest.raises(ValueError, match="spec line 2 cannot be stored verbatim"):
        _write(ev, tmp_path)


# --- charts that tell the truth -------------------------------------------------------------


def _ref_values(wb, ref: str) -> list:
    sheet, rng = ref.rsplit("!", 1)
    ws = wb[sheet.strip("'").replace("''", "'")]
    lo, _, hi = rng.replace("$", "").partition(":")
    cells = ws[f"{lo}:{hi or lo}"]
    return [c.value for row in cells for c in row]


def _series_points(wb, chart) -> dict[str, list]:
    out = {}
    for s in chart.series:
        name = s.tx.v if s.tx.strRef is None else s.tx.strRef.f
        xs = _ref_values(wb, s.xVal.numRef.f)
        ys = _ref_values(wb, s.yVal.numRef.f)
        out[name] = [(x, y) for x, y in zip(xs, ys, strict=True) if x is not None]
    return out


def _chart_titled(ws, words: str):
    for ch in ws._charts:
        text = "".join(r.t for p in ch.title.tx.rich.p for r in (p.r or []))
        if words in text:
            return ch
    raise AssertionError(f"no chart titled with {words!r} on {ws.title}")


@pytest.mark.parametrize("side", ["lower", "upper", "two-sided"])
def test_interval_chart_draws_only_margins_that_exist(tmp_path, side):
    """A one-sided check (side lower or upper) has one margin end: the chart draws that end
    alone, never a mirrored one on the harmless side."""
    ev = make_evaluation("paired", n_old=12, n_new=12, seed=2)
    c = ev.characteristics[0]
    shift = next(k for k in c.checks if k.check == "shift")
    alt = {"lower": "greater", "upper": "less", "two-sided": "two-sided"}[side]
    one = dataclasses.replace(shift, margin=(-1.0, 1.0), alternative=alt)
    checks = tuple(one if k is shift else k for k in c.checks)
    ev = dataclasses.replace(ev, characteristics=(dataclasses.replace(c, checks=checks),))
    wb = openpyxl.load_workbook(_write(ev, tmp_path))
    ws = wb[c.name]
    pts = _series_points(wb, _chart_titled(ws, "intervals against the margins"))
    marks = next(v for k, v in pts.items() if k.startswith("margin"))
    row = 1 + [k.check for k in c.checks if k.check in ("target", "shift")].index("shift")
    xs = {x for x, y in marks if abs(y - row) < 0.5}
    want = {"lower": {-1.0}, "upper": {1.0}, "two-sided": {-1.0, 1.0}}[side]
    assert xs == want
    # the paired differences chart draws the same margin ends, and nothing else
    pts = _series_points(wb, _chart_titled(ws, "new − old for each"))
    margins = {y for k, v in pts.items() if k.startswith("margin") for _x, y in v}
    assert margins == want
    # the checks table lists only the ends that exist
    labels = {ws.cell(r, 1).value: r for r in range(1, ws.max_row + 1)}
    col = 2 + [k.check for k in checks if k.check != "capability"].index("shift")
    # (a row empty for every check is left out altogether)
    low = ws.cell(labels["Margin: low"], col).value if "Margin: low" in labels else None
    high = ws.cell(labels["Margin: high"], col).value if "Margin: high" in labels else None
    assert (low is not None, high is not None) == (side != "upper", side != "lower")


def test_paired_differences_chart_holds_every_pair(tmp_path):
    ev = make_evaluation("paired", n_old=12, n_new=12, seed=2)
    c = ev.characteristics[0]
    wb = openpyxl.load_workbook(_write(ev, tmp_path))
    pts = _series_points(wb, _chart_titled(wb[c.name], "new − old for each"))
    diffs = [y for _x, y in pts["difference of a pair"]]
    shift = next(k for k in c.checks if k.check == "shift")
    assert len(diffs) == c.pairs
    # the mean of the plotted differences is the paired shift estimate (arithmetic identity)
    assert sum(diffs) / len(diffs) == pytest.approx(shift.estimate, rel=1e-12, abs=1e-12)
    assert {y for _x, y in pts["mean difference"]} == {shift.estimate}


def test_histogram_shows_shares_on_shared_bins_with_limits(all_book):
    ev, _path, wb = all_book
    c = ev.characteristics[0]
    pts = _series_points(wb, _chart_titled(wb[c.name], "share of each process"))
    outlines = {k: v for k, v in pts.items() if "process (n =" in k}
    assert len(outlines) == 2
    # relative frequencies: each outline's bars add up to 100 % of that process's parts; the
    # outline repeats each bar's height at both of its edges
    for v in outlines.values():
        heights = [y for (_x, y) in v[1:-1:2]]
        assert sum(heights) == pytest.approx(100.0)
    edges = [[x for x, _y in v] for v in outlines.values()]
    assert edges[0] == edges[1]  # shared bins
    limits = {k: {x for x, _y in v} for k, v in pts.items() if k.endswith("limit")}
    lower, upper = c.spec.limits
    assert limits.get("lower limit", {lower}) == {lower} and limits.get("upper limit") == {upper}


def test_run_chart_has_lot_boundaries_and_old_natural_limits(all_book):
    ev, _path, wb = all_book
    c = ev.characteristics[0]
    pts = _series_points(wb, _chart_titled(wb[c.name], "in production order"))
    old = c.processes["old"]
    assert {y for _x, y in pts["old process mean + 3 sd"]} == {old.mean + 3 * old.sd}
    assert {y for _x, y in pts["old process mean - 3 sd"]} == {old.mean - 3 * old.sd}
    lots = len(old.lots) + len(c.processes["new"].lots)
    xs = {x for x, _y in pts["lot boundaries"]}
    assert len(xs) == lots - 1  # a line between each lot and the next


def test_capability_block_puts_the_deciding_index_first(all_book):
    ev, _path, wb = all_book
    c = next(c for c in ev.characteristics if any(k.check == "capability" for k in c.checks))
    ws = wb[c.name]
    rows = {ws.cell(r, 1).value: r for r in range(1, ws.max_row + 1)}
    head = rows["Capability of the new process"]
    k = next(k for k in c.checks if k.check == "capability")
    assert ws.cell(head + 1, 1).value == "Deciding index"
    assert ws.cell(head + 1, 2).value == f"Cpk = {k.estimate:.2f}"
    assert ws.cell(head + 2, 1).value == "Criterion"
    text = _all_text(ws)
    # each spread named in plain words by how it was estimated, not "sigma, within"
    assert "sd from the ranges of consecutive parts" in text
    assert "sigma, within" not in text and "sigma, overall" not in text
