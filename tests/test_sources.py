"""Data sources beside plain CSV: xlsx through python-calamine, formula cells, declared and
Windows-1252 encodings, Parquet files with row filters, SQL queries (SQLite here; PostgreSQL in
test_sql_postgres.py), snapshots for replay."""

from __future__ import annotations

import io
import json
import re
import shutil
import sqlite3
import subprocess
import sys
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
from helpers_spec import BASE_CSV, BASE_SPEC, edit

from verify.data import load_measurements
from verify.data import xlsx as vxlsx
from verify.errors import DataError, SpecError
from verify.spec import load_spec

ROOT = Path(__file__).resolve().parents[1]


def write(tmp_path: Path, spec_text: str, name: str = "spec.yaml") -> Path:
    p = tmp_path / name
    p.write_text(spec_text, encoding="utf-8")
    return p


def run_cli(*args, cwd=ROOT, env=None):
    return subprocess.run([sys.executable, "-m", "verify", *args], cwd=cwd, capture_output=True,
                          text=True, env=env, timeout=300)


# -- xlsx: python-calamine against openpyxl -----------------------------------------------------


def _openpyxl_tables(monkeypatch, spec):
    monkeypatch.setattr(vxlsx, "_xlsx_rows", vxlsx._xlsx_rows_openpyxl)
    return load_measurements(spec)


def test_calamine_reads_the_demo_workbook_as_openpyxl_does(monkeypatch):
    # two independent readers of the same file must give the same tidy table
    spec = load_spec(ROOT / "specs" / "filler-paired.yaml")
    fast = load_measurements(spec)
    with monkeypatch.context() as m:
        slow = _openpyxl_tables(m, spec)
    pd.testing.assert_frame_equal(fast.table, slow.table)
    assert fast.files == slow.files and fast.notes == slow.notes


def test_calamine_and_openpyxl_agree_on_a_large_mixed_workbook(tmp_path, monkeypatch):
    rng = np.random.default_rng(7)
    n = 30_000
    wb = openpyxl.Workbook(write_only=True)
    ws = wb.create_sheet("lots")
    ws.append(["lot", "supplier", "when", "width", "height_mm", "note"])
    t0 = pd.Timestamp("2024-03-01 06:00").to_pydatetime()
    for i in range(n):
        width = float(np.round(rng.normal(10, 0.02), 4))
        height = "NA" if i % 997 == 0 else (str(round(5.2 + i % 7 * 0.01, 2)) if i % 5 == 0
                                             else float(np.round(rng.normal(5.2, 0.02), 3)))
        ws.append([f"L{i // 500}" if i % 3 else i // 500, "Old Co" if i < n / 2 else "New Co",
                   t0 + pd.Timedelta(minutes=i).to_pytimedelta(), width, height,
                   None if i % 11 else "checked"])
        if i % 4000 == 0:
            ws.append([None] * 6)  # blank rows count but give no measurements
    wb.save(tmp_path / "lots.xlsx")
    spec_text = edit(edit(BASE_SPEC, "file: lots.csv", "file: lots.xlsx"), "  lot: lot\n",
                     "  lot: lot\n  order: when\n")
    spec = load_spec(write(tmp_path, spec_text))
    fast = load_measurements(spec)
    with monkeypatch.context() as m:
        slow = _openpyxl_tables(m, spec)
    assert len(fast.table) == 2 * n
    pd.testing.assert_frame_equal(fast.table, slow.table)
    assert fast.files == slow.files


def _with_saved_formula(path: Path, saved: str | None) -> None:
    """Rewrite an openpyxl workbook so that its formula cells carry a saved result, as
    xlsxwriter writes them (it saves 0 unless told otherwise)."""
    buf = io.BytesIO()
    with zipfile.ZipFile(path) as src, zipfile.ZipFile(buf, "w") as dst:
        for item in src.infolist():
            data = src.read(item.filename)
            if item.filename.startswith("xl/worksheets/") and saved is not None:
                data = data.replace(b"<v />", f"<v>{saved}</v>".encode())
            dst.writestr(item, data)
    path.write_bytes(buf.getvalue())


def _formula_book(tmp_path: Path, saved: str | None) -> Path:
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["lot", "supplier", "width", "height_mm"])
    for line in BASE_CSV.splitlines()[1:]:
        lot, sup, w, h = line.split(",")
        ws.append([lot, sup, float(w), float(h)])
    ws["C3"] = "=C2*1"  # a computed "measurement" in a value column
    ws["C6"] = "=AVERAGE(C2:C5)"
    wb.save(tmp_path / "lots.xlsx")
    _with_saved_formula(tmp_path / "lots.xlsx", saved)
    return tmp_path / "lots.xlsx"


def test_formula_cells_in_value_columns_are_an_error_naming_the_cells(tmp_path):
    _formula_book(tmp_path, "0")
    spec = load_spec(write(tmp_path, edit(BASE_SPEC, "file: lots.csv", "file: lots.xlsx")))
    with pytest.raises(DataError) as exc:
        load_measurements(spec)
    text = exc.value.report()
    assert "cell C3 is a formula ('=C2*1', saved result 0" in text
    assert "cell C6 is a formula" in text and "row 3" in text and "column 'width'" in text
    assert "data.formula_cells: saved-results" in text


def test_saved_results_are_used_when_declared_and_the_audit_says_so(tmp_path):
    _formula_book(tmp_path, "0")
    text = edit(BASE_SPEC, "file: lots.csv", "file: lots.xlsx\n  formula_cells: saved-results")
    m = load_measurements(load_spec(write(tmp_path, text)))
    t = m.table
    widths = t[(t["characteristic"] == "width") & (t["source_row"].isin([3, 6]))]["value"]
    assert widths.tolist() == [0.0, 0.0]  # the saved results, knowingly
    assert any("2 formula cells in value columns read as their saved results" in n
               and "C3, C6" in n for n in m.notes)


def test_formula_without_saved_value_is_an_error_in_any_column(tmp_path):
    _formula_book(tmp_path, None)  # openpyxl saves no result at all
    text = edit(BASE_SPEC, "file: lots.csv", "file: lots.xlsx\n  formula_cells: saved-results")
    with pytest.raises(DataError, match="holds the formula '=C2\\*1' with no saved value"):
        load_measurements(load_spec(write(tmp_path, text)))


def test_formula_cells_key_is_for_xlsx_only(tmp_path):
    (tmp_path / "lots.csv").write_text(BASE_CSV, encoding="utf-8")
    with pytest.raises(SpecError, match="applies to .xlsx files only"):
        load_spec(write(tmp_path, edit(BASE_SPEC, "file: lots.csv",
                                       "file: lots.csv\n  formula_cells: saved-results")))


# -- text encodings -----------------------------------------------------------------------------


def test_windows_1252_is_tried_before_latin_1(tmp_path):
    # Windows-1252 code chart (the Unicode consortium's mapping table cp1252.txt): byte 0x96 is
    # U+2013 EN DASH; in Latin-1 the same byte is the control code U+0096
    csv = BASE_CSV.replace("A1,Old Co", "A1\u2013x,Old Co")
    (tmp_path / "lots.csv").write_bytes(csv.encode("cp1252"))
    m = load_measurements(load_spec(write(tmp_path, BASE_SPEC)))
    assert m.files[0].encoding == "windows-1252"
    assert "A1\u2013x" in set(m.table["lot"])
    assert any("Windows-1252" in n for n in m.notes)


def test_declared_encoding_is_used_and_a_bad_byte_is_named(tmp_path):
    csv = BASE_CSV.replace("Old Co", "\u00d6ld Co")
    spec = edit(BASE_SPEC, "file: lots.csv", "file: lots.csv\n  encoding: latin-1").replace(
        "Old Co", "\u00d6ld Co")
    (tmp_path / "lots.csv").write_bytes(csv.encode("latin-1"))
    m = load_measurements(load_spec(write(tmp_path, spec)))
    assert m.files[0].encoding == "iso8859-1" and not m.notes
    # a UTF-8 declaration on Latin-1 bytes: the byte and its line are named
    spec8 = spec.replace("encoding: latin-1", "encoding: utf-8")
    with pytest.raises(DataError) as exc:
        load_measurements(load_spec(write(tmp_path, spec8)))
    assert "byte 0xd6" in exc.value.report() and "row 2" in exc.value.report()


def test_unknown_encoding_is_a_spec_error(tmp_path):
    with pytest.raises(SpecError, match="not an encoding Python knows"):
        load_spec(write(tmp_path, edit(BASE_SPEC, "file: lots.csv",
                                       "file: lots.csv\n  encoding: klingon-8")))


# -- Parquet ------------------------------------------------------------------------------------


def test_parquet_gives_the_same_evaluation_as_the_csv(tmp_path):
    pq = pytest.importorskip("pyarrow.parquet", reason="pyarrow (verify[parquet]) not installed")
    import pyarrow as pa

    demo = tmp_path / "demo"
    shutil.copytree(ROOT / "specs", demo / "specs")
    shutil.copytree(ROOT / "sample_lots", demo / "sample_lots")
    frame = pd.read_csv(demo / "sample_lots" / "bushing_lots.csv", dtype=str,
                        keep_default_na=False)
    # typed columns, as a Parquet export has them; "" stays text (not measured)
    typed = {}
    for c in frame.columns:
        numbers = pd.to_numeric(frame[c], errors="coerce")
        typed[c] = numbers if numbers.notna().all() else frame[c]
    pq.write_table(pa.table(typed), demo / "sample_lots" / "bushing_lots.parquet")
    spec_csv = demo / "specs" / "bushing-supplier.yaml"
    spec_pq = demo / "specs" / "bushing-parquet.yaml"
    spec_pq.write_text(spec_csv.read_text(encoding="utf-8").replace(
        "bushing_lots.csv", "bushing_lots.parquet"), encoding="utf-8")
    import verify

    a, b = verify.evaluate(spec_csv), verify.evaluate(spec_pq)
    assert b.measurements.files[0].encoding == "parquet"
    pd.testing.assert_frame_equal(a.to_frame(), b.to_frame())
    ta, tb = a.measurements.table, b.measurements.table
    pd.testing.assert_frame_equal(ta.drop(columns="source_file"), tb.drop(columns="source_file"))


def _parquet_case(tmp_path, filters: str) -> Path:
    pq = pytest.importorskip("pyarrow.parquet", reason="pyarrow (verify[parquet]) not installed")
    import pyarrow as pa

    rows = [r.split(",") for r in BASE_CSV.splitlines()[1:]]
    t = pa.table({"lot": [r[0] for r in rows] + ["Z9", "Z9"],
                  "supplier": [r[1] for r in rows] + ["Old Co", "New Co"],
                  "width": [float(r[2]) for r in rows] + [99.0, 99.0],
                  "height_mm": [float(r[3]) for r in rows] + [99.0, 99.0],
                  "site": ["north"] * 8 + ["south"] * 2})
    pq.write_table(t, tmp_path / "lots.parquet")
    return write(tmp_path, edit(BASE_SPEC, "file: lots.csv", "file: lots.parquet" + filters))


def test_parquet_row_filters_keep_file_row_numbers(tmp_path):
    spec = load_spec(_parquet_case(tmp_path, "\n  filter: [[site, ==, north], [lot, not in, "
                                             "[B2]]]"))
    m = load_measurements(spec)
    t = m.table
    assert set(t["lot"]) == {"A1", "A2", "B1"}
    # records 5 and 6 are rows 6 and 7, as in a CSV export (header row 1)
    assert t[t["lot"] == "B1"]["source_row"].tolist() == [6, 7, 6, 7]
    assert any("data.filter kept 6 of 10 rows" in n for n in m.notes)


def test_parquet_filter_errors_name_the_filter(tmp_path):
    with pytest.raises(DataError, match=r"data.filter\[0\] names column 'plant'"):
        load_measurements(load_spec(_parquet_case(tmp_path, "\n  filter: [[plant, ==, x]]")))
    with pytest.raises(SpecError, match="is not an operator"):
        load_spec(_parquet_case(tmp_path, "\n  filter: [[site, '<>', x]]"))
    with pytest.raises(SpecError, match="applies to .parquet files only"):
        load_spec(write(tmp_path, edit(BASE_SPEC, "file: lots.csv",
                                       "file: lots.csv\n  filter: [[a, ==, 1]]")))


# -- SQL (SQLite, through Python's sqlite3) --------------------------------------------------


SQL_SPEC = """\
format: verify/1
title: sql case
data:
  source: sql
  url: sqlite:///lots.db
  query: SELECT lot, supplier, width, height_mm FROM parts WHERE site = :site ORDER BY id
  params: {site: north}
  lot: lot
  process: supplier
  old: Old Co
  new: New Co
characteristics:
  - name: width
    unit: mm
  - name: height
    column: height_mm
    unit: mm
"""


def _db(tmp_path: Path, rows=None) -> Path:
    con = sqlite3.connect(tmp_path / "lots.db")
    con.execute("CREATE TABLE parts (id INTEGER PRIMARY KEY, site TEXT, lot TEXT, supplier "
                "TEXT, width, height_mm REAL)")
    if rows is None:
        rows = [r.split(",") for r in BASE_CSV.splitlines()[1:]]
        rows = [(r[0], r[1], float(r[2]), float(r[3])) for r in rows]
    con.executemany("INSERT INTO parts (site, lot, supplier, width, height_mm) VALUES "
                    "('north', ?, ?, ?, ?)", rows)
    con.execute("INSERT INTO parts (site, lot, supplier, width, height_mm) VALUES "
                "('south', 'Z1', 'Old Co', 50, 50)")
    con.commit()
    con.close()
    return tmp_path / "lots.db"


def test_sql_rows_give_the_same_table_as_the_same_rows_in_a_csv(tmp_path):
    _db(tmp_path)
    (tmp_path / "lots.csv").write_text(BASE_CSV, encoding="utf-8")
    from_sql = load_measurements(load_spec(write(tmp_path, SQL_SPEC)))
    from_csv = load_measurements(load_spec(write(tmp_path, BASE_SPEC, "csv.yaml")))
    cols = ["lot", "process", "characteristic", "value", "excluded"]
    pd.testing.assert_frame_equal(from_sql.table[cols], from_csv.table[cols])
    f = from_sql.files[0]
    assert f.encoding == "sql" and f.rows_read == 8  # the south row is not fetched
    assert f.origin["query"].startswith("SELECT lot") and f.origin["params"] == {"site": "north"}
    assert re.match(r"SQLite \d+\.\d+", f.origin["server"])
    # the record's hash is that of the fetched rows as canonical CSV
    import hashlib

    from verify.sources.sql import canonical_csv

    rows = [(r[0], r[1], float(r[2]), float(r[3]))
            for r in (x.split(",") for x in BASE_CSV.splitlines()[1:])]
    raw = canonical_csv(["lot", "supplier", "width", "height_mm"], rows)
    assert f.sha256 == hashlib.sha256(raw).hexdigest() and f.size == len(raw)


def test_sql_bad_cell_names_the_query_result_row_and_column(tmp_path):
    rows = [("A1", "Old Co", 10.0, 5.2), ("A1", "Old Co", "ten", 5.2),
            ("B1", "New Co", 10.1, 5.3), ("B1", "New Co", 10.2, 5.1)]
    _db(tmp_path, rows)
    with pytest.raises(DataError) as exc:
        load_measurements(load_spec(write(tmp_path, SQL_SPEC)))
    text = exc.value.report()
    assert "result of query 'SELECT lot, supplier" in text
    assert "row 3, column 'width': 'ten' is not a number" in text  # 2nd result row


def test_sql_url_with_password_is_refused(tmp_path):
    text = SQL_SPEC.replace("  url: sqlite:///lots.db\n",
                            "  url: postgresql://qe:s3cret@db/lots\n")
    with pytest.raises(SpecError) as exc:
        load_spec(write(tmp_path, text))
    assert "`data.url`" in exc.value.report()
    assert "credentials belong in the environment" in exc.value.report()


def test_mask_url_hides_the_password():
    from verify.sources.sql import mask_url

    assert mask_url("postgresql+psycopg://qe:s3cret@db:5432/lots") == (
        "postgresql+psycopg://qe:***@db:5432/lots")
    assert mask_url("sqlite:///lots.db") == "sqlite:///lots.db"
    assert mask_url("postgresql://qe@/lots?host=/tmp") == "postgresql://qe@/lots?host=/tmp"


def test_sql_spec_problems_are_named(tmp_path):
    cases = {
        SQL_SPEC.replace("  url: sqlite:///lots.db\n", ""): "exactly one of data.url",
        SQL_SPEC.replace("SELECT lot", "DELETE FROM parts; SELECT lot"): "must be a SELECT",
        SQL_SPEC.replace("ORDER BY id", "ORDER BY id; DROP TABLE parts"): "more than one",
        SQL_SPEC.replace("  url: sqlite:///lots.db\n", "  url_env: postgres://x\n"):
            "not an environment variable name",
        SQL_SPEC.replace("  source: sql\n", ""): "data.url is for SQL sources",
    }
    for text, words in cases.items():
        with pytest.raises(SpecError) as exc:
            load_spec(write(tmp_path, text))
        assert words in exc.value.report(), exc.value.report()


def test_sql_url_env_unset_and_query_failure_are_data_errors(tmp_path, monkeypatch):
    _db(tmp_path)
    monkeypatch.delenv("VERIFY_TEST_NO_SUCH_URL", raising=False)
    spec = load_spec(write(tmp_path, SQL_SPEC.replace("  url: sqlite:///lots.db\n",
                                                      "  url_env: VERIFY_TEST_NO_SUCH_URL\n")))
    with pytest.raises(DataError, match="VERIFY_TEST_NO_SUCH_URL .data.url_env. is not set"):
        load_measurements(spec)
    bad = load_spec(write(tmp_path, SQL_SPEC.replace("FROM parts", "FROM no_table")))
    with pytest.raises(DataError, match="the query failed: no such table: no_table"):
        load_measurements(bad)


def test_sql_through_sqlalchemy_matches_sqlite3(tmp_path, monkeypatch):
    pytest.importorskip("sqlalchemy", reason="SQLAlchemy (verify[sql]) not installed")
    db = _db(tmp_path)
    monkeypatch.setenv("VERIFY_TEST_SQLITE_URL", f"sqlite:///{db}")
    direct = load_measurements(load_spec(write(tmp_path, SQL_SPEC)))
    via = load_measurements(load_spec(write(tmp_path, SQL_SPEC.replace(
        "  url: sqlite:///lots.db\n", "  url_env: VERIFY_TEST_SQLITE_URL\n"), "env.yaml")))
    pd.testing.assert_frame_equal(direct.table.drop(columns="source_file"),
                                  via.table.drop(columns="source_file"))
    assert direct.files[0].sha256 == via.files[0].sha256
    assert via.files[0].origin["server"].startswith("sqlite ")


def test_sql_run_keeps_a_snapshot_and_replay_needs_no_database(tmp_path):
    _db(tmp_path)
    spec = write(tmp_path, SQL_SPEC)
    r = run_cli("run", str(spec), "--out", str(tmp_path / "out"))
    assert r.returncode in (0, 1, 3), r.stderr
    result = tmp_path / "out" / "spec.json"
    snap = tmp_path / "out" / "spec.rows.csv"
    doc = json.loads(result.read_text(encoding="utf-8"))
    import hashlib

    assert hashlib.sha256(snap.read_bytes()).hexdigest() == doc["data_files"][0]["sha256"]
    assert doc["data_files"][0]["source"]["params"] == {"site": "north"}
    (tmp_path / "lots.db").unlink()  # the database is gone: replay reads the snapshot
    r = run_cli("replay", str(result))
    assert r.returncode == 0 and "reproduced" in r.stdout, r.stdout + r.stderr
    snap.write_bytes(snap.read_bytes().replace(b"10.01", b"10.02"))
    r = run_cli("replay", str(result))
    assert r.returncode == 1 and "snapshot of the SQL rows changed" in r.stdout


def test_sql_demo_spec_runs_with_the_demo(demo):
    r = run_cli("run", "specs/", "--out", "reports", cwd=demo)
    assert r.returncode == 1, r.stderr  # the demo's HOLD
    assert "bracket-die-sql: PASS" in r.stdout
    assert (demo / "reports" / "bracket-die-sql.rows.csv").is_file()


def test_nightly_fingerprints_the_fetched_rows(tmp_path):
    _db(tmp_path)
    specs = tmp_path / "specs"
    specs.mkdir()
    (specs / "lots.db").write_bytes((tmp_path / "lots.db").read_bytes())
    write(specs, SQL_SPEC)
    out = tmp_path / "nightly"
    first = run_cli("nightly", str(specs), "--out", str(out), "--json")
    second = run_cli("nightly", str(specs), "--out", str(out), "--json")
    assert json.loads(first.stdout.splitlines()[0])["state"] == "RUN"
    assert json.loads(second.stdout.splitlines()[0])["state"] == "UNCHANGED", second.stdout
    con = sqlite3.connect(specs / "lots.db")
    con.execute("UPDATE parts SET width = 10.5 WHERE id = 1")
    con.commit()
    con.close()
    third = run_cli("nightly", str(specs), "--out", str(out), "--json")
    assert json.loads(third.stdout.splitlines()[0])["state"] == "RUN", third.stdout
