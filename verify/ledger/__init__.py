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
Triggers guard against accidents; against someone who drops them, every row of ``entries``,
``records`` and ``runs`` is a link of one hash chain (``chain_seq``, ``prev_hash``,
``row_hash``; see :func:`canonical_row`), checked by :func:`check_chain` before anything is
appended and by ``verify ledger``. A dropped trigger is reported, never recreated.
Each spec's rows are written in one transaction (``BEGIN IMMEDIATE`` ... ``COMMIT``).

Only one nightly run may write a ledger at a time: :class:`LedgerLock` takes an exclusive
lock on ``<ledger>.lock`` (``fcntl.flock`` on POSIX, ``msvcrt.locking`` on Windows, see
:mod:`verify.oslock`; released by the system if the holder dies, even by SIGKILL), waiting up
to a timeout; SQLite's ``busy_timeout`` covers readers such as a person
querying the ledger while a run writes.

The package by topic: :mod:`~verify.ledger.schema` (tables, triggers, version),
:mod:`~verify.ledger.chain` (canonical rows, hashes, the chain check),
:mod:`~verify.ledger.rows` (the row objects), :mod:`~verify.ledger.store` (:class:`Ledger`:
opening, reading, appending), :mod:`~verify.ledger.lock`, :mod:`~verify.ledger.standing` (the
decision of record) and :mod:`~verify.ledger.file_check` (``verify ledger``).
"""

from .chain import ChainCheck, canonical_row, check_chain, row_hash
from .errors import LedgerBrokenError, LedgerBusyError, LedgerError
from .file_check import anchors_missing, check_ledger_file
from .lock import LedgerLock
from .rows import DataFile, Entry, Fingerprint, Record, RunRow
from .schema import GENESIS, SCHEMA_VERSION, STANDINGS, STATES
from .standing import Standing, drift_between, judge
from .store import Ledger

__all__ = [
    "GENESIS", "SCHEMA_VERSION", "STANDINGS", "STATES",
    "ChainCheck", "DataFile", "Entry", "Fingerprint", "Ledger", "LedgerBrokenError",
    "LedgerBusyError", "LedgerError", "LedgerLock", "Record", "RunRow", "Standing",
    "anchors_missing", "canonical_row", "check_chain", "check_ledger_file", "drift_between",
    "judge", "row_hash",
]
