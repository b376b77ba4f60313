"""Bounds on one failure rate: the exact Clopper-Pearson bound and the Wilson score
interval; and the count checks the other rate modules share.

Sources: Clopper & Pearson (1934), Biometrika 26:404-413 (the exact interval from beta
quantiles); Wilson (1927), JASA 22:209-212 (the score interval for one proportion).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from scipy import special

from ._checks import check_level
from .errors import DegenerateDataError


def _counts(failures: int, inspected: int, what: str = "") -> tuple[int, int]:
    """Whole numbers with 0 <= failures <= inspected, else ValueError naming them."""
    label = f" ({what})" if what else ""
    for v, name in ((failures, "failures"), (inspected, "inspected")):
        if isinstance(v, bool) or not float(v).is_integer() or v < 0:
            raise ValueError(f"{name}{label} must be a whole number >= 0, not {v!r}")
    x, n = int(failures), int(inspected)
    if x > n:
        raise ValueError(f"failures{label} ({x}) exceed the number inspected ({n})")
    return x, n


def _two_counts(failures_new: int, inspected_new: int, failures_old: int, inspected_old: int,
                ) -> tuple[int, int, int, int]:
    """Both processes' counts checked (:func:`_counts`); DegenerateDataError when a process has
    no part inspected."""
    x1, n1 = _counts(failures_new, inspected_new, "new")
    x2, n2 = _counts(failures_old, inspected_old, "old")
    if n1 == 0 or n2 == 0:
        raise DegenerateDataError("no parts inspected in " + ("the new" if n1 == 0 else
                                                               "the old") + " process")
    return x1, n1, x2, n2


def _z(level: float) -> float:
    """The standard normal quantile for a two-sided interval at ``level``."""
    return float(special.ndtri(0.5 + level / 2.0))


@dataclass(frozen=True)
class RateBound:
    """The exact (Clopper-Pearson) bounds of one failure rate.

    Attributes
    ----------
    failures, inspected : int
    estimate : float
        failures / inspected.
    low, high : float
        The bounds at ``level``: for ``alternative="less"`` (the one-sided upper bound, the
        default) ``low`` is 0; for ``"two-sided"`` the equal-tailed interval.
    level : float
    alternative : str
        ``"less"``: shows the rate is at most ``high``; ``"two-sided"``.
    method : str
    """

    failures: int
    inspected: int
    estimate: float
    low: float
    high: float
    level: float
    alternative: str
    method: str = "Clopper-Pearson exact"


def _beta_q(p: float, a: float, b: float) -> float:
    # the p quantile of Beta(a, b): the inverse of the regularized incomplete beta function
    return float(special.betaincinv(a, b, p))


def clopper_pearson(failures: int, inspected: int, *, level: float = 0.95,
                    alternative: str = "less") -> RateBound:
    """Exact bounds of a binomial rate (Clopper & Pearson 1934).

    The one-sided upper bound at confidence C is the C quantile of Beta(x + 1, n - x) (1 when
    x = n); the two-sided interval at level L uses the (1 - L) / 2 and (1 + L) / 2 quantiles,
    with the lower end Beta(x, n - x + 1) (0 when x = 0).

    Parameters
    ----------
    failures, inspected : int
        x and n, whole numbers with 0 <= x <= n and n >= 1.
    level : float
        Confidence level of the bound or interval.
    alternative : {"less", "two-sided"}
        ``"less"`` gives the one-sided upper bound (the rate is shown to be at most it).

    Examples
    --------
    >>> round(clopper_pearson(0, 59, level=0.95).high, 6)  # 1 - 0.05 ** (1 / 59)
    0.049508
    """
    x, n = _counts(failures, inspected)
    check_level(level)
    if n == 0:
        raise DegenerateDataError("no parts inspected")
    if alternative not in ("less", "two-sided"):
        raise ValueError(f"alternative must be 'less' or 'two-sided', not {alternative!r}")
    tail = 1 - level if alternative == "less" else (1 - level) / 2
    high = 1.0 if x == n else _beta_q(1 - tail, x + 1, n - x)
    low = 0.0
    if alternative == "two-sided" and x > 0:
        low = _beta_q(tail, x, n - x + 1)
    return RateBound(failures=x, inspected=n, estimate=x / n, low=low, high=high, level=level,
                     alternative=alternative)


def wilson(failures: int, inspected: int, *, level: float = 0.95) -> tuple[float, float]:
    """The Wilson score interval (no continuity correction) of one rate, two-sided at ``level``.

    (2 n p + z^2 -/+ z sqrt(z^2 + 4 n p q)) / (2 (n + z^2)) (Wilson 1927; Newcombe 1998a,
    method 3).
    """
    x, n = _counts(failures, inspected)
    check_level(level)
    if n == 0:
        raise DegenerateDataError("no parts inspected")
    z = _z(level)
    p = x / n
    centre = 2 * n * p + z * z
    half = z * math.sqrt(z * z + 4 * n * p * (1 - p))
    den = 2 * (n + z * z)
    return max(0.0, (centre - half) / den), min(1.0, (centre + half) / den)
