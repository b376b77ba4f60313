"""Spec keys of the location checks: the new mean against the target, and against the old mean.

Both take an equivalence ``margin`` (a number m, a pair [low, high] or "p%" of the target) and a
planning ``detect``; without a margin they are difference tests. ``shift`` also takes the
``design`` (welch, pooled or paired; paired by default when ``data.pair`` is declared).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

from ...spec_kind import (
    UNKNOWN,
    CheckSpec,
    Facts,
    Recorder,
    Semantics,
    TableColumn,
    fmt,
    num,
    opt_float,
)

DESIGNS = ("welch", "pooled", "paired")
PERCENT_PATTERN = r"^\s*[0-9]+(\.[0-9]+)?\s*%\s*$"
_PERCENT = re.compile(r"^\s*([0-9]+(?:\.[0-9]+)?)\s*%\s*$")


@dataclass(frozen=True)
class Margin:
    """An equivalence margin [low, high] around 0 (low < 0 < high), in the data's unit.

    ``text`` is the margin as written in the spec ("0.02", "[-0.01, 0.03]", "0.5%").
    """

    low: float
    high: float
    text: str


@dataclass(frozen=True)
class TargetCheck:
    margin: Margin | None = None
    detect: float | None = None  # planning: the departure that must not go unseen


@dataclass(frozen=True)
class ShiftCheck:
    design: str = "welch"  # welch | pooled | paired
    margin: Margin | None = None
    detect: float | None = None


_DETECT = {
    "description": "Planning: the smallest departure that must not go unseen, in the data's "
                   "unit; `verify plan` sizes the trial to detect it.",
    "type": "number",
    "exclusiveMinimum": 0,
}

MARGIN_SCHEMA = {
    "description": "Equivalence margin: the departure that still counts as no practical change. "
                   "A number m means -m..+m; a pair [low, high] needs low < 0 < high; a text "
                   "like \"0.5%\" is a percentage of |target|.",
    "anyOf": [
        {"title": "a number m greater than 0 (meaning -m..+m)", "type": "number",
         "exclusiveMinimum": 0},
        {"title": "a pair [low, high] with low < 0 < high", "type": "array",
         "items": {"type": "number"}, "minItems": 2, "maxItems": 2},
        {"title": "a percentage of the target such as \"0.5%\"", "type": "string",
         "pattern": PERCENT_PATTERN, "examples": ["0.5%"]},
    ],
}


# -- margins --------------------------------------------------------------------------------


def parse_margin(raw: Any, target: float | None) -> Margin | None:
    """Turn a margin as written (number, [low, high] or "p%") into a :class:`Margin`."""
    if raw is None:
        return None
    if isinstance(raw, list):
        low, high = float(raw[0]), float(raw[1])
        return Margin(low=low, high=high, text=f"[{fmt(raw[0])}, {fmt(raw[1])}]")
    if isinstance(raw, str):
        pct = float(_PERCENT.match(raw).group(1))
        m = pct / 100.0 * abs(float(target))  # target presence checked by check_margin
        return Margin(low=-m, high=m, text=raw.strip())
    m = float(raw)
    return Margin(low=-m, high=m, text=fmt(raw))


def _rec_margin(rec: Recorder, key: str, margin: Margin | None) -> None:
    if margin is None:
        rec(key, "none (difference test)", default=False)
        return
    shown = f"[{fmt(margin.low)}, {fmt(margin.high)}]"
    rec(key, shown if margin.text == shown else f"{margin.text} = {shown}", default=False)


def check_margin(margin: Any, path: str, ctx: Semantics) -> None:
    """A pair must straddle 0; a percent margin needs a target other than 0."""
    if not ctx.clean(path):
        return
    label, target = ctx.label, ctx.target
    if isinstance(margin, list):
        low, high = margin
        if not low < 0 < high:
            ctx.add(path, f"margin [{fmt(low)}, {fmt(high)}] must have low < 0 < high{label}")
    elif isinstance(margin, str):
        if target is UNKNOWN:
            return
        if target is None:
            ctx.add(path, f"a percent margin ({margin.strip()}) is a percentage of the target, "
                    f"and there is no target{label}: add target or give the margin as a number")
        elif float(_PERCENT.match(margin).group(1)) / 100.0 * abs(target) == 0:
            ctx.add(path, f"a percent margin ({margin.strip()}) of target {target} is 0: give "
                    "the margin as a number greater than 0")


def _margin_text(m: Margin) -> str:
    core = f"{num(m.low)}..+{num(m.high)}"
    return core if m.text.startswith("[") or "%" not in m.text else f"{core} ({m.text})"


def _margin_claim(c, m: Margin, what: str, design: str, of: str = "") -> str:
    u = f" {c.unit}" if c.unit else ""
    if c.side == "lower":
        return (f"{what} no lower than {num(m.low)}{u} (non-inferiority, harmful side "
                f"lower{design})")
    if c.side == "upper":
        return (f"{what} no higher than +{num(m.high)}{u} (non-inferiority, harmful side "
                f"upper{design})")
    return f"{what} within {_margin_text(m)}{u}{of} (equivalence, TOST{design})"


# -- the two kinds --------------------------------------------------------------------------


class TargetSpec(CheckSpec):
    name = "target"
    schema = {
        "description": "New-process mean against the target: equivalence (TOST) with a margin, "
                       "else a one-sample t-test.",
        "type": ["object", "null"],
        "additionalProperties": False,
        "properties": {"margin": {"$ref": "#/definitions/margin"}, "detect": _DETECT},
    }
    definitions = {"margin": MARGIN_SCHEMA}
    table_columns = (TableColumn("target_margin", "margin", percent=True),)
    off_reason = "no target"
    by_default = " (when a target is given)"

    def runs_by_default(self, facts: Facts) -> bool:
        return facts.target is not None

    def build(self, entry: dict, facts: Facts, rec: Recorder, path: str) -> TargetCheck:
        check = TargetCheck(margin=parse_margin(entry.get("margin"), facts.target),
                            detect=opt_float(entry.get("detect")))
        _rec_margin(rec, f"{path}.margin", check.margin)
        if check.detect is not None:
            rec(f"{path}.detect", check.detect)
        return check

    def check(self, entry: Any, path: str, ctx: Semantics) -> None:
        if ctx.target is None:
            ctx.add(path, f"a target check needs the characteristic's target{ctx.label}: add "
                    "target, or remove this check", key=True)
        if isinstance(entry, dict) and "margin" in entry:
            check_margin(entry["margin"], f"{path}.margin", ctx)

    def words(self, settings: TargetCheck, c, spec) -> str:
        m = settings.margin
        if m is None:
            return f"new mean against {num(c.target)} (one-sample t-test, {c.side})"
        if c.side == "two-sided":
            return _margin_claim(c, m, "new mean", "", f" of {num(c.target)}")
        return _margin_claim(c, m, f"new mean minus {num(c.target)}", "")


class ShiftSpec(CheckSpec):
    name = "shift"
    schema = {
        "description": "New mean against old: equivalence (TOST) with a margin, else a "
                       "difference test.",
        "type": ["object", "null"],
        "additionalProperties": False,
        "properties": {
            "margin": {"$ref": "#/definitions/margin"},
            "design": {
                "description": "welch | pooled | paired; default paired when data.pair is set, "
                               "else welch.",
                "enum": list(DESIGNS),
            },
            "detect": _DETECT,
        },
    }
    table_columns = (TableColumn("shift_margin", "margin", percent=True),)
    off_reason = ""
    by_default = ""

    def runs_by_default(self, facts: Facts) -> bool:
        return True

    def build(self, entry: dict, facts: Facts, rec: Recorder, path: str) -> ShiftCheck:
        # lot means carry no pair key: with unit_of_analysis lot the default is welch
        design = entry.get("design", "paired" if facts.pairs_usable else "welch")
        check = ShiftCheck(design=design, margin=parse_margin(entry.get("margin"), facts.target),
                           detect=opt_float(entry.get("detect")))
        rec(f"{path}.design", design)
        _rec_margin(rec, f"{path}.margin", check.margin)
        if check.detect is not None:
            rec(f"{path}.detect", check.detect)
        return check

    def check(self, entry: Any, path: str, ctx: Semantics) -> None:
        if not isinstance(entry, dict):
            return
        if "margin" in entry:
            check_margin(entry["margin"], f"{path}.margin", ctx)
        if entry.get("design") == "paired":
            if not ctx.has_pair:
                ctx.add(f"{path}.design", f"a paired design needs data.pair, the column that "
                        f"pairs an old row with a new row{ctx.label}")
            if ctx.lot_unit:
                ctx.add(f"{path}.design", "a paired design pairs parts; it cannot run with "
                        "unit_of_analysis: lot (lot means carry no pair key)")

    def uses_pairs(self, settings: ShiftCheck) -> bool:
        return settings.design == "paired"

    def words(self, settings: ShiftCheck, c, spec) -> str:
        m = settings.margin
        if m is None:
            return f"new against old (difference test, {settings.design}, {c.side})"
        return _margin_claim(c, m, "new minus old", f", {settings.design}")


SPECS = {s.name: s for s in (TargetSpec(), ShiftSpec())}

__all__ = ["DESIGNS", "Margin", "TargetCheck", "ShiftCheck", "parse_margin", "SPECS"]
