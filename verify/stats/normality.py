"""Normality diagnostics: Shapiro-Wilk, Anderson-Darling (D'Agostino and Stephens' p-value) and
the normal probability-plot correlation. They flag; they never remove data or decide."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import special

from . import _memo
from ._frozen import fast_init
from .core import mean_sd
from .errors import DegenerateDataError, NotApplicableError
from .samples import finite_values


@fast_init
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
    if np.logical_and.reduce(a == a[0]):
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
    hit = _memo.recall("shapiro_wilk", x)  # computed with the layout's other samples
    if hit is not None:  # (stats.batch)
        return hit
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
    swilk = _swilk_routine()
    if swilk is None:  # pragma: no cover - a scipy that moved the routine
        from scipy import stats

        res = stats.shapiro(a)
        return float(res.statistic), float(res.pvalue)
    y = np.sort(a)
    y -= a[a.size // 2]  # as scipy.stats.shapiro: subtract a value near the median
    w, pw, _ = swilk(y, np.zeros(a.size // 2, dtype=np.float64), 0)
    return float(w), float(pw)


@lru_cache(maxsize=1)
def _swilk_routine():
    """scipy's compiled Royston routine, or None when scipy moved it.

    ``from scipy.stats._ansari_swilk_statistics import swilk`` runs the ``scipy.stats``
    package's ``__init__`` first (about 0.7 s of CPU: every distribution, scipy.optimize,
    scipy.spatial); the extension file is loaded directly instead (under a millisecond).
    """
    import importlib.machinery
    import importlib.util
    import os

    import scipy

    folder = os.path.join(os.path.dirname(scipy.__file__), "stats")
    for suffix in importlib.machinery.EXTENSION_SUFFIXES:
        path = os.path.join(folder, "_ansari_swilk_statistics" + suffix)
        if os.path.isfile(path):
            try:
                spec = importlib.util.spec_from_file_location(
                    "scipy.stats._ansari_swilk_statistics", path)
                module = importlib.util.module_from_spec(spec)
                spec.loader.exec_module(module)
                return module.swilk
            except (ImportError, AttributeError, OSError):  # pragma: no cover
                break
    try:  # pragma: no cover - the routine elsewhere than beside scipy/stats/__init__.py
        from scipy.stats._ansari_swilk_statistics import swilk
    except ImportError:  # pragma: no cover
        return None
    return swilk  # pragma: no cover


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
    hit = _memo.recall("anderson_darling", x)  # computed with the layout's other samples
    if hit is not None:  # (stats.batch)
        return hit
    a = _normality_input(x, 8, None, "the Anderson-Darling test")
    n, m, s = mean_sd(a)
    w = np.sort((a - m) / s)
    i = np.arange(1, n + 1)
    # log Phi(w) and log(1 - Phi(w)) = log Phi(-w) without underflow in the tails
    terms = (2 * i - 1) * (special.log_ndtr(w) + special.log_ndtr(-w[::-1]))
    a2 = float(-n - np.add.reduce(terms) / n)
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
