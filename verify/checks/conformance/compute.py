"""The conformance check's computation: the tolerance interval of the candidate stream's parts
against the limits (ISO 16269-6), calling :mod:`verify.stats` only: exact normal factors,
distribution-free order statistics, or the limits of a fitted non-normal model.
"""

from __future__ import annotations

import numpy as np

from ...decide import fmt
from ...model import CheckResult
from ...stats import distributions, tolerance
from ...stats.errors import NotApplicableError
from ..drafting import CANNOT_COMPUTE, CheckInput, Draft, cannot_compute, finite, no_fit
from .result import ConformanceDetails, ShortConformanceDetails
from .rule import CONFORMANCE

PER_STREAM = False  # judged on the whole new process, not per data.stream sub-stream


def draft(kind, inp: CheckInput) -> Draft:
    """The conformance check of one characteristic."""
    ch = inp.ch
    conf = inp.config(kind.name)
    parts = inp.data.candidate.parts
    side = conf.side
    share = (f"{fmt(100 * conf.coverage)}% of the new parts of {ch.name}, with "
             f"{fmt(100 * conf.confidence)}% confidence,")
    hyp = {"two-sided": f"{share} lie within the limits",
           "lower": f"{share} lie above the lower limit",
           "upper": f"{share} lie below the upper limit"}[side]
    lower = ch.lower if side in ("two-sided", "lower") else None
    upper = ch.upper if side in ("two-sided", "upper") else None
    dist = ch.distribution
    try:
        if dist == "normal":
            r = tolerance.normal_tolerance(parts, coverage=conf.coverage,
                                           confidence=conf.confidence, side=side)
        elif dist == "any":
            r = tolerance.order_tolerance(parts, coverage=conf.coverage,
                                          confidence=conf.confidence, side=side)
        elif inp.fit is None:
            return no_fit(kind.name, inp, hyp)
        else:
            r = distributions.tolerance_limits(parts, inp.fit, coverage=conf.coverage,
                                               confidence=conf.confidence, side=side)
    except NotApplicableError as err:
        if dist != "any":
            return cannot_compute(kind.name, "tolerance interval", hyp, err)
        # distribution-free limits need a minimum number of parts: more parts may come
        # (PENDING), unless the run is final (HOLD)
        need = tolerance.order_sample_size(conf.coverage, conf.confidence, side)
        res = CheckResult(
            check=kind.name, method=tolerance.METHOD_ORDER, hypothesis=hyp,
            alternative=None, margin=None, outcome="HOLD" if inp.final else "PENDING",
            reason=f"too few parts for distribution-free limits: {err}",
            details=ShortConformanceDetails(
                coverage=conf.coverage, coverage_confidence=conf.confidence, side=side,
                n=int(parts.size), n_required=need, distribution=dist))
        return Draft(result=res)
    except CANNOT_COMPUTE as err:
        return cannot_compute(kind.name, "tolerance interval", hyp, err)
    v = CONFORMANCE.decide(low=r.low, high=r.high, lower=lower, upper=upper,
                           coverage=r.coverage, confidence=r.confidence, k=r.k, unit=ch.unit)
    fit = inp.fit
    details = ConformanceDetails(
        coverage=r.coverage, coverage_confidence=r.confidence, k=r.k, side=side, n=r.n,
        mean=r.mean, sd_parts=r.sd, distribution=dist, within_limits=int(v.outcome == "PASS"),
        fit=fit.words if fit is not None else None,
        box_cox_lambda=fit.param("lambda") if fit is not None and fit.name == "box-cox"
        else None,
        n_required=(tolerance.order_sample_size(r.coverage, r.confidence, side)
                    if dist == "any" else None))
    res = CheckResult(
        check=kind.name, method=r.method, hypothesis=hyp, alternative=None, margin=None,
        # the estimate is the mean of the parts in their own unit (for a fitted model the
        # interval is built on the transformed scale, whose mean and sd are in the details)
        outcome=v.outcome, reason=v.reason, estimate=float(np.mean(parts)),
        ci_low=finite(r.low), ci_high=finite(r.high), ci_level=r.confidence, details=details,
        power_note="no power figure: verify plan gives the n a process needs to pass",
    )
    # the data show harm (not merely too few parts) when the mean itself is beyond a limit
    harm = ((lower is not None and r.mean < lower) or (upper is not None and r.mean > upper))
    return Draft(result=res, harm_shown=v.outcome == "HOLD" and harm)
