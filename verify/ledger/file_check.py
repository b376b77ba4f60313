"""``verify ledger``: check a ledger file read-only (chain, triggers, tables) and
the heads printed earlier that no row carries any more."""

from __future__ import annotations

import os
import sqlite3
from pathlib import Path

from .chain import ChainCheck, check_chain
from .errors import LedgerError
from .schema import SCHEMA_VERSION, _schema_version, _version_message


def check_ledger_file(path: str | os.PathLike) -> ChainCheck:
    """Check the ledger at ``path`` without writing to it (``verify ledger``).

    Raises
    ------
    LedgerError
        No such file, not an SQLite file, not a verify ledger, or a schema this verify does
        not read.
    """
    path = Path(path)
    if not path.is_file():
        raise LedgerError(f"{path}: no such ledger file; give the ledger.sqlite that "
                          "'verify nightly' writes (default <out>/ledger.sqlite)")
    try:
        # read-only: a check never creates, migrates or repairs anything
        conn = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True, timeout=30.0)
    except sqlite3.DatabaseError as exc:
        raise LedgerError(f"{path}: cannot open the ledger: {exc}") from None
    try:
        try:
            version = _schema_version(conn)
        except sqlite3.DatabaseError as exc:
            raise LedgerError(f"{path}: cannot read the ledger: {exc}") from None
        if version != SCHEMA_VERSION:
            raise LedgerError(_version_message(path, version))
        try:
            return check_chain(conn)
        except sqlite3.DatabaseError as exc:
            raise LedgerError(f"{path}: cannot read the ledger: {exc}") from None
    finally:
        conn.close()


def anchors_missing(path: str | os.PathLike, heads: list[str]) -> list[str]:
    """The heads (hashes printed earlier) that no row of the ledger carries, in words."""
    if not heads:
        return []
    conn = sqlite3.connect(f"{Path(path).resolve().as_uri()}?mode=ro", uri=True, timeout=30.0)
    try:
        out = []
        for h in heads:
            hit = conn.execute(
                "SELECT 1 FROM entries WHERE row_hash = ? UNION ALL SELECT 1 FROM records "
                "WHERE row_hash = ? UNION ALL SELECT 1 FROM runs WHERE row_hash = ?",
                (h, h, h)).fetchone()
            if hit is None:
                out.append(f"no row carries the head {h}: the rows up to it were removed or "
                           "rewritten")
        return out
    finally:
        conn.close()
