"""Spec keys of the conformance check: the new process's tolerance interval within the limits.

``coverage`` of the parts with ``confidence``; ``side`` lower or upper for a one-sided bound
(left out: two-sided with two limits, one-sided with one). Runs only when listed.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ...spec_kind import CheckSpec, Facts, Recorder, Semantics


@dataclass(frozen=True)
class ConformanceCheck:
    """The conformance criterion: the new process's tolerance interval (``coverage`` of the
    parts with ``confidence``) must lie within the limits.

    ``side`` is ``two-sided`` (two limits: a two-sided interval), ``lower`` or ``upper`` (a
    one-sided bound against that limit only); the spec's limits decide it when not written.
    """

    coverage: float = 0.99
    confidence: float = 0.95
    side: str = "two-sided"


class ConformanceSpec(CheckSpec):
    name = "conformance"
    schema = {
        "description": "Tolerance interval of the new process against the limits (ISO "
                       "16269-6): PASS when the interval that holds `coverage` of the parts "
                       "with `confidence` lies within the limits; two limits: a two-sided "
                       "interval (exact factor, Odeh/Owen integral), one limit or `side`: a "
                       "one-sided bound (exact factor, noncentral t); needs limits; not run "
                       "unless listed.",
        "type": ["object", "null"],
        "additionalProperties": False,
        "properties": {
            "coverage": {
                "description": "Proportion of the parts the interval must hold.",
                "type": "number", "exclusiveMinimum": 0.5, "exclusiveMaximum": 1,
                "default": ConformanceCheck.coverage,
            },
            "confidence": {
                "description": "Confidence that the interval holds `coverage` of the parts.",
                "type": "number", "exclusiveMinimum": 0.5, "exclusiveMaximum": 1,
                "default": ConformanceCheck.confidence,
            },
            "side": {
                "description": "lower | upper: a one-sided bound against that limit only; left "
                               "out: two-sided with two limits, one-sided with one.",
                "enum": ["lower", "upper"],
            },
        },
    }
    # the key came after the pass-fail checks' keys in the published schema: it keeps its place
    schema_order = 75
    off_reason = None  # runs only when listed: nothing to record when it does not
    # not among the checks a message suggests; as before the registry, a pass-fail
    # characteristic that lists it is not told off (its builder runs only pass-fail kinds)
    suggested = False

    def build(self, entry: dict, facts: Facts, rec: Recorder, path: str) -> ConformanceCheck:
        lo, hi = facts.limits if facts.limits is not None else (None, None)
        side = entry.get("side") or ("two-sided" if lo is not None and hi is not None
                                     else "lower" if lo is not None else "upper")
        check = ConformanceCheck(
            coverage=float(entry.get("coverage", ConformanceCheck.coverage)),
            confidence=float(entry.get("confidence", ConformanceCheck.confidence)), side=side)
        rec(f"{path}.coverage", check.coverage, default="coverage" not in entry)
        rec(f"{path}.confidence", check.confidence, default="confidence" not in entry)
        rec(f"{path}.side", side, default="side" not in entry)
        return check

    def check(self, entry: Any, path: str, ctx: Semantics) -> None:
        label = ctx.label
        if not ctx.has_limits:
            ctx.add(path, f"a conformance check needs limits{label}: add limits: [lower, "
                    "upper] (null for a side without a limit), or remove this check", key=True)
            return
        limits = ctx.characteristic.get("limits")
        side = entry.get("side") if isinstance(entry, dict) else None
        if not (isinstance(limits, list) and len(limits) == 2) or side is None:
            return
        if side == "lower" and limits[0] is None:
            ctx.add(f"{path}.side", f"side: lower needs a lower limit{label}: the limits give "
                    "none; write side: upper, or add the lower limit")
        elif side == "upper" and limits[1] is None:
            ctx.add(f"{path}.side", f"side: upper needs an upper limit{label}: the limits give "
                    "none; write side: lower, or add the upper limit")

    def words(self, settings: ConformanceCheck, c, spec) -> str:
        cf = settings
        shape = ("two-sided tolerance interval within both limits" if cf.side == "two-sided"
                 else f"{cf.side} tolerance bound within the {cf.side} limit")
        dist = getattr(c, "distribution", "normal")
        how = ("exact normal factor" if dist == "normal"
               else "distribution-free, order statistics" if dist == "any"
               else f"{dist} fit, limits transformed back")
        return f"{shape}, coverage {cf.coverage:g} at confidence {cf.confidence:g} ({how})"


SPECS = {s.name: s for s in (ConformanceSpec(),)}

__all__ = ["ConformanceCheck", "SPECS"]
