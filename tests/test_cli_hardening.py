"""Hostile but realistic input to `verify run` and `verify replay`: every case ends in a clear
message and exit status 2 with nothing written, never in a traceback or a decision status.
(The rules are the project's own: issue 2 and 4; the cell limits are Excel's published ones.)"""

from __future__ import annotations

import shutil
from pathlib import Path

import openpyxl
import pytest

from verify.cli import main


def _run(args, capsys):
    code = main(args)
    cap = capsys.readouterr()
    return code, cap.out, cap.err


def test_out_that_is_a_file_is_refused(demo, capsys):
    f = demo / "afile"
    f.write_text("keep me", encoding="utf-8")
    code, _, err = _run(["run", str(demo / "specs"), "--out", str(f)], capsys)
    assert code == 2 and "is a file, not a folder" in err
    assert f.read_text(encoding="utf-8") == "keep me"


def test_a_report_never_replaces_its_own_data_file(demo, capsys):
    data = demo / "sample_lots" / "filler_split_batches.xlsx"
    shutil.copy(data, demo / "trial.xlsx")
    spec = (demo / "specs" / "filler-paired.yaml").read_text(encoding="utf-8")
    (demo / "trial.yaml").write_text(
        spec.replace("../sample_lots/filler_split_batches.xlsx", "trial.xlsx"), encoding="utf-8")
    before = (demo / "trial.xlsx").read_bytes()
    code, _, err = _run(["run", str(demo / "trial.yaml"), "--out", str(demo)], capsys)
    assert code == 2 and "would destroy it" in err and "trial.xlsx" in err
    assert (demo / "trial.xlsx").read_bytes() == before


def _edit_csv_cell(path: Path, row: int, column: str, value: str) -> None:
    lines = path.read_text(encoding="utf-8").splitlines()
    head = lines[0].split(",")
    cells = lines[row - 1].split(",")
    cells[head.index(column)] = value
    lines[row - 1] = ",".join(cells)
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def test_a_value_too_large_to_compute_with_names_row_and_column(demo, capsys):
    _edit_csv_cell(demo / "sample_lots" / "bushing_lots.csv", 10, "bore_mm", "1e300")
    out = demo / "reports"
    code, _, err = _run(["run", str(demo / "specs" / "bushing-supplier.yaml"), "--out",
                         str(out)], capsys)
    assert code == 2
    assert "row 10" in err and "bore_mm" in err and "outside the range" in err
    assert not out.exists() or not any(out.iterdir())


def test_a_row_with_too_few_cells_is_an_error_not_a_missing_value(demo, capsys):
    csv = demo / "sample_lots" / "bushing_lots.csv"
    lines = csv.read_text(encoding="utf-8").splitlines()
    lines[8] = lines[8].rsplit(",", 1)[0]
    csv.write_text("\n".join(lines) + "\n", encoding="utf-8")
    code, _, err = _run(["check", str(demo / "specs" / "bushing-supplier.yaml")], capsys)
    assert code == 2 and "row 9" in err and "cells but the header has" in err


def test_a_formula_without_a_saved_value_is_refused(demo, capsys):
    path = demo / "sample_lots" / "filler_split_batches.xlsx"
    wb = openpyxl.load_workbook(path)
    ws = wb["split batches"]
    header = [c.value for c in ws[1]]
    col = header.index("fill_volume_ml") + 1
    ws.cell(row=5, column=col, value="=1+1")
    wb.save(path)
    code, _, err = _run(["check", str(demo / "specs" / "filler-paired.yaml")], capsys)
    assert code == 2
    assert "row 5" in err and "fill_volume_ml" in err and "no saved value" in err


def test_exponent_numbers_in_the_spec_are_numbers(demo, capsys):
    spec = demo / "specs" / "bushing-supplier.yaml"
    text = spec.read_text(encoding="utf-8").replace("target: {margin: 0.006}",
                                                    "target: {margin: 6e-3}")
    spec.write_text(text, encoding="utf-8")
    code, out, _ = _run(["check", str(spec)], capsys)
    assert code == 0 and "0.006" in out


def test_bad_source_date_epoch_is_exit_2(demo, capsys, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "yesterday")
    code, _, err = _run(["run", str(demo / "specs"), "--out", str(demo / "r")], capsys)
    assert code == 2 and "SOURCE_DATE_EPOCH" in err
    assert not (demo / "r").exists()


def test_a_spec_line_too_long_for_a_cell_is_a_spec_error(demo, capsys):
    spec = demo / "specs" / "bushing-supplier.yaml"
    text = spec.read_text(encoding="utf-8").replace(
        "title: Guide bushing", "title: " + "x" * 33_000 + " Guide bushing")
    spec.write_text(text, encoding="utf-8")
    code, _, err = _run(["check", str(spec)], capsys)
    assert code == 2 and "longer than 32,000 characters" in err and ":5:" in err


@pytest.mark.parametrize("doc", ['{"format": "verify-result/1"}',
                                 '{"format": "verify-result/1", "spec": {"text": 3}}'])
def test_replay_of_a_damaged_result_is_exit_2(tmp_path, capsys, doc):
    p = tmp_path / "r.json"
    p.write_text(doc, encoding="utf-8")
    code, _, err = _run(["replay", str(p)], capsys)
    assert code == 2 and "not a complete verify result" in err


def test_an_internal_error_is_exit_2_with_a_plain_message(demo, capsys, monkeypatch):
    import verify.runner

    def boom(*a, **k):
        raise RuntimeError("simulated fault")

    monkeypatch.setattr(verify.runner, "prepare", boom)
    code, _, err = _run(["run", str(demo / "specs"), "--out", str(demo / "r")], capsys)
    assert code == 2
    assert "internal error" in err and "simulated fault" in err
