"""Reading a data workbook: python-calamine (what verify uses) against openpyxl (the reader it
replaced), on a generated sheet of ROWS x 6 columns, and the whole load_measurements. Prints the
figures; asserts nothing about time.

    python benchmarks/bench_xlsx_read.py [--rows 200000] [--repeat 3]
"""

from __future__ import annotations

import argparse
import statistics
import tempfile
import time
from pathlib import Path

import numpy as np


def make(folder: Path, rows: int) -> Path:
    import openpyxl

    rng = np.random.default_rng(3)
    wb = openpyxl.Workbook(write_only=True)
    ws = wb.create_sheet("lots")
    ws.append(["lot", "supplier", "part", "width", "height", "depth"])
    for i in range(rows):
        ws.append([f"L{i // 400}", "Old Co" if i < rows // 2 else "New Co", f"P{i}",
                   *np.round(rng.normal(10, 0.02, 3), 4).tolist()])
    wb.save(folder / "lots.xlsx")
    (folder / "spec.yaml").write_text(
        "format: verify/1\ntitle: bench\ndata:\n  file: lots.xlsx\n  lot: lot\n"
        "  process: supplier\n  old: Old Co\n  new: New Co\ncharacteristics:\n"
        + "".join(f"  - {{name: {c}, unit: mm}}\n" for c in ("width", "height", "depth")),
        encoding="utf-8")
    return folder / "spec.yaml"


def timed(f, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        f()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--rows", type=int, default=200_000)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    from verify.data import load_measurements
    from verify.data import xlsx as vxlsx
    from verify.spec import load_spec

    with tempfile.TemporaryDirectory() as tmp:
        spec_path = make(Path(tmp), args.rows)
        raw = (Path(tmp) / "lots.xlsx").read_bytes()
        spec = load_spec(spec_path)
        fast = timed(lambda: vxlsx._xlsx_rows(raw, "lots.xlsx", None), args.repeat)
        slow = timed(lambda: vxlsx._xlsx_rows_openpyxl(raw, "lots.xlsx", None), args.repeat)
        whole = timed(lambda: load_measurements(spec), args.repeat)
        print(f"{args.rows} rows x 6 columns ({len(raw) / 1e6:.1f} MB), median of "
              f"{args.repeat}:")
        print(f"  read cells, python-calamine : {fast:6.2f} s")
        print(f"  read cells, openpyxl        : {slow:6.2f} s  ({slow / fast:.1f}x)")
        print(f"  load_measurements (calamine): {whole:6.2f} s "
              f"({3 * args.rows / whole:,.0f} measurements/s)")


if __name__ == "__main__":
    main()
