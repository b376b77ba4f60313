"""Run jobs in worker processes, each under a time limit, each dying with its parent.

:func:`run_isolated` is the small process pool behind ``verify nightly``. It differs from
:class:`concurrent.futures.ProcessPoolExecutor` in the three ways an unattended run needs:

* **a time limit per job**: a job still running after ``timeout`` seconds has its worker
  killed and is reported as :class:`Failed` (a data file on a hung network share, a FIFO, a
  pathological input); a fresh worker takes the next job;
* **a death costs one job**: a worker that dies (killed, out of memory, crashed) fails only the
  job it was running;
* **workers stop when their parent dies**: each worker holds the read end of a *lifeline* pipe
  whose only write end is in the parent. A watcher thread in the worker blocks reading it; when
  the parent dies, by any means, the operating system closes the write end, the read returns
  end-of-file and the worker exits at once, whatever it was doing. Nothing is queued ahead in a
  worker, so no job starts after the parent is gone.

Jobs are sent one at a time to an idle worker; results come back in completion order. Workers
are started with the ``spawn`` method (the same on Linux, macOS and Windows). Only
:mod:`multiprocessing` is used: no POSIX-only imports.
"""

from __future__ import annotations

import os
import threading
import time
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass
from typing import Any

KILL_WAIT = 5.0  # seconds to wait for a killed worker to be reaped


@dataclass(frozen=True)
class Job:
    """One unit of work: ``func(arg)`` in a worker; ``key`` identifies it in the results.

    ``func`` must be a module-level function and ``arg`` picklable.
    """

    key: str
    func: Callable[[Any], Any]
    arg: Any


@dataclass(frozen=True)
class Failed:
    """A job that gave no result: it timed out, its worker died, or it raised."""

    reason: str
    timed_out: bool = False


def _watch_lifeline(conn) -> None:
    try:
        conn.recv()  # the parent never sends: this returns only by end-of-file
    except (EOFError, OSError):
        pass
    os._exit(70)  # the parent is gone: stop now (no cleanup that could write anything)


def _worker_main(tasks, lifeline) -> None:  # pragma: no cover - runs in the worker process
    threading.Thread(target=_watch_lifeline, args=(lifeline,), daemon=True).start()
    while True:
        try:
            func, arg = tasks.recv()
        except (EOFError, OSError):
            _leave()
            return
        try:
            reply = ("ok", func(arg))
        except BaseException as exc:  # a job's failure is reported, never fatal to the pool
            reply = ("raised", f"{type(exc).__name__}: {exc}")
        try:
            tasks.send(reply)
        except (OSError, ValueError):
            return


def _leave() -> None:  # pragma: no cover - runs in the worker process
    """End a worker whose pipe was closed (no job runs, every job's files are closed).

    The interpreter's own shutdown (tearing down numpy, pandas, scipy, ...) takes most of a
    second of a worker that evaluated specs, while its parent waits for it; there is nothing
    left to clean up, so the process ends at once after flushing its standard streams.
    """
    import sys

    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (AttributeError, OSError, ValueError):
            pass
    os._exit(0)


class _Worker:
    def __init__(self, ctx):
        self.tasks, child_tasks = ctx.Pipe(duplex=True)
        child_lifeline, self.lifeline = ctx.Pipe(duplex=False)
        self.proc = ctx.Process(target=_worker_main, args=(child_tasks, child_lifeline),
                                daemon=True)
        self.proc.start()
        child_tasks.close()  # the worker holds these now; the parent keeps only its ends
        child_lifeline.close()
        self.job: Job | None = None
        self.deadline = 0.0

    def give(self, job: Job, timeout: float) -> None:
        self.job = job
        self.deadline = time.monotonic() + timeout
        self.tasks.send((job.func, job.arg))

    def stop(self, *, kill: bool, wait: bool = True) -> None:
        for conn in (self.tasks, self.lifeline):
            try:
                conn.close()
            except OSError:
                pass
        if kill and self.proc.is_alive():
            self.proc.kill()
        if wait:
            self.join()

    def join(self) -> None:
        self.proc.join(KILL_WAIT)
        if self.proc.is_alive():  # pragma: no cover - a worker that ignores its lifeline
            self.proc.kill()
            self.proc.join(KILL_WAIT)


def run_isolated(jobs: Iterable[Job], *, workers: int, timeout: float,
                 ) -> Iterator[tuple[str, Any]]:
    """Run ``jobs`` in up to ``workers`` processes; yield ``(key, result)`` as each finishes.

    A result is what the job's function returned, or a :class:`Failed` when the job timed
    out (its worker is killed), its worker died, or the function raised.

    Parameters
    ----------
    jobs
        The jobs, started in order.
    workers
        Worker processes at most (fewer when there are fewer jobs).
    timeout
        Seconds one job may run.

    Examples
    --------
    >>> dict(run_isolated([Job("a", abs, -2)], workers=1, timeout=60))  # doctest: +SKIP
    {'a': 2}
    """
    with Pool(workers=workers, timeout=timeout) as pool:
        for job in jobs:
            pool.submit(job)
        for job, result in pool.results():
            yield job.key, result


class Pool:
    """The pool behind :func:`run_isolated`, to which jobs may be added while results come in.

    Jobs start in the order submitted; a worker is started when a job waits and fewer than
    ``workers`` exist, and it keeps running further jobs (a worker that imported heavy
    libraries for one job keeps them for the next). A freed worker is given the next waiting
    job before its result is yielded. :meth:`results` yields ``(job, result)``
    in completion order until no job waits or runs; a job submitted meanwhile (for instance in
    answer to a result) is run in the same pass. Leaving the ``with`` block stops the workers
    (killing any still busy).

    Examples
    --------
    >>> with Pool(workers=2, timeout=60) as pool:  # doctest: +SKIP
    ...     pool.submit(Job("a", abs, -2))
    ...     [(job.key, result) for job, result in pool.results()]
    [('a', 2)]
    """

    def __init__(self, *, workers: int, timeout: float):
        import multiprocessing as mp
        from collections import deque

        self.workers = max(1, int(workers))
        self.timeout = timeout
        self._queue: deque[Job] = deque()
        self._ctx = mp.get_context("spawn")
        self._pool: list[_Worker] = []
        self._idle: list[_Worker] = []

    def __enter__(self) -> Pool:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def submit(self, job: Job) -> None:
        """Queue ``job``; it starts when a worker is free (in the order submitted)."""
        self._queue.append(job)

    def _dispatch(self) -> None:
        while self._queue and (self._idle or len(self._pool) < self.workers):
            if self._idle:
                w = self._idle.pop()
            else:
                w = _Worker(self._ctx)
                self._pool.append(w)
            w.give(self._queue.popleft(), self.timeout)

    def results(self) -> Iterator[tuple[Job, Any]]:
        """``(job, result)`` as each job finishes, until no job waits or runs."""
        from multiprocessing.connection import wait

        timeout = self.timeout
        while True:
            self._dispatch()
            busy = [w for w in self._pool if w.job is not None]
            if not busy:
                return
            now = time.monotonic()
            wait_for = max(0.0, min(w.deadline for w in busy) - now)
            ready = wait([x for w in busy for x in (w.tasks, w.proc.sentinel)],
                         timeout=wait_for)
            done: list[tuple[_Worker, Any, bool]] = []  # (worker, result, worker still usable)
            for w in busy:
                if w.tasks in ready or w.proc.sentinel in ready:
                    try:
                        if not w.tasks.poll():
                            raise EOFError
                        kind, value = w.tasks.recv()
                    except (EOFError, OSError):
                        w.proc.join(KILL_WAIT)  # the pipe closes before the exit is reaped
                        code = w.proc.exitcode
                        done.append((w, Failed(
                            "the worker process died (killed, or out of memory"
                            + (f"; exit status {code}" if code is not None else "") + ")"),
                            False))
                        continue
                    done.append((w, value if kind == "ok" else Failed(value), True))
                elif time.monotonic() >= w.deadline:
                    done.append((w, Failed(f"stopped after {timeout:g} s (the time limit per "
                                           "spec, --spec-timeout)", timed_out=True), False))
            finished: list[tuple[Job, Any]] = []
            for w, result, usable in done:
                finished.append((w.job, result))
                w.job = None
                if usable:
                    self._idle.append(w)
                else:  # a fresh worker takes the next job (started by _dispatch)
                    w.stop(kill=True)
                    self._pool.remove(w)
            # the waiting jobs go to the freed workers before the results are handed on: a
            # worker does not sit idle while the caller deals with a result (the nightly run
            # writes a ledger entry and renames files then, a few ms per spec)
            self._dispatch()
            yield from finished

    def close(self) -> None:
        """Stop every worker: idle ones end when their pipes close, busy ones are killed.

        All are told first and then waited for, so they wind down at the same time.
        """
        pool, self._pool, self._idle = self._pool, [], []
        self._queue.clear()
        for w in pool:
            w.stop(kill=w.job is not None, wait=False)
        for w in pool:
            w.join()
