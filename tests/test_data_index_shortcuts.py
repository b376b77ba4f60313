"""The evaluation index's shortcuts held to the plain routes they replace: the sortedness test
(data.values._in_order) against the stable sort it skips, and part_values' lots, found by their
codes, against the tuple of each row's lot text."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from verify.data import load_measurements
from verify.data import values as V
from verify.spec import load_spec


def _keys(rng, n, *, sort):
    code = rng.integers(0, 4, n)
    order = rng.integers(0, 5, n)
    source_row = rng.permutation(n)
    if sort:
        s = np.lexsort((source_row, order, code))
        code, order, source_row = code[s], order[s], source_row[s]
    return code.astype(np.int64), order.astype(np.int64), source_row.astype(np.int64)


@pytest.mark.parametrize("seed", range(40))
def test_in_order_is_true_exactly_when_the_stable_sort_is_the_identity(seed):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(0, 30))
    code, order, source_row = _keys(rng, n, sort=seed % 2 == 0)
    if seed % 4 == 0 and n > 2:  # one neighbour pair swapped: out of order by one
        i = int(rng.integers(0, n - 1))
        for a in (code, order, source_row):
            a[[i, i + 1]] = a[[i + 1, i]]
    if seed % 8 == 2 and n > 2:  # equal keys on all three (ties keep their places)
        source_row[:] = np.sort(source_row) // 3
        code[:] = np.sort(code)
        order[:] = 0
    identity = np.lexsort((source_row, order, code)).tolist() == list(range(n))
    assert V._in_order(code, order, source_row) == identity


def test_in_order_on_equal_leading_keys():
    code = np.array([0, 0, 0, 1, 1], dtype=np.int64)
    order = np.array([1, 1, 2, 0, 0], dtype=np.int64)
    assert V._in_order(code, order, np.array([0, 3, 1, 4, 5]))
    assert not V._in_order(code, order, np.array([3, 0, 1, 4, 5]))  # third key falls
    assert not V._in_order(code, np.array([1, 0, 2, 0, 0]), np.arange(5))  # second falls
    assert V._in_order(code[:1], order[:1], np.arange(1))


def _plain_index(table):
    """The index of ``table`` by the plain route: the columns read from the table, sorted by
    np.lexsort, the groups made one by one."""
    cols = V._read_columns(table)
    used = ~cols.excluded
    char_codes, char_names = cols.characteristic
    proc_codes, proc_names = cols.process
    width = max(1, len(proc_names))
    code = (char_codes.astype(np.int64) * width + proc_codes)[used]
    rows = np.flatnonzero(used)
    sort = np.lexsort((cols.source_row[used], cols.order[used], code))
    groups = {}
    cs = code[sort]
    for i, c in enumerate(cs.tolist()):
        key = (str(char_names[c // width]), str(proc_names[c % width]))
        a, _ = groups.get(key, (i, i))
        groups[key] = (a, i + 1)
    lots = table["lot"].to_numpy(dtype=object)[rows[sort]]
    return groups, cols.value[rows[sort]], lots


def _check_against_plain(meas):
    V._INDEX_CACHE.pop(id(meas.table), None)
    ix = V._analysis_index(meas.table)
    groups, value, lots = _plain_index(meas.table)
    assert ix.groups == groups and list(ix.groups) == list(groups)
    assert ix.value.tobytes() == value.tobytes()
    assert ix.lot.tolist() == lots.tolist()
    seen = {}
    for (name, process), (a, b) in groups.items():
        v, lot = V.part_values(meas, name, process)
        assert v.tobytes() == value[a:b].tobytes() and v.flags.owndata
        assert type(lot) is tuple and lot == tuple(lots[a:b].tolist())
        if ix.interned is not None:  # equal text lots: one tuple object
            assert seen.setdefault(lot, lot) is lot
    assert V.part_values(meas, "no such", "old")[1] == ()


@pytest.mark.parametrize("name", ["bushing-supplier", "filler-paired"])
def test_the_index_and_part_values_are_the_plain_routes(demo, name):
    _check_against_plain(load_measurements(load_spec(demo / "specs" / f"{name}.yaml")))


@pytest.mark.parametrize("shuffle", [False, True])
def test_a_wide_layout_in_or_out_of_order(tmp_path, shuffle):
    rng = np.random.default_rng(5)
    n = 18
    cols = {"lot": [f"L{(i * 5) % 4}" for i in range(n)],
            "process": ["old" if i % 3 else "new" for i in range(n)]}
    if shuffle:
        cols["when"] = rng.permutation(n)
    for j in range(3):
        cols[f"c{j}"] = np.round(rng.normal(5, 0.1, n), 3)
    pd.DataFrame(cols).to_csv(tmp_path / "d.csv", index=False)
    chars = "\n".join(f"""  - name: c{j}
    column: c{j}
    unit: mm
    limits: [4.5, 5.5]
    checks:
      shift: {{margin: 0.1}}""" for j in range(3))
    order = "\n  order: when" if shuffle else ""
    (tmp_path / "s.yaml").write_text(f"""format: verify/1
title: t
data:
  file: d.csv
  lot: lot
  process: process{order}
  old: old
  new: new
characteristics:
{chars}
""", encoding="utf-8")
    _check_against_plain(load_measurements(load_spec(tmp_path / "s.yaml")))
