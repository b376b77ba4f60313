"""Exact tests on failure counts: is the new rate higher (Fisher's exact test or
Boschloo's), and do the failures differ between lots."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special

from .errors import DegenerateDataError, NotApplicableError
from .rate_bounds import _two_counts

BOSCHLOO_MAX_CELLS = 25_000_000  # n_new * n_old above which Boschloo's test is refused
TESTS = ("fisher", "boschloo")


@dataclass(frozen=True)
class RateTest:
    """A one-sided exact test that the new failure rate is higher than the old one.

    Attributes
    ----------
    method : str
    pvalue : float
    statistic : float
        The new process's failures (Fisher) or Boschloo's statistic (Fisher's one-sided p).
    alternative : str
        Always ``"greater"``.
    """

    method: str
    pvalue: float
    statistic: float
    alternative: str = "greater"


def higher_rate_test(failures_new: int, inspected_new: int, failures_old: int,
                     inspected_old: int, *, test: str = "fisher") -> RateTest:
    """One-sided exact test of H0 "p_new <= p_old" against "p_new > p_old".

    ``fisher``: Fisher's exact test conditional on the total failures, p = P(X >= x_new) for X
    hypergeometric (scipy.stats.hypergeom). ``boschloo``: Boschloo's unconditional test
    (scipy.stats.boschloo_exact), never less powerful than Fisher's.
    """
    x1, n1, x2, n2 = _two_counts(failures_new, inspected_new, failures_old, inspected_old)
    if test not in TESTS:
        raise ValueError(f"test must be one of {TESTS}, not {test!r}")
    from scipy import stats  # heavy: only where a test runs

    if test == "fisher":
        p = float(stats.hypergeom.sf(x1 - 1, n1 + n2, x1 + x2, n1))
        return RateTest(method="Fisher exact, one-sided", pvalue=min(1.0, max(0.0, p)),
                        statistic=float(x1))
    if n1 * n2 > BOSCHLOO_MAX_CELLS:
        # scipy's Boschloo test enumerates every table of these margins: its time and memory
        # grow with n_new * n_old (about 3 s at 4,000 parts each on a small machine)
        raise NotApplicableError(
            f"Boschloo's test is limited to n_new x n_old <= {BOSCHLOO_MAX_CELLS:,} "
            f"({n1:,} x {n2:,} here): use test: fisher, which is exact at any size")
    table = np.array([[x1, n1 - x1], [x2, n2 - x2]])
    r = stats.boschloo_exact(table, alternative="greater")
    return RateTest(method="Boschloo exact, one-sided", pvalue=float(r.pvalue),
                    statistic=float(r.statistic))


# --- failures by lot -------------------------------------------------------------------------


@dataclass(frozen=True)
class LotHeterogeneity:
    """Pearson's chi-square test that every lot has the same failure rate.

    Attributes
    ----------
    statistic, df, pvalue : float
    lots : int
    min_expected : float
        The smallest expected failure count (or pass count) of a lot: below 5 the chi-square
        approximation is rough (common practice), and a note says so.
    method : str
    """

    statistic: float
    df: int
    pvalue: float
    lots: int
    min_expected: float
    method: str = "chi-square test of equal rates across lots"


def lot_heterogeneity(failures, inspected) -> LotHeterogeneity:
    """Pearson's chi-square on the k x 2 table of failures and passes by lot (k - 1 df).

    Raises DegenerateDataError with fewer than 2 lots, or when no lot (or every lot) failed
    (no variation to compare).
    """
    x = np.asarray(failures, dtype=float)
    n = np.asarray(inspected, dtype=float)
    keep = n > 0
    x, n = x[keep], n[keep]
    if x.size < 2:
        raise DegenerateDataError("fewer than 2 lots with inspected parts")
    total_x, total_n = float(x.sum()), float(n.sum())
    if total_x == 0 or total_x == total_n:
        raise DegenerateDataError("no failures in any lot" if total_x == 0
                                  else "every part failed")
    p = total_x / total_n
    e_fail, e_pass = n * p, n * (1 - p)
    stat = float((((x - e_fail) ** 2) / e_fail + (((n - x) - e_pass) ** 2) / e_pass).sum())
    df = int(x.size - 1)
    return LotHeterogeneity(statistic=stat, df=df, pvalue=float(special.chdtrc(df, stat)),
                            lots=int(x.size),
                            min_expected=float(min(e_fail.min(), e_pass.min())))
