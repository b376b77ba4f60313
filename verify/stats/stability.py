"""Stability in production order: the individuals chart (limits from the average
moving range, points beyond them, the longest run on one side of the centre line) and the
lag-1 autocorrelation."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import special

from . import _memo
from ._frozen import fast_init
from .core import mean_sd, require_spread
from .errors import DegenerateDataError
from .range_constants import D2_TABLE
from .samples import finite_values


@fast_init
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
    if sign.size == 0 or not np.logical_or.reduce(sign != 0):
        return 0, None, None
    change = np.flatnonzero(sign[1:] != sign[:-1]) + 1
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
    hit = _memo.recall("individuals_chart", x)  # computed with the layout's other samples
    if hit is not None:  # (stats.batch)
        return hit
    a = finite_values(x)
    n = a.size
    if n < 2:
        raise DegenerateDataError(f"{n} value: an individuals chart needs at least 2")
    # a[1:] - a[:-1] and add.reduce / count are what np.diff and np.mean compute, without the
    # cost of their wrappers (this runs twice per characteristic)
    mr_bar = float(np.add.reduce(np.abs(a[1:] - a[:-1]))) / (n - 1)
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
