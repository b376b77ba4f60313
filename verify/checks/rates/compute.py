"""The pass-fail checks' computation, calling :mod:`verify.stats` only: ``rate`` (the exact
upper bound of the candidate stream's failure rate against max) and ``rate_shift`` (the change
of failure rate against the reference stream: an interval against a margin, or an exact test
of a higher rate, a member of the multiplicity family).

Each stream carries its counts (:class:`verify.evaluate_pass_fail.Counts`): inspected and
failed parts by lot.
"""

from __future__ import annotations

from dataclasses import replace

from ...decide import fmt, pct
from ...model import CheckResult
from ...stats import rates
from ..drafting import CANNOT_COMPUTE, CheckInput, Draft, cannot_compute
from .result import RateDetails, RateShiftDetails
from .rule import RATE, RATE_SHIFT

PER_STREAM = False  # pass-fail characteristics have no data.stream sub-streams


def shows_empty_reference(kind) -> bool:
    """The rate_shift check is a difference from the reference stream: its summary is shown
    even when the reference has no parts inspected."""
    return kind.name == "rate_shift"


def draft(kind, inp: CheckInput) -> Draft:
    """The rate or rate_shift check of one pass-fail characteristic."""
    return _DRAFTS[kind.name](kind, inp)


def _draft_rate(kind, inp: CheckInput) -> Draft:
    """The ``rate`` check: the exact upper bound of the new failure rate against max."""
    ch = inp.ch
    new = inp.data.candidate.counts
    conf = inp.config(kind.name)
    level = conf.confidence
    hyp = (f"the new process's failure rate of {ch.name} is at most "
           f"{pct(conf.max)}")
    method = f"Clopper-Pearson exact one-sided upper bound ({fmt(100 * level)}%)"
    try:
        b = rates.clopper_pearson(new.failures, new.n, level=level)
        lower = rates.clopper_pearson(new.failures, new.n, level=2 * level - 1,
                                      alternative="two-sided").low
    except CANNOT_COMPUTE as err:
        return cannot_compute(kind.name, method, hyp, err, design="pass-fail")
    v = RATE.decide(failures=b.failures, inspected=b.inspected, upper=b.high,
                    max_rate=conf.max, confidence=level)
    plan = rates.demonstration_n(conf.max, level, b.failures)
    res = CheckResult(
        check=kind.name, method=method, hypothesis=hyp, alternative="less", margin=None,
        outcome=v.outcome, reason=v.reason, estimate=b.estimate, ci_low=0.0, ci_high=b.high,
        ci_level=level, design="pass-fail", planned_n=None,
        power_note=(f"no power figure: with {b.failures} failure(s) the bound reaches "
                    f"{pct(conf.max)} at {plan.n} parts inspected"),
        details=RateDetails(max=conf.max, confidence=level, failures_new=b.failures,
                            n_new=b.inspected, lower_bound=lower,
                            parts_needed_at_these_failures=plan.n),
    )
    harm = RATE.harm_shown(lower=lower, max_rate=conf.max)
    return Draft(result=res, harm_shown=v.outcome == "HOLD" and harm)


def _draft_rate_shift(kind, inp: CheckInput) -> Draft:
    """The ``rate_shift`` check: with a margin the interval for p_new - p_old against it;
    without, a one-sided exact test of a higher new rate (a member of the multiplicity
    family, its interval level set once the family is known)."""
    spec, ch = inp.spec, inp.ch
    new, old = inp.data.candidate.counts, inp.data.reference.counts
    conf = inp.config(kind.name)
    alpha = spec.alpha
    details = RateShiftDetails(failures_new=new.failures, n_new=new.n,
                               failures_old=old.failures, n_old=old.n)
    if conf.margin is not None:
        hyp = (f"the new failure rate of {ch.name} minus the old one is below "
               f"{fmt(100 * conf.margin)} percentage points")
        level = 1 - 2 * alpha
        try:
            r = rates.difference_interval(new.failures, new.n, old.failures, old.n,
                                          level=level, method=conf.method)
        except CANNOT_COMPUTE as err:
            return cannot_compute(kind.name, "rate difference interval", hyp, err,
                           design="pass-fail")
        v = RATE_SHIFT.decide_margin(estimate=r.estimate, ci=(r.low, r.high),
                                     level=level, margin=conf.margin, method=r.method)
        res = CheckResult(
            check=kind.name, method=f"{r.method} interval", hypothesis=hyp,
            alternative="less", margin=None, outcome=v.outcome, reason=v.reason,
            estimate=r.estimate, ci_low=r.low, ci_high=r.high, ci_level=level,
            design="pass-fail", details=replace(details, margin=conf.margin),
            power_note=_power_note(conf, old, new, alpha, spec),
        )
        return Draft(result=res, harm_shown=v.outcome == "HOLD" and r.low >= conf.margin)

    hyp = f"the new failure rate of {ch.name} is higher than the old one"
    try:
        t = rates.higher_rate_test(new.failures, new.n, old.failures, old.n, test=conf.test)
    except CANNOT_COMPUTE as err:
        dr = cannot_compute(kind.name, "exact test of a higher rate", hyp, err, design="pass-fail")
        dr.family = True
        return dr
    res = CheckResult(
        check=kind.name, method=t.method, hypothesis=hyp, alternative="greater",
        margin=None, outcome="PASS", reason="", estimate=new.failures / new.n
        - old.failures / old.n, statistic=t.statistic, p_value=t.pvalue, design="pass-fail",
        details=details, power_note=_power_note(conf, old, new, alpha, spec),
    )

    def complete(eff_alpha, family_size):
        level = 1 - 2 * eff_alpha
        r = rates.newcombe(new.failures, new.n, old.failures, old.n, level=level)
        return dict(ci_low=r.low, ci_high=r.high, ci_level=level)

    def finish(p_adj, adjusted):
        return RATE_SHIFT.decide_test(pvalue=p_adj, alpha=alpha, estimate=res.estimate,
                                      method=t.method, adjusted=adjusted)

    return Draft(result=res, family_p=t.pvalue, finish=finish, complete=complete,
                 family=True)


def _power_note(conf, old, new, alpha: float, spec) -> str:
    """What a trial of this size could show, from the normal approximation of the plan."""
    if old.n == 0 or new.n == 0:
        return "no power figure: a process has no parts inspected"
    p_old = old.failures / old.n
    if conf.margin is None and conf.detect is None:
        return "no power figure: the spec declares no increase (detect) that must be seen"
    if p_old == 0:
        return "no power figure: the old process has no failures to plan from"
    try:
        plan = rates.rate_shift_n(p_old, alpha=alpha, power=spec.plan.power,
                                  margin=conf.margin,
                                  rate_new=None if conf.margin is not None
                                  else min(0.999, p_old + conf.detect))
    except ValueError as err:
        # stats.rates.rate_shift_n says "no n reaches the power" with a ValueError (the assumed
        # difference is not below the margin): a planning figure that does not exist, in words
        return f"no power figure: {err}"
    return (f"the plan asks for {plan.n} parts per process for power {spec.plan.power:g} at "
            f"the old rate {pct(p_old)} (exact power of this rule)")


_DRAFTS = {"rate": _draft_rate, "rate_shift": _draft_rate_shift}
