"""``verify nightly``: run every spec under a folder on the latest lot data, unattended.

For each spec found (as ``verify run`` finds them), a nightly run

1. **fingerprints** its inputs: the sha256 of the spec file, of each data file (and of the
   characteristics table a spec names with ``characteristics_from``), and the tool
   version. When they match the spec's last result in the ledger the spec is skipped and
   recorded as ``UNCHANGED``; this path reads no data and imports neither scipy nor pandas
   (a spec's data path comes from the ledger, or from a light YAML parse when the spec changed).
2. **runs** the others through the same evaluation as ``verify run``
   (:func:`verify.runner.prepare`) in ``--jobs`` worker processes, each importing the heavy
   libraries once, and writes ``<out>/<spec-stem>/<UTC time>-<DECISION>.xlsx`` and ``.json``
   (never overwritten) and ``<out>/<spec-stem>/latest.json``. A worker writes temporary files
   only; the parent renames them into place after the ledger entry that names them is
   written, so a result file never exists without its entry.

Isolation: everything that touches a spec's files, the fingerprint's hashing included, runs in
a worker process (:mod:`verify.isolation`) under ``--spec-timeout``; a spec whose files hang,
grow without end or kill their worker is ``ERROR`` with the reason, and the others run. Workers
stop when the parent dies. At start, under the lock, a run removes temporary files left by a
killed run and moves result files that no ledger entry names into ``<out>/quarantine/<run>/``,
saying so.
3. **locks the decision of record** of each spec version (its sha256) on the first run at which
   every process has reached ``min_n`` (with no ``min_n``: the first run), or the first run
   given ``--final``. Later runs monitor: their workbooks say "monitoring; decision of record:
   PASS on <date>, run <id>" and flag drift when the newer data would decide differently; the
   record never changes. An edited spec starts a new record naming the one it supersedes.
4. **records** every spec in the append-only ledger (:mod:`verify.ledger`), one transaction per
   spec, a broken spec as ``ERROR`` with its message while the others run on.
5. **reports**: ``<out>/digest-<date>.xlsx``, one line per spec on stdout, progress on stderr.

Exit status: 2 if any spec is ERROR (or the ledger is locked by another run), else 1 if any
HOLD or drift, else 3 if any PENDING, else 0. Unchanged specs count with the result they carry.
"""

from __future__ import annotations

import argparse
import contextlib
import hashlib
import io
import os
import sys
import textwrap
import time
import uuid
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass, replace
from pathlib import Path

from . import __version__
from .errors import UsageError, VerifyError
from .ledger import DataFile, Entry, Fingerprint, Ledger, LedgerLock, Record, RunRow, Standing

DEFAULT_OUT = "reports/nightly"
DEFAULT_LOCK_TIMEOUT = 60.0
DEFAULT_SPEC_TIMEOUT = 600.0
QUARANTINE = "quarantine"
HEAVY_MODULES = ("numpy", "scipy.stats", "pandas", "openpyxl", "verify.evaluate", "verify.data",
                 "verify.report.workbook", "verify.report.json_result")

EXAMPLE = """\
example:
  verify nightly specs/ --out reports/nightly --jobs 2 --data-root sample_lots/"""


DESCRIPTION = textwrap.fill(
    "Run every spec under SPEC_DIR on the latest lot data, unattended. A spec whose spec file, "
    "data files and tool version are unchanged since its last result is skipped (recorded as "
    "unchanged); the others are evaluated as 'verify run' does, and their workbook and JSON "
    "result go to <out>/<spec-stem>/<UTC time>-<DECISION>.xlsx/.json (never overwritten) and "
    "<out>/<spec-stem>/latest.json. The first run at which every process reaches min_n (or "
    "the first run given --final) locks the decision of record of that spec version; later "
    "runs monitor it and flag drift. Every spec on every run is a row of an append-only SQLite "
    "ledger; a digest workbook <out>/digest-<date>.xlsx and one line per spec on stdout say "
    "what changed.", 88) + (
    "\n\nexit status: 0 all PASS; 1 any HOLD or drift from a decision of record; 2 any ERROR,"
    "\nor the ledger is locked by another run; 3 any PENDING (and no HOLD, drift or error).")


def add_nightly(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add the ``nightly`` sub-command to ``sub`` (for :data:`verify.cli.COMMANDS`)."""
    p = sub.add_parser("nightly", help="run every spec on new lot data, with a ledger and digest",
                       description=DESCRIPTION, epilog=EXAMPLE,
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    return add_nightly_arguments(p)


def add_nightly_arguments(parser: argparse.ArgumentParser) -> argparse.ArgumentParser:
    """Add the ``verify nightly`` arguments to ``parser`` (a sub-command's parser).

    Examples
    --------
    >>> p = add_nightly_arguments(argparse.ArgumentParser(prog="verify nightly"))
    >>> p.parse_args(["specs/"]).jobs
    1
    """
    parser.add_argument("spec_dirs", metavar="SPEC_DIR", nargs="+",
                        help="folder(s) of spec files (*.yaml, *.yml, searched recursively) "
                             "or single spec files")
    parser.add_argument("--out", metavar="DIR", default=DEFAULT_OUT,
                        help=f"output folder: history per spec, digests, ledger "
                             f"(default: {DEFAULT_OUT})")
    parser.add_argument("--ledger", metavar="PATH", default=None,
                        help="the ledger file (default: <out>/ledger.sqlite)")
    parser.add_argument("--jobs", metavar="N", type=_positive_int, default=1,
                        help="worker processes for the specs that must run (default: 1)")
    parser.add_argument("--data-root", metavar="DIR", default=None,
                        help="refuse (as ERROR) any spec whose data file resolves outside DIR")
    parser.add_argument("--final", action="store_true",
                        help="declare the trials complete: a shortfall against min_n no longer "
                             "makes a characteristic PENDING, and each spec version without a "
                             "decision of record gets one now")
    parser.add_argument("--spec-timeout", metavar="SECONDS", type=_positive_float,
                        default=DEFAULT_SPEC_TIMEOUT,
                        help="stop a spec whose reading or evaluation takes longer, and record "
                             f"it as ERROR (default: {DEFAULT_SPEC_TIMEOUT:g})")
    from .cli_run import add_max_data_mb

    add_max_data_mb(parser)
    parser.add_argument("--lock-timeout", metavar="SECONDS", type=_non_negative_float,
                        default=DEFAULT_LOCK_TIMEOUT,
                        help="how long to wait for another nightly run on the same ledger "
                             f"(default: {DEFAULT_LOCK_TIMEOUT:g})")
    if parser.epilog is None:
        parser.epilog = EXAMPLE
        parser.formatter_class = argparse.RawDescriptionHelpFormatter
    return parser


def _positive_int(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if n < 1:
        raise argparse.ArgumentTypeError(f"must be at least 1, got {n}")
    return n


def _positive_float(text: str) -> float:
    x = _non_negative_float(text)
    if x == 0:
        raise argparse.ArgumentTypeError("must be more than 0 seconds")
    return x


def _non_negative_float(text: str) -> float:
    try:
        x = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number of seconds, got {text!r}") from None
    if not 0 <= x < 1e9:
        raise argparse.ArgumentTypeError(f"must be 0 or more, got {text!r}")
    return x


# --- what one spec needs -------------------------------------------------------------------


@dataclass(frozen=True)
class Task:
    """One spec that must run, as handed to a worker (picklable)."""

    spec_key: str  # the spec's absolute path: its identity in the ledger
    spec_path: str  # as found under SPEC_DIR, for messages and the result
    out_dir: str
    run_id: str
    command: str
    final: bool  # --final given
    evaluate_final: bool  # --final, or the record in force was locked by --final
    fingerprint: Fingerprint
    record: Record | None  # this version's decision of record
    previous: Record | None  # the newest record of another version of the spec
    data_root: str | None
    max_data_mb: float | None = None


@dataclass(frozen=True)
class Outcome:
    """What a worker sends back for one spec (picklable)."""

    spec_key: str
    started: str
    finished: str
    error: str | None = None
    spec_sha256: str | None = None
    data_files: tuple[DataFile, ...] = ()
    decision: str | None = None
    characteristics: tuple[tuple[str, str], ...] = ()
    lots: tuple[tuple[str, tuple[str, ...]], ...] = ()
    plan_complete: bool | None = None
    standing: Standing | None = None
    workbook_path: str | None = None
    result_path: str | None = None
    workbook_sha256: str | None = None
    evaluation_id: str | None = None
    supersedes_reason: str | None = None
    # the outputs as temporary files; the parent renames them after the ledger entry
    tmp_workbook: str | None = None
    tmp_result: str | None = None
    # (temporary file, target) of a SQL source's snapshot, renamed with the outputs
    tmp_extras: tuple[tuple[str, str], ...] = ()


def _sha256_file(path: str, max_bytes: int | None = None) -> str | None:
    """The sha256 of a data file; None when it does not exist (the run then says so).

    Raises :class:`~verify.safe_open.FileRefused` for anything but a regular file within the
    size limit: a FIFO or a device is never opened for hashing.
    """
    from .safe_open import DATA_LIMIT_HINT, sha256_regular

    if not os.path.lexists(path):
        return None
    return sha256_regular(path, what="data file", max_bytes=max_bytes,
                          limit_hint=DATA_LIMIT_HINT)


def data_paths_light(spec_path: Path, raw: bytes) -> list[tuple[str, str]]:
    """The data files a spec names, by a light parse (no validation): [(as written, abs)].

    The path is resolved the way :func:`verify.spec.load_spec` resolves ``data.file``: against
    the spec's folder. A spec this cannot read gives ``[]``; its run then reports why.
    """
    import yaml

    loader = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
    try:
        doc = yaml.load(raw.decode("utf-8-sig"), Loader=loader)  # noqa: S506 (a safe loader)
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
                root: Path | None = None, max_bytes: int | None = None) -> Fingerprint:
    """The spec's input fingerprint; data paths come from ``last`` when the spec is the same.

    With ``root``, a data file outside it is refused (:class:`VerifyError`) before it is
    opened. Runs in a worker (:func:`probe`): hashing may meet a file that hangs.
    """
    spec_sha = hashlib.sha256(raw).hexdigest()
    if _is_sql(raw):  # the data are a query's rows: fetch them and hash their canonical CSV
        from .sources.sql import nightly_fingerprint

        files = nightly_fingerprint(spec_path, raw)
        if root is not None:  # a sqlite file must lie under the data root; a server need not
            refused = outside_root([d.file for d in files], root)
            if refused:
                raise VerifyError(f"{spec_path}: {refused}")
        return Fingerprint(spec_sha, files, __version__)
    if last is not None and last.spec_sha256 == spec_sha and last.data_files:
        paths = [(d.path, d.file) for d in last.data_files]
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
        from .sources.sql import data_file_key

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
    from .safe_open import MAX_SPEC_BYTES, FileRefused, max_data_bytes, read_regular

    path = Path(task.spec_path)
    try:
        raw = read_regular(path, what="spec", max_bytes=MAX_SPEC_BYTES)
    except FileRefused as exc:
        return Probe(None, f"{path}: cannot read the spec: {exc.reason}")
    try:
        fp = fingerprint(path, raw, task.last_result,
                         root=Path(task.data_root) if task.data_root else None,
                         max_bytes=max_data_bytes(task.max_data_mb))
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


# --- the worker side ---------------------------------------------------------------------------


def init_worker() -> None:
    """Pool initializer: import the heavy libraries once per worker process."""
    import importlib

    for name in HEAVY_MODULES:
        importlib.import_module(name)
    from .audit import git_commit, library_versions

    library_versions()
    git_commit()


def _utc() -> str:
    from .audit import utc_now

    return utc_now()


def _stamp(iso: str) -> str:
    """``2025-01-02T03:04:05.123Z`` -> ``20250102T030405Z`` (for file names)."""
    return iso[:19].replace("-", "").replace(":", "") + "Z"


def history_paths(out_dir: Path, decision: str, when: str) -> tuple[Path, Path]:
    """Fresh ``<UTC time>-<DECISION>.xlsx`` and ``.json`` paths; never an existing name."""
    base = f"{_stamp(when)}-{decision}"
    n = 1
    while True:
        name = base if n == 1 else f"{base}-{n}"
        xlsx, js = out_dir / f"{name}.xlsx", out_dir / f"{name}.json"
        if not xlsx.exists() and not js.exists():
            return xlsx, js
        n += 1


def _plan(ev) -> tuple[bool, str | None]:
    """Whether every process of every characteristic reached min_n, and the shortfall."""
    from .decide import SUFFICIENCY

    short = []
    for c in ev.characteristics:
        counts = ({"pairs": c.pairs} if c.pairs is not None
                  else {p: s.n for p, s in c.processes.items()})
        plans = (None if ev.spec.min_n is None
                 else {k: ev.spec.planned(k) for k in counts})  # min_n may be per process
        s = SUFFICIENCY.shortfall(counts, plans, False)
        if s is not None:
            short.append(f"{c.name}: {s}")
    return (not short), ("; ".join(short) or None)


def _lots(ev) -> tuple[tuple[str, tuple[str, ...]], ...]:
    seen: dict[str, dict[str, None]] = {}
    for c in ev.characteristics:
        for p, s in c.processes.items():
            bucket = seen.setdefault(p, {})
            for lot in s.lots:
                bucket[str(lot)] = None
    return tuple((p, tuple(v)) for p, v in sorted(seen.items()))


def run_task(task: Task) -> Outcome:
    """Evaluate one spec, write its history and latest.json; never raises for bad input."""
    from .ledger import judge
    from .runner import prepare, stage_outputs
    from .safe_open import MAX_SPEC_BYTES, read_regular

    started = _utc()
    try:
        raw = read_regular(task.spec_path, what="spec", max_bytes=MAX_SPEC_BYTES)
        try:
            text = raw.decode("utf-8")
        except UnicodeDecodeError:
            text = None  # load_spec reports the offending byte
        if hashlib.sha256(raw).hexdigest() != task.fingerprint.spec_sha256:
            raise VerifyError(f"{task.spec_path}: the spec changed while the run started; "
                              "it runs again next time")
        # the data root is checked inside prepare, before the data file is opened
        ev = prepare(task.spec_path, final=task.evaluate_final, command=task.command, text=text,
                     max_data_mb=task.max_data_mb, data_root=task.data_root)
        files = tuple(
            DataFile(f.path, _data_file_key(ev.spec) if i == 0 else f.resolved_path, f.sha256)
            for i, f in enumerate(ev.measurements.files))
        table = ev.spec.characteristics_table
        if table is not None:  # the characteristics table joins the fingerprint
            files += (DataFile(table.file_text, str(table.file), table.sha256),)
        plan_complete, shortfall = _plan(ev)
        chars = {c.name: c.decision for c in ev.characteristics}
        now = _utc()
        standing = judge(
            spec_path=task.spec_key, spec_sha256=ev.spec.sha256, run_id=task.run_id, now=now,
            decision=ev.decision, characteristics=chars, plan_complete=plan_complete,
            min_n=ev.spec.min_n, shortfall=shortfall, final=task.final, record=task.record,
            previous=task.previous, supersedes_reason=ev.spec.supersedes_reason)
        ev = replace(ev, monitoring=standing.text)
        out_dir = Path(task.out_dir)
        workbook, result = history_paths(out_dir, ev.decision, now)
        staged = stage_outputs(ev, workbook, result)  # renamed by the parent, after the ledger
        return Outcome(
            spec_key=task.spec_key, started=started, finished=_utc(),
            spec_sha256=ev.spec.sha256, data_files=files, decision=ev.decision,
            characteristics=tuple(chars.items()), lots=_lots(ev), plan_complete=plan_complete,
            standing=standing, workbook_path=str(staged.workbook),
            result_path=str(staged.result), workbook_sha256=staged.workbook_sha256,
            evaluation_id=ev.run.run_id, supersedes_reason=ev.spec.supersedes_reason,
            tmp_workbook=str(staged.tmp_workbook), tmp_result=str(staged.tmp_result),
            tmp_extras=tuple((str(t), str(g)) for t, g in staged.extras))
    except VerifyError as exc:
        return Outcome(task.spec_key, started, _utc(), error=exc.report())
    except MemoryError:
        return Outcome(task.spec_key, started, _utc(), error="out of memory evaluating the spec")
    except Exception as exc:  # isolation: one spec's failure must not stop the others
        import traceback

        where = traceback.extract_tb(exc.__traceback__)[-1]
        return Outcome(task.spec_key, started, _utc(),
                       error=f"internal error ({type(exc).__name__}: {exc}) at "
                             f"{Path(where.filename).name}:{where.lineno}; please report it")


def _worker_run(task: Task) -> Outcome:
    """Evaluate one spec in a worker, the heavy libraries imported once per worker."""
    init_worker()
    return run_task(task)


def _run_tasks(tasks: Sequence[Task], jobs: int, timeout: float = DEFAULT_SPEC_TIMEOUT,
               ) -> Iterator[Outcome]:
    """Yield outcomes as workers finish; a spec that times out or kills its worker costs only
    itself (:mod:`verify.isolation`)."""
    from .isolation import Failed, Job, run_isolated

    by_key = {t.spec_key: t for t in tasks}
    starts = {t.spec_key: _utc() for t in tasks}
    for key, result in run_isolated([Job(t.spec_key, _worker_run, t) for t in tasks],
                                    workers=jobs, timeout=timeout):
        if isinstance(result, Failed):
            _remove_partials(Path(by_key[key].out_dir))
            yield Outcome(key, starts[key], _utc(),
                          error=f"{by_key[key].spec_path}: {result.reason}; nothing was written")
        else:
            yield result


def _remove_partials(folder: Path) -> None:
    """Temporary files a stopped worker left in its spec's folder (only it writes there)."""
    if folder.is_dir():
        for p in folder.glob(".*.part*"):
            with contextlib.suppress(OSError):
                p.unlink()


# --- the parent side ---------------------------------------------------------------------------


@dataclass
class _Spec:
    key: str
    path: Path
    name: str  # output folder under <out>
    previous_result: Entry | None  # newest RUN entry before this run


@dataclass(frozen=True)
class NightlyResult:
    """What a nightly run did: its id, exit status, digest rows and files."""

    run_id: str
    exit_status: int
    rows: tuple
    digest: Path | None
    ledger: Path


def _output_names(specs: Sequence[Path], keys: Sequence[str], known: dict[str, Entry],
                  ) -> list[str]:
    """A stable output folder name per spec: its stem, made unique when two stems collide."""
    owner: dict[str, str] = {QUARANTINE: ""}  # reserved for stray files
    mine: dict[str, str] = {}
    for key, e in known.items():
        if e.result_path:
            name = Path(e.result_path).parent.name
            owner.setdefault(name, key)
            mine.setdefault(key, name)
    names = []
    for path, key in zip(specs, keys, strict=True):
        name = mine.get(key)
        if name is None:
            name = path.stem
            if owner.get(name, key) != key:
                name = f"{path.stem}-{hashlib.sha256(key.encode()).hexdigest()[:8]}"
            owner[name] = key
            mine[key] = name
        names.append(name)
    return names


def _clean_partials(out: Path) -> int:
    """Remove temporary files left by a run that was killed (we hold the ledger lock)."""
    n = 0
    for pattern in (".*.part", ".*.part.*", "*/.*.part", "*/.*.part.*"):
        for p in out.glob(pattern):
            with contextlib.suppress(OSError):
                p.unlink()
                n += 1
    return n


@dataclass(frozen=True)
class _Context:
    run_id: str
    out: Path
    root: Path | None
    final: bool
    command: str
    latest: dict[str, Entry]  # newest entry per spec before this run
    results: dict[str, Entry]  # newest RUN entry per spec before this run
    max_data_mb: float | None = None


def _triage(ledger: Ledger, ctx: _Context, path: Path, key: str, name: str,
            found: Probe, started: str) -> Entry | Task:
    """Decide, without evaluating, what one spec needs: an ERROR or UNCHANGED entry, or a Task.

    ``found`` is the spec's fingerprint as a worker took it (:func:`probe`): the parent itself
    never opens a spec's files. No heavy import here.
    """
    base = dict(run_id=ctx.run_id, spec_path=key, tool_version=__version__, started=started)
    fp = found.fingerprint
    if found.error is not None or fp is None:
        return Entry(**base, finished=_utc(), state="ERROR",
                     spec_sha256=fp.spec_sha256 if fp is not None else None,
                     data_files=fp.data_files if fp is not None else (), error=found.error)
    fp = replace(fp, tool_version=__version__)  # this run's version is the parent's
    last_result = ctx.results.get(key)
    record = ledger.record(key, fp.spec_sha256)
    newest = ctx.latest.get(key)
    wants_record = ctx.final and record is None  # --final locks a record: it must run
    if (last_result is not None and newest is not None and newest.state != "ERROR"
            and fp.matches(last_result.fingerprint) and not wants_record):
        return _unchanged(ctx.run_id, key, started, last_result)
    previous = ledger.latest_record(key)
    if previous is not None and previous.spec_sha256 == fp.spec_sha256:
        previous = None
    return Task(
        spec_key=key, spec_path=str(path), out_dir=str(ctx.out / name), run_id=ctx.run_id,
        command=ctx.command, final=ctx.final,
        evaluate_final=ctx.final or bool(record is not None and record.final),
        fingerprint=fp, record=record, previous=previous,
        data_root=str(ctx.root) if ctx.root is not None else None,
        max_data_mb=ctx.max_data_mb)


def _probes(specs: Sequence[tuple[Path, str]], ctx: _Context, jobs: int, timeout: float,
            ) -> Iterator[tuple[str, Probe, str]]:
    """Fingerprint every spec in workers (light: no heavy import); (key, probe, started)."""
    from .isolation import Failed, Job, run_isolated

    started = {key: _utc() for _, key in specs}
    job_list = [Job(key, probe, ProbeTask(str(path), ctx.results.get(key),
                                          str(ctx.root) if ctx.root is not None else None,
                                          ctx.max_data_mb))
                for path, key in specs]
    paths = {key: path for path, key in specs}
    for key, result in run_isolated(job_list, workers=jobs, timeout=timeout):
        if isinstance(result, Failed):
            result = Probe(None, f"{paths[key]}: reading the spec and hashing its data files "
                                 f"{result.reason}")
        yield key, result, started[key]


def _commit(entry: Entry, outcome: Outcome) -> str | None:
    """Rename a spec's staged outputs into place (after its ledger entry is written) and
    refresh its latest.json; the problem in words when that fails."""
    from .runner import Staged, commit_all, write_text_atomic

    if outcome.tmp_workbook is None or outcome.tmp_result is None:
        return None
    staged = Staged(Path(outcome.workbook_path), Path(outcome.result_path),
                    Path(outcome.tmp_workbook), Path(outcome.tmp_result),
                    outcome.workbook_sha256 or "",
                    tuple((Path(t), Path(g)) for t, g in outcome.tmp_extras))
    try:
        commit_all([staged])
        result = Path(outcome.result_path)
        write_text_atomic(result.parent / "latest.json", result.read_text(encoding="utf-8"))
    except (OSError, VerifyError) as exc:
        return f"{entry.spec_path}: the result was recorded but could not be put in place: {exc}"
    return None


def _sweep_strays(ledger: Ledger, out: Path, names: Iterable[str], run_id: str) -> list[str]:
    """Move result files that no ledger entry names into ``<out>/quarantine/<run_id>/``.

    A worker of a killed run (or a run from before workers wrote only temporary files) may
    have left a workbook or JSON result that no entry records; it must not pass for a result.
    Only the output folders of known specs are swept, and only their .xlsx and .json files
    (latest.json is a copy the next result refreshes). Returns the moved files, as
    ``<folder>/<file>``.
    """
    named = ledger.named_outputs()  # (folder name, file name) of every recorded output
    moved = []
    folders = set(names) | {folder for folder, _ in named}
    for folder in sorted(folders):
        d = out / folder
        if folder == QUARANTINE or not d.is_dir():
            continue
        for f in sorted(d.iterdir()):
            if (f.suffix.lower() not in (".xlsx", ".json") or f.name == "latest.json"
                    or f.name.startswith(".") or not f.is_file()
                    or (folder, f.name) in named):
                continue
            target = out / QUARANTINE / run_id / folder / f.name
            try:
                target.parent.mkdir(parents=True, exist_ok=True)
                os.replace(f, target)
            except OSError:
                continue
            moved.append(f"{folder}/{f.name}")
    return moved


def _exit_status(rows: Sequence) -> int:
    if any(r.state == "ERROR" for r in rows):
        return 2
    if any(r.decision == "HOLD" or r.drift for r in rows):
        return 1
    if any(r.decision == "PENDING" for r in rows):
        return 3
    return 0


def _record_text(ledger: Ledger, record_id: int | None) -> str | None:
    if record_id is None:
        return None
    rec = ledger.record_by_id(record_id)
    return None if rec is None else rec.describe()


def run_nightly(spec_dirs: Sequence[str], *, out: str | os.PathLike = DEFAULT_OUT,
                ledger_path: str | os.PathLike | None = None, jobs: int = 1,
                data_root: str | os.PathLike | None = None, final: bool = False,
                lock_timeout: float = DEFAULT_LOCK_TIMEOUT, command: str | None = None,
                progress_stream=None, spec_timeout: float = DEFAULT_SPEC_TIMEOUT,
                max_data_mb: float | None = None) -> NightlyResult:
    """Run one nightly pass (the library behind ``verify nightly``).

    Raises
    ------
    UsageError
        No spec found, or ``data_root`` is not a folder (checked before any file is opened).
    LedgerBusyError
        Another nightly run held the ledger lock for longer than ``lock_timeout`` seconds.
    """
    from .audit import command_line
    from .digest import DigestRow, Progress, summary_line, write_digest
    from .runner import atomic_path
    from .spec import find_specs

    t0 = time.monotonic()
    out = Path(out)
    ledger_path = Path(ledger_path) if ledger_path is not None else out / "ledger.sqlite"
    root = None
    if data_root is not None:
        root = Path(data_root).resolve()
        if not root.is_dir():
            raise UsageError(f"--data-root {data_root}: no such folder")
    specs = find_specs(spec_dirs)
    started = _utc()
    run_id = f"{_stamp(started)}-{uuid.uuid4().hex[:8]}"
    command = command if command is not None else command_line()
    from .output import QUIET, mode

    stream = progress_stream if progress_stream is not None else (
        io.StringIO() if mode() == QUIET else sys.stderr)
    progress = Progress(total=len(specs), stream=stream)

    with LedgerLock(ledger_path, timeout=lock_timeout, started=started, run_id=run_id), \
            Ledger.open(ledger_path) as ledger:
        cleaned = _clean_partials(out) if out.is_dir() else 0
        if cleaned:
            progress.note(f"removed {cleaned} temporary file(s) left by an interrupted run")
        latest = ledger.last_entries()
        results = ledger.last_results()
        keys = [str(p.resolve()) for p in specs]
        names = _output_names(specs, keys, results)
        strays = _sweep_strays(ledger, out, names, run_id) if out.is_dir() else []
        if strays:
            shown = ", ".join(strays[:5]) + (f", ... ({len(strays)} in all)"
                                             if len(strays) > 5 else "")
            progress.note(f"moved {len(strays)} result file(s) that no ledger entry names "
                          f"(left by an interrupted run) to {out / QUARANTINE / run_id}: {shown}")
        rows_by_name: dict[str, DigestRow] = {}
        info: dict[str, _Spec] = {}
        tasks: list[Task] = []

        def finish(row: DigestRow) -> None:
            rows_by_name[row.name] = row
            progress.step(row)

        ctx = _Context(run_id=run_id, out=out, root=root, final=final, command=command,
                       latest=latest, results=results, max_data_mb=max_data_mb)
        for path, key, name in zip(specs, keys, names, strict=True):
            info[key] = _Spec(key, path, name, results.get(key))
        triaged_by_key: dict[str, Entry | Task] = {}
        for key, found, when in _probes(list(zip(specs, keys, strict=True)), ctx, jobs,
                                        spec_timeout):
            triaged_by_key[key] = _triage(ledger, ctx, info[key].path, key, info[key].name,
                                          found, when)
        for key in keys:  # entries in the order the specs were found
            triaged = triaged_by_key[key]
            if isinstance(triaged, Task):
                tasks.append(triaged)
            else:
                entry, _ = ledger.append(triaged)
                finish(_row(info[key], entry, _record_text(ledger, entry.record_id)))

        if tasks:
            progress.note(f"evaluating {len(tasks)} of {len(specs)} spec(s) in "
                          f"{min(jobs, len(tasks))} worker process(es)")
        by_key = {t.spec_key: t for t in tasks}
        for outcome in _run_tasks(tasks, jobs, spec_timeout):
            task = by_key[outcome.spec_key]
            entry, record = _entry_from(run_id, task, outcome)
            entry, record = ledger.append(entry, record=record)
            # the files go into place only now that an entry names them
            problem = _commit(entry, outcome)
            if problem is not None:
                progress.note(problem)
            rec_text = record.describe() if record is not None else _record_text(
                ledger, entry.record_id)
            finish(_row(info[task.spec_key], entry, rec_text))

        rows = [rows_by_name[n] for n in names if n in rows_by_name]
        status = _exit_status(rows)
        finished = _utc()
        ledger.append_run(RunRow(
            run_id=run_id, started=started, finished=finished, tool_version=__version__,
            host=_host(), pid=os.getpid(), command=command, specs=len(rows),
            ran=sum(r.state == "RUN" for r in rows),
            unchanged=sum(r.state == "UNCHANGED" for r in rows),
            errors=sum(r.state == "ERROR" for r in rows), exit_status=status))

        digest = _digest_path(out, started)
        run_facts = [
            ("run", run_id), ("started", started), ("finished", finished),
            ("specs", str(len(rows))), ("ledger", str(ledger_path)), ("command", command),
            ("tool version", __version__), ("exit status", str(status)),
            ("elapsed", f"{time.monotonic() - t0:.2f} s"),
        ]
        with atomic_path(digest) as tmp:
            write_digest(tmp, rows, run=run_facts)

    from .output import say

    width = min(max((len(r.name) for r in rows), default=0), 40)
    for r in rows:
        say(summary_line(r, width), {
            "spec": r.spec_path, "name": r.name, "state": r.state, "decision": r.decision,
            "previous_decision": r.previous_decision, "standing": r.standing,
            "record": r.record, "drift": r.drift, "new_lots": list(r.new_lots),
            "changes": r.changes(), "error": r.error, "workbook": r.workbook,
            "run_id": run_id})
    counts = {s: sum(r.state == s for r in rows) for s in ("RUN", "UNCHANGED", "ERROR")}
    say(f"nightly {run_id}: {len(rows)} spec(s): {counts['RUN']} ran, "
        f"{counts['UNCHANGED']} unchanged, {counts['ERROR']} error(s); digest {digest}; "
        f"exit {status}")
    return NightlyResult(run_id=run_id, exit_status=status, rows=tuple(rows), digest=digest,
                         ledger=ledger_path)


def _host() -> str:
    import socket

    return socket.gethostname()


def _digest_path(out: Path, started: str) -> Path:
    base = f"digest-{started[:10]}"
    n = 1
    while True:
        p = out / (f"{base}.xlsx" if n == 1 else f"{base}-{n}.xlsx")
        if not p.exists():
            return p
        n += 1


def _unchanged(run_id: str, key: str, now: str, last: Entry) -> Entry:
    """An UNCHANGED entry carrying the standing result ``last``."""
    standing = "MONITORING" if last.standing == "RECORD" else last.standing
    return Entry(
        run_id=run_id, spec_path=key, tool_version=__version__, started=now, finished=_utc(),
        state="UNCHANGED", spec_sha256=last.spec_sha256, data_files=last.data_files,
        decision=last.decision, characteristics=last.characteristics, final=last.final,
        plan_complete=last.plan_complete, standing=standing, record_id=last.record_id,
        drift=last.drift, drift_note=last.drift_note, monitoring=last.monitoring,
        lots=last.lots, workbook_path=last.workbook_path, result_path=last.result_path,
        workbook_sha256=last.workbook_sha256, evaluation_id=last.evaluation_id,
        based_on=last.id)


def _entry_from(run_id: str, task: Task, o: Outcome) -> tuple[Entry, Record | None]:
    fp = task.fingerprint
    if o.error is not None:
        return Entry(run_id=run_id, spec_path=task.spec_key, tool_version=fp.tool_version,
                     started=o.started, finished=o.finished, state="ERROR",
                     spec_sha256=fp.spec_sha256, data_files=fp.data_files, final=task.final,
                     error=o.error), None
    st = o.standing
    record = None
    if st is not None and st.new_record is not None:
        record = replace(st.new_record, workbook_path=o.workbook_path, result_path=o.result_path)
    # The data files as the evaluation read them (a file appended during the run is recorded
    # as read, so the next night compares against what this result rests on).
    data_files = o.data_files or fp.data_files
    entry = Entry(
        run_id=run_id, spec_path=task.spec_key, tool_version=fp.tool_version, started=o.started,
        finished=o.finished, state="RUN", spec_sha256=o.spec_sha256, data_files=data_files,
        decision=o.decision, characteristics=dict(o.characteristics), final=task.evaluate_final,
        plan_complete=o.plan_complete, standing=st.kind if st else None,
        record_id=st.record.id if st is not None and st.record is not None else None,
        drift=bool(st and st.drift), drift_note=st.drift_note if st else None,
        monitoring=st.text if st else None, lots={p: tuple(v) for p, v in o.lots},
        workbook_path=o.workbook_path, result_path=o.result_path,
        workbook_sha256=o.workbook_sha256, evaluation_id=o.evaluation_id)
    return entry, record


def _row(spec: _Spec, e: Entry, record_text: str | None):
    from .digest import DigestRow

    prev = spec.previous_result
    new_lots: tuple[str, ...] = ()
    if e.state == "RUN" and prev is not None:
        before = {lot for lots in prev.lots.values() for lot in lots}
        new_lots = tuple(dict.fromkeys(
            lot for lots in e.lots.values() for lot in lots if lot not in before))
    return DigestRow(
        name=spec.name, spec_path=str(spec.path), state=e.state, decision=e.decision,
        previous_decision=prev.decision if prev is not None else None, standing=e.standing,
        record=record_text, drift=e.drift, drift_note=e.drift_note, new_lots=new_lots,
        first_result=e.state == "RUN" and prev is None, error=e.error,
        workbook=e.workbook_path)


# --- the command ---------------------------------------------------------------------------


def nightly_main(args: argparse.Namespace) -> int:
    """``verify nightly``: run :func:`run_nightly` from parsed arguments; the exit status."""
    try:
        result = run_nightly(
            args.spec_dirs, out=args.out, ledger_path=args.ledger, jobs=args.jobs,
            data_root=args.data_root, final=args.final, lock_timeout=args.lock_timeout,
            spec_timeout=args.spec_timeout, max_data_mb=args.max_data_mb)
    except VerifyError as exc:
        print(f"verify nightly: {exc.report()}", file=sys.stderr)
        return 2
    return result.exit_status


def main_for_tests(argv: Sequence[str]) -> int:
    """Parse ``argv`` as ``verify nightly`` would and run it (until cli.py hooks it up)."""
    parser = add_nightly_arguments(argparse.ArgumentParser(
        prog="verify nightly", description=DESCRIPTION, epilog=EXAMPLE,
        formatter_class=argparse.RawDescriptionHelpFormatter))
    try:
        args = parser.parse_args(list(argv))
    except SystemExit as exc:
        return int(exc.code or 0)
    return nightly_main(args)


if __name__ == "__main__":
    raise SystemExit(main_for_tests(sys.argv[1:]))
