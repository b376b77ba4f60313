"""Benchmark ``verify nightly`` (a script, not a test: it prints figures and asserts nothing).

Generates, in a temporary folder, 200 specs x 4 characteristics x 60 parts per process (old and
new, 6 lots of 10 parts each), then times with ``--jobs 1`` and with ``--jobs 2``:

- the first run (every spec evaluated and written),
- an all-unchanged run (goal: under 2 s for 200 specs, the whole command),
- a run with one spec changed (one lot appended to its data file).

Then one large spec of 500,000 measurements (long layout, 4 characteristics x 125,000 parts)
with its time and peak memory (goal: under 45 s and 1 GB), and how its workbook's measurements
sheet meets Excel's 1,048,576-row limit.

Every run is the real command in a fresh process (``python -m verify.nightly``), so the times
include interpreter start-up and imports. CPU is the user + system time of the command and all
its worker processes (steadier than the wall time on a shared machine). Peak memory is the
largest resident set of the command and its worker processes
(``resource.getrusage(RUSAGE_CHILDREN).ru_maxrss`` measured in a small wrapper process, so one
run's peak is not mixed with another's).

Usage::

    python benchmarks/bench_nightly.py            # the full benchmark (several minutes)
    python benchmarks/bench_nightly.py --specs 20 --large 50000   # a quick look
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parents[1]
CHARACTERISTICS = (("bore", "mm", 12.0, 0.004), ("length", "mm", 25.0, 0.01),
                   ("hardness", "HB", 82.0, 0.8), ("runout", "mm", 0.02, 0.002))
_WRAPPER = (
    "import resource, subprocess, sys, time\n"
    "t0 = time.perf_counter()\n"
    "p = subprocess.run(sys.argv[1:], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)\n"
    "dt = time.perf_counter() - t0\n"
    "ru = resource.getrusage(resource.RUSAGE_CHILDREN)\n"
    "peak, cpu = ru.ru_maxrss, ru.ru_utime + ru.ru_stime\n"
    "import json; print(json.dumps({'rc': p.returncode, 'seconds': dt, 'peak_kib': peak,\n"
    "                               'cpu': cpu,\n"
    "                               'stdout': p.stdout[-2000:], 'stderr': p.stderr[-2000:]}))\n"
)


def _spec_text(name: str, data_file: str, *, long: bool = False) -> str:
    lines = ["format: verify/1", f"title: Harrowgate Works benchmark {name}", "alpha: 0.05",
             "min_n: 30", "data:", f"  file: {data_file}", "  lot: lot"]
    if long:
        lines += ["  characteristic: characteristic", "  value: value"]
    lines += ["  process: line", "  old: old", "  new: new", "characteristics:"]
    for cname, unit, target, sd in CHARACTERISTICS:
        lines += [f"  - name: {cname}", f"    unit: {unit}",
                  f"    match: {cname}" if long else f"    column: {cname}",
                  f"    target: {target}",
                  f"    limits: [{target - 8 * sd:.6g}, {target + 8 * sd:.6g}]",
                  "    checks:",
                  f"      target: {{margin: {2 * sd:.6g}}}",
                  f"      shift: {{margin: {2 * sd:.6g}}}",
                  "      spread: {}",
                  "      capability: {}"]
    return "\n".join(lines) + "\n"


def _wide_rows(rng, lots: list[tuple[str, str]], parts: int) -> list[str]:
    rows = []
    for lot, line in lots:
        cols = [rng.normal(t, sd, parts) for _, _, t, sd in CHARACTERISTICS]
        for i in range(parts):
            rows.append(f"{lot},{line}," + ",".join(f"{c[i]:.5f}" for c in cols))
    return rows


def make_specs(folder: Path, count: int, seed: int = 20250102) -> None:
    """``count`` specs, each with its own wide CSV: 6 old and 6 new lots of 10 parts."""
    rng = np.random.default_rng(seed)
    specs, data = folder / "specs", folder / "lots"
    specs.mkdir(parents=True)
    data.mkdir()
    header = "lot,line," + ",".join(c[0] for c in CHARACTERISTICS)
    for k in range(count):
        name = f"part-{k:03d}"
        lots = [(f"{name}-O{i}", "old") for i in range(6)] + [
            (f"{name}-N{i}", "new") for i in range(6)]
        (data / f"{name}.csv").write_text(
            "\n".join([header] + _wide_rows(rng, lots, 10)) + "\n", encoding="utf-8")
        (specs / f"{name}.yaml").write_text(_spec_text(name, f"../lots/{name}.csv"),
                                            encoding="utf-8")


def append_lot(folder: Path, name: str, lot: str, seed: int = 7) -> None:
    rng = np.random.default_rng(seed)
    with open(folder / "lots" / f"{name}.csv", "a", encoding="utf-8") as f:
        f.write("\n".join(_wide_rows(rng, [(lot, "new")], 10)) + "\n")


def make_large(folder: Path, measurements: int, seed: int = 11) -> Path:
    """One long-layout spec of ``measurements`` rows (4 characteristics, lots of 50 parts)."""
    import pandas as pd

    rng = np.random.default_rng(seed)
    per = measurements // len(CHARACTERISTICS)
    parts = np.arange(per)
    frames = []
    for cname, _, target, sd in CHARACTERISTICS:
        frames.append(pd.DataFrame({
            "lot": [f"L{p // 50:05d}" for p in parts],
            "line": np.where(parts < per // 2, "old", "new"),
            "characteristic": cname,
            "value": np.round(rng.normal(target, sd, per), 6),
        }))
    (folder / "specs").mkdir(parents=True)
    (folder / "lots").mkdir()
    pd.concat(frames).to_csv(folder / "lots" / "large.csv", index=False)
    spec = folder / "specs" / "large.yaml"
    spec.write_text(_spec_text("large", "../lots/large.csv", long=True), encoding="utf-8")
    return spec


def run(specs: Path, out: Path, *args: str) -> dict:
    cmd = [sys.executable, "-m", "verify.nightly", str(specs), "--out", str(out), *args]
    proc = subprocess.run([sys.executable, "-c", _WRAPPER, *cmd], capture_output=True,
                          text=True, cwd=REPO, env={**os.environ, "PYTHONUNBUFFERED": "1"})
    if proc.returncode != 0:
        raise SystemExit(f"wrapper failed: {proc.stderr}")
    res = json.loads(proc.stdout.strip().splitlines()[-1])
    if res["rc"] not in (0, 1, 3):
        raise SystemExit(f"nightly exited {res['rc']}:\n{res['stdout']}\n{res['stderr']}")
    return res


def _summary_line(res: dict) -> str:
    lines = [ln for ln in res["stdout"].splitlines() if ln.startswith("nightly ")]
    return lines[-1].split(": ", 1)[1] if lines else ""


def _measurement_sheets(out: Path) -> list[tuple[str, int]]:
    from openpyxl import load_workbook

    books = sorted((out / "large").glob("*.xlsx"))
    wb = load_workbook(books[-1], read_only=True)
    try:
        return [(ws.title, ws.max_row) for ws in wb.worksheets if ws.title.startswith("Measure")]
    finally:
        wb.close()


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--specs", type=int, default=200)
    ap.add_argument("--large", type=int, default=500_000, help="measurements in the large spec "
                                                                "(0 skips it)")
    ap.add_argument("--jobs", type=int, nargs="+", default=[1, 2])
    ap.add_argument("--first-runs", type=int, default=1,
                    help="repeat the first run this many times (fresh output folders) and "
                         "print the median")
    opts = ap.parse_args(argv)
    print(f"verify nightly benchmark: {opts.specs} specs x {len(CHARACTERISTICS)} "
          f"characteristics x 60 parts per process; {os.cpu_count()} CPUs; Python "
          f"{sys.version.split()[0]}")
    with tempfile.TemporaryDirectory(prefix="bench-nightly-") as tmp:
        tmp = Path(tmp)
        make_specs(tmp, opts.specs)
        for jobs in opts.jobs:
            firsts = []
            for i in range(opts.first_runs - 1):
                firsts.append(run(tmp / "specs", tmp / f"out-jobs{jobs}-{i}", "--jobs",
                                  str(jobs))["seconds"])
            out = tmp / f"out-jobs{jobs}"
            first = run(tmp / "specs", out, "--jobs", str(jobs))
            if firsts:
                firsts.append(first["seconds"])
                goal = "  (goal with --jobs 2: < 15 s)" if jobs == 2 else ""
                print(f"  --jobs {jobs}  first run, median of {len(firsts)}: "
                      f"{sorted(firsts)[len(firsts) // 2]:.2f} s (runs: "
                      f"{', '.join(f'{x:.2f}' for x in firsts)}){goal}")
            same = run(tmp / "specs", out, "--jobs", str(jobs))
            changed = f"part-{min(7, opts.specs - 1):03d}"
            append_lot(tmp, changed, f"{changed}-N{90 + jobs}")
            one = run(tmp / "specs", out, "--jobs", str(jobs))
            per_spec = (f"  ({first['cpu'] / opts.specs * 1000:.0f} ms CPU per spec, start-up "
                        "included)")
            for label, res, goal in (("first run", first, per_spec),
                                     ("all unchanged", same, "  (goal < 2 s)"),
                                     ("one spec changed", one, "")):
                print(f"  --jobs {jobs}  {label:<17} {res['seconds']:7.2f} s  CPU "
                      f"{res['cpu']:6.2f} s  largest process {res['peak_kib'] / 1024:6.0f} MiB  "
                      f"[{_summary_line(res)}]{goal}")
        if opts.large:
            big = tmp / "large"
            t0 = time.perf_counter()
            make_large(big, opts.large)
            gen = time.perf_counter() - t0
            res = run(big / "specs", big / "out")
            print(f"large spec: {opts.large:,} measurements (data generated in {gen:.1f} s): "
                  f"{res['seconds']:.2f} s (CPU {res['cpu']:.2f} s), largest process "
                  f"{res['peak_kib'] / 1024:.0f} MiB "
                  "(goal < 45 s and < 1024 MiB)")
            sheets = _measurement_sheets(big / "out")
            limit = 1_048_576
            print("  measurements sheet(s): " + ", ".join(
                f"'{name}' {rows:,} rows" for name, rows in sheets)
                + f" (Excel's limit: {limit:,} rows per sheet; beyond it the table continues on "
                  "further sheets)")


if __name__ == "__main__":
    main()
