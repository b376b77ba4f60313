"""The rule of the capability check: the index (or its lower bound) against min.
"""

from __future__ import annotations

from ...decide import Verdict, fmt, fmt_often, fmt_percent


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
        return Verdict(*self.outcome_reason(cpk, lower_bound, min_cpk, index, judge,
                                            confidence))

    def outcome_reason(self, cpk: float, lower_bound: float | None, min_cpk: float,
                       index: str = "Cpk", judge: str = "estimate",
                       confidence: float = 0.95) -> tuple[str, str]:
        """The ``(outcome, reason)`` of :meth:`decide`'s Verdict, for a caller that reads only
        the two (the capability draft: no Verdict to make and read)."""
        level = f"{fmt_percent(confidence)}%"
        lb = (f", lower {level} bound {fmt(lower_bound, 3)}" if lower_bound is not None
              else "")
        if judge == "lower_bound":
            if lower_bound is None:
                return "HOLD", (f"the lower {level} bound of {index} cannot be computed "
                                f"(new {index} {fmt(cpk, 3)})")
            head = f"the lower {level} bound of the new {index} ({fmt(cpk, 3)})"
            if lower_bound < min_cpk:
                return "HOLD", f"{head}, {fmt(lower_bound, 3)}, is below {fmt_often(min_cpk)}"
            return "PASS", f"{head}, {fmt(lower_bound, 3)}, meets {fmt_often(min_cpk)}"
        if cpk < min_cpk:
            return "HOLD", f"new {index} {fmt(cpk, 3)} is below {fmt_often(min_cpk)}{lb}"
        return "PASS", f"new {index} {fmt(cpk, 3)} meets {fmt_often(min_cpk)}{lb}"


CAPABILITY = CapabilityRule()


def rules(kind) -> tuple:
    """The kind's rules in the order the workbook prints their sentences."""
    return (CAPABILITY,)


def review(kind, res, spec) -> list[str]:
    """Review notes on a decided check (without the "review: <characteristic>: " lead): an
    index judged on its estimate that PASSes while its lower confidence bound is below min."""
    x = res.details
    if res.outcome != "PASS" or x is None or x.judge != "estimate":
        return []
    lb = x.lower_bound
    if lb is None or lb >= x.min:
        return []
    name = "Cpk" if x.index == "cpk" else "Ppk"
    # (fmt_often(x.min) and fmt_percent(x.confidence) are fmt(x.min) and
    # fmt(100 * x.confidence), remembered: the same min and level for every characteristic)
    return [f"{name} meets {fmt_often(x.min)} but its lower {fmt_percent(x.confidence)}% bound "
            f"{fmt(lb, 3)} does not"]
