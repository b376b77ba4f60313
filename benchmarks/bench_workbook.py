"""Benchmark: write the workbook for one spec with many measurements.

Prints the seconds to build the synthetic Evaluation (a stand-in for loading and statistics,
which other modules do), the seconds to write the workbook, the file size and the peak
resident memory of the process. Not a test: nothing is asserted on time.

    python benchmarks/bench_workbook.py                    # 500,000 measurements
    python benchmarks/bench_workbook.py --measurements 1200000   # continues on a 2nd sheet
    python benchmarks/bench_workbook.py --check            # also read the file back

``--check`` reopens the file with openpyxl in read-only mode and counts the rows of each
measurements sheet (slow for large files: it is the reader, not the writer).
"""

from __future__ import annotations

import argparse
import resource
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from tests.factory import make_evaluation  # noqa: E402
from verify.report.layout import EXCEL_MAX_ROWS  # noqa: E402
from verify.report.workbook import write_workbook  # noqa: E402


def peak_mib() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # Linux: KiB


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--measurements", type=int, default=500_000)
    ap.add_argument("--rows-per-sheet", type=int, default=EXCEL_MAX_ROWS - 1)
    ap.add_argument("--check", action="store_true", help="read the file back with openpyxl")
    ap.add_argument("--out", type=Path, default=None)
    args = ap.parse_args(argv)

    half = args.measurements // 2
    t0 = time.perf_counter()
    ev = make_evaluation("welch", n_old=half, n_new=args.measurements - half, seed=7)
    t1 = time.perf_counter()
    mem_before = peak_mib()
    out = args.out or Path(tempfile.mkdtemp()) / "bench.xlsx"
    write_workbook(
        ev, out, record_json='{"format": "verify-result/1"}', rows_per_sheet=args.rows_per_sheet
    )
    t2 = time.perf_counter()
    rows = len(ev.measurements.table)
    print(f"measurements (table rows)   {rows:,}")
    print(f"build Evaluation (factory)  {t1 - t0:6.2f} s")
    print(f"write workbook              {t2 - t1:6.2f} s")
    print(f"file size                   {out.stat().st_size / 2**20:6.1f} MiB  ({out})")
    print(f"peak RSS before writing     {mem_before:6.0f} MiB")
    print(f"peak RSS after writing      {peak_mib():6.0f} MiB")
    if args.check:
        import openpyxl

        t3 = time.perf_counter()
        wb = openpyxl.load_workbook(out, read_only=True)
        for name in wb.sheetnames:
            if name.startswith("Measurements"):
                n = sum(1 for _ in wb[name].iter_rows(values_only=True))
                print(f"  {name!r}: {n:,} rows incl. header")
        print(f"read back (openpyxl)        {time.perf_counter() - t3:6.2f} s")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
