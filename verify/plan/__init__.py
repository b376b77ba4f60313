"""``verify plan``: size a trial before it runs.

For each check of a spec that a kind of check knows how to plan (or for one check described on
the command line), the plan gives what a trial needs: for the location checks the number of
units per process reaching a target power, the power at the spec's ``min_n`` and the smallest
shift found there; for conformance the parts a process needs to pass; for pass-fail rates the
parts to inspect.

The package is split by topic: :mod:`~verify.plan.model` (the frozen plan),
:mod:`~verify.plan.compute` (a spec's plan, looping over the registry of check kinds),
:mod:`~verify.plan.words` (the printed table). The command line is :mod:`verify.cli_plan`;
the workbook :mod:`verify.report.plan_workbook`. Nothing here names a check: each kind package
plans its own checks in its ``plan`` hook.

The ``plan`` hook protocol (``verify/checks/<package>/plan.py``; all functions module-level):

``plans(ch: Characteristic) -> bool``
    Whether the package has something to plan for the characteristic.
``plan_spec(ctx: SpecPlanning, kinds: tuple[CheckKind, ...]) -> PlanPart | None``
    Plan the package's ``kinds`` over ``ctx.characteristics``; None or a part without rows
    when there is nothing; a :class:`~verify.errors.UsageError` listing every problem
    (a :class:`~verify.errors.SpecIssue` each) when checks cannot be planned.
``lines(plan: Plan, part: PlanPart) -> list[str]``
    The part as printed lines.
``STANDALONE_OPTION: str | None`` and ``standalone(args) -> Plan`` (optional)
    A form of ``verify plan`` without a spec: asked for when the argparse option named by
    ``STANDALONE_OPTION`` is given; ``None`` marks the default form (the one run when no other
    is asked for). ``refuse_stray(args) -> None`` (optional) refuses options of the form given
    without the option that asks for it.

The ``plan_sheet`` hook (optional; ``verify/checks/<package>/plan_sheet.py``) lays a part out
in the workbook: ``HEADS_PLAN_SHEET: bool`` (a part whose package sets it opens the "Plan" sheet
of inputs, sections and method), ``plan_section(ws, row, plan, part) -> int`` (its section on
that sheet, returning the next free row) and ``add_sheets(wb, plan, part, new_sheet)`` (sheets
of its own; ``new_sheet(title)`` gives a worksheet).
"""

from __future__ import annotations

from .compute import plan_spec
from .model import Options, Plan, PlanPart, SpecPlanning
from .words import format_table

__all__ = ["Options", "Plan", "PlanPart", "SpecPlanning", "format_table", "plan_spec"]
