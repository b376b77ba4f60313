"""One-sample, paired, Welch and pooled t-tests (verify.stats.ttests).

Checked against published values (NIST/SEMATECH e-Handbook; R t.test via the statsmodels test
suite, both in ../shared/reference), against scipy.stats and statsmodels on random data, and
against invariants that any correct implementation must satisfy.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import stats
from statsmodels.stats import weightstats

from verify.stats import core, ttests
from verify.stats.errors import DegenerateDataError

ALTERNATIVES = ("two-sided", "less", "greater")
SM_ALTERNATIVE = {"two-sided": "two-sided", "less": "smaller", "greater": "larger"}
TWO_SAMPLE = ("welch", "pooled")
FAST = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _read(path):
    return pd.read_csv(path, comment="#")


@pytest.fixture(scope="module")
def fleets(reference_dir):
    """NIST auto83b: fleet 1 (249 cars) and fleet 2 (79 cars, -999 = missing dropped)."""
    df = _read(reference_dir / "nist-handbook" / "auto83b.csv")
    f1 = df["fleet1_mpg"].to_numpy(float)
    f2 = df["fleet2_mpg"].to_numpy(float)
    return f1[f1 != -999], f2[f2 != -999]


@pytest.fixture(scope="module")
def zarr13(reference_dir):
    return _read(reference_dir / "nist-handbook" / "zarr13.csv")["heat_flow"].to_numpy(float)


@pytest.fixture(scope="module")
def clinic(reference_dir):
    """clinic.csv: group 1 is rows 1-15, group 2 rows 16-30 (reference README)."""
    df = _read(reference_dir / "equivalence" / "clinic.csv")
    return df.iloc[:15], df.iloc[15:30]


# --- published values -----------------------------------------------------------------------


def test_nist_auto83b_pooled_two_sample(fleets):
    fleet1, fleet2 = fleets
    # The handbook computes fleet1 minus fleet2; our effect is new minus old, so fleet 1 is new.
    res = ttests.pooled(fleet2, fleet1)
    eff = ttests.effect("pooled", fleet1, fleet2)
    # NIST/SEMATECH e-Handbook 1.3.5.3: n 249 / 79, means 20.14458 / 30.48101,
    # sds 6.41470 / 6.10771 (printed to 7 digits)
    assert (eff.n_new, eff.n_old) == (249, 79)
    assert eff.mean_new == pytest.approx(20.14458, rel=1e-6)
    assert eff.mean_old == pytest.approx(30.48101, rel=1e-6)
    assert eff.sd_new == pytest.approx(6.41470, rel=1e-5)
    assert eff.sd_old == pytest.approx(6.10771, rel=1e-5)
    # NIST/SEMATECH e-Handbook 1.3.5.3: T = -12.62059, pooled sd 6.34260, df 326
    assert res.statistic == pytest.approx(-12.62059, rel=1e-6)
    assert eff.sd == pytest.approx(6.34260, rel=1e-6)
    assert res.df == 326
    # NIST/SEMATECH e-Handbook 1.3.5.3: t(0.975, 326) = 1.9673, t(0.95, 326) = 1.6495
    assert res.critical_value(0.05) == pytest.approx(1.9673, abs=5e-5)
    assert core.critical_value(326, 0.05, "greater") == pytest.approx(1.6495, abs=5e-5)
    # NIST/SEMATECH e-Handbook 1.3.5.3: 95% CI of the difference (-11.947653, -8.725216)
    ci = res.confidence_interval(0.95)
    assert ci.low == pytest.approx(-11.947653, rel=1e-6)
    assert ci.high == pytest.approx(-8.725216, rel=1e-6)


def test_nist_zarr13_one_sample(zarr13):
    res = ttests.one_sample(zarr13, target=5.0)
    eff = ttests.effect("one-sample", zarr13, target=5.0)
    # NIST/SEMATECH e-Handbook 1.3.5.2: n 195, mean 9.261460, sd 0.022789
    assert eff.n_new == 195
    assert eff.mean_new == pytest.approx(9.261460, rel=1e-6)
    assert eff.sd == pytest.approx(0.022789, rel=1e-4)
    assert res.df == 194
    # NIST/SEMATECH e-Handbook 1.3.5.2: t(0.975, 194) = 1.9723
    assert res.critical_value(0.05) == pytest.approx(1.9723, abs=5e-5)
    # NIST/SEMATECH e-Handbook 1.3.5.2: T = 2611.284 for mu0 = 5 (handbook rounded its inputs)
    assert res.statistic == pytest.approx(2611.284, rel=1e-6)
    # NIST/SEMATECH e-Handbook 1.3.5.2: 95% CI for the mean (9.258242, 9.264679); our interval
    # is for mean - target, so add the target back
    ci = ttests.one_sample(zarr13, target=0.0).confidence_interval(0.95)
    assert ci.low == pytest.approx(9.258242, rel=1e-6)
    assert ci.high == pytest.approx(9.264679, rel=1e-6)
    shifted = res.confidence_interval(0.95)
    assert shifted.low + 5.0 == pytest.approx(ci.low, rel=1e-12)


def test_r_welch_clinic_var1(clinic):
    g1, g2 = clinic
    # R: t.test(var1[1:15], var1[16:30])  (Welch), via statsmodels test_tost.py
    res = ttests.welch(g2["var1"], g1["var1"])
    assert res.statistic == pytest.approx(0.650438363512706, rel=1e-10)
    assert res.df == pytest.approx(26.7484787582315, rel=1e-10)
    # R: t.test(var1[1:15], var1[16:30], mu=1, alternative="less")
    res = ttests.welch(g2["var1"], g1["var1"], null_value=1.0, alternative="less")
    assert res.statistic == pytest.approx(-3.299592184135306, rel=1e-10)
    assert res.pvalue == pytest.approx(0.001372434925571605, rel=1e-9)


def test_r_pooled_and_paired_clinic_var1(clinic):
    g1, g2 = clinic
    # R: t.test(var1[1:15], var1[16:30], mu=1, var.equal=TRUE)
    res = ttests.pooled(g2["var1"], g1["var1"], null_value=1.0)
    assert res.pvalue == pytest.approx(0.002643203760742494, rel=1e-9)
    ci = res.confidence_interval(0.95)
    assert ci.low == pytest.approx(-0.35391340938235, rel=1e-10)
    assert ci.high == pytest.approx(0.6832467427156834, rel=1e-10)
    # R: t.test(var1[1:15], var1[16:30], paired=TRUE)
    res = ttests.paired(g2["var1"], g1["var1"])
    assert res.statistic == pytest.approx(1.213001548676048, rel=1e-10)
    assert res.pvalue == pytest.approx(0.245199929713149, rel=1e-9)
    ci = res.confidence_interval(0.95)
    assert ci.low == pytest.approx(-0.1264911434745851, rel=1e-10)
    assert ci.high == pytest.approx(0.4558244768079186, rel=1e-10)


# --- cross-checks against scipy and statsmodels ---------------------------------------------


def _sample(seed: int, n: int, loc: float = 10.0, scale: float = 1.0) -> np.ndarray:
    return np.random.default_rng(seed).normal(loc, scale, n)


seeds = st.integers(0, 2**32 - 1)
sizes = st.integers(2, 40)
scales = st.floats(0.01, 100.0)
shifts = st.floats(-5.0, 5.0)


@FAST
@given(seed=seeds, n=sizes, scale=scales, target=shifts)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_one_sample_matches_scipy(alternative, seed, n, scale, target):
    x = _sample(seed, n, 0.0, scale)
    ours = ttests.one_sample(x, target=target, alternative=alternative)
    # scipy: stats.ttest_1samp(x, popmean=target, alternative=alternative)
    ref = stats.ttest_1samp(x, target, alternative=alternative)
    assert ours.statistic == pytest.approx(ref.statistic, rel=1e-9, abs=1e-9)
    assert ours.pvalue == pytest.approx(ref.pvalue, rel=1e-9, abs=1e-14)
    assert ours.df == ref.df
    ci, rci = ours.confidence_interval(0.9), ref.confidence_interval(0.9)
    # scipy's interval is for the mean; ours for mean - target
    assert ci.low + target == pytest.approx(rci.low, rel=1e-9, abs=1e-9 * scale)
    assert ci.high + target == pytest.approx(rci.high, rel=1e-9, abs=1e-9 * scale)


@FAST
@given(seed=seeds, n=sizes, scale=scales, shift=shifts)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_paired_matches_scipy(alternative, seed, n, scale, shift):
    old = _sample(seed, n, 50.0, scale)
    new = old + _sample(seed + 1, n, shift * scale, scale)
    ours = ttests.paired(old, new, alternative=alternative)
    # scipy: stats.ttest_rel(new, old, alternative=alternative)  (mean of new - old)
    ref = stats.ttest_rel(new, old, alternative=alternative)
    assert ours.statistic == pytest.approx(ref.statistic, rel=1e-8, abs=1e-9)
    assert ours.pvalue == pytest.approx(ref.pvalue, rel=1e-8, abs=1e-14)
    assert ours.df == ref.df
    ci, rci = ours.confidence_interval(0.95), ref.confidence_interval(0.95)
    assert ci.low == pytest.approx(rci.low, rel=1e-8, abs=1e-9 * scale)
    assert ci.high == pytest.approx(rci.high, rel=1e-8, abs=1e-9 * scale)


@FAST
@given(seed=seeds, n1=sizes, n2=sizes, s1=scales, ratio=st.floats(0.1, 10.0), shift=shifts)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
@pytest.mark.parametrize("design", TWO_SAMPLE)
def test_two_sample_matches_scipy(design, alternative, seed, n1, n2, s1, ratio, shift):
    old = _sample(seed, n2, 100.0, s1 * ratio)
    new = _sample(seed + 1, n1, 100.0 + shift * s1, s1)
    ours = (
        ttests.welch(old, new, alternative=alternative)
        if design == "welch"
        else (ttests.pooled(old, new, alternative=alternative))
    )
    # scipy: stats.ttest_ind(new, old, equal_var=(design == "pooled"), alternative=alternative)
    ref = stats.ttest_ind(new, old, equal_var=design == "pooled", alternative=alternative)
    assert ours.statistic == pytest.approx(ref.statistic, rel=1e-8, abs=1e-9)
    assert ours.pvalue == pytest.approx(ref.pvalue, rel=1e-8, abs=1e-14)
    assert ours.df == pytest.approx(ref.df, rel=1e-10)
    ci, rci = ours.confidence_interval(0.95), ref.confidence_interval(0.95)
    assert ci.low == pytest.approx(rci.low, rel=1e-8, abs=1e-9 * s1)
    assert ci.high == pytest.approx(rci.high, rel=1e-8, abs=1e-9 * s1)


@FAST
@given(seed=seeds, n1=sizes, n2=sizes, value=st.floats(-2.0, 2.0))
@pytest.mark.parametrize("alternative", ALTERNATIVES)
@pytest.mark.parametrize("design", TWO_SAMPLE)
def test_two_sample_with_null_value_matches_statsmodels(design, alternative, seed, n1, n2, value):
    old = _sample(seed, n2, 3.0, 1.0)
    new = _sample(seed + 1, n1, 3.5, 1.5)
    fn = ttests.welch if design == "welch" else ttests.pooled
    ours = fn(old, new, alternative=alternative, null_value=value)
    usevar = "unequal" if design == "welch" else "pooled"
    # statsmodels: weightstats.ttest_ind(new, old, alternative=..., usevar=..., value=value)
    tstat, pvalue, dof = weightstats.ttest_ind(
        new, old, alternative=SM_ALTERNATIVE[alternative], usevar=usevar, value=value
    )
    assert ours.statistic == pytest.approx(tstat, rel=1e-9, abs=1e-9)
    assert ours.pvalue == pytest.approx(pvalue, rel=1e-8, abs=1e-14)
    assert ours.df == pytest.approx(dof, rel=1e-10)


@FAST
@given(
    est=st.floats(-10, 10),
    se=st.floats(0.01, 10),
    df=st.floats(1.0, 500.0),
    level=st.floats(0.5, 0.999),
)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_interval_matches_statsmodels_tconfint_generic(alternative, est, se, df, level):
    ours = core.confidence_interval(est, se, df, level=level, alternative=alternative)
    # statsmodels: weightstats._tconfint_generic(est, se, df, 1 - level, alternative)
    low, high = weightstats._tconfint_generic(est, se, df, 1 - level, SM_ALTERNATIVE[alternative])
    assert ours.low == pytest.approx(low, rel=1e-10, abs=1e-10)
    assert ours.high == pytest.approx(high, rel=1e-10, abs=1e-10)


# --- raw data and summary statistics agree --------------------------------------------------


@FAST
@given(seed=seeds, n1=sizes, n2=sizes)
@pytest.mark.parametrize("alternative", ALTERNATIVES)
def test_raw_and_from_stats_agree(alternative, seed, n1, n2):
    old = _sample(seed, n2, 7.0, 0.4)
    new = _sample(seed + 1, n1, 7.1, 0.6)

    def summary(x):
        n, m, s = core.mean_sd(x)
        return n, m, s

    nn, mn, sn = summary(new)
    no, mo, so = summary(old)
    for raw, fs in (
        (
            ttests.welch(old, new, alternative=alternative),
            ttests.welch_from_stats(
                n_old=no,
                mean_old=mo,
                sd_old=so,
                n_new=nn,
                mean_new=mn,
                sd_new=sn,
                alternative=alternative,
            ),
        ),
        (
            ttests.pooled(old, new, alternative=alternative),
            ttests.pooled_from_stats(
                n_old=no,
                mean_old=mo,
                sd_old=so,
                n_new=nn,
                mean_new=mn,
                sd_new=sn,
                alternative=alternative,
            ),
        ),
        (
            ttests.one_sample(new, target=7.0, alternative=alternative),
            ttests.one_sample_from_stats(n=nn, mean=mn, sd=sn, target=7.0, alternative=alternative),
        ),
    ):
        assert raw.statistic == pytest.approx(fs.statistic, rel=1e-12)
        assert raw.pvalue == pytest.approx(fs.pvalue, rel=1e-12, abs=1e-300)
        assert raw.df == pytest.approx(fs.df, rel=1e-12)
    m = min(n1, n2)
    d = new[:m] - old[:m]
    nd, md, sd_ = summary(d)
    raw = ttests.paired(old[:m], new[:m], alternative=alternative)
    fs = ttests.paired_from_stats(n=nd, mean=md, sd=sd_, alternative=alternative)
    assert raw.statistic == pytest.approx(fs.statistic, rel=1e-12)
    assert raw.pvalue == pytest.approx(fs.pvalue, rel=1e-12, abs=1e-300)
    generic = ttests.t_test_from_stats(
        "paired", n_new=nd, mean_new=md, sd_new=sd_, alternative=alternative
    )
    assert generic == fs


def test_effect_from_stats_matches_effect_on_raw_data():
    old = _sample(1, 12, 5.0, 0.2)
    new = _sample(2, 9, 5.1, 0.3)
    for design in TWO_SAMPLE:
        raw = ttests.effect(design, new, old)
        fs = ttests.effect_from_stats(
            design,
            n_new=9,
            mean_new=raw.mean_new,
            sd_new=raw.sd_new,
            n_old=12,
            mean_old=raw.mean_old,
            sd_old=raw.sd_old,
        )
        assert fs == raw


# --- invariants -----------------------------------------------------------------------------


@FAST
@given(seed=seeds, n1=sizes, n2=sizes)
@pytest.mark.parametrize("design", ("paired", "welch", "pooled"))
def test_swapping_old_and_new_negates(design, seed, n1, n2):
    if design == "paired":
        n2 = n1
    a = _sample(seed, n1, 2.0, 1.0)
    b = _sample(seed + 1, n2, 2.3, 0.5)
    forward = ttests.t_test(design, a, b)
    backward = ttests.t_test(design, b, a)
    assert backward.estimate == pytest.approx(-forward.estimate, rel=1e-12, abs=1e-15)
    assert backward.statistic == pytest.approx(-forward.statistic, rel=1e-12, abs=1e-15)
    assert backward.pvalue == pytest.approx(forward.pvalue, rel=1e-10)
    assert backward.df == pytest.approx(forward.df, rel=1e-12)
    less = ttests.t_test(design, a, b, alternative="less")
    greater = ttests.t_test(design, b, a, alternative="greater")
    assert less.pvalue == pytest.approx(greater.pvalue, rel=1e-10, abs=1e-300)


@FAST
@given(seed=seeds, n1=sizes, n2=sizes, c=st.floats(-1e4, 1e4))
@pytest.mark.parametrize("design", TWO_SAMPLE)
def test_adding_a_constant_leaves_two_sample_results_unchanged(design, seed, n1, n2, c):
    old = _sample(seed, n2, 0.0, 1.0)
    new = _sample(seed + 1, n1, 0.5, 2.0)
    base = ttests.t_test(design, new, old)
    moved = ttests.t_test(design, new + c, old + c)
    # adding c costs up to |c| * eps of absolute precision in each value
    tol = 1e-12 * (1.0 + abs(c))
    assert moved.estimate == pytest.approx(base.estimate, abs=10 * tol)
    assert moved.standard_error == pytest.approx(base.standard_error, rel=1e-6, abs=10 * tol)
    assert moved.statistic == pytest.approx(base.statistic, rel=1e-6, abs=1e-6)
    assert moved.df == pytest.approx(base.df, rel=1e-6)


@FAST
@given(seed=seeds, n1=sizes, n2=sizes, k=st.floats(1e-3, 1e3))
@pytest.mark.parametrize("design", ttests.DESIGNS)
def test_scaling_the_data_scales_estimates_and_intervals(design, seed, n1, n2, k):
    if design == "paired":
        n2 = n1
    a = _sample(seed, n1, 1.0, 1.0)
    b = _sample(seed + 1, n2, 1.2, 0.7)
    old = None if design == "one-sample" else b
    target = 0.9 if design == "one-sample" else None
    base = ttests.t_test(design, a, old, target=target)
    scaled = ttests.t_test(
        design,
        a * k,
        None if old is None else old * k,
        target=None if target is None else target * k,
    )
    assert scaled.estimate == pytest.approx(k * base.estimate, rel=1e-9, abs=1e-12 * k)
    assert scaled.standard_error == pytest.approx(k * base.standard_error, rel=1e-9)
    assert scaled.statistic == pytest.approx(base.statistic, rel=1e-8, abs=1e-9)
    ci0, ci1 = base.confidence_interval(0.95), scaled.confidence_interval(0.95)
    assert ci1.low == pytest.approx(k * ci0.low, rel=1e-8, abs=1e-9 * k)
    assert ci1.high == pytest.approx(k * ci0.high, rel=1e-8, abs=1e-9 * k)


@pytest.mark.parametrize("level", (0.8, 0.9, 0.95, 0.99))
def test_pvalue_at_an_interval_bound_equals_alpha(level):
    # The duality of tests and intervals (common practice): the 1 - alpha interval holds
    # exactly the null values that a two-sided test at alpha does not reject.
    old = _sample(11, 10, 4.0, 0.3)
    new = _sample(12, 14, 4.2, 0.4)
    alpha = 1.0 - level
    ci = ttests.welch(old, new).confidence_interval(level)
    for bound in (ci.low, ci.high):
        at_bound = ttests.welch(old, new, null_value=bound)
        assert at_bound.pvalue == pytest.approx(alpha, rel=1e-9)
    # one-sided at the lower end of the two-sided interval: alpha / 2
    greater = ttests.welch(old, new, null_value=ci.low, alternative="greater")
    assert greater.pvalue == pytest.approx(alpha / 2, rel=1e-9)
    # the one-sided 1 - alpha bound and the one-sided test at alpha
    bound = ttests.welch(old, new, alternative="greater").confidence_interval(level)
    assert math.isinf(bound.high)
    one_sided = ttests.welch(old, new, null_value=bound.low, alternative="greater")
    assert one_sided.pvalue == pytest.approx(alpha, rel=1e-9)


# --- facts of the trade and the definition of Effect ----------------------------------------


def test_degrees_of_freedom_common_practice():
    x = _sample(3, 17, 0.0, 1.0)
    y = _sample(4, 11, 0.0, 1.0)
    # common practice: df = n - 1 (one-sample, paired) and n1 + n2 - 2 (pooled)
    assert ttests.one_sample(x).df == 16
    assert ttests.paired(x[:11], y).df == 10
    assert ttests.pooled(y, x).df == 17 + 11 - 2
    # common practice: the Welch df lies between min(n1, n2) - 1 and n1 + n2 - 2
    assert 10 <= ttests.welch(y, x).df <= 26


def test_effect_sd_definitions():
    old = _sample(5, 8, 0.0, 1.0)
    new = _sample(6, 8, 0.0, 3.0)
    pooled = ttests.effect("pooled", new, old)
    welch = ttests.effect("welch", new, old)
    # with equal lot sizes the Welch standard error equals the pooled one (algebra)
    assert welch.sd == pytest.approx(pooled.sd, rel=1e-12)
    assert welch.standard_error == pytest.approx(pooled.standard_error, rel=1e-12)
    for e in (pooled, welch):
        assert e.standard_error == pytest.approx(e.sd * math.sqrt(1 / 8 + 1 / 8), rel=1e-12)
    paired = ttests.effect("paired", new, old)
    assert paired.sd == pytest.approx(np.std(new - old, ddof=1), rel=1e-12)
    assert (paired.n_new, paired.n_old) == (8, 8)
    one = ttests.effect("one-sample", new, target=0.5)
    assert one.n_old is None and one.estimate == pytest.approx(np.mean(new) - 0.5, rel=1e-12)


# --- degenerate and bad input ---------------------------------------------------------------


@pytest.mark.parametrize(
    "call",
    [
        lambda: ttests.one_sample([1.0]),
        lambda: ttests.one_sample([]),
        lambda: ttests.one_sample([2.0, 2.0, 2.0]),
        lambda: ttests.one_sample([1.0, math.nan, 2.0]),
        lambda: ttests.one_sample([1.0, math.inf]),
        lambda: ttests.paired([1.0, 2.0, 3.0], [2.0, 3.0, 4.0]),  # constant differences
        lambda: ttests.welch([1.0, 1.0], [2.0, 2.0]),
        lambda: ttests.pooled([1.0, 1.0], [2.0, 2.0, 2.0]),
        lambda: ttests.welch([1.0], [2.0, 3.0]),
        lambda: ttests.welch([1.0, 2.0], [3.0]),
        lambda: ttests.welch_from_stats(
            n_old=1, mean_old=0, sd_old=1, n_new=5, mean_new=0, sd_new=1
        ),
        lambda: ttests.one_sample_from_stats(n=5, mean=1.0, sd=0.0),
        lambda: ttests.one_sample_from_stats(n=5, mean=math.nan, sd=1.0),
        lambda: ttests.pooled_from_stats(
            n_old=5, mean_old=0, sd_old=0, n_new=5, mean_new=1, sd_new=0
        ),
        lambda: ttests.one_sample([1e200, -1e200, 3.0]),
    ],
)
def test_degenerate_data_raise_with_a_reason(call):
    with pytest.raises(DegenerateDataError) as info:
        call()
    assert len(str(info.value)) > 10


def test_bad_arguments_raise_value_error():
    with pytest.raises(ValueError, match="equal lengths"):
        ttests.paired([1.0, 2.0, 3.0], [1.0, 2.5])
    with pytest.raises(ValueError, match="target"):
        ttests.effect("one-sample", [1.0, 2.0])
    with pytest.raises(ValueError, match="design"):
        ttests.effect("two-sample", [1.0, 2.0], [1.0, 3.0])
    with pytest.raises(ValueError, match="alternative"):
        ttests.one_sample([1.0, 2.0], alternative="bigger")
    with pytest.raises(ValueError, match="target"):
        ttests.effect("welch", [1.0, 2.0], [1.0, 3.0], target=1.0)
    with pytest.raises(ValueError, match="whole number"):
        ttests.one_sample_from_stats(n=4.5, mean=1.0, sd=1.0)


@FAST
@given(
    new=st.lists(st.floats(allow_nan=True, allow_infinity=True), max_size=6),
    old=st.lists(st.floats(allow_nan=True, allow_infinity=True), max_size=6),
)
@pytest.mark.parametrize("design", ("paired", "welch", "pooled"))
def test_garbage_input_gives_a_clean_error_or_finite_result(design, new, old):
    try:
        res = ttests.t_test(design, new, old)
    except (DegenerateDataError, ValueError):
        return
    for v in (res.estimate, res.standard_error, res.df, res.statistic, res.pvalue):
        assert math.isfinite(v)
    assert 0.0 <= res.pvalue <= 1.0
