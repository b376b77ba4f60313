"""Only the statistics layer's typed "these data cannot support it" errors become a HOLD
"cannot be computed"; any other exception is a fault of verify and must fail loudly.

The degenerate cases are built so that the statistics layer itself raises (zero spread, a
single part, no old values); the faults are simulated by replacing one statistics function with
one that raises, as a wrong call into the layer would. The rule is issue 12, item 4.
"""

from __future__ import annotations

import numpy as np
import pytest

from verify.data import load_measurements
from verify.evaluate import evaluate
from verify.spec import load_spec
from verify.stats import capability, rates, spread, tolerance, ttests
from verify.stats.errors import DegenerateDataError, NotApplicableError

CHECKS = ("      target: {}\n      shift: {}\n      spread: {}\n      capability: {min: 1.0}\n"
          "      conformance: {}\n")


def _evaluate(tmp_path, old, new, *, checks=CHECKS, limits="[9.0, 11.0]", target=10.0):
    rows = ["lot,process,x"]
    rows += [f"O{i % 3},old,{v}" for i, v in enumerate(old)]
    rows += [f"N{i % 3},new,{v}" for i, v in enumerate(new)]
    (tmp_path / "d.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (tmp_path / "s.yaml").write_text(
        "format: verify/1\ntitle: errors\ndata:\n  file: d.csv\n  lot: lot\n"
        "  process: process\n  old: old\n  new: new\ncharacteristics:\n  - name: x\n"
        f"    unit: mm\n    target: {target}\n    limits: {limits}\n    checks:\n" + checks,
        encoding="utf-8")
    spec = load_spec(tmp_path / "s.yaml")
    return evaluate(spec, load_measurements(spec))


def _values(seed=3, n=20):
    rng = np.random.default_rng(seed)
    return [round(float(v), 4) for v in 10 + rng.normal(0, 0.1, n)]


def test_zero_spread_is_a_hold_that_says_why(tmp_path):
    # every new part alike: no standard error, no sd ratio, no capability index exists
    ev = _evaluate(tmp_path, _values(), [10.0] * 12)
    checks = {k.check: k for k in ev.characteristic("x").checks}
    for name in ("target", "shift", "spread", "capability"):
        assert checks[name].outcome == "HOLD", name
        assert checks[name].reason.startswith("cannot be computed: "), name
    assert "zero spread" in checks["shift"].reason
    # the spread test could not be computed: listed apart, not counted in the family
    assert "x: spread" in ev.family_excluded


def test_a_degenerate_error_from_stats_becomes_the_hold_reason(tmp_path, monkeypatch):
    def degenerate(*args, **kwargs):
        raise DegenerateDataError("made degenerate for this test")

    # the location checks' effects: from the values, or (samples checked already: the
    # target's with its summary remembered, the shift's two checked by the draft itself) from
    # their summaries
    monkeypatch.setattr(ttests, "effect", degenerate)
    monkeypatch.setattr(ttests, "one_sample_effect", degenerate)
    monkeypatch.setattr(ttests, "two_sample_effect", degenerate)
    ev = _evaluate(tmp_path, _values(1), _values(2))
    checks = {k.check: k for k in ev.characteristic("x").checks}
    assert checks["shift"].outcome == "HOLD"
    assert checks["shift"].reason == "cannot be computed: made degenerate for this test"
    assert checks["target"].reason == "cannot be computed: made degenerate for this test"
    assert checks["spread"].reason != checks["shift"].reason  # the others still computed


def test_a_not_applicable_error_from_stats_becomes_the_hold_reason(tmp_path, monkeypatch):
    def not_applicable(*args, **kwargs):
        raise NotApplicableError("outside the method's domain for this test")

    monkeypatch.setattr(tolerance, "normal_tolerance", not_applicable)
    ev = _evaluate(tmp_path, _values(1), _values(2))
    k = next(k for k in ev.characteristic("x").checks if k.check == "conformance")
    assert (k.outcome, k.reason) == ("HOLD", "cannot be computed: outside the method's domain "
                                             "for this test")


@pytest.mark.parametrize("module, name", [
    # (the target check's effect of gathered values, whose summary is remembered, comes from
    # ttests.one_sample_effect; ttests.effect serves the values without one)
    (ttests, "one_sample_effect"), (ttests, "two_sample_effect"), (spread, "f_test"),
    (capability, "capability"),
    (tolerance, "normal_tolerance"),
])
@pytest.mark.parametrize("error", [TypeError, ValueError, KeyError])
def test_a_fault_in_a_check_propagates(tmp_path, monkeypatch, module, name, error):
    def broken(*args, **kwargs):
        raise error("a wrong call into the statistics layer")

    monkeypatch.setattr(module, name, broken)
    with pytest.raises(error, match="wrong call"):
        _evaluate(tmp_path, _values(1), _values(2))


@pytest.mark.parametrize("error", [TypeError, ValueError])
def test_a_fault_in_a_pass_fail_check_propagates(tmp_path, monkeypatch, error):
    def broken(*args, **kwargs):
        raise error("a wrong call into the statistics layer")

    monkeypatch.setattr(rates, "clopper_pearson", broken)
    rows = ["lot,process,leak"] + [f"L{i % 3},new,{'fail' if i == 4 else 'pass'}"
                                   for i in range(60)]
    (tmp_path / "d.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (tmp_path / "s.yaml").write_text(
        "format: verify/1\ntitle: errors\ndata:\n  file: d.csv\n  lot: lot\n"
        "  process: process\n  old: old\n  new: new\ncharacteristics:\n  - name: leak\n"
        "    kind: pass-fail\n    unit: parts\n    fail: [fail]\n    pass: [pass]\n    checks:\n"
        "      rate: {max: 0.1}\n", encoding="utf-8")
    spec = load_spec(tmp_path / "s.yaml")
    with pytest.raises(error, match="wrong call"):
        evaluate(spec, load_measurements(spec))
