"""The rules of the pass-fail checks: the failure rate against max, and the change of rate.
"""

from __future__ import annotations

from ...decide import Verdict, fmt, fmt_like, p_eq, pct


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


RATE = RateRule()
RATE_SHIFT = RateShiftRule()
_RULES = {"rate": RATE, "rate_shift": RATE_SHIFT}


def rules(kind) -> tuple:
    """The kind's rules in the order the workbook prints their sentences."""
    return (_RULES[kind.name],)

