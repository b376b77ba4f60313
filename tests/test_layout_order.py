"""verify.report.layout: the measurements sheet's row order keys.

``_ranks`` replaced ``column.map(rank).fillna(missing).astype(int)`` (pandas' own mapping of a
column through a dict; a value not in the dict or missing takes ``missing``): the same ranks for
object and pyarrow-backed text columns, with missing values and values outside the dict.

``_groups`` replaced ``table.iloc[base].groupby(["characteristic", "process"],
sort=False).indices`` (positions mapped back through ``base``), and ``production_positions``
remembers its answers per table, and ``_beside`` sets the trace columns beside the table
without a join: each held here to the pandas expression it replaces.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.report.layout import _beside, _groups, _ranks, production_positions

NAMES = ["bore", "wall", "old", "new", "Ø 12", ""]


@pytest.mark.parametrize("dtype", [object, "string[pyarrow]", "string[python]"])
@settings(max_examples=80, deadline=None)
@given(values=st.lists(st.sampled_from([*NAMES, None, "other"]), max_size=40),
       ranked=st.lists(st.sampled_from(NAMES), unique=True))
def test_ranks_equal_pandas_map_fillna(dtype, values, ranked):
    column = pd.Series(values, dtype=dtype)
    rank = {name: i for i, name in enumerate(ranked)}
    missing = len(rank)
    expected = column.map(rank).fillna(missing).astype(int).to_numpy()
    assert _ranks(column, rank, missing).tolist() == expected.tolist()


@pytest.mark.parametrize("dtype", [object, "string[pyarrow]", "string[python]", "str"])
@settings(max_examples=80, deadline=None)
@given(rows=st.lists(st.tuples(st.sampled_from(["bore", "wall", "Ø 12", "", None]),
                               st.sampled_from(["old", "new", "pilot", None]),
                               st.booleans()), max_size=40))
def test_groups_equal_the_pandas_groupby(dtype, rows):
    table = pd.DataFrame({"characteristic": pd.Series([r[0] for r in rows], dtype=dtype),
                          "process": pd.Series([r[1] for r in rows], dtype=dtype)})
    base = np.flatnonzero(np.array([r[2] for r in rows], dtype=bool))
    expected = {k: base[v] for k, v in table.iloc[base].groupby(
        ["characteristic", "process"], sort=False).indices.items()}
    got = _groups(table, base)
    assert got.keys() == expected.keys()
    for k, v in expected.items():
        assert got[k].tolist() == v.tolist() and got[k].dtype == v.dtype
        same_key = next(g for g in got if g == k)
        assert all(type(a) is type(b) for a, b in zip(k, same_key, strict=True))


@pytest.mark.parametrize("integer", [True, False])
@settings(max_examples=60, deadline=None)
@given(rows=st.lists(st.tuples(st.sampled_from(["bore", "wall"]), st.sampled_from(["old", "new"]),
                               st.booleans(), st.integers(0, 5), st.integers(0, 5)),
                     max_size=30))
def test_production_positions_equal_the_pandas_sort_and_are_shared_read_only(integer, rows):
    table = pd.DataFrame({
        "characteristic": pd.Series([r[0] for r in rows], dtype="string[pyarrow]"),
        "process": pd.Series([r[1] for r in rows], dtype="string[pyarrow]"),
        "excluded": pd.Series([r[2] for r in rows], dtype=bool),
        "order": pd.Series([r[3] for r in rows], dtype="int64" if integer else float),
        "source_row": pd.Series([r[4] for r in rows], dtype="int64"),
    })
    for name in ("bore", "wall"):
        for process in ("old", "new"):
            mask = ((table["characteristic"] == name) & (table["process"] == process)
                    & ~table["excluded"]).to_numpy(dtype=bool)
            sub = table.iloc[np.flatnonzero(mask)]
            expected = sub.sort_values(["order", "source_row"], kind="stable").index.tolist()
            got = production_positions(table, name, process)
            assert got.tolist() == expected
            assert production_positions(table, name, process) is got  # remembered
            assert not got.flags.writeable


@settings(max_examples=60, deadline=None)
@given(n=st.integers(0, 12), shift=st.sampled_from([0, 0, 1]), dup=st.booleans(),
       overlap=st.booleans(), text=st.lists(st.sampled_from(["a", "", None]), min_size=12,
                                            max_size=12))
def test_beside_equals_the_join(n, shift, dup, overlap, text):
    table = pd.DataFrame({"value": np.arange(n, dtype=float),
                          "lot": pd.Series(text[:n], dtype="str")})
    trace = pd.DataFrame({"part": pd.Series(text[::-1][:n], dtype="str"),
                          "flag": np.arange(n) % 2 == 0})
    if shift:
        trace.index = trace.index + shift  # another index: the join aligns by label
    if dup and n > 1:
        idx = list(range(n))
        idx[-1] = 0
        table.index = idx
        trace.index = idx  # repeated labels: the join's own rows
    if overlap:
        trace = trace.rename(columns={"part": "lot"})
        with pytest.raises(ValueError):
            table.join(trace)
        with pytest.raises(ValueError):
            _beside(table, trace)
        return
    expected = table.join(trace)
    got = _beside(table, trace)
    pd.testing.assert_frame_equal(got, expected)
    assert list(got.dtypes) == list(expected.dtypes)
