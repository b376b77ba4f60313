"""spec + measurements -> statistics -> decisions -> one :class:`~verify.model.Evaluation`.

This module wires the layers together and holds no statistics and no rules of its own: the
numbers come from :mod:`verify.stats`, the outcomes and their words from :mod:`verify.decide`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import decide
from .data import analysis_values, paired_values, stream_values
from .model import (
    BeyondLimits,
    CharacteristicResult,
    CheckResult,
    DiagnosticResult,
    Evaluation,
    Measurements,
    ProcessSummary,
    RunInfo,
    StreamResult,
)
from .spec_model import Characteristic, Spec
from .stats import capability as cap
from .stats import diagnostics as diag
from .stats import (
    distributions,
    equivalence,
    multiplicity,
    nonparametric,
    power,
    spread,
    tolerance,
    ttests,
)
from .stats import variance_components as vc
from .stats.core import confidence_interval, mean_sd, require_spread, t_test_from_estimate
from .stats.errors import DegenerateDataError, NotApplicableError, StatsError
from .stats.limits import beyond_limits
from .stats.paired_spread import pitman_morgan

DETECT_POWER = 0.8  # the power at which the "smallest detectable shift" note is stated
RUN_LENGTH_FLAG = 8  # common practice: eight points in a row on one side of the centre line


def _finite(x) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _alternative(side: str) -> str:
    """The direction of harm as a t-test alternative: a harmful lower value tests 'less'."""
    return {"two-sided": "two-sided", "lower": "less", "upper": "greater"}[side]


@dataclass
class _Data:
    """The values one characteristic is analysed on."""

    old: np.ndarray | None  # analysis units (parts or lot means), production order
    new: np.ndarray
    old_parts: np.ndarray | None  # part-level values, production order
    new_parts: np.ndarray
    old_lots: tuple = ()
    new_lots: tuple = ()
    pairs: object = None  # PairedValues for a paired shift design
    spread_pairs: object = None  # PairedValues the spread check runs on (data.pair declared)


@dataclass
class _Draft:
    """A check computed but not yet decided (difference tests wait for multiplicity)."""

    result: CheckResult
    family_p: float | None = None  # p-value entering the multiplicity adjustment
    harm_shown: bool = False
    finish: object = None  # callable(p_adjusted, adjusted) -> Verdict
    # callable(alpha_used, family_size) -> fields of the result that depend on the level
    # (interval, critical value, power); run once the family is known
    complete: object = None
    family: bool = False  # a test that HOLDs on significance (a member unless degenerate)
    tost_plan: dict | None = None  # TOST power and sample-size question, answered by _plan_all


@dataclass
class _StreamDraft:
    """The location and spread checks of one new stream against the whole old process."""

    name: str
    values: np.ndarray
    checks: list = field(default_factory=list)  # [_Draft]


@dataclass
class _CharDraft:
    ch: Characteristic
    data: _Data
    processes: dict
    checks: list[_Draft] = field(default_factory=list)
    diagnostics: list[DiagnosticResult] = field(default_factory=list)
    shortfall: str | None = None
    final_shortfall: str | None = None  # the shortfall a --final run overrode
    counts: dict = field(default_factory=dict)
    pairs: int | None = None
    unmatched: tuple = ()
    streams: list = field(default_factory=list)  # [_StreamDraft]
    fit: object = None  # distributions.DistributionFit of the new parts (non-normal models)
    fit_error: str | None = None
    final: bool = False


def evaluate(
    spec: Spec, measurements: Measurements, *, final: bool = False, run: RunInfo | None = None
) -> Evaluation:
    """Evaluate every characteristic of ``spec`` on ``measurements``.

    Parameters
    ----------
    spec : Spec
        The validated spec from :func:`verify.spec.load_spec`.
    measurements : Measurements
        The tidy table from :func:`verify.data.load_measurements`.
    final : bool
        True when the trial is declared complete (``--final``): a shortfall against ``min_n``
        no longer makes a characteristic PENDING.
    run : RunInfo, optional
        Who ran it, when and with which software (see :mod:`verify.audit`).
    """
    if run is None:
        from .audit import run_info

        run = run_info(spec, measurements, command="(library call)")
    drafts = [_draft_characteristic(spec, measurements, ch, final)
              for ch in spec.characteristics]
    _plan_all(drafts)
    family, excluded = _adjust(drafts, spec.multiplicity, spec.alpha)
    results = tuple(_finish(spec, d) for d in drafts)
    decision = decide.combine(r.decision for r in results)
    # one line per characteristic not PASS: its leading reason (the full list stays with it)
    reasons = tuple(
        f"{r.name}: {r.decision} - {r.reasons[0]}"
        + (f" (+{len(r.reasons) - 1} more on its sheet)" if len(r.reasons) > 1 else "")
        for r in results if r.decision != "PASS"
    )
    review = tuple(note for r in results for note in r.review)
    return Evaluation(
        spec=spec,
        measurements=measurements,
        characteristics=results,
        decision=decision,
        reasons=reasons,
        review=review,
        rules=decide.rules_in_words(spec.alpha, spec.multiplicity,
                                    pass_fail=any(c.pass_fail for c in spec.characteristics)),
        caution=decide.CAUTION,
        final=final,
        run=run,
        family=family,
        family_excluded=excluded,
    )


# --- gathering data ---------------------------------------------------------------------------


def _beyond(ch: Characteristic, parts: np.ndarray) -> BeyondLimits | None:
    """Part values beyond the limits (None without limits): counted on parts, never lot means."""
    if ch.lower is None and ch.upper is None:
        return None
    r = beyond_limits(parts, lower=ch.lower, upper=ch.upper)
    return BeyondLimits(below=r.below, above=r.above, expected_ppm=r.expected_ppm,
                        expected_ppm_below=r.expected_ppm_below,
                        expected_ppm_above=r.expected_ppm_above)


def _summary(process: str, values: np.ndarray, lots, n_parts: int,
             parts: np.ndarray | None = None,
             beyond: BeyondLimits | None = None) -> ProcessSummary:
    n = int(values.size)
    mean = sd = None
    if n:
        _, m, s = mean_sd(values)
        mean = m
        sd = s if n >= 2 else None
    within = between = None
    truncated = False
    if parts is not None and parts.size:
        try:
            comp = vc.variance_components(parts, np.asarray(lots, dtype=object))
            within, between, truncated = comp.sd_within, comp.sd_between, comp.truncated
        except StatsError:
            pass  # fewer than 2 lots of 2 parts, or no within-lot variation: not estimable
    return ProcessSummary(
        sd_within_lot=within, sd_between_lot=between, between_lot_set_to_zero=truncated,
        process=process,
        n=n,
        mean=mean,
        sd=sd,
        lots=tuple(dict.fromkeys(str(x) for x in lots)),
        n_parts=n_parts,
        minimum=float(values.min()) if n else None,
        maximum=float(values.max()) if n else None,
        beyond_limits=beyond,
    )


def _gather(spec: Spec, meas: Measurements, ch: Characteristic) -> tuple[_Data, dict]:
    new = analysis_values(meas, spec, ch.name, "new")
    old = analysis_values(meas, spec, ch.name, "old")
    if spec.unit_of_analysis == "lot":
        from dataclasses import replace

        part_spec = replace(spec, unit_of_analysis="part")
        new_p = analysis_values(meas, part_spec, ch.name, "new")
        old_p = analysis_values(meas, part_spec, ch.name, "old")
    else:
        new_p, old_p = new, old
    data = _Data(
        old=old.values if old.values.size else None,
        new=new.values,
        old_parts=old_p.values if old_p.values.size else None,
        new_parts=new_p.values,
        old_lots=tuple(old_p.lots),
        new_lots=tuple(new_p.lots),
    )
    processes = {}
    if old.values.size or ch.checks.shift is not None:
        processes["old"] = _summary("old", old.values, old_p.lots, int(old_p.values.size),
                                    old_p.values, _beyond(ch, old_p.values))
    processes["new"] = _summary("new", new.values, new_p.lots, int(new_p.values.size),
                                new_p.values, _beyond(ch, new_p.values))
    shift, sp = ch.checks.shift, ch.checks.spread
    shift_paired = shift is not None and shift.design == "paired"
    spread_paired = sp is not None and sp.design == "paired"
    if shift_paired or spread_paired:
        pv = paired_values(meas, spec, ch.name)
        data.pairs = pv if shift_paired else None
        data.spread_pairs = pv if spread_paired else None
    return data, processes


# --- drafting checks ----------------------------------------------------------------------------


def _draft_characteristic(spec: Spec, meas: Measurements, ch: Characteristic, final: bool):
    if ch.pass_fail:
        from . import evaluate_pass_fail  # the pass-fail kind keeps its own drafts

        return evaluate_pass_fail.draft_characteristic(spec, meas, ch, final)
    data, processes = _gather(spec, meas, ch)
    d = _CharDraft(ch=ch, data=data, processes=processes, final=final)
    if ch.distribution in ("lognormal", "weibull", "box-cox"):
        try:
            d.fit = distributions.fit(data.new_parts, ch.distribution)
        except StatsError as err:
            d.fit_error = str(err)
    counts = {p: s.n for p, s in processes.items()}
    pv = data.pairs if data.pairs is not None else data.spread_pairs
    if pv is not None:
        # a check that runs on the pairs has as many units as there are matched pairs
        d.pairs = len(pv.keys)
        d.unmatched = tuple(pv.unmatched)
        counts = {"pairs": d.pairs}
    plans = None if spec.min_n is None else {k: spec.planned(k) for k in counts}
    d.shortfall = decide.SUFFICIENCY.shortfall(counts, plans, final)
    if final:
        d.final_shortfall = decide.SUFFICIENCY.shortfall(counts, plans, False)
    d.counts = counts
    checks = ch.checks
    if checks.target is not None:
        d.checks.append(_draft_location(spec, ch, d, "target"))
    if checks.shift is not None:
        d.checks.append(_draft_location(spec, ch, d, "shift"))
    if checks.spread is not None:
        d.checks.append(_draft_spread(spec, ch, d))
    if checks.capability is not None:
        d.checks.append(_draft_capability(spec, ch, d))
    if checks.conformance is not None:
        d.checks.append(_draft_conformance(spec, ch, d))
    if spec.data.stream is not None:
        _draft_streams(spec, meas, ch, d)
    d.diagnostics = _diagnostics(spec, ch, d)
    return d


def _draft_streams(spec: Spec, meas: Measurements, ch: Characteristic, d: _CharDraft) -> None:
    """Each new stream against the old process, with the characteristic's location and spread
    checks (their p-values join the multiplicity family); capability and conformance stay on
    the whole new process."""
    from dataclasses import replace

    checks = ch.checks
    for name, values in stream_values(meas, ch.name).items():
        data = replace(d.data, new=values, new_parts=values, new_lots=(), pairs=None,
                       spread_pairs=None)
        sd = _CharDraft(ch=ch, data=data, processes=d.processes, final=d.final)
        sdr = _StreamDraft(name=name, values=values)
        if checks.target is not None:
            sdr.checks.append(_draft_location(spec, ch, sd, "target"))
        if checks.shift is not None:
            sdr.checks.append(_draft_location(spec, ch, sd, "shift"))
        if checks.spread is not None:
            sdr.checks.append(_draft_spread(spec, ch, sd))
        for dr in sdr.checks:
            dr.result = replace(dr.result, hypothesis=f"stream {name}: {dr.result.hypothesis}")
        d.streams.append(sdr)


def _degenerate(check: str, method: str, hypothesis: str, err: Exception, **kw) -> _Draft:
    res = CheckResult(
        check=check, method=method, hypothesis=hypothesis, alternative=None, margin=None,
        outcome="HOLD", reason=f"cannot be computed: {err}", **kw,
    )
    return _Draft(result=res)


def _effect(design: str, ch: Characteristic, data: _Data):
    if design == "one-sample":
        return ttests.effect("one-sample", data.new, target=ch.target)
    if design == "paired":
        pv = data.pairs
        return ttests.effect("paired", pv.new, pv.old)
    if data.old is None:
        raise DegenerateDataError("no old-process values")
    # a comparison needs the spread of each process: one process with zero spread (or a single
    # value) would let the other alone set the standard error
    n_old, _, sd_old = mean_sd(data.old) if data.old.size else (0, 0.0, math.nan)
    require_spread(n_old, sd_old, "old values")
    n_new, _, sd_new = mean_sd(data.new) if data.new.size else (0, 0.0, math.nan)
    require_spread(n_new, sd_new, "new values")
    return ttests.effect(design, data.new, data.old)


def _power_sds(e) -> dict:
    """The sds the power functions assume: both process sds for Welch, else the common sd."""
    if e.design == "welch" and e.sd_new is not None and e.sd_old is not None:
        return {"sd": float(e.sd_new), "sd_old": float(e.sd_old)}
    return {"sd": float(e.sd)}


def _try(fn, *args, **kwargs):
    """A planning figure, or None where it does not exist (e.g. a shift outside the margin)."""
    try:
        return fn(*args, **kwargs)
    except (StatsError, ValueError):
        return None


def _draft_location(spec: Spec, ch: Characteristic, d: _CharDraft, check: str) -> _Draft:
    alpha = spec.alpha
    if check == "target":
        conf = ch.checks.target
        design = "one-sample"
        subject = f"the new-process mean of {ch.name} minus its target {decide.fmt(ch.target)}"
    else:
        conf = ch.checks.shift
        design = conf.design
        subject = f"the new-process mean of {ch.name} minus the old-process mean"
    margin = conf.margin
    unit = ch.unit
    noun = "departure" if check == "target" else "shift"
    try:
        e = _effect(design, ch, d.data)
    except (StatsError, ValueError) as err:
        what = "TOST" if margin is not None else "t-test"
        dr = _degenerate(check, f"{what} ({design})", subject, err, design=design)
        dr.family = margin is None
        return dr
    n_new, n_old = e.n_new, e.n_old
    sds = _power_sds(e)
    ratio = _ratio(n_new, n_old) if design in ("welch", "pooled") else 1.0
    common = dict(
        estimate=e.estimate, standard_error=e.standard_error, df=e.df, design=design,
        extra={"n_new": n_new, "n_old": n_old, "sd": float(e.sd)},
    )
    if margin is not None:
        low, high = margin.low, margin.high
        level = 1 - 2 * alpha
        ci = confidence_interval(e.estimate, e.standard_error, e.df, level=level)
        true_shift = spec.plan.true_shift
        tost_plan = None
        if ch.side == "two-sided":
            r = equivalence.tost_from_estimate(
                e.estimate, e.standard_error, e.df, low=low, high=high,
                method=f"TOST ({e.method})")
            pval = r.pvalue
            tost_fields = dict(p_lower=r.p_lower, p_upper=r.p_upper,
                               statistic_lower=r.statistic_lower,
                               statistic_upper=r.statistic_upper)
            statistic = r.statistic_lower if r.p_lower >= r.p_upper else r.statistic_upper
            hyp = f"{subject} lies inside {decide.margin_words(low, high, unit)}"
            alternative = "equivalence"
            # the power and planned n are computed for all characteristics together (_plan_all)
            tost_plan = {"sd_old": None, **sds, "true_shift": true_shift, "n_new": n_new,
                         "n_old": n_old, "design": design, "alpha": alpha, "low": low,
                         "high": high, "power": spec.plan.power, "ratio": ratio}
            pw = size = None
        else:
            harmful = ch.side
            bound = low if harmful == "lower" else high
            r = equivalence.noninferiority_from_estimate(
                e.estimate, e.standard_error, e.df, bound=bound, harmful=harmful,
                method=f"non-inferiority ({e.method})")
            pval = r.pvalue
            statistic = r.statistic
            if harmful == "lower":
                tost_fields = dict(p_lower=r.pvalue, statistic_lower=r.statistic)
                hyp = f"{subject} is no lower than {decide.fmt(bound)} {unit}".rstrip()
            else:
                tost_fields = dict(p_upper=r.pvalue, statistic_upper=r.statistic)
                hyp = f"{subject} is no higher than +{decide.fmt(bound)} {unit}".rstrip()
            alternative = r.alternative
            pw = _try(power.power_noninferiority, true_shift, n_new=n_new, n_old=n_old,
                      design=design, alpha=alpha, bound=bound, harmful=harmful, **sds)
            size = _try(power.sample_size_noninferiority, true_shift, design=design,
                        alpha=alpha, bound=bound, harmful=harmful, power=spec.plan.power,
                        ratio=ratio, **sds)
        rule = decide.TARGET_MARGIN if check == "target" else decide.SHIFT_MARGIN
        verdict = rule.decide(pvalue=pval, alpha=alpha, low=low, high=high,
                              ci=(ci.low, ci.high), unit=unit, side=ch.side)
        res = CheckResult(
            check=check, method=r.method, hypothesis=hyp, alternative=alternative,
            margin=(low, high), outcome=verdict.outcome, reason=verdict.reason,
            statistic=statistic, p_value=pval, ci_low=ci.low, ci_high=ci.high, ci_level=level,
            critical_value=_crit(e.df, alpha, "greater"), power=_finite(pw),
            power_note=(f"power of this test if the true {noun} is "
                        f"{decide.fmt(true_shift)} and the sd is as observed"),
            planned_n=size.n_new if size is not None else None, **tost_fields, **common,
        )
        harm = rule.harm_shown(ci=(ci.low, ci.high), low=low, high=high, side=ch.side)
        return _Draft(result=res, harm_shown=verdict.outcome == "HOLD" and harm,
                      tost_plan=tost_plan)

    # no margin: a difference test in the harmful direction. Under holm or bonferroni the
    # interval, critical value and power figures use the Bonferroni level alpha / m, m the size
    # of the family actually adjusted, so that they agree with the adjusted decision (for Holm
    # they are conservative); they are filled in by ``complete`` once the family is known.
    alternative = _alternative(ch.side)
    r = t_test_from_estimate(e.estimate, e.standard_error, e.df, alternative=alternative,
                             method=e.method)
    direction = {"two-sided": "differs from", "less": "is below", "greater": "is above"}
    hyp = f"{subject} {direction[alternative]} 0"
    rule = decide.TARGET_DIFFERENCE if check == "target" else decide.SHIFT_DIFFERENCE
    res = CheckResult(
        check=check, method=r.method, hypothesis=hyp, alternative=alternative, margin=None,
        outcome="PASS", reason="", statistic=r.statistic, p_value=r.pvalue, **common,
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
            note = f"power to detect a {noun} of {decide.fmt(conf.detect)} {unit}".rstrip() + at
        else:
            note = (f"no detect value declared; the {noun} detected with {DETECT_POWER:.0%} "
                    f"power is {decide.fmt(detectable)} {unit}".rstrip() + at)
        return dict(ci_low=ci.low, ci_high=ci.high, ci_level=1 - eff_alpha,
                    critical_value=r.critical_value(eff_alpha), power=_finite(pw),
                    power_note=note, detectable_shift=_finite(detectable),
                    planned_n=size.n_new if size is not None else None)

    def finish(p_adj, adjusted, _rule=rule, _e=e, _unit=unit):
        return _rule.decide(pvalue=p_adj, alpha=alpha, estimate=_e.estimate, unit=_unit,
                            detectable=_finite(found.get("detectable")), adjusted=adjusted)

    return _Draft(result=res, family_p=r.pvalue, finish=finish, complete=complete, family=True)


def _ratio(n_new: int, n_old: int | None) -> float:
    return 1.0 if not n_old else n_new / n_old


def _crit(df: float, alpha: float, alternative: str) -> float:
    from .stats.core import critical_value

    return critical_value(df, alpha, alternative)


def _draft_spread(spec: Spec, ch: Characteristic, d: _CharDraft) -> _Draft:
    """The spread check, on the structure of the data: the matched pairs where data.pair is
    declared (Pitman-Morgan), the pooled within-lot variances with unit_of_analysis: lot, else
    the two samples (F-test or Brown-Forsythe). Its interval level waits for the family."""
    alpha = spec.alpha
    conf = ch.checks.spread
    hyp = f"the new process's standard deviation of {ch.name} is larger than the old one's"
    pv = d.data.spread_pairs
    extra: dict = {}
    note = ""
    what = "sd ratio new/old"
    desc = None  # the F-test beside a Brown-Forsythe decision, descriptive only
    try:
        if pv is not None:
            r = pitman_morgan(pv.old, pv.new, alternative="greater")
            two = pitman_morgan(pv.old, pv.new, alternative="two-sided")
            method, stat, df, est, p = r.method, r.statistic, r.df, r.estimate, r.pvalue
            extra = {"correlation": r.correlation, "pairs": len(pv.keys)}
            design = "paired"

            def interval(level, _two=two):
                return _two.confidence_interval(level)
        elif spec.unit_of_analysis == "lot":
            if d.data.old_parts is None:
                raise DegenerateDataError("no old-process values")
            hyp = (f"the new process's within-lot standard deviation of {ch.name} is larger "
                   "than the old one's")
            w = vc.within_lot_spread(d.data.old_parts, np.asarray(d.data.old_lots, dtype=object),
                                     d.data.new_parts, np.asarray(d.data.new_lots, dtype=object),
                                     alternative="greater")
            two = vc.within_lot_spread(
                d.data.old_parts, np.asarray(d.data.old_lots, dtype=object), d.data.new_parts,
                np.asarray(d.data.new_lots, dtype=object), alternative="two-sided")
            method, stat, df, est, p = w.method, w.statistic, float(w.df_num), w.estimate, w.pvalue
            what = "within-lot sd ratio new/old"
            extra = {
                "df_num": w.df_num, "df_den": w.df_den, "F": w.statistic,
                "sd_within_lot_old": w.old.sd_within, "sd_within_lot_new": w.new.sd_within,
                "sd_between_lot_old": w.old.sd_between, "sd_between_lot_new": w.new.sd_between,
                "between_lot_ratio": _finite(w.between_ratio),
                "compared": ("pooled within-lot variances (F on sum(n_i - 1) df); the "
                             "between-lot sds are reported beside it and do not decide"),
            }
            between = (decide.fmt(w.between_ratio) if w.between_ratio is not None
                       else "n/a (the old between-lot sd is 0)")
            note = f"; between-lot sd ratio {between}, reported only"
            design = "lot components"

            def interval(level, _two=two):
                return _two.confidence_interval(level)
        else:
            if d.data.old is None:
                raise DegenerateDataError("no old-process values")
            f = spread.f_test(d.data.old, d.data.new, alternative="greater")
            f_two = spread.f_test(d.data.old, d.data.new, alternative="two-sided")
            extra = {"df_num": f.df_num, "df_den": f.df_den, "F": f.statistic}
            design = "two-sample"
            if conf.design_given and spec.data.pair is not None:
                note = "; pairs ignored: the spec declares spread design: independent"
                extra["pairs_ignored"] = "spec declares spread design: independent"
            if conf.method == "brown-forsythe":
                b = spread.brown_forsythe(d.data.old, d.data.new, alternative="greater")
                b_two = spread.brown_forsythe(d.data.old, d.data.new, alternative="two-sided")
                # the estimate and interval are the Brown-Forsythe test's own: the difference
                # of mean absolute deviations from the medians (new - old); the sd ratio and
                # its F interval are shown beside it as descriptive figures only
                method, stat, df, est, p = b.method, b.statistic, float(b.df_den), b.estimate, \
                    b.pvalue
                what = "mean absolute deviation new - old"
                extra.update({"mad_old": b.mad_old, "mad_new": b.mad_new,
                              "sd_ratio_descriptive": f.estimate})
                note += f"; sd ratio {decide.fmt(f.estimate)}, descriptive"

                def interval(level, _b=b_two):
                    return _b.confidence_interval(level)
                desc = f_two
            else:
                method, stat, df, est, p = f.method, f.statistic, float(f.df_num), f.estimate, \
                    f.pvalue

                def interval(level, _f=f_two):
                    return _f.confidence_interval(level)
    except (StatsError, ValueError) as err:
        dr = _degenerate("spread", "spread test", hyp, err)
        dr.family = True
        return dr
    res = CheckResult(
        check="spread", method=method, hypothesis=hyp, alternative="greater", margin=None,
        outcome="PASS", reason="", estimate=est, statistic=stat, df=df, p_value=p,
        design=design, extra=extra,
        power_note="no power figure: the spec declares no spread increase that must be seen",
    )
    found = {}

    def complete(eff_alpha, family_size):
        # two-sided (1 - 2 alpha) interval: its lower end is the one-sided bound at alpha
        level = 1 - 2 * eff_alpha
        ci = interval(level)
        found["ci"], found["level"] = (ci.low, ci.high), level
        out = dict(ci_low=ci.low, ci_high=_finite(ci.high), ci_level=level)
        if desc is not None:
            dci = desc.confidence_interval(level)
            out["extra"] = {**extra, "sd_ratio_low_descriptive": dci.low,
                            "sd_ratio_high_descriptive": _finite(dci.high)}
        return out

    def finish(p_adj, adjusted):
        return decide.SPREAD.decide(pvalue=p_adj, alpha=alpha, ratio=est, ci=found["ci"],
                                    level=found["level"], method=method, adjusted=adjusted,
                                    what=what, note=note)

    return _Draft(result=res, family_p=p, finish=finish, complete=complete, family=True)


def _draft_capability(spec: Spec, ch: Characteristic, d: _CharDraft) -> _Draft:
    if ch.distribution != "normal":
        return _draft_percentile_capability(ch, d)
    conf = ch.checks.capability
    lower, upper = ch.lower, ch.upper
    label, level = conf.label, conf.confidence
    judged = (f"the lower {decide.fmt(100 * level)}% confidence bound of the new process's "
              f"{label}" if conf.judge == "lower_bound" else f"the new process's {label}")
    hyp = f"{judged} for {ch.name} is at least {decide.fmt(conf.min)}"
    subgroups = None
    if conf.subgroup == "lot":
        subgroups = np.asarray(d.data.new_lots, dtype=object)
    try:
        r = cap.capability(d.data.new_parts, lower=lower, upper=upper, target=ch.target,
                           subgroups=subgroups)
        lb95 = r.cpk_lower_bound(0.95)
        bound = r.lower_bound(conf.index, level)
    except (StatsError, ValueError) as err:
        return _degenerate("capability", f"process capability ({label})", hyp, err)
    value = r.cpk if conf.index == "cpk" else r.ppk
    v = decide.CAPABILITY.decide(cpk=value, lower_bound=_finite(bound), min_cpk=conf.min,
                                 index=label, judge=conf.judge, confidence=level)
    bound_df = r.sigma_within_df if conf.index == "cpk" else float(r.n - 1)
    extra = {
        "cp": _finite(r.cp), "cpk": r.cpk, "cpl": _finite(r.cpl), "cpu": _finite(r.cpu),
        "pp": _finite(r.pp), "ppk": _finite(r.ppk), "cpm": _finite(r.cpm),
        "sigma_within": r.sigma_within, "sigma_overall": r.sigma_overall,
        "sigma_method": r.sigma_method, "mean": r.mean, "n": r.n,
        **({"min_cpk": conf.min} if conf.index == "cpk" else {}),
        "cpk_lower_95": _finite(lb95),
        "index": conf.index, "judge": conf.judge, "min": conf.min, "confidence": level,
        "lower_bound": _finite(bound), "bound_df": bound_df,
    }
    sigma = (f"Cpk ({r.sigma_method})" if conf.index == "cpk"
             else "Ppk (overall sample sd)")
    judge = ("its lower bound judged" if conf.judge == "lower_bound"
             else "the estimate judged")
    res = CheckResult(
        check="capability", method=f"{sigma}; {judge}", hypothesis=hyp,
        alternative=None, margin=None, outcome=v.outcome, reason=v.reason, estimate=value,
        ci_low=_finite(bound), ci_high=None, ci_level=level, extra=extra,
        power_note=(f"no power figure: capability compares {label} with min, not a test"
                    if conf.judge == "estimate" else
                    f"no power figure: the lower bound of {label} is compared with min"),
    )
    return _Draft(result=res)


def _no_fit(check: str, ch: Characteristic, d: _CharDraft, hyp: str) -> _Draft:
    return _degenerate(check, f"{ch.distribution} fit", hyp,
                       ValueError(f"the {ch.distribution} fit of the new parts: {d.fit_error}"))


def _draft_percentile_capability(ch: Characteristic, d: _CharDraft) -> _Draft:
    """Capability of a fitted non-normal model: the percentile method (ISO 22514-2), the
    percentile Ppk judged on its estimate against min."""
    conf = ch.checks.capability
    hyp = (f"the new process's percentile Ppk ({ch.distribution} fit) for {ch.name} is at "
           f"least {decide.fmt(conf.min)}")
    if d.fit is None:
        return _no_fit("capability", ch, d, hyp)
    f = d.fit
    pi = distributions.percentile_indices(f, lower=ch.lower, upper=ch.upper)
    below, above = distributions.expected_beyond(f, lower=ch.lower, upper=ch.upper)
    v = decide.CAPABILITY.decide(cpk=pi.ppk, lower_bound=None, min_cpk=conf.min,
                                 index=f"percentile Ppk ({ch.distribution})")
    extra = {
        "pp": _finite(pi.pp), "ppl": _finite(pi.ppl), "ppu": _finite(pi.ppu), "ppk": pi.ppk,
        "x_0_135": pi.x_low, "x_50": pi.x_mid, "x_99_865": pi.x_high,
        "distribution": ch.distribution, "fit": f.words,
        "expected_ppm_below": 1e6 * below, "expected_ppm_above": 1e6 * above,
        "index": "ppk", "judge": "estimate", "min": conf.min, "confidence": conf.confidence,
        "lower_bound": None, "n": f.n,
    }
    res = CheckResult(
        check="capability", method=f"percentile Ppk, {pi.method}; {ch.distribution} fit by "
        "maximum likelihood; the estimate judged", hypothesis=hyp, alternative=None,
        margin=None, outcome=v.outcome, reason=v.reason, estimate=pi.ppk, extra=extra,
        power_note="no power figure: capability compares the percentile Ppk with min, not a "
                   "test",
    )
    return _Draft(result=res)


def _draft_conformance(spec: Spec, ch: Characteristic, d: _CharDraft) -> _Draft:
    """The tolerance interval of the new parts against the limits (ISO 16269-6)."""
    conf = ch.checks.conformance
    side = conf.side
    share = (f"{decide.fmt(100 * conf.coverage)}% of the new parts of {ch.name}, with "
             f"{decide.fmt(100 * conf.confidence)}% confidence,")
    hyp = {"two-sided": f"{share} lie within the limits",
           "lower": f"{share} lie above the lower limit",
           "upper": f"{share} lie below the upper limit"}[side]
    lower = ch.lower if side in ("two-sided", "lower") else None
    upper = ch.upper if side in ("two-sided", "upper") else None
    dist = ch.distribution
    try:
        if dist == "normal":
            r = tolerance.normal_tolerance(d.data.new_parts, coverage=conf.coverage,
                                           confidence=conf.confidence, side=side)
        elif dist == "any":
            r = tolerance.order_tolerance(d.data.new_parts, coverage=conf.coverage,
                                          confidence=conf.confidence, side=side)
        elif d.fit is None:
            return _no_fit("conformance", ch, d, hyp)
        else:
            r = distributions.tolerance_limits(d.data.new_parts, d.fit, coverage=conf.coverage,
                                               confidence=conf.confidence, side=side)
    except NotApplicableError as err:
        if dist != "any":
            return _degenerate("conformance", "tolerance interval", hyp, err)
        # distribution-free limits need a minimum number of parts: more parts may come
        # (PENDING), unless the run is final (HOLD)
        need = tolerance.order_sample_size(conf.coverage, conf.confidence, side)
        res = CheckResult(
            check="conformance", method=tolerance.METHOD_ORDER, hypothesis=hyp,
            alternative=None, margin=None, outcome="HOLD" if d.final else "PENDING",
            reason=f"too few parts for distribution-free limits: {err}",
            extra={"coverage": conf.coverage, "coverage_confidence": conf.confidence,
                   "side": side, "n": int(d.data.new_parts.size), "n_required": need,
                   "distribution": dist})
        return _Draft(result=res)
    except (StatsError, ValueError) as err:
        return _degenerate("conformance", "tolerance interval", hyp, err)
    v = decide.CONFORMANCE.decide(low=r.low, high=r.high, lower=lower, upper=upper,
                                  coverage=r.coverage, confidence=r.confidence, k=r.k,
                                  unit=ch.unit)
    extra = {"coverage": r.coverage, "coverage_confidence": r.confidence, "k": r.k,
             "side": side, "n": r.n, "mean": r.mean, "sd_parts": r.sd, "distribution": dist,
             "within_limits": int(v.outcome == "PASS")}
    if d.fit is not None:
        extra["fit"] = d.fit.words
        if d.fit.name == "box-cox":
            extra["box_cox_lambda"] = d.fit.param("lambda")
    if dist == "any":
        extra["n_required"] = tolerance.order_sample_size(r.coverage, r.confidence, side)
    res = CheckResult(
        check="conformance", method=r.method, hypothesis=hyp, alternative=None, margin=None,
        # the estimate is the mean of the parts in their own unit (for a fitted model the
        # interval is built on the transformed scale, whose mean and sd are in extra)
        outcome=v.outcome, reason=v.reason, estimate=float(np.mean(d.data.new_parts)),
        ci_low=_finite(r.low),
        ci_high=_finite(r.high), ci_level=r.confidence, extra=extra,
        power_note="no power figure: verify plan gives the n a process needs to pass",
    )
    # the data show harm (not merely too few parts) when the mean itself is beyond a limit
    harm = ((lower is not None and r.mean < lower) or (upper is not None and r.mean > upper))
    return _Draft(result=res, harm_shown=v.outcome == "HOLD" and harm)


# --- diagnostics --------------------------------------------------------------------------------


def _lot_count_words(n_lots: int, n_values: int) -> str:
    if n_values == 0:
        return "no values measured"
    if n_lots < 3:
        lots = "1 lot" if n_lots == 1 else f"{n_lots} lots"
        return f"only {lots}: lot-to-lot variation is barely represented"
    return f"{n_lots} lots"


def _diag_na(name, method, group, err) -> DiagnosticResult:
    return DiagnosticResult(name=name, method=method, group=group, flag=False,
                            note=f"not applicable: {err}")


def _diagnostics(spec: Spec, ch: Characteristic, d: _CharDraft) -> list[DiagnosticResult]:
    alpha = spec.alpha
    out: list[DiagnosticResult] = []
    groups = []
    if d.data.pairs is not None:
        pv = d.data.pairs
        groups.append(("differences", pv.new - pv.old))
    else:
        if d.data.old is not None:
            groups.append(("old", d.data.old))
        groups.append(("new", d.data.new))
    for group, x in groups:
        try:
            sw = diag.shapiro_wilk(x)
            flag = sw.pvalue < alpha
            out.append(DiagnosticResult(
                "normality", sw.method, group, flag,
                (f"{group} values depart from a normal distribution ({decide.p_eq(sw.pvalue)})"
                 "; compare with the rank-test companion" if flag else
                 f"no departure from normality detected ({decide.p_eq(sw.pvalue)})"),
                statistic=sw.statistic, p_value=sw.pvalue))
        except StatsError as err:
            out.append(_diag_na("normality", "Shapiro-Wilk", group, err))
        sw_applies = out[-1].p_value is not None
        try:
            ad = diag.anderson_darling(x)
            # a companion to Shapiro-Wilk: it flags only where Shapiro-Wilk does not apply
            out.append(DiagnosticResult(
                "normality", ad.method, group, ad.pvalue < alpha and not sw_applies,
                f"Anderson-Darling {decide.p_eq(ad.pvalue)}",
                statistic=ad.statistic, p_value=ad.pvalue))
        except StatsError as err:
            out.append(_diag_na("normality", "Anderson-Darling", group, err))
    part_groups = [("new", d.data.new_parts, d.data.new_lots)]
    if d.data.old_parts is not None:
        part_groups.insert(0, ("old", d.data.old_parts, d.data.old_lots))
    for group, x, lots in part_groups:
        try:
            g = diag.grubbs(x, alternative="two-sided")
            flag = g.pvalue < alpha
            lot = lots[g.index] if g.index < len(lots) else "?"
            out.append(DiagnosticResult(
                "outliers", g.method, group, flag,
                (f"possible outlier {decide.fmt(g.value)} in lot {lot} "
                 f"(G = {decide.fmt(g.statistic)}, {decide.p_eq(g.pvalue)}); "
                 "not removed: check the part and the record"
                 if flag else f"no outlier detected (G = {decide.fmt(g.statistic)}, "
                 f"Bonferroni bound {decide.p_eq(g.pvalue)})"),
                statistic=g.statistic, p_value=g.pvalue,
                extra={"value": g.value, "lot": str(lot)}))
        except StatsError as err:
            out.append(_diag_na("outliers", "Grubbs", group, err))
        n_lots = len(set(lots))
        out.append(DiagnosticResult(
            "lot count", "count of lots", group, n_lots < 3,
            _lot_count_words(n_lots, x.size), statistic=float(n_lots)))
        if spec.unit_of_analysis == "part":
            try:
                le = diag.lot_effect(x, np.asarray(lots, dtype=object))
                flag = le.pvalue < alpha
                out.append(DiagnosticResult(
                    "lot effect", le.method, group, flag,
                    (f"lots differ ({decide.p_eq(le.pvalue)}, intraclass correlation "
                     f"{decide.fmt(le.icc, 3)}): parts of one lot are not independent; "
                     "unit_of_analysis: lot would be the safer analysis" if flag else
                     f"no lot effect detected ({decide.p_eq(le.pvalue)})"),
                    statistic=le.statistic, p_value=le.pvalue,
                    extra={"icc": le.icc, "n_lots": le.n_lots}))
            except StatsError as err:
                out.append(_diag_na("lot effect", "one-way ANOVA across lots", group, err))
        try:
            st = diag.individuals_chart(x)
            flag = bool(st.beyond) or st.longest_run >= RUN_LENGTH_FLAG
            parts = []
            if st.beyond:
                parts.append(f"{len(st.beyond)} point(s) beyond the control-chart limits")
            if st.longest_run >= RUN_LENGTH_FLAG:
                parts.append(f"a run of {st.longest_run} on one side of the centre line")
            out.append(DiagnosticResult(
                "stability", "individuals chart (moving-range limits)", group, flag,
                ("not stable: " + ", ".join(parts)) if flag else
                f"in control (longest run {st.longest_run})",
                statistic=float(len(st.beyond)),
                extra={"centre": st.centre, "lcl": st.lcl, "ucl": st.ucl,
                       "longest_run": st.longest_run}))
        except StatsError as err:
            out.append(_diag_na("stability", "individuals chart", group, err))
    try:
        allv = d.data.new_parts if d.data.old_parts is None else np.concatenate(
            [d.data.old_parts, d.data.new_parts])
        tol = (ch.upper - ch.lower) if (ch.lower is not None and ch.upper is not None) else None
        rs = diag.resolution(allv, tolerance=tol)
        coarse = rs.step_over_tenth_tolerance is not None and rs.step_over_tenth_tolerance > 1.0
        out.append(DiagnosticResult(
            "resolution", "measurement resolution", "all", coarse,
            (f"coarse: the smallest step {decide.fmt(rs.step)} exceeds a tenth of the tolerance"
             if coarse else f"{rs.distinct} distinct values, smallest step {decide.fmt(rs.step)}"),
            statistic=_finite(rs.step),
            extra={"distinct": rs.distinct, "step_over_tenth_tolerance":
                   _finite(rs.step_over_tenth_tolerance)}))
    except StatsError as err:
        out.append(_diag_na("resolution", "measurement resolution", "all", err))
    if len(d.streams) >= 2:
        out.append(_stream_effect(d, alpha))
    if d.fit is not None:
        f = d.fit
        bad = f.gof_pvalue < alpha
        out.append(DiagnosticResult(
            "distribution fit", f.gof_method, "new", bad,
            (f"the declared {f.name} model does not fit the new parts: {f.words}" if bad
             else f"fitted {f.words}"),
            statistic=f.gof_statistic, p_value=f.gof_pvalue,
            extra={k: v for k, v in f.parameters}))
    elif d.fit_error is not None:
        out.append(_diag_na("distribution fit", f"{ch.distribution} fit", "new", d.fit_error))
    out.extend(_companions(spec, ch, d))
    return out


def _companions(spec: Spec, ch: Characteristic, d: _CharDraft) -> list[DiagnosticResult]:
    """Rank-test companions of the t-tests, for sensitivity; flagged when they disagree."""
    alpha = spec.alpha
    out = []
    drafts = {dr.result.check: dr for dr in d.checks}
    for check in ("target", "shift"):
        dr = drafts.get(check)
        if dr is None or dr.result.p_value is None:
            continue
        res = dr.result
        alt = res.alternative if res.margin is None else "two-sided"
        try:
            if check == "target":
                rt = nonparametric.wilcoxon_signed_rank(d.data.new - ch.target, alternative=alt)
                group = "new"
            elif d.data.pairs is not None:
                pv = d.data.pairs
                rt = nonparametric.wilcoxon_signed_rank(pv.new - pv.old, alternative=alt)
                group = "differences"
            else:
                if d.data.old is None:
                    continue
                rt = nonparametric.mann_whitney(d.data.old, d.data.new, alternative=alt)
                group = "old vs new"
        except (StatsError, ValueError) as err:
            out.append(_diag_na("rank companion", f"rank test for the {check}", check, err))
            continue
        disagree = False
        if res.margin is None:
            disagree = (rt.pvalue < alpha) != (res.p_value < alpha)
        ties = f", {rt.n_zero} zero difference(s)" if getattr(rt, "n_zero", 0) else ""
        out.append(DiagnosticResult(
            "rank companion", rt.method, group, disagree,
            (f"{check}: the rank test disagrees with the t-test ({decide.p_eq(rt.pvalue)})"
             if disagree else f"{check}: rank test {decide.p_eq(rt.pvalue)}{ties}"),
            statistic=rt.statistic, p_value=rt.pvalue))
    dr = drafts.get("spread")
    # a companion for the two-sample tests only: not for pairs, nor for within-lot variances
    usable = (d.data.spread_pairs is None and spec.unit_of_analysis != "lot"
              and d.data.old is not None)
    if dr is not None and usable and dr.result.p_value is not None:
        try:
            other_bf = ch.checks.spread.method != "brown-forsythe"
            o = (spread.brown_forsythe(d.data.old, d.data.new, alternative="greater") if other_bf
                 else spread.f_test(d.data.old, d.data.new, alternative="greater"))
            disagree = (o.pvalue < alpha) != (dr.result.p_value < alpha)
            out.append(DiagnosticResult(
                "spread companion", o.method, "old vs new", disagree,
                (f"the {o.method} disagrees with the deciding spread test "
                 f"({decide.p_eq(o.pvalue)})" if disagree else
                 f"{o.method} {decide.p_eq(o.pvalue)}"),
                statistic=o.statistic, p_value=o.pvalue))
        except StatsError as err:
            out.append(_diag_na("spread companion", "spread companion", "old vs new", err))
    return out


# --- planning figures, multiplicity and finishing -------------------------------------------


def _plan_all(drafts: list[_CharDraft]) -> None:
    """The TOST power and planned n of every check at once: one vectorised integration for
    all characteristics costs far less than one per check (results are the same as
    power.power_tost and power.sample_size_tost one at a time)."""
    from dataclasses import replace

    asked = [dr for d in drafts for dr in d.checks if dr.tost_plan is not None]
    if not asked:
        return
    answers = power.plan_tost_many([dr.tost_plan for dr in asked])
    for dr, (pw, size) in zip(asked, answers, strict=True):
        dr.result = replace(dr.result, power=_finite(pw),
                            planned_n=size.n_new if size is not None else None)
        dr.tost_plan = None


def _adjust(drafts: list[_CharDraft], method: str, alpha: float
            ) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Form the multiplicity family, complete its checks at the level it implies, adjust its
    p-values and decide them. Returns the family's and the left-out checks' names.

    The family is every computed check that HOLDs on significance (difference tests and spread
    tests) across characteristics; a check that cannot be computed is left out of it and counts
    nowhere (not in the adjustment, not in alpha / m).
    """
    from dataclasses import replace

    def every(d):
        # the characteristic's own checks, then each stream's, with the name the family lists
        yield from ((d.ch.name, dr) for dr in d.checks)
        for st in d.streams:
            yield from ((f"{d.ch.name} [stream {st.name}]", dr) for dr in st.checks)

    family = [(label, dr) for d in drafts for label, dr in every(d) if dr.finish is not None]
    excluded = tuple(f"{label}: {dr.result.check}" for d in drafts for label, dr in every(d)
                     if dr.family and dr.finish is None)
    names = tuple(f"{label}: {dr.result.check}" for label, dr in family)
    if not family:
        return names, excluded
    adjusted = method != "none"
    m = len(family)
    eff_alpha = alpha / m if adjusted else alpha
    for _, dr in family:
        dr.result = replace(dr.result, **dr.complete(eff_alpha, m))
    ps = np.array([dr.family_p for _, dr in family])
    adj = multiplicity.adjust(ps, method) if adjusted else ps
    for (_, dr), pa in zip(family, adj, strict=True):
        v = dr.finish(float(pa), adjusted)
        dr.harm_shown = v.outcome == "HOLD"
        dr.result = replace(dr.result, outcome=v.outcome, reason=v.reason,
                            p_adjusted=float(pa) if adjusted else None)
        dr.finish = None
    return names, excluded


def _beyond_words(ch: Characteristic, b: BeyondLimits) -> str:
    """ "2 parts beyond the specification limits (1 below 11.975, 1 above 12.025); ..." """
    sides = []
    if b.below:
        sides.append(f"{b.below} below {decide.fmt(ch.lower, 6)}")
    if b.above:
        sides.append(f"{b.above} above {decide.fmt(ch.upper, 6)}")
    part = "part" if b.total == 1 else "parts"
    text = f"{b.total} {part} beyond the specification limits ({', '.join(sides)} {ch.unit})"
    if b.expected_ppm is not None:
        text += f"; a normal model expects {decide.fmt(b.expected_ppm, 3)} ppm beyond them"
    return text


def _finish(spec: Spec, d: _CharDraft) -> CharacteristicResult:
    from dataclasses import replace

    checks = []
    so_far = []
    for dr in d.checks:
        res = dr.result
        if d.shortfall is not None:
            so_far.append(f"{res.check} so far: {res.reason}")
            v = decide.while_pending(decide.Verdict(res.outcome, res.reason),
                                     harm_shown=dr.harm_shown, shortfall=d.shortfall)
            res = replace(res, outcome=v.outcome, reason=v.reason)
        checks.append(res)
    if d.shortfall is not None and not checks:
        checks.append(CheckResult(check="sufficiency", method="count against min_n",
                                  hypothesis="the planned sample size is reached",
                                  alternative=None, margin=None, outcome="PENDING",
                                  reason=d.shortfall))
    review = []
    for dg in d.diagnostics:
        if dg.flag:
            review.append(f"review: {d.ch.name} ({dg.group}): {dg.note}")
    beyond = d.processes["new"].beyond_limits if "new" in d.processes else None
    if beyond is not None and beyond.total:
        review.append(f"review: {d.ch.name} (new): {_beyond_words(d.ch, beyond)}")
    for res in checks:
        if (res.outcome == "PASS" and res.planned_n is not None and res.extra
                and res.extra.get("n_new") is not None and res.extra["n_new"] < res.planned_n):
            review.append(
                f"review: {d.ch.name}: the {res.check} PASS rests on n = {res.extra['n_new']} "
                f"per process, fewer than the {res.planned_n} the plan's power of "
                f"{spec.plan.power:g} asks for")
        if (res.check == "capability" and res.outcome == "PASS"
                and res.extra.get("judge") == "estimate"):
            lb = res.extra.get("lower_bound")
            if lb is not None and lb < res.extra["min"]:
                name = "Cpk" if res.extra.get("index") == "cpk" else "Ppk"
                review.append(
                    f"review: {d.ch.name}: {name} meets {decide.fmt(res.extra['min'])} but its "
                    f"lower {decide.fmt(100 * res.extra['confidence'])}% bound "
                    f"{decide.fmt(lb, 3)} does not")
    if d.final_shortfall is not None:
        review.append(f"review: {d.ch.name}: final run with the plan cut short "
                      f"({d.final_shortfall})")
    if spec.min_n is None and d.counts:
        smallest = min(d.counts.values())
        review.append(f"review: {d.ch.name}: no planned sample size (min_n) declared; the "
                      f"decision rests on n = {smallest}")
    if d.unmatched:
        review.append(f"review: {d.ch.name}: {len(d.unmatched)} pair key(s) with one side only "
                      f"left out of the paired analysis: {', '.join(map(str, d.unmatched[:10]))}")
    streams = tuple(_finish_stream(d, st) for st in d.streams)
    outcome = decide.combine([*(c.outcome for c in checks), *(st.decision for st in streams)])
    if outcome == "PENDING" and d.shortfall is not None:
        reasons = (d.shortfall, *so_far)
    else:
        own = tuple(f"{c.check}: {c.reason}" for c in checks if c.outcome == outcome)
        named = tuple(f"stream {st.name}: {c.check}: {c.reason}" for st in streams
                      for c in st.checks if c.outcome == outcome)
        # a HOLD or PENDING stream leads the reasons, named: a bad cavity must not hide in the
        # pooled data; a PASS lists the characteristic's own checks first
        reasons = own + named if outcome == "PASS" else named + own
        reasons = reasons or ("no checks",)
    return CharacteristicResult(
        name=d.ch.name, unit=d.ch.unit, decision=outcome, reasons=reasons,
        review=tuple(review), processes=d.processes, checks=tuple(checks),
        diagnostics=tuple(d.diagnostics), spec=d.ch, pairs=d.pairs, unmatched_pairs=d.unmatched,
        distribution=_distribution_record(d), streams=streams,
    )


def _finish_stream(d: _CharDraft, st: _StreamDraft) -> StreamResult:
    from dataclasses import replace

    checks = []
    for dr in st.checks:
        res = dr.result
        if d.shortfall is not None:
            v = decide.while_pending(decide.Verdict(res.outcome, res.reason),
                                     harm_shown=dr.harm_shown, shortfall=d.shortfall)
            res = replace(res, outcome=v.outcome, reason=v.reason)
        checks.append(res)
    n = int(st.values.size)
    mean = sd = None
    if n:
        _, mean, s = mean_sd(st.values)
        sd = s if n >= 2 else None
    return StreamResult(name=st.name, n=n, mean=mean, sd=sd,
                        decision=decide.combine(c.outcome for c in checks),
                        checks=tuple(checks))


def _stream_effect(d: _CharDraft, alpha: float) -> DiagnosticResult:
    """Do the new streams differ among themselves? One-way ANOVA across the streams, with the
    stream furthest from the pooled new mean named."""
    values = np.concatenate([st.values for st in d.streams])
    labels = np.concatenate([np.full(st.values.size, st.name, dtype=object)
                             for st in d.streams])
    try:
        r = diag.lot_effect(values, labels)
    except StatsError as err:
        return _diag_na("stream effect", "one-way ANOVA across the new streams", "new", err)
    centre = float(np.mean(values))
    far = max((st for st in d.streams if st.values.size),
              key=lambda st: abs(float(np.mean(st.values)) - centre))
    flag = r.pvalue < alpha
    note = (f"the new streams differ ({decide.p_eq(r.pvalue)}); furthest from the pooled new "
            f"mean: stream {far.name} (mean {decide.fmt(float(np.mean(far.values)))})" if flag
            else f"no difference between the new streams detected ({decide.p_eq(r.pvalue)})")
    return DiagnosticResult("stream effect", "one-way ANOVA across the new streams", "new",
                            flag, note, statistic=r.statistic, p_value=r.pvalue,
                            extra={"streams": len(d.streams), "furthest": far.name})


def _distribution_record(d: _CharDraft) -> dict:
    if d.fit is not None:
        f = d.fit
        return {"name": f.name, "parameters": dict(f.parameters), "loglik": f.loglik,
                "gof_method": f.gof_method, "gof_statistic": f.gof_statistic,
                "gof_pvalue": f.gof_pvalue}
    out: dict = {"name": d.ch.distribution}
    if d.fit_error is not None:
        out["error"] = d.fit_error
    return out
