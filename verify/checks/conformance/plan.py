"""The ``plan`` hook of the conformance check: the new parts a process needs to pass.

The protocol is described in :mod:`verify.plan`; the workbook section is :mod:`.plan_sheet`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

from ...errors import SpecIssue, UsageError
from ...plan.compute import check_path, sample_sd
from ...plan.model import Plan, PlanPart, SpecPlanning

if TYPE_CHECKING:
    from ...checks import CheckKind
    from ...spec_model import Characteristic

PACKAGE = __name__.rsplit(".", 2)[1]


@dataclass(frozen=True)
class ConformancePlan:
    """The n a conformance check needs: the smallest number of new parts at which a process
    with the assumed mean and sd passes (its tolerance limits mean -/+ k(n) sd lie within the
    limits; k falls as n grows). ``n_needed`` is None when no n suffices (``note`` says why).
    """

    characteristic: str
    unit: str
    check: str
    coverage: float
    confidence: float
    side: str
    lower: float | None
    upper: float | None
    mean: float
    mean_source: str
    sd: float
    sd_source: str
    n_needed: int | None
    k_at_n: float | None
    method: str
    note: str | None = None


CONFORMANCE_METHOD = (
    "Conformance: n is the smallest number of new parts at which a process with the assumed "
    "mean and sd passes, i.e. its tolerance limits mean -/+ k(n) sd lie within the limits, k "
    "the exact normal tolerance factor at the check's coverage and confidence (one-sided: "
    "noncentral t; two-sided: Odeh/Owen integral). The factor falls towards the normal "
    "quantile of the coverage as n grows, so a process whose limits leave less room than that "
    "quantile cannot pass at any n. The sample sd of a real trial scatters around the assumed "
    "one, so a process planned exactly at n passes only about half the time: plan with a "
    "margin of parts, or a pessimistic sd."
)


def plans(ch: Characteristic) -> bool:
    """Whether ``ch`` has a conformance check to plan."""
    return ch.checks.conformance is not None


def plan_spec(ctx: SpecPlanning, kinds: tuple[CheckKind, ...]) -> PlanPart | None:
    """A :class:`ConformancePlan` for each conformance check of ``ctx`` (the ``plan`` hook).

    The mean is ``--mean``, else the target, else the old process's mean, else the midpoint
    of two limits; the sd is ``--sd``, else the old process's sample sd of the parts.
    """
    from ...stats import tolerance
    from ...stats.errors import StatsError

    spec, meas, opts = ctx.spec, ctx.measurements, ctx.options
    (kind,) = kinds
    out = []
    file = str(spec.path)
    issues = []
    for ch in ctx.characteristics:
        conf = getattr(ch.checks, kind.name)
        if conf is None:
            continue
        old = meas.values(ch.name, "old") if meas is not None else []
        if opts.mean is not None:
            mean, mean_from = opts.mean, "--mean"
        elif ch.target is not None:
            mean, mean_from = ch.target, "the spec's target"
        elif len(old):
            from ...stats.core import mean_sd

            mean, mean_from = mean_sd(old)[1], f"the old process's mean ({len(old)} parts)"
        elif ch.lower is not None and ch.upper is not None:
            mean, mean_from = (ch.lower + ch.upper) / 2, "the midpoint of the limits"
        else:
            issues.append(SpecIssue(file, check_path(spec, ch, kind.name)[0],
                                    f"{ch.name}, check {kind.name}: no mean to plan with: "
                                    "pass --mean M", line=ch.line))
            continue
        sd = opts.sd if opts.sd is not None else sample_sd(old)
        sd_from = "--sd" if opts.sd is not None else f"the old process's parts ({len(old)})"
        if sd is None or not sd > 0:
            issues.append(SpecIssue(file, check_path(spec, ch, kind.name)[0],
                                    f"{ch.name}, check {kind.name}: the sd cannot be "
                                    "estimated from the old process's parts: pass --sd S",
                                    line=ch.line))
            continue
        lower = ch.lower if conf.side in ("two-sided", "lower") else None
        upper = ch.upper if conf.side in ("two-sided", "upper") else None
        n = k = note = None
        method = (tolerance.METHOD_TWO_SIDED if conf.side == "two-sided"
                  else tolerance.METHOD_ONE_SIDED)
        dist = ch.distribution
        try:
            if dist == "any":
                # distribution-free limits: the size depends on coverage and confidence only
                n = tolerance.order_sample_size(conf.coverage, conf.confidence, conf.side)
                method = tolerance.METHOD_ORDER
            elif dist == "lognormal":
                # the assumed mean and sd of the parts as a lognormal's meanlog and sdlog
                # (moment matching), the limits on the log scale (a limit at or below 0 is
                # never reached by a lognormal part)
                s2 = math.log1p((sd / mean) ** 2) if mean > 0 else math.nan
                if not s2 > 0:
                    raise ValueError("a lognormal plan needs an assumed mean above 0")
                mu = math.log(mean) - s2 / 2
                lo = None if lower is None else (math.log(lower) if lower > 0 else -math.inf)
                hi = None if upper is None else math.log(upper)
                n = tolerance.sample_size_normal(mean=mu, sd=math.sqrt(s2), lower=lo, upper=hi,
                                                 coverage=conf.coverage,
                                                 confidence=conf.confidence, side=conf.side)
                k = tolerance.factor(n, conf.coverage, conf.confidence, conf.side)
                method += ", on ln x (assumed mean and sd matched to a lognormal)"
            elif dist in ("weibull", "box-cox"):
                note = (f"not planned for distribution: {dist} (its limits depend on the fit); "
                        "plan with the normal or lognormal model as an approximation")
            else:
                n = tolerance.sample_size_normal(mean=mean, sd=sd, lower=lower, upper=upper,
                                                 coverage=conf.coverage,
                                                 confidence=conf.confidence, side=conf.side)
                k = tolerance.factor(n, conf.coverage, conf.confidence, conf.side)
        except (StatsError, ValueError) as err:
            note = str(err)
        out.append(ConformancePlan(
            characteristic=ch.name, unit=ch.unit, check=kind.name, coverage=conf.coverage,
            confidence=conf.confidence, side=conf.side, lower=lower, upper=upper, mean=mean,
            mean_source=mean_from, sd=sd, sd_source=sd_from, n_needed=n, k_at_n=k,
            method=method, note=note))
    if issues:
        raise UsageError(issues)
    return PlanPart(PACKAGE, tuple(out), method=(CONFORMANCE_METHOD,)) if out else None


def lines(plan: Plan, part: PlanPart) -> list[str]:
    """The conformance plans as printed lines, one per check."""
    from ...plan.words import number as num

    out = []
    for c in part.rows:
        u = f" {c.unit}" if c.unit else ""
        limits = " and ".join(x for x in (
            None if c.lower is None else f"lower {c.lower:.12g}",
            None if c.upper is None else f"upper {c.upper:.12g}") if x)
        head = (f"  {c.characteristic}, {c.check} ({c.side}, coverage {c.coverage:g}, "
                f"confidence {c.confidence:g}, limits {limits}{u}): mean {num(c.mean)} from "
                f"{c.mean_source}, sd {num(c.sd)} from {c.sd_source}: ")
        if c.n_needed is None:
            out.append(head + f"no n suffices ({c.note})")
        else:
            out.append(head + f"n needed {c.n_needed} new parts (k = {num(c.k_at_n)})")
    return out


__all__ = ["CONFORMANCE_METHOD", "ConformancePlan", "lines", "plan_spec", "plans"]
