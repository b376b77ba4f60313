"""The ledger's rows as frozen objects (an entry, a decision of record, a completed
run, a spec's fingerprint) and their conversion from the stored rows."""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Mapping
from dataclasses import dataclass, field


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
    row_hash: str | None = None  # the row's hash in the ledger's chain, once stored
    chain_seq: int | None = None

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
    row_hash: str | None = None  # the row's hash in the ledger's chain, once stored
    chain_seq: int | None = None

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
        based_on=row["based_on"], error=row["error"], row_hash=row["row_hash"],
        chain_seq=row["chain_seq"],
    )


def _record_from_row(row: sqlite3.Row) -> Record:
    return Record(
        id=row["id"], spec_path=row["spec_path"], spec_sha256=row["spec_sha256"],
        run_id=row["run_id"], decided=row["decided"], decision=row["decision"],
        characteristics=json.loads(row["characteristics"]), basis=row["basis"],
        final=bool(row["final"]), workbook_path=row["workbook_path"],
        result_path=row["result_path"], supersedes=row["supersedes"],
        supersedes_reason=row["supersedes_reason"], row_hash=row["row_hash"],
        chain_seq=row["chain_seq"],
    )
