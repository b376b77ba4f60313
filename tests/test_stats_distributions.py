"""Fitted non-normal models (verify.stats.distributions) against scipy's fits, the reference
data of ../shared/reference/distributions, and independent recomputation.

Sources: the Lieblein-Zelen ball-bearing data (23 values) with Lawless' published lognormal
and Weibull estimates (quoted from memory in the reference file: "agrees with value quoted from
memory"); scipy.stats fits used here as a reference library; capability-nonnormal.csv
(computed only: an independent computation of the percentile indices, no published example).
"""

from __future__ import annotations

import csv
import math

import numpy as np
import pytest
from scipy import stats

from verify.stats import distributions as dist
from verify.stats import tolerance as tol
from verify.stats.errors import NotApplicableError


def _rows(path):
    with open(path, encoding="utf-8") as f:
        return list(csv.DictReader(line for line in f if not line.startswith("#")))


@pytest.fixture(scope="module")
def bearings(reference_dir):
    rows = _rows(reference_dir / "distributions" / "lognormal-weibull-data-ballbearing.csv")
    return np.array([float(r["cycles_millions"]) for r in rows])


@pytest.fixture(scope="module")
def published(reference_dir):
    rows = _rows(reference_dir / "distributions" / "lognormal-weibull-fits.csv")
    return {r["distribution"]: r for r in rows}


def test_lognormal_fit_matches_scipy_and_the_reference(bearings, published):
    f = dist.fit_lognormal(bearings)
    s, _, scale = stats.lognorm.fit(bearings, floc=0)  # scipy's MLE
    assert f.param("sdlog") == pytest.approx(s, rel=1e-6)
    assert f.param("meanlog") == pytest.approx(math.log(scale), rel=1e-6)
    ref = published["lognormal"]  # Lawless: mu 4.150, sigma 0.522 (from memory)
    assert f.param("meanlog") == pytest.approx(float(ref["param1"]), rel=1e-6)
    assert f.param("sdlog") == pytest.approx(float(ref["param2"]), rel=1e-6)
    assert f.loglik == pytest.approx(float(ref["loglik"]), rel=1e-8)
    assert f.loglik == pytest.approx(np.sum(stats.lognorm.logpdf(bearings, s, 0, scale)),
                                     rel=1e-9)
    w, p = stats.shapiro(np.log(bearings))
    assert (f.gof_statistic, f.gof_pvalue) == pytest.approx((w, p), rel=1e-9)


def test_weibull_fit_matches_scipy_and_the_reference(bearings, published):
    f = dist.fit_weibull(bearings)
    c, _, scale = stats.weibull_min.fit(bearings, floc=0)  # scipy's MLE (optimiser, ~1e-6)
    assert f.param("shape") == pytest.approx(c, rel=1e-5)
    assert f.param("scale") == pytest.approx(scale, rel=1e-5)
    ref = published["weibull"]  # Lawless: beta 2.10, eta 81.9 (from memory)
    assert f.param("shape") == pytest.approx(float(ref["param1"]), rel=1e-6)
    assert f.param("scale") == pytest.approx(float(ref["param2"]), rel=1e-6)
    assert f.loglik == pytest.approx(float(ref["loglik"]), rel=1e-8)
    # the MLE is the maximum: scipy's log-likelihood at our estimates is not below scipy's own
    ours = np.sum(stats.weibull_min.logpdf(bearings, f.param("shape"), 0, f.param("scale")))
    assert ours >= np.sum(stats.weibull_min.logpdf(bearings, c, 0, scale)) - 1e-9
    assert 0.05 < f.gof_pvalue <= 1.0  # Lawless finds both models adequate for these data


def test_box_cox_lambda_matches_scipy(bearings):
    f = dist.fit_box_cox(bearings)
    lam = stats.boxcox_normmax(bearings, method="mle")
    assert f.param("lambda") == pytest.approx(lam, abs=1e-6)
    y = stats.boxcox(bearings, lam)
    assert f.param("mean") == pytest.approx(np.mean(y), rel=1e-5)
    assert f.loglik == pytest.approx(
        stats.boxcox_llf(lam, bearings) - 0.5 * len(bearings) * (math.log(2 * math.pi) + 1),
        rel=1e-6)


def test_percentile_indices_recomputed_independently(bearings, reference_dir):
    # capability-nonnormal.csv (computed only) with the assumed lower limit 10, and the
    # ISO 22514-2 percentile formula recomputed here from scipy's quantile functions
    rows = {r["model"].split()[0].lower(): r for r in
            _rows(reference_dir / "distributions" / "capability-nonnormal.csv")}
    for name, fit, ppf in (
        ("lognormal", dist.fit_lognormal(bearings),
         lambda f, q: stats.lognorm.ppf(q, f.param("sdlog"), 0, math.exp(f.param("meanlog")))),
        ("weibull", dist.fit_weibull(bearings),
         lambda f, q: stats.weibull_min.ppf(q, f.param("shape"), 0, f.param("scale"))),
    ):
        pi = dist.percentile_indices(fit, lower=10.0, upper=None)
        xl, xm = ppf(fit, 0.00135), ppf(fit, 0.5)
        assert pi.ppl == pytest.approx((xm - 10.0) / (xm - xl), rel=1e-9)
        assert pi.ppk == pi.ppl and pi.ppu is None and pi.pp is None
        ref = rows[name]
        assert pi.x_low == pytest.approx(float(ref["x_0_00135"]), rel=1e-6)
        assert pi.x_mid == pytest.approx(float(ref["x_0_5"]), rel=1e-6)
        assert pi.x_high == pytest.approx(float(ref["x_0_99865"]), rel=1e-6)
        assert pi.ppk == pytest.approx(float(ref["Ppk_percentile"]), rel=1e-5)
    both = dist.percentile_indices(dist.fit_lognormal(bearings), lower=10.0, upper=400.0)
    assert both.pp == pytest.approx(390.0 / (both.x_high - both.x_low))
    assert both.ppk == min(both.ppl, both.ppu)


def test_expected_beyond_is_the_fitted_tail(bearings):
    f = dist.fit_weibull(bearings)
    below, above = dist.expected_beyond(f, lower=10.0, upper=200.0)
    assert below == pytest.approx(stats.weibull_min.cdf(10.0, f.param("shape"), 0,
                                                        f.param("scale")), rel=1e-9)
    assert above == pytest.approx(stats.weibull_min.sf(200.0, f.param("shape"), 0,
                                                       f.param("scale")), rel=1e-9)


def test_lognormal_tolerance_limits_are_normal_limits_on_the_log_scale(bearings):
    f = dist.fit_lognormal(bearings)
    r = dist.tolerance_limits(bearings, f, coverage=0.9, confidence=0.95, side="two-sided")
    n = tol.normal_tolerance(np.log(bearings), coverage=0.9, confidence=0.95)
    assert (r.low, r.high) == pytest.approx((math.exp(n.low), math.exp(n.high)), rel=1e-12)


def test_weibull_upper_bound_coverage_by_simulation():
    # seeded: the upper 95%-confidence bound of the 90% quantile covers it in about 95% of
    # samples (600 samples: 3-sigma band +/- 0.027)
    rng = np.random.default_rng(7)
    shape, scale, n = 1.7, 5.0, 20
    true_q = scale * (-math.log(0.1)) ** (1 / shape)
    hits = 0
    for _ in range(600):
        x = scale * rng.weibull(shape, n)
        r = dist.tolerance_limits(x, dist.fit_weibull(x), coverage=0.9, confidence=0.95,
                                  side="upper")
        hits += r.high >= true_q
    assert abs(hits / 600 - 0.95) < 0.027


def test_fits_refuse_values_at_or_below_zero():
    with pytest.raises(NotApplicableError, match="above 0"):
        dist.fit_lognormal([0.0, 1.0, 2.0])
    with pytest.raises(NotApplicableError, match="above 0"):
        dist.fit_weibull([-1.0, 1.0, 2.0])
