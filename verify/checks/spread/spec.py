"""Spec keys of the spread check: new spread not larger than old (one-sided).

``method`` f or brown-forsythe; ``design`` paired (Pitman-Morgan on the matched pairs, the
default whenever ``data.pair`` is declared) or independent (the pairs ignored knowingly).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ...spec_kind import CheckSpec, Facts, Recorder, Semantics

SPREAD_METHODS = ("f", "brown-forsythe")
SPREAD_DESIGNS = ("paired", "independent")


@dataclass(frozen=True)
class SpreadCheck:
    method: str = "f"  # f | brown-forsythe: which one-sided test decides
    # paired: Pitman-Morgan on the matched pairs (the default whenever data.pair is declared);
    # independent: the pairs are ignored knowingly (F-test or Brown-Forsythe)
    design: str = "independent"
    design_given: bool = False  # the spec wrote design: (an opt-out is reported as such)


class SpreadSpec(CheckSpec):
    name = "spread"
    schema = {
        "description": "New spread not larger than old (one-sided test).",
        "type": ["object", "null"],
        "additionalProperties": False,
        "properties": {
            "method": {
                "description": "f: F-test on the variances; brown-forsythe: median-based, "
                               "robust to non-normal data (independent design only).",
                "enum": list(SPREAD_METHODS),
                "default": SpreadCheck.method,
            },
            "design": {
                "description": "paired: Pitman-Morgan test on the matched pairs (the default "
                               "whenever data.pair is declared); independent: ignore the pairs "
                               "knowingly and compare the processes as independent samples "
                               "(the workbook says so).",
                "enum": list(SPREAD_DESIGNS),
            },
        },
    }
    off_reason = ""
    by_default = ""

    def runs_by_default(self, facts: Facts) -> bool:
        return True

    def build(self, entry: dict, facts: Facts, rec: Recorder, path: str) -> SpreadCheck:
        # declared pairs decide the spread test whatever the shift design: the two variances
        # of paired data are correlated, and only a test on the pairs (Pitman-Morgan) is valid
        design = entry.get("design", "paired" if facts.pairs_usable else "independent")
        check = SpreadCheck(method=entry.get("method", SpreadCheck.method), design=design,
                            design_given="design" in entry)
        rec(f"{path}.method", check.method)
        rec(f"{path}.design", design)
        return check

    def check(self, entry: Any, path: str, ctx: Semantics) -> None:
        if not isinstance(entry, dict):
            return
        design = entry.get("design")
        if design == "paired" and not ctx.has_pair:
            ctx.add(f"{path}.design", f"a paired spread test needs data.pair, the column that "
                    f"pairs an old row with a new row{ctx.label}")
        elif design == "paired" and ctx.lot_unit:
            ctx.add(f"{path}.design", "a paired spread test pairs parts; it cannot run with "
                    "unit_of_analysis: lot (lot means carry no pair key)")
        paired = design == "paired" or (design is None and ctx.has_pair and not ctx.lot_unit)
        if paired and entry.get("method") == "brown-forsythe":
            ctx.add(f"{path}.method", "brown-forsythe compares independent samples, but the "
                    f"spread is tested on the declared pairs{ctx.label}: remove method, or "
                    "write design: independent to ignore the pairs knowingly")

    def uses_pairs(self, settings: SpreadCheck) -> bool:
        return settings.design == "paired"

    def words(self, settings: SpreadCheck, c, spec) -> str:
        if settings.design == "paired":
            return ("new spread not larger than old (Pitman-Morgan on the matched pairs, "
                    "one-sided, design paired)")
        method = "F-test" if settings.method == "f" else "Brown-Forsythe"
        if spec.unit_of_analysis == "lot":
            method = ("F-test on the pooled within-lot variances, sum(n_i - 1) df; "
                      "between-lot sds reported beside it")
        opted = (", design independent: the declared pairs are ignored"
                 if settings.design_given else "")
        return f"new spread not larger than old ({method}, one-sided{opted})"


SPECS = {s.name: s for s in (SpreadSpec(),)}

__all__ = ["SPREAD_METHODS", "SPREAD_DESIGNS", "SpreadCheck", "SPECS"]
