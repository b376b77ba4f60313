"""Spread tests: F-test on the variance ratio and Brown-Forsythe, against published values and
scipy, with invariants."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from verify.stats.errors import DegenerateDataError, NotApplicableError
from verify.stats.spread import (
    brown_forsythe,
    brown_forsythe_groups,
    f_test,
    f_test_from_stats,
)

REFERENCE = Path(__file__).resolve().parents[1].parent / "shared" / "reference"


def reference_csv(relative: str) -> pd.DataFrame:
    path = REFERENCE / relative
    if not path.is_file():
        pytest.skip(f"reference data not found: {path} (needs the ../shared/reference folder)")
    return pd.read_csv(path, comment="#")


ALTS = ("two-sided", "less", "greater")
SETTINGS = settings(max_examples=50, deadline=None)
samples = st.lists(
    st.floats(-1e3, 1e3, allow_nan=False, allow_infinity=False), min_size=3, max_size=30
).filter(lambda v: np.ptp(v) > 1e-6 * (1.0 + max(abs(x) for x in v)))


# --- F-test ---------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def jahanmi() -> tuple[np.ndarray, np.ndarray]:
    d = reference_csv("nist-handbook/jahanmi2.csv")
    # The handbook's F is var(batch 1) / var(batch 2); ours is var(new) / var(old), so batch 1
    # plays "new" and batch 2 "old".
    return d.loc[d.batch == 2, "strength"].to_numpy(), d.loc[d.batch == 1, "strength"].to_numpy()


def test_f_test_nist_ceramic_strength(jahanmi):
    old, new = jahanmi
    r = f_test(old, new, alternative="two-sided")
    assert r.statistic == pytest.approx(1.123037, rel=1e-6)  # NIST/SEMATECH e-Handbook 1.3.5.9
    assert (r.df_num, r.df_den) == (239, 239)  # NIST/SEMATECH e-Handbook 1.3.5.9
    assert r.sd_new == pytest.approx(65.54909, rel=1e-6)  # NIST e-Handbook 1.3.5.9, batch 1
    assert r.sd_old == pytest.approx(61.85425, rel=1e-6)  # NIST e-Handbook 1.3.5.9, batch 2
    lo, hi = r.critical_values(0.05)
    assert lo == pytest.approx(0.7756, abs=5e-5)  # NIST e-Handbook 1.3.5.9, F(0.025, 239, 239)
    assert hi == pytest.approx(1.2894, abs=5e-5)  # NIST e-Handbook 1.3.5.9, F(0.975, 239, 239)
    # "less" gives P(F' <= F), the F CDF value the handbook prints
    assert f_test(old, new, alternative="less").pvalue == pytest.approx(0.814808, abs=1e-6)
    assert r.pvalue == pytest.approx(2 * (1 - 0.814808), abs=2e-6)  # two tails of the CDF


@pytest.mark.parametrize("alternative", ALTS)
def test_f_test_summary_route_equals_raw_route(jahanmi, alternative):
    old, new = jahanmi
    raw = f_test(old, new, alternative=alternative)
    summ = f_test_from_stats(
        old.size, old.std(ddof=1), new.size, new.std(ddof=1), alternative=alternative
    )
    assert summ.statistic == pytest.approx(raw.statistic, rel=1e-12)
    assert summ.pvalue == pytest.approx(raw.pvalue, rel=1e-10)
    ci_a, ci_b = raw.confidence_interval(0.9), summ.confidence_interval(0.9)
    assert (ci_a.low, ci_a.high) == pytest.approx((ci_b.low, ci_b.high), rel=1e-10)


@SETTINGS
@given(samples, samples)
def test_f_test_pvalues_match_scipy_f_distribution(old, new):
    r = {a: f_test(old, new, alternative=a) for a in ALTS}
    f = np.var(new, ddof=1) / np.var(old, ddof=1)
    dfn, dfd = len(new) - 1, len(old) - 1
    assert r["two-sided"].statistic == pytest.approx(f, rel=1e-9)
    # scipy.stats.f.sf / f.cdf as the reference for the tails
    assert r["greater"].pvalue == pytest.approx(stats.f.sf(f, dfn, dfd), rel=1e-7, abs=1e-300)
    assert r["less"].pvalue == pytest.approx(stats.f.cdf(f, dfn, dfd), rel=1e-7, abs=1e-300)
    two = min(1.0, 2 * min(stats.f.sf(f, dfn, dfd), stats.f.cdf(f, dfn, dfd)))
    assert r["two-sided"].pvalue == pytest.approx(two, rel=1e-7, abs=1e-300)


@SETTINGS
@given(samples, samples, st.floats(-1e4, 1e4), st.floats(0.01, 100.0))
def test_f_test_invariants(old, new, shift, scale):
    base = f_test(old, new, alternative="greater")
    swapped = f_test(new, old, alternative="less")
    assert swapped.statistic == pytest.approx(1.0 / base.statistic, rel=1e-9)
    assert swapped.pvalue == pytest.approx(base.pvalue, rel=1e-6, abs=1e-12)
    moved = f_test(np.add(old, shift), np.add(new, shift), alternative="greater")
    assert moved.statistic == pytest.approx(base.statistic, rel=1e-6)
    scaled = f_test(np.multiply(old, scale), np.multiply(new, scale), alternative="greater")
    assert scaled.statistic == pytest.approx(base.statistic, rel=1e-9)


@pytest.mark.parametrize("level", [0.9, 0.95])
def test_f_interval_is_dual_to_the_test(jahanmi, level):
    """The sd-ratio bound is the ratio at which the one-sided test has p = 1 - level."""
    old, new = jahanmi
    sd_old, sd_new = old.std(ddof=1), new.std(ddof=1)
    greater = f_test_from_stats(old.size, sd_old, new.size, sd_new, alternative="greater")
    bound = greater.confidence_interval(level)
    assert bound.high == math.inf
    shifted = f_test_from_stats(old.size, sd_old * bound.low, new.size, sd_new,
                                alternative="greater")
    assert shifted.pvalue == pytest.approx(1 - level, rel=1e-8)
    less = f_test_from_stats(old.size, sd_old, new.size, sd_new, alternative="less")
    upper = less.confidence_interval(level)
    assert upper.low == 0.0
    shifted = f_test_from_stats(old.size, sd_old * upper.high, new.size, sd_new,
                                alternative="less")
    assert shifted.pvalue == pytest.approx(1 - level, rel=1e-8)
    two = f_test_from_stats(old.size, sd_old, new.size, sd_new).confidence_interval(level)
    assert two.low < greater.estimate < two.high
    # the two-sided interval at level L has the one-sided bounds at (1 + L) / 2 as its ends
    assert two.low == pytest.approx(greater.confidence_interval((1 + level) / 2).low, rel=1e-12)


def test_f_test_degenerate_inputs_raise_with_reason():
    with pytest.raises(DegenerateDataError, match="at least 2"):
        f_test([1.0], [1.0, 2.0])
    with pytest.raises(DegenerateDataError, match="zero spread"):
        f_test([2.0, 2.0, 2.0], [1.0, 2.0])
    with pytest.raises(DegenerateDataError, match="finite"):
        f_test([1.0, np.nan, 2.0], [1.0, 2.0])
    with pytest.raises(DegenerateDataError, match="no old values"):
        f_test([], [1.0, 2.0])
    with pytest.raises(DegenerateDataError):
        f_test_from_stats(10, 0.0, 10, 1.0)
    with pytest.raises(ValueError, match="alternative"):
        f_test([1.0, 2.0], [1.0, 3.0], alternative="bigger")
    with pytest.raises(ValueError, match="whole number"):
        f_test_from_stats(10.5, 1.0, 10, 1.0)


# --- Brown-Forsythe -------------------------------------------------------------------------


def test_brown_forsythe_nist_gear_ten_batches():
    g = reference_csv("nist-handbook/gear.csv")
    groups = [grp["diameter"].to_numpy() for _, grp in g.groupby("batch", sort=True)]
    r = brown_forsythe_groups(groups)
    assert r.statistic == pytest.approx(1.705910, rel=1e-5)  # NIST e-Handbook 1.3.5.10
    assert r.df == (9, 90)  # NIST e-Handbook 1.3.5.10
    crit = r.critical_value(0.05)
    assert 1.9855 <= crit < 1.9856  # NIST e-Handbook 1.3.5.10, F(0.95, 9, 90) truncated
    ref = stats.levene(*groups, center="median")  # scipy: levene(*groups, center="median")
    assert r.statistic == pytest.approx(ref.statistic, rel=1e-10)
    assert r.pvalue == pytest.approx(ref.pvalue, rel=1e-9)


def test_brown_forsythe_groups_needs_two_groups():
    with pytest.raises(NotApplicableError, match="at least 2 groups"):
        brown_forsythe_groups([[1.0, 2.0, 3.0]])
    with pytest.raises(DegenerateDataError, match="group 2"):
        brown_forsythe_groups([[1.0, 2.0, 3.0], [1.0]])


@SETTINGS
@given(samples, samples)
def test_brown_forsythe_two_sided_equals_scipy_levene_median(old, new):
    try:
        r = brown_forsythe(old, new)
    except DegenerateDataError:
        return  # absolute deviations constant within both groups: scipy would divide by 0
    ref = stats.levene(old, new, center="median")  # scipy: levene(old, new, center="median")
    assert r.statistic == pytest.approx(ref.statistic, rel=1e-8, abs=1e-12)
    assert r.pvalue == pytest.approx(ref.pvalue, rel=1e-7, abs=1e-12)
    assert r.df == (1, len(old) + len(new) - 2)
    assert r.t_statistic**2 == pytest.approx(r.statistic, rel=1e-12, abs=1e-300)
    greater = brown_forsythe(old, new, alternative="greater")
    less = brown_forsythe(old, new, alternative="less")
    agreeing = greater if r.t_statistic > 0 else less
    assert agreeing.pvalue == pytest.approx(r.pvalue / 2, rel=1e-9, abs=1e-300)
    assert greater.pvalue + less.pvalue == pytest.approx(1.0, rel=1e-12)
    assert greater.statistic == r.statistic  # W does not depend on the alternative


@SETTINGS
@given(samples, samples, st.floats(-1e4, 1e4))
def test_brown_forsythe_shift_invariant_and_swap_antisymmetric(old, new, shift):
    try:
        base = brown_forsythe(old, new, alternative="greater")
    except DegenerateDataError:
        return
    moved = brown_forsythe(np.add(old, shift), np.add(new, shift), alternative="greater")
    assert moved.statistic == pytest.approx(base.statistic, rel=1e-5, abs=1e-9)
    swapped = brown_forsythe(new, old, alternative="less")
    assert swapped.t_statistic == pytest.approx(-base.t_statistic, rel=1e-12)
    assert swapped.pvalue == pytest.approx(base.pvalue, rel=1e-10)


def test_brown_forsythe_direction_and_mads():
    old = [10.0, 10.1, 9.9, 10.05, 9.95, 10.0, 10.02]
    new = [10.0, 10.6, 9.4, 10.3, 9.7, 10.0, 10.5]
    r = brown_forsythe(old, new, alternative="greater")
    # mean |x - median|, hand computed: old deviations 0, .1, .1, .05, .05, 0, .02
    assert r.mad_old == pytest.approx(0.32 / 7, rel=1e-12)  # hand computation
    assert r.mad_new == pytest.approx(2.3 / 7, rel=1e-12)  # deviations 0 .6 .6 .3 .3 0 .5
    assert r.estimate > 0 and r.t_statistic > 0 and r.pvalue < 0.05
    ci = r.confidence_interval(0.95)
    assert ci.high == math.inf and 0 < ci.low < r.estimate


def test_brown_forsythe_degenerate():
    with pytest.raises(DegenerateDataError, match="2 values per group"):
        brown_forsythe([1.0, 2.0], [3.0, 5.0])
    with pytest.raises(DegenerateDataError, match="at least 2"):
        brown_forsythe([1.0], [3.0, 5.0, 6.0])
    with pytest.raises(DegenerateDataError, match="finite"):
        brown_forsythe([1.0, 2.0, np.inf], [3.0, 5.0, 6.0])
