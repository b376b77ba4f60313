"""The text reader: CSV/TSV bytes -> a :class:`~verify.data.cells._Sheet` of text cells.

The delimiter is sniffed from the header line among comma, semicolon and tab; UTF-8 with or
without BOM, UTF-16 with BOM, Windows-1252 and Latin-1 as reported fallbacks, or exactly the
declared ``data.encoding``. Rows with more or fewer cells than the header are errors naming
the row.
"""

from __future__ import annotations

import codecs
import csv
import io

import numpy as np
import pandas as pd

from ..errors import DataError, DataIssue
from .cells import MAX_REPORTED, _Sheet

DELIMITERS = (",", ";", "\t")


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
        # object columns of the cells' text, converted to the text dtype once, all columns
        # together, where they are stripped (_stripped)
        frame = pd.read_csv(io.StringIO(text), sep=delimiter, header=None, dtype=object,
                            keep_default_na=False, na_filter=False, skip_blank_lines=False,
                            quotechar='"', engine="c")
    except pd.errors.EmptyDataError:
        raise DataError([DataIssue(shown, "the file is empty: it needs a header row",
                                   row=1)]) from None
    except (pd.errors.ParserError, ValueError) as exc:
        raise DataError(_ragged_rows(text, delimiter, shown, str(exc))) from None
    grid = _stripped(frame)  # rows x columns of str, as pandas strips text
    short = _short_rows(grid, text, delimiter, shown)
    if short:
        raise DataError(short)
    header = grid[0].tolist() if len(grid) else []
    body = grid[1:]
    rows = np.arange(2, len(body) + 2)
    blank = (body == "").all(axis=1) if body.shape[1] else np.ones(len(body), bool)
    if blank.any():
        body = body[~blank]
    notes = list(notes)
    if delimiter != "," and not tab:
        notes.append(f"{shown}: columns separated by {_delim_name(delimiter)}")
    # object columns of str: the tidy step reads them as object arrays (a text dtype would
    # convert every column to it and back)
    cells = pd.DataFrame(body, columns=range(body.shape[1]), dtype=object)
    return _Sheet(header=header, cells=cells,
                  rows=rows[~blank], rows_read=int((~blank).sum()), encoding=encoding,
                  typed=False, notes=notes)


def _stripped(frame: pd.DataFrame) -> np.ndarray:
    """The frame's cells as a 2-D object array of text, each stripped by ``str.strip`` of
    pandas' text dtype (what ``frame.fillna("")[col].astype(str).str.strip()`` gives, column by
    column: a missing cell, where a row has fewer cells than the header, is empty text).

    The columns are converted and stripped as one series (one call instead of one per column:
    a layout of 300 columns paid 300 calls).
    """
    n, k = frame.shape
    if k == 0:
        return np.empty((n, 0), dtype=object)
    flat = frame.to_numpy(dtype=object).ravel(order="F")  # column after column
    missing = pd.isna(flat)
    if missing.any():
        flat = flat.copy()
        flat[missing] = ""
    text = pd.Series(flat, dtype=object).astype(str).str.strip()
    return text.to_numpy(dtype=object).reshape(k, n).T


def _delim_name(d: str) -> str:
    return {",": "commas", ";": "semicolons", "\t": "tabs"}[d]


def _short_rows(grid: np.ndarray, text: str, delimiter: str, shown: str) -> list[DataIssue]:
    """Rows with fewer cells than the header (pandas pads them silently with empty cells,
    which would read as "not measured"). The csv module counts the cells only when some row
    ends in an empty cell, so the common case costs nothing. ``grid``: rows x columns."""
    if grid.shape[0] < 2 or grid.shape[1] < 2:
        return []
    last = grid[1:, -1] == ""
    if not last.any():
        return []
    width = grid.shape[1]
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
