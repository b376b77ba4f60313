"""Power, detectable shift and sample size (verify.stats.power).

Published values: the R package pwr, as kept in the statsmodels test suite
(statsmodels/stats/tests/test_power.py) and listed in ../shared/reference/README.md (those
numbers are copied here, so these checks need no data files). Cross-checks: statsmodels
TTestPower / TTestIndPower, and a seeded Monte Carlo simulation of the TOST decision.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from scipy import special
from statsmodels.stats.power import TTestIndPower, TTestPower

from verify.stats import noncentral, power
from verify.stats.errors import NotApplicableError

FAST = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
SM_ALTERNATIVE = {"two-sided": "two-sided", "less": "smaller", "greater": "larger"}

# --- R pwr values ---------------------------------------------------------------------------

# (d, n, alternative, power); sd = 1 so that the shift equals d
# R: pwr::pwr.t.test(d = d, n = n, sig.level = 0.05, type = "one.sample", alternative = ...)
R_PWR_ONE_SAMPLE = [
    (1.0, 30, "two-sided", 0.9995636009612725),
    (0.2, 20, "two-sided", 0.1359562887679666),
    (1.0, 30, "greater", 0.999892010204909),
    (0.05, 20, "greater", 0.0764888785042198),
    (0.2, 20, "less", 0.006063932667926375),
    (-0.2, 20, "less", 0.21707518167191),
]
# R: pwr::pwr.t.test(d = d, n = n, sig.level = 0.05, type = "two.sample", alternative = ...)
# and pwr::pwr.t2n.test(n1 = 20, n2 = 30, d = 0.1, ...)
R_PWR_TWO_SAMPLE = [
    (1.0, 30, 30, "two-sided", 0.967708258242517),
    (0.1, 20, 20, "two-sided", 0.06095912465411235),
    (1.0, 30, 30, "greater", 0.985459690251624),
    (0.01, 30, 30, "greater", 0.0540740302835667),
    (0.1, 20, 30, "two-sided", 0.0633081832564667),
    (0.1, 20, 30, "greater", 0.09623589080917805),
]


@pytest.mark.parametrize(("d", "n", "alternative", "expected"), R_PWR_ONE_SAMPLE)
def test_one_sample_power_matches_r_pwr(d, n, alternative, expected):
    got = power.power_t(d, 1.0, n, design="one-sample", alternative=alternative)
    assert got == pytest.approx(expected, rel=1e-9)
    # paired power is the one-sample power of the differences
    assert power.power_t(d, 1.0, n, design="paired", alternative=alternative) == got


@pytest.mark.parametrize(("d", "n1", "n2", "alternative", "expected"), R_PWR_TWO_SAMPLE)
def test_two_sample_power_matches_r_pwr(d, n1, n2, alternative, expected):
    got = power.power_t(d, 1.0, n1, n2, design="pooled", alternative=alternative)
    assert got == pytest.approx(expected, rel=1e-9)
    # Welch with equal sds: same noncentrality, Welch-Satterthwaite df (= n1 + n2 - 2 when
    # n1 = n2), so equal to the pooled power for equal lots and close otherwise
    welch = power.power_t(d, 1.0, n1, n2, design="welch", alternative=alternative)
    assert welch == pytest.approx(got, rel=1e-12 if n1 == n2 else 1e-2)


# --- statsmodels cross-checks ---------------------------------------------------------------


def _check_against(ours: float, ref: float) -> None:
    """Compare with a statsmodels power. Where statsmodels passes scipy's NaN on from far in
    the noncentral-t tail (it does, e.g. d = 1, n = 72, alpha = 0.01), ours must still be a
    probability; test_power_where_statsmodels_gives_nan checks such a case by a second route.
    """
    assert math.isfinite(ours) and 0.0 <= ours <= 1.0
    if math.isnan(ref):
        return
    assert ours == pytest.approx(ref, rel=1e-7, abs=1e-12)


@FAST
@given(d=st.floats(-1.5, 1.5), n=st.integers(2, 200), alpha=st.sampled_from([0.01, 0.05, 0.1]))
@pytest.mark.parametrize("alternative", ("two-sided", "less", "greater"))
def test_one_sample_power_matches_statsmodels(alternative, d, n, alpha):
    ours = power.power_t(d, 1.0, n, design="one-sample", alpha=alpha, alternative=alternative)
    # statsmodels: TTestPower().power(effect_size=d, nobs=n, alpha=alpha, alternative=...)
    ref = TTestPower().power(d, n, alpha, alternative=SM_ALTERNATIVE[alternative])
    _check_against(ours, float(ref))


@FAST
@given(d=st.floats(-1.5, 1.5), n1=st.integers(2, 150), n2=st.integers(2, 150))
@pytest.mark.parametrize("alternative", ("two-sided", "less", "greater"))
def test_two_sample_power_matches_statsmodels(alternative, d, n1, n2):
    ours = power.power_t(d, 1.0, n1, n2, design="pooled", alternative=alternative)
    # statsmodels: TTestIndPower().power(effect_size=d, nobs1=n1, alpha=0.05, ratio=n2 / n1)
    ref = TTestIndPower().power(d, n1, 0.05, ratio=n2 / n1, alternative=SM_ALTERNATIVE[alternative])
    _check_against(ours, float(ref))


@FAST
@given(
    shift=st.floats(-0.5, 1.0),
    m=st.floats(0.1, 1.0),
    n1=st.integers(2, 100),
    n2=st.integers(2, 100),
)
@pytest.mark.parametrize("harmful", ("lower", "upper"))
def test_noninferiority_power_matches_statsmodels(harmful, shift, m, n1, n2):
    bound = -m if harmful == "lower" else m
    ours = power.power_noninferiority(
        shift, 1.0, n1, n2, design="pooled", bound=bound, harmful=harmful
    )
    alt = "larger" if harmful == "lower" else "smaller"
    # statsmodels: TTestIndPower().power(effect_size=shift - bound, nobs1=n1, alpha=0.05,
    #              ratio=n2 / n1, alternative=alt)
    ref = TTestIndPower().power(shift - bound, n1, 0.05, ratio=n2 / n1, alternative=alt)
    _check_against(ours, float(ref))


def test_sample_size_matches_statsmodels_solution_rounded_up():
    # statsmodels: TTestIndPower().solve_power(effect_size=1, alpha=0.05, power=0.8) = 16.71...
    ref = TTestIndPower().solve_power(effect_size=1.0, alpha=0.05, power=0.8)
    got = power.sample_size_t(1.0, 1.0, design="pooled")
    assert got.n_new == got.n_old == math.ceil(ref)
    # statsmodels: TTestPower().solve_power(effect_size=0.5, alpha=0.05, power=0.8) = 33.37...
    ref = TTestPower().solve_power(effect_size=0.5, alpha=0.05, power=0.8)
    got = power.sample_size_t(0.5, 1.0, design="one-sample")
    assert got.n_new == math.ceil(ref) and got.n_old is None


def test_detectable_shift_matches_statsmodels():
    # statsmodels: TTestPower().solve_power(nobs=30, alpha=0.05, power=0.8) (solves for d; its
    # root finder stops at about 1e-7 relative)
    ref = TTestPower().solve_power(effect_size=None, nobs=30, alpha=0.05, power=0.8)
    got = power.detectable_shift(1.0, 30, design="one-sample")
    assert got == pytest.approx(float(ref), rel=1e-6)


@pytest.mark.parametrize("design", ("one-sample", "paired", "welch", "pooled"))
@pytest.mark.parametrize("alternative", ("two-sided", "less", "greater"))
def test_detectable_shift_reaches_the_power(design, alternative):
    n_old = None if design == "one-sample" else 12
    n_new = 12
    d = power.detectable_shift(2.0, n_new, n_old, design=design, alternative=alternative, power=0.9)
    assert d > 0
    signed = -d if alternative == "less" else d
    p = power.power_t(signed, 2.0, n_new, n_old, design=design, alternative=alternative)
    assert p == pytest.approx(0.9, abs=1e-10)


# --- the noncentral t never yields NaN ------------------------------------------------------

# points where scipy.special.nctdtr returned NaN in scipy 1.17 (found by a grid scan)
NCT_TRAPS = [
    (-1.96, 5.0, 11.18),
    (-1.96, 50.0, 20.0),
    (-1.96, 499.0, 20.0),
    (-1.96, 5000.0, 11.18),
    (8.0, 1.0, -8.0),
    (-1.4, 1.0, -60.0),
    (-1.9647, 499.0, 11.18),
]


@pytest.mark.parametrize(("x", "df", "nc"), NCT_TRAPS)
def test_nct_cdf_is_finite_in_the_far_tails(x, df, nc):
    got = power.nct_cdf(x, df, nc)
    assert math.isfinite(got) and 0.0 <= got <= 1.0
    # a second route: the normal CDF integrated over the distribution of the sample sd
    assert got == pytest.approx(noncentral._nct_cdf_by_integration(x, df, nc), abs=1e-12)


def test_nct_cdf_agrees_with_scipy_where_scipy_is_finite():
    rng = np.random.default_rng(7)
    for _ in range(300):
        df = float(rng.choice([1, 2, 5, 10, 30, 100, 499, 1e4]))
        nc, x = rng.uniform(-15, 15), rng.uniform(-6, 6)
        with np.errstate(all="ignore"):
            ref = float(special.nctdtr(df, nc, x))
        if math.isfinite(ref):
            # scipy.special.nctdtr against our integration route
            assert noncentral._nct_cdf_by_integration(x, df, nc) == pytest.approx(ref, abs=1e-9)


def test_power_where_statsmodels_gives_nan():
    # statsmodels: TTestPower().power(1.0, 72, 0.01) gave NaN with scipy 1.17 (noncentral t
    # lower tail); ours must be the two tails computed by the integration route
    ours = power.power_t(1.0, 1.0, 72, design="one-sample", alpha=0.01)
    c = special.stdtrit(71, 0.995)
    nc = math.sqrt(72)
    upper = 1.0 - noncentral._nct_cdf_by_integration(c, 71, nc)
    lower = noncentral._nct_cdf_by_integration(-c, 71, nc)
    assert ours == pytest.approx(upper + lower, abs=1e-12)


def test_power_is_finite_for_large_shifts_and_lots():
    # the note's example: one-sample n = 500 (df 499), noncentrality about 11.18
    assert power.power_t(0.5, 1.0, 500, design="one-sample") == pytest.approx(1.0, abs=1e-15)
    for n in (5, 50, 500, 5000):
        for shift in (-40.0, -3.0, 0.0, 0.7, 20.0):
            for alternative in ("two-sided", "less", "greater"):
                p = power.power_t(shift, 1.0, n, n, design="welch", alternative=alternative)
                assert math.isfinite(p) and 0.0 <= p <= 1.0


# --- exact TOST power -----------------------------------------------------------------------


def _simulate_tost(rng, design, n, shift, low, high, alpha=0.05, reps=20000):
    """Share of seeded simulated lots in which TOST shows equivalence (sd = 1)."""
    if design == "one-sample":
        x = rng.normal(shift, 1.0, (reps, n))
        est, se, df = x.mean(1), x.std(1, ddof=1) / math.sqrt(n), np.full(reps, n - 1.0)
    else:
        a, b = rng.normal(shift, 1.0, (reps, n)), rng.normal(0.0, 1.0, (reps, n))
        est = a.mean(1) - b.mean(1)
        va, vb = a.var(1, ddof=1) / n, b.var(1, ddof=1) / n
        if design == "pooled":
            se, df = np.sqrt(va + vb), np.full(reps, 2 * n - 2.0)  # equal n: same se
        else:
            se, df = np.sqrt(va + vb), (va + vb) ** 2 / (va**2 / (n - 1) + vb**2 / (n - 1))
    c = special.stdtrit(df, 1 - alpha)
    return float(np.mean(((est - low) / se > c) & ((est - high) / se < -c)))


@pytest.mark.parametrize("design", ("one-sample", "pooled"))
@pytest.mark.parametrize("n", (6, 8, 10))
def test_exact_tost_power_agrees_with_simulation(design, n):
    rng = np.random.default_rng(1000 + n)
    reps = 20000
    for shift, low, high in ((0.0, -1.0, 1.0), (0.3, -1.2, 1.0)):
        n_old = None if design == "one-sample" else n
        sim = _simulate_tost(rng, design, n, shift, low, high, reps=reps)
        exact = power.power_tost(shift, 1.0, n, n_old, design=design, low=low, high=high)
        approx = power.power_tost_shifted_t(shift, 1.0, n, n_old, design=design, low=low, high=high)
        mcse = math.sqrt(max(sim * (1 - sim), 0.01) / reps)
        # within 4 Monte Carlo standard errors of the simulation
        assert abs(exact - sim) < 4 * mcse
        # the shifted-t approximation is worse at these small lot sizes
        assert abs(approx - sim) > abs(exact - sim)
        if n == 6:
            assert abs(approx - sim) > 4 * mcse


def test_welch_tost_power_is_a_close_approximation():
    # Welch-Satterthwaite df from the planning sds stands in for the random Welch df; the
    # simulation of the real Welch procedure shows it within 0.015 even at n = 6 per lot.
    rng = np.random.default_rng(77)
    for n in (6, 10):
        sim = _simulate_tost(rng, "welch", n, 0.1, -1.0, 1.0)
        approx = power.power_tost(0.1, 1.0, n, n, design="welch", low=-1.0, high=1.0)
        assert abs(approx - sim) < 0.015


@FAST
@given(
    shift=st.floats(-1.0, 1.0), lo=st.floats(0.1, 2.0), hi=st.floats(0.1, 2.0), n=st.integers(2, 60)
)
def test_tost_power_lies_within_the_bounds_of_its_two_one_sided_tests(shift, lo, hi, n):
    # both one-sided tests must reject: P(A and B) <= min(P(A), P(B)) and >= P(A) + P(B) - 1
    kw = dict(design="pooled", alpha=0.05)
    both = power.power_tost(shift, 1.0, n, n, low=-lo, high=hi, **kw)
    a = power.power_noninferiority(shift, 1.0, n, n, bound=-lo, harmful="lower", **kw)
    b = power.power_noninferiority(shift, 1.0, n, n, bound=hi, harmful="upper", **kw)
    assert both <= min(a, b) + 1e-9
    assert both >= a + b - 1.0 - 1e-9


@pytest.mark.parametrize("n", (5, 20, 200))
def test_tost_power_at_a_margin_is_at_most_alpha(n):
    # common practice: TOST is a level-alpha test, so at a margin the power is <= alpha
    for shift in (-0.5, 0.5):
        p = power.power_tost(shift, 1.0, n, n, design="pooled", low=-0.5, high=0.5)
        assert p <= 0.05 + 1e-12


def test_shifted_t_approaches_exact_for_large_lots():
    exact = power.power_tost(0.05, 1.0, 2000, 2000, design="pooled", low=-0.1, high=0.1)
    approx = power.power_tost_shifted_t(0.05, 1.0, 2000, 2000, design="pooled", low=-0.1, high=0.1)
    assert approx == pytest.approx(exact, abs=1e-3)


# --- sample size ----------------------------------------------------------------------------


@pytest.mark.parametrize("design", ("one-sample", "paired", "welch", "pooled"))
@pytest.mark.parametrize("alternative", ("two-sided", "greater"))
def test_sample_size_t_is_the_smallest_integer(design, alternative):
    res = power.sample_size_t(0.6, 1.0, design=design, alternative=alternative, power=0.85)
    n_old = res.n_old if design in ("welch", "pooled") else None
    assert res.power >= 0.85 and res.target_power == 0.85
    assert res.power == power.power_t(
        0.6, 1.0, res.n_new, n_old, design=design, alternative=alternative
    )
    prev_old = None if n_old is None else n_old - 1
    prev = power.power_t(0.6, 1.0, res.n_new - 1, prev_old, design=design, alternative=alternative)
    assert prev < 0.85


@pytest.mark.parametrize("ratio", (0.5, 1.0, 2.0, 3.0))
def test_sample_size_ratio_sets_the_old_lot(ratio):
    res = power.sample_size_t(0.5, 1.0, design="pooled", ratio=ratio, power=0.9)
    assert res.n_old == max(2, math.ceil(res.n_new / ratio))
    below = power.power_t(
        0.5, 1.0, res.n_new - 1, max(2, math.ceil((res.n_new - 1) / ratio)), design="pooled"
    )
    assert below < 0.9 <= res.power


@pytest.mark.parametrize("design", ("one-sample", "pooled", "welch"))
def test_sample_size_tost_is_the_smallest_integer(design):
    res = power.sample_size_tost(0.1, 1.0, design=design, low=-0.5, high=0.6, power=0.9)
    n_old = None if design == "one-sample" else res.n_old
    assert res.power >= 0.9
    prev = power.power_tost(
        0.1,
        1.0,
        res.n_new - 1,
        None if n_old is None else n_old - 1,
        design=design,
        low=-0.5,
        high=0.6,
    )
    assert prev < 0.9


def test_sample_size_noninferiority_is_the_smallest_integer():
    res = power.sample_size_noninferiority(
        0.0, 1.0, design="pooled", bound=-0.5, harmful="lower", power=0.8
    )
    assert res.power >= 0.8
    prev = power.power_noninferiority(
        0.0, 1.0, res.n_new - 1, res.n_old - 1, design="pooled", bound=-0.5, harmful="lower"
    )
    assert prev < 0.8
    # statsmodels: TTestIndPower().solve_power(effect_size=0.5, alpha=0.05, power=0.8,
    #              alternative="larger")
    ref = TTestIndPower().solve_power(effect_size=0.5, alpha=0.05, power=0.8, alternative="larger")
    assert res.n_new == math.ceil(ref)


def test_impossible_plans_raise_not_applicable():
    with pytest.raises(NotApplicableError, match="margins"):
        power.sample_size_tost(0.7, 1.0, design="pooled", low=-0.5, high=0.5, power=0.9)
    with pytest.raises(NotApplicableError, match="margins"):
        power.sample_size_tost(0.5, 1.0, design="pooled", low=-0.5, high=0.5, power=0.9)
    with pytest.raises(NotApplicableError, match="100000"):
        power.sample_size_tost(0.0, 1.0, design="pooled", low=-0.001, high=0.001, power=0.9)
    with pytest.raises(NotApplicableError, match="100000"):
        power.sample_size_t(0.001, 1.0, design="one-sample")
    with pytest.raises(NotApplicableError, match="zero shift"):
        power.sample_size_t(0.0, 1.0, design="pooled")
    with pytest.raises(NotApplicableError, match="other side"):
        power.sample_size_t(-0.5, 1.0, design="pooled", alternative="greater")
    with pytest.raises(NotApplicableError, match="safe side"):
        power.sample_size_noninferiority(-0.6, 1.0, design="pooled", bound=-0.5, harmful="lower")


def test_bad_planning_inputs_raise_value_error():
    with pytest.raises(ValueError, match="sd"):
        power.power_t(1.0, 0.0, 10, design="one-sample")
    with pytest.raises(ValueError, match="n_old"):
        power.power_t(1.0, 1.0, 10, design="pooled")
    with pytest.raises(ValueError, match="at least 2"):
        power.power_t(1.0, 1.0, 1, design="one-sample")
    with pytest.raises(ValueError, match="ratio"):
        power.sample_size_t(1.0, 1.0, design="paired", ratio=2.0)
    with pytest.raises(ValueError, match="alpha"):
        power.power_tost(0.0, 1.0, 10, 10, design="pooled", alpha=0.6, low=-1, high=1)
    with pytest.raises(ValueError, match="exceed alpha"):
        power.detectable_shift(1.0, 10, design="one-sample", power=0.01)


def test_every_search_shares_one_default_power():
    """The three sample-size searches and the detectable shift default to one target power
    (they had drifted apart: 0.9 for TOST, 0.8 for the others); a caller with a planning power
    of its own passes it."""
    import inspect

    for fn in (power.sample_size_t, power.sample_size_tost, power.sample_size_noninferiority,
               power.detectable_shift):
        assert inspect.signature(fn).parameters["power"].default == power.DEFAULT_POWER == 0.8
    kw = dict(design="pooled", alpha=0.05, ratio=1.0)
    assert (power.sample_size_tost(0.0, 1.0, low=-1.0, high=1.0, **kw)
            == power.sample_size_tost(0.0, 1.0, low=-1.0, high=1.0, power=0.8, **kw))
