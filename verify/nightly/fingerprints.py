"""Fingerprints: what a spec's result depends on (the spec's bytes, its data
files' bytes or a query's canonical rows, the tool version), taken in a worker
(:func:`probe`) so that a file that hangs costs only its spec; and the data root's refusal."""

from __future__ import annotations

import hashlib
import os
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path

from .. import __version__
from ..errors import VerifyError
from ..ledger import DataFile, Entry, Fingerprint


def _sha256_file(path: str, max_bytes: int | None = None) -> str | None:
    """The sha256 of a data file; None when it does not exist (the run then says so).

    Raises :class:`~verify.safe_open.FileRefused` for anything but a regular file within the
    size limit: a FIFO or a device is never opened for hashing.
    """
    from ..safe_open import DATA_LIMIT_HINT, sha256_regular

    if not os.path.lexists(path):
        return None
    return sha256_regular(path, what="data file", max_bytes=max_bytes,
                          limit_hint=DATA_LIMIT_HINT)


def data_paths_light(spec_path: Path, raw: bytes) -> list[tuple[str, str]]:
    """The data files a spec names, by a light parse (no validation): [(as written, abs)].

    The YAML is read as :func:`verify.spec.load_spec` reads it
    (:class:`verify.spec_yaml.SpecLoader`: YAML 1.2 core scalars, the same nesting limit), so
    the first fingerprint names the files the run will read, by one reading rule (a spec the
    run refuses, e.g. nested too deeply, names none here either). The path is
    resolved the way :func:`verify.spec.load_spec` resolves ``data.file``: against the spec's
    folder. A spec this cannot read gives ``[]``; its run then reports why.
    """
    import yaml

    from ..spec_yaml import SpecLoader

    try:
        doc = yaml.load(raw.decode("utf-8-sig"), Loader=SpecLoader)  # noqa: S506 (safe)
    except (UnicodeDecodeError, yaml.YAMLError, RecursionError):
        return []
    data = doc.get("data") if isinstance(doc, dict) else None
    file = data.get("file") if isinstance(data, dict) else None
    if not isinstance(file, str) or not file:
        return []
    out = [(file, os.path.abspath(spec_path.parent / file))]
    table = doc.get("characteristics_from")  # a table of characteristics is an input too
    if isinstance(table, str) and table:
        out.append((table, os.path.abspath(spec_path.parent / table)))
    return out


def fingerprint(spec_path: Path, raw: bytes, last: Entry | None, *,
                root: Path | None = None, max_bytes: int | None = None,
                defer: bool = False) -> Fingerprint:
    """The spec's input fingerprint; data paths come from ``last`` when the spec is the same.

    With ``root``, a data file outside it is refused (:class:`VerifyError`) before it is
    opened. Runs in a worker (:func:`probe`): hashing may meet a file that hangs.

    ``defer``: where the spec text has no earlier result (a new or edited spec runs whatever
    its data are) and no data root is to be enforced before its data are opened, the data
    files are left to the evaluation, which records the files it read (and, where it fails,
    :func:`verify.nightly.worker.run_task` fingerprints them then; only a spec whose worker is
    stopped, by its time limit or a crash, is recorded without them): the light reading of the
    spec and the hashing would only repeat what the evaluation does a moment later.
    """
    spec_sha = hashlib.sha256(raw).hexdigest()
    if _is_sql(raw):  # the data are a query's rows: fetch them and hash their canonical CSV
        from ..sources.sql import nightly_fingerprint

        files = nightly_fingerprint(spec_path, raw)
        if root is not None:  # a sqlite file must lie under the data root; a server need not
            refused = outside_root([d.file for d in files], root)
            if refused:
                raise VerifyError(f"{spec_path}: {refused}")
        return Fingerprint(spec_sha, files, __version__)
    if last is not None and last.spec_sha256 == spec_sha and last.data_files:
        paths = [(d.path, d.file) for d in last.data_files]
    elif defer and root is None:
        return Fingerprint(spec_sha, (), __version__)
    else:
        paths = data_paths_light(spec_path, raw)
    if root is not None:
        refused = outside_root([f for _, f in paths], root)
        if refused:
            raise VerifyError(f"{spec_path}: {refused}")
    files = tuple(DataFile(p, f, _sha256_file(f, max_bytes)) for p, f in paths)
    return Fingerprint(spec_sha, files, __version__)


def _data_file_key(spec) -> str:
    """The ledger's name of a spec's data: its file, or ``sql:<URL>`` for a database server."""
    if spec.data.source == "sql":
        from ..sources.sql import data_file_key

        return data_file_key(spec)
    return str(spec.data.file)


def _is_sql(raw: bytes) -> bool:
    """Whether a spec's data come from a SQL query (a light look at its data.source)."""
    import re

    return re.search(rb"(?m)^[ \t]+source:[ \t]*[\"']?sql\b", raw) is not None


@dataclass(frozen=True)
class ProbeTask:
    """What a worker needs to fingerprint one spec (picklable)."""

    spec_path: str
    last_result: Entry | None
    data_root: str | None
    max_data_mb: float | None


@dataclass(frozen=True)
class Probe:
    """A spec's fingerprint, or why it could not be taken."""

    fingerprint: Fingerprint | None
    error: str | None = None


def probe(task: ProbeTask) -> Probe:
    """Read one spec and hash its data files (in a worker, under the time limit)."""
    from ..safe_open import MAX_SPEC_BYTES, FileRefused, max_data_bytes, read_regular

    path = Path(task.spec_path)
    try:
        raw = read_regular(path, what="spec", max_bytes=MAX_SPEC_BYTES)
    except FileRefused as exc:
        return Probe(None, f"{path}: cannot read the spec: {exc.reason}")
    try:
        fp = fingerprint(path, raw, task.last_result,
                         root=Path(task.data_root) if task.data_root else None,
                         max_bytes=max_data_bytes(task.max_data_mb), defer=True)
    except VerifyError as exc:
        return Probe(Fingerprint(hashlib.sha256(raw).hexdigest(), (), __version__),
                     exc.report())
    return Probe(fp)


def outside_root(files: Iterable[str], root: Path) -> str | None:
    """The refusal message when a data file resolves outside ``root`` (None when all inside).

    A database server (``sql:`` entries) is no file: the data root does not apply to it."""
    for f in files:
        if str(f).startswith("sql:"):
            continue
        resolved = Path(f).resolve()
        if not resolved.is_relative_to(root):
            return (f"data file {f} resolves to {resolved}, outside --data-root {root}: "
                    "refused (move the data under the data root or change --data-root)")
    return None
