"""Jobs for the isolation tests: module-level functions a spawned worker can import."""

from __future__ import annotations

import os
import time


def echo(x):
    return x


def sleep_then(seconds: float):
    time.sleep(seconds)
    return seconds


def die(code: int):
    os._exit(code)


def raise_value_error(text: str):
    raise ValueError(text)


def worker_pid(seconds: float):
    """This worker's pid, after a pause (so that a parent can be killed meanwhile)."""
    pid = os.getpid()
    with open(os.environ["VERIFY_TEST_PIDS"], "a", encoding="utf-8") as f:
        f.write(f"{pid}\n")
    time.sleep(seconds)
    return pid


def own_pid(_):
    """The pid of the worker running the job."""
    return os.getpid()


def mark_started(path: str):
    """Write ``path`` as the job starts (so that the parent sees when it ran); the pid."""
    with open(path, "w", encoding="utf-8") as f:
        f.write(str(os.getpid()))
    return os.getpid()
