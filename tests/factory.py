"""Realistic synthetic :class:`verify.model.Evaluation` objects for report-layer tests.

The report layer (workbook, JSON, recheck formulas) takes an ``Evaluation`` as its only input.
This factory builds one without the spec loader or the engine: invented lot data from a plant
of our own (Harrowgate Works), with every statistic computed here directly with numpy and
scipy.stats, so the numbers are genuine and a spreadsheet can recompute them.

Designs (``make_evaluation(design=...)``)
-----------------------------------------
``"welch"``      Bore diameter: target TOST, Welch shift TOST, spread F-test, capability.
``"pooled"``     Wall thickness: pooled two-sample t-test without a margin, spread F-test.
``"paired"``     Clamp torque: paired TOST on matched serials (one unmatched serial), spread.
``"one-sample"`` Surface finish Ra: new process only; one-sample t-test (side upper),
                 capability against an upper limit only.
``"lot"``        Bore diameter with ``unit_of_analysis: lot``: n counts lots; the tests run on
                 lot means.
``"all"``        The first four together in one spec (four characteristics).

``n_old`` and ``n_new`` count the units of analysis (parts, or lots for ``"lot"``).

Overrides (keyword arguments)
-----------------------------
name            name of the first characteristic (e.g. to test sheet-name rules)
lot_ids         sequence of lot ids to use instead of the generated ones (cycled), e.g. text
                that looks like a formula
parts_per_lot   parts measured per lot (default 5)
shift           true shift of the new process, in units of the process sd (default 0.1)
spread_ratio    true sd ratio new/old (default 1.0)
margin          equivalence margin for the first characteristic's shift (float, or None for a
                difference test)
min_n           the spec's min_n (default 30; 0 or None disables the sufficiency rule)
excluded        excluded rows per characteristic (default 2; reasons from the spec)
alpha, multiplicity, final, change_id, title
spec_text       the spec text verbatim (default: generated YAML with an empty line and a
                trailing newline)
any field of ``Evaluation`` (e.g. ``monitoring``, ``caution``, ``decision``): replaced last.
"""

from __future__ import annotations

import dataclasses
import hashlib
import math
from collections.abc import Sequence
from pathlib import Path

import numpy as np
import pandas as pd
from scipy import stats

from verify.checks.capability.result import CapabilityDetails
from verify.checks.location.result import LocationDetails
from verify.checks.spread.result import TwoSampleSpreadDetails
from verify.model import (
    DECISION_ORDER,
    MEASUREMENT_COLUMNS,
    CharacteristicResult,
    CheckResult,
    DataFileInfo,
    DiagnosticResult,
    Evaluation,
    Measurements,
    ProcessSummary,
    RunInfo,
)
from verify.spec_model import (
    CapabilityCheck,
    Characteristic,
    Checks,
    DataSpec,
    Exclusion,
    LotLists,
    Margin,
    PlanSettings,
    ShiftCheck,
    Spec,
    SpreadCheck,
    TargetCheck,
)

DESIGNS = ("welch", "pooled", "paired", "one-sample", "lot", "all")

DATA_FILE = "data/hw-line3-lots.csv"
CAUTION = (
    "These statistics support, and never replace, the engineering and quality review and "
    "sign-off that the change-control procedure, the customer's requirements and local "
    "regulations call for."
)
RULES = (
    "target with a margin: PASS when both one-sided tests (TOST) show the new mean within the "
    "margin of the target at alpha; otherwise HOLD.",
    "target without a margin: HOLD when the one-sample t-test finds a departure in the harmful "
    "direction at alpha; otherwise PASS, with the smallest departure detectable at 80% power.",
    "shift with a margin: PASS when TOST shows new minus old within the margin; otherwise HOLD.",
    "shift without a margin: HOLD when the difference test is significant in the harmful "
    "direction; otherwise PASS, with the detectable shift.",
    "spread: HOLD when the one-sided test shows the new spread larger at alpha.",
    "capability: HOLD when the new process's Cpk is below min_cpk.",
    "sufficiency: fewer than min_n units in either process gives PENDING unless --final.",
    "A characteristic is HOLD if any check is HOLD, else PENDING if any is PENDING, else PASS; "
    "the overall decision is formed the same way from the characteristics.",
)

# name, unit, target, (lower, upper), sd, decimals, side
_PROFILES = {
    "welch": ("Bore diameter", "mm", 12.0, (11.95, 12.05), 0.008, 3, "two-sided"),
    "pooled": ("Wall thickness", "mm", 2.5, (2.35, 2.65), 0.03, 2, "lower"),
    "paired": ("Clamp torque", "N·m", 25.0, (23.0, 27.0), 0.35, 1, "two-sided"),
    "one-sample": ("Surface finish Ra", "µm", 0.8, (None, 1.6), 0.09, 2, "upper"),
    "lot": ("Bore diameter", "mm", 12.0, (11.95, 12.05), 0.008, 3, "two-sided"),
}

_SIDE_ALT = {"two-sided": "two-sided", "lower": "less", "upper": "greater"}
_EXCLUSION_REASONS = (
    "gauge G-114 out of calibration (NCR 2291)",
    "setup part, discarded by the operator",
)


def _worst(decisions: Sequence[str]) -> str:
    return max(decisions, key=DECISION_ORDER.__getitem__) if decisions else "PASS"


def _f(x) -> float | None:
    return None if x is None else float(x)


# --- data -----------------------------------------------------------------------------------


def _lot_names(prefix: str, count: int, start: int) -> list[str]:
    return [f"HW-{prefix}-{start + i:04d}" for i in range(count)]


def _gen_values(rng, n, mean, sd, decimals) -> np.ndarray:
    return np.round(rng.normal(mean, sd, size=n), decimals)


class _Rows:
    """Accumulates the tidy measurement table column by column (fast for large n)."""

    def __init__(self):
        self.cols: dict[str, list] = {c: [] for c in MEASUREMENT_COLUMNS}
        self.n = 0

    def add(self, *, lot, process, characteristic, value, excluded=False, reason="", pair=""):
        k = len(value)
        self.cols["source_file"].append(np.full(k, DATA_FILE, dtype=object))
        self.cols["source_row"].append(np.arange(self.n + 2, self.n + 2 + k))
        self.cols["order"].append(np.arange(self.n, self.n + k))
        self.cols["lot"].append(np.asarray(lot, dtype=object))
        self.cols["process"].append(np.full(k, process, dtype=object))
        self.cols["pair"].append(np.broadcast_to(np.asarray(pair, dtype=object), (k,)))
        self.cols["characteristic"].append(np.full(k, characteristic, dtype=object))
        self.cols["value"].append(np.asarray(value, dtype=float))
        self.cols["excluded"].append(np.full(k, bool(excluded)))
        self.cols["exclusion_reason"].append(np.full(k, reason, dtype=object))
        self.n += k

    def frame(self) -> pd.DataFrame:
        data = {c: np.concatenate(v) if v else np.array([]) for c, v in self.cols.items()}
        df = pd.DataFrame(data, columns=list(MEASUREMENT_COLUMNS))
        df["excluded"] = df["excluded"].astype(bool)
        df["source_row"] = df["source_row"].astype(np.int64)
        df["order"] = df["order"].astype(np.int64)
        for c in ("source_file", "lot", "process", "pair", "characteristic", "exclusion_reason"):
            df[c] = df[c].astype(object)
        return df


# --- statistics (numpy / scipy only) --------------------------------------------------------


def _summary(process, values, lots, n_parts, unit_values=None) -> ProcessSummary:
    v = values if unit_values is None else unit_values
    n = int(v.size)
    return ProcessSummary(
        process=process,
        n=n,
        mean=float(np.mean(v)) if n else None,
        sd=float(np.std(v, ddof=1)) if n > 1 else None,
        lots=tuple(lots),
        n_parts=int(n_parts),
        minimum=float(np.min(values)) if values.size else None,
        maximum=float(np.max(values)) if values.size else None,
    )


def _power_tost(se, df, low, high, alpha, true=0.0) -> float:
    tc = stats.t.ppf(1 - alpha, df)
    p = stats.t.sf((low - true) / se + tc, df) + stats.t.cdf((high - true) / se - tc, df) - 1
    return float(max(0.0, p))


def _detectable(se, df, alpha, two_sided=True) -> float:
    a = alpha / 2 if two_sided else alpha
    return float((stats.t.ppf(1 - a, df) + stats.t.ppf(0.8, df)) * se)


def _tost(est, se, df, low, high, alpha):
    s_low = (est - low) / se
    s_up = (est - high) / se
    p_low = float(stats.t.sf(s_low, df))
    p_up = float(stats.t.cdf(s_up, df))
    tc = float(stats.t.ppf(1 - alpha, df))
    return s_low, s_up, p_low, p_up, tc, est - tc * se, est + tc * se


def _planned_n(sd, low, high, alpha, power, paired=False, two=True) -> int:
    """Smallest n per process whose TOST power at a true shift of 0 reaches ``power``."""
    for n in range(3, 100_000):
        se = sd * math.sqrt((2.0 if two and not paired else 1.0) / n)
        df = n - 1 if (paired or not two) else 2 * n - 2
        if _power_tost(se, df, low, high, alpha) >= power:
            return n
    return 100_000


def _target_check(x, target, margin, side, alpha, plan_power, decimals) -> CheckResult:
    n = x.size
    mean = float(np.mean(x))
    sd = float(np.std(x, ddof=1))
    se = sd / math.sqrt(n)
    df = float(n - 1)
    est = mean - target
    if margin is not None:
        s_low, s_up, p_low, p_up, tc, lo, hi = _tost(est, se, df, margin.low, margin.high, alpha)
        if side == "lower":
            p, stat = p_low, s_low
        elif side == "upper":
            p, stat = p_up, s_up
        else:
            p, stat = max(p_low, p_up), (s_low if p_low >= p_up else s_up)
        ok = p < alpha
        level = 1 - 2 * alpha
        reason = (
            f"new mean shown within {margin.low:+g}..{margin.high:+g} of target "
            f"({level:.0%} interval {lo:+.{decimals + 1}f}..{hi:+.{decimals + 1}f})"
            if ok
            else f"not shown within {margin.low:+g}..{margin.high:+g} of target "
            f"({level:.0%} interval {lo:+.{decimals + 1}f}..{hi:+.{decimals + 1}f})"
        )
        power = _power_tost(se, df, margin.low, margin.high, alpha)
        return CheckResult(
            check="target",
            method="TOST (one-sample)",
            hypothesis=(
                f"the new mean lies within {margin.low:+g} to {margin.high:+g} of the target "
                f"{target:g}"
            ),
            alternative=None,
            margin=(margin.low, margin.high),
            outcome="PASS" if ok else "HOLD",
            reason=reason,
            estimate=est,
            standard_error=se,
            statistic=float(stat),
            df=df,
            p_value=float(p),
            ci_low=float(lo),
            ci_high=float(hi),
            ci_level=level,
            critical_value=tc,
            details=LocationDetails(n_new=n, n_old=None, sd=sd, p_lower=p_low, p_upper=p_up,
                                    statistic_lower=float(s_low),
                                    statistic_upper=float(s_up)),
            power=power,
            power_note="power of TOST to show the mean within the margin if it sits on target",
            planned_n=_planned_n(sd, margin.low, margin.high, alpha, plan_power, two=False),
            design="one-sample",
        )
    alt = _SIDE_ALT[side]
    r = stats.ttest_1samp(x, target, alternative=alt)
    ci = r.confidence_interval(0.95)  # for the mean; the estimate is mean - target
    tc = float(stats.t.ppf(1 - (alpha / 2 if alt == "two-sided" else alpha), df))
    detect = _detectable(se, df, alpha, alt == "two-sided")
    hold = r.pvalue < alpha
    reason = (
        f"departure from target detected (p = {r.pvalue:.4f})"
        if hold
        else f"no departure detected; the smallest departure these data detect with 80% power "
        f"is {detect:.{decimals + 1}f}"
    )
    return CheckResult(
        check="target",
        method="one-sample t-test",
        hypothesis=f"the new mean departs from the target {target:g} in the harmful direction",
        alternative=alt,
        margin=None,
        outcome="HOLD" if hold else "PASS",
        reason=reason,
        estimate=est,
        standard_error=se,
        statistic=float(r.statistic),
        df=df,
        p_value=float(r.pvalue),
        ci_low=float(ci.low) - target,
        ci_high=float(ci.high) - target,
        ci_level=0.95,
        critical_value=tc,
        detectable_shift=detect,
        design="one-sample",
    )


def _engine_sd(xo, xn, design) -> float:
    """The sd a shift check's standard error rests on: of the differences for pairs (n - 1),
    the pooled sd for a pooled design, the root mean square of the two sds otherwise."""
    if design == "paired":
        return float(np.std(xn - xo, ddof=1))
    so, sn = float(np.std(xo, ddof=1)), float(np.std(xn, ddof=1))
    if design == "pooled":
        no, nn = xo.size, xn.size
        return math.sqrt(((no - 1) * so**2 + (nn - 1) * sn**2) / (no + nn - 2))
    return math.sqrt((so**2 + sn**2) / 2)


def _shift_check(xo, xn, design, margin, side, alpha, plan_power, decimals) -> CheckResult:
    no, nn = xo.size, xn.size
    so, sn = float(np.std(xo, ddof=1)), float(np.std(xn, ddof=1))
    if design == "paired":
        d = xn - xo
        est = float(np.mean(d))
        se = float(np.std(d, ddof=1) / math.sqrt(d.size))
        df = float(d.size - 1)
        method = "paired t-test"
    elif design == "pooled":
        est = float(np.mean(xn) - np.mean(xo))
        sp2 = ((no - 1) * so**2 + (nn - 1) * sn**2) / (no + nn - 2)
        se = math.sqrt(sp2 * (1 / no + 1 / nn))
        df = float(no + nn - 2)
        method = "pooled two-sample t-test"
    else:
        est = float(np.mean(xn) - np.mean(xo))
        vo, vn = so**2 / no, sn**2 / nn
        se = math.sqrt(vo + vn)
        # Welch-Satterthwaite df
        df = float((vo + vn) ** 2 / (vo**2 / (no - 1) + vn**2 / (nn - 1)))
        method = "Welch two-sample t-test"
    sd_plan = math.sqrt((so**2 + sn**2) / 2) if design != "paired" else float(np.std(xn - xo))
    if margin is not None:
        s_low, s_up, p_low, p_up, tc, lo, hi = _tost(est, se, df, margin.low, margin.high, alpha)
        p = max(p_low, p_up)
        ok = p < alpha
        level = 1 - 2 * alpha
        words = "shown" if ok else "not shown"
        return CheckResult(
            check="shift",
            method=f"TOST ({method.split(' ')[0]})",
            hypothesis=(
                f"new minus old lies within {margin.low:+g} to {margin.high:+g} "
                "(the processes are equivalent)"
            ),
            alternative=None,
            margin=(margin.low, margin.high),
            outcome="PASS" if ok else "HOLD",
            reason=(
                f"shift {words} within {margin.low:+g}..{margin.high:+g} "
                f"({level:.0%} interval {lo:+.{decimals + 1}f}..{hi:+.{decimals + 1}f})"
            ),
            estimate=est,
            standard_error=se,
            statistic=float(s_low if p_low >= p_up else s_up),
            df=df,
            p_value=float(p),
            ci_low=float(lo),
            ci_high=float(hi),
            ci_level=level,
            critical_value=tc,
            details=LocationDetails(n_new=nn, n_old=None if design == "paired" else no,
                                    sd=_engine_sd(xo, xn, design), p_lower=p_low, p_upper=p_up,
                                    statistic_lower=float(s_low),
                                    statistic_upper=float(s_up)),
            power=_power_tost(se, df, margin.low, margin.high, alpha),
            power_note="power of TOST to show equivalence if the true shift is 0",
            planned_n=_planned_n(
                sd_plan, margin.low, margin.high, alpha, plan_power, paired=design == "paired"
            ),
            design=design,
        )
    alt = _SIDE_ALT[side]
    stat = est / se
    if alt == "two-sided":
        p = float(2 * stats.t.sf(abs(stat), df))
        tc = float(stats.t.ppf(1 - alpha / 2, df))
        lo, hi = est - tc * se, est + tc * se
    elif alt == "less":
        p = float(stats.t.cdf(stat, df))
        tc = float(stats.t.ppf(1 - alpha, df))
        lo, hi = -math.inf, est + stats.t.ppf(0.95, df) * se
    else:
        p = float(stats.t.sf(stat, df))
        tc = float(stats.t.ppf(1 - alpha, df))
        lo, hi = est - stats.t.ppf(0.95, df) * se, math.inf
    detect = _detectable(se, df, alpha, alt == "two-sided")
    hold = p < alpha
    return CheckResult(
        check="shift",
        method=method,
        hypothesis="new minus old differs from 0 in the harmful direction",
        alternative=alt,
        margin=None,
        outcome="HOLD" if hold else "PASS",
        reason=(
            f"shift detected: new minus old = {est:+.{decimals + 1}f} (p = {p:.4f})"
            if hold
            else "no shift detected; the smallest shift these data detect with 80% power is "
            f"{detect:.{decimals + 1}f}"
        ),
        estimate=est,
        standard_error=se,
        statistic=float(stat),
        df=df,
        p_value=p,
        ci_low=float(lo),
        ci_high=float(hi),
        ci_level=0.95,
        critical_value=tc,
        detectable_shift=detect,
        design=design,
    )


def _spread_check(xo, xn, alpha) -> CheckResult:
    vo, vn = float(np.var(xo, ddof=1)), float(np.var(xn, ddof=1))
    d1, d2 = xn.size - 1, xo.size - 1
    f = vn / vo
    p = float(stats.f.sf(f, d1, d2))
    ratio = math.sqrt(f)
    lo = math.sqrt(f / stats.f.ppf(0.975, d1, d2))
    hi = math.sqrt(f / stats.f.ppf(0.025, d1, d2))
    hold = p < alpha
    return CheckResult(
        check="spread",
        method="F-test, one-sided",
        hypothesis="the new process spreads more than the old (sd new > sd old)",
        alternative="greater",
        margin=None,
        outcome="HOLD" if hold else "PASS",
        reason=(
            f"new spread larger: sd ratio {ratio:.3f} (95% interval {lo:.3f}..{hi:.3f}, "
            f"p = {p:.4f})"
            if hold
            else f"no increase in spread shown: sd ratio {ratio:.3f} "
            f"(95% interval {lo:.3f}..{hi:.3f})"
        ),
        estimate=ratio,
        statistic=f,
        df=float(d1),
        p_value=p,
        ci_low=lo,
        ci_high=hi,
        ci_level=0.95,
        critical_value=float(stats.f.ppf(1 - alpha, d1, d2)),
        details=TwoSampleSpreadDetails(df_num=float(d1), df_den=float(d2), F=f),
    )


def _capability_check(x, limits, min_cpk) -> CheckResult:
    mean = float(np.mean(x))
    mr = np.abs(np.diff(x))
    sigma = float(np.mean(mr) / 1.128)  # d2 for moving ranges of 2: common practice
    lsl, usl = limits
    sides = []
    if usl is not None:
        sides.append((usl - mean) / (3 * sigma))
    if lsl is not None:
        sides.append((mean - lsl) / (3 * sigma))
    cpk = float(min(sides))
    n = x.size
    # Bissell's approximate lower 95% bound for Cpk (common practice)
    lower = float(cpk - stats.norm.ppf(0.95) * math.sqrt(1 / (9 * n) + cpk**2 / (2 * (n - 1))))
    ok = cpk >= min_cpk
    return CheckResult(
        check="capability",
        method="Cpk, within sigma from moving ranges",
        hypothesis=f"the new process's Cpk reaches {min_cpk:g}",
        alternative=None,
        margin=None,
        outcome="PASS" if ok else "HOLD",
        reason=(
            f"Cpk {cpk:.2f} {'reaches' if ok else 'is below'} {min_cpk:g} "
            f"(lower 95% bound {lower:.2f})"
        ),
        estimate=cpk,
        statistic=cpk,
        ci_low=lower,
        ci_high=math.inf,
        ci_level=0.95,
        critical_value=min_cpk,
        details=CapabilityDetails(
            cp=None, cpk=cpk, cpl=None, cpu=None, pp=None, ppk=None, cpm=None,
            sigma_within=sigma, sigma_overall=float(np.std(x, ddof=1)),
            sigma_method="moving ranges", mean=mean, n=n, min_cpk=min_cpk, cpk_lower_95=lower,
            index="cpk", judge="estimate", min=min_cpk, confidence=0.95, lower_bound=lower,
            bound_df=None),
    )


def _one_way_anova(groups: list):
    """One-way ANOVA F from group sums (numpy); scipy.stats.f_oneway is slow for 50k groups."""
    if len(groups) <= 200:
        return stats.f_oneway(*groups)
    sizes = np.array([g.size for g in groups], dtype=float)
    x = np.concatenate(groups)
    starts = np.concatenate([[0], np.cumsum(sizes)[:-1]]).astype(int)
    means = np.add.reduceat(x, starts) / sizes
    grand = float(np.mean(x))
    ss_between = float(np.sum(sizes * (means - grand) ** 2))
    ss_within = float(np.sum((x - np.repeat(means, sizes.astype(int))) ** 2))
    df1, df2 = len(groups) - 1, x.size - len(groups)
    f = (ss_between / df1) / (ss_within / df2)
    return _Anova(f, float(stats.f.sf(f, df1, df2)))


@dataclasses.dataclass(frozen=True)
class _Anova:
    statistic: float
    pvalue: float


def _diagnostics(groups: dict, lot_groups: dict, unit: str, decimals: int) -> list:
    out = []
    for g, x in groups.items():
        if x.size < 3:
            continue
        if x.size <= 5000:
            r = stats.shapiro(x)
            method = "Shapiro-Wilk"
        else:
            r = stats.normaltest(x)
            method = "D'Agostino-Pearson"
        flag = bool(r.pvalue < 0.01)
        out.append(
            DiagnosticResult(
                name="normality",
                method=method,
                group=g,
                flag=flag,
                note="values depart from a normal shape" if flag else "no departure seen",
                statistic=float(r.statistic),
                p_value=float(r.pvalue),
            )
        )
        z = np.abs(x - np.mean(x)) / np.std(x, ddof=1)
        zmax = float(np.max(z))
        crit = float(stats.norm.ppf(1 - 0.025 / x.size))
        out.append(
            DiagnosticResult(
                name="outliers",
                method="largest |z| against a Bonferroni normal bound",
                group=g,
                flag=zmax > crit,
                note=(
                    f"a value lies {zmax:.2f} sd from the mean (kept; review it)"
                    if zmax > crit
                    else "none"
                ),
                statistic=zmax,
                extra={"bound": crit},
            )
        )
    for g, lots in lot_groups.items():
        nl = len(lots)
        out.append(
            DiagnosticResult(
                name="lot count",
                method="count",
                group=g,
                flag=nl < 3,
                note=f"{nl} lots" + (" (fewer than 3)" if nl < 3 else ""),
                statistic=float(nl),
            )
        )
        if unit == "part" and nl >= 2 and all(len(v) >= 2 for v in lots):
            r = _one_way_anova(lots)
            flag = bool(r.pvalue < 0.01)
            out.append(
                DiagnosticResult(
                    name="lot effect",
                    method="one-way ANOVA across lots",
                    group=g,
                    flag=flag,
                    note="lots differ while the unit is the part" if flag else "no lot effect",
                    statistic=float(r.statistic),
                    p_value=float(r.pvalue),
                )
            )
    out.append(
        DiagnosticResult(
            name="resolution",
            method="distinct values against the spread",
            group="all",
            flag=False,
            note=f"values recorded to {decimals} decimals",
            extra={"decimals": decimals},
        )
    )
    return out


# --- one characteristic ---------------------------------------------------------------------


def _characteristic(kind, rng, rows, cfg, lot_counter) -> tuple:
    name, unit, target, limits, sd, decimals, side = _PROFILES[kind]
    if kind == cfg["first_kind"] and cfg.get("name") is not None:
        name = cfg["name"]
    ppl = cfg["parts_per_lot"]
    alpha = cfg["alpha"]
    first = kind == cfg["first_kind"]
    is_lot = kind == "lot"
    n_old, n_new = cfg["n_old"], cfg["n_new"]
    one_sample = kind == "one-sample"
    design = {"welch": "welch", "lot": "welch", "pooled": "pooled", "paired": "paired"}.get(kind)

    margin_default = {"welch": 0.004, "lot": 0.004, "paired": 0.3}.get(kind)
    mval = cfg["margin"] if first and "margin" in cfg else margin_default
    margin = None if mval is None else Margin(-float(mval), float(mval), f"{mval:g}")

    checks = Checks(
        target=TargetCheck(
            margin=Margin(-0.005, 0.005, "0.005") if kind in ("welch", "lot") else None
        )
        if kind in ("welch", "lot", "one-sample")
        else None,
        shift=None if one_sample else ShiftCheck(design=design, margin=margin),
        spread=None if one_sample else SpreadCheck(),
        capability=CapabilityCheck(min_cpk=1.33) if kind in ("welch", "one-sample") else None,
    )
    char = Characteristic(
        name=name,
        unit=unit,
        column=None,
        match=name,
        target=target,
        limits=limits,
        side=side,
        checks=checks,
        line=None,
    )

    # lots: units are parts (ppl parts per lot) or lots (ppl parts each, analysed as lot means)
    def lots_for(n_units, prefix):
        n_lots = n_units if is_lot else max(1, math.ceil(n_units / ppl))
        names = _lot_names(prefix, n_lots, lot_counter[prefix])
        lot_counter[prefix] += n_lots
        if cfg.get("lot_ids"):
            ids = list(cfg["lot_ids"])
            names = [ids[(i + lot_counter["ids"]) % len(ids)] for i in range(n_lots)]
            lot_counter["ids"] += n_lots
        return names

    shift = cfg["shift"] * sd
    sd_new = sd * cfg["spread_ratio"]
    proc = {}
    unit_values = {}
    lot_groups = {}
    for p, n_units, mean, s in (
        ("old", 0 if one_sample else n_old, target, sd),
        ("new", n_new, target + shift, sd_new),
    ):
        if n_units == 0:
            continue
        lots = lots_for(n_units, "A" if p == "old" else "B")
        if is_lot:
            lot_means = rng.normal(mean, s, size=n_units)
            vals = np.round(
                np.repeat(lot_means, ppl) + rng.normal(0, s / 3, size=n_units * ppl), decimals
            )
            lot_col = np.repeat(np.array(lots, dtype=object), ppl)
        elif kind == "paired" and p == "new":
            base = proc["old"][0][:n_units] if "old" in proc else None
            vals = np.round(base + shift + rng.normal(0, s * 0.4, size=n_units), decimals)
            lot_col = np.repeat(np.array(lots, dtype=object), ppl)[:n_units]
        else:
            vals = _gen_values(rng, n_units, mean, s, decimals)
            lot_col = np.repeat(np.array(lots, dtype=object), ppl)[:n_units]
        proc[p] = (vals, lot_col, lots)

    # pair keys: serials; one unmatched old serial in the paired design
    pair_keys = {}
    unmatched = ()
    if kind == "paired":
        serials = np.array([f"S{40000 + i}" for i in range(n_old)], dtype=object)
        pair_keys = {"old": serials, "new": serials[:n_new]}
        extra_serial = f"S{40000 + n_old}"
        unmatched = (extra_serial,)

    # write rows: used old, used new, then exclusions, an unassigned lot and a missing value
    for p, (vals, lot_col, _lots) in proc.items():
        rows.add(
            lot=lot_col,
            process=p,
            characteristic=name,
            value=vals,
            pair=pair_keys.get(p, ""),
        )
    unmatched_value = np.array([])
    if kind == "paired" and "old" in proc:
        unmatched_value = np.round(rng.normal(target, sd, 1), decimals)
        rows.add(
            lot=[proc["old"][2][-1]],
            process="old",
            characteristic=name,
            value=unmatched_value,
            pair=np.array([unmatched[0]], dtype=object),
        )
    n_excl = cfg["excluded"]
    for i in range(n_excl):
        p = "new" if (i % 2 == 0 or one_sample) else "old"
        lot = proc[p][2][0]
        rows.add(
            lot=[lot],
            process=p,
            characteristic=name,
            value=np.round(rng.normal(target + 6 * sd, sd, 1), decimals),
            excluded=True,
            reason=_EXCLUSION_REASONS[i % len(_EXCLUSION_REASONS)],
            pair=np.array(["S39999" if kind == "paired" else ""], dtype=object),
        )
    if n_excl:
        rows.add(
            lot=["HW-X-0001"],
            process="",
            characteristic=name,
            value=np.round(rng.normal(target, sd, 1), decimals),
            excluded=True,
            reason="lot in neither lot list",
        )
        rows.add(
            lot=[proc["new"][2][-1]],
            process="new",
            characteristic=name,
            value=np.array([np.nan]),
            excluded=True,
            reason="missing value ('NA')",
        )

    # statistics
    summaries = {}
    for p, (vals, _lot_col, lots) in proc.items():
        # the unmatched old serial is a used row: it counts in the old summary, not in the test
        vals_all = np.concatenate([vals, unmatched_value]) if p == "old" else vals
        if is_lot:
            uv = vals.reshape(-1, ppl).mean(axis=1)
            unit_values[p] = uv
            summaries[p] = _summary(p, vals, lots, vals.size, unit_values=uv)
        else:
            unit_values[p] = vals
            summaries[p] = _summary(p, vals_all, lots, vals_all.size)
        # lots are contiguous runs of parts_per_lot rows (split by position, not by name)
        lot_groups[p] = np.split(vals, np.arange(ppl, vals.size, ppl)) if not is_lot else lots

    plan_power = cfg["plan_power"]
    results = []
    if checks.target is not None:
        results.append(
            _target_check(
                unit_values["new"], target, checks.target.margin, side, alpha, plan_power, decimals
            )
        )
    if checks.shift is not None:
        results.append(
            _shift_check(
                unit_values["old"],
                unit_values["new"],
                design,
                margin,
                side,
                alpha,
                plan_power,
                decimals,
            )
        )
    if checks.spread is not None:
        results.append(_spread_check(unit_values["old"], unit_values["new"], alpha))
    if checks.capability is not None:
        results.append(_capability_check(proc["new"][0], limits, checks.capability.min_cpk))

    min_n = cfg["min_n"]
    if min_n and not cfg["final"]:
        short = [f"{p}: {s.n} of {min_n} planned" for p, s in summaries.items() if s.n < min_n]
        if short:
            results.append(
                CheckResult(
                    check="sufficiency",
                    method="count against min_n",
                    hypothesis=f"each process has at least {min_n} {'lots' if is_lot else 'parts'}",
                    alternative=None,
                    margin=None,
                    outcome="PENDING",
                    reason="; ".join(short),
                    planned_n=min_n,
                )
            )

    diags = _diagnostics(
        {p: unit_values[p] for p in unit_values},
        {p: lot_groups[p] for p in lot_groups} if not is_lot else {},
        "lot" if is_lot else "part",
        decimals,
    )
    if is_lot:
        for p in summaries:
            nl = len(summaries[p].lots)
            diags.append(
                DiagnosticResult(
                    name="lot count",
                    method="count",
                    group=p,
                    flag=nl < 3,
                    note=f"{nl} lots",
                    statistic=float(nl),
                )
            )
    review = tuple(f"review: {name}: {d.name} ({d.group}): {d.note}" for d in diags if d.flag)
    return char, results, summaries, diags, review, unmatched, (n_old if kind == "paired" else None)


def _holm(pvals: list[float]) -> list[float]:
    m = len(pvals)
    order = np.argsort(pvals, kind="stable")
    adj = np.empty(m)
    running = 0.0
    for rank, i in enumerate(order):
        running = max(running, min(1.0, (m - rank) * pvals[i]))
        adj[i] = running
    return [float(a) for a in adj]


def _spec_text(title, change_id, kinds, cfg) -> str:
    lines = [
        "format: verify/1",
        f"title: {title}",
        f"change_id: {change_id}",
        f"alpha: {cfg['alpha']}",
        f"unit_of_analysis: {'lot' if 'lot' in kinds else 'part'}",
        f"multiplicity: {cfg['multiplicity']}",
        "",
        "# data from the line-3 gauge station, one row per reading",
        "data:",
        f"  file: {DATA_FILE}",
        "  lot: lot",
        "  characteristic: feature",
        "  value: reading",
        "",
        "characteristics:",
    ]
    for k in kinds:
        name, unit, target, limits, *_ = _PROFILES[k]
        lines += [f"  - name: {name}", f"    unit: {unit}", f"    target: {target}", ""]
    lines += ["", "  # trailing comment after an empty line"]
    return "\n".join(lines) + "\n"


def make_evaluation(
    design: str = "welch", n_old: int = 30, n_new: int = 30, seed: int = 1, **overrides
) -> Evaluation:
    """Build a realistic :class:`Evaluation` for one of :data:`DESIGNS`.

    Parameters
    ----------
    design : str
        One of ``"welch"``, ``"pooled"``, ``"paired"``, ``"one-sample"``, ``"lot"``, ``"all"``.
    n_old, n_new : int
        Units of analysis per process (parts; lots for ``"lot"``). For ``"paired"`` both
        processes measure the same serials, ``min(n_old, n_new)`` matched.
    seed : int
        Seed of the generator: the same arguments give the same Evaluation.
    **overrides
        See the module docstring.

    Examples
    --------
    >>> ev = make_evaluation("pooled", n_old=12, n_new=12)
    >>> ev.characteristics[0].processes["new"].n
    12
    """
    if design not in DESIGNS:
        raise ValueError(f"design must be one of {DESIGNS}, not {design!r}")
    eval_fields = {f.name for f in dataclasses.fields(Evaluation)}
    known = {
        "name",
        "lot_ids",
        "parts_per_lot",
        "shift",
        "spread_ratio",
        "margin",
        "min_n",
        "excluded",
        "alpha",
        "multiplicity",
        "final",
        "change_id",
        "title",
        "spec_text",
    }
    unknown = set(overrides) - known - eval_fields
    if unknown:
        raise TypeError(f"unknown overrides: {sorted(unknown)}")
    kinds = ["welch", "pooled", "paired", "one-sample"] if design == "all" else [design]
    if design == "paired":
        n_new = min(n_old, n_new)
    cfg = {
        "first_kind": kinds[0],
        "parts_per_lot": int(overrides.get("parts_per_lot", 5)),
        "shift": float(overrides.get("shift", 0.1)),
        "spread_ratio": float(overrides.get("spread_ratio", 1.0)),
        "min_n": overrides.get("min_n", 30),
        "excluded": int(overrides.get("excluded", 2)),
        "alpha": float(overrides.get("alpha", 0.05)),
        "multiplicity": overrides.get("multiplicity", "holm" if design == "all" else "none"),
        "final": bool(overrides.get("final", False)),
        "plan_power": 0.9,
        "n_old": int(n_old),
        "n_new": int(n_new),
        "name": overrides.get("name"),
        "lot_ids": overrides.get("lot_ids"),
    }
    if "margin" in overrides:
        cfg["margin"] = overrides["margin"]
    rng = np.random.default_rng(seed)
    rows = _Rows()
    lot_counter = {"A": 1, "B": 1, "ids": 0}
    built = []
    for k in kinds:
        if k == "paired":
            cfg_k = dict(cfg)
            cfg_k["n_new"] = min(cfg["n_old"], cfg["n_new"])
        else:
            cfg_k = cfg
        built.append(_characteristic(k, rng, rows, cfg_k, lot_counter))

    # multiplicity over difference tests (checks without a margin, not spread/capability)
    if cfg["multiplicity"] != "none":
        idx = [
            (ci, ki)
            for ci, b in enumerate(built)
            for ki, r in enumerate(b[1])
            if r.check in ("target", "shift") and r.margin is None and r.p_value is not None
        ]
        ps = [built[ci][1][ki].p_value for ci, ki in idx]
        if cfg["multiplicity"] == "holm":
            adj = _holm(ps)
        else:
            adj = [min(1.0, p * len(ps)) for p in ps]
        for (ci, ki), a in zip(idx, adj, strict=True):
            r = built[ci][1][ki]
            outcome = "HOLD" if a < cfg["alpha"] else "PASS"
            built[ci][1][ki] = dataclasses.replace(r, p_adjusted=a, outcome=outcome)

    table = rows.frame()
    characteristics = []
    for char, results, summaries, diags, review, unmatched, pairs in built:
        dec = _worst([r.outcome for r in results])
        reasons = tuple(f"{r.check}: {r.reason}" for r in results if r.outcome != "PASS")
        if dec == "PASS":
            reasons = tuple(f"{r.check}: {r.reason}" for r in results)
        characteristics.append(
            CharacteristicResult(
                name=char.name,
                unit=char.unit,
                decision=dec,
                reasons=reasons,
                review=review,
                processes=summaries,
                checks=tuple(results),
                diagnostics=tuple(diags),
                spec=char,
                pairs=pairs,
                unmatched_pairs=unmatched,
            )
        )
    decision = _worst([c.decision for c in characteristics])

    title = overrides.get("title", "Line 3 bore finishing: new spindle supplier")
    change_id = overrides.get("change_id", "CC-2025-0117")
    text = overrides.get("spec_text") or _spec_text(title, change_id, kinds, cfg)
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    old_lots = tuple(dict.fromkeys(table.loc[table["process"] == "old", "lot"]))
    new_lots = tuple(dict.fromkeys(table.loc[table["process"] == "new", "lot"]))
    exclusions = tuple(
        Exclusion(reason=r, by="QE-03 (quality)", lot=None, row=None)
        for r in _EXCLUSION_REASONS[: min(cfg["excluded"], 2)]
    )
    spec = Spec(
        path=Path("specs") / "cc-2025-0117.yaml",
        text=text,
        sha256=sha,
        title=title,
        data=DataSpec(
            file=Path("specs") / DATA_FILE,
            file_text=DATA_FILE,
            lot="lot",
            characteristic="feature",
            value="reading",
            pair="serial" if "paired" in kinds else None,
        ),
        characteristics=tuple(c.spec for c in characteristics),
        change_id=change_id,
        alpha=cfg["alpha"],
        lots=LotLists(old=old_lots, new=new_lots),
        unit_of_analysis="lot" if "lot" in kinds else "part",
        min_n=cfg["min_n"] or None,
        multiplicity=cfg["multiplicity"],
        exclude=exclusions,
        plan=PlanSettings(),
        resolved=(
            ("format", "verify/1", False),
            ("alpha", repr(cfg["alpha"]), "alpha" not in overrides),
            ("unit_of_analysis", "lot" if "lot" in kinds else "part", "lot" not in kinds),
            ("min_n", str(cfg["min_n"]), "min_n" not in overrides),
            ("multiplicity", cfg["multiplicity"], cfg["multiplicity"] == "none"),
            ("plan.power", "0.9", True),
            ("data.decimal", ".", True),
            ("data.missing", "['', 'NA']", True),
        )
        + tuple(
            (f"characteristics[{i}].checks.capability.min_cpk", "1.33", True)
            for i, c in enumerate(characteristics)
            if c.spec.checks.capability is not None
        ),
    )

    excl = table[table["excluded"]]
    reasons_count = tuple(
        (str(r), int(n)) for r, n in excl.groupby("exclusion_reason", sort=True).size().items()
    )
    n_rows = len(table)
    used_rows = int((~table["excluded"]).sum())
    measurements = Measurements(
        table=table,
        files=(
            DataFileInfo(
                path=DATA_FILE,
                resolved_path=str(Path("/srv/quality/specs") / DATA_FILE),
                sha256=hashlib.sha256(f"data-{seed}-{n_rows}".encode()).hexdigest(),
                size=n_rows * 38 + 40,
                encoding="utf-8",
                rows_read=n_rows,
                rows_used=used_rows,
                rows_excluded=n_rows - used_rows,
                exclusions=reasons_count,
            ),
        ),
        unassigned_lots=("HW-X-0001",) if cfg["excluded"] else (),
        notes=(),
    )
    run = RunInfo(
        run_id="20250114T021500Z-7c41e2",
        started="2025-01-14T02:15:00Z",
        finished="2025-01-14T02:15:03Z",
        user="qa-nightly",
        host="hw-qa-01",
        command=f"verify run {spec.path} --out reports",
        tool_version="0.1.0",
        git_commit="0123456789abcdef0123456789abcdef01234567",
        versions={
            "python": "3.11.2",
            "numpy": np.__version__,
            "scipy": __import__("scipy").__version__,
            "pandas": pd.__version__,
            "openpyxl": __import__("openpyxl").__version__,
        },
    )
    ev = Evaluation(
        spec=spec,
        measurements=measurements,
        characteristics=tuple(characteristics),
        decision=decision,
        reasons=tuple(
            f"{c.name}: {c.decision}: {'; '.join(c.reasons)}"
            for c in characteristics
            if c.decision != "PASS"
        ),
        review=tuple(r for c in characteristics for r in c.review),
        rules=RULES,
        caution=CAUTION,
        final=cfg["final"],
        run=run,
    )
    replace = {k: v for k, v in overrides.items() if k in eval_fields}
    return dataclasses.replace(ev, **replace) if replace else ev
