"""The decision rules: statistics results + spec -> PASS / HOLD / PENDING with reasons in words.

Every rule is an object with a ``describe(alpha)`` method (the sentence printed in the workbook,
the JSON and the audit trail) and a ``decide(...)`` method (the logic). Both live side by side
in one class, so the text and the logic cannot drift apart. Nothing here computes a statistic;
the rules only compare results with alpha, margins and limits.

Outcomes are combined by :func:`combine`: HOLD if any part is HOLD, else PENDING if any part is
PENDING, else PASS.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .model import DECISION_ORDER

CAUTION = (
    "These statistical results support, and never replace, the engineering and quality review "
    "and sign-off that the change-control procedure, the customer's requirements and local "
    "regulations call for. verify approves nothing: a PASS means only that the declared "
    "statistical criteria were met by the data listed here; release is decided by the people "
    "who sign below."
)


def combine(outcomes) -> str:
    """HOLD if any outcome is HOLD, else PENDING if any is PENDING, else PASS."""
    worst = "PASS"
    for o in outcomes:
        if DECISION_ORDER[o] > DECISION_ORDER[worst]:
            worst = o
    return worst


def fmt(x: float | None, digits: int = 4) -> str:
    """A number for a sentence: 4 significant digits, no trailing noise."""
    if x is None:
        return "n/a"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    if x == 0:
        return "0"
    return f"{x:.{digits}g}"


def fmt_like(*values: float | None) -> list[str]:
    """Numbers that belong together, rounded to one number of decimals (4 significant digits on
    the largest, trailing zeros dropped), so that an interval reads 0.000011..0.001384 rather
    than 1.094e-05..0.001384."""
    finite = [abs(v) for v in values if v is not None and math.isfinite(v) and v != 0]
    if not finite:
        return [fmt(v) for v in values]
    decimals = min(12, max(0, 3 - math.floor(math.log10(max(finite)))))
    out = []
    for v in values:
        if v is None or not math.isfinite(v):
            out.append(fmt(v))
        else:
            text = f"{v:.{decimals}f}"
            if "." in text:
                text = text.rstrip("0").rstrip(".")
            out.append("0" if float(text) == 0 else text)
    return out


def p_eq(p: float | None, name: str = "p") -> str:
    """"p = 0.0123", or "p < 0.0001" for a tiny p-value."""
    if p is not None and p < 1e-4:
        return f"{name} < 0.0001"
    return f"{name} = {fmt_p(p)}"


def fmt_p(p: float | None) -> str:
    if p is None:
        return "n/a"
    return "< 0.0001" if p < 1e-4 else f"{p:.4f}"


def margin_words(low: float, high: float, unit: str = "") -> str:
    u = f" {unit}" if unit else ""
    if math.isclose(-low, high, rel_tol=1e-12):
        return f"±{fmt(high)}{u}"
    return f"{fmt(low)}..+{fmt(high)}{u}"


@dataclass(frozen=True)
class Verdict:
    outcome: str
    reason: str


# --- the rules ------------------------------------------------------------------------------


class MarginRule:
    """Target or shift with a margin: equivalence (or non-inferiority) must be shown."""

    def __init__(self, check: str):
        self.check = check
        self.key = f"{check}-margin"
        self.subject = (
            "the new-process mean minus the target" if check == "target" else
            "the new-process mean minus the old-process mean"
        )

    def describe(self, alpha: float) -> str:
        what = "target" if self.check == "target" else "shift"
        return (
            f"{what.capitalize()} with a margin: PASS when the two one-sided tests (TOST) show "
            f"{self.subject} inside the margin, both one-sided p-values below alpha = {alpha} "
            f"(equivalently, the {fmt(100 * (1 - 2 * alpha))}% interval lies inside the margin); "
            "where the spec declares only one side harmful (side: lower or upper), only that "
            "side's one-sided test must pass (non-inferiority). Otherwise HOLD."
        )

    def decide(self, *, pvalue: float, alpha: float, low: float, high: float,
               ci: tuple[float, float], unit: str, side: str) -> Verdict:
        level = fmt(100 * (1 - 2 * alpha))
        ref = "target" if self.check == "target" else "the old process"
        lo, hi = fmt_like(ci[0], ci[1])
        detail = f"({level}% interval {lo}..{hi}, {p_eq(pvalue)})"
        u = f" {unit}" if unit else ""
        if side == "two-sided":
            claim = f"within {margin_words(low, high, unit)} of {ref}"
        elif side == "lower":
            claim = f"at most {fmt(-low)}{u} below {ref}"
        else:
            claim = f"at most {fmt(high)}{u} above {ref}"
        if pvalue < alpha:
            return Verdict("PASS", f"shown {claim} {detail}")
        beyond = ("; the whole interval lies beyond the margin"
                  if self.harm_shown(ci=ci, low=low, high=high, side=side) else "")
        if side == "two-sided":
            return Verdict("HOLD", f"not shown {claim} {detail}{beyond}")
        return Verdict("HOLD", f"not shown to be {claim} {detail}{beyond}")

    @staticmethod
    def harm_shown(*, ci: tuple[float, float], low: float, high: float, side: str) -> bool:
        """True when the (1 - 2 alpha) interval lies wholly beyond the harmful end(s) of the
        margin: the data then show harm, not merely a lack of evidence."""
        if side == "lower":
            return ci[1] < low
        if side == "upper":
            return ci[0] > high
        return ci[1] < low or ci[0] > high


class DifferenceRule:
    """Target or shift without a margin: HOLD on a significant harmful departure."""

    def __init__(self, check: str):
        self.check = check
        self.key = f"{check}-difference"

    def describe(self, alpha: float) -> str:
        subject = ("the new-process mean differs from the target" if self.check == "target"
                   else "the new-process mean differs from the old-process mean")
        test = ("the one-sample t-test" if self.check == "target"
                else "the difference test (paired, Welch or pooled t-test as the spec declares)")
        return (
            f"{self.check.capitalize()} without a margin: HOLD when {test} finds that {subject} "
            f"in the harmful direction at alpha = {alpha} (two-sided unless the spec's side says "
            "lower or upper; p-values adjusted across characteristics when the spec asks for "
            "holm or bonferroni); otherwise PASS with a note of the smallest departure these "
            "data would detect with 80% power. Not detecting a difference is not evidence that "
            "nothing changed."
        )

    def decide(self, *, pvalue: float, alpha: float, estimate: float, unit: str,
               detectable: float | None, adjusted: bool) -> Verdict:
        which = "adjusted p" if adjusted else "p"
        noun = "departure from target" if self.check == "target" else "shift"
        u = f" {unit}" if unit else ""
        est, det = fmt_like(estimate, detectable)
        if pvalue < alpha:
            return Verdict(
                "HOLD", f"{noun} of {est}{u} detected in the harmful direction "
                f"({p_eq(pvalue, which)}, alpha {alpha})")
        note = (f"; the smallest {noun} these data detect with 80% power is {det}{u}"
                if detectable is not None else "")
        return Verdict("PASS", f"no {noun} detected ({p_eq(pvalue, which)}){note}")


class SpreadRule:
    key = "spread"

    def describe(self, alpha: float) -> str:
        return (
            "Spread: HOLD when the one-sided test shows the new process's spread larger than the "
            f"old one's at alpha = {alpha} (p-value adjusted with the difference tests when the "
            "spec asks for holm or bonferroni). With data.pair declared the test runs on the "
            "matched pairs (Pitman-Morgan) unless the spec writes spread design: independent; "
            "with unit_of_analysis: lot it compares the pooled within-lot variances (F-test on "
            "sum(n_i - 1) degrees of freedom), so that it does not depend on the lot sizes, and "
            "reports the between-lot standard deviations beside it. The ratio of standard "
            "deviations (new / old) and its interval are reported (Brown-Forsythe: the "
            "difference of mean absolute deviations and its own interval). Otherwise PASS."
        )

    def decide(self, *, pvalue: float, alpha: float, ratio: float,
               ci: tuple[float, float], level: float, method: str,
               adjusted: bool = False, what: str = "sd ratio new/old",
               note: str = "") -> Verdict:
        which = "adjusted p" if adjusted else "p"
        lo, hi = (fmt(ci[0]), fmt(ci[1])) if what == "sd ratio new/old" else fmt_like(*ci)
        est = fmt(ratio) if what == "sd ratio new/old" else fmt_like(ratio)[0]
        detail = (f"{what} {est}, {fmt(100 * level)}% interval "
                  f"{lo}..{hi}, {method} {p_eq(pvalue, which)}{note}")
        if pvalue < alpha:
            return Verdict("HOLD", f"new spread larger than old ({detail})")
        return Verdict("PASS", f"no increase in spread shown ({detail})")


class CapabilityRule:
    key = "capability"

    def describe(self, alpha: float) -> str:
        return (
            "Capability: HOLD when the new process's capability index (the spec's index: Cpk "
            "from the within-process sigma, or Ppk from the overall sd) is below the spec's "
            "min; with judge: lower_bound, when its lower one-sided confidence bound (at the "
            "spec's confidence) is below min. The index and its lower bound are reported "
            "either way. Otherwise PASS."
        )

    def decide(self, *, cpk: float, lower_bound: float | None, min_cpk: float,
               index: str = "Cpk", judge: str = "estimate",
               confidence: float = 0.95) -> Verdict:
        level = f"{fmt(100 * confidence)}%"
        lb = (f", lower {level} bound {fmt(lower_bound, 3)}" if lower_bound is not None
              else "")
        if judge == "lower_bound":
            if lower_bound is None:
                return Verdict("HOLD", f"the lower {level} bound of {index} cannot be computed "
                               f"(new {index} {fmt(cpk, 3)})")
            head = f"the lower {level} bound of the new {index} ({fmt(cpk, 3)})"
            if lower_bound < min_cpk:
                return Verdict("HOLD", f"{head}, {fmt(lower_bound, 3)}, is below "
                               f"{fmt(min_cpk)}")
            return Verdict("PASS", f"{head}, {fmt(lower_bound, 3)}, meets {fmt(min_cpk)}")
        if cpk < min_cpk:
            return Verdict("HOLD", f"new {index} {fmt(cpk, 3)} is below {fmt(min_cpk)}{lb}")
        return Verdict("PASS", f"new {index} {fmt(cpk, 3)} meets {fmt(min_cpk)}{lb}")


class ConformanceRule:
    """The new process's tolerance interval (or one-sided bound) against the limits."""

    key = "conformance"

    def describe(self, alpha: float) -> str:
        return (
            "Conformance: PASS when the new process's tolerance interval, which holds the "
            "spec's coverage of the parts with the spec's confidence (ISO 16269-6), lies within "
            "the limits: with two limits the two-sided interval mean -/+ k2 sd (exact factor, "
            "Odeh/Owen integral); with one limit, or side: lower or upper, the one-sided bound "
            "mean - k1 sd or mean + k1 sd (exact factor, noncentral t) against that limit. "
            "Otherwise HOLD, naming the limit crossed. The check does not use alpha; it is not "
            "in the multiplicity family (it must pass on its own, like an equivalence test)."
        )

    def decide(self, *, low: float | None, high: float | None, lower: float | None,
               upper: float | None, coverage: float, confidence: float, k: float | None,
               unit: str = "") -> Verdict:
        u = f" {unit}" if unit else ""
        # tolerance limits to 6 significant digits (a limit like 11.975 needs 5 to be told
        # apart); the specification limits as written
        lo, hi = fmt(low, 6), fmt(high, 6)
        lsl, usl = fmt(lower, 12), fmt(upper, 12)
        what = (f"{fmt(100 * coverage)}% of parts with {fmt(100 * confidence)}% confidence"
                + (f", k = {fmt(k)}" if k is not None else ""))
        if low is not None and high is not None:
            shown = f"tolerance interval {lo}..{hi}{u} ({what})"
        elif low is not None:
            shown = f"lower tolerance bound {lo}{u} ({what})"
        else:
            shown = f"upper tolerance bound {hi}{u} ({what})"
        crossed = []
        if low is not None and lower is not None and low < lower:
            crossed.append(f"below the lower limit {lsl}")
        if high is not None and upper is not None and high > upper:
            crossed.append(f"above the upper limit {usl}")
        if crossed:
            return Verdict("HOLD", f"{shown} reaches {' and '.join(crossed)}")
        within = ("within the limits " f"{lsl}..{usl}" if low is not None and high is not None
                  else f"within the lower limit {lsl}" if low is not None
                  else f"within the upper limit {usl}")
        return Verdict("PASS", f"{shown} lies {within}")


def pct(x: float | None, digits: int = 4) -> str:
    """A rate as a percentage for a sentence: 0.0123 -> "1.23%"."""
    if x is None:
        return "n/a"
    return f"{fmt(100 * x, digits)}%"


class RateRule:
    """Pass-fail: the new failure rate is shown to be at most the maximum."""

    key = "rate"

    def describe(self, alpha: float) -> str:
        return (
            "Rate (pass-fail): PASS when the exact one-sided upper confidence bound of the new "
            "process's failure rate (Clopper-Pearson: the confidence quantile of the beta "
            "distribution with failures + 1 and passes as parameters) is at most the spec's "
            "max; otherwise HOLD. Zero failures are no proof on their own: they show the rate "
            "below max only when enough parts were inspected (the success-run plan). Not "
            "adjusted for multiplicity: every such check must pass."
        )

    def decide(self, *, failures: int, inspected: int, upper: float, max_rate: float,
               confidence: float) -> Verdict:
        level = f"{fmt(100 * confidence)}%"
        detail = (f"{failures} failed of {inspected}, rate {pct(failures / inspected)}, "
                  f"upper {level} bound {pct(upper)}")
        if upper <= max_rate:
            return Verdict("PASS", f"failure rate shown to be at most {pct(max_rate)} "
                           f"({detail})")
        return Verdict("HOLD", f"failure rate not shown to be at most {pct(max_rate)} "
                       f"({detail})")

    @staticmethod
    def harm_shown(*, lower: float, max_rate: float) -> bool:
        """True when even the lower confidence bound exceeds max: the rate is too high."""
        return lower > max_rate


class RateShiftRule:
    """Pass-fail: the new failure rate is no worse than the old one."""

    key = "rate_shift"

    def describe(self, alpha: float) -> str:
        return (
            "Rate shift (pass-fail), with a margin: PASS when the upper end of the "
            f"{fmt(100 * (1 - 2 * alpha))}% interval for the new failure rate minus the old "
            "one (Newcombe's hybrid score interval, or Miettinen-Nurminen with method: score) "
            "lies below the margin; otherwise HOLD. Without a margin: HOLD when a one-sided "
            f"exact test (Fisher's, or Boschloo's with test: boschloo) shows the new rate higher "
            f"at alpha = {alpha} (p-values adjusted with the difference tests under holm or "
            "bonferroni); otherwise PASS. Not detecting an increase is not evidence that "
            "nothing changed: prefer a margin."
        )

    def decide_margin(self, *, estimate: float, ci: tuple[float, float], level: float,
                      margin: float, method: str) -> Verdict:
        lo, hi = fmt_like(100 * ci[0], 100 * ci[1])
        detail = (f"difference {fmt_like(100 * estimate)[0]} points, {fmt(100 * level)}% "
                  f"interval {lo}..{hi} points, {method}")
        if ci[1] < margin:
            return Verdict("PASS", f"new failure rate shown at most {fmt(100 * margin)} points "
                           f"above the old one ({detail})")
        beyond = "; the whole interval lies beyond the margin" if ci[0] >= margin else ""
        return Verdict("HOLD", f"new failure rate not shown at most {fmt(100 * margin)} points "
                       f"above the old one ({detail}){beyond}")

    def decide_test(self, *, pvalue: float, alpha: float, estimate: float, method: str,
                    adjusted: bool) -> Verdict:
        which = "adjusted p" if adjusted else "p"
        d = fmt_like(100 * estimate)[0]
        if pvalue < alpha:
            return Verdict("HOLD", f"new failure rate higher than old by {d} points "
                           f"({method}, {p_eq(pvalue, which)}, alpha {alpha})")
        return Verdict("PASS", f"no increase of the failure rate detected (difference {d} "
                       f"points, {method}, {p_eq(pvalue, which)})")


class SufficiencyRule:
    key = "sufficiency"

    def describe(self, alpha: float) -> str:
        return (
            "Sufficiency: while either process has fewer than its planned units (min_n, one "
            "number or one per process; parts, pairs or lots, as the spec's unit of analysis "
            "and pairing say) the characteristic is PENDING, naming the short process, unless "
            "the run "
            "is final (--final); checks that already show harm (a significant harmful shift, a "
            "larger spread, or an interval wholly beyond the margin) still HOLD, and no check "
            "can PASS before the plan is complete. With fewer than 2 units or zero spread a "
            "check cannot be computed: HOLD with the reason "
            "(PENDING while planned data are still arriving)."
        )

    def shortfall(self, counts: dict[str, int], min_n, final: bool) -> str | None:
        """The PENDING reason ("new: 12 of 30 planned") or None when the plan is complete.

        ``min_n`` is one plan for every count, a mapping from the count's name ("old",
        "new", "pairs") to its plan, or None (no plan).
        """
        if min_n is None or final:
            return None
        plans = min_n if isinstance(min_n, dict) else dict.fromkeys(counts, min_n)
        short = [f"{p}: {n} of {plans[p]} planned" for p, n in counts.items()
                 if plans.get(p) is not None and n < plans[p]]
        return "; ".join(short) if short else None


class DiagnosticsRule:
    key = "diagnostics"

    def describe(self, alpha: float) -> str:
        return (
            "Diagnostics never decide alone: a flagged diagnostic (non-normal values, a possible "
            "outlier, a lot effect while the unit is the part, fewer than 3 lots in a process, "
            "instability, coarse measurement resolution) adds a 'review:' note to the "
            "characteristic and to the summary. Outliers are never removed automatically; only "
            "the spec's exclusions, each with its reason and name, remove data."
        )


class MultiplicityRule:
    key = "multiplicity"

    def describe(self, alpha: float, method: str = "none") -> str:
        adj = {"none": "are not adjusted", "holm": "are adjusted by Holm's step-down method",
               "bonferroni": "are adjusted by the Bonferroni method"}[method]
        level = ("" if method == "none" else
                 "; the intervals, critical values and power figures of those checks use "
                 "alpha / m, m the number of tests in the family")
        return (
            "Multiplicity: the family is every check that HOLDs on significance, i.e. every "
            "difference test (a target or shift check without a margin), every spread "
            "test and every pass-fail rate_shift test without a margin, across "
            f"characteristics; their p-values {adj}{level}. A check that cannot "
            "be computed is left out of the family (and counted nowhere), and listed. "
            "Equivalence tests need no adjustment, because every one of them must pass for an "
            "overall PASS (intersection-union)."
        )


class CombinationRule:
    key = "combination"

    def describe(self, alpha: float) -> str:
        return (
            "Combination: a characteristic is HOLD if any of its checks is HOLD, else PENDING if "
            "any is PENDING, else PASS; the overall decision is formed the same way from the "
            "characteristics."
        )


TARGET_MARGIN = MarginRule("target")
SHIFT_MARGIN = MarginRule("shift")
TARGET_DIFFERENCE = DifferenceRule("target")
SHIFT_DIFFERENCE = DifferenceRule("shift")
SPREAD = SpreadRule()
CAPABILITY = CapabilityRule()
CONFORMANCE = ConformanceRule()
RATE = RateRule()
RATE_SHIFT = RateShiftRule()
SUFFICIENCY = SufficiencyRule()
DIAGNOSTICS = DiagnosticsRule()
MULTIPLICITY = MultiplicityRule()
COMBINATION = CombinationRule()


def rules_in_words(alpha: float, multiplicity: str, *, pass_fail: bool = False
                   ) -> tuple[str, ...]:
    """Every rule's sentence, in the order the workbook prints them; the pass-fail rules
    (rate, rate shift) only where the spec has a pass-fail characteristic."""
    rates = (RATE.describe(alpha), RATE_SHIFT.describe(alpha)) if pass_fail else ()
    return (
        TARGET_MARGIN.describe(alpha),
        TARGET_DIFFERENCE.describe(alpha),
        SHIFT_MARGIN.describe(alpha),
        SHIFT_DIFFERENCE.describe(alpha),
        SPREAD.describe(alpha),
        CAPABILITY.describe(alpha),
        CONFORMANCE.describe(alpha),
        *rates,
        SUFFICIENCY.describe(alpha),
        MULTIPLICITY.describe(alpha, multiplicity),
        DIAGNOSTICS.describe(alpha),
        COMBINATION.describe(alpha),
    )


def while_pending(verdict: Verdict, *, harm_shown: bool, shortfall: str) -> Verdict:
    """Apply the sufficiency rule to one check's verdict while planned data are arriving.

    A PASS cannot stand before the plan is complete (releasing on the first night a p-value
    happens to fall inflates the false-pass rate); a HOLD for lack of evidence waits; a HOLD on
    positive evidence of harm stays.
    """
    if verdict.outcome == "HOLD" and harm_shown:
        return verdict
    return Verdict("PENDING", f"{shortfall}; so far: {verdict.reason}")
