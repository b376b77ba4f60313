"""The nightly ledger: an append-only SQLite record of every spec on every nightly run.

One file (default ``<out>/ledger.sqlite``) in WAL mode holds four tables:

``entries``
    One row per spec per nightly run: the run id, the spec's path and sha256, the data files'
    sha256s (JSON), the tool version, start and end (UTC), the state (``RUN``, ``UNCHANGED`` or
    ``ERROR``), the overall and per-characteristic decisions (JSON), the standing against the
    decision of record (``PROVISIONAL``, ``RECORD``, ``MONITORING``), drift, the lots seen,
    the output paths and the workbook's sha256, or the error text.
``records``
    One row per decision of record: at most one per spec path and spec sha256 (a unique index
    enforces it), naming the record it supersedes when the spec was edited.
``runs``
    One row per completed nightly run (a run killed midway leaves its entries and no row here).
``meta``
    The schema version.

Rows are never updated or deleted: ``BEFORE UPDATE`` and ``BEFORE DELETE`` triggers on every
table abort the statement, so even a hand-typed ``UPDATE`` in the sqlite3 shell is refused.
Each spec's rows are written in one transaction (``BEGIN IMMEDIATE`` ... ``COMMIT``).

Only one nightly run may write a ledger at a time: :class:`LedgerLock` takes an exclusive
lock on ``<ledger>.lock`` (``fcntl.flock`` on POSIX, ``msvcrt.locking`` on Windows, see
:mod:`verify.oslock`; released by the system if the holder dies, even by SIGKILL), waiting up
to a timeout; SQLite's ``busy_timeout`` covers readers such as a person
querying the ledger while a run writes.
"""

from __future__ import annotations

import contextlib
import json
import os
import socket
import sqlite3
import time
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field, fields
from pathlib import Path

from . import oslock
from .errors import VerifyError

SCHEMA_VERSION = "1"
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
    error TEXT
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
    supersedes_reason TEXT
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
    exit_status INTEGER NOT NULL
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


def _triggers() -> str:
    out = []
    for table, keys in _KEYS.items():
        clash = " OR ".join(
            "EXISTS (SELECT 1 FROM {t} WHERE {c})".format(
                t=table, c=" AND ".join(f"{k} = NEW.{k}" for k in key))
            for key in keys)
        out.append(
            f"CREATE TRIGGER IF NOT EXISTS {table}_no_replace BEFORE INSERT ON {table} "
            f"WHEN {clash} BEGIN SELECT RAISE(ABORT, 'the verify ledger is append-only: "
            f"a row of {table} with this key exists'); END;"
        )
    for table in _TABLES:
        for op in ("UPDATE", "DELETE"):
            out.append(
                f"CREATE TRIGGER IF NOT EXISTS {table}_no_{op.lower()} BEFORE {op} ON {table} "
                f"BEGIN SELECT RAISE(ABORT, 'the verify ledger is append-only: "
                f"{op} on {table} refused'); END;"
            )
    return "\n".join(out)


class LedgerError(VerifyError):
    """The ledger cannot be opened or read (not a verify ledger, a newer schema, ...)."""


class LedgerBusyError(VerifyError):
    """Another nightly run holds the ledger lock; exit status 2."""


# --- rows --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class DataFile:
    """One data file of a spec's fingerprint.

    ``path`` is as written in the spec, ``file`` the absolute path it names (not resolved
    through symbolic links), ``sha256`` None when the file was missing.
    """

    path: str
    file: str
    sha256: str | None


@dataclass(frozen=True)
class Fingerprint:
    """What a spec's result depends on: the spec's bytes, its data files' bytes, the tool."""

    spec_sha256: str
    data_files: tuple[DataFile, ...]
    tool_version: str

    def matches(self, other: Fingerprint | None) -> bool:
        """True when nothing that the result depends on differs."""
        if other is None:
            return False
        mine = sorted((d.file, d.sha256) for d in self.data_files)
        theirs = sorted((d.file, d.sha256) for d in other.data_files)
        return (self.spec_sha256 == other.spec_sha256 and self.tool_version
                == other.tool_version and mine == theirs
                and all(d.sha256 is not None for d in self.data_files))


@dataclass(frozen=True)
class Record:
    """A decision of record: locked once per spec version, never changed afterwards."""

    spec_path: str
    spec_sha256: str
    run_id: str
    decided: str  # UTC time, ISO 8601
    decision: str
    characteristics: Mapping[str, str]
    basis: str  # why it was locked: "every process reached min_n", "--final", "no min_n"
    final: bool
    workbook_path: str | None = None
    result_path: str | None = None
    supersedes: int | None = None
    supersedes_reason: str | None = None
    id: int | None = None

    @property
    def date(self) -> str:
        return self.decided[:10]

    def describe(self) -> str:
        """``PASS on 2025-01-02, run <id>``: how the monitoring line names this record."""
        return f"{self.decision} on {self.date}, run {self.run_id}"


@dataclass(frozen=True)
class Entry:
    """One spec on one nightly run (a row of ``entries``)."""

    run_id: str
    spec_path: str
    tool_version: str
    started: str
    finished: str
    state: str  # RUN | UNCHANGED | ERROR
    spec_sha256: str | None = None
    data_files: tuple[DataFile, ...] = ()
    decision: str | None = None
    characteristics: Mapping[str, str] = field(default_factory=dict)
    final: bool = False
    plan_complete: bool | None = None
    standing: str | None = None  # PROVISIONAL | RECORD | MONITORING
    record_id: int | None = None
    drift: bool = False
    drift_note: str | None = None
    monitoring: str | None = None
    lots: Mapping[str, tuple[str, ...]] = field(default_factory=dict)
    workbook_path: str | None = None
    result_path: str | None = None
    workbook_sha256: str | None = None
    evaluation_id: str | None = None
    based_on: int | None = None  # UNCHANGED: the entry whose result still stands
    error: str | None = None
    id: int | None = None

    @property
    def fingerprint(self) -> Fingerprint | None:
        if self.spec_sha256 is None:
            return None
        return Fingerprint(self.spec_sha256, self.data_files, self.tool_version)


@dataclass(frozen=True)
class RunRow:
    """One completed nightly run (a row of ``runs``)."""

    run_id: str
    started: str
    finished: str
    tool_version: str
    host: str
    pid: int
    command: str
    specs: int
    ran: int
    unchanged: int
    errors: int
    exit_status: int


def _data_files_json(files: tuple[DataFile, ...]) -> str:
    return json.dumps([{"path": d.path, "file": d.file, "sha256": d.sha256} for d in files])


def _data_files_from(text: str | None) -> tuple[DataFile, ...]:
    return tuple(DataFile(d["path"], d["file"], d.get("sha256")) for d in json.loads(text or "[]"))


def _entry_from_row(row: sqlite3.Row) -> Entry:
    return Entry(
        id=row["id"], run_id=row["run_id"], spec_path=row["spec_path"],
        spec_sha256=row["spec_sha256"], data_files=_data_files_from(row["data_files"]),
        tool_version=row["tool_version"], started=row["started"], finished=row["finished"],
        state=row["state"], decision=row["decision"],
        characteristics=json.loads(row["characteristics"] or "{}"), final=bool(row["final"]),
        plan_complete=None if row["plan_complete"] is None else bool(row["plan_complete"]),
        standing=row["standing"], record_id=row["record_id"], drift=bool(row["drift"]),
        drift_note=row["drift_note"], monitoring=row["monitoring"],
        lots={k: tuple(v) for k, v in json.loads(row["lots"] or "{}").items()},
        workbook_path=row["workbook_path"], result_path=row["result_path"],
        workbook_sha256=row["workbook_sha256"], evaluation_id=row["evaluation_id"],
        based_on=row["based_on"], error=row["error"],
    )


def _record_from_row(row: sqlite3.Row) -> Record:
    return Record(
        id=row["id"], spec_path=row["spec_path"], spec_sha256=row["spec_sha256"],
        run_id=row["run_id"], decided=row["decided"], decision=row["decision"],
        characteristics=json.loads(row["characteristics"]), basis=row["basis"],
        final=bool(row["final"]), workbook_path=row["workbook_path"],
        result_path=row["result_path"], supersedes=row["supersedes"],
        supersedes_reason=row["supersedes_reason"],
    )


# --- the ledger --------------------------------------------------------------------------------


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
    def open(cls, path: str | os.PathLike, *, busy_timeout: float = 30.0) -> Ledger:
        """Open (creating if needed) the ledger at ``path`` in WAL mode with its triggers."""
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
            for stmt in _split(_SCHEMA + _triggers()):
                conn.execute(stmt)
            conn.execute("INSERT INTO meta (key, value) SELECT 'schema', ? WHERE NOT EXISTS "
                         "(SELECT 1 FROM meta WHERE key = 'schema')", (SCHEMA_VERSION,))
            version = conn.execute("SELECT value FROM meta WHERE key = 'schema'").fetchone()[0]
            conn.execute("COMMIT")
        except sqlite3.DatabaseError as exc:
            raise LedgerError(f"{path}: cannot open the ledger: {exc}") from None
        if str(mode).lower() != "wal":
            conn.close()
            raise LedgerError(f"{path}: the ledger needs WAL mode; SQLite gave {mode!r}")
        if version != SCHEMA_VERSION:
            conn.close()
            raise LedgerError(f"{path}: ledger schema {version!r}; this verify writes schema "
                              f"{SCHEMA_VERSION!r}: use the verify version that wrote it")
        return cls(conn, path)

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
                cur = c.execute(
                    "INSERT INTO records (spec_path, spec_sha256, run_id, decided, decision, "
                    "characteristics, basis, final, workbook_path, result_path, supersedes, "
                    "supersedes_reason) VALUES (?,?,?,?,?,?,?,?,?,?,?,?)",
                    (record.spec_path, record.spec_sha256, record.run_id, record.decided,
                     record.decision, json.dumps(dict(record.characteristics)), record.basis,
                     int(record.final), record.workbook_path, record.result_path,
                     record.supersedes, record.supersedes_reason))
                record = _replace(record, id=cur.lastrowid)
                entry = _replace(entry, record_id=record.id)
            cur = c.execute(
                "INSERT INTO entries (run_id, spec_path, spec_sha256, data_files, tool_version, "
                "started, finished, state, decision, characteristics, final, plan_complete, "
                "standing, record_id, drift, drift_note, monitoring, lots, workbook_path, "
                "result_path, workbook_sha256, evaluation_id, based_on, error) "
                "VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)",
                (entry.run_id, entry.spec_path, entry.spec_sha256,
                 _data_files_json(entry.data_files), entry.tool_version, entry.started,
                 entry.finished, entry.state, entry.decision,
                 json.dumps(dict(entry.characteristics)), int(entry.final),
                 None if entry.plan_complete is None else int(entry.plan_complete),
                 entry.standing, entry.record_id, int(entry.drift), entry.drift_note,
                 entry.monitoring, json.dumps({k: list(v) for k, v in entry.lots.items()}),
                 entry.workbook_path, entry.result_path, entry.workbook_sha256,
                 entry.evaluation_id, entry.based_on, entry.error))
            entry = _replace(entry, id=cur.lastrowid)
        return entry, record

    def append_run(self, run: RunRow) -> None:
        """Write the row that marks a nightly run as complete."""
        with self._transaction() as c:
            names = [f.name for f in fields(RunRow)]
            c.execute(f"INSERT INTO runs ({', '.join(names)}) VALUES "
                      f"({', '.join('?' * len(names))})", [getattr(run, n) for n in names])


def _replace(obj, **changes):
    from dataclasses import replace

    return replace(obj, **changes)


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


# --- the lock ----------------------------------------------------------------------------------


class LedgerLock:
    """An exclusive lock on ``<ledger>.lock`` for the whole of one nightly run.

    Parameters
    ----------
    ledger_path
        The ledger file; the lock file sits beside it.
    timeout
        Seconds to wait for another run to finish before giving up with
        :class:`LedgerBusyError`.
    started
        When this run started (written into the lock file for the next run's message).
    """

    def __init__(self, ledger_path: str | os.PathLike, *, timeout: float, started: str,
                 run_id: str = ""):
        self.path = Path(str(ledger_path) + ".lock")
        self.timeout = timeout
        self.started = started
        self.run_id = run_id
        self._fd: int | None = None

    def _holder(self) -> str:
        try:
            info = json.loads(self.path.read_text(encoding="utf-8") or "{}")
        except (OSError, ValueError):
            info = {}
        if not info:
            return "another nightly run holds the ledger lock"
        return (f"another nightly run (pid {info.get('pid', '?')} on {info.get('host', '?')}, "
                f"run {info.get('run_id', '?')}) holds the ledger lock since "
                f"{info.get('since', '?')}")

    def acquire(self) -> None:
        self.path.parent.mkdir(parents=True, exist_ok=True)
        fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
        deadline = time.monotonic() + max(self.timeout, 0.0)
        while True:
            try:
                if oslock.try_lock(fd, self.path):
                    break
            except OSError:
                os.close(fd)
                raise
            if time.monotonic() >= deadline:
                holder = self._holder()
                os.close(fd)
                raise LedgerBusyError(
                    f"{holder} (lock file {self.path}); waited {self.timeout:g} s; try "
                    "again later, or raise --lock-timeout") from None
            time.sleep(0.1)
        info = {"pid": os.getpid(), "host": socket.gethostname(), "since": self.started,
                "run_id": self.run_id}
        oslock.write_text_at_start(fd, json.dumps(info) + "\n")
        self._fd = fd

    def release(self) -> None:
        if self._fd is not None:
            # The file stays: removing a lock file that another process may be opening races.
            with contextlib.suppress(OSError):
                os.ftruncate(self._fd, 0)
            oslock.unlock(self._fd, self.path)
            os.close(self._fd)
            self._fd = None

    def __enter__(self) -> LedgerLock:
        self.acquire()
        return self

    def __exit__(self, *exc) -> None:
        self.release()


# --- the decision of record --------------------------------------------------------------------


@dataclass(frozen=True)
class Standing:
    """Where one run stands against the decision of record of its spec version.

    ``kind`` is ``PROVISIONAL`` (no record yet: the plan is not complete), ``RECORD`` (this run
    locks the record: ``new_record`` is to be written with its entry) or ``MONITORING`` (a
    record stands; ``drift`` says whether these data would decide differently). ``text`` is
    the line the workbook prints (:attr:`verify.model.Evaluation.monitoring`).
    """

    kind: str
    text: str
    drift: bool = False
    drift_note: str | None = None
    record: Record | None = None
    new_record: Record | None = None


def drift_between(record: Record, decision: str, characteristics: Mapping[str, str]) -> list[str]:
    """The differences between a record's decisions and a newer run's, in words."""
    out = []
    if decision != record.decision:
        out.append(f"overall {record.decision} -> {decision}")
    for name in list(record.characteristics) + [
            n for n in characteristics if n not in record.characteristics]:
        old, new = record.characteristics.get(name), characteristics.get(name)
        if old != new:
            out.append(f"{name} {old or '(absent)'} -> {new or '(absent)'}")
    return out


def judge(*, spec_path: str, spec_sha256: str, run_id: str, now: str, decision: str,
          characteristics: Mapping[str, str], plan_complete: bool, min_n: int | None,
          shortfall: str | None, final: bool, record: Record | None,
          previous: Record | None, supersedes_reason: str | None = None) -> Standing:
    """Decide this run's standing against the decision of record (a pure function).

    Parameters
    ----------
    record
        The decision of record of this spec version (same path and sha256), if locked.
    previous
        The newest record of an earlier version of the spec (another sha256), if any.
    plan_complete
        Every process of every characteristic has reached ``min_n`` (always true without one).
    final
        The run was given ``--final``: the trial is declared complete.

    Examples
    --------
    >>> s = judge(spec_path="a.yaml", spec_sha256="ab", run_id="r1", now="2025-01-02T02:00:00Z",
    ...           decision="PASS", characteristics={"bore": "PASS"}, plan_complete=True,
    ...           min_n=30, shortfall=None, final=False, record=None, previous=None)
    >>> s.kind, s.new_record.basis
    ('RECORD', 'every process reached min_n')
    """
    if record is not None:
        changes = drift_between(record, decision, characteristics)
        text = f"monitoring; decision of record: {record.describe()}"
        if changes:
            note = "; ".join(changes)
            text += (f"; drift: these data would decide {decision} ({note}); the decision of "
                     "record stands")
            return Standing("MONITORING", text, drift=True, drift_note=note, record=record)
        return Standing("MONITORING", text + "; no drift: these data decide the same",
                        record=record)
    previous = previous if previous is not None and previous.spec_sha256 != spec_sha256 else None
    if plan_complete or final:
        if plan_complete:
            basis = ("every process reached min_n" if min_n is not None
                     else "first run (the spec sets no min_n)")
        else:
            basis = "--final: the trial was declared complete"
        new = Record(spec_path=spec_path, spec_sha256=spec_sha256, run_id=run_id, decided=now,
                     decision=decision, characteristics=dict(characteristics), basis=basis,
                     final=final, supersedes=previous.id if previous is not None else None,
                     supersedes_reason=supersedes_reason if previous is not None else None)
        text = f"decision of record: {decision}, locked by this run ({run_id}, {now[:10]}): {basis}"
        if previous is not None:
            text += f"; supersedes the record of the earlier spec version, {previous.describe()}"
            if supersedes_reason:
                text += f" (supersedes_reason: {supersedes_reason})"
        return Standing("RECORD", text, new_record=new)
    text = "provisional: no decision of record yet"
    if shortfall:
        text += f" ({shortfall})"
    if previous is not None:
        text += (f"; the spec was edited after the decision of record {previous.describe()}, "
                 "which this version's record will supersede")
    return Standing("PROVISIONAL", text)
