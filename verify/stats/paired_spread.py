"""Spread of paired data: the Pitman-Morgan test for equal variances of two correlated samples.

With paired measurements the F-test is wrong (its two variances are not independent). For
pairs (old_i, new_i), cov(new - old, new + old) = var(new) - var(old), so the variances are
equal exactly when the differences and sums are uncorrelated (Pitman 1939, Morgan 1939).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .core import Interval, check_alternative, p_value, t_quantile
from .errors import DegenerateDataError


@dataclass(frozen=True)
class PairedSpreadResult:
    """Pitman-Morgan test of var(new) against var(old) for paired data.

    ``estimate`` is the ratio of standard deviations sd_new / sd_old; ``statistic`` is the t of
    the correlation between differences and sums on ``df = n - 2``; ``alternative`` "greater"
    means new spread larger.
    """

    method: str
    estimate: float
    statistic: float
    df: float
    pvalue: float
    alternative: str
    n: int
    correlation: float  # correlation between old and new values

    def confidence_interval(self, level: float = 0.95) -> Interval:
        """Interval for sd_new / sd_old from the Pitman-Morgan limits.

        The variance ratio F = s_new^2 / s_old^2 has limits F (K -/+ sqrt(K^2 - 1)) with
        K = 1 + 2 (1 - r^2) t^2 / (n - 2), t the two-sided quantile on n - 2 df (Pitman 1939).
        One-sided alternatives give a one-sided bound at ``level``.
        """
        if self.alternative == "two-sided":
            t = t_quantile(0.5 + level / 2.0, self.df)
        else:
            t = t_quantile(level, self.df)
        r2 = self.correlation**2
        k = 1.0 + 2.0 * (1.0 - r2) * t * t / self.df
        f = self.estimate**2
        root = math.sqrt(k * k - 1.0)
        low, high = math.sqrt(f * (k - root)), math.sqrt(f * (k + root))
        if self.alternative == "greater":
            return Interval(low, math.inf, level)
        if self.alternative == "less":
            return Interval(0.0, high, level)
        return Interval(low, high, level)


def pitman_morgan(old, new, *, alternative: str = "two-sided") -> PairedSpreadResult:
    """Pitman-Morgan test for equal spread in paired samples (new against old).

    Examples
    --------
    >>> r = pitman_morgan([1.0, 2.1, 2.9, 4.2, 5.0], [1.1, 1.9, 3.2, 3.9, 5.3])
    >>> r.df
    3.0
    """
    check_alternative(alternative)
    old = np.asarray(old, dtype=float)
    new = np.asarray(new, dtype=float)
    if old.shape != new.shape or old.ndim != 1:
        raise ValueError("old and new must be 1-d arrays of equal length (aligned pairs)")
    n = old.size
    if n < 3:
        raise DegenerateDataError(f"{n} pairs: the Pitman-Morgan test needs at least 3")
    d = new - old
    s = new + old
    d = d - d.mean()
    s = s - s.mean()
    so = old - old.mean()
    sn = new - new.mean()
    vo, vn = float(so @ so), float(sn @ sn)
    if vo <= 0.0 or vn <= 0.0:
        raise DegenerateDataError("one process has zero spread: no variance ratio exists")
    dd, ss = float(d @ d), float(s @ s)
    if dd <= 0.0 or ss <= 0.0:
        raise DegenerateDataError("the differences (or sums) have zero spread")
    r_ds = float(d @ s) / math.sqrt(dd * ss)
    r_ds = max(-1.0, min(1.0, r_ds))
    df = float(n - 2)
    if abs(r_ds) >= 1.0:
        raise DegenerateDataError("differences and sums are perfectly correlated")
    t = r_ds * math.sqrt(df / (1.0 - r_ds * r_ds))
    r_on = float(so @ sn) / math.sqrt(vo * vn)
    return PairedSpreadResult(
        method="Pitman-Morgan test (paired spread)",
        estimate=math.sqrt(vn / vo),
        statistic=t,
        df=df,
        pvalue=p_value(t, df, alternative),
        alternative=alternative,
        n=int(n),
        correlation=max(-1.0, min(1.0, r_on)),
    )
