"""How the pass-fail checks (rate and rate_shift) read in the workbook and the JSON."""

from __future__ import annotations

_HEADINGS = {"rate": "Failure rate\n(new process)", "rate_shift": "Rate change\n(new against old)"}


def heading(kind) -> str:
    """The kind's column heading on the decision page."""
    return _HEADINGS[kind.name]


def _pct(x: float) -> str:
    return f"{100 * x:.2f}%"


def cell_text(kind, c, r, ev, d: int) -> str:
    """The decision page's cell: the failure rate's exact upper bound against the maximum;
    a change of rate against its margin, or the exact test's p."""
    if r.estimate is None:
        return ""
    x = r.details
    if kind.name == "rate":
        text = f"failure rate {_pct(r.estimate)}"
        if x is not None:
            text += f" ({x.failures_new} of {x.n_new})"
        if r.ci_high is not None:
            level = f"{r.ci_level:.0%} " if r.ci_level else ""
            text += f"\nupper {level}bound {_pct(r.ci_high)}"
            if x is not None:
                text += f" vs max {_pct(x.max)}"
        return text
    from ...decide import fmt_p

    points = f"{100 * r.estimate:+.2f}"
    if x is not None and x.margin is not None and r.ci_low is not None and r.ci_high is not None:
        level = f"{r.ci_level:.0%} " if r.ci_level else ""
        return (f"new − old {points} points\n{level}interval {100 * r.ci_low:+.2f} to "
                f"{100 * r.ci_high:+.2f}\nmargin: below +{100 * x.margin:g} points")
    p = r.p_adjusted if r.p_adjusted is not None else r.p_value
    text = f"new − old {points} points"
    if p is not None:
        label = "p adjusted" if r.p_adjusted is not None else "p"
        text += f"\n{label} {fmt_p(p)} (alpha {ev.spec.alpha:g})"
    return text


def json_fields(kind, r) -> dict:
    """rate: its max and confidence as declared; rate_shift: its margin, as [None, margin]
    (only an increase of the rate is tested)."""
    x = r.details
    if kind.name == "rate":
        return {"max": None if x is None else x.max,
                "confidence": None if x is None else x.confidence}
    if x is not None and x.margin is not None:
        return {"margin": [None, x.margin]}
    return {}


def criterion_value(kind, r) -> float | None:
    """The number the pass-fail sheet compares with: the maximum rate, or the margin."""
    x = r.details
    if x is None:
        return None
    return x.max if kind.name == "rate" else x.margin


def asks(kind, conf) -> list[tuple[str, object, str | None]]:
    """What the spec asks of this check, for the pass-fail sheet: (label, value, format)."""
    rate_format = "0.00%"
    if kind.name == "rate":
        return [("Maximum failure rate", conf.max, rate_format),
                ("Confidence of the upper bound", conf.confidence, "0.0%")]
    if conf.margin is not None:
        return [("Largest allowed increase (margin)", conf.margin, rate_format),
                ("Interval method", "Newcombe hybrid score" if conf.method == "newcombe"
                 else "Miettinen-Nurminen score", None)]
    return [("Rate shift", "no margin: exact test of a higher new rate ("
             + ("Fisher" if conf.test == "fisher" else "Boschloo") + ")", None)]
