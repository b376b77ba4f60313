"""``verify run`` and ``verify replay``: argument parsing and exit statuses only."""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

from .cli_args import add_max_data_mb
from .errors import UsageError, VerifyError
from .output import say

EXIT_PASS, EXIT_HOLD, EXIT_INVALID, EXIT_PENDING = 0, 1, 2, 3


def decision_exit(decisions) -> int:
    """0 all PASS, 1 any HOLD, 3 any PENDING and no HOLD."""
    decisions = list(decisions)
    if "HOLD" in decisions:
        return EXIT_HOLD
    if "PENDING" in decisions:
        return EXIT_PENDING
    return EXIT_PASS


def add_run(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "run",
        help="evaluate specs and write the workbook and JSON result of each",
        description=(
            "Evaluate each spec on its data and write <out>/<spec-stem>.xlsx and "
            "<out>/<spec-stem>.json. Every spec is validated first: if any is invalid, all "
            "problems are printed and nothing is written. Outputs are written to temporary "
            "files and renamed, so a failed run never leaves half a file nor destroys the "
            "previous one.\n\nexit status: 0 all PASS, 1 any HOLD, 3 any PENDING and no HOLD, "
            "2 invalid input (nothing written)."
        ),
        epilog=("example:\n  verify run specs/ --out reports/\n"
                "  verify run specs/housing-resin.yaml --final"),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("paths", nargs="+", metavar="SPEC|DIR",
                   help="spec files, or folders searched for *.yaml and *.yml")
    p.add_argument("--out", default="reports", metavar="DIR",
                   help="folder for the workbooks and JSON results (default: reports/)")
    p.add_argument("--final", action="store_true",
                   help="the trial is complete: a shortfall against min_n no longer gives "
                        "PENDING (checks decide on the data there are)")
    p.add_argument("--no-snapshot", action="store_true",
                   help="do not keep compressed copies of the data files in <out>/snapshots/ "
                        "(the audit trail says so; replay then needs the data unchanged)")
    p.add_argument("--full-detail", action="store_true",
                   help="a workbook sheet per characteristic however many there are (by "
                        "default, beyond 40 characteristics their detail is one table, the "
                        "Details sheet)")
    add_max_data_mb(p)
    return p


def summary_line(ev, target: Path | None = None) -> str:
    chars = ", ".join(f"{c.name} {c.decision}" for c in ev.characteristics)
    where = f"  -> {target}" if target is not None else ""
    return f"{ev.spec.stem}: {ev.decision} ({chars}){where}"


def summary_record(ev, workbook: Path, result: Path) -> dict:
    """The ``--json`` line of one spec: what the text line says, as fields."""
    return {"spec": str(ev.spec.path), "decision": ev.decision,
            "characteristics": {c.name: c.decision for c in ev.characteristics},
            "reasons": list(ev.reasons), "workbook": str(workbook), "result": str(result)}


def cmd_run(args: argparse.Namespace) -> int:
    from .audit import command_line
    from .runner import (
        CommitError,
        check_target,
        commit_all,
        keep_snapshots,
        prepare,
        stage_outputs,
    )
    from .snapshots import SNAPSHOT_DIR
    from .spec import find_specs

    paths = find_specs(args.paths)
    stems: dict[str, Path] = {}
    for p in paths:
        if p.stem in stems:
            raise VerifyError(
                f"{p}: another spec ({stems[p.stem]}) has the same file name stem '{p.stem}'; "
                "both would write the same report: rename one, or run them separately")
        stems[p.stem] = p
    command = command_line()
    evaluations, failed = [], []
    for p in paths:  # validate and evaluate every spec before writing anything
        try:
            evaluations.append(prepare(p, final=args.final, command=command,
                                       max_data_mb=args.max_data_mb))
        except VerifyError as exc:
            failed.append((p, exc))
    if failed:
        for p, exc in failed:
            say(None, {"spec": str(p), "valid": False, "errors": exc.report().splitlines()})
            print(f"{p}: invalid\n" + "\n".join("  " + ln for ln in exc.report().splitlines()),
                  file=sys.stderr)
        print(f"{len(failed)} of {len(paths)} specs invalid: nothing written", file=sys.stderr)
        return EXIT_INVALID
    out = Path(args.out)
    check_out_dir(out)
    targets = [(ev, out / f"{ev.spec.stem}.xlsx", out / f"{ev.spec.stem}.json")
               for ev in evaluations]
    refuse_overwriting_inputs(evaluations, [t for _, *pair in targets for t in pair])
    for _, *pair in targets:  # a folder where a report goes: refuse before writing anything
        for t in pair:
            check_target(t)
    snaps = None if args.no_snapshot else out / SNAPSHOT_DIR
    had = _snapshot_names(snaps)
    staged = []
    try:
        targets = [(keep_snapshots(ev, snaps), wb, res) for ev, wb, res in targets]
        evaluations = [ev for ev, _, _ in targets]
        try:  # every spec's pair is written before any is renamed into place
            for ev, wb, res in targets:
                staged.append(stage_outputs(
                    ev, wb, res,
                    detail="full" if getattr(args, "full_detail", False) else "auto"))
        except BaseException:
            for st in staged:
                st.discard()
            raise
        try:
            outputs = commit_all(staged)  # all renamed into place, or none
        except CommitError as exc:
            raise VerifyError(f"verify run: {exc}") from None
    except BaseException:
        _drop_new_snapshots(snaps, had)  # nothing of a failed run remains
        raise
    for ev, outs in zip(evaluations, outputs, strict=True):
        say(summary_line(ev, outs.workbook), summary_record(ev, outs.workbook, outs.result))
    return decision_exit(ev.decision for ev in evaluations)


def _snapshot_names(folder: Path | None) -> set[str] | None:
    """The snapshots already kept (None: no snapshot folder yet, or snapshots opted out)."""
    if folder is None or not folder.is_dir():
        return None
    return {p.name for p in folder.iterdir()}


def _drop_new_snapshots(folder: Path | None, had: set[str] | None) -> None:
    """Remove the snapshots this failed run added (and their folder when it made it)."""
    import contextlib

    if folder is None or not folder.is_dir():
        return
    for p in folder.iterdir():
        if had is None or p.name not in had:
            with contextlib.suppress(OSError):
                p.unlink()
    if had is None:
        with contextlib.suppress(OSError):
            folder.rmdir()


def check_out_dir(out: Path) -> None:
    """The output folder must be a writable folder (created when missing)."""
    if out.exists() and not out.is_dir():
        raise UsageError(f"--out {out}: this is a file, not a folder: give a folder for the "
                         "reports")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise UsageError(f"--out {out}: cannot create the folder ({err.strerror})") from None
    if not os.access(out, os.W_OK | os.X_OK):
        raise UsageError(f"--out {out}: the folder is not writable: choose another --out")


def refuse_overwriting_inputs(evaluations, outputs) -> None:
    """A report must never replace a spec or a data file."""
    inputs = {}
    for ev in evaluations:
        inputs[Path(ev.spec.path).resolve()] = f"the spec {ev.spec.path}"
        for f in ev.measurements.files:
            inputs[Path(f.resolved_path).resolve()] = f"the data file of {ev.spec.path}"
    for target in outputs:
        what = inputs.get(Path(target).resolve())
        if what is not None:
            raise UsageError(f"{target} is {what}: writing the report there would destroy it; "
                             "choose another --out")


def add_replay(sub: argparse._SubParsersAction) -> argparse.ArgumentParser:
    p = sub.add_parser(
        "replay",
        help="re-run a recorded result and compare every decision and number",
        description=(
            "Read the spec text and hashes recorded in a report (the .json, or the .xlsx, "
            "which carries the same record), check that each data file still has its recorded "
            "sha256, re-run with the recorded spec text and compare every decision and number "
            "(relative tolerance 1e-12). Prints 'reproduced' (exit 0) or the differences "
            "(exit 1); says when tool or library versions differ from the recorded ones. A data "
            "file whose sha256 no longer matches (a lot file that grew) is read from the run's "
            "snapshot (<out>/snapshots/<sha256>.gz) when there is one; the output says which "
            "was used."
        ),
        epilog="example:\n  verify replay reports/bushing-supplier.json",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("report", metavar="REPORT.xlsx|REPORT.json")
    p.add_argument("--from-sheet", action="store_true",
                   help="re-run on the values of the workbook's own Measurements sheet instead "
                        "of the data file (when neither the file nor its snapshot is at hand): "
                        "a weaker check than the original bytes, and said so")
    add_max_data_mb(p)
    return p


def cmd_replay(args: argparse.Namespace) -> int:
    from .replay import replay

    res = replay(args.report, from_sheet=args.from_sheet, max_data_mb=args.max_data_mb)
    lines = [f"data: {s}" for s in res.sources] + [f"note: {n}" for n in res.notes]
    if res.reproduced:
        how = " from its Measurements sheet (a weaker check: see the note)" if (
            args.from_sheet) else ""
        lines.append(f"{args.report}: reproduced{how}")
    else:
        lines += [f"integrity: {m}" for m in res.integrity]
        lines += [f"differs: {d}" for d in res.differences]
        lines.append(f"{args.report}: NOT reproduced ({len(res.integrity)} integrity "
                     f"problem(s), {len(res.differences)} difference(s))")
    say("\n".join(lines), {"report": str(args.report), "reproduced": res.reproduced,
                           "integrity": res.integrity, "differences": res.differences,
                           "notes": res.notes, "sources": res.sources})
    return 0 if res.reproduced else 1
