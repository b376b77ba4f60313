"""verify.report.layout: the measurements sheet's row order keys.

``_ranks`` replaced ``column.map(rank).fillna(missing).astype(int)`` (pandas' own mapping of a
column through a dict; a value not in the dict or missing takes ``missing``): the same ranks for
object and pyarrow-backed text columns, with missing values and values outside the dict.
"""

from __future__ import annotations

import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.report.layout import _ranks

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
