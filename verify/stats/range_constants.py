"""The control-chart constants of the range of n normal values: d2(n) (its
expected value) and d3(n) (its standard deviation), tabled for n = 2..25 and integrated
beyond."""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from scipy import special

from .errors import NotApplicableError

# three decimals as printed in the control-chart constants table of Montgomery, Introduction to
# Statistical Quality Control, Appendix VI (values written here from that table, from memory;
# tests/test_stats_capability.py recomputes each one by numerical integration).
D2_TABLE: dict[int, float] = {
    2: 1.128, 3: 1.693, 4: 2.059, 5: 2.326, 6: 2.534, 7: 2.704, 8: 2.847, 9: 2.970,
    10: 3.078, 11: 3.173, 12: 3.258, 13: 3.336, 14: 3.407, 15: 3.472, 16: 3.532, 17: 3.588,
    18: 3.640, 19: 3.689, 20: 3.735, 21: 3.778, 22: 3.819, 23: 3.858, 24: 3.895, 25: 3.931,
}  # fmt: skip


# Tabled d3(n), the standard deviation of the range of n independent standard normal values,
# n = 2..25, three decimals, from the same control-chart constants table (from memory; the
# tests recompute each one by numerical integration, :func:`range_sd`).
D3_TABLE: dict[int, float] = {
    2: 0.853, 3: 0.888, 4: 0.880, 5: 0.864, 6: 0.848, 7: 0.833, 8: 0.820, 9: 0.808,
    10: 0.797, 11: 0.787, 12: 0.778, 13: 0.770, 14: 0.763, 15: 0.756, 16: 0.750, 17: 0.744,
    18: 0.739, 19: 0.733, 20: 0.729, 21: 0.724, 22: 0.720, 23: 0.716, 24: 0.712, 25: 0.708,
}  # fmt: skip


@lru_cache(maxsize=256)
def range_sd(n: int) -> float:
    """sd of the range of ``n`` standard normal values by numerical integration (unrounded d3).

    E[R^2] = 2 * double integral over x < y of
    1 - Phi(y)^n - (1 - Phi(x))^n + (Phi(y) - Phi(x))^n, the probability that the smallest value
    lies below x and the largest above y; d3^2 = E[R^2] - d2^2. Trapezoid rule on a fine grid
    (about 1e-5 accurate).
    """
    if n < 2:
        raise NotApplicableError(f"a range needs at least 2 values, not {n}")
    grid = np.linspace(-9.0, 9.0, 1801)
    h = grid[1] - grid[0]
    p = special.ndtr(grid)
    px, py = p[:, None], p[None, :]
    f = 1.0 - py**n - (1.0 - px) ** n + np.clip(py - px, 0.0, None) ** n
    # the triangle x < y: points on its diagonal edge carry half the trapezoid weight
    upper = np.triu(np.ones_like(f), 1) + 0.5 * np.eye(grid.size)
    f = f * upper
    w = np.full(grid.size, h)
    w[0] = w[-1] = h / 2.0
    second = 2.0 * float(w @ f @ w)
    return float(math.sqrt(max(second - expected_range(n) ** 2, 0.0)))


def d3(n: int) -> float:
    """The control-chart constant d3(n): tabled for n = 2..25, integrated beyond.

    Examples
    --------
    >>> d3(5)
    0.864
    """
    return _tabled_or_integrated(n, D3_TABLE, range_sd)


@lru_cache(maxsize=256)
def expected_range(n: int) -> float:
    """E[range] of ``n`` standard normal values by numerical integration (unrounded d2).

    d2(n) = integral over the real line of 1 - Phi(x)^n - (1 - Phi(x))^n dx.
    """
    if n < 2:
        raise NotApplicableError(f"a range needs at least 2 values, not {n}")
    from scipy import integrate

    def integrand(x: float) -> float:
        p = float(special.ndtr(x))
        return 1.0 - p**n - (1.0 - p) ** n

    value, _ = integrate.quad(integrand, -np.inf, np.inf, limit=200)
    return float(value)


def d2(n: int) -> float:
    """The control-chart constant d2(n): tabled value for n = 2..25, integrated beyond.

    Examples
    --------
    >>> d2(5)
    2.326
    """
    return _tabled_or_integrated(n, D2_TABLE, expected_range)


def _tabled_or_integrated(n: int, table: dict[int, float], integrated) -> float:
    """The tabled constant for ``n`` (the value a reader finds in the printed table), else the
    integrated one."""
    n = int(n)
    if n < 2:
        raise NotApplicableError(f"a range needs at least 2 values, not {n}")
    if n in table:
        return table[n]
    return integrated(n)
