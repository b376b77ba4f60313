"""Pass-fail characteristics: counts -> rate checks -> drafts for :mod:`verify.evaluate`.

Self-contained on purpose: the gathering of counts, the ``rate`` and ``rate_shift`` drafts and
the diagnostics of one kind of characteristic live here, so that a registry of check kinds can
take the module as it is. The numbers come from :mod:`verify.stats.rates`, the outcomes and
their words from the rate rules in :mod:`verify.decide`.

A pass-fail characteristic's tidy rows hold 1.0 (failed) or 0.0 (passed) per part, or, with
per-lot counts, the failed count per lot row with the inspected count on rows named
``"<name> (inspected)"`` from the same source row.
"""

from __future__ import annotations

import numpy as np

from . import decide
from .evaluate import _CharDraft, _Data, _Draft
from .model import CheckResult, DiagnosticResult, Measurements, ProcessSummary
from .pass_fail_counts import Counts, process_counts  # noqa: F401 - process_counts: public here
from .spec_model import Characteristic, Spec
from .stats import rates
from .stats.errors import StatsError


def _summary(process: str, c: Counts) -> ProcessSummary:
    n = c.n
    return ProcessSummary(
        process=process, n=n, mean=None, sd=None, lots=c.lots, n_parts=n,
        failures=c.failures, rate=(c.failures / n) if n else None,
        lot_counts=tuple(zip(c.lots, c.inspected, c.failed, strict=True)),
    )


def draft_characteristic(spec: Spec, meas: Measurements, ch: Characteristic,
                         final: bool) -> _CharDraft:
    """Counts, sufficiency, the rate checks and the diagnostics of one pass-fail
    characteristic, as a draft for :func:`verify.evaluate.evaluate` to finish."""
    new = process_counts(meas, ch, "new")
    old = process_counts(meas, ch, "old")
    processes = {}
    if old.n or ch.checks.rate_shift is not None:
        processes["old"] = _summary("old", old)
    processes["new"] = _summary("new", new)
    empty = np.zeros(0)
    data = _Data(old=None, new=empty, old_parts=None, new_parts=empty,
                 old_lots=old.lots, new_lots=new.lots)
    d = _CharDraft(ch=ch, data=data, processes=processes)
    counts = {p: s.n for p, s in processes.items()}
    plans = None if spec.min_n is None else {k: spec.planned(k) for k in counts}
    d.shortfall = decide.SUFFICIENCY.shortfall(counts, plans, final)
    if final:
        d.final_shortfall = decide.SUFFICIENCY.shortfall(counts, plans, False)
    d.counts = counts
    if ch.checks.rate is not None:
        d.checks.append(draft_rate(spec, ch, new))
    if ch.checks.rate_shift is not None:
        d.checks.append(draft_rate_shift(spec, ch, new, old))
    d.diagnostics = diagnostics(spec, ch, new, old)
    return d


def _cannot(check: str, method: str, hyp: str, err: Exception, **kw) -> _Draft:
    return _Draft(result=CheckResult(
        check=check, method=method, hypothesis=hyp, alternative=None, margin=None,
        outcome="HOLD", reason=f"cannot be computed: {err}", **kw))


def draft_rate(spec: Spec, ch: Characteristic, new: Counts) -> _Draft:
    """The ``rate`` check: the exact upper bound of the new failure rate against max."""
    conf = ch.checks.rate
    level = conf.confidence
    hyp = (f"the new process's failure rate of {ch.name} is at most "
           f"{decide.pct(conf.max)}")
    method = f"Clopper-Pearson exact one-sided upper bound ({decide.fmt(100 * level)}%)"
    try:
        b = rates.clopper_pearson(new.failures, new.n, level=level)
        lower = rates.clopper_pearson(new.failures, new.n, level=2 * level - 1,
                                      alternative="two-sided").low
    except (StatsError, ValueError) as err:
        return _cannot("rate", method, hyp, err, design="pass-fail")
    v = decide.RATE.decide(failures=b.failures, inspected=b.inspected, upper=b.high,
                           max_rate=conf.max, confidence=level)
    plan = rates.demonstration_n(conf.max, level, b.failures)
    res = CheckResult(
        check="rate", method=method, hypothesis=hyp, alternative="less", margin=None,
        outcome=v.outcome, reason=v.reason, estimate=b.estimate, ci_low=0.0, ci_high=b.high,
        ci_level=level, design="pass-fail", planned_n=None,
        power_note=(f"no power figure: with {b.failures} failure(s) the bound reaches "
                    f"{decide.pct(conf.max)} at {plan.n} parts inspected"),
        extra={"max": conf.max, "confidence": level, "failures_new": b.failures,
               "n_new": b.inspected, "lower_bound": lower,
               "parts_needed_at_these_failures": plan.n},
    )
    harm = decide.RATE.harm_shown(lower=lower, max_rate=conf.max)
    return _Draft(result=res, harm_shown=v.outcome == "HOLD" and harm)


def draft_rate_shift(spec: Spec, ch: Characteristic, new: Counts, old: Counts) -> _Draft:
    """The ``rate_shift`` check: with a margin the interval for p_new - p_old against it;
    without, a one-sided exact test of a higher new rate (a member of the multiplicity
    family, its interval level set once the family is known)."""
    conf = ch.checks.rate_shift
    alpha = spec.alpha
    extra = {"failures_new": new.failures, "n_new": new.n, "failures_old": old.failures,
             "n_old": old.n}
    if conf.margin is not None:
        hyp = (f"the new failure rate of {ch.name} minus the old one is below "
               f"{decide.fmt(100 * conf.margin)} percentage points")
        level = 1 - 2 * alpha
        try:
            r = rates.difference_interval(new.failures, new.n, old.failures, old.n,
                                          level=level, method=conf.method)
        except (StatsError, ValueError) as err:
            return _cannot("rate_shift", "rate difference interval", hyp, err,
                           design="pass-fail")
        v = decide.RATE_SHIFT.decide_margin(estimate=r.estimate, ci=(r.low, r.high),
                                            level=level, margin=conf.margin, method=r.method)
        res = CheckResult(
            check="rate_shift", method=f"{r.method} interval", hypothesis=hyp,
            alternative="less", margin=None, outcome=v.outcome, reason=v.reason,
            estimate=r.estimate, ci_low=r.low, ci_high=r.high, ci_level=level,
            design="pass-fail", extra={**extra, "margin": conf.margin},
            power_note=_power_note(conf, old, new, alpha, spec),
        )
        return _Draft(result=res, harm_shown=v.outcome == "HOLD" and r.low >= conf.margin)

    hyp = f"the new failure rate of {ch.name} is higher than the old one"
    try:
        t = rates.higher_rate_test(new.failures, new.n, old.failures, old.n, test=conf.test)
    except (StatsError, ValueError) as err:
        dr = _cannot("rate_shift", "exact test of a higher rate", hyp, err, design="pass-fail")
        dr.family = True
        return dr
    res = CheckResult(
        check="rate_shift", method=t.method, hypothesis=hyp, alternative="greater",
        margin=None, outcome="PASS", reason="", estimate=new.failures / new.n
        - old.failures / old.n, statistic=t.statistic, p_value=t.pvalue, design="pass-fail",
        extra=extra, power_note=_power_note(conf, old, new, alpha, spec),
    )

    def complete(eff_alpha, family_size):
        level = 1 - 2 * eff_alpha
        r = rates.newcombe(new.failures, new.n, old.failures, old.n, level=level)
        return dict(ci_low=r.low, ci_high=r.high, ci_level=level)

    def finish(p_adj, adjusted):
        return decide.RATE_SHIFT.decide_test(pvalue=p_adj, alpha=alpha, estimate=res.estimate,
                                             method=t.method, adjusted=adjusted)

    return _Draft(result=res, family_p=t.pvalue, finish=finish, complete=complete,
                  family=True)


def _power_note(conf, old: Counts, new: Counts, alpha: float, spec: Spec) -> str:
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
        return f"no power figure: {err}"
    return (f"the plan asks for {plan.n} parts per process for power {spec.plan.power:g} at "
            f"the old rate {decide.pct(p_old)} (exact power of this rule)")


def diagnostics(spec: Spec, ch: Characteristic, new: Counts, old: Counts
                ) -> list[DiagnosticResult]:
    """Failures by lot (a heterogeneity test, flagged, never deciding) and zero-failure
    notes."""
    out: list[DiagnosticResult] = []
    groups = [("old", old), ("new", new)] if old.n else [("new", new)]
    for group, c in groups:
        try:
            h = rates.lot_heterogeneity(c.failed, c.inspected)
            flag = h.pvalue < spec.alpha
            rough = ("; rough: some lot expects fewer than 5 failures"
                     if h.min_expected < 5 else "")
            out.append(DiagnosticResult(
                "failures by lot", h.method, group, flag,
                (f"lots differ in failure rate (chi-square {decide.fmt(h.statistic)} on "
                 f"{h.df} df, {decide.p_eq(h.pvalue)}{rough}): parts of one lot are not "
                 "independent; look for a lot-related cause" if flag else
                 f"no difference between lots detected ({decide.p_eq(h.pvalue)}{rough})"),
                statistic=h.statistic, p_value=h.pvalue,
                extra={"df": h.df, "lots": h.lots, "min_expected": h.min_expected}))
        except StatsError as err:
            out.append(DiagnosticResult("failures by lot", "chi-square test of equal rates "
                                        "across lots", group, False,
                                        f"not applicable: {err}"))
        if c.n and c.failures == 0:
            level = ch.checks.rate.confidence if ch.checks.rate is not None else 0.95
            upper = rates.clopper_pearson(0, c.n, level=level).high
            out.append(DiagnosticResult(
                "zero failures", "count of failures", group, True,
                (f"no failures among {c.n} parts: the rate is not shown to be zero, only at "
                 f"most {decide.pct(upper, 3)} ({decide.fmt(100 * level)}% upper bound)"
                 + ("; the old rate estimated as 0 makes any new failure look like an "
                    "increase" if group == "old" else "")),
                statistic=0.0, extra={"upper_bound": upper, "confidence": level}))
    return out

