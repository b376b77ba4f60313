"""Regenerate the demo's SQLite database of press-line inspections (fixed seed).

Run from anywhere::

    python sample_lots/generate_sqlite.py

It writes ``press_inspection.sqlite`` next to this script: the inspection table of the
Kestrel Lane Works press line P3, where a bracket's flange is formed by the old die set (D-11)
and by its replacement (D-12), five lots of 8 parts each, plus a few rows of another line (P2)
that the demo spec's query leaves out. The plant, parts and people are invented.
"""

from __future__ import annotations

import datetime as dt
import sqlite3
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
SEED = 20240702
TARGET = "press_inspection.sqlite"


def rows() -> list[tuple]:
    rng = np.random.default_rng(SEED)
    out = []
    start = dt.datetime(2024, 7, 1, 6, 0)
    n = 0
    for die, mean_h, lots in (("D-11", 8.000, ["P3-2406", "P3-2407", "P3-2408", "P3-2409",
                                               "P3-2410"]),
                              ("D-12", 8.003, ["P3-2411", "P3-2412", "P3-2413", "P3-2414",
                                               "P3-2415"])):
        for lot in lots:
            lot_shift = rng.normal(0, 0.003)
            for k in range(8):
                n += 1
                height = round(float(mean_h + lot_shift + rng.normal(0, 0.008)), 3)
                offset = round(float(rng.normal(0.0, 0.012)), 3)
                when = start + dt.timedelta(minutes=17 * n)
                out.append(("P3", lot, die, f"{lot}-{k + 1:02d}", when.isoformat(sep=" "),
                            height, offset))
    for k in range(6):  # another line's parts: the query's WHERE leaves them out
        out.append(("P2", "P2-2406", "D-07", f"P2-2406-{k + 1:02d}",
                    (start + dt.timedelta(minutes=9 * k)).isoformat(sep=" "),
                    round(float(rng.normal(6.5, 0.01)), 3), 0.0))
    return out


def main() -> None:
    path = HERE / TARGET
    path.unlink(missing_ok=True)
    con = sqlite3.connect(path)
    with con:
        con.execute("CREATE TABLE inspection (line TEXT NOT NULL, lot TEXT NOT NULL, die TEXT "
                    "NOT NULL, part TEXT NOT NULL, measured_at TEXT NOT NULL, flange_height_mm "
                    "REAL, hole_offset_mm REAL)")
        con.executemany("INSERT INTO inspection VALUES (?, ?, ?, ?, ?, ?, ?)", rows())
    con.execute("VACUUM")
    con.close()
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
