"""Start-up: ``verify check specs/`` against ``python -c "import pandas, yaml"``.

Both run as fresh processes, interleaved, several times; prints the medians and their ratio
(goal: within 1.5x), and the modules ``verify check`` imports that it may not need (from
``python -X importtime``). A script, not a test: it asserts nothing.

Where Python may not cache bytecode (``PYTHONDONTWRITEBYTECODE`` set, as on some CI machines)
verify's own modules, unlike the installed pandas, are compiled from source on every run; the
script then also prints the figures with the bytecode cached (in a temporary
``PYTHONPYCACHEPREFIX``, warmed first), as an installed verify has it.

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


def timed(cmd: list[str], env: dict | None = None) -> float:
    env = dict(env if env is not None else os.environ, PYTHONPATH=str(REPO))
    t0 = time.perf_counter()
    subprocess.run(cmd, cwd=REPO, env=env, capture_output=True, check=False)
    return time.perf_counter() - t0


def medians(check: list[str], base: list[str], repeat: int,
            env: dict | None = None) -> tuple[float, float]:
    a, b = [], []
    for _ in range(repeat):  # interleaved: a change in the machine's load meets both
        a.append(timed(check, env))
        b.append(timed(base, env))
    return statistics.median(a), statistics.median(b)


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
    ta, tb = medians(check, base, opts.repeat)
    print(f"start-up, median of {opts.repeat} fresh processes ("
          f"{load()}):")
    print(f"  verify check specs/:              {ta:5.2f} s")
    print(f"  python -c 'import pandas, yaml':  {tb:5.2f} s")
    print(f"  ratio {ta / tb:.2f}x (goal: within 1.5x)")
    if sys.dont_write_bytecode:
        import tempfile

        with tempfile.TemporaryDirectory(prefix="bench-startup-pyc-") as cache:
            env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
            env["PYTHONPYCACHEPREFIX"] = cache
            timed(check, env)  # fills the cache (pandas' modules too: they are looked up
            timed(base, env)  # there only, with the prefix set)
            ta, tb = medians(check, base, opts.repeat, env)
        print(f"  with bytecode cached (PYTHONDONTWRITEBYTECODE is set here, so verify's modules "
              f"are compiled on every run above): {ta:.2f} s against {tb:.2f} s, ratio "
              f"{ta / tb:.2f}x")
    print("  largest top-level imports of verify check (cumulative ms): " + ", ".join(
        f"{name} {us / 1000:.0f}" for us, name in top_imports()))


if __name__ == "__main__":
    main()
