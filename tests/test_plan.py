"""``verify plan``: sizing from a spec and standalone, its errors, table and workbook.

Invented data of a plant of our own (Harrowgate Works). Expected numbers are recomputed
through a second route (the stats layer called directly, numpy on the fixture data); the
published reference values are checked in test_plan_power_reference.py.
"""

from __future__ import annotations

import math
import subprocess
import sys
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest

from verify import cli_plan
from verify import plan as vplan
from verify.checks.location import plan as lplan
from verify.checks.location import plan_power
from verify.checks.location.plan_model import PlanRow
from verify.data import load_measurements
from verify.errors import UsageError
from verify.spec import load_spec
from verify.stats import power

REPO = Path(__file__).resolve().parents[1]

# --- fixtures ---------------------------------------------------------------------------------

SPEC = """\
format: verify/1
title: Harrowgate Works press 2, collet change
alpha: 0.05
min_n: 20
{plan}
data:
  file: lots.csv
  lot: lot
  process: line
  old: old
  new: new
{pair}
characteristics:
  - name: bore
    column: bore_mm
    unit: '=HYPERLINK("x")'
    target: 12.0
    checks:
      target: {{margin: 0.004}}
      shift: {{margin: 0.003{design}}}
  - name: torque
    column: torque_Nm
    unit: N m
    side: lower
    checks:
      shift: {{{torque}}}
"""


def _lots_csv(path: Path, *, new_pairs: int = 0, seed: int = 11) -> tuple[np.ndarray, ...]:
    """Old-process lots (and optionally new rows pairing the first old rows); returns values."""
    rng = np.random.default_rng(seed)
    rows = ["lot,line,unit_key,bore_mm,torque_Nm"]
    bore = 12.0 + rng.normal(0, 0.003, 16).round(4)
    torque = 8.0 + rng.normal(0, 0.4, 16).round(3)
    for i in range(16):
        rows.append(f"HW-A{i // 4},old,P{i:02d},{bore[i]:.4f},{torque[i]:.3f}")
    new_bore = bore[:new_pairs] + rng.normal(0, 0.001, new_pairs).round(4)
    new_torque = torque[:new_pairs] + rng.normal(0.1, 0.2, new_pairs).round(3)
    for i in range(new_pairs):
        rows.append(f"HW-B0,new,P{i:02d},{new_bore[i]:.4f},{new_torque[i]:.3f}")
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return bore, torque, new_bore, new_torque


def _spec(folder: Path, *, paired: bool = False, torque: str = "detect: 0.5",
          plan: str = "", new_pairs: int = 0) -> tuple[Path, tuple[np.ndarray, ...]]:
    values = _lots_csv(folder / "lots.csv", new_pairs=new_pairs)
    text = SPEC.format(plan=plan, pair="  pair: unit_key" if paired else "",
                       design="" if paired else ", design: welch", torque=torque)
    path = folder / "press2.yaml"
    path.write_text(text, encoding="utf-8")
    return path, values


@pytest.fixture
def spec_path(tmp_path: Path) -> Path:
    return _spec(tmp_path)[0]


@pytest.fixture
def tmp_out(tmp_path: Path) -> Path:
    return tmp_path / "out"


def _plan(path: Path, **opts) -> vplan.Plan:
    spec = load_spec(path)
    return vplan.plan_spec(spec, load_measurements(spec), vplan.Options(**opts))


def _row(plan: vplan.Plan, name: str, check: str) -> PlanRow:
    return next(r for r in plan.rows_of("location") if (r.scenario.characteristic, r.scenario.check)
                == (name, check))


# --- the spec form ------------------------------------------------------------------------------


def test_spec_form_plans_each_check_with_the_old_process_sd(spec_path):
    bore, torque, *_ = _lots_csv(spec_path.parent / "lots.csv")  # same seed: same data
    plan = _plan(spec_path)
    rows = plan.rows_of("location")
    assert [(r.scenario.characteristic, r.scenario.check, r.scenario.kind) for r in rows] == [
        ("bore", "target", "equivalence"), ("bore", "shift", "equivalence"),
        ("torque", "shift", "difference")]
    target = _row(plan, "bore", "target")
    assert target.scenario.design == "one-sample"
    assert target.scenario.sd == pytest.approx(np.std(bore, ddof=1), rel=1e-12)  # numpy
    shift = _row(plan, "bore", "shift")
    # the spec's min_n is where power and the detectable shift are reported
    assert (shift.eval_n_new, shift.eval_n_old) == (20, 20)
    assert shift.power_at_eval == pytest.approx(power.power_tost(
        0.0, shift.scenario.sd, 20, 20, design="welch", low=-0.003, high=0.003), rel=1e-12)
    # torque: side lower, no margin, detect 0.5: a one-sided t-test for a drop of 0.5
    tq = _row(plan, "torque", "shift")
    assert tq.scenario.sd == pytest.approx(np.std(torque, ddof=1), rel=1e-12)
    assert tq.scenario.alternative == "less"
    assert tq.scenario.true_shift == -0.5
    assert tq.n_new == power.sample_size_t(-0.5, tq.scenario.sd, design="welch",
                                           alternative="less", power=0.9).n_new


def test_every_n_is_the_smallest_integer_reaching_the_power(spec_path):
    for row in _plan(spec_path, power=0.95).rows_of("location"):
        s = row.scenario
        assert row.power >= 0.95 > row.power_below
        assert row.power == pytest.approx(plan_power.power_of(s, row.n_new), rel=1e-12)
        assert plan_power.power_of(s, row.n_new - 1) < 0.95


@pytest.mark.parametrize("design", ["one-sample", "paired", "welch", "pooled"])
@pytest.mark.parametrize(("margin", "side"), [("0.6", "two-sided"), ("0.6", "lower"),
                                               ("0.6", "upper"), (None, "two-sided"),
                                               (None, "lower")])
def test_standalone_n_is_minimal_for_every_test_and_design(design, margin, side):
    kw = {"margin": margin} if margin else {"detect": 0.6}
    if design == "paired":
        kw["sd_diff"] = 1.3
        sd = None
    else:
        sd = 1.3
    plan = lplan.plan_standalone(sd=sd, design=design, side=side, power=0.85, **kw)
    (row,) = plan.rows_of("location")
    assert row.power >= 0.85 > row.power_below
    assert plan_power.power_of(row.scenario, row.n_new - 1) < 0.85
    expected_old = {"one-sample": None, "paired": row.n_new}.get(design, row.n_new)
    assert row.n_old == expected_old


def test_ratio_sets_the_old_lot_size():
    plan = lplan.plan_standalone(sd=1.0, design="pooled", margin="0.5", ratio=2.0)
    (row,) = plan.rows_of("location")
    assert row.n_old == math.ceil(row.n_new / 2)
    # the same n from the stats layer directly
    ss = power.sample_size_tost(0.0, 1.0, design="pooled", low=-0.5, high=0.5, power=0.9,
                                ratio=2.0)
    assert (row.n_new, row.n_old) == (ss.n_new, ss.n_old)


def test_true_shift_and_power_from_the_spec_plan_keys(tmp_path):
    path, _ = _spec(tmp_path, plan="plan:\n  power: 0.8\n  true_shift: 0.001")
    row = _row(_plan(path), "bore", "shift")
    assert row.scenario.target_power == 0.8
    assert row.scenario.true_shift == 0.001
    ss = power.sample_size_tost(0.001, row.scenario.sd, design="welch", low=-0.003,
                                high=0.003, power=0.8)
    assert row.n_new == ss.n_new
    # the command line wins over the spec
    row = _row(_plan(path, power=0.95, true_shift=0.0), "bore", "shift")
    assert (row.scenario.target_power, row.scenario.true_shift) == (0.95, 0.0)


def test_sd_and_n_from_the_command_line(spec_path):
    row = _row(_plan(spec_path, sd=0.002, n=12), "bore", "target")
    assert (row.scenario.sd, row.scenario.sd_source) == (0.002, "--sd")
    assert (row.eval_n_new, row.scenario.eval_source) == (12, "--n")


def test_unit_of_analysis_lot_uses_the_sd_of_lot_means(tmp_path):
    path, (bore, *_) = _spec(tmp_path)
    path.write_text(path.read_text().replace("min_n: 20", "min_n: 3\nunit_of_analysis: lot"))
    plan = _plan(path)
    lot_means = bore.reshape(4, 4).mean(axis=1)  # four old lots of four parts (fixture)
    row = _row(plan, "bore", "target")
    assert row.scenario.sd == pytest.approx(np.std(lot_means, ddof=1), rel=1e-12)
    assert "4 old-process lot means" in row.scenario.sd_source
    assert any("every n counts lots" in n for n in plan.notes)


def test_planning_before_the_data_file_exists_needs_sd(spec_path, tmp_out, capsys):
    (spec_path.parent / "lots.csv").unlink()
    assert cli_plan.main([str(spec_path), "--out", str(tmp_out)]) == 2  # data file not found
    assert "not found" in capsys.readouterr().err
    code = cli_plan.main([str(spec_path), "--sd", "0.003", "--out", str(tmp_out)])
    assert code == 0
    assert "the data file is not there yet" in capsys.readouterr().out
    assert (tmp_out / "press2-plan.xlsx").is_file()


def test_paired_sd_from_pairs_measured_on_both_sides(tmp_path):
    path, (bore, _, new_bore, _) = _spec(tmp_path, paired=True, new_pairs=6)
    row = _row(_plan(path), "bore", "shift")
    assert row.scenario.design == "paired"
    assert row.scenario.sd == pytest.approx(np.std(new_bore - bore[:6], ddof=1), rel=1e-12)
    assert "6 pairs" in row.scenario.sd_source


def test_paired_sd_from_a_correlation_when_no_pairs(tmp_path):
    path, (bore, *_) = _spec(tmp_path, paired=True, plan="plan:\n  pair_correlation: 0.75")
    row = _row(_plan(path), "bore", "shift")
    expected = np.std(bore, ddof=1) * math.sqrt(2 * (1 - 0.75))  # sd * sqrt(2 (1 - r))
    assert row.scenario.sd == pytest.approx(expected, rel=1e-12)
    assert "plan.pair_correlation" in row.scenario.sd_source
    # --pair-correlation on the command line wins over the spec key
    row = _row(_plan(path, pair_correlation=0.5), "bore", "shift")
    assert row.scenario.sd == pytest.approx(np.std(bore, ddof=1), rel=1e-12)


def test_paired_without_pairs_or_correlation_names_what_to_pass(tmp_path):
    path, _ = _spec(tmp_path, paired=True)
    with pytest.raises(UsageError) as exc:
        _plan(path)
    text = exc.value.report()
    assert "bore, check shift" in text and "torque, check shift" in text
    assert "--pair-correlation" in text and "characteristics[0].checks.shift" in text


def test_check_without_margin_or_detect_is_an_error_naming_it(tmp_path):
    path, _ = _spec(tmp_path, torque="")
    with pytest.raises(UsageError) as exc:
        _plan(path)
    text = exc.value.report()
    assert "torque, check shift" in text and "--detect" in text
    assert "characteristics[1].checks.shift" in text and "press2.yaml:" in text
    # --detect on the command line supplies it
    assert _row(_plan(path, detect=0.3), "torque", "shift").scenario.detect == 0.3


def test_unreachable_equivalence_is_reported_not_raised():
    plan = lplan.plan_standalone(sd=1.0, design="welch", margin="0.5", true_shift=0.6)
    (row,) = plan.rows_of("location")
    assert row.n_new is None and row.power is None
    assert "not inside the equivalence margins" in row.note
    assert len(row.curve) > 10
    assert "not reachable" in vplan.format_table(plan)


@pytest.mark.parametrize(
    ("kw", "words"),
    [
        ({"sd": 1.0, "design": "welch", "margin": "0.5", "detect": 0.2}, "exactly one"),
        ({"sd": 1.0, "design": "welch"}, "exactly one"),
        ({"sd": 1.0, "design": "paired", "margin": "0.5"}, "--pair-correlation"),
        ({"sd": 1.0, "design": "paired", "margin": "0.5", "ratio": 2.0}, "--ratio"),
        ({"sd": 1.0, "design": "anova", "margin": "0.5"}, "--design"),
        ({"sd": 1.0, "design": "welch", "margin": "0.2,0.5"}, "low < 0 < high"),
        ({"sd": 1.0, "design": "welch", "margin": "wide"}, "--margin"),
        ({"sd": 1.0, "design": "welch", "margin": "0.5", "alpha": 0.3}, "--alpha"),
        ({"sd": 1.0, "design": "welch", "margin": "0.5", "power": 0.04}, "must exceed alpha"),
        ({"sd": None, "design": "welch", "margin": "0.5"}, "--sd"),
        ({"sd": 1.0, "design": "welch", "detect": 0.5, "true_shift": 0.1}, "--true-shift"),
        ({"sd": 1.0, "design": "welch", "margin": "0.5", "pair_correlation": 0.5}, "paired"),
    ],
)
def test_standalone_usage_errors(kw, words):
    with pytest.raises(UsageError) as exc:
        lplan.plan_standalone(**kw)
    assert words in exc.value.report()


def test_margin_forms():
    assert lplan.parse_margin("0.5") == (-0.5, 0.5)
    assert lplan.parse_margin("-0.2,0.3") == (-0.2, 0.3)
    assert lplan.parse_margin("[-0.2, 0.3]") == (-0.2, 0.3)


def test_non_inferiority_uses_the_harmful_bound():
    plan = lplan.plan_standalone(sd=1.0, design="pooled", margin="-0.4,0.9", side="lower")
    (row,) = plan.rows_of("location")
    assert row.scenario.bound == -0.4
    ss = power.sample_size_noninferiority(0.0, 1.0, design="pooled", bound=-0.4,
                                          harmful="lower", power=0.9)
    assert row.n_new == ss.n_new


# --- the table and the workbook -------------------------------------------------------------------


def _chart_xml(path: Path) -> list[str]:
    with zipfile.ZipFile(path) as z:
        return [z.read(n).decode("utf-8") for n in sorted(z.namelist())
                if n.startswith("xl/charts/chart")]


def test_workbook_holds_inputs_results_method_and_a_chart_per_check(spec_path, tmp_path):
    plan = _plan(spec_path)
    path = tmp_path / "p.xlsx"
    from verify.report.plan_workbook import write_plan_workbook

    write_plan_workbook(plan, path)
    wb = openpyxl.load_workbook(path)
    assert wb.sheetnames == ["Plan", "Power curves"]
    cells = [c for row in wb["Plan"].iter_rows() for c in row if c.value is not None]
    texts = [c.value for c in cells if isinstance(c.value, str)]
    assert "Inputs" in texts and "Results" in texts and "Method" in texts
    assert any(t.startswith("Equivalence (TOST)") for t in texts)
    # the unit from the spec looks like a formula: it is stored as text
    unit = next(c for c in cells if c.value == '=HYPERLINK("x")')
    assert unit.data_type == "s"
    # the plan has a column per check: bore/shift's column carries the smallest sufficient
    # trial and the power with one unit fewer
    ws = wb["Plan"]
    head = next(r for r in ws.iter_rows() if r[0].value == "Characteristic")
    checks = next(r for r in ws.iter_rows(min_row=head[0].row + 1) if r[0].value == "Check")
    col = next(c.column for c, k in zip(head, checks, strict=False)
               if c.value == "bore" and k.value == "shift")
    labels = {ws.cell(r, 1).value: r for r in range(head[0].row, ws.max_row + 1)}
    row = _row(plan, "bore", "shift")
    assert ws.cell(labels["Smallest trial that reaches it (per process)"], col).value == row.n_new
    assert ws.cell(labels["Power with one unit fewer"], col).value == pytest.approx(
        row.power_below)
    charts = _chart_xml(path)
    assert len(charts) == len(plan.rows_of("location")) == 3
    # our own chart: power by trial size as bars, coloured by whether they reach the wanted
    # power; no target line and no marked n
    assert all("barChart" in x for x in charts)
    assert all(f"plan for {r.n_new} per process" in x
               for x, r in zip(charts, plan.rows_of("location"), strict=True))
    # the words of the plan are our own
    for x in (*texts, *charts):
        for phrase in ("target power", "n needed", "power at n"):
            assert phrase not in x.lower(), phrase


def test_table_lists_every_check(spec_path):
    plan = _plan(spec_path)
    text = vplan.format_table(plan)
    for r in plan.rows_of("location"):
        assert f"{r.scenario.characteristic} " in text
    assert "TOST (welch)" in text and "t-test (welch, less)" in text
    assert "detect 0.5 N m" in text


def test_in_process_command_writes_atomically(spec_path, tmp_out, capsys):
    assert cli_plan.main([str(spec_path), "--out", str(tmp_out)]) == 0
    assert "bore" in capsys.readouterr().out
    assert sorted(p.name for p in tmp_out.iterdir()) == ["press2-plan.xlsx"]  # no .part left


def test_in_process_usage_error_writes_nothing(spec_path, tmp_out, capsys):
    code = cli_plan.main([str(spec_path), "--margin", "0.5", "--out", str(tmp_out)])
    assert code == 2
    assert "standalone form" in capsys.readouterr().err
    assert not tmp_out.exists()


# --- the command line: python -m verify plan ------------------------------------------------------


def _verify_plan(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    from verify import cli

    if "plan" not in getattr(cli, "COMMANDS", {}):
        pytest.skip("`verify plan` is not hooked into verify/cli.py yet (no 'plan' in COMMANDS)")
    return subprocess.run([sys.executable, "-m", "verify", "plan", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=300)


def test_cli_spec_form(spec_path, tmp_path):
    done = _verify_plan(str(spec_path), "--out", "plans", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert "bore" in done.stdout and "torque" in done.stdout and "plan for" in done.stdout
    assert "n needed" not in done.stdout and "target power" not in done.stdout
    book = tmp_path / "plans" / "press2-plan.xlsx"
    assert openpyxl.load_workbook(book).sheetnames == ["Plan", "Power curves"]
    assert len(_chart_xml(book)) == 3


def test_cli_standalone_form(tmp_path):
    done = _verify_plan("--sd", "0.004", "--margin=-0.004,0.005", "--design", "welch",
                        "--ratio", "1.5", "--power", "0.8", cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert "TOST (welch)" in done.stdout
    book = tmp_path / "reports" / "plan.xlsx"  # the default folder
    ws = openpyxl.load_workbook(book)["Plan"]
    assert any(c.value == "ratio n_new / n_old" for row in ws.iter_rows() for c in row)
    (chart,) = _chart_xml(book)
    assert "barChart" in chart


def test_cli_check_without_margin_and_without_detect(tmp_path):
    path, _ = _spec(tmp_path, torque="")
    done = _verify_plan(str(path), cwd=tmp_path)
    assert done.returncode == 2
    assert "torque, check shift" in done.stderr and "--detect" in done.stderr
    assert not (tmp_path / "reports").exists()


def test_cli_paired_without_pairs_and_without_pair_correlation(tmp_path):
    path, _ = _spec(tmp_path, paired=True)
    done = _verify_plan(str(path), cwd=tmp_path)
    assert done.returncode == 2
    assert "bore, check shift" in done.stderr and "--pair-correlation" in done.stderr
    assert not (tmp_path / "reports").exists()
    done = _verify_plan(str(path), "--pair-correlation", "0.5", cwd=tmp_path)
    assert done.returncode == 0, done.stderr


def test_characteristic_option_limits_the_plan(spec_path, tmp_out, capsys):
    assert cli_plan.main([str(spec_path), "--characteristic", "torque", "--out",
                       str(tmp_out)]) == 0
    out = capsys.readouterr().out
    assert "torque" in out and "bore " not in out
    assert cli_plan.main([str(spec_path), "--characteristic", "bor", "--out", str(tmp_out)]) == 2
    assert "no such characteristic" in capsys.readouterr().err
