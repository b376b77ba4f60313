"""Open input files safely: regular files only, within a size limit, never blocking.

Every file verify reads as input (specs, data files, reports given to replay, files hashed by
nightly) is opened here. A path may be a symbolic link, but what it resolves to must be a
regular file: a folder, a device such as ``/dev/zero``, a named pipe (FIFO) or a socket is
refused with a :class:`FileRefused` naming the file and what it is. The check runs twice: by
``stat`` before opening (a FIFO is never opened), and by ``fstat`` on the opened descriptor
(a file swapped for a FIFO in between is caught). The open itself is non-blocking where the
platform has ``O_NONBLOCK``, so even that race cannot hang the process.

A size limit, when given, is checked on the size ``stat`` reports and again on the bytes read
(a file that grows while it is read cannot exceed it).

:func:`check_xlsx_archive` checks an .xlsx (a zip archive) from its central directory before any
XML is parsed: the sum of the uncompressed sizes and each member's compression ratio, so a small
file that expands to gigabytes of XML is refused instead of filling memory.

Windows-safe: only :mod:`os` and :mod:`stat` are used (``O_NONBLOCK`` is looked up, not
assumed).
"""

from __future__ import annotations

import os
import stat
from typing import BinaryIO

from .errors import VerifyError

MB = 1024 * 1024
DEFAULT_MAX_DATA_MB = 256.0  # a data file of 500,000 measurements is about 30 MB as CSV
MAX_SPEC_BYTES = 16 * MB  # a spec is a few kilobytes; 16 MB is far beyond any real one
MAX_REPORT_BYTES = 512 * MB  # a JSON result or workbook given to replay
# An .xlsx expands about 5-20 times (sheet XML deflates well); a member that expands more than
# this is refused as a decompression bomb. Members smaller than XLSX_RATIO_FLOOR bytes are not
# judged by ratio (a tiny, highly repetitive part is harmless).
XLSX_MAX_RATIO = 200.0
XLSX_RATIO_FLOOR = 1 * MB
XLSX_EXPANSION = 8  # the archive may expand to this many times the data size limit in all


class FileRefused(VerifyError):
    """An input path is not a regular file, is too large, or cannot be opened safely.

    ``path`` is the path as shown to the user, ``reason`` the sentence without it.
    """

    def __init__(self, path: str, reason: str):
        self.path = path
        self.reason = reason
        super().__init__(f"{path}: {reason}")


def kind_of(mode: int) -> str:
    """What a file of this mode is, in words ("a folder", "a named pipe (FIFO)", ...)."""
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a named pipe (FIFO)"
    if stat.S_ISCHR(mode):
        return "a character device"
    if stat.S_ISBLK(mode):
        return "a block device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    if stat.S_ISREG(mode):
        return "a regular file"
    return "not a regular file"


def _shown(path: str | os.PathLike, shown: str | None) -> str:
    return shown if shown is not None else str(path)


def _not_regular(path, shown, mode: int, what: str) -> FileRefused:
    return FileRefused(_shown(path, shown),
                       f"is {kind_of(mode)}, not a regular file: verify reads {what} only from "
                       "regular files (a link is followed; it must end at a regular file)")


def size_text(n: int) -> str:
    """A size for messages: "12.3 MB", or "10,485 bytes" below a megabyte."""
    return f"{n / MB:,.1f} MB" if n >= MB else f"{n:,} bytes"


def _too_large(path, shown, size: int, limit: int, what: str, hint: str) -> FileRefused:
    return FileRefused(_shown(path, shown),
                       f"the {what} is {size_text(size)}, more than the limit of "
                       f"{size_text(limit)}{hint}")


def _os_error(path, shown, exc: OSError, what: str) -> FileRefused:
    if isinstance(exc, FileNotFoundError):
        return FileRefused(_shown(path, shown), f"no such file (the {what})")
    if isinstance(exc, IsADirectoryError):
        return FileRefused(_shown(path, shown),
                           f"is a folder, not a regular file: give the {what} itself")
    return FileRefused(_shown(path, shown),
                       f"cannot read the {what}: {exc.strerror or exc}")


def regular_stat(path: str | os.PathLike, *, what: str = "file",
                 shown: str | None = None) -> os.stat_result:
    """``os.stat(path)`` (links followed) when it is a regular file; else :class:`FileRefused`.

    Examples
    --------
    >>> regular_stat("/dev/null", what="data file")  # doctest: +SKIP
    Traceback (most recent call last):
    verify.safe_open.FileRefused: /dev/null: is a character device, not a regular file: ...
    """
    try:
        st = os.stat(path)
    except (OSError, ValueError) as exc:  # ValueError: a NUL byte in the path
        if isinstance(exc, ValueError):
            raise FileRefused(_shown(path, shown), f"the path of the {what} holds a NUL "
                              "character") from None
        raise _os_error(path, shown, exc, what) from None
    if not stat.S_ISREG(st.st_mode):
        raise _not_regular(path, shown, st.st_mode, what)
    return st


def open_regular(path: str | os.PathLike, *, what: str = "file", shown: str | None = None,
                 max_bytes: int | None = None, limit_hint: str = "") -> BinaryIO:
    """Open a regular file for reading in binary mode, or raise :class:`FileRefused`.

    Parameters
    ----------
    path
        The file; a link is followed.
    what
        What the file is, for messages ("data file", "spec", "report").
    shown
        The path as the user should see it (default ``str(path)``).
    max_bytes
        Refuse a larger file (by its size before opening).
    limit_hint
        Appended to the too-large message: how to raise the limit.
    """
    st = regular_stat(path, what=what, shown=shown)
    if max_bytes is not None and st.st_size > max_bytes:
        raise _too_large(path, shown, st.st_size, max_bytes, what, limit_hint)
    flags = os.O_RDONLY | getattr(os, "O_BINARY", 0) | getattr(os, "O_NONBLOCK", 0)
    flags |= getattr(os, "O_NOCTTY", 0)
    try:
        fd = os.open(path, flags)
    except OSError as exc:
        raise _os_error(path, shown, exc, what) from None
    try:
        st2 = os.fstat(fd)
        if not stat.S_ISREG(st2.st_mode):  # swapped between stat and open
            raise _not_regular(path, shown, st2.st_mode, what)
        if max_bytes is not None and st2.st_size > max_bytes:
            raise _too_large(path, shown, st2.st_size, max_bytes, what, limit_hint)
        return os.fdopen(fd, "rb")
    except BaseException:
        os.close(fd)
        raise


def read_regular(path: str | os.PathLike, *, what: str = "file", shown: str | None = None,
                 max_bytes: int | None = None, limit_hint: str = "") -> bytes:
    """All bytes of a regular file, at most ``max_bytes`` (see :func:`open_regular`)."""
    with open_regular(path, what=what, shown=shown, max_bytes=max_bytes,
                      limit_hint=limit_hint) as f:
        try:
            if max_bytes is None:
                return f.read()
            data = f.read(max_bytes + 1)
        except OSError as exc:
            raise _os_error(path, shown, exc, what) from None
    if len(data) > max_bytes:  # the file grew while it was read
        raise _too_large(path, shown, len(data), max_bytes, what, limit_hint)
    return data


def sha256_regular(path: str | os.PathLike, *, what: str = "file", shown: str | None = None,
                   max_bytes: int | None = None, limit_hint: str = "") -> str:
    """The sha256 of a regular file, read in chunks (see :func:`open_regular`)."""
    import hashlib

    h = hashlib.sha256()
    n = 0
    with open_regular(path, what=what, shown=shown, max_bytes=max_bytes,
                      limit_hint=limit_hint) as f:
        try:
            for chunk in iter(lambda: f.read(1 << 20), b""):
                n += len(chunk)
                if max_bytes is not None and n > max_bytes:
                    raise _too_large(path, shown, n, max_bytes, what, limit_hint)
                h.update(chunk)
        except OSError as exc:
            raise _os_error(path, shown, exc, what) from None
    return h.hexdigest()


def max_data_bytes(max_data_mb: float | None) -> int:
    """The data size limit in bytes for a ``--max-data-mb`` value (None: the default)."""
    mb = DEFAULT_MAX_DATA_MB if max_data_mb is None else float(max_data_mb)
    return int(mb * MB)


DATA_LIMIT_HINT = " (raise it with --max-data-mb, or split the data)"


def check_xlsx_archive(raw: bytes, shown: str, *, max_bytes: int, what: str = "data file",
                       limit_hint: str = DATA_LIMIT_HINT) -> None:
    """Refuse an .xlsx whose members would expand beyond reason, before parsing any XML.

    Reads only the zip central directory: the sum of the members' uncompressed sizes must stay
    within ``XLSX_EXPANSION * max_bytes``, and no member of at least ``XLSX_RATIO_FLOOR`` bytes
    may expand more than ``XLSX_MAX_RATIO`` times. (Python's zip reader never returns more bytes
    than a member's recorded size, so these recorded sizes bound what a parser can see.)
    A file that is not a zip archive is left to the workbook reader to report.
    """
    import io
    import zipfile

    try:
        with zipfile.ZipFile(io.BytesIO(raw)) as z:
            infos = z.infolist()
    except (zipfile.BadZipFile, OSError, ValueError, EOFError):
        return
    total = 0
    for info in infos:
        total += info.file_size
        if info.file_size >= XLSX_RATIO_FLOOR:
            ratio = info.file_size / max(info.compress_size, 1)
            if ratio > XLSX_MAX_RATIO:
                raise FileRefused(shown, f"the workbook part {info.filename} expands "
                                  f"{ratio:,.0f} times ({info.compress_size:,} bytes to "
                                  f"{info.file_size:,}); more than {XLSX_MAX_RATIO:g} times is "
                                  "refused as a decompression bomb: save the data again from "
                                  "a spreadsheet program, or as CSV")
    limit = XLSX_EXPANSION * max_bytes
    if total > limit:
        raise FileRefused(shown, f"the workbook expands to {size_text(total)} of XML, more "
                          f"than {XLSX_EXPANSION} times the {what} limit of "
                          f"{size_text(max_bytes)}{limit_hint}")
