"""Lots as variance components: one-way random-effects ANOVA, and a spread test that does not
depend on lot sizes.

A value of part j in lot i is y_ij = mu + a_i + e_ij with lot effects a_i ~ (0, sigma_b^2) and
part errors e_ij ~ (0, sigma_w^2). The method-of-moments (ANOVA, "Henderson method I")
estimators equate the mean squares to their expectations (Searle, Casella & McCulloch 1992,
*Variance Components*, ch. 3; Montgomery, *Design and Analysis of Experiments*, the
random-effects model of the one-way layout):

* E(MS_within) = sigma_w^2, so sigma_w^2 = MS_within on N - k df;
* E(MS_between) = sigma_w^2 + n0 sigma_b^2, with the effective lot size
  n0 = (N - sum n_i^2 / N) / (k - 1), which is n for equal lots of n;
  so sigma_b^2 = (MS_between - MS_within) / n0. A negative estimate is set to 0 and flagged.

Why this matters for a process change: the variance of a lot mean is sigma_b^2 + sigma_w^2 / m,
which depends on the lot size m. Comparing the variances of lot means between an old process of
lots of 25 and a new process of lots of 2 compares different things even when the processes are
identical. :func:`within_lot_spread` compares the pooled within-lot variances instead (an exact
F-test on sum(n_i - 1) degrees of freedom under normal errors, whatever the lot sizes) and
reports the between-lot components beside it.
"""

from __future__ import annotations

import math
from collections.abc import Hashable, Sequence
from dataclasses import dataclass

import numpy as np

from . import _memo
from ._frozen import fast_init
from .core import Interval, check_alternative
from .errors import DegenerateDataError, NotApplicableError
from .one_way import one_way
from .samples import finite_values, group_codes, group_sizes
from .spread import f_test_from_stats

ArrayLike = Sequence[float] | np.ndarray


@fast_init
@dataclass(frozen=True)
class VarianceComponentsResult:
    """Within-lot and between-lot variance components of one process.

    Attributes
    ----------
    method : str
    n : int
        Values used.
    n_lots : int
    lot_sizes : tuple of int
        In order of first appearance.
    df_between, df_within : int
        k - 1 and N - k.
    ms_between, ms_within : float
        Mean squares between and within lots.
    n0 : float
        Effective lot size (N - sum n_i^2 / N) / (k - 1).
    var_within : float
        sigma_w^2 = MS_within.
    var_between : float
        max(0, (MS_between - MS_within) / n0).
    var_between_raw : float
        (MS_between - MS_within) / n0 before truncation (may be negative).
    truncated : bool
        True when the raw between-lot estimate was negative and set to 0.
    statistic, pvalue : float
        F = MS_between / MS_within on (df_between, df_within) and its upper-tail p-value (the
        test of sigma_b^2 = 0).
    """

    method: str
    n: int
    n_lots: int
    lot_sizes: tuple[int, ...]
    df_between: int
    df_within: int
    ms_between: float
    ms_within: float
    n0: float
    var_within: float
    var_between: float
    var_between_raw: float
    truncated: bool
    statistic: float
    pvalue: float

    @property
    def sd_within(self) -> float:
        return math.sqrt(self.var_within)

    @property
    def sd_between(self) -> float:
        return math.sqrt(self.var_between)


def variance_components(values: ArrayLike, lots: Sequence[Hashable]) -> VarianceComponentsResult:
    """One-way random-effects ANOVA estimates of the within- and between-lot variances.

    Parameters
    ----------
    values : array_like
        Part values.
    lots : sequence
        One lot label per value.

    Raises
    ------
    NotApplicableError
        Fewer than 2 lots of at least 2 parts each (neither component is then estimable).
    DegenerateDataError
        Non-finite values, or no variation within any lot.

    Examples
    --------
    >>> r = variance_components([1.0, 1.2, 2.0, 2.2, 3.0, 3.2], ["a", "a", "b", "b", "c", "c"])
    >>> round(r.var_within, 4), round(r.var_between, 4)
    (0.02, 0.99)
    """
    a, k, sizes, ow = _lots_one_way(values, lots)
    msb, msw, n0 = ow.ms_between, ow.ms_within, ow.n0
    raw = (msb - msw) / n0
    return VarianceComponentsResult(
        method="one-way random-effects ANOVA (method of moments, n0 for unequal lots)",
        n=int(a.size),
        n_lots=int(k),
        lot_sizes=tuple(sizes.tolist()),
        df_between=int(ow.df_between),
        df_within=int(ow.df_within),
        ms_between=float(msb),
        ms_within=float(msw),
        n0=float(n0),
        var_within=float(msw),
        var_between=float(max(0.0, raw)),
        var_between_raw=float(raw),
        truncated=bool(raw < 0.0),
        statistic=float(ow.statistic),
        pvalue=ow.pvalue,
    )


def sd_components(values: ArrayLike, lots: Sequence[Hashable]) -> tuple[float, float, bool]:
    """``(sd_within, sd_between, truncated)`` of :func:`variance_components` (the same
    arithmetic and errors) without the rest of its result: what a process summary shows.

    Examples
    --------
    >>> w, b, t = sd_components([1.0, 1.2, 2.0, 2.2, 3.0, 3.2], ["a", "a", "b", "b", "c", "c"])
    >>> round(w ** 2, 4), round(b ** 2, 4), t
    (0.02, 0.99, False)
    """
    if type(lots) is tuple:  # a read-only sample's, computed with its lots' one-way analysis
        hit = _memo.recall("sd_components", values)  # (stats.batch) for these very codes
        if hit is not None and group_codes(lots, len(lots))[1] is hit[0]:
            return hit[1]
    _, _, _, ow = _lots_one_way(values, lots)
    return sds_of(ow.ms_between, ow.ms_within, ow.n0)


def sds_of(msb: float, msw: float, n0: float) -> tuple[float, float, bool]:
    """:func:`sd_components` from the one-way analysis's mean squares and n0."""
    raw = (msb - msw) / n0
    return math.sqrt(float(msw)), math.sqrt(float(max(0.0, raw))), bool(raw < 0.0)


def _lots_one_way(values: ArrayLike, lots: Sequence[Hashable]):
    """The finite values, the number of lots, their sizes and the one-way ANOVA of the values
    in their lots; NotApplicableError below 2 lots of 2 parts."""
    a = finite_values(values)
    labels, codes = group_codes(lots, a.size)
    k = len(labels)
    sizes = group_sizes(codes, k)
    lots_of_two = sum(size >= 2 for size in sizes.tolist())
    if k < 2 or lots_of_two < 2:
        raise NotApplicableError(
            "variance components need at least 2 lots of at least 2 parts each "
            f"({k} lot(s), {lots_of_two} with 2 or more parts)"
        )
    ow = one_way(a, codes, sizes, refused="within-lot variance cannot be estimated")
    return a, k, sizes, ow


@dataclass(frozen=True)
class WithinLotSpreadResult:
    """F-test of the pooled within-lot variances, new over old, with both processes' components.

    Attributes
    ----------
    method : str
    statistic : float
        F = MS_within(new) / MS_within(old).
    df_num, df_den : int
        sum(n_i - 1) over the new lots and over the old lots.
    pvalue : float
    alternative : str
        ``"greater"``: the new process spreads more within its lots.
    estimate : float
        sd_within(new) / sd_within(old).
    old, new : VarianceComponentsResult
    between_ratio : float or None
        sd_between(new) / sd_between(old), descriptive only; None where the old component is 0.
    """

    method: str
    statistic: float
    df_num: int
    df_den: int
    pvalue: float
    alternative: str
    estimate: float
    old: VarianceComponentsResult
    new: VarianceComponentsResult
    between_ratio: float | None

    @property
    def df(self) -> tuple[int, int]:
        return (self.df_num, self.df_den)

    def confidence_interval(self, level: float = 0.95) -> Interval:
        """Interval for sigma_w(new) / sigma_w(old) from F / ratio^2 ~ F(df_num, df_den)."""
        return self._ratio_test().confidence_interval(level)

    def _ratio_test(self):
        return f_test_from_stats(self.df_den + 1, self.old.sd_within, self.df_num + 1,
                                 self.new.sd_within, alternative=self.alternative)


def within_lot_spread(
    old: ArrayLike,
    old_lots: Sequence[Hashable],
    new: ArrayLike,
    new_lots: Sequence[Hashable],
    *,
    alternative: str = "greater",
) -> WithinLotSpreadResult:
    """Compare the within-lot spread of two processes, whatever their lot sizes.

    Under normal part errors, MS_within * df / sigma_w^2 is chi-square on df = sum(n_i - 1)
    whatever the lot sizes and lot effects, so the ratio of the two MS_within, scaled by the true
    ratio, is F(df_new, df_old): an exact test.

    Examples
    --------
    >>> r = within_lot_spread([1.0, 1.2, 2.0, 2.2], ["a", "a", "b", "b"],
    ...                       [1.0, 1.4, 2.0, 2.4], ["c", "c", "d", "d"])
    >>> round(r.statistic, 6), r.df
    (4.0, (2, 2))
    """
    check_alternative(alternative)
    vo = variance_components(old, old_lots)
    vn = variance_components(new, new_lots)
    f = f_test_from_stats(vo.df_within + 1, vo.sd_within, vn.df_within + 1, vn.sd_within,
                          alternative=alternative)
    if not (math.isfinite(f.statistic) and f.statistic > 0.0):
        raise DegenerateDataError("the within-lot variance ratio is not a positive number")
    between = vn.sd_between / vo.sd_between if vo.var_between > 0.0 else None
    return WithinLotSpreadResult(
        method="F-test on pooled within-lot variances",
        statistic=f.statistic,
        df_num=vn.df_within,
        df_den=vo.df_within,
        pvalue=f.pvalue,
        alternative=alternative,
        estimate=f.estimate,
        old=vo,
        new=vn,
        between_ratio=between,
    )
