"""The evaluation's index from the arrays the loading lent (data.values.built_with, given by
data.tidy for a wide layout) against the index read from the table's columns, the plain route
(data.values._read_columns): the same arrays, the same groups, whatever the layout."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from verify.data import load_measurements
from verify.data import values as V
from verify.spec import load_spec

pytest.importorskip("pyarrow", reason="the columns are lent for pandas' pyarrow text storage")


def _index_both_ways(table: pd.DataFrame):
    """The index built from what the loading lent, and from the table's columns alone."""
    V._INDEX_CACHE.pop(id(table), None)
    lent = V._analysis_index(table)
    kept = V._BUILT.pop(id(table))
    try:
        V._INDEX_CACHE.pop(id(table), None)
        plain = V._analysis_index(table)
    finally:
        V._BUILT[id(table)] = kept
        V._INDEX_CACHE.pop(id(table), None)
    return lent, plain


def _assert_same_columns(table: pd.DataFrame) -> None:
    lent, plain = V._BUILT[id(table)][1], V._read_columns(table)
    for name in ("excluded", "order", "source_row", "value"):
        a, b = getattr(lent, name), getattr(plain, name)
        assert a.dtype == b.dtype and a.tobytes() == b.tobytes(), name
    for name in ("characteristic", "process"):  # numbered alike: codes and names
        (ca, na), (cb, nb) = getattr(lent, name), getattr(plain, name)
        assert ca.tolist() == cb.tolist() and na == nb, name
    # the lots: the same text row by row, each text one str (the codes' order is free)
    (names_a, codes_a), (names_b, codes_b) = lent.lot_text, plain.lot_text
    assert names_a.dtype == names_b.dtype == object
    assert names_a[codes_a].tolist() == names_b[codes_b].tolist()
    assert sorted(names_a.tolist()) == sorted(names_b.tolist())
    assert all(type(x) is str for x in names_a)


def _assert_same_index(table: pd.DataFrame) -> None:
    lent, plain = _index_both_ways(table)
    assert lent.groups == plain.groups and list(lent.groups) == list(plain.groups)
    for name in ("value", "order", "source_row", "_rows"):
        a, b = getattr(lent, name), getattr(plain, name)
        assert a.dtype == b.dtype and a.tobytes() == b.tobytes(), name
    assert lent.lot.dtype == plain.lot.dtype == object
    assert lent.lot.tolist() == plain.lot.tolist()
    assert (lent.interned is None) == (plain.interned is None)
    assert lent.pair.tolist() == plain.pair.tolist()


def _wide(tmp_path, *, order: bool, exclude: bool, k: int = 4, n: int = 24) -> object:
    rng = np.random.default_rng(3)
    cols = {"lot": [f"L{(i * 5) % 7}" for i in range(n)],
            "process": ["old" if i % 3 else "new" for i in range(n)]}
    if order:
        cols["when"] = rng.permutation(n)
    for j in range(k):
        cols[f"c{j}"] = np.round(rng.normal(5, 0.1, n), 3)
    rows = pd.DataFrame(cols)
    rows.loc[rng.choice(n, 3, replace=False), "c1"] = np.nan
    rows.to_csv(tmp_path / "d.csv", index=False, na_rep="NA")
    extra = "  order: when\n" if order else ""
    excl = ("exclude:\n  - lot: L3\n    reason: scrap\n    by: QE-1\n  - row: 5\n"
            "    characteristic: c2\n    reason: dropped\n    by: QE-1\n") if exclude else ""
    chars = "".join(f"  - name: c{j}\n    unit: mm\n" for j in range(k))
    (tmp_path / "s.yaml").write_text(
        "format: verify/1\ntitle: lent\ndata:\n  file: d.csv\n  lot: lot\n  process: process\n"
        f"  old: old\n  new: new\n{extra}{excl}characteristics:\n{chars}", encoding="utf-8")
    return load_spec(tmp_path / "s.yaml")


@pytest.mark.parametrize("order", [False, True])
@pytest.mark.parametrize("exclude", [False, True])
def test_a_wide_layout_lends_the_index_its_columns(tmp_path, order, exclude):
    meas = load_measurements(_wide(tmp_path, order=order, exclude=exclude))
    assert id(meas.table) in V._BUILT  # lent (a sheet row per part, four measurements each)
    _assert_same_columns(meas.table)
    _assert_same_index(meas.table)


@pytest.mark.parametrize("name", ["bushing-supplier", "closure-mould", "filler-paired",
                                  "housing-resin"])
def test_the_demo_specs_index_the_same_lent_or_not(demo, name):
    meas = load_measurements(load_spec(demo / "specs" / f"{name}.yaml"))
    if id(meas.table) not in V._BUILT:
        # a long layout, a single characteristic or a stream column: nothing lent, and the
        # index reads the table (the plain route)
        V._INDEX_CACHE.pop(id(meas.table), None)
        assert V._columns(meas.table) is not None
        return
    _assert_same_columns(meas.table)
    _assert_same_index(meas.table)


def test_a_long_layout_lends_nothing(tmp_path):
    rows = pd.DataFrame({"lot": ["A", "A", "B", "B"] * 2, "process": ["old", "new"] * 4,
                         "what": ["x"] * 4 + ["y"] * 4, "v": [1.0, 2, 3, 4, 5, 6, 7, 8]})
    rows.to_csv(tmp_path / "d.csv", index=False)
    (tmp_path / "s.yaml").write_text(
        "format: verify/1\ntitle: long\ndata:\n  file: d.csv\n  lot: lot\n  process: process\n"
        "  old: old\n  new: new\n  characteristic: what\n  value: v\n"
        "characteristics:\n  - name: x\n    unit: mm\n  - name: y\n    unit: mm\n",
        encoding="utf-8")
    meas = load_measurements(load_spec(tmp_path / "s.yaml"))
    assert id(meas.table) not in V._BUILT


def _dictionary_numbers(texts: list[str]) -> tuple[list[int], list[str]]:
    """The plain route's numbering of a text column (pyarrow's dictionary encoding)."""
    codes, names = V._factorized(pd.Series(texts, dtype="string[pyarrow]"))
    return codes.tolist(), names


@pytest.mark.parametrize("seed", range(12))
def test_first_seen_numbers_as_the_dictionary_encoding(seed):
    rng = np.random.default_rng(seed)
    k = int(rng.integers(1, 60))
    names = [f"n{int(i)}" for i in rng.integers(0, max(1, k // 2 + 1), size=k)]  # repeats
    codes = rng.integers(0, k, size=int(rng.integers(0, 300)))
    if seed % 3 == 0:
        codes = np.sort(codes)  # rising: the characteristics as the loading sorts them
    if seed % 4 == 1:
        codes = codes % min(k, 3)  # a few codes: the processes
    got = V._first_seen(codes.astype(np.int64), names)
    want = _dictionary_numbers([names[c] for c in codes.tolist()])
    assert got is not None
    assert got[0].dtype == np.int64 and got[0].tolist() == want[0] and got[1] == want[1]


def test_first_seen_refuses_a_name_that_is_not_text():
    codes = np.array([0, 1, 0], dtype=np.int64)
    assert V._first_seen(codes, ["a", 1]) is None
    assert V._first_seen(codes, ["a", None]) is None
    # a name no row uses is not looked at (as the inspected names of measured ones)
    assert V._first_seen(np.array([0, 0], dtype=np.int64), ["a", None])[1] == ["a"]


def test_built_with_a_lot_not_text_lends_nothing():
    table = pd.DataFrame({"x": [1]})
    code = np.zeros(1, dtype=np.int64)
    V.built_with(table, excluded=np.zeros(1, bool), characteristic=(code, ["a"]),
                 process=(code, ["new"]), lot=(code, [1]), order=code, source_row=code,
                 value=np.zeros(1))
    assert id(table) not in V._BUILT


def test_the_lent_columns_go_with_their_table(tmp_path):
    import gc

    meas = load_measurements(_wide(tmp_path, order=True, exclude=False))
    key = id(meas.table)
    assert key in V._BUILT
    V._analysis_index(meas.table)
    V._INDEX_CACHE.pop(key, None)  # (the index's own store holds its tables)
    del meas
    gc.collect()
    assert key not in V._BUILT


@pytest.mark.parametrize("name", ["bushing-supplier", "filler-paired"])
def test_an_evaluation_is_the_same_with_the_lent_columns_or_without(demo, name):
    from verify.evaluate import evaluate

    spec = load_spec(demo / "specs" / f"{name}.yaml")
    meas = load_measurements(spec)
    key = id(meas.table)
    assert key in V._BUILT
    V._INDEX_CACHE.pop(key, None)
    lent = evaluate(spec, meas, run=None)
    kept = V._BUILT.pop(key)
    V._INDEX_CACHE.pop(key, None)
    try:
        plain = evaluate(spec, meas, run=None)
    finally:
        V._BUILT[key] = kept
        V._INDEX_CACHE.pop(key, None)
    assert repr(lent.characteristics) == repr(plain.characteristics)
    assert lent.decision == plain.decision and lent.reasons == plain.reasons
