"""Pass-fail characteristics end to end: spec keys, reading results and counts, the rate and
rate_shift checks, JSON, workbook, verify check and verify plan.

Expected numbers come from outside the engine: scipy used only here as a reference library
(``binomtest(...).proportion_ci``, ``fisher_exact``), Newcombe (1998) Table II (quoted from
memory, confirmed by ../shared/reference), and the success-run sizes of common practice.
"""

from __future__ import annotations

import json
import re
import subprocess
import sys
import textwrap
from pathlib import Path

import openpyxl
import pytest
from scipy import stats

from verify import decide
from verify.checks.rates import rule as rates_rule
from verify.data import load_measurements
from verify.errors import DataError, SpecError
from verify.evaluate import evaluate
from verify.spec import load_spec

ROOT = Path(__file__).resolve().parents[1]

PARTS = """\
lot,proc,leak,insp,rej
L1,A,OK,,
L1,A,NOK,,
L1,A,OK,300,6
L2,A,OK,320,4
L3,B,OK,310,1
L3,B,OK,,
L4,B,FAIL,290,2
"""


def _spec(tmp_path: Path, characteristics: str, *, data: str = PARTS, extra: str = "") -> Path:
    (tmp_path / "parts.csv").write_text(data, encoding="utf-8")
    text = textwrap.dedent("""\
        format: verify/1
        title: pass-fail test
        data: {file: parts.csv, lot: lot, process: proc, old: A, new: B}
        """) + extra + "characteristics:\n" + textwrap.indent(textwrap.dedent(characteristics),
                                                           "  ")
    path = tmp_path / "s.yaml"
    path.write_text(text, encoding="utf-8")
    return path


LEAK = """\
- name: leak
  kind: pass-fail
  unit: parts
  fail: [NOK, FAIL]
  pass: [OK]
  checks: {rate: {max: 0.9, confidence: 0.9}, rate_shift: {margin: 0.5}}
"""
CAPS = """\
- name: caps
  kind: pass-fail
  unit: caps
  counts: {inspected: insp, failed: rej}
"""


def _run(path: Path):
    spec = load_spec(path)
    return spec, evaluate(spec, load_measurements(spec))


# --- spec ---------------------------------------------------------------------------------------


def test_kind_defaults_to_measured_and_pass_fail_builds(tmp_path):
    spec = load_spec(_spec(tmp_path, LEAK + CAPS))
    leak, caps = spec.characteristics
    assert leak.kind == "pass-fail" and leak.fail_texts == ("NOK", "FAIL")
    assert leak.checks.rate.max == 0.9 and leak.checks.rate.confidence == 0.9
    assert leak.checks.rate_shift.margin == 0.5 and leak.checks.rate_shift.method == "newcombe"
    # checks left out: rate_shift without a margin (Fisher)
    assert caps.counts == ("insp", "rej") and caps.checks.rate is None
    assert caps.checks.rate_shift.margin is None and caps.checks.rate_shift.test == "fisher"
    measured = load_spec(ROOT / "specs" / "bushing-supplier.yaml").characteristics[0]
    assert measured.kind == "measured" and not measured.pass_fail


@pytest.mark.parametrize(("entry", "words"), [
    ("- {name: a, kind: pass-fail, unit: p, fail: [X]}", "needs pass"),
    ("- {name: a, kind: pass-fail, unit: p, fail: [X], pass: [X]}", "both as fail and as pass"),
    ("- {name: a, kind: pass-fail, unit: p, fail: [NA], pass: [OK]}", "declared missing text"),
    ("- {name: a, kind: pass-fail, unit: p, fail: [X], pass: [Y], target: 1}", "has no a target"),
    ("- {name: a, kind: pass-fail, unit: p, fail: [X], pass: [Y], checks: {shift: {}}}",
     "needs measured values"),
    ("- {name: a, kind: pass-fail, unit: p, counts: {inspected: i, failed: i}}",
     "name the same column"),
    ("- {name: a, kind: pass-fail, unit: p, counts: {inspected: i, failed: f}, fail: [X]}",
     "remove fail"),
    ("- {name: a, unit: p, checks: {rate: {max: 0.1}}}", "add kind: pass-fail"),
    ("- {name: a, unit: p, fail: [X]}", "add kind: pass-fail"),
    ("- {name: a, kind: pass-fail, unit: p, fail: [X], pass: [Y], checks: {rate: {max: 1.5}}}",
     "rate.max"),
    ("- {name: a, kind: pass-fail, unit: p, fail: [X], pass: [Y], checks: {rate: {}}}", "max"),
    ("- {name: a, kind: passfail, unit: p}", "kind"),
])
def test_spec_errors_name_the_key_and_line(tmp_path, entry, words):
    with pytest.raises(SpecError) as e:
        load_spec(_spec(tmp_path, entry + "\n"))
    text = str(e.value)
    # file:line:column: `key path` message
    assert words in text and re.search(r"s\.yaml:\d+:\d+", text), text
    assert "characteristics[0]" in text


# --- data ---------------------------------------------------------------------------------------


def test_results_become_ones_and_zeros_and_counts_two_rows(tmp_path):
    spec = load_spec(_spec(tmp_path, LEAK + CAPS))
    t = load_measurements(spec).table
    leak = t[(t.characteristic == "leak") & ~t.excluded]
    assert leak.value.tolist() == [0.0, 1.0, 0.0, 0.0, 0.0, 0.0, 1.0]
    used = t[~t.excluded]
    assert used[used.characteristic == "caps"].value.tolist() == [6.0, 4.0, 1.0, 2.0]
    assert used[used.characteristic == "caps (inspected)"].value.tolist() == [300, 320, 310, 290]


def test_long_layout_reads_results_and_counts_on_the_matching_rows(tmp_path):
    data = ("lot,proc,what,value,insp,rej\n"
            "L1,A,leak,OK,,\nL1,A,leak,NOK,,\nL1,A,caps,,100,3\n"
            "L2,B,leak,OK,,\nL2,B,caps,,90,1\nL2,B,leak,odd,,\n")
    (tmp_path / "long.csv").write_text(data, encoding="utf-8")
    (tmp_path / "l.yaml").write_text(textwrap.dedent("""\
        format: verify/1
        title: long
        data: {file: long.csv, lot: lot, process: proc, old: A, new: B,
               characteristic: what, value: value}
        characteristics:
          - {name: leak, kind: pass-fail, unit: parts, fail: [NOK], pass: [OK]}
          - {name: caps, kind: pass-fail, unit: caps, counts: {inspected: insp, failed: rej}}
        """), encoding="utf-8")
    spec = load_spec(tmp_path / "l.yaml")
    with pytest.raises(DataError) as e:
        load_measurements(spec)
    (issue,) = e.value.issues
    assert issue.row == 7 and issue.column == "value" and "'odd'" in issue.message
    (tmp_path / "long.csv").write_text(data.replace("odd", "OK"), encoding="utf-8")
    ev = evaluate(spec, load_measurements(spec))
    caps = ev.characteristic("caps").processes
    assert (caps["old"].n, caps["old"].failures, caps["new"].n, caps["new"].failures) == (
        100, 3, 90, 1)
    leak = ev.characteristic("leak").processes
    assert (leak["old"].n, leak["old"].failures, leak["new"].n) == (2, 1, 2)


@pytest.mark.parametrize(("row", "words", "column"), [
    ("L4,B,maybe,290,2", "'maybe' is neither a fail result", "leak"),
    ("L4,B,OK,290.5,2", "not a whole number", "insp"),
    ("L4,B,OK,290,-1", "not a whole number", "rej"),
    ("L4,B,OK,290,", "needs both counts", "rej"),
    ("L4,B,OK,2,3", "more than the parts inspected", "rej"),
    ("L3,B,OK,2,1", "more than one row of counts", "rej"),
])
def test_bad_results_and_counts_name_file_row_and_column(tmp_path, row, words, column):
    data = PARTS.replace("L4,B,FAIL,290,2", row)
    spec = load_spec(_spec(tmp_path, LEAK + CAPS, data=data))
    with pytest.raises(DataError) as e:
        load_measurements(spec)
    issue = next(i for i in e.value.issues if words in i.message)
    assert issue.column == column and issue.row == 8 and issue.file.endswith("parts.csv")


def test_bad_input_exits_2_and_writes_nothing(tmp_path):
    path = _spec(tmp_path, LEAK, data=PARTS.replace("FAIL", "perhaps"))
    out = tmp_path / "out"
    proc = subprocess.run([sys.executable, "-m", "verify", "run", str(path), "--out", str(out)],
                          capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == 2 and "perhaps" in proc.stderr and "row 8" in proc.stderr
    assert not out.exists() or not any(out.iterdir())


# --- checks -----------------------------------------------------------------------------------


def test_rate_check_is_the_exact_upper_bound(tmp_path):
    _, ev = _run(_spec(tmp_path, LEAK))
    c = ev.characteristic("leak")
    rate = next(r for r in c.checks if r.check == "rate")
    # new: 1 failed of 3; reference: scipy binomtest one-sided exact upper bound at 90%
    ref = stats.binomtest(1, 3, alternative="less").proportion_ci(0.9, method="exact").high
    assert rate.ci_high == pytest.approx(ref, abs=1e-12)
    assert rate.estimate == pytest.approx(1 / 3) and rate.ci_level == 0.9
    assert rate.outcome == ("PASS" if ref <= 0.9 else "HOLD")
    assert c.processes["new"].failures == 1 and c.processes["new"].n == 3


def test_rate_shift_with_margin_is_newcombes_interval(tmp_path):
    _, ev = _run(_spec(tmp_path, LEAK))
    r = next(r for r in ev.characteristic("leak").checks if r.check == "rate_shift")
    from verify.stats.rates import newcombe

    ref = newcombe(1, 3, 1, 4, level=0.9)
    assert (r.ci_low, r.ci_high) == pytest.approx((ref.low, ref.high))
    assert r.outcome == ("PASS" if ref.high < 0.5 else "HOLD")


def test_rate_shift_without_margin_is_fishers_test_and_joins_the_family(tmp_path):
    _, ev = _run(_spec(tmp_path, CAPS, extra="multiplicity: holm\n"))
    r = ev.characteristic("caps").checks[0]
    # new 3 of 600 against old 10 of 620: scipy.stats.fisher_exact, alternative "greater"
    ref = stats.fisher_exact([[3, 597], [10, 610]], alternative="greater").pvalue
    assert r.p_value == pytest.approx(ref, rel=1e-10)
    assert r.outcome == "PASS" and ev.family == ("caps: rate_shift",)
    assert r.p_adjusted == pytest.approx(ref, rel=1e-10)


def test_a_clear_increase_holds_and_stays_hold_while_pending(tmp_path):
    data = "lot,proc,insp,rej\nA1,A,1000,2\nB1,B,1000,40\n"
    path = _spec(tmp_path, CAPS.replace("counts: {", "checks: {rate_shift: {margin: 0.01}}\n"
                                        "  counts: {"), data=data, extra="min_n: 5000\n")
    _, ev = _run(path)
    c = ev.characteristic("caps")
    assert c.decision == "HOLD"
    assert "whole interval lies beyond the margin" in c.checks[0].reason


def test_pending_until_the_planned_parts_are_inspected(tmp_path):
    _, ev = _run(_spec(tmp_path, CAPS, extra="min_n: 1000\n"))
    c = ev.characteristic("caps")
    assert c.decision == "PENDING" and "new: 600 of 1000 planned" in c.reasons[0]


def test_diagnostics_flag_zero_failures_and_lot_differences(tmp_path):
    data = ("lot,proc,insp,rej\nA1,A,500,0\nA2,A,500,0\nB1,B,500,0\nB2,B,500,30\n")
    _, ev = _run(_spec(tmp_path, CAPS, data=data))
    c = ev.characteristic("caps")
    by = {(d.name, d.group): d for d in c.diagnostics}
    assert by[("zero failures", "old")].flag
    lots = by[("failures by lot", "new")]
    ref = stats.chi2_contingency([[0, 500], [30, 470]], correction=False)
    assert lots.flag and lots.p_value == pytest.approx(ref.pvalue, rel=1e-9)
    assert any("lots differ in failure rate" in n for n in c.review)


def test_rules_in_words_include_the_rate_rules():
    words = decide.rules_in_words(0.05, "holm", pass_fail=True)
    assert len(words) == len(decide.rules_in_words(0.05, "holm")) + 2
    assert any(w.startswith("Rate (pass-fail)") for w in words)
    assert any(w.startswith("Rate shift (pass-fail)") for w in words)
    v = rates_rule.RATE.decide(failures=0, inspected=59, upper=0.0495, max_rate=0.05,
                           confidence=0.95)
    assert v.outcome == "PASS"
    assert rates_rule.RATE.decide(failures=0, inspected=58, upper=0.0503, max_rate=0.05,
                              confidence=0.95).outcome == "HOLD"


# --- outputs ----------------------------------------------------------------------------------


def test_json_and_workbook(tmp_path):
    path = _spec(tmp_path, LEAK + CAPS)
    out = tmp_path / "out"
    subprocess.run([sys.executable, "-m", "verify", "run", str(path), "--out", str(out)],
                   capture_output=True, text=True, cwd=ROOT, check=False)
    doc = json.loads((out / "s.json").read_text(encoding="utf-8"))
    leak = next(c for c in doc["characteristics"] if c["name"] == "leak")
    assert leak["kind"] == "pass-fail"
    assert leak["processes"]["new"]["failures"] == 1 and leak["processes"]["new"]["n"] == 3
    assert leak["processes"]["new"]["rate"] == pytest.approx(1 / 3)
    rate = next(k for k in leak["checks"] if k["check"] == "rate")
    for key in ("estimate", "ci_low", "ci_high", "ci_level", "method", "outcome", "reason"):
        assert rate[key] is not None, key
    assert rate["max"] == 0.9
    shift = next(k for k in leak["checks"] if k["check"] == "rate_shift")
    assert shift["margin"] == [None, 0.5]
    wb = openpyxl.load_workbook(out / "s.xlsx")
    texts = [v for row in wb["leak"].iter_rows(values_only=True) for v in row
             if isinstance(v, str)]
    assert "Counts by lot" in texts and "The rules in words" in texts
    assert wb["leak"]._charts, "the interval chart is drawn"
    # the spec rows' labels fit their column (a longer one is cut off by the value beside it)
    ws = wb["leak"]
    labels = [r[0].value for r in ws.iter_rows(max_col=2)
              if isinstance(r[0].value, str) and r[0].font.b and r[1].value is not None]
    assert "Largest allowed increase (margin)" in labels
    assert max(map(len, labels)) <= ws.column_dimensions["A"].width
    assert any("Rate (pass-fail)" in t for t in texts)
    # the decision page has a column per check kind: the rate cell shows its upper bound
    # against the maximum, the rate change cell its interval against the margin
    decision = [v for row in wb["Decision"].iter_rows(values_only=True) for v in row
                if isinstance(v, str)]
    assert any(t.startswith("Failure rate") for t in decision)
    assert any("vs max 90.00%" in t for t in decision)
    assert any("margin: below +50 points" in t for t in decision)
    proc = subprocess.run([sys.executable, "-m", "verify", "replay", str(out / "s.json")],
                          capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == 0, proc.stdout + proc.stderr


def test_verify_check_describes_counts(tmp_path):
    proc = subprocess.run([sys.executable, "-m", "verify", "check",
                           str(_spec(tmp_path, LEAK + CAPS))],
                          capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == 0
    assert "new: 600 inspected, 3 failed" in proc.stdout
    assert "check rate_shift: new rate not higher than old (Fisher" in proc.stdout


# --- verify plan ------------------------------------------------------------------------------


@pytest.mark.parametrize(("args", "n"), [
    (["--rate-max", "0.05", "--confidence", "0.95"], 59),
    (["--rate-max", "0.01", "--confidence", "0.95"], 299),
    (["--rate-max", "0.01", "--confidence", "0.95", "--allowed-failures", "1"], 473),
    (["--rate-max", "0.01", "--confidence", "0.95", "--allowed-failures", "2"], 628),
])
def test_plan_rate_max_gives_the_success_run_sizes(tmp_path, args, n):
    # common practice: 59 (95% / 5%), 299 (95% / 1%), 473 and 628 with one and two failures
    proc = subprocess.run([sys.executable, "-m", "verify", "plan", *args, "--out",
                           str(tmp_path)], capture_output=True, text=True, cwd=ROOT)
    assert proc.returncode == 0, proc.stderr
    row = next(line for line in proc.stdout.splitlines() if line.startswith("-  "))
    assert row.split()[2:3] != [] and f"  {n}  " in row
    wb = openpyxl.load_workbook(tmp_path / "plan.xlsx")
    assert wb["Pass-fail plan"]["D5"].value == n


def test_plan_with_a_spec_covers_pass_fail_characteristics(tmp_path):
    path = _spec(tmp_path, LEAK + CAPS)
    proc = subprocess.run([sys.executable, "-m", "verify", "plan", str(path), "--rate-detect",
                           "0.02", "--out", str(tmp_path)], capture_output=True, text=True,
                          cwd=ROOT)
    assert proc.returncode == 0, proc.stderr
    out = proc.stdout
    assert re.search(r"^leak +rate ", out, re.M) and re.search(r"^caps +rate_shift ", out, re.M)
    assert "exact power at n" in out and "old data: 10 of 620" in out


def test_plan_rejects_bad_rate_arguments(tmp_path):
    for args in (["--rate-max", "1.5"], ["--rate-max", "0.01", "--allowed-failures", "-1"],
                 ["--confidence", "0.9"], ["--rate-max", "0.01", "--sd", "1"]):
        proc = subprocess.run([sys.executable, "-m", "verify", "plan", *args, "--out",
                               str(tmp_path)], capture_output=True, text=True, cwd=ROOT)
        assert proc.returncode == 2, (args, proc.stdout, proc.stderr)
