"""The nightly ledger: append-only storage, fingerprints, the lock and the decision of record.

No statistics here: the rules checked are the ledger's own (issue 6, "The ledger" and "The
decision of record"), so expected values follow from those rules, not from a reference source.
"""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import time
from dataclasses import replace
from pathlib import Path

import pytest

from verify.ledger import (
    DataFile,
    Entry,
    Fingerprint,
    Ledger,
    LedgerBusyError,
    LedgerError,
    LedgerLock,
    Record,
    RunRow,
    drift_between,
    judge,
)


@pytest.fixture
def ledger_path(tmp_path: Path) -> Path:
    return tmp_path / "out" / "ledger.sqlite"


def _entry(run_id: str = "r1", spec: str = "/specs/a.yaml", **kw) -> Entry:
    base = dict(run_id=run_id, spec_path=spec, tool_version="0.1.0",
                started="2025-01-02T02:00:00Z", finished="2025-01-02T02:00:01Z", state="RUN",
                spec_sha256="aa", data_files=(DataFile("lots.csv", "/specs/lots.csv", "bb"),),
                decision="PASS", characteristics={"bore": "PASS", "wall": "PASS"},
                lots={"old": ("A1", "A2"), "new": ("B1",)})
    base.update(kw)
    return Entry(**base)


def _record(spec: str = "/specs/a.yaml", sha: str = "aa", **kw) -> Record:
    base = dict(spec_path=spec, spec_sha256=sha, run_id="r1", decided="2025-01-02T02:00:01Z",
                decision="PASS", characteristics={"bore": "PASS", "wall": "PASS"},
                basis="every process reached min_n", final=False)
    base.update(kw)
    return Record(**base)


# --- storage -----------------------------------------------------------------------------------


def test_open_creates_a_wal_ledger_with_its_triggers(ledger_path):
    with Ledger.open(ledger_path) as led:
        assert led.integrity() == "ok"
    con = sqlite3.connect(ledger_path)
    assert con.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    triggers = {r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type='trigger'")}
    for table in ("meta", "entries", "records", "runs"):
        assert {f"{table}_no_update", f"{table}_no_delete", f"{table}_no_replace"} <= triggers


def test_entry_round_trip(ledger_path):
    with Ledger.open(ledger_path) as led:
        stored, rec = led.append(_entry(drift=True, drift_note="overall PASS -> HOLD",
                                        plan_complete=True, standing="MONITORING"))
        assert rec is None
        assert stored.id is not None
    with Ledger.open(ledger_path) as led:  # a fresh connection reads what the first wrote
        back = led.last_entry("/specs/a.yaml")
        assert back == stored
        assert back.fingerprint == Fingerprint("aa", stored.data_files, "0.1.0")


def test_record_and_entry_are_written_together(ledger_path):
    with Ledger.open(ledger_path) as led:
        entry, rec = led.append(_entry(standing="RECORD"), record=_record())
        assert entry.record_id == rec.id
        assert led.record("/specs/a.yaml", "aa") == rec
        assert led.latest_record("/specs/a.yaml") == rec
        assert led.record("/specs/a.yaml", "other") is None


def test_second_record_for_one_spec_version_is_refused_and_rolls_back(ledger_path):
    with Ledger.open(ledger_path) as led:
        led.append(_entry(), record=_record())
        with pytest.raises(sqlite3.IntegrityError):
            led.append(_entry(run_id="r2"), record=_record(run_id="r2", decision="HOLD"))
        # the transaction holds the record and the entry: neither was written
        assert [e.run_id for e in led.entries()] == ["r1"]
        assert [r.run_id for r in led.records()] == ["r1"]


def test_one_entry_per_spec_per_run(ledger_path):
    with Ledger.open(ledger_path) as led:
        led.append(_entry())
        with pytest.raises(sqlite3.IntegrityError):
            led.append(_entry(decision="HOLD"))
        assert len(led.entries()) == 1


def test_last_entries_and_last_results(ledger_path):
    with Ledger.open(ledger_path) as led:
        led.append(_entry("r1"))
        led.append(_entry("r1", spec="/specs/b.yaml", decision="HOLD"))
        led.append(_entry("r2", state="ERROR", decision=None, error="broken"))
        newest = led.last_entries()
        results = led.last_results()
    assert newest["/specs/a.yaml"].state == "ERROR"
    assert results["/specs/a.yaml"].run_id == "r1"
    assert results["/specs/b.yaml"].decision == "HOLD"


def test_unknown_state_is_refused(ledger_path):
    with Ledger.open(ledger_path) as led, pytest.raises(LedgerError):
        led.append(_entry(state="DONE"))


def test_the_tool_offers_no_way_to_change_a_row():
    public = {n for n in dir(Ledger) if not n.startswith("_")}
    assert not {n for n in public if any(w in n for w in ("update", "delete", "remove", "set"))}


@pytest.mark.parametrize("sql", [
    "UPDATE entries SET decision = 'HOLD'",
    "DELETE FROM entries",
    "UPDATE records SET decision = 'HOLD'",
    "DELETE FROM records",
    "UPDATE runs SET exit_status = 0",
    "DELETE FROM runs",
    "UPDATE meta SET value = '0'",
    "DELETE FROM meta",
    "INSERT OR REPLACE INTO entries (id, run_id, spec_path, tool_version, started, finished, "
    "state) VALUES (1, 'x', 'y', 'v', 's', 'f', 'RUN')",
    "INSERT OR REPLACE INTO records (spec_path, spec_sha256, run_id, decided, decision, "
    "characteristics, basis, final) VALUES ('/specs/a.yaml', 'aa', 'x', 'd', 'HOLD', '{}', "
    "'b', 0)",
    "INSERT OR REPLACE INTO meta (key, value) VALUES ('schema', '0')",
])
def test_direct_sql_cannot_change_or_remove_rows(ledger_path, sql):
    with Ledger.open(ledger_path) as led:
        led.append(_entry(), record=_record())
        led.append_run(RunRow("r1", "s", "f", "0.1.0", "host", 1, "verify nightly", 1, 1, 0, 0,
                              0))
        before = (led.entries(), led.records(), led.runs())
    con = sqlite3.connect(ledger_path)
    with pytest.raises(sqlite3.IntegrityError, match="append-only|hash-chained"):
        con.execute(sql)
    con.close()
    with Ledger.open(ledger_path) as led:
        assert (led.entries(), led.records(), led.runs()) == before


def test_not_a_ledger_gives_a_clear_error(tmp_path):
    bogus = tmp_path / "ledger.sqlite"
    bogus.write_bytes(b"this is not a database" * 100)
    with pytest.raises(LedgerError, match="cannot open the ledger"):
        Ledger.open(bogus)


# --- fingerprints ------------------------------------------------------------------------------


def test_fingerprint_matches_only_when_every_input_is_the_same():
    files = (DataFile("a.csv", "/x/a.csv", "11"), DataFile("b.csv", "/x/b.csv", "22"))
    fp = Fingerprint("s1", files, "0.1.0")
    assert fp.matches(Fingerprint("s1", files[::-1], "0.1.0"))  # order does not matter
    assert not fp.matches(None)
    assert not fp.matches(Fingerprint("s2", files, "0.1.0"))  # spec edited
    assert not fp.matches(Fingerprint("s1", files, "0.2.0"))  # tool upgraded
    assert not fp.matches(Fingerprint("s1", (files[0], replace(files[1], sha256="23")), "0.1.0"))
    assert not fp.matches(Fingerprint("s1", files[:1], "0.1.0"))  # a file more or less
    missing = Fingerprint("s1", (replace(files[0], sha256=None),), "0.1.0")
    assert not missing.matches(missing)  # a missing file never counts as unchanged


# --- the lock ----------------------------------------------------------------------------------


def test_a_second_lock_waits_then_fails_with_the_holders_details(ledger_path):
    first = LedgerLock(ledger_path, timeout=0, started="2025-01-02T02:00:00Z", run_id="r1")
    with first:
        second = LedgerLock(ledger_path, timeout=0.3, started="later", run_id="r2")
        t0 = time.monotonic()
        with pytest.raises(LedgerBusyError) as info:
            second.acquire()
        assert time.monotonic() - t0 >= 0.3  # it waited for the timeout first
    msg = info.value.report()
    assert f"pid {os.getpid()}" in msg
    assert "since 2025-01-02T02:00:00Z" in msg
    assert "try again later" in msg
    with LedgerLock(ledger_path, timeout=0, started="now"):  # released: free again
        pass


def test_the_lock_dies_with_its_holder(ledger_path):
    ledger_path.parent.mkdir(parents=True)
    code = ("import sys, time; from verify.ledger import LedgerLock\n"
            f"LedgerLock({str(ledger_path)!r}, timeout=0, started='x').acquire()\n"
            "print('locked', flush=True); time.sleep(60)\n")
    proc = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE, text=True)
    try:
        assert proc.stdout.readline().strip() == "locked"
        with pytest.raises(LedgerBusyError, match=f"pid {proc.pid}"):
            LedgerLock(ledger_path, timeout=0, started="x").acquire()
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=10)
        with LedgerLock(ledger_path, timeout=5, started="x"):
            pass
    finally:
        if proc.poll() is None:
            proc.kill()
            proc.wait()
        proc.stdout.close()


# --- the decision of record (pure rules) ------------------------------------------------------


def _judge(**kw):
    base = dict(spec_path="/specs/a.yaml", spec_sha256="aa", run_id="r2",
                now="2025-01-05T02:00:00Z", decision="PASS",
                characteristics={"bore": "PASS", "wall": "PASS"}, plan_complete=True, min_n=30,
                shortfall=None, final=False, record=None, previous=None)
    base.update(kw)
    return judge(**base)


def test_plan_complete_locks_a_record():
    s = _judge()
    assert s.kind == "RECORD"
    assert s.new_record.decision == "PASS"
    assert s.new_record.basis == "every process reached min_n"
    assert s.new_record.characteristics == {"bore": "PASS", "wall": "PASS"}
    assert s.text.startswith("decision of record: PASS, locked by this run (r2, 2025-01-05)")


def test_without_min_n_the_first_run_locks():
    s = _judge(min_n=None)
    assert s.kind == "RECORD"
    assert "no min_n" in s.new_record.basis


def test_shortfall_is_provisional_and_locks_nothing():
    s = _judge(decision="PENDING", plan_complete=False, shortfall="bore: new: 12 of 30 planned")
    assert s.kind == "PROVISIONAL"
    assert s.new_record is None
    assert "new: 12 of 30 planned" in s.text


def test_final_locks_even_before_the_plan_is_complete():
    s = _judge(decision="HOLD", plan_complete=False, final=True, shortfall="x")
    assert s.kind == "RECORD"
    assert s.new_record.final
    assert s.new_record.decision == "HOLD"
    assert "--final" in s.new_record.basis


def test_monitoring_without_drift():
    s = _judge(record=_record(id=1))
    assert s.kind == "MONITORING"
    assert not s.drift
    assert s.new_record is None
    assert s.text.startswith("monitoring; decision of record: PASS on 2025-01-02, run r1")


def test_monitoring_flags_drift_and_keeps_the_record():
    rec = _record(id=1)
    s = _judge(record=rec, decision="HOLD", characteristics={"bore": "HOLD", "wall": "PASS"})
    assert s.kind == "MONITORING"
    assert s.drift
    assert s.record == rec  # the record in force is the old one, unchanged
    assert s.new_record is None
    assert s.drift_note == "overall PASS -> HOLD; bore PASS -> HOLD"
    assert "the decision of record stands" in s.text


def test_drift_in_one_characteristic_with_the_same_overall_decision():
    rec = _record(decision="HOLD", characteristics={"bore": "HOLD", "wall": "PASS"})
    changes = drift_between(rec, "HOLD", {"bore": "PASS", "wall": "HOLD"})
    assert changes == ["bore HOLD -> PASS", "wall PASS -> HOLD"]


def test_an_edited_spec_starts_a_record_naming_the_one_it_supersedes():
    old = _record(id=7, sha="old")
    s = _judge(spec_sha256="new", previous=old, supersedes_reason="tighter margin agreed")
    assert s.kind == "RECORD"
    assert s.new_record.spec_sha256 == "new"
    assert s.new_record.supersedes == 7
    assert s.new_record.supersedes_reason == "tighter margin agreed"
    assert "supersedes the record of the earlier spec version, PASS on 2025-01-02, run r1" in s.text
    pending = _judge(spec_sha256="new", previous=old, plan_complete=False, decision="PENDING")
    assert pending.kind == "PROVISIONAL"
    assert "will supersede" in pending.text
