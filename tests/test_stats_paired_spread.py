"""Pitman-Morgan test for the spread of paired data.

References: Pitman (1939) and Morgan (1939) show that var(new) = var(old) exactly when the
differences and the sums of the pairs are uncorrelated, so the test is the ordinary test of a
Pearson correlation between d = new - old and s = new + old; scipy.stats.pearsonr computes that
test independently of our code.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from verify.stats.errors import DegenerateDataError
from verify.stats.paired_spread import pitman_morgan


def _pairs(seed, n, scale):
    rng = np.random.default_rng(seed)
    old = rng.normal(10, 1, n)
    new = 0.6 * old + rng.normal(4, scale, n)
    return old, new


@settings(max_examples=50, deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(5, 60),
       scale=st.floats(0.3, 3.0), alt=st.sampled_from(["two-sided", "less", "greater"]))
def test_matches_pearson_correlation_test_of_differences_and_sums(seed, n, scale, alt):
    old, new = _pairs(seed, n, scale)
    r = pitman_morgan(old, new, alternative=alt)
    # scipy: pearsonr(new - old, new + old, alternative=alt) tests the same correlation
    ref = stats.pearsonr(new - old, new + old, alternative=alt)
    assert r.pvalue == pytest.approx(ref.pvalue, rel=1e-9, abs=1e-14)
    assert r.df == n - 2
    assert r.estimate == pytest.approx(np.std(new, ddof=1) / np.std(old, ddof=1), rel=1e-12)


@pytest.mark.parametrize("level", [0.90, 0.95])
def test_interval_bounds_are_where_the_test_p_equals_its_tail(level):
    # invariant: rescaling old by a bound of the interval makes the sd ratio equal that bound,
    # and the two-sided test there has p = 1 - level
    old, new = _pairs(3, 25, 1.2)
    ci = pitman_morgan(old, new).confidence_interval(level)
    for bound in (ci.low, ci.high):
        r = pitman_morgan(old * bound, new)
        assert r.pvalue == pytest.approx(1 - level, rel=1e-9)


def test_swapping_old_and_new_inverts_the_ratio_and_negates_t():
    old, new = _pairs(5, 30, 1.5)
    a = pitman_morgan(old, new)
    b = pitman_morgan(new, old)
    assert a.estimate * b.estimate == pytest.approx(1.0, rel=1e-12)
    assert a.statistic == pytest.approx(-b.statistic, rel=1e-12)


def test_degenerate_inputs_raise_with_reason():
    with pytest.raises(DegenerateDataError, match="at least 3"):
        pitman_morgan([1.0, 2.0], [1.0, 2.5])
    with pytest.raises(DegenerateDataError, match="zero spread"):
        pitman_morgan([1.0, 1.0, 1.0, 1.0], [1.0, 2.0, 3.0, 4.5])
