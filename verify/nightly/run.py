""":func:`run_nightly`: one nightly pass under the ledger lock: fingerprint every spec
(in workers), decide what each needs (:func:`_triage`: ERROR, UNCHANGED or a task), evaluate
the tasks in workers, write each spec's ledger entry and then its files, the run's row, the
digest and one line per spec."""

from __future__ import annotations

import io
import os
import sys
import time
import uuid
from collections.abc import Sequence
from dataclasses import dataclass, replace
from pathlib import Path

from .. import __version__
from ..errors import UsageError
from ..isolation import Failed, Pool
from ..ledger import Entry, Ledger, LedgerLock, RunRow
from .fingerprints import Probe, ProbeTask, probe
from .history import (
    _clean_partials,
    _commit,
    _digest_path,
    _missing_outputs,
    _output_names,
    _refresh_latest,
    _sweep_strays,
)
from .record import _entry_from, _record_text, _unchanged
from .tasks import (
    DEFAULT_LOCK_TIMEOUT,
    DEFAULT_OUT,
    DEFAULT_SPEC_TIMEOUT,
    QUARANTINE,
    Outcome,
    Task,
    _stamp,
    _utc,
)
from .worker import _outcome, _task_job


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
    head: str | None = None  # the ledger's chain head after the run


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
    snapshot: bool = True


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
    rerun_reason = None
    if (last_result is not None and newest is not None and newest.state != "ERROR"
            and fp.matches(last_result.fingerprint) and not wants_record):
        missing = _missing_outputs(ctx.out / name, last_result)
        if not missing:
            return _unchanged(ctx.run_id, key, started, last_result)
        rerun_reason = (f"evaluated again: the files of its last result ({', '.join(missing)}) "
                        "are not in place (an interrupted run recorded it before putting them "
                        "in place)")
    previous = ledger.latest_record(key)
    if previous is not None and previous.spec_sha256 == fp.spec_sha256:
        previous = None
    return Task(
        spec_key=key, spec_path=str(path), out_dir=str(ctx.out / name), run_id=ctx.run_id,
        command=ctx.command, final=ctx.final,
        evaluate_final=ctx.final or bool(record is not None and record.final),
        fingerprint=fp, record=record, previous=previous,
        data_root=str(ctx.root) if ctx.root is not None else None,
        max_data_mb=ctx.max_data_mb, snapshot=ctx.snapshot, rerun_reason=rerun_reason)


def _probe_jobs(specs: Sequence[Path], keys: Sequence[str], ctx: _Context) -> list:
    """A fingerprinting job per spec (light: no heavy import in the worker)."""
    from ..isolation import Job

    root = str(ctx.root) if ctx.root is not None else None
    return [Job(key, probe, ProbeTask(str(path), ctx.results.get(key), root, ctx.max_data_mb))
            for path, key in zip(specs, keys, strict=True)]


def _exit_status(rows: Sequence) -> int:
    if any(r.state == "ERROR" for r in rows):
        return 2
    if any(r.decision == "HOLD" or r.drift for r in rows):
        return 1
    if any(r.decision == "PENDING" for r in rows):
        return 3
    return 0


def run_nightly(spec_dirs: Sequence[str], *, out: str | os.PathLike = DEFAULT_OUT,
                ledger_path: str | os.PathLike | None = None, jobs: int = 1,
                data_root: str | os.PathLike | None = None, final: bool = False,
                lock_timeout: float = DEFAULT_LOCK_TIMEOUT, command: str | None = None,
                progress_stream=None, spec_timeout: float = DEFAULT_SPEC_TIMEOUT,
                max_data_mb: float | None = None, snapshot: bool = True) -> NightlyResult:
    """Run one nightly pass (the library behind ``verify nightly``).

    Raises
    ------
    UsageError
        No spec found, or ``data_root`` is not a folder (checked before any file is opened).
    LedgerBusyError
        Another nightly run held the ledger lock for longer than ``lock_timeout`` seconds.
    """
    from ..audit import command_line
    from ..digest import DigestRow, Progress, summary_line, write_digest
    from ..runner import atomic_path
    from ..spec_files import find_specs

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
    from ..output import QUIET, mode

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
                       latest=latest, results=results, max_data_mb=max_data_mb,
                       snapshot=snapshot)
        for path, key, name in zip(specs, keys, names, strict=True):
            info[key] = _Spec(key, path, name, results.get(key))
        probe_started = {key: _utc() for key in keys}
        by_key: dict[str, Task] = {}

        def record(outcome: Outcome) -> None:
            task = by_key[outcome.spec_key]
            entry, rec = _entry_from(run_id, task, outcome)
            entry, rec = ledger.append(entry, record=rec)
            # the files go into place only now that an entry names them
            problem = _commit(entry, outcome, ledger_path)
            if problem is not None:
                progress.note(problem)
            rec_text = rec.describe() if rec is not None else _record_text(
                ledger, entry.record_id)
            finish(_row(info[task.spec_key], entry, rec_text, task.rerun_reason))

        # One pool does both passes: every spec is fingerprinted first (light jobs, queued
        # first), and a spec that must run is queued as soon as its fingerprint is judged, so
        # the same workers go on to evaluate without a second pool's start-up.
        triaged_by_key: dict[str, Entry | Task] = {}
        held: list[Outcome] = []  # outcomes back before the last fingerprint (kept in order)
        with Pool(workers=jobs, timeout=spec_timeout) as pool:
            for job in _probe_jobs(specs, keys, ctx):
                pool.submit(job)
            _import_in_background("openpyxl")  # for the digest, while the workers work
            waiting = len(keys)
            task_started: dict[str, str] = {}
            for job, result in pool.results():
                key = job.key
                if job.func is not probe:  # an evaluation
                    outcome = _outcome(by_key[key], result, task_started[key])
                    if waiting:
                        held.append(outcome)
                    else:
                        record(outcome)
                    continue
                if isinstance(result, Failed):
                    result = Probe(None, f"{info[key].path}: reading the spec and hashing its "
                                         f"data files {result.reason}")
                triaged = _triage(ledger, ctx, info[key].path, key, info[key].name, result,
                                  probe_started[key])
                triaged_by_key[key] = triaged
                if isinstance(triaged, Task):
                    if triaged.rerun_reason is not None:
                        progress.note(f"{info[key].name}: {triaged.rerun_reason}")
                    tasks.append(triaged)
                    by_key[key] = triaged
                    task_started[key] = _utc()
                    pool.submit(_task_job(triaged))
                waiting -= 1
                if waiting:
                    continue
                # every spec judged: the entries of those that do not run, in the order the
                # specs were found, then the evaluations in the order they finish
                for k in keys:
                    triaged = triaged_by_key[k]
                    if not isinstance(triaged, Task):
                        entry, _ = ledger.append(triaged)
                        if entry.state == "UNCHANGED":
                            _restore_latest(out / info[k].name, entry, progress)
                        finish(_row(info[k], entry, _record_text(ledger, entry.record_id)))
                if tasks:
                    progress.note(f"evaluating {len(tasks)} of {len(specs)} spec(s) in "
                                  f"{min(jobs, len(tasks))} worker process(es)")
                for outcome in held:
                    record(outcome)
                held.clear()

        rows = [rows_by_name[n] for n in names if n in rows_by_name]
        status = _exit_status(rows)
        finished = _utc()
        head_seq, head_hash = ledger.append_run(RunRow(
            run_id=run_id, started=started, finished=finished, tool_version=__version__,
            host=_host(), pid=os.getpid(), command=command, specs=len(rows),
            ran=sum(r.state == "RUN" for r in rows),
            unchanged=sum(r.state == "UNCHANGED" for r in rows),
            errors=sum(r.state == "ERROR" for r in rows), exit_status=status))

        digest = _digest_path(out, started)
        run_facts = [
            ("run", run_id), ("started", started), ("finished", finished),
            ("specs", str(len(rows))), ("ledger", str(ledger_path)),
            ("ledger head", f"{head_hash} (chain position {head_seq}; check with 'verify "
                            f"ledger {ledger_path} --head {head_hash}')"),
            ("command", command),
            ("tool version", __version__), ("exit status", str(status)),
            ("elapsed", f"{time.monotonic() - t0:.2f} s"),
        ]
        with atomic_path(digest) as tmp:
            write_digest(tmp, rows, run=run_facts)

    from ..output import say

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
        f"ledger head {head_hash}; exit {status}")
    return NightlyResult(run_id=run_id, exit_status=status, rows=tuple(rows), digest=digest,
                         ledger=ledger_path, head=head_hash)


def _import_in_background(name: str) -> None:
    """Import ``name`` in a daemon thread: the digest is written after the last spec, so its
    spreadsheet library (about 0.3 s to import) is loaded while this process only waits on
    its workers. A failure is left for the digest's own import to report."""
    import importlib
    import threading

    def load() -> None:
        try:
            importlib.import_module(name)
        except Exception:  # the digest's own import reports it
            pass

    threading.Thread(target=load, name=f"import-{name}", daemon=True).start()


def _host() -> str:
    import socket

    return socket.gethostname()


def _restore_latest(folder: Path, entry: Entry, progress) -> None:
    try:
        if _refresh_latest(folder, entry):
            progress.note(f"{folder.name}: latest.json did not match its standing result "
                          f"(an interrupted run); copied again from "
                          f"{Path(entry.result_path or '').name}")
    except OSError as exc:
        progress.note(f"{folder.name}: latest.json could not be refreshed from its standing "
                      f"result: {exc}")


def _row(spec: _Spec, e: Entry, record_text: str | None, rerun_reason: str | None = None):
    from ..digest import DigestRow

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
        workbook=e.workbook_path, rerun_reason=rerun_reason if e.state == "RUN" else None)
