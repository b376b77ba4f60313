"""The histogram's bin count (``charts.auto_bin_count``) is numpy's "auto" rule.

Reference: numpy's own ``np.histogram_bin_edges(values, bins="auto")`` (numpy 2.x
``lib/_histograms_impl.py``: the Sturges width, the Freedman-Diaconis width with the quartiles
of ``np.percentile``'s default linear method, at least half the square-root rule's width, the
smaller of the two; the count is the ceiling of the range over the width). Compared on data as
plants record it (values on a resolution grid, ties, constant samples, sizes that are powers of
two, where the Sturges count is a whole number) and on unrounded data.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.report.charts import _linear_quantile, auto_bin_count


def _numpy(values: np.ndarray) -> int:
    return len(np.histogram_bin_edges(values, bins="auto")) - 1


@settings(max_examples=400, deadline=None)
@given(n=st.integers(1, 300), decimals=st.sampled_from([None, 0, 1, 2, 3, 4]),
       centre=st.floats(-1e4, 1e4), spread=st.floats(1e-6, 1e3), seed=st.integers(0, 2**32 - 1),
       shape=st.sampled_from(["normal", "skewed", "two-valued"]))
def test_bin_count_equals_numpy(n, decimals, centre, spread, seed, shape):
    rng = np.random.default_rng(seed)
    if shape == "normal":
        values = rng.normal(centre, spread, n)
    elif shape == "skewed":
        values = centre + rng.lognormal(0.0, 1.0, n) * spread
    else:
        values = np.where(rng.random(n) < 0.8, centre, centre + spread)
    if decimals is not None:
        values = np.round(values, decimals)
    assert auto_bin_count(values) == _numpy(values)


@pytest.mark.parametrize("n", [1, 2, 3, 4, 8, 16, 32, 64, 128, 256])
def test_powers_of_two_constant_and_evenly_spaced_values(n):
    for values in (np.full(n, 12.5), np.arange(n, dtype=float) * 0.001 + 9.995,
                   np.linspace(0.0, 1.0, n), np.repeat([1.0, 2.0], max(1, n // 2))):
        assert auto_bin_count(values) == _numpy(values)


@settings(max_examples=200, deadline=None)
@given(values=st.lists(st.floats(-1e6, 1e6, allow_nan=False), min_size=2, max_size=60),
       q=st.sampled_from([0.25, 0.75]))
def test_the_quartiles_are_numpys_bit_for_bit(values, q):
    s = np.sort(np.array(values, dtype=float))
    assert float(_linear_quantile(s, q)) == float(np.percentile(s, 100 * q))


def test_other_inputs_take_numpys_route():
    assert auto_bin_count(np.array([1, 2, 3, 10], dtype=np.int64)) == _numpy(
        np.array([1, 2, 3, 10], dtype=np.int64))
    with pytest.raises(ValueError):
        auto_bin_count(np.array([1.0, np.inf]))
