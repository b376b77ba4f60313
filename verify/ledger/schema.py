"""The ledger's schema: its tables, the triggers that keep it append-only and
hash-chained (the exact SQL :func:`~verify.ledger.chain.check_chain` compares with), the
columns of each chained table, and the schema version."""

from __future__ import annotations

import sqlite3
from pathlib import Path

SCHEMA_VERSION = "2"
GENESIS = "0" * 64  # prev_hash of the first row of the chain
STATES = ("RUN", "UNCHANGED", "ERROR")
STANDINGS = ("PROVISIONAL", "RECORD", "MONITORING")

_TABLES = ("meta", "entries", "records", "runs")

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (
    key TEXT PRIMARY KEY,
    value TEXT NOT NULL
);
CREATE TABLE IF NOT EXISTS entries (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    run_id TEXT NOT NULL,
    spec_path TEXT NOT NULL,
    spec_sha256 TEXT,
    data_files TEXT NOT NULL DEFAULT '[]',
    tool_version TEXT NOT NULL,
    started TEXT NOT NULL,
    finished TEXT NOT NULL,
    state TEXT NOT NULL CHECK (state IN ('RUN', 'UNCHANGED', 'ERROR')),
    decision TEXT CHECK (decision IS NULL OR decision IN ('PASS', 'HOLD', 'PENDING')),
    characteristics TEXT NOT NULL DEFAULT '{}',
    final INTEGER NOT NULL DEFAULT 0,
    plan_complete INTEGER,
    standing TEXT CHECK (standing IS NULL
                         OR standing IN ('PROVISIONAL', 'RECORD', 'MONITORING')),
    record_id INTEGER REFERENCES records(id),
    drift INTEGER NOT NULL DEFAULT 0,
    drift_note TEXT,
    monitoring TEXT,
    lots TEXT NOT NULL DEFAULT '{}',
    workbook_path TEXT,
    result_path TEXT,
    workbook_sha256 TEXT,
    evaluation_id TEXT,
    based_on INTEGER REFERENCES entries(id),
    error TEXT,
    chain_seq INTEGER NOT NULL UNIQUE,
    prev_hash TEXT NOT NULL,
    row_hash TEXT NOT NULL
);
CREATE UNIQUE INDEX IF NOT EXISTS entries_one_per_run ON entries (run_id, spec_path);
CREATE INDEX IF NOT EXISTS entries_by_spec ON entries (spec_path, id);
CREATE TABLE IF NOT EXISTS records (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    spec_path TEXT NOT NULL,
    spec_sha256 TEXT NOT NULL,
    run_id TEXT NOT NULL,
    decided TEXT NOT NULL,
    decision TEXT NOT NULL CHECK (decision IN ('PASS', 'HOLD', 'PENDING')),
    characteristics TEXT NOT NULL,
    basis TEXT NOT NULL,
    final INTEGER NOT NULL,
    workbook_path TEXT,
    result_path TEXT,
    supersedes INTEGER REFERENCES records(id),
    supersedes_reason TEXT,
    chain_seq INTEGER NOT NULL UNIQUE,
    prev_hash TEXT NOT NULL,
    row_hash TEXT NOT NULL
);
CREATE UNIQUE INDEX IF NOT EXISTS records_one_per_version ON records (spec_path, spec_sha256);
CREATE TABLE IF NOT EXISTS runs (
    run_id TEXT PRIMARY KEY,
    started TEXT NOT NULL,
    finished TEXT NOT NULL,
    tool_version TEXT NOT NULL,
    host TEXT NOT NULL,
    pid INTEGER NOT NULL,
    command TEXT NOT NULL,
    specs INTEGER NOT NULL,
    ran INTEGER NOT NULL,
    unchanged INTEGER NOT NULL,
    errors INTEGER NOT NULL,
    exit_status INTEGER NOT NULL,
    chain_seq INTEGER NOT NULL UNIQUE,
    prev_hash TEXT NOT NULL,
    row_hash TEXT NOT NULL
);
"""


# The keys of each table: an INSERT OR REPLACE that would replace a row (a delete that does not
# fire delete triggers unless recursive triggers are on) is refused by a BEFORE INSERT trigger.
_KEYS = {
    "meta": (("key",),),
    "entries": (("id",), ("run_id", "spec_path")),
    "records": (("id",), ("spec_path", "spec_sha256")),
    "runs": (("run_id",),),
}


_CHAINED = ("entries", "records", "runs")


def _chain_row(seq: str) -> str:
    """SQL for the row_hash of chain position ``seq`` (NULL when no row holds it)."""
    return (f"(SELECT row_hash FROM entries WHERE chain_seq = {seq} UNION ALL "
            f"SELECT row_hash FROM records WHERE chain_seq = {seq} UNION ALL "
            f"SELECT row_hash FROM runs WHERE chain_seq = {seq})")


_HEAD_SEQ = ("(SELECT MAX(s) FROM (SELECT MAX(chain_seq) AS s FROM entries UNION ALL "
             "SELECT MAX(chain_seq) FROM records UNION ALL SELECT MAX(chain_seq) FROM runs))")


def _trigger_statements() -> dict[str, str]:
    """Every trigger of a ledger, by name: the exact SQL that creates it."""
    out = {}
    for table, keys in _KEYS.items():
        clash = " OR ".join(
            "EXISTS (SELECT 1 FROM {t} WHERE {c})".format(
                t=table, c=" AND ".join(f"{k} = NEW.{k}" for k in key))
            for key in keys)
        name = f"{table}_no_replace"
        out[name] = (
            f"CREATE TRIGGER {name} BEFORE INSERT ON {table} "
            f"WHEN {clash} BEGIN SELECT RAISE(ABORT, 'the verify ledger is append-only: "
            f"a row of {table} with this key exists'); END")
    for table in _TABLES:
        for op in ("UPDATE", "DELETE"):
            name = f"{table}_no_{op.lower()}"
            out[name] = (
                f"CREATE TRIGGER {name} BEFORE {op} ON {table} "
                f"BEGIN SELECT RAISE(ABORT, 'the verify ledger is append-only: "
                f"{op} on {table} refused'); END")
    for table in _CHAINED:
        # a row must extend the chain: the next position, naming the head's hash
        name = f"{table}_in_chain"
        out[name] = (
            f"CREATE TRIGGER {name} BEFORE INSERT ON {table} "
            f"WHEN NEW.chain_seq IS NOT COALESCE({_HEAD_SEQ}, 0) + 1 "
            f"OR NEW.prev_hash IS NOT COALESCE({_chain_row('NEW.chain_seq - 1')}, '{GENESIS}') "
            f"BEGIN SELECT RAISE(ABORT, 'the verify ledger is hash-chained: a row of {table} "
            f"must extend the chain'); END")
    return out


def _triggers() -> str:
    return "\n".join(sql + ";" for sql in _trigger_statements().values())


def _table_columns() -> dict[str, tuple[str, ...]]:
    conn = sqlite3.connect(":memory:")
    try:
        conn.executescript(_SCHEMA)
        return {t: tuple(r[1] for r in conn.execute(f"PRAGMA table_info({t})"))
                for t in _CHAINED}
    finally:
        conn.close()


_COLUMNS = _table_columns()  # the columns of each chained table, in schema order


def _schema_version(conn: sqlite3.Connection) -> str | None:
    try:
        row = conn.execute("SELECT value FROM meta WHERE key = 'schema'").fetchone()
    except sqlite3.DatabaseError:
        return None
    return None if row is None else row[0]


def _version_message(path: Path, version: str | None) -> str:
    if version == "1":
        return (f"{path}: a ledger of schema 1, written before rows were hash-chained; this "
                f"verify writes schema {SCHEMA_VERSION} and does not rewrite old rows (that "
                "would defeat the ledger). Keep this file as the record of the earlier runs "
                "and give the nightly run a new ledger (--ledger NEW_PATH, or move this one "
                "aside); note that the decisions of record in it do not carry over")
    if version is None:
        return f"{path}: not a verify ledger (no schema version in its meta table)"
    return (f"{path}: ledger schema {version!r}; this verify writes schema "
            f"{SCHEMA_VERSION!r}: use the verify version that wrote it")


def _split(script: str) -> list[str]:
    """The statements of a schema script (triggers hold their own semicolons)."""
    out, buf = [], []
    for line in script.splitlines():
        if not line.strip():
            continue
        buf.append(line)
        candidate = "\n".join(buf)
        if sqlite3.complete_statement(candidate):
            out.append(candidate)
            buf = []
    return out
