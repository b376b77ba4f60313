"""The worker side: evaluate one spec (:func:`run_task`), write its history files as
temporary files, and report an :class:`~verify.nightly.tasks.Outcome`; the pool that runs the
tasks under the time limit."""

from __future__ import annotations

import hashlib
from collections.abc import Iterator, Sequence
from dataclasses import replace
from pathlib import Path

from ..errors import VerifyError
from ..ledger import DataFile
from .fingerprints import _data_file_key
from .history import _remove_partials, history_paths
from .record import _record_standing
from .tasks import DEFAULT_SPEC_TIMEOUT, HEAVY_MODULES, Outcome, Task, _utc


def init_worker() -> None:
    """Pool initializer: import the heavy libraries once per worker process."""
    import importlib

    for name in HEAVY_MODULES:
        importlib.import_module(name)
    from ..audit import git_commit, library_versions

    library_versions()
    git_commit()


def _plan(ev) -> tuple[bool, str | None]:
    """Whether every process of every characteristic reached min_n, and the shortfall."""
    from ..decide import SUFFICIENCY

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
    from ..ledger import judge
    from ..runner import prepare, stage_outputs
    from ..safe_open import MAX_SPEC_BYTES, read_regular

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
        # the workbook and JSON carry the nightly run's id, the id the ledger and the decision
        # of record cite and the history files are named by
        ev = replace(ev, monitoring=standing.text, run=replace(ev.run, run_id=task.run_id),
                     standing=_record_standing(standing, now, task.run_id))
        out_dir = Path(task.out_dir)
        from ..runner import keep_snapshots
        from ..snapshots import SNAPSHOT_DIR

        ev = keep_snapshots(ev, out_dir.parent / SNAPSHOT_DIR if task.snapshot else None)
        workbook, result = history_paths(out_dir, ev.decision, task.run_id)
        # renamed by the parent, after the ledger; the parent anchors the result to its
        # ledger entry and syncs it then
        staged = stage_outputs(ev, workbook, result, sync_result=False)
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
        return Outcome(task.spec_key, started, _utc(), error=exc.report(),
                       data_files=_data_files_late(task))
    except MemoryError:
        return Outcome(task.spec_key, started, _utc(), error="out of memory evaluating the spec")
    except Exception as exc:  # isolation: one spec's failure must not stop the others
        import traceback

        where = traceback.extract_tb(exc.__traceback__)[-1]
        return Outcome(task.spec_key, started, _utc(),
                       error=f"internal error ({type(exc).__name__}: {exc}) at "
                             f"{Path(where.filename).name}:{where.lineno}; please report it",
                       data_files=_data_files_late(task))


def _data_files_late(task: Task) -> tuple[DataFile, ...]:
    """The data files a failed spec names, hashed now, where its fingerprint left them to the
    evaluation (:func:`~verify.nightly.fingerprints.fingerprint` with ``defer``): its ERROR
    entry names them as an entry of the probe's own reading would. Empty where the fingerprint
    has them, the spec changed since, or they cannot be read."""
    from ..safe_open import MAX_SPEC_BYTES, max_data_bytes, read_regular
    from .fingerprints import fingerprint

    if task.fingerprint.data_files or task.data_root is not None:
        return ()
    try:
        raw = read_regular(task.spec_path, what="spec", max_bytes=MAX_SPEC_BYTES)
        if hashlib.sha256(raw).hexdigest() != task.fingerprint.spec_sha256:
            return ()
        return fingerprint(Path(task.spec_path), raw, None,
                           max_bytes=max_data_bytes(task.max_data_mb)).data_files
    except Exception:  # a best effort for the record: the entry's error says what failed
        return ()


def _worker_run(task: Task) -> Outcome:
    """Evaluate one spec in a worker, the heavy libraries imported once per worker."""
    init_worker()
    return run_task(task)


def _task_job(task: Task):
    """The pool job that evaluates ``task`` (:func:`_worker_run` in a worker)."""
    from ..isolation import Job

    return Job(task.spec_key, _worker_run, task)


def _outcome(task: Task, result, started: str) -> Outcome:
    """The worker's :class:`Outcome`, or an ERROR outcome when the job failed in the pool (it
    timed out or killed its worker: whatever it left in its folder is removed)."""
    from ..isolation import Failed

    if isinstance(result, Failed):
        _remove_partials(Path(task.out_dir))
        return Outcome(task.spec_key, started, _utc(),
                       error=f"{task.spec_path}: {result.reason}; nothing was written")
    return result


def _run_tasks(tasks: Sequence[Task], jobs: int, timeout: float = DEFAULT_SPEC_TIMEOUT,
               ) -> Iterator[Outcome]:
    """Yield outcomes as workers finish; a spec that times out or kills its worker costs only
    itself (:mod:`verify.isolation`)."""
    from ..isolation import run_isolated

    by_key = {t.spec_key: t for t in tasks}
    starts = {t.spec_key: _utc() for t in tasks}
    for key, result in run_isolated([_task_job(t) for t in tasks], workers=jobs,
                                    timeout=timeout):
        yield _outcome(by_key[key], result, starts[key])
