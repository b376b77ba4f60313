"""The location checks' computation: the candidate's mean against the target (``target``) or
against the reference stream's mean (``shift``), calling :mod:`verify.stats` only.

With a margin the check is an equivalence test (TOST) or, where one side alone is harmful, a
non-inferiority test; without one it is a t-test in the harmful direction and a member of the
multiplicity family.
"""

from __future__ import annotations

import math

from ...decide import fmt, fmt_often, margin_words, p_eq
from ...model import CheckResult, DiagnosticResult
from ...stats import _memo, equivalence, nonparametric, power, ttests
from ...stats._checks import check_margins
from ...stats.core import (
    mean_sd,
    require_spread,
    t_quantile,
    t_test_from_estimate,
    two_sided_bounds,
)
from ...stats.errors import DegenerateDataError
from ..drafting import (
    CANNOT_COMPUTE,
    CheckInput,
    Comparison,
    Draft,
    cannot_compute,
    finite,
    not_applicable,
    replaced,
)
from .choice import DIFFERENCE, EQUIVALENCE, TestChoice, choose_test
from .result import LocationDetails
from .rule import difference_rule, margin_rule

DETECT_POWER = 0.8  # the power at which the "smallest detectable shift" note is stated
PER_STREAM = True  # runs for each data.stream sub-stream of the new process as well


def _one_sample(kind) -> bool:
    """The target check compares the candidate with a number, the shift check with a stream."""
    return kind.name == "target"


def _effect(design: str, ch, data: Comparison):
    ref, cand = data.reference, data.candidate
    if design == "one-sample":
        x, target = cand.values, ch.target
        known = _memo.recall("mean_sd", x)
        if (known is not None and x.ndim == 1 and known[0] >= 2 and 0.0 < known[2] < math.inf
                and type(target) is float and math.isfinite(target)):
            # a sample whose mean and sd were computed is finite and within +/-1e150 (mean_sd
            # refuses any other): one-dimensional, with 2 or more values, spread and a finite
            # target, the
            # Effect ttests.effect("one-sample", x, target=target) builds from the same
            # summary after its checks, which it would pass (any other case goes through them)
            return ttests.one_sample_effect(known[0], known[1], known[2], target)
        return ttests.effect("one-sample", x, target=target)
    if design == "paired":
        pv = data.pairs
        return ttests.effect("paired", pv.new, pv.old)
    if ref.values is None:
        raise DegenerateDataError("no old-process values")
    # a comparison needs the spread of each process: one process with zero spread (or a single
    # value) would let the other alone set the standard error
    n_old, m_old, sd_old = mean_sd(ref.values) if ref.values.size else (0, 0.0, math.nan)
    require_spread(n_old, sd_old, "old values")
    n_new, m_new, sd_new = mean_sd(cand.values) if cand.values.size else (0, 0.0, math.nan)
    require_spread(n_new, sd_new, "new values")
    # both samples checked (finite, within range, 2 or more values with spread): the effect
    # ttests.effect(design, cand.values, ref.values) returns, from the summaries just read
    return ttests.two_sample_effect(design, n_new, m_new, sd_new, n_old, m_old, sd_old)


def _power_sds(e) -> dict:
    """The sds the power functions assume: both process sds for Welch, else the common sd."""
    if e.design == "welch" and e.sd_new is not None and e.sd_old is not None:
        return {"sd": float(e.sd_new), "sd_old": float(e.sd_old)}
    return {"sd": float(e.sd)}


def _try(fn, *args, **kwargs):
    """A planning figure, or None where it does not exist for these data (e.g. a shift outside
    the margin): only the statistics layer's typed "cannot" errors mean that."""
    try:
        return fn(*args, **kwargs)
    except CANNOT_COMPUTE:
        return None


def _ratio(n_new: int, n_old: int | None) -> float:
    return 1.0 if not n_old else n_new / n_old


def shows_empty_reference(kind) -> bool:
    """The shift check is a difference from the reference stream: its summary is shown even
    when the reference has no values."""
    return not _one_sample(kind)


def pairs_role(kind, conf) -> str | None:
    """Which matched pairs of the :class:`Comparison` a paired shift design runs on."""
    return "pairs" if getattr(conf, "design", None) == "paired" else None


def draft(kind, inp: CheckInput) -> Draft:
    """The target or shift check of one characteristic on one comparison of streams."""
    spec, ch = inp.spec, inp.ch
    alpha = spec.alpha
    conf = inp.config(kind.name)
    if _one_sample(kind):
        design = "one-sample"
        subject = f"the new-process mean of {ch.name} minus its target {fmt_often(ch.target)}"
        noun = "departure"
    else:
        design = conf.design
        subject = f"the new-process mean of {ch.name} minus the old-process mean"
        noun = "shift"
    margin = conf.margin
    # the one place that maps (margin, side) to the test: equivalence, non-inferiority or
    # the difference test in the harmful direction
    test = choose_test(None if margin is None else (margin.low, margin.high), ch.side)
    unit = ch.unit
    try:
        e = _effect(design, ch, inp.data)
    except CANNOT_COMPUTE as err:
        what = "TOST" if test.kind != DIFFERENCE else "t-test"
        dr = cannot_compute(kind.name, f"{what} ({design})", subject, err, design=design)
        dr.family = test.kind == DIFFERENCE
        return dr
    n_new, n_old = e.n_new, e.n_old
    sds = _power_sds(e)
    ratio = _ratio(n_new, n_old) if design in ("welch", "pooled") else 1.0
    if test.kind != DIFFERENCE:
        return _draft_margin(kind, inp, test, e, subject, noun, sds, ratio, design)
    common = dict(estimate=e.estimate, standard_error=e.standard_error, df=e.df, design=design)
    details = LocationDetails(n_new=n_new, n_old=n_old, sd=float(e.sd))

    # no margin: a difference test in the harmful direction. Under holm or bonferroni the
    # interval, critical value and power figures use the Bonferroni level alpha / m, m the size
    # of the family actually adjusted, so that they agree with the adjusted decision (for Holm
    # they are conservative); they are filled in by ``complete`` once the family is known.
    alternative = test.alternative
    r = t_test_from_estimate(e.estimate, e.standard_error, e.df, alternative=alternative,
                             method=e.method)
    direction = {"two-sided": "differs from", "less": "is below", "greater": "is above"}
    hyp = f"{subject} {direction[alternative]} 0"
    rule = difference_rule(kind)
    res = CheckResult(
        check=kind.name, method=r.method, hypothesis=hyp, alternative=alternative, margin=None,
        outcome="PASS", reason="", statistic=r.statistic, p_value=r.pvalue, details=details,
        **common,
    )
    found = {}

    def complete(eff_alpha, family_size):
        ci = r.confidence_interval(1 - eff_alpha)
        detectable = _try(power.detectable_shift, n_new=n_new, n_old=n_old, design=design,
                          alpha=eff_alpha, alternative=alternative, power=DETECT_POWER, **sds)
        found["detectable"] = detectable
        pw = size = None
        at = "" if eff_alpha == alpha else f" at the adjusted level alpha/{family_size}"
        if conf.detect is not None:
            # detect is a size; a harmful departure downwards is a negative shift
            shift = -conf.detect if alternative == "less" else conf.detect
            pw = _try(power.power_t, shift, n_new=n_new, n_old=n_old, design=design,
                      alpha=eff_alpha, alternative=alternative, **sds)
            size = _try(power.sample_size_t, shift, design=design, alpha=eff_alpha,
                        alternative=alternative, power=spec.plan.power, ratio=ratio, **sds)
            note = f"power to detect a {noun} of {fmt(conf.detect)} {unit}".rstrip() + at
        else:
            note = (f"no detect value declared; the {noun} detected with {DETECT_POWER:.0%} "
                    f"power is {fmt(detectable)} {unit}".rstrip() + at)
        return dict(ci_low=ci.low, ci_high=ci.high, ci_level=1 - eff_alpha,
                    critical_value=r.critical_value(eff_alpha), power=finite(pw),
                    power_note=note, detectable_shift=finite(detectable),
                    planned_n=size.n_new if size is not None else None)

    def finish(p_adj, adjusted):
        return rule.decide(pvalue=p_adj, alpha=alpha, estimate=e.estimate, unit=unit,
                           detectable=finite(found.get("detectable")), adjusted=adjusted)

    return Draft(result=res, family_p=r.pvalue, finish=finish, complete=complete, family=True)


def _draft_margin(kind, inp: CheckInput, test: TestChoice, e, subject: str, noun: str,
                  sds: dict, ratio: float, design: str) -> Draft:
    """Equivalence (two-sided) or non-inferiority (one harmful side) against the margin."""
    spec, ch = inp.spec, inp.ch
    alpha = spec.alpha
    unit = ch.unit
    n_new, n_old = e.n_new, e.n_old
    low, high = test.low, test.high
    level = 1 - 2 * alpha
    # the critical value critical_value(e.df, alpha, "greater") without its check of the
    # alternative
    crit = t_quantile(1.0 - alpha, e.df)
    # the bounds of confidence_interval(e.estimate, e.standard_error, e.df, level=level)
    # without its checks of the level (0 < 1 - 2 alpha < 1 for the spec's alpha in (0, 0.5))
    # and the alternative, nor its Interval: two_sided_bounds, whose quantile at
    # 0.5 + level / 2 is the critical value's where the two probabilities are the same float
    # (so for alpha 0.05, 0.1, 0.01, 0.025, about nine alphas in ten; another alpha takes
    # two_sided_bounds itself)
    if 0.5 + level / 2.0 == 1.0 - alpha:
        est, half = e.estimate, crit * e.standard_error
        ci_pair = (est - half, est + half)
    else:
        ci_pair = two_sided_bounds(e.estimate, e.standard_error, e.df, level)
    true_shift = spec.plan.true_shift
    batch = None
    if test.kind == EQUIVALENCE:
        # equivalence.tost_from_estimate(e.estimate, e.standard_error, e.df, low=low,
        # high=high, method=method) read field by field: its two one-sided tests
        # (equivalence.tost_sides, the arithmetic it runs) without its checks of the effect,
        # which ttests made when building it (a finite estimate, a positive finite standard
        # error and df), nor its result; the margins checked as it checks them
        method = f"TOST ({e.method})"
        t_lo, t_hi, p_lo, p_hi = equivalence.tost_sides(
            e.estimate, e.standard_error, e.df, *check_margins(low, high))
        pval = max(p_lo, p_hi)  # (its pvalue)
        # LocationDetails' (p_lower, p_upper, statistic_lower, statistic_upper), by position
        tost_fields = (p_lo, p_hi, t_lo, t_hi)
        statistic = t_lo if p_lo >= p_hi else t_hi  # (its statistic)
        hyp = f"{subject} lies inside {margin_words(low, high, unit)}"
        alternative = "equivalence"
        # the power and planned n are computed for all characteristics together
        # (complete_batch)
        batch = {"sd_old": None, **sds, "true_shift": true_shift, "n_new": n_new,
                 "n_old": n_old, "design": design, "alpha": alpha, "low": low,
                 "high": high, "power": spec.plan.power, "ratio": ratio}
        pw = size = None
    else:
        harmful, bound = test.harmful, test.bound
        r = equivalence.noninferiority_from_estimate(
            e.estimate, e.standard_error, e.df, bound=bound, harmful=harmful,
            method=f"non-inferiority ({e.method})")
        method, pval, statistic = r.method, r.pvalue, r.statistic
        if harmful == "lower":
            tost_fields = (r.pvalue, None, r.statistic, None)
            hyp = f"{subject} is no lower than {fmt(bound)} {unit}".rstrip()
        else:
            tost_fields = (None, r.pvalue, None, r.statistic)
            hyp = f"{subject} is no higher than +{fmt(bound)} {unit}".rstrip()
        alternative = r.alternative
        pw = _try(power.power_noninferiority, true_shift, n_new=n_new, n_old=n_old,
                  design=design, alpha=alpha, bound=bound, harmful=harmful, **sds)
        size = _try(power.sample_size_noninferiority, true_shift, design=design,
                    alpha=alpha, bound=bound, harmful=harmful, power=spec.plan.power,
                    ratio=ratio, **sds)
    rule = margin_rule(kind)
    side = ch.side
    # (rule.decide(pvalue=pval, alpha=alpha, low=low, high=high, ci=ci_pair, unit=unit,
    # side=side)'s outcome and reason, without its Verdict)
    outcome, reason = rule.outcome_reason(pval, alpha, low, high, ci_pair, unit, side)
    note = (f"power of this test if the true {noun} is {fmt_often(true_shift)} and the sd is "
            "as observed")
    # CheckResult's fields by position (a check of every characteristic: a call by keyword
    # costs about 40 ns a field): check, method, hypothesis, alternative, margin, outcome,
    # reason, estimate, standard_error, statistic, df, p_value, p_adjusted, ci_low, ci_high,
    # ci_level, critical_value, power, power_note, detectable_shift, planned_n, design, details
    res = CheckResult(
        kind.name, method, hyp, alternative, (low, high), outcome, reason,
        e.estimate, e.standard_error, statistic, e.df, pval, None, ci_pair[0], ci_pair[1], level,
        crit, finite(pw), note, None, size.n_new if size is not None else None, design,
        LocationDetails(n_new, n_old, float(e.sd), *tost_fields))
    harm = outcome == "HOLD" and rule.harm_shown(ci=ci_pair, low=low, high=high, side=side)
    # (by position: result, family_p, harm_shown, finish, complete, family, batch)
    return Draft(res, None, harm, None, None, False, batch)


def complete_batch(drafts: list[Draft]) -> None:
    """The TOST power and planned n of every equivalence draft at once: one vectorised
    integration for all characteristics costs far less than one per check (results are the
    same as power.power_tost and power.sample_size_tost one at a time)."""
    asked = [dr for dr in drafts if dr.batch is not None]
    if not asked:
        return
    answers = power.plan_tost_many([dr.batch for dr in asked])
    for dr, (pw, n_new) in zip(asked, answers, strict=True):
        dr.result = replaced(dr.result, power=finite(pw), planned_n=n_new)
        dr.batch = None


def rank_requests(kind, inp: CheckInput) -> list[tuple]:
    """The rank statistics :func:`companions` will ask for, so that the evaluation can compute
    those of all characteristics together (``verify.stats.batch.prefetch_ranks``)."""
    data = inp.data
    if data.candidate.values is None:
        return []
    if _one_sample(kind):
        return [] if inp.ch.target is None else [
            ("signed_rank", data.candidate.values, inp.ch.target)]
    if data.pairs is not None or data.reference.values is None:
        return []
    return [("rank_sum", data.reference.values, data.candidate.values)]


def companions(kind, inp: CheckInput, dr: Draft) -> list[DiagnosticResult]:
    """The rank-test companion of the t-test, for sensitivity; flagged when it disagrees."""
    res = dr.result
    if res.p_value is None:
        return []
    data = inp.data
    check = kind.name
    alt = res.alternative if res.margin is None else "two-sided"
    n_zero = 0
    try:
        # the figures of the rank test the companion reads (method, statistic, p-value and,
        # for the signed-rank test, the zero differences): for samples the batch ranked,
        # without the test's result object (the same texts and floats, and the same errors)
        if _one_sample(kind):
            method, statistic, pvalue, n_zero = nonparametric.signed_rank_about_figures(
                data.candidate.values, inp.ch.target, alternative=alt)
            group = data.candidate.name
        elif data.pairs is not None:
            pv = data.pairs
            rt = nonparametric.wilcoxon_signed_rank(pv.new - pv.old, alternative=alt)
            method, statistic, pvalue, n_zero = rt.method, rt.statistic, rt.pvalue, rt.n_zero
            group = "differences"
        else:
            if data.reference.values is None:
                return []
            method, statistic, pvalue = nonparametric.mann_whitney_figures(
                data.reference.values, data.candidate.values, alternative=alt)
            group = f"{data.reference.name} vs {data.candidate.name}"
    except CANNOT_COMPUTE as err:
        return [not_applicable("rank companion", f"rank test for the {check}", check, err)]
    disagree = False
    if res.margin is None:
        alpha = inp.spec.alpha
        disagree = (pvalue < alpha) != (res.p_value < alpha)
    # (by position, extra an empty dict: what diagnostic(..., statistic=rt.statistic,
    # p_value=rt.pvalue) makes, without its call and keywords)
    return [DiagnosticResult(
        "rank companion", method, group, disagree,
        (f"{check}: the rank test disagrees with the t-test ({p_eq(pvalue)})" if disagree
         else f"{check}: rank test {p_eq(pvalue)}, {n_zero} zero difference(s)" if n_zero
         else f"{check}: rank test {p_eq(pvalue)}"),
        statistic, pvalue, {})]
