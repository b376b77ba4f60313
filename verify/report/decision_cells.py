"""What one check shows in its cell of the decision page: the outcome and the number that decided.

The decision page has a column per check kind that ran (its columns come from the check names
present in the evaluation, in the order they first appear), and each cell shows the outcome in
colour and, below it, the one comparison that decided it: what that comparison is, and the
column's heading, come from the kind's ``report`` hook (``cell_text``, ``heading``).

A check kind whose report hook has no ``cell_text`` shows its outcome and its estimate when
there is one, so a later check kind appears on the page without a change here.

With a ``data.stream`` column the new process's streams are checked one by one as well; when a
stream's check of the column's kind is worse than the pooled result, the cell leads with that
outcome and names the stream(s) ("HOLD (stream C3)"), then shows the pooled result below it,
so a row decided HOLD by one cavity does not read as a pooled PASS.
"""

from __future__ import annotations

import math
from collections.abc import Callable

from ..decide import combine
from ..model import CharacteristicResult, CheckResult, Evaluation
from .hooks import has_report, report_hook


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


def _generic(c: CharacteristicResult, r: CheckResult, ev: Evaluation, d: int) -> str:
    if r.estimate is not None:
        return f"estimate {r.estimate:.4g}"
    return r.reason if len(r.reason) <= 60 else r.reason[:57] + "..."


CellText = Callable[[CharacteristicResult, CheckResult, Evaluation, int], str]


def check_kinds(ev: Evaluation) -> list[str]:
    """The check names present in the evaluation, in the order they first appear."""
    return list(dict.fromkeys(r.check for c in ev.characteristics for r in c.checks))


def heading(kind: str) -> str:
    """The column heading of a check kind: its report hook's ``heading``, else its name."""
    return report_hook(kind, "heading", default=None) or kind.replace("_", " ").capitalize()


def cell_outcome(c: CharacteristicResult, r: CheckResult) -> tuple[str, tuple[str, ...]]:
    """The cell's outcome: the worst of the pooled check ``r`` and the same kind's check in each
    stream of the new process, and the streams that make it worse than the pooled one."""
    per_stream = [(st.name, k.outcome) for st in c.streams for k in st.checks
                  if k.check == r.check]
    worst = combine([r.outcome, *(o for _n, o in per_stream)])
    if worst == r.outcome:
        return r.outcome, ()
    return worst, tuple(n for n, o in per_stream if o == worst)


def cell_text(c: CharacteristicResult, r: CheckResult, ev: Evaluation, decimals: int) -> str:
    """The outcome on the first line, then the number that decided (the kind's report hook's
    ``cell_text``, else its estimate). A stream worse than the pooled result leads, named, with
    the pooled outcome below it."""
    if has_report(r.check, "cell_text"):
        detail = report_hook(r.check, "cell_text", c, r, ev, decimals)
    else:
        detail = _generic(c, r, ev, decimals)
    outcome, streams = cell_outcome(c, r)
    head = r.outcome
    if streams:
        label = "stream" if len(streams) == 1 else "streams"
        head = f"{outcome} ({label} {', '.join(streams)})\npooled: {r.outcome}"
    return head + (f"\n{detail}" if detail else "")


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
        if b.expected_ppm is not None:
            ppm = f"; {b.model} {ppm_text(b.expected_ppm)}"
        else:
            ppm = "; no model (any)" if b.model == "any" else f"; no {b.model} fit"
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
