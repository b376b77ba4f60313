"""The rule of the conformance check: the tolerance interval against the limits.
"""

from __future__ import annotations

from ...decide import Verdict, fmt


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


CONFORMANCE = ConformanceRule()


def rules(kind) -> tuple:
    """The kind's rules in the order the workbook prints their sentences."""
    return (CONFORMANCE,)

