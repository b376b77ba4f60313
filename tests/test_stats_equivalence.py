"""TOST equivalence and non-inferiority (verify.stats.equivalence).

Published values: the R package equivalence, as kept in the statsmodels test suite
(statsmodels/stats/tests/test_tost.py) and listed in ../shared/reference/README.md.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from statsmodels.stats import weightstats

from verify.stats import core, equivalence, ttests
from verify.stats.errors import DegenerateDataError

FAST = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
LOG125 = math.log(1.25)


@pytest.fixture(scope="module")
def clinic(reference_dir):
    """clinic.csv: group 1 is rows 1-15, group 2 rows 16-30 (reference README)."""
    df = pd.read_csv(reference_dir / "equivalence" / "clinic.csv", comment="#")
    return df.iloc[:15], df.iloc[15:30]


# --- R equivalence package values -----------------------------------------------------------

# (design, variable, p, df, 90% interval) for group 1 minus group 2, margin 0.6
# R: equivalence::tost(x, y, epsilon = 0.6, paired = ..., var.equal = ...), values from
# statsmodels/stats/tests/test_tost.py
R_TOST = [
    ("paired", "var1", 0.003166881489265175, 14, (-0.0744336620516462, 0.4037669953849797)),
    ("paired", "var2", 0.4412034046017588, 14, (0.1261653305099018, 0.999168002823431)),
    (
        "welch",
        "var1",
        0.04853083976236974,
        26.7484787582315,
        (-0.2666862980722534, 0.596019631405587),
    ),
    (
        "welch",
        "var2",
        0.4317936812594803,
        24.11000151062728,
        (0.194916250699966, 0.930417082633366),
    ),
    ("pooled", "var1", 0.04827315100761467, 28, (-0.2659960620757337, 0.595329395409067)),
    ("pooled", "var2", 0.43169347692374, 28, (0.1969453064978777, 0.928388026835454)),
]


@pytest.mark.parametrize(("design", "var", "p", "df", "interval"), R_TOST)
def test_tost_matches_r_equivalence(clinic, design, var, p, df, interval):
    g1, g2 = clinic
    # differences are group 1 minus group 2 there: group 1 is new, group 2 old
    res = equivalence.tost(design, g1[var], g2[var], low=-0.6, high=0.6)
    assert res.pvalue == pytest.approx(p, rel=1e-9)
    assert res.df == pytest.approx(df, rel=1e-10)
    ci = res.confidence_interval(0.05)
    assert ci.level == pytest.approx(0.90)
    assert ci.low == pytest.approx(interval[0], rel=1e-9)
    assert ci.high == pytest.approx(interval[1], rel=1e-9)


def test_paired_var1_estimate_and_se(clinic):
    g1, g2 = clinic
    res = equivalence.tost("paired", g1["var1"], g2["var1"], low=-0.6, high=0.6)
    # R equivalence (statsmodels test_tost.py): mean 0.1646666666666667, se 0.1357514067862445
    assert res.estimate == pytest.approx(0.1646666666666667, rel=1e-12)
    assert res.standard_error == pytest.approx(0.1357514067862445, rel=1e-12)


def test_tost_log_margins_match_r(clinic, reference_dir):
    g1, g2 = clinic
    x1, x2 = np.log(g1["var1"].to_numpy()), np.log(g2["var1"].to_numpy())
    # R equivalence (statsmodels test_tost.py): paired log(var1), margin log(1.25):
    # p 0.0001664157928976468, df 14
    res = equivalence.tost("paired", x1, x2, low=-LOG125, high=LOG125)
    assert res.pvalue == pytest.approx(0.0001664157928976468, rel=1e-9)
    assert res.df == 14
    # Welch log(var1): p 0.01047085593138891, df 27.61177037646526
    res = equivalence.tost("welch", x1, x2, low=-LOG125, high=LOG125)
    assert res.pvalue == pytest.approx(0.01047085593138891, rel=1e-9)
    assert res.df == pytest.approx(27.61177037646526, rel=1e-10)
    # tost_s_paired_xy.csv: paired log(y) - log(x), margin log(1.25): p 0.003059338540563293,
    # df 11
    xy = pd.read_csv(reference_dir / "equivalence" / "tost_s_paired_xy.csv", comment="#")
    res = equivalence.tost(
        "paired", np.log(xy["y"].to_numpy()), np.log(xy["x"].to_numpy()), low=-LOG125, high=LOG125
    )
    assert res.pvalue == pytest.approx(0.003059338540563293, rel=1e-9)
    assert res.df == 11


# R equivalence (statsmodels test_tost.py): Welch, group 2 minus group 1, upper margin 0.6
R_ASYMMETRIC = [
    ("var1", -1.0, 0.00274867705173331),
    ("var1", -1.5, 0.00274867705173331),
    ("var2", -1.0, 0.02653543052872217),
    ("var3", -1.5, 0.0002319468040526358),
    ("var4", -1.5, 8.916466517494902e-05),
    ("var5", -1.5, 0.00010890038649094043),
]


@pytest.mark.parametrize(("var", "low", "p"), R_ASYMMETRIC)
def test_asymmetric_margins_match_r(clinic, var, low, p):
    g1, g2 = clinic
    # there the differences are group 2 minus group 1: group 2 is new
    res = equivalence.tost("welch", g2[var], g1[var], low=low, high=0.6)
    assert res.pvalue == pytest.approx(p, rel=1e-9)


# --- statsmodels cross-checks ---------------------------------------------------------------


def _sample(seed: int, n: int, loc: float, scale: float) -> np.ndarray:
    return np.random.default_rng(seed).normal(loc, scale, n)


seeds = st.integers(0, 2**32 - 1)
sizes = st.integers(2, 30)
margins = st.tuples(st.floats(0.05, 3.0), st.floats(0.05, 3.0))


@FAST
@given(seed=seeds, n1=sizes, n2=sizes, m=margins, shift=st.floats(-1.0, 1.0))
@pytest.mark.parametrize("design", ("welch", "pooled"))
def test_two_sample_tost_matches_statsmodels(design, seed, n1, n2, m, shift):
    old = _sample(seed, n2, 20.0, 1.0)
    new = _sample(seed + 1, n1, 20.0 + shift, 1.3)
    low, high = -m[0], m[1]
    res = equivalence.tost(design, new, old, low=low, high=high)
    usevar = "unequal" if design == "welch" else "pooled"
    # statsmodels: weightstats.ttost_ind(new, old, low, high, usevar=usevar)
    p, (t1, p1, df1), (t2, p2, df2) = weightstats.ttost_ind(new, old, low, high, usevar=usevar)
    assert res.pvalue == pytest.approx(p, rel=1e-8, abs=1e-15)
    assert res.statistic_lower == pytest.approx(t1, rel=1e-9, abs=1e-12)
    assert res.statistic_upper == pytest.approx(t2, rel=1e-9, abs=1e-12)
    assert res.p_lower == pytest.approx(p1, rel=1e-8, abs=1e-15)
    assert res.p_upper == pytest.approx(p2, rel=1e-8, abs=1e-15)
    assert res.df == pytest.approx(df1, rel=1e-10)


@FAST
@given(seed=seeds, n=sizes, m=margins, shift=st.floats(-1.0, 1.0))
def test_paired_tost_matches_statsmodels(seed, n, m, shift):
    old = _sample(seed, n, 5.0, 1.0)
    new = old + _sample(seed + 1, n, shift, 0.5)
    low, high = -m[0], m[1]
    res = equivalence.tost("paired", new, old, low=low, high=high)
    # statsmodels: weightstats.ttost_paired(new, old, low, high)
    p, (t1, p1, _), (t2, p2, _) = weightstats.ttost_paired(new, old, low, high)
    assert res.pvalue == pytest.approx(p, rel=1e-8, abs=1e-15)
    assert res.statistic_lower == pytest.approx(t1, rel=1e-9, abs=1e-12)
    assert res.statistic_upper == pytest.approx(t2, rel=1e-9, abs=1e-12)


@FAST
@given(seed=seeds, n1=sizes, n2=sizes, bound=st.floats(-2.0, 2.0))
@pytest.mark.parametrize("harmful", ("lower", "upper"))
@pytest.mark.parametrize("design", ("welch", "pooled"))
def test_noninferiority_matches_statsmodels_one_sided_test(design, harmful, seed, n1, n2, bound):
    old = _sample(seed, n2, 1.0, 0.2)
    new = _sample(seed + 1, n1, 1.05, 0.25)
    res = equivalence.noninferiority(design, new, old, bound=bound, harmful=harmful)
    alt = "larger" if harmful == "lower" else "smaller"
    usevar = "unequal" if design == "welch" else "pooled"
    # statsmodels: weightstats.ttest_ind(new, old, alternative=alt, usevar=usevar, value=bound)
    t, p, dof = weightstats.ttest_ind(new, old, alternative=alt, usevar=usevar, value=bound)
    assert res.statistic == pytest.approx(t, rel=1e-9, abs=1e-12)
    assert res.pvalue == pytest.approx(p, rel=1e-8, abs=1e-15)
    assert res.df == pytest.approx(dof, rel=1e-10)
    assert res.alternative == ("greater" if harmful == "lower" else "less")


# --- invariants -----------------------------------------------------------------------------


@FAST
@given(
    est=st.floats(-3, 3),
    se=st.floats(0.01, 2.0),
    df=st.floats(1.0, 200.0),
    low=st.floats(-3, 0.5),
    width=st.floats(0.01, 4.0),
    alpha=st.sampled_from([0.01, 0.025, 0.05, 0.1]),
)
def test_tost_rejects_exactly_when_the_interval_lies_inside_the_margins(
    est, se, df, low, width, alpha
):
    # Schuirmann (1987): TOST at alpha <=> the 1 - 2 alpha interval lies within the margins
    high = low + width
    res = equivalence.tost_from_estimate(est, se, df, low=low, high=high)
    ci = res.confidence_interval(alpha)
    inside = low < ci.low and ci.high < high
    # skip knife-edge cases where rounding could decide
    edge = min(abs(ci.low - low), abs(ci.high - high)) / se
    if edge > 1e-9:
        assert (res.pvalue < alpha) == inside


def test_tost_p_values_at_the_interval_ends_equal_alpha():
    est, se, df, alpha = 0.3, 0.2, 17.0, 0.05
    ci = core.confidence_interval(est, se, df, level=1 - 2 * alpha)
    # margins placed exactly at the interval ends: each one-sided p is alpha (duality)
    res = equivalence.tost_from_estimate(est, se, df, low=ci.low, high=ci.high)
    assert res.p_lower == pytest.approx(alpha, rel=1e-10)
    assert res.p_upper == pytest.approx(alpha, rel=1e-10)
    assert res.pvalue == pytest.approx(alpha, rel=1e-10)


@FAST
@given(seed=seeds, n1=sizes, n2=sizes, m=margins)
@pytest.mark.parametrize("design", ("paired", "welch", "pooled"))
def test_swapping_old_and_new_mirrors_the_margins(design, seed, n1, n2, m):
    if design == "paired":
        n2 = n1
    a = _sample(seed, n1, 0.0, 1.0)
    b = _sample(seed + 1, n2, 0.2, 1.0)
    fwd = equivalence.tost(design, a, b, low=-m[0], high=m[1])
    back = equivalence.tost(design, b, a, low=-m[1], high=m[0])
    assert back.estimate == pytest.approx(-fwd.estimate, rel=1e-12, abs=1e-15)
    assert back.p_lower == pytest.approx(fwd.p_upper, rel=1e-9, abs=1e-300)
    assert back.p_upper == pytest.approx(fwd.p_lower, rel=1e-9, abs=1e-300)
    assert back.pvalue == pytest.approx(fwd.pvalue, rel=1e-9, abs=1e-300)


def test_noninferiority_bound_duality():
    est, se, df, alpha = -0.1, 0.15, 22.0, 0.05
    lower = equivalence.noninferiority_from_estimate(est, se, df, bound=-0.5, harmful="lower")
    cb = lower.confidence_bound(alpha)
    assert math.isinf(cb.high) and cb.level == pytest.approx(0.95)
    # bound placed at the one-sided confidence bound: p = alpha (duality)
    at = equivalence.noninferiority_from_estimate(est, se, df, bound=cb.low, harmful="lower")
    assert at.pvalue == pytest.approx(alpha, rel=1e-10)
    upper = equivalence.noninferiority_from_estimate(est, se, df, bound=0.5, harmful="upper")
    cb = upper.confidence_bound(alpha)
    assert math.isinf(cb.low)
    at = equivalence.noninferiority_from_estimate(est, se, df, bound=cb.high, harmful="upper")
    assert at.pvalue == pytest.approx(alpha, rel=1e-10)
    assert upper.confidence_interval(0.95) == cb


def test_tost_is_the_larger_of_two_noninferiority_tests():
    new = _sample(21, 12, 3.0, 0.2)
    old = _sample(22, 15, 3.05, 0.25)
    res = equivalence.tost("welch", new, old, low=-0.3, high=0.2)
    lo = equivalence.noninferiority("welch", new, old, bound=-0.3, harmful="lower")
    hi = equivalence.noninferiority("welch", new, old, bound=0.2, harmful="upper")
    assert res.p_lower == pytest.approx(lo.pvalue, rel=1e-14)
    assert res.p_upper == pytest.approx(hi.pvalue, rel=1e-14)
    assert res.pvalue == max(lo.pvalue, hi.pvalue)
    assert res.statistic in (res.statistic_lower, res.statistic_upper)


def test_raw_and_from_stats_agree():
    new = _sample(31, 9, 10.0, 0.3)
    old = _sample(32, 13, 10.1, 0.2)
    n1, m1, s1 = core.mean_sd(new)
    n2, m2, s2 = core.mean_sd(old)
    for design in ("welch", "pooled"):
        raw = equivalence.tost(design, new, old, low=-0.4, high=0.3)
        fs = equivalence.tost_from_stats(
            design,
            n_new=n1,
            mean_new=m1,
            sd_new=s1,
            n_old=n2,
            mean_old=m2,
            sd_old=s2,
            low=-0.4,
            high=0.3,
        )
        assert raw == fs
        raw = equivalence.noninferiority(design, new, old, bound=-0.4, harmful="lower")
        fs = equivalence.noninferiority_from_stats(
            design,
            n_new=n1,
            mean_new=m1,
            sd_new=s1,
            n_old=n2,
            mean_old=m2,
            sd_old=s2,
            bound=-0.4,
            harmful="lower",
        )
        assert raw == fs
    one = equivalence.tost("one-sample", new, target=10.0, low=-0.2, high=0.2)
    one_fs = equivalence.tost_from_stats(
        "one-sample", n_new=n1, mean_new=m1, sd_new=s1, target=10.0, low=-0.2, high=0.2
    )
    assert one == one_fs
    assert one.estimate == pytest.approx(m1 - 10.0, rel=1e-12)
    eff = ttests.effect("one-sample", new, target=10.0)
    assert one.standard_error == eff.standard_error


def test_bad_margins_and_degenerate_data():
    with pytest.raises(ValueError, match="low < high"):
        equivalence.tost_from_estimate(0.0, 1.0, 10, low=0.5, high=-0.5)
    with pytest.raises(ValueError, match="harmful"):
        equivalence.noninferiority_from_estimate(0.0, 1.0, 10, bound=-1, harmful="left")
    with pytest.raises(DegenerateDataError):
        equivalence.tost("welch", [1.0, 1.0], [1.0, 1.0], low=-1, high=1)
    with pytest.raises(DegenerateDataError):
        equivalence.tost_from_estimate(math.nan, 1.0, 10, low=-1, high=1)
    with pytest.raises(DegenerateDataError):
        equivalence.tost_from_estimate(0.0, 0.0, 10, low=-1, high=1)
    with pytest.raises(ValueError, match="alpha"):
        equivalence.tost_from_estimate(0.0, 1.0, 10, low=-1, high=1).confidence_interval(0.6)
