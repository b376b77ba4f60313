"""``verify plan``: size a trial before it runs.

For each characteristic and check of a spec (or for one check described on the command line),
the plan gives the number of units per process needed to reach a target power, the power at the
spec's ``min_n``, and the smallest shift a t-test detects at that n, with a power curve.

Which test is planned follows what ``verify run`` will do with the check:

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

The computation lives here and in :mod:`verify.stats.power`; the workbook is written by
:mod:`verify.report.plan_workbook`. Heavy libraries are imported inside the functions, so that
``verify --help`` stays quick.
"""

from __future__ import annotations

import argparse
import math
import re
import sys
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

from .checks.location.choice import ALTERNATIVES, TestChoice, choose_test
from .errors import DataError, SpecIssue, UsageError, VerifyError

if TYPE_CHECKING:
    from .model import Measurements
    from .spec_model import Characteristic, Spec

DEFAULT_OUT = "reports"
DEFAULT_POWER = 0.9
DEFAULT_ALPHA = 0.05
MAX_ALPHA = 0.2  # the spec format's upper bound for alpha
CURVE_POINTS = 60  # about this many lot sizes on a power curve
STANDALONE_DESIGNS = ("welch", "pooled", "paired", "one-sample")
SIDES = ("two-sided", "lower", "upper")

HELP = "size a trial: units per process, the power with min_n, the smallest shift found"
DESCRIPTION = """\
Plan a trial before it runs. For each characteristic and check of SPEC: the
smallest number of units per process whose power reaches the wanted power, the
power with the spec's min_n and the smallest shift a t-test finds there. The sd
comes from the old process's data (or --sd); alpha, design and margins from
the spec. Without SPEC, plan one check from --sd, --design and --margin
(equivalence) or --detect (difference test). Prints a table and writes a
workbook with the inputs, the plan, the method and the power by trial size.
A margin with a negative lower end is written with '=': --margin=-0.02,0.03"""
EPILOG = (
    "example:\n"
    "  verify plan specs/bushing-supplier.yaml\n"
    "  verify plan specs/filler-paired.yaml --pair-correlation 0.5 --power 0.95\n"
    "  verify plan --sd 0.004 --margin 0.005 --design welch\n"
    "  verify plan --sd 1.2 --detect 1.0 --design paired --pair-correlation 0.6 --side lower"
)


# --- results ----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Scenario:
    """One check to plan, with every input resolved.

    Attributes
    ----------
    characteristic : str or None
        The characteristic's name; None for the standalone form.
    check : str
        ``"target"`` (one-sample) or ``"shift"`` (new against old).
    kind : str
        ``"equivalence"`` (TOST), ``"non-inferiority"`` or ``"difference"`` (t-test).
    design : str
        ``"one-sample"``, ``"paired"``, ``"welch"`` or ``"pooled"``.
    side : str
        Which departure is harmful: ``"two-sided"``, ``"lower"`` or ``"upper"``.
    alpha, target_power : float
    sd : float
        Planning sd of one unit of analysis (paired: of one difference).
    sd_source : str
        Where the sd came from, in words.
    true_shift : float
        The assumed true effect: for margin checks the planning assumption, for difference
        tests the signed shift to detect (negative when ``side`` is lower).
    low, high : float or None
        The margin (equivalence and non-inferiority).
    margin_text : str or None
        The margin as written.
    detect : float or None
        The shift that must not go unseen (difference tests), a positive size.
    ratio : float
        ``n_new / n_old`` (two-sample designs; 1 otherwise).
    eval_n : int or None
        The lot size (new process) at which power and detectable shift are reported.
    eval_source : str
        Where ``eval_n`` came from ("min_n", "--n", or "n needed").
    unit : str
        The characteristic's unit ("" when unknown).
    unit_of_analysis : str
        ``"part"`` or ``"lot"`` (n counts lots).
    """

    characteristic: str | None
    check: str
    kind: str
    design: str
    side: str
    alpha: float
    target_power: float
    sd: float
    sd_source: str
    true_shift: float
    low: float | None = None
    high: float | None = None
    margin_text: str | None = None
    detect: float | None = None
    ratio: float = 1.0
    eval_n: int | None = None
    eval_source: str = "n needed"
    unit: str = ""
    unit_of_analysis: str = "part"

    @property
    def choice(self) -> TestChoice:
        """The test, as :func:`verify.checks.location.choice.choose_test` gives it."""
        return TestChoice(kind=self.kind, side=self.side, alternative=ALTERNATIVES[self.side],
                          low=self.low, high=self.high)

    @property
    def alternative(self) -> str:
        """The t-test alternative of the harmful direction (used for the detectable shift)."""
        return self.choice.alternative

    @property
    def bound(self) -> float | None:
        """The non-inferiority bound: the harmful side's end of the margin."""
        return self.choice.bound

    @property
    def test(self) -> str:
        """The test planned, in words: ``"TOST (welch)"``, ``"t-test (paired, less)"``."""
        if self.kind == "equivalence":
            return f"TOST ({self.design})"
        if self.kind == "non-inferiority":
            return f"non-inferiority ({self.design}, harmful {self.side})"
        return f"t-test ({self.design}, {self.alternative})"


@dataclass(frozen=True)
class PowerPoint:
    """The power at one lot size."""

    n_new: int
    n_old: int | None
    power: float


@dataclass(frozen=True)
class PlanRow:
    """The plan for one check.

    Attributes
    ----------
    scenario : Scenario
    n_new, n_old : int or None
        The smallest lot sizes that reach the target power (None when no n reaches it:
        see ``note``). ``n_old`` is None for one-sample, equal to ``n_new`` for paired.
    power : float or None
        The power at ``n_new`` (at least the target).
    power_below : float or None
        The power at ``n_new - 1`` (below the target); None when ``n_new`` is 2.
    eval_n_new, eval_n_old : int or None
        The lot sizes at which ``power_at_eval`` and ``detectable_shift`` are given: the
        scenario's ``eval_n``, else the n needed (None when neither exists).
    power_at_eval : float or None
    detectable_shift : float or None
        Smallest true shift (a positive size, in the harmful direction) that the difference
        t-test at ``eval_n`` detects with the target power.
    curve : tuple of PowerPoint
        Power against n for the chart.
    note : str or None
        Why no n reaches the power, or another caveat.
    """

    scenario: Scenario
    n_new: int | None
    n_old: int | None
    power: float | None
    power_below: float | None
    eval_n_new: int | None
    eval_n_old: int | None
    power_at_eval: float | None
    detectable_shift: float | None
    curve: tuple[PowerPoint, ...]
    note: str | None = None

    @property
    def meets_target_at_eval(self) -> bool:
        return self.power_at_eval is not None and self.power_at_eval >= self.scenario.target_power


@dataclass(frozen=True)
class Plan:
    """A whole plan: its inputs, a row per check, and the method in words.

    ``inputs`` holds (input, value, where it came from) triples for the workbook; ``notes``
    are sentences printed under the table.
    """

    title: str
    source: str | None  # the spec file, or None for the standalone form
    stem: str  # file-name stem of the workbook
    inputs: tuple[tuple[str, str, str], ...]
    rows: tuple[PlanRow, ...]
    method: tuple[str, ...]
    notes: tuple[str, ...] = field(default=())
    conformance: tuple[ConformancePlan, ...] = field(default=())
    rate_rows: tuple = ()  # verify.plan_rates.RatePlanRow: pass-fail characteristics


@dataclass(frozen=True)
class ConformancePlan:
    """The n a conformance check needs: the smallest number of new parts at which a process
    with the assumed mean and sd passes (its tolerance limits mean -/+ k(n) sd lie within the
    limits; k falls as n grows). ``n_needed`` is None when no n suffices (``note`` says why).
    """

    characteristic: str
    unit: str
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


# --- the computation --------------------------------------------------------------------------


def old_size(design: str, n_new: int, ratio: float) -> int | None:
    """The old lot's size for ``n_new``: the rule of :class:`verify.stats.power.SampleSize`."""
    if design == "one-sample":
        return None
    if design == "paired":
        return n_new
    return max(2, math.ceil(n_new / ratio - 1e-9))


def power_of(s: Scenario, n_new: int) -> float:
    """The power of the scenario's test with ``n_new`` units in the new process."""
    from .stats import power

    n_old = old_size(s.design, n_new, s.ratio)
    if s.kind == "equivalence":
        return power.power_tost(s.true_shift, s.sd, n_new, n_old, design=s.design,
                                alpha=s.alpha, low=s.low, high=s.high)
    if s.kind == "non-inferiority":
        return power.power_noninferiority(s.true_shift, s.sd, n_new, n_old, design=s.design,
                                          alpha=s.alpha, bound=s.bound, harmful=s.side)
    return power.power_t(s.true_shift, s.sd, n_new, n_old, design=s.design, alpha=s.alpha,
                         alternative=s.alternative)


def _sample_size(s: Scenario):
    from .stats import power

    if s.kind == "equivalence":
        return power.sample_size_tost(s.true_shift, s.sd, design=s.design, alpha=s.alpha,
                                      low=s.low, high=s.high, power=s.target_power,
                                      ratio=s.ratio)
    if s.kind == "non-inferiority":
        return power.sample_size_noninferiority(s.true_shift, s.sd, design=s.design,
                                                alpha=s.alpha, bound=s.bound, harmful=s.side,
                                                power=s.target_power, ratio=s.ratio)
    return power.sample_size_t(s.true_shift, s.sd, design=s.design, alpha=s.alpha,
                               alternative=s.alternative, power=s.target_power, ratio=s.ratio)


def _curve_sizes(n_needed: int | None, eval_n: int | None) -> list[int]:
    if n_needed is None and eval_n is None:
        top = 100  # nothing to centre on: show the first hundred
    else:
        top = max(10, 2 * max(n_needed or 0, eval_n or 0))
    step = max(1, math.ceil((top - 2) / CURVE_POINTS))
    sizes = set(range(2, top + 1, step))
    sizes.update(n for n in (n_needed, eval_n) if n is not None)
    if n_needed is not None and n_needed > 2:
        sizes.add(n_needed - 1)
    return sorted(sizes)


def plan_scenario(s: Scenario) -> PlanRow:
    """Plan one check: the smallest n reaching the target power, power and shift at eval_n.

    Parameters
    ----------
    s : Scenario
        The check with every input resolved.

    Returns
    -------
    PlanRow
        ``n_new`` is the smallest whole number with power at least ``s.target_power``;
        ``power_below`` is the power at ``n_new - 1``, which falls short.

    Examples
    --------
    >>> s = Scenario(characteristic=None, check="target", kind="difference",
    ...              design="one-sample", side="two-sided", alpha=0.05, target_power=0.9,
    ...              sd=1.0, sd_source="given", true_shift=1.0, detect=1.0)
    >>> row = plan_scenario(s)
    >>> row.n_new, row.power >= 0.9 > row.power_below
    (13, True)
    """
    from .stats import power
    from .stats.errors import StatsError

    note = None
    try:
        ss = _sample_size(s)
        n_new, n_old, p = ss.n_new, ss.n_old, ss.power
    except StatsError as err:
        n_new = n_old = p = None
        note = f"no lot size reaches power {s.target_power:g}: {err}"
    below = power_of(s, n_new - 1) if n_new is not None and n_new > 2 else None
    eval_n = s.eval_n if s.eval_n is not None else n_new
    eval_old = p_eval = detectable = None
    if eval_n is not None:
        eval_old = old_size(s.design, eval_n, s.ratio)
        p_eval = power_of(s, eval_n)
        try:
            detectable = power.detectable_shift(s.sd, eval_n, eval_old, design=s.design,
                                                alpha=s.alpha, alternative=s.alternative,
                                                power=s.target_power)
        except StatsError:
            detectable = None
    curve = tuple(PowerPoint(n, old_size(s.design, n, s.ratio), power_of(s, n))
                  for n in _curve_sizes(n_new, eval_n))
    return PlanRow(scenario=s, n_new=n_new, n_old=n_old, power=p, power_below=below,
                   eval_n_new=eval_n, eval_n_old=eval_old, power_at_eval=p_eval,
                   detectable_shift=detectable, curve=curve, note=note)


# --- method in words --------------------------------------------------------------------------


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
    if "equivalence" in kinds:
        out.append(
            "Equivalence (TOST): the power is the probability that both one-sided t-tests "
            "reject at alpha when the true shift is the assumed one. It is computed exactly, "
            "by integrating over the distribution of the sample sd, not by a normal "
            "approximation. A true shift near a margin end needs far more units than a true "
            "shift of 0; a true shift outside the margin cannot be shown equivalent at any n."
        )
    if "non-inferiority" in kinds:
        out.append(
            "Non-inferiority (side lower or upper with a margin): the power of the one-sided "
            "t-test against the harmful side's end of the margin (noncentral t)."
        )
    if "difference" in kinds:
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


# --- sd from the data ---------------------------------------------------------------------------


def _sample_sd(values) -> float | None:
    from .stats.core import mean_sd

    if len(values) < 2:
        return None
    _, _, s = mean_sd(values)
    return float(s) if math.isfinite(s) and s > 0 else None


def _units(spec: Spec, n: int, process: str) -> str:
    word = "lot means" if spec.unit_of_analysis == "lot" else "parts"
    return f"{n} {process}-process {word}"


def _sd_from_correlation(sd: float, r: float) -> float:
    return sd * math.sqrt(2.0 * (1.0 - r))


@dataclass(frozen=True)
class Options:
    """Planning options from the command line (None: not given).

    ``characteristics`` limits the plan to the named characteristics.
    """

    sd: float | None = None
    sd_diff: float | None = None
    power: float | None = None
    true_shift: float | None = None
    pair_correlation: float | None = None
    detect: float | None = None
    n: int | None = None
    characteristics: tuple[str, ...] = ()
    mean: float | None = None  # conformance: the assumed new-process mean
    allowed_failures: int = 0  # pass-fail rate checks
    rate_old: float | None = None  # pass-fail rate_shift: the old failure rate
    rate_detect: float | None = None  # pass-fail rate_shift without a margin


def _check_path(spec: Spec, ch: Characteristic, check: str) -> tuple[str, int | None]:
    i = spec.characteristics.index(ch)
    return f"characteristics[{i}].checks.{check}", ch.line


def _resolve_sd(spec: Spec, meas: Measurements | None, ch: Characteristic, design: str,
                opts: Options, issue) -> tuple[float, str] | None:
    """(sd, words) for one check, or None after reporting an issue."""
    from .data import analysis_values, paired_values

    base: tuple[float, str] | None = None
    base_problem = ""
    if opts.sd is not None:
        base = (opts.sd, "--sd")
    elif meas is None:
        base_problem = "the data file is not there to estimate the sd from"
    else:
        old = analysis_values(meas, spec, ch.name, "old").values
        s = _sample_sd(old)
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
        s = _sample_sd(pv.new - pv.old)
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


def spec_scenarios(spec: Spec, meas: Measurements | None, opts: Options) -> list[Scenario]:
    """The checks of ``spec`` to plan, with every input resolved.

    Raises
    ------
    UsageError
        A check without a margin and without a detect value, an sd that cannot be estimated,
        a paired design without pairs or a correlation; all problems together, each naming
        the characteristic, the check and what to pass.
    """
    chars = spec.characteristics
    if opts.characteristics:
        names = {c.name for c in chars}
        unknown = [n for n in opts.characteristics if n not in names]
        if unknown:
            raise UsageError([f"--characteristic {n!r}: the spec has no such characteristic "
                              f"(it has {', '.join(sorted(names))})" for n in unknown])
        chars = tuple(c for c in chars if c.name in opts.characteristics)
    file = str(spec.path)
    issues: list = []
    out: list[Scenario] = []
    power = spec.plan.power if opts.power is None else opts.power
    true_shift = spec.plan.true_shift if opts.true_shift is None else opts.true_shift
    if not spec.alpha < power < 1:
        where = "--power" if opts.power is not None else f"plan.power in {file}"
        raise UsageError(f"the wanted power {power:g} ({where}) must exceed alpha "
                         f"({spec.alpha:g}) and be below 1")
    eval_n, eval_source = ((opts.n, "--n") if opts.n is not None else
                           (spec.min_n, "min_n") if spec.min_n is not None else
                           (None, "n needed"))
    for ch in chars:
        if ch.pass_fail:
            continue  # planned by verify.plan_rates
        for check in ("target", "shift"):
            conf = getattr(ch.checks, check)
            if conf is None:
                continue
            path, line = _check_path(spec, ch, check)
            found: list[str] = []

            def issue(msg: str, _found=found) -> None:
                _found.append(msg)

            design = "one-sample" if check == "target" else conf.design
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
            kind, low, high = test.kind, test.low, test.high
            if margin is not None:
                shift, text = true_shift, margin.text
            else:
                shift = -detect if ch.side == "lower" else detect
                text = None
            out.append(Scenario(
                characteristic=ch.name, check=check, kind=kind, design=design, side=ch.side,
                alpha=spec.alpha, target_power=power, sd=sd[0], sd_source=sd[1],
                true_shift=shift, low=low, high=high, margin_text=text,
                detect=detect if margin is None else None, eval_n=eval_n,
                eval_source=eval_source, unit=ch.unit, unit_of_analysis=spec.unit_of_analysis,
            ))
    if issues:
        raise UsageError(issues)
    if not out and not issues and not any(
            c.pass_fail or c.checks.conformance is not None for c in chars):
        raise UsageError([f"{file}: no target or shift check to plan"
                          + (" among the characteristics chosen" if opts.characteristics
                             else "")])
    return out


def plan_spec(spec: Spec, measurements: Measurements | None, opts: Options | None = None) -> Plan:
    """Plan every target and shift check of ``spec``.

    Parameters
    ----------
    spec : Spec
        From :func:`verify.spec.load_spec`.
    measurements : Measurements or None
        From :func:`verify.data.load_measurements`; None when the data file does not exist yet
        (then ``opts.sd`` or ``opts.sd_diff`` must give the sd).
    opts : Options
        Command-line overrides.
    """
    from .plan_rates import spec_rate_rows

    opts = opts or Options()
    scenarios = spec_scenarios(spec, measurements, opts)
    rows = tuple(plan_scenario(s) for s in scenarios)
    conformance = tuple(conformance_plans(spec, measurements, opts))
    power = spec.plan.power if opts.power is None else opts.power
    rate_rows = tuple(spec_rate_rows(
        spec, measurements, power=power, allowed_failures=opts.allowed_failures,
        rate_old=opts.rate_old, rate_detect=opts.rate_detect,
        characteristics=opts.characteristics))
    if not rows and not rate_rows and not conformance:
        raise UsageError([f"{spec.path}: no check to plan"])
    p = spec.plan
    if not rows:
        return Plan(title=spec.title, source=str(spec.path), stem=f"{spec.stem}-plan",
                    inputs=(("spec", str(spec.path), "command line"),), rows=(),
                    method=(CONFORMANCE_METHOD,) if conformance else (),
                    rate_rows=rate_rows, conformance=conformance)
    inputs = [
        ("spec", str(spec.path), "command line"),
        ("title", spec.title, "spec"),
        ("alpha", f"{spec.alpha:g}", "spec" if any(k == "alpha" and not d
                                                  for k, _, d in spec.resolved) else "default"),
        ("wanted power", f"{rows[0].scenario.target_power:g}",
         "--power" if opts.power is not None else "spec plan.power"),
        ("assumed true shift (margin checks)",
         f"{opts.true_shift if opts.true_shift is not None else p.true_shift:g}",
         "--true-shift" if opts.true_shift is not None else "spec plan.true_shift"),
        ("unit of analysis", spec.unit_of_analysis, "spec"),
        ("trial size looked at", "the smallest sufficient" if rows[0].scenario.eval_n is None
         else str(rows[0].scenario.eval_n), rows[0].scenario.eval_source),
    ]
    if spec.change_id:
        inputs.insert(2, ("change id", spec.change_id, "spec"))
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
    if measurements is None:
        notes.append("the data file is not there yet: the sd comes from the command line")
    method = method_words(rows) if rows else ()
    if conformance:
        method += (CONFORMANCE_METHOD,)
    return Plan(title=spec.title, source=str(spec.path), stem=f"{spec.stem}-plan",
                inputs=tuple(inputs), rows=rows, method=method, notes=tuple(notes),
                conformance=conformance, rate_rows=rate_rows)


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


def conformance_plans(spec: Spec, meas: Measurements | None, opts: Options
                      ) -> list[ConformancePlan]:
    """A :class:`ConformancePlan` for each conformance check of ``spec``.

    The mean is ``--mean``, else the target, else the old process's mean, else the midpoint
    of two limits; the sd is ``--sd``, else the old process's sample sd of the parts.
    """
    from .stats import tolerance
    from .stats.errors import StatsError

    out = []
    file = str(spec.path)
    issues = []
    for ch in spec.characteristics:
        conf = ch.checks.conformance
        if conf is None or (opts.characteristics and ch.name not in opts.characteristics):
            continue
        old = meas.values(ch.name, "old") if meas is not None else []
        if opts.mean is not None:
            mean, mean_from = opts.mean, "--mean"
        elif ch.target is not None:
            mean, mean_from = ch.target, "the spec's target"
        elif len(old):
            from .stats.core import mean_sd

            mean, mean_from = mean_sd(old)[1], f"the old process's mean ({len(old)} parts)"
        elif ch.lower is not None and ch.upper is not None:
            mean, mean_from = (ch.lower + ch.upper) / 2, "the midpoint of the limits"
        else:
            issues.append(SpecIssue(file, _check_path(spec, ch, "conformance")[0],
                                    f"{ch.name}, check conformance: no mean to plan with: "
                                    "pass --mean M", line=ch.line))
            continue
        sd = opts.sd if opts.sd is not None else _sample_sd(old)
        sd_from = "--sd" if opts.sd is not None else f"the old process's parts ({len(old)})"
        if sd is None or not sd > 0:
            issues.append(SpecIssue(file, _check_path(spec, ch, "conformance")[0],
                                    f"{ch.name}, check conformance: the sd cannot be "
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
            characteristic=ch.name, unit=ch.unit, coverage=conf.coverage,
            confidence=conf.confidence, side=conf.side, lower=lower, upper=upper, mean=mean,
            mean_source=mean_from, sd=sd, sd_source=sd_from, n_needed=n, k_at_n=k,
            method=method, note=note))
    if issues:
        raise UsageError(issues)
    return out


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
    _validate(alpha=alpha, power=power, ratio=ratio)
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
    check = "target" if design == "one-sample" else "shift"
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
    return Plan(title=f"Plan for one {s.test} check", source=None, stem="plan",
                inputs=tuple(inputs), rows=(row,), method=method_words([row]))


# --- validation of command-line numbers ----------------------------------------------------------


def _validate(*, alpha: float | None = None, power: float | None = None,
              ratio: float | None = None, sd: float | None = None, sd_diff: float | None = None,
              r: float | None = None, detect: float | None = None, n: int | None = None) -> None:
    problems = []

    def finite(x: float) -> bool:
        return isinstance(x, (int, float)) and math.isfinite(x)

    if alpha is not None and not (finite(alpha) and 0 < alpha <= MAX_ALPHA):
        problems.append(f"--alpha {alpha!r}: must satisfy 0 < alpha <= {MAX_ALPHA}")
    if power is not None and not (finite(power) and 0 < power < 1):
        problems.append(f"--power {power!r}: must lie strictly between 0 and 1")
    if (power is not None and alpha is not None and finite(power) and finite(alpha)
            and 0 < power <= alpha):
        problems.append(f"--power {power:g} must exceed alpha ({alpha:g}): a test rejects "
                        "that often by chance alone")
    for label, v in (("--ratio", ratio), ("--sd", sd), ("--sd-diff", sd_diff),
                     ("--detect", detect)):
        if v is not None and not (finite(v) and v > 0):
            problems.append(f"{label} {v!r}: must be a finite number greater than 0")
    if r is not None and not (finite(r) and -1 < r < 1):
        problems.append(f"--pair-correlation {r!r}: must lie strictly between -1 and 1")
    if n is not None and n < 2:
        problems.append(f"--n {n}: must be at least 2")
    if problems:
        raise UsageError(problems)


# --- command line -------------------------------------------------------------------------------


def add_plan_arguments(parser: argparse.ArgumentParser) -> argparse.ArgumentParser:
    """Add the arguments of ``verify plan`` to ``parser`` (a subparser or a parser of its own).

    Examples
    --------
    >>> p = add_plan_arguments(argparse.ArgumentParser(prog="verify plan"))
    >>> p.parse_args(["--sd", "1", "--margin", "0.5", "--design", "welch"]).design
    'welch'
    """
    parser.add_argument("spec", nargs="?", metavar="SPEC",
                        help="the spec to plan (leave out for the standalone form)")
    g = parser.add_argument_group("both forms")
    g.add_argument("--sd", type=float, metavar="S",
                   help="planning sd of one unit (default: the old process's sample sd)")
    g.add_argument("--sd-diff", type=float, metavar="D",
                   help="paired designs: the sd of the differences new - old")
    g.add_argument("--pair-correlation", type=float, metavar="R",
                   help="paired designs: correlation r of the old and new value of a pair; "
                        "sd of the differences = sd * sqrt(2 (1 - r))")
    g.add_argument("--power", type=float, metavar="P",
                   help="wanted power (default: the spec's plan.power, else 0.9)")
    g.add_argument("--true-shift", type=float, metavar="D",
                   help="assumed true shift for margin checks (default: plan.true_shift, else 0)")
    g.add_argument("--detect", type=float, metavar="D",
                   help="checks without a margin: the shift that must not go unseen "
                        "(default: the check's detect: key)")
    g.add_argument("--mean", type=float, metavar="M",
                   help="conformance checks: the assumed new-process mean (default: the "
                        "target, else the old process's mean)")
    g.add_argument("--n", type=int, metavar="N",
                   help="units per process at which to give the power and the smallest shift "
                        "found (default: the spec's min_n, else the smallest sufficient trial)")
    g.add_argument("--out", metavar="DIR", default=None,
                   help=f"folder for the workbook (default: {DEFAULT_OUT}/): "
                        "<spec-stem>-plan.xlsx, or plan.xlsx for the standalone form")
    g = parser.add_argument_group("with SPEC")
    g.add_argument("--characteristic", action="append", metavar="NAME", default=None,
                   help="plan only this characteristic (repeatable)")
    g = parser.add_argument_group("standalone form (without SPEC)")
    g.add_argument("--margin", metavar="M",
                   help="equivalence margin: m (meaning -m..+m) or low,high")
    g.add_argument("--design", metavar="DESIGN",
                   help="welch | pooled | paired | one-sample")
    g.add_argument("--ratio", type=float, metavar="Q",
                   help="n_new / n_old for welch and pooled (default 1)")
    g.add_argument("--alpha", type=float, metavar="A",
                   help=f"significance level (default {DEFAULT_ALPHA})")
    g.add_argument("--side", metavar="SIDE",
                   help="which departure is harmful: two-sided (default), lower or upper")
    g = parser.add_argument_group("pass-fail characteristics (failure rates)")
    g.add_argument("--rate-max", type=float, metavar="P",
                   help="standalone: the largest acceptable failure rate (0.01 is 1%%); gives "
                        "the parts to inspect to demonstrate it")
    g.add_argument("--confidence", type=float, metavar="C",
                   help="with --rate-max: confidence of the demonstration (default 0.95)")
    g.add_argument("--allowed-failures", type=int, metavar="K",
                   help="failures allowed among the parts inspected (default 0: the "
                        "success-run plan)")
    g.add_argument("--rate-old", type=float, metavar="P",
                   help="with SPEC: the old failure rate rate_shift plans from (default: the "
                        "old data)")
    g.add_argument("--rate-detect", type=float, metavar="D",
                   help="with SPEC: rate_shift without a margin, the increase of the failure "
                        "rate that must not go unseen (default: the check's detect: key)")
    return parser


def _options(args: argparse.Namespace) -> Options:
    _validate(power=args.power, sd=args.sd, sd_diff=args.sd_diff, r=args.pair_correlation,
              detect=args.detect, n=args.n)
    for label, v in (("--true-shift", args.true_shift), ("--mean", args.mean)):
        if v is not None and not math.isfinite(v):
            raise UsageError(f"{label} {v!r}: must be a finite number")
    for label, v in (("--rate-old", args.rate_old), ("--rate-detect", args.rate_detect)):
        if v is not None and not (math.isfinite(v) and 0 < v < 1):
            raise UsageError(f"{label} {v!r}: must lie strictly between 0 and 1")
    if args.allowed_failures is not None and args.allowed_failures < 0:
        raise UsageError(f"--allowed-failures {args.allowed_failures}: must be 0 or more")
    return Options(sd=args.sd, sd_diff=args.sd_diff, power=args.power,
                   true_shift=args.true_shift, pair_correlation=args.pair_correlation,
                   detect=args.detect, n=args.n, mean=args.mean,
                   characteristics=tuple(args.characteristic or ()),
                   allowed_failures=args.allowed_failures or 0, rate_old=args.rate_old,
                   rate_detect=args.rate_detect)


def build_plan(args: argparse.Namespace) -> Plan:
    """The plan the command-line arguments ask for (spec form or standalone form)."""
    opts = _options(args)
    if args.spec is not None:
        given = [f"--{k.replace('_', '-')}" for k in ("margin", "design", "ratio", "alpha",
                                                       "side", "rate_max", "confidence")
                 if getattr(args, k) is not None]
        if given:
            raise UsageError(f"{', '.join(given)} belong to the standalone form: with SPEC the "
                             "spec declares them")
        from .data import load_measurements
        from .spec import load_spec

        spec = load_spec(args.spec)
        try:
            measurements = load_measurements(spec)
        except DataError:
            if spec.data.file.exists() or (opts.sd is None and opts.sd_diff is None):
                raise
            measurements = None  # planning before any data: the sd is given
        return plan_spec(spec, measurements, opts)
    if args.characteristic:
        raise UsageError("--characteristic needs SPEC")
    if args.rate_max is not None:
        return _rate_standalone(args)
    if args.confidence is not None or args.allowed_failures is not None:
        raise UsageError("--confidence and --allowed-failures go with --rate-max P")
    if args.design is None:
        raise UsageError("give SPEC, or the standalone form: --sd S --margin M (or --detect D) "
                         "--design welch|pooled|paired|one-sample")
    _validate(alpha=args.alpha, ratio=args.ratio)
    return plan_standalone(
        sd=args.sd, design=args.design, margin=args.margin, detect=args.detect,
        ratio=1.0 if args.ratio is None else args.ratio,
        alpha=DEFAULT_ALPHA if args.alpha is None else args.alpha,
        power=DEFAULT_POWER if args.power is None else args.power,
        true_shift=args.true_shift, pair_correlation=args.pair_correlation,
        sd_diff=args.sd_diff, side=args.side or "two-sided", n=args.n,
    )


def _rate_standalone(args: argparse.Namespace) -> Plan:
    """``verify plan --rate-max P --confidence C [--allowed-failures K]``."""
    from .plan_rates import demonstration_row

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
                rows=(), method=(), rate_rows=(row,))


def plan_main(args: argparse.Namespace) -> int:
    """Run ``verify plan``: print the table, write the workbook; return the exit status 0.

    Bad input raises :class:`~verify.errors.VerifyError` (exit status 2 in the CLI).
    """
    from .report.plan_workbook import write_plan_workbook
    from .runner import atomic_path

    plan = build_plan(args)
    out = Path(args.out if args.out is not None else DEFAULT_OUT)
    target = out / f"{plan.stem}.xlsx"
    print(format_table(plan))
    with atomic_path(target) as tmp:
        write_plan_workbook(plan, tmp)
    print(f"\nworkbook: {target}")
    return 0


# --- the printed table ----------------------------------------------------------------------------


def _num(x: float | None) -> str:
    from .decide import fmt

    return "-" if x is None else fmt(x)


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
    from .decide import margin_words

    u = f" {s.unit}" if s.unit else ""
    if s.kind == "difference":
        return f"detect {_num(s.detect)}{u}"
    if s.kind == "non-inferiority":
        sign = "+" if s.side == "upper" else ""
        return f"bound {sign}{_num(s.bound)}{u}"
    return margin_words(s.low, s.high, s.unit)


HEADERS = ("characteristic", "check", "test", "sd", "margin / detect", "true shift",
           "plan for", "its power", "one fewer", "size looked at", "power there",
           "shift found")


def table_rows(plan: Plan) -> list[tuple[str, ...]]:
    """The printed table's cells, one tuple per plan row (texts)."""
    out = []
    for r in plan.rows:
        s = r.scenario
        n_rep = ("-" if r.eval_n_new is None else
                 _n_text(r.eval_n_new, r.eval_n_old, s.design) + f" ({s.eval_source})")
        out.append((s.characteristic or "-", s.check, s.test, _num(s.sd), requirement(s),
                    _num(s.true_shift), _n_text(r.n_new, r.n_old, s.design), _pct(r.power),
                    _pct(r.power_below), n_rep, _pct(r.power_at_eval),
                    _num(r.detectable_shift)))
    return out


def format_table(plan: Plan) -> str:
    """The plan as text: a title, a column-aligned table, and notes."""
    lines = [plan.title if plan.source is None else f"{plan.source}: {plan.title}"]
    if plan.rate_rows:
        from .plan_rates import format_rate_table

        rate_lines = ["", *format_rate_table(plan.rate_rows)]
    else:
        rate_lines = []
    if plan.rows:
        _power_table(plan, lines)
    for c in plan.conformance:
        u = f" {c.unit}" if c.unit else ""
        limits = " and ".join(x for x in (
            None if c.lower is None else f"lower {c.lower:.12g}",
            None if c.upper is None else f"upper {c.upper:.12g}") if x)
        head = (f"  {c.characteristic}, conformance ({c.side}, coverage {c.coverage:g}, "
                f"confidence {c.confidence:g}, limits {limits}{u}): mean {_num(c.mean)} from "
                f"{c.mean_source}, sd {_num(c.sd)} from {c.sd_source}: ")
        if c.n_needed is None:
            lines.append(head + f"no n suffices ({c.note})")
        else:
            lines.append(head + f"n needed {c.n_needed} new parts (k = {_num(c.k_at_n)})")
    return "\n".join(lines + rate_lines)


def _power_table(plan: Plan, lines: list[str]) -> None:
    rows = table_rows(plan)
    widths = [max(len(h), *(len(row[i]) for row in rows)) for i, h in enumerate(HEADERS)]
    first = plan.rows[0].scenario
    lines.append(f"  alpha {first.alpha:g}, wanted power {first.target_power:g}")
    lines.append("")
    lines.append("  ".join(h.ljust(w) for h, w in zip(HEADERS, widths, strict=True)).rstrip())
    for row in rows:
        lines.append("  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)).rstrip())
    lines.append("")
    for r in plan.rows:
        s = r.scenario
        who = f"{s.characteristic}, {s.check}" if s.characteristic else s.check
        lines.append(f"  {who}: sd {_num(s.sd)} from {s.sd_source}")
        if r.note:
            lines.append(f"  {who}: {r.note}")
        elif not r.meets_target_at_eval and s.eval_source != "n needed":
            lines.append(f"  {who}: the power with {s.eval_source} {r.eval_n_new} is "
                         f"{_pct(r.power_at_eval)}, short of the wanted "
                         f"{_pct(s.target_power)}: plan for {r.n_new} units")
    for note in plan.notes:
        lines.append(f"  note: {note}")
    lines.append("  sizes count units per process (pairs for paired); 'shift found' is the "
                 "smallest shift a t-test at the size looked at finds with the wanted power")


def _standalone_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="python -m verify.plan", description=DESCRIPTION,
                                epilog=EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    return add_plan_arguments(p)


def main(argv: Sequence[str] | None = None) -> int:
    """``python -m verify.plan``: the same command without the main CLI."""
    args = _standalone_parser().parse_args(argv)
    try:
        return plan_main(args)
    except VerifyError as exc:
        print(exc.report(), file=sys.stderr)
        return exc.exit_code


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
