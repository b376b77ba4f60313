"""SQL sources against a real PostgreSQL server (through SQLAlchemy and psycopg).

The server is named by the environment variable VERIFY_TEST_POSTGRES_URL (a SQLAlchemy URL
such as postgresql+psycopg://user@/postgres?host=/tmp/sock); `.ci/run` starts a throwaway
cluster and sets it. Without it these tests skip and say so.
"""

from __future__ import annotations

import datetime as dt
import decimal
import json
import os
import subprocess
import sys
import uuid
from pathlib import Path

import pandas as pd
import pytest
from helpers_spec import BASE_CSV, BASE_SPEC

from verify.data import load_measurements
from verify.errors import DataError
from verify.spec import load_spec

ROOT = Path(__file__).resolve().parents[1]
URL = os.environ.get("VERIFY_TEST_POSTGRES_URL")

pytestmark = pytest.mark.skipif(
    not URL, reason="PostgreSQL tests need a server: set VERIFY_TEST_POSTGRES_URL (.ci/run "
                    "starts one); SKIPPED, the SQL source was not tested against PostgreSQL")


@pytest.fixture()
def table():
    """A fresh table of the base rows, typed as a plant database would type them."""
    psycopg = pytest.importorskip("psycopg", reason="psycopg (test extra) not installed")
    pytest.importorskip("sqlalchemy", reason="SQLAlchemy (test extra) not installed")
    name = f"parts_{uuid.uuid4().hex[:10]}"
    conninfo = URL.replace("postgresql+psycopg://", "postgresql://", 1)
    rows = [x.split(",") for x in BASE_CSV.splitlines()[1:]]
    t0 = dt.datetime(2024, 5, 6, 7, 0)
    with psycopg.connect(conninfo, autocommit=True) as con:
        con.execute(f"CREATE TABLE {name} (id serial PRIMARY KEY, site text, lot text, "
                    "supplier text, measured_at timestamp, width numeric(8,3), "
                    "height_mm double precision, remark varchar(20))")
        for i, (lot, sup, w, h) in enumerate(rows):
            con.execute(f"INSERT INTO {name} (site, lot, supplier, measured_at, width, "
                        "height_mm) VALUES ('north', %s, %s, %s, %s, %s)",
                        (lot, sup, t0 + dt.timedelta(minutes=7 * i), decimal.Decimal(w),
                         float(h)))
        con.execute(f"INSERT INTO {name} (site, lot, supplier, measured_at, width, height_mm) "
                    "VALUES ('south', 'Z1', 'Old Co', now(), 99, 99)")
    yield name, conninfo
    with psycopg.connect(conninfo, autocommit=True) as con:
        con.execute(f"DROP TABLE IF EXISTS {name}")


def spec_text(name: str, env: str = "VERIFY_TEST_POSTGRES_URL") -> str:
    return f"""\
format: verify/1
title: postgres case
data:
  source: sql
  url_env: {env}
  query: >-
    SELECT lot, supplier, measured_at, width, height_mm FROM {name}
    WHERE site = :site ORDER BY id
  params: {{site: north}}
  lot: lot
  process: supplier
  old: Old Co
  new: New Co
  order: measured_at
characteristics:
  - name: width
    unit: mm
  - name: height
    column: height_mm
    unit: mm
"""


def write(tmp_path: Path, text: str, name: str = "spec.yaml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def cli(*args, env=None):
    return subprocess.run([sys.executable, "-m", "verify", *args], capture_output=True,
                          text=True, timeout=300, cwd=ROOT, env={**os.environ, **(env or {})})


def test_postgres_rows_give_the_same_table_as_the_csv(tmp_path, table):
    name, _ = table
    (tmp_path / "lots.csv").write_text(BASE_CSV, encoding="utf-8")
    pg = load_measurements(load_spec(write(tmp_path, spec_text(name))))
    csv = load_measurements(load_spec(write(tmp_path, BASE_SPEC, "csv.yaml")))
    cols = ["lot", "process", "characteristic", "value", "excluded", "source_row"]
    pd.testing.assert_frame_equal(pg.table[cols], csv.table[cols])
    origin = pg.files[0].origin
    assert origin["server"].startswith("postgresql ") and origin["url_env"] == \
        "VERIFY_TEST_POSTGRES_URL"
    assert origin["params"] == {"site": "north"} and origin["rows_fetched"] == 8


def test_password_is_masked_in_the_record(tmp_path, table):
    name, _ = table
    # the throwaway cluster trusts local connections, so any password is accepted and ignored
    scheme, tail = URL.split("://", 1)
    user, rest = tail.split("@", 1)
    secret = f"pw-{uuid.uuid4().hex[:8]}"
    env = {"VERIFY_TEST_PG_WITH_PASSWORD": f"{scheme}://{user.split(':')[0]}:{secret}@{rest}"}
    spec = write(tmp_path, spec_text(name, "VERIFY_TEST_PG_WITH_PASSWORD"))
    r = cli("run", str(spec), "--out", str(tmp_path / "out"), env=env)
    assert r.returncode in (0, 1, 3), r.stderr
    text = (tmp_path / "out" / "spec.json").read_text(encoding="utf-8")
    assert secret not in text
    assert secret not in (tmp_path / "out" / "spec.xlsx").read_bytes().decode("latin-1")
    assert json.loads(text)["data_files"][0]["source"]["url"].count(":***@") == 1


def test_postgres_bad_cell_names_query_row_and_column(tmp_path, table):
    name, conninfo = table
    import psycopg

    with psycopg.connect(conninfo, autocommit=True) as con:
        con.execute(f"UPDATE {name} SET remark = 'ten' WHERE id = 3")
    text = spec_text(name).replace("width, height_mm FROM", "remark AS width, height_mm FROM")
    with pytest.raises(DataError) as exc:
        load_measurements(load_spec(write(tmp_path, text)))
    report = exc.value.report()
    assert "result of query 'SELECT lot, supplier, measured_at, remark AS width" in report
    assert "row 4, column 'width': 'ten' is not a number" in report  # 3rd result row


def test_postgres_query_error_is_a_data_error(tmp_path, table):
    name, _ = table
    text = spec_text(name).replace("ORDER BY id", "ORDER BY no_such_column")
    with pytest.raises(DataError, match="the query failed: .*no_such_column"):
        load_measurements(load_spec(write(tmp_path, text)))


def test_replay_reads_the_snapshot_not_the_server(tmp_path, table):
    name, conninfo = table
    spec = write(tmp_path, spec_text(name))
    r = cli("run", str(spec), "--out", str(tmp_path / "out"))
    assert r.returncode in (0, 1, 3), r.stderr
    import psycopg

    with psycopg.connect(conninfo, autocommit=True) as con:
        con.execute(f"DROP TABLE {name}")  # the data are gone from the server
    r = cli("replay", str(tmp_path / "out" / "spec.json"),
            env={"VERIFY_TEST_POSTGRES_URL": "postgresql+psycopg://nobody@/nowhere"})
    assert r.returncode == 0 and "reproduced" in r.stdout, r.stdout + r.stderr


def test_nightly_sees_a_changed_row(tmp_path, table):
    name, conninfo = table
    specs = tmp_path / "specs"
    specs.mkdir()
    write(specs, spec_text(name))
    out = tmp_path / "nightly"
    states = []
    for change in (None, None, "UPDATE {t} SET height_mm = 5.30 WHERE id = 2"):
        if change:
            import psycopg

            with psycopg.connect(conninfo, autocommit=True) as con:
                con.execute(change.format(t=name))
        r = cli("nightly", str(specs), "--out", str(out), "--json")
        states.append(json.loads(r.stdout.splitlines()[0])["state"])
    assert states == ["RUN", "UNCHANGED", "RUN"]
