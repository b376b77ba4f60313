"""Command line: parse arguments, call the library, map errors to exit statuses.

Each subcommand is one ``add_<name>`` function (its arguments and help, ending with an example)
and one ``cmd_<name>`` function (the work), here or in a module of its own (``cli_run``,
``cli_nightly``, ``cli_plan``, ``cli_ledger``, loaded only when its command runs);
:data:`COMMANDS` lists them for the dispatcher.
Heavy libraries (numpy, scipy, pandas, openpyxl) are imported inside the command functions,
so ``verify --help`` and argument errors stay fast.

Exit statuses: 0 success; 2 invalid input (any :class:`~verify.errors.VerifyError`, reported
on stderr; argparse's own usage errors are 2 as well).
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
from collections.abc import Callable, Sequence

from . import __version__
from .errors import VerifyError
from .output import say, write

EXIT_OK = 0
EXIT_INVALID = 2


# -- verify check -----------------------------------------------------------------------------


def add_check(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "check",
        help="validate specs and their data; print what would run",
        description=(
            "Validate each spec and its data file, and print per characteristic what would "
            "run: the checks, design and margins, n and lots per process, pairs, exclusions. "
            "Every spec is checked; all problems are printed together. Nothing is written."
        ),
        epilog="example:\n  verify check specs/\n  verify check specs/bushing-supplier.yaml",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("paths", nargs="+", metavar="SPEC|DIR",
                   help="spec files, or folders searched for *.yaml and *.yml")
    from .cli_args import add_max_data_mb

    add_max_data_mb(p)
    return p


def cmd_check(args: argparse.Namespace) -> int:
    from .data import load_measurements
    from .safe_open import max_data_bytes
    from .spec import find_specs, load_spec

    paths = find_specs(args.paths)
    limit = max_data_bytes(args.max_data_mb)
    failed: list[tuple[str, VerifyError]] = []
    shown = 0
    for path in paths:
        try:
            spec = load_spec(path)
            measurements = load_measurements(spec, max_bytes=limit)
        except VerifyError as exc:
            failed.append((str(path), exc))
            say(None, {"spec": str(path), "valid": False,
                       "errors": exc.report().splitlines()})
            continue
        lines = describe_plan(spec, measurements)
        say(("\n" if shown else "") + "\n".join(lines), {
            "spec": str(path), "valid": True, "title": spec.title, "change_id": spec.change_id,
            "characteristics": [c.name for c in spec.characteristics],
            "rows_read": sum(f.rows_read for f in measurements.files),
            "notes": list(measurements.notes)})
        shown += 1
    if failed:
        for path, exc in failed:
            print(f"{path}: invalid\n{_indent(exc.report())}", file=sys.stderr)
        valid = len(paths) - len(failed)
        print(f"{len(failed)} of {len(paths)} specs invalid ({valid} valid)", file=sys.stderr)
        return EXIT_INVALID
    say(f"\n{len(paths)} spec{'s' if len(paths) != 1 else ''} valid")
    return EXIT_OK


def _indent(text: str) -> str:
    return "\n".join("  " + line for line in text.splitlines())


def describe_plan(spec, measurements) -> list[str]:
    """What ``verify run`` would do with a valid spec and its data, as lines of text."""
    from .data import analysis_values, paired_values
    from .spec_kind import spec_of

    lines = [f"{spec.path}: valid", f"  {spec.title}"
             + (f"  [{spec.change_id}]" if spec.change_id else "")]
    ds = spec.data
    for f in measurements.files:
        kind = f"sheet {f.sheet!r}" if f.sheet else f.encoding
        lines.append(f"  data: {f.path} ({ds.layout} layout, {kind}): {f.rows_read} rows read, "
                     f"{f.rows_used} used, {f.rows_excluded} without a used measurement")
    table = spec.characteristics_table
    if table is not None:
        sheet = f", sheet {table.sheet!r}" if table.sheet else ""
        from_yaml = len(spec.characteristics) - table.rows
        lines.append(f"  characteristics: {table.rows} from {table.file_text}{sheet} (sha256 "
                     f"{table.sha256[:12]}...)" + (f", {from_yaml} more from the spec"
                                                   if from_yaml > 0 else ""))
    if ds.process is not None:
        lines.append(f"  old/new by column {ds.process!r}: old = {_names(ds.old)}, "
                     f"new = {_names(ds.new)}")
    else:
        lines.append(f"  old/new by lot: old = {_names(spec.lots.old)}, "
                     f"new = {_names(spec.lots.new)}")
    settings = [f"alpha {spec.alpha:g}", f"unit of analysis: {spec.unit_of_analysis}",
                f"multiplicity: {spec.multiplicity}"]
    if spec.min_n is not None:
        settings.append(f"min_n {spec.min_n_text}")
    lines.append("  " + ", ".join(settings))
    counts = {r: n for f in measurements.files for r, n in f.exclusions}
    for e in spec.exclude:
        what = f"row {e.row}" if e.row is not None else f"lot {e.lot}"
        if e.characteristic:
            what += f" ({e.characteristic} only)"
        n = counts.get(f"excluded by spec: {e.reason} (by {e.by})", 0)
        lines.append(f"  exclude {what}: {e.reason} (by {e.by}); {_count(n, 'measurement')}")
    for reason, n in counts.items():
        if not reason.startswith("excluded by spec: "):
            lines.append(f"  left out: {_count(n, 'measurement')}, {reason}")
    for note in measurements.notes:
        lines.append(f"  note: {note}")
    for c in spec.characteristics:
        if c.pass_fail:
            lines.extend(_describe_pass_fail(spec, measurements, c))
            continue
        head = f"  {c.name} [{c.unit}]"
        facts = []
        if c.target is not None:
            facts.append(f"target {_num(c.target)}")
        if c.limits is not None:
            facts.append(f"limits [{_num(c.lower)}, {_num(c.upper)}]")
        facts.append(f"side {c.side}")
        if c.distribution != "normal":
            facts.append(f"distribution {c.distribution}")
        lines.append(head + ": " + ", ".join(facts))
        for proc in ("old", "new"):
            av = analysis_values(measurements, spec, c.name, proc)
            lots = list(dict.fromkeys(av.lots))
            n = (f"n {len(av.values)} lots ({av.n_parts} parts)" if av.unit == "lot"
                 else f"n {len(av.values)}")
            plan = spec.planned(proc)
            short = (f"; fewer than min_n {plan}" if plan is not None
                     and len(av.values) < plan else "")
            lines.append(f"    {proc}: {n} in {len(lots)} lot{'s' if len(lots) != 1 else ''} "
                         f"({_names(lots, 6, quote=False)}){short}")
        if any(spec_of(name).uses_pairs(check) for name, check in c.checks.items()):
            pv = paired_values(measurements, spec, c.name)
            extra = f" ({_names(pv.unmatched, 5, quote=False)})" if pv.unmatched else ""
            plan = spec.planned("pairs")
            short = (f"; fewer than min_n {plan} (the pairs are the units)"
                     if plan is not None and len(pv.keys) < plan else "")
            lines.append(f"    pairs: {len(pv.keys)} matched, {len(pv.unmatched)} unmatched"
                         f"{extra}{short}")
        if spec.data.stream is not None:
            from .data import stream_values

            streams = stream_values(measurements, c.name)
            listed = ", ".join(f"{k} n {len(v)}" for k, v in streams.items()) or "none yet"
            lines.append(f"    new streams ({spec.data.stream}): {listed}")
        lines.extend(f"    check {text}" for text in check_words(c, spec))
    return lines


def _describe_pass_fail(spec, measurements, c) -> list[str]:
    """``verify check`` lines of a pass-fail characteristic: counts per process, its checks."""
    from .pass_fail_counts import process_counts

    src = (f"counts per lot (inspected {c.counts[0]!r}, failed {c.counts[1]!r})"
           if c.counts is not None else
           f"per-part results (fail {_names(c.fail_texts)}, pass {_names(c.pass_texts)})")
    lines = [f"  {c.name} [{c.unit}]: pass-fail, {src}"]
    for proc in ("old", "new"):
        k = process_counts(measurements, c, proc)
        plan = spec.planned(proc)
        short = f"; fewer than min_n {plan}" if plan is not None and k.n < plan else ""
        lots = list(k.lots)
        lines.append(f"    {proc}: {k.n} inspected, {k.failures} failed, in {len(lots)} "
                     f"lot{'s' if len(lots) != 1 else ''} ({_names(lots, 6, quote=False)})"
                     f"{short}")
    lines.extend(f"    check {text}" for text in check_words(c, spec))
    return lines


def check_words(c, spec) -> list[str]:
    """``<check>: <what it claims and how>`` of each check of characteristic ``c`` (from the
    kinds' ``spec`` hooks), in registry order; ``["none"]`` when no check runs."""
    from .spec_kind import spec_of

    out = [f"{name}: {spec_of(name).words(check, c, spec)}" for name, check in c.checks.items()]
    return out or ["none"]


def _num(v) -> str:
    from .spec_kind import num

    return num(v)


def _count(n: int, word: str) -> str:
    return f"{n} {word}{'s' if n != 1 else ''}"


def _names(items, limit: int = 10, *, quote: bool = True) -> str:
    items = list(items)
    shown = [repr(x) if quote else str(x) for x in items[:limit]]
    more = f", ... ({len(items)} in all)" if len(items) > limit else ""
    return ", ".join(shown) + more if items else "none"


# -- verify schema ----------------------------------------------------------------------------


def add_schema(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "schema",
        help="print the JSON Schema of the spec format (or, with --result, of the JSON result)",
        description=(
            "Print the JSON Schema of the spec format verify/1. Editors use it to complete and "
            "check spec files: the sample specs start with the line "
            "'# yaml-language-server: $schema=verify-spec.schema.json'. With --result, print "
            "the JSON Schema of the result format verify-result/1 instead (the file "
            "verify/result.schema.json), for programs that read the results."
        ),
        epilog="example:\n  verify schema > specs/verify-spec.schema.json\n"
               "  verify schema --result > verify-result.schema.json",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("--result", action="store_true",
                   help="the schema of the JSON result (verify-result/1), not of the spec")
    return p


def cmd_schema(args: argparse.Namespace) -> int:
    from .schema import result_schema_text, schema_text

    write(result_schema_text() if args.result else schema_text())
    return EXIT_OK


# -- verify completion ------------------------------------------------------------------------


def add_completion(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "completion",
        help="print a shell completion script (bash or zsh)",
        description=(
            "Print a script that completes verify's commands, options and file arguments in "
            "bash or zsh. Load it from the shell's start-up file (zsh: source the file, or "
            "eval \"$(verify completion zsh)\" in ~/.zshrc)."
        ),
        epilog=("example:\n  verify completion bash > ~/.local/share/bash-completion/"
                "completions/verify\n  verify completion zsh > ~/.verify-completion.zsh"),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("shell", choices=("bash", "zsh"))
    return p


def cmd_completion(args: argparse.Namespace) -> int:
    from .completion import completion_script

    write(completion_script(args.shell, build_parser()))
    return EXIT_OK


# -- commands in modules of their own: each module loads only when its command runs ----------


def _elsewhere(module: str, name: str) -> Callable:
    """``name`` of ``verify.<module>``, imported on the first call (``verify check`` then
    imports none of run, replay, nightly, plan or ledger; nightly's ledger needs sqlite3)."""

    def call(arg):
        return getattr(importlib.import_module(f".{module}", __package__), name)(arg)

    call.__name__ = call.__qualname__ = name
    return call


# -- dispatcher -------------------------------------------------------------------------------

# name -> (add the subparser, run the command); further commands register here
COMMANDS: dict[str, tuple[Callable, Callable[[argparse.Namespace], int]]] = {
    "check": (add_check, cmd_check),
    "schema": (add_schema, cmd_schema),
    "run": (_elsewhere("cli_run", "add_run"), _elsewhere("cli_run", "cmd_run")),
    "replay": (_elsewhere("cli_run", "add_replay"), _elsewhere("cli_run", "cmd_replay")),
    "nightly": (_elsewhere("cli_nightly", "add_nightly"),
                _elsewhere("cli_nightly", "nightly_main")),
    "plan": (_elsewhere("cli_plan", "add_plan"), _elsewhere("cli_plan", "plan_main")),
    "ledger": (_elsewhere("cli_ledger", "add_ledger"), _elsewhere("cli_ledger", "cmd_ledger")),
    "completion": (add_completion, cmd_completion),
}


def build_parser(only: str | None = None) -> argparse.ArgumentParser:
    """The argument parser; with ``only`` (a command name), with that sub-command alone, so
    that a run does not import every other command's module to describe it."""
    parser = argparse.ArgumentParser(
        prog="verify",
        description=(
            "Evidence for a manufacturing process change: from lot measurements, show that "
            "each characteristic is still on target and has not shifted or spread. The "
            "results support, and never replace, the engineering and quality sign-off."
        ),
        epilog="example:\n  verify check specs/",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"verify {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    for name, (add, run) in COMMANDS.items():
        if only is None or name == only:
            p = add(sub)
            p.set_defaults(func=run)
            _add_output_options(p, json_lines=name in JSON_COMMANDS)
    return parser


# commands with a line per spec (or per report) on stdout, which --json gives as JSON lines
JSON_COMMANDS = ("check", "run", "replay", "nightly")


def _add_output_options(p: argparse.ArgumentParser, *, json_lines: bool) -> None:
    g = p.add_argument_group("output")
    g.add_argument("-q", "--quiet", action="store_true",
                   help="print nothing on stdout (errors still go to stderr); the exit status "
                        "tells the outcome")
    if json_lines:
        g.add_argument("--json", action="store_true", dest="json_lines",
                       help="print one JSON object per spec on stdout instead of text "
                            "(JSON lines; see README, 'Scripts')")


def _terminate(signum, frame):  # pragma: no cover - exercised through a subprocess
    # SIGTERM (a scheduler's stop, systemd, timeout) unwinds like an exception, so temporary
    # files are removed by their finally blocks instead of being left behind
    raise SystemExit(128 + signum)


BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


def _single_threaded_blas() -> None:
    """One BLAS thread unless the user set otherwise, before numpy is first imported.

    verify's arithmetic is on short vectors; a multi-threaded BLAS call on a loaded machine
    (``np.dot`` on a long vector) can cost thousands of times the arithmetic. The variables
    are read once when numpy loads, so they must be set here, and nightly's worker processes
    inherit them.
    """
    if "numpy" in sys.modules:
        return  # too late to matter (a library caller imported numpy first)
    for name in BLAS_THREAD_VARIABLES:
        os.environ.setdefault(name, "1")


def main(argv: Sequence[str] | None = None) -> int:
    """Run ``verify`` with ``argv`` (default ``sys.argv[1:]``); return the exit status.

    Exit status 2 covers every failure that is not a decision: invalid input, an output that
    cannot be written, an internal error. A scheduler never reads such a failure as HOLD.
    """
    import signal

    from . import output

    _single_threaded_blas()
    given = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser(given[0] if given and given[0] in COMMANDS else None)
    args = parser.parse_args(given)
    output.set_mode(quiet=getattr(args, "quiet", False),
                    json_lines=getattr(args, "json_lines", False))
    if threading_main():
        signal.signal(signal.SIGTERM, _terminate)
    try:
        from .audit import source_date_epoch

        source_date_epoch()  # refuse a bad value before any library reads it at import
        status = args.func(args)
        output.flush()  # a reader that closed the pipe early is no failure of the command
        return status
    except VerifyError as exc:
        print(exc.report(), file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # output piped into head and the like: the reader has enough
        output.pipe_closed()
        return EXIT_OK
    except OSError as exc:
        where = f" {exc.filename}" if getattr(exc, "filename", None) else ""
        print(f"verify: cannot complete:{where}: {exc.strerror or exc}; nothing was "
              "half-written (outputs are renamed into place only when complete)", file=sys.stderr)
        return EXIT_INVALID
    except Exception as exc:  # a bug: say so plainly, and never exit with a decision status
        if os.environ.get("VERIFY_DEBUG"):
            raise
        print(f"verify: internal error ({type(exc).__name__}: {exc}). This is a bug in verify; "
              "please report it with this message. Set VERIFY_DEBUG=1 for the traceback.",
              file=sys.stderr)
        return EXIT_INVALID


def threading_main() -> bool:
    import threading

    return threading.current_thread() is threading.main_thread()


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
