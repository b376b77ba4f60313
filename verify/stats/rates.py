"""Failure rates of pass/fail characteristics: binomial bounds, rate differences, plans.

Conventions: a rate is failures / inspected; differences are new minus old; a higher rate is
the harmful direction. Everything here is pure: counts in, frozen results out.

The code lives by topic: :mod:`~verify.stats.rate_bounds` (one rate: Clopper-Pearson, Wilson),
:mod:`~verify.stats.rate_difference` (two rates: Newcombe, Miettinen-Nurminen),
:mod:`~verify.stats.rate_tests` (exact tests: Fisher, Boschloo; failures by lot) and
:mod:`~verify.stats.rate_plans` (the success-run plan, rate_shift plans by exact power). This
module gathers their names, so that ``from verify.stats import rates`` keeps working.

Sources of the formulas (cited beside each function):

- Clopper & Pearson (1934), Biometrika 26:404-413: the exact interval from beta quantiles.
- Wilson (1927), JASA 22:209-212: the score interval for one proportion.
- Newcombe (1998), Statistics in Medicine 17:873-890, method 10: the hybrid score interval for
  a difference of proportions (Wilson limits combined by square-and-add).
- Miettinen & Nurminen (1985), Statistics in Medicine 4:213-226: the score interval for a
  difference, with the restricted maximum-likelihood rates of Farrington & Manning (1990),
  Statistics in Medicine 9:1447-1454 (closed-form cubic root) and the variance factor N/(N-1).
- The success-run plan (common practice): the smallest n at which K or fewer failures make the
  exact upper bound reach the maximum rate; K = 0 gives n = ln(1 - C) / ln(1 - P).
"""

from __future__ import annotations

from .rate_bounds import RateBound, clopper_pearson, wilson
from .rate_difference import (
    METHODS,
    RateDifference,
    difference_interval,
    miettinen_nurminen,
    newcombe,
)
from .rate_plans import (
    DemonstrationPlan,
    ShiftPlan,
    demonstration_n,
    rate_shift_n,
    rate_shift_power,
)
from .rate_tests import (
    BOSCHLOO_MAX_CELLS,
    TESTS,
    LotHeterogeneity,
    RateTest,
    higher_rate_test,
    lot_heterogeneity,
)

__all__ = [
    "BOSCHLOO_MAX_CELLS", "METHODS", "TESTS",
    "DemonstrationPlan", "LotHeterogeneity", "RateBound", "RateDifference", "RateTest",
    "ShiftPlan", "clopper_pearson", "demonstration_n", "difference_interval",
    "higher_rate_test", "lot_heterogeneity", "miettinen_nurminen", "newcombe",
    "rate_shift_n", "rate_shift_power", "wilson",
]
