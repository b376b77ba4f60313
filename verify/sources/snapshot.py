"""The snapshot of a SQL source's rows, so that a replay needs no database.

A run on a SQL source keeps the fetched rows as canonical CSV (see
:func:`verify.sources.sql.canonical_csv`) beside its JSON result, named ``<result stem>.rows.csv``;
the JSON records its sha256 as the data file's ``sha256``. ``verify replay`` checks that hash and
reads the rows from the snapshot instead of querying the database (:func:`use`).

The file is plain content named beside the result; a content-addressed store of inputs can take
it as it is (its sha256 is recorded).
"""

from __future__ import annotations

import contextlib
import csv
import hashlib
import io
import re
from collections import OrderedDict
from pathlib import Path

SUFFIX = ".rows.csv"
_KEEP = 4  # fetched row texts kept in memory for the outputs of the current runs
_fetched: OrderedDict[str, bytes] = OrderedDict()
_active: dict[str, tuple[bytes, dict]] = {}  # spec sha256 -> (snapshot, recorded source)
_INT = re.compile(r"^-?\d{1,18}$")


def remember(raw: bytes) -> str:
    """Keep the canonical CSV of a fetch until the outputs are written; return its sha256."""
    digest = hashlib.sha256(raw).hexdigest()
    _fetched[digest] = raw
    _fetched.move_to_end(digest)
    while len(_fetched) > _KEEP:
        _fetched.popitem(last=False)
    return digest


def fetched_rows(sha256: str) -> bytes | None:
    """The canonical CSV bytes of a fetch by their sha256 (None when no longer held)."""
    return _fetched.get(sha256)


def snapshot_path(result: Path) -> Path:
    """Where the snapshot of a result's SQL rows lives: beside it, ``<stem>.rows.csv``."""
    return result.with_name(result.stem + SUFFIX)


@contextlib.contextmanager
def use(spec_sha256: str, raw: bytes, origin: dict):
    """Within the block, the SQL source of the spec with this sha256 reads ``raw``; ``origin``
    is the recorded source (URL and server as they were at the run)."""
    _active[spec_sha256] = (raw, origin)
    try:
        yield
    finally:
        _active.pop(spec_sha256, None)


def active_snapshot(spec):
    """``(header, typed cells, raw, recorded source)`` of the snapshot installed for ``spec``,
    else None."""
    hit = _active.get(spec.sha256)
    if hit is None:
        return None
    raw, origin = hit
    records = list(csv.reader(io.StringIO(raw.decode("utf-8"), newline="")))
    header = records[0] if records else []
    return header, [[_typed(v) for v in r] for r in records[1:]], raw, origin


def _typed(text: str):
    """A canonical CSV field back as the value type the tidy step saw at the run."""
    if text == "":
        return None
    if _INT.match(text):
        return int(text)
    try:
        v = float(text)
    except ValueError:
        return text
    return v if v == v and abs(v) != float("inf") else text
