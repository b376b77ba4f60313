"""The ``plan`` hook of the pass-fail kinds: how many parts to inspect.

Two questions, one per rate check:

* ``rate`` (and ``verify plan --rate-max P --confidence C [--allowed-failures K]``): the
  smallest n such that K or fewer failures among n parts demonstrate a failure rate of at most
  P with confidence C (the exact binomial bound; K = 0 is the success-run formula
  n = ln(1 - C) / ln(1 - P), common practice);
* ``rate_shift``: parts per process for the stated power of the check's own rule (exact, by
  enumerating the binomial outcomes) at the old process's rate (from the data, or
  ``--rate-old``): with a margin, to show the increase below it when the rates are equal;
  without one, to detect an increase of ``detect`` (the check's ``detect:`` key or
  ``--rate-detect``).

The protocol is described in :mod:`verify.plan`; the workbook sheet is :mod:`.plan_sheet`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

from ...errors import SpecIssue, UsageError
from ...plan.model import Plan, PlanPart, SpecPlanning

if TYPE_CHECKING:
    import argparse

    from ...checks import CheckKind
    from ...spec_model import Characteristic

PACKAGE = __name__.rsplit(".", 2)[1]
STANDALONE_OPTION = "rate_max"  # verify plan --rate-max P asks for the pass-fail form


def plans(ch: Characteristic) -> bool:
    """Whether ``ch`` is planned here: every pass-fail characteristic."""
    return ch.pass_fail


@dataclass(frozen=True)
class RatePlanRow:
    """The plan of one rate check.

    Attributes
    ----------
    characteristic : str or None
        None for the standalone form.
    check : str
        ``"rate"`` or ``"rate_shift"``.
    requirement : str
        What must be shown, in words.
    n : int
        Parts to inspect (rate: of the new process; rate_shift: per process).
    proof : str
        Why n is the smallest (the bound at n and at n - 1, or the power at n).
    basis : str
        The inputs and where they came from.
    n_planned : int or None
        The spec's min_n for the new process, for comparison.
    """

    characteristic: str | None
    check: str
    requirement: str
    n: int
    proof: str
    basis: str
    n_planned: int | None = None


def _pct(x: float) -> str:
    from ...decide import fmt

    return f"{fmt(100 * x, 5)}%"


def _points(x: float) -> str:
    from ...decide import fmt

    return f"{fmt(100 * x)} percentage points"


def demonstration_row(max_rate: float, confidence: float, allowed_failures: int = 0,
                      characteristic: str | None = None,
                      n_planned: int | None = None) -> RatePlanRow:
    """The success-run (K = 0) or K-failure demonstration plan of one rate check."""
    from ...stats.rates import demonstration_n

    try:
        p = demonstration_n(max_rate, confidence, allowed_failures)
    except ValueError as err:
        raise UsageError(str(err)) from None
    before = ("" if p.bound_at_n_minus_1 is None else
              f"; at n - 1 = {p.n - 1} it would be {_pct(p.bound_at_n_minus_1)}")
    return RatePlanRow(
        characteristic=characteristic, check="rate",
        requirement=(f"failure rate at most {_pct(max_rate)} with {_pct(confidence)} "
                     f"confidence, {p.allowed_failures} failure(s) allowed"),
        n=p.n,
        proof=(f"with {p.allowed_failures} failure(s) among {p.n} the exact upper bound is "
               f"{_pct(p.bound_at_n)}{before}"),
        basis="exact binomial (Clopper-Pearson) bound" + (
            "; K = 0 is n = ln(1 - C) / ln(1 - P)" if p.allowed_failures == 0 else ""),
        n_planned=n_planned,
    )


def shift_row(characteristic: str, *, rate_old: float, source: str, alpha: float,
              power: float, margin: float | None, detect: float | None,
              n_planned: int | None = None) -> RatePlanRow:
    """The parts per process of one rate_shift check for ``power``."""
    from ...stats.rates import rate_shift_n

    rate_new = None if margin is not None else min(0.999999, rate_old + detect)
    try:
        p = rate_shift_n(rate_old, alpha=alpha, power=power, margin=margin, rate_new=rate_new)
    except ValueError as err:
        raise UsageError(f"{characteristic}, rate_shift: {err}") from None
    req = (f"increase below {_points(margin)}, shown with power {power:g} when the rates "
           "are equal" if margin is not None else
           f"an increase of {_points(detect)} detected with power {power:g}")
    return RatePlanRow(
        characteristic=characteristic, check="rate_shift", requirement=req, n=p.n,
        proof=(f"exact power at n: {p.power_at_n:.4f}" + (
            "" if p.power_below is None else f"; at n - 1: {p.power_below:.4f}")),
        basis=f"old rate {_pct(rate_old)} ({source}); alpha {alpha:g}; {p.method}",
        n_planned=n_planned,
    )


def plan_spec(ctx: SpecPlanning, kinds: tuple[CheckKind, ...]) -> PlanPart | None:
    """The rate plans of every pass-fail characteristic of ``ctx`` (the ``plan`` hook).

    Raises
    ------
    UsageError
        A rate_shift check without an old rate to plan from, or without a margin and without
        an increase to detect; all problems together, each naming the characteristic.
    """
    from ...pass_fail_counts import process_counts

    spec, meas, opts, power = ctx.spec, ctx.measurements, ctx.options, ctx.power
    allowed_failures, rate_old, rate_detect = (opts.allowed_failures, opts.rate_old,
                                               opts.rate_detect)
    rows: list[RatePlanRow] = []
    issues: list = []
    for ch in ctx.characteristics:
        if not ch.pass_fail:
            continue
        if ch.checks.rate is not None:
            rows.append(demonstration_row(ch.checks.rate.max, ch.checks.rate.confidence,
                                          allowed_failures, ch.name, spec.planned("new")))
        conf = ch.checks.rate_shift
        if conf is None:
            continue
        path = f"characteristics[{spec.characteristics.index(ch)}].checks.rate_shift"
        p_old, source = rate_old, "--rate-old"
        if p_old is None and meas is not None:
            c = process_counts(meas, ch, "old")
            if c.n and c.failures:
                p_old, source = c.failures / c.n, f"old data: {c.failures} of {c.n}"
        detect = rate_detect if rate_detect is not None else conf.detect
        if p_old is None:
            issues.append(SpecIssue(str(spec.path), path, f"{ch.name}, rate_shift: no old "
                                    "failure rate to plan from (no old data, or no failures "
                                    "in it): pass --rate-old P"))
            continue
        if conf.margin is None and detect is None:
            issues.append(SpecIssue(str(spec.path), path, f"{ch.name}, rate_shift: there is no "
                                    "margin, so the plan needs the increase that must not go "
                                    "unseen: pass --rate-detect D or add `detect: D`"))
            continue
        rows.append(shift_row(ch.name, rate_old=p_old, source=source, alpha=spec.alpha,
                              power=power, margin=conf.margin, detect=detect,
                              n_planned=spec.planned("new")))
    if issues:
        raise UsageError(issues)
    return PlanPart(PACKAGE, tuple(rows)) if rows else None


RATE_HEADERS = ("characteristic", "check", "what must be shown", "n needed", "min_n", "proof")


def lines(plan: Plan, part: PlanPart) -> list[str]:
    """The rate plans as text lines (a column-aligned table, then the basis of each), after
    an empty line."""
    rows = part.rows
    cells = [(r.characteristic or "-", r.check, r.requirement, str(r.n),
              "-" if r.n_planned is None else str(r.n_planned), r.proof) for r in rows]
    widths = [max(len(h), *(len(c[i]) for c in cells)) for i, h in enumerate(RATE_HEADERS)]
    out = ["", "  ".join(h.ljust(w) for h, w in zip(RATE_HEADERS, widths, strict=True)).rstrip()]
    out += ["  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)).rstrip()
            for row in cells]
    out.append("")
    for r in rows:
        who = f"{r.characteristic}, {r.check}" if r.characteristic else r.check
        out.append(f"  {who}: {r.basis}")
    out.append("  n counts parts inspected (rate: of the new process; rate_shift: per process)")
    return out


def standalone(args: argparse.Namespace) -> Plan:
    """``verify plan --rate-max P --confidence C [--allowed-failures K]``."""
    other = [f"--{k.replace('_', '-')}" for k in ("sd", "sd_diff", "margin", "design", "detect",
                                                   "ratio", "side", "rate_old", "rate_detect")
             if getattr(args, k, None) is not None]
    if other:
        raise UsageError(f"{', '.join(other)} do not go with --rate-max (a pass-fail plan)")
    p = args.rate_max
    c = 0.95 if args.confidence is None else args.confidence
    k = 0 if args.allowed_failures is None else args.allowed_failures
    problems = []
    if not (math.isfinite(p) and 0 < p < 1):
        problems.append(f"--rate-max {p!r}: must lie strictly between 0 and 1 (0.01 is 1%)")
    if not (math.isfinite(c) and 0 < c < 1):
        problems.append(f"--confidence {c!r}: must lie strictly between 0 and 1")
    if k < 0:
        problems.append(f"--allowed-failures {k}: must be 0 or more")
    if problems:
        raise UsageError(problems)
    row = demonstration_row(p, c, k)
    return Plan(title=f"Demonstrate a failure rate of at most {p:g} with confidence {c:g}",
                source=None, stem="plan", inputs=(("max rate", f"{p:g}", "--rate-max"),
                                                  ("confidence", f"{c:g}", "--confidence"),
                                                  ("allowed failures", str(k),
                                                   "--allowed-failures")),
                parts=(PlanPart(PACKAGE, (row,)),))


def refuse_stray(args: argparse.Namespace) -> None:
    """Without --rate-max, the options of its form have nothing to go with."""
    if args.confidence is not None or args.allowed_failures is not None:
        raise UsageError("--confidence and --allowed-failures go with --rate-max P")


__all__ = ["PACKAGE", "RatePlanRow", "STANDALONE_OPTION", "demonstration_row", "lines",
           "plan_spec", "plans", "refuse_stray", "shift_row", "standalone"]
