"""Snapshots of the data a run used, and replay after the data grow (issue 13, point 1).

The expectations follow from the rules of the issue (which copy replay uses, what it says) and
from sha256/gzip themselves (Python's hashlib and gzip, outside the code under test).
"""

from __future__ import annotations

import gzip
import hashlib
import json
import shutil
from pathlib import Path

import openpyxl

from tests.test_nightly import append_lot, nightly, write_spec
from verify.cli import main
from verify.replay import WEAKER_CHECK, replay
from verify.report.layout import AUDIT_SHEET
from verify.snapshots import load_bytes, store_bytes

REPO = Path(__file__).resolve().parents[1]


def test_store_is_content_addressed_atomic_and_checked(tmp_path):
    data = b"lot,bore\nA1,12.001\n"
    sha = hashlib.sha256(data).hexdigest()
    p = store_bytes(tmp_path, data)
    assert p.name == f"{sha}.gz"
    assert gzip.decompress(p.read_bytes()) == data  # a plain gzip file anyone can open
    assert store_bytes(tmp_path, data) == p  # deduplicated: stored once
    assert sorted(x.name for x in tmp_path.iterdir()) == [p.name]  # no temporary file left
    assert load_bytes(tmp_path, sha) == data
    assert load_bytes(tmp_path, "0" * 64) is None


def test_nightly_result_replays_as_reproduced_after_its_data_file_grew(tmp_path, capsys):
    specs, out = tmp_path / "specs", tmp_path / "nightly"
    write_spec(specs, "bushing")
    first, _, _ = nightly(specs, out)
    result = out / "bushing" / f"{first.run_id}-PASS.json"
    doc = json.loads(result.read_text(encoding="utf-8"))
    sha = doc["data_files"][0]["sha256"]
    assert doc["data_files"][0]["snapshot"] == str(out / "snapshots" / f"{sha}.gz")
    assert doc["snapshots"]["kept"] is True
    append_lot(specs, "bushing", "N3")  # the lot file grows, as nightly lot files do
    nightly(specs, out)
    assert len(list((out / "snapshots").glob("*.gz"))) == 2  # one per data file version
    capsys.readouterr()
    assert main(["replay", str(result)]) == 0
    text = capsys.readouterr().out
    assert f"the snapshot {out / 'snapshots' / (sha + '.gz')}" in text
    assert "the live file has changed" in text and "reproduced" in text
    # without the snapshot the same replay cannot reproduce, and says why
    shutil.move(out / "snapshots", tmp_path / "aside")
    res = replay(result)
    assert not res.reproduced
    assert any("data file changed" in m and "no snapshot" in m for m in res.integrity)


def test_replay_from_the_measurements_sheet_says_it_is_weaker(tmp_path, capsys):
    specs, out = tmp_path / "specs", tmp_path / "nightly"
    write_spec(specs, "bushing")
    first, _, _ = nightly(specs, out, snapshot=False)
    workbook = out / "bushing" / f"{first.run_id}-PASS.xlsx"
    (specs / "bushing.csv").unlink()  # neither the file ...
    assert not (out / "snapshots").exists()  # ... nor a snapshot (--no-snapshot)
    res = replay(workbook)
    assert not res.reproduced and any("data file missing" in m for m in res.integrity)
    capsys.readouterr()
    assert main(["replay", "--from-sheet", str(workbook)]) == 0
    text = capsys.readouterr().out
    assert WEAKER_CHECK in text
    assert "reproduced from its Measurements sheet (a weaker check" in text


def test_sheet_replay_finds_an_edited_value(tmp_path):
    specs, out = tmp_path / "specs", tmp_path / "nightly"
    write_spec(specs, "bushing")
    first, _, _ = nightly(specs, out)
    workbook = out / "bushing" / f"{first.run_id}-PASS.xlsx"
    wb = openpyxl.load_workbook(workbook)
    ws = wb["Measurements"]
    ws["E2"] = float(ws["E2"].value) + 0.5  # a value changed on the sheet
    wb.save(workbook)
    res = replay(workbook, from_sheet=True)
    assert not res.reproduced and res.differences


def test_no_snapshot_is_stated_in_the_audit_trail(tmp_path):
    out = tmp_path / "reports"
    assert main(["run", str(REPO / "specs" / "bushing-supplier.yaml"), "--out", str(out),
                 "--no-snapshot"]) in (0, 1, 3)
    assert not (out / "snapshots").exists()
    doc = json.loads((out / "bushing-supplier.json").read_text(encoding="utf-8"))
    assert doc["snapshots"]["kept"] is False and "--no-snapshot" in doc["snapshots"]["note"]
    ws = openpyxl.load_workbook(out / "bushing-supplier.xlsx")[AUDIT_SHEET]
    texts = [str(c.value) for row in ws.iter_rows() for c in row if c.value is not None]
    assert any("not kept: --no-snapshot" in t for t in texts)
    assert main(["run", str(REPO / "specs" / "bushing-supplier.yaml"), "--out", str(out)]) in (
        0, 1, 3)
    doc = json.loads((out / "bushing-supplier.json").read_text(encoding="utf-8"))
    snap = Path(doc["data_files"][0]["snapshot"])
    assert snap.parent == out / "snapshots"
    raw = (REPO / "sample_lots" / "bushing_lots.csv").read_bytes()
    assert gzip.decompress(snap.read_bytes()) == raw
