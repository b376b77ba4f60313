"""Spec keys of the capability check: the new process's Cpk or Ppk against a minimum.

``min_cpk: x`` is short for ``{index: cpk, min: x}``; ``judge`` estimate or lower_bound (its
lower one-sided bound at ``confidence``); ``subgroup: lot`` takes the within sigma from lot
subgroups. Runs by default when the characteristic has limits and a distribution model.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ...spec_kind import CheckSpec, Facts, Recorder, Semantics, TableColumn

CAPABILITY_INDICES = ("cpk", "ppk")
CAPABILITY_JUDGES = ("estimate", "lower_bound")
DEFAULT_MIN_CPK = 1.33


@dataclass(frozen=True)
class CapabilityCheck:
    """The capability criterion: ``index`` (cpk | ppk) judged against ``min``.

    ``judge: estimate`` compares the point estimate with ``min``; ``judge: lower_bound`` compares
    its lower one-sided confidence bound at ``confidence``. ``min_cpk: x`` in a spec is short for
    ``{index: cpk, min: x}``.
    """

    min_cpk: float = DEFAULT_MIN_CPK  # the required minimum of ``index`` (keeps its first name)
    subgroup: str | None = None  # "lot": within sigma from lot subgroup ranges; None: moving range
    index: str = "cpk"  # cpk (within-process sigma) | ppk (overall sd)
    judge: str = "estimate"  # estimate | lower_bound
    confidence: float = 0.95

    @property
    def min(self) -> float:
        """The required minimum of ``index``."""
        return self.min_cpk

    @property
    def label(self) -> str:
        return "Cpk" if self.index == "cpk" else "Ppk"


class CapabilitySpec(CheckSpec):
    name = "capability"
    schema = {
        "description": "New-process capability index (Cpk or Ppk, estimate or lower bound) "
                       "against a minimum; needs limits.",
        "type": ["object", "null"],
        "additionalProperties": False,
        "properties": {
            "min_cpk": {
                "description": "Smallest acceptable Cpk: short for {index: cpk, min: x}.",
                "type": "number", "exclusiveMinimum": 0, "default": DEFAULT_MIN_CPK,
            },
            "index": {
                "description": "cpk: within-process sigma (moving ranges, or lot subgroup "
                               "ranges); ppk: the overall sample sd.",
                "enum": list(CAPABILITY_INDICES), "default": CapabilityCheck.index,
            },
            "min": {
                "description": "Smallest acceptable value of the index.",
                "type": "number", "exclusiveMinimum": 0, "default": DEFAULT_MIN_CPK,
            },
            "judge": {
                "description": "estimate: the index itself must reach min; lower_bound: its "
                               "lower one-sided confidence bound at `confidence` must reach "
                               "min.",
                "enum": list(CAPABILITY_JUDGES), "default": CapabilityCheck.judge,
            },
            "confidence": {
                "description": "Confidence level of the lower bound (reported always; it "
                               "decides with judge: lower_bound).",
                "type": "number", "exclusiveMinimum": 0.5, "exclusiveMaximum": 1,
                "default": CapabilityCheck.confidence,
            },
            "subgroup": {
                "description": "lot: within-lot sigma from lot subgroups; left out: moving "
                               "ranges in production order.",
                "enum": ["lot"],
            },
        },
    }
    table_columns = (TableColumn("min_cpk", "min_cpk"),)
    off_reason = "no limits"
    by_default = " (when limits are given)"

    def runs_by_default(self, facts: Facts) -> bool:
        return facts.limits is not None and facts.distribution != "any"

    def build(self, entry: dict, facts: Facts, rec: Recorder, path: str) -> CapabilityCheck:
        # min_cpk: x is the short form of {index: cpk, min: x}
        minimum = entry.get("min", entry.get("min_cpk", DEFAULT_MIN_CPK))
        check = CapabilityCheck(
            min_cpk=float(minimum), subgroup=entry.get("subgroup"),
            index=entry.get("index", CapabilityCheck.index),
            judge=entry.get("judge", CapabilityCheck.judge),
            confidence=float(entry.get("confidence", CapabilityCheck.confidence)))
        rec(f"{path}.index", check.index, default="index" not in entry)
        rec(f"{path}.min", check.min, default="min" not in entry and "min_cpk" not in entry)
        rec(f"{path}.judge", check.judge, default="judge" not in entry)
        rec(f"{path}.confidence", check.confidence, default="confidence" not in entry)
        rec(f"{path}.subgroup", check.subgroup or "none (moving range)")
        return check

    def check(self, entry: Any, path: str, ctx: Semantics) -> None:
        label, dist = ctx.label, ctx.distribution
        if not ctx.has_limits:
            ctx.add(path, f"a capability check needs limits{label}: add limits: [lower, upper], "
                    "or remove this check", key=True)
        if dist == "any":
            ctx.add(path, f"capability needs a distribution model{label}, and distribution: "
                    "any has none: use conformance (distribution-free tolerance limits), or "
                    "name the distribution", key=True)
        if not isinstance(entry, dict):
            return
        if dist not in ("normal", "any"):
            if entry.get("judge") == "lower_bound":
                ctx.add(f"{path}.judge", f"judge: lower_bound is defined for the normal model "
                        f"only{label}; with distribution: {dist} the percentile index is "
                        "judged on its estimate: remove judge, or use conformance")
            if "subgroup" in entry:
                ctx.add(f"{path}.subgroup", f"subgroup sets the within-lot sigma of the normal "
                        f"model{label}; with distribution: {dist} the percentile method uses "
                        "the fitted distribution: remove subgroup")
        if "min_cpk" in entry and "min" in entry:
            ctx.add(f"{path}.min_cpk", f"min_cpk is short for {{index: cpk, min: x}}; give min "
                    f"or min_cpk, not both{label}")
        elif "min_cpk" in entry and entry.get("index") == "ppk":
            ctx.add(f"{path}.min_cpk", f"min_cpk applies to Cpk, but index is ppk{label}: "
                    "write min: instead")

    def words(self, settings: CapabilityCheck, c, spec) -> str:
        cap = settings
        dist = getattr(c, "distribution", "normal")
        if dist != "normal":
            # a fitted non-normal model is judged by the percentile index (the compute hook)
            return (f"new percentile Ppk ({dist} fit, ISO 22514-2) at least {cap.min:g} "
                    "(the estimate judged)")
        how = ("overall sd" if cap.index == "ppk" else "within-lot sigma"
               if cap.subgroup == "lot" else "moving-range sigma")
        judged = (f"lower {cap.confidence:.0%} bound of new {cap.label}"
                  if cap.judge == "lower_bound" else f"new {cap.label}")
        return (f"{judged} at least {cap.min:g} ({how}; index {cap.index}, judge "
                f"{cap.judge})")


SPECS = {s.name: s for s in (CapabilitySpec(),)}

__all__ = ["CAPABILITY_INDICES", "CAPABILITY_JUDGES", "DEFAULT_MIN_CPK", "CapabilityCheck",
           "SPECS"]
