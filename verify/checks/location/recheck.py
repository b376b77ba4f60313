"""The location checks' recheck rows: the one-sample, two-sample and paired t-tests and TOST.

The formulas follow the check result's ``design``: ``one-sample`` (the new mean against the
target), ``welch`` (fractional df: p-values from the incomplete beta function), ``pooled`` and
``paired`` (the matched pairs' differences); with a margin, the two one-sided tests of TOST or
the harmful side's test of non-inferiority.
"""

from __future__ import annotations

from verify.checks.location.result import LocationDetails
from verify.model import CharacteristicResult, CheckResult
from verify.report.formulas import HOW_P, HOW_Q, p_above, p_below, p_two, t_quantile
from verify.report.recheck_blocks import pairs, prepare_samples, samples_of
from verify.report.recheck_sheet import ALPHA_CELL, Sheet, Subject

__all__ = ["prepare", "reads_aligned_pairs", "recheck"]

ONE_SAMPLE = "one-sample"  # the design of a check against the target

# the samples of both processes, written once per characteristic before its checks
prepare = prepare_samples


def recheck(sh: Sheet, on: Subject, check: CheckResult) -> None:
    """Append the rows that rebuild one location check from the used values.

    The recheck sheet calls it for each check of this kind that has numbers (one of
    ``verify.report.recheck.NUMBERS``), after the check's heading.

    Parameters
    ----------
    sh : Sheet
        The recheck sheet being written.
    on : Subject
        The characteristic, its evaluation and the measurements layout; ``prepare`` wrote the
        samples of both processes before.
    check : CheckResult
        The engine's result; its numbers go in the "Engine" column.
    """
    if check.design == ONE_SAMPLE:
        _target(sh, on.result, check, samples_of(on))
    else:
        _shift(sh, on, check, check.design or _spec_design(on))


def reads_aligned_pairs(settings) -> bool:
    """Whether the check with these settings reads the matched pairs as two aligned ranges of
    the measurements sheet (the paired design), so the sheet lists them side by side by key."""
    return getattr(settings, "design", None) == "paired"


def _spec_design(on: Subject) -> str:
    shift = on.spec.checks.shift
    return shift.design if shift else "welch"


def _one_sided(
    sh: Sheet, ch: CheckResult, side: str, bound: str, est: str, se: str, df: str, frac: bool
) -> tuple[str, str]:
    """t and p cells of TOST's one-sided test at one margin: "lower" tests H0 effect <= low
    (p from the upper tail), "upper" tests H0 effect >= high (p from the lower tail)."""
    lower = side == "lower"
    word, op, tail = ("low", "<=", ">=") if lower else ("high", ">=", "<=")
    t_engine, p_engine = (
        (ch.details.statistic_lower, ch.details.p_lower) if lower
        else (ch.details.statistic_upper, ch.details.p_upper)
    )
    t = sh.qty(
        f"t, {side} one-sided test", f"({est}-{bound})/{se}", t_engine, f"(estimate - {word}) / se"
    )
    p_formula = (p_above if lower else p_below)(t, df, frac)
    p = sh.qty(
        f"p, {side} one-sided test (H0: effect {op} {word})",
        p_formula,
        p_engine,
        f"P(T {tail} t): {HOW_P[frac]}",
    )
    return t, p


def _location_test(
    sh: Sheet,
    ch: CheckResult,
    side: str,
    est: str,
    se: str,
    df: str,
    frac: bool,
    cross=None,
) -> None:
    """t statistic, p-values, interval and critical value of a t-test or TOST on (est, se, df).

    ``cross`` is (two-sided formula, one-sided formula) from T.TEST, for a cross-check of p.
    """
    hp, hq = HOW_P[frac], HOW_Q[frac]
    if ch.margin is not None:
        low = sh.param("margin: low", ch.margin[0], "the spec's margin (lower end)")
        high = sh.param("margin: high", ch.margin[1], "the spec's margin (upper end)")
        p_cells = []
        if side in ("two-sided", "lower"):
            p_cells.append(_one_sided(sh, ch, "lower", low, est, se, df, frac))
        if side in ("two-sided", "upper"):
            p_cells.append(_one_sided(sh, ch, "upper", high, est, se, df, frac))
        if len(p_cells) == 2:
            (t_lo, p_lo), (t_hi, p_hi) = p_cells
            sh.qty(
                "t of the deciding test",
                f"IF({p_lo}>={p_hi},{t_lo},{t_hi})",
                ch.statistic,
                "the t of the larger one-sided p",
            )
            sh.qty(
                "p (TOST)",
                f"MAX({p_lo},{p_hi})",
                ch.p_value,
                "the larger of the two one-sided p-values",
            )
        else:
            t1, p1 = p_cells[0]
            sh.qty("t (non-inferiority)", t1, ch.statistic, "the harmful side's one-sided t")
            sh.qty("p (non-inferiority)", p1, ch.p_value, "the harmful side's one-sided p")
        crit = ("critical t (one-sided, alpha)", f"2*{ALPHA_CELL}")
        two_sided_ci, side_ci = True, "two-sided"
    else:
        alt = ch.alternative or "two-sided"
        t = sh.qty("t", f"{est}/{se}", ch.statistic, "estimate / se")
        if alt == "less":
            p = sh.qty("p (H1: effect < 0)", p_below(t, df, frac), ch.p_value, f"P(T <= t): {hp}")
        elif alt == "greater":
            p = sh.qty("p (H1: effect > 0)", p_above(t, df, frac), ch.p_value, f"P(T >= t): {hp}")
        else:
            p = sh.qty("p (two-sided)", p_two(t, df, frac), ch.p_value, f"P(|T| >= |t|): {hp}")
        sh.family_member(p)
        if cross is not None:
            two, one = cross
            if alt == "two-sided":
                f = two
            else:
                toward = f"{t}<0" if alt == "less" else f"{t}>0"
                f = f"IF({toward},{one},1-{one})"
            sh.qty(
                "p, cross-check with T.TEST",
                f,
                ch.p_value,
                "T.TEST on the same ranges (an independent route to the same p)",
            )
        if alt == "two-sided":
            crit = ("critical t (two-sided, alpha)", ALPHA_CELL)
        else:
            crit = ("critical t (one-sided, alpha)", f"2*{ALPHA_CELL}")
        two_sided_ci = alt == "two-sided"
        side_ci = alt
    if ch.ci_level is not None:
        level = sh.param("confidence level", ch.ci_level, "the level the engine reports")
        if two_sided_ci:
            q = sh.qty(
                "t quantile of the interval",
                t_quantile(f"1-{level}", df, frac),
                None,
                f"two-sided tail 1 - level: {hq}",
            )
            sh.qty("interval: low", f"{est}-{q}*{se}", ch.ci_low, "estimate - quantile * se")
            sh.qty("interval: high", f"{est}+{q}*{se}", ch.ci_high, "estimate + quantile * se")
        else:
            q = sh.qty(
                "t quantile of the bound",
                t_quantile(f"2*(1-{level})", df, frac),
                None,
                f"one-sided tail 1 - level: {hq}",
            )
            if side_ci == "less":
                sh.qty("upper bound", f"{est}+{q}*{se}", ch.ci_high, "estimate + quantile * se")
            else:
                sh.qty("lower bound", f"{est}-{q}*{se}", ch.ci_low, "estimate - quantile * se")
    if ch.p_adjusted is not None and ch.ci_level is not None and ch.margin is None:
        # a member of an adjusted family: its critical value is at alpha / m, the level of its
        # interval (1 - alpha / m)
        crit = ((crit[0].replace("alpha)", "alpha / m)"), f"(1-{level})") if two_sided_ci
                else (crit[0].replace("alpha)", "alpha / m)"), f"2*(1-{level})"))
    sh.qty(crit[0], t_quantile(crit[1], df, frac), ch.critical_value, hq)


def _target(sh: Sheet, c: CharacteristicResult, ch: CheckResult, samples) -> None:
    """The one-sample t-test (or TOST) of the new mean against the spec's target."""
    s = samples.get("new")
    if s is None:
        sh.unavailable("target check", "the new process's values are not available above")
        return
    if c.spec.target is None:
        sh.unavailable("target check", "the spec gives no target")
        return
    tgt = sh.param("target", c.spec.target, "the spec's target")
    est = sh.qty("estimate: mean - target", f"{s.mean}-{tgt}", ch.estimate, "new mean - target")
    se = sh.qty("standard error", f"{s.sd}/SQRT({s.n})", ch.standard_error, "sd / SQRT(n)")
    df = sh.qty("degrees of freedom", f"{s.n}-1", ch.df, "n - 1")
    _location_test(sh, ch, c.spec.side, est, se, df, frac=False)


def _shift(sh: Sheet, on: Subject, ch: CheckResult, design: str) -> None:
    """The two-sample (Welch, pooled) or paired t-test (or TOST) of new against old."""
    c, samples = on.result, samples_of(on)
    engine_sd = ch.details.sd if isinstance(ch.details, LocationDetails) else None
    if design == "paired":
        pr = pairs(sh, on.evaluation, on.layout, c, engine_sd)
        if pr is None:
            return
        est = sh.qty(
            "estimate: mean difference (new - old)",
            pr.mean,
            ch.estimate,
            "the mean of the paired differences",
        )
        se = sh.qty(
            "standard error",
            f"{pr.sd}/SQRT({pr.n})",
            ch.standard_error,
            "sd of differences / SQRT(n)",
        )
        df = sh.qty("degrees of freedom", f"{pr.n}-1", ch.df, "pairs - 1")
        cross = (f"_xlfn.T.TEST({pr.new},{pr.old},2,1)", f"_xlfn.T.TEST({pr.new},{pr.old},1,1)")
        _location_test(sh, ch, c.spec.side, est, se, df, frac=False, cross=cross)
        return
    o, n = samples.get("old"), samples.get("new")
    if o is None or n is None:
        sh.unavailable("shift check", "the values of both processes are needed above")
        return
    est = sh.qty(
        "estimate: new mean - old mean",
        f"{n.mean}-{o.mean}",
        ch.estimate,
        "difference of the means",
    )
    if design == "pooled":
        sp = sh.qty(
            "pooled standard deviation",
            f"SQRT((({n.n}-1)*{n.sd}^2+({o.n}-1)*{o.sd}^2)/({n.n}+{o.n}-2))",
            engine_sd,
            "SQRT(((n_new-1) sd_new^2 + (n_old-1) sd_old^2) / (n_new + n_old - 2))",
        )
        se = sh.qty(
            "standard error",
            f"{sp}*SQRT(1/{n.n}+1/{o.n})",
            ch.standard_error,
            "pooled sd * SQRT(1/n_new + 1/n_old)",
        )
        df = sh.qty("degrees of freedom", f"{n.n}+{o.n}-2", ch.df, "n_new + n_old - 2")
        frac, ttype = False, 2
    else:
        vn = sh.qty("new: variance of the mean", f"{n.sd}^2/{n.n}", None, "sd_new^2 / n_new")
        vo = sh.qty("old: variance of the mean", f"{o.sd}^2/{o.n}", None, "sd_old^2 / n_old")
        se = sh.qty(
            "standard error",
            f"SQRT({vn}+{vo})",
            ch.standard_error,
            "SQRT(sd_new^2/n_new + sd_old^2/n_old)",
        )
        df = sh.qty(
            "degrees of freedom (Welch-Satterthwaite)",
            f"({vn}+{vo})^2/({vn}^2/({n.n}-1)+{vo}^2/({o.n}-1))",
            ch.df,
            "(v_new + v_old)^2 / (v_new^2/(n_new-1) + v_old^2/(n_old-1))",
        )
        frac, ttype = True, 3
    cross = (f"_xlfn.T.TEST({n.ref},{o.ref},2,{ttype})", f"_xlfn.T.TEST({n.ref},{o.ref},1,{ttype})")
    _location_test(sh, ch, c.spec.side, est, se, df, frac=frac, cross=cross)
