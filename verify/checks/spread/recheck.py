"""The spread check's recheck rows: the F-test, Brown-Forsythe, Pitman-Morgan, within-lot F.

The formulas follow the type of the result's details: ``PairedSpreadDetails`` (Pitman-Morgan
on the matched pairs), ``LotSpreadDetails`` (the pooled within-lot variances compared by F,
with ``unit_of_analysis: lot``), else the two samples: the F-test, or with the spec's
``method: brown-forsythe`` the Brown-Forsythe test deciding and the F-test beside it as a
descriptive figure.
"""

from __future__ import annotations

from verify.checks.spread.result import (
    LotSpreadDetails,
    PairedSpreadDetails,
    TwoSampleSpreadDetails,
)
from verify.model import CharacteristicResult, CheckResult
from verify.report.formulas import HOW_P, HOW_Q, abs_diff, f_p_side, p_side, t_quantile
from verify.report.recheck_blocks import (
    Sample,
    matched_sample,
    pairs,
    prepare_samples,
    samples_of,
)
from verify.report.recheck_sheet import Sheet, Subject, as_number
from verify.report.recheck_within import lot_components

__all__ = ["prepare", "recheck"]

BROWN_FORSYTHE = "brown-forsythe"  # the spec's method that makes Brown-Forsythe decide

# the samples of both processes, written once per characteristic before its checks
prepare = prepare_samples


def recheck(sh: Sheet, on: Subject, check: CheckResult) -> None:
    """Append the rows that rebuild the spread check from the used values (see
    :func:`verify.checks.location.recheck.recheck` for the parameters)."""
    d = check.details
    if isinstance(d, PairedSpreadDetails):
        _pitman_morgan(sh, on.evaluation, on.layout, on.result, check, d)
    elif isinstance(d, LotSpreadDetails):
        _within_lot_spread(sh, on.layout, on.result, check, d)
    else:
        _spread(sh, on, check, d)


def _spread(sh: Sheet, on: Subject, ch: CheckResult, d: TwoSampleSpreadDetails | None
            ) -> None:
    """The F-test (or Brown-Forsythe beside it) on the two samples, or on the matched pairs
    when the characteristic's checks run on pairs and the spread check was not declared
    independent."""
    ev, layout, c, samples = on.evaluation, on.layout, on.result, samples_of(on)
    sp = c.spec.checks.spread
    opted_out = sp is not None and sp.design == "independent" and sp.design_given
    if c.pairs is not None and not opted_out:
        # the characteristic's values are matched pairs (a check runs on them) and the spread
        # check did not knowingly ignore them: an F-test on paired data runs on the pairs only
        pr = pairs(sh, ev, layout, c, None)
        if pr is None:
            return
        o, n = (matched_sample(sh, pr, p) for p in ("old", "new"))
    else:
        o, n = samples.get("old"), samples.get("new")
    if o is None or n is None:
        sh.unavailable("spread check", "the values of both processes are needed above")
        return
    brown = sp is not None and sp.method == BROWN_FORSYTHE
    f = sh.qty(
        "F ratio (variance new / variance old)",
        f"{n.sd}^2/{o.sd}^2",
        (None if brown else ch.statistic) if d is None else d.F,
        "sd_new^2 / sd_old^2",
    )
    d1 = sh.qty("df, numerator", f"{n.n}-1", None if d is None else d.df_num, "n_new - 1")
    d2 = sh.qty("df, denominator", f"{o.n}-1", None if d is None else d.df_den, "n_old - 1")
    _f_rows(sh, ch, f, d1, d2, descriptive=d if brown else None)
    if brown:
        _brown_forsythe(sh, ch, o, n)


def _f_rows(sh: Sheet, ch: CheckResult, f: str, d1: str, d2: str, *,
            descriptive: TwoSampleSpreadDetails | None, label: str = "sd ratio") -> None:
    """The sd ratio, the F-test's p-value and its interval from the F cell and its df cells.

    ``descriptive``: the details of a Brown-Forsythe decision, beside which the F-test stands;
    its ratio and interval are compared with the engine's descriptive figures and its p-value
    is not the check's (None: the F-test decides).
    """
    ratio = descriptive.sd_ratio_descriptive if descriptive else ch.estimate
    sh.qty(f"{label} (new / old)", f"SQRT({f})", ratio, "SQRT(F)")
    if not descriptive:
        alt = ch.alternative or "greater"
        sh.family_member(sh.qty(
            f"p (F-test, {alt})", f_p_side(f, d1, d2, alt), ch.p_value,
            "F.DIST.RT / F.DIST (integer df)"))
    if ch.ci_level is None:
        return
    low = descriptive.sd_ratio_low_descriptive if descriptive else ch.ci_low
    high = descriptive.sd_ratio_high_descriptive if descriptive else ch.ci_high
    what = " (descriptive)" if descriptive else ""
    level = sh.param("confidence level", ch.ci_level, "the level the engine reports")
    if as_number(high) is not None:
        sh.qty(
            f"{label} interval{what}: low",
            f"SQRT({f}/_xlfn.F.INV.RT((1-{level})/2,{d1},{d2}))",
            low,
            "SQRT(F / F.INV.RT((1 - level)/2))",
        )
        sh.qty(
            f"{label} interval{what}: high",
            f"SQRT({f}/_xlfn.F.INV((1-{level})/2,{d1},{d2}))",
            high,
            "SQRT(F / F.INV((1 - level)/2))",
        )
    else:
        sh.qty(
            f"{label} lower bound{what}",
            f"SQRT({f}/_xlfn.F.INV.RT(1-{level},{d1},{d2}))",
            low,
            "SQRT(F / F.INV.RT(1 - level))",
        )


def _within_lot_spread(sh: Sheet, layout, c: CharacteristicResult, ch: CheckResult,
                       d: LotSpreadDetails) -> None:
    """unit_of_analysis lot: the pooled within-lot variances, compared by F."""
    old = lot_components(sh, layout, c, "old")
    new = lot_components(sh, layout, c, "new")
    if old is None or new is None:
        return
    f = sh.qty("F ratio (pooled within-lot variance new / old)", f"{new[1]}/{old[1]}",
               d.F, "MS_within new / MS_within old")
    sh.qty("df, numerator", new[0], d.df_num, "new: sum(n_i - 1)")
    sh.qty("df, denominator", old[0], d.df_den, "old: sum(n_i - 1)")
    _f_rows(sh, ch, f, new[0], old[0], descriptive=None, label="within-lot sd ratio")


def _brown_forsythe(sh: Sheet, ch: CheckResult, o: Sample, n: Sample) -> None:
    cells = {}
    for s in (o, n):
        med = sh.qty(f"{s.process}: median", f"MEDIAN({s.ref})", None, "MEDIAN")
        mad = sh.qty(
            f"{s.process}: mean absolute deviation from the median",
            f"SUMPRODUCT({abs_diff(s.ref, med)})/{s.n}",
            None,
            "SUMPRODUCT(ABS(value - median)) / n",
        )
        ss = sh.qty(
            f"{s.process}: sum of squares of the absolute deviations",
            f"SUMPRODUCT(({abs_diff(s.ref, med)}-{mad})^2)",
            None,
            "SUMPRODUCT((|value - median| - mean)^2)",
        )
        cells[s.process] = (mad, ss)
    (mo, so), (mn, sn) = cells["old"], cells["new"]
    df = sh.qty("Brown-Forsythe df", f"{n.n}+{o.n}-2", None, "n_new + n_old - 2")
    se = sh.qty(
        "Brown-Forsythe standard error",
        f"SQRT(({so}+{sn})/{df}*(1/{n.n}+1/{o.n}))",
        None,
        "pooled t-test on the absolute deviations",
    )
    est = sh.qty("Brown-Forsythe estimate: mean abs dev new - old", f"{mn}-{mo}", ch.estimate,
                 "the difference the test is about")
    t = sh.qty("Brown-Forsythe t", f"{est}/{se}", None, "(mean abs dev new - old) / se")
    sh.qty("Brown-Forsythe W = t^2", f"{t}^2", ch.statistic, "t^2")
    alt = ch.alternative or "greater"
    sh.family_member(sh.qty(
        f"p (Brown-Forsythe, {alt})", p_side(t, df, False, alt), ch.p_value, HOW_P[False]))
    if ch.ci_level is not None and as_number(ch.ci_low) is not None:
        level = sh.param("confidence level (Brown-Forsythe)", ch.ci_level,
                         "the level the engine reports")
        q = sh.qty("t quantile", t_quantile(f"1-{level}", df, False), None, HOW_Q[False])
        sh.qty("Brown-Forsythe interval: low", f"{est}-{q}*{se}", ch.ci_low, "estimate - t se")
        if as_number(ch.ci_high) is not None:
            sh.qty("Brown-Forsythe interval: high", f"{est}+{q}*{se}", ch.ci_high,
                   "estimate + t se")


def _pitman_morgan(sh: Sheet, ev, layout, c: CharacteristicResult, ch: CheckResult,
                   d: PairedSpreadDetails) -> None:
    pr = pairs(sh, ev, layout, c, None)
    if pr is None:
        return
    o, n = pr.old, pr.new
    vn = sh.qty("paired new: variance", f"_xlfn.VAR.S({n})", None, "VAR.S of the matched new")
    vo = sh.qty("paired old: variance", f"_xlfn.VAR.S({o})", None, "VAR.S of the matched old")
    cov = sh.qty("covariance old, new", f"_xlfn.COVARIANCE.S({o},{n})", None, "COVARIANCE.S")
    r_on = sh.qty("correlation old, new", f"CORREL({o},{n})", d.correlation, "CORREL")
    sh.qty("sd ratio (new / old)", f"SQRT({vn}/{vo})", ch.estimate, "SQRT(var_new / var_old)")
    r = sh.qty(
        "correlation of differences and sums",
        f"({vn}-{vo})/SQRT(({vn}+{vo})^2-4*{cov}^2)",
        None,
        "(var_new - var_old) / SQRT((var_new + var_old)^2 - 4 cov^2)",
    )
    df = sh.qty("degrees of freedom", f"{pr.n}-2", ch.df, "pairs - 2")
    t = sh.qty(
        "t (Pitman-Morgan)", f"{r}*SQRT({df}/(1-{r}^2))", ch.statistic, "r * SQRT(df / (1 - r^2))"
    )
    alt = ch.alternative or "greater"
    sh.family_member(sh.qty(
        f"p (Pitman-Morgan, {alt})", p_side(t, df, False, alt), ch.p_value, HOW_P[False]))
    if ch.ci_level is not None and as_number(ch.ci_low) is not None:
        level = sh.param("confidence level", ch.ci_level, "the level the engine reports")
        q = sh.qty("t quantile", t_quantile(f"1-{level}", df, False), None, HOW_Q[False])
        k = sh.qty("K", f"1+2*(1-{r_on}^2)*{q}^2/{df}", None, "1 + 2 (1 - r^2) t^2 / df")
        ratio2 = f"{vn}/{vo}"
        sh.qty(
            "sd ratio interval: low",
            f"SQRT({ratio2}*({k}-SQRT({k}^2-1)))",
            ch.ci_low,
            "SQRT(F (K - SQRT(K^2 - 1)))",
        )
        if as_number(ch.ci_high) is not None:
            sh.qty(
                "sd ratio interval: high",
                f"SQRT({ratio2}*({k}+SQRT({k}^2-1)))",
                ch.ci_high,
                "SQRT(F (K + SQRT(K^2 - 1)))",
            )
