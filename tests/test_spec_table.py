"""characteristics_from: a table of characteristics (CSV or xlsx), defaults, YAML overrides,
errors named at the table's file, row and column, and the table's sha256 in the records.

The expectations follow from the format's own rules (a table row must give the same
characteristic as the YAML entry with the same keys), not from a statistics reference.
"""

from __future__ import annotations

import hashlib
import io
import json
import shutil
from contextlib import redirect_stderr, redirect_stdout
from dataclasses import replace
from pathlib import Path

import openpyxl
import pytest

from verify.cli import main
from verify.errors import SpecError
from verify.spec import load_spec

ROOT = Path(__file__).resolve().parents[1]

LAYOUT = """name,column,unit,target,lower,upper,side,target_margin,shift_margin,min_cpk
bore_diameter,bore_mm,mm,12.000,11.975,12.025,,0.006,0.005,1.33
overall_length,length_mm,mm,25.00,24.90,25.10,,0.03,0.02,
hardness,hardness_HB,HB,,70,,lower,,2.0,
"""

SPEC = """format: verify/1
title: Guide bushing from a table
data:
  file: bushing_lots.csv
  lot: lot
  process: supplier
  old: Brindlecombe
  new: Marrowfield
exclude:
  - row: 57
    reason: part dropped on the floor before gauging
    by: QE-02
characteristics_from: {table}
defaults:
  checks:
    shift: {{design: welch}}
    spread: {{}}
    capability: {{min_cpk: 1.33}}
characteristics:
  - name: overall_length
    checks:
      target: {{margin: 0.03}}
      shift: {{margin: 0.02, design: pooled}}
      spread: {{}}
      capability: {{min_cpk: 1.33}}
"""


@pytest.fixture
def folder(tmp_path: Path) -> Path:
    shutil.copy(ROOT / "sample_lots" / "bushing_lots.csv", tmp_path / "bushing_lots.csv")
    return tmp_path


def write(folder: Path, table: str = LAYOUT, spec: str = SPEC, name: str = "layout.csv") -> Path:
    (folder / name).write_text(table, encoding="utf-8")
    path = folder / "spec.yaml"
    path.write_text(spec.format(table=name), encoding="utf-8")
    return path


def write_xlsx(folder: Path, table: str = LAYOUT) -> Path:
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "layout"
    for line in table.strip().splitlines():
        ws.append([_cell(c) for c in line.split(",")])
    wb.save(folder / "layout.xlsx")
    path = folder / "spec.yaml"
    path.write_text(SPEC.format(table="layout.xlsx"), encoding="utf-8")
    return path


def _cell(c: str):
    if c == "":
        return None
    try:
        return float(c)
    except ValueError:
        return c


def check(path: Path) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = main(["check", str(path)])
    return code, out.getvalue(), err.getvalue()


def _plain(ch):
    """Without its spec line, the demo's planning-only shift.detect and its conformance check
    (the table has no column for either)."""
    shift = ch.checks.shift
    if shift is not None:
        shift = replace(shift, detect=None)
    return replace(ch, line=None, checks=replace(ch.checks, shift=shift, conformance=None))


def test_table_gives_the_same_characteristics_as_the_demo_yaml(folder):
    # the demo spec declares these three characteristics as YAML blocks
    demo = load_spec(ROOT / "specs" / "bushing-supplier.yaml")
    spec = load_spec(write(folder))
    assert [_plain(c) for c in spec.characteristics] == [_plain(c) for c in
                                                         demo.characteristics]
    table = spec.characteristics_table
    assert table.rows == 3 and table.file_text == "layout.csv"
    assert table.sha256 == hashlib.sha256(LAYOUT.encode("utf-8")).hexdigest()
    assert ("characteristics_from.sha256", table.sha256, False) in spec.resolved


def test_xlsx_table_reads_like_the_csv(folder):
    csv_spec = load_spec(write(folder))
    xlsx_spec = load_spec(write_xlsx(folder))
    assert [_plain(c) for c in xlsx_spec.characteristics] == [_plain(c) for c in
                                                              csv_spec.characteristics]
    assert xlsx_spec.characteristics_table.sheet == "layout"


def test_defaults_and_row_settings(folder):
    table = "name,column,target,lower,upper,target_margin,min_cpk\n" \
            "bore,bore_mm,12,11.975,12.025,0.006,\n" \
            "len,length_mm,25,24.9,25.1,,1.67\n"
    spec_text = SPEC.replace("defaults:\n", "defaults:\n  unit: mm\n  side: upper\n").split(
        "characteristics:\n")[0]
    spec = load_spec(write(folder, table, spec_text))
    bore, length = spec.characteristics
    assert bore.unit == length.unit == "mm" and bore.side == length.side == "upper"
    # defaults.checks has no target check: a row's target_margin runs it with that margin
    assert bore.checks.target.margin.high == 0.006 and length.checks.target is None
    assert bore.checks.capability.min_cpk == 1.33 and length.checks.capability.min_cpk == 1.67
    assert bore.checks.shift.design == "welch" and bore.checks.spread is not None


def test_without_defaults_checks_a_row_margin_joins_the_default_checks(folder):
    table = "name,column,unit,target,lower,upper,shift_margin\n" \
            "bore,bore_mm,mm,12,11.975,12.025,0.005\n"
    spec_text = SPEC.split("defaults:\n")[0]
    spec = load_spec(write(folder, table, spec_text))
    (bore,) = spec.characteristics
    # the checks a characteristic runs without a checks: key (see verify/spec.py), plus the
    # row's margin on the shift check
    assert bore.checks.target is not None and bore.checks.target.margin is None
    assert bore.checks.shift.margin.high == 0.005
    assert bore.checks.spread is not None and bore.checks.capability.min_cpk == 1.33


def test_yaml_entries_override_by_name_and_add(folder):
    extra = SPEC + """  - name: hardness
    unit: HRB
  - name: bore_again
    column: bore_mm
    unit: mm
"""
    spec = load_spec(write(folder, spec=extra))
    names = [c.name for c in spec.characteristics]
    assert names == ["bore_diameter", "overall_length", "hardness", "bore_again"]
    hardness = spec.characteristic("hardness")
    assert hardness.unit == "HRB"  # the YAML key overrides the row's cell
    assert hardness.side == "lower" and hardness.limits == (70.0, None)  # the rest is the row's
    assert spec.characteristic("overall_length").checks.shift.design == "pooled"


BAD_TABLE = """name,column,unit,target,lower,upper,side,target_margin,shift_margin,min_cpk
bore_diameter,bore_mm,mm,12.0x,11.975,12.025,,,0.005,1.33
overall_length,length_mm,mm,25.00,25.10,24.90,,0.03,0.02,
hardness,hardness_HB,,,70,,sideways,1%,2.0,
bore_diameter,bore_mm,mm,12,11,13,,,,-1
"""


def test_errors_name_the_table_file_row_and_column(folder):
    with pytest.raises(SpecError) as err:
        load_spec(write(folder, BAD_TABLE))
    text = err.value.report()
    expected = [
        "layout.csv, row 2, column 'target': must be a number",
        "layout.csv, row 3, column 'lower': inverted limits (overall_length)",
        "layout.csv, row 4: no unit: fill in the row's unit, or give defaults.unit",
        "layout.csv, row 4, column 'side': must be one of two-sided, lower, upper",
        "layout.csv, row 4, column 'target_margin': a percent margin (1%)",
        "layout.csv, row 5, column 'name': duplicate characteristic name 'bore_diameter' "
        "(first on row 2 of layout.csv)",
        "layout.csv, row 5, column 'min_cpk': must be greater than 0",
    ]
    for fragment in expected:
        assert fragment in text, (fragment, text)


@pytest.mark.parametrize(("table", "fragment"), [
    ("nme,unit\nx,mm\n", "layout.csv, row 1, column 'nme': unknown column 'nme'; did you mean "
                         "'name'?"),
    ("unit\nmm\n", "layout.csv, row 1: the header has no 'name' column"),
    ("name,unit\n,mm\n", "layout.csv, row 2, column 'name': the name is empty"),
    ("name,unit\n", "layout.csv, row 2: the characteristics table has a header but no rows"),
    ("", "layout.csv, row 1: the characteristics table is empty"),
    ("name,unit\nx,mm,extra\n", "layout.csv, row 2: has 3 cells but the header has 2"),
    ("name,column,match,unit\nx,a,b,mm\n", "give either a 'column' column"),
])
def test_table_shape_errors(folder, table, fragment):
    with pytest.raises(SpecError) as err:
        load_spec(write(folder, table, SPEC.split("characteristics:\n")[0]))
    assert fragment in err.value.report()


def test_a_defaults_problem_keeps_its_spec_line_and_names_the_row(folder):
    spec_text = SPEC.replace("    spread: {{}}\n", "    spread: {{method: levene}}\n", 1)
    with pytest.raises(SpecError) as err:
        load_spec(write(folder, spec=spec_text))
    text = err.value.report()
    line = spec_text.format(table="layout.csv").splitlines().index(
        "    spread: {method: levene}") + 1
    assert f"spec.yaml:{line}:" in text and "(for row 2 of layout.csv)" in text


def test_missing_table_and_wrong_suffix(folder):
    spec = folder / "spec.yaml"
    spec.write_text(SPEC.format(table="nowhere.csv"), encoding="utf-8")
    with pytest.raises(SpecError, match="nowhere.csv: characteristics table file not found"):
        load_spec(spec)
    spec.write_text(SPEC.format(table="layout.txt"), encoding="utf-8")
    with pytest.raises(SpecError, match="must name a .csv or .xlsx file"):
        load_spec(spec)


def test_defaults_without_a_table_and_no_characteristics_at_all(folder):
    no_table = SPEC.replace("characteristics_from: {table}\n", "")
    spec = folder / "spec.yaml"
    spec.write_text(no_table.format(), encoding="utf-8")
    with pytest.raises(SpecError, match="defaults applies to the rows of characteristics_from"):
        load_spec(spec)
    spec.write_text(no_table.split("defaults:")[0], encoding="utf-8")
    with pytest.raises(SpecError, match="or name a table of them with characteristics_from"):
        load_spec(spec)


def test_check_exit_status_and_message(folder):
    code, out, err = check(write(folder))
    assert code == 0 and "characteristics: 3 from layout.csv" in out
    code, out, err = check(write(folder, BAD_TABLE))
    assert code == 2 and "layout.csv, row 3, column 'lower'" in err


def test_run_records_the_table_hash_and_writes_nothing_on_error(folder):
    spec = write(folder)
    out_dir = folder / "reports"
    sink = io.StringIO()
    with redirect_stdout(sink), redirect_stderr(sink):
        code = main(["run", str(spec), "--out", str(out_dir)])
    assert code in (0, 1, 3), sink.getvalue()
    doc = json.loads(next(out_dir.glob("*.json")).read_text(encoding="utf-8"))
    recorded = doc["spec"]["characteristics_from"]
    assert recorded["sha256"] == hashlib.sha256(LAYOUT.encode("utf-8")).hexdigest()
    assert recorded["path"] == "layout.csv" and recorded["rows"] == 3
    wb = openpyxl.load_workbook(next(out_dir.glob("*.xlsx")), read_only=True)
    audit = [r for ws in wb.worksheets if "audit" in ws.title.lower()
             for r in ws.iter_rows(values_only=True)]
    assert any(r and r[0] == "Characteristics table sha256" and r[1] == recorded["sha256"]
               for r in audit)
    wb.close()
    bad_out = folder / "bad-reports"
    write(folder, BAD_TABLE)
    with redirect_stdout(sink), redirect_stderr(sink):
        assert main(["run", str(spec), "--out", str(bad_out)]) == 2
    assert not bad_out.exists() or not any(bad_out.iterdir())


def test_replay_notices_a_changed_table(folder):
    from verify.replay import replay

    spec = write(folder)
    out_dir = folder / "reports"
    with redirect_stdout(io.StringIO()), redirect_stderr(io.StringIO()):
        main(["run", str(spec), "--out", str(out_dir)])
    result = next(out_dir.glob("*.json"))
    assert not replay(result).integrity
    (folder / "layout.csv").write_text(LAYOUT.replace("0.006", "0.007"), encoding="utf-8")
    assert any("characteristics table changed" in m for m in replay(result).integrity)


def test_nightly_reruns_a_spec_when_its_table_changes(folder):
    from verify.nightly import run_nightly

    specs = folder / "specs"
    specs.mkdir()
    shutil.copy(folder / "bushing_lots.csv", specs / "bushing_lots.csv")
    write(specs)
    out = folder / "nightly"

    def once():
        with redirect_stdout(io.StringIO()):
            result = run_nightly([str(specs)], out=out, progress_stream=io.StringIO(),
                                 command="test")
        return [r.state for r in result.rows]

    assert once() == ["RUN"]
    assert once() == ["UNCHANGED"]
    (specs / "layout.csv").write_text(LAYOUT.replace("0.006", "0.007"), encoding="utf-8")
    assert once() == ["RUN"]  # the table's sha256 is part of the fingerprint


def test_three_hundred_rows(folder):
    rows = ["name,column,unit,target,lower,upper,target_margin,shift_margin"]
    rows += [f"c{i:03d},bore_mm,mm,12,11.975,12.025,0.006,0.005" for i in range(300)]
    spec = load_spec(write(folder, "\n".join(rows) + "\n", SPEC.split("characteristics:\n")[0]))
    assert len(spec.characteristics) == 300
    assert spec.characteristics[299].name == "c299"
    assert all(c.checks.target.margin.high == 0.006 for c in spec.characteristics)
