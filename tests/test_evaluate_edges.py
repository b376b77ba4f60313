"""Edge cases of the decision path that must not give a PASS an engineer would not accept.

Expected values come from scipy/statsmodels or from the rules of issue 4; the rule that a zero
spread cannot support a comparison is common practice (no standard error exists for it).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from verify.data import load_measurements
from verify.evaluate import evaluate
from verify.spec import load_spec
from verify.stats import power


def _spec(tmp_path, rows, spec_body, header="lot,process,pair,x"):
    """Write d.csv and s.yaml (spec_body continues the data block, then top-level keys)."""
    (tmp_path / "d.csv").write_text(header + "\n" + "\n".join(rows) + "\n", encoding="utf-8")
    text = ("format: verify/1\ntitle: edge case\ndata:\n  file: d.csv\n  lot: lot\n"
            "  process: process\n  old: old\n  new: new\n" + spec_body)
    p = tmp_path / "s.yaml"
    p.write_text(text, encoding="utf-8")
    return load_spec(p)


def _write(tmp_path, rows, spec_body, header="lot,process,pair,x"):
    spec = _spec(tmp_path, rows, spec_body, header)
    return evaluate(spec, load_measurements(spec))


def _rows(old, new, lots=("A", "B", "C")):
    out = []
    for i, v in enumerate(old):
        out.append(f"O{lots[i % len(lots)]},old,{i},{v}")
    for i, v in enumerate(new):
        out.append(f"N{lots[i % len(lots)]},new,{i},{v}")
    return out


def _check(ev, name="x", check="shift"):
    return next(k for k in ev.characteristic(name).checks if k.check == check)


def test_zero_spread_in_one_process_is_hold_not_a_welch_pass(tmp_path):
    rng = np.random.default_rng(1)
    old = np.round(10 + rng.normal(0, 0.05, 12), 3)
    new = [10.0] * 10
    ev = _write(tmp_path, _rows(old, new),
                "characteristics:\n  - name: x\n    unit: mm\n    checks:\n      shift: {}\n")
    k = _check(ev)
    assert k.outcome == "HOLD"
    assert "new values have zero spread" in k.reason
    assert ev.decision == "HOLD"


def test_unit_lot_with_a_pair_column_defaults_to_welch_on_lot_means(tmp_path):
    rng = np.random.default_rng(2)
    old = np.round(10 + rng.normal(0, 0.05, 30), 3)
    new = np.round(10 + rng.normal(0, 0.05, 30), 3)
    rows = _rows(old, new, lots=tuple("ABCDEF"))
    body = ("  pair: pair\nunit_of_analysis: lot\ncharacteristics:\n  - name: x\n"
            "    unit: mm\n    checks:\n      shift: {margin: 0.2}\n")
    spec = _spec(tmp_path, rows, body)
    assert spec.characteristics[0].checks.shift.design == "welch"
    ev = evaluate(spec, load_measurements(spec))
    k = _check(ev)
    assert k.details.n_new == 6 and k.details.n_old == 6  # lot means, not parts


def test_detect_on_the_harmful_lower_side_gives_power_and_planned_n(tmp_path):
    rng = np.random.default_rng(3)
    old = np.round(50 + rng.normal(0, 1.0, 30), 2)
    new = np.round(50 + rng.normal(0, 1.0, 30), 2)
    ev = _write(tmp_path, _rows(old, new),
                "characteristics:\n  - name: x\n    unit: N\n    side: lower\n    checks:\n"
                "      shift: {detect: 0.8}\n")
    k = _check(ev)
    assert k.alternative == "less"
    # the power of a one-sided Welch t-test against a drop of 0.8, from the observed sds
    sd_new, sd_old = np.std(new, ddof=1), np.std(old, ddof=1)
    expect = power.power_t(-0.8, sd_new, 30, 30, design="welch", alternative="less",
                           sd_old=sd_old)
    assert k.power == pytest.approx(expect, rel=1e-12)
    assert 0.5 < k.power < 1.0
    assert k.planned_n is not None and k.planned_n > 1


def test_interval_wholly_beyond_the_margin_holds_even_while_pending(tmp_path):
    rng = np.random.default_rng(4)
    old = np.round(25 + rng.normal(0, 0.5, 20), 2)
    new = np.round(23 + rng.normal(0, 0.5, 20), 2)
    ev = _write(tmp_path, _rows(old, new),
                "min_n: 50\ncharacteristics:\n  - name: x\n    unit: N\n    side: lower\n"
                "    checks:\n      shift: {margin: 1.0}\n")
    k = _check(ev)
    assert k.ci_high < -1.0
    assert k.outcome == "HOLD"
    assert "whole interval lies beyond the margin" in k.reason


def test_not_yet_shown_equivalence_waits_while_pending(tmp_path):
    rng = np.random.default_rng(5)
    old = np.round(25 + rng.normal(0, 0.5, 8), 2)
    new = np.round(25 + rng.normal(0, 0.5, 8), 2)
    ev = _write(tmp_path, _rows(old, new),
                "min_n: 50\ncharacteristics:\n  - name: x\n    unit: N\n    checks:\n"
                "      shift: {margin: 0.05}\n")
    k = _check(ev)
    assert k.outcome == "PENDING"
    assert k.reason.startswith("new: 8 of 50 planned") or k.reason.startswith("old: 8 of 50")


def test_final_run_with_the_plan_cut_short_says_so(tmp_path):
    rng = np.random.default_rng(6)
    old = np.round(25 + rng.normal(0, 0.5, 30), 2)
    new = np.round(25 + rng.normal(0, 0.5, 12), 2)
    body = ("min_n: 30\ncharacteristics:\n  - name: x\n    unit: N\n    checks:\n"
            "      shift: {margin: 1.5}\n")
    spec = _spec(tmp_path, _rows(old, new), body)
    ev = evaluate(spec, load_measurements(spec), final=True)
    assert ev.decision == "PASS"
    assert any("final run with the plan cut short (new: 12 of 30 planned)" in r
               for r in ev.review)


def test_no_min_n_is_noted_for_review(tmp_path):
    old = [1.0, 1.2, 0.9, 1.1]
    new = [1.05, 1.1]
    ev = _write(tmp_path, _rows(old, new),
                "characteristics:\n  - name: x\n    unit: mm\n    checks:\n      shift: {}\n")
    assert any("no planned sample size (min_n) declared; the decision rests on n = 2" in r
               for r in ev.review)


def test_multiplicity_figures_use_the_adjusted_level(tmp_path):
    rng = np.random.default_rng(7)
    rows = []
    for proc in ("old", "new"):
        for i in range(30):
            a, b = 10 + rng.normal(0, 1, 2)
            rows.append(f"L{i % 3},{proc},{i},{a:.3f},{b:.3f}")
    chars = "".join(f"  - name: {c}\n    unit: mm\n    checks:\n      shift: {{}}\n"
                    for c in ("a", "b"))
    spec = _spec(tmp_path, rows, "multiplicity: bonferroni\ncharacteristics:\n" + chars,
                 header="lot,process,pair,a,b")
    ev = evaluate(spec, load_measurements(spec))
    k = _check(ev, "a")
    assert k.ci_level == pytest.approx(1 - 0.05 / 2)
    assert k.p_adjusted == pytest.approx(min(1.0, 2 * k.p_value), rel=1e-12)
    sds = {"sd": k.details.sd}
    unadjusted = power.detectable_shift(n_new=30, n_old=30, design="welch", alpha=0.05, **sds)
    assert k.detectable_shift > unadjusted


def test_one_sided_margin_is_written_with_its_untested_end_null(tmp_path):
    from verify.report.json_result import result_dict

    rng = np.random.default_rng(8)
    old = np.round(50 + rng.normal(0, 1.0, 30), 2)
    new = np.round(50 + rng.normal(0, 1.0, 30), 2)
    ev = _write(tmp_path, _rows(old, new),
                "characteristics:\n  - name: x\n    unit: N\n    side: lower\n    checks:\n"
                "      shift: {margin: 2.0}\n")
    doc = json.loads(json.dumps(result_dict(ev)))
    assert doc["characteristics"][0]["checks"][0]["margin"] == [-2.0, None]


def test_the_garbage_collector_is_paused_during_an_evaluation_and_restored(tmp_path,
                                                                          monkeypatch):
    # evaluate pauses the cyclic collector (a burst of short-lived objects) and must hand the
    # process back as it found it: enabled stays enabled, disabled stays disabled, also when
    # the evaluation fails
    import gc
    import sys

    evaluate_module = sys.modules["verify.evaluate"]
    rng = np.random.default_rng(3)
    spec = _spec(tmp_path, _rows(np.round(10 + rng.normal(0, 0.05, 12), 3),
                                 np.round(10 + rng.normal(0, 0.05, 12), 3)),
                 "characteristics:\n  - name: x\n    unit: mm\n    checks:\n      shift: {}\n")
    meas = load_measurements(spec)
    seen = []
    real = evaluate_module.draft_characteristic

    def spy(*args):
        seen.append(gc.isenabled())
        return real(*args)

    monkeypatch.setattr(evaluate_module, "draft_characteristic", spy)
    was = gc.isenabled()
    try:
        gc.enable()
        evaluate(spec, meas)
        assert seen == [False] and gc.isenabled()
        gc.disable()
        evaluate(spec, meas)
        assert seen == [False, False] and not gc.isenabled()
        gc.enable()

        def fail(*args):
            raise RuntimeError("boom")

        monkeypatch.setattr(evaluate_module, "draft_characteristic", fail)
        with pytest.raises(RuntimeError, match="boom"):
            evaluate(spec, meas)
        assert gc.isenabled()
    finally:
        (gc.enable if was else gc.disable)()
