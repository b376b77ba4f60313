"""The spread check's computation, on the structure of the data, calling :mod:`verify.stats`
only: the matched pairs where ``data.pair`` is declared (Pitman-Morgan), the pooled within-lot
variances with ``unit_of_analysis: lot``, else the two samples (F-test or Brown-Forsythe). A
member of the multiplicity family: its interval level waits for the family.
"""

from __future__ import annotations

from dataclasses import replace

from ...decide import fmt, p_eq
from ...model import CheckResult, DiagnosticResult
from ...stats import spread
from ...stats import variance_components as vc
from ...stats.errors import DegenerateDataError
from ...stats.paired_spread import pitman_morgan
from ..drafting import (
    CANNOT_COMPUTE,
    CheckInput,
    Draft,
    cannot_compute,
    finite,
    not_applicable,
)
from .result import LotSpreadDetails, PairedSpreadDetails, TwoSampleSpreadDetails
from .rule import SPREAD

PER_STREAM = True  # runs for each data.stream sub-stream of the new process as well


_NO_POWER = "no power figure: the spec declares no spread increase that must be seen"


def pairs_role(kind, conf) -> str | None:
    """Which matched pairs of the :class:`Comparison` the spread test runs on (``data.pair``
    declared: Pitman-Morgan)."""
    return "spread_pairs" if conf.design == "paired" else None


def draft(kind, inp: CheckInput) -> Draft:
    """The spread check of one characteristic on one comparison of streams."""
    spec, ch = inp.spec, inp.ch
    alpha = spec.alpha
    conf = inp.config(kind.name)
    hyp = f"the new process's standard deviation of {ch.name} is larger than the old one's"
    ref, cand = inp.data.reference, inp.data.candidate
    pv = inp.data.spread_pairs
    note = ""
    what = "sd ratio new/old"
    desc = None  # the F-test beside a Brown-Forsythe decision, descriptive only (its
    # two-sided interval)
    bounds = None  # the F-test's interval bounds by level, where it decides (else interval)
    try:
        if pv is not None:
            r = pitman_morgan(pv.old, pv.new, alternative="greater")
            two = pitman_morgan(pv.old, pv.new, alternative="two-sided")
            method, stat, df, est, p = r.method, r.statistic, r.df, r.estimate, r.pvalue
            details = PairedSpreadDetails(correlation=r.correlation, pairs=len(pv.keys))
            design = "paired"

            def interval(level, _two=two):
                return _two.confidence_interval(level)
        elif spec.unit_of_analysis == "lot":
            if ref.parts is None:
                raise DegenerateDataError("no old-process values")
            hyp = (f"the new process's within-lot standard deviation of {ch.name} is larger "
                   "than the old one's")
            ref_lots, cand_lots = ref.lots, cand.lots  # tuples: their codes are remembered
            w = vc.within_lot_spread(ref.parts, ref_lots, cand.parts, cand_lots,
                                     alternative="greater")
            two = vc.within_lot_spread(ref.parts, ref_lots, cand.parts, cand_lots,
                                       alternative="two-sided")
            method, stat, df, est, p = w.method, w.statistic, float(w.df_num), w.estimate, w.pvalue
            what = "within-lot sd ratio new/old"
            details = LotSpreadDetails(
                df_num=w.df_num, df_den=w.df_den, F=w.statistic,
                sd_within_lot_old=w.old.sd_within, sd_within_lot_new=w.new.sd_within,
                sd_between_lot_old=w.old.sd_between, sd_between_lot_new=w.new.sd_between,
                between_lot_ratio=finite(w.between_ratio),
                compared=("pooled within-lot variances (F on sum(n_i - 1) df); the "
                          "between-lot sds are reported beside it and do not decide"),
            )
            between = (fmt(w.between_ratio) if w.between_ratio is not None
                       else "n/a (the old between-lot sd is 0)")
            note = f"; between-lot sd ratio {between}, reported only"
            design = "lot components"

            def interval(level, _two=two):
                return _two.confidence_interval(level)
        else:
            if ref.values is None:
                raise DegenerateDataError("no old-process values")
            f = spread.f_test(ref.values, cand.values, alternative="greater")
            # (by position: df_num, df_den, F)
            details = TwoSampleSpreadDetails(f.df_num, f.df_den, f.statistic)
            design = "two-sample"
            if conf.design_given and spec.data.pair is not None:
                note = "; pairs ignored: the spec declares spread design: independent"
                details = replace(details,
                                  pairs_ignored="spec declares spread design: independent")
            if conf.method == "brown-forsythe":
                b = spread.brown_forsythe(ref.values, cand.values, alternative="greater")
                b_two = spread.brown_forsythe(ref.values, cand.values, alternative="two-sided")
                # the estimate and interval are the Brown-Forsythe test's own: the difference
                # of mean absolute deviations from the medians (new - old); the sd ratio and
                # its F interval are shown beside it as descriptive figures only
                method, stat, df, est, p = b.method, b.statistic, float(b.df_den), b.estimate, \
                    b.pvalue
                what = "mean absolute deviation new - old"
                details = replace(details, mad_old=b.mad_old, mad_new=b.mad_new,
                                  sd_ratio_descriptive=f.estimate)
                note += f"; sd ratio {fmt(f.estimate)}, descriptive"

                def interval(level, _b=b_two):
                    return _b.confidence_interval(level)
                desc = f
            else:
                method, stat, df, est, p = f.method, f.statistic, float(f.df_num), f.estimate, \
                    f.pvalue

                # the two-sided interval on the same F: the bounds of
                # f.confidence_interval(level, alternative="two-sided") for complete's level,
                # 1 - 2 alpha / m in (0, 1) (the spec's alpha is at most 0.2), without the
                # checks of the level and alternative nor the Interval
                bounds = f.two_sided_bounds
    except CANNOT_COMPUTE as err:
        dr = cannot_compute(kind.name, "spread test", hyp, err)
        dr.family = True
        return dr
    # CheckResult's fields by position (a check of every characteristic: a call by keyword
    # costs about 40 ns a field): check, method, hypothesis, alternative, margin, outcome,
    # reason, estimate, standard_error, statistic, df, p_value, p_adjusted, ci_low, ci_high,
    # ci_level, critical_value, power, power_note, detectable_shift, planned_n, design, details
    res = CheckResult(kind.name, method, hyp, "greater", None, "PASS", "", est, None, stat, df,
                      p, None, None, None, None, None, None, _NO_POWER, None, None, design,
                      details)
    found = {}

    def complete(eff_alpha, family_size):
        # two-sided (1 - 2 alpha) interval: its lower end is the one-sided bound at alpha
        level = 1 - 2 * eff_alpha
        if bounds is not None:
            ci_pair = bounds(level)
        else:
            ci = interval(level)
            ci_pair = (ci.low, ci.high)
        found["ci"], found["level"] = ci_pair, level
        out = dict(ci_low=ci_pair[0], ci_high=finite(ci_pair[1]), ci_level=level)
        if desc is not None:
            dci = desc.confidence_interval(level, alternative="two-sided")
            out["details"] = replace(details, sd_ratio_low_descriptive=dci.low,
                                     sd_ratio_high_descriptive=finite(dci.high))
        return out

    def finish(p_adj, adjusted):
        return SPREAD.decide(pvalue=p_adj, alpha=alpha, ratio=est, ci=found["ci"],
                             level=found["level"], method=method, adjusted=adjusted,
                             what=what, note=note)

    # (by position: result, family_p, harm_shown, finish, complete, family)
    return Draft(res, p, False, finish, complete, True)


def rank_requests(kind, inp: CheckInput) -> list[tuple]:
    """The two-sample statistics this kind will ask for, so that the evaluation computes those
    of all characteristics together (``verify.stats.batch.prefetch_ranks``): the
    Brown-Forsythe sums, read by the deciding test or by the companion beside an F-test."""
    data = inp.data
    ref, cand = data.reference, data.candidate
    if (data.spread_pairs is not None or inp.spec.unit_of_analysis == "lot"
            or ref.values is None or cand.values is None):
        return []
    return [("brown_forsythe", ref.values, cand.values)]


def companions(kind, inp: CheckInput, dr: Draft) -> list[DiagnosticResult]:
    """The other two-sample spread test beside the deciding one (F-test or Brown-Forsythe),
    flagged when it disagrees; for the two-sample test only, not for pairs nor for within-lot
    variances."""
    spec = inp.spec
    data = inp.data
    ref = data.reference
    if (data.spread_pairs is not None or spec.unit_of_analysis == "lot" or ref.values is None
            or dr.result.p_value is None):
        return []
    cand = data.candidate
    group = f"{ref.name} vs {cand.name}"
    try:
        if inp.config(kind.name).method != "brown-forsythe":
            # the figures of spread.brown_forsythe the companion reads, without its result
            # (the same floats and errors)
            method = spread.BROWN_FORSYTHE_METHOD
            statistic, pvalue = spread.brown_forsythe_figures(ref.values, cand.values,
                                                              alternative="greater")
        else:
            o = spread.f_test(ref.values, cand.values, alternative="greater")
            method, statistic, pvalue = o.method, o.statistic, o.pvalue
    except CANNOT_COMPUTE as err:
        return [not_applicable("spread companion", "spread companion", group, err)]
    alpha = spec.alpha
    disagree = (pvalue < alpha) != (dr.result.p_value < alpha)
    # (by position, extra an empty dict: what diagnostic(..., statistic=o.statistic,
    # p_value=o.pvalue) makes, without its call and keywords)
    return [DiagnosticResult(
        "spread companion", method, group, disagree,
        (f"the {method} disagrees with the deciding spread test ({p_eq(pvalue)})"
         if disagree else f"{method} {p_eq(pvalue)}"),
        statistic, pvalue, {})]
