"""`verify run` and `verify replay` end to end: exit statuses, files written, nothing written on
error, the JSON and workbook read back, determinism, and replay's detection of changed inputs.

The exit statuses and file names are the interface of issue 4 and 5 (the project's own
contract); the hashes are checked with hashlib, independently of verify's own code.
"""

from __future__ import annotations

import hashlib
import json
import shutil
import subprocess
import sys
from pathlib import Path

import openpyxl
import pytest

from verify.cli import main
from verify.report import layout as L

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    base = tmp_path_factory.mktemp("demo")
    shutil.copytree(ROOT / "specs", base / "specs")
    shutil.copytree(ROOT / "sample_lots", base / "sample_lots")
    out = base / "reports"
    code = main(["run", str(base / "specs"), "--out", str(out)])
    return base, out, code


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_run_writes_a_workbook_and_json_per_spec(demo_run):
    base, out, code = demo_run
    assert code == 1  # one demo change is on HOLD
    stems = sorted(p.stem for p in (base / "specs").glob("*.yaml"))
    assert sorted(p.stem for p in out.glob("*.xlsx")) == stems
    assert sorted(p.stem for p in out.glob("*.json")) == stems
    assert not list(out.glob(".*"))  # no temporary files left behind


def test_json_result_has_the_documented_fields(demo_run):
    _, out, _ = demo_run
    doc = json.loads((out / "filler-paired.json").read_text(encoding="utf-8"))
    assert doc["format"] == "verify-result/1"
    assert doc["decision"] == "HOLD"
    assert doc["spec"]["sha256"] == hashlib.sha256(doc["spec"]["text"].encode()).hexdigest()
    for f in doc["data_files"]:
        assert f["sha256"] == _sha(Path(f["resolved_path"]))
        assert f["rows_read"] > 0
    assert doc["workbook"]["sha256"] == _sha(out / "filler-paired.xlsx")
    assert set(doc["versions"]) >= {"python", "numpy", "scipy", "pandas", "openpyxl"}
    c = next(c for c in doc["characteristics"] if c["name"] == "seal_strength")
    assert set(c) >= {"name", "unit", "decision", "reasons", "processes", "checks",
                      "diagnostics"}
    assert set(c["processes"]["new"]) >= {"n", "mean", "sd", "lots"}
    check = c["checks"][0]
    assert set(check) >= {
        "check", "method", "alternative", "margin", "estimate", "standard_error", "statistic",
        "df", "p_value", "ci_low", "ci_high", "ci_level", "outcome", "reason", "p_lower",
        "p_upper", "statistic_lower", "statistic_upper", "power"}
    d = c["diagnostics"][0]
    assert set(d) >= {"name", "method", "group", "statistic", "p_value", "flag", "note"}


def test_demo_part_beyond_a_limit_is_counted_and_noted(demo_run):
    """The bushing demo holds one new-supplier part at 69.5 HB below the 70 HB limit (row 75 of
    sample_lots/bushing_lots.csv); the expected ppm is the normal model on the used values,
    recomputed here with scipy.stats.norm."""
    import csv

    from scipy import stats as sps

    _, out, _ = demo_run
    doc = json.loads((out / "bushing-supplier.json").read_text(encoding="utf-8"))
    assert doc["decision"] == "PASS"
    c = next(c for c in doc["characteristics"] if c["name"] == "hardness")
    new, old = c["processes"]["new"]["beyond_limits"], c["processes"]["old"]["beyond_limits"]
    assert (new["below"], new["above"]) == (1, 0)
    assert (old["below"], old["above"]) == (0, 0)
    text = (ROOT / "sample_lots" / "bushing_lots.csv").read_text(encoding="utf-8")
    rows = list(csv.DictReader(text.splitlines()))
    # row 57 (spreadsheet count; index 55 here) is excluded by the spec; NA is not measured
    values = [float(r["hardness_HB"]) for i, r in enumerate(rows, start=2)
              if r["supplier"] == "Marrowfield" and i != 57 and r["hardness_HB"] not in ("", "NA")]
    mean = sum(values) / len(values)
    sd = (sum((v - mean) ** 2 for v in values) / (len(values) - 1)) ** 0.5
    assert new["expected_ppm"] == pytest.approx(1e6 * sps.norm.cdf(70, mean, sd), rel=1e-9)
    assert any("1 part beyond the specification limits (1 below 70 HB)" in r
               for r in c["review"])
    assert any("hardness (new): 1 part beyond" in r for r in doc["review"])
    # characteristics without beyond parts carry zeros, not nulls; none without limits
    for ch in doc["characteristics"]:
        for p in ch["processes"].values():
            assert set(p["beyond_limits"]) == {"below", "above", "expected_ppm", "model", "note"}
            # the model is the characteristic's distribution (issue 16); normal by default
            assert p["beyond_limits"]["model"] == ch["distribution"]["name"] == "normal"
    wb = openpyxl.load_workbook(out / "bushing-supplier.xlsx")
    text = [str(v) for row in wb[L.SUMMARY_SHEET].iter_rows(values_only=True) for v in row if v]
    assert any(t.startswith("new: 1 below") for t in text)
    sheet = [str(v) for row in wb["hardness"].iter_rows(values_only=True) for v in row if v]
    assert "Parts beyond the limits" in sheet


def test_workbook_reads_back_with_the_decision_and_caution(demo_run):
    _, out, _ = demo_run
    wb = openpyxl.load_workbook(out / "filler-paired.xlsx")
    assert wb.sheetnames[0] == L.SUMMARY_SHEET
    for name in (L.MEASUREMENTS_SHEET, L.SPEC_SHEET, L.AUDIT_SHEET, L.RECHECK_SHEET):
        assert name in wb.sheetnames
    texts = [str(v) for row in wb[L.SUMMARY_SHEET].iter_rows(values_only=True) for v in row if v]
    assert "HOLD" in texts
    assert any("never replace" in t for t in texts)


def test_exit_status_per_decision(demo, capsys):
    specs = demo / "specs"
    assert main(["run", str(specs / "bushing-supplier.yaml"), "--out", str(demo / "o1")]) == 0
    assert main(["run", str(specs / "housing-resin.yaml"), "--out", str(demo / "o2")]) == 3
    final = main(["run", str(specs / "housing-resin.yaml"), "--out", str(demo / "o3"),
                  "--final"])
    assert final in (0, 1)
    out = capsys.readouterr().out
    assert "bushing-supplier: PASS" in out and "housing-resin: PENDING" in out


def test_invalid_spec_writes_nothing_and_keeps_previous_results(demo, capsys):
    out = demo / "reports"
    assert main(["run", str(demo / "specs" / "bushing-supplier.yaml"), "--out", str(out)]) == 0
    before = {p.name: p.read_bytes() for p in out.rglob("*") if p.is_file()}
    bad = demo / "specs" / "broken.yaml"
    bad.write_text((demo / "specs" / "housing-resin.yaml").read_text(encoding="utf-8")
                   .replace("alpha: 0.05", "alpha: 0.5"), encoding="utf-8")
    assert main(["run", str(demo / "specs"), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert "broken.yaml" in err and "alpha" in err and "nothing written" in err
    assert {p.name: p.read_bytes() for p in out.rglob("*") if p.is_file()} == before


def test_bad_data_cell_is_exit_2_through_the_console_script(demo):
    csv = demo / "sample_lots" / "bushing_lots.csv"
    lines = csv.read_text(encoding="utf-8").splitlines()
    head = lines[0].split(",")
    col = head.index("bore_mm")
    row = lines[5].split(",")
    row[col] = "n/a"
    lines[5] = ",".join(row)
    csv.write_text("\n".join(lines) + "\n", encoding="utf-8")
    out = demo / "reports"
    r = subprocess.run([sys.executable, "-m", "verify", "run",
                        str(demo / "specs" / "bushing-supplier.yaml"), "--out", str(out)],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 2
    assert "row 6" in r.stderr and "bore_mm" in r.stderr and "n/a" in r.stderr
    assert "Traceback" not in r.stderr
    assert not out.exists() or not any(out.iterdir())


def test_source_date_epoch_gives_identical_outputs(demo, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1764547200")
    spec = str(demo / "specs" / "filler-paired.yaml")
    out = demo / "reports"
    main(["run", spec, "--out", str(out)])
    first = {p.name: p.read_bytes() for p in out.rglob("*") if p.is_file()}
    main(["run", spec, "--out", str(out)])
    second = {p.name: p.read_bytes() for p in out.rglob("*") if p.is_file()}
    assert first == second
    assert json.loads(first["filler-paired.json"])["run"]["started"] == "2025-12-01T00:00:00Z"


@pytest.mark.parametrize("suffix", [".json", ".xlsx"])
def test_replay_reproduces_each_demo_output(demo_run, suffix, capsys):
    _, out, _ = demo_run
    for report in sorted(out.glob(f"*{suffix}")):
        assert main(["replay", str(report)]) == 0
        assert f"{report}: reproduced" in capsys.readouterr().out


def test_replay_names_an_edited_data_file_and_the_changed_results(demo, capsys):
    out = demo / "reports"
    # without a snapshot (with one, replay would use it: tests/test_snapshots.py)
    main(["run", str(demo / "specs" / "bushing-supplier.yaml"), "--out", str(out),
          "--no-snapshot"])
    csv = demo / "sample_lots" / "bushing_lots.csv"
    lines = csv.read_text(encoding="utf-8").splitlines()
    col = lines[0].split(",").index("bore_mm")
    row = lines[3].split(",")
    row[col] = f"{float(row[col]) + 0.004:.3f}"
    lines[3] = ",".join(row)
    csv.write_text("\n".join(lines) + "\n", encoding="utf-8")
    capsys.readouterr()
    assert main(["replay", str(out / "bushing-supplier.json")]) == 1
    text = capsys.readouterr().out
    assert "data file changed: ../sample_lots/bushing_lots.csv" in text
    assert "bore_diameter" in text and "mean" in text
    assert "NOT reproduced" in text


def test_replay_reports_edited_spec_text_in_the_workbook(demo, capsys):
    out = demo / "reports"
    main(["run", str(demo / "specs" / "filler-paired.yaml"), "--out", str(out)])
    path = out / "filler-paired.xlsx"
    wb = openpyxl.load_workbook(path)
    ws = wb[L.SPEC_SHEET]
    for row in ws.iter_rows(min_col=1, max_col=1):
        cell = row[0]
        if isinstance(cell.value, str) and cell.value.startswith("alpha:"):
            cell.value = "alpha: 0.10"
            break
    else:
        pytest.fail("no alpha line on the spec sheet")
    wb.save(path)
    capsys.readouterr()
    assert main(["replay", str(path)]) == 1
    text = capsys.readouterr().out
    assert "does not match its recorded sha256" in text


def test_replay_of_a_file_that_is_not_a_report_is_exit_2(tmp_path, capsys):
    p = tmp_path / "x.json"
    p.write_text("{}", encoding="utf-8")
    assert main(["replay", str(p)]) == 2
    assert "not a verify result" in capsys.readouterr().err
