"""Spec keys of the pass-fail checks: the new failure rate against a maximum (``rate``) and
against the old rate (``rate_shift``, run by default).
"""

from __future__ import annotations

from dataclasses import dataclass

from ...spec_kind import CheckSpec, Facts, Recorder, opt_float

RATE_SHIFT_METHODS = ("newcombe", "score")
RATE_SHIFT_TESTS = ("fisher", "boschloo")


@dataclass(frozen=True)
class RateCheck:
    """Pass/fail: the new process's failure rate is shown to be at most ``max`` (the exact
    one-sided upper bound at ``confidence`` is at most ``max``)."""

    max: float
    confidence: float = 0.95


@dataclass(frozen=True)
class RateShiftCheck:
    """Pass/fail: the new failure rate is no worse than the old one.

    With ``margin``: the upper end of the (1 - 2 alpha) interval for p_new - p_old (``method``
    newcombe or score) must lie below it. Without: a one-sided exact ``test`` (fisher or
    boschloo) that the new rate is higher HOLDs when significant. ``detect`` is a planning
    value: the rate difference that must not go unseen.
    """

    margin: float | None = None
    method: str = "newcombe"
    test: str = "fisher"
    detect: float | None = None


class RateSpec(CheckSpec):
    name = "rate"
    schema = {
        "description": "pass-fail: the new process's failure rate is shown to be at most max: "
                       "PASS when the exact (Clopper-Pearson) one-sided upper confidence bound "
                       "is at most max.",
        "type": "object",
        "additionalProperties": False,
        "required": ["max"],
        "properties": {
            "max": {
                "description": "The largest acceptable failure rate, as a fraction (0.01 is "
                               "1%).",
                "type": "number", "exclusiveMinimum": 0, "exclusiveMaximum": 1,
            },
            "confidence": {
                "description": "Confidence of the upper bound.",
                "type": "number", "exclusiveMinimum": 0.5, "exclusiveMaximum": 1,
                "default": RateCheck.confidence,
            },
        },
    }
    off_reason = "no max rate"

    def build(self, entry: dict, facts: Facts, rec: Recorder, path: str) -> RateCheck:
        check = RateCheck(max=float(entry["max"]),
                          confidence=float(entry.get("confidence", RateCheck.confidence)))
        rec(f"{path}.max", check.max)
        rec(f"{path}.confidence", check.confidence, default="confidence" not in entry)
        return check

    def words(self, settings: RateCheck, c, spec) -> str:
        return (f"new failure rate at most {settings.max:g} (exact upper bound at "
                f"{settings.confidence:g} confidence)")


class RateShiftSpec(CheckSpec):
    name = "rate_shift"
    schema = {
        "description": "pass-fail: the new failure rate is no worse than the old one. With a "
                       "margin: PASS when the upper end of the (1 - 2 alpha) interval for "
                       "p_new - p_old is below it. Without: HOLD when a one-sided exact test "
                       "shows the new rate higher.",
        "type": ["object", "null"],
        "additionalProperties": False,
        "properties": {
            "margin": {
                "description": "The largest acceptable increase of the failure rate (p_new - "
                               "p_old), as a fraction (0.005 is half a percentage point).",
                "type": "number", "exclusiveMinimum": 0, "exclusiveMaximum": 1,
            },
            "method": {
                "description": "Interval for the difference: newcombe (hybrid score, Newcombe "
                               "1998) or score (Miettinen-Nurminen).",
                "enum": list(RATE_SHIFT_METHODS), "default": RateShiftCheck.method,
            },
            "test": {
                "description": "Without a margin: fisher (Fisher's exact test, one-sided) or "
                               "boschloo (Boschloo's unconditional exact test).",
                "enum": list(RATE_SHIFT_TESTS), "default": RateShiftCheck.test,
            },
            "detect": {
                "description": "Planning: the increase of the failure rate that must not go "
                               "unseen; `verify plan` sizes the trial to detect it.",
                "type": "number", "exclusiveMinimum": 0, "exclusiveMaximum": 1,
            },
        },
    }
    off_reason = ""
    by_default = ""

    def runs_by_default(self, facts: Facts) -> bool:
        return True

    def build(self, entry: dict, facts: Facts, rec: Recorder, path: str) -> RateShiftCheck:
        check = RateShiftCheck(
            margin=opt_float(entry.get("margin")),
            method=entry.get("method", RateShiftCheck.method),
            test=entry.get("test", RateShiftCheck.test), detect=opt_float(entry.get("detect")))
        rec(f"{path}.margin", check.margin if check.margin is not None
            else "none (exact test of a higher rate)", default="margin" not in entry)
        if check.margin is not None:
            rec(f"{path}.method", check.method, default="method" not in entry)
        else:
            rec(f"{path}.test", check.test, default="test" not in entry)
        if check.detect is not None:
            rec(f"{path}.detect", check.detect)
        return check

    def words(self, settings: RateShiftCheck, c, spec) -> str:
        if settings.margin is not None:
            return (f"new minus old rate below {settings.margin:g} ("
                    + ("Newcombe hybrid score" if settings.method == "newcombe"
                       else "Miettinen-Nurminen") + " interval)")
        return ("new rate not higher than old ("
                + ("Fisher" if settings.test == "fisher" else "Boschloo")
                + " exact test, one-sided)")


SPECS = {s.name: s for s in (RateSpec(), RateShiftSpec())}

__all__ = ["RATE_SHIFT_METHODS", "RATE_SHIFT_TESTS", "RateCheck", "RateShiftCheck", "SPECS"]
