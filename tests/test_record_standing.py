"""One meaning per workbook (issue 13): run ids in history file names, the decision of record on
a monitoring workbook, drift in its own colour, sign-off only on the workbook of record.

The expectations follow from the rules of issues 6 and 13 (which run locks the record, which
workbook is signed); the data are built far from any borderline (tests/test_nightly.py), so
the statistics can decide only one way.
"""

from __future__ import annotations

import json
from pathlib import Path

import openpyxl

from tests.test_nightly import append_lot, nightly, write_spec
from verify.report.layout import SUMMARY_SHEET
from verify.report.summary import decision_cell


def _texts(ws) -> list[str]:
    return [str(c.value) for row in ws.iter_rows() for c in row if c.value is not None]


def test_monitoring_workbook_shows_the_decision_of_record_and_drift(tmp_path: Path):
    specs, out = tmp_path / "specs", tmp_path / "nightly"
    write_spec(specs, "bushing")  # no min_n: the first run locks PASS
    first, _, _ = nightly(specs, out)
    append_lot(specs, "bushing", "N3", mean=12.0)  # 40 sd off: the newer data HOLD
    second, _, _ = nightly(specs, out)
    record_xlsx = out / "bushing" / f"{first.run_id}-PASS.xlsx"
    monitor_xlsx = out / "bushing" / f"{second.run_id}-HOLD.xlsx"
    assert record_xlsx.exists() and monitor_xlsx.exists()  # files named by the run id

    wb = openpyxl.load_workbook(monitor_xlsx)
    ws = wb[SUMMARY_SHEET]
    big = decision_cell(wb)
    col = big.column
    assert ws.cell(2, col).value == "Decision of record"
    assert big.value == "PASS"  # the big cell: the decision of record, not HOLD
    assert f"run {first.run_id}" in ws.cell(5, col).value
    assert ws.cell(6, col).value == "DRIFT: these newer data would decide HOLD"
    drift_fill = ws.cell(6, col).fill.fgColor.rgb
    assert drift_fill.endswith("5B4B8A")  # its own colour, neither PASS green nor HOLD red
    texts = _texts(ws)
    assert not any(t.startswith("Sign-off") for t in texts)
    assert any("monitoring workbook and is not for sign-off" in t for t in texts)
    assert second.run_id in texts  # the run id shown is the one in the file name

    wb = openpyxl.load_workbook(record_xlsx)
    ws = wb[SUMMARY_SHEET]
    big = decision_cell(wb)
    assert big.value == "PASS" and ws.cell(2, big.column).value.startswith("Decision of record")
    assert any(t.startswith("Sign-off") for t in _texts(ws))
    doc = json.loads((out / "bushing" / f"{first.run_id}-PASS.json").read_text("utf-8"))
    assert doc["run"]["id"] == first.run_id


def test_provisional_workbook_is_not_for_sign_off(tmp_path: Path):
    specs, out = tmp_path / "specs", tmp_path / "nightly"
    write_spec(specs, "housing", min_n=30)  # 20 new parts of 30: provisional
    result, _, _ = nightly(specs, out)
    wb = openpyxl.load_workbook(out / "housing" / f"{result.run_id}-PENDING.xlsx")
    ws = wb[SUMMARY_SHEET]
    texts = _texts(ws)
    assert decision_cell(wb).value == "PENDING"
    assert not any(t.startswith("Sign-off") for t in texts)
    assert any("provisional workbook and is not for sign-off" in t for t in texts)
