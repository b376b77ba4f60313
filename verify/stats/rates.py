"""Failure rates of pass/fail characteristics: binomial bounds, rate differences, plans.

Conventions: a rate is failures / inspected; differences are new minus old; a higher rate is
the harmful direction. Everything here is pure: counts in, frozen results out.

Sources of the formulas (cited beside each function):

- Clopper & Pearson (1934), Biometrika 26:404-413: the exact interval from beta quantiles.
- Wilson (1927), JASA 22:209-212: the score interval for one proportion.
- Newcombe (1998), Statistics in Medicine 17:873-890, method 10: the hybrid score interval for
  a difference of proportions (Wilson limits combined by square-and-add).
- Miettinen & Nurminen (1985), Statistics in Medicine 4:213-226: the score interval for a
  difference, with the restricted maximum-likelihood rates of Farrington & Manning (1990),
  Statistics in Medicine 9:1447-1454 (closed-form cubic root) and the variance factor N/(N-1).
- The success-run plan (common practice): the smallest n at which K or fewer failures make the
  exact upper bound reach the maximum rate; K = 0 gives n = ln(1 - C) / ln(1 - P).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

from ._checks import check_level
from .errors import DegenerateDataError, NotApplicableError

METHODS = ("newcombe", "score")
BOSCHLOO_MAX_CELLS = 25_000_000  # n_new * n_old above which Boschloo's test is refused
TESTS = ("fisher", "boschloo")


def _counts(failures: int, inspected: int, what: str = "") -> tuple[int, int]:
    """Whole numbers with 0 <= failures <= inspected, else ValueError naming them."""
    label = f" ({what})" if what else ""
    for v, name in ((failures, "failures"), (inspected, "inspected")):
        if isinstance(v, bool) or not float(v).is_integer() or v < 0:
            raise ValueError(f"{name}{label} must be a whole number >= 0, not {v!r}")
    x, n = int(failures), int(inspected)
    if x > n:
        raise ValueError(f"failures{label} ({x}) exceed the number inspected ({n})")
    return x, n


def _z(level: float) -> float:
    """The standard normal quantile for a two-sided interval at ``level``."""
    return float(special.ndtri(0.5 + level / 2.0))


# --- one rate ----------------------------------------------------------------------------------


@dataclass(frozen=True)
class RateBound:
    """The exact (Clopper-Pearson) bounds of one failure rate.

    Attributes
    ----------
    failures, inspected : int
    estimate : float
        failures / inspected.
    low, high : float
        The bounds at ``level``: for ``alternative="less"`` (the one-sided upper bound, the
        default) ``low`` is 0; for ``"two-sided"`` the equal-tailed interval.
    level : float
    alternative : str
        ``"less"``: shows the rate is at most ``high``; ``"two-sided"``.
    method : str
    """

    failures: int
    inspected: int
    estimate: float
    low: float
    high: float
    level: float
    alternative: str
    method: str = "Clopper-Pearson exact"


def _beta_q(p: float, a: float, b: float) -> float:
    # the p quantile of Beta(a, b): the inverse of the regularized incomplete beta function
    return float(special.betaincinv(a, b, p))


def clopper_pearson(failures: int, inspected: int, *, level: float = 0.95,
                    alternative: str = "less") -> RateBound:
    """Exact bounds of a binomial rate (Clopper & Pearson 1934).

    The one-sided upper bound at confidence C is the C quantile of Beta(x + 1, n - x) (1 when
    x = n); the two-sided interval at level L uses the (1 - L) / 2 and (1 + L) / 2 quantiles,
    with the lower end Beta(x, n - x + 1) (0 when x = 0).

    Parameters
    ----------
    failures, inspected : int
        x and n, whole numbers with 0 <= x <= n and n >= 1.
    level : float
        Confidence level of the bound or interval.
    alternative : {"less", "two-sided"}
        ``"less"`` gives the one-sided upper bound (the rate is shown to be at most it).

    Examples
    --------
    >>> round(clopper_pearson(0, 59, level=0.95).high, 6)  # 1 - 0.05 ** (1 / 59)
    0.049508
    """
    x, n = _counts(failures, inspected)
    check_level(level)
    if n == 0:
        raise DegenerateDataError("no parts inspected")
    if alternative not in ("less", "two-sided"):
        raise ValueError(f"alternative must be 'less' or 'two-sided', not {alternative!r}")
    tail = 1 - level if alternative == "less" else (1 - level) / 2
    high = 1.0 if x == n else _beta_q(1 - tail, x + 1, n - x)
    low = 0.0
    if alternative == "two-sided" and x > 0:
        low = _beta_q(tail, x, n - x + 1)
    return RateBound(failures=x, inspected=n, estimate=x / n, low=low, high=high, level=level,
                     alternative=alternative)


def wilson(failures: int, inspected: int, *, level: float = 0.95) -> tuple[float, float]:
    """The Wilson score interval (no continuity correction) of one rate, two-sided at ``level``.

    (2 n p + z^2 -/+ z sqrt(z^2 + 4 n p q)) / (2 (n + z^2)) (Wilson 1927; Newcombe 1998a,
    method 3).
    """
    x, n = _counts(failures, inspected)
    check_level(level)
    if n == 0:
        raise DegenerateDataError("no parts inspected")
    z = _z(level)
    p = x / n
    centre = 2 * n * p + z * z
    half = z * math.sqrt(z * z + 4 * n * p * (1 - p))
    den = 2 * (n + z * z)
    return max(0.0, (centre - half) / den), min(1.0, (centre + half) / den)


# --- a difference of two rates ----------------------------------------------------------------


@dataclass(frozen=True)
class RateDifference:
    """An interval for the difference of failure rates, new minus old.

    Attributes
    ----------
    estimate : float
        p_new - p_old.
    low, high : float
        The two-sided interval at ``level`` (its upper end is the one-sided bound at
        (1 + level) / 2).
    level : float
    method : str
    failures_new, inspected_new, failures_old, inspected_old : int
    """

    estimate: float
    low: float
    high: float
    level: float
    method: str
    failures_new: int
    inspected_new: int
    failures_old: int
    inspected_old: int


def newcombe(failures_new: int, inspected_new: int, failures_old: int, inspected_old: int, *,
             level: float = 0.90) -> RateDifference:
    """Newcombe's hybrid score interval for p_new - p_old (Newcombe 1998, method 10).

    With Wilson limits (l1, u1) of the new rate and (l2, u2) of the old one:
    low = d - sqrt((p1 - l1)^2 + (u2 - p2)^2), high = d + sqrt((u1 - p1)^2 + (p2 - l2)^2).

    Examples
    --------
    >>> r = newcombe(56, 70, 48, 80, level=0.95)  # Newcombe (1998) Table II, example (a)
    >>> round(r.low, 4), round(r.high, 4)
    (0.0524, 0.3339)
    """
    x1, n1 = _counts(failures_new, inspected_new, "new")
    x2, n2 = _counts(failures_old, inspected_old, "old")
    if n1 == 0 or n2 == 0:
        raise DegenerateDataError("no parts inspected in " + ("the new" if n1 == 0 else
                                                               "the old") + " process")
    p1, p2 = x1 / n1, x2 / n2
    l1, u1 = wilson(x1, n1, level=level)
    l2, u2 = wilson(x2, n2, level=level)
    d = p1 - p2
    low = d - math.sqrt((p1 - l1) ** 2 + (u2 - p2) ** 2)
    high = d + math.sqrt((u1 - p1) ** 2 + (p2 - l2) ** 2)
    return RateDifference(estimate=d, low=low, high=high, level=level,
                          method="Newcombe hybrid score", failures_new=x1, inspected_new=n1,
                          failures_old=x2, inspected_old=n2)


def _restricted_rates(p1: float, p2: float, n1: int, n2: int, delta: float
                      ) -> tuple[float, float]:
    """The maximum-likelihood rates under p1 - p2 = delta (Farrington & Manning 1990, the
    closed-form root of their cubic), clipped to [0, 1]."""
    theta = n2 / n1
    a = 1 + theta
    b = -(1 + theta + p1 + theta * p2 + delta * (theta + 2))
    c = delta * delta + delta * (2 * p1 + theta + 1) + p1 + theta * p2
    d = -p1 * delta * (1 + delta)
    v = b ** 3 / (27 * a ** 3) - b * c / (6 * a * a) + d / (2 * a)
    s = b * b / (9 * a * a) - c / (3 * a)
    u = math.copysign(math.sqrt(max(s, 0.0)), v) if v != 0 else math.sqrt(max(s, 0.0))
    if u == 0:
        r1 = -b / (3 * a)
    else:
        w = (math.pi + math.acos(max(-1.0, min(1.0, v / u ** 3)))) / 3
        r1 = 2 * u * math.cos(w) - b / (3 * a)
    r1 = min(1.0, max(0.0, r1))
    r2 = min(1.0, max(0.0, r1 - delta))
    return r1, r2


def _score_z(x1: int, n1: int, x2: int, n2: int, delta: float) -> float:
    """The Miettinen-Nurminen score statistic for H0: p1 - p2 = delta."""
    p1, p2 = x1 / n1, x2 / n2
    num = p1 - p2 - delta
    r1, r2 = _restricted_rates(p1, p2, n1, n2, delta)
    big_n = n1 + n2
    var = (r1 * (1 - r1) / n1 + r2 * (1 - r2) / n2) * big_n / (big_n - 1)
    if num == 0:
        return 0.0
    if var <= 0:
        return math.copysign(math.inf, num)
    return num / math.sqrt(var)


def miettinen_nurminen(failures_new: int, inspected_new: int, failures_old: int,
                       inspected_old: int, *, level: float = 0.90) -> RateDifference:
    """The Miettinen-Nurminen score interval for p_new - p_old (Miettinen & Nurminen 1985).

    The interval is every delta whose score statistic (observed minus delta over the standard
    error at the restricted rates, variance times N / (N - 1)) lies within +-z; each end is
    found by bisection (the statistic decreases in delta).

    Examples
    --------
    >>> r = miettinen_nurminen(56, 70, 48, 80, level=0.95)
    >>> round(r.low, 4), round(r.high, 4)
    (0.0528, 0.3382)
    """
    x1, n1 = _counts(failures_new, inspected_new, "new")
    x2, n2 = _counts(failures_old, inspected_old, "old")
    if n1 == 0 or n2 == 0:
        raise DegenerateDataError("no parts inspected in " + ("the new" if n1 == 0 else
                                                               "the old") + " process")
    check_level(level)
    z = _z(level)
    d = x1 / n1 - x2 / n2

    def end(lo: float, hi: float, target: float) -> float:
        # bisection to full double precision on a monotone statistic
        f_lo = _score_z(x1, n1, x2, n2, lo) - target
        for _ in range(200):
            mid = 0.5 * (lo + hi)
            if mid in (lo, hi):
                break
            f_mid = _score_z(x1, n1, x2, n2, mid) - target
            if (f_mid > 0) == (f_lo > 0):
                lo, f_lo = mid, f_mid
            else:
                hi = mid
        return 0.5 * (lo + hi)

    high = 1.0 if _score_z(x1, n1, x2, n2, 1.0) > -z else end(d, 1.0, -z)
    low = -1.0 if _score_z(x1, n1, x2, n2, -1.0) < z else end(-1.0, d, z)
    return RateDifference(estimate=d, low=low, high=high, level=level,
                          method="Miettinen-Nurminen score", failures_new=x1,
                          inspected_new=n1, failures_old=x2, inspected_old=n2)


def difference_interval(failures_new: int, inspected_new: int, failures_old: int,
                        inspected_old: int, *, level: float = 0.90,
                        method: str = "newcombe") -> RateDifference:
    """The interval for p_new - p_old by ``method`` ("newcombe" or "score")."""
    if method not in METHODS:
        raise ValueError(f"method must be one of {METHODS}, not {method!r}")
    fn = newcombe if method == "newcombe" else miettinen_nurminen
    return fn(failures_new, inspected_new, failures_old, inspected_old, level=level)


# --- is the new rate higher? --------------------------------------------------------------------


@dataclass(frozen=True)
class RateTest:
    """A one-sided exact test that the new failure rate is higher than the old one.

    Attributes
    ----------
    method : str
    pvalue : float
    statistic : float
        The new process's failures (Fisher) or Boschloo's statistic (Fisher's one-sided p).
    alternative : str
        Always ``"greater"``.
    """

    method: str
    pvalue: float
    statistic: float
    alternative: str = "greater"


def higher_rate_test(failures_new: int, inspected_new: int, failures_old: int,
                     inspected_old: int, *, test: str = "fisher") -> RateTest:
    """One-sided exact test of H0 "p_new <= p_old" against "p_new > p_old".

    ``fisher``: Fisher's exact test conditional on the total failures, p = P(X >= x_new) for X
    hypergeometric (scipy.stats.hypergeom). ``boschloo``: Boschloo's unconditional test
    (scipy.stats.boschloo_exact), never less powerful than Fisher's.
    """
    x1, n1 = _counts(failures_new, inspected_new, "new")
    x2, n2 = _counts(failures_old, inspected_old, "old")
    if n1 == 0 or n2 == 0:
        raise DegenerateDataError("no parts inspected in " + ("the new" if n1 == 0 else
                                                               "the old") + " process")
    if test not in TESTS:
        raise ValueError(f"test must be one of {TESTS}, not {test!r}")
    from scipy import stats  # heavy: only where a test runs

    if test == "fisher":
        p = float(stats.hypergeom.sf(x1 - 1, n1 + n2, x1 + x2, n1))
        return RateTest(method="Fisher exact, one-sided", pvalue=min(1.0, max(0.0, p)),
                        statistic=float(x1))
    if n1 * n2 > BOSCHLOO_MAX_CELLS:
        # scipy's Boschloo test enumerates every table of these margins: its time and memory
        # grow with n_new * n_old (about 3 s at 4,000 parts each on a small machine)
        raise NotApplicableError(
            f"Boschloo's test is limited to n_new x n_old <= {BOSCHLOO_MAX_CELLS:,} "
            f"({n1:,} x {n2:,} here): use test: fisher, which is exact at any size")
    table = np.array([[x1, n1 - x1], [x2, n2 - x2]])
    r = stats.boschloo_exact(table, alternative="greater")
    return RateTest(method="Boschloo exact, one-sided", pvalue=float(r.pvalue),
                    statistic=float(r.statistic))


# --- failures by lot -------------------------------------------------------------------------


@dataclass(frozen=True)
class LotHeterogeneity:
    """Pearson's chi-square test that every lot has the same failure rate.

    Attributes
    ----------
    statistic, df, pvalue : float
    lots : int
    min_expected : float
        The smallest expected failure count (or pass count) of a lot: below 5 the chi-square
        approximation is rough (common practice), and a note says so.
    method : str
    """

    statistic: float
    df: int
    pvalue: float
    lots: int
    min_expected: float
    method: str = "chi-square test of equal rates across lots"


def lot_heterogeneity(failures, inspected) -> LotHeterogeneity:
    """Pearson's chi-square on the k x 2 table of failures and passes by lot (k - 1 df).

    Raises DegenerateDataError with fewer than 2 lots, or when no lot (or every lot) failed
    (no variation to compare).
    """
    x = np.asarray(failures, dtype=float)
    n = np.asarray(inspected, dtype=float)
    keep = n > 0
    x, n = x[keep], n[keep]
    if x.size < 2:
        raise DegenerateDataError("fewer than 2 lots with inspected parts")
    total_x, total_n = float(x.sum()), float(n.sum())
    if total_x == 0 or total_x == total_n:
        raise DegenerateDataError("no failures in any lot" if total_x == 0
                                  else "every part failed")
    p = total_x / total_n
    e_fail, e_pass = n * p, n * (1 - p)
    stat = float((((x - e_fail) ** 2) / e_fail + (((n - x) - e_pass) ** 2) / e_pass).sum())
    df = int(x.size - 1)
    return LotHeterogeneity(statistic=stat, df=df, pvalue=float(special.chdtrc(df, stat)),
                            lots=int(x.size),
                            min_expected=float(min(e_fail.min(), e_pass.min())))


# --- planning ---------------------------------------------------------------------------------


def _binom_cdf(k: int, n: int, p: float) -> float:
    # P(X <= k) for X ~ Binomial(n, p) = I_{1-p}(n - k, k + 1)
    if k >= n:
        return 1.0
    return float(special.betainc(n - k, k + 1, 1 - p))


@dataclass(frozen=True)
class DemonstrationPlan:
    """The smallest trial that can demonstrate a failure rate of at most ``max_rate``.

    Attributes
    ----------
    n : int
        Parts to inspect.
    allowed_failures : int
        K: with K or fewer failures among n, the exact upper bound is at most ``max_rate``.
    max_rate, confidence : float
    bound_at_n : float
        The one-sided upper bound with K failures among n (at most max_rate).
    bound_at_n_minus_1 : float | None
        The same bound at n - 1 (above max_rate): proof that n is the smallest.
    probability_at_n : float
        P(K or fewer failures) at n if the true rate were max_rate (at most 1 - confidence).
    """

    n: int
    allowed_failures: int
    max_rate: float
    confidence: float
    bound_at_n: float
    bound_at_n_minus_1: float | None
    probability_at_n: float


def demonstration_n(max_rate: float, confidence: float, allowed_failures: int = 0
                    ) -> DemonstrationPlan:
    """Smallest n such that K or fewer failures demonstrate a rate of at most ``max_rate``.

    n is the smallest with P(X <= K | n, max_rate) <= 1 - confidence, equivalently with the
    Clopper-Pearson upper bound at K failures at most max_rate. K = 0 is the success-run
    formula n = ceil(ln(1 - C) / ln(1 - P)) (common practice: 59 for 95% / 5%, 299 for 95% /
    1%).

    Examples
    --------
    >>> demonstration_n(0.01, 0.95, 1).n
    473
    """
    if not 0 < max_rate < 1:
        raise ValueError(f"the maximum rate must lie in (0, 1), not {max_rate}")
    check_level(confidence)
    k = int(allowed_failures)
    if k != allowed_failures or k < 0:
        raise ValueError(f"allowed failures must be a whole number >= 0, not {allowed_failures}")
    risk = 1 - confidence
    # the binomial cdf at K falls as n grows: bracket by doubling, then bisect
    lo = k  # at n = k the cdf is 1 > risk
    hi = max(k + 1, int(math.ceil(math.log(risk) / math.log1p(-max_rate))))
    while _binom_cdf(k, hi, max_rate) > risk:
        lo, hi = hi, hi * 2
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if _binom_cdf(k, mid, max_rate) > risk:
            lo = mid
        else:
            hi = mid
    n = hi
    before = clopper_pearson(k, n - 1, level=confidence).high if n - 1 > k else None
    return DemonstrationPlan(
        n=n, allowed_failures=k, max_rate=max_rate, confidence=confidence,
        bound_at_n=clopper_pearson(k, n, level=confidence).high, bound_at_n_minus_1=before,
        probability_at_n=_binom_cdf(k, n, max_rate))


@dataclass(frozen=True)
class ShiftPlan:
    """Parts per process for a rate_shift check to reach ``power`` (equal sizes).

    Attributes
    ----------
    n : int
        Parts per process: the smallest at which the exact power of the check's own rule
        reaches ``power`` (searched upwards from the normal approximation).
    power : float
        Target power.
    power_at_n, power_below : float
        The exact power at n and at n - 1 (below the target, or None when n is 2).
    rate_old, rate_new : float
        The assumed true rates.
    margin : float | None
        With a margin: the rule "upper end of the (1 - 2 alpha) Newcombe interval below the
        margin". Without: the rule "one-sided Fisher exact p below alpha", detecting
        rate_new > rate_old.
    alpha : float
    method : str
    """

    n: int
    power: float
    power_at_n: float
    power_below: float | None
    rate_old: float
    rate_new: float
    margin: float | None
    alpha: float
    method: str


def _support(n: int, p: float) -> np.ndarray:
    """Failure counts carrying all but about 1e-12 of the Binomial(n, p) probability."""
    from scipy import stats

    lo, hi = stats.binom.ppf([1e-13, 1 - 1e-13], n, p)
    return np.arange(int(max(0, lo)), int(min(n, hi)) + 1)


def _wilson_vec(x: np.ndarray, n: int, z: float) -> tuple[np.ndarray, np.ndarray]:
    p = x / n
    centre = 2 * n * p + z * z
    half = z * np.sqrt(z * z + 4 * n * p * (1 - p))
    den = 2 * (n + z * z)
    return np.maximum(0.0, (centre - half) / den), np.minimum(1.0, (centre + half) / den)


def rate_shift_power(n: int, *, rate_old: float, rate_new: float, alpha: float,
                     margin: float | None) -> float:
    """The exact power of the rate_shift rule with n parts per process, by enumerating the
    binomial outcomes of both processes (tails beyond about 1e-12 left out).

    With a margin the rule is PASS when the upper end of the (1 - 2 alpha) Newcombe interval
    lies below the margin; without, HOLD when Fisher's one-sided exact p is below alpha (the
    power is then the chance of that HOLD when the new rate is higher).
    """
    from scipy import stats

    x1 = _support(n, rate_new)
    x0 = _support(n, rate_old)
    w1 = stats.binom.pmf(x1, n, rate_new)
    w0 = stats.binom.pmf(x0, n, rate_old)
    a, b = np.meshgrid(x1, x0, indexing="ij")
    if margin is not None:
        z = float(special.ndtri(1 - alpha))
        l1, u1 = _wilson_vec(x1.astype(float), n, z)
        l0, u0 = _wilson_vec(x0.astype(float), n, z)
        p1, p0 = x1 / n, x0 / n
        high = (p1[:, None] - p0[None, :]) + np.sqrt(
            (u1 - p1)[:, None] ** 2 + (p0 - l0)[None, :] ** 2)
        hit = high < margin
    else:
        pv = stats.hypergeom.sf(a - 1, 2 * n, a + b, n)
        hit = pv < alpha
    return float(min(1.0, (w1[:, None] * w0[None, :] * hit).sum()))


def _approx_n(p0: float, p1: float, alpha: float, power: float, margin: float | None) -> float:
    za, zb = float(special.ndtri(1 - alpha)), float(special.ndtri(power))
    if margin is not None:
        return (za + zb) ** 2 * (p1 * (1 - p1) + p0 * (1 - p0)) / (margin - (p1 - p0)) ** 2
    pbar = (p1 + p0) / 2
    return (za * math.sqrt(2 * pbar * (1 - pbar))
            + zb * math.sqrt(p1 * (1 - p1) + p0 * (1 - p0))) ** 2 / (p1 - p0) ** 2


def rate_shift_n(rate_old: float, *, alpha: float, power: float, margin: float | None = None,
                 rate_new: float | None = None, max_n: int = 200_000) -> ShiftPlan:
    """Parts per process for a rate_shift check to reach ``power`` (equal sizes).

    The search starts from the normal approximation (with a margin: n = (z_a + z_b)^2
    (p1 q1 + p0 q0) / (margin - (p1 - p0))^2; without: Fleiss' form (z_a sqrt(2 pbar qbar)
    + z_b sqrt(p1 q1 + p0 q0))^2 / (p1 - p0)^2, Fleiss, Levin & Paik 2003, ch. 4, cited from
    memory) and steps to the smallest n whose exact power (:func:`rate_shift_power`) reaches
    the target: the approximation is optimistic for small rates, whose score intervals are
    wider than the normal one. Because the binomial is discrete, the power is not quite
    monotone in n; the n found is the first of a run that reaches the target from below.
    The assumed true new rate defaults to the old one (with a margin).
    """
    for v, what in ((rate_old, "the old rate"), (alpha, "alpha"), (power, "power")):
        if not 0 < v < 1:
            raise ValueError(f"{what} must lie in (0, 1), not {v}")
    p0 = rate_old
    p1 = rate_old if rate_new is None else rate_new
    if not 0 <= p1 < 1:
        raise ValueError(f"the new rate must lie in [0, 1), not {p1}")
    if margin is not None:
        if not margin - (p1 - p0) > 0:
            raise ValueError("the assumed true difference is not below the margin: no n "
                             "can show it")
        method = ("exact power of the Newcombe-interval rule by enumeration, searched from "
                  "the normal approximation")
    else:
        if not p1 > p0:
            raise ValueError("without a margin give a new rate above the old one to detect")
        method = ("exact power of Fisher's one-sided test by enumeration, searched from the "
                  "normal approximation")

    def pw(n: int) -> float:
        return rate_shift_power(n, rate_old=p0, rate_new=p1, alpha=alpha, margin=margin)

    lo = max(2, int(math.ceil(_approx_n(p0, p1, alpha, power, margin) * 0.7)))
    if pw(lo) >= power:  # the approximation was pessimistic: walk down to the first n
        hi = lo
        lo = 1
    else:
        hi = lo
        while pw(hi) < power:
            lo, hi = hi, int(hi * 1.3) + 1
            if hi > max_n:
                raise ValueError(f"no n up to {max_n} per process reaches power {power:g}")
    while hi - lo > 1:  # bisection between a failing lo and a reaching hi
        mid = (lo + hi) // 2
        if pw(mid) >= power:
            hi = mid
        else:
            lo = mid
    n = max(2, hi)
    return ShiftPlan(n=n, power=power, power_at_n=pw(n),
                     power_below=pw(n - 1) if n > 2 else None, rate_old=p0, rate_new=p1,
                     margin=margin, alpha=alpha, method=method)
