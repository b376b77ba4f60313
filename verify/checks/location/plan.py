"""The ``plan`` hook of the location checks (``target`` and ``shift``): power and sample size.

Which test is planned follows what ``verify run`` will do with the check
(:func:`.choice.choose_test`):

* a margin and ``side: two-sided``: TOST equivalence, sized for an assumed true shift
  (``plan.true_shift``, default 0);
* a margin and ``side: lower`` or ``upper``: the one-sided non-inferiority test against the
  harmful side's bound;
* no margin: the difference t-test in the harmful direction, sized to detect the shift that
  must not go unseen (``checks.<check>.detect`` or ``--detect``).

The sd is the planning sd of one unit of analysis: the old process's sample sd (lot means when
``unit_of_analysis: lot``) unless ``--sd`` is given. Paired designs need the sd of the
differences: ``--sd-diff``, else ``sd * sqrt(2 (1 - r))`` with ``--pair-correlation r``, else
the sd of the differences of the pairs already measured on both sides, else
``plan.pair_correlation``.

The hook protocol is described in :mod:`verify.plan`; the computation for one check is
:mod:`.plan_power`, the words :mod:`.plan_words`, the workbook :mod:`.plan_sheet`. This is the
default standalone form of ``verify plan`` (``--sd``, ``--design``, ``--margin`` or
``--detect``).
"""

from __future__ import annotations

import math
import re
from typing import TYPE_CHECKING

from ...errors import SpecIssue, UsageError
from ...plan.compute import check_path, sample_sd
from ...plan.model import (
    DEFAULT_ALPHA,
    DEFAULT_POWER,
    Options,
    Plan,
    PlanPart,
    SpecPlanning,
    validate_numbers,
)
from .choice import ALTERNATIVES, choose_test
from .plan_model import Scenario
from .plan_power import plan_scenario
from .plan_words import lines, method_words

if TYPE_CHECKING:
    import argparse

    from ...checks import CheckKind
    from ...model import Measurements
    from ...spec_model import Characteristic, Spec

PACKAGE = __name__.rsplit(".", 2)[1]
TARGET, SHIFT = "target", "shift"  # the two location checks
STANDALONE_DESIGNS = ("welch", "pooled", "paired", "one-sample")
SIDES = tuple(ALTERNATIVES)  # which departure is harmful
STANDALONE_OPTION = None  # the default standalone form: asked for by no option of its own


def plans(ch: Characteristic) -> bool:
    """Whether ``ch`` has a location check to plan."""
    return not ch.pass_fail and any(getattr(ch.checks, c) is not None for c in (TARGET, SHIFT))


def _units(spec: Spec, n: int, process: str) -> str:
    word = "lot means" if spec.unit_of_analysis == "lot" else "parts"
    return f"{n} {process}-process {word}"


def _sd_from_correlation(sd: float, r: float) -> float:
    return sd * math.sqrt(2.0 * (1.0 - r))


def _sd_from_correlation(sd: float, r: float) -> float:
    return sd * math.sqrt(2.0 * (1.0 - r))


def _resolve_sd(spec: Spec, meas: Measurements | None, ch: Characteristic, design: str,
                opts: Options, issue) -> tuple[float, str] | None:
    """(sd, words) for one check, or None after reporting an issue."""
    from ...data import analysis_values, paired_values

    base: tuple[float, str] | None = None
    base_problem = ""
    if opts.sd is not None:
        base = (opts.sd, "--sd")
    elif meas is None:
        base_problem = "the data file is not there to estimate the sd from"
    else:
        old = analysis_values(meas, spec, ch.name, "old").values
        s = sample_sd(old)
        if s is not None:
            base = (s, f"sample sd of {_units(spec, len(old), 'old')}")
        else:
            base_problem = (f"the old process has {len(old)} usable value"
                            f"{'s' if len(old) != 1 else ''}" + (" (no spread)" if len(old) >= 2
                                                                  else ""))
    if design != "paired":
        if base is None:
            issue(f"{base_problem}, so the sd cannot be estimated: pass --sd S (the sd of one "
                  "unit)")
            return None
        return base
    if opts.sd_diff is not None:
        return opts.sd_diff, "--sd-diff"
    if opts.pair_correlation is not None and base is not None:
        r = opts.pair_correlation
        return (_sd_from_correlation(base[0], r),
                f"{base[1]}, times sqrt(2 (1 - r)) with r = {r:g} (--pair-correlation)")
    if opts.sd is None and meas is not None and spec.data.pair is not None:
        pv = paired_values(meas, spec, ch.name)
        s = sample_sd(pv.new - pv.old)
        if s is not None:
            return s, f"sd of the differences of {len(pv.keys)} pairs measured on both sides"
    r = spec.plan.pair_correlation
    if r is not None and base is not None:
        return (_sd_from_correlation(base[0], r),
                f"{base[1]}, times sqrt(2 (1 - r)) with r = {r:g} (plan.pair_correlation)")
    why = ("no pairs are measured on both sides yet" if opts.sd is None
           else "--sd gives the sd of one measurement")
    if base is None:
        issue(f"paired design: {why} and {base_problem}: pass --sd-diff D (the sd of the "
              "differences), or --sd S with --pair-correlation r")
    else:
        issue(f"paired design: {why}, so the sd of the differences is unknown: pass "
              "--pair-correlation r (the correlation of old and new values of a pair; sd of "
              "the differences = sd * sqrt(2 (1 - r))), or --sd-diff D, or set "
              "plan.pair_correlation in the spec")
    return None


def scenarios(ctx: SpecPlanning, kinds: tuple[CheckKind, ...]) -> list[Scenario]:
    """The location checks of ``ctx.characteristics`` to plan, with every input resolved.

    Raises
    ------
    UsageError
        A check without a margin and without a detect value, an sd that cannot be estimated,
        a paired design without pairs or a correlation; all problems together, each naming
        the characteristic, the check and what to pass.
    """
    spec, meas, opts, chars = ctx.spec, ctx.measurements, ctx.options, ctx.characteristics
    file = str(spec.path)
    issues: list = []
    out: list[Scenario] = []
    true_shift = spec.plan.true_shift if opts.true_shift is None else opts.true_shift
    eval_n, eval_source = ((opts.n, "--n") if opts.n is not None else
                           (spec.min_n, "min_n") if spec.min_n is not None else
                           (None, "n needed"))
    for ch in chars:
        if ch.pass_fail:
            continue  # planned by the pass-fail kinds
        for check in (k.name for k in kinds):
            conf = getattr(ch.checks, check)
            if conf is None:
                continue
            path, line = check_path(spec, ch, check)
            found: list[str] = []

            def issue(msg: str, _found=found) -> None:
                _found.append(msg)

            design = "one-sample" if check == TARGET else conf.design
            margin = conf.margin
            detect = opts.detect if opts.detect is not None else conf.detect
            if margin is None and detect is None:
                issue(f"{ch.name}, check {check}: there is no margin, so the plan is for a "
                      "difference test and needs the shift that must not go unseen: pass "
                      f"--detect D or add `detect: D` under {path}")
            sd = _resolve_sd(spec, meas, ch, design, opts, issue)
            if found or sd is None:
                issues.extend(SpecIssue(file, path, m if m.startswith(ch.name) else
                                        f"{ch.name}, check {check}: {m}", line=line)
                              for m in found)
                continue
            test = choose_test(None if margin is None else (margin.low, margin.high), ch.side)
            if margin is not None:
                shift, text = true_shift, margin.text
            else:
                shift = -detect if ch.side == "lower" else detect
                text = None
            out.append(Scenario(
                characteristic=ch.name, check=check, kind=test.kind, design=design,
                side=ch.side, alpha=spec.alpha, target_power=ctx.power, sd=sd[0],
                sd_source=sd[1], true_shift=shift, low=test.low, high=test.high,
                margin_text=text, detect=detect if margin is None else None, eval_n=eval_n,
                eval_source=eval_source, unit=ch.unit, unit_of_analysis=spec.unit_of_analysis,
            ))
    if issues:
        raise UsageError(issues)
    if not out and not ctx.planned_elsewhere:
        raise UsageError([f"{file}: no {' or '.join(k.name for k in kinds)} check to plan"
                          + (" among the characteristics chosen" if opts.characteristics
                             else "")])
    return out


def plan_spec(ctx: SpecPlanning, kinds: tuple[CheckKind, ...]) -> PlanPart | None:
    """The power plans of the location checks of ``ctx`` (the ``plan`` hook).

    Besides the rows, the part gives the plan's inputs (the spec's title and change id, alpha,
    the wanted power, the assumed true shift, the unit of analysis, the size looked at, the
    command line's overrides), the method and the notes.
    """
    rows = tuple(plan_scenario(s) for s in scenarios(ctx, kinds))
    if not rows:
        return None
    spec, opts, p = ctx.spec, ctx.options, ctx.spec.plan
    first = rows[0].scenario
    inputs = [
        ("title", spec.title, "spec"),
        ("alpha", f"{spec.alpha:g}", "spec" if any(k == "alpha" and not d
                                                  for k, _, d in spec.resolved) else "default"),
        ("wanted power", f"{first.target_power:g}",
         "--power" if opts.power is not None else "spec plan.power"),
        ("assumed true shift (margin checks)",
         f"{opts.true_shift if opts.true_shift is not None else p.true_shift:g}",
         "--true-shift" if opts.true_shift is not None else "spec plan.true_shift"),
        ("unit of analysis", spec.unit_of_analysis, "spec"),
        ("trial size looked at", "the smallest sufficient" if first.eval_n is None
         else str(first.eval_n), first.eval_source),
    ]
    if spec.change_id:
        inputs.insert(1, ("change id", spec.change_id, "spec"))
    for label, value in (("--sd", opts.sd), ("--sd-diff", opts.sd_diff),
                         ("--pair-correlation", opts.pair_correlation),
                         ("--detect", opts.detect), ("--mean", opts.mean)):
        if value is not None:
            inputs.append((label.lstrip("-").replace("-", " "), f"{value:g}", label))
    if p.pair_correlation is not None and opts.pair_correlation is None:
        inputs.append(("pair correlation", f"{p.pair_correlation:g}", "spec plan.pair_correlation"))
    notes = []
    if spec.unit_of_analysis == "lot":
        notes.append("unit of analysis is the lot: every n counts lots, and the sd is that of "
                     "lot means")
    if ctx.measurements is None:
        notes.append("the data file is not there yet: the sd comes from the command line")
    return PlanPart(PACKAGE, rows, inputs=tuple(inputs), method=method_words(rows),
                    notes=tuple(notes))


def parse_margin(text: str) -> tuple[float, float]:
    """A margin from the command line: ``"m"`` means -m..+m; ``"low,high"`` with low < 0 < high.

    Examples
    --------
    >>> parse_margin("0.5")
    (-0.5, 0.5)
    >>> parse_margin("[-0.2, 0.3]")
    (-0.2, 0.3)
    """
    core = text.strip().strip("[]()").strip()
    parts = [p.strip() for p in re.split(r"[,;]", core)]
    try:
        nums = [float(p) for p in parts]
    except ValueError:
        raise UsageError(f"--margin {text!r}: give a number m (meaning -m..+m) or "
                         "'low,high' (write --margin=-0.02,0.03 when low is negative)") from None
    if not all(math.isfinite(x) for x in nums) or len(nums) not in (1, 2):
        raise UsageError(f"--margin {text!r}: give one finite number or two ('low,high')")
    if len(nums) == 1:
        if not nums[0] > 0:
            raise UsageError(f"--margin {text!r}: a single margin must be greater than 0")
        return -nums[0], nums[0]
    low, high = nums
    if not low < 0 < high:
        raise UsageError(f"--margin {text!r}: the margin must satisfy low < 0 < high")
    return low, high


def plan_standalone(
    *,
    sd: float | None,
    design: str,
    margin: str | None = None,
    detect: float | None = None,
    ratio: float = 1.0,
    alpha: float = DEFAULT_ALPHA,
    power: float = DEFAULT_POWER,
    true_shift: float | None = None,
    pair_correlation: float | None = None,
    sd_diff: float | None = None,
    side: str = "two-sided",
    n: int | None = None,
) -> Plan:
    """Plan one check described by its numbers (no spec).

    Parameters
    ----------
    sd : float or None
        Planning sd of one unit (paired: with ``pair_correlation``; or give ``sd_diff``).
    design : {"welch", "pooled", "paired", "one-sample"}
    margin : str, optional
        ``"m"`` or ``"low,high"``: plans TOST (``side`` two-sided) or non-inferiority.
    detect : float, optional
        Instead of a margin: the shift a difference test must detect.
    ratio : float
        ``n_new / n_old`` for welch and pooled.
    true_shift : float, optional
        Assumed true shift for a margin (default 0).
    n : int, optional
        Lot size at which power and detectable shift are reported (default: the n needed).

    Raises
    ------
    UsageError
        Missing or contradictory options, values out of range.
    """
    if design not in STANDALONE_DESIGNS:
        raise UsageError(f"--design must be one of {', '.join(STANDALONE_DESIGNS)}, "
                         f"not {design!r}")
    if side not in SIDES:
        raise UsageError(f"--side must be one of {', '.join(SIDES)}, not {side!r}")
    if (margin is None) == (detect is None):
        raise UsageError("give --margin M (an equivalence or non-inferiority check) or "
                         "--detect D (a difference test), exactly one of them")
    if detect is not None and true_shift is not None:
        raise UsageError("--true-shift applies to a margin; with --detect D the shift to "
                         "detect is D")
    if design in ("one-sample", "paired") and ratio != 1.0:
        raise UsageError(f"--ratio applies to welch and pooled, not to {design}")
    validate_numbers(alpha=alpha, power=power, ratio=ratio)
    if design == "paired":
        if sd_diff is not None:
            if sd is not None or pair_correlation is not None:
                raise UsageError("give --sd-diff alone, or --sd with --pair-correlation")
            sd_value, sd_source = sd_diff, "--sd-diff"
        elif sd is None:
            raise UsageError("a plan needs the sd: pass --sd S (with --pair-correlation r for "
                             "paired) or --sd-diff D")
        elif pair_correlation is None:
            raise UsageError("paired design: there are no pairs to estimate the sd of the "
                             "differences from: pass --pair-correlation r (sd of the differences "
                             "= sd * sqrt(2 (1 - r))) or --sd-diff D")
        else:
            sd_value = _sd_from_correlation(sd, pair_correlation)
            sd_source = f"--sd {sd:g}, times sqrt(2 (1 - r)) with r = {pair_correlation:g}"
    else:
        if sd_diff is not None or pair_correlation is not None:
            raise UsageError("--sd-diff and --pair-correlation apply to the paired design only")
        if sd is None:
            raise UsageError("a plan needs the sd: pass --sd S (the sd of one unit)")
        sd_value, sd_source = sd, "--sd"
    check = TARGET if design == "one-sample" else SHIFT
    test = choose_test(None if margin is None else parse_margin(margin), side)
    kind, low, high = test.kind, test.low, test.high
    if margin is not None:
        shift = 0.0 if true_shift is None else true_shift
        text = margin
    else:
        text = None
        shift = -detect if side == "lower" else detect
    s = Scenario(characteristic=None, check=check, kind=kind, design=design, side=side,
                 alpha=alpha, target_power=power, sd=sd_value, sd_source=sd_source,
                 true_shift=shift, low=low, high=high, margin_text=text,
                 detect=detect, ratio=ratio, eval_n=n,
                 eval_source="--n" if n is not None else "n needed")
    row = plan_scenario(s)
    inputs = [("design", design, "--design"), ("side", side, "--side" if side != "two-sided"
                                                  else "default"),
              ("sd used", f"{sd_value:g}", sd_source),
              ("alpha", f"{alpha:g}", "--alpha" if alpha != DEFAULT_ALPHA else "default"),
              ("wanted power", f"{power:g}", "--power" if power != DEFAULT_POWER else "default")]
    if margin is not None:
        inputs.append(("margin", f"{low:g}..+{high:g}", "--margin"))
        inputs.append(("assumed true shift", f"{shift:g}",
                       "--true-shift" if true_shift is not None else "default"))
    else:
        inputs.append(("shift to detect", f"{detect:g}", "--detect"))
    if design in ("welch", "pooled"):
        inputs.append(("ratio n_new / n_old", f"{ratio:g}",
                       "--ratio" if ratio != 1.0 else "default"))
    if n is not None:
        inputs.append(("n at which power is reported", str(n), "--n"))
    method = method_words([row])
    return Plan(title=f"Plan for one {s.test} check", source=None, stem="plan",
                inputs=tuple(inputs), parts=(PlanPart(PACKAGE, (row,), method=method),),
                method=method)

def standalone(args: argparse.Namespace) -> Plan:
    """``verify plan --sd S --design D --margin M | --detect D ...``: the default form."""
    if args.design is None:
        raise UsageError("give SPEC, or the standalone form: --sd S --margin M (or --detect D) "
                         "--design welch|pooled|paired|one-sample")
    validate_numbers(alpha=args.alpha, ratio=args.ratio)
    return plan_standalone(
        sd=args.sd, design=args.design, margin=args.margin, detect=args.detect,
        ratio=1.0 if args.ratio is None else args.ratio,
        alpha=DEFAULT_ALPHA if args.alpha is None else args.alpha,
        power=DEFAULT_POWER if args.power is None else args.power,
        true_shift=args.true_shift, pair_correlation=args.pair_correlation,
        sd_diff=args.sd_diff, side=args.side or "two-sided", n=args.n,
    )


__all__ = ["PACKAGE", "STANDALONE_OPTION", "lines", "parse_margin", "plan_spec",
           "plan_standalone", "plans", "scenarios", "standalone"]
