""":class:`Ledger`: an open ledger file (WAL mode, created with its triggers, checked
before anything is appended), its reading queries and its appends (one transaction per
spec)."""

from __future__ import annotations

import contextlib
import json
import os
import sqlite3
from collections.abc import Iterator
from dataclasses import fields
from pathlib import Path

from .chain import ChainCheck, _head, _insert_chained, check_chain
from .errors import LedgerBrokenError, LedgerError
from .rows import Entry, Record, RunRow, _data_files_json, _entry_from_row, _record_from_row
from .schema import (
    _SCHEMA,
    _TABLES,
    SCHEMA_VERSION,
    STATES,
    _schema_version,
    _split,
    _triggers,
    _version_message,
)


class Ledger:
    """An open ledger. Create with :meth:`open`; use as a context manager to close it.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with Ledger.open(pathlib.Path(tempfile.mkdtemp()) / "ledger.sqlite") as led:
    ...     led.last_entry("specs/a.yaml") is None
    True
    """

    def __init__(self, conn: sqlite3.Connection, path: Path):
        self._conn = conn
        self.path = path

    @classmethod
    def open(cls, path: str | os.PathLike, *, busy_timeout: float = 30.0,
             check: bool = True) -> Ledger:
        """Open the ledger at ``path`` in WAL mode, creating it (with its triggers) if new.

        An existing ledger is checked (:func:`check_chain`) before anything is appended: a
        broken chain, a missing or altered trigger raises :class:`LedgerBrokenError`, and a
        dropped trigger is never recreated. A ledger of schema 1 (written before the hash
        chain) is refused with :class:`LedgerError`: its rows cannot be chained afterwards
        without rewriting them, which the ledger exists to prevent.
        """
        path = Path(path)
        path.parent.mkdir(parents=True, exist_ok=True)
        try:
            conn = sqlite3.connect(path, timeout=busy_timeout, isolation_level=None)
            conn.row_factory = sqlite3.Row
            conn.execute(f"PRAGMA busy_timeout = {int(busy_timeout * 1000)}")
            mode = conn.execute("PRAGMA journal_mode = WAL").fetchone()[0]
            # WAL with synchronous=NORMAL cannot corrupt the file; a power cut may lose the
            # last commits, and the next night then simply runs those specs again.
            conn.execute("PRAGMA synchronous = NORMAL")
            conn.execute("PRAGMA foreign_keys = ON")
            conn.execute("BEGIN IMMEDIATE")
            tables = {r[0] for r in conn.execute(
                "SELECT name FROM sqlite_master WHERE type = 'table'")}
            if not tables & set(_TABLES):  # a new ledger: create everything once
                for stmt in _split(_SCHEMA + _triggers()):
                    conn.execute(stmt)
                conn.execute("INSERT INTO meta (key, value) VALUES ('schema', ?)",
                             (SCHEMA_VERSION,))
            version = _schema_version(conn)
            conn.execute("COMMIT")
        except sqlite3.DatabaseError as exc:
            raise LedgerError(f"{path}: cannot open the ledger: {exc}") from None
        if str(mode).lower() != "wal":
            conn.close()
            raise LedgerError(f"{path}: the ledger needs WAL mode; SQLite gave {mode!r}")
        if version != SCHEMA_VERSION:
            conn.close()
            raise LedgerError(_version_message(path, version))
        led = cls(conn, path)
        if check:
            result = led.check()
            if not result.intact:
                conn.close()
                raise LedgerBrokenError(
                    f"{path}: the ledger fails its check, so nothing was appended: "
                    + "; ".join(result.problems())
                    + f". Run 'verify ledger {path}' for the report; keep this file as "
                    "evidence and start a new ledger (--ledger) only once the cause is known")
        return led

    def check(self) -> ChainCheck:
        """Check the hash chain, the triggers and the tables (:func:`check_chain`)."""
        return check_chain(self._conn)

    def head(self) -> tuple[int, str]:
        """The chain position and row_hash of the newest row (0 and 64 zeros when empty)."""
        return _head(self._conn)

    def close(self) -> None:
        self._conn.close()

    def __enter__(self) -> Ledger:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    @contextlib.contextmanager
    def _transaction(self) -> Iterator[sqlite3.Connection]:
        self._conn.execute("BEGIN IMMEDIATE")
        try:
            yield self._conn
        except BaseException:
            self._conn.execute("ROLLBACK")
            raise
        self._conn.execute("COMMIT")

    # -- reading -------------------------------------------------------------------------------

    def last_entry(self, spec_path: str, *, states: tuple[str, ...] = STATES) -> Entry | None:
        """The newest entry of ``spec_path`` in one of ``states``."""
        marks = ",".join("?" * len(states))
        row = self._conn.execute(
            f"SELECT * FROM entries WHERE spec_path = ? AND state IN ({marks}) "
            "ORDER BY id DESC LIMIT 1", (spec_path, *states)).fetchone()
        return None if row is None else _entry_from_row(row)

    def last_entries(self) -> dict[str, Entry]:
        """The newest entry of every spec path, keyed by path (one query)."""
        rows = self._conn.execute(
            "SELECT e.* FROM entries e JOIN (SELECT spec_path, MAX(id) AS id FROM entries "
            "GROUP BY spec_path) m ON e.id = m.id").fetchall()
        return {r["spec_path"]: _entry_from_row(r) for r in rows}

    def last_results(self) -> dict[str, Entry]:
        """The newest ``RUN`` entry of every spec path, keyed by path (one query)."""
        rows = self._conn.execute(
            "SELECT e.* FROM entries e JOIN (SELECT spec_path, MAX(id) AS id FROM entries "
            "WHERE state = 'RUN' GROUP BY spec_path) m ON e.id = m.id").fetchall()
        return {r["spec_path"]: _entry_from_row(r) for r in rows}

    def entry(self, entry_id: int) -> Entry | None:
        row = self._conn.execute("SELECT * FROM entries WHERE id = ?", (entry_id,)).fetchone()
        return None if row is None else _entry_from_row(row)

    def entries(self, *, run_id: str | None = None, spec_path: str | None = None) -> list[Entry]:
        """Entries in the order written, optionally of one run and/or one spec."""
        where, args = [], []
        if run_id is not None:
            where.append("run_id = ?")
            args.append(run_id)
        if spec_path is not None:
            where.append("spec_path = ?")
            args.append(spec_path)
        sql = "SELECT * FROM entries" + (" WHERE " + " AND ".join(where) if where else "")
        return [_entry_from_row(r) for r in self._conn.execute(sql + " ORDER BY id", args)]

    def record(self, spec_path: str, spec_sha256: str) -> Record | None:
        """The decision of record of this version of the spec, if one is locked."""
        row = self._conn.execute(
            "SELECT * FROM records WHERE spec_path = ? AND spec_sha256 = ?",
            (spec_path, spec_sha256)).fetchone()
        return None if row is None else _record_from_row(row)

    def latest_record(self, spec_path: str) -> Record | None:
        """The newest decision of record of any version of the spec."""
        row = self._conn.execute(
            "SELECT * FROM records WHERE spec_path = ? ORDER BY id DESC LIMIT 1",
            (spec_path,)).fetchone()
        return None if row is None else _record_from_row(row)

    def record_by_id(self, record_id: int) -> Record | None:
        row = self._conn.execute("SELECT * FROM records WHERE id = ?", (record_id,)).fetchone()
        return None if row is None else _record_from_row(row)

    def records(self) -> list[Record]:
        rows = self._conn.execute("SELECT * FROM records ORDER BY id")
        return [_record_from_row(r) for r in rows]

    def runs(self) -> list[RunRow]:
        rows = self._conn.execute("SELECT * FROM runs ORDER BY started, run_id").fetchall()
        return [RunRow(**{f.name: r[f.name] for f in fields(RunRow)}) for r in rows]

    def named_outputs(self) -> set[tuple[str, str]]:
        """(folder name, file name) of every workbook and result an entry or record names.

        The last two parts of the path only: outputs live at ``<out>/<folder>/<file>``, and the
        stored paths are as the run saw them (relative to its working folder, maybe).
        """
        named: set[tuple[str, str]] = set()
        for table in ("entries", "records"):
            rows = self._conn.execute(f"SELECT workbook_path, result_path FROM {table}")
            for row in rows:
                for p in row:
                    if p:
                        path = Path(p)
                        named.add((path.parent.name, path.name))
        return named

    def integrity(self) -> str:
        """SQLite's own ``PRAGMA integrity_check`` answer ("ok" when sound)."""
        return "; ".join(r[0] for r in self._conn.execute("PRAGMA integrity_check"))

    # -- appending -------------------------------------------------------------------------------

    def append(self, entry: Entry, *, record: Record | None = None) -> tuple[Entry, Record | None]:
        """Write one spec's entry, and the decision of record it locks, in one transaction.

        Returns the entry and record as stored (with their ids). With ``record`` given, the
        entry's ``record_id`` is set to the new record's id.
        """
        if entry.state not in STATES:
            raise LedgerError(f"unknown entry state {entry.state!r}")
        with self._transaction() as c:
            if record is not None:
                stored = _insert_chained(c, "records", dict(
                    id=None, spec_path=record.spec_path, spec_sha256=record.spec_sha256,
                    run_id=record.run_id, decided=record.decided, decision=record.decision,
                    characteristics=json.dumps(dict(record.characteristics)),
                    basis=record.basis, final=int(record.final),
                    workbook_path=record.workbook_path, result_path=record.result_path,
                    supersedes=record.supersedes, supersedes_reason=record.supersedes_reason))
                record = _replace(record, id=stored["id"], row_hash=stored["row_hash"],
                                  chain_seq=stored["chain_seq"])
                entry = _replace(entry, record_id=record.id)
            stored = _insert_chained(c, "entries", dict(
                id=None, run_id=entry.run_id, spec_path=entry.spec_path,
                spec_sha256=entry.spec_sha256, data_files=_data_files_json(entry.data_files),
                tool_version=entry.tool_version, started=entry.started,
                finished=entry.finished, state=entry.state, decision=entry.decision,
                characteristics=json.dumps(dict(entry.characteristics)),
                final=int(entry.final),
                plan_complete=None if entry.plan_complete is None else int(entry.plan_complete),
                standing=entry.standing, record_id=entry.record_id, drift=int(entry.drift),
                drift_note=entry.drift_note, monitoring=entry.monitoring,
                lots=json.dumps({k: list(v) for k, v in entry.lots.items()}),
                workbook_path=entry.workbook_path, result_path=entry.result_path,
                workbook_sha256=entry.workbook_sha256, evaluation_id=entry.evaluation_id,
                based_on=entry.based_on, error=entry.error))
            entry = _replace(entry, id=stored["id"], row_hash=stored["row_hash"],
                             chain_seq=stored["chain_seq"])
        return entry, record

    def append_run(self, run: RunRow) -> tuple[int, str]:
        """Write the row that marks a nightly run as complete; return the new chain head."""
        with self._transaction() as c:
            stored = _insert_chained(c, "runs", {f.name: getattr(run, f.name)
                                                 for f in fields(RunRow)})
        return stored["chain_seq"], stored["row_hash"]


def _replace(obj, **changes):
    from dataclasses import replace

    return replace(obj, **changes)
