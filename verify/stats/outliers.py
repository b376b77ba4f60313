"""Outliers: Grubbs' test of the value furthest from the mean (or the minimum, or
the maximum) with its critical value and p-value. It flags; it never removes data."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import special

from . import _memo
from ._checks import check_alpha
from ._frozen import fast_init
from .core import ALTERNATIVES, check_alternative, mean_sd, require_spread
from .errors import NotApplicableError
from .samples import finite_values


def _grubbs_critical(n: int, alpha: float, alternative: str) -> float:
    tail = alpha / (2 * n) if alternative == "two-sided" else alpha / n
    t = float(special.stdtrit(n - 2, 1.0 - tail))
    return (n - 1) / math.sqrt(n) * math.sqrt(t * t / (n - 2 + t * t))


@fast_init
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
    if alternative == "two-sided":  # computed with the layout's other samples (stats.batch)
        hit = _memo.recall("grubbs two-sided", x)
        if hit is not None:
            return hit
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


def grubbs_pvalues(g: np.ndarray, n: int, *, alternative: str = "two-sided") -> np.ndarray:
    """:func:`grubbs_pvalue` of each statistic in ``g`` (finite, >= 0), all for samples of
    ``n``: element by element the same float arithmetic, and the t tail of all of them in one
    call of the same ufunc (which gives each element the float its scalar call gives).

    Examples
    --------
    >>> grubbs_pvalues(np.array([1.0, 2.4688]), 8).tolist() == [
    ...     grubbs_pvalue(1.0, 8), grubbs_pvalue(2.4688, 8)]
    True
    """
    check_alternative(alternative)
    if n < 3:
        raise NotApplicableError(f"a Grubbs p-value needs n >= 3, got {n}")
    g = np.asarray(g, dtype=float)
    if not np.logical_and.reduce(np.isfinite(g) & (g >= 0.0), axis=None):
        raise ValueError("the Grubbs statistics must be finite numbers >= 0")
    denom = (n - 1) ** 2 - n * g * g
    inside = denom > 0.0  # else g at its largest possible value: a tail of 0
    t = np.sqrt(n * (n - 2) * g * g / np.where(inside, denom, 1.0))
    tail = np.where(inside, special.stdtr(n - 2, -t), 0.0)
    k = 2 * n if alternative == "two-sided" else n
    return np.minimum(1.0, k * tail)


_GRUBBS_SIDE = dict(
    zip(ALTERNATIVES, ("value furthest from the mean", "minimum", "maximum"), strict=True)
)
