"""Read a spec's data file into one tidy table of measurements, strictly.

:func:`load_measurements` reads CSV/TSV (delimiter sniffed from the header line among comma,
semicolon and tab; UTF-8 with or without BOM, UTF-16 with BOM, Latin-1 as a reported fallback)
or xlsx (the named sheet, else the first), in the wide layout (one column per characteristic)
or the long layout (``data.characteristic`` + ``data.value``), and returns a
:class:`~verify.model.Measurements` with a row per measurement.

Nothing is guessed: a cell that is neither a number (with the declared decimal separator) nor a
declared missing text, an infinite value, a missing column, a process value that is neither old
nor new, a lot in both lots lists, a duplicate pair key or an exclusion that matches nothing is
a :class:`~verify.errors.DataError` naming file, row and column; all such problems of a file are
reported together. Missing cells are excluded ("not measured") and counted, never read as zero.
Cells in rows that are left out anyway (excluded by the spec, a lot in neither list, a process
value ignored by ``data.ignore_other``) are not checked; their value is kept where it reads as
a number, else NaN.

Source rows are counted as a spreadsheet user counts them: the header is row 1, the first data
row is row 2 (blank rows count but give no measurements).
"""

from __future__ import annotations

import codecs
import csv
import datetime as _dt
import difflib
import hashlib
import io
import math
import os
from collections.abc import Sequence
from dataclasses import dataclass, field
from fnmatch import fnmatchcase
from pathlib import Path

import numpy as np
import pandas as pd

from .errors import DataError, DataIssue
from .model import MEASUREMENT_COLUMNS, DataFileInfo, Measurements
from .safe_open import (
    DATA_LIMIT_HINT,
    FileRefused,
    check_xlsx_archive,
    max_data_bytes,
    read_regular,
)
from .spec_model import Spec

MAX_REPORTED = 20  # cells reported per kind of problem before "and N more"
MAX_ABS_VALUE = 1e100  # larger magnitudes overflow in sums of squares
NOT_MEASURED = "not measured"
NEITHER_LIST = "lot in neither list"
DELIMITERS = (",", ";", "\t")


@dataclass(frozen=True)
class AnalysisValues:
    """The values one check analyses for one characteristic and process.

    ``values`` are in production order; for ``unit_of_analysis: lot`` they are lot means, one
    per lot in order of the lot's first measurement. ``lots`` gives the lot of each value,
    ``unit`` is "part" or "lot", ``n_parts`` the measurements behind the values.
    """

    values: np.ndarray
    lots: tuple[str, ...]
    unit: str
    n_parts: int


@dataclass(frozen=True)
class PairedValues:
    """Old and new values aligned by pair key (used measurements only).

    ``unmatched`` holds the pair keys with a used measurement on one side only; they are left
    out of the paired analysis.
    """

    keys: tuple[str, ...]
    old: np.ndarray
    new: np.ndarray
    unmatched: tuple[str, ...]


@dataclass
class _Sheet:
    """A data file read into cells: one row per non-blank data row."""

    header: list[str]
    cells: pd.DataFrame  # columns 0..k-1; str (text files) or python objects (xlsx)
    rows: np.ndarray  # source row number of each row of ``cells``
    rows_read: int
    encoding: str
    typed: bool  # xlsx: cells hold numbers, dates, booleans, text or None
    sheet: str | None = None
    notes: list[str] = field(default_factory=list)
    origin: dict | None = None  # a SQL source: query, parameters, masked URL, server


# -- public API -------------------------------------------------------------------------------


def load_measurements(spec: Spec, *, max_bytes: int | None = None) -> Measurements:
    """Read the spec's data file into the tidy measurements table.

    Parameters
    ----------
    spec
        A spec from :func:`verify.spec.load_spec`.
    max_bytes
        Refuse a larger data file (default :data:`verify.safe_open.DEFAULT_MAX_DATA_MB`); an
        .xlsx is also refused when its parts would expand far beyond it
        (:func:`verify.safe_open.check_xlsx_archive`).

    Returns
    -------
    Measurements
        ``table`` with exactly :data:`~verify.model.MEASUREMENT_COLUMNS`, ordered by
        characteristic (spec order) then production order; per-file information; the lots in
        neither lots list; and notes (e.g. the file was read as Latin-1).

    Raises
    ------
    DataError
        Every problem found in the file, each naming file, row and column.

    Examples
    --------
    >>> from verify.spec import load_spec
    >>> m = load_measurements(load_spec("specs/bushing-supplier.yaml"))  # doctest: +SKIP
    >>> m.table.columns.tolist() == list(MEASUREMENT_COLUMNS)  # doctest: +SKIP
    True
    """
    ds = spec.data
    if ds.source == "dataframe":
        raise DataError([DataIssue(str(spec.path), "the spec's data come from a DataFrame "
                                   "(data.source: dataframe): pass it to "
                                   "verify.evaluate(spec, frame), or give data.file")])
    if ds.source == "sql":  # a query's rows; their canonical CSV stands in for the file
        from .sources.sql import read_sql

        sheet, raw, shown = read_sql(spec)
    else:
        shown = display_path(ds.file)
        limit = max_bytes if max_bytes is not None else max_data_bytes(None)
        raw = _read_bytes(ds.file, shown, spec, limit)
        suffix = ds.file.suffix.lower()
        if suffix == ".xlsx":
            from .sources.formula_cells import check_formula_cells

            try:
                check_xlsx_archive(raw, shown, max_bytes=limit)
            except FileRefused as exc:
                raise DataError([DataIssue(shown, exc.reason)]) from None
            sheet = _read_xlsx(raw, shown, ds.sheet)
            sheet.notes.extend(check_formula_cells(raw, sheet, spec, shown))
        elif suffix == ".parquet":
            from .sources.parquet import read_parquet

            sheet = read_parquet(raw, shown, ds.filters)
        else:
            sheet = _read_text(raw, shown, tab=suffix == ".tsv", encoding=ds.encoding)
    tidy = _Tidy(spec, sheet, shown)
    table, notes, unassigned = tidy.run()
    info = _file_info(spec, table, sheet, raw)
    return Measurements(table=table, files=(info,), unassigned_lots=unassigned,
                        notes=tuple(sheet.notes + notes), trace=tidy.trace)


def analysis_values(measurements: Measurements, spec: Spec, characteristic_name: str,
                    process: str) -> AnalysisValues:
    """The used values of one characteristic and process, as the analysis sees them.

    Parameters
    ----------
    measurements, spec
        From :func:`load_measurements` and :func:`verify.spec.load_spec`.
    characteristic_name
        A characteristic of the spec.
    process
        "old" or "new".

    Returns
    -------
    AnalysisValues
        Values in production order; lot means when the spec's unit of analysis is lot.

    Examples
    --------
    >>> av = analysis_values(m, spec, "bore_diameter", "new")  # doctest: +SKIP
    >>> av.unit, len(av.values) == len(av.lots)  # doctest: +SKIP
    ('part', True)
    """
    _check_args(spec, characteristic_name, process)
    ix = _analysis_index(measurements.table)
    span = ix.groups.get((characteristic_name, process))
    lo, hi = span if span is not None else (0, 0)
    values = ix.value[lo:hi].copy()
    lots = ix.lot[lo:hi].tolist()
    if spec.unit_of_analysis == "lot":
        # lot means, one per lot in order of the lot's first measurement. Each sum is
        # correctly rounded (math.fsum): lot means differ only in late digits, and their spread
        # must not depend on the order of summation.
        acc: dict[str, list[float]] = {}
        for x, lot in zip(values.tolist(), lots, strict=True):
            acc.setdefault(lot, []).append(x)
        means = np.array([math.fsum(v) / len(v) for v in acc.values()], dtype=float)
        first = acc
        return AnalysisValues(values=means, lots=tuple(first), unit="lot", n_parts=hi - lo)
    return AnalysisValues(values=values, lots=tuple(lots), unit="part", n_parts=hi - lo)


@dataclass(frozen=True)
class _Index:
    """The used measurements as numpy arrays, sorted by (characteristic, process, production
    order, source row), with the slice of each (characteristic, process): an evaluation reads
    every characteristic and process in turn, so the table is gathered once, not filtered per
    call."""

    value: np.ndarray
    lot: np.ndarray  # object array of str
    pair: np.ndarray  # object array of str
    order: np.ndarray
    source_row: np.ndarray
    groups: dict  # (characteristic, process) -> (start, stop)


_INDEX_CACHE: dict[int, tuple] = {}


def _analysis_index(table: pd.DataFrame) -> _Index:
    hit = _INDEX_CACHE.get(id(table))
    if hit is not None and hit[0] is table:
        return hit[1]
    used = ~table["excluded"].to_numpy(dtype=bool)
    char_codes, char_names = pd.factorize(table["characteristic"].to_numpy(dtype=object)[used])
    proc_codes, proc_names = pd.factorize(table["process"].to_numpy(dtype=object)[used])
    code = char_codes.astype(np.int64) * max(1, len(proc_names)) + proc_codes
    order = table["order"].to_numpy(dtype=np.int64)[used]
    source_row = table["source_row"].to_numpy(dtype=np.int64)[used]
    # one stable sort: by group, then production order, then source row (ties keep table order)
    sort = np.lexsort((source_row, order, code))
    code_sorted = code[sort]
    starts = np.flatnonzero(np.concatenate(([True], code_sorted[1:] != code_sorted[:-1]))) \
        if code_sorted.size else np.zeros(0, dtype=np.intp)
    stops = np.append(starts[1:], code_sorted.size)
    width = max(1, len(proc_names))
    groups = {}
    for a, b in zip(starts.tolist(), stops.tolist(), strict=True):
        c = int(code_sorted[a])
        groups[(str(char_names[c // width]), str(proc_names[c % width]))] = (a, b)
    index = _Index(
        value=table["value"].to_numpy(dtype=float)[used][sort],
        lot=table["lot"].to_numpy(dtype=object)[used][sort],
        pair=table["pair"].to_numpy(dtype=object)[used][sort],
        order=order[sort],
        source_row=source_row[sort],
        groups=groups,
    )
    if len(_INDEX_CACHE) >= 8:
        _INDEX_CACHE.clear()
    _INDEX_CACHE[id(table)] = (table, index)
    return index


def _with_stream(result, stream, rows):
    """Add the ``stream`` column to the assembled table, row for row (the table may have been
    re-sorted by production order: its ``source_row`` finds each row's stream)."""
    table, *rest = result
    by_row = dict(zip(rows.tolist(), stream.tolist(), strict=True))
    table = table.assign(stream=table["source_row"].map(by_row).fillna("").astype(str))
    return (table, *rest)


def stream_values(measurements: Measurements, characteristic: str) -> dict[str, object]:
    """Used new-process values of one characteristic per stream, in production order.

    Streams are in order of first appearance in the data. Empty when the table has no
    ``stream`` column (no data.stream declared).
    """
    import numpy as np

    t = measurements.table
    if "stream" not in t.columns:
        return {}
    sel = t[(t["characteristic"] == characteristic) & (t["process"] == "new") & ~t["excluded"]]
    sel = sel.sort_values(["order", "source_row"], kind="stable")
    out: dict[str, object] = {}
    for name in dict.fromkeys(sel["stream"].astype(str)):
        out[name] = sel.loc[sel["stream"].astype(str) == name, "value"].to_numpy(dtype=float)
    for k in out:
        out[k] = np.asarray(out[k])
    return out


def paired_values(measurements: Measurements, spec: Spec,
                  characteristic_name: str) -> PairedValues:
    """Old and new measurements of one characteristic aligned by the pair key.

    Keys are ordered by the production order of their earlier measurement. A key with a used
    measurement on one side only (the other excluded, not measured or absent) is listed in
    ``unmatched``.

    Raises
    ------
    ValueError
        The spec has no ``data.pair`` or no such characteristic.

    Examples
    --------
    >>> pv = paired_values(m, spec, "seal_strength")  # doctest: +SKIP
    >>> len(pv.keys) == len(pv.old) == len(pv.new)  # doctest: +SKIP
    True
    """
    _check_args(spec, characteristic_name, "old")
    if spec.data.pair is None:
        raise ValueError("the spec has no data.pair: there are no pairs")
    ix = _analysis_index(measurements.table)
    spans = [ix.groups.get((characteristic_name, proc), (0, 0)) for proc in ("old", "new")]
    pos = np.concatenate([np.arange(a, b) for a, b in spans])
    pos = pos[ix.pair[pos] != ""]
    pos = pos[np.lexsort((ix.source_row[pos], ix.order[pos]))]  # production order
    is_old = (pos >= spans[0][0]) & (pos < spans[0][1])
    first: dict[str, None] = {}  # keys by earlier measurement
    sides: tuple[dict, dict] = ({}, {})  # first used value per key: old, new
    for p, o in zip(pos.tolist(), is_old.tolist(), strict=True):
        key = ix.pair[p]
        first.setdefault(key, None)
        sides[0 if o else 1].setdefault(key, p)
    keys = [k for k in first if k in sides[0] and k in sides[1]]
    unmatched = tuple(str(k) for k in first if not (k in sides[0] and k in sides[1]))
    return PairedValues(keys=tuple(str(k) for k in keys),
                        old=ix.value[[sides[0][k] for k in keys]].astype(float),
                        new=ix.value[[sides[1][k] for k in keys]].astype(float),
                        unmatched=unmatched)


def display_path(path: Path) -> str:
    """``path`` relative to the working folder when it lies below it, else absolute."""
    try:
        return str(Path(os.path.abspath(path)).relative_to(Path.cwd()))
    except ValueError:
        return str(path)


_NAMES_CACHE: dict[int, tuple] = {}


def _check_args(spec: Spec, name: str, process: str) -> None:
    hit = _NAMES_CACHE.get(id(spec))
    if hit is None or hit[0] is not spec:
        if len(_NAMES_CACHE) >= 8:
            _NAMES_CACHE.clear()
        hit = _NAMES_CACHE[id(spec)] = (spec, frozenset(c.name for c in spec.characteristics))
    if name not in hit[1]:
        raise ValueError(f"the spec has no characteristic named {name!r}")
    if process not in ("old", "new"):
        raise ValueError(f"process must be 'old' or 'new', not {process!r}")


# -- reading files ----------------------------------------------------------------------------


def _read_bytes(path: Path, shown: str, spec: Spec, max_bytes: int) -> bytes:
    """The data file's bytes: a regular file (links followed) within the size limit."""
    why = (f"data.file {spec.data.file_text!r} in {spec.path} is read relative to the spec's "
           "folder")
    if not path.exists() and not path.is_symlink():
        raise DataError([DataIssue(shown, f"data file not found ({why})")])
    try:
        return read_regular(path, what="data file", shown=shown, max_bytes=max_bytes,
                            limit_hint=DATA_LIMIT_HINT)
    except FileRefused as exc:
        raise DataError([DataIssue(shown, f"{exc.reason} ({why})")]) from None


def _decode(raw: bytes, shown: str, declared: str | None = None) -> tuple[str, str, list[str]]:
    if declared is not None:  # data.encoding: exactly that, and a byte it cannot read is named
        try:
            text = raw.decode(declared)
        except UnicodeDecodeError as exc:
            line = raw[:exc.start].count(b"\n") + 1
            raise DataError([DataIssue(shown, f"byte 0x{raw[exc.start]:02x} at offset "
                                       f"{exc.start} cannot be read as {declared} "
                                       "(data.encoding): check the file's encoding",
                                       row=line)]) from None
        return (text[1:] if text.startswith("\ufeff") else text), declared, []
    for bom, enc in ((codecs.BOM_UTF8, "utf-8-sig"), (codecs.BOM_UTF16_LE, "utf-16"),
                     (codecs.BOM_UTF16_BE, "utf-16")):
        if raw.startswith(bom):
            try:
                return raw.decode(enc), enc, []
            except UnicodeDecodeError:
                if enc == "utf-16":
                    raise DataError([DataIssue(shown, "starts with a UTF-16 mark but is not "
                                               "valid UTF-16 text")]) from None
                break
    try:
        return raw.decode("utf-8"), "utf-8", []
    except UnicodeDecodeError:
        pass
    try:
        # Excel on Windows saves "CSV" in Windows-1252: its 0x80-0x9f are characters such as
        # the en dash and the euro sign, which Latin-1 would read as control codes
        text = raw.decode("cp1252")
        return text, "windows-1252", [f"{shown}: read as Windows-1252 (the file is not valid "
                                      "UTF-8); check that accented characters read right, or "
                                      "declare data.encoding"]
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
        if text.startswith("\u00ef\u00bb\u00bf"):
            text = text[3:]
        return text, "latin-1", [f"{shown}: read as Latin-1 (the file is not valid UTF-8); "
                                 "check that accented characters read right"]


def sniff_delimiter(header_line: str) -> str:
    """The delimiter of a text table: the most frequent of comma, semicolon, tab in the header.

    Examples
    --------
    >>> sniff_delimiter("lot;supplier;bore")
    ';'
    """
    counts = {d: header_line.count(d) for d in DELIMITERS}
    best = max(DELIMITERS[::-1], key=lambda d: counts[d])  # ties prefer tab, then semicolon
    return best if counts[best] else ","


def _read_text(raw: bytes, shown: str, *, tab: bool, encoding: str | None = None) -> _Sheet:
    text, encoding, notes = _decode(raw, shown, encoding)
    if "\x00" in text:
        raise DataError([DataIssue(shown, "contains NUL bytes: this is not a text table (an "
                                   ".xlsx saved as .csv?)")])
    first_line = text.split("\n", 1)[0]
    delimiter = "\t" if tab else sniff_delimiter(first_line)
    if not text.strip():
        raise DataError([DataIssue(shown, "the file is empty: it needs a header row", row=1)])
    try:
        frame = pd.read_csv(io.StringIO(text), sep=delimiter, header=None, dtype=str,
                            keep_default_na=False, na_filter=False, skip_blank_lines=False,
                            quotechar='"', engine="c")
    except pd.errors.EmptyDataError:
        raise DataError([DataIssue(shown, "the file is empty: it needs a header row",
                                   row=1)]) from None
    except (pd.errors.ParserError, ValueError) as exc:
        raise DataError(_ragged_rows(text, delimiter, shown, str(exc))) from None
    frame = frame.fillna("")
    for col in frame.columns:
        frame[col] = frame[col].astype(str).str.strip()
    short = _short_rows(frame, text, delimiter, shown)
    if short:
        raise DataError(short)
    header = frame.iloc[0].tolist() if len(frame) else []
    body = frame.iloc[1:].reset_index(drop=True)
    body.columns = range(body.shape[1])
    rows = np.arange(2, len(body) + 2)
    blank = (body == "").all(axis=1).to_numpy() if body.shape[1] else np.ones(len(body), bool)
    notes = list(notes)
    if delimiter != "," and not tab:
        notes.append(f"{shown}: columns separated by {_delim_name(delimiter)}")
    return _Sheet(header=header, cells=body[~blank].reset_index(drop=True), rows=rows[~blank],
                  rows_read=int((~blank).sum()), encoding=encoding, typed=False, notes=notes)


def _delim_name(d: str) -> str:
    return {",": "commas", ";": "semicolons", "\t": "tabs"}[d]


def _short_rows(frame, text: str, delimiter: str, shown: str) -> list[DataIssue]:
    """Rows with fewer cells than the header (pandas pads them silently with empty cells,
    which would read as "not measured"). The csv module counts the cells only when some row
    ends in an empty cell, so the common case costs nothing."""
    if frame.shape[0] < 2 or frame.shape[1] < 2:
        return []
    last = frame.iloc[1:, -1].to_numpy() == ""
    if not last.any():
        return []
    width = frame.shape[1]
    bad = []
    for i, rec in enumerate(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter),
                            start=1):
        if i > 1 and rec and len(rec) < width:
            bad.append((i, len(rec)))
    issues = [DataIssue(shown, f"has {n} cells but the header has {width} columns (a missing "
                        f"{_delim_name(delimiter)[:-1]}? write an empty cell as an explicit "
                        "empty field)", row=i) for i, n in bad[:MAX_REPORTED]]
    if len(bad) > MAX_REPORTED:
        issues.append(DataIssue(shown, f"and {len(bad) - MAX_REPORTED} more rows like these"))
    return issues


def _ragged_rows(text: str, delimiter: str, shown: str, message: str) -> list[DataIssue]:
    """Locate rows with more cells than the header (the error path only)."""
    issues: list[DataIssue] = []
    try:
        records = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
        width = None
        bad = []
        for i, rec in enumerate(records, start=1):
            if width is None:
                width = len(rec)
            elif len(rec) > width:
                bad.append((i, len(rec)))
        for i, n in bad[:MAX_REPORTED]:
            issues.append(DataIssue(shown, f"has {n} cells but the header has {width} columns "
                                    f"(a stray {_delim_name(delimiter)[:-1]}? a decimal comma "
                                    "in a comma-separated file? text that needs quotes?)",
                                    row=i))
        if len(bad) > MAX_REPORTED:
            issues.append(DataIssue(shown, f"and {len(bad) - MAX_REPORTED} more rows like these"))
    except csv.Error as exc:
        issues.append(DataIssue(shown, f"cannot be read as a table: {exc}"))
    if not issues:
        issues.append(DataIssue(shown, f"cannot be read as a table: {message}"))
    return issues


def _read_xlsx(raw: bytes, shown: str, sheet_name: str | None) -> _Sheet:
    values, sheet_name = _xlsx_rows(raw, shown, sheet_name)
    if not values:
        raise DataError([DataIssue(shown, f"sheet {sheet_name!r} is empty: it needs a header "
                                   "row", row=1)])
    width = max(len(r) for r in values)
    header = [_cell_text(v) for v in values[0]] + [""] * (width - len(values[0]))
    body_rows = [tuple(r) + (None,) * (width - len(r)) for r in values[1:]]
    body = pd.DataFrame(body_rows, columns=range(width), dtype=object)
    rows = np.arange(2, len(body) + 2)
    if len(body):
        blank = body.map(_is_blank).all(axis=1).to_numpy()
    else:
        blank = np.zeros(0, bool)
    return _Sheet(header=header, cells=body[~blank].reset_index(drop=True), rows=rows[~blank],
                  rows_read=int((~blank).sum()), encoding="xlsx", typed=True, sheet=sheet_name)


def _xlsx_rows(raw: bytes, shown: str, sheet_name: str | None) -> tuple[list, str]:
    """The sheet's rows from A1 (empty cells None) through python-calamine, which reads values
    about ten times faster than openpyxl; openpyxl where python-calamine is not installed."""
    try:
        from .sources.xlsx_values import read_values
    except ImportError:  # pragma: no cover - python-calamine is a dependency
        return _xlsx_rows_openpyxl(raw, shown, sheet_name)
    try:
        return read_values(raw, sheet_name)
    except ValueError as exc:
        raise DataError([DataIssue(shown, f"cannot be read as an .xlsx workbook ({exc})")]
                        ) from None
    except LookupError as exc:
        if len(exc.args) == 2:
            raise DataError([DataIssue(shown, _no_sheet(*exc.args))]) from None
        raise DataError([DataIssue(shown, str(exc.args[0]))]) from None


def _no_sheet(sheet_name: str, names: list[str]) -> str:
    msg = f"has no sheet {sheet_name!r}; the sheets are: {', '.join(names)}"
    near = difflib.get_close_matches(sheet_name, names, n=1, cutoff=0.6)
    return msg + (f"; did you mean {near[0]!r}?" if near else "")


def _xlsx_rows_openpyxl(raw: bytes, shown: str, sheet_name: str | None) -> tuple[list, str]:
    import openpyxl  # heavy: imported where it is used

    try:
        wb = openpyxl.load_workbook(io.BytesIO(raw), read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many kinds on a damaged file
        raise DataError([DataIssue(shown, f"cannot be read as an .xlsx workbook "
                                   f"({type(exc).__name__}: {exc})")]) from None
    try:
        names = wb.sheetnames
        if sheet_name is None:
            if not names:
                raise DataError([DataIssue(shown, "the workbook has no sheets")])
            sheet_name = names[0]
        elif sheet_name not in names:
            raise DataError([DataIssue(shown, _no_sheet(sheet_name, names))])
        ws = wb[sheet_name]
        if not hasattr(ws, "iter_rows"):
            raise DataError([DataIssue(shown, f"sheet {sheet_name!r} is a chart, not a table")])
        try:
            values = list(ws.iter_rows(values_only=True))
        except Exception as exc:  # damaged sheet XML
            raise DataError([DataIssue(shown, f"sheet {sheet_name!r} cannot be read "
                                       f"({type(exc).__name__}: {exc})")]) from None
    finally:
        wb.close()
    return values, sheet_name


def _is_blank(v: object) -> bool:
    return v is None or (isinstance(v, str) and not v.strip())


def _cell_text(v: object) -> str:
    """A spreadsheet cell as the text a user sees (numbers without a spurious '.0')."""
    if v is None:
        return ""
    if isinstance(v, str):
        return v.strip()
    if isinstance(v, bool):
        return "TRUE" if v else "FALSE"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return str(int(v)) if v.is_integer() and abs(v) < 1e15 else repr(v)
    if isinstance(v, _dt.datetime):
        return v.isoformat(sep=" ")
    if isinstance(v, _dt.date | _dt.time):
        return v.isoformat()
    return str(v).strip()


# -- cells -> tidy table ----------------------------------------------------------------------


class _Tidy:
    """Turns a :class:`_Sheet` into the tidy table, collecting every problem of the file."""

    def __init__(self, spec: Spec, sheet: _Sheet, shown: str):
        self.spec = spec
        self.ds = spec.data
        self.sheet = sheet
        self.file = shown
        self.issues: list[DataIssue] = []
        self.notes: list[str] = []
        self.n = len(sheet.cells)
        self.unassigned: tuple[str, ...] = ()
        self.trace: pd.DataFrame | None = None  # part, process as written, corrections, keep

    # helpers
    def issue(self, message: str, row: int | None = None, column: str | None = None) -> None:
        self.issues.append(DataIssue(self.file, message, row=row, column=column))

    def fail_if_issues(self) -> None:
        if self.issues:
            raise DataError(self.issues)

    def text(self, idx: int) -> np.ndarray:
        col = self.sheet.cells[idx] if idx < self.sheet.cells.shape[1] else pd.Series(
            [""] * self.n, dtype=object)
        if self.sheet.typed:
            return np.array([_cell_text(v) for v in col], dtype=object)
        return col.to_numpy(dtype=object)

    def report_cells(self, mask: np.ndarray, column: str, message, rows: np.ndarray,
                     cells: np.ndarray) -> None:
        hits = np.flatnonzero(mask)
        for i in hits[:MAX_REPORTED]:
            self.issue(message(cells[i]), row=int(rows[i]), column=column)
        if len(hits) > MAX_REPORTED:
            self.issue(f"and {len(hits) - MAX_REPORTED} more cells like these", column=column)

    # steps
    def run(self) -> tuple[pd.DataFrame, list[str], tuple[str, ...]]:
        cols = self.columns()
        rows = self.sheet.rows
        lot = self.text(cols["data.lot"])
        empty_lot = lot == ""
        self.report_cells(empty_lot, self.ds.lot, lambda v: "empty lot id: every row needs "
                          "its lot", rows, lot)
        process, scope = self.processes(cols, lot)
        pair = self.text(cols["data.pair"]) if self.ds.pair is not None else np.full(
            self.n, "", dtype=object)
        order = self.production_order(cols, scope)
        self.part_text = (self.text(cols["data.part"]) if self.ds.part is not None
                          else np.full(self.n, "", dtype=object))
        self.process_text = (self.text(cols["data.process"]) if self.ds.process is not None
                             else None)
        self.keep_text = {name: self.text(cols[f"keep:{i}"])
                          for i, name in enumerate(self.ds.keep)}
        spec_reason, char_reasons = self.exclusions(lot)
        in_scope = (scope == "") & ~empty_lot
        if self.ds.pair is not None:
            self.report_cells(in_scope & (spec_reason == "") & (pair == ""), self.ds.pair,
                              lambda v: "empty pair key: a paired row needs its key (or "
                              "exclude the row in the spec)", rows, pair)
        stream = None
        if getattr(self.ds, "stream", None) is not None:
            stream = self.text(cols["data.stream"])
            # a new part must name its stream; old rows may leave it empty
            self.report_cells(in_scope & (spec_reason == "") & (process == "new")
                              & (stream == ""), self.ds.stream,
                              lambda v: "empty stream: a new-process row needs its stream "
                              "(cavity, spindle, machine), or exclude the row in the spec",
                              rows, stream)
        pos, char_idx, cells = self.measurement_cells(cols)
        # cell problems are collected too before failing: all of a file's problems at once
        table = self.assemble(rows, lot, process, pair, order, scope, spec_reason,
                              char_reasons, pos, char_idx, cells)
        if stream is not None:
            # an extra column, only when data.stream is declared (MEASUREMENT_COLUMNS stay)
            return _with_stream(table, stream, rows)
        return table

    def columns(self) -> dict[str, int]:
        header = self.sheet.header
        index: dict[str, list[int]] = {}
        for i, h in enumerate(header):
            index.setdefault(h, []).append(i)
        wanted: list[tuple[str, str]] = [("data.lot", self.ds.lot)]
        for key in ("process", "pair", "order", "characteristic", "value", "stream", "part"):
            name = getattr(self.ds, key, None)
            if name is not None:
                wanted.append((f"data.{key}", name))
        for i, name in enumerate(self.ds.keep):
            wanted.append((f"keep:{i}", name))
        for i, c in enumerate(self.spec.characteristics):
            if c.counts is not None:
                # per-lot counts: the failed column holds the characteristic's values and the
                # inspected column its own tidy rows (in either layout)
                wanted.append((f"char:{i}", c.counts[1]))
                wanted.append((f"insp:{i}", c.counts[0]))
            elif self.ds.layout == "wide":
                wanted.append((f"char:{i}", c.column))
        found: dict[str, int] = {}
        shown_cols = ", ".join(_show(h) for h in header if h) or "(none)"
        for role, name in wanted:
            where = (f"characteristics[{role[5:]}].column" if role.startswith("char:")
                     else f"characteristics[{role[5:]}].counts" if role.startswith("insp:")
                     else f"data.keep[{role[5:]}]" if role.startswith("keep:")
                     else role)
            if role.startswith("char:") and self.spec.characteristics[
                    int(role[5:])].counts is not None:
                where = f"characteristics[{role[5:]}].counts"
            hits = index.get(name, [])
            if len(hits) > 1:
                self.issue(f"column {name!r} ({where} in the spec) appears "
                           f"{len(hits)} times in the header (columns "
                           f"{', '.join(_column_letter(h) for h in hits)}): rename one",
                           row=1, column=name)
            elif not hits:
                msg = f"no column {name!r} ({where} in the spec); the columns are: {shown_cols}"
                near = _near(name, [h for h in header if h])
                if near:
                    msg += f"; did you mean {_show(near)}?"
                self.issue(msg, row=1, column=name)
            else:
                found[role] = hits[0]
        self.fail_if_issues()
        return found

    def processes(self, cols: dict[str, int], lot: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        ds, rows = self.ds, self.sheet.rows
        process = np.full(self.n, "", dtype=object)
        scope = np.full(self.n, "", dtype=object)
        if ds.process is not None:
            ptext = pd.Series(self.text(cols["data.process"]), dtype=object)
            # cells are compared trimmed, like every text cell
            is_old = ptext.isin([v.strip() for v in ds.old]).to_numpy()
            is_new = ptext.isin([v.strip() for v in ds.new]).to_numpy()
            process[is_old] = "old"
            process[is_new] = "new"
            other = ~(is_old | is_new) & (lot != "")
            if other.any():
                values = ptext[other]
                if ds.ignore_other:
                    reasons = {v: f"process value {_show(v)} is neither old nor new "
                                  "(data.ignore_other)" for v in values.unique()}
                    scope[other] = values.map(reasons).to_numpy(dtype=object)
                    counts = values.value_counts(sort=False)
                    self.notes.append("left out, process neither old nor new: " + ", ".join(
                        f"{_show(v)} ({n} rows)" for v, n in counts.items()))
                else:
                    self.other_process_issues(values, rows[other])
        else:
            lots = self.spec.lots
            uniq, first, inverse = np.unique(lot, return_index=True, return_inverse=True)
            proc_u = np.full(len(uniq), "", dtype=object)
            scope_u = np.full(len(uniq), "", dtype=object)
            for j in np.argsort(first, kind="stable"):  # in order of first appearance
                lot_id = uniq[j]
                if lot_id == "":
                    continue
                hit_old = [p for p in lots.old if fnmatchcase(lot_id, p)]
                hit_new = [p for p in lots.new if fnmatchcase(lot_id, p)]
                if hit_old and hit_new:
                    self.issue(f"lot {_show(lot_id)} matches lots.old ({hit_old[0]!r}) and "
                               f"lots.new ({hit_new[0]!r}): make the lists exclusive",
                               row=int(rows[first[j]]), column=self.ds.lot)
                elif hit_old:
                    proc_u[j] = "old"
                elif hit_new:
                    proc_u[j] = "new"
                else:
                    scope_u[j] = NEITHER_LIST
            process = proc_u[inverse]
            scope = scope_u[inverse]
            counts = np.bincount(inverse, minlength=len(uniq))
            left_out = [(str(uniq[j]), int(counts[j]))
                        for j in np.argsort(first, kind="stable") if scope_u[j]]
            self.unassigned = tuple(name for name, _ in left_out)
            if left_out:
                self.notes.append("lots in neither lots list, left out: " + ", ".join(
                    f"{_cut(k)} ({n} rows)" for k, n in left_out))
        return process, scope

    def other_process_issues(self, values: pd.Series, rows: np.ndarray) -> None:
        ds = self.ds
        groups: dict[str, list[int]] = {}
        for v, r in zip(values.tolist(), rows.tolist(), strict=True):
            groups.setdefault(v, []).append(r)
        for v, rs in list(groups.items())[:MAX_REPORTED]:
            shown = ", ".join(str(r) for r in rs[:5]) + (", ..." if len(rs) > 5 else "")
            what = "an empty process value" if v == "" else f"process value {_show(v)}"
            count = f"{len(rs)} rows (rows {shown})" if len(rs) > 1 else f"1 row (row {shown})"
            self.issue(f"{what} is neither old ({_list(ds.old)}) nor new ({_list(ds.new)}); "
                       f"{count}. Add it to data.old or data.new, or set data.ignore_other: "
                       "true to leave such rows out", row=rs[0], column=ds.process)
        if len(groups) > MAX_REPORTED:
            self.issue(f"and {len(groups) - MAX_REPORTED} more process values like these",
                       column=ds.process)

    def production_order(self, cols: dict[str, int], scope: np.ndarray) -> np.ndarray:
        if self.ds.order is None:
            return np.arange(self.n, dtype=np.int64)
        cells = self.text(cols["data.order"])
        s = pd.Series(cells, dtype=object)
        numbers = pd.to_numeric(s, errors="coerce").to_numpy(dtype=float)
        if np.isfinite(numbers).all():
            keys = numbers
        else:
            times = pd.to_datetime(s, errors="coerce", format="ISO8601")
            ok = times.notna().to_numpy()
            if ok.all():
                keys = times.to_numpy(dtype="datetime64[ns]").astype(np.int64).astype(float)
            else:
                use_numbers = np.isfinite(numbers).sum() >= ok.sum()
                bad = ~np.isfinite(numbers) if use_numbers else ~ok
                self.report_cells(bad & (scope == ""), self.ds.order,
                                  lambda v: f"{_show(v)} in the order column is neither a "
                                  "number nor a date-time (such as 2024-03-05 14:20)",
                                  self.sheet.rows,
                                  cells)
                keys = np.where(bad, np.inf, numbers if use_numbers else
                                times.to_numpy(dtype="datetime64[ns]").astype(np.int64))
        ranked = np.lexsort((self.sheet.rows, keys))
        order = np.empty(self.n, dtype=np.int64)
        order[ranked] = np.arange(self.n)
        return order

    def exclusions(self, lot: np.ndarray) -> tuple[np.ndarray, dict[str, np.ndarray]]:
        rows = self.sheet.rows
        spec_reason = np.full(self.n, "", dtype=object)
        per_char: dict[str, np.ndarray] = {}
        lots_present = [x for x in dict.fromkeys(lot.tolist()) if x]
        for i, e in enumerate(self.spec.exclude):
            reason = f"excluded by spec: {e.reason} (by {e.by})"
            line = f" (line {e.line})" if e.line else ""
            if e.part is not None:
                mask = self.part_text == e.part
                if not mask.any():
                    parts = [x for x in dict.fromkeys(self.part_text.tolist()) if x]
                    msg = (f"exclude[{i}]{line} names part {e.part!r}, which is not in column "
                           f"{self.ds.part!r}")
                    near = _near(e.part, parts)
                    self.issue(msg + (f"; did you mean {near!r}?" if near else ""),
                               column=self.ds.part)
                    continue
            elif e.row is not None:
                mask = rows == e.row
                if not mask.any():
                    last = int(rows.max()) if len(rows) else 1
                    why = (f"the last data row is {last}" if e.row > last
                           else "that row is blank")
                    self.issue(f"exclude[{i}]{line} names row {e.row}, which holds no data: "
                               f"{why}", row=e.row)
                    continue
            else:
                pattern = str(e.lot)
                hit = {x for x in lots_present if fnmatchcase(x, pattern)}
                if not hit:
                    msg = (f"exclude[{i}]{line} names lot {pattern!r}, which is not in the "
                           f"file")
                    near = _near(pattern, lots_present)
                    msg += f"; did you mean {_show(near)}?" if near else (
                        f"; lots present: {', '.join(_cut(x) for x in lots_present[:15])}"
                        + (", ..." if len(lots_present) > 15 else ""))
                    self.issue(msg, column=self.ds.lot)
                    continue
                mask = pd.Series(lot, dtype=object).isin(hit).to_numpy()
            target = spec_reason if e.characteristic is None else per_char.setdefault(
                e.characteristic, np.full(self.n, "", dtype=object))
            target[mask & (target == "")] = reason
        return spec_reason, per_char

    def measurement_cells(self, cols: dict[str, int]) -> tuple[np.ndarray, np.ndarray, list]:
        """Row positions, characteristic indices and the raw cells of every measurement."""
        chars = self.spec.characteristics
        cells = self.sheet.cells
        positions, indices, parts = [], [], []
        if self.ds.layout == "wide":
            for i in range(len(chars)):
                positions.append(np.arange(self.n))
                indices.append(np.full(self.n, i))
                parts.append(cells[cols[f"char:{i}"]].to_numpy(dtype=object))
                if chars[i].counts is not None:
                    positions.append(np.arange(self.n))
                    indices.append(np.full(self.n, len(chars) + i))
                    parts.append(cells[cols[f"insp:{i}"]].to_numpy(dtype=object))
        else:
            ctext = self.text(cols["data.characteristic"])
            values = cells[cols["data.value"]].to_numpy(dtype=object)
            matched = np.zeros(self.n, bool)
            present = [x for x in dict.fromkeys(ctext.tolist())]
            for i, c in enumerate(chars):
                mask = ctext == c.match
                matched |= mask
                if not mask.any():
                    shown = ", ".join(_show(x) for x in present[:15]) or "(none)"
                    msg = (f"no rows for characteristic {c.name!r}: column "
                           f"{self.ds.characteristic!r} has no value {c.match!r}; its values "
                           f"are: {shown}")
                    near = _near(c.match, [x for x in present if x])
                    if near:
                        msg += f"; did you mean {_show(near)}? (set match: in the spec)"
                    self.issue(msg, column=self.ds.characteristic)
                    continue
                where = np.flatnonzero(mask)
                positions.append(where)
                indices.append(np.full(len(where), i))
                if c.counts is not None:
                    parts.append(cells[cols[f"char:{i}"]].to_numpy(dtype=object)[where])
                    positions.append(where)
                    indices.append(np.full(len(where), len(chars) + i))
                    parts.append(cells[cols[f"insp:{i}"]].to_numpy(dtype=object)[where])
                else:
                    parts.append(values[where])
            other = ~matched
            if other.any():
                names = list(dict.fromkeys(ctext[other].tolist()))
                shown = ", ".join(_show(x) if x else "(empty)" for x in names[:10])
                self.notes.append(f"{int(other.sum())} rows measure characteristics the spec "
                                  f"does not name ({shown}{', ...' if len(names) > 10 else ''})"
                                  ": not used")
        if not positions:
            return np.zeros(0, np.int64), np.zeros(0, np.int64), []
        return np.concatenate(positions), np.concatenate(indices), parts

    def parse(self, parts: list, char_idx: np.ndarray) -> tuple[np.ndarray, np.ndarray,
                                                                 np.ndarray, np.ndarray]:
        """Values, missing mask, bad-cell mask and cell texts, vectorised."""
        cells = np.concatenate(parts) if parts else np.zeros(0, dtype=object)
        values = np.full(len(cells), np.nan)
        numeric = np.zeros(len(cells), bool)
        if self.sheet.typed:
            kinds = pd.Series(cells, dtype=object).map(type)
            numeric = kinds.isin([int, float]).to_numpy()
            values[numeric] = cells[numeric].astype(float)
            text = np.array([_cell_text(v) for v in cells], dtype=object)
        else:
            text = cells
        missing_texts = {m.strip() for m in self.ds.missing}
        s = pd.Series(text, dtype=object)
        missing = s.isin(missing_texts).to_numpy()
        is_text = ~numeric & ~missing
        wrong_sep = np.zeros(len(cells), bool)
        if is_text.any():
            t = s[is_text].astype(str)
            if self.ds.decimal == ",":
                wrong_sep[is_text] = t.str.contains(".", regex=False).to_numpy()
                t = t.str.replace(",", ".", regex=False)
            else:
                wrong_sep[is_text] = t.str.contains(",", regex=False).to_numpy()
            parsed = pd.to_numeric(t, errors="coerce").to_numpy(dtype=float)
            values[is_text] = np.where(wrong_sep[is_text], np.nan, parsed)
        values[missing] = np.nan  # a declared missing text, even a number such as -999
        bad = is_text & np.isnan(values)
        with np.errstate(invalid="ignore"):
            # beyond 1e100 squares and sums overflow; no gauge reads such a number
            infinite = np.isinf(values) | (np.abs(values) > MAX_ABS_VALUE)
        self.wrong_sep = wrong_sep
        self.infinite = infinite
        return values, missing, bad | infinite, text

    def assemble(self, rows, lot, process, pair, order, scope, spec_reason, char_reasons, pos,
                 char_idx, parts):
        chars = self.spec.characteristics
        values, missing, bad, text = self.parse(parts, char_idx)
        # index len(chars) + i holds the inspected counts of characteristic i (pass-fail)
        names = np.array([c.name for c in chars] + [c.inspected_name for c in chars],
                         dtype=object)
        owner = np.array([c.name for c in chars] * 2, dtype=object)
        char_names = names[char_idx] if len(char_idx) else np.zeros(0, dtype=object)
        if self.spec.corrections:  # corrected in place: writable copies
            values, missing, bad = (np.array(values, dtype=float), np.array(missing, bool),
                                    np.array(bad, bool))
        original, corrected = self.corrections(rows, pos, char_idx, char_names, values, missing,
                                               bad, text)
        owners = owner[char_idx] if len(char_idx) else np.zeros(0, dtype=object)
        reason = scope[pos].copy() if len(pos) else np.zeros(0, dtype=object)
        spec_r = spec_reason[pos]
        reason = np.where(reason == "", spec_r, reason)
        for name, per_row in char_reasons.items():
            sel = owners == name
            r = per_row[pos]
            reason = np.where(sel & (reason == ""), r, reason)
        checkable = (reason == "") & (lot[pos] != "")
        bad = self.pass_fail_cells(checkable, pos, char_idx, values, missing, bad, text, rows,
                                   lot, process)
        self.bad_cell_issues(checkable & bad, rows[pos], char_idx, text, values)
        reason = np.where((reason == "") & missing, NOT_MEASURED, reason)
        values = np.where(bad, np.nan, values)
        self.duplicate_pairs(pos, char_names, process, pair, scope, spec_r, rows)
        self.duplicate_parts(pos, char_names, process, reason, rows)
        self.fail_if_issues()

        table = pd.DataFrame({
            "source_file": np.full(len(pos), self.ds.file_text, dtype=object),
            "source_row": rows[pos].astype(np.int64),
            "order": order[pos].astype(np.int64),
            "lot": lot[pos],
            "process": process[pos],
            "pair": pair[pos],
            "characteristic": char_names,
            "value": values.astype(float),
            "excluded": reason != "",
            "exclusion_reason": reason,
        }, columns=list(MEASUREMENT_COLUMNS))
        for col in ("source_file", "lot", "process", "pair", "characteristic",
                    "exclusion_reason"):
            table[col] = table[col].astype(str)
        # traceability, after the model's columns (the recheck reads those by position)
        if self.ds.part is not None:
            table["part"] = self.part_text[pos].astype(str)
        if self.process_text is not None:
            table["process_value"] = self.process_text[pos].astype(str)
        if self.spec.corrections:
            table["original"] = original.astype(str)
            table["correction"] = corrected.astype(str)
            table["correction_id"] = self.correction_id  # the spec's corrections[i]
        for name, cells in self.keep_text.items():
            table[f"keep:{name}"] = cells[pos].astype(str)
        if self.ds.order is not None:
            table = table.assign(_c=char_idx).sort_values(["_c", "order"], kind="stable")
            table = table.drop(columns="_c")
        table = table.reset_index(drop=True)
        extra = [c for c in table.columns if c not in MEASUREMENT_COLUMNS]
        self.trace = table[extra] if extra else None
        table = table[list(MEASUREMENT_COLUMNS)]
        for proc in ("old", "new"):
            if not (table["process"] == proc).any():
                self.notes.append(f"no rows for the {proc} process yet")
        return table, self.notes, self.unassigned

    def corrections(self, rows, pos, char_idx, char_names, values, missing, bad, text):
        """Apply the spec's corrections to the parsed cells (in place); return, per
        measurement, the original text of a corrected cell and the correction in words."""
        original = np.full(len(pos), "", dtype=object)
        corrected = np.full(len(pos), "", dtype=object)
        self.correction_id = np.full(len(pos), -1, dtype=np.int64)
        if not self.spec.corrections:
            return original, corrected
        chars = self.spec.characteristics
        long = self.ds.layout == "long"
        row_of, part_of = rows[pos], self.part_text[pos]
        for i, k in enumerate(self.spec.corrections):
            where = f"corrections[{i}]" + (f" (line {k.line})" if k.line else "")
            if long:
                if k.column != self.ds.value:
                    self.issue(f"{where}: column {k.column!r} is not the value column "
                               f"{self.ds.value!r} (data.value): name that column",
                               column=k.column)
                    continue
                col_sel = (char_names == k.characteristic if k.characteristic is not None
                           else np.ones(len(pos), bool))
            else:
                idx = [j for j, c in enumerate(chars) if c.column == k.column
                       and (k.characteristic is None or c.name == k.characteristic)]
                if not idx:
                    cols = ", ".join(repr(c.column) for c in chars)
                    self.issue(f"{where}: column {k.column!r} is no characteristic's column; "
                               f"the measured columns are {cols}", column=k.column)
                    continue
                col_sel = np.isin(char_idx, idx)
            row_sel = row_of == k.row if k.row is not None else part_of == k.part
            hits = np.flatnonzero(row_sel & col_sel)
            what = f"row {k.row}" if k.row is not None else f"part {k.part!r}"
            if len(hits) == 0:
                self.issue(f"{where} matches no measurement: {what} has no cell in column "
                           f"{k.column!r}; check the row, the part or the column",
                           row=k.row, column=k.column)
                continue
            if len(hits) > 1:
                at = ", ".join(str(int(r)) for r in sorted(set(row_of[hits].tolist())))
                self.issue(f"{where} matches {len(hits)} measurements ({what}, rows {at}): "
                           "name one (row:, or characteristic: in the long layout)",
                           row=k.row, column=k.column)
                continue
            j = int(hits[0])
            original[j] = str(text[j])
            values[j] = k.value
            missing[j] = False
            bad[j] = False  # a corrected cell is not checked as written
            corrected[j] = f"corrected to {k.value:g}: {k.reason} (by {k.by})"
            self.correction_id[j] = i
        return original, corrected

    def duplicate_parts(self, pos, char_names, process, reason, rows) -> None:
        """A part measured twice for one characteristic in one process, both used."""
        if self.ds.part is None or not len(pos):
            return
        frame = pd.DataFrame({"c": char_names, "p": process[pos], "k": self.part_text[pos],
                              "r": rows[pos]})
        live = (reason == "") & (frame["k"] != "").to_numpy()
        frame = frame[live]
        dup = frame[frame.duplicated(["c", "p", "k"], keep=False)]
        if dup.empty:
            return
        groups = dup.groupby(["c", "p", "k"], sort=False)
        for n, ((char, proc, part), g) in enumerate(groups):
            if n == MAX_REPORTED:
                self.issue(f"and {groups.ngroups - MAX_REPORTED} more parts measured twice",
                           column=self.ds.part)
                break
            rs = sorted(set(g["r"].tolist()))
            self.issue(f"part {part!r} is measured more than once for {char} in the {proc} "
                       f"process (rows {', '.join(str(r) for r in rs)}): exclude all but one "
                       "(exclude: with row: or part:, and the reason) or correct the part "
                       "serial", row=rs[0], column=self.ds.part)
    def pass_fail_cells(self, checkable, pos, char_idx, values, missing, bad, text, rows,
                        lot, process) -> np.ndarray:
        """Pass-fail characteristics: per-part results become 1.0 (failed) or 0.0 (passed);
        per-lot counts must be whole numbers with failed <= inspected, both given or both
        missing, one row per lot. Reports their problems; returns ``bad`` without their cells
        (``values`` is changed in place)."""
        chars = self.spec.characteristics
        k = len(chars)
        if not any(c.pass_fail for c in chars):
            return bad
        bad = bad.copy()
        src = rows[pos]
        for i, c in enumerate(chars):
            if not c.pass_fail:
                continue
            sel = char_idx == i
            if c.counts is None:
                column = c.column if self.ds.layout == "wide" else self.ds.value
                t = pd.Series(text[sel], dtype=object).map(lambda v: str(v).strip())
                fail = t.isin([x.strip() for x in c.fail_texts]).to_numpy()
                ok = t.isin([x.strip() for x in c.pass_texts]).to_numpy()
                m = missing[sel]
                vals = np.where(fail, 1.0, np.where(ok, 0.0, np.nan))
                values[sel] = vals
                wrong = ~fail & ~ok & ~m & checkable[sel]
                bad[sel] = False
                declared = list(self.ds.missing)
                self.report_cells(
                    wrong, column, lambda v, c=c, d=declared: (
                        f"{_show(v)} is neither a fail result {list(c.fail_texts)} nor a pass "
                        f"result {list(c.pass_texts)} nor a declared missing text {d} "
                        f"({c.name}): correct the cell, or add the text to fail: or pass: in "
                        "the spec"), src[sel], t.to_numpy(dtype=object))
                continue
            inspected_col, failed_col = c.counts
            fsel, isel = np.flatnonzero(sel), np.flatnonzero(char_idx == k + i)
            # both lists follow the same row positions (built side by side)
            for where, column in ((fsel, failed_col), (isel, inspected_col)):
                v = values[where]
                notwhole = ~missing[where] & ~bad[where] & ~(
                    np.isfinite(v) & (v >= 0) & (np.floor(v) == v))
                self.report_cells(
                    (bad[where] | notwhole) & checkable[where], column,
                    lambda x, c=c: (f"{_show(x)} is not a whole number of parts >= 0 "
                                    f"({c.name}): correct the cell, or declare it missing"),
                    src[where], text[where])
                bad[where] = False
            f_miss, i_miss = missing[fsel], missing[isel]
            both = checkable[fsel]
            one = (f_miss != i_miss) & both
            self.report_cells(
                one, failed_col, lambda x, c=c: (
                    f"a lot row of {c.name} needs both counts (inspected and failed) or "
                    "neither: fill in the empty one, or exclude the row"), src[fsel],
                text[fsel])
            fv, iv = values[fsel], values[isel]
            with np.errstate(invalid="ignore"):
                over = both & ~f_miss & ~i_miss & (fv > iv)
            self.report_cells(
                over, failed_col, lambda x, c=c: (
                    f"{_show(x)} failed is more than the parts inspected in that lot "
                    f"({c.name}): correct the counts"), src[fsel], text[fsel])
            live = both & ~f_miss & ~i_miss
            seen: dict[tuple, int] = {}
            for j in np.flatnonzero(live):
                key = (lot[pos[fsel[j]]], process[pos[fsel[j]]])
                if key in seen:
                    self.issue(f"lot {_show(key[0])} has more than one row of counts for "
                               f"{c.name} (rows {seen[key]} and {int(src[fsel[j]])}): give "
                               "one row per lot (and process), or exclude one",
                               row=int(src[fsel[j]]), column=failed_col)
                else:
                    seen[key] = int(src[fsel[j]])
        return bad

    def bad_cell_issues(self, mask, rows, char_idx, text, values) -> None:
        chars = self.spec.characteristics
        hits = np.flatnonzero(mask)
        decimal = self.ds.decimal
        declared = list(self.ds.missing)
        for i in hits[:MAX_REPORTED]:
            c = chars[int(char_idx[i])]
            column = c.column if self.ds.layout == "wide" else self.ds.value
            v = text[i]
            if np.isinf(values[i]):
                msg = (f"{_show(v)} is an infinite value ({c.name}): a measurement must be a "
                       "finite number")
            elif abs(values[i]) > MAX_ABS_VALUE:
                msg = (f"{_show(v)} is outside the range verify computes with ({c.name}: |value| "
                       f"<= {MAX_ABS_VALUE:g}): correct the cell or its unit")
            elif self.wrong_sep[i]:
                other = "," if decimal == "." else "."
                msg = (f"{_show(v)} is not a number with the decimal separator {decimal!r} "
                       f"({c.name}): correct the cell, or set data.decimal: {other!r} if the "
                       f"whole file writes {other!r} for decimals")
            elif v == "":
                msg = (f"empty cell ({c.name}), and '' is not one of the declared missing texts "
                       f"{declared}: add '' to data.missing or fill in the cell")
            else:
                msg = (f"{_show(v)} is not a number and not one of the declared missing texts "
                       f"{declared} ({c.name}): add it to data.missing or correct the cell")
            self.issue(msg, row=int(rows[i]), column=column)
        if len(hits) > MAX_REPORTED:
            self.issue(f"and {len(hits) - MAX_REPORTED} more cells that are not numbers")

    def duplicate_pairs(self, pos, char_names, process, pair, scope, spec_r, rows) -> None:
        if self.ds.pair is None or not len(pos):
            return
        frame = pd.DataFrame({"c": char_names, "p": process[pos], "k": pair[pos],
                              "r": rows[pos]})
        live = (scope[pos] == "") & (spec_r == "") & (frame["k"] != "").to_numpy()
        frame = frame[live]
        dup = frame[frame.duplicated(["c", "p", "k"], keep=False)]
        if dup.empty:
            return
        groups = dup.groupby(["p", "k"], sort=False)
        long = self.ds.layout == "long"
        for n, ((proc, key), g) in enumerate(groups):
            if n == MAX_REPORTED:
                self.issue(f"and {groups.ngroups - MAX_REPORTED} more duplicate pair keys",
                           column=self.ds.pair)
                break
            rs = sorted(set(g["r"].tolist()))
            what = f" ({', '.join(dict.fromkeys(g['c']))})" if long else ""
            self.issue(f"pair key {_show(key)} appears more than once for the {proc} process{what}"
                       f" (rows {', '.join(str(r) for r in rs)}): a key pairs one old row with "
                       "one new row", row=rs[0], column=self.ds.pair)


def _file_info(spec: Spec, table: pd.DataFrame, sheet: _Sheet, raw: bytes) -> DataFileInfo:
    used = table.loc[~table["excluded"], "source_row"]
    rows_used = int(used.nunique())
    reasons = table.loc[table["excluded"], "exclusion_reason"].value_counts()
    exclusions = tuple(sorted(((str(r), int(n)) for r, n in reasons.items()),
                              key=lambda x: (-x[1], x[0])))
    return DataFileInfo(
        path=spec.data.file_text, resolved_path=str(spec.data.file),
        sha256=hashlib.sha256(raw).hexdigest(), size=len(raw), encoding=sheet.encoding,
        rows_read=sheet.rows_read, rows_used=rows_used,
        rows_excluded=sheet.rows_read - rows_used, exclusions=exclusions, sheet=sheet.sheet,
        origin=sheet.origin,
    )


SHOWN_CHARS = 80  # a cell's text in a message is cut to this many characters


def _cut(value: object, limit: int = SHOWN_CHARS) -> str:
    """A cell's text for a message, cut when long ("ab…  (1,048,576 characters)")."""
    s = value if isinstance(value, str) else str(value)
    if len(s) <= limit:
        return s
    return f"{s[:limit]}… ({len(s):,} characters)"


def _show(value: object, limit: int = SHOWN_CHARS) -> str:
    """A cell's text quoted for a message (as ``repr``), cut when long: a bad cell of a
    megabyte must not become a megabyte of error message."""
    s = value if isinstance(value, str) else str(value)
    if len(s) <= limit:
        return repr(s)
    return f"{s[:limit]!r}… ({len(s):,} characters)"


def _near(word: str, options: Sequence[str]) -> str | None:
    lowered = {o.lower(): o for o in options}
    if word.lower() in lowered:
        return lowered[word.lower()]
    near = difflib.get_close_matches(word, list(options), n=1, cutoff=0.6)
    return near[0] if near else None


def _list(values: Sequence[str]) -> str:
    return ", ".join(repr(v) for v in values)


def _column_letter(index: int) -> str:
    letters = ""
    index += 1
    while index:
        index, rem = divmod(index - 1, 26)
        letters = chr(65 + rem) + letters
    return letters

