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
            text: str | None = None) -> Evaluation:
    """Load the spec and its data and evaluate them; raises VerifyError on bad input."""
    from .audit import run_info, utc_now
    from .data import load_measurements
    from .evaluate import evaluate
    from .spec import load_spec

    started = utc_now()
    spec = load_spec(spec_path, text=text)
    measurements = load_measurements(spec)
    run = run_info(spec, measurements, command=command, started=started)
    return evaluate(spec, measurements, final=final, run=run)


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
        for tmp, target in self.extras:  # first: a result never names a missing snapshot
            os.replace(tmp, target)
        os.replace(self.tmp_workbook, self.workbook)
        os.replace(self.tmp_result, self.result)
        return Outputs(self.workbook, self.result, self.workbook_sha256)

    def discard(self) -> None:
        for p in (self.tmp_workbook, self.tmp_result, *(t for t, _ in self.extras)):
            with contextlib.suppress(FileNotFoundError):
                p.unlink()


def _temp_beside(target: Path) -> Path:
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=target.parent)
    os.close(fd)
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)
    return Path(tmp)


def stage_outputs(ev: Evaluation, workbook: Path, result: Path) -> Staged:
    """Write the workbook and the JSON result (which records the workbook's sha256) to
    temporary files; :meth:`Staged.commit` renames them into place."""
    from .audit import sha256_file
    from .report.json_result import dumps, result_dict
    from .report.workbook import write_workbook

    tmp_wb = _temp_beside(workbook)
    tmp_res = None
    extras: list[tuple[Path, Path]] = []
    try:
        extras = _stage_snapshots(ev, result)
        # the workbook's zip and document times come from the run's start, so reruns under
        # SOURCE_DATE_EPOCH are byte-identical
        write_workbook(ev, tmp_wb, record_json=dumps(result_dict(ev)))
        _fsync(tmp_wb)
        digest = sha256_file(tmp_wb)
        tmp_res = _temp_beside(result)
        doc = result_dict(ev, workbook={"path": str(workbook), "sha256": digest})
        tmp_res.write_text(dumps(doc), encoding="utf-8")
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
