"""The worker pool of ``verify nightly`` (verify.isolation): a time limit per job, a death that
costs one job, workers that stop when their parent dies. Expectations follow from the pool's
contract (issue 10), measured with the operating system's own process table."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest
from helpers_isolation import die, echo, mark_started, own_pid, raise_value_error, sleep_then

from verify.isolation import Failed, Job, Pool, run_isolated

TESTS = Path(__file__).resolve().parent


def test_results_come_back_for_every_job():
    got = dict(run_isolated([Job(str(i), echo, i) for i in range(5)], workers=2, timeout=120))
    assert got == {str(i): i for i in range(5)}


def test_a_job_over_the_time_limit_fails_alone_and_the_others_run():
    jobs = [Job("slow", sleep_then, 600), Job("a", echo, 1), Job("b", echo, 2)]
    got = dict(run_isolated(jobs, workers=1, timeout=20))
    assert isinstance(got["slow"], Failed) and got["slow"].timed_out
    assert "stopped after 20 s" in got["slow"].reason
    assert got["a"] == 1 and got["b"] == 2  # a fresh worker took the rest


def test_a_worker_that_dies_or_raises_costs_only_its_job():
    jobs = [Job("dies", die, 9), Job("raises", raise_value_error, "bad"), Job("ok", echo, 3)]
    got = dict(run_isolated(jobs, workers=2, timeout=120))
    assert isinstance(got["dies"], Failed) and "died" in got["dies"].reason
    assert "exit status 9" in got["dies"].reason
    assert isinstance(got["raises"], Failed) and "ValueError: bad" in got["raises"].reason
    assert got["ok"] == 3


def test_a_job_submitted_while_results_come_in_runs_in_the_same_workers():
    # the nightly run queues a spec's evaluation when its fingerprint comes back: the pool
    # must run it in the same pass, on a worker that ran an earlier job (no second pool)
    got = {}
    with Pool(workers=1, timeout=120) as pool:
        pool.submit(Job("first", own_pid, None))
        for job, result in pool.results():
            got[job.key] = result
            if job.key == "first":
                pool.submit(Job("second", own_pid, None))
                pool.submit(Job("echo", echo, 7))
    assert set(got) == {"first", "second", "echo"} and got["echo"] == 7
    assert got["first"] == got["second"]  # one worker, kept for the next job
    deadline = time.monotonic() + 30  # leaving the pool stops its worker
    while _alive(got["first"]) and time.monotonic() < deadline:
        time.sleep(0.1)
    assert not _alive(got["first"])


def test_a_freed_worker_starts_the_next_job_while_the_caller_handles_a_result(tmp_path):
    # the nightly run writes a spec's ledger entry and renames its files when its result comes
    # back; the worker that gave the result must go on with the next spec meanwhile (the
    # contract: the next waiting job is given out before the result is yielded)
    marker = tmp_path / "second-started"
    with Pool(workers=1, timeout=120) as pool:
        pool.submit(Job("first", own_pid, None))
        pool.submit(Job("second", mark_started, str(marker)))
        got = {}
        for job, result in pool.results():
            got[job.key] = result
            if job.key == "first":  # still handling the first result: the second runs
                deadline = time.monotonic() + 60
                while not marker.exists() and time.monotonic() < deadline:
                    time.sleep(0.05)
                assert marker.exists()
    assert got["first"] == got["second"]  # on the worker that was freed


def test_a_dead_worker_is_replaced_when_a_job_waits():
    with Pool(workers=1, timeout=120) as pool:
        pool.submit(Job("dies", die, 3))
        pool.submit(Job("after", own_pid, None))
        got = {job.key: result for job, result in pool.results()}
    assert isinstance(got["dies"], Failed) and "exit status 3" in got["dies"].reason
    assert isinstance(got["after"], int)  # a fresh worker took it


def _alive(pid: int) -> bool:
    """True while the process exists and is not a zombie (Linux /proc; kill(0) elsewhere)."""
    stat = Path(f"/proc/{pid}/stat")
    if stat.parent.parent.is_dir() and Path("/proc/self").exists():
        try:
            return stat.read_text().rsplit(")", 1)[1].split()[0] != "Z"
        except (OSError, IndexError):
            return False
    try:
        os.kill(pid, 0)
    except OSError:
        return False
    return True


@pytest.mark.slow
@pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs SIGKILL")
def test_workers_stop_when_their_parent_is_killed(tmp_path):
    pids = tmp_path / "pids"
    pids.touch()
    script = textwrap.dedent(f"""
        import sys
        sys.path.insert(0, {str(TESTS)!r})
        from helpers_isolation import worker_pid
        from verify.isolation import Job, run_isolated
        if __name__ == "__main__":
            jobs = [Job(str(i), worker_pid, 300) for i in range(4)]
            for key, result in run_isolated(jobs, workers=2, timeout=600):
                print(key, result, flush=True)
    """)
    (tmp_path / "parent.py").write_text(script, encoding="utf-8")
    env = {**os.environ, "VERIFY_TEST_PIDS": str(pids)}
    parent = subprocess.Popen([sys.executable, str(tmp_path / "parent.py")], env=env,
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    deadline = time.monotonic() + 120
    while len(pids.read_text().split()) < 2:
        assert time.monotonic() < deadline, "the workers did not start"
        time.sleep(0.1)
    workers = [int(x) for x in pids.read_text().split()]
    parent.send_signal(signal.SIGKILL)  # the parent alone: its workers are not signalled
    parent.communicate(timeout=30)
    deadline = time.monotonic() + 30
    while any(_alive(p) for p in workers) and time.monotonic() < deadline:
        time.sleep(0.1)
    try:
        assert not [p for p in workers if _alive(p)]  # they noticed the parent is gone
        assert len(pids.read_text().split()) == 2  # and no queued job started afterwards
    finally:
        for p in workers:
            if _alive(p):
                os.kill(p, signal.SIGKILL)
