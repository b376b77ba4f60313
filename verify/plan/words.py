"""The plan as printed text: a title, then each part's table in the words of its kind."""

from __future__ import annotations

from .compute import words_hook
from .model import Plan


def number(x: float | None) -> str:
    """A planning number as printed (``-`` where there is none)."""
    from ..decide import fmt

    return "-" if x is None else fmt(x)


def format_table(plan: Plan) -> str:
    """The plan as text: a title, then each part's lines (its ``plan`` hook's ``lines``)."""
    lines = [plan.title if plan.source is None else f"{plan.source}: {plan.title}"]
    for part in plan.parts:
        lines.extend(words_hook(part).lines(plan, part))
    return "\n".join(lines)


__all__ = ["format_table", "number"]
