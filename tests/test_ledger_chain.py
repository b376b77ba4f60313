"""The ledger's hash chain and ``verify ledger``: tampering with the sqlite3 shell is found.

The tampering is done as the issue describes it, with plain SQL as the sqlite3 shell would send
it (``DROP TRIGGER`` then ``UPDATE``, a forged ``INSERT``, a ``DELETE``); Python's sqlite3 module
sends the same statements to the same library. The expected outcomes follow from the chain's
definition (documented in ``verify.ledger.canonical_row``), which this file recomputes on its
own from that documentation rather than by calling the code under test.
"""

from __future__ import annotations

import hashlib
import json
import sqlite3
from pathlib import Path

import pytest

from tests.test_nightly import nightly, write_spec
from verify.cli import main
from verify.ledger import GENESIS, Entry, Ledger, LedgerBrokenError, LedgerError, RunRow


def _entry(run_id: str, spec: str = "/specs/a.yaml") -> Entry:
    return Entry(run_id=run_id, spec_path=spec, tool_version="0.1.0",
                 started="2025-01-02T02:00:00Z", finished="2025-01-02T02:00:01Z", state="RUN",
                 spec_sha256="aa", decision="PASS", characteristics={"bore": "PASS"})


@pytest.fixture
def ledger(tmp_path: Path) -> Path:
    """A ledger of two nightly runs: entry, entry, run row, entry, run row."""
    path = tmp_path / "ledger.sqlite"
    with Ledger.open(path) as led:
        led.append(_entry("r1"))
        led.append(_entry("r1", "/specs/b.yaml"))
        led.append_run(RunRow("r1", "s", "f", "0.1.0", "host", 1, "verify nightly", 2, 2, 0, 0,
                              0))
        led.append(_entry("r2"))
        led.append_run(RunRow("r2", "s", "f", "0.1.0", "host", 1, "verify nightly", 1, 1, 0, 0,
                              0))
    return path


def shell(path: Path, sql: str) -> None:
    con = sqlite3.connect(path, isolation_level=None)
    try:
        con.executescript(sql)
    finally:
        con.close()


def check(path: Path, capsys, *extra: str) -> tuple[int, str]:
    rc = main(["ledger", str(path), *extra])
    out = capsys.readouterr()
    return rc, out.out + out.err


def _own_hash(table: str, row: dict) -> str:
    """row_hash recomputed from the documented canonical form, independently of verify."""
    body = {k: v for k, v in row.items() if k != "row_hash"}
    text = json.dumps({"row": body, "table": table}, sort_keys=True, separators=(",", ":"),
                      ensure_ascii=True)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def test_intact_ledger_exits_0_with_entry_count_and_head(ledger, capsys):
    con = sqlite3.connect(ledger)
    con.row_factory = sqlite3.Row
    rows = []
    for table in ("entries", "records", "runs"):
        rows += [(r["chain_seq"], table, dict(r)) for r in con.execute(f"SELECT * FROM {table}")]
    con.close()
    rows.sort(key=lambda x: x[0])
    assert [r[0] for r in rows] == [1, 2, 3, 4, 5]  # one chain across the tables
    prev = GENESIS
    for _, table, row in rows:
        assert row["prev_hash"] == prev
        assert row["row_hash"] == _own_hash(table, row)
        prev = row["row_hash"]
    rc, out = check(ledger, capsys)
    assert rc == 0
    assert "intact: 3 entries" in out and prev in out


def test_drop_trigger_then_update_exits_1_naming_row_and_trigger(ledger, capsys):
    shell(ledger, "DROP TRIGGER entries_no_update; UPDATE entries SET decision = 'HOLD' "
                  "WHERE id = 2;")
    rc, out = check(ledger, capsys)
    assert rc == 1
    assert "entries row 2 (chain position 2)" in out and "changed" in out
    assert "trigger entries_no_update is missing" in out


def test_forged_insert_exits_1(ledger, capsys):
    con = sqlite3.connect(ledger)
    head = con.execute("SELECT row_hash FROM runs WHERE chain_seq = 5").fetchone()[0]
    con.close()
    # a forger who continues the chain's positions but cannot give a matching hash
    shell(ledger, "INSERT INTO entries (run_id, spec_path, tool_version, started, finished, "
                  "state, decision, chain_seq, prev_hash, row_hash) VALUES ('forged', "
                  f"'/specs/a.yaml', '0.1.0', 's', 'f', 'RUN', 'PASS', 6, '{head}', "
                  "'feedbeef');")
    rc, out = check(ledger, capsys)
    assert rc == 1
    assert "entries row 4 (chain position 6)" in out and "inserted outside verify" in out


def test_forged_insert_out_of_chain_is_refused_and_found_once_the_trigger_is_gone(ledger,
                                                                                  capsys):
    forge = ("INSERT INTO entries (run_id, spec_path, tool_version, started, finished, state, "
             "decision, chain_seq, prev_hash, row_hash) VALUES ('forged', '/specs/c.yaml', "
             "'0.1.0', 's', 'f', 'RUN', 'PASS', 9, 'x', 'y');")
    with pytest.raises(sqlite3.IntegrityError, match="hash-chained"):
        shell(ledger, forge)
    shell(ledger, "DROP TRIGGER entries_in_chain;" + forge)
    rc, out = check(ledger, capsys)
    assert rc == 1
    assert "positions 6 to 8 missing" in out  # the forged row sits beyond a gap
    assert "trigger entries_in_chain is missing" in out


def test_a_removed_row_is_named(ledger, capsys):
    shell(ledger, "DROP TRIGGER runs_no_delete; DELETE FROM runs WHERE run_id = 'r1';")
    rc, out = check(ledger, capsys)
    assert rc == 1
    assert "chain position 3 missing before entries row 3 (chain position 4)" in out
    assert "a row was removed" in out


def test_rows_removed_from_the_end_are_found_against_a_printed_head(ledger, capsys):
    rc, out = check(ledger, capsys)
    head = out.split("chain head ")[1].split()[0]
    shell(ledger, "DROP TRIGGER runs_no_delete; DELETE FROM runs WHERE run_id = 'r2'; "
                  "CREATE TRIGGER runs_no_delete BEFORE DELETE ON runs BEGIN SELECT "
                  "RAISE(ABORT, 'the verify ledger is append-only: DELETE on runs refused'); "
                  "END;")
    rc, out = check(ledger, capsys)
    assert rc == 0  # the chain itself is sound up to its new end ...
    rc, out = check(ledger, capsys, "--head", head)
    assert rc == 1 and f"no row carries the head {head}" in out  # ... but not the anchor


def test_an_altered_trigger_is_named(ledger, capsys):
    shell(ledger, "DROP TRIGGER records_no_update; CREATE TRIGGER records_no_update BEFORE "
                  "UPDATE ON records BEGIN SELECT 1; END;")
    rc, out = check(ledger, capsys)
    assert rc == 1 and "trigger records_no_update was altered" in out


def test_opening_a_broken_ledger_refuses_and_recreates_no_trigger(ledger):
    shell(ledger, "DROP TRIGGER entries_no_delete;")
    with pytest.raises(LedgerBrokenError, match="entries_no_delete is missing"):
        Ledger.open(ledger)
    con = sqlite3.connect(ledger)
    names = {r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type='trigger'")}
    con.close()
    assert "entries_no_delete" not in names


def test_a_schema_1_ledger_is_refused_clearly(tmp_path, capsys):
    old = tmp_path / "old.sqlite"
    shell(old, "CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL); "
               "INSERT INTO meta VALUES ('schema', '1'); CREATE TABLE entries (id INTEGER);")
    with pytest.raises(LedgerError, match="schema 1, written before rows were hash-chained"):
        Ledger.open(old)
    rc, out = check(old, capsys)
    assert rc == 2 and "--ledger NEW_PATH" in out


def test_not_a_ledger_exits_2(tmp_path, capsys):
    rc, out = check(tmp_path / "missing.sqlite", capsys)
    assert rc == 2 and "no such ledger file" in out
    rc, out = check(tmp_path / "x.sqlite", capsys, "--head", "nothex")
    assert rc == 2


def test_nightly_refuses_a_broken_ledger_and_anchors_an_intact_one(tmp_path, capsys):
    specs, out = tmp_path / "specs", tmp_path / "nightly"
    write_spec(specs, "bushing")
    result, lines, _ = nightly(specs, out)
    led_path = out / "ledger.sqlite"
    # the result JSON carries the chain head after its entry; the digest the head after the run
    doc = json.loads(next((out / "bushing").glob("*-PASS.json")).read_text(encoding="utf-8"))
    con = sqlite3.connect(led_path)
    entry_hash = con.execute("SELECT row_hash FROM entries").fetchone()[0]
    run_hash = con.execute("SELECT row_hash FROM runs").fetchone()[0]
    con.close()
    assert doc["ledger"]["head"] == entry_hash and doc["ledger"]["chain_position"] == 2
    assert result.head == run_hash and f"ledger head {run_hash}" in lines[-1]
    import openpyxl

    ws = openpyxl.load_workbook(result.digest).active
    texts = [str(c.value) for row in ws.iter_rows() for c in row if c.value is not None]
    assert any(run_hash in t for t in texts)
    rc, text = check(led_path, capsys, "--head", run_hash, "--head", entry_hash)
    assert rc == 0
    # tamper, then the next night must refuse (exit 2) and append nothing
    shell(led_path, "DROP TRIGGER entries_no_update; UPDATE entries SET decision = 'HOLD';")
    before = led_path.read_bytes()
    from verify.cli_nightly import main_for_tests

    rc = main_for_tests([str(specs), "--out", str(out)])
    err = capsys.readouterr().err
    assert rc == 2
    assert "the ledger fails its check, so nothing was appended" in err
    con = sqlite3.connect(led_path)
    assert con.execute("SELECT COUNT(*) FROM runs").fetchone()[0] == 1
    assert con.execute("SELECT COUNT(*) FROM sqlite_master WHERE name = 'entries_no_update'"
                       ).fetchone()[0] == 0  # never silently recreated
    con.close()
    assert len(before) > 0
