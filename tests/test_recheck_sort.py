"""The recheck survives a sorted measurements table (issue 13, point 2), in LibreOffice.

An auditor sorts the filterable measurements table (by lot, by value) and recalculates: every
recheck number must stay the same and every agreement cell TRUE. Here the rows of the
measurements table are rewritten in shuffled order (and, separately, sorted by lot) with
openpyxl, LibreOffice recalculates, and the recheck sheet is read back. A control workbook
written with the fixed-range formulas (kept for tables too large for lookups) must disagree
after the same shuffle, which shows the permutation really moves the values the formulas read.

The expected values are the engine's own numbers already on the recheck sheet; agreement is
judged by the sheet's own tolerance (1e-9 relative), as in tests/test_recheck_libreoffice.py.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import openpyxl
import pytest

from tests.test_recheck import evaluate_spec, write_edge_specs
from tests.test_recheck_libreoffice import (
    assert_recheck_agrees,
    recalculate,
    sheet_rows,
    soffice,  # noqa: F401 (the fixture)
    write_minimal_workbook,
)
from verify.cli import main
from verify.report.layout import MEASUREMENT_HEADERS, MEASUREMENTS_SHEET, RECHECK_SHEET
from verify.report.recheck import SUMMARY_ROW

pytestmark = pytest.mark.slow

REPO = Path(__file__).resolve().parents[1]
NCOLS = len(MEASUREMENT_HEADERS)


def permute_measurements(src: Path, dst: Path, *, how: str, seed: int = 13) -> list[int]:
    """Rewrite the measurements table's data rows of ``src`` in another order into ``dst``.

    ``how`` is "shuffle" (a seeded random permutation) or "lot" (sorted by lot, descending,
    as a user sorting the column would). Returns the new order (old row index per new row).
    """
    wb = openpyxl.load_workbook(src)
    ws = wb[MEASUREMENTS_SHEET]
    rows = [[ws.cell(row=r, column=j).value for j in range(1, NCOLS + 1)]
            for r in range(2, ws.max_row + 1)]
    rows = [r for r in rows if any(v is not None for v in r)]
    if how == "shuffle":
        order = list(np.random.default_rng(seed).permutation(len(rows)))
    else:
        lot = [k for k, _ in MEASUREMENT_HEADERS].index("lot")
        order = sorted(range(len(rows)), key=lambda i: str(rows[i][lot]), reverse=True)
    for new_r, old_i in enumerate(order, start=2):
        for j, v in enumerate(rows[old_i], start=1):
            c = ws.cell(row=new_r, column=j, value=v)
            if isinstance(v, str) and v.startswith("="):
                c.data_type = "s"  # a text such as a lot id "=3+4" stays text
    wb.save(dst)
    return [int(i) for i in order]


def _summary(path: Path) -> tuple:
    ws = openpyxl.load_workbook(path, data_only=True)[RECHECK_SHEET]
    return ws.cell(row=SUMMARY_ROW, column=2).value, ws.cell(row=SUMMARY_ROW, column=3).value


def test_recheck_agrees_after_the_measurements_table_is_permuted(soffice, tmp_path,  # noqa: F811
                                                                  monkeypatch):
    out = tmp_path / "reports"
    assert main(["run", str(REPO / "specs"), "--out", str(out), "--no-snapshot"]) in (0, 1, 3)
    demos = sorted(out.glob("*.xlsx"))
    assert len(demos) >= 3  # every demo spec's workbook
    write_edge_specs(tmp_path)
    edge = tmp_path / "edge-paired.xlsx"  # pair keys out of production order
    write_minimal_workbook(evaluate_spec(tmp_path / "edge-paired.yaml"), edge)
    files, formulas = [], {}
    for src in [*demos, edge]:
        for how in ("shuffle", "lot"):
            dst = tmp_path / f"{src.stem}-{how}.xlsx"
            order = permute_measurements(src, dst, how=how)
            assert order != sorted(order)  # the rows really moved
            files.append(dst)
            formulas[dst] = sheet_rows(dst)
    # control: the fixed-range formulas, shuffled the same way, must notice
    import verify.report.recheck as recheck

    monkeypatch.setattr(recheck, "SORT_PROOF_MAX_ROWS", 0)
    fixed = tmp_path / "control-fixed.xlsx"
    write_minimal_workbook(evaluate_spec(tmp_path / "edge-paired.yaml"), fixed)
    monkeypatch.undo()
    control = tmp_path / "control-fixed-shuffle.xlsx"
    permute_measurements(fixed, control, how="shuffle")
    done = recalculate(soffice, [*files, control], tmp_path)
    for f in files:
        checked = assert_recheck_agrees(f.name, formulas[f], done[f])
        assert checked.compared > 0
        agree, compared = _summary(done[f])
        assert agree == compared == checked.compared
    agree, compared = _summary(done[control])
    assert agree < compared  # the fixed ranges read other values after the shuffle
