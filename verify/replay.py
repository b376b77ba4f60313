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


MAX_DEPTH = 64  # a result nests about six levels deep
MAX_DATA_FILES = 1000
_HEX64 = frozenset("0123456789abcdef")


def _load_json(raw: bytes, path: Path, what: str) -> dict:
    try:
        doc = json.loads(raw.decode("utf-8"))
    except UnicodeDecodeError as err:
        raise ReportError(f"{path}: {what} is not UTF-8 text ({err.reason} at byte "
                          f"{err.start}): give the .json or .xlsx that verify wrote") from None
    except json.JSONDecodeError as err:
        raise ReportError(f"{path}: {what} is not valid JSON ({err.msg}, line {err.lineno}, "
                          f"column {err.colno}): give the .json or .xlsx that verify wrote"
                          ) from None
    except RecursionError:
        raise ReportError(f"{path}: {what} is nested too deeply to be a verify result (a "
                          f"result nests a few levels; more than {MAX_DEPTH} is refused)"
                          ) from None
    if not isinstance(doc, dict):
        raise ReportError(f"{path}: {what} is JSON but not a verify result (its top level is "
                          f"{_kind(doc)}, not an object)")
    return doc


def read_record(path: Path) -> tuple[dict, str]:
    """The recorded result and the spec text as found in the report.

    The report is read only as a regular file within a size limit; its structure is
    validated (:func:`validate_record`) before any of it is used.

    Raises
    ------
    ReportError
        The report cannot be used, with the reason.
    """
    from .safe_open import MAX_REPORT_BYTES, FileRefused, read_regular

    if not path.exists() and not path.is_symlink():
        raise ReportError(f"{path}: no such report file; give the .json or .xlsx that verify wrote")
    suffix = path.suffix.lower()
    if suffix not in (".json", ".xlsx"):
        raise ReportError(f"{path}: replay reads a .json or .xlsx report, not '{suffix}'")
    try:
        raw = read_regular(path, what="report", max_bytes=MAX_REPORT_BYTES,
                           limit_hint=" (no verify result is that large)")
    except FileRefused as exc:
        raise ReportError(str(exc)) from None
    if suffix == ".json":
        doc = _load_json(raw, path, "the file")
        if doc.get("format") != "verify-result/1":
            raise ReportError(f"{path}: not a verify result (format is not verify-result/1)")
        validate_record(doc, path)
        return doc, doc["spec"]["text"]
    record, spec_text = _read_workbook(raw, path)
    doc = _load_json(record.encode("utf-8", "surrogatepass"), path,
                     "the workbook's record")
    validate_record(doc, path)
    return doc, spec_text


def _read_workbook(raw: bytes, path: Path) -> tuple[str, str]:
    """The embedded record and the spec text of a workbook written by verify."""
    import io
    import zipfile

    from openpyxl import load_workbook

    from .report.workbook import read_record, read_spec_text
    from .safe_open import MAX_REPORT_BYTES, FileRefused, check_xlsx_archive

    try:
        check_xlsx_archive(raw, str(path), max_bytes=MAX_REPORT_BYTES, what="report",
                           limit_hint="")
    except FileRefused as exc:
        raise ReportError(str(exc)) from None
    if not zipfile.is_zipfile(io.BytesIO(raw)):
        raise ReportError(f"{path}: not a workbook (.xlsx is a zip archive, and this is not "
                          "one)")
    try:
        wb = load_workbook(io.BytesIO(raw), read_only=True)
        try:
            record = read_record(wb)
            spec_text = read_spec_text(wb) if record is not None else ""
        finally:
            wb.close()
    except Exception as err:  # openpyxl raises many kinds on a damaged package
        raise ReportError(f"{path}: not a verify workbook, or it is damaged "
                          f"({type(err).__name__}: {_cut(str(err))})") from None
    if record is None:
        raise ReportError(f"{path}: this workbook carries no verify record; replay its .json")
    return record, spec_text


def _cut(text: str, limit: int = 120) -> str:
    return text if len(text) <= limit else f"{text[:limit]}… ({len(text):,} characters)"


def _kind(value) -> str:
    if isinstance(value, bool):
        return "true/false"
    if isinstance(value, (int, float)):
        return "a number"
    if isinstance(value, str):
        return "text"
    if isinstance(value, list):
        return "a list"
    if isinstance(value, dict):
        return "an object"
    return "null"


def validate_record(doc: dict, path: Path) -> None:
    """Check every part of a result that replay uses: types, sizes and nesting depth.

    A damaged or forged record is a :class:`ReportError` naming each problem (with its key
    path), never a crash later on.
    """
    problems: list[str] = []

    def want(obj, key: str, where: str, kinds: tuple, words: str, *, optional=False):
        if not isinstance(obj, dict) or key not in obj:
            if not optional:
                problems.append(f"{where} is missing")
            return None
        value = obj[key]
        if optional and value is None:
            return None
        if not isinstance(value, kinds) or isinstance(value, bool) and bool not in kinds:
            problems.append(f"{where} must be {words}, not {_kind(value)}")
            return None
        return value

    _check_depth_and_text(doc, problems)
    spec = want(doc, "spec", "spec", (dict,), "an object")
    if spec is not None:
        want(spec, "text", "spec.text", (str,), "text")
        sha = want(spec, "sha256", "spec.sha256", (str,), "text")
        if sha is not None and not _is_sha256(sha):
            problems.append("spec.sha256 must be 64 lower-case hex digits")
        p = want(spec, "path", "spec.path", (str,), "a path (text)")
        if p == "":
            problems.append("spec.path must not be empty")
        want(spec, "resolved_path", "spec.resolved_path", (str,), "a path (text)",
             optional=True)
    files = want(doc, "data_files", "data_files", (list,), "a list")
    if files is not None:
        if len(files) > MAX_DATA_FILES:
            problems.append(f"data_files lists {len(files):,} files (at most "
                            f"{MAX_DATA_FILES:,})")
        for i, f in enumerate(files[:MAX_DATA_FILES]):
            where = f"data_files[{i}]"
            if not isinstance(f, dict):
                problems.append(f"{where} must be an object, not {_kind(f)}")
                continue
            p = want(f, "path", f"{where}.path", (str,), "a path (text)")
            if p == "":
                problems.append(f"{where}.path must not be empty")
            want(f, "resolved_path", f"{where}.resolved_path", (str,), "a path (text)",
                 optional=True)
            want(f, "source", f"{where}.source", (dict,), "an object", optional=True)
            sha = want(f, "sha256", f"{where}.sha256", (str,), "text")
            if sha is not None and not _is_sha256(sha):
                problems.append(f"{where}.sha256 must be 64 lower-case hex digits")
    versions = want(doc, "versions", "versions", (dict,), "an object of names and versions",
                    optional=True)
    for k, v in (versions or {}).items():
        if not isinstance(v, str) and v is not None:
            problems.append(f"versions.{k} must be text, not {_kind(v)}")
    tool = want(doc, "tool", "tool", (dict,), "an object", optional=True)
    if tool is not None:
        want(tool, "version", "tool.version", (str,), "text", optional=True)
    want(doc, "final", "final", (bool,), "true or false", optional=True)
    want(doc, "characteristics", "characteristics", (list,), "a list", optional=True)
    if problems:
        shown = problems[:10] + ([f"and {len(problems) - 10} more"] if len(problems) > 10
                                 else [])
        raise ReportError(f"{path}: not a complete verify result: " + "; ".join(shown))


def _is_sha256(text: str) -> bool:
    return len(text) == 64 and set(text) <= _HEX64


def _check_depth_and_text(doc, problems: list[str]) -> None:
    """Nesting depth within :data:`MAX_DEPTH`, and no lone surrogate in any text (a JSON
    escape such as "\\ud800" can make one; no file or message could carry it)."""
    stack = [(doc, 1, "")]
    while stack:
        obj, depth, where = stack.pop()
        if depth > MAX_DEPTH:
            problems.append(f"{where or 'the result'} nests more than {MAX_DEPTH} levels deep")
            return
        if isinstance(obj, dict):
            items = obj.items()
        elif isinstance(obj, list):
            items = enumerate(obj)
        else:
            if isinstance(obj, str) and _has_surrogate(obj):
                problems.append(f"{where} holds a lone UTF-16 surrogate (not a character)")
                return
            continue
        for k, v in items:
            if isinstance(k, str) and _has_surrogate(k):
                problems.append(f"a key in {where or 'the result'} holds a lone UTF-16 "
                                "surrogate")
                return
            stack.append((v, depth + 1, f"{where}.{k}" if isinstance(k, str) and where
                          else (k if isinstance(k, str) else f"{where}[{k}]")))


def _has_surrogate(text: str) -> bool:
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        return True
    return False


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


def replay(report: str | Path, *, max_data_mb: float | None = None) -> ReplayResult:
    """Re-run a recorded result; see the module docstring.

    Only the data file the recorded spec text names is read (as a regular file, within the
    data size limit), and only when the report lists it: a report whose ``data_files`` name
    another file is refused, so replay never reads nor prints the hash of a file outside the
    report's own data.
    """
    from .audit import library_versions
    from .errors import SpecError
    from .runner import prepare
    from .safe_open import DATA_LIMIT_HINT, FileRefused, max_data_bytes, sha256_regular
    from .spec import load_spec

    path = Path(report)
    doc, spec_text = read_record(path)
    res = ReplayResult()
    recorded_sha = doc["spec"]["sha256"]
    if _sha(spec_text) != recorded_sha:
        res.integrity.append(
            f"spec text in {path.name} does not match its recorded sha256 {recorded_sha} "
            f"(now {_sha(spec_text)}): the spec text was edited after the run")
    spec_path = Path(doc["spec"].get("resolved_path") or doc["spec"]["path"])
    try:
        spec = load_spec(spec_path, text=spec_text)
    except SpecError as exc:
        raise ReportError(f"{path}: the recorded spec text is not a valid spec:\n"
                          f"{exc.report()}") from None
    listed = {f["path"]: f for f in doc["data_files"]}
    wanted = spec.data.file_text
    if set(listed) != {wanted}:
        names = ", ".join(repr(p) for p in listed) or "none"
        raise ReportError(f"{path}: the report's data_files ({names}) are not the data file "
                          f"its spec text names ({wanted!r}): the record is damaged or was "
                          "edited; replay reads only the data the spec names")
    f = listed[wanted]
    snapshots = []
    if spec.data.source == "sql":  # the rows are in the snapshot beside the report
        snapshots.append(_sql_snapshot(path, f, res, max_data_mb))
        if res.integrity:
            return res
    else:
        data_file = spec.data.file
        limit = max_data_bytes(max_data_mb)
        if not data_file.exists() and not data_file.is_symlink():
            res.integrity.append(f"data file missing: {f['path']} (recorded sha256 "
                                 f"{f['sha256']})")
            return res
        try:
            now = sha256_regular(data_file, what="data file", max_bytes=limit,
                                 limit_hint=DATA_LIMIT_HINT)
        except FileRefused as exc:
            raise ReportError(f"data file {f['path']} of {path}: {exc.reason}") from None
        if now != f["sha256"]:
            res.integrity.append(
                f"data file changed: {f['path']} (recorded sha256 {f['sha256']}, now {now})")
    table = spec.characteristics_table  # read (and hashed) by load_spec, from the spec text
    recorded_table = doc["spec"].get("characteristics_from") or {}
    if table is not None and recorded_table.get("sha256") != table.sha256:
        res.integrity.append(
            f"characteristics table changed: {table.file_text} (recorded sha256 "
            f"{recorded_table.get('sha256')}, now {table.sha256})")
    versions = library_versions()
    for k, v in (doc.get("versions") or {}).items():
        if versions.get(k) != v:
            res.notes.append(f"{k} was {v} when recorded, is {versions.get(k)} now")
    from . import __version__

    recorded_version = (doc.get("tool") or {}).get("version")
    if recorded_version != __version__:
        res.notes.append(f"verify was {recorded_version} when recorded, is {__version__} now")
    with contextlib.ExitStack() as stack:
        from .sources.snapshot import use

        for raw, origin in snapshots:
            stack.enter_context(use(recorded_sha, raw, origin))
        ev = prepare(spec_path, final=bool(doc.get("final")), command="verify replay",
                     text=spec_text, max_data_mb=max_data_mb)
    from .report.json_result import result_dict

    now_doc = result_dict(ev)
    now_doc["spec"]["path"] = doc["spec"]["path"]
    recorded = {k: v for k, v in doc.items() if k not in _RUN_KEYS}
    _compare(recorded, {k: v for k, v in now_doc.items() if k not in _RUN_KEYS}, "",
             res.differences)
    return res


def _sql_snapshot(report: Path, f: dict, res: ReplayResult, max_data_mb: float | None = None):
    """The rows a SQL source returned at the run, from ``<report stem>.rows.csv`` beside the
    report, checked against the recorded sha256: a replay needs no database."""
    from .safe_open import DATA_LIMIT_HINT, FileRefused, max_data_bytes, read_regular
    from .sources.snapshot import snapshot_path

    snap = snapshot_path(report)
    if not snap.exists() and not snap.is_symlink():
        res.integrity.append(f"snapshot of the SQL rows missing: {snap} (recorded sha256 "
                             f"{f['sha256']}); it is written beside the JSON result")
        return b"", {}
    try:
        raw = read_regular(snap, what="snapshot", max_bytes=max_data_bytes(max_data_mb),
                           limit_hint=DATA_LIMIT_HINT)
    except FileRefused as exc:
        raise ReportError(f"snapshot {snap} of {report}: {exc.reason}") from None
    now = hashlib.sha256(raw).hexdigest()
    if now != f["sha256"]:
        res.integrity.append(f"snapshot of the SQL rows changed: {snap} (recorded sha256 "
                             f"{f['sha256']}, now {now})")
    return raw, f.get("source") if isinstance(f.get("source"), dict) else {}
