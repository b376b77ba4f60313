"""Columns of the measurements sheet and the recheck lookups, held to the pandas expressions
they replaced (the same cells, the same names, in the same order).

- ``measurements_sheet._TextColumn`` factorises a text column (pandas ``StringDtype``) as it
  is, instead of a copy filled with ``""`` and converted with ``astype(str)``: a missing value
  takes code -1, whose fragments are the empty cell's, as ``""``'s are.
- ``recheck_lookup._distinct_text`` is ``[str(x) for x in dict.fromkeys(c.astype(str))]``.
- ``measurements_sheet.decimals_by_characteristic`` groups on the name column's codes: what
  iterating ``table.groupby("characteristic", sort=False)["value"]`` gave.
- ``measurements_sheet._chunk_columns`` finds each row's value style per distinct name: what
  ``chars.map(styles)`` gave.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.report.cells import resolution_decimals
from verify.report.measurements_sheet import (
    _chunk_columns,
    _TextColumn,
    decimals_by_characteristic,
)
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


NAMES = ["bore", "wall", "Ø 12", "", None]


@pytest.mark.parametrize("dtype", [object, "str", "string[pyarrow]"])
@settings(max_examples=80, deadline=None)
@given(rows=st.lists(st.tuples(st.sampled_from(NAMES),
                               st.sampled_from([1.5, 2.25, 10.125, 3.0, np.nan, 7.0])),
                     max_size=40))
def test_decimals_by_characteristic_equal_the_groupby(dtype, rows):
    table = pd.DataFrame({"characteristic": pd.Series([r[0] for r in rows], dtype=dtype),
                          "value": np.array([r[1] for r in rows], dtype=float)})
    expected = {str(name): resolution_decimals(values.to_numpy(dtype=float))
                for name, values in table.groupby("characteristic", sort=False)["value"]}
    got = decimals_by_characteristic(table)
    assert list(got.items()) == list(expected.items())


class _Styles:
    """The style indices the chunk asks for (StyleBook's interface, fixed numbers)."""

    def boolean(self, excluded):
        return 7 if excluded else 6

    def number(self, fmt, excluded):
        return 9 if excluded else 8


@settings(max_examples=60, deadline=None)
@given(rows=st.lists(st.tuples(st.sampled_from(["bore", "wall", "Ø 12"]), st.booleans(),
                               st.floats(-5, 5, allow_nan=False)), min_size=1, max_size=30))
def test_chunk_value_styles_equal_the_mapped_names(rows):
    chunk = pd.DataFrame({
        "characteristic": pd.Series([r[0] for r in rows], dtype="str"),
        "used": [r[1] for r in rows], "value": [r[2] for r in rows],
        "source_row": np.arange(len(rows)), "order": np.arange(len(rows))})
    value_style = {"bore": (11, 12), "wall": (13, 0), "Ø 12": (0, 14)}
    got = _chunk_columns(chunk, 0, len(rows), ["value"], {}, value_style, _Styles())[0]
    chars = chunk["characteristic"]
    style_u = chars.map({c: f' s="{s[0]}"' if s[0] else "" for c, s in value_style.items()})
    style_x = chars.map({c: f' s="{s[1]}"' if s[1] else "" for c, s in value_style.items()})
    vstyle = np.where(chunk["used"].to_numpy(), style_u.to_numpy(), style_x.to_numpy()).tolist()
    assert got == [f"{s}><v>{v!r}</v></c>" for s, v in zip(vstyle, chunk["value"], strict=True)]
