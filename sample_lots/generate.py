"""Regenerate the sample lot data of the Kestrel Lane Works demo (fixed seed).

Run from anywhere::

    python sample_lots/generate.py

It writes, next to this script:

- ``bushing_lots.csv``: sintered bronze bushings from the old supplier (Brindlecombe) and the
  new one (Marrowfield), four lots each, wide layout (one column per characteristic).
- ``filler_split_batches.xlsx``: each syrup batch split between the old rotary filling head
  (H1) and the new servo head (H2), five bottle positions per head, paired by ``sample``.
  The servo head's sealing jaw runs cooler, so seal strength drops by about 1.8 N. Beside the
  measurements: the leak test of each bottle (pass / LEAK) and, on the first row of each batch
  and head, the vision system's cap inspection of the whole run (inspected, rejected).
- ``closure_mould_cavities.csv``: a closure cap moulded in the old single-cavity mould (M1)
  and in the new four-cavity mould (M4, cavities C1 to C4); cavity C3 runs about 0.036 mm
  tall. The gate vestige left by the runner is bounded at zero and right-skewed (lognormal).
  Its own seed, so that the other files do not change when it is regenerated.
- ``housing_resin_lab.csv``: the lab's long-format export (semicolons, decimal commas, UTF-8
  with BOM) for a housing moulded in the old resin (lots R23-...) and the new resin (lots
  R24-...); only two new lots exist so far.

The plant, suppliers, people and parts are invented. Values are rounded to each gauge's
resolution; a few cells are missing, as in real records. The xlsx is written with fixed
timestamps so that regenerating it gives the same bytes.
"""

from __future__ import annotations

import datetime as dt
import io
import re
import zipfile
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
SEED = 20240611
FIXED_TIME = (2024, 6, 11, 0, 0, 0)


def _round(x: np.ndarray, resolution: float) -> np.ndarray:
    return np.round(np.round(x / resolution) * resolution, 6)


def _fmt(x: float, decimals: int, decimal: str = ".") -> str:
    return f"{x:.{decimals}f}".replace(".", decimal)


def bushing(rng: np.random.Generator) -> str:
    """Supplier change, independent lots, wide CSV."""
    lines = ["lot,supplier,serial,bore_mm,length_mm,hardness_HB"]
    plan = [("Brindlecombe", f"BR-23{k:02d}", dict(bore=12.0012, length=25.004, hard=81.6,
                                                   sb=0.0031, sl=0.017, sh=2.4))
            for k in (11, 12, 13, 14)]
    plan += [("Marrowfield", f"MF-04{k:02d}", dict(bore=12.0006, length=24.999, hard=82.3,
                                                   sb=0.0027, sl=0.015, sh=2.1))
             for k in (1, 2, 3, 4)]
    serial = 1000
    for supplier, lot, p in plan:
        lot_bore = rng.normal(0, 0.0002)
        lot_len = rng.normal(0, 0.001)
        bore = _round(p["bore"] + lot_bore + rng.normal(0, p["sb"], 11), 0.001)
        length = _round(p["length"] + lot_len + rng.normal(0, p["sl"], 11), 0.002)
        hard = _round(p["hard"] + rng.normal(0, p["sh"], 11), 0.5)
        for b, ln, h in zip(bore, length, hard, strict=True):
            serial += 1
            lines.append(f"{lot},{supplier},S{serial},{_fmt(b, 3)},{_fmt(ln, 3)},{_fmt(h, 1)}")
    rows = [line.split(",") for line in lines]
    # a few cells not measured, as they come in real records (row numbers as a spreadsheet
    # counts them: header = row 1)
    rows[8 - 1][5] = "NA"  # hardness tester down for calibration
    rows[39 - 1][4] = ""  # length not recorded
    rows[66 - 1][5] = "NA"
    # one new-supplier bushing below the hardness limit (a short sinter cycle): a part beyond a
    # specification limit, which the report counts and notes for review
    rows[75 - 1][5] = "69.5"
    return "\n".join(",".join(r) for r in rows) + "\n"


def filler(rng: np.random.Generator):
    """Split-batch trial, paired by batch and bottle position, xlsx."""
    import openpyxl

    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "split batches"
    ws.append(["batch", "head", "sample", "filled_at", "fill_volume_ml", "seal_strength_N"])
    start = dt.datetime(2024, 6, 3, 6, 0)
    for b in range(8):
        t = 0
        batch = f"FB-{612 + b:04d}"
        batch_fill = rng.normal(0, 0.45)
        batch_seal = rng.normal(0, 0.9)
        for pos in range(1, 6):
            bottle_fill = rng.normal(0, 0.25)  # the bottle pair shares a fill-level setting
            for head, fill_mu, seal_mu, s_fill, s_seal in (
                ("H1 rotary", 500.15, 26.1, 0.30, 0.85),
                ("H2 servo", 500.05, 24.3, 0.27, 0.95),
            ):
                fill = _round(np.array([fill_mu + batch_fill + bottle_fill
                                        + rng.normal(0, s_fill)]), 0.1)[0]
                seal = _round(np.array([seal_mu + batch_seal + rng.normal(0, s_seal)]), 0.1)[0]
                t += 1
                when = start + dt.timedelta(days=b, minutes=6 * t)
                ws.append([batch, head, f"{batch}/{pos}", when, float(fill), float(seal)])
    ws.cell(row=ws.max_row - 6, column=6).value = "NA"  # seal strip torn in the tester
    _filler_inspections(ws)
    ws.column_dimensions["C"].width = 12
    ws.column_dimensions["D"].width = 18
    for row in ws.iter_rows(min_row=2, min_col=4, max_col=4):
        row[0].number_format = "yyyy-mm-dd hh:mm"
    wb.properties.creator = "Kestrel Lane Works, filling line 2"
    buf = io.BytesIO()
    wb.save(buf)
    return _fixed_zip(buf.getvalue())


def _filler_inspections(ws) -> None:
    """Pass/fail results beside the measurements, from a generator of their own (so that the
    measured values above stay as they were): the leak test of every sampled bottle (per-part
    results), and the vision system's cap inspection of each batch's whole run on each head
    (per-lot counts, on the first row of the batch and head)."""
    rng = np.random.default_rng(SEED + 15)
    ws.cell(row=1, column=7).value = "leak_test"
    ws.cell(row=1, column=8).value = "caps_inspected"
    ws.cell(row=1, column=9).value = "caps_rejected"
    leak_rate = {"H1 rotary": 0.03, "H2 servo": 0.01}
    reject_rate = {"H1 rotary": 0.0046, "H2 servo": 0.0041}
    seen = set()
    for r in range(2, ws.max_row + 1):
        batch, head = ws.cell(row=r, column=1).value, ws.cell(row=r, column=2).value
        ws.cell(row=r, column=7).value = "LEAK" if rng.random() < leak_rate[head] else "pass"
        if (batch, head) not in seen:
            seen.add((batch, head))
            n = int(rng.integers(2300, 2500))
            ws.cell(row=r, column=8).value = n
            ws.cell(row=r, column=9).value = int(rng.binomial(n, reject_rate[head]))


def _fixed_zip(data: bytes) -> bytes:
    """Rewrite the xlsx zip with fixed timestamps so the bytes do not change per run."""
    src = zipfile.ZipFile(io.BytesIO(data))
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as dst:
        for info in src.infolist():
            body = src.read(info.filename)
            if info.filename == "docProps/core.xml":
                body = re.sub(rb"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", b"2024-06-11T00:00:00Z", body)
            fixed = zipfile.ZipInfo(info.filename, date_time=FIXED_TIME)
            fixed.compress_type = zipfile.ZIP_DEFLATED
            fixed.external_attr = info.external_attr
            dst.writestr(fixed, body)
    return out.getvalue()


def housing(rng: np.random.Generator) -> str:
    """New resin, lots still accumulating, long layout, European lab export."""
    lines = ["lot;sample;characteristic;value;operator"]
    operators = ["OP-07", "OP-12", "OP-19"]
    lots = [(f"R23-{k}", 2.006, 0.021, 46.8, 2.1) for k in range(101, 108)]
    lots += [("QC-TRIAL-07", 2.030, 0.030, 45.0, 3.0)]
    lots += [(f"R24-{k:03d}", 2.003, 0.011, 47.3, 1.9) for k in (1, 2)]
    for lot, wall_mu, wall_sd, clip_mu, clip_sd in lots:
        lot_wall = rng.normal(0, 0.004)
        for s in range(1, 7):
            sample = f"{lot}-{s:02d}"
            op = operators[int(rng.integers(0, len(operators)))]
            wall = _round(np.array([wall_mu + lot_wall + rng.normal(0, wall_sd)]), 0.001)[0]
            clip = _round(np.array([clip_mu + rng.normal(0, clip_sd)]), 0.1)[0]
            gloss = _round(np.array([rng.normal(62, 2.5)]), 0.1)[0]
            lines.append(f"{lot};{sample};wall_thickness;{_fmt(wall, 3, ',')};{op}")
            lines.append(f"{lot};{sample};clip_force;{_fmt(clip, 1, ',')};{op}")
            lines.append(f"{lot};{sample};gloss_60deg;{_fmt(gloss, 1, ',')};{op}")
    lines[20] = lines[20].rsplit(";", 2)[0] + ";NA;" + lines[20].rsplit(";", 1)[1]
    return "\ufeff" + "\r\n".join(lines) + "\r\n"


CAVITY_SEED = 20261202


def closure(rng: np.random.Generator) -> str:
    """A new four-cavity mould against the old single-cavity mould; wide CSV with a cavity
    column (empty for the old mould, which has one cavity)."""
    lines = ["lot,mould,cavity,shot,cap_height_mm,gate_vestige_mm"]
    shot = 0
    for k in range(1, 5):  # old mould: four lots of 12 caps
        for _ in range(12):
            shot += 1
            height = _round(np.array([rng.normal(12.500, 0.020)]), 0.001)[0]
            vestige = _round(np.array([rng.lognormal(np.log(0.035), 0.40)]), 0.001)[0]
            lines.append(f"M1-{k:02d},M1 single,,{shot},{height:.3f},{vestige:.3f}")
    offset = {"C1": 0.0, "C2": -0.003, "C3": 0.036, "C4": 0.002}
    for k in range(1, 5):  # new mould: four lots of 12 shots, four caps per shot
        for _ in range(12):
            shot += 1
            for cavity, dz in offset.items():
                height = _round(np.array([rng.normal(12.500 + dz, 0.016)]), 0.001)[0]
                vestige = _round(np.array([rng.lognormal(np.log(0.030), 0.35)]), 0.001)[0]
                lines.append(f"M4-{k:02d},M4 four-cavity,{cavity},{shot},{height:.3f},"
                             f"{vestige:.3f}")
    return "\n".join(lines) + "\n"


def main() -> None:
    (HERE / "closure_mould_cavities.csv").write_text(
        closure(np.random.default_rng(CAVITY_SEED)), encoding="utf-8", newline="")
    rng = np.random.default_rng(SEED)
    (HERE / "bushing_lots.csv").write_text(bushing(rng), encoding="utf-8", newline="")
    (HERE / "filler_split_batches.xlsx").write_bytes(filler(rng))
    (HERE / "housing_resin_lab.csv").write_text(housing(rng), encoding="utf-8", newline="")
    print(f"wrote sample data to {HERE}")


if __name__ == "__main__":
    main()
