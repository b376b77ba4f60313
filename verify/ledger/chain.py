"""The hash chain: every row of ``entries``, ``records`` and ``runs`` is a link of one
chain (``chain_seq``, ``prev_hash``, ``row_hash`` of :func:`canonical_row`);
:func:`check_chain` checks it with the triggers and tables, :func:`_insert_chained` appends
at its head."""

from __future__ import annotations

import hashlib
import json
import sqlite3
from collections.abc import Mapping
from dataclasses import dataclass

from .schema import _CHAINED, _COLUMNS, _HEAD_SEQ, GENESIS, _chain_row, _trigger_statements


def canonical_row(table: str, row: Mapping[str, object]) -> bytes:
    """The canonical serialisation of one ledger row, the bytes its ``row_hash`` is taken of.

    A JSON object ``{"row": {...}, "table": "<table>"}`` whose ``row`` holds every column of the
    row except ``row_hash`` (so ``chain_seq`` and ``prev_hash`` are included), with keys sorted,
    no spaces (separators ``,`` and ``:``), non-ASCII characters escaped as ``\\uXXXX``, SQL NULL
    as ``null``, integers as JSON integers and text as JSON strings; encoded as UTF-8.
    ``row_hash`` is the lowercase hex sha256 of these bytes.

    Examples
    --------
    >>> canonical_row("runs", {"run_id": "r1", "chain_seq": 1, "prev_hash": "00"})
    b'{"row":{"chain_seq":1,"prev_hash":"00","run_id":"r1"},"table":"runs"}'
    """
    body = {k: (int(v) if isinstance(v, bool) else v) for k, v in row.items() if k != "row_hash"}
    return json.dumps({"row": body, "table": table}, sort_keys=True, separators=(",", ":"),
                      ensure_ascii=True, allow_nan=False).encode("utf-8")


def row_hash(table: str, row: Mapping[str, object]) -> str:
    """The sha256 (hex) of :func:`canonical_row`."""
    return hashlib.sha256(canonical_row(table, row)).hexdigest()


@dataclass(frozen=True)
class ChainCheck:
    """What :func:`check_chain` found.

    ``rows`` counts the chained rows by table; ``head_seq`` and ``head_hash`` name the last row
    of the chain; ``problem`` is the first break of the chain in words (None when intact);
    ``trigger_problems`` lists every missing or altered trigger and ``table_problems`` every
    table whose columns are not those verify writes.
    """

    rows: Mapping[str, int]
    head_seq: int
    head_hash: str
    problem: str | None = None
    trigger_problems: tuple[str, ...] = ()
    table_problems: tuple[str, ...] = ()

    @property
    def intact(self) -> bool:
        return self.problem is None and not self.trigger_problems and not self.table_problems

    @property
    def entries(self) -> int:
        return int(self.rows.get("entries", 0))

    def problems(self) -> list[str]:
        return list(self.table_problems) + ([self.problem] if self.problem else []) + list(
            self.trigger_problems)


def _norm_sql(sql: str | None) -> str:
    return " ".join((sql or "").replace(";", " ").split()).casefold()


def check_chain(conn: sqlite3.Connection) -> ChainCheck:
    """Check a ledger's hash chain, its triggers and its tables (reads only).

    Every row of ``entries``, ``records`` and ``runs`` holds its place in one chain
    (``chain_seq`` 1, 2, 3, ... across the three tables), the ``row_hash`` of the row before it
    (``prev_hash``; 64 zeros for the first) and its own ``row_hash`` (:func:`canonical_row`).
    A row edited after it was written no longer matches its hash; a row inserted outside verify
    does not continue the chain; a removed row leaves a gap in the positions.
    """
    table_problems = []
    for table, cols in _COLUMNS.items():
        have = tuple(r[1] for r in conn.execute(f"PRAGMA table_info({table})"))
        if have != cols:
            table_problems.append(f"table {table} does not have the columns verify writes "
                                  f"(found {', '.join(have) or 'no table'})")
    if table_problems:
        return ChainCheck({}, 0, GENESIS, table_problems=tuple(table_problems))
    found = {name: sql for name, sql in conn.execute(
        "SELECT name, sql FROM sqlite_master WHERE type = 'trigger'")}
    trigger_problems = []
    for name, sql in _trigger_statements().items():
        if name not in found:
            trigger_problems.append(f"trigger {name} is missing (dropped outside verify)")
        elif _norm_sql(found[name]) != _norm_sql(sql):
            trigger_problems.append(f"trigger {name} was altered outside verify")
    rows: list[tuple[int, str, dict]] = []
    counts = {}
    for table in _CHAINED:
        cur = conn.execute(f"SELECT * FROM {table}")
        names = [d[0] for d in cur.description]
        n = 0
        for r in cur:
            d = dict(zip(names, r, strict=True))
            rows.append((d["chain_seq"], table, d))
            n += 1
        counts[table] = n
    rows.sort(key=lambda x: (x[0] if isinstance(x[0], int) else -1, x[1]))
    problem = None
    prev_hash, expected = GENESIS, 1
    for seq, table, d in rows:
        label = (f"{table} row {d.get('id', d.get('run_id'))!s}" if table != "runs"
                 else f"runs row {d.get('run_id')!s}")
        if not isinstance(seq, int) or seq < expected:
            problem = (f"{label} (chain position {seq}) is out of chain: position {seq} is "
                       "held by another row or is not a valid position (inserted outside "
                       "verify)")
            break
        if seq > expected:
            gap = (f"position {expected}" if seq == expected + 1
                   else f"positions {expected} to {seq - 1}")
            problem = (f"chain {gap} missing before {label} (chain position {seq}): "
                       f"{'a row was' if seq == expected + 1 else 'rows were'} removed")
            break
        if d.get("prev_hash") != prev_hash:
            problem = (f"{label} (chain position {seq}) is out of chain: its prev_hash is not "
                       f"the hash of chain position {seq - 1} (a row inserted outside verify, "
                       "or the row before it rewritten with a new hash)")
            break
        if row_hash(table, d) != d.get("row_hash"):
            problem = (f"{label} (chain position {seq}) does not match its row_hash: it was "
                       "changed after it was written, or inserted outside verify")
            break
        prev_hash, expected = d["row_hash"], expected + 1
    head_seq = expected - 1
    return ChainCheck(counts, head_seq, prev_hash, problem, tuple(trigger_problems))


def _head(conn: sqlite3.Connection) -> tuple[int, str]:
    seq = conn.execute(f"SELECT COALESCE({_HEAD_SEQ}, 0)").fetchone()[0]
    if not seq:
        return 0, GENESIS
    return seq, conn.execute(f"SELECT {_chain_row('?')}".replace("?", str(int(seq)))).fetchone()[0]


def _next_id(conn: sqlite3.Connection, table: str) -> int:
    seq = conn.execute("SELECT seq FROM sqlite_sequence WHERE name = ?", (table,)).fetchone()
    top = conn.execute(f"SELECT COALESCE(MAX(id), 0) FROM {table}").fetchone()[0]
    return max(int(seq[0]) if seq else 0, int(top)) + 1


def _insert_chained(conn: sqlite3.Connection, table: str, values: Mapping[str, object]) -> dict:
    """Insert one row at the head of the chain (inside the caller's transaction)."""
    seq, prev = _head(conn)
    row = {k: (int(v) if isinstance(v, bool) else v) for k, v in values.items()}
    if "id" in _COLUMNS[table] and row.get("id") is None:
        row["id"] = _next_id(conn, table)
    row["chain_seq"] = seq + 1
    row["prev_hash"] = prev
    row["row_hash"] = row_hash(table, row)
    if set(row) != set(_COLUMNS[table]):  # internal contract: every column is hashed
        raise RuntimeError(f"ledger row of {table} does not name every column")
    names = list(_COLUMNS[table])
    conn.execute(f"INSERT INTO {table} ({', '.join(names)}) VALUES "
                 f"({', '.join('?' * len(names))})", [row[n] for n in names])
    return row
