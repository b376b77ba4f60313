"""Rank tests: Wilcoxon signed-rank (one sample or paired differences) and Mann-Whitney.

They back up the t-tests when the data are far from normal. The method is fixed here, not
left to a library default, so that the method string can say what was done:

* exact null distribution when there are no ties (and, for the signed-rank test, the zero
  differences have been dropped) and the sample is small (n <= 50 for the signed-rank test;
  both groups under 50 for Mann-Whitney);
* otherwise the normal approximation with the tie-corrected variance and a continuity
  correction.

The arithmetic is our own and costs microseconds: average ranks from one ``argsort``, and
exact null distributions counted once per sample size (with Python integers, so the counts are
exact) and cached. The definitions follow ``scipy.stats.wilcoxon`` and
``scipy.stats.mannwhitneyu`` (the p-value counts the mass at the observed statistic; two-sided
doubles the smaller tail; the continuity correction moves the statistic 1/2 towards the null
mean), and tests check both against scipy to 1e-12.

Values are compared on a grid of 12 significant digits of the largest magnitude before ranking,
so that float noise (0.1 + 0.2 against 0.3) neither breaks a tie nor hides a zero difference.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy.special import cython_special

from . import _memo
from ._frozen import fast_init
from .core import check_alternative
from .errors import DegenerateDataError
from .samples import finite_values, median, snap_to_grid

ArrayLike = Sequence[float] | np.ndarray

EXACT_MAX_N = 50
# Hodges-Lehmann estimates use all n (n + 1) / 2 Walsh averages or n_old * n_new differences;
# above this many the estimate is left out (None) to bound memory and time.
HL_MAX_PAIRS = 4_000_000
ZERO_METHODS = ("wilcox", "pratt")


@fast_init
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


def average_ranks(a: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """1-based ranks of ``a`` with ties given their average rank, and the size of each group of
    equal values (in sorted order), from one stable argsort."""
    n = a.size
    if n == 0:
        return np.empty(0, dtype=float), np.zeros(1, dtype=np.intp)
    order = np.argsort(a, kind="stable")
    s = a[order]
    new_value = np.empty(n, dtype=bool)
    new_value[:1] = True
    np.not_equal(s[1:], s[:-1], out=new_value[1:])
    starts = np.flatnonzero(new_value)
    ranks = np.empty(n, dtype=float)
    if starts.size == n:  # no ties: the sorted positions are the ranks (i + (1 + 1) / 2 exactly)
        ranks[order] = np.arange(1.0, n + 1.0)
        return ranks, np.ones(n, dtype=np.intp)
    sizes = np.empty(starts.size, dtype=np.intp)
    np.subtract(starts[1:], starts[:-1], out=sizes[:-1])
    sizes[-1] = n - starts[-1]
    # a group of size k starting at 0-based position i holds ranks i+1 .. i+k: average i+(k+1)/2
    ranks[order] = np.repeat(starts + (sizes + 1) / 2.0, sizes)
    return ranks, sizes


def _tie_counts(sizes: np.ndarray) -> tuple[int, int]:
    """(number of tie groups, number of values in them) from the sizes of groups of equal
    values."""
    tied = sizes[sizes > 1]
    return int(tied.size), int(np.add.reduce(tied))


# counts below this fit an int64 array: the polynomial steps below then run on whole arrays,
# with the same whole numbers as Python's integers (the larger sizes count in Python integers)
_INT64_SAFE = 2**62


@lru_cache(maxsize=64)
def signed_rank_counts(n: int) -> tuple[int, ...]:
    """How many of the 2^n sign patterns give W+ = 0, 1, ..., n (n + 1) / 2: the coefficients
    of the product (1 + q)(1 + q^2)...(1 + q^n). Exact integers; cached per n."""
    if 2**n < _INT64_SAFE:  # every coefficient at most 2^n at every step
        c = np.zeros(n * (n + 1) // 2 + 1, dtype=np.int64)
        c[0] = 1
        top = 0
        for k in range(1, n + 1):
            top += k
            c[k:top + 1] += c[:top + 1 - k].copy()  # each w from the old c[w - k]
        return tuple(c.tolist())
    return _signed_rank_counts(n)


def _signed_rank_counts(n: int) -> tuple[int, ...]:
    """:func:`signed_rank_counts` in Python integers, one coefficient at a time."""
    counts = [1] + [0] * (n * (n + 1) // 2)
    top = 0
    for k in range(1, n + 1):
        top += k
        for w in range(top, k - 1, -1):  # downwards: each rank is used at most once
            counts[w] += counts[w - k]
    return tuple(counts)


@lru_cache(maxsize=64)
def rank_sum_counts(m: int, n: int) -> tuple[int, ...]:
    """How many of the C(m + n, m) arrangements give U = 0, 1, ..., m n: the coefficients of
    the Gaussian binomial prod_{k=1..m} (1 - q^(n+k)) / (1 - q^k). Exact integers; cached per
    (m, n)."""
    m, n = min(m, n), max(m, n)
    if math.comb(m + n, m) < _INT64_SAFE:
        # after step k the coefficients are those of the Gaussian binomial [n + k, k] (at most
        # C(n + k, k)); within a step at most twice that of the step before
        size = m * n + 1
        c = np.zeros(size, dtype=np.int64)
        c[0] = 1
        for k in range(1, m + 1):
            a = n + k
            c[a:] -= c[:size - a].copy()  # times (1 - q^a): each u from the old c[u - a]
            # divided by (1 - q^k): a running sum along each residue class of u modulo k
            rows = -(-size // k)
            v = np.zeros(rows * k, dtype=np.int64)
            v[:size] = c
            c = np.cumsum(v.reshape(rows, k), axis=0).ravel()[:size]
        return tuple(c.tolist())
    return _rank_sum_counts(m, n)


def _rank_sum_counts(m: int, n: int) -> tuple[int, ...]:
    """:func:`rank_sum_counts` (m <= n) in Python integers, one coefficient at a time."""
    size = m * n + 1
    counts = [0] * size
    counts[0] = 1
    for k in range(1, m + 1):
        a = n + k  # multiply by (1 - q^a): downwards so each term uses the old coefficient
        for u in range(size - 1, a - 1, -1):
            counts[u] -= counts[u - a]
        for u in range(k, size):  # divide by (1 - q^k): a running sum with stride k
            counts[u] += counts[u - k]
    return tuple(counts)


def _tail_at_least(counts: tuple[int, ...], k: int) -> int:
    return sum(counts[max(k, 0):])


def _tail_at_most(counts: tuple[int, ...], k: int) -> int:
    return sum(counts[: max(k + 1, 0)])


@lru_cache(maxsize=64)
def _signed_rank_sums(n: int) -> tuple[int, ...]:
    return _running_sums(signed_rank_counts(n))


@lru_cache(maxsize=64)
def _rank_sum_sums(m: int, n: int) -> tuple[int, ...]:
    return _running_sums(rank_sum_counts(m, n))


def _running_sums(counts: tuple[int, ...]) -> tuple[int, ...]:
    """(0, c0, c0 + c1, ...): exact integers, so that a tail is one subtraction (the same
    integer as its sum)."""
    out = [0]
    for c in counts:
        out.append(out[-1] + c)
    return tuple(out)


def _exact_p(sums: tuple[int, ...], total: int, stat: float, alternative: str) -> float:
    """P(S >= stat) ("greater"), P(S <= stat) ("less") or twice the smaller, capped at 1, from
    the running sums of the null counts (:func:`_running_sums`: the tails
    :func:`_tail_at_least` and :func:`_tail_at_most` as one subtraction)."""
    size = len(sums) - 1
    at_least = sums[size] - sums[min(max(math.floor(stat), 0), size)]
    at_most = sums[min(max(math.ceil(stat) + 1, 0), size)]
    hi = at_least / total
    lo = at_most / total
    if alternative == "greater":
        return hi
    if alternative == "less":
        return lo
    return min(1.0, 2.0 * min(hi, lo))


_ndtr = cython_special.ndtr


def _normal_p(z_num: float, se: float, alternative: str) -> float:
    """p-value of the normal approximation for (statistic - mean) = z_num with a continuity
    correction of 1/2 towards the mean."""
    # (cython_special's ndtr: the floats of float(special.ndtr(...)) without the ufunc's
    # dispatch, as verify.stats.core's t_cdf)
    if alternative == "greater":
        return _ndtr(float(-(z_num - 0.5) / se))
    if alternative == "less":
        return _ndtr(float((z_num + 0.5) / se))
    z = (z_num - math.copysign(0.5, z_num) if z_num != 0 else 0.0) / se
    return min(1.0, 2.0 * _ndtr(float(-abs(z))))


@lru_cache(maxsize=16)
def _upper_pairs(n: int) -> tuple[np.ndarray, np.ndarray]:
    return np.triu_indices(n)


def _walsh_median(d: np.ndarray) -> float | None:
    n = d.size
    if n * (n + 1) // 2 > HL_MAX_PAIRS:
        return None
    i, j = _upper_pairs(n)
    return median((d[i] + d[j]) / 2.0)


def _shift_median(old: np.ndarray, new: np.ndarray) -> float | None:
    if old.size * new.size > HL_MAX_PAIRS:
        return None
    return median(np.subtract.outer(new, old).ravel())


def _clip_p(p: float) -> float:
    if type(p) is float and 0.0 < p <= 1.0:
        # a float in (0, 1]: what the lines below give, p itself (1.0 for 1.0), without their
        # calls (-0.0, NaN and anything outside take them: max(0.0, -0.0) is 0.0)
        return p
    p = float(p)
    if not math.isfinite(p):
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
    return _signed_rank_result(_signed_rank_core(raw, zero_method), alternative)


def signed_rank_about(x: ArrayLike, target: float, *, alternative: str = "two-sided"
                      ) -> RankTestResult:
    """:func:`wilcoxon_signed_rank` of ``x - target`` (zeros dropped); for a read-only ``x``
    whose ranks were computed with other samples (:func:`verify.stats.batch.prefetch_ranks`)
    from those."""
    hit = _memo.recall("signed_rank", x)
    if hit is not None and hit[0] == target:
        check_alternative(alternative)
        return _signed_rank_result(hit[1], alternative)
    return wilcoxon_signed_rank(np.asarray(x, dtype=float) - target, alternative=alternative)


@fast_init
@dataclass(frozen=True)
class _SignedRank:
    """What the signed-rank test derives from the differences, whatever the alternative."""

    w_plus: float
    n: int  # values ranked
    n_zero: int
    groups: int
    tied_values: int
    exact: bool
    n_nonzero: int
    mean: float | None  # the normal approximation's (None when exact)
    se: float | None
    estimate: float | None
    zero_method: str


def _signed_rank_core(raw: np.ndarray, zero_method: str) -> _SignedRank:
    units, _ = snap_to_grid(raw)
    nonzero = units != 0
    n_zero = int(np.count_nonzero(~nonzero))
    if not np.logical_or.reduce(nonzero):
        raise DegenerateDataError(
            f"all {raw.size} differences are zero: the signed-rank test has nothing to rank"
        )
    ranked_units = units[nonzero] if zero_method == "wilcox" else units
    ranks, sizes = average_ranks(np.abs(ranked_units))
    # ties among the non-zero |differences|: with Pratt the zeros are ranked too and sort
    # first, as one group that is not a tie of the ranked differences
    nonzero_sizes = sizes[1:] if (zero_method == "pratt" and n_zero) else sizes
    groups, tied_values = _tie_counts(nonzero_sizes)
    w_plus = float(np.add.reduce(ranks[ranked_units > 0]))
    n_nonzero = int(np.count_nonzero(nonzero))
    exact = (
        groups == 0
        and n_nonzero <= EXACT_MAX_N
        and (zero_method == "wilcox" or n_zero == 0)
    )
    mean = se = None
    if not exact:
        # normal approximation: mean n(n+1)/4, variance n(n+1)(2n+1)/24 less the tie term;
        # Pratt ranks the zeros and then takes their share out of both (Cureton 1967)
        n = float(ranked_units.size)
        mean = n * (n + 1.0) * 0.25
        var = n * (n + 1.0) * (2.0 * n + 1.0)
        if zero_method == "pratt" and n_zero:
            z0 = float(n_zero)
            mean -= z0 * (z0 + 1.0) * 0.25
            var -= z0 * (z0 + 1.0) * (2.0 * z0 + 1.0)
            sizes = sizes[1:]  # the zeros sort first: their group is no tie of the ranked
        se = _signed_rank_se(var, sizes)
    return _SignedRank(w_plus, int(ranked_units.size), n_zero, groups, tied_values, bool(exact),
                       n_nonzero, mean, se, _walsh_median(raw), zero_method)


def _signed_rank_se(var: float, sizes: np.ndarray) -> float:
    t = sizes.astype(float)
    return math.sqrt((var - float(np.add.reduce(t**3 - t)) / 2.0) / 24.0)


_HOW = {True: "exact", False: "normal approximation, tie and continuity corrected"}
# the signed-rank test's method in words by (exact, zero method), made once
_SIGNED_RANK_METHODS = {
    (exact, zero_method): f"Wilcoxon signed-rank test ({zeros}; {_HOW[exact]})"
    for exact in (True, False)
    for zero_method, zeros in (("wilcox", "zeros dropped"),
                               ("pratt", "zeros ranked then dropped (Pratt)"))
}
_RANK_SUM_METHODS = {exact: f"Mann-Whitney rank-sum test ({_HOW[exact]})"
                     for exact in (True, False)}


def _signed_rank_p(c: _SignedRank, alternative: str) -> float:
    """The signed-rank test's p-value (clipped) from what it derived of the differences."""
    if c.exact:
        pvalue = _exact_p(_signed_rank_sums(c.n_nonzero), 2**c.n_nonzero, c.w_plus, alternative)
    else:
        pvalue = _normal_p(c.w_plus - c.mean, c.se, alternative)
    return _clip_p(pvalue)


def _signed_rank_result(c: _SignedRank, alternative: str) -> RankTestResult:
    # (the fields by position: method, statistic, pvalue, alternative, n, n_zero,
    # n_tied_groups, n_tied_values, exact, estimate, zero_method)
    return RankTestResult(_SIGNED_RANK_METHODS[c.exact, c.zero_method], c.w_plus,
                          _signed_rank_p(c, alternative), alternative, c.n, c.n_zero, c.groups,
                          c.tied_values, c.exact, c.estimate, c.zero_method)


def signed_rank_about_figures(x: ArrayLike, target: float, *, alternative: str = "two-sided"
                              ) -> tuple[str, float, float, int]:
    """``(method, statistic, pvalue, n_zero)`` of :func:`signed_rank_about` (the same floats
    and texts, and the same errors), for a caller that reads these alone, as the rank
    companion of the target check does: for a sample the batch ranked
    (:func:`verify.stats.batch.prefetch_ranks`) the result object is not made."""
    hit = _memo.recall("signed_rank", x)
    if hit is not None and hit[0] == target:
        check_alternative(alternative)
        c = hit[1]
        return (_SIGNED_RANK_METHODS[c.exact, c.zero_method], c.w_plus,
                _signed_rank_p(c, alternative), c.n_zero)
    r = signed_rank_about(x, target, alternative=alternative)
    return r.method, r.statistic, r.pvalue, r.n_zero


def mann_whitney(
    old: ArrayLike, new: ArrayLike, *, alternative: str = "two-sided"
) -> RankTestResult:
    """Mann-Whitney (Wilcoxon rank-sum) test, new against old.

    ``"greater"``: new values tend to be larger than old ones. For two read-only samples whose
    ranks were computed with other pairs (:func:`verify.stats.batch.prefetch_ranks`), from
    those.

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
    hit = _memo.recall("rank_sum", old)
    if hit is not None and hit[0] is new:
        return _rank_sum_result(hit[1], alternative)
    a = finite_values(old, "old values")
    b = finite_values(new, "new values")
    units, _ = snap_to_grid(np.concatenate((a, b)))
    if np.logical_and.reduce(units == units[0]):
        raise DegenerateDataError("all values are identical: the rank test has no information")
    ranks, sizes = average_ranks(units)
    groups, tied_values = _tie_counts(sizes)
    n_old, n_new = int(a.size), int(b.size)
    exact = groups == 0 and n_old < EXACT_MAX_N and n_new < EXACT_MAX_N
    u_new = float(np.add.reduce(ranks[n_old:]) - n_new * (n_new + 1) / 2.0)
    se = None if exact else _rank_sum_se(n_old, n_new, sizes)
    return _rank_sum_result(_RankSum(u_new, n_old, n_new, groups, tied_values, bool(exact), se,
                                     _shift_median(a, b)), alternative)


@fast_init
@dataclass(frozen=True)
class _RankSum:
    """What the rank-sum test derives from the two samples, whatever the alternative."""

    u_new: float
    n_old: int
    n_new: int
    groups: int
    tied_values: int
    exact: bool
    se: float | None  # the normal approximation's (None when exact)
    estimate: float | None


def _rank_sum_se(n_old: int, n_new: int, sizes: np.ndarray) -> float:
    # normal approximation with the tie-corrected variance
    # n_old n_new / 12 ((N + 1) - sum(t^3 - t) / (N (N - 1)))
    t = sizes.astype(float)
    big_n = float(n_old + n_new)
    return math.sqrt(n_old * n_new / 12.0
                     * ((big_n + 1.0) - float(np.add.reduce(t**3 - t)) / (big_n * (big_n - 1.0))))


def _rank_sum_p(c: _RankSum, alternative: str) -> float:
    """The rank-sum test's p-value (clipped) from what it derived of the two samples."""
    if c.exact:
        pvalue = _exact_p(_rank_sum_sums(c.n_old, c.n_new), math.comb(c.n_old + c.n_new, c.n_old),
                          c.u_new, alternative)
    else:
        pvalue = _normal_p(c.u_new - c.n_old * c.n_new / 2.0, c.se, alternative)
    return _clip_p(pvalue)


def _rank_sum_result(c: _RankSum, alternative: str) -> RankTestResult:
    # (the fields by position: method, statistic, pvalue, alternative, n, n_zero,
    # n_tied_groups, n_tied_values, exact, estimate, zero_method, n_old, n_new)
    return RankTestResult(_RANK_SUM_METHODS[c.exact], c.u_new, _rank_sum_p(c, alternative),
                          alternative, c.n_old + c.n_new, 0, c.groups, c.tied_values, c.exact,
                          c.estimate, None, c.n_old, c.n_new)


def mann_whitney_figures(old: ArrayLike, new: ArrayLike, *, alternative: str = "two-sided"
                         ) -> tuple[str, float, float]:
    """``(method, statistic, pvalue)`` of :func:`mann_whitney` (the same floats and texts, and
    the same errors), for a caller that reads these alone, as the rank companion of the shift
    check does: for two samples the batch ranked (:func:`verify.stats.batch.prefetch_ranks`)
    the result object is not made."""
    check_alternative(alternative)
    hit = _memo.recall("rank_sum", old)
    if hit is not None and hit[0] is new:
        c = hit[1]
        return _RANK_SUM_METHODS[c.exact], c.u_new, _rank_sum_p(c, alternative)
    r = mann_whitney(old, new, alternative=alternative)
    return r.method, r.statistic, r.pvalue
