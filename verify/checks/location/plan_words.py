"""The location checks' plan in words: the method, the margin or shift to detect, the table."""

from __future__ import annotations

from collections.abc import Sequence

from ...plan.model import Plan, PlanPart
from ...plan.words import number
from .choice import DIFFERENCE, EQUIVALENCE, NON_INFERIORITY
from .plan_model import PlanRow, Scenario


def method_words(rows: Sequence[PlanRow]) -> tuple[str, ...]:
    """The method, in sentences, for the tests that occur in ``rows``."""
    kinds = {r.scenario.kind for r in rows}
    designs = {r.scenario.design for r in rows}
    out = [
        "The smallest sufficient trial is the smallest whole number of units per process "
        "(pairs for a paired design) whose power reaches the wanted power; the power with one "
        "unit fewer is shown beside it and falls short. For two-sample designs the old lot "
        "has ceil(n_new / ratio) units.",
    ]
    if EQUIVALENCE in kinds:
        out.append(
            "Equivalence (TOST): the power is the probability that both one-sided t-tests "
            "reject at alpha when the true shift is the assumed one. It is computed exactly, "
            "by integrating over the distribution of the sample sd, not by a normal "
            "approximation. A true shift near a margin end needs far more units than a true "
            "shift of 0; a true shift outside the margin cannot be shown equivalent at any n."
        )
    if NON_INFERIORITY in kinds:
        out.append(
            "Non-inferiority (side lower or upper with a margin): the power of the one-sided "
            "t-test against the harmful side's end of the margin (noncentral t)."
        )
    if DIFFERENCE in kinds:
        out.append(
            "Difference test (no margin): the power of the t-test at alpha (two-sided unless "
            "the side says lower or upper) to detect a true shift of the declared 'detect' "
            "size in the harmful direction (noncentral t)."
        )
    out.append(
        "Detectable shift: the smallest true shift that the difference t-test at the stated n "
        "finds with the wanted power. For an equivalence check it shows how large a real "
        "change the same data would reveal."
    )
    if "welch" in designs:
        out.append(
            "Welch: the power has no closed form; the Welch statistic is taken as noncentral t "
            "with the Welch-Satterthwaite df from the planning sd (the same sd assumed for old "
            "and new). With equal lot sizes this equals the pooled calculation. For very "
            "small lots it is optimistic: at 6 + 6 units a seeded simulation of the Welch "
            "TOST showed equivalence 1 to 2 percentage points less often than planned."
        )
    if "paired" in designs:
        out.append(
            "Paired: the sd is that of the differences new minus old; from a correlation r "
            "between paired values it is sd * sqrt(2 (1 - r))."
        )
    out.append(
        "The sd is a planning value. An sd estimated from few parts is itself uncertain, and a "
        "trial sized on an sd that turns out low will fall short of its power; when in doubt, "
        "plan with a larger sd. These numbers size the trial; they decide nothing."
    )
    return tuple(out)


def _pct(p: float | None) -> str:
    return "-" if p is None else f"{100 * p:.2f}%"


def _n_text(n_new: int | None, n_old: int | None, design: str) -> str:
    if n_new is None:
        return "not reachable"
    if design in ("welch", "pooled") and n_old is not None and n_old != n_new:
        return f"{n_new} new / {n_old} old"
    return str(n_new)


def requirement(s: Scenario) -> str:
    """The margin or the shift to detect, in words: ``"±0.005 mm"``, ``"detect 0.2"``."""
    from ...decide import margin_words

    u = f" {s.unit}" if s.unit else ""
    if s.kind == DIFFERENCE:
        return f"detect {number(s.detect)}{u}"
    if s.kind == NON_INFERIORITY:
        sign = "+" if s.side == "upper" else ""
        return f"bound {sign}{number(s.bound)}{u}"
    return margin_words(s.low, s.high, s.unit)


HEADERS = ("characteristic", "check", "test", "sd", "margin / detect", "true shift",
           "plan for", "its power", "one fewer", "size looked at", "power there",
           "shift found")


def table_rows(rows: Sequence[PlanRow]) -> list[tuple[str, ...]]:
    """The printed table's cells, one tuple per plan row (texts)."""
    out = []
    for r in rows:
        s = r.scenario
        n_rep = ("-" if r.eval_n_new is None else
                 _n_text(r.eval_n_new, r.eval_n_old, s.design) + f" ({s.eval_source})")
        out.append((s.characteristic or "-", s.check, s.test, number(s.sd), requirement(s),
                    number(s.true_shift), _n_text(r.n_new, r.n_old, s.design), _pct(r.power),
                    _pct(r.power_below), n_rep, _pct(r.power_at_eval),
                    number(r.detectable_shift)))
    return out


def lines(plan: Plan, part: PlanPart) -> list[str]:
    """The power plans as printed lines: a column-aligned table, the sd of each check, notes."""
    lines: list[str] = []
    rows = table_rows(part.rows)
    widths = [max(len(h), *(len(row[i]) for row in rows)) for i, h in enumerate(HEADERS)]
    first = part.rows[0].scenario
    lines.append(f"  alpha {first.alpha:g}, wanted power {first.target_power:g}")
    lines.append("")
    lines.append("  ".join(h.ljust(w) for h, w in zip(HEADERS, widths, strict=True)).rstrip())
    for row in rows:
        lines.append("  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)).rstrip())
    lines.append("")
    for r in part.rows:
        s = r.scenario
        who = f"{s.characteristic}, {s.check}" if s.characteristic else s.check
        lines.append(f"  {who}: sd {number(s.sd)} from {s.sd_source}")
        if r.note:
            lines.append(f"  {who}: {r.note}")
        elif not r.meets_target_at_eval and s.eval_source != "n needed":
            lines.append(f"  {who}: the power with {s.eval_source} {r.eval_n_new} is "
                         f"{_pct(r.power_at_eval)}, short of the wanted "
                         f"{_pct(s.target_power)}: plan for {r.n_new} units")
    for note in part.notes:
        lines.append(f"  note: {note}")
    lines.append("  sizes count units per process (pairs for paired); 'shift found' is the "
                 "smallest shift a t-test at the size looked at finds with the wanted power")
    return lines


__all__ = ["HEADERS", "lines", "method_words", "requirement", "table_rows"]
