"""The generic t core: everything from (estimate, standard error, df).

Every t-based test in :mod:`verify.stats` computes only its estimate, its standard error and its
degrees of freedom, then hands them to :func:`t_test_from_estimate` (or, for equivalence, to
:func:`verify.stats.equivalence.tost_from_estimate`). p-values come from ``scipy.special.stdtr``
on our own statistic, which matches ``scipy.stats`` to about 1e-15 at a fraction of the cost
(called for one number through ``scipy.special.cython_special``: the ufunc's floats without
its dispatch).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from typing import Literal

import numpy as np
from scipy.special import cython_special as _cs

from . import _memo
from ._frozen import fast_init
from .errors import DegenerateDataError

Alternative = Literal["two-sided", "less", "greater"]
ALTERNATIVES: tuple[str, ...] = ("two-sided", "less", "greater")


def check_alternative(alternative: str) -> str:
    if alternative not in ALTERNATIVES:
        raise ValueError(f"alternative must be one of {ALTERNATIVES}, not {alternative!r}")
    return alternative


@fast_init
@dataclass(frozen=True)
class Interval:
    """A confidence interval or bound. One-sided bounds have an infinite other end."""

    low: float
    high: float
    level: float


# The scalar special functions of one number, called through ``scipy.special.cython_special``:
# the same compiled functions as the ufuncs ``scipy.special.stdtr`` etc., whose dispatch (a
# 0-d array in, a numpy scalar out) costs about 1 us a call, against about 0.1 us here; the
# floats are the ufuncs' bit for bit (tests/test_draft_fast_routes.py holds the two together).
# They take floats only (an int is refused), hence the float() calls where an int may come.
_stdtr, _stdtrit, _ndtr, _ndtri = _cs.stdtr, _cs.stdtrit, _cs.ndtr, _cs.ndtri


def t_cdf(t: float, df: float) -> float:
    """P(T <= t) for Student's t with ``df`` degrees of freedom (df may be fractional)."""
    if math.isinf(df):
        return _ndtr(float(t))  # float(special.ndtr(t))
    return _stdtr(float(df), float(t))  # float(special.stdtr(df, t))


def t_sf(t: float, df: float) -> float:
    """P(T > t), computed without cancellation as P(T <= -t)."""
    return t_cdf(-t, df)


@lru_cache(maxsize=1024)
def t_quantile(p: float, df: float) -> float:
    """The p-quantile of Student's t (remembered: the characteristics of a layout ask for the
    same few quantiles again and again)."""
    if not 0.0 < p < 1.0:
        raise ValueError(f"quantile probability must lie in (0, 1), not {p}")
    if math.isinf(df):
        return _ndtri(float(p))  # float(special.ndtri(p))
    return _stdtrit(float(df), float(p))  # float(special.stdtrit(df, p))


def p_value(statistic: float, df: float, alternative: str) -> float:
    """p-value of a t statistic for the given alternative."""
    check_alternative(alternative)
    if alternative == "less":
        return t_cdf(statistic, df)
    if alternative == "greater":
        return t_sf(statistic, df)
    return min(1.0, 2.0 * t_cdf(-abs(statistic), df))


@fast_init
@dataclass(frozen=True)
class TTestResult:
    """Result of a t-test, whatever the design.

    Attributes
    ----------
    method : str
        e.g. ``"one-sample t-test"``, ``"Welch two-sample t-test"``.
    estimate : float
        The estimated effect: mean minus target (one-sample), or new minus old.
    null_value : float
        The hypothesised value of the effect (0 for a difference; the statistic is
        ``(estimate - null_value) / standard_error``).
    standard_error, df, statistic, pvalue : float
    alternative : str
        ``"two-sided"``, ``"less"`` (effect below the null) or ``"greater"``.
    """

    method: str
    estimate: float
    standard_error: float
    df: float
    statistic: float
    pvalue: float
    alternative: str
    null_value: float = 0.0

    def confidence_interval(self, level: float = 0.95) -> Interval:
        """Interval for the effect matching the alternative.

        Two-sided: the usual two-sided interval. ``"less"``: (-inf, upper bound].
        ``"greater"``: [lower bound, +inf).
        """
        return confidence_interval(
            self.estimate, self.standard_error, self.df, level=level, alternative=self.alternative
        )

    def critical_value(self, alpha: float) -> float:
        """The positive critical |t| at significance ``alpha`` for this alternative."""
        return critical_value(self.df, alpha, self.alternative)


def critical_value(df: float, alpha: float, alternative: str = "two-sided") -> float:
    """Positive critical value: t(1 - alpha/2) two-sided, t(1 - alpha) one-sided."""
    check_alternative(alternative)
    tail = alpha / 2.0 if alternative == "two-sided" else alpha
    return t_quantile(1.0 - tail, df)


def confidence_interval(
    estimate: float, se: float, df: float, *, level: float = 0.95, alternative: str = "two-sided"
) -> Interval:
    """Confidence interval (or one-sided bound) for ``estimate`` with standard error ``se``."""
    if not 0.0 < level < 1.0:
        raise ValueError(f"confidence level must lie in (0, 1), not {level}")
    check_alternative(alternative)
    if alternative == "two-sided":
        return two_sided_interval(estimate, se, df, level)
    q = t_quantile(level, df) * se
    if alternative == "less":
        return Interval(-math.inf, estimate + q, level)
    return Interval(estimate - q, math.inf, level)


def two_sided_interval(estimate: float, se: float, df: float, level: float) -> Interval:
    """``confidence_interval(estimate, se, df, level=level)`` (two-sided) for a level its
    caller knows lies in (0, 1), without checking it again: the same arithmetic."""
    return Interval(*two_sided_bounds(estimate, se, df, level), level)


def two_sided_bounds(estimate: float, se: float, df: float, level: float
                     ) -> tuple[float, float]:
    """The ``(low, high)`` of :func:`two_sided_interval` (the same arithmetic), for a caller
    that reads only the bounds."""
    half = t_quantile(0.5 + level / 2.0, df) * se
    return estimate - half, estimate + half


def check_se_df(se: float, df: float) -> None:
    if not (math.isfinite(se) and se > 0.0):
        raise DegenerateDataError(
            "the standard error is zero: all values are identical, so no t statistic exists"
            if se == 0.0
            else f"the standard error is not a positive finite number ({se})"
        )
    if not (df > 0.0) or math.isnan(df):
        raise DegenerateDataError(f"degrees of freedom must be positive, got {df}")


def t_test_from_estimate(
    estimate: float,
    se: float,
    df: float,
    *,
    null_value: float = 0.0,
    alternative: str = "two-sided",
    method: str = "t-test",
) -> TTestResult:
    """The generic t-test: statistic ``(estimate - null_value) / se`` on ``df`` df.

    Examples
    --------
    >>> r = t_test_from_estimate(1.0, 0.5, 10)
    >>> round(r.statistic, 6), round(r.pvalue, 6)
    (2.0, 0.073388)
    """
    check_alternative(alternative)
    check_se_df(se, df)
    stat = (estimate - null_value) / se
    return TTestResult(
        method=method,
        estimate=float(estimate),
        standard_error=float(se),
        df=float(df),
        statistic=float(stat),
        pvalue=p_value(stat, df, alternative),
        alternative=alternative,
        null_value=float(null_value),
    )


# --- numerics -------------------------------------------------------------------------------


MAX_MAGNITUDE = 1e150  # |value| above which squared deviations could overflow


def mean_sd(x: np.ndarray) -> tuple[int, float, float]:
    """n, mean and sample sd (n - 1) by a two-pass method with a correction term.

    The corrected two-pass algorithm (Chan, Golub and LeVeque, 1983) reaches the NIST StRD
    certified digits where the naive sum of squares fails. A read-only sample's summary is
    remembered (:mod:`verify.stats._memo`): the statistics of one sample share it.
    """
    hit = _memo.recall("mean_sd", x)
    if hit is None:
        hit = _mean_sd(x)
        _memo.remember("mean_sd", x, hit)  # (only a read-only sample is remembered)
    return hit


def _mean_sd(x: np.ndarray) -> tuple[int, float, float]:
    x = np.asarray(x, dtype=float)
    n = int(x.size)
    if n == 0:
        raise DegenerateDataError("no values")
    # plain reductions (pairwise sums), never a BLAS dot: a dot on a long vector can start
    # threads, which on a loaded machine costs far more than the arithmetic
    total = float(np.add.reduce(x))
    if not math.isfinite(total) and not np.isfinite(x).all():
        raise DegenerateDataError("values must be finite numbers")
    # squares of deviations overflow a double beyond about 1.3e154: refuse such values with
    # the reason rather than let an infinite sum of squares pass for "zero spread"
    if not (-MAX_MAGNITUDE <= float(np.minimum.reduce(x))
            and float(np.maximum.reduce(x)) <= MAX_MAGNITUDE):
        raise DegenerateDataError(
            f"values beyond +/-{MAX_MAGNITUDE:g} are too large for a mean and standard deviation "
            "in double precision: check the unit and the data")
    m = total / n
    d = x - m
    m = m + float(np.add.reduce(d)) / n  # second-pass correction of the mean
    if n < 2:
        return n, m, math.nan
    d = x - m
    ss = float(np.add.reduce(d * d)) - float(np.add.reduce(d)) ** 2 / n
    return n, m, math.sqrt(max(ss, 0.0) / (n - 1))


def require_spread(n: int, sd: float, what: str = "values") -> None:
    """Raise DegenerateDataError when n < 2 or the spread is zero."""
    if n < 2:
        have = f"no {what}" if n == 0 else f"{what}: only 1"
        raise DegenerateDataError(f"{have}; at least 2 are needed to estimate the spread")
    if not math.isfinite(sd) or sd <= 0.0:
        raise DegenerateDataError(f"the {what} have zero spread (all identical)")
