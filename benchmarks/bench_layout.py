"""``verify run`` on a dimensional layout: 300 characteristics against 1, on the same rows.

Generates, in a temporary folder, one wide data file of 100 parts per process (old and new,
in lots of 10) with 300 characteristic columns, and two specs on it: one with the first
characteristic only, one with all 300 declared in a ``characteristics_from`` table. Each is run
with the real command in a fresh process (``python -m verify run``), several times; prints the
median seconds of each, their ratio (goal: 300 characteristics within 3x of 1) and the
per-characteristic cost. A script, not a test: it asserts nothing.

    python benchmarks/bench_layout.py [--characteristics 300] [--parts 100] [--repeat 5]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parents[1]


def make_layout(folder: Path, k: int, parts: int, seed: int = 17) -> tuple[Path, Path]:
    rng = np.random.default_rng(seed)
    names = [f"dim_{i:03d}" for i in range(k)]
    nominal = np.round(rng.uniform(5, 80, k), 2)
    sd = np.round(nominal * 2e-4, 5)
    rows = ["lot,process," + ",".join(names)]
    for proc, shift in (("old", 0.0), ("new", 0.3)):
        for j in range(parts):
            lot = f"{proc.upper()}-{j // 10 + 1:02d}"
            vals = nominal + sd * (shift + rng.standard_normal(k))
            rows.append(f"{lot},{proc}," + ",".join(f"{v:.5f}" for v in vals))
    (folder / "layout_data.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    table = ["name,unit,target,lower,upper,target_margin,shift_margin"]
    for n, t, s in zip(names, nominal, sd, strict=True):
        table.append(f"{n},mm,{t},{t - 8 * s:.5f},{t + 8 * s:.5f},{2 * s:.5f},{2 * s:.5f}")
    (folder / "layout.csv").write_text("\n".join(table) + "\n", encoding="utf-8")
    head = ("format: verify/1\ntitle: Kestrel Lane Works mould T-17 first-article layout\n"
            "min_n: 100\n"
            "data:\n  file: layout_data.csv\n  lot: lot\n  process: process\n  old: old\n"
            "  new: new\n")
    checks = "  checks: {target: {}, shift: {}, spread: {}, capability: {min_cpk: 1.33}}\n"
    many = folder / "layout-300.yaml"
    many.write_text(head + "characteristics_from: layout.csv\ndefaults:\n" + checks,
                    encoding="utf-8")
    t, s = nominal[0], sd[0]
    one = folder / "layout-1.yaml"
    one.write_text(head + f"characteristics:\n  - name: {names[0]}\n    unit: mm\n"
                   f"    target: {t}\n    limits: [{t - 8 * s:.5f}, {t + 8 * s:.5f}]\n"
                   f"    checks:\n      target: {{margin: {2 * s:.5f}}}\n"
                   f"      shift: {{margin: {2 * s:.5f}}}\n      spread: {{}}\n"
                   "      capability: {min_cpk: 1.33}\n", encoding="utf-8")
    return one, many


def run(spec: Path, out: Path, env: dict[str, str] | None = None) -> float:
    env = dict(os.environ if env is None else env, PYTHONPATH=str(REPO))
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "verify", "run", str(spec), "--out", str(out)],
                          capture_output=True, text=True, env=env)
    seconds = time.perf_counter() - t0
    if proc.returncode not in (0, 1, 3):
        raise SystemExit(f"verify run failed ({proc.returncode}):\n{proc.stderr}")
    return seconds


def load() -> str:
    """The machine's load, to read the figures by (os.getloadavg is not on Windows)."""
    try:
        return f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs"
    except (AttributeError, OSError):
        return f"{os.cpu_count()} CPUs"


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--characteristics", type=int, default=300)
    ap.add_argument("--parts", type=int, default=100, help="parts per process")
    ap.add_argument("--repeat", type=int, default=5)
    opts = ap.parse_args(argv)
    k = opts.characteristics
    with tempfile.TemporaryDirectory(prefix="bench-layout-") as tmp:
        folder = Path(tmp)
        one, many = make_layout(folder, k, opts.parts)
        print(f"verify run, {opts.parts} parts per process, median of {opts.repeat} fresh "
              f"processes ({load()}):")
        report(_times(one, many, folder / "plain", opts.repeat), k)
        if sys.dont_write_bytecode:
            # verify's modules are then compiled from source in every run (pandas' come
            # compiled with it): a fixed cost that shrinks the ratio. An installed verify has
            # its bytecode cached; so do these runs (a temporary cache, warmed first).
            cache = folder / "pycache"
            env = {n: v for n, v in os.environ.items() if n != "PYTHONDONTWRITEBYTECODE"}
            env["PYTHONPYCACHEPREFIX"] = str(cache)
            run(one, folder / "warm", env)
            print("  with bytecode cached (PYTHONDONTWRITEBYTECODE is set here, so the runs "
                  "above compile verify's modules every time):")
            report(_times(one, many, folder / "cached", opts.repeat, env), k)


def _times(one: Path, many: Path, out: Path, repeat: int,
           env: dict[str, str] | None = None) -> dict[str, list[float]]:
    times: dict[str, list[float]] = {"1": [], "k": []}
    for i in range(repeat):  # interleaved, so a load change hits both alike
        times["1"].append(run(one, out / f"1-{i}", env))
        times["k"].append(run(many, out / f"k-{i}", env))
    return times


def report(times: dict[str, list[float]], k: int) -> None:
    t1, tk = statistics.median(times["1"]), statistics.median(times["k"])
    for label, t, runs in (("1 characteristic:   ", t1, times["1"]),
                           (f"{k} characteristics:", tk, times["k"])):
        print(f"  {label} {t:6.2f} s  (runs: {', '.join(f'{x:.2f}' for x in runs)})")
    print(f"  ratio {tk / t1:.2f}x (goal: within 3x); {1000 * (tk - t1) / (k - 1):.1f} ms per "
          "further characteristic")


if __name__ == "__main__":
    main()
