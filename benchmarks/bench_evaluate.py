"""How many complete characteristic evaluations run per second.

A complete evaluation is every check (target TOST, shift TOST, spread, capability) and every
diagnostic (normality, outliers, lot count and lot effect, stability, resolution, rank-test
companions) and the power and sample-size figures, for one characteristic with n = 30 parts per
process in 3 lots each. Prints the figures; asserts nothing about time.

Two figures: the same data evaluated again and again (the evaluation's own caches, e.g. the t
quantiles and sd-ratio constants keyed by degrees of freedom, then hold every value a repeat
needs), and fresh data each time (a new random data set per repetition, as a nightly run meets
new lots: those caches hit only by chance). The goal is read on the fresh-data figure.

    python benchmarks/bench_evaluate.py [--characteristics 40] [--repeat 21]
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time
from pathlib import Path

import numpy as np


def make_spec(folder: Path, k: int, n: int = 30, seed: int = 7) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    rows = ["lot,process," + ",".join(f"c{i}" for i in range(k))]
    for proc, shift in (("old", 0.0), ("new", 0.002)):
        for j in range(n):
            lot = f"{proc}-{j // 10}"
            vals = 10.0 + shift + rng.normal(0, 0.01, k)
            rows.append(f"{lot},{proc}," + ",".join(f"{v:.4f}" for v in vals))
    (folder / "bench.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    chars = "\n".join(
        f"""  - name: c{i}
    column: c{i}
    unit: mm
    target: 10.0
    limits: [9.95, 10.05]
    checks:
      target: {{margin: 0.02}}
      shift: {{margin: 0.02}}
      spread: {{}}
      capability: {{min_cpk: 1.33}}"""
        for i in range(k)
    )
    spec = f"""format: verify/1
title: evaluation benchmark
data:
  file: bench.csv
  lot: lot
  process: process
  old: old
  new: new
characteristics:
{chars}
"""
    path = folder / "bench.yaml"
    path.write_text(spec, encoding="utf-8")
    return path


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--characteristics", type=int, default=40)
    ap.add_argument("--repeat", type=int, default=21)  # a median steady on a shared machine
    args = ap.parse_args()
    from verify.data import load_measurements
    from verify.evaluate import evaluate
    from verify.spec import load_spec

    k = args.characteristics
    with tempfile.TemporaryDirectory() as tmp:
        spec = load_spec(make_spec(Path(tmp), k))
        meas = load_measurements(spec)
        evaluate(spec, meas)  # warm-up: imports and caches
        same = _timed(lambda: evaluate(spec, meas), args.repeat)
        fresh_inputs = []
        for i in range(args.repeat):
            s = load_spec(make_spec(Path(tmp) / f"fresh{i}", k, seed=1000 + i))
            fresh_inputs.append((s, load_measurements(s)))
        it = iter(fresh_inputs)
        fresh = _timed(lambda: evaluate(*next(it)), args.repeat)
    print(f"complete characteristic evaluations (n = 30 per process, every check and "
          f"diagnostic; {k} characteristics a run, median of {args.repeat}; {_load()}):")
    for label, (times, cpu) in (("fresh data each run", fresh), ("the same data again", same)):
        best, med, cpu_med = min(times), float(np.median(times)), float(np.median(cpu))
        print(f"  {label}: {k / med:.1f} per second (best {k / best:.1f}/s; "
              f"{1000 * med / k:.2f} ms each); by CPU time {k / cpu_med:.1f} per second")
    print("  goal: at least 2,000 per second on fresh data")


def _timed(run, repeat: int) -> tuple[list[float], list[float]]:
    times, cpu = [], []
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        run()
        times.append(time.perf_counter() - t0)
        cpu.append(time.process_time() - c0)
    return times, cpu


def _load() -> str:
    try:
        return f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs"
    except (AttributeError, OSError):  # not on Windows
        return f"{os.cpu_count()} CPUs"


if __name__ == "__main__":
    main()
