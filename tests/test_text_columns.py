"""Text columns of the measurements sheet and the recheck lookups, held to the pandas
expressions they replaced (the same cells, the same names, in the same order).

- ``measurements_sheet._TextColumn`` factorises a text column (pandas ``StringDtype``) as it
  is, instead of a copy filled with ``""`` and converted with ``astype(str)``: a missing value
  takes code -1, whose fragments are the empty cell's, as ``""``'s are.
- ``recheck_lookup._distinct_text`` is ``[str(x) for x in dict.fromkeys(c.astype(str))]``.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.report.measurements_sheet import _TextColumn
from verify.report.recheck_lookup import _distinct_text

TEXTS = ["A-1", "", " padded ", "x<y&z", "Ø 12", "nan", "None", "\u00a0"]


def _reference_fragments(series: pd.Series, used: np.ndarray) -> list[str]:
    """The fragments of the route before: the column filled, converted, then factorised."""
    ref = _TextColumn(series.astype(object).fillna("").astype(str), 3, 4)
    return ref.fragments(0, len(series), used)


@pytest.mark.parametrize("dtype", ["str", "string[pyarrow]", "string[python]"])
@settings(max_examples=80, deadline=None)
@given(values=st.lists(st.sampled_from([*TEXTS, None]), max_size=30), data=st.data())
def test_text_column_of_text_gives_the_cells_of_the_filled_copy(dtype, values, data):
    series = pd.Series(values, dtype=dtype)
    used = np.array(data.draw(st.lists(st.booleans(), min_size=len(values),
                                       max_size=len(values))), dtype=bool)
    got = _TextColumn(series, 3, 4).fragments(0, len(series), used)
    assert got == _reference_fragments(series, used)


def test_a_missing_text_is_an_empty_cell_and_text_is_escaped():
    series = pd.Series(["a&b", None, ""], dtype="str")
    got = _TextColumn(series, 3, 4).fragments(0, 3, np.array([True, True, False]))
    assert got == [' t="inlineStr" s="3"><is><t>a&amp;b</t></is></c>', ' s="3"/>', ' s="4"/>']


@pytest.mark.parametrize("dtype", [object, "str", "string[pyarrow]", "string[python]"])
@settings(max_examples=80, deadline=None)
@given(values=st.lists(st.sampled_from([*TEXTS, None]), max_size=30))
def test_distinct_text_equals_the_converted_column_deduplicated(dtype, values):
    column = pd.Series(values, dtype=dtype)
    assert _distinct_text(column) == [str(x) for x in dict.fromkeys(column.astype(str))]


def test_distinct_text_of_values_that_read_alike_keeps_first_appearance():
    column = pd.Series([2, "2", 1.5, "1.5", 2], dtype=object)
    assert _distinct_text(column) == ["2", "1.5"]
