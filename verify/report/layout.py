"""Where things sit in the workbook: sheet names and the measurements sheet's row blocks.

The measurements sheet and the recheck sheet's live formulas must agree on which rows hold
which values, so both read the layout from here. Rows are 1-based Excel row numbers; the header
is row 1 of each measurements sheet.

Ordering of the measurements sheet: by characteristic (spec order), then process (old, new,
then rows in neither process), then used rows before excluded ones; within used rows of a paired
characteristic, matched pairs first sorted by pair key (so the old and new blocks align row by
row), then unmatched ones; otherwise production order.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..checks import kinds
from ..model import Evaluation

SUMMARY_SHEET = "Decision"
MEASUREMENTS_SHEET = "Measurements"
SPEC_SHEET = "Spec text"
AUDIT_SHEET = "Audit trail"
RECHECK_SHEET = "Recheck"
EXCEL_MAX_ROWS = 1_048_576

# Column order of the measurements sheet (header texts) and their table keys.
MEASUREMENT_HEADERS = (
    ("characteristic", "Characteristic"),
    ("process", "Process"),
    ("lot", "Lot"),
    ("pair", "Pair key"),
    ("value", "Value"),
    ("used", "Used"),
    ("exclusion_reason", "Exclusion reason"),
    ("source_file", "Source file"),
    ("source_row", "Source row"),
    ("order", "Production order"),
)
# Traceability columns after those (when the spec asks for them), then data.keep's columns.
TRACE_HEADERS = (
    ("part", "Part"),
    ("process_value", "Process in the data"),
    ("original", "Original text"),
    ("correction", "Correction (reason, by)"),
)
VALUE_COLUMN = "E"  # the column letter of "Value" in MEASUREMENT_HEADERS
LOT_COLUMN = "C"


def measurement_headers(table: pd.DataFrame) -> tuple[tuple[str, str], ...]:
    """The measurements sheet's columns for this table: the fixed ones, then traceability."""
    out = list(MEASUREMENT_HEADERS)
    out += [(k, label) for k, label in TRACE_HEADERS if k in table.columns]
    taken = {label.casefold() for _, label in out}
    for col in table.columns:
        if str(col).startswith("keep:"):
            label = str(col)[5:]
            if label.casefold() in taken:  # an Excel table needs distinct column names
                label += " (kept)"
            taken.add(label.casefold())
            out.append((str(col), label))
    return tuple(out)


@dataclass(frozen=True)
class Block:
    """A contiguous run of rows on one measurements sheet."""

    sheet: str
    first: int
    last: int

    @property
    def count(self) -> int:
        return self.last - self.first + 1

    def ref(self, column: str = VALUE_COLUMN) -> str:
        """An absolute reference such as ``'Measurements'!$E$2:$E$41``."""
        return f"'{self.sheet}'!${column}${self.first}:${column}${self.last}"


@dataclass(frozen=True)
class MeasurementLayout:
    table: pd.DataFrame  # the rows in sheet order, with a "used" column and "sheet"/"row" columns
    sheets: tuple[str, ...]  # the measurements sheet(s), in order
    used: dict  # (characteristic, process) -> Block of used rows (None when they span sheets)
    paired: dict  # characteristic -> (Block old, Block new) of matched pairs, aligned by key


def _sheet_name(i: int) -> str:
    return MEASUREMENTS_SHEET if i == 0 else f"{MEASUREMENTS_SHEET} ({i + 1})"


_POSITIONS: dict[int, tuple] = {}


def used_positions(table: pd.DataFrame, used: np.ndarray) -> dict:
    """(characteristic, process) -> positions (ascending) of the used rows of ``table``.

    Computed once per table (by identity): the sheets ask for every characteristic and process
    in turn, and a mask over the whole table per question would cost characteristics x rows.
    """
    hit = _POSITIONS.get(id(table))
    if hit is not None and hit[0] is table and hit[1] is used:
        return hit[2]
    groups = _groups(table, np.flatnonzero(used))
    if len(_POSITIONS) >= 8:
        _POSITIONS.clear()
    _POSITIONS[id(table)] = (table, used, groups)
    return groups


def _groups(table: pd.DataFrame, base: np.ndarray) -> dict:
    """``{k: base[v] for k, v in table.iloc[base].groupby(["characteristic", "process"],
    sort=False).indices.items()}``: the rows ``base`` (ascending positions) grouped by
    characteristic and process, a row with either missing left out, each group's positions
    ascending. Grouped on the two columns' codes (a pandas groupby on two text columns costs
    about three times as much on a nightly spec's table, asked twice a workbook)."""
    if len(base) == 0:
        return {}
    c_codes, c_keys = pd.factorize(table["characteristic"], sort=False)
    p_codes, p_keys = pd.factorize(table["process"], sort=False)
    c, p = c_codes[base], p_codes[base]
    keep = (c >= 0) & (p >= 0)  # (a missing value's code is -1)
    if not keep.all():
        base, c, p = base[keep], c[keep], p[keep]
        if len(base) == 0:
            return {}
    width = len(p_keys)
    key = c.astype(np.int64) * width + p
    return {(c_keys[k // width], p_keys[k % width]): base[seg] for k, seg in code_groups(key)}


def code_groups(codes: np.ndarray) -> Iterator[tuple[int, np.ndarray]]:
    """``(code, positions)`` for each distinct code of ``codes`` in increasing order, each
    group's positions ascending (a stable sort of the codes, cut where they change); a
    negative code (pandas' -1 for a missing value) is left out."""
    order = np.argsort(codes, kind="stable")
    cuts = np.flatnonzero(np.diff(codes[order])) + 1
    for seg in np.split(order, cuts):
        if len(seg) and codes[seg[0]] >= 0:
            yield int(codes[seg[0]]), seg


def used_rows(table: pd.DataFrame, used: np.ndarray, name: str, process: str) -> pd.DataFrame:
    """The used rows of one characteristic and process, in the table's order (as the mask
    ``(characteristic == name) & (process == process) & used`` selects them)."""
    pos = used_positions(table, used).get((name, process))
    return table.iloc[pos] if pos is not None else table.iloc[:0]


_FLAGS: dict[tuple[int, str], tuple] = {}


def used_flags(t: pd.DataFrame, column: str) -> np.ndarray:
    """The used-row flags of a table, one array per table (so the row groups are cached)."""
    hit = _FLAGS.get((id(t), column))
    if hit is None or hit[0] is not t:
        flags = t[column].to_numpy(dtype=bool)
        if column == "excluded":
            flags = ~flags
        if len(_FLAGS) >= 8:
            _FLAGS.clear()
        hit = _FLAGS[(id(t), column)] = (t, flags)
    return hit[1]


_COLUMNS: dict = {}


def object_column(t: pd.DataFrame, name: str) -> np.ndarray:
    """``t[name].to_numpy(dtype=object)`` (Python ints, floats and strings, as ``iterrows``
    gives them), made once per table."""
    hit = _COLUMNS.get((id(t), name))
    if hit is None or hit[0] is not t:
        if len(_COLUMNS) >= 32:
            _COLUMNS.clear()
        hit = _COLUMNS[(id(t), name)] = (t, t[name].to_numpy(dtype=object))
    return hit[1]


_PRODUCTION: dict[int, tuple] = {}


def production_positions(t: pd.DataFrame, name: str, process: str) -> np.ndarray:
    """The positions of the used rows of one characteristic and process of the evaluation's
    table ``t`` in production order: the rows
    ``used_rows(t, ~t["excluded"], name, process).sort_values(["order", "source_row"],
    kind="stable")`` holds, as positions (no DataFrame per question).

    Remembered per table (by identity) and per question: the charts and the recheck sheet ask
    for each characteristic and process in turn. The array is read-only (it is shared).
    """
    hit = _PRODUCTION.get(id(t))
    if hit is None or hit[0] is not t:
        if len(_PRODUCTION) >= 8:
            _PRODUCTION.clear()
        hit = _PRODUCTION[id(t)] = (t, {}, [])
    done = hit[1].get((name, process))
    if done is None:
        done = hit[1][(name, process)] = _production_order(t, name, process, hit[2])
        done.flags.writeable = False
    return done


def _production_order(t: pd.DataFrame, name: str, process: str, keys: list) -> np.ndarray:
    """:func:`production_positions` computed; ``keys`` keeps the table's order and source-row
    arrays once found (when both are integer columns)."""
    pos = used_positions(t, used_flags(t, "excluded")).get((name, process))
    if pos is None or len(pos) == 0:
        return np.zeros(0, dtype=np.intp)
    if not keys:
        order, source = t["order"], t["source_row"]
        integer = order.dtype.kind in "iu" and source.dtype.kind in "iu"
        keys.append((order.to_numpy(), source.to_numpy()) if integer else None)
    if keys[0] is not None:
        order, source = keys[0]
        # np.lexsort sorts by its last key first and is stable, as the pandas sort
        return pos[np.lexsort((source[pos], order[pos]))]
    sub = t.iloc[pos].reset_index(drop=True)
    return pos[sub.sort_values(["order", "source_row"], kind="stable").index.to_numpy()]


def _aligned_pairs(c) -> bool:
    """Whether a check of this characteristic reads its matched pairs as two aligned ranges
    (its kind's recheck hook says so from the check's settings, ``reads_aligned_pairs``): the
    sheet then lists the matched pairs of both processes sorted by pair key."""
    for k in kinds():
        settings = c.spec.checks.get(k.name)
        if settings is None or not k.has_hook("recheck"):
            continue
        ask = getattr(k.hook("recheck"), "reads_aligned_pairs", None)
        if ask is not None and ask(settings):
            return True
    return False


def _ranks(column: pd.Series, rank: dict, missing: int) -> np.ndarray:
    """``column.map(rank).fillna(missing).astype(int)``, looked up once per distinct value
    (a pandas map of a text column calls Python for every row)."""
    codes, uniques = pd.factorize(column, sort=False)
    per = np.array([*(rank.get(u, missing) for u in uniques), missing], dtype=int)
    return per[codes]  # (a missing value's code -1 takes the last entry)


def _sheet_order(evaluation: Evaluation, t: pd.DataFrame,
                 aligned: list[bool] | None = None) -> np.ndarray:
    """The positions of ``t``'s rows in sheet order: by characteristic (spec order), process
    (old, new, others), used before excluded, matched pairs first sorted by pair key (where a
    check reads aligned pairs), then production order and source row; stable.

    Sorted by numpy's stable lexsort on integer keys (the pair keys as their rank among the
    sorted distinct keys) when the order and source row are integer columns, as the stable
    multi-column pandas sort orders them; else by that pandas sort.
    """
    n = len(t)
    char_rank = {c.name: i for i, c in enumerate(evaluation.spec.characteristics)}
    proc_rank = {"old": 0, "new": 1}
    used = ~t["excluded"].astype(bool).to_numpy()
    keys = {
        "_c": _ranks(t["characteristic"], char_rank, len(char_rank)),
        "_p": _ranks(t["process"], proc_rank, 2),
        "_u": (~used).astype(int),
        # matched-pair rank: 0 for matched pairs (sorted by key), 1 otherwise
        "_m": np.ones(n, dtype=int),
        "_k": np.full(n, "", dtype=object),
    }
    paired = False
    if aligned is None:
        aligned = [_aligned_pairs(c) for c in evaluation.characteristics]
    for c, reads_pairs in zip(evaluation.characteristics, aligned, strict=True):
        if not reads_pairs:
            continue
        paired = True
        sel = (t["characteristic"] == c.name).to_numpy() & used & t["process"].isin(
            ["old", "new"]).to_numpy()
        sub = t.loc[sel]
        counts = sub.groupby("pair")["process"].nunique()
        matched = set(counts.index[counts == 2])
        is_matched = sel & t["pair"].isin(matched).to_numpy()
        keys["_m"][is_matched] = 0
        keys["_k"][is_matched] = t.loc[is_matched, "pair"].astype(str).to_numpy()
    order, source = t["order"], t["source_row"]
    if order.dtype.kind in "iu" and source.dtype.kind in "iu":
        sort_keys = [source.to_numpy(), order.to_numpy()]
        if paired:
            sort_keys += [np.unique(keys["_k"], return_inverse=True)[1].ravel(), keys["_m"]]
        sort_keys += [keys["_u"], keys["_p"], keys["_c"]]
        return np.lexsort(sort_keys)  # (by its last key first, stably)
    frame = pd.DataFrame({**keys, "order": order.to_numpy(), "source_row": source.to_numpy()})
    frame = frame.sort_values(["_c", "_p", "_u", "_m", "_k", "order", "source_row"],
                              kind="stable")
    return frame.index.to_numpy()


def _beside(t: pd.DataFrame, more: pd.DataFrame) -> pd.DataFrame:
    """``t.join(more)``: the columns of ``more`` beside ``t``'s, by index. Where both have the
    same index, each label once, and no column name in common (the tidy table and its trace
    columns), the frames are set side by side as they are (a third of the join's cost)."""
    if (t.index.equals(more.index) and t.index.is_unique
            and len(t.columns.intersection(more.columns)) == 0):
        return pd.concat([t, more], axis=1)
    return t.join(more)


def measurement_layout(evaluation: Evaluation, *, rows_per_sheet: int = EXCEL_MAX_ROWS - 1):
    """Order the tidy table for the sheet and find the blocks the recheck formulas use.

    ``rows_per_sheet`` data rows go on each sheet (Excel's limit less the header); beyond it the
    table continues on ``Measurements (2)`` and so on, never silently cut.
    """
    t = evaluation.measurements.table
    trace = getattr(evaluation.measurements, "trace", None)
    if trace is not None:  # part, process as written, corrections, kept columns
        t = _beside(t, trace)
    aligned = [_aligned_pairs(c) for c in evaluation.characteristics]  # (asked once each)
    t = t.iloc[_sheet_order(evaluation, t, aligned)].reset_index(drop=True)
    t["used"] = ~t["excluded"].astype(bool)

    n = len(t)
    idx = np.arange(n)
    sheet_no = idx // rows_per_sheet
    if n and n <= rows_per_sheet:
        t["sheet"] = [_sheet_name(0)] * n
    else:
        t["sheet"] = [_sheet_name(i) for i in sheet_no] if n else []
    t["row"] = idx % rows_per_sheet + 2
    sheets = tuple(_sheet_name(i) for i in range(int(sheet_no[-1]) + 1)) if n else (
        MEASUREMENTS_SHEET,
    )

    def block(mask) -> Block | None:
        rows = t.loc[mask]
        if rows.empty or rows["sheet"].nunique() != 1:
            return None
        first, last = int(rows["row"].iloc[0]), int(rows["row"].iloc[-1])
        if last - first + 1 != len(rows):
            return None
        return Block(rows["sheet"].iloc[0], first, last)

    sheet_arr = t["sheet"].to_numpy(dtype=object) if n else np.zeros(0, dtype=object)
    row_arr = t["row"].to_numpy() if n else np.zeros(0, dtype=np.int64)

    def block_at(pos) -> Block | None:
        # the same test as block(), on positions (ascending) instead of a mask
        if pos is None or len(pos) == 0 or (sheet_arr[pos] != sheet_arr[pos[0]]).any():
            return None
        first, last = int(row_arr[pos[0]]), int(row_arr[pos[-1]])
        if last - first + 1 != len(pos):
            return None
        return Block(sheet_arr[pos[0]], first, last)

    groups = used_positions(t, t["used"].to_numpy(dtype=bool))
    used: dict = {}
    paired: dict = {}
    for c, reads_pairs in zip(evaluation.characteristics, aligned, strict=True):
        for p in ("old", "new"):
            used[(c.name, p)] = block_at(groups.get((c.name, p)))
        if reads_pairs:
            sel = (t["characteristic"] == c.name) & t["used"]
            keys = t.loc[sel & (t["process"] == "old"), "pair"]
            keys_new = t.loc[sel & (t["process"] == "new"), "pair"]
            matched = set(keys) & set(keys_new)
            bo = block(sel & (t["process"] == "old") & t["pair"].isin(matched))
            bn = block(sel & (t["process"] == "new") & t["pair"].isin(matched))
            if bo is not None and bn is not None and bo.count == bn.count:
                paired[c.name] = (bo, bn)
    return MeasurementLayout(table=t, sheets=sheets, used=used, paired=paired)
