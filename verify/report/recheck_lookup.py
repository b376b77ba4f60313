"""Sort-proof lookups: the used values read by key from the measurements table.

The values are read by key, not by row, so that an auditor may sort or filter the
measurements table: each used value is looked up once, into helper rows after the body of the
recheck sheet, with ``SUMIFS`` over the whole table's columns (characteristic, process, Used =
TRUE and the stored production order, or the pair key for matched pairs, exactly one row
matching each key), in the engine's production order; lot means, lot sizes and lot ranges use
criteria over the same columns. Helper rows are numbered once the body ends: until then a
formula names helper row ``i`` by the token :func:`tok` ``(i)``.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass

import pandas as pd

from ..model import Evaluation
from .formulas import as_written, criteria_safe, criterion, string_literal
from .layout import (
    LOT_COLUMN,
    VALUE_COLUMN,
    MeasurementLayout,
    object_column,
    production_positions,
)
from .layout import used_flags as used_flags  # (re-exported: the recheck blocks use it)
from .recheck_sheet import Sheet, as_text

HELPER_HEADING = "Values looked up from the measurements table"
ORDER_BASE = 1  # the measurements sheet counts production order from 1 (a reader's count)
TOKEN_MARK = "\u27e6"  # how every token starts
TOKEN = re.compile(TOKEN_MARK + r"(\d+)\u27e7")  # a helper row's index, numbered once the body ends


def tok(i: int) -> str:
    return f"{TOKEN_MARK}{i}\u27e7"


@dataclass(frozen=True)
class Table:
    """The measurements table as whole columns, for lookups that survive a sort."""

    sheet: str
    last: int  # the last data row
    letters: Mapping[str, str]  # column key -> letter
    by_file: bool  # more than one source file: the file joins the key

    def col(self, key: str) -> str:
        letter = self.letters[key]
        return f"'{self.sheet}'!${letter}$2:${letter}${self.last}"

    def criteria(self, name: str, process: str) -> str:
        """The criteria pairs selecting the used values of one characteristic and process."""
        return (f"{self.col('characteristic')},{criterion(name)},{self.col('process')},"
                f"{string_literal('=' + process)},{self.col('used')},TRUE")


def _distinct_text(column) -> list[str]:
    """``[str(x) for x in dict.fromkeys(column.astype(str))]``: the column's distinct values
    as text, in order of first appearance (each distinct value converted once)."""
    if isinstance(column.dtype, pd.StringDtype) and not column.hasnans:
        # text without a missing value: astype(str) leaves every value as it is (a missing
        # one would stay missing, then read "nan" beside any "nan" text: the route below)
        return [str(x) for x in pd.unique(column.to_numpy(dtype=object))]
    return [str(x) for x in dict.fromkeys(column.drop_duplicates().astype(str))]


def sort_proof_table(layout: MeasurementLayout, max_rows: int) -> Table | None:
    """The table when every lookup key is safe to use and it holds at most ``max_rows`` rows,
    else None (fixed ranges are used)."""
    from openpyxl.utils import get_column_letter

    from .layout import MEASUREMENT_HEADERS

    t = layout.table
    if len(layout.sheets) != 1 or len(t) == 0 or len(t) > max_rows:
        return None
    names = _distinct_text(t["characteristic"])
    if not criteria_safe(names) or any(n.startswith("=") for n in names):
        return None
    files = _distinct_text(t["source_file"])
    if len(files) > 1 and not criteria_safe(files):
        return None
    used = t[t["used"]]
    if used.duplicated(["source_file", "characteristic", "process", "order"]).any():
        return None  # the key would not name one value
    letters = {key: get_column_letter(j) for j, (key, _) in enumerate(MEASUREMENT_HEADERS, 1)}
    return Table(layout.sheets[0], len(t) + 1, letters, len(files) > 1)


@dataclass(frozen=True)
class Helper:
    """Helper rows (appended after the body) holding one sample's values, looked up by key.

    Column B holds the value, column G the lot as text, in the engine's production order;
    ``ref`` mirrors :meth:`Block.ref` so the formulas read helpers as they read blocks.
    """

    first: int  # index into the helper rows
    last: int
    sheet: str = ""

    @property
    def count(self) -> int:
        return self.last - self.first + 1

    def ref(self, column: str = VALUE_COLUMN, lo: int = 0, hi: int = 0) -> str:
        c = "G" if column == LOT_COLUMN else "B"
        return f"${c}${tok(self.first + lo)}:${c}${tok(self.last + hi)}"


def lookup(tbl: Table, name: str, process: str, row) -> str:
    """SUMIFS of the one used value with this key: exact, since exactly one row matches."""
    f = (f"SUMIFS({tbl.col('value')},{tbl.criteria(name, process)},{tbl.col('order')},"
         f"{int(row['order']) + ORDER_BASE}")
    if tbl.by_file:
        f += f",{tbl.col('source_file')},{criterion(str(row['source_file']))}"
    return f + ")"


def lot_cell(lot: str) -> str | None:
    """A helper row's lot as the cell must hold it: a text starting with "=" is written as a
    formula giving that text (a plain cell starting with "=" would be a formula)."""
    lot = as_written(lot)
    return "=" + string_literal(lot) if lot.startswith("=") else (lot or None)


def helper_rows(sh: Sheet, name: str, process: str, t: pd.DataFrame, pos, label) -> Helper:
    """Helper rows looking up the rows at positions ``pos`` of the evaluation's table ``t``."""
    first = len(sh.helpers)
    # each row as a mapping of the columns read, with the values ``iterrows()`` gives (object
    # conversion: Python ints, floats and strings), without a Series per row
    keys = [k for k in ("order", "source_row", "source_file", "lot") if k in t.columns]
    columns = [object_column(t, k)[pos] for k in keys]
    tbl = sh.table
    # lookup()'s formula, its parts common to the sample made once (the same text)
    head = (f"=SUMIFS({tbl.col('value')},{tbl.criteria(name, process)},{tbl.col('order')},")
    files: dict = {}  # a source file -> its criterion part (by_file)
    lots: dict = {}  # a lot -> its cell
    append = sh.helpers.append
    for values in zip(*columns, strict=True):
        r = dict(zip(keys, values, strict=True))
        f = f"{head}{int(r['order']) + ORDER_BASE}"
        if tbl.by_file:
            file = str(r["source_file"])
            part = files.get(file)
            if part is None:
                part = files[file] = f",{tbl.col('source_file')},{criterion(file)}"
            f += part
        lot = str(r["lot"])
        cell = lots.get(lot, _NO_LOT)
        if cell is _NO_LOT:
            cell = lots[lot] = lot_cell(lot)
        append([as_text(label(r)), f + ")", None, None, None, None, cell])
    return Helper(first, len(sh.helpers) - 1)


_NO_LOT = object()


def used_block(sh: Sheet, ev: Evaluation, layout: MeasurementLayout, name: str,
               process: str):
    """Where the used values of one characteristic and process are read from: sort-proof
    helper rows in production order when possible, else the block on the measurements sheet."""
    block = layout.used.get((name, process))
    if sh.table is None:
        return block
    key = (name, process)
    if key not in sh.samples:
        t = ev.measurements.table
        # the rows of (name, process) from the table's cached groups: a mask over the whole
        # table per characteristic would cost characteristics x rows
        pos = production_positions(t, name, process)  # as the engine orders
        if len(pos) == 0:
            sh.samples[key] = None
        else:
            sh.samples[key] = helper_rows(
                sh, name, process, t, pos,
                lambda r: f"{name}, {process}, production order {int(r['order']) + ORDER_BASE}, "
                          f"source row {int(r['source_row'])}")
    return sh.samples[key]
