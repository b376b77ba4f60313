"""The recheck sheet recalculated by a second spreadsheet engine: gnumeric (ssconvert --recalc).

LibreOffice and Excel know T.DIST, T.DIST.RT, T.DIST.2T and NORM.S.DIST; gnumeric does not, and
a cell using them shows #NAME?. The recheck formulas therefore use only functions that all three
evaluate (TDIST, NORMSDIST, BETA.DIST, T.INV.2T, ...). Here gnumeric recalculates the demo
workbooks and every recheck cell must agree with the engine as with LibreOffice (same
assertion, tests/test_recheck_libreoffice.py). Without gnumeric these tests skip loudly.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import openpyxl
import pytest

from tests.test_recheck import evaluate_spec, write_edge_specs
from tests.test_recheck_libreoffice import (
    COVERAGE,
    FACTORY_CASES,
    _factory,
    assert_recheck_agrees,
    covered,
    sheet_rows,
    write_minimal_workbook,
)
from verify.report.layout import RECHECK_SHEET

pytestmark = pytest.mark.slow

REPO = Path(__file__).resolve().parents[1]
# functions newer than what gnumeric knows (its #NAME? list, found with ssconvert 1.12)
NOT_IN_GNUMERIC = ("T.DIST(", "T.DIST.RT(", "T.DIST.2T(", "NORM.S.DIST(")


@pytest.fixture(scope="module")
def ssconvert() -> str:
    exe = shutil.which("ssconvert")
    if exe is None:
        pytest.skip("gnumeric (ssconvert) is not installed: the recheck formulas were NOT "
                    "checked in gnumeric. Install the Debian package gnumeric to run this test.")
    return exe


@pytest.fixture(scope="module")
def demo_workbooks(tmp_path_factory) -> list[Path]:
    out = tmp_path_factory.mktemp("demo-out")
    r = subprocess.run([sys.executable, "-m", "verify", "run", "specs", "--out", str(out)],
                       cwd=REPO, capture_output=True, text=True, timeout=600)
    assert r.returncode in (0, 1, 3), r.stderr
    books = sorted(out.glob("*.xlsx"))
    assert len(books) >= 4
    return books


def test_recheck_formulas_avoid_functions_gnumeric_lacks(demo_workbooks):
    for book in demo_workbooks:
        for row in sheet_rows(book):
            for v in row:
                if isinstance(v, str) and v.startswith("="):
                    bad = [f for f in NOT_IN_GNUMERIC if f"_xlfn.{f}" in v]
                    assert not bad, (book.name, v)


def recalculate(ssconvert: str, book: Path, tmp_path: Path) -> Path:
    target = tmp_path / f"gnumeric-{book.name}"
    proc = subprocess.run([ssconvert, "--recalc", str(book), str(target)],
                          capture_output=True, text=True, timeout=600)
    assert target.exists(), f"ssconvert failed on {book.name}: {proc.stderr[-2000:]}"
    ws = openpyxl.load_workbook(target, data_only=True)[RECHECK_SHEET]
    errors = [(c.coordinate, c.value) for row in ws.iter_rows() for c in row
              if isinstance(c.value, str) and c.value.startswith("#")]
    assert not errors, (book.name, errors[:10])  # no #NAME?, #VALUE!, #DIV/0! anywhere
    return target


# gnumeric's xlsx has no default cell style; openpyxl says so when it reads the file back
GNUMERIC_STYLE = "ignore:Workbook contains no default style:UserWarning"


@pytest.mark.filterwarnings(GNUMERIC_STYLE)
def test_demo_workbooks_recalculate_in_gnumeric(ssconvert, demo_workbooks, tmp_path):
    checked = 0
    for book in demo_workbooks:
        target = recalculate(ssconvert, book, tmp_path)
        checked += assert_recheck_agrees(f"gnumeric {book.name}", sheet_rows(book),
                                         target).compared
    assert checked > 50


@pytest.mark.filterwarnings(GNUMERIC_STYLE)
def test_every_design_recalculates_in_gnumeric(ssconvert, tmp_path):
    # the designs of the LibreOffice test (welch, pooled, paired, one-sample, lots, all
    # checks including Brown-Forsythe spread) and the edge specs (helper moving-range rows)
    checked = []
    for name, kw in FACTORY_CASES.items():
        if name == "lot-awkward-names":
            # known limit: gnumeric reads no "~" escape in criteria (AVERAGEIFS "=HW~*1" finds
            # nothing) and does not apply EXACT element by element inside SUMPRODUCT, so lot
            # names holding * ? ~ or differing only in case are rechecked in Excel and
            # LibreOffice only (README, The workbook)
            continue
        path = tmp_path / f"factory-{name}.xlsx"
        rows = write_minimal_workbook(_factory(**kw), path)
        checked.append(assert_recheck_agrees(path.name, rows,
                                             recalculate(ssconvert, path, tmp_path)))
    write_edge_specs(tmp_path)
    for stem in ("edge-paired",):  # edge-lots has wildcard lot names: the limit above
        path = tmp_path / f"{stem}.xlsx"
        rows = write_minimal_workbook(evaluate_spec(tmp_path / f"{stem}.yaml"), path)
        checked.append(assert_recheck_agrees(path.name, rows,
                                             recalculate(ssconvert, path, tmp_path)))
    assert covered(checked) == set(COVERAGE)
