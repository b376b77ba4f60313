"""Start-up: ``verify check specs/`` against ``python -c "import pandas, yaml"``.

Both run as fresh processes, interleaved, several times; prints the medians and their ratio
(goal: within 1.5x), and the modules ``verify check`` imports that it may not need (from
``python -X importtime``). A script, not a test: it asserts nothing.

    python benchmarks/bench_startup.py [--repeat 7]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]


def timed(cmd: list[str]) -> float:
    env = dict(os.environ, PYTHONPATH=str(REPO))
    t0 = time.perf_counter()
    subprocess.run(cmd, cwd=REPO, env=env, capture_output=True, check=False)
    return time.perf_counter() - t0


def top_imports(n: int = 8) -> list[tuple[int, str]]:
    env = dict(os.environ, PYTHONPATH=str(REPO))
    proc = subprocess.run([sys.executable, "-X", "importtime", "-m", "verify", "check",
                           "specs/"], cwd=REPO, env=env, capture_output=True, text=True)
    rows = []
    for line in proc.stderr.splitlines():
        if not line.startswith("import time:") or "|" not in line:
            continue
        _, cumulative, name = (x.strip() for x in line[len("import time:"):].split("|"))
        if cumulative.isdigit() and not name.startswith(" ") and "." not in name.strip():
            rows.append((int(cumulative), name.strip()))
    return sorted(rows, reverse=True)[:n]


def load() -> str:
    """The machine's load, to read the figures by (os.getloadavg is not on Windows)."""
    try:
        return f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} CPUs"
    except (AttributeError, OSError):
        return f"{os.cpu_count()} CPUs"


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=7)
    opts = ap.parse_args(argv)
    check = [sys.executable, "-m", "verify", "check", "specs/"]
    base = [sys.executable, "-c", "import pandas, yaml"]
    timed(check)  # warm the file cache
    a, b = [], []
    for _ in range(opts.repeat):
        a.append(timed(check))
        b.append(timed(base))
    ta, tb = statistics.median(a), statistics.median(b)
    print(f"start-up, median of {opts.repeat} fresh processes ("
          f"{load()}):")
    print(f"  verify check specs/:              {ta:5.2f} s")
    print(f"  python -c 'import pandas, yaml':  {tb:5.2f} s")
    print(f"  ratio {ta / tb:.2f}x (goal: within 1.5x)")
    print("  largest top-level imports of verify check (cumulative ms): " + ", ".join(
        f"{name} {us / 1000:.0f}" for us, name in top_imports()))


if __name__ == "__main__":
    main()
