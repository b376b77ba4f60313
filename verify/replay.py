"""``verify replay``: re-run a recorded result and compare every decision and number.

A report (the JSON result, or the workbook, which carries the same record on a hidden sheet and
the spec text on its spec sheet) names the spec text, its sha256 and each data file's sha256.
Replay checks those hashes, re-runs the recorded spec text on the data files as they are now,
and compares every decision and number at a relative tolerance of 1e-12.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import math
from dataclasses import dataclass, field
from pathlib import Path

from .errors import ReportError

REL_TOL = 1e-12
# Keys that describe the run, not its result: they are expected to differ.
_RUN_KEYS = {"run", "tool", "versions", "workbook", "monitoring"}
_FILE_RUN_KEYS = {"resolved_path"}


@dataclass
class ReplayResult:
    differences: list[str] = field(default_factory=list)
    integrity: list[str] = field(default_factory=list)  # hash mismatches, missing files
    notes: list[str] = field(default_factory=list)  # version differences and the like

    @property
    def reproduced(self) -> bool:
        return not self.differences and not self.integrity


def _sha(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def read_record(path: Path) -> tuple[dict, str]:
    """The recorded result and the spec text as found in the report."""
    if not path.exists():
        raise ReportError(f"{path}: no such report file; give the .json or .xlsx that verify wrote")
    suffix = path.suffix.lower()
    if suffix == ".json":
        try:
            doc = json.loads(path.read_text(encoding="utf-8"))
        except (UnicodeDecodeError, json.JSONDecodeError) as err:
            raise ReportError(f"{path}: not a verify JSON result ({err})") from err
        if not isinstance(doc, dict) or doc.get("format") != "verify-result/1":
            raise ReportError(f"{path}: not a verify result (format is not verify-result/1)")
        _check_record(doc, path)
        return doc, doc["spec"]["text"]
    if suffix == ".xlsx":
        import zipfile

        from openpyxl import load_workbook

        from .report.workbook import read_record, read_spec_text

        try:
            wb = load_workbook(path, read_only=True)
            try:
                record = read_record(wb)
                spec_text = read_spec_text(wb)
            finally:
                wb.close()
        except (KeyError, ValueError, TypeError, OSError, zipfile.BadZipFile) as err:
            raise ReportError(
                f"{path}: not a verify workbook, or its record is damaged ({err})") from err
        if record is None:
            raise ReportError(f"{path}: this workbook carries no verify record; replay its .json")
        try:
            doc = json.loads(record)
        except json.JSONDecodeError as err:
            raise ReportError(f"{path}: the workbook's record is damaged ({err})") from err
        if not isinstance(doc, dict):
            raise ReportError(f"{path}: the workbook's record is damaged (not an object)")
        _check_record(doc, path)
        return doc, spec_text
    raise ReportError(f"{path}: replay reads a .json or .xlsx report, not '{suffix}'")


def _check_record(doc: dict, path: Path) -> None:
    """The keys replay needs, with their types; a damaged record is a clear error."""
    spec = doc.get("spec")
    problems = []
    if not isinstance(spec, dict):
        problems.append("spec")
    else:
        for key in ("text", "sha256", "path"):
            if not isinstance(spec.get(key), str):
                problems.append(f"spec.{key}")
    files = doc.get("data_files")
    if not isinstance(files, list) or not all(
        isinstance(f, dict) and isinstance(f.get("path"), str)
        and isinstance(f.get("sha256"), str) for f in files
    ):
        problems.append("data_files")
    if problems:
        raise ReportError(f"{path}: not a complete verify result: missing or invalid "
                          f"{', '.join(problems)}")


def _compare(a, b, where: str, out: list[str]) -> None:
    if isinstance(a, dict) and isinstance(b, dict):
        for k in sorted(set(a) | set(b)):
            if k in _RUN_KEYS and where == "":
                continue
            if k in _FILE_RUN_KEYS:
                continue
            if k not in a:
                out.append(f"{where}.{k}: absent in the record, now {b[k]!r}")
            elif k not in b:
                out.append(f"{where}.{k}: recorded {a[k]!r}, now absent")
            else:
                _compare(a[k], b[k], f"{where}.{k}" if where else k, out)
        return
    if isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            out.append(f"{where}: recorded {len(a)} entries, now {len(b)}")
        for i, (x, y) in enumerate(zip(a, b, strict=False)):
            label = x.get("name") or x.get("check") if isinstance(x, dict) else None
            _compare(x, y, f"{where}[{label or i}]", out)
        return
    if isinstance(a, bool) or isinstance(b, bool) or not (
        isinstance(a, (int, float)) and isinstance(b, (int, float))
    ):
        if a != b:
            out.append(f"{where}: recorded {a!r}, now {b!r}")
        return
    if not math.isclose(float(a), float(b), rel_tol=REL_TOL, abs_tol=0.0):
        out.append(f"{where}: recorded {a!r}, now {b!r}")


def replay(report: str | Path) -> ReplayResult:
    """Re-run a recorded result; see the module docstring."""
    from .audit import library_versions, sha256_file
    from .report.json_result import result_dict
    from .runner import prepare

    path = Path(report)
    doc, spec_text = read_record(path)
    res = ReplayResult()
    recorded_sha = doc["spec"]["sha256"]
    if _sha(spec_text) != recorded_sha:
        res.integrity.append(
            f"spec text in {path.name} does not match its recorded sha256 {recorded_sha} "
            f"(now {_sha(spec_text)}): the spec text was edited after the run")
    snapshots = []
    for f in doc.get("data_files", []):
        if isinstance(f.get("source"), dict):  # a SQL source: its rows are in the snapshot
            snapshots.append(_sql_snapshot(path, f, res))
            continue
        p = Path(f.get("resolved_path") or f["path"])
        if not p.exists():
            res.integrity.append(f"data file missing: {f['path']} (recorded sha256 {f['sha256']})")
            continue
        now = sha256_file(p)
        if now != f["sha256"]:
            res.integrity.append(
                f"data file changed: {f['path']} (recorded sha256 {f['sha256']}, now {now})")
    versions = library_versions()
    for k, v in doc.get("versions", {}).items():
        if versions.get(k) != v:
            res.notes.append(f"{k} was {v} when recorded, is {versions.get(k)} now")
    from . import __version__

    if doc.get("tool", {}).get("version") != __version__:
        res.notes.append(f"verify was {doc.get('tool', {}).get('version')} when recorded, "
                         f"is {__version__} now")
    spec_path = Path(doc["spec"].get("resolved_path") or doc["spec"]["path"])
    if any(m.startswith(("data file missing", "snapshot")) for m in res.integrity):
        return res
    with contextlib.ExitStack() as stack:
        from .sources.snapshot import use

        for raw, origin in snapshots:
            stack.enter_context(use(recorded_sha, raw, origin))
        ev = prepare(spec_path, final=bool(doc.get("final")), command="verify replay",
                     text=spec_text)
    now = result_dict(ev)
    now["spec"]["path"] = doc["spec"]["path"]
    recorded = {k: v for k, v in doc.items() if k not in _RUN_KEYS}
    _compare(recorded, {k: v for k, v in now.items() if k not in _RUN_KEYS}, "",
             res.differences)
    return res


def _sql_snapshot(report: Path, f: dict, res: ReplayResult):
    """The rows a SQL source returned at the run, from ``<report stem>.rows.csv`` beside the
    report, checked against the recorded sha256: a replay needs no database."""
    from .sources.snapshot import snapshot_path

    snap = snapshot_path(report)
    try:
        raw = snap.read_bytes()
    except OSError:
        res.integrity.append(f"snapshot of the SQL rows missing: {snap} (recorded sha256 "
                             f"{f['sha256']}); it is written beside the JSON result")
        return b"", {}
    now = hashlib.sha256(raw).hexdigest()
    if now != f["sha256"]:
        res.integrity.append(f"snapshot of the SQL rows changed: {snap} (recorded sha256 "
                             f"{f['sha256']}, now {now})")
    return raw, f["source"]
