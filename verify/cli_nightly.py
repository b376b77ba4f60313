"""``verify nightly``: its arguments and help (argument parsing only); the work is
:func:`verify.nightly.run_nightly`. Nothing heavy (nor the ledger's sqlite3) loads here: the
defaults are read from :mod:`verify.nightly` when the parser is built."""

from __future__ import annotations

import argparse
import sys
import textwrap
from collections.abc import Sequence

from .cli_args import parsed_number
from .errors import VerifyError

EXAMPLE = """\
example:
  verify nightly specs/ --out reports/nightly --jobs 2 --data-root sample_lots/"""


DESCRIPTION = textwrap.fill(
    "Run every spec under SPEC_DIR on the latest lot data, unattended. A spec whose spec file, "
    "data files and tool version are unchanged since its last result is skipped (recorded as "
    "unchanged); the others are evaluated as 'verify run' does, and their workbook and JSON "
    "result go to <out>/<spec-stem>/<run id>-<DECISION>.xlsx/.json (never overwritten) and "
    "<out>/<spec-stem>/latest.json. The first run at which every process reaches min_n (or "
    "the first run given --final) locks the decision of record of that spec version; later "
    "runs monitor it and flag drift. Every spec on every run is a row of an append-only SQLite "
    "ledger; a digest workbook <out>/digest-<date>.xlsx and one line per spec on stdout say "
    "what changed.", 88) + (
    "\n\nexit status: 0 all PASS; 1 any HOLD or drift from a decision of record; 2 any ERROR,"
    "\nor the ledger is locked by another run; 3 any PENDING (and no HOLD, drift or error).")


def add_nightly(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    """Add the ``nightly`` sub-command to ``sub`` (for :data:`verify.cli.COMMANDS`)."""
    p = sub.add_parser("nightly", help="run every spec on new lot data, with a ledger and digest",
                       description=DESCRIPTION, epilog=EXAMPLE,
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    return add_nightly_arguments(p)


def add_nightly_arguments(parser: argparse.ArgumentParser) -> argparse.ArgumentParser:
    """Add the ``verify nightly`` arguments to ``parser`` (a sub-command's parser).

    Examples
    --------
    >>> p = add_nightly_arguments(argparse.ArgumentParser(prog="verify nightly"))
    >>> p.parse_args(["specs/"]).jobs
    1
    """
    from .nightly import DEFAULT_LOCK_TIMEOUT, DEFAULT_OUT, DEFAULT_SPEC_TIMEOUT

    parser.add_argument("spec_dirs", metavar="SPEC_DIR", nargs="+",
                        help="folder(s) of spec files (*.yaml, *.yml, searched recursively) "
                             "or single spec files")
    parser.add_argument("--out", metavar="DIR", default=DEFAULT_OUT,
                        help=f"output folder: history per spec, digests, ledger "
                             f"(default: {DEFAULT_OUT})")
    parser.add_argument("--ledger", metavar="PATH", default=None,
                        help="the ledger file (default: <out>/ledger.sqlite)")
    parser.add_argument("--jobs", metavar="N", type=_positive_int, default=1,
                        help="worker processes for the specs that must run (default: 1)")
    parser.add_argument("--data-root", metavar="DIR", default=None,
                        help="refuse (as ERROR) any spec whose data file resolves outside DIR")
    parser.add_argument("--final", action="store_true",
                        help="declare the trials complete: a shortfall against min_n no longer "
                             "makes a characteristic PENDING, and each spec version without a "
                             "decision of record gets one now")
    parser.add_argument("--spec-timeout", metavar="SECONDS", type=_positive_float,
                        default=DEFAULT_SPEC_TIMEOUT,
                        help="stop a spec whose reading or evaluation takes longer, and record "
                             f"it as ERROR (default: {DEFAULT_SPEC_TIMEOUT:g})")
    from .cli_args import add_max_data_mb

    add_max_data_mb(parser)
    parser.add_argument("--lock-timeout", metavar="SECONDS", type=_non_negative_float,
                        default=DEFAULT_LOCK_TIMEOUT,
                        help="how long to wait for another nightly run on the same ledger "
                             f"(default: {DEFAULT_LOCK_TIMEOUT:g})")
    parser.add_argument("--no-snapshot", action="store_true",
                        help="do not keep compressed copies of the data files in "
                             "<out>/snapshots/ (the audit trail says so; replay then needs the "
                             "data unchanged)")
    if parser.epilog is None:
        parser.epilog = EXAMPLE
        parser.formatter_class = argparse.RawDescriptionHelpFormatter
    return parser


def _positive_int(text: str) -> int:
    n = parsed_number(text, int, "a whole number")
    if n < 1:
        raise argparse.ArgumentTypeError(f"must be at least 1, got {n}")
    return n


def _positive_float(text: str) -> float:
    x = _non_negative_float(text)
    if x == 0:
        raise argparse.ArgumentTypeError("must be more than 0 seconds")
    return x


def _non_negative_float(text: str) -> float:
    x = parsed_number(text, float, "a number of seconds")
    if not 0 <= x < 1e9:
        raise argparse.ArgumentTypeError(f"must be 0 or more, got {text!r}")
    return x


def nightly_main(args: argparse.Namespace) -> int:
    """``verify nightly``: run :func:`~verify.nightly.run_nightly` from parsed arguments; the
    exit status."""
    from .nightly import run_nightly

    try:
        result = run_nightly(
            args.spec_dirs, out=args.out, ledger_path=args.ledger, jobs=args.jobs,
            data_root=args.data_root, final=args.final, lock_timeout=args.lock_timeout,
            spec_timeout=args.spec_timeout, max_data_mb=args.max_data_mb,
            snapshot=not args.no_snapshot)
    except VerifyError as exc:
        print(f"verify nightly: {exc.report()}", file=sys.stderr)
        return 2
    return result.exit_status


def main_for_tests(argv: Sequence[str]) -> int:
    """Parse ``argv`` as ``verify nightly`` would and run it (``python -m verify.nightly``)."""
    parser = add_nightly_arguments(argparse.ArgumentParser(
        prog="verify nightly", description=DESCRIPTION, epilog=EXAMPLE,
        formatter_class=argparse.RawDescriptionHelpFormatter))
    try:
        args = parser.parse_args(list(argv))
    except SystemExit as exc:
        return int(exc.code or 0)
    return nightly_main(args)
