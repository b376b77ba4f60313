"""Per-sample diagnostics of many samples at once, remembered for the one-sample calls.

A dimensional layout measures the same parts on every characteristic: an evaluation hands
hundreds of samples of one length to the same diagnostics. :func:`prefetch` stacks the
read-only samples (:mod:`verify.stats._memo`) of each length into one array and computes
the individuals chart, the Anderson-Darling test and the two-sided Grubbs test of every row
together; each row's result is remembered, and :func:`~verify.stats.stability.individuals_chart`,
:func:`~verify.stats.normality.anderson_darling` and :func:`~verify.stats.outliers.grubbs`
return it for that sample.

The results are the one-sample functions' own, bit for bit: the arithmetic is the same element
by element, every reduction runs along a row of a C-contiguous array (numpy then sums each
row exactly as it sums a 1-D array: pairwise, in the same order), and the scalar steps (the
p-values, the limits) are the same Python code on the same numbers. A sample the one-sample
function would refuse (too few values, no spread, non-finite values) is left to it, so that it
raises its own error. tests/test_stats_batch.py holds the two routes together.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from . import _memo
from .core import MAX_MAGNITUDE, mean_sd
from .normality import NormalityResult, _ad_pvalue
from .outliers import _GRUBBS_SIDE, GRUBBS_MIN_N, GrubbsResult, grubbs_pvalue
from .range_constants import D2_TABLE
from .stability import StabilityResult

MIN_ROWS = 2  # fewer samples of a length gain nothing from stacking


def prefetch(samples) -> None:
    """Compute and remember the per-sample diagnostics of every read-only sample given.

    Samples that are not read-only, or whose diagnostics are remembered already, are skipped;
    so are lengths with fewer than :data:`MIN_ROWS` samples.
    """
    by_n: dict[int, dict[int, np.ndarray]] = {}
    for x in samples:
        if (x is None or not _memo.frozen(x) or x.ndim != 1 or x.dtype != np.float64
                or _memo.recall("individuals_chart", x) is not None):
            continue
        by_n.setdefault(x.size, {})[id(x)] = x
    for n, group in by_n.items():
        rows = [x for x in group.values() if _usable(x)]
        if len(rows) >= MIN_ROWS and n >= 3:
            _stacked(rows, n)


def _usable(x: np.ndarray) -> bool:
    """Finite, within the magnitude mean_sd accepts, with a spread: what every diagnostic here
    needs (anything else goes to the one-sample route and its error)."""
    lo, hi = float(np.minimum.reduce(x)), float(np.maximum.reduce(x))
    if not (-MAX_MAGNITUDE <= lo and hi <= MAX_MAGNITUDE) or lo == hi:
        return False  # (NaN fails the comparisons too)
    sd = mean_sd(x)[2]
    return math.isfinite(sd) and sd > 0.0


def _stacked(rows: list[np.ndarray], n: int) -> None:
    x = np.stack(rows)  # (k, n), C-contiguous
    summaries = [mean_sd(r) for r in rows]  # remembered: computed once per sample anyway
    m = np.array([s[1] for s in summaries])
    s = np.array([s[2] for s in summaries])
    _charts(rows, x, m, n)
    if n >= 8:
        _anderson_darling(rows, x, m, s, n)
    if n >= GRUBBS_MIN_N:
        _grubbs(rows, x, m, s, n)


def _charts(rows, x, m, n) -> None:
    """individuals_chart of each row (see stability.individuals_chart)."""
    mr = np.add.reduce(np.ascontiguousarray(np.abs(x[:, 1:] - x[:, :-1])), axis=1)
    centre_col = m[:, None]
    sign = np.sign(x - centre_col).astype(int)
    # the run each value belongs to, numbered across all rows, and each run's length
    change = np.ones(sign.shape, dtype=bool)
    np.not_equal(sign[:, 1:], sign[:, :-1], out=change[:, 1:])
    run_id = np.cumsum(change.ravel()).reshape(sign.shape) - 1
    run_len = np.bincount(run_id.ravel())[run_id]
    run_len[sign == 0] = 0
    longest = run_len.max(axis=1).tolist()
    start = run_len.argmax(axis=1).tolist()
    for i, a in enumerate(rows):
        mr_bar = float(mr[i]) / (n - 1)
        if not mr_bar > 0.0:
            continue  # the one-sample route raises its own error
        _memo.remember("mr_bar", a, mr_bar)
        centre = float(m[i])
        sigma = mr_bar / D2_TABLE[2]
        ucl, lcl = centre + 3.0 * sigma, centre - 3.0 * sigma
        beyond = tuple(np.flatnonzero((a > ucl) | (a < lcl)).tolist())
        if longest[i] == 0:
            length, side, first = 0, None, None
        else:
            length, first = int(longest[i]), int(start[i])
            side = "above" if sign[i, first] > 0 else "below"
        _memo.remember("individuals_chart", a, StabilityResult(
            n=int(n), centre=centre, mr_bar=mr_bar, sigma=float(sigma), ucl=float(ucl),
            lcl=float(lcl), beyond=beyond, longest_run=length, run_side=side, run_start=first))


def _anderson_darling(rows, x, m, s, n) -> None:
    """anderson_darling of each row (see normality.anderson_darling)."""
    w = np.sort((x - m[:, None]) / s[:, None], axis=1)
    i = np.arange(1, n + 1)
    terms = np.ascontiguousarray(
        (2 * i - 1) * (special.log_ndtr(w) + special.log_ndtr(-w[:, ::-1])))
    sums = np.add.reduce(terms, axis=1).tolist()
    for a, total in zip(rows, sums, strict=True):
        a2 = float(-n - np.float64(total) / n)
        a_star = a2 * (1.0 + 0.75 / n + 2.25 / n**2)
        _memo.remember("anderson_darling", a, NormalityResult(
            method="Anderson-Darling normality test (mean and sd estimated)", statistic=a2,
            pvalue=_ad_pvalue(a_star), n=int(n), adjusted_statistic=float(a_star)))


def _grubbs(rows, x, m, s, n) -> None:
    """The two-sided grubbs of each row (see outliers.grubbs)."""
    idx = np.argmax(np.abs(x - m[:, None]), axis=1).tolist()
    for r, (a, j) in enumerate(zip(rows, idx, strict=True)):
        mi, si = float(m[r]), float(s[r])
        g = float(abs(a[j] - mi) / si)
        _memo.remember("grubbs two-sided", a, GrubbsResult(
            method=f"Grubbs outlier test ({_GRUBBS_SIDE['two-sided']})", statistic=g,
            index=j, value=float(a[j]), n=int(n), alternative="two-sided",
            pvalue=grubbs_pvalue(g, n, alternative="two-sided")))
