"""Content-addressed snapshots of the data a run used, so a result replays after the data grow.

Every ``verify run`` and nightly run keeps a gzip copy of each data file version it read in
``<out>/snapshots/<sha256>.gz``, where ``sha256`` is that of the *uncompressed* bytes. The name
is the content, so a file unchanged since an earlier run is stored once, and a snapshot cannot
be mistaken for another version. Each snapshot is written to a temporary file in the same folder
and renamed into place, so a killed run never leaves half a snapshot under a valid name; a
snapshot is read back only after its sha256 is checked again.

The store takes bytes and their sha256, whatever produced them: a data file today, a SQL result
set serialised to bytes tomorrow. ``gzip`` is written with a zero timestamp and no file name, so
the same bytes always give the same snapshot file.
"""

from __future__ import annotations

import contextlib
import gzip
import hashlib
import os
import tempfile
from pathlib import Path

SNAPSHOT_DIR = "snapshots"
SUFFIX = ".gz"


class SnapshotError(OSError):
    """A snapshot that exists but does not hold the bytes its name promises."""


def snapshot_path(folder: str | os.PathLike, sha256: str) -> Path:
    """Where the snapshot of the bytes with this sha256 lives in ``folder``."""
    return Path(folder) / f"{sha256.lower()}{SUFFIX}"


def store_bytes(folder: str | os.PathLike, data: bytes, sha256: str | None = None) -> Path:
    """Keep ``data`` in ``folder`` under its sha256 (once); return the snapshot's path.

    Parameters
    ----------
    folder
        The snapshot folder (created when missing), usually ``<out>/snapshots``.
    data
        The bytes as read (a data file's content, or a result set serialised to bytes).
    sha256
        Their sha256 when already known; it is checked against ``data``.

    Examples
    --------
    >>> import tempfile
    >>> p = store_bytes(tempfile.mkdtemp(), b"lot,bore\\nA1,12.0\\n")
    >>> load_bytes(p.parent, p.name[:-3])
    b'lot,bore\\nA1,12.0\\n'
    """
    digest = hashlib.sha256(data).hexdigest()
    if sha256 is not None and sha256.lower() != digest:
        raise SnapshotError(f"the bytes to keep have sha256 {digest}, not {sha256}")
    folder = Path(folder)
    target = snapshot_path(folder, digest)
    if target.exists():
        return target  # content-addressed: the same bytes are already kept
    folder.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=folder)
    try:
        with os.fdopen(fd, "wb") as raw, gzip.GzipFile(
            filename="", mode="wb", fileobj=raw, mtime=0, compresslevel=6
        ) as gz:
            gz.write(data)
        with open(tmp, "rb") as f:
            os.fsync(f.fileno())
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o444 & ~umask)  # a snapshot is evidence: read-only
        try:
            # a hard link appears atomically under its final name and never replaces a file:
            # a snapshot already there (another run, same bytes) is left as it is
            os.link(tmp, target)
        except FileExistsError:
            pass
        except OSError:  # a file system without hard links: rename instead
            os.replace(tmp, target)
    finally:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
    return target


def store_file(folder: str | os.PathLike, path: str | os.PathLike, sha256: str) -> Path | None:
    """Keep the file at ``path`` if it still holds the bytes with ``sha256``; else None.

    A file that changed between the run's reading and this copy (a lot appended in the
    meantime) is not kept under a wrong name: the caller records that no snapshot was kept.
    """
    target = snapshot_path(folder, sha256)
    if target.exists():
        return target
    try:
        data = Path(path).read_bytes()
    except OSError:
        return None
    if hashlib.sha256(data).hexdigest() != sha256.lower():
        return None
    return store_bytes(folder, data, sha256)


def load_bytes(folder: str | os.PathLike, sha256: str) -> bytes | None:
    """The bytes kept under ``sha256`` in ``folder``, checked; None when there is none.

    Raises
    ------
    SnapshotError
        The snapshot exists but is damaged or holds other bytes.
    """
    path = snapshot_path(folder, sha256)
    if not path.is_file():
        return None
    try:
        with gzip.open(path, "rb") as f:
            data = f.read()
    except (OSError, EOFError) as err:
        raise SnapshotError(f"{path}: the snapshot is damaged ({err})") from None
    if hashlib.sha256(data).hexdigest() != sha256.lower():
        raise SnapshotError(f"{path}: the snapshot does not hold the bytes with sha256 {sha256}")
    return data
