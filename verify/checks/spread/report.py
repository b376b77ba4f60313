"""How the spread check reads in the workbook and the JSON."""

from __future__ import annotations

from ...report.cells import RATIO_FORMAT


def heading(kind) -> str:
    """The kind's column heading on the decision page."""
    return "Spread\n(sd new / old)"


def _brown_forsythe(r) -> bool:
    return "brown" in (r.method or "").lower()


def cell_text(kind, c, r, ev, d: int) -> str:
    """The decision page's cell: the sd ratio and its lower confidence bound against 1."""
    from ...decide import fmt, fmt_p

    if r.estimate is None:
        return ""
    text = f"sd ratio new/old {r.estimate:.3f}"
    if r.ci_low is not None and r.ci_level is not None:
        # the lower end of the two-sided (1 - 2 alpha) interval is the one-sided (1 - alpha)
        # bound: above 1 shows a larger spread
        one_sided = 1 - (1 - r.ci_level) / 2
        # fmt, not a whole percent: under holm or bonferroni the level is 1 - alpha/m, e.g.
        # 99.5%, which a whole percent would print as 100%
        text += f"\nlower {fmt(100 * one_sided)}% bound {r.ci_low:.3f} (HOLD above 1)"
    if r.method and "Brown-Forsythe" in r.method and r.p_value is not None:
        text += f"\np {fmt_p(r.p_value)}"
    return text


def json_fields(kind, r) -> dict:
    """No fields of the kind's own beside the common ones."""
    return {}


def sheet_formats(kind, r, fmts: dict) -> dict:
    """A ratio of sds has no unit; Brown-Forsythe estimates a difference of mean absolute
    deviations, in the data's unit."""
    return {} if _brown_forsythe(r) else {"estimate": RATIO_FORMAT}
