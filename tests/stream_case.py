"""A four-cavity mould case shared by the stream tests: the old process in one stream, the new
process in cavities C1..C4, cavity C3 offset by ``off`` (seeded, so every run sees the same
values)."""

from __future__ import annotations

import numpy as np

from verify.spec import load_spec

SPEC = """\
format: verify/1
title: four-cavity mould
data:
  file: d.csv
  lot: lot
  process: process
  old: old
  new: new
  stream: cavity
multiplicity: holm
characteristics:
  - name: x
    unit: mm
    target: 10
    limits: [9.7, 10.3]
    checks:
      shift: {margin: 0.05}
      spread: {}
"""


def _data(tmp_path, *, off=0.08, spec=SPEC, blank_row=None):
    rng = np.random.default_rng(12)
    rows = [f"L{i // 10},old,,{rng.normal(10, 0.05):.4f}" for i in range(40)]
    for i in range(60):
        cav = f"C{i % 4 + 1}"
        mu = 10.0 + (off if cav == "C3" else 0.0)
        rows.append(f"N{i // 15},new,{'' if i == blank_row else cav},{rng.normal(mu, 0.05):.4f}")
    (tmp_path / "d.csv").write_text("lot,process,cavity,x\n" + "\n".join(rows) + "\n",
                                    encoding="utf-8")
    (tmp_path / "s.yaml").write_text(spec, encoding="utf-8")
    return load_spec(tmp_path / "s.yaml")
