"""Has the spread changed? F-test on the variance ratio, and the Brown-Forsythe test.

Conventions: "old" and "new" process; ratios are new over old; the ``"greater"`` alternative
means the new process spreads more (the harmful direction for a process change).

The F-test is exact for normal data and sensitive to non-normality; Brown-Forsythe (Levene's test
with the group medians as centres) is robust to it at some cost in power.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import special
from scipy.special import cython_special as _cs

from . import _memo
from ._checks import check_alpha, check_level
from ._frozen import fast_init
from .core import Interval, check_alternative, confidence_interval, mean_sd, p_value, require_spread
from .errors import DegenerateDataError, NotApplicableError
from .samples import finite_values, median

ArrayLike = Sequence[float] | np.ndarray


@lru_cache(maxsize=1024)  # the same few quantiles for every characteristic of a layout
def _f_quantile(p: float, dfn: float, dfd: float) -> float:
    return float(special.fdtri(dfn, dfd, p))


@fast_init
@dataclass(frozen=True)
class VarianceRatioResult:
    """F-test for the ratio of two variances, new over old.

    Attributes
    ----------
    method : str
    statistic : float
        F = var_new / var_old.
    df_num, df_den : int
        n_new - 1 and n_old - 1.
    pvalue : float
        ``"greater"``: P(F' >= F), the new process spreads more; ``"less"``: P(F' <= F);
        ``"two-sided"``: twice the smaller tail, capped at 1.
    alternative : str
    estimate : float
        The sd ratio sd_new / sd_old.
    n_old, n_new : int
    sd_old, sd_new : float
    """

    method: str
    statistic: float
    df_num: int
    df_den: int
    pvalue: float
    alternative: str
    estimate: float
    n_old: int
    n_new: int
    sd_old: float
    sd_new: float

    @property
    def df(self) -> tuple[int, int]:
        return (self.df_num, self.df_den)

    def confidence_interval(self, level: float = 0.95, alternative: str | None = None
                            ) -> Interval:
        """Interval for the sd ratio sigma_new / sigma_old matching the alternative.

        From F / ratio^2 ~ F(df_num, df_den): two-sided
        [sqrt(F / F_(1+level)/2), sqrt(F / F_(1-level)/2)]; ``"greater"``: a lower bound
        [sqrt(F / F_level), +inf); ``"less"``: an upper bound [0, sqrt(F / F_(1-level))].
        ``alternative`` asks for another alternative's interval on the same F (the interval
        depends on F and its df alone); by default the test's own.
        """
        check_level(level)
        f, a, b = self.statistic, self.df_num, self.df_den
        alternative = self.alternative if alternative is None else check_alternative(alternative)
        if alternative == "two-sided":
            return Interval(*self.two_sided_bounds(level), level)
        if alternative == "greater":
            return Interval(math.sqrt(f / _f_quantile(level, a, b)), math.inf, level)
        return Interval(0.0, math.sqrt(f / _f_quantile(1.0 - level, a, b)), level)

    def two_sided_bounds(self, level: float) -> tuple[float, float]:
        """The ``(low, high)`` of ``confidence_interval(level, alternative="two-sided")`` (the
        same arithmetic), for a caller that knows ``level`` lies in (0, 1) and reads only the
        bounds: without the checks and the Interval."""
        f, a, b = self.statistic, self.df_num, self.df_den
        return (math.sqrt(f / _f_quantile(0.5 + level / 2.0, a, b)),
                math.sqrt(f / _f_quantile(0.5 - level / 2.0, a, b)))

    def critical_values(self, alpha: float = 0.05) -> tuple[float, float]:
        """Rejection limits for F: (lower, upper); a one-sided test has 0 or +inf on the other.

        Two-sided: (F_(alpha/2), F_(1-alpha/2)); ``"greater"``: (0, F_(1-alpha));
        ``"less"``: (F_alpha, +inf).
        """
        check_alpha(alpha)
        a, b = self.df_num, self.df_den
        if self.alternative == "two-sided":
            return _f_quantile(alpha / 2.0, a, b), _f_quantile(1.0 - alpha / 2.0, a, b)
        if self.alternative == "greater":
            return 0.0, _f_quantile(1.0 - alpha, a, b)
        return _f_quantile(alpha, a, b), math.inf


def _f_pvalue(f: float, dfn: int, dfd: int, alternative: str) -> float:
    # only the tail(s) the alternative reads: each is the same float computed alone
    # (cython_special's fdtrc and fdtr: the floats of float(special.fdtrc(dfn, dfd, f)) and
    # float(special.fdtr(...)) without the ufuncs' dispatch, as verify.stats.core's t_cdf)
    a, b, x = float(dfn), float(dfd), float(f)
    if alternative == "greater":
        p = _cs.fdtrc(a, b, x)
    elif alternative == "less":
        p = _cs.fdtr(a, b, x)
    else:
        p = 2.0 * min(_cs.fdtr(a, b, x), _cs.fdtrc(a, b, x))
    return min(1.0, max(0.0, p))


def f_test_from_stats(
    n_old: int,
    sd_old: float,
    n_new: int,
    sd_new: float,
    *,
    alternative: str = "two-sided",
) -> VarianceRatioResult:
    """F-test for the variance ratio from sample sizes and standard deviations (n - 1).

    Examples
    --------
    >>> r = f_test_from_stats(240, 61.85425, 240, 65.54909)
    >>> round(r.statistic, 6), r.df
    (1.123037, (239, 239))
    """
    check_alternative(alternative)
    if int(n_old) != n_old:
        raise ValueError(f"n_old must be a whole number, not {n_old}")
    if int(n_new) != n_new:
        raise ValueError(f"n_new must be a whole number, not {n_new}")
    n_old, n_new = int(n_old), int(n_new)
    s_old = float(sd_old)
    require_spread(n_old, s_old, "old values")
    s_new = float(sd_new)
    require_spread(n_new, s_new, "new values")
    ratio = s_new / s_old
    f = ratio * ratio
    if not (math.isfinite(f) and f > 0.0):
        raise DegenerateDataError(f"the variance ratio is not a positive finite number ({f})")
    dfn, dfd = n_new - 1, n_old - 1
    # (the fields by position: method, statistic, df_num, df_den, pvalue, alternative,
    # estimate, n_old, n_new, sd_old, sd_new)
    return VarianceRatioResult("F-test for the ratio of variances (new / old)", f, dfn, dfd,
                               _f_pvalue(f, dfn, dfd, alternative), alternative, ratio, n_old,
                               n_new, s_old, s_new)


def f_test(
    old: ArrayLike, new: ArrayLike, *, alternative: str = "two-sided"
) -> VarianceRatioResult:
    """F-test for the ratio of variances, new over old, from raw values.

    Examples
    --------
    >>> r = f_test([1.0, 2.0, 3.0, 4.0], [1.0, 3.0, 5.0, 7.0], alternative="greater")
    >>> r.statistic, r.estimate
    (4.0, 2.0)
    """
    n_old, _, sd_old = _summary(old, "old values")
    n_new, _, sd_new = _summary(new, "new values")
    return f_test_from_stats(n_old, sd_old, n_new, sd_new, alternative=alternative)


def _summary(x: ArrayLike, what: str) -> tuple[int, float, float]:
    """``mean_sd(finite_values(x, what))``; a sample whose summary is remembered is finite
    (a summary is remembered only once computed), so that summary is read at once."""
    hit = _memo.recall("mean_sd", x)
    return hit if hit is not None else mean_sd(finite_values(x, what))


# --- Brown-Forsythe -------------------------------------------------------------------------


@fast_init
@dataclass(frozen=True)
class BrownForsytheResult:
    """Brown-Forsythe test (median-centred Levene) for two groups, old and new.

    The test is a t-test (pooled, N - 2 df) on the absolute deviations z = |x - group median|.
    Two-sided, W = t^2 is the Levene statistic with (1, N - 2) df and equals
    ``scipy.stats.levene(old, new, center="median")``. One-sided, ``"greater"`` means the new
    process spreads more (its mean absolute deviation is larger).

    Attributes
    ----------
    method : str
    statistic : float
        W = t^2, the F statistic with (df_num, df_den) = (1, N - 2) df (same for every
        alternative).
    df_num, df_den : int
    pvalue : float
        From t for the chosen alternative; the two-sided p equals the F p-value of W, and a
        one-sided p is half of it when the sign agrees.
    alternative : str
    t_statistic : float
        Signed t = estimate / standard_error on df_den df.
    estimate : float
        Difference of mean absolute deviations from the median, new minus old.
    standard_error : float
    mad_old, mad_new : float
        Mean absolute deviation from the group median, per process.
    n_old, n_new : int
    """

    method: str
    statistic: float
    df_num: int
    df_den: int
    pvalue: float
    alternative: str
    t_statistic: float
    estimate: float
    standard_error: float
    mad_old: float
    mad_new: float
    n_old: int
    n_new: int

    @property
    def df(self) -> tuple[int, int]:
        return (self.df_num, self.df_den)

    def confidence_interval(self, level: float = 0.95) -> Interval:
        """Interval for the difference of mean absolute deviations (new - old), t on N - 2 df,
        matching the alternative."""
        return confidence_interval(
            self.estimate,
            self.standard_error,
            self.df_den,
            level=level,
            alternative=self.alternative,
        )


def _abs_dev_from_median(x: np.ndarray) -> np.ndarray:
    return np.abs(x - median(x))


def _brown_forsythe_sums(old: ArrayLike, new: ArrayLike) -> tuple[int, int, float, float, float]:
    """(n_old, n_new, the mean absolute deviations from the medians, their within-group sum
    of squares): what the Brown-Forsythe test reads of the two samples."""
    a = finite_values(old, "old values")
    b = finite_values(new, "new values")
    for what, g in (("old", a), ("new", b)):
        if g.size < 2:
            raise DegenerateDataError(
                f"{g.size} {what} value: at least 2 are needed to estimate the spread"
            )
    za, zb = _abs_dev_from_median(a), _abs_dev_from_median(b)
    n1, n2 = za.size, zb.size
    # np.add.reduce is what np.mean and np.sum do inside, without their wrappers' cost
    ma, mb = float(np.add.reduce(za)) / n1, float(np.add.reduce(zb)) / n2
    ss = float(np.add.reduce((za - ma) ** 2) + np.add.reduce((zb - mb) ** 2))
    return n1, n2, ma, mb, ss


def brown_forsythe(
    old: ArrayLike, new: ArrayLike, *, alternative: str = "two-sided"
) -> BrownForsytheResult:
    """Brown-Forsythe test of equal spread for old and new, with a one-sided form.

    Raises
    ------
    DegenerateDataError
        A group with fewer than 2 values, non-finite values, or absolute deviations that do not
        vary within the groups (for example, each group holds only 2 values).

    Examples
    --------
    >>> r = brown_forsythe([1.0, 2.0, 3.0, 4.0, 5.0], [0.0, 2.0, 4.0, 6.0, 9.0])
    >>> round(r.statistic, 4), r.df
    (2.1778, (1, 8))
    """
    n1, n2, ma, mb, df, se, est, t = _brown_forsythe_t(old, new, alternative)
    # (the fields by position: method, statistic, df_num, df_den, pvalue, alternative,
    # t_statistic, estimate, standard_error, mad_old, mad_new, n_old, n_new)
    return BrownForsytheResult(BROWN_FORSYTHE_METHOD, float(t * t), 1,
                               int(df), p_value(t, df, alternative), alternative, float(t),
                               float(est), float(se), ma, mb, int(n1), int(n2))


BROWN_FORSYTHE_METHOD = "Brown-Forsythe test (Levene, median-centred)"  # its result's method


def brown_forsythe_figures(old: ArrayLike, new: ArrayLike, *, alternative: str = "two-sided"
                           ) -> tuple[float, float]:
    """``(statistic, pvalue)`` of :func:`brown_forsythe` (the same floats, and the same
    errors), for a caller that reads these alone (its method is
    :data:`BROWN_FORSYTHE_METHOD`), as the spread companion does: the result is not made."""
    _, _, _, _, df, _, _, t = _brown_forsythe_t(old, new, alternative)
    return float(t * t), p_value(t, df, alternative)


def _brown_forsythe_t(old: ArrayLike, new: ArrayLike, alternative: str
                      ) -> tuple[int, int, float, float, int, float, float, float]:
    """(n_old, n_new, mad_old, mad_new, df, se, estimate, t) of the Brown-Forsythe test, and
    its errors; from the batch's sums where it computed them."""
    check_alternative(alternative)
    hit = _memo.recall("brown_forsythe", old)  # computed with others (stats.batch)
    if hit is not None and hit[0] is new:
        n1, n2, ma, mb, ss = hit[1]
    else:
        n1, n2, ma, mb, ss = _brown_forsythe_sums(old, new)
    df = n1 + n2 - 2
    if not ss > 0.0:
        raise DegenerateDataError(
            "the absolute deviations from the medians do not vary within the groups (as "
            "happens with 2 values per group), so the Brown-Forsythe test has no error term"
        )
    se = math.sqrt(ss / df * (1.0 / n1 + 1.0 / n2))
    est = mb - ma
    return n1, n2, ma, mb, df, se, est, est / se


@dataclass(frozen=True)
class BrownForsytheGroupsResult:
    """Brown-Forsythe test of equal spread across k groups (two-sided only).

    Attributes
    ----------
    method : str
    statistic : float
        W, the one-way ANOVA F on z = |x - group median|, with (k - 1, N - k) df.
    df_num, df_den : int
    pvalue : float
    n_groups : int
    group_sizes : tuple of int
    group_mads : tuple of float
        Mean absolute deviation from the median in each group, in input order.
    alternative : str
        Always ``"two-sided"``.
    """

    method: str
    statistic: float
    df_num: int
    df_den: int
    pvalue: float
    n_groups: int
    group_sizes: tuple[int, ...]
    group_mads: tuple[float, ...]
    alternative: str = "two-sided"

    @property
    def df(self) -> tuple[int, int]:
        return (self.df_num, self.df_den)

    def critical_value(self, alpha: float = 0.05) -> float:
        """The upper alpha point of F(df_num, df_den): W beyond it rejects equal spread."""
        check_alpha(alpha)
        return _f_quantile(1.0 - alpha, self.df_num, self.df_den)


def brown_forsythe_groups(groups: Sequence[ArrayLike]) -> BrownForsytheGroupsResult:
    """Brown-Forsythe (median-centred Levene) test across two or more groups.

    Examples
    --------
    >>> r = brown_forsythe_groups([[1.0, 2.0, 3.0], [2.0, 4.0, 7.0], [1.0, 1.5, 2.5]])
    >>> r.df
    (2, 6)
    """
    arrays = [finite_values(g, f"values of group {i + 1}") for i, g in enumerate(groups)]
    k = len(arrays)
    if k < 2:
        raise NotApplicableError(f"the test compares at least 2 groups, got {k}")
    for i, g in enumerate(arrays):
        if g.size < 2:
            raise DegenerateDataError(
                f"group {i + 1} has {g.size} value: each group needs at least 2"
            )
    zs = [_abs_dev_from_median(g) for g in arrays]
    sizes = np.array([z.size for z in zs])
    n_total = int(sizes.sum())
    means = np.array([float(np.add.reduce(z)) / z.size for z in zs])  # np.mean's arithmetic
    grand = float(np.add.reduce(sizes * means) / n_total)
    ss_b = float(np.add.reduce(sizes * (means - grand) ** 2))
    ss_w = float(sum(np.add.reduce((z - m) ** 2) for z, m in zip(zs, means, strict=True)))
    dfn, dfd = k - 1, n_total - k
    if not ss_w > 0.0:
        raise DegenerateDataError(
            "the absolute deviations from the medians do not vary within the groups, so the "
            "Brown-Forsythe test has no error term"
        )
    w = (ss_b / dfn) / (ss_w / dfd)
    return BrownForsytheGroupsResult(
        method="Brown-Forsythe test (Levene, median-centred)",
        statistic=float(w),
        df_num=int(dfn),
        df_den=int(dfd),
        pvalue=min(1.0, max(0.0, float(special.fdtrc(dfn, dfd, w)))),
        n_groups=int(k),
        group_sizes=tuple(int(s) for s in sizes),
        group_mads=tuple(float(m) for m in means),
    )
