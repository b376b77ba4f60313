"""The recheck sheet recalculated by a real spreadsheet engine (LibreOffice, headless).

openpyxl stores formulas without results; LibreOffice opens each workbook, recalculates every
formula and saves the values, which we read back with ``openpyxl.load_workbook(data_only=True)``.
Then every agreement cell must be TRUE and every recomputed value must match the engine's to
1e-9 relative (on MAX(1, |engine|), as the agreement cells say).

Workbooks checked:

* the demo workbooks written by ``python -m verify run specs --out DIR`` (the real writer);
* factory Evaluations (tests/factory.py) for every design, written here with a minimal writer
  that follows the layout contract of :mod:`verify.report.layout`;
* engine Evaluations of small specs written here for the paths the demos may not reach (pair
  keys out of production order, awkward lot names, two-sided Welch, non-inferiority);
* the reference data of ``../shared/reference`` (R package equivalence values), where the
  spreadsheet's own results are compared with the published numbers directly.

Without LibreOffice these tests are skipped with a loud reason: the formulas are then NOT
verified.
"""

from __future__ import annotations

import csv
import dataclasses
import math
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest

from tests.factory import make_evaluation
from tests.test_recheck import evaluate_spec, write_edge_specs
from verify.report.layout import MEASUREMENT_HEADERS, RECHECK_SHEET, measurement_layout
from verify.report.recheck import FIRST_BODY_ROW, SUMMARY_ROW, TOLERANCE, recheck_rows

pytestmark = pytest.mark.slow

REPO = Path(__file__).resolve().parents[1]
REFERENCE_DIR = REPO.parent / "shared" / "reference"


# --- LibreOffice ----------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def soffice() -> str:
    exe = shutil.which("soffice") or shutil.which("libreoffice")
    if exe is None:
        pytest.skip(
            "LibreOffice (soffice) is not installed: the recheck formulas were NOT verified in "
            "a spreadsheet engine. Install the Debian package libreoffice-calc-nogui (.ci/run "
            "installs it when missing) to run this test."
        )
    return exe


def recalculate(soffice: str, files: list[Path], tmp: Path) -> dict[Path, Path]:
    """Recalculate ``files`` in one LibreOffice run; returns {input: recalculated copy}."""
    out = tmp / "recalculated"
    profile = tmp / "lo-profile"  # a profile of its own, so parallel runs do not collide
    out.mkdir()
    cmd = [soffice, f"-env:UserInstallation={profile.as_uri()}", "--headless", "--norestore",
           "--convert-to", "xlsx", "--outdir", str(out), *map(str, files)]
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=600)
    result = {f: out / f.name for f in files}
    missing = [str(f) for f, r in result.items() if not r.exists()]
    assert not missing, (
        f"LibreOffice did not convert {missing}: exit {proc.returncode}\n{proc.stdout}\n"
        f"{proc.stderr}"
    )
    return result


# --- a minimal writer following the layout contract -----------------------------------------------


def write_minimal_workbook(ev, path: Path) -> list[list]:
    """Measurements sheet(s) as the layout orders them, and the recheck rows from A1."""
    layout = measurement_layout(ev)
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    sheets = {}
    for name in layout.sheets:
        ws = wb.create_sheet(name)
        ws.append([header for _, header in MEASUREMENT_HEADERS])
        sheets[name] = ws
    t = layout.table
    for j, (key, _) in enumerate(MEASUREMENT_HEADERS, start=1):
        for sheet, row, v in zip(t["sheet"], t["row"], t[key], strict=True):
            if key == "value":
                v = None if pd.isna(v) else float(v)
            elif key == "used":
                v = bool(v)
            elif key == "source_row":
                v = int(v)
            elif key == "order":
                v = int(v) + 1  # as the real writer: production order counted from 1
            else:
                v = str(v)
            c = sheets[sheet].cell(row=int(row), column=j, value=v)
            if isinstance(v, str) and v.startswith("="):
                c.data_type = "s"  # the text itself, not a formula
    rows = recheck_rows(ev, layout)
    ws = wb.create_sheet(RECHECK_SHEET)
    for i, r in enumerate(rows, start=1):
        for j, v in enumerate(r, start=1):
            if v is not None:
                ws.cell(row=i, column=j, value=v)
    wb.save(path)
    return rows


def sheet_rows(path: Path) -> list[list]:
    """The recheck sheet of a workbook as written (formulas, not values)."""
    ws = openpyxl.load_workbook(path)[RECHECK_SHEET]
    return [[c.value for c in row] for row in ws.iter_rows()]


# --- the assertion --------------------------------------------------------------------------------


@dataclasses.dataclass
class Checked:
    name: str
    compared: int
    headings: list[str]
    values: dict  # label -> recalculated value (last occurrence), for reference checks
    by_section: dict  # (characteristic heading, check heading, label) -> value
    unavailable: list  # (label, reason) of rows saying the recheck is not available


def is_true(value) -> bool:
    """A recalculated Agrees cell that holds TRUE. The cells carry a logical number format
    (``workbook.AGREES_FORMAT``) so that LibreOffice prints TRUE, not 1; LibreOffice then saves
    the comparison's result as the number 1 under that format rather than as a logical. Either
    is TRUE; 0, FALSE, an error or an empty cell is not."""
    return value is True or (type(value) in (int, float) and value == 1)


def assert_recheck_agrees(name: str, formulas: list[list], recalculated: Path) -> Checked:
    ws = openpyxl.load_workbook(recalculated, data_only=True)[RECHECK_SHEET]
    values = [[c.value for c in row] for row in ws.iter_rows()]

    def val(r: int, c: int):
        return values[r - 1][c - 1] if r <= len(values) and c <= len(values[r - 1]) else None

    problems, compared, headings, labels, by_section, unavailable = [], 0, [], {}, {}, []
    char = check = ""
    for r, row in enumerate(formulas, start=1):
        first = row[0] if row else None
        f_b = row[1] if len(row) > 1 else None
        if r >= FIRST_BODY_ROW and isinstance(first, str) and f_b is None:
            if first.startswith("Characteristic: "):
                char, check = first, ""
            elif " check: " in first:
                check = first
                headings.append(first)
        if isinstance(f_b, str) and f_b.startswith("not available: "):
            unavailable.append((first, f_b))
        if isinstance(f_b, str) and f_b.startswith("="):
            b = val(r, 2)
            if not isinstance(b, int | float) or isinstance(b, bool) or not math.isfinite(b):
                problems.append(f"row {r} {first!r}: {f_b} evaluated to {b!r}")
                continue
            labels[first] = b
            by_section[(char, check, first)] = b
        f_e = row[4] if len(row) > 4 else None
        if r >= FIRST_BODY_ROW and isinstance(f_e, str) and f_e.startswith("=ABS("):
            compared += 1
            b, engine, agrees = val(r, 2), row[2], val(r, 5)
            if not isinstance(b, int | float):
                continue  # reported above
            if abs(b - engine) > TOLERANCE * max(1.0, abs(engine)):
                problems.append(f"row {r} {first!r}: sheet {b!r} vs engine {engine!r} ({f_b})")
            if not is_true(agrees):
                problems.append(f"row {r} {first!r}: Agrees is {agrees!r}")
    assert compared > 0, f"{name}: no rows compared"
    assert not problems, f"{name}:\n" + "\n".join(problems)
    assert is_true(val(SUMMARY_ROW, 5)), (
        f"{name}: summary says {val(SUMMARY_ROW, 2)} of {val(SUMMARY_ROW, 3)} agree"
    )
    return Checked(name, compared, headings, labels, by_section, unavailable)


COVERAGE = {  # every design the issue names, found in the check headings
    "one-sample": "one-sample",
    "paired": "paired",
    "Welch": "welch",
    "pooled": "pooled",
    "TOST": "tost",
    "capability": "cpk",
}


def covered(checked: list[Checked]) -> set[str]:
    text = " ".join(h.lower() for c in checked for h in c.headings)
    return {k for k, word in COVERAGE.items() if word in text}


# --- the df-truncation pitfall --------------------------------------------------------------------


def test_t_functions_truncate_fractional_df_but_the_beta_route_does_not(soffice, tmp_path):
    # Why the Welch rows use BETA.DIST / BETA.INV: T.DIST.2T and T.INV.2T truncate df.
    from scipy import stats

    t, df = 1.7, 25.7
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = RECHECK_SHEET
    ws["A1"] = f"=_xlfn.T.DIST.2T({t},{df})"
    ws["A2"] = f"=_xlfn.BETA.DIST({df}/({df}+{t}^2),{df}/2,0.5,TRUE)"
    ws["A3"] = f"=_xlfn.T.INV.2T(0.1,{df})"
    x = f"_xlfn.BETA.INV(0.1,{df}/2,0.5)"
    ws["A4"] = f"=SQRT({df}*(1-{x})/{x})"
    ws["A5"] = f"=_xlfn.T.DIST.2T({t},{math.floor(df)})"
    path = tmp_path / "pitfall.xlsx"
    wb.save(path)
    got = openpyxl.load_workbook(recalculate(soffice, [path], tmp_path)[path], data_only=True)
    v = [got[RECHECK_SHEET][f"A{i}"].value for i in range(1, 6)]
    exact_p = 2 * stats.t.sf(t, df)  # scipy: 2 * t.sf(1.7, 25.7)
    exact_q = stats.t.isf(0.05, df)  # scipy: t.isf(0.05, 25.7)
    assert v[0] == pytest.approx(v[4], rel=1e-14)  # T.DIST.2T used df = 25
    assert abs(v[0] - exact_p) > 1e-6  # ... so it misses the fractional-df value
    assert v[1] == pytest.approx(exact_p, rel=1e-12)
    assert abs(v[2] - exact_q) > 1e-6
    assert v[3] == pytest.approx(exact_q, rel=1e-12)


# --- factory workbooks ----------------------------------------------------------------------------


def _factory(design: str, **kw):
    ev = make_evaluation(design, **kw)
    # The factory gives one-sided no-margin target checks scipy's interval for the mean; the
    # engine (and the recheck) report the interval of the estimate, mean - target.
    from verify.stats.core import confidence_interval

    chars = []
    for c in ev.characteristics:
        checks = []
        for ch in c.checks:
            if ch.check == "target" and ch.margin is None and ch.alternative != "two-sided":
                ci = confidence_interval(ch.estimate, ch.standard_error, ch.df,
                                         level=ch.ci_level, alternative=ch.alternative)
                ch = dataclasses.replace(ch, ci_low=ci.low, ci_high=ci.high)
            checks.append(ch)
        chars.append(dataclasses.replace(c, checks=tuple(checks)))
    return dataclasses.replace(ev, characteristics=tuple(chars))


FACTORY_CASES = {
    "welch": dict(design="welch"),
    "welch-difference": dict(design="welch", margin=None, n_old=25, n_new=40),
    "pooled": dict(design="pooled"),
    "paired": dict(design="paired"),
    "paired-difference": dict(design="paired", margin=None, n_old=20, n_new=20),
    "one-sample": dict(design="one-sample"),
    "lot": dict(design="lot", n_old=8, n_new=6),
    "lot-awkward-names": dict(design="lot", n_old=4, n_new=4,
                              lot_ids=["HW*1", "hw?2", "=3+4", 'Q"5', "L6", "l6", "007", "7"]),
    "all": dict(design="all", seed=7),
}


def test_factory_workbooks_recalculate_to_the_engine_values(soffice, tmp_path):
    files, formulas = [], {}
    for name, kw in FACTORY_CASES.items():
        path = tmp_path / f"factory-{name}.xlsx"
        formulas[path] = write_minimal_workbook(_factory(**kw), path)
        files.append(path)
    done = recalculate(soffice, files, tmp_path)
    checked = [assert_recheck_agrees(p.name, formulas[p], done[p]) for p in files]
    assert covered(checked) == set(COVERAGE)
    assert [(c.name, c.unavailable) for c in checked if c.unavailable] == []


# --- engine workbooks from small specs ------------------------------------------------------------


def test_engine_workbooks_of_edge_specs_recalculate_to_the_engine_values(soffice, tmp_path):
    write_edge_specs(tmp_path)
    files, formulas = [], {}
    for stem in ("edge-paired", "edge-lots"):
        path = tmp_path / f"{stem}.xlsx"
        formulas[path] = write_minimal_workbook(evaluate_spec(tmp_path / f"{stem}.yaml"), path)
        files.append(path)
    rows = formulas[files[0]]
    # the production order differs from the sheet's pair-key order: the formulas read values
    # looked up by key in production order (issue 13), so the moving ranges follow it
    assert any(isinstance(r[0], str) and r[0].startswith("Values looked up") for r in rows if r)
    done = recalculate(soffice, files, tmp_path)
    checked = [assert_recheck_agrees(p.name, formulas[p], done[p]) for p in files]
    assert {"paired", "Welch", "pooled", "capability", "one-sample"} <= covered(checked)
    assert any("non-inferiority" in h for c in checked for h in c.headings)


# --- reference values: the spreadsheet against R --------------------------------------------------


def test_spreadsheet_reproduces_published_tost_values(soffice, tmp_path):
    if not REFERENCE_DIR.is_dir():
        pytest.skip(f"reference data folder ../shared/reference not found ({REFERENCE_DIR})")
    clinic = pd.read_csv(REFERENCE_DIR / "equivalence" / "clinic.csv", comment="#")
    # group 1 (rows 1-15) is "new", group 2 "old": differences are group 1 minus group 2
    clinic["process"] = np.where(clinic["fact"] == 1, "new", "old")
    clinic["pair"] = (clinic["id"] - 1) % 15 + 1  # rows 1-15 paired with rows 16-30
    clinic["lot"] = "C" + clinic["id"].astype(str)
    clinic[["lot", "process", "pair", "var1"]].to_csv(tmp_path / "clinic.csv", index=False)
    (tmp_path / "clinic.yaml").write_text(textwrap.dedent("""\
        format: verify/1
        title: Reference values, clinic var1
        data: {file: clinic.csv, lot: lot, process: process, old: old, new: new, pair: pair}
        characteristics:
          - {name: welch, column: var1, unit: u, checks: {shift: {design: welch, margin: 0.6}}}
          - {name: pooled, column: var1, unit: u, checks: {shift: {design: pooled, margin: 0.6}}}
          - {name: paired, column: var1, unit: u, checks: {shift: {design: paired, margin: 0.6}}}
          - {name: paired_t, column: var1, unit: u, checks: {shift: {design: paired}}}
          - {name: welch_t, column: var1, unit: u, checks: {shift: {design: welch}}}
        """), encoding="utf-8")
    path = tmp_path / "clinic.xlsx"
    formulas = write_minimal_workbook(evaluate_spec(tmp_path / "clinic.yaml"), path)
    got = assert_recheck_agrees("clinic", formulas, recalculate(soffice, [path], tmp_path)[path])

    def sheet(char: str, label: str) -> float:
        keys = [k for k in got.by_section if k[0].startswith(f"Characteristic: {char} ")
                and k[2] == label]
        assert len(keys) == 1, (char, label, keys)
        return got.by_section[keys[0]]

    # R package equivalence, via statsmodels/stats/tests/test_tost.py (README of the folder)
    rel = 1e-9
    assert sheet("welch", "p (TOST)") == pytest.approx(0.04853083976236974, rel=rel)
    assert sheet("welch", "degrees of freedom (Welch-Satterthwaite)") == pytest.approx(
        26.7484787582315, rel=rel)
    assert sheet("welch", "interval: low") == pytest.approx(-0.2666862980722534, rel=rel)
    assert sheet("welch", "interval: high") == pytest.approx(0.596019631405587, rel=rel)
    assert sheet("pooled", "p (TOST)") == pytest.approx(0.04827315100761467, rel=rel)
    assert sheet("pooled", "interval: low") == pytest.approx(-0.2659960620757337, rel=rel)
    assert sheet("pooled", "interval: high") == pytest.approx(0.595329395409067, rel=rel)
    assert sheet("paired", "p (TOST)") == pytest.approx(0.003166881489265175, rel=rel)
    assert sheet("paired", "estimate: mean difference (new - old)") == pytest.approx(
        0.1646666666666667, rel=rel)
    assert sheet("paired", "standard error") == pytest.approx(0.1357514067862445, rel=rel)
    assert sheet("paired", "interval: low") == pytest.approx(-0.0744336620516462, rel=rel)
    assert sheet("paired", "interval: high") == pytest.approx(0.4037669953849797, rel=rel)
    # R: t.test(var1[1:15], var1[16:30], paired=TRUE) and t.test(..., var.equal=FALSE)
    assert sheet("paired_t", "t") == pytest.approx(1.213001548676048, rel=rel)
    assert sheet("paired_t", "p (two-sided)") == pytest.approx(0.245199929713149, rel=rel)
    assert sheet("paired_t", "interval: low") == pytest.approx(-0.1264911434745851, rel=rel)
    assert sheet("paired_t", "interval: high") == pytest.approx(0.4558244768079186, rel=rel)
    assert sheet("welch_t", "t") == pytest.approx(0.650438363512706, rel=rel)


# --- the demo workbooks ---------------------------------------------------------------------------


def test_demo_workbooks_recalculate_to_the_engine_values(soffice, tmp_path):
    specs = sorted((REPO / "specs").glob("*.y*ml"))
    assert specs, f"no demo specs in {REPO / 'specs'}"
    out = tmp_path / "reports"
    proc = subprocess.run(
        [sys.executable, "-m", "verify", "run", str(REPO / "specs"), "--out", str(out)],
        capture_output=True, text=True, cwd=REPO, timeout=600,
    )
    books = sorted(out.glob("*.xlsx"))
    assert {b.stem for b in books} >= {s.stem for s in specs}, (
        f"verify run wrote {[b.name for b in books]} (exit {proc.returncode})\n"
        f"{proc.stdout}\n{proc.stderr}"
    )
    done = recalculate(soffice, books, tmp_path)
    checked = [assert_recheck_agrees(b.name, sheet_rows(b), done[b]) for b in books]
    # the demos are small: every quantity has its formula, none is declared unavailable
    assert [(c.name, c.unavailable) for c in checked if c.unavailable] == []
    # the issue asks for every design on the demo workbooks themselves
    assert covered(checked) == set(COVERAGE)


# --- pass-fail characteristics: the exact bound and the score intervals ---------------------------


def test_spreadsheet_reproduces_published_rate_values(soffice, tmp_path, reference_dir):
    # per-lot counts of Newcombe (1998, Statistics in Medicine 17:873-890) Table II examples
    # (a) 56/70 vs 48/80 and (b) 9/10 vs 3/10 (new first), and 0 failures among 59 parts
    # per-part (the success-run example of common practice: 95% / 5%)
    rows = ["lot,process,inspected,failed,result"]
    rows += ["A1,new,70,56,", "A2,old,80,48,", "B1,new,10,9,", "B2,old,10,3,"]
    rows += [f"N{i},new,,,ok" for i in range(59)] + [f"O{i},old,,,{'bad' if i < 2 else 'ok'}"
                                                      for i in range(40)]
    (tmp_path / "rates.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (tmp_path / "rates.yaml").write_text(textwrap.dedent("""\
        format: verify/1
        title: Reference values, rates
        alpha: 0.025
        multiplicity: holm
        data: {file: rates.csv, lot: lot, process: process, old: old, new: new}
        characteristics:
          - {name: ex_a, kind: pass-fail, unit: u, counts: {inspected: inspected, failed: failed},
             checks: {rate_shift: {margin: 0.5}}}
          - {name: ex_a_score, kind: pass-fail, unit: u,
             counts: {inspected: inspected, failed: failed},
             checks: {rate_shift: {margin: 0.5, method: score}}}
          - {name: parts, kind: pass-fail, unit: u, column: result, fail: [bad], pass: [ok],
             checks: {rate: {max: 0.05, confidence: 0.95}, rate_shift: {}}}
        exclude:
          - {lot: "B*", reason: example (b) is checked apart, by: "QE-00, test"}
        """), encoding="utf-8")
    path = tmp_path / "rates.xlsx"
    ev = evaluate_spec(tmp_path / "rates.yaml")
    formulas = write_minimal_workbook(ev, path)
    got = assert_recheck_agrees("rates", formulas, recalculate(soffice, [path], tmp_path)[path])

    def sheet(char: str, label: str) -> float:
        keys = [k for k in got.by_section if k[0].startswith(f"Characteristic: {char} ")
                and k[2] == label]
        assert len(keys) == 1, (char, label, keys)
        return got.by_section[keys[0]]

    # Newcombe (1998) Table II example (a), method 10: 0.0524 to 0.3339 (quoted from memory,
    # confirmed in ../shared/reference/attributes); 6-decimal recomputation from that folder
    with open(reference_dir / "attributes" / "two-proportion-differences.csv",
              encoding="utf-8", newline="") as f:
        ref = {r["x1"] + "/" + r["n1"]: r for r in csv.DictReader(f)}["56/70"]
    assert sheet("ex_a", "Newcombe interval low") == pytest.approx(0.0524, abs=5e-5)
    assert sheet("ex_a", "Newcombe interval high") == pytest.approx(0.3339, abs=5e-5)
    assert sheet("ex_a", "Newcombe interval low") == pytest.approx(float(ref["m10_lower"]),
                                                                   abs=5e-7)
    # the score statistic at the engine's Miettinen-Nurminen limit is -z (the limit is where
    # it crosses), and that limit is the reference folder's recomputation
    assert sheet("ex_a_score", "score statistic at the upper limit + z (0 at the limit)") == \
        pytest.approx(0.0, abs=1e-9)
    assert ev.characteristic("ex_a_score").checks[0].ci_high == pytest.approx(
        float(ref["mn_upper"]), abs=5e-7)
    # 0 failures among 59: the one-sided 95% bound is 1 - 0.05^(1/59) (closed form)
    assert sheet("parts", "exact upper bound of the new rate") == pytest.approx(
        1 - 0.05 ** (1 / 59), rel=1e-12)
    # Fisher's one-sided p for 0 new of 59 against 2 old of 40 is 1 (no new failure)
    assert sheet("parts", "Fisher one-sided p (new rate higher)") == pytest.approx(1.0)
    assert any(h.startswith("rate_shift check: Newcombe") for h in got.headings)


# --- what LibreOffice prints in the Agrees column -------------------------------------------------


def test_agrees_cells_print_true_not_1_in_libreoffice(soffice, tmp_path):
    """LibreOffice keeps a comparison's result as 1 or 0 and prints it through the cell's number
    format: in a General cell the Agrees column printed 1 where the sheet's note says TRUE (seen
    rendering the demo workbooks). The column carries a logical format; here LibreOffice writes
    the sheet as text as shown (CSV filter option 'save cell contents as shown'), and every
    compared row and the summary must read TRUE."""
    from verify.report.workbook import AGREES_FORMAT

    out = tmp_path / "reports"
    proc = subprocess.run(
        [sys.executable, "-m", "verify", "run", str(REPO / "specs" / "closure-mould.yaml"),
         "--out", str(out)], capture_output=True, text=True, cwd=REPO, timeout=600,
    )
    book = out / "closure-mould.xlsx"
    assert book.exists(), f"exit {proc.returncode}\n{proc.stdout}\n{proc.stderr}"
    formulas = sheet_rows(book)
    ws = openpyxl.load_workbook(book)[RECHECK_SHEET]
    compared = [r for r, row in enumerate(formulas, start=1)
                if len(row) > 4 and isinstance(row[4], str) and row[4].startswith("=ABS(")]
    assert compared and all(ws.cell(r, 5).number_format == AGREES_FORMAT for r in compared)
    assert ws.cell(SUMMARY_ROW, 5).number_format == AGREES_FORMAT

    csv_dir, profile = tmp_path / "csv", tmp_path / "lo-profile-csv"
    # 44 comma, 34 quote, 76 UTF-8, from line 1, ..., 9th token true: contents as shown,
    # last token -1: every sheet to <stem>-<sheet>.csv
    filt = "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,true,false,false,-1"
    subprocess.run([soffice, f"-env:UserInstallation={profile.as_uri()}", "--headless",
                    "--norestore", "--convert-to", filt, "--outdir", str(csv_dir), str(book)],
                   capture_output=True, text=True, timeout=600)
    shown_file = csv_dir / f"closure-mould-{RECHECK_SHEET}.csv"
    assert shown_file.exists(), f"LibreOffice wrote {sorted(p.name for p in csv_dir.glob('*'))}"
    with shown_file.open(encoding="utf-8", newline="") as f:
        shown = list(csv.reader(f))
    assert [r for r in compared if shown[r - 1][4] != "TRUE"] == []
    assert shown[SUMMARY_ROW - 1][4] == "TRUE"
