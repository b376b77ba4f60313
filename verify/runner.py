"""One run of one spec: load, evaluate, write the workbook and the JSON result atomically.

Every output is written to a temporary file in the destination folder and renamed over the
target (``os.replace`` is atomic on one file system), so a failed or killed run never leaves half
a file and never destroys the previous result.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from dataclasses import dataclass
from pathlib import Path

from .model import Evaluation


@dataclass(frozen=True)
class Outputs:
    workbook: Path
    result: Path
    workbook_sha256: str


def prepare(spec_path: str | Path, *, final: bool = False, command: str | None = None,
            text: str | None = None, max_data_mb: float | None = None,
            data_root: str | Path | None = None) -> Evaluation:
    """Load the spec and its data and evaluate them; raises VerifyError on bad input.

    ``max_data_mb`` limits the data file's size (default
    :data:`verify.safe_open.DEFAULT_MAX_DATA_MB`); with ``data_root``, a data file that
    resolves outside that folder is refused before it is opened.
    """
    from .audit import run_info, utc_now
    from .data import load_measurements
    from .evaluate import evaluate
    from .safe_open import max_data_bytes
    from .spec import load_spec

    started = utc_now()
    spec = load_spec(spec_path, text=text)
    # a database server is no file under the data root; a sqlite file is (spec.data.file)
    server = spec.data.source == "sql" and not (spec.data.url or "").lower().startswith(
        "sqlite:///")
    if data_root is not None and not server:
        check_data_root(spec.data.file, data_root, spec.path)
    measurements = load_measurements(spec, max_bytes=max_data_bytes(max_data_mb))
    run = run_info(spec, measurements, command=command, started=started)
    return evaluate(spec, measurements, final=final, run=run)


def keep_snapshots(ev: Evaluation, folder: Path | None) -> Evaluation:
    """Keep a snapshot of each data file the evaluation read in ``folder`` (None: opted out).

    Returns the evaluation with its :class:`~verify.model.SnapshotRecord`, which the audit
    trail and the JSON result state.
    """
    from dataclasses import replace

    from .model import SnapshotRecord
    from .snapshots import store_file

    if folder is None:
        return replace(ev, snapshots=SnapshotRecord(
            False, "not kept: --no-snapshot was given; replay needs the data files unchanged"))
    kept, missed = [], []
    for f in ev.measurements.files:
        path = store_file(folder, f.resolved_path, f.sha256)
        if path is None:
            missed.append(f.path)
        else:
            kept.append((f.sha256, str(path)))
    if missed:
        note = (f"not kept for {', '.join(missed)}: the file changed while the run read it; "
                "replay needs the data file as it was")
    else:
        note = (f"kept in {folder} (gzip, named by the sha256 of the data): replay uses them "
                "when a data file has changed or gone")
    return replace(ev, snapshots=SnapshotRecord(not missed, note, str(folder), tuple(kept)))


def check_data_root(data_file: str | Path, root: str | Path, spec_path: str | Path) -> None:
    """Refuse a data file that resolves (links followed) outside ``root``; nothing is opened."""
    from .errors import DataError, DataIssue

    resolved = Path(data_file).resolve()
    root = Path(root).resolve()
    if not resolved.is_relative_to(root):
        raise DataError([DataIssue(str(data_file), f"resolves to {resolved}, outside --data-root "
                                   f"{root}: refused (move the data under the data root or "
                                   f"change --data-root; spec {spec_path})")])


@contextlib.contextmanager
def atomic_path(target: Path):
    """Yield a temporary path beside ``target``; rename it over ``target`` on success only."""
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=target.parent)
    os.close(fd)
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)  # mkstemp creates 0600; a report is as readable as any file
    tmp_path = Path(tmp)
    try:
        yield tmp_path
        with open(tmp_path, "rb") as f:
            os.fsync(f.fileno())
        os.replace(tmp_path, target)
    finally:
        with contextlib.suppress(FileNotFoundError):
            tmp_path.unlink()


def write_text_atomic(target: Path, text: str) -> None:
    with atomic_path(target) as tmp:
        tmp.write_text(text, encoding="utf-8")


@dataclass
class Staged:
    """Outputs written to temporary files beside their targets, not yet renamed."""

    workbook: Path
    result: Path
    tmp_workbook: Path
    tmp_result: Path
    workbook_sha256: str
    # (temporary file, target): a SQL source's rows beside the result (its snapshot)
    extras: tuple[tuple[Path, Path], ...] = ()

    def commit(self) -> Outputs:
        return commit_all([self])[0]

    def discard(self) -> None:
        for p in (self.tmp_workbook, self.tmp_result, *(t for t, _ in self.extras)):
            with contextlib.suppress(FileNotFoundError):
                p.unlink()

    def pairs(self) -> list[tuple[Path, Path]]:
        """(temporary file, target) in the order they are renamed: a SQL source's snapshot
        first, so that a result never names a snapshot that is not there."""
        return [*self.extras, (self.tmp_workbook, self.workbook), (self.tmp_result, self.result)]


class CommitError(OSError):
    """Renaming the outputs into place failed; everything of this run was undone.

    ``str()`` says which rename failed, why, and what was undone.
    """


def check_target(target: Path) -> None:
    """A report may replace a regular file, never a folder, a device or a pipe."""
    from .errors import UsageError
    from .safe_open import kind_of

    try:
        st = os.stat(target)
    except FileNotFoundError:
        return
    except OSError as exc:
        raise UsageError(f"{target}: cannot write the report there ({exc.strerror})") from None
    import stat as _stat

    if not _stat.S_ISREG(st.st_mode):
        raise UsageError(f"{target} is {kind_of(st.st_mode)}: a report cannot be written "
                         "there; move it away or choose another --out (nothing was written)")


def commit_all(staged: list[Staged]) -> list[Outputs]:
    """Rename every staged output into place, or none.

    Every target is checked first (a folder where a report goes stops the commit before any
    rename). Each previous version of a target is kept aside (a hard link, else a copy) until
    all renames succeeded; when one fails, every file this call renamed into place is removed,
    the previous versions are put back, all temporary files are removed, and a
    :class:`CommitError` says what happened.
    """
    pairs = [pair for st in staged for pair in st.pairs()]
    try:
        for _, target in pairs:
            check_target(target)
    except BaseException:
        for st in staged:
            st.discard()
        raise
    done: list[tuple[Path, Path | None]] = []  # (target, backup of its previous version)
    failed: tuple[Path, BaseException] | None = None
    for tmp, target in pairs:
        backup = None
        try:
            if target.exists():
                backup = _keep_aside(target)
            os.replace(tmp, target)
        except BaseException as exc:  # includes KeyboardInterrupt and SIGTERM's SystemExit
            if backup is not None:
                with contextlib.suppress(OSError):
                    backup.unlink()
            failed = (target, exc)
            break
        done.append((target, backup))
    if failed is None:
        for _, backup in done:
            if backup is not None:
                with contextlib.suppress(OSError):
                    backup.unlink()
        return [Outputs(st.workbook, st.result, st.workbook_sha256) for st in staged]
    target, exc = failed
    problems = _undo(done)
    for st in staged:
        st.discard()
    if not isinstance(exc, Exception):
        raise exc
    why = getattr(exc, "strerror", None) or str(exc)
    if not done:
        told = "no file had been renamed yet"
    else:
        told = f"the {len(done)} file(s) already renamed in this run were removed"
        if any(b is not None for _, b in done):
            told += " and the previous versions put back"
    end = ("could not undo: " + "; ".join(problems)) if problems else "nothing of this run remains"
    raise CommitError(f"could not rename the new {target.name} into place at {target} ({why}); "
                      f"{told}; the temporary files were removed; {end}") from exc


def _keep_aside(target: Path) -> Path:
    """A hidden copy of ``target``'s current version beside it (a hard link when possible)."""
    import shutil

    backup = _temp_beside(target, suffix=".keep.part")
    backup.unlink()
    try:
        os.link(target, backup)
    except OSError:
        shutil.copy2(target, backup)
    return backup


def _undo(done: list[tuple[Path, Path | None]]) -> list[str]:
    """Put back what :func:`commit_all` renamed; the problems met (none, normally)."""
    problems = []
    for target, backup in reversed(done):
        try:
            if backup is not None:
                os.replace(backup, target)
            else:
                target.unlink()
        except OSError as err:
            problems.append(f"{target} ({err.strerror or err})")
    return problems


def _temp_beside(target: Path, suffix: str = ".part") -> Path:
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=suffix, dir=target.parent)
    os.close(fd)
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)
    return Path(tmp)


def stage_outputs(ev: Evaluation, workbook: Path, result: Path, *,
                  detail: str = "auto", sync_result: bool = True) -> Staged:
    """Write the workbook and the JSON result (which records the workbook's sha256) to
    temporary files; :meth:`Staged.commit` renames them into place.

    ``sync_result=False`` leaves the temporary result unsynced, for a caller that writes it
    again (and syncs it) before the commit: the nightly run adds the ledger's anchor.
    """
    from .audit import sha256_file
    from .report.json_result import result_text
    from .report.json_text import with_key
    from .report.workbook import write_workbook

    tmp_wb = _temp_beside(workbook)
    tmp_res = None
    extras: list[tuple[Path, Path]] = []
    try:
        extras = _stage_snapshots(ev, result)
        # the document is built and written once: the workbook keeps it as its record, and the
        # result file is the same text with the workbook's path and sha256 added at the end
        record = result_text(ev)
        # the workbook's zip and document times come from the run's start, so reruns under
        # SOURCE_DATE_EPOCH are byte-identical
        write_workbook(ev, tmp_wb, record_json=record, detail=detail)
        _fsync(tmp_wb)
        digest = sha256_file(tmp_wb)
        tmp_res = _temp_beside(result)
        text = with_key(record, "workbook", {"path": str(workbook), "sha256": digest})
        tmp_res.write_text(text, encoding="utf-8")
        if sync_result:
            _fsync(tmp_res)
    except BaseException:
        for p in (tmp_wb, tmp_res, *(t for t, _ in extras)):
            if p is not None:
                with contextlib.suppress(FileNotFoundError):
                    p.unlink()
        raise
    return Staged(workbook, result, tmp_wb, tmp_res, digest, tuple(extras))


def _stage_snapshots(ev: Evaluation, result: Path) -> list[tuple[Path, Path]]:
    """The fetched rows of each SQL source, staged as ``<result stem>.rows.csv``."""
    from .sources.snapshot import fetched_rows, snapshot_path

    out = []
    for f in ev.measurements.files:
        if f.origin is None:
            continue
        raw = fetched_rows(f.sha256)
        if raw is None:  # pragma: no cover - the rows are held from the fetch to the outputs
            raise RuntimeError("the fetched SQL rows are no longer held for the snapshot")
        tmp = _temp_beside(snapshot_path(result))
        out.append((tmp, snapshot_path(result)))
        tmp.write_bytes(raw)
        _fsync(tmp)
    return out


def _fsync(path: Path) -> None:
    with open(path, "rb") as f:
        os.fsync(f.fileno())


def write_outputs(ev: Evaluation, workbook: Path, result: Path) -> Outputs:
    """Write the workbook and the JSON result atomically (each renamed into place)."""
    return stage_outputs(ev, workbook, result).commit()
