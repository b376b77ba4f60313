"""An evaluation for notebooks: a table with one row per check, a short text and an HTML
summary (what a person sees when a notebook cell ends with the evaluation)."""

from __future__ import annotations

import html

FRAME_COLUMNS = (
    "characteristic", "unit", "check", "method", "design", "outcome", "estimate",
    "standard_error", "statistic", "df", "p_value", "p_adjusted", "ci_low", "ci_high",
    "ci_level", "margin_low", "margin_high", "power", "reason", "characteristic_decision",
)
CAUTION_SHORT = ("These results support, and never replace, the engineering and quality review "
                 "and sign-off.")


def to_frame(ev):
    """One row per check of every characteristic, in spec order (a pandas DataFrame)."""
    import pandas as pd

    rows = []
    for c in ev.characteristics:
        for k in c.checks:
            low, high = k.margin if k.margin is not None else (None, None)
            rows.append({
                "characteristic": c.name, "unit": c.unit, "check": k.check, "method": k.method,
                "design": k.design, "outcome": k.outcome, "estimate": k.estimate,
                "standard_error": k.standard_error, "statistic": k.statistic, "df": k.df,
                "p_value": k.p_value, "p_adjusted": k.p_adjusted, "ci_low": k.ci_low,
                "ci_high": k.ci_high, "ci_level": k.ci_level, "margin_low": low,
                "margin_high": high, "power": k.power, "reason": k.reason,
                "characteristic_decision": c.decision,
            })
    frame = pd.DataFrame(rows, columns=list(FRAME_COLUMNS))
    for col in FRAME_COLUMNS:
        if col in ("characteristic", "unit", "check", "method", "design", "outcome", "reason",
                   "characteristic_decision"):
            frame[col] = frame[col].astype(object)
        else:
            frame[col] = pd.to_numeric(frame[col], errors="coerce").astype(float)
    return frame


def short_repr(ev) -> str:
    """A few lines: title, overall decision, one line per characteristic."""
    head = f"<Evaluation {ev.spec.title!r}: {ev.decision}"
    if ev.spec.change_id:
        head += f" [{ev.spec.change_id}]"
    chars = ", ".join(f"{c.name} {c.decision}" for c in ev.characteristics)
    n = sum(len(c.checks) for c in ev.characteristics)
    return f"{head}; {chars}; {n} checks; .to_frame() for the table>"


def to_html(ev) -> str:
    """A small HTML summary: decision, characteristics with their reasons, the caution."""
    e = html.escape
    colour = {"PASS": "#1b7a3a", "HOLD": "#b3261e", "PENDING": "#8a6d00"}
    rows = "".join(
        f"<tr><td>{e(c.name)}</td><td>{e(c.unit)}</td>"
        f"<td style='color:{colour.get(c.decision, '#000')};font-weight:bold'>"
        f"{e(c.decision)}</td><td>{e('; '.join(c.reasons) or '-')}</td></tr>"
        for c in ev.characteristics)
    title = e(ev.spec.title) + (f" [{e(ev.spec.change_id)}]" if ev.spec.change_id else "")
    return (
        "<div class='verify-evaluation'>"
        f"<p><b>{title}</b>: <span style='color:{colour.get(ev.decision, '#000')};"
        f"font-weight:bold'>{e(ev.decision)}</span></p>"
        "<table><thead><tr><th>characteristic</th><th>unit</th><th>decision</th>"
        f"<th>reasons</th></tr></thead><tbody>{rows}</tbody></table>"
        f"<p><i>{e(CAUTION_SHORT)}</i> <code>.to_frame()</code> gives one row per check.</p>"
        "</div>")
