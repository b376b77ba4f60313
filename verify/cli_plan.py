"""``verify plan``: its arguments and help, and the command (argument parsing, the standalone
forms' dispatch, printing and the atomic write of the workbook). The planning itself is
:mod:`verify.plan`; each kind's planning is its ``plan`` hook. Nothing heavy loads here before
the command runs, so that ``verify --help`` stays quick.
"""

from __future__ import annotations

import argparse
import math
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

from .errors import DataError, UsageError, VerifyError
from .plan.model import DEFAULT_ALPHA, Options, validate_numbers

if TYPE_CHECKING:
    from .plan.model import Plan

DEFAULT_OUT = "reports"

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
    validate_numbers(power=args.power, sd=args.sd, sd_diff=args.sd_diff, r=args.pair_correlation,
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
    """The plan the command-line arguments ask for (spec form or a standalone form)."""
    opts = _options(args)
    if args.spec is not None:
        given = [f"--{k.replace('_', '-')}" for k in ("margin", "design", "ratio", "alpha",
                                                       "side", "rate_max", "confidence")
                 if getattr(args, k) is not None]
        if given:
            raise UsageError(f"{', '.join(given)} belong to the standalone form: with SPEC the "
                             "spec declares them")
        from .data import load_measurements
        from .plan.compute import plan_spec
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
    return _standalone(args)


def _standalone(args: argparse.Namespace) -> Plan:
    """A standalone form: the one whose option is given (a kind's ``STANDALONE_OPTION``),
    else the default form (the kind whose ``STANDALONE_OPTION`` is None)."""
    from .plan.compute import plan_hooks

    forms = [hook for hook, _ in plan_hooks() if hasattr(hook, "standalone")]
    for hook in forms:
        if hook.STANDALONE_OPTION is not None and getattr(args, hook.STANDALONE_OPTION) is not None:
            return hook.standalone(args)
    for hook in forms:
        if hasattr(hook, "refuse_stray"):
            hook.refuse_stray(args)
    (default,) = (hook for hook in forms if hook.STANDALONE_OPTION is None)
    return default.standalone(args)


def plan_main(args: argparse.Namespace) -> int:
    """Run ``verify plan``: print the table, write the workbook; return the exit status 0.

    Bad input raises :class:`~verify.errors.VerifyError` (exit status 2 in the CLI).
    """
    from .plan.words import format_table
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


def add_plan(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add the ``plan`` sub-command to ``sub`` (for :data:`verify.cli.COMMANDS`)."""
    p = sub.add_parser("plan", help=HELP, description=DESCRIPTION, epilog=EPILOG,
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    return add_plan_arguments(p)


def _standalone_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="python -m verify.cli_plan", description=DESCRIPTION,
                                epilog=EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)
    return add_plan_arguments(p)


def main(argv: Sequence[str] | None = None) -> int:
    """``python -m verify.cli_plan``: the same command without the main CLI."""
    args = _standalone_parser().parse_args(argv)
    try:
        return plan_main(args)
    except VerifyError as exc:
        print(exc.report(), file=sys.stderr)
        return exc.exit_code


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
