"""Rank tests: Wilcoxon signed-rank (one sample or paired differences) and Mann-Whitney.

They back up the t-tests when the data are far from normal. p-values come from
``scipy.stats.wilcoxon`` and ``scipy.stats.mannwhitneyu`` with the method fixed here, not left
to scipy's default, so that the method string can say what was done:

* exact null distribution when there are no ties (and, for the signed-rank test, the zero
  differences have been dropped) and the sample is small (n <= 50 for the signed-rank test;
  both groups under 50 for Mann-Whitney);
* otherwise the normal approximation with the tie-corrected variance and a continuity
  correction.

Values are compared on a grid of 12 significant digits of the largest magnitude before ranking,
so that float noise (0.1 + 0.2 against 0.3) neither breaks a tie nor hides a zero difference.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from .core import check_alternative
from .diagnostics import finite_values, snap_to_grid
from .errors import DegenerateDataError

ArrayLike = Sequence[float] | np.ndarray

EXACT_MAX_N = 50
# Hodges-Lehmann estimates use all n (n + 1) / 2 Walsh averages or n_old * n_new differences;
# above this many the estimate is left out (None) to bound memory and time.
HL_MAX_PAIRS = 4_000_000
ZERO_METHODS = ("wilcox", "pratt")


@dataclass(frozen=True)
class RankTestResult:
    """Result of a rank test.

    Attributes
    ----------
    method : str
        Names the test, the zero handling (signed-rank) and whether the p-value is exact or
        from the normal approximation.
    statistic : float
        Signed-rank: W+ = sum of the ranks of the positive differences (whatever the
        alternative). Mann-Whitney: U of the new group = number of (old, new) pairs with new
        larger, ties counting one half.
    pvalue : float
    alternative : str
        ``"greater"``: differences tend to be positive (signed-rank) or new values tend to be
        larger (Mann-Whitney).
    n : int
        Values ranked: non-zero differences ("wilcox"), all differences ("pratt"), or
        n_old + n_new.
    n_zero : int
        Zero differences (always 0 for Mann-Whitney).
    n_tied_groups : int
        Groups of equal values among those ranked (absolute differences for the signed-rank
        test, pooled values for Mann-Whitney); zeros are not counted here.
    n_tied_values : int
        Values that belong to such a group.
    exact : bool
    estimate : float or None
        Hodges-Lehmann estimate: the median of the Walsh averages (d_i + d_j) / 2, i <= j, of all
        differences including zeros (signed-rank), or the median of all differences new - old
        (Mann-Whitney). None when the pairs would exceed ``HL_MAX_PAIRS``.
    zero_method : str or None
        ``"wilcox"`` (zeros dropped before ranking) or ``"pratt"`` (zeros ranked, then dropped);
        None for Mann-Whitney.
    n_old, n_new : int or None
        Mann-Whitney only.
    """

    method: str
    statistic: float
    pvalue: float
    alternative: str
    n: int
    n_zero: int
    n_tied_groups: int
    n_tied_values: int
    exact: bool
    estimate: float | None
    zero_method: str | None = None
    n_old: int | None = None
    n_new: int | None = None


def _ties(units: np.ndarray) -> tuple[int, int]:
    """(number of tie groups, number of values in them) for grid values."""
    _, counts = np.unique(units, return_counts=True)
    tied = counts[counts > 1]
    return int(tied.size), int(tied.sum())


def _walsh_median(d: np.ndarray) -> float | None:
    n = d.size
    if n * (n + 1) // 2 > HL_MAX_PAIRS:
        return None
    i, j = np.triu_indices(n)
    return float(np.median((d[i] + d[j]) / 2.0))


def _shift_median(old: np.ndarray, new: np.ndarray) -> float | None:
    if old.size * new.size > HL_MAX_PAIRS:
        return None
    return float(np.median(np.subtract.outer(new, old)))


def _clip_p(p: float) -> float:
    p = float(p)
    if not np.isfinite(p):
        raise DegenerateDataError("the rank test gave no finite p-value for these data")
    return min(1.0, max(0.0, p))


def wilcoxon_signed_rank(
    d: ArrayLike, *, alternative: str = "two-sided", zero_method: str = "wilcox"
) -> RankTestResult:
    """Wilcoxon signed-rank test on differences ``d`` (x - target, or new - old per pair).

    Parameters
    ----------
    d : array_like
        The differences; the caller forms them.
    alternative : {"two-sided", "less", "greater"}
        ``"greater"``: the differences tend to be positive.
    zero_method : {"wilcox", "pratt"}
        ``"wilcox"`` drops zero differences before ranking (the classical test); ``"pratt"``
        ranks them with the others and then drops their ranks.

    Raises
    ------
    DegenerateDataError
        Non-finite values, or every difference is zero.

    Examples
    --------
    >>> r = wilcoxon_signed_rank([0.5, 1.2, -0.3, 0.8, 2.1, 0.0, 1.7], alternative="greater")
    >>> r.statistic, r.n, r.n_zero, r.exact, round(r.pvalue, 4)
    (20.0, 6, 1, True, 0.0312)
    """
    check_alternative(alternative)
    if zero_method not in ZERO_METHODS:
        raise ValueError(f"zero_method must be one of {ZERO_METHODS}, not {zero_method!r}")
    raw = finite_values(d, "differences")
    units, quantum = snap_to_grid(raw)
    values = units * quantum
    nonzero = units != 0
    n_zero = int(np.count_nonzero(~nonzero))
    if not np.any(nonzero):
        raise DegenerateDataError(
            f"all {raw.size} differences are zero: the signed-rank test has nothing to rank"
        )
    from scipy import stats

    ranked_units = units[nonzero] if zero_method == "wilcox" else units
    groups, tied_values = _ties(np.abs(units[nonzero]))
    ranks = stats.rankdata(np.abs(ranked_units))
    w_plus = float(np.sum(ranks[ranked_units > 0]))
    n_nonzero = int(np.count_nonzero(nonzero))
    exact = (
        groups == 0
        and n_nonzero <= EXACT_MAX_N
        and (zero_method == "wilcox" or n_zero == 0)
    )
    if exact:
        res = stats.wilcoxon(values[nonzero], alternative=alternative, method="exact")
        how = "exact"
    else:
        data = values[nonzero] if zero_method == "wilcox" else values
        res = stats.wilcoxon(
            data,
            zero_method=zero_method,
            correction=True,
            alternative=alternative,
            method="asymptotic",
        )
        how = "normal approximation, tie and continuity corrected"
    zeros = "zeros dropped" if zero_method == "wilcox" else "zeros ranked then dropped (Pratt)"
    return RankTestResult(
        method=f"Wilcoxon signed-rank test ({zeros}; {how})",
        statistic=w_plus,
        pvalue=_clip_p(res.pvalue),
        alternative=alternative,
        n=int(ranked_units.size),
        n_zero=n_zero,
        n_tied_groups=groups,
        n_tied_values=tied_values,
        exact=bool(exact),
        estimate=_walsh_median(raw),
        zero_method=zero_method,
    )


def mann_whitney(
    old: ArrayLike, new: ArrayLike, *, alternative: str = "two-sided"
) -> RankTestResult:
    """Mann-Whitney (Wilcoxon rank-sum) test, new against old.

    ``"greater"``: new values tend to be larger than old ones.

    Raises
    ------
    DegenerateDataError
        An empty group, non-finite values, or all values identical.

    Examples
    --------
    >>> r = mann_whitney([1.1, 2.3, 1.9, 2.8], [3.1, 2.5, 4.0, 3.3, 3.8], alternative="greater")
    >>> r.statistic, r.exact, round(r.pvalue, 4), r.estimate
    (19.0, True, 0.0159, 1.3)
    """
    check_alternative(alternative)
    a = finite_values(old, "old values")
    b = finite_values(new, "new values")
    units, quantum = snap_to_grid(np.concatenate((a, b)))
    if np.all(units == units[0]):
        raise DegenerateDataError("all values are identical: the rank test has no information")
    ua, ub = units[: a.size], units[a.size :]
    groups, tied_values = _ties(units)
    from scipy import stats

    exact = groups == 0 and a.size < EXACT_MAX_N and b.size < EXACT_MAX_N
    res = stats.mannwhitneyu(
        ub * quantum,
        ua * quantum,
        use_continuity=True,
        alternative=alternative,
        method="exact" if exact else "asymptotic",
    )
    ranks = stats.rankdata(units)
    u_new = float(np.sum(ranks[a.size :]) - b.size * (b.size + 1) / 2.0)
    how = "exact" if exact else "normal approximation, tie and continuity corrected"
    return RankTestResult(
        method=f"Mann-Whitney rank-sum test ({how})",
        statistic=u_new,
        pvalue=_clip_p(res.pvalue),
        alternative=alternative,
        n=int(a.size + b.size),
        n_zero=0,
        n_tied_groups=groups,
        n_tied_values=tied_values,
        exact=bool(exact),
        estimate=_shift_median(a, b),
        n_old=int(a.size),
        n_new=int(b.size),
    )
