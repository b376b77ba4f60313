"""How the conformance check reads in the workbook and the JSON."""

from __future__ import annotations


def heading(kind) -> str:
    """The kind's column heading on the decision page."""
    return "Conformance"


def cell_text(kind, c, r, ev, d: int) -> str:
    """The decision page's cell: the tolerance limits against the specification limits, with
    the coverage and confidence they hold (or the parts that distribution-free limits lack)."""
    from ...decide import fmt

    x = r.details
    if x is None:
        return ""
    if r.ci_low is None and r.ci_high is None:
        need = getattr(x, "n_required", None)
        return f"{x.n} parts; {need} needed" if need is not None else ""
    held = f"({fmt(100 * x.coverage)}% of parts, {fmt(100 * x.coverage_confidence)}% conf.)"
    lower, upper = c.spec.lower, c.spec.upper
    if r.ci_low is not None and r.ci_high is not None:
        return (f"interval {r.ci_low:.{d}f} to {r.ci_high:.{d}f}\n{held}\n"
                f"limits {fmt(lower, 12)} to {fmt(upper, 12)}")
    if r.ci_high is not None:
        return f"upper bound {r.ci_high:.{d}f}\n{held}\nlimit {fmt(upper, 12)}"
    return f"lower bound {r.ci_low:.{d}f}\n{held}\nlimit {fmt(lower, 12)}"


def json_fields(kind, r) -> dict:
    """The tolerance interval as declared: ci_low / ci_high are the tolerance limits (None on
    the side a one-sided bound leaves open); k is the factor of mean -/+ k sd, None for
    distribution-free limits."""
    x = r.details
    if x is None:
        return {}
    return {"coverage": x.coverage, "confidence": x.coverage_confidence,
            "k": getattr(x, "k", None), "side": x.side}
