"""What every reader and the tidy-making share: the :class:`_Sheet` of cells a reader gives,
the text of a spreadsheet cell, and the pieces of a message (a cell's text cut and quoted, a
near name, a column letter)."""

from __future__ import annotations

import datetime as _dt
from collections.abc import Sequence
from dataclasses import dataclass, field
from functools import cache

import numpy as np
import pandas as pd

MAX_REPORTED = 20  # cells reported per kind of problem before "and N more"
MAX_ABS_VALUE = 1e100  # larger magnitudes overflow in sums of squares
NOT_MEASURED = "not measured"
NEITHER_LIST = "lot in neither list"


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


_PANDAS_MAJOR = int(pd.__version__.split(".")[0])


def _text_dtype():
    """The dtype ``Series.astype(str)`` gives an object column now: pandas' text dtype (an
    extension dtype) from pandas 3 on, ``object`` before. It follows pandas' options (the text
    storage, pyarrow or python; pandas 2's ``future.infer_string``), so it is found once per
    setting of those, not once per process."""
    storage = pd.get_option("mode.string_storage")
    # (pandas 3 always infers its text dtype and deprecates the option: not read there)
    infer = pd.get_option("future.infer_string") if _PANDAS_MAJOR < 3 else True
    return _text_dtype_for((storage, infer))


@cache
def _text_dtype_for(_options: tuple) -> object:
    return pd.Series(["a"], dtype=object).astype(str).dtype


def text_column(values: np.ndarray):
    """An object array of cells as the column ``pd.Series(values, dtype=object).astype(str)``
    holds (the same conversion: the text dtype's ``_from_sequence``), without making the Series
    and converting it in place in a frame (a frame of 10 columns paid more for that than for
    its cells)."""
    dtype = _text_dtype()
    if isinstance(dtype, pd.api.extensions.ExtensionDtype):
        return pd.array(values, dtype=dtype)
    return pd.Series(values, dtype=object).astype(str)


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
    import difflib  # only when a name is not found: not at start-up

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
