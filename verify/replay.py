"""``verify replay``: re-run a recorded result and compare every decision and number.

A report (the JSON result, or the workbook, which carries the same record on a hidden sheet and
the spec text on its spec sheet) names the spec text, its sha256 and each data file's sha256.
Replay checks those hashes, re-runs the recorded spec text on the data files as they are now,
and compares every decision and number at a relative tolerance of 1e-12.
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field
from pathlib import Path

from .errors import ReportError

REL_TOL = 1e-12
# Keys that describe the run, not its result: they are expected to differ.
_RUN_KEYS = {"run", "tool", "versions", "workbook", "monitoring", "ledger", "snapshots"}
_FILE_RUN_KEYS = {"resolved_path", "snapshot"}


@dataclass
class ReplayResult:
    differences: list[str] = field(default_factory=list)
    integrity: list[str] = field(default_factory=list)  # hash mismatches, missing files
    notes: list[str] = field(default_factory=list)  # version differences and the like
    sources: list[str] = field(default_factory=list)  # where each data file was read from

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


WEAKER_CHECK = (
    "replayed from the workbook's own Measurements sheet, not from the data file: a weaker "
    "check than the original bytes. It shows that the recorded decisions and numbers follow "
    "from the values and exclusions listed on that sheet; it cannot show that those are the "
    "values of the data file (the recorded sha256 of the data is not checked)")


def _snapshot_folders(doc: dict, f: dict, report: Path) -> list[Path]:
    """Where a data file's snapshot may be: as recorded, else beside the report."""
    out = []
    if isinstance(f.get("snapshot"), str):
        out.append(Path(f["snapshot"]).parent)
    snaps = doc.get("snapshots")
    if isinstance(snaps, dict) and isinstance(snaps.get("folder"), str):
        out.append(Path(snaps["folder"]))
    from .snapshots import SNAPSHOT_DIR

    here = report.resolve().parent
    out += [here / SNAPSHOT_DIR, here.parent / SNAPSHOT_DIR]  # verify run; nightly history
    return list(dict.fromkeys(out))


def _from_snapshot(doc: dict, f: dict, report: Path, res: ReplayResult):
    """(bytes, where) of the data file's snapshot, or None."""
    from .snapshots import SnapshotError, load_bytes, snapshot_path

    for folder in _snapshot_folders(doc, f, report):
        try:
            data = load_bytes(folder, f["sha256"])
        except SnapshotError as err:
            res.notes.append(str(err))
            continue
        if data is not None:
            return data, snapshot_path(folder, f["sha256"])
    return None


def replay(report: str | Path, *, from_sheet: bool = False) -> ReplayResult:
    """Re-run a recorded result; see the module docstring.

    Each data file is taken from its live path when its sha256 matches the record, else from
    the run's snapshot (``<out>/snapshots/<sha256>.gz``) when one is found; ``sources`` says
    which. Only with neither is the file reported missing or changed. With ``from_sheet`` the
    values come from the workbook's own Measurements sheet (:data:`WEAKER_CHECK`).
    """
    import tempfile

    from .audit import library_versions, sha256_file
    from .report.json_result import result_dict

    path = Path(report)
    if from_sheet:
        return _replay_from_sheet(path)
    doc, spec_text = read_record(path)
    res = ReplayResult()
    recorded_sha = doc["spec"]["sha256"]
    if _sha(spec_text) != recorded_sha:
        res.integrity.append(
            f"spec text in {path.name} does not match its recorded sha256 {recorded_sha} "
            f"(now {_sha(spec_text)}): the spec text was edited after the run")
    substitutes: dict[str, bytes] = {}
    missing = False
    for f in doc.get("data_files", []):
        p = Path(f.get("resolved_path") or f["path"])
        now = sha256_file(p) if p.is_file() else None
        if now == f["sha256"]:
            res.sources.append(f"{f['path']}: the live file (its sha256 matches the record)")
            continue
        snap = _from_snapshot(doc, f, path, res)
        state = "is missing" if now is None else f"has changed (sha256 now {now})"
        if snap is not None:
            substitutes[str(p)] = snap[0]
            res.sources.append(f"{f['path']}: the snapshot {snap[1]} (the live file {state})")
            continue
        if now is None:
            missing = True
            res.integrity.append(f"data file missing: {f['path']} (recorded sha256 "
                                 f"{f['sha256']}), and no snapshot of it was found")
        else:
            res.integrity.append(
                f"data file changed: {f['path']} (recorded sha256 {f['sha256']}, now {now}), "
                "and no snapshot of it was found")
    _version_notes(doc, res, library_versions())
    spec_path = Path(doc["spec"].get("resolved_path") or doc["spec"]["path"])
    if missing:
        return res
    with tempfile.TemporaryDirectory(prefix="verify-replay-") as tmp:
        files = {}
        for i, (live, data) in enumerate(substitutes.items()):
            # the snapshot's bytes under the live file's name (its suffix says how to read it)
            target = Path(tmp) / str(i) / Path(live).name
            target.parent.mkdir()
            target.write_bytes(data)
            files[live] = target
        ev = _evaluate(spec_path, spec_text, bool(doc.get("final")), files, "verify replay")
    now_doc = result_dict(ev)
    now_doc["spec"]["path"] = doc["spec"]["path"]
    recorded = {k: v for k, v in doc.items() if k not in _RUN_KEYS}
    _compare(recorded, {k: v for k, v in now_doc.items() if k not in _RUN_KEYS}, "",
             res.differences)
    return res


def _version_notes(doc: dict, res: ReplayResult, versions: dict) -> None:
    from . import __version__

    for k, v in doc.get("versions", {}).items():
        if versions.get(k) != v:
            res.notes.append(f"{k} was {v} when recorded, is {versions.get(k)} now")
    if doc.get("tool", {}).get("version") != __version__:
        res.notes.append(f"verify was {doc.get('tool', {}).get('version')} when recorded, "
                         f"is {__version__} now")


def _evaluate(spec_path: Path, spec_text: str, final: bool, files: dict, command: str,
              measurements=None):
    """Evaluate the recorded spec text, reading ``files`` (live path -> copy) in place of the
    live data files, or on the given ``measurements``."""
    from dataclasses import replace

    from .audit import run_info, utc_now
    from .data import load_measurements
    from .evaluate import evaluate
    from .spec import load_spec

    started = utc_now()
    spec = load_spec(spec_path, text=spec_text)
    copy = files.get(str(spec.data.file))
    if copy is not None:
        spec = replace(spec, data=replace(spec.data, file=copy))
    if measurements is None:
        measurements = load_measurements(spec)
        if copy is not None:  # report the data file as the spec names it, not the copy
            measurements = replace(measurements, files=tuple(
                replace(f, resolved_path=str(spec_path.parent / f.path)) if i == 0 else f
                for i, f in enumerate(measurements.files)))
    run = run_info(spec, measurements, command=command, started=started)
    return evaluate(spec, measurements, final=final, run=run)


def _replay_from_sheet(path: Path) -> ReplayResult:
    """Replay on the values of the workbook's Measurements sheet (the weaker check)."""
    import zipfile

    from openpyxl import load_workbook

    from .model import DataFileInfo, Measurements
    from .report.json_result import result_dict
    from .report.measurements_sheet import read_measurements

    workbook = path
    if path.suffix.lower() == ".json":
        doc, _ = read_record(path)
        wb_path = (doc.get("workbook") or {}).get("path")
        if not isinstance(wb_path, str):
            raise ReportError(f"{path}: the result names no workbook; give the .xlsx")
        workbook = Path(wb_path)
        if not workbook.is_absolute() and not workbook.exists():
            workbook = path.parent / workbook.name
    if workbook.suffix.lower() != ".xlsx":
        raise ReportError(f"{path}: --from-sheet replays a workbook (.xlsx)")
    doc, spec_text = read_record(workbook)
    try:
        wb = load_workbook(workbook, read_only=True)
        try:
            table = read_measurements(wb)
        finally:
            wb.close()
    except (KeyError, ValueError, TypeError, OSError, zipfile.BadZipFile) as err:
        raise ReportError(f"{workbook}: its Measurements sheet cannot be read ({err})") from err
    res = ReplayResult()
    res.sources.append(f"the Measurements sheet of {workbook}")
    res.notes.append(WEAKER_CHECK)
    if _sha(spec_text) != doc["spec"]["sha256"]:
        res.integrity.append(f"spec text in {workbook.name} does not match its recorded sha256")
    names = {fld for fld in DataFileInfo.__dataclass_fields__}
    files = []
    for f in doc["data_files"]:
        kw = {k: v for k, v in f.items() if k in names}
        kw["exclusions"] = tuple((e["reason"], e["count"]) for e in f.get("exclusions", []))
        files.append(DataFileInfo(**kw))
    m = Measurements(table=table, files=tuple(files),
                     unassigned_lots=tuple(doc.get("unassigned_lots", [])),
                     notes=tuple(doc.get("data_notes", [])))
    from .audit import library_versions

    _version_notes(doc, res, library_versions())
    spec_path = Path(doc["spec"].get("resolved_path") or doc["spec"]["path"])
    ev = _evaluate(spec_path, spec_text, bool(doc.get("final")), {}, "verify replay --from-sheet",
                   measurements=m)
    now_doc = result_dict(ev)
    now_doc["spec"]["path"] = doc["spec"]["path"]
    recorded = {k: v for k, v in doc.items() if k not in _RUN_KEYS}
    _compare(recorded, {k: v for k, v in now_doc.items() if k not in _RUN_KEYS}, "",
             res.differences)
    return res
