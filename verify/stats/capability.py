"""Process capability against specification limits: Cp, Cpk, Cpm (within sigma), Pp, Ppk.

Within-process sigma comes from the average moving range of consecutive values (values in
production order) or, when subgroup labels are given (for example lots), from the subgroup
ranges; the overall sigma is the sample standard deviation (n - 1) and gives Pp and Ppk.

Interval forms (all two-sided at ``level`` unless a bound is asked for):

* Cp, Pp: chi-square on n - 1 df, index * sqrt(chi2_q(n - 1) / (n - 1)), with n the number of
  values whatever the sigma estimate (common practice; it treats sigma as if from the sample sd).
* Cpk, Ppk: Bissell (1990), "How reliable is your capability index?", Applied Statistics 39,
  index +/- z * sqrt(1 / (9 n) + index^2 / (2 (n - 1))), which is the usual
  index * (1 -/+ z sqrt(1 / (9 n index^2) + 1 / (2 (n - 1)))) for a positive index and stays
  defined at or below zero.
* Lower confidence bounds (what a capability criterion judges with ``judge: lower_bound``):
  index - z_level * sqrt(1 / (9 n) + index^2 / (2 nu)), Bissell's delta-method form with nu the
  degrees of freedom of the sigma behind the index. For Ppk (overall sd) nu = n - 1, Bissell's
  own case. For Cpk the within sigma is a range-based estimator, less efficient than the sd:
  nu is its *effective* df, nu = E(sigma_hat)^2 / (2 Var(sigma_hat)), the df of the chi
  distribution with the same coefficient of variation (Patnaik 1950, "The use of mean range
  as an estimator of variance in statistical tests", Biometrika 37). For k subgroup ranges
  pooled with Burr's weights nu = sum d2(n_i)^2 / (2 d3(n_i)^2) (for equal sizes k d2^2 /
  (2 d3^2), close to the familiar 0.9 k (n - 1)); for the average of the n - 1 moving ranges of
  n values, whose neighbours are correlated, nu follows from the exact mean and variance of the
  average moving range (:func:`moving_range_df`, about 0.6 (n - 1)). The coverage these bounds
  reach is measured by simulation in tests/test_capability_bounds.py and stated in the README.
* Cpm: Boyles (1991), "The Taguchi capability index", Journal of Quality Technology 23: the
  sum of squares about the target, scaled by sigma^2, is a noncentral chi-square with n df and
  noncentrality n a^2, a = (mean - target) / sigma; matching its mean n (1 + a^2) and variance
  2 n (1 + 2 a^2) to c chi2(nu) (Patnaik) gives nu = n (1 + a^2)^2 / (1 + 2 a^2) and the interval
  Cpm * sqrt(chi2_q(nu) / nu). (Formula derived here; the citation is from memory.)
"""

from __future__ import annotations

import math
from collections.abc import Hashable, Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import special

from . import _memo
from ._checks import check_level
from ._frozen import fast_init
from .core import Interval, mean_sd
from .errors import DegenerateDataError, NotApplicableError
from .range_constants import D2_TABLE, d2, d3
from .samples import finite_values, group_codes

ArrayLike = Sequence[float] | np.ndarray


@lru_cache(maxsize=64)  # the same level for every characteristic of a layout
def _z(p: float) -> float:
    """The standard normal p-quantile."""
    return float(special.ndtri(p))


@lru_cache(maxsize=1024)  # the same few quantiles for every characteristic of a layout
def _chi2_quantile(p: float, df: float) -> float:
    return float(special.chdtri(df, 1.0 - p))  # chdtri takes the upper-tail probability


def chi2_interval(index: float, df: float, level: float) -> Interval:
    """index * sqrt(chi2_q(df) / df) at q = (1 -/+ level) / 2 (Cp, Pp; Cpm with df = nu)."""
    check_level(level)
    lo = index * math.sqrt(_chi2_quantile(0.5 - level / 2.0, df) / df)
    hi = index * math.sqrt(_chi2_quantile(0.5 + level / 2.0, df) / df)
    return Interval(lo, hi, level)


def bissell_se(index: float, n: int) -> float:
    """Approximate standard error of Cpk (or Ppk): sqrt(1 / (9 n) + Cpk^2 / (2 (n - 1)))."""
    return math.sqrt(1.0 / (9.0 * n) + index * index / (2.0 * (n - 1)))


def bissell_interval(index: float, n: int, level: float) -> Interval:
    """Bissell's normal-approximation interval for Cpk (or Ppk)."""
    check_level(level)
    half = _z(0.5 + level / 2.0) * bissell_se(index, n)
    return Interval(index - half, index + half, level)


def bissell_lower_bound(index: float, n: int, level: float = 0.95) -> float:
    """One-sided lower confidence bound for Cpk (or Ppk): index - z_level * se."""
    check_level(level)
    return index - _z(level) * bissell_se(index, n)


def capability_lower_bound(index: float, n: int, df: float, level: float = 0.95) -> float:
    """Lower one-sided bound index - z_level sqrt(1 / (9 n) + index^2 / (2 df)).

    ``df`` is the (effective) degrees of freedom of the sigma in the index: n - 1 for the sample
    sd (then this is Bissell's bound), the effective df of a range-based sigma otherwise.
    """
    check_level(level)
    if not df > 0:
        raise DegenerateDataError("the sigma estimate has no degrees of freedom")
    se = math.sqrt(1.0 / (9.0 * n) + index * index / (2.0 * df))
    return index - _z(level) * se


# Moments of the absolute difference of neighbours, sigma = 1: D = X2 - X1 ~ N(0, 2),
# E|D| = 2 / sqrt(pi); Var|D| = 2 - 4 / pi; neighbouring differences share a value, so their
# correlation is -1/2 and, from E|Z1 Z2| = (2 / pi)(sqrt(1 - r^2) + r asin r) for standard
# normals with correlation r, cov(|D1|, |D2|) = (4 / pi)(sqrt(3) / 2 + pi / 12 - 1).
# (Derived here; the bivariate-normal absolute moment is a textbook result.)
_MR_MEAN = 2.0 / math.sqrt(math.pi)
_MR_VAR = 2.0 - 4.0 / math.pi
_MR_COV = 4.0 / math.pi * (math.sqrt(3.0) / 2.0 + math.pi / 12.0 - 1.0)


@lru_cache(maxsize=256)  # the same few lot sizes for every characteristic of a layout
def moving_range_df(n: int) -> float:
    """Effective df of sigma = (average moving range) / d2(2) from ``n`` values in order.

    nu = E(MRbar)^2 / (2 Var(MRbar)), with Var(MRbar) = ((n - 1) Var|D| + 2 (n - 2) cov) /
    (n - 1)^2 (only neighbouring moving ranges are correlated). About 0.6 (n - 1) for large n.

    Examples
    --------
    >>> round(moving_range_df(2), 3)
    0.876
    """
    if n < 2:
        raise DegenerateDataError(f"{n} value: a moving range needs at least 2")
    m = n - 1
    var = (m * _MR_VAR + 2.0 * max(m - 1, 0) * _MR_COV) / (m * m)
    return _MR_MEAN * _MR_MEAN / (2.0 * var)


def boyles_df(n: int, a: float) -> float:
    """Boyles' (1991) approximate chi-square df for Cpm: n (1 + a^2)^2 / (1 + 2 a^2)."""
    a2 = a * a
    return n * (1.0 + a2) ** 2 / (1.0 + 2.0 * a2)


@fast_init
@dataclass(frozen=True)
class CapabilityResult:
    """Capability indices with confidence intervals.

    Attributes
    ----------
    n : int
    mean : float
    sigma_within : float
        From the average moving range (mr_bar / 1.128) or from subgroup ranges; see
        ``sigma_method``.
    sigma_overall : float
        The sample standard deviation (n - 1).
    sigma_method : str
        How sigma_within was estimated, in words.
    n_subgroups : int or None
        Subgroups that contributed a range; None for the moving-range estimate.
    sigma_within_df : float
        Effective degrees of freedom of sigma_within (see the module docstring).
    lower, upper, target : float or None
    level : float
        Confidence level of the ``*_interval`` fields.
    cp, pp : float or None
        (upper - lower) / (6 sigma); None unless both limits are given.
    cpl, cpu : float or None
        (mean - lower) / (3 sigma_within), (upper - mean) / (3 sigma_within); None without
        that limit. ``ppl``, ``ppu`` likewise with the overall sigma.
    cpk, ppk : float
        The smaller of the one-sided indices present (the only one with a single limit).
    cpm : float or None
        (upper - lower) / (6 sqrt(sigma_within^2 + (mean - target)^2)); None unless both limits
        and a target are given.
    cp_interval, cpk_interval, cpm_interval, pp_interval, ppk_interval : Interval or None
        Two-sided intervals at ``level`` (forms in the module docstring), computed when read;
        None where the index is None. They take n - 1 df for every sigma (the forms of the
        module docstring; tests/test_stats_capability.py checks them against published
        values); the lower bounds below use the effective df of sigma_within for Cpk.
    """

    n: int
    mean: float
    sigma_within: float
    sigma_overall: float
    sigma_method: str
    n_subgroups: int | None
    lower: float | None
    upper: float | None
    target: float | None
    level: float
    cp: float | None
    cpk: float
    cpl: float | None
    cpu: float | None
    pp: float | None
    ppk: float
    ppl: float | None
    ppu: float | None
    cpm: float | None

    sigma_within_df: float = math.nan

    # the intervals, computed when asked (a check reads the lower bounds below, not these)
    @property
    def cp_interval(self) -> Interval | None:
        return None if self.cp is None else chi2_interval(self.cp, self.n - 1, self.level)

    @property
    def cpk_interval(self) -> Interval:
        return bissell_interval(self.cpk, self.n, self.level)

    @property
    def cpm_interval(self) -> Interval | None:
        if self.cpm is None:
            return None
        nu = boyles_df(self.n, (self.mean - self.target) / self.sigma_within)
        return chi2_interval(self.cpm, nu, self.level)

    @property
    def pp_interval(self) -> Interval | None:
        return None if self.pp is None else chi2_interval(self.pp, self.n - 1, self.level)

    @property
    def ppk_interval(self) -> Interval:
        return bissell_interval(self.ppk, self.n, self.level)

    def cpk_lower_bound(self, level: float = 0.95) -> float:
        """One-sided lower confidence bound for Cpk: Bissell's form on the effective df of the
        within sigma (moving ranges or subgroup ranges), not on n - 1."""
        return capability_lower_bound(self.cpk, self.n, self.sigma_within_df, level)

    def ppk_lower_bound(self, level: float = 0.95) -> float:
        """One-sided lower confidence bound for Ppk (Bissell 1990: overall sd, n - 1 df)."""
        return bissell_lower_bound(self.ppk, self.n, level)

    def lower_bound(self, index: str, level: float = 0.95) -> float:
        """The lower bound of ``index`` ("cpk" or "ppk")."""
        if index == "ppk":
            return self.ppk_lower_bound(level)
        return self.cpk_lower_bound(level)


def _limit(value: float | None, name: str) -> float | None:
    if value is None:
        return None
    if type(value) is float and math.isfinite(value):
        return value  # (what float(value) gives, finite: the checks below, without the call)
    v = float(value)
    if not math.isfinite(v):
        raise ValueError(f"{name} must be a finite number or None, not {value}")
    return v


def within_sigma(
    x: np.ndarray, subgroups: Sequence[Hashable] | None
) -> tuple[float, str, int | None, float]:
    """sigma_within, the method in words, the subgroups used (None: moving range) and the
    effective df of the estimate.

    Moving range: mr_bar / d2(2), d2(2) = 1.128, from consecutive values in the order given.
    Subgroups: each range scaled by its own constant, R_i / d2(n_i), is unbiased for sigma; they
    are pooled with Burr's weights f_i = d2(n_i)^2 / d3(n_i)^2, the reciprocals of their
    variances (I. W. Burr 1969, "Control charts for measurements with varying sample sizes",
    Journal of Quality Technology 1; the same weighted form is in ASTM E2587; both cited from
    memory). The weighted mean is unbiased and has the least variance of such combinations; for
    equal sizes it is Rbar / d2(n). Subgroups of one value carry no range and are left out.
    """
    if subgroups is None:
        if x.size < 2:
            raise DegenerateDataError(f"{x.size} value: a moving range needs at least 2")
        mr_bar = _memo.recall("mr_bar", x)  # the individuals chart's (stats.batch)
        if mr_bar is None:
            mr_bar = float(np.add.reduce(np.abs(x[1:] - x[:-1]))) / (x.size - 1)  # np.mean(|diff|)
        if not mr_bar > 0.0:
            raise DegenerateDataError("all values are identical: the moving range is zero")
        return (mr_bar / D2_TABLE[2], "average moving range / d2(2) = 1.128", None,
                moving_range_df(int(x.size)))
    _, codes = group_codes(subgroups, x.size, "subgroup labels")
    k = int(codes.max()) + 1
    sizes = np.bincount(codes, minlength=k)
    hi = np.full(k, -np.inf)
    lo = np.full(k, np.inf)
    np.maximum.at(hi, codes, x)
    np.minimum.at(lo, codes, x)
    use = sizes >= 2
    if not np.any(use):
        raise NotApplicableError("no subgroup has 2 or more values, so no range exists")
    ranges, used_sizes = (hi - lo)[use], sizes[use]
    constants = np.array([d2(int(s)) for s in used_sizes])
    weights = np.array([d2(int(s)) ** 2 / d3(int(s)) ** 2 for s in used_sizes])
    df = float(np.sum(weights)) / 2.0  # Var(sigma_hat) = sigma^2 / sum f_i
    left_out = int(np.count_nonzero(~use))
    note = f"; {left_out} subgroup(s) of one value left out" if left_out else ""
    if np.all(used_sizes == used_sizes[0]):
        sigma = float(np.mean(ranges)) / float(constants[0])
        method = f"mean subgroup range / d2({int(used_sizes[0])}) = {constants[0]:.4g}{note}"
    else:
        sigma = float(np.sum(weights * ranges / constants) / np.sum(weights))
        method = ("subgroup range / d2(size), pooled with Burr's weights d2^2 / d3^2, "
                  f"unequal sizes{note}")
    if not sigma > 0.0:
        raise DegenerateDataError(
            "every subgroup's values are identical: the within-subgroup range is zero"
        )
    return sigma, method, int(ranges.size), df


def _indices(m: float, sigma: float, lsl: float | None, usl: float | None
             ) -> tuple[float | None, float, float | None, float | None]:
    """(both sides' index, the smaller side's, the lower side's, the upper side's) of the
    mean ``m`` with ``sigma``: Cp, Cpk, Cpl, Cpu (or Pp, Ppk, Ppl, Ppu)."""
    lo = None if lsl is None else (m - lsl) / (3.0 * sigma)
    hi = None if usl is None else (usl - m) / (3.0 * sigma)
    both = None if lsl is None or usl is None else (usl - lsl) / (6.0 * sigma)
    # the smaller of the sides given (min(lo, hi) keeps lo on a tie, as min of the two
    # in that order does)
    k = hi if lo is None else lo if hi is None else min(lo, hi)
    return both, k, lo, hi


def capability(
    x: ArrayLike,
    *,
    lower: float | None = None,
    upper: float | None = None,
    target: float | None = None,
    subgroups: Sequence[Hashable] | None = None,
    level: float = 0.95,
) -> CapabilityResult:
    """Capability indices of ``x`` against ``lower`` and/or ``upper`` specification limits.

    Parameters
    ----------
    x : array_like
        Values in production order (the moving range depends on the order).
    lower, upper : float, optional
        Specification limits; at least one.
    target : float, optional
        Needed for Cpm (with both limits).
    subgroups : sequence, optional
        One label per value (for example the lot); then sigma_within comes from subgroup
        ranges instead of the moving range.
    level : float
        Confidence level of the two-sided intervals.

    Raises
    ------
    NotApplicableError
        No specification limit given; no subgroup with 2 or more values.
    DegenerateDataError
        Fewer than 2 values, non-finite values, zero spread.

    Examples
    --------
    >>> r = capability([9.9, 10.1, 10.0, 10.2, 9.8, 10.0, 10.1, 9.9], lower=9.4, upper=10.6)
    >>> round(r.cp, 3), round(r.cpk, 3)
    (1.128, 1.128)
    """
    check_level(level)
    lsl, usl, tgt = _limit(lower, "lower"), _limit(upper, "upper"), _limit(target, "target")
    if lsl is None and usl is None:
        raise NotApplicableError("capability needs at least one specification limit")
    if lsl is not None and usl is not None and not lsl < usl:
        raise ValueError(f"the lower limit ({lsl}) must be below the upper limit ({usl})")
    a = finite_values(x)
    n, m, s_overall = mean_sd(a)
    if n < 2:
        raise DegenerateDataError(f"{n} value: capability needs at least 2")
    if not s_overall > 0.0:
        raise DegenerateDataError("all values are identical: zero spread, capability undefined")
    s_within, how, n_sub, nu_within = within_sigma(a, subgroups)
    cp, cpk, cpl, cpu = _indices(m, s_within, lsl, usl)
    pp, ppk, ppl, ppu = _indices(m, s_overall, lsl, usl)
    cpm = None
    if tgt is not None and lsl is not None and usl is not None:
        tau = math.hypot(s_within, m - tgt)
        cpm = (usl - lsl) / (6.0 * tau)
    # (the fields by position: n, mean, sigma_within, sigma_overall, sigma_method,
    # n_subgroups, lower, upper, target, level, cp, cpk, cpl, cpu, pp, ppk, ppl, ppu, cpm,
    # sigma_within_df)
    return CapabilityResult(int(n), float(m), float(s_within), float(s_overall), how, n_sub,
                            lsl, usl, tgt, float(level), cp, cpk, cpl, cpu, pp, ppk, ppl, ppu,
                            cpm, float(nu_within))
