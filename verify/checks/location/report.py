"""How the location checks (target and shift) read in the workbook and the JSON."""

from __future__ import annotations

from ...report.cells import P_FORMAT, STAT_FORMAT
from ...report.decision_cells import margin_words, num, signed
from ...report.summary import margin_text as written_margin

_HEADINGS = {"target": "Target\n(new against target)", "shift": "Shift\n(new against old)"}
_DIFFERENCE = {"target": "new − target", "shift": "new − old"}


def heading(kind) -> str:
    """The kind's column heading on the decision page."""
    return _HEADINGS[kind.name]


def cell_text(kind, c, r, ev, d: int) -> str:
    """The decision page's cell: the interval against the margin, or the estimate and its
    p-value against alpha."""
    from ...decide import fmt_p

    if r.margin is not None and r.ci_low is not None and r.ci_high is not None:
        level = f"{r.ci_level:.0%} " if r.ci_level else ""
        return (
            f"{level}interval {num(r.ci_low, d)} to {num(r.ci_high, d)}\n"
            f"margin: {margin_words(r, d)}"
        )
    if r.estimate is not None:
        p = r.p_adjusted if r.p_adjusted is not None else r.p_value
        label = "p adjusted" if r.p_adjusted is not None else "p"
        text = f"{_DIFFERENCE[kind.name]} {signed(r.estimate, d)}"
        if p is not None:
            text += f"\n{label} {fmt_p(p)} (alpha {ev.spec.alpha:g})"
        return text
    return ""


def interval_axis(kind, *_) -> str:
    """What the check's interval is a difference of, on the chart of intervals against the
    margins (a kind with this answer is drawn there)."""
    return {"target": "target: new − target", "shift": "shift: new − old"}[kind.name]


def json_fields(kind, r) -> dict:
    """With a margin, the one-sided tests against its ends (TOST; one of them for
    non-inferiority)."""
    x = r.details
    if r.margin is None or x is None:
        return {}
    return {"p_lower": x.p_lower, "p_upper": x.p_upper, "statistic_lower": x.statistic_lower,
            "statistic_upper": x.statistic_upper}


def _tost(name: str):
    return lambda r: getattr(r.details, name, None)


def sheet_rows(kind) -> list:
    """The check table's rows of the kind's own, after the p-values: TOST's one-sided tests."""
    return [
        ("TOST: statistic, lower test", _tost("statistic_lower"), STAT_FORMAT),
        ("TOST: p-value, lower test", _tost("p_lower"), P_FORMAT),
        ("TOST: statistic, upper test", _tost("statistic_upper"), STAT_FORMAT),
        ("TOST: p-value, upper test", _tost("p_upper"), P_FORMAT),
    ]


def sheet_formats(kind, r, fmts: dict) -> dict:
    """Number formats of the characteristic sheet's check column: in the data's unit."""
    return {"standard_error": fmts["se"]}


def margin_text(kind, r, side: str) -> str | None:
    """The margin as written, on the characteristic sheet."""
    return written_margin(r.margin, side)


def rests_on(kind, c, r) -> int | None:
    """The n the check rests on: the pairs, or the smaller process, for the shift; the new
    process for the target."""
    if kind.name == "shift":
        if c.pairs is not None:
            return c.pairs
        ns = [p.n for p in c.processes.values()]
    else:
        ns = [p.n for k, p in c.processes.items() if k == "new"]
    return min(ns) if ns else None
