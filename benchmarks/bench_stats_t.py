"""Time the t-test, TOST and power routines of verify.stats.

Run with ``python benchmarks/bench_stats_t.py``. Prints the median time per call; nothing is
asserted (machines differ). Invented data of the Harrowgate Works bore-diameter kind.
"""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable

import numpy as np

from verify.stats import equivalence, power, ttests


def _median_seconds(fn: Callable[[], object], repeat: int = 7, number: int = 200) -> float:
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        for _ in range(number):
            fn()
        times.append((time.perf_counter() - start) / number)
    return statistics.median(times)


def main() -> None:
    rng = np.random.default_rng(2024)
    old = rng.normal(25.000, 0.004, 30)
    new = rng.normal(25.001, 0.005, 30)
    cases: list[tuple[str, Callable[[], object], int]] = [
        ("welch t-test, n = 30 + 30", lambda: ttests.welch(old, new), 500),
        ("pooled t-test, n = 30 + 30", lambda: ttests.pooled(old, new), 500),
        ("paired t-test, 30 pairs", lambda: ttests.paired(old, new), 500),
        ("TOST (welch)", lambda: equivalence.tost("welch", new, old, low=-0.003, high=0.003), 500),
        ("power_t (welch)", lambda: power.power_t(0.002, 0.004, 30, 30, design="welch"), 500),
        (
            "power_tost exact (pooled)",
            lambda: power.power_tost(0.0, 0.004, 30, 30, design="pooled", low=-0.003, high=0.003),
            100,
        ),
        (
            "power_tost_shifted_t (pooled)",
            lambda: power.power_tost_shifted_t(
                0.0, 0.004, 30, 30, design="pooled", low=-0.003, high=0.003
            ),
            500,
        ),
        (
            "detectable_shift (welch)",
            lambda: power.detectable_shift(0.004, 30, 30, design="welch"),
            20,
        ),
        (
            "sample_size_tost (pooled)",
            lambda: power.sample_size_tost(0.0, 0.004, design="pooled", low=-0.002, high=0.002,
                                             power=0.9),
            5,
        ),
    ]
    for label, fn, number in cases:
        seconds = _median_seconds(fn, number=number)
        print(f"{label:32s} {seconds * 1e6:10.1f} us per call")


if __name__ == "__main__":
    main()
