"""The decision rules: statistics results + spec -> PASS / HOLD / PENDING with reasons in words.

Every rule is an object with a ``describe(alpha)`` method (the sentence printed in the workbook,
the JSON and the audit trail) and a ``decide(...)`` method (the logic). Both live side by side
in one class, so the text and the logic cannot drift apart. Nothing here computes a statistic;
the rules only compare results with alpha, margins and limits.

Each kind of check keeps its own rule in its ``rule`` hook (``verify/checks/<package>/rule.py``:
``rules(kind)`` for the sentences, ``review(kind, result, spec)`` for review notes); this module
holds what every kind shares: :class:`Verdict`, the number formats of the sentences, the
sufficiency, multiplicity, diagnostics and combination rules, and :func:`rules_in_words`, which
loops over the registry.

Outcomes are combined by :func:`combine`: HOLD if any part is HOLD, else PENDING if any part is
PENDING, else PASS.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .caution import CAUTION  # noqa: F401  (the decision's caution: Evaluation.caution)
from .model import DECISION_ORDER
from .stats._frozen import fast_init


def combine(outcomes) -> str:
    """HOLD if any outcome is HOLD, else PENDING if any is PENDING, else PASS."""
    worst = "PASS"
    for o in outcomes:
        if DECISION_ORDER[o] > DECISION_ORDER[worst]:
            worst = o
    return worst


_G_SPECS = {d: f".{d}g" for d in range(1, 18)}  # fmt's format specs, built once


def fmt(x: float | None, digits: int = 4) -> str:
    """A number for a sentence: 4 significant digits, no trailing noise."""
    if x is None:
        return "n/a"
    if x == 0:  # (before the infinity test: zero is the commoner; neither is the other)
        return "0"
    if _isinf(x):
        return "inf" if x > 0 else "-inf"
    # format(x, ".4g") is what f"{x:.{digits}g}" computes, without building the spec per call
    # (the default 4 digits without a lookup)
    if digits == 4:
        return format(x, ".4g")
    spec = _G_SPECS.get(digits)
    return format(x, spec if spec is not None else f".{digits}g")


_isinf = math.isinf


_OFTEN: dict[float, str] = {}  # fmt_often's texts by number


def fmt_often(x: float | None) -> str:
    """``fmt(x)`` for a number that recurs from one characteristic to the next (a spec's
    target, min or true shift, a recording step): a float's text is remembered."""
    if type(x) is not float:
        return fmt(x)
    text = _OFTEN.get(x)
    if text is None:
        if len(_OFTEN) >= 256:
            _OFTEN.clear()
        text = _OFTEN[x] = fmt(x)
    return text


_PERCENTS: dict[float, str] = {}  # fmt_percent's texts by level


def fmt_percent(level: float) -> str:
    """``fmt(100 * level)``: a confidence level as a percentage number ("90" for 0.9). A
    float level's text is remembered (a layout states the same few levels for every
    characteristic)."""
    if type(level) is not float:
        return fmt(100 * level)
    text = _PERCENTS.get(level)
    if text is None:
        if len(_PERCENTS) >= 256:
            _PERCENTS.clear()
        text = _PERCENTS[level] = fmt(100 * level)
    return text


_F_SPECS = tuple(f".{d}f" for d in range(13))  # fmt_like's format specs, built once


def fmt_like(*values: float | None) -> list[str]:
    """Numbers that belong together, rounded to one number of decimals (4 significant digits on
    the largest, trailing zeros dropped), so that an interval reads 0.000011..0.001384 rather
    than 1.094e-05..0.001384."""
    top = 0  # the largest finite non-zero |value|, 0 while there is none
    for v in values:
        if v is not None and v != 0 and _isfinite(v):
            a = abs(v)
            if a > top:
                top = a
    if top == 0:
        return [fmt(v) for v in values]
    places = 3 - _floor(_log10(top))  # the decimals, 0 to 12 of them
    spec = _F_SPECS[12 if places > 12 else 0 if places < 0 else places]
    out = []
    for v in values:
        if v is None or not _isfinite(v):
            out.append(fmt(v))
            continue
        text = format(v, spec)  # f"{v:.{decimals}f}"
        if places > 0:  # (a fixed-point text has a point exactly when it has decimals)
            text = text.rstrip("0").rstrip(".")
        # a text whose number is zero: its digits all zeros, so no point is left ("0", "-0")
        out.append("0" if text == "0" or text == "-0" else text)
    return out


_isfinite, _floor, _log10 = math.isfinite, math.floor, math.log10


def fmt_like_pair(a: float | None, b: float | None) -> tuple[str, str]:
    """``fmt_like(a, b)`` as a pair, for the bounds of an interval: two finite non-zero floats
    (the common case) are formatted here by fmt_like's own steps without its loops (the
    largest magnitude, the decimals it gives, each text with trailing zeros dropped and a zero
    text made "0"); anything else goes to fmt_like itself."""
    if type(a) is not float or type(b) is not float or not (
            a and b and _isfinite(a) and _isfinite(b)):
        lo, hi = fmt_like(a, b)
        return lo, hi
    top = abs(a)
    if abs(b) > top:
        top = abs(b)
    places = 3 - _floor(_log10(top))
    spec = _F_SPECS[12 if places > 12 else 0 if places < 0 else places]
    ta, tb = format(a, spec), format(b, spec)
    if places > 0:
        ta, tb = ta.rstrip("0").rstrip("."), tb.rstrip("0").rstrip(".")
    return ("0" if ta == "0" or ta == "-0" else ta), ("0" if tb == "0" or tb == "-0" else tb)


def p_eq(p: float | None, name: str = "p") -> str:
    """"p = 0.0123", or "p < 0.0001" for a tiny p-value."""
    if p is None:
        return f"{name} = n/a"
    if p < 1e-4:
        return f"{name} < 0.0001"
    return f"{name} = {p:.4f}"  # (fmt_p's text)


def fmt_p(p: float | None) -> str:
    if p is None:
        return "n/a"
    return "< 0.0001" if p < 1e-4 else f"{p:.4f}"


_MARGIN_WORDS: dict[tuple[float, float, str], str] = {}  # margin_words' texts by margin


def margin_words(low: float, high: float, unit: str = "") -> str:
    """The margin in words ("±0.02 mm", "-0.01..+0.03 mm"); a float margin's text is
    remembered (the characteristics of a layout often share their margins)."""
    if type(low) is not float or type(high) is not float or type(unit) is not str:
        return _margin_words(low, high, unit)
    key = (low, high, unit)
    text = _MARGIN_WORDS.get(key)
    if text is None:
        if len(_MARGIN_WORDS) >= 256:
            _MARGIN_WORDS.clear()
        text = _MARGIN_WORDS[key] = _margin_words(low, high, unit)
    return text


def _margin_words(low: float, high: float, unit: str) -> str:
    u = f" {unit}" if unit else ""
    if math.isclose(-low, high, rel_tol=1e-12):
        return f"±{fmt(high)}{u}"
    return f"{fmt(low)}..+{fmt(high)}{u}"


@fast_init
@dataclass(frozen=True)
class Verdict:
    outcome: str
    reason: str


# --- the rules common to every check kind ------------------------------------------------------
# (each kind's own rule lives in its ``rule`` hook: ``verify/checks/<package>/rule.py``)


def pct(x: float | None, digits: int = 4) -> str:
    """A rate as a percentage for a sentence: 0.0123 -> "1.23%"."""
    if x is None:
        return "n/a"
    return f"{fmt(100 * x, digits)}%"


class SufficiencyRule:
    key = "sufficiency"

    def describe(self, alpha: float) -> str:
        return (
            "Sufficiency: while either process has fewer than its planned units (min_n, one "
            "number or one per process; parts, pairs or lots, as the spec's unit of analysis "
            "and pairing say) the characteristic is PENDING, naming the short process, unless "
            "the run "
            "is final (--final); checks that already show harm (a significant harmful shift, a "
            "larger spread, or an interval wholly beyond the margin) still HOLD, and no check "
            "can PASS before the plan is complete. With fewer than 2 units or zero spread a "
            "check cannot be computed: HOLD with the reason "
            "(PENDING while planned data are still arriving)."
        )

    def shortfall(self, counts: dict[str, int], min_n, final: bool) -> str | None:
        """The PENDING reason ("new: 12 of 30 planned") or None when the plan is complete.

        ``min_n`` is one plan for every count, a mapping from the count's name ("old",
        "new", "pairs") to its plan, or None (no plan).
        """
        if min_n is None or final:
            return None
        plans = min_n if isinstance(min_n, dict) else dict.fromkeys(counts, min_n)
        short = [f"{p}: {n} of {plans[p]} planned" for p, n in counts.items()
                 if plans.get(p) is not None and n < plans[p]]
        return "; ".join(short) if short else None


class DiagnosticsRule:
    key = "diagnostics"

    def describe(self, alpha: float) -> str:
        return (
            "Diagnostics never decide alone: a flagged diagnostic (non-normal values, a possible "
            "outlier, a lot effect while the unit is the part, fewer than 3 lots in a process, "
            "instability, coarse measurement resolution) adds a 'review:' note to the "
            "characteristic and to the summary. Outliers are never removed automatically; only "
            "the spec's exclusions, each with its reason and name, remove data."
        )


class MultiplicityRule:
    key = "multiplicity"

    def describe(self, alpha: float, method: str = "none") -> str:
        adj = {"none": "are not adjusted", "holm": "are adjusted by Holm's step-down method",
               "bonferroni": "are adjusted by the Bonferroni method"}[method]
        level = ("" if method == "none" else
                 "; the intervals, critical values and power figures of those checks use "
                 "alpha / m, m the number of tests in the family")
        return (
            "Multiplicity: the family is every check that HOLDs on significance, i.e. every "
            "difference test (a target or shift check without a margin), every spread "
            "test and every pass-fail rate_shift test without a margin, across "
            f"characteristics; their p-values {adj}{level}. A check that cannot "
            "be computed is left out of the family (and counted nowhere), and listed. "
            "Equivalence tests need no adjustment, because every one of them must pass for an "
            "overall PASS (intersection-union)."
        )


class CombinationRule:
    key = "combination"

    def describe(self, alpha: float) -> str:
        return (
            "Combination: a characteristic is HOLD if any of its checks is HOLD, else PENDING if "
            "any is PENDING, else PASS; the overall decision is formed the same way from the "
            "characteristics."
        )


SUFFICIENCY = SufficiencyRule()
DIAGNOSTICS = DiagnosticsRule()
MULTIPLICITY = MultiplicityRule()
COMBINATION = CombinationRule()


def rules_in_words(alpha: float, multiplicity: str, *, pass_fail: bool = False
                   ) -> tuple[str, ...]:
    """Every rule's sentence, in the order the workbook prints them: each check kind's rules in
    the registry's order (the pass-fail kinds only where the spec has a pass-fail
    characteristic), then sufficiency, multiplicity, diagnostics and combination."""
    from .checks import kinds

    per_kind = tuple(
        rule.describe(alpha)
        for kind in kinds() if kind.measures != "pass_fail" or pass_fail
        for rule in kind.hook("rule").rules(kind)
    )
    return (
        *per_kind,
        SUFFICIENCY.describe(alpha),
        MULTIPLICITY.describe(alpha, multiplicity),
        DIAGNOSTICS.describe(alpha),
        COMBINATION.describe(alpha),
    )


def while_pending(verdict: Verdict, *, harm_shown: bool, shortfall: str) -> Verdict:
    """Apply the sufficiency rule to one check's verdict while planned data are arriving.

    A PASS cannot stand before the plan is complete (releasing on the first night a p-value
    happens to fall inflates the false-pass rate); a HOLD for lack of evidence waits; a HOLD on
    positive evidence of harm stays.
    """
    if verdict.outcome == "HOLD" and harm_shown:
        return verdict
    return Verdict("PENDING", f"{shortfall}; so far: {verdict.reason}")
