"""The tidy table as the analysis reads it: one characteristic and process at a time
(:func:`analysis_values`, lot means for ``unit_of_analysis: lot``), matched pairs
(:func:`paired_values`) and the new process's values per stream (:func:`stream_values`)."""

from __future__ import annotations

import math
import weakref
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
import pandas as pd

from ..model import Measurements
from ..spec_model import Spec
from ..stats._frozen import fast_init


@fast_init
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
    values, lots = part_values(measurements, characteristic_name, process)
    if spec.unit_of_analysis == "lot":
        # lot means, one per lot in order of the lot's first measurement. Each sum is
        # correctly rounded (math.fsum): lot means differ only in late digits, and their spread
        # must not depend on the order of summation.
        acc: dict[str, list[float]] = {}
        for x, lot in zip(values.tolist(), lots, strict=True):
            acc.setdefault(lot, []).append(x)
        means = np.array([math.fsum(v) / len(v) for v in acc.values()], dtype=float)
        first = acc
        return AnalysisValues(values=means, lots=tuple(first), unit="lot",
                              n_parts=int(values.size))
    return AnalysisValues(values=values, lots=lots, unit="part", n_parts=int(values.size))


def part_values(measurements: Measurements, characteristic_name: str, process: str
                ) -> tuple[np.ndarray, tuple[str, ...]]:
    """The used part values of one characteristic and process in production order (an array of
    their own) and the lot of each: :func:`analysis_values` per part, without its checks of the
    names (an unknown characteristic or process has no values)."""
    ix = _analysis_index(measurements.table)
    lo, hi = ix.groups.get((characteristic_name, process), (0, 0))
    if ix.interned is None:
        return ix.value[lo:hi].copy(), tuple(ix.lot[lo:hi].tolist())
    # text lots: equal tuples are one object (see _Index), found by the lots' codes (one text
    # per code: equal codes, equal texts) without making and hashing a tuple of text first
    codes = ix.lot_codes[lo:hi]
    key = codes.tobytes()
    lots = ix.interned.get(key)
    if lots is None:
        lots = ix.interned[key] = tuple(ix.lot_names[codes].tolist())
    return ix.value[lo:hi].copy(), lots


class _Index:
    """The used measurements as numpy arrays, sorted by (characteristic, process, production
    order, source row), with the slice of each (characteristic, process): an evaluation reads
    every characteristic and process in turn, so the table is gathered once, not filtered per
    call. The pair keys, which only :func:`paired_values` reads, are taken on first use. The
    index is built once per table and kept: the tidy table is read as loaded, never changed in
    place afterwards (a table changed in place would be read partly as it was).

    ``interned`` (None unless every lot is text) gives :func:`part_values` one tuple object for
    each run of lots it has read (a layout measures its characteristics on the same parts):
    the statistics then know a stream's lots by identity (``stats.samples.group_codes``, the
    process summaries' lots as text), without comparing their labels again. Equal tuples of
    text are interchangeable (equal only if the same text); labels of other types are not
    (1, 1.0 and True are equal, their text is not), so those tuples are each their own."""

    __slots__ = ("value", "lot_names", "lot_codes", "order", "source_row", "groups", "interned",
                 "_lot", "_table", "_rows", "_pair", "_stream")

    def __init__(self, table: pd.DataFrame, cols: _Columns, rows: np.ndarray, groups: dict,
                 order: np.ndarray, source_row: np.ndarray) -> None:
        self._table, self._rows, self._pair, self._stream = table, rows, None, None
        self.value = cols.value[rows]
        if cols.lot_text is None:
            self._lot = table["lot"].to_numpy(dtype=object)[rows]
            self.lot_names = self.lot_codes = self.interned = None
        else:  # text lots: each row's code into the distinct texts (lot: the texts, on demand)
            self._lot = None
            self.lot_names = cols.lot_text[0]  # object array of str, each text once
            self.lot_codes = cols.lot_text[1][rows]
            self.interned = {}  # the lots' codes as bytes -> their tuple of text
        self.order = order  # (of the rows given, in their order)
        self.source_row = source_row
        self.groups = groups  # (characteristic, process) -> (start, stop)

    @property
    def lot(self) -> np.ndarray:
        """The lot of each measurement (object array; of str for text lots: _text_objects'
        array, the rows' codes taken first)."""
        if self._lot is None:
            self._lot = self.lot_names[self.lot_codes]
        return self._lot

    @property
    def pair(self) -> np.ndarray:
        """The pair key of each measurement (object array of str)."""
        if self._pair is None:
            self._pair = self._table["pair"].to_numpy(dtype=object)[self._rows]
        return self._pair

    @property
    def stream(self) -> np.ndarray:
        """The ``data.stream`` value of each measurement as text (object array of str)."""
        if self._stream is None:
            self._stream = self._table["stream"].astype(str).to_numpy(dtype=object)[self._rows]
        return self._stream


_INDEX_CACHE: dict[int, tuple] = {}


def _analysis_index(table: pd.DataFrame) -> _Index:
    hit = _INDEX_CACHE.get(id(table))
    if hit is not None and hit[0] is table:
        return hit[1]
    cols = _columns(table)
    used = ~cols.excluded
    char_codes, char_names = cols.characteristic
    proc_codes, proc_names = cols.process
    width = max(1, len(proc_names))
    code = char_codes.astype(np.int64) * width + proc_codes
    order, source_row = cols.order, cols.source_row
    rows = None  # every row used: the rows are the sort itself
    if not np.logical_and.reduce(used):
        rows = np.flatnonzero(used)
        code, order, source_row = code[rows], order[rows], source_row[rows]
    # one stable sort: by group, then production order, then source row (ties keep table order)
    sort = np.arange(code.size) if _in_order(code, order, source_row) \
        else np.lexsort((source_row, order, code))
    code_sorted = code[sort]
    starts = np.flatnonzero(np.concatenate(([True], code_sorted[1:] != code_sorted[:-1]))) \
        if code_sorted.size else np.zeros(0, dtype=np.intp)
    stops = np.append(starts[1:], code_sorted.size)
    # (characteristic, process) -> (start, stop), in the groups' order: each name made text
    # once, not once per group, and the pairs zipped at C speed (the same keys and slices as
    # one (str(name), str(name)) -> (start, stop) per group)
    first = code_sorted[starts]
    chars = list(map(str, char_names)).__getitem__
    procs = list(map(str, proc_names)).__getitem__
    groups = dict(zip(zip(map(chars, (first // width).tolist()),
                          map(procs, (first % width).tolist()), strict=True),
                      zip(starts.tolist(), stops.tolist(), strict=True), strict=True))
    index = _Index(table, cols, sort if rows is None else rows[sort], groups, order[sort],
                   source_row[sort])
    if len(_INDEX_CACHE) >= 8:
        _INDEX_CACHE.clear()
    _INDEX_CACHE[id(table)] = (table, index)
    return index


def _in_order(code: np.ndarray, order: np.ndarray, source_row: np.ndarray) -> bool:
    """Whether the rows are already sorted by (code, order, source_row), each pair of
    neighbours in order: then the stable sort, ``np.lexsort((source_row, order, code))``, is
    the identity (equal keys keep their places), which the loading's rows, sorted by
    characteristic in production order, usually are (a check costs a fraction of the sort)."""
    if code.size < 2:
        return True
    c0, c1 = code[:-1], code[1:]
    o0, o1 = order[:-1], order[1:]
    # the first key rises, or stays and the second rises, or both stay and the third does not
    # fall
    ok = (c1 > c0) | ((c1 == c0) & ((o1 > o0) | ((o1 == o0) & (source_row[1:] >= source_row[:-1]))))
    return bool(np.logical_and.reduce(ok))


class _Columns(NamedTuple):
    """The columns of a tidy table the index reads, as arrays: ``characteristic`` and
    ``process`` as (integer codes, the names they stand for), numbered as pyarrow's dictionary
    encoding numbers them (:func:`_factorized`: in order of first appearance, one code per
    text present), ``lot_text`` as :func:`_text_codes` gives it (None unless every lot is
    text)."""

    excluded: np.ndarray  # bool
    characteristic: tuple[np.ndarray, list]
    process: tuple[np.ndarray, list]
    order: np.ndarray  # int64
    source_row: np.ndarray  # int64
    value: np.ndarray  # float64
    lot_text: tuple[np.ndarray, np.ndarray] | None


def _read_columns(table: pd.DataFrame) -> _Columns:
    """The index's columns read from the table (the plain route)."""
    return _Columns(
        excluded=table["excluded"].to_numpy(dtype=bool),
        characteristic=_factorized(table["characteristic"]),
        process=_factorized(table["process"]),
        order=table["order"].to_numpy(dtype=np.int64),
        source_row=table["source_row"].to_numpy(dtype=np.int64),
        value=table["value"].to_numpy(dtype=float),
        lot_text=_text_codes(table["lot"]))


# id(table) -> (a weak reference to the table, its _Columns), given by the loading for the
# table it has just built and kept while the table lives (a benchmark or a batch run loads its
# tables before evaluating them; a bounded store would have dropped most)
_BUILT: dict[int, tuple[weakref.ref, _Columns]] = {}


def _columns(table: pd.DataFrame) -> _Columns:
    """The index's columns of ``table``: those the loading gave when it built the table
    (:func:`built_with`), else read from it (:func:`_read_columns`)."""
    hit = _BUILT.get(id(table))
    if hit is not None and hit[0]() is table:
        return hit[1]
    return _read_columns(table)


def _drop_built(key: int, ref: weakref.ref) -> None:
    """A lent table's entry gone with the table (only its own entry: by then the id may be
    another table's)."""
    hit = _BUILT.get(key)
    if hit is not None and hit[0] is ref:
        del _BUILT[key]


def built_with(table: pd.DataFrame, *, excluded: np.ndarray, characteristic: tuple,
               process: tuple, lot: tuple, order: np.ndarray, source_row: np.ndarray,
               value: np.ndarray) -> None:
    """Remember the arrays the loading has just built ``table`` from, so that the evaluation's
    index need not read its columns back (each read of a column makes a Series, and pyarrow's
    dictionary encoding of a text column hashes every row: about two thirds of the index's
    cost), where the loading has them for little: the characteristics' numbers are its own,
    and a wide layout's lots and processes are one per sheet row, not one per measurement.

    ``characteristic``, ``process`` and ``lot``: (codes, names) with ``names[codes]`` the
    column's texts row by row, as the table was given them (``lot``'s names each a different
    text); ``excluded``, ``order``, ``source_row``, ``value``: the arrays the table's columns
    were made from (as the columns hold them: bool, int64, int64, float64). The codes of the
    characteristics and processes are renumbered here as the plain route numbers them
    (:func:`_first_seen`), so that the index is the same, array for array; the lots' codes
    need not be (the index keeps their texts only). Where a name is not a ``str`` (the table
    holds its text, or a missing value), nothing is remembered and the index reads the table.
    Kept while the table lives; the table must not change afterwards (as the index already
    assumes)."""
    char = _first_seen(*characteristic)
    proc = _first_seen(*process)
    lot_codes, lot_names = lot
    if char is None or proc is None or not all(type(v) is str for v in lot_names):
        return
    key = id(table)
    _BUILT[key] = (weakref.ref(table, lambda ref: _drop_built(key, ref)), _Columns(
        excluded, char, proc, order, source_row, value,
        (np.array(lot_names, dtype=object), lot_codes)))


def _first_seen(codes: np.ndarray, names) -> tuple[np.ndarray, list] | None:
    """``codes`` (int64, >= 0) into ``names`` numbered as :func:`_factorized` numbers the
    texts ``names[codes]``: equal names one code, the names in order of first appearance, only
    those present (int64 codes, which the index reads as it reads pyarrow's int32 ones: the
    same integers). None where a name present is not a ``str``."""
    present = np.flatnonzero(np.bincount(codes, minlength=len(names)))
    if codes.size > 1 and not np.logical_and.reduce(codes[1:] >= codes[:-1]):
        # in order of first appearance (codes in rising order, as the loading sorts the rows
        # by characteristic, appear in their own order): each one's first row found by a
        # scan where there are few (the processes), else by a sort
        first = ([int(np.argmax(codes == c)) for c in present.tolist()] if present.size <= 4
                 else np.unique(codes, return_index=True)[1])
        present = present[np.argsort(first)]
    one: dict[str, int] = {}  # each text present -> its code, in order of first appearance
    renumber = np.zeros(len(names), dtype=np.int64)
    for c in present.tolist():
        v = names[c]
        if type(v) is not str:
            return None
        renumber[c] = one.setdefault(v, len(one))
    return renumber[codes], list(one)


def _factorized(column: pd.Series) -> tuple[np.ndarray, list]:
    """Integer codes of a text column's values and the names they stand for, as pd.factorize
    gives them, without a Python string per row (as ``to_numpy(object)`` and pd.factorize
    make): pyarrow's dictionary encoding for pandas' pyarrow text storage, else the array's own
    factorize. Which code a name gets does not matter to the index (only the groups do)."""
    arr = column.array
    if isinstance(arr, pd.arrays.ArrowStringArray):
        enc = arr.__arrow_array__().combine_chunks().dictionary_encode()
        if enc.null_count == 0:
            return enc.indices.to_numpy(zero_copy_only=False), enc.dictionary.to_pylist()
    codes, names = arr.factorize()
    return codes, names.tolist()


def _text_objects(column: pd.Series) -> np.ndarray:
    """A text column as an object array of str, ``column.to_numpy(dtype=object)``: for pandas'
    pyarrow text storage without missing values, each distinct text made a str once (pyarrow's
    dictionary encoding) and shared by its rows, rather than a str per row."""
    text = _text_codes(column)
    if text is None:
        return column.to_numpy(dtype=object)
    return text[0][text[1]]


def _text_codes(column: pd.Series) -> tuple[np.ndarray, np.ndarray] | None:
    """For pandas' pyarrow text storage without missing values, the distinct texts (an object
    array of str, each made once by pyarrow's dictionary encoding) and each row's code into
    them; None for any other column."""
    arr = column.array
    if isinstance(arr, pd.arrays.ArrowStringArray):
        enc = arr.__arrow_array__().combine_chunks().dictionary_encode()
        if enc.null_count == 0:
            names = np.array(enc.dictionary.to_pylist(), dtype=object)
            return names, enc.indices.to_numpy(zero_copy_only=False)
    return None


def stream_values(measurements: Measurements, characteristic: str) -> dict[str, object]:
    """Used new-process values of one characteristic per stream, in production order.

    Streams are in order of first appearance in the data. Empty when the table has no
    ``stream`` column (no data.stream declared).
    """
    t = measurements.table
    if "stream" not in t.columns:
        return {}
    # the index's rows of this characteristic's used new-process measurements, in the stable
    # order of (order, source_row) (one slice, not a scan of the table per characteristic)
    ix = _analysis_index(t)
    lo, hi = ix.groups.get((characteristic, "new"), (0, 0))
    streams = ix.stream[lo:hi]
    values = ix.value[lo:hi]
    out: dict[str, object] = {}
    for name in dict.fromkeys(streams.tolist()):
        out[name] = np.asarray(values[streams == name])
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
