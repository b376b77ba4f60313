""":class:`LedgerLock`: one nightly run at a time writes a ledger (an exclusive lock on
``<ledger>.lock`` through :mod:`verify.oslock`, released by the system if the holder dies)."""

from __future__ import annotations

import contextlib
import json
import os
import socket
import time
from pathlib import Path

from .. import oslock
from .errors import LedgerBusyError


class LedgerLock:
    """An exclusive lock on ``<ledger>.lock`` for the whole of one nightly run.

    Parameters
    ----------
    ledger_path
        The ledger file; the lock file sits beside it.
    timeout
        Seconds to wait for another run to finish before giving up with
        :class:`LedgerBusyError`.
    started
        When this run started (written into the lock file for the next run's message).
    """

    def __init__(self, ledger_path: str | os.PathLike, *, timeout: float, started: str,
                 run_id: str = ""):
        self.path = Path(str(ledger_path) + ".lock")
        self.timeout = timeout
        self.started = started
        self.run_id = run_id
        self._fd: int | None = None

    def _holder(self) -> str:
        try:
            info = json.loads(self.path.read_text(encoding="utf-8") or "{}")
        except (OSError, ValueError):
            info = {}
        if not info:
            return "another nightly run holds the ledger lock"
        return (f"another nightly run (pid {info.get('pid', '?')} on {info.get('host', '?')}, "
                f"run {info.get('run_id', '?')}) holds the ledger lock since "
                f"{info.get('since', '?')}")

    def acquire(self) -> None:
        self.path.parent.mkdir(parents=True, exist_ok=True)
        fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
        deadline = time.monotonic() + max(self.timeout, 0.0)
        while True:
            try:
                if oslock.try_lock(fd, self.path):
                    break
            except OSError:
                os.close(fd)
                raise
            if time.monotonic() >= deadline:
                holder = self._holder()
                os.close(fd)
                raise LedgerBusyError(
                    f"{holder} (lock file {self.path}); waited {self.timeout:g} s; try "
                    "again later, or raise --lock-timeout") from None
            time.sleep(0.1)
        info = {"pid": os.getpid(), "host": socket.gethostname(), "since": self.started,
                "run_id": self.run_id}
        oslock.write_text_at_start(fd, json.dumps(info) + "\n")
        self._fd = fd

    def release(self) -> None:
        if self._fd is not None:
            # The file stays: removing a lock file that another process may be opening races.
            with contextlib.suppress(OSError):
                os.ftruncate(self._fd, 0)
            oslock.unlock(self._fd, self.path)
            os.close(self._fd)
            self._fd = None

    def __enter__(self) -> LedgerLock:
        self.acquire()
        return self

    def __exit__(self, *exc) -> None:
        self.release()
