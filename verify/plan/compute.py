"""Planning a spec: the checks to plan, through each kind's ``plan`` hook.

This module names no check: it loops over :func:`verify.checks.kinds` and asks the ``plan``
hook of every kind package that has one (the protocol is in :mod:`verify.plan`), in the
registry's order, so a plan lists the location checks' power plans, then the conformance
plans, then the pass-fail plans.
"""

from __future__ import annotations

import math
from types import ModuleType
from typing import TYPE_CHECKING

from ..checks import CheckKind, kinds
from ..errors import UsageError
from .model import Options, Plan, PlanPart, SpecPlanning

if TYPE_CHECKING:
    from ..model import Measurements
    from ..spec_model import Characteristic, Spec


def plan_hooks() -> list[tuple[ModuleType, tuple[CheckKind, ...]]]:
    """The ``plan`` hook of each kind package that has one, with the package's kinds, in the
    registry's order (a package with two kinds is asked once, for both)."""
    found: dict[str, tuple[ModuleType, list[CheckKind]]] = {}
    for k in kinds():
        if k.package in found:
            found[k.package][1].append(k)
        elif k.has_hook("plan"):
            found[k.package] = (k.hook("plan"), [k])
    return [(hook, tuple(ks)) for hook, ks in found.values()]


def sheet_hook(part: PlanPart) -> ModuleType | None:
    """The ``plan_sheet`` hook of the package that made ``part`` (None when it has none)."""
    for k in kinds():
        if k.package == part.package:
            return k.hook("plan_sheet") if k.has_hook("plan_sheet") else None
    return None


def words_hook(part: PlanPart) -> ModuleType:
    """The ``plan`` hook of the package that made ``part`` (it words its rows)."""
    for hook, ks in plan_hooks():
        if ks[0].package == part.package:
            return hook
    raise KeyError(part.package)


def _chosen(spec: Spec, opts: Options) -> tuple[Characteristic, ...]:
    chars = spec.characteristics
    if opts.characteristics:
        names = {c.name for c in chars}
        unknown = [n for n in opts.characteristics if n not in names]
        if unknown:
            raise UsageError([f"--characteristic {n!r}: the spec has no such characteristic "
                              f"(it has {', '.join(sorted(names))})" for n in unknown])
        chars = tuple(c for c in chars if c.name in opts.characteristics)
    return tuple(chars)


def plan_spec(spec: Spec, measurements: Measurements | None, opts: Options | None = None) -> Plan:
    """Plan every check of ``spec`` that a kind's ``plan`` hook plans.

    Parameters
    ----------
    spec : Spec
        From :func:`verify.spec.load_spec`.
    measurements : Measurements or None
        From :func:`verify.data.load_measurements`; None when the data file does not exist yet
        (then ``opts.sd`` or ``opts.sd_diff`` must give the sd).
    opts : Options
        Command-line overrides.

    Raises
    ------
    UsageError
        An unknown ``--characteristic``, a wanted power not above alpha, a check that cannot
        be planned (each hook reports all its problems together), or nothing to plan.
    """
    opts = opts or Options()
    chars = _chosen(spec, opts)
    power = spec.plan.power if opts.power is None else opts.power
    if not spec.alpha < power < 1:
        where = "--power" if opts.power is not None else f"plan.power in {spec.path}"
        raise UsageError(f"the wanted power {power:g} ({where}) must exceed alpha "
                         f"({spec.alpha:g}) and be below 1")
    hooks = plan_hooks()
    parts = []
    for hook, ks in hooks:
        elsewhere = any(other.plans(ch) for other, _ in hooks if other is not hook
                        for ch in chars)
        ctx = SpecPlanning(spec=spec, measurements=measurements, options=opts,
                           characteristics=chars, power=power, planned_elsewhere=elsewhere)
        part = hook.plan_spec(ctx, ks)
        if part is not None and part.rows:
            parts.append(part)
    if not parts:
        raise UsageError([f"{spec.path}: no check to plan"])
    inputs = (("spec", str(spec.path), "command line"),)
    return Plan(title=spec.title, source=str(spec.path), stem=f"{spec.stem}-plan",
                inputs=inputs + tuple(x for p in parts for x in p.inputs), parts=tuple(parts),
                method=tuple(x for p in parts for x in p.method),
                notes=tuple(x for p in parts for x in p.notes))


def sample_sd(values) -> float | None:
    """The sample sd of ``values``, or None when it does not exist or is 0 (planning sds)."""
    from ..stats.core import mean_sd

    if len(values) < 2:
        return None
    _, _, s = mean_sd(values)
    return float(s) if math.isfinite(s) and s > 0 else None


def check_path(spec: Spec, ch: Characteristic, check: str) -> tuple[str, int | None]:
    """(key path of a check in the spec, line of its characteristic), for errors."""
    i = spec.characteristics.index(ch)
    return f"characteristics[{i}].checks.{check}", ch.line


__all__ = ["check_path", "plan_hooks", "plan_spec", "sample_sd", "sheet_hook", "words_hook"]
