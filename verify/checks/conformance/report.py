"""How the conformance check reads in the workbook and the JSON."""

from __future__ import annotations


def heading(kind) -> str:
    """The kind's column heading on the decision page."""
    return "Conformance"


def json_fields(kind, r) -> dict:
    """The tolerance interval as declared: ci_low / ci_high are the tolerance limits (None on
    the side a one-sided bound leaves open); k is the factor of mean -/+ k sd, None for
    distribution-free limits."""
    x = r.details
    if x is None:
        return {}
    return {"coverage": x.coverage, "confidence": x.coverage_confidence,
            "k": getattr(x, "k", None), "side": x.side}
