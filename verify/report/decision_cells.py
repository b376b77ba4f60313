"""What one check shows in its cell of the decision page: the outcome and the number that decided.

The decision page has a column per check kind that ran (its columns come from the check names
present in the evaluation, in the order they first appear), and each cell shows the outcome in
colour and, below it, the one comparison that decided it:

* target or shift with a margin: the interval against the margin;
* target or shift without a margin: the estimate and its p-value against alpha;
* spread: the sd ratio (new / old) and its lower confidence bound against 1;
* capability: the index against its minimum (and the lower bound beside it).

A check kind without its own entry in :data:`CELL_TEXT` shows its outcome and its estimate when
there is one, so a later check kind appears on the page without a change here; give it an entry
to say more.
"""

from __future__ import annotations

import math
from collections.abc import Callable

from ..decide import fmt_p
from ..model import CharacteristicResult, CheckResult, Evaluation


def num(x: float | None, decimals: int) -> str:
    """A number to ``decimals`` places; an open end of an interval as -∞ or +∞."""
    if x is None:
        return "n/a"
    if math.isinf(x):
        return "+∞" if x > 0 else "-∞"
    text = f"{x:.{max(0, decimals)}f}"
    return text.lstrip("-") if float(text) == 0 else text  # never "-0.00"


def signed(x: float, decimals: int) -> str:
    return ("+" if x > 0 else "") + num(x, decimals)


def margin_words(r: CheckResult, decimals: int) -> str:
    """Only the margin that exists: a one-sided check names its harmful side alone."""
    if r.margin is None:
        return "no margin"
    low, high = r.margin
    if r.alternative == "greater":  # lower values harmful: only the low end is tested
        return f"not below {signed(low, decimals)}"
    if r.alternative == "less":
        return f"not above {signed(high, decimals)}"
    if math.isclose(-low, high, rel_tol=1e-12):
        return f"within ±{num(high, decimals)}"
    return f"within {signed(low, decimals)} to {signed(high, decimals)}"


def _location(c: CharacteristicResult, r: CheckResult, ev: Evaluation, d: int) -> str:
    if r.margin is not None and r.ci_low is not None and r.ci_high is not None:
        level = f"{r.ci_level:.0%} " if r.ci_level else ""
        return (
            f"{level}interval {num(r.ci_low, d)} to {num(r.ci_high, d)}\n"
            f"margin: {margin_words(r, d)}"
        )
    if r.estimate is not None:
        p = r.p_adjusted if r.p_adjusted is not None else r.p_value
        label = "p adjusted" if r.p_adjusted is not None else "p"
        what = "new − target" if r.check == "target" else "new − old"
        text = f"{what} {signed(r.estimate, d)}"
        if p is not None:
            text += f"\n{label} {fmt_p(p)} (alpha {ev.spec.alpha:g})"
        return text
    return ""


def _spread(c: CharacteristicResult, r: CheckResult, ev: Evaluation, d: int) -> str:
    if r.estimate is None:
        return ""
    text = f"sd ratio new/old {r.estimate:.3f}"
    if r.ci_low is not None and r.ci_level is not None:
        # the lower end of the two-sided (1 - 2 alpha) interval is the one-sided (1 - alpha)
        # bound: above 1 shows a larger spread
        one_sided = 1 - (1 - r.ci_level) / 2
        text += f"\nlower {one_sided:.0%} bound {r.ci_low:.3f} (HOLD above 1)"
    if r.method and "Brown-Forsythe" in r.method and r.p_value is not None:
        text += f"\np {fmt_p(r.p_value)}"
    return text


def _capability(c: CharacteristicResult, r: CheckResult, ev: Evaluation, d: int) -> str:
    if r.estimate is None:
        return ""
    extra = r.extra or {}
    index = {"cpk": "Cpk", "ppk": "Ppk"}.get(str(extra.get("index") or "cpk"), "Cpk")
    minimum = extra.get("min", extra.get("min_cpk", r.critical_value))
    bound = extra.get("lower_bound", extra.get("cpk_lower_95", r.ci_low))
    judge = str(extra.get("judge") or "estimate")
    if judge.startswith("lower") and bound is not None:
        text = f"{index} lower bound {bound:.2f}"
        if minimum is not None:
            text += f" vs minimum {minimum:.2f}"
        text += f"\n(estimate {r.estimate:.2f})"
        return text
    text = f"{index} {r.estimate:.2f}"
    if minimum is not None:
        text += f" vs minimum {minimum:.2f}"
    if bound is not None:
        text += f"\n(lower 95% bound {bound:.2f})"
    return text


def _pct(x: float) -> str:
    return f"{100 * x:.2f}%"


def _rate(c: CharacteristicResult, r: CheckResult, ev: Evaluation, d: int) -> str:
    """A failure rate: its exact upper bound against the maximum."""
    if r.estimate is None:
        return ""
    x = r.extra or {}
    text = f"failure rate {_pct(r.estimate)}"
    if x.get("failures_new") is not None and x.get("n_new") is not None:
        text += f" ({x['failures_new']} of {x['n_new']})"
    if r.ci_high is not None:
        level = f"{r.ci_level:.0%} " if r.ci_level else ""
        text += f"\nupper {level}bound {_pct(r.ci_high)}"
        if x.get("max") is not None:
            text += f" vs max {_pct(x['max'])}"
    return text


def _rate_shift(c: CharacteristicResult, r: CheckResult, ev: Evaluation, d: int) -> str:
    """A change of failure rate: the interval against the margin, or the exact test's p."""
    if r.estimate is None:
        return ""
    x = r.extra or {}
    points = f"{100 * r.estimate:+.2f}"
    if x.get("margin") is not None and r.ci_low is not None and r.ci_high is not None:
        level = f"{r.ci_level:.0%} " if r.ci_level else ""
        return (f"new − old {points} points\n{level}interval {100 * r.ci_low:+.2f} to "
                f"{100 * r.ci_high:+.2f}\nmargin: below +{100 * x['margin']:g} points")
    p = r.p_adjusted if r.p_adjusted is not None else r.p_value
    text = f"new − old {points} points"
    if p is not None:
        label = "p adjusted" if r.p_adjusted is not None else "p"
        text += f"\n{label} {fmt_p(p)} (alpha {ev.spec.alpha:g})"
    return text


def _generic(c: CharacteristicResult, r: CheckResult, ev: Evaluation, d: int) -> str:
    if r.estimate is not None:
        return f"estimate {r.estimate:.4g}"
    return r.reason if len(r.reason) <= 60 else r.reason[:57] + "..."


CellText = Callable[[CharacteristicResult, CheckResult, Evaluation, int], str]
CELL_TEXT: dict[str, CellText] = {
    "target": _location,
    "shift": _location,
    "spread": _spread,
    "capability": _capability,
    "rate": _rate,
    "rate_shift": _rate_shift,
}
HEADINGS = {
    "target": "Target\n(new against target)",
    "shift": "Shift\n(new against old)",
    "spread": "Spread\n(sd new / old)",
    "capability": "Capability\n(new process)",
    "rate": "Failure rate\n(new process)",
    "rate_shift": "Rate change\n(new against old)",
}


def check_kinds(ev: Evaluation) -> list[str]:
    """The check names present in the evaluation, in the order they first appear."""
    return list(dict.fromkeys(r.check for c in ev.characteristics for r in c.checks))


def heading(kind: str) -> str:
    return HEADINGS.get(kind, kind.replace("_", " ").capitalize())


def cell_text(c: CharacteristicResult, r: CheckResult, ev: Evaluation, decimals: int) -> str:
    """The outcome on the first line, then the number that decided."""
    detail = CELL_TEXT.get(r.check, _generic)(c, r, ev, decimals)
    return r.outcome + (f"\n{detail}" if detail else "")


def beyond_text(c: CharacteristicResult) -> tuple[str, bool]:
    """Parts beyond the specification limits, new (old): the text and whether new has any."""
    new, old = c.processes.get("new"), c.processes.get("old")
    if (new is None or new.beyond_limits is None) and (old is None or old.beyond_limits is None):
        return "no limits", False
    lines = []
    flag = False
    for key, p in (("new", new), ("old", old)):
        if p is None or p.beyond_limits is None:
            continue
        b = p.beyond_limits
        sides = []
        if b.below:
            sides.append(f"{b.below} below")
        if b.above:
            sides.append(f"{b.above} above")
        seen = ", ".join(sides) if sides else "none"
        ppm = "" if b.expected_ppm is None else f"; model {ppm_text(b.expected_ppm)}"
        lines.append(f"{key}: {seen}{ppm}")
        flag = flag or (key == "new" and b.total > 0)
    return "\n".join(lines), flag


def ppm_text(ppm: float) -> str:
    """Expected ppm for a reader: '< 0.1 ppm' when negligible, else 2 significant figures."""
    if ppm < 0.1:
        return "< 0.1 ppm"
    if ppm < 10:
        return f"{ppm:.1f} ppm"
    return f"{ppm:,.0f} ppm"
