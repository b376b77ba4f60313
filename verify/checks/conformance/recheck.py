"""The conformance check's recheck rows: tolerance limits rebuilt from the new parts.

The limits are mean -/+ k sd of the new parts (normal), of their logarithms or Box-Cox
transforms transformed back (lognormal, Box-Cox fits), or their smallest and largest value
(``distribution: any``), following the ``distribution`` the result records; Weibull limits come
from a seeded simulation and are not rebuilt.
"""

from __future__ import annotations

from verify.model import CharacteristicResult, CheckResult
from verify.report.layout import VALUE_COLUMN
from verify.report.recheck_blocks import prepare_samples, why_no_block
from verify.report.recheck_lookup import used_block
from verify.report.recheck_sheet import Sheet, Subject

from .result import ConformanceDetails

__all__ = ["prepare", "recheck"]

# the samples of both processes, written once per characteristic before its checks
prepare = prepare_samples


def recheck(sh: Sheet, on: Subject, check: CheckResult) -> None:
    """Append the rows that rebuild the conformance check from the used values (see
    :func:`verify.checks.location.recheck.recheck` for the parameters)."""
    _conformance(sh, on.evaluation, on.layout, on.result, check, check.details)


def _conformance(sh: Sheet, ev, layout, c: CharacteristicResult, ch: CheckResult,
                 d: ConformanceDetails) -> None:
    """Tolerance limits mean -/+ k sd rebuilt from the new parts; the factor k is given as a
    value with its method (no spreadsheet function computes the noncentral t quantile or the
    Odeh/Owen integral)."""
    block = used_block(sh, ev, layout, c.name, "new")  # sort-proof when the table allows
    if block is None:
        sh.unavailable("conformance", why_no_block(layout, c.name, "new"))
        return
    dist = d.distribution
    if dist == "weibull" or (dist != "normal" and d.k is None and dist != "any"):
        sh.unavailable("tolerance limits", "Weibull limits come from pivots taken from a "
                       "seeded simulation, which the spreadsheet cannot redo")
        return
    if d.k is None:
        sh.unavailable("tolerance factor", "distribution-free limits: the smallest and the "
                       "largest used value are the limits (MIN and MAX below)")
        ref = block.ref(VALUE_COLUMN)
        if ch.ci_low is not None:
            sh.qty("lower tolerance limit", f"MIN({ref})", ch.ci_low, "MIN of the new parts")
        if ch.ci_high is not None:
            sh.qty("upper tolerance limit", f"MAX({ref})", ch.ci_high, "MAX of the new parts")
        return
    ref = block.ref(VALUE_COLUMN)
    sh.qty("new: n (parts)", f"COUNT({ref})", d.n, "COUNT of the new parts")
    back = "{}"
    if dist == "normal":
        m = sh.qty("new: mean (parts)", f"AVERAGE({ref})", d.mean, "AVERAGE")
        sd = sh.qty("new: sd (parts)", f"_xlfn.STDEV.S({ref})", d.sd_parts,
                    "STDEV.S")
    else:
        # LN or a power of a whole range inside SUMPRODUCT is not evaluated as an array by
        # every spreadsheet (gnumeric gives #VALUE!): the lognormal mean is rebuilt as
        # LN(GEOMEAN), the transformed sd is given as the engine's value
        if dist == "lognormal":
            back = "EXP({})"
            m = sh.qty("new: mean of ln x", f"LN(GEOMEAN({ref}))", d.mean,
                       "LN(GEOMEAN(x)) = mean of ln x")
        else:
            lam_value = d.box_cox_lambda
            if lam_value is None:
                sh.unavailable("tolerance limits", "the Box-Cox lambda is not recorded")
                return
            lam = sh.param("Box-Cox lambda", lam_value, "as estimated by the engine")
            back = f"({lam}*{{}}+1)^(1/{lam})"
            m = sh.param("new: mean of the transformed values", float(d.mean),
                         "the engine's value, (x^lambda - 1) / lambda averaged")
        sd = sh.param("new: sd of the transformed values", float(d.sd_parts),
                      "the engine's value (n - 1 divisor)")
    k = sh.param("tolerance factor k", float(d.k),
                 f"{ch.method}; coverage {d.coverage}, confidence "
                 f"{d.coverage_confidence}, n as above (a value: the spreadsheet "
                 "has no function for it)")
    checks = []
    if ch.ci_low is not None:
        lo = sh.qty("lower tolerance limit", back.format(f"({m}-{k}*{sd})"), ch.ci_low,
                    "mean - k sd" + ("" if dist == "normal" else ", transformed back"))
        if c.spec.lower is not None:
            lsl = sh.param("lower limit", c.spec.lower, "the spec's")
            checks.append(f"{lo}>={lsl}")
    if ch.ci_high is not None:
        hi = sh.qty("upper tolerance limit", back.format(f"({m}+{k}*{sd})"), ch.ci_high,
                    "mean + k sd" + ("" if dist == "normal" else ", transformed back"))
        if c.spec.upper is not None:
            usl = sh.param("upper limit", c.spec.upper, "the spec's")
            checks.append(f"{hi}<={usl}")
    if checks:
        sh.qty("within the limits (1 = yes)", f"IF(AND({','.join(checks)}),1,0)",
               d.within_limits, "AND of the comparisons with the limits")

