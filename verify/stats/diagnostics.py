"""Diagnostics that flag; they never remove data or decide.

Normality (Shapiro-Wilk, Anderson-Darling, normal probability-plot correlation), outliers
(Grubbs), lot effect (one-way ANOVA with the intraclass correlation), stability (individuals
chart limits from the average moving range, runs, lag-1 autocorrelation) and measurement
resolution. Each function returns numbers in a frozen result; the decision layer compares them
with its own thresholds.

This module also holds the small helpers shared by the other statistics modules:
:func:`finite_values` (input checking) and :func:`d2` (the control-chart constant).
"""

from __future__ import annotations

import math
from collections.abc import Hashable, Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import special

from ._checks import check_alpha
from .core import ALTERNATIVES, check_alternative, mean_sd, require_spread
from .errors import DegenerateDataError, NotApplicableError

# --- shared helpers -------------------------------------------------------------------------


def finite_values(x: object, what: str = "values") -> np.ndarray:
    """``x`` as a 1-D float array; DegenerateDataError when empty or not all finite."""
    try:
        a = np.asarray(x, dtype=float)
    except (TypeError, ValueError) as exc:
        raise DegenerateDataError(f"the {what} must be numbers ({exc})") from None
    if a.ndim != 1:
        a = a.reshape(-1)
    if a.size == 0:
        raise DegenerateDataError(f"no {what}")
    if not math.isfinite(float(np.add.reduce(a))) and not np.isfinite(a).all():
        bad = int(np.count_nonzero(~np.isfinite(a)))
        raise DegenerateDataError(f"the {what} must be finite numbers ({bad} are NaN or infinite)")
    return a


# Tabled d2(n), the expected range of n independent standard normal values, for n = 2..25, to
# three decimals as printed in the control-chart constants table of Montgomery, Introduction to
# Statistical Quality Control, Appendix VI (values written here from that table, from memory;
# tests/test_stats_capability.py recomputes each one by numerical integration).
D2_TABLE: dict[int, float] = {
    2: 1.128, 3: 1.693, 4: 2.059, 5: 2.326, 6: 2.534, 7: 2.704, 8: 2.847, 9: 2.970,
    10: 3.078, 11: 3.173, 12: 3.258, 13: 3.336, 14: 3.407, 15: 3.472, 16: 3.532, 17: 3.588,
    18: 3.640, 19: 3.689, 20: 3.735, 21: 3.778, 22: 3.819, 23: 3.858, 24: 3.895, 25: 3.931,
}  # fmt: skip


# Tabled d3(n), the standard deviation of the range of n independent standard normal values,
# n = 2..25, three decimals, from the same control-chart constants table (from memory; the
# tests recompute each one by numerical integration, :func:`range_sd`).
D3_TABLE: dict[int, float] = {
    2: 0.853, 3: 0.888, 4: 0.880, 5: 0.864, 6: 0.848, 7: 0.833, 8: 0.820, 9: 0.808,
    10: 0.797, 11: 0.787, 12: 0.778, 13: 0.770, 14: 0.763, 15: 0.756, 16: 0.750, 17: 0.744,
    18: 0.739, 19: 0.733, 20: 0.729, 21: 0.724, 22: 0.720, 23: 0.716, 24: 0.712, 25: 0.708,
}  # fmt: skip


@lru_cache(maxsize=256)
def range_sd(n: int) -> float:
    """sd of the range of ``n`` standard normal values by numerical integration (unrounded d3).

    E[R^2] = 2 * double integral over x < y of
    1 - Phi(y)^n - (1 - Phi(x))^n + (Phi(y) - Phi(x))^n, the probability that the smallest value
    lies below x and the largest above y; d3^2 = E[R^2] - d2^2. Trapezoid rule on a fine grid
    (about 1e-5 accurate).
    """
    if n < 2:
        raise NotApplicableError(f"a range needs at least 2 values, not {n}")
    grid = np.linspace(-9.0, 9.0, 1801)
    h = grid[1] - grid[0]
    p = special.ndtr(grid)
    px, py = p[:, None], p[None, :]
    f = 1.0 - py**n - (1.0 - px) ** n + np.clip(py - px, 0.0, None) ** n
    # the triangle x < y: points on its diagonal edge carry half the trapezoid weight
    upper = np.triu(np.ones_like(f), 1) + 0.5 * np.eye(grid.size)
    f = f * upper
    w = np.full(grid.size, h)
    w[0] = w[-1] = h / 2.0
    second = 2.0 * float(w @ f @ w)
    return float(math.sqrt(max(second - expected_range(n) ** 2, 0.0)))


def d3(n: int) -> float:
    """The control-chart constant d3(n): tabled for n = 2..25, integrated beyond.

    Examples
    --------
    >>> d3(5)
    0.864
    """
    n = int(n)
    if n < 2:
        raise NotApplicableError(f"a range needs at least 2 values, not {n}")
    if n in D3_TABLE:
        return D3_TABLE[n]
    return range_sd(n)


@lru_cache(maxsize=256)
def expected_range(n: int) -> float:
    """E[range] of ``n`` standard normal values by numerical integration (unrounded d2).

    d2(n) = integral over the real line of 1 - Phi(x)^n - (1 - Phi(x))^n dx.
    """
    if n < 2:
        raise NotApplicableError(f"a range needs at least 2 values, not {n}")
    from scipy import integrate

    def integrand(x: float) -> float:
        p = float(special.ndtr(x))
        return 1.0 - p**n - (1.0 - p) ** n

    value, _ = integrate.quad(integrand, -np.inf, np.inf, limit=200)
    return float(value)


def d2(n: int) -> float:
    """The control-chart constant d2(n): tabled value for n = 2..25, integrated beyond.

    Examples
    --------
    >>> d2(5)
    2.326
    """
    n = int(n)
    if n < 2:
        raise NotApplicableError(f"a range needs at least 2 values, not {n}")
    if n in D2_TABLE:
        return D2_TABLE[n]
    return expected_range(n)


# --- normality ------------------------------------------------------------------------------


@dataclass(frozen=True)
class NormalityResult:
    """A test of the hypothesis that the values come from a normal distribution.

    Attributes
    ----------
    method : str
    statistic : float
        W (Shapiro-Wilk) or A^2 (Anderson-Darling, unadjusted, as scipy reports it).
    pvalue : float
        Small values speak against normality.
    n : int
    adjusted_statistic : float or None
        Anderson-Darling only: A*^2 = A^2 (1 + 0.75/n + 2.25/n^2), from which the p-value comes.
    """

    method: str
    statistic: float
    pvalue: float
    n: int
    adjusted_statistic: float | None = None


def _normality_input(x: object, n_min: int, n_max: int | None, method: str) -> np.ndarray:
    a = finite_values(x)
    n = a.size
    if n < n_min or (n_max is not None and n > n_max):
        limits = f"{n_min} <= n <= {n_max}" if n_max is not None else f"n >= {n_min}"
        raise NotApplicableError(f"{method} needs {limits} values, got {n}")
    if np.all(a == a[0]):
        raise DegenerateDataError(
            f"all {n} values are identical: zero spread, so normality cannot be judged"
        )
    return a


def shapiro_wilk(x: Sequence[float] | np.ndarray) -> NormalityResult:
    """Shapiro-Wilk test of normality (scipy's implementation of Royston's algorithm).

    Raises
    ------
    NotApplicableError
        Outside 3 <= n <= 5000, where the p-value approximation does not hold.
    DegenerateDataError
        Non-finite values or zero spread.

    Examples
    --------
    >>> r = shapiro_wilk([148, 154, 158, 160, 161, 162, 166, 170, 182, 195, 236])
    >>> round(r.statistic, 5)
    0.78881
    """
    a = _normality_input(x, 3, 5000, "the Shapiro-Wilk test")
    w, pw = _swilk(a)
    return NormalityResult(
        method="Shapiro-Wilk normality test",
        statistic=float(w),
        pvalue=float(min(1.0, max(0.0, pw))),
        n=int(a.size),
    )


def _swilk(a: np.ndarray) -> tuple[float, float]:
    """W and its p-value from scipy's Royston routine, called directly with the same
    preparation as ``scipy.stats.shapiro`` (sorted, less a central value): the public wrapper
    costs several times the computation, and importing ``scipy.stats`` for it costs most of a
    second at start-up. Falls back to the public function if scipy moves the routine."""
    try:
        from scipy.stats._ansari_swilk_statistics import swilk
    except ImportError:  # pragma: no cover - a scipy that moved the routine
        from scipy import stats

        res = stats.shapiro(a)
        return float(res.statistic), float(res.pvalue)
    y = np.sort(a)
    y -= a[a.size // 2]  # as scipy.stats.shapiro: subtract a value near the median
    w, pw, _ = swilk(y, np.zeros(a.size // 2, dtype=np.float64), 0)
    return float(w), float(pw)


def _ad_pvalue(a_star: float) -> float:
    """p-value of the adjusted Anderson-Darling A*^2, mean and variance estimated.

    Piecewise formulas of D'Agostino and Stephens (1986), Goodness-of-Fit Techniques, Table 4.9
    (quoted from memory; tests check them against statsmodels.stats.diagnostic.normal_ad).
    The last piece has its minimum at A*^2 = 5.709 / (2 * 0.0186) = 153.5 and would rise
    beyond it, so A*^2 is capped there (the p-value is below 1e-180 by then).
    """
    if a_star < 0.2:
        p = 1.0 - math.exp(-13.436 + 101.14 * a_star - 223.73 * a_star**2)
    elif a_star < 0.34:
        p = 1.0 - math.exp(-8.318 + 42.796 * a_star - 59.938 * a_star**2)
    elif a_star < 0.6:
        p = math.exp(0.9177 - 4.279 * a_star - 1.38 * a_star**2)
    else:
        a = min(a_star, 5.709 / (2 * 0.0186))
        p = math.exp(1.2937 - 5.709 * a + 0.0186 * a**2)
    return min(1.0, max(0.0, p))


def anderson_darling(x: Sequence[float] | np.ndarray) -> NormalityResult:
    """Anderson-Darling test of normality with estimated mean and standard deviation.

    A^2 = -n - (1/n) sum (2i - 1) [ln Phi(w_i) + ln(1 - Phi(w_{n+1-i}))], w = sorted standardised
    values (sd with n - 1). The p-value comes from the adjusted A*^2 (see :func:`_ad_pvalue`).
    Needs n >= 8 (the p-value formulas are not meant for fewer values).

    Examples
    --------
    >>> r = anderson_darling([2.1, 2.4, 1.9, 2.2, 2.6, 2.0, 2.3, 2.5, 2.2, 2.4])
    >>> 0 < r.pvalue <= 1
    True
    """
    a = _normality_input(x, 8, None, "the Anderson-Darling test")
    n, m, s = mean_sd(a)
    w = np.sort((a - m) / s)
    i = np.arange(1, n + 1)
    # log Phi(w) and log(1 - Phi(w)) = log Phi(-w) without underflow in the tails
    terms = (2 * i - 1) * (special.log_ndtr(w) + special.log_ndtr(-w[::-1]))
    a2 = float(-n - np.sum(terms) / n)
    a_star = a2 * (1.0 + 0.75 / n + 2.25 / n**2)
    return NormalityResult(
        method="Anderson-Darling normality test (mean and sd estimated)",
        statistic=a2,
        pvalue=_ad_pvalue(a_star),
        n=int(n),
        adjusted_statistic=float(a_star),
    )


@dataclass(frozen=True)
class ProbabilityPlotResult:
    """Normal probability-plot correlation (Filliben's order-statistic medians).

    Attributes
    ----------
    method : str
    statistic : float
        Correlation between the sorted values and the normal quantiles of the uniform
        order-statistic medians; close to 1 for normal data.
    n : int
    slope, intercept : float
        Least-squares line through the plot: estimates of the sd and the mean.
    """

    method: str
    statistic: float
    n: int
    slope: float
    intercept: float


def probability_plot_correlation(x: Sequence[float] | np.ndarray) -> ProbabilityPlotResult:
    """Correlation of the normal probability plot (NIST e-Handbook 1.3.3.21 and 1.3.5.6).

    Uniform order-statistic medians (Filliben, 1975): m_n = 0.5^(1/n), m_1 = 1 - m_n,
    m_i = (i - 0.3175) / (n + 0.365) otherwise; the plot pairs the sorted data with the
    normal quantiles of m_i.

    Examples
    --------
    >>> r = probability_plot_correlation([1.0, 2.0, 3.0, 4.0, 5.0])
    >>> round(r.statistic, 4)
    0.9984
    """
    a = finite_values(x)
    n = a.size
    if n < 3:
        raise NotApplicableError(f"a probability-plot correlation needs n >= 3 values, got {n}")
    if np.all(a == a[0]):
        raise DegenerateDataError("all values are identical: zero spread, no correlation exists")
    i = np.arange(1, n + 1, dtype=float)
    m = (i - 0.3175) / (n + 0.365)
    m[-1] = 0.5 ** (1.0 / n)
    m[0] = 1.0 - m[-1]
    q = special.ndtri(m)
    y = np.sort(a)
    qc = q - q.mean()
    yc = y - y.mean()
    slope = float(np.dot(qc, yc) / np.dot(qc, qc))
    r = float(np.dot(qc, yc) / math.sqrt(float(np.dot(qc, qc)) * float(np.dot(yc, yc))))
    return ProbabilityPlotResult(
        method="normal probability-plot correlation (Filliben medians)",
        statistic=min(1.0, max(-1.0, r)),
        n=int(n),
        slope=slope,
        intercept=float(y.mean() - slope * q.mean()),
    )


# --- outliers -------------------------------------------------------------------------------


def _grubbs_critical(n: int, alpha: float, alternative: str) -> float:
    tail = alpha / (2 * n) if alternative == "two-sided" else alpha / n
    t = float(special.stdtrit(n - 2, 1.0 - tail))
    return (n - 1) / math.sqrt(n) * math.sqrt(t * t / (n - 2 + t * t))


@dataclass(frozen=True)
class GrubbsResult:
    """Grubbs test for one outlier. It flags the suspect value; it never removes it.

    Attributes
    ----------
    method : str
    statistic : float
        G = max |x - mean| / sd (two-sided), (max - mean) / sd ("greater") or
        (mean - min) / sd ("less"); sd with n - 1.
    index : int
        Position of the suspect value in the input (first one when tied).
    value : float
        The suspect value.
    n : int
    alternative : str
    pvalue : float
        Bonferroni-type upper bound from the t distribution on n - 2 df:
        n * P(T > t) one-sided, 2 n * P(T > t) two-sided, capped at 1, where
        t^2 = n (n - 2) G^2 / ((n - 1)^2 - n G^2). Exact when it is small (below about 0.1),
        conservative above.
    """

    method: str
    statistic: float
    index: int
    value: float
    n: int
    alternative: str
    pvalue: float

    def critical_value(self, alpha: float = 0.05) -> float:
        """Critical G: (n-1)/sqrt(n) sqrt(t^2 / (n - 2 + t^2)), t the upper alpha/(2n) (two-sided)
        or alpha/n (one-sided) point of t on n - 2 df (NIST e-Handbook 1.3.5.17.1)."""
        check_alpha(alpha)
        return _grubbs_critical(self.n, alpha, self.alternative)


GRUBBS_MIN_N = 7


def grubbs(x: Sequence[float] | np.ndarray, *, alternative: str = "two-sided") -> GrubbsResult:
    """Grubbs test for a single outlier, assuming the rest are normal.

    ``alternative="greater"`` tests the maximum, ``"less"`` the minimum, ``"two-sided"`` the
    value furthest from the mean. Needs n >= 7 (the NIST e-Handbook advises against fewer).

    Examples
    --------
    >>> r = grubbs([199.31, 199.53, 200.19, 200.82, 201.92, 201.95, 202.18, 245.57])
    >>> round(r.statistic, 4), r.index
    (2.4688, 7)
    """
    check_alternative(alternative)
    a = finite_values(x)
    n = a.size
    if n < GRUBBS_MIN_N:
        raise NotApplicableError(f"the Grubbs test needs n >= {GRUBBS_MIN_N} values, got {n}")
    n, m, s = mean_sd(a)
    require_spread(n, s)
    if alternative == "greater":
        idx = int(np.argmax(a))
        g = (a[idx] - m) / s
    elif alternative == "less":
        idx = int(np.argmin(a))
        g = (m - a[idx]) / s
    else:
        idx = int(np.argmax(np.abs(a - m)))
        g = abs(a[idx] - m) / s
    g = float(g)
    return GrubbsResult(
        method=f"Grubbs outlier test ({_GRUBBS_SIDE[alternative]})",
        statistic=g,
        index=idx,
        value=float(a[idx]),
        n=int(n),
        alternative=alternative,
        pvalue=grubbs_pvalue(g, n, alternative=alternative),
    )


def grubbs_pvalue(g: float, n: int, *, alternative: str = "two-sided") -> float:
    """Bonferroni-type p-value of a Grubbs statistic ``g`` for a sample of ``n``.

    t^2 = n (n - 2) g^2 / ((n - 1)^2 - n g^2), p = k * P(T_(n-2) > t), k = 2n two-sided or n
    one-sided, capped at 1 (the inverse of the critical-value formula of NIST e-Handbook
    1.3.5.17.1, so p equals alpha at the critical value).
    """
    check_alternative(alternative)
    if n < 3:
        raise NotApplicableError(f"a Grubbs p-value needs n >= 3, got {n}")
    if not (math.isfinite(g) and g >= 0.0):
        raise ValueError(f"the Grubbs statistic must be a finite number >= 0, not {g}")
    denom = (n - 1) ** 2 - n * g * g
    if denom <= 0.0:  # g at its largest possible value (n - 1) / sqrt(n)
        tail = 0.0
    else:
        t = math.sqrt(n * (n - 2) * g * g / denom)
        tail = float(special.stdtr(n - 2, -t))
    k = 2 * n if alternative == "two-sided" else n
    return float(min(1.0, k * tail))


_GRUBBS_SIDE = dict(
    zip(ALTERNATIVES, ("value furthest from the mean", "minimum", "maximum"), strict=True)
)


# --- lot effect -----------------------------------------------------------------------------


@dataclass(frozen=True)
class LotEffectResult:
    """One-way ANOVA across lots, with the share of variance between lots.

    Attributes
    ----------
    method : str
        ``"one-way ANOVA across lots"``.
    statistic : float
        F = MS_between / MS_within.
    df_between, df_within : int
        k - 1 and N - k.
    pvalue : float
    n_lots : int
    icc : float
        One-way random-effects intraclass correlation ICC(1) =
        (MSB - MSW) / (MSB + (n0 - 1) MSW), n0 = (N - sum n_i^2 / N) / (k - 1) (the effective
        lot size for unequal sizes). Clipped at 0: a negative estimate means no detectable
        lot-to-lot variation.
    var_between, var_within : float
        Variance components: max(0, (MSB - MSW) / n0) and MSW.
    n0 : float
    lot_labels : tuple
        Lots in order of first appearance.
    lot_means : tuple of float
    lot_sizes : tuple of int
    """

    method: str
    statistic: float
    df_between: int
    df_within: int
    pvalue: float
    n_lots: int
    icc: float
    var_between: float
    var_within: float
    n0: float
    lot_labels: tuple[Hashable, ...]
    lot_means: tuple[float, ...]
    lot_sizes: tuple[int, ...]

    @property
    def df(self) -> tuple[int, int]:
        return (self.df_between, self.df_within)


def group_codes(labels: object, n: int, what: str = "lot labels") -> tuple[list, np.ndarray]:
    """Labels in order of first appearance and an integer code per value."""
    lab = list(labels) if not isinstance(labels, np.ndarray) else labels.tolist()
    if len(lab) != n:
        raise ValueError(f"{len(lab)} {what} for {n} values: give one label per value")
    order: dict[Hashable, int] = {}
    codes = np.empty(n, dtype=np.intp)
    for i, key in enumerate(lab):
        codes[i] = order.setdefault(key, len(order))
    return list(order), codes


def lot_effect(values: Sequence[float] | np.ndarray, lots: Sequence[Hashable]) -> LotEffectResult:
    """One-way ANOVA of ``values`` across ``lots`` (one label per value).

    Raises
    ------
    NotApplicableError
        Fewer than 2 lots, or no lot with 2 or more values (no within-lot variation to compare
        with).
    DegenerateDataError
        Non-finite values, or no variation within any lot.

    Examples
    --------
    >>> r = lot_effect([1.0, 1.2, 2.0, 2.2, 3.0, 3.2], ["a", "a", "b", "b", "c", "c"])
    >>> r.df_between, r.df_within, round(r.statistic, 1)
    (2, 3, 100.0)
    """
    a = finite_values(values)
    labels, codes = group_codes(lots, a.size)
    k = len(labels)
    n_total = a.size
    if k < 2:
        raise NotApplicableError(f"a lot effect needs at least 2 lots, got {k}")
    sizes = np.bincount(codes, minlength=k)
    if not np.any(sizes >= 2):
        raise NotApplicableError("no lot has 2 or more values, so within-lot variation is unknown")
    grand = float(np.mean(a))
    sums = np.bincount(codes, weights=a - grand, minlength=k)
    means_c = sums / sizes  # lot means, centred on the grand mean for accuracy
    resid = a - grand - means_c[codes]
    ss_within = float(np.dot(resid, resid))
    ss_between = float(np.dot(sizes, means_c**2))
    df_b, df_w = k - 1, n_total - k
    if not ss_within > 0.0:
        raise DegenerateDataError(
            "no variation within any lot (every lot's values are identical), so the lot effect "
            "cannot be tested"
        )
    msb, msw = ss_between / df_b, ss_within / df_w
    f = msb / msw
    n0 = (n_total - float(np.dot(sizes, sizes)) / n_total) / df_b
    icc = max(0.0, (msb - msw) / (msb + (n0 - 1.0) * msw))
    p = float(special.fdtrc(df_b, df_w, f))
    return LotEffectResult(
        method="one-way ANOVA across lots",
        statistic=float(f),
        df_between=int(df_b),
        df_within=int(df_w),
        pvalue=min(1.0, max(0.0, p)),
        n_lots=int(k),
        icc=float(icc),
        var_between=float(max(0.0, (msb - msw) / n0)),
        var_within=float(msw),
        n0=float(n0),
        lot_labels=tuple(labels),
        lot_means=tuple(float(grand + v) for v in means_c),
        lot_sizes=tuple(int(v) for v in sizes),
    )


# --- stability ------------------------------------------------------------------------------


@dataclass(frozen=True)
class StabilityResult:
    """Individuals chart limits and run statistics, in production order.

    Attributes
    ----------
    n : int
    centre : float
        The mean.
    mr_bar : float
        Average moving range of consecutive values.
    sigma : float
        mr_bar / d2(2), d2(2) = 1.128 (tabled).
    ucl, lcl : float
        centre +/- 3 sigma.
    beyond : tuple of int
        Positions (0-based) of values beyond the limits.
    longest_run : int
        Longest run of consecutive values strictly on one side of the centre (a value equal to
        the centre ends a run).
    run_side : str or None
        ``"above"`` or ``"below"`` for the longest run (the first such run when tied), None
        when no value lies off the centre.
    run_start : int or None
        Position where that run starts.
    """

    n: int
    centre: float
    mr_bar: float
    sigma: float
    ucl: float
    lcl: float
    beyond: tuple[int, ...]
    longest_run: int
    run_side: str | None
    run_start: int | None

    method: str = "individuals chart (moving range of 2)"


def _longest_run(sign: np.ndarray) -> tuple[int, str | None, int | None]:
    """Longest run of equal non-zero signs in ``sign`` (values -1, 0, +1)."""
    if sign.size == 0 or not np.any(sign):
        return 0, None, None
    change = np.flatnonzero(np.diff(sign)) + 1
    starts = np.concatenate(([0], change))
    ends = np.concatenate((change, [sign.size]))
    lengths = np.where(sign[starts] != 0, ends - starts, 0)
    j = int(np.argmax(lengths))
    return int(lengths[j]), ("above" if sign[starts[j]] > 0 else "below"), int(starts[j])


def individuals_chart(x: Sequence[float] | np.ndarray) -> StabilityResult:
    """Individuals chart: limits from the average moving range, points beyond, longest run.

    The values must be in production order. Needs n >= 2; with fewer than about 20 values the
    limits are rough and runs are short by chance, which the caller should weigh.

    Raises
    ------
    DegenerateDataError
        Fewer than 2 values, non-finite values, or all values identical (zero moving range).

    Examples
    --------
    >>> r = individuals_chart([10.0, 10.2, 9.9, 10.1, 10.0, 9.8])
    >>> round(r.sigma, 4), r.beyond
    (0.1773, ())
    """
    a = finite_values(x)
    n = a.size
    if n < 2:
        raise DegenerateDataError(f"{n} value: an individuals chart needs at least 2")
    mr_bar = float(np.mean(np.abs(np.diff(a))))
    if not mr_bar > 0.0:
        raise DegenerateDataError("all values are identical: the moving range is zero")
    _, centre, _ = mean_sd(a)
    sigma = mr_bar / D2_TABLE[2]
    ucl, lcl = centre + 3.0 * sigma, centre - 3.0 * sigma
    beyond = tuple(int(i) for i in np.flatnonzero((a > ucl) | (a < lcl)))
    length, side, start = _longest_run(np.sign(a - centre).astype(int))
    return StabilityResult(
        n=int(n),
        centre=float(centre),
        mr_bar=mr_bar,
        sigma=float(sigma),
        ucl=float(ucl),
        lcl=float(lcl),
        beyond=beyond,
        longest_run=length,
        run_side=side,
        run_start=start,
    )


@dataclass(frozen=True)
class AutocorrelationResult:
    """Lag-1 autocorrelation of values in production order.

    Attributes
    ----------
    method : str
    statistic : float
        r1 = sum (x_i - m)(x_{i+1} - m) / sum (x_i - m)^2 (the NIST e-Handbook's
        definition, section 1.3.5.12 as remembered).
    n : int
    standard_error : float
        1 / sqrt(n), its large-sample standard error for independent values.
    pvalue : float
        Two-sided, from the normal approximation r1 * sqrt(n) ~ N(0, 1) under independence;
        rough below about 30 values.
    """

    method: str
    statistic: float
    n: int
    standard_error: float
    pvalue: float


def lag1_autocorrelation(x: Sequence[float] | np.ndarray) -> AutocorrelationResult:
    """Lag-1 autocorrelation, a check that successive values are independent.

    Examples
    --------
    >>> r = lag1_autocorrelation([1.0, 2.0, 3.0, 4.0, 5.0])
    >>> round(r.statistic, 3)
    0.4
    """
    a = finite_values(x)
    n = a.size
    if n < 3:
        raise DegenerateDataError(f"{n} values: a lag-1 autocorrelation needs at least 3")
    _, m, s = mean_sd(a)
    require_spread(n, s)
    d = a - m
    r = float(np.dot(d[:-1], d[1:]) / np.dot(d, d))
    se = 1.0 / math.sqrt(n)
    z = abs(r) / se
    return AutocorrelationResult(
        method="lag-1 autocorrelation",
        statistic=r,
        n=int(n),
        standard_error=se,
        pvalue=float(min(1.0, 2.0 * special.ndtr(-z))),
    )


# --- resolution -----------------------------------------------------------------------------

RESOLUTION_DIGITS = 12


def snap_to_grid(a: np.ndarray, digits: int = RESOLUTION_DIGITS) -> tuple[np.ndarray, float]:
    """Values as whole multiples of a quantum: ``digits`` significant digits of max |a|.

    Returns the multiples (floats holding whole numbers, below 10^digits in size, which float64
    holds exactly) and the quantum. Used so that float noise (0.1 + 0.2 versus 0.3) neither
    creates a distinct value nor breaks a tie. All-zero input gives quantum 1.
    """
    scale_ref = float(np.max(np.abs(a))) if a.size else 0.0
    if scale_ref == 0.0:
        return np.zeros_like(a, dtype=float), 1.0
    quantum = 10.0 ** (math.floor(math.log10(scale_ref)) - (digits - 1))
    if quantum < 1e-290:  # magnitudes near the float floor: leave the values as they are
        return a.astype(float), 1.0
    return np.round(a / quantum), quantum


@dataclass(frozen=True)
class ResolutionResult:
    """How finely the values were recorded.

    Attributes
    ----------
    n : int
    distinct : int
        Number of distinct values.
    step : float or None
        Smallest positive difference between distinct sorted values (None when all are equal).
        Values are compared on a grid of 12 significant digits of the largest magnitude, so
        float noise such as 0.30000000000000004 does not count as a difference.
    tolerance : float or None
    step_over_tenth_tolerance : float or None
        step / (tolerance / 10): above 1 means the recording step is coarser than a tenth of
        the tolerance (the common-practice "ten to one" rule). None without a tolerance or step.
    """

    n: int
    distinct: int
    step: float | None
    tolerance: float | None
    step_over_tenth_tolerance: float | None

    method: str = "measurement resolution"


def resolution(
    x: Sequence[float] | np.ndarray, *, tolerance: float | None = None
) -> ResolutionResult:
    """Distinct values and the recording step, against a tenth of the tolerance.

    Examples
    --------
    >>> r = resolution([0.1, 0.2, 0.30000000000000004, 0.3], tolerance=2.0)
    >>> r.distinct, r.step, r.step_over_tenth_tolerance
    (3, 0.1, 0.5)
    """
    if tolerance is not None and not (math.isfinite(tolerance) and tolerance > 0.0):
        raise ValueError(f"tolerance must be a positive finite number, not {tolerance}")
    a = finite_values(x)
    units, quantum = snap_to_grid(a)
    grid = np.unique(units)
    distinct = int(grid.size)
    if distinct < 2:
        return ResolutionResult(int(a.size), distinct, None, tolerance, None)
    step_units = float(np.min(np.diff(grid)))
    step = float(f"{step_units * quantum:.{RESOLUTION_DIGITS}g}")
    ratio = None if tolerance is None else step / (tolerance / 10.0)
    return ResolutionResult(int(a.size), distinct, step, tolerance, ratio)
