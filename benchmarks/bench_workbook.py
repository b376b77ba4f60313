"""Benchmark: write the workbook for one spec with many measurements, or for many small specs.

Prints the seconds to build the synthetic Evaluation (a stand-in for loading and statistics,
which other modules do), the seconds to write the workbook and the share of it that is the
save (cells as XML, openpyxl's frame of each sheet, charts and styles, the zip), the file size
and the peak resident memory of the process. Not a test: nothing is asserted on time.

    python benchmarks/bench_workbook.py                    # 500,000 measurements
    python benchmarks/bench_workbook.py --measurements 1200000   # continues on a 2nd sheet
    python benchmarks/bench_workbook.py --check            # also read the file back
    python benchmarks/bench_workbook.py --specs 10         # the nightly benchmark's specs

``--specs N`` prepares N specs of the nightly benchmark (4 characteristics x 60 parts a
process, about 9,300 cells a workbook) and writes their workbooks three times, printing the
best round's CPU time per workbook and its save share (CPU time: the machine may be shared).

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
from verify.report import workbook as workbook_module  # noqa: E402
from verify.report.layout import EXCEL_MAX_ROWS  # noqa: E402
from verify.report.workbook import write_workbook  # noqa: E402

_SAVE_CPU = [0.0]


def _time_the_save() -> None:
    """Count the CPU time spent in the save (verify.report.sheet_xml.save)."""
    inner = workbook_module.save

    def timed(*args, **kwargs):
        t = time.process_time()
        try:
            return inner(*args, **kwargs)
        finally:
            _SAVE_CPU[0] += time.process_time() - t

    workbook_module.save = timed


def many_specs(count: int, rounds: int = 3) -> int:
    """Workbooks of the nightly benchmark's specs: CPU per workbook and the save's share."""
    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from bench_nightly import make_specs

    from verify.runner import prepare

    tmp = Path(tempfile.mkdtemp())
    make_specs(tmp, count + 1)
    evaluations = [prepare(p) for p in sorted((tmp / "specs").glob("*.yaml"))]
    write_workbook(evaluations.pop(), tmp / "warm.xlsx", record_json="{}")  # imports, caches
    best = None
    for _ in range(rounds):
        _SAVE_CPU[0] = 0.0
        t = time.process_time()
        for i, ev in enumerate(evaluations):
            write_workbook(ev, tmp / f"w{i}.xlsx", record_json='{"format": "verify-result/1"}')
        total = (time.process_time() - t) / count
        if best is None or total < best[0]:
            best = (total, _SAVE_CPU[0] / count)
    size = sum((tmp / f"w{i}.xlsx").stat().st_size for i in range(count)) / count
    total, save = best
    print(f"specs                          {count} (best of {rounds} rounds, CPU time)")
    print(f"workbook per spec              {total * 1000:6.0f} ms")
    print(f"  of which the save            {save * 1000:6.0f} ms  ({save / total:.0%})")
    print(f"  building the sheets          {(total - save) * 1000:6.0f} ms")
    print(f"file size                      {size / 1024:6.0f} KiB")
    return 0


def peak_mib() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # Linux: KiB


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--measurements", type=int, default=500_000)
    ap.add_argument("--rows-per-sheet", type=int, default=EXCEL_MAX_ROWS - 1)
    ap.add_argument("--check", action="store_true", help="read the file back with openpyxl")
    ap.add_argument("--out", type=Path, default=None)
    ap.add_argument("--specs", type=int, default=0,
                    help="instead: workbooks of this many nightly-benchmark specs")
    args = ap.parse_args(argv)
    _time_the_save()
    if args.specs:
        return many_specs(args.specs)

    half = args.measurements // 2
    t0 = time.perf_counter()
    ev = make_evaluation("welch", n_old=half, n_new=args.measurements - half, seed=7)
    t1 = time.perf_counter()
    c1 = time.process_time()
    mem_before = peak_mib()
    out = args.out or Path(tempfile.mkdtemp()) / "bench.xlsx"
    write_workbook(
        ev, out, record_json='{"format": "verify-result/1"}', rows_per_sheet=args.rows_per_sheet
    )
    t2 = time.perf_counter()
    cpu = time.process_time() - c1
    rows = len(ev.measurements.table)
    print(f"measurements (table rows)   {rows:,}")
    print(f"build Evaluation (factory)  {t1 - t0:6.2f} s")
    print(f"write workbook              {t2 - t1:6.2f} s  ({cpu:.2f} s CPU)")
    print(f"  of which the save (CPU)   {_SAVE_CPU[0]:6.2f} s  ({_SAVE_CPU[0] / cpu:.0%})")
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
