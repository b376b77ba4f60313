"""Corrections with reasons, part serials and kept columns (issue 13, points 6 and 7).

The rules come from the issue: the data file stays untouched, the original text and the
corrected value stand side by side with the reason and the name, a correction that matches
nothing is an error, a part measured twice (both used) is an error naming both rows, and kept
columns reach the Measurements sheet and the JSON. Expected numbers are computed here from the
written data with numpy (an outside route), not taken from the code under test.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np
import openpyxl
import pytest

from verify.cli import main
from verify.data import load_measurements
from verify.errors import DataError, SpecError
from verify.report.layout import AUDIT_SHEET, MEASUREMENTS_SHEET
from verify.spec import load_spec

ROWS = [  # lot, supplier, serial, operator, torque  (source rows 2..)
    ("L1", "Ashcombe Fasteners", "S-01", "OP-1", "24.1"),
    ("L1", "Ashcombe Fasteners", "S-02", "OP-1", "24.3"),
    ("L1", "Ashcombe Fasteners", "S-03", "OP-2", "24.0"),
    ("L1", "Ashcombe Fasteners", "S-04", "OP-2", "24.2"),
    ("L2", "Wrenfield Bolt Co", "S-11", "OP-3", "24.4"),
    ("L2", "Wrenfield Bolt Co", "S-12", "OP-3", "2.48"),  # the typo: 24.8 meant
    ("L2", "Wrenfield Bolt Co", "S-13", "OP-4", "24.6"),
    ("L2", "Wrenfield Bolt Co", "S-14", "OP-4", "24.5"),
]


def write(tmp: Path, *, rows=ROWS, extra: str = "", part: bool = True) -> Path:
    csv = tmp / "torque.csv"
    csv.write_text("lot,supplier,serial,operator,torque_Nm\n"
                   + "".join(",".join(r) + "\n" for r in rows), encoding="utf-8")
    spec = tmp / "torque.yaml"
    spec.write_text(
        "format: verify/1\ntitle: Kestrel Lane Works clamp bolt, supplier change\n"
        "data:\n  file: torque.csv\n  lot: lot\n  process: supplier\n"
        "  old: Ashcombe Fasteners\n  new: Wrenfield Bolt Co\n"
        + ("  part: serial\n" if part else "") + "  keep: [operator]\n" + extra
        + "characteristics:\n  - name: torque\n    column: torque_Nm\n    unit: N m\n"
        "    checks: {shift: {margin: 1.0}}\n", encoding="utf-8")
    return spec


FIX = ("corrections:\n  - {row: 7, column: torque_Nm, value: 24.8, reason: decimal point "
       "slipped on entry, by: \"QE-02, quality engineer\"}\n")


def test_a_correction_keeps_the_file_and_the_original(tmp_path):
    spec = write(tmp_path, extra=FIX)
    before = hashlib.sha256((tmp_path / "torque.csv").read_bytes()).hexdigest()
    out = tmp_path / "reports"
    assert main(["run", str(spec), "--out", str(out)]) in (0, 1, 3)
    assert hashlib.sha256((tmp_path / "torque.csv").read_bytes()).hexdigest() == before
    doc = json.loads((out / "torque.json").read_text(encoding="utf-8"))
    assert doc["corrections"] == [{
        "source_file": "torque.csv", "source_row": 7, "part": "S-12",
        "characteristic": "torque", "column": "torque_Nm", "original": "2.48", "value": 24.8,
        "reason": "decimal point slipped on entry", "by": "QE-02, quality engineer"}]
    new = [24.4, 24.8, 24.6, 24.5]  # the corrected values, by hand
    assert doc["characteristics"][0]["processes"]["new"]["mean"] == pytest.approx(
        np.mean(new), rel=1e-12)
    wb = openpyxl.load_workbook(out / "torque.xlsx")
    ws = wb[MEASUREMENTS_SHEET]
    head = [c.value for c in ws[1]]
    for label in ("Part", "Process in the data", "Original text", "Correction (reason, by)",
                  "operator"):
        assert label in head
    rows = [dict(zip(head, (c.value for c in r), strict=False)) for r in ws.iter_rows(min_row=2)]
    fixed = next(r for r in rows if r["Source row"] == 7)
    assert fixed["Value"] == 24.8 and fixed["Original text"] == "2.48"
    assert "decimal point slipped on entry" in fixed["Correction (reason, by)"]
    assert "QE-02" in fixed["Correction (reason, by)"]
    assert fixed["Part"] == "S-12" and fixed["operator"] == "OP-3"
    assert fixed["Process in the data"] == "Wrenfield Bolt Co" and fixed["Process"] == "new"
    audit = [str(c.value) for r in wb[AUDIT_SHEET].iter_rows() for c in r if c.value is not None]
    assert "2.48" in audit and "decimal point slipped on entry" in audit
    assert doc["traceability"]["keep"]["operator"] == {"old": ["OP-1", "OP-2"],
                                                      "new": ["OP-3", "OP-4"]}
    assert doc["traceability"]["parts"] == {"old": 4, "new": 4}
    assert main(["replay", str(out / "torque.json")]) == 0


def test_a_correction_by_part(tmp_path):
    spec = write(tmp_path, extra=FIX.replace("row: 7", "part: S-12"))
    m = load_measurements(load_spec(spec))
    assert 24.8 in m.table["value"].tolist() and 2.48 not in m.table["value"].tolist()


@pytest.mark.parametrize("fix, words", [
    (FIX.replace("row: 7", "row: 40"), "matches no measurement"),
    (FIX.replace("row: 7", "part: S-99"), "matches no measurement"),
    (FIX.replace("torque_Nm", "torque"), "is no characteristic's column"),
])
def test_a_correction_that_matches_nothing_is_an_error(tmp_path, fix, words):
    spec = write(tmp_path, extra=fix)
    with pytest.raises(DataError, match=words):
        load_measurements(load_spec(spec))


def test_correction_by_part_needs_data_part(tmp_path):
    spec = write(tmp_path, extra=FIX.replace("row: 7", "part: S-12"), part=False)
    with pytest.raises(SpecError, match="needs data.part"):
        load_spec(spec)


def test_a_part_measured_twice_names_both_rows_unless_one_is_excluded(tmp_path):
    rows = list(ROWS) + [("L2", "Wrenfield Bolt Co", "S-13", "OP-4", "24.7")]  # row 10
    spec = write(tmp_path, rows=rows)
    with pytest.raises(DataError) as err:
        load_measurements(load_spec(spec))
    text = err.value.report()
    assert "part 'S-13' is measured more than once" in text and "rows 8, 10" in text
    spec = write(tmp_path, rows=rows, extra=(
        "exclude:\n  - {row: 10, reason: remeasured after the gauge was re-zeroed, by: QE-02}\n"))
    m = load_measurements(load_spec(spec))
    assert int((~m.table["excluded"]).sum()) == 8


def test_exclusion_by_part(tmp_path):
    spec = write(tmp_path, extra="exclude:\n  - {part: S-03, reason: dropped, by: QE-02}\n")
    m = load_measurements(load_spec(spec))
    t = m.table
    assert t.loc[t["source_row"] == 4, "excluded"].all()
    assert "dropped" in t.loc[t["source_row"] == 4, "exclusion_reason"].iloc[0]
    spec = write(tmp_path, extra="exclude:\n  - {part: S-77, reason: dropped, by: QE-02}\n")
    with pytest.raises(DataError, match="names part 'S-77'"):
        load_measurements(load_spec(spec))


def test_a_kept_column_must_exist(tmp_path):
    spec = write(tmp_path)
    spec.write_text(spec.read_text(encoding="utf-8").replace("keep: [operator]",
                                                             "keep: [gauge]"), encoding="utf-8")
    with pytest.raises(DataError, match="no column 'gauge'.*data.keep"):
        load_measurements(load_spec(spec))
