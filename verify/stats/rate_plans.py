"""Plans for failure rates: the success-run demonstration plan (common practice:
the smallest n at which K or fewer failures make the exact upper bound reach the maximum rate;
K = 0 gives n = ln(1 - C) / ln(1 - P)) and the n per process of a rate_shift trial, by its
exact power."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import special

from ._checks import check_level
from .rate_bounds import clopper_pearson


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
