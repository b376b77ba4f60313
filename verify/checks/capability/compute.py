"""The capability check's computation on the candidate stream's parts, calling
:mod:`verify.stats` only: Cpk or Ppk (with its lower confidence bound) for a normal model, the
percentile Ppk (ISO 22514-2) for a fitted non-normal one.
"""

from __future__ import annotations

from ...decide import fmt, fmt_often, fmt_percent
from ...model import CheckResult
from ...stats import capability as cap
from ...stats import distributions
from ..drafting import CANNOT_COMPUTE, CheckInput, Draft, cannot_compute, finite, no_fit
from .result import CapabilityDetails, PercentileCapabilityDetails
from .rule import CAPABILITY

PER_STREAM = False  # judged on the whole new process, not per data.stream sub-stream

def draft(kind, inp: CheckInput) -> Draft:
    """The capability check of one characteristic."""
    ch = inp.ch
    if ch.distribution != "normal":
        return _draft_percentile(kind, inp)
    conf = inp.config(kind.name)
    cand = inp.data.candidate
    lower, upper = ch.lower, ch.upper
    label, level = conf.label, conf.confidence
    # the settings read once (conf.min is a property)
    index, judged_by, min_index = conf.index, conf.judge, conf.min
    judged = (f"the lower {fmt_percent(level)}% confidence bound of the new process's "
              f"{label}" if judged_by == "lower_bound" else f"the new process's {label}")
    hyp = f"{judged} for {ch.name} is at least {fmt_often(min_index)}"
    subgroups = None
    if conf.subgroup == "lot":
        subgroups = cand.lots  # a tuple: its codes are remembered
    try:
        r = cap.capability(cand.parts, lower=lower, upper=upper, target=ch.target,
                           subgroups=subgroups)
        lb95 = r.cpk_lower_bound(0.95)
        # (the 95% bound of Cpk again where the spec judges that one)
        bound = lb95 if index == "cpk" and level == 0.95 else r.lower_bound(index, level)
    except CANNOT_COMPUTE as err:
        return cannot_compute(kind.name, f"process capability ({label})", hyp, err)
    value = r.cpk if index == "cpk" else r.ppk
    bound = finite(bound)
    # (CAPABILITY.decide(cpk=value, lower_bound=bound, min_cpk=min_index, index=label,
    # judge=judged_by, confidence=level)'s outcome and reason, without its Verdict)
    outcome, reason = CAPABILITY.outcome_reason(value, bound, min_index, label, judged_by,
                                                level)
    bound_df = r.sigma_within_df if index == "cpk" else float(r.n - 1)
    # CapabilityDetails' fields by position, in their declared order: cp, cpk, cpl, cpu, pp,
    # ppk, cpm, sigma_within, sigma_overall, sigma_method, mean, n, min_cpk, cpk_lower_95,
    # index, judge, min, confidence, lower_bound, bound_df
    details = CapabilityDetails(
        finite(r.cp), r.cpk, finite(r.cpl), finite(r.cpu), finite(r.pp), finite(r.ppk),
        finite(r.cpm), r.sigma_within, r.sigma_overall, r.sigma_method, r.mean, r.n,
        min_index if index == "cpk" else None, finite(lb95), index, judged_by,
        min_index, level, bound, bound_df)
    sigma = (f"Cpk ({r.sigma_method})" if index == "cpk"
             else "Ppk (overall sample sd)")
    judge = ("its lower bound judged" if judged_by == "lower_bound"
             else "the estimate judged")
    note = (f"no power figure: capability compares {label} with min, not a test"
            if judged_by == "estimate" else
            f"no power figure: the lower bound of {label} is compared with min")
    # CheckResult's fields by position (a check of every characteristic: a call by keyword
    # costs about 40 ns a field): check, method, hypothesis, alternative, margin, outcome,
    # reason, estimate, standard_error, statistic, df, p_value, p_adjusted, ci_low, ci_high,
    # ci_level, critical_value, power, power_note, detectable_shift, planned_n, design, details
    res = CheckResult(kind.name, f"{sigma}; {judge}", hyp, None, None, outcome, reason,
                      value, None, None, None, None, None, bound, None, level, None,
                      None, note, None, None, None, details)
    return Draft(result=res)

def _draft_percentile(kind, inp: CheckInput) -> Draft:
    """Capability of a fitted non-normal model: the percentile method (ISO 22514-2), the
    percentile Ppk judged on its estimate against min."""
    ch = inp.ch
    conf = inp.config(kind.name)
    hyp = (f"the new process's percentile Ppk ({ch.distribution} fit) for {ch.name} is at "
           f"least {fmt(conf.min)}")
    if inp.fit is None:
        return no_fit(kind.name, inp, hyp)
    f = inp.fit
    pi = distributions.percentile_indices(f, lower=ch.lower, upper=ch.upper)
    below, above = distributions.expected_beyond(f, lower=ch.lower, upper=ch.upper)
    v = CAPABILITY.decide(cpk=pi.ppk, lower_bound=None, min_cpk=conf.min,
                          index=f"percentile Ppk ({ch.distribution})")
    details = PercentileCapabilityDetails(
        pp=finite(pi.pp), ppl=finite(pi.ppl), ppu=finite(pi.ppu), ppk=pi.ppk,
        x_0_135=pi.x_low, x_50=pi.x_mid, x_99_865=pi.x_high,
        distribution=ch.distribution, fit=f.words,
        expected_ppm_below=1e6 * below, expected_ppm_above=1e6 * above,
        index="ppk", judge="estimate", min=conf.min, confidence=conf.confidence,
        lower_bound=None, n=f.n,
    )
    res = CheckResult(
        check=kind.name, method=f"percentile Ppk, {pi.method}; {ch.distribution} fit by "
        "maximum likelihood; the estimate judged", hypothesis=hyp, alternative=None,
        margin=None, outcome=v.outcome, reason=v.reason, estimate=pi.ppk, details=details,
        power_note="no power figure: capability compares the percentile Ppk with min, not a "
                   "test",
    )
    return Draft(result=res)
