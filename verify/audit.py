"""Who ran what, when, with which software: the run record and its determinism.

With the environment variable ``SOURCE_DATE_EPOCH`` set (seconds since 1970, the reproducible-
builds convention), the run times and the run id are fixed, so two runs on the same inputs give
byte-identical JSON and workbooks with identical cell contents.
"""

from __future__ import annotations

import datetime as _dt
import getpass
import hashlib
import os
import platform
import socket
import subprocess
import sys
import uuid
from functools import lru_cache
from pathlib import Path

from . import __version__


def source_date_epoch() -> int | None:
    """The SOURCE_DATE_EPOCH value, or None when unset or empty; invalid text is an error."""
    raw = os.environ.get("SOURCE_DATE_EPOCH", "").strip()
    if not raw:
        return None
    if not raw.isdigit() or int(raw) > 253402300799:  # 9999-12-31T23:59:59Z
        from .errors import UsageError

        raise UsageError(f"SOURCE_DATE_EPOCH={raw!r} must be a whole number of seconds since "
                         "1970-01-01 UTC (0 to 253402300799), or unset")
    return int(raw)


def utc_now() -> str:
    """The current UTC time as ISO 8601 with a Z, or the fixed SOURCE_DATE_EPOCH time."""
    return _utc_text(source_date_epoch())


def _utc_text(epoch: int | None) -> str:
    """:func:`utc_now` with the SOURCE_DATE_EPOCH value read: the current time's text,
    ``strftime("%Y-%m-%dT%H:%M:%S.%fZ")`` as isoformat writes it (microseconds always, the UTC
    offset as Z), or the epoch's to the second."""
    if epoch is not None:
        return _dt.datetime.fromtimestamp(epoch, tz=_dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
    return _dt.datetime.now(tz=_dt.UTC).isoformat(timespec="microseconds")[:-6] + "Z"


@lru_cache(maxsize=1)
def library_versions() -> dict[str, str]:
    import numpy
    import openpyxl
    import pandas
    import scipy

    return {
        "python": platform.python_version(),
        "numpy": numpy.__version__,
        "scipy": scipy.__version__,
        "pandas": pandas.__version__,
        "openpyxl": openpyxl.__version__,
    }


@lru_cache(maxsize=1)
def git_commit() -> str | None:
    """The checkout's commit when verify runs from a git checkout (with '+dirty' if modified)."""
    root = Path(__file__).resolve().parent.parent
    if not (root / ".git").exists():
        return None
    try:
        head = subprocess.run(
            ["git", "-C", str(root), "rev-parse", "HEAD"], capture_output=True, text=True,
            timeout=5, check=True,
        ).stdout.strip()
        dirty = subprocess.run(
            ["git", "-C", str(root), "status", "--porcelain", "--untracked-files=no"],
            capture_output=True, text=True, timeout=5, check=True,
        ).stdout.strip()
    except (OSError, subprocess.SubprocessError):
        return None
    return head + ("+dirty" if dirty else "") if head else None


def _user() -> str:
    """getpass.getuser(), or USER or "unknown" where it fails: the first of the environment
    variables it reads (LOGNAME, USER, LNAME, USERNAME, in its order) set to a text, else the
    account's name from the password database, looked up once per user id (each lookup reads
    the database file)."""
    for name in ("LOGNAME", "USER", "LNAME", "USERNAME"):
        user = os.environ.get(name)
        if user:
            return user
    getuid = getattr(os, "getuid", None)  # (not on Windows, where getpass reads USERNAME)
    return _account_name(None if getuid is None else getuid())


@lru_cache(maxsize=4)
def _account_name(uid: int | None) -> str:
    """getpass.getuser() for the process's user id ``uid`` (its environment variables unset)."""
    try:
        return getpass.getuser()
    except (OSError, KeyError):
        return os.environ.get("USER", "unknown")


def command_line() -> str:
    """The exact command line of this process."""
    import shlex

    prog = Path(sys.argv[0]).name if sys.argv else "verify"
    if prog in ("__main__.py", "-m"):
        prog = "python -m verify"
    return " ".join([prog] + [shlex.quote(a) for a in sys.argv[1:]])


def run_info(spec, measurements, *, command: str | None = None, started: str | None = None):
    """A :class:`~verify.model.RunInfo` for this run.

    The run id is random, except under SOURCE_DATE_EPOCH, where it is derived from the inputs'
    hashes and the epoch so that reruns are identical.
    """
    from .model import RunInfo

    epoch = source_date_epoch()
    if epoch is not None:
        h = hashlib.sha256(spec.sha256.encode())
        for f in measurements.files:
            h.update(f.sha256.encode())
        h.update(str(epoch).encode())
        run_id = str(uuid.UUID(h.hexdigest()[:32]))
    else:
        run_id = str(uuid.uuid4())
    return RunInfo(
        run_id=run_id,
        started=started or _utc_text(epoch),
        finished=_utc_text(epoch),
        user=_user(),
        host=socket.gethostname(),
        command=command if command is not None else command_line(),
        tool_version=__version__,
        git_commit=git_commit(),
        versions=library_versions(),
    )


def sha256_file(path: str | Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()
