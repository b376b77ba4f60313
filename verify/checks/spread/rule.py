"""The rule of the spread check: HOLD on a significantly larger new spread.
"""

from __future__ import annotations

from ...decide import Verdict, fmt, fmt_like, fmt_percent, p_eq


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
        if what == "sd ratio new/old":
            lo, hi, est = fmt(ci[0]), fmt(ci[1]), fmt(ratio)
        else:
            lo, hi = fmt_like(*ci)
            est = fmt_like(ratio)[0]
        detail = (f"{what} {est}, {fmt_percent(level)}% interval "
                  f"{lo}..{hi}, {method} {p_eq(pvalue, which)}{note}")
        if pvalue < alpha:
            return Verdict("HOLD", f"new spread larger than old ({detail})")
        return Verdict("PASS", f"no increase in spread shown ({detail})")


SPREAD = SpreadRule()


def rules(kind) -> tuple:
    """The kind's rules in the order the workbook prints their sentences."""
    return (SPREAD,)

