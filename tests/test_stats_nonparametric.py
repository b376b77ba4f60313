"""Rank tests: Wilcoxon signed-rank and Mann-Whitney against R examples and scipy."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from verify.stats.errors import DegenerateDataError
from verify.stats.nonparametric import (
    average_ranks,
    mann_whitney,
    rank_sum_counts,
    signed_rank_counts,
    wilcoxon_signed_rank,
)

ALTS = ("two-sided", "less", "greater")
SETTINGS = settings(max_examples=50, deadline=None)

# Hollander and Wolfe depression-scale data, as in R's help page for wilcox.test (values from
# memory): x = first visit, y = second visit.
DEPRESSION_X = np.array([1.83, 0.50, 1.62, 2.48, 1.68, 1.88, 1.55, 3.06, 1.30])
DEPRESSION_Y = np.array([0.878, 0.647, 0.598, 2.05, 1.06, 1.29, 1.06, 3.14, 1.29])


def test_signed_rank_r_example_paired_greater():
    r = wilcoxon_signed_rank(DEPRESSION_X - DEPRESSION_Y, alternative="greater")
    # R: wilcox.test(x, y, paired = TRUE, alternative = "greater") -> V = 40, p-value = 0.01953
    # (R's help-page example; numbers from memory)
    assert r.statistic == 40.0
    assert r.pvalue == pytest.approx(0.01953, abs=5e-6)
    assert r.exact and "exact" in r.method and r.n == 9 and r.n_zero == 0


def test_mann_whitney_r_example_greater():
    x = [0.80, 0.83, 1.89, 1.04, 1.45, 1.38, 1.91, 1.64, 0.73, 1.46]
    y = [1.15, 0.88, 0.90, 0.74, 1.21]
    # R: wilcox.test(x, y, alternative = "g") -> W = 35, p-value = 0.1272 (R's help-page
    # example; numbers from memory). R's W counts pairs with x larger, so x plays "new".
    r = mann_whitney(y, x, alternative="greater")
    assert r.statistic == 35.0
    assert r.pvalue == pytest.approx(0.1272, abs=5e-5)
    assert r.exact and (r.n_old, r.n_new) == (5, 10)


distinct_floats = st.lists(
    st.floats(-100, 100, allow_nan=False).map(lambda v: round(v, 3)),
    min_size=2,
    max_size=40,
    unique=True,
)


@SETTINGS
@given(distinct_floats, st.sampled_from(ALTS))
def test_signed_rank_exact_matches_scipy(d, alternative):
    d = [v for v in d if v != 0.0]
    if len(d) < 1 or len({abs(v) for v in d}) < len(d):
        return  # this case is about untied, non-zero differences
    r = wilcoxon_signed_rank(d, alternative=alternative)
    ref = stats.wilcoxon(d, alternative=alternative, method="exact")  # scipy reference
    assert r.exact
    assert r.pvalue == pytest.approx(ref.pvalue, rel=1e-12, abs=1e-12)
    ranks = stats.rankdata(np.abs(d))
    assert r.statistic == pytest.approx(ranks[np.asarray(d) > 0].sum())


tied_floats = st.lists(st.integers(-6, 6).map(float), min_size=3, max_size=60)


@SETTINGS
@given(tied_floats, st.sampled_from(ALTS), st.sampled_from(("wilcox", "pratt")))
def test_signed_rank_with_ties_and_zeros_matches_scipy(d, alternative, zero_method):
    arr = np.asarray(d)
    if not np.any(arr != 0):
        with pytest.raises(DegenerateDataError, match="zero"):
            wilcoxon_signed_rank(arr)
        return
    r = wilcoxon_signed_rank(arr, alternative=alternative, zero_method=zero_method)
    assert r.n_zero == int(np.sum(arr == 0))
    nz = np.abs(arr[arr != 0])
    _, counts = np.unique(nz, return_counts=True)
    assert r.n_tied_groups == int(np.sum(counts > 1))
    assert r.n_tied_values == int(counts[counts > 1].sum())
    if r.exact:
        ref = stats.wilcoxon(arr[arr != 0], alternative=alternative, method="exact")
    else:
        assert "normal approximation" in r.method
        # scipy: wilcoxon(d, zero_method=..., correction=True, method="asymptotic")
        ref = stats.wilcoxon(arr, zero_method=zero_method, correction=True,
                             alternative=alternative, method="asymptotic")
    assert r.pvalue == pytest.approx(float(ref.pvalue), rel=1e-12, abs=1e-12)


def test_signed_rank_reports_zeros_ties_and_method():
    d = [0.0, 0.0, 1.5, -0.5, 2.0, 1.5, 3.0, 0.7, 1.1, -0.2]
    r = wilcoxon_signed_rank(d)
    assert r.n_zero == 2 and r.n == 8
    assert (r.n_tied_groups, r.n_tied_values) == (1, 2)  # the two 1.5s
    assert not r.exact and "zeros dropped" in r.method and "normal approximation" in r.method
    p = wilcoxon_signed_rank(d, zero_method="pratt")
    assert p.n == 10 and "Pratt" in p.method


def test_signed_rank_float_noise_is_not_a_difference():
    # 0.1 + 0.2 - 0.3 is 5.6e-17 in floating point: on the 12-digit grid it is a zero
    # difference, and 0.30000000000000004 ties with 0.3
    d = [0.1 + 0.2 - 0.3, 0.1 + 0.2, 0.3, 0.5, 0.9, -0.05, 1.2]
    r = wilcoxon_signed_rank(d)
    assert r.n_zero == 1
    assert r.n_tied_groups == 1


def test_hodges_lehmann_estimates_by_hand():
    # Walsh averages of (1, 2, 3): 1, 1.5, 2, 2, 2.5, 3 -> median 2 (hand computation)
    assert wilcoxon_signed_rank([1.0, 2.0, 3.0]).estimate == 2.0
    # differences new - old for old (0, 1), new (2, 5): 2, 1, 5, 4 -> median 3 (hand computation)
    assert mann_whitney([0.0, 1.0], [2.0, 5.0]).estimate == 3.0


@SETTINGS
@given(distinct_floats, distinct_floats, st.sampled_from(ALTS))
def test_mann_whitney_matches_scipy(old, new, alternative):
    if len(set(old) | set(new)) < 2:
        return
    r = mann_whitney(old, new, alternative=alternative)
    pooled = np.concatenate((old, new))
    has_ties = np.unique(pooled).size < pooled.size
    method = "exact" if (not has_ties and len(old) < 50 and len(new) < 50) else "asymptotic"
    # scipy: mannwhitneyu(new, old, use_continuity=True, alternative=..., method=...)
    ref = stats.mannwhitneyu(new, old, alternative=alternative, method=method)
    assert r.exact == (method == "exact")
    assert r.statistic == pytest.approx(float(ref.statistic))
    assert r.pvalue == pytest.approx(float(ref.pvalue), rel=1e-12, abs=1e-12)


@SETTINGS
@given(tied_floats, tied_floats, st.floats(-50, 50).map(lambda v: round(v, 2)))
def test_mann_whitney_with_ties_and_shift(old, new, shift):
    pooled = np.concatenate((old, new))
    if np.unique(pooled).size < 2:
        with pytest.raises(DegenerateDataError, match="identical"):
            mann_whitney(old, new)
        return
    r = mann_whitney(old, new, alternative="greater")
    _, counts = np.unique(pooled, return_counts=True)
    assert r.n_tied_groups == int(np.sum(counts > 1))
    moved = mann_whitney(np.add(old, shift), np.add(new, shift), alternative="greater")
    assert moved.statistic == r.statistic
    assert moved.pvalue == pytest.approx(r.pvalue, rel=1e-12)
    assert moved.estimate == pytest.approx(r.estimate, abs=1e-9)


def test_rank_tests_degenerate_inputs():
    with pytest.raises(DegenerateDataError, match="finite"):
        wilcoxon_signed_rank([1.0, np.nan, 2.0])
    with pytest.raises(DegenerateDataError, match="no differences"):
        wilcoxon_signed_rank([])
    with pytest.raises(DegenerateDataError, match="no old values"):
        mann_whitney([], [1.0, 2.0])
    with pytest.raises(ValueError, match="zero_method"):
        wilcoxon_signed_rank([1.0, 2.0], zero_method="zsplit")


# --- our own arithmetic against scipy (the route the tests above replaced in the code) -------


@pytest.mark.parametrize("n", [1, 2, 5, 13, 30, 50])
def test_signed_rank_null_counts(n):
    counts = signed_rank_counts(n)
    # every one of the 2^n sign patterns gives one W+ in 0..n(n+1)/2, symmetric about the middle
    assert sum(counts) == 2**n
    assert len(counts) == n * (n + 1) // 2 + 1
    assert counts == counts[::-1]
    # n = 5 by hand: W+ = 0 only with every sign negative, W+ = 1 only with rank 1 positive,
    # W+ = 3 with {3} or {1, 2} positive
    if n == 5:
        assert counts[:4] == (1, 1, 1, 2)


@pytest.mark.parametrize(("m", "n"), [(1, 1), (2, 3), (5, 10), (12, 30), (49, 49)])
def test_rank_sum_null_counts(m, n):
    counts = rank_sum_counts(m, n)
    assert sum(counts) == math.comb(m + n, m)
    assert len(counts) == m * n + 1
    assert counts == counts[::-1]
    assert rank_sum_counts(n, m) == counts


@pytest.mark.parametrize("n", [10, 29, 30, 49, 50])
@pytest.mark.parametrize("alternative", ALTS)
def test_signed_rank_exact_largest_sizes_match_scipy(n, alternative):
    rng = np.random.default_rng(n)
    d = rng.normal(0.3, 1.0, n)
    r = wilcoxon_signed_rank(d, alternative=alternative)
    ref = stats.wilcoxon(d, alternative=alternative, method="exact")  # scipy reference
    assert r.exact
    assert r.pvalue == pytest.approx(float(ref.pvalue), rel=1e-12, abs=1e-12)


@pytest.mark.parametrize(("m", "n"), [(3, 4), (20, 30), (49, 49), (49, 10)])
@pytest.mark.parametrize("alternative", ALTS)
def test_mann_whitney_exact_largest_sizes_match_scipy(m, n, alternative):
    rng = np.random.default_rng(m * 100 + n)
    old, new = rng.normal(0, 1, m), rng.normal(0.4, 1, n)
    r = mann_whitney(old, new, alternative=alternative)
    ref = stats.mannwhitneyu(new, old, alternative=alternative, method="exact")  # scipy
    assert r.exact
    assert r.pvalue == pytest.approx(float(ref.pvalue), rel=1e-12, abs=1e-12)


@pytest.mark.parametrize("n", [51, 120, 600])
@pytest.mark.parametrize("alternative", ALTS)
def test_rank_tests_large_samples_normal_route_match_scipy(n, alternative):
    rng = np.random.default_rng(n)
    d = np.round(rng.normal(0.1, 1.0, n), 1)  # rounded: ties and zeros
    for zero_method in ("wilcox", "pratt"):
        r = wilcoxon_signed_rank(d, alternative=alternative, zero_method=zero_method)
        data = d[d != 0] if zero_method == "wilcox" else d
        ref = stats.wilcoxon(data, zero_method=zero_method, correction=True,
                             alternative=alternative, method="asymptotic")  # scipy
        assert not r.exact
        assert r.pvalue == pytest.approx(float(ref.pvalue), rel=1e-12, abs=1e-12)
    old, new = np.round(rng.normal(0, 1, n), 1), np.round(rng.normal(0.2, 1, n + 7), 1)
    r = mann_whitney(old, new, alternative=alternative)
    ref = stats.mannwhitneyu(new, old, alternative=alternative, method="asymptotic")  # scipy
    assert r.pvalue == pytest.approx(float(ref.pvalue), rel=1e-12, abs=1e-12)
    assert r.statistic == float(ref.statistic)


@SETTINGS
@given(tied_floats)
def test_average_ranks_match_scipy_rankdata(values):
    a = np.asarray(values)
    ranks, sizes = average_ranks(a)
    np.testing.assert_array_equal(ranks, stats.rankdata(a))  # scipy's average ranks
    _, counts = np.unique(a, return_counts=True)
    np.testing.assert_array_equal(sizes, counts)
