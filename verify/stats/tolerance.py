"""Statistical tolerance intervals: limits that hold a stated proportion of the population
(``coverage``) with a stated confidence (ISO 16269-6; NIST/SEMATECH e-Handbook 7.2.6.3).

Normal theory, with mean ``m`` and sample sd ``s`` of n values:

* one-sided bound ``m - k1 s`` (or ``m + k1 s``), with the exact factor from the noncentral t
  distribution: ``k1 = t'_{confidence}(n - 1, z_coverage sqrt(n)) / sqrt(n)`` (the quantile of
  the noncentral t with n - 1 df and noncentrality ``z_coverage sqrt(n)``; Owen 1968,
  ISO 16269-6 annex tables are computed the same way);
* two-sided interval ``m -/+ k2 s`` with the exact factor that solves the Odeh/Owen integral
  (Odeh 1978; Owen 1964, "Control of percentages in both tails of the normal distribution")::

      confidence = sqrt(2 n / pi) * int_0^inf Q_{n-1}((n - 1) r(z)^2 / k2^2) exp(-n z^2 / 2) dz

  where ``Q_{n-1}`` is the upper tail of chi-square on n - 1 df and ``r(z)`` solves
  ``Phi(z + r) - Phi(z - r) = coverage``. The integral is evaluated by Gauss-Legendre
  quadrature on ``u = z sqrt(n)`` over [0, 10] (the weight beyond 10 is below 1e-22) and k2 by
  root finding. This is not Howe's approximation, which the e-Handbook prints: at n = 43,
  coverage 0.90, confidence 0.99 the handbook's 2.2173 (Howe) differs from the exact 2.2228.

Distribution-free (order statistics; Wilks 1941): the smallest value of n parts is a lower
bound covering ``coverage`` with confidence ``1 - coverage^n``; the interval between the
smallest and the largest of n covers it with confidence ``1 - n p^(n-1) + (n-1) p^n``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import special

from .core import mean_sd
from .errors import DegenerateDataError, NotApplicableError

ArrayLike = Sequence[float] | np.ndarray

METHOD_ONE_SIDED = "normal one-sided bound, exact factor (noncentral t)"
METHOD_TWO_SIDED = "normal two-sided interval, exact factor (Odeh/Owen integral, Gauss-Legendre)"
METHOD_ORDER = "distribution-free, order statistics (Wilks)"

_NODES = 96  # Gauss-Legendre nodes on [0, 10]: the integrand is smooth; 96 reach 1e-10
_U_MAX = 10.0
SIDES = ("two-sided", "lower", "upper")


def _check_proportions(coverage: float, confidence: float) -> tuple[float, float]:
    p, g = float(coverage), float(confidence)
    if not 0.0 < p < 1.0:
        raise ValueError(f"coverage must lie in (0, 1), not {coverage}")
    if not 0.0 < g < 1.0:
        raise ValueError(f"confidence must lie in (0, 1), not {confidence}")
    return p, g


def _check_n(n: int) -> int:
    if int(n) != n or n < 2:
        raise DegenerateDataError(f"a tolerance factor needs n >= 2, not {n}")
    return int(n)


@lru_cache(maxsize=4096)
def factor_one_sided(n: int, coverage: float, confidence: float) -> float:
    """The exact one-sided normal tolerance factor k1.

    ``k1 = t'_{confidence}(n - 1, z_coverage sqrt(n)) / sqrt(n)``, the noncentral t quantile.

    Examples
    --------
    >>> round(factor_one_sided(10, 0.90, 0.95), 4)  # ISO 16269-6 table: 2.355
    2.3552
    """
    n = _check_n(n)
    p, g = _check_proportions(coverage, confidence)
    delta = float(special.ndtri(p)) * math.sqrt(n)
    t = float(special.nctdtrit(n - 1, delta, g))  # (df, nc, p)
    if not math.isfinite(t):  # not expected in the upper quantiles; never let a NaN on
        raise NotApplicableError(f"the noncentral t quantile is not available at n = {n}")
    return t / math.sqrt(n)


@lru_cache(maxsize=16)
def _legendre(nodes: int) -> tuple[np.ndarray, np.ndarray]:
    x, w = np.polynomial.legendre.leggauss(nodes)
    u = 0.5 * _U_MAX * (x + 1.0)
    return u, 0.5 * _U_MAX * w


def _half_widths(z: np.ndarray, p: float) -> np.ndarray:
    """r(z) with Phi(z + r) - Phi(z - r) = p, for every z (Newton's method, vectorised).

    The function is increasing and concave in r for r >= 0; Newton from the upper start
    ``|z| + z_p`` (where the lower tail is already below 1 - p) converges monotonically.
    """
    z = np.abs(z)
    r = z + float(special.ndtri(p))
    for _ in range(60):
        f = special.ndtr(z + r) - special.ndtr(z - r) - p
        df = (np.exp(-0.5 * (z + r) ** 2) + np.exp(-0.5 * (z - r) ** 2)) / math.sqrt(2 * math.pi)
        step = f / df
        r = r - step
        if np.max(np.abs(step)) < 1e-15 * max(1.0, float(np.max(r))):
            break
    return r


def two_sided_confidence(n: int, coverage: float, k: float) -> float:
    """The confidence of ``m -/+ k s`` covering ``coverage`` (the Odeh/Owen integral)."""
    n = _check_n(n)
    u, w = _legendre(_NODES)
    r = _half_widths(u / math.sqrt(n), float(coverage))
    q = special.chdtrc(n - 1, (n - 1) * r**2 / (k * k))
    return float(math.sqrt(2.0 / math.pi) * np.sum(w * q * np.exp(-0.5 * u * u)))


@lru_cache(maxsize=4096)
def factor_two_sided(n: int, coverage: float, confidence: float) -> float:
    """The exact two-sided normal tolerance factor k2 (Odeh/Owen integral, solved for k2).

    Examples
    --------
    >>> round(factor_two_sided(10, 0.90, 0.95), 3)  # ISO 16269-6 table: 2.856
    2.856
    """
    from scipy.optimize import brentq

    n = _check_n(n)
    p, g = _check_proportions(coverage, confidence)
    u, w = _legendre(_NODES)
    r2 = (n - 1) * _half_widths(u / math.sqrt(n), p) ** 2
    weight = math.sqrt(2.0 / math.pi) * w * np.exp(-0.5 * u * u)

    def excess(k: float) -> float:
        return float(np.sum(weight * special.chdtrc(n - 1, r2 / (k * k)))) - g

    # Howe's approximation is within a few percent of the exact factor: bracket around it
    howe = float(special.ndtri(0.5 + p / 2)) * math.sqrt(
        (n - 1) * (1 + 1 / n) / float(special.chdtri(n - 1, g)))
    lo, hi = 0.5 * howe, 2.0 * howe
    while excess(lo) > 0:
        lo *= 0.5
    while excess(hi) < 0:
        hi *= 2.0
    return float(brentq(excess, lo, hi, xtol=1e-13, rtol=1e-13))


def factor(n: int, coverage: float, confidence: float, side: str) -> float:
    """k1 for side lower/upper, k2 for two-sided."""
    if side not in SIDES:
        raise ValueError(f"side must be one of {SIDES}, not {side!r}")
    if side == "two-sided":
        return factor_two_sided(n, coverage, confidence)
    return factor_one_sided(n, coverage, confidence)


@dataclass(frozen=True)
class ToleranceResult:
    """A tolerance interval (two-sided) or bound (lower: ``low`` only; upper: ``high`` only)."""

    n: int
    mean: float
    sd: float
    coverage: float
    confidence: float
    side: str  # two-sided | lower | upper
    k: float | None  # the factor: limits are mean -/+ k sd (None: distribution-free)
    low: float | None
    high: float | None
    method: str


def normal_tolerance(x: ArrayLike, *, coverage: float, confidence: float,
                     side: str = "two-sided") -> ToleranceResult:
    """Normal-theory tolerance interval (``side="two-sided"``) or one-sided bound.

    Parameters
    ----------
    x : array_like
        The values (at least 2, not all equal).
    coverage, confidence : float
        Proportion of the population to cover, and the confidence of covering it.
    side : {"two-sided", "lower", "upper"}
        "lower" gives the lower bound ``mean - k1 sd``; "upper" the upper bound.

    Examples
    --------
    >>> r = normal_tolerance([9.8, 10.1, 10.0, 10.3, 9.9], coverage=0.9, confidence=0.95,
    ...                      side="upper")
    >>> round(r.k, 3)
    3.41
    """
    if side not in SIDES:
        raise ValueError(f"side must be one of {SIDES}, not {side!r}")
    p, g = _check_proportions(coverage, confidence)
    n, m, s = mean_sd(np.asarray(x, dtype=float))
    if n < 2:
        raise DegenerateDataError(f"a tolerance interval needs at least 2 values, got {n}")
    if not s > 0:
        raise DegenerateDataError("all values are equal: the spread is zero")
    k = factor(n, p, g, side)
    low = m - k * s if side in ("two-sided", "lower") else None
    high = m + k * s if side in ("two-sided", "upper") else None
    method = METHOD_TWO_SIDED if side == "two-sided" else METHOD_ONE_SIDED
    return ToleranceResult(n=n, mean=m, sd=s, coverage=p, confidence=g, side=side, k=k,
                           low=low, high=high, method=method)


def sample_size_normal(*, mean: float, sd: float, lower: float | None, upper: float | None,
                       coverage: float, confidence: float, side: str = "two-sided",
                       n_max: int = 100_000) -> int:
    """The smallest n at which a process with this mean and sd passes: its tolerance limits
    ``mean -/+ k(n) sd`` lie within the limits (k falls with n towards the normal quantile).

    Raises
    ------
    NotApplicableError
        When no n suffices: even the limiting factor (n infinite) puts a tolerance limit
        beyond a specification limit, or more than ``n_max`` parts would be needed.
    """
    p, g = _check_proportions(coverage, confidence)
    if not (math.isfinite(sd) and sd > 0):
        raise ValueError(f"sd must be a positive finite number, not {sd}")
    room = []
    if side in ("two-sided", "lower"):
        if lower is None:
            raise ValueError("a lower tolerance limit needs a lower specification limit")
        room.append((mean - lower) / sd)
    if side in ("two-sided", "upper"):
        if upper is None:
            raise ValueError("an upper tolerance limit needs an upper specification limit")
        room.append((upper - mean) / sd)
    k_allowed = min(room)
    limit = float(special.ndtri(p if side != "two-sided" else 0.5 + p / 2))
    if not k_allowed > limit:
        raise NotApplicableError(
            f"no sample size suffices: the limits leave {k_allowed:.4g} sd of room, and the "
            f"factor never falls below {limit:.4g}")

    def ok(n: int) -> bool:
        return factor(n, p, g, side) <= k_allowed

    if not ok(n_max):
        raise NotApplicableError(f"more than {n_max} parts would be needed")
    lo, hi = 2, n_max
    if ok(lo):
        return lo
    while hi - lo > 1:  # k(n) decreases with n: bisection keeps ok(hi), not ok(lo)
        mid = (lo + hi) // 2
        if ok(mid):
            hi = mid
        else:
            lo = mid
    return hi


# --- distribution-free limits ----------------------------------------------------------------


def order_confidence(n: int, coverage: float, side: str) -> float:
    """Confidence that the extreme value(s) of n parts cover ``coverage`` (Wilks 1941).

    One-sided (the smallest as a lower bound, or the largest as an upper bound):
    ``1 - p^n``. Two-sided (smallest to largest): ``1 - n p^(n-1) + (n-1) p^n``.
    """
    p = float(coverage)
    if side == "two-sided":
        return 1.0 - n * p ** (n - 1) + (n - 1) * p**n
    return 1.0 - p**n


def order_sample_size(coverage: float, confidence: float, side: str) -> int:
    """The smallest n whose extreme value(s) cover ``coverage`` with ``confidence``.

    Examples
    --------
    >>> order_sample_size(0.95, 0.95, "upper"), order_sample_size(0.95, 0.95, "two-sided")
    (59, 93)
    """
    p, g = _check_proportions(coverage, confidence)
    n = 2 if side == "two-sided" else 1
    if side != "two-sided":
        # closed form ln(1 - g) / ln(p), then a step either way against rounding
        n = max(1, math.ceil(math.log1p(-g) / math.log(p)) - 1)
    while order_confidence(n, p, side) < g:
        n += 1
    return n


def order_tolerance(x: ArrayLike, *, coverage: float, confidence: float,
                    side: str = "two-sided") -> ToleranceResult:
    """Distribution-free tolerance limits from the extremes of the sample.

    Raises
    ------
    NotApplicableError
        When the sample is smaller than :func:`order_sample_size` requires (the message says
        how many parts are needed).
    """
    if side not in SIDES:
        raise ValueError(f"side must be one of {SIDES}, not {side!r}")
    p, g = _check_proportions(coverage, confidence)
    v = np.asarray(x, dtype=float)
    v = v[np.isfinite(v)]
    need = order_sample_size(p, g, side)
    if v.size < need:
        raise NotApplicableError(
            f"distribution-free limits at coverage {p:g} and confidence {g:g} need at least "
            f"{need} parts, there are {v.size}")
    n, m, s = mean_sd(v)
    low = float(v.min()) if side in ("two-sided", "lower") else None
    high = float(v.max()) if side in ("two-sided", "upper") else None
    return ToleranceResult(n=n, mean=m, sd=s, coverage=p, confidence=g, side=side,
                           k=None, low=low, high=high, method=METHOD_ORDER)
