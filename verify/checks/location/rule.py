"""The rules of the location checks (target and shift): equivalence or non-inferiority with a
margin, a difference test in the harmful direction without one.
"""

from __future__ import annotations

from ...decide import Verdict, fmt, fmt_like, fmt_like_pair, fmt_percent, margin_words, p_eq


class MarginRule:
    """Target or shift with a margin: equivalence (or non-inferiority) must be shown."""

    def __init__(self, check: str):
        self.check = check
        self.key = f"{check}-margin"
        self.subject = (
            "the new-process mean minus the target" if check == "target" else
            "the new-process mean minus the old-process mean"
        )
        self._claims: dict[tuple, str] = {}  # _claim's texts

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
        return Verdict(*self.outcome_reason(pvalue, alpha, low, high, ci, unit, side))

    def outcome_reason(self, pvalue: float, alpha: float, low: float, high: float,
                       ci: tuple[float, float], unit: str, side: str) -> tuple[str, str]:
        """The ``(outcome, reason)`` of :meth:`decide`'s Verdict, for a caller that reads only
        the two (the location draft: no Verdict to make and read)."""
        level = fmt_percent(1 - 2 * alpha)  # fmt(100 * (1 - 2 * alpha))
        lo, hi = fmt_like_pair(ci[0], ci[1])  # fmt_like(ci[0], ci[1])
        detail = f"({level}% interval {lo}..{hi}, {p_eq(pvalue)})"
        claim = self._claim(side, low, high, unit)
        if pvalue < alpha:
            return "PASS", f"shown {claim} {detail}"
        beyond = ("; the whole interval lies beyond the margin"
                  if self.harm_shown(ci=ci, low=low, high=high, side=side) else "")
        if side == "two-sided":
            return "HOLD", f"not shown {claim} {detail}{beyond}"
        return "HOLD", f"not shown to be {claim} {detail}{beyond}"

    def _claim(self, side: str, low: float, high: float, unit: str) -> str:
        """What a PASS shows ("within ±0.02 mm of target"); remembered by its margin, side and
        unit (the characteristics of a layout often share them; :func:`_claim_words` makes
        the text; a margin of other than floats is not remembered, as margin_words does)."""
        if type(low) is not float or type(high) is not float:
            return _claim_words(self.check, side, low, high, unit)
        key = (side, low, high, unit)
        text = self._claims.get(key)
        if text is None:
            if len(self._claims) >= 256:
                self._claims.clear()
            text = self._claims[key] = _claim_words(self.check, side, low, high, unit)
        return text

    @staticmethod
    def harm_shown(*, ci: tuple[float, float], low: float, high: float, side: str) -> bool:
        """True when the (1 - 2 alpha) interval lies wholly beyond the harmful end(s) of the
        margin: the data then show harm, not merely a lack of evidence."""
        if side == "lower":
            return ci[1] < low
        if side == "upper":
            return ci[0] > high
        return ci[1] < low or ci[0] > high


def _claim_words(check: str, side: str, low: float, high: float, unit: str) -> str:
    """The claim a margin rule's PASS makes, in words."""
    ref = "target" if check == "target" else "the old process"
    u = f" {unit}" if unit else ""
    if side == "two-sided":
        return f"within {margin_words(low, high, unit)} of {ref}"
    if side == "lower":
        return f"at most {fmt(-low)}{u} below {ref}"
    return f"at most {fmt(high)}{u} above {ref}"


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


TARGET_MARGIN = MarginRule("target")
SHIFT_MARGIN = MarginRule("shift")
TARGET_DIFFERENCE = DifferenceRule("target")
SHIFT_DIFFERENCE = DifferenceRule("shift")
_RULES = {"target": (TARGET_MARGIN, TARGET_DIFFERENCE), "shift": (SHIFT_MARGIN, SHIFT_DIFFERENCE)}


def rules(kind) -> tuple:
    """The kind's rules in the order the workbook prints their sentences."""
    return _RULES[kind.name]


def margin_rule(kind) -> MarginRule:
    return _RULES[kind.name][0]


def difference_rule(kind) -> DifferenceRule:
    return _RULES[kind.name][1]


def review(kind, res, spec) -> list[str]:
    """Review notes on a decided check (without the "review: <characteristic>: " lead): a PASS
    that rests on fewer parts than the plan's power asks for."""
    n_new = res.details.n_new if res.details is not None else None
    if (res.outcome == "PASS" and res.planned_n is not None and n_new is not None
            and n_new < res.planned_n):
        return [f"the {res.check} PASS rests on n = {n_new} per process, fewer than the "
                f"{res.planned_n} the plan's power of {spec.plan.power:g} asks for"]
    return []
