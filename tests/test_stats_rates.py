"""Failure-rate statistics (verify/stats/rates.py) against published and reference values.

Sources, named beside each check:

* ``../shared/reference/attributes/`` (its README says which rows are confirmed, quoted from
  memory or computed): success-run sample sizes, Clopper-Pearson limits (R's ``binom.test``
  examples), Newcombe (1998, Statistics in Medicine 17:873-890) Table II, Fisher's exact test
  (R's ``fisher.test`` examples);
* scipy used only here as a reference library: ``scipy.stats.binomtest(...).proportion_ci``,
  ``scipy.stats.chi2_contingency``;
* common practice: the success-run sample sizes 59 (95% confidence of at most 5%), 299 (95% /
  1%), 473 and 628 (95% / 1% with one and two failures allowed).
"""

from __future__ import annotations

import csv
import math

import numpy as np
import pytest
from scipy import stats

from verify.stats import rate_difference, rates
from verify.stats.errors import DegenerateDataError


def _rows(reference_dir, name):
    with open(reference_dir / "attributes" / name, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


# --- success run ------------------------------------------------------------------------------


@pytest.mark.parametrize(("max_rate", "confidence", "k", "n"), [
    (0.05, 0.95, 0, 59), (0.01, 0.95, 0, 299), (0.01, 0.95, 1, 473), (0.01, 0.95, 2, 628),
])
def test_success_run_sizes_of_common_practice(max_rate, confidence, k, n):
    # common practice (attribute demonstration tables); also in the reference folder below
    plan = rates.demonstration_n(max_rate, confidence, k)
    assert plan.n == n
    assert plan.bound_at_n <= max_rate < plan.bound_at_n_minus_1
    assert plan.probability_at_n <= 1 - confidence


def test_zero_failures_is_the_closed_form():
    # n = ceil(ln(1 - C) / ln(1 - P)) for K = 0 (the success-run formula)
    for p, c in [(0.1, 0.9), (0.05, 0.99), (0.001, 0.95), (0.2, 0.5)]:
        assert rates.demonstration_n(p, c).n == math.ceil(math.log(1 - c) / math.log(1 - p))


def test_success_run_table_of_the_reference_folder(reference_dir):
    rows = _rows(reference_dir, "success-run.csv")
    assert len(rows) >= 27
    for r in rows:
        got = rates.demonstration_n(1 - float(r["reliability"]), float(r["confidence"]),
                                    int(r["c_failures"]))
        assert got.n == int(r["n"]), r


# --- Clopper-Pearson --------------------------------------------------------------------------


@pytest.mark.parametrize("n", [1, 2, 7, 30, 59, 250, 1000])
def test_clopper_pearson_matches_scipy_binomtest(n):
    # reference library: scipy.stats.binomtest(x, n).proportion_ci(level, method="exact")
    for x in sorted({0, 1, n // 3, n - 1, n}):
        for level in (0.9, 0.95, 0.99):
            two = stats.binomtest(x, n).proportion_ci(level, method="exact")
            mine = rates.clopper_pearson(x, n, level=level, alternative="two-sided")
            assert mine.low == pytest.approx(two.low, abs=1e-12)
            assert mine.high == pytest.approx(two.high, abs=1e-12)
            one = stats.binomtest(x, n, alternative="less").proportion_ci(level, method="exact")
            assert rates.clopper_pearson(x, n, level=level).high == pytest.approx(
                one.high, abs=1e-12)


def test_clopper_pearson_published_examples(reference_dir):
    rows = _rows(reference_dir, "binomial-intervals.csv")
    published = 0
    for r in rows:
        x, n = int(r["x"]), int(r["n"])
        two = rates.clopper_pearson(x, n, level=0.95, alternative="two-sided")
        one = rates.clopper_pearson(x, n, level=0.95)
        # the folder's computed values (scipy beta quantiles) to 7 decimals
        assert two.low == pytest.approx(float(r["cp95_lower"]), abs=5e-8)
        assert two.high == pytest.approx(float(r["cp95_upper"]), abs=5e-8)
        assert one.high == pytest.approx(float(r["cp95_one_sided_upper"]), abs=5e-8)
        if r["published_lower"]:
            # the published limits, at the digits printed there (R's binom.test output:
            # 9 of 24 confirmed from the published page; 682 of 925 and Newcombe 1998a
            # Table I quoted from memory, as the folder's README says)
            digits = len(r["published_lower"].split(".")[1])
            tol = 0.5 * 10 ** -digits + 1e-12
            assert two.low == pytest.approx(float(r["published_lower"]), abs=tol)
            assert two.high == pytest.approx(float(r["published_upper"]), abs=tol)
            published += 1
    assert published >= 5


def test_binom_test_9_of_24_published_output():
    # R: binom.test(9, 24, 1/6) prints "95 percent confidence interval: 0.1879929 0.5940636"
    # (confirmed from a published page, see ../shared/reference/attributes/README)
    r = rates.clopper_pearson(9, 24, level=0.95, alternative="two-sided")
    assert (round(r.low, 7), round(r.high, 7)) == (0.1879929, 0.5940636)


def test_clopper_pearson_edges_and_errors():
    assert rates.clopper_pearson(5, 5).high == 1.0
    assert rates.clopper_pearson(0, 5, alternative="two-sided").low == 0.0
    with pytest.raises(DegenerateDataError):
        rates.clopper_pearson(0, 0)
    for bad in [(3, 2), (-1, 5), (1.5, 4)]:
        with pytest.raises(ValueError):
            rates.clopper_pearson(*bad)


# --- differences of rates ---------------------------------------------------------------------


def test_newcombe_table_ii(reference_dir):
    # Newcombe (1998) Statistics in Medicine 17:873-890, Table II, method 10 (hybrid score),
    # 95% intervals for the eight example contrasts. Values quoted from memory (4 decimals),
    # the first two confirmed by a package test expecting them (the folder's README); the
    # 6-decimal columns are the folder's recomputation.
    rows = _rows(reference_dir, "two-proportion-differences.csv")
    assert len(rows) == 8
    for r in rows:
        x1, n1, x2, n2 = (int(r[k]) for k in ("x1", "n1", "x2", "n2"))
        got = rates.newcombe(x1, n1, x2, n2, level=0.95)
        lo, hi = (float(v) for v in r["m10_published"].split(";"))
        assert got.low == pytest.approx(lo, abs=5e-5 + 1e-12), r
        assert got.high == pytest.approx(hi, abs=5e-5 + 1e-12), r
        assert got.low == pytest.approx(float(r["m10_lower"]), abs=5e-7)
        assert got.high == pytest.approx(float(r["m10_upper"]), abs=5e-7)
        assert got.estimate == pytest.approx(x1 / n1 - x2 / n2)


def test_newcombe_first_worked_example_by_hand():
    # Newcombe (1998) Table II, example (a): 56/70 - 48/80, 95% hybrid score 0.0524 to 0.3339
    # (quoted from memory; the reference folder confirms it)
    r = rates.newcombe(56, 70, 48, 80, level=0.95)
    assert (round(r.low, 4), round(r.high, 4)) == (0.0524, 0.3339)


def test_miettinen_nurminen_against_the_reference_recomputation(reference_dir):
    # computed-only column of the reference folder (Miettinen & Nurminen 1985 with the N/(N-1)
    # factor, restricted MLE by the closed-form cubic, inverted by brentq): an independent
    # implementation, not a published value
    for r in _rows(reference_dir, "two-proportion-differences.csv"):
        x1, n1, x2, n2 = (int(r[k]) for k in ("x1", "n1", "x2", "n2"))
        got = rates.miettinen_nurminen(x1, n1, x2, n2, level=0.95)
        assert got.low == pytest.approx(float(r["mn_lower"]), abs=5e-7), r
        assert got.high == pytest.approx(float(r["mn_upper"]), abs=5e-7), r


def test_score_interval_limits_are_where_the_score_crosses_z():
    # invariant: at each finite limit the score statistic equals -+z
    z = stats.norm.ppf(0.95)
    r = rates.miettinen_nurminen(7, 400, 3, 380, level=0.90)
    assert rate_difference._score_z(7, 400, 3, 380, r.high) == pytest.approx(-z, abs=1e-7)
    assert rate_difference._score_z(7, 400, 3, 380, r.low) == pytest.approx(z, abs=1e-7)


def test_interval_methods_by_name():
    a = rates.difference_interval(3, 100, 1, 100, method="newcombe")
    b = rates.difference_interval(3, 100, 1, 100, method="score")
    assert a.method.startswith("Newcombe") and b.method.startswith("Miettinen")
    with pytest.raises(ValueError):
        rates.difference_interval(3, 100, 1, 100, method="wald")


# --- is the new rate higher? ------------------------------------------------------------------


def test_fisher_examples_of_r(reference_dir):
    # R's fisher.test documentation examples (p-values confirmed, see the folder's README).
    # Rows of the 2 x 2 table are (new, old), columns (failed, passed).
    rows = {(r["example"], r["alternative"]): r for r in _rows(reference_dir, "fisher-exact.csv")}
    tea = rows[("TeaTasting", "greater")]
    got = rates.higher_rate_test(3, 4, 1, 4)
    assert got.pvalue == pytest.approx(float(tea["p_value"]), abs=5e-8)
    # Convictions, alternative "less" on [[2, 15], [10, 3]]: the same tail with the rows swapped
    conv = rows[("Convictions", "less")]
    assert rates.higher_rate_test(10, 13, 2, 17).pvalue == pytest.approx(
        float(conv["p_value"]), abs=5e-8)


def test_boschloo_is_never_less_powerful_than_fisher():
    # Boschloo's unconditional test is uniformly more powerful than Fisher's (its p-value is
    # never larger); scipy.stats.boschloo_exact is the implementation used
    for args in [(3, 4, 1, 4), (5, 40, 1, 40), (2, 30, 0, 25)]:
        f = rates.higher_rate_test(*args)
        b = rates.higher_rate_test(*args, test="boschloo")
        assert b.pvalue <= f.pvalue + 1e-12


def test_boschloo_refuses_sizes_it_cannot_enumerate():
    from verify.stats.errors import NotApplicableError

    with pytest.raises(NotApplicableError, match="use test: fisher"):
        rates.higher_rate_test(3, 6000, 1, 5000, test="boschloo")
    assert rates.higher_rate_test(3, 6000, 1, 5000).pvalue < 1  # Fisher at any size


def test_fisher_p_is_one_without_new_failures():
    assert rates.higher_rate_test(0, 50, 3, 60).pvalue == pytest.approx(1.0)


# --- failures by lot --------------------------------------------------------------------------


def test_lot_heterogeneity_matches_scipy_chi2_contingency():
    x = np.array([3, 0, 7, 2])
    n = np.array([200, 180, 210, 190])
    ref = stats.chi2_contingency(np.column_stack([x, n - x]), correction=False)
    got = rates.lot_heterogeneity(x, n)
    assert got.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert got.pvalue == pytest.approx(ref.pvalue, rel=1e-10)
    assert got.df == ref.dof
    with pytest.raises(DegenerateDataError):
        rates.lot_heterogeneity([0, 0], [10, 10])


# --- rate_shift plan --------------------------------------------------------------------------


def test_rate_shift_plan_reaches_its_power_by_simulation():
    # seeded simulation of the decision rule the check applies (Newcombe upper end of the
    # 90% interval below the margin) at the planned n: it agrees with the exact power the plan
    # reports (Monte Carlo tolerance +-0.03 at 2000 trials). The normal approximation alone
    # would give n = 245 here, where the rule's power is only about 0.72.
    plan = rates.rate_shift_n(0.02, alpha=0.05, power=0.8, margin=0.03)
    assert plan.power_at_n >= 0.8 > plan.power_below
    rng = np.random.default_rng(15)
    trials = 2000
    xs_new = rng.binomial(plan.n, 0.02, trials)
    xs_old = rng.binomial(plan.n, 0.02, trials)
    hits = sum(rates.newcombe(int(a), plan.n, int(b), plan.n, level=0.9).high < 0.03
               for a, b in zip(xs_new, xs_old, strict=True))
    assert hits / trials == pytest.approx(plan.power_at_n, abs=0.03)
    assert rates.rate_shift_power(245, rate_old=0.02, rate_new=0.02, alpha=0.05,
                                  margin=0.03) < 0.75


def test_rate_shift_power_without_margin_is_fishers_rejection_rate():
    # exact enumeration against a seeded simulation of Fisher's one-sided test (+-0.03)
    n, p0, p1 = 300, 0.02, 0.05
    exact = rates.rate_shift_power(n, rate_old=p0, rate_new=p1, alpha=0.05, margin=None)
    rng = np.random.default_rng(16)
    a, b = rng.binomial(n, p1, 2000), rng.binomial(n, p0, 2000)
    sim = np.mean(stats.hypergeom.sf(a - 1, 2 * n, a + b, n) < 0.05)
    assert sim == pytest.approx(exact, abs=0.03)
    plan = rates.rate_shift_n(p0, alpha=0.05, power=0.9, rate_new=p1)
    assert plan.power_at_n >= 0.9 > plan.power_below
    with pytest.raises(ValueError):
        rates.rate_shift_n(0.02, alpha=0.05, power=0.9)
