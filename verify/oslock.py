"""An exclusive, non-blocking lock on an open file, on Windows as well as POSIX.

No platform module is imported at module level: ``fcntl`` exists only on POSIX and ``msvcrt``
only on Windows, and importing either at the top of a module that the CLI reaches would make
every command fail on the other platform.

- POSIX: ``fcntl.flock`` on the whole file (released by the kernel when the holder dies).
- Windows: ``msvcrt.locking`` on one byte far beyond the file's text, so that the text (who
  holds the lock) stays readable by the next run (Windows byte locks are mandatory). Windows
  also releases it when the holder dies.
- Neither module available (an unusual Python build): a marker file ``<path>.held`` created
  exclusively, naming the holder's process id and host; a marker whose process no longer runs
  on this host is taken over.
"""

from __future__ import annotations

import contextlib
import errno
import json
import os
import socket
from pathlib import Path

# Windows: the locked byte lies this far into the file, beyond any text written there
_WINDOWS_LOCK_OFFSET = 1 << 30
_BUSY = (errno.EAGAIN, errno.EACCES, errno.EWOULDBLOCK)


def _module(name: str):
    try:
        return __import__(name)
    except ImportError:
        return None


def lock_method() -> str:
    """Which mechanism :func:`try_lock` uses here: "flock", "msvcrt" or "marker-file"."""
    if os.name == "nt" and _module("msvcrt") is not None:
        return "msvcrt"
    if _module("fcntl") is not None:
        return "flock"
    return "marker-file"


def try_lock(fd: int, path: str | os.PathLike) -> bool:
    """Take an exclusive lock on the open file ``fd`` (opened from ``path``) without waiting.

    Returns
    -------
    bool
        True when this process now holds the lock, False when another one holds it.
    """
    method = lock_method()
    if method == "msvcrt":
        import msvcrt

        os.lseek(fd, _WINDOWS_LOCK_OFFSET, os.SEEK_SET)
        try:
            msvcrt.locking(fd, msvcrt.LK_NBLCK, 1)
        except OSError:
            return False
        finally:
            os.lseek(fd, 0, os.SEEK_SET)
        return True
    if method == "flock":
        import fcntl

        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError as exc:
            if exc.errno in _BUSY:
                return False
            raise
        return True
    return _marker_lock(Path(str(path) + ".held"))


def unlock(fd: int, path: str | os.PathLike) -> None:
    """Release a lock taken by :func:`try_lock` (the file itself stays open)."""
    method = lock_method()
    if method == "msvcrt":
        import msvcrt

        os.lseek(fd, _WINDOWS_LOCK_OFFSET, os.SEEK_SET)
        with contextlib.suppress(OSError):
            msvcrt.locking(fd, msvcrt.LK_UNLCK, 1)
        os.lseek(fd, 0, os.SEEK_SET)
    elif method == "flock":
        import fcntl

        fcntl.flock(fd, fcntl.LOCK_UN)
    else:
        with contextlib.suppress(FileNotFoundError):
            os.remove(str(path) + ".held")


def write_text_at_start(fd: int, text: str) -> None:
    """Replace the file's content with ``text`` (``os.pwrite`` does not exist on Windows)."""
    os.ftruncate(fd, 0)
    os.lseek(fd, 0, os.SEEK_SET)
    os.write(fd, text.encode("utf-8"))


def _marker_lock(marker: Path) -> bool:
    me = {"pid": os.getpid(), "host": socket.gethostname()}
    for _ in range(2):
        try:
            fd = os.open(marker, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
        except FileExistsError:
            if not _stale(marker, me["host"]):
                return False
            with contextlib.suppress(FileNotFoundError):
                os.remove(marker)
            continue
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(json.dumps(me))
        return True
    return False


def _stale(marker: Path, host: str) -> bool:
    """A marker left by a process of this host that no longer runs."""
    try:
        info = json.loads(marker.read_text(encoding="utf-8") or "{}")
        pid = int(info["pid"])
    except (OSError, ValueError, KeyError, TypeError):
        return False  # being written right now, or unreadable: not ours to remove
    if info.get("host") != host:
        return False
    if pid == os.getpid() or os.name == "nt":
        return False  # on Windows os.kill(pid, 0) would end that process, not probe it
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    except OSError:
        return False
    return False
