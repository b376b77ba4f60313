"""The drafts and their finishing share work they used to repeat; each shortcut gives exactly
what its plain route gives (bit for bit: floats by their exact binary value).

The plain routes are the public functions of ``verify.stats`` and the arithmetic the shortcut
replaces: the interval of a location check with a margin against ``confidence_interval`` and
its critical value against ``t_quantile``, the bounds of the F-test's two-sided interval
against ``confidence_interval``, ``fmt``'s default digits against ``format`` with its spec.
"""

from __future__ import annotations

import dataclasses
import math
import sys
import tempfile
from pathlib import Path

import numpy as np
import pytest


def _hex(values):
    return [(type(v), v.hex() if isinstance(v, float) else v) for v in values]


def _bench_spec(folder: Path, k: int, seed: int):
    sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))
    from bench_evaluate import make_spec

    from verify.spec import load_spec

    return load_spec(make_spec(folder, k, seed=seed))


# 0.05, 0.1 and 0.025 give 0.5 + (1 - 2 alpha) / 2 == 1 - alpha as floats (the draft reuses
# the critical value's quantile); 0.01001 and 0.01009 do not (it takes two_sided_bounds)
@pytest.mark.parametrize("alpha", [0.05, 0.1, 0.025, 0.01001, 0.01009])
def test_location_margin_interval_and_critical_value_are_the_plain_routes(alpha):
    """Each location check with a margin: its interval is confidence_interval's at the
    level 1 - 2 alpha and its critical value t_quantile(1 - alpha), on the same effect, for
    alphas where the interval's quantile probability is the critical value's float and
    where it is not."""
    from verify.data import load_measurements
    from verify.evaluate import evaluate
    from verify.stats.core import confidence_interval, t_quantile

    with tempfile.TemporaryDirectory() as tmp:
        spec = dataclasses.replace(_bench_spec(Path(tmp), 6, seed=31), alpha=alpha)
        chars = evaluate(spec, load_measurements(spec)).characteristics
    seen = 0
    for c in chars:
        for res in c.checks:
            if res.check not in ("target", "shift"):
                continue
            ci = confidence_interval(res.estimate, res.standard_error, res.df,
                                     level=1 - 2 * alpha)
            assert _hex((res.ci_low, res.ci_high, res.ci_level)) == _hex(
                (ci.low, ci.high, ci.level))
            assert res.critical_value.hex() == t_quantile(1.0 - alpha, res.df).hex()
            seen += 1
    assert seen == 12


_SAMPLES = [
    (np.array([1.0, 2.0, 3.0, 4.0]), np.array([1.0, 3.0, 5.0, 7.0])),
    (np.array([10.01, 9.98, 10.0, 10.03, 9.99]), np.array([10.0, 10.02, 9.97, 10.05])),
    (np.random.default_rng(5).normal(0, 1, 30), np.random.default_rng(6).normal(0, 2, 41)),
    (np.array([0.0, 1e-9]), np.array([5.0, 7.0, 1e3])),
]


@pytest.mark.parametrize("level", [0.9, 0.95, 0.5, 1 - 2 * 0.05 / 7, 1 - 2 * 0.01001, 1e-9])
@pytest.mark.parametrize("old, new", _SAMPLES)
def test_f_test_two_sided_bounds_are_the_two_sided_interval_s(old, new, level):
    """VarianceRatioResult.two_sided_bounds (what the spread check's complete reads) is the
    (low, high) of confidence_interval(level, alternative="two-sided")."""
    from verify.stats import spread

    for alternative in ("greater", "two-sided", "less"):
        f = spread.f_test(old, new, alternative=alternative)
        ci = f.confidence_interval(level, alternative="two-sided")
        assert _hex(f.two_sided_bounds(level)) == _hex((ci.low, ci.high))


@pytest.mark.parametrize("method", ["none", "holm", "bonferroni"])
def test_spread_check_interval_is_the_f_tests_at_the_family_level(method):
    """The spread check's interval, completed at the family's level 1 - 2 alpha / m (m under
    holm or bonferroni), is the F-test's two-sided confidence_interval at that level."""
    from verify.data import load_measurements
    from verify.evaluate import evaluate
    from verify.stats import spread

    with tempfile.TemporaryDirectory() as tmp:
        spec = dataclasses.replace(_bench_spec(Path(tmp), 5, seed=32), multiplicity=method)
        meas = load_measurements(spec)
        ev = evaluate(spec, meas)
    m = len(ev.family)
    alpha = spec.alpha / m if method != "none" else spec.alpha
    level = 1 - 2 * alpha
    for c in ev.characteristics:
        (res,) = [r for r in c.checks if r.check == "spread"]
        rows = meas.table[meas.table["characteristic"] == c.name]
        old = rows.loc[rows["process"] == "old", "value"].to_numpy(dtype=float)
        new = rows.loc[rows["process"] == "new", "value"].to_numpy(dtype=float)
        f = spread.f_test(old, new, alternative="greater")
        ci = f.confidence_interval(level, alternative="two-sided")
        assert _hex((res.ci_low, res.ci_high, res.ci_level, res.estimate)) == _hex(
            (ci.low, ci.high, ci.level, f.estimate))


_NUMBERS = [0.001384, 1.094e-05, -0.0123, 12.5, -12.5, 1e-30, 3.0, 123456.789, 0.99995,
            9.99951, 1e15, -2.5e-13, 5e-324, 1.7976931348623157e308, math.nan, 3, -7, True,
            np.float64(0.0042), np.float64(-1.5e-6), np.float32(0.1), np.int64(12345678)]


@pytest.mark.parametrize("x", _NUMBERS)
def test_fmt_default_digits_is_the_formatted_spec(x):
    """fmt(x) formats with ".4g" directly: the text of format(x, ".4g"), which fmt(x, d)
    for any other d gives with ".{d}g"."""
    from verify.decide import fmt

    assert fmt(x) == format(x, ".4g") == f"{x:.{4}g}"
    assert fmt(x, 4) == fmt(x)
    for d in (1, 3, 6, 17, 20):
        assert fmt(x, d) == f"{x:.{d}g}"


@pytest.mark.parametrize("check", ["target", "shift"])
@pytest.mark.parametrize("side, low, high", [("two-sided", -0.02, 0.02), ("lower", -0.5, 1.5),
                                             ("upper", -0.01, 0.03)])
@pytest.mark.parametrize("pvalue", [0.2, 0.01, 3e-7, 0.05])
@pytest.mark.parametrize("ci", [(-0.001384, 0.0123), (-0.9, -0.6), (0.04, 0.07), (0.0, 1e-5)])
def test_margin_rule_outcome_reason_is_its_verdicts(check, side, low, high, pvalue, ci):
    """The location draft reads MarginRule.outcome_reason: the outcome and reason of the
    Verdict that decide gives for the same arguments."""
    from verify.checks.location.rule import MarginRule

    rule = MarginRule(check)
    v = rule.decide(pvalue=pvalue, alpha=0.05, low=low, high=high, ci=ci, unit="mm", side=side)
    assert rule.outcome_reason(pvalue, 0.05, low, high, ci, "mm", side) == (v.outcome, v.reason)


@pytest.mark.parametrize("judge", ["estimate", "lower_bound"])
@pytest.mark.parametrize("cpk, lower_bound", [(1.5, 1.2), (1.1, 0.9), (2.0, 1.4), (1.4, None),
                                              (-0.3, -0.5)])
@pytest.mark.parametrize("index, confidence", [("Cpk", 0.95), ("Ppk", 0.9)])
def test_capability_rule_outcome_reason_is_its_verdicts(judge, cpk, lower_bound, index,
                                                        confidence):
    """The capability draft reads CapabilityRule.outcome_reason: the outcome and reason of the
    Verdict that decide gives for the same arguments."""
    from verify.checks.capability.rule import CAPABILITY

    v = CAPABILITY.decide(cpk=cpk, lower_bound=lower_bound, min_cpk=1.33, index=index,
                          judge=judge, confidence=confidence)
    assert CAPABILITY.outcome_reason(cpk, lower_bound, 1.33, index, judge, confidence) == (
        v.outcome, v.reason)
