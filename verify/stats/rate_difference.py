"""Intervals for a difference of two failure rates (new minus old).

Sources: Newcombe (1998), Statistics in Medicine 17:873-890, method 10 (the hybrid score
interval: Wilson limits combined by square-and-add); Miettinen & Nurminen (1985), Statistics
in Medicine 4:213-226 (the score interval), with the restricted maximum-likelihood rates of
Farrington & Manning (1990), Statistics in Medicine 9:1447-1454 (closed-form cubic root) and
the variance factor N/(N-1).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ._checks import check_level
from .rate_bounds import _two_counts, _z, wilson

METHODS = ("newcombe", "score")


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
    x1, n1, x2, n2 = _two_counts(failures_new, inspected_new, failures_old, inspected_old)
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
    x1, n1, x2, n2 = _two_counts(failures_new, inspected_new, failures_old, inspected_old)
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
