"""The location checks' plan, computed: for one :class:`~.plan_model.Scenario`, the smallest
trial reaching the wanted power, the power at the size looked at, the smallest shift a t-test
finds there, and a power curve, by :mod:`verify.stats.power`. The old lot's size follows the
rule of the stats layer's sample sizes (:func:`verify.stats.sample_size.old_size`).
"""

from __future__ import annotations

import math

from ...stats.sample_size import old_size
from .choice import EQUIVALENCE, NON_INFERIORITY
from .plan_model import PlanRow, PowerPoint, Scenario

CURVE_POINTS = 60  # about this many lot sizes on a power curve


def power_of(s: Scenario, n_new: int) -> float:
    """The power of the scenario's test with ``n_new`` units in the new process."""
    from ...stats import power

    n_old = old_size(s.design, n_new, s.ratio)
    if s.kind == EQUIVALENCE:
        return power.power_tost(s.true_shift, s.sd, n_new, n_old, design=s.design,
                                alpha=s.alpha, low=s.low, high=s.high)
    if s.kind == NON_INFERIORITY:
        return power.power_noninferiority(s.true_shift, s.sd, n_new, n_old, design=s.design,
                                          alpha=s.alpha, bound=s.bound, harmful=s.side)
    return power.power_t(s.true_shift, s.sd, n_new, n_old, design=s.design, alpha=s.alpha,
                         alternative=s.alternative)


def _sample_size(s: Scenario):
    from ...stats import power

    if s.kind == EQUIVALENCE:
        return power.sample_size_tost(s.true_shift, s.sd, design=s.design, alpha=s.alpha,
                                      low=s.low, high=s.high, power=s.target_power,
                                      ratio=s.ratio)
    if s.kind == NON_INFERIORITY:
        return power.sample_size_noninferiority(s.true_shift, s.sd, design=s.design,
                                                alpha=s.alpha, bound=s.bound, harmful=s.side,
                                                power=s.target_power, ratio=s.ratio)
    return power.sample_size_t(s.true_shift, s.sd, design=s.design, alpha=s.alpha,
                               alternative=s.alternative, power=s.target_power, ratio=s.ratio)


def _curve_sizes(n_needed: int | None, eval_n: int | None) -> list[int]:
    if n_needed is None and eval_n is None:
        top = 100  # nothing to centre on: show the first hundred
    else:
        top = max(10, 2 * max(n_needed or 0, eval_n or 0))
    step = max(1, math.ceil((top - 2) / CURVE_POINTS))
    sizes = set(range(2, top + 1, step))
    sizes.update(n for n in (n_needed, eval_n) if n is not None)
    if n_needed is not None and n_needed > 2:
        sizes.add(n_needed - 1)
    return sorted(sizes)


def plan_scenario(s: Scenario) -> PlanRow:
    """Plan one check: the smallest n reaching the target power, power and shift at eval_n.

    Parameters
    ----------
    s : Scenario
        The check with every input resolved.

    Returns
    -------
    PlanRow
        ``n_new`` is the smallest whole number with power at least ``s.target_power``;
        ``power_below`` is the power at ``n_new - 1``, which falls short.

    Examples
    --------
    >>> from verify.checks.location.plan_model import Scenario
    >>> s = Scenario(characteristic=None, check="target", kind="difference",
    ...              design="one-sample", side="two-sided", alpha=0.05, target_power=0.9,
    ...              sd=1.0, sd_source="given", true_shift=1.0, detect=1.0)
    >>> row = plan_scenario(s)
    >>> row.n_new, row.power >= 0.9 > row.power_below
    (13, True)
    """
    from ...stats import power
    from ...stats.errors import StatsError

    note = None
    try:
        ss = _sample_size(s)
        n_new, n_old, p = ss.n_new, ss.n_old, ss.power
    except StatsError as err:
        n_new = n_old = p = None
        note = f"no lot size reaches power {s.target_power:g}: {err}"
    below = power_of(s, n_new - 1) if n_new is not None and n_new > 2 else None
    eval_n = s.eval_n if s.eval_n is not None else n_new
    eval_old = p_eval = detectable = None
    if eval_n is not None:
        eval_old = old_size(s.design, eval_n, s.ratio)
        p_eval = power_of(s, eval_n)
        try:
            detectable = power.detectable_shift(s.sd, eval_n, eval_old, design=s.design,
                                                alpha=s.alpha, alternative=s.alternative,
                                                power=s.target_power)
        except StatsError:
            detectable = None
    curve = tuple(PowerPoint(n, old_size(s.design, n, s.ratio), power_of(s, n))
                  for n in _curve_sizes(n_new, eval_n))
    return PlanRow(scenario=s, n_new=n_new, n_old=n_old, power=p, power_below=below,
                   eval_n_new=eval_n, eval_n_old=eval_old, power_at_eval=p_eval,
                   detectable_shift=detectable, curve=curve, note=note)


__all__ = ["CURVE_POINTS", "old_size", "plan_scenario", "power_of"]
