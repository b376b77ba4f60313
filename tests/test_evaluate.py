"""End-to-end evaluation of the demo specs, checked against independent reference routes.

The expected outcomes of the demo (one PASS, one HOLD, one PENDING) are the scenario the sample
data were generated for (sample_lots/generate.py). The numbers are cross-checked against
statsmodels and scipy, which compute them independently of verify's statistics layer.
"""

from pathlib import Path

import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.weightstats import ttost_ind, ttost_paired

from verify.data import analysis_values, load_measurements, paired_values
from verify.evaluate import evaluate
from verify.spec import load_spec

SPECS = Path(__file__).resolve().parents[1] / "specs"


@pytest.fixture(scope="module")
def evaluations():
    out = {}
    for p in sorted(SPECS.glob("*.yaml")):
        spec = load_spec(p)
        out[p.stem] = evaluate(spec, load_measurements(spec))
    return out


def test_demo_gives_pass_hold_and_pending(evaluations):
    decisions = {k: ev.decision for k, ev in evaluations.items()}
    assert decisions["bushing-supplier"] == "PASS"
    assert decisions["filler-paired"] == "HOLD"
    assert decisions["housing-resin"] == "PENDING"
    assert decisions["closure-mould"] == "HOLD"


def test_closure_demo_holds_on_the_cavity_that_runs_off(evaluations):
    # sample_lots/generate.py: cavity C3 of the new mould runs 0.036 mm tall, the others on
    # target; the pooled checks pass, the stream check of C3 does not
    ev = evaluations["closure-mould"]
    height = ev.characteristic("cap_height")
    assert height.decision == "HOLD" and height.reasons[0].startswith("stream C3: shift:")
    assert all(k.outcome == "PASS" for k in height.checks)
    assert [s.decision for s in height.streams] == ["PASS", "PASS", "HOLD", "PASS"]
    vestige = ev.characteristic("gate_vestige")  # zero-bounded, lognormal, upper limit only
    assert vestige.spec.lower is None and vestige.distribution["name"] == "lognormal"
    conf = next(k for k in vestige.checks if k.check == "conformance")
    assert conf.outcome == "PASS" and conf.ci_low is None and conf.ci_high < 0.15


def test_hold_names_the_characteristic_and_the_reason(evaluations):
    ev = evaluations["filler-paired"]
    seal = ev.characteristic("seal_strength")
    assert seal.decision == "HOLD"
    assert any("below the old process" in r for r in seal.reasons)
    assert any(r.startswith("seal_strength: HOLD") for r in ev.reasons)


def test_pending_says_how_many_of_the_plan_are_in(evaluations):
    ev = evaluations["housing-resin"]
    for c in ev.characteristics:
        assert c.decision == "PENDING"
        assert c.reasons[0].startswith("new: ") and "of 30 planned" in c.reasons[0]


def test_final_run_decides_on_the_data_there_are():
    spec = load_spec(SPECS / "housing-resin.yaml")
    ev = evaluate(spec, load_measurements(spec), final=True)
    assert ev.decision in ("PASS", "HOLD")
    assert all(k.outcome != "PENDING" for c in ev.characteristics for k in c.checks)


def test_welch_tost_matches_statsmodels(evaluations):
    ev = evaluations["bushing-supplier"]
    spec = ev.spec
    meas = ev.measurements
    c = ev.characteristic("bore_diameter")
    shift = next(k for k in c.checks if k.check == "shift")
    new = analysis_values(meas, spec, "bore_diameter", "new").values
    old = analysis_values(meas, spec, "bore_diameter", "old").values
    low, high = shift.margin
    # statsmodels: ttost_ind(new, old, low, high, usevar="unequal") -> (p, lower, upper)
    p, lower, upper = ttost_ind(new, old, low, high, usevar="unequal")
    assert shift.p_value == pytest.approx(p, rel=1e-9)
    assert shift.details.p_lower == pytest.approx(lower[1], rel=1e-9)
    assert shift.details.p_upper == pytest.approx(upper[1], rel=1e-9)
    assert shift.df == pytest.approx(lower[2], rel=1e-12)


def test_pooled_tost_matches_statsmodels(evaluations):
    ev = evaluations["bushing-supplier"]
    c = ev.characteristic("overall_length")
    shift = next(k for k in c.checks if k.check == "shift")
    assert shift.design == "pooled"
    new = analysis_values(ev.measurements, ev.spec, "overall_length", "new").values
    old = analysis_values(ev.measurements, ev.spec, "overall_length", "old").values
    # statsmodels: ttost_ind(new, old, low, high, usevar="pooled")
    p, _, _ = ttost_ind(new, old, *shift.margin, usevar="pooled")
    assert shift.p_value == pytest.approx(p, rel=1e-9)
    assert shift.df == len(new) + len(old) - 2  # common practice: pooled df = n1 + n2 - 2


def test_paired_shift_matches_scipy_and_statsmodels(evaluations):
    ev = evaluations["filler-paired"]
    pv = paired_values(ev.measurements, ev.spec, "fill_volume")
    shift = next(k for k in ev.characteristic("fill_volume").checks if k.check == "shift")
    assert shift.estimate == pytest.approx(float(np.mean(pv.new - pv.old)), rel=1e-12)
    # statsmodels: ttost_paired(new, old, low, high)
    p, _, _ = ttost_paired(pv.new, pv.old, *shift.margin)
    assert shift.p_value == pytest.approx(p, rel=1e-9)
    # scipy: the paired t statistic itself
    t = stats.ttest_rel(pv.new, pv.old).statistic
    se = shift.standard_error
    assert shift.estimate / se == pytest.approx(t, rel=1e-12)


def test_spread_f_test_matches_scipy_f_distribution(evaluations):
    ev = evaluations["bushing-supplier"]
    c = ev.characteristic("bore_diameter")
    spread = next(k for k in c.checks if k.check == "spread")
    new = analysis_values(ev.measurements, ev.spec, "bore_diameter", "new").values
    old = analysis_values(ev.measurements, ev.spec, "bore_diameter", "old").values
    f = np.var(new, ddof=1) / np.var(old, ddof=1)
    # scipy: one-sided p for "new spread larger" is the upper tail of F(n_new-1, n_old-1)
    p = stats.f.sf(f, len(new) - 1, len(old) - 1)
    assert spread.p_value == pytest.approx(p, rel=1e-9)
    assert spread.estimate == pytest.approx(np.sqrt(f), rel=1e-12)


def test_every_check_has_reason_and_no_nan(evaluations):
    for ev in evaluations.values():
        for c in ev.characteristics:
            for k in c.checks:
                assert k.reason
                for v in (k.estimate, k.statistic, k.p_value, k.ci_low):
                    assert v is None or np.isfinite(v)


def test_multiplicity_adjusts_difference_tests(tmp_path):
    text = (SPECS / "bushing-supplier.yaml").read_text(encoding="utf-8")
    # drop the margins: the shift checks become difference tests, adjusted by Holm
    text = text.replace("shift: {margin: 0.005, design: welch, detect: 0.004}",
                        "shift: {design: welch, detect: 0.004}")
    text = text.replace("shift: {margin: 0.02, design: pooled}", "shift: {design: pooled}")
    text = text.replace("min_n: 40", "min_n: 40\nmultiplicity: holm")
    spec_path = SPECS / "bushing-supplier.yaml"
    spec = load_spec(spec_path, text=text)
    ev = evaluate(spec, load_measurements(spec))
    shifts = [k for c in ev.characteristics for k in c.checks
              if k.check == "shift" and k.margin is None]
    assert len(shifts) == 2
    raw = sorted(k.p_value for k in shifts)
    adj = sorted(k.p_adjusted for k in shifts)
    # Holm (1979): the smallest p is multiplied by m, the next by m - 1, kept monotone
    assert adj[0] == pytest.approx(min(1.0, 2 * raw[0]), rel=1e-12)
    assert adj[1] == pytest.approx(max(adj[0], min(1.0, raw[1])), rel=1e-12)
    assert any("Holm" in r for r in ev.rules)
