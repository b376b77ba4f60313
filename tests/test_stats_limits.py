"""Parts beyond the specification limits: counts and the normal model's expected ppm.

The expected fractions are checked against scipy.stats.norm (a reference library used only in
tests) and against standard-normal table values (common practice: 0.135% beyond 3 sd on one
side, 2,700 ppm on both; 3.4 ppm beyond 4.5 sd on one side).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats as sps

from verify.stats.limits import beyond_limits, normal_ppm_beyond


def test_counts_are_strict_and_per_side():
    # a value on a limit is within it (common practice for drawing tolerances)
    r = beyond_limits([24.5, 24.4, 26.5, 26.51, 26.6, 25.0], lower=24.5, upper=26.5)
    assert (r.below, r.above, r.total, r.n) == (1, 2, 3, 6)


def test_one_sided_limit_counts_one_side_only():
    r = beyond_limits([17.2, 18.0, 19.5, 21.0], lower=18.0, upper=None)
    assert (r.below, r.above) == (1, 0)
    assert r.expected_ppm_above == 0.0
    # expected below: Phi((18 - mean) / sd), from scipy.stats.norm
    v = np.array([17.2, 18.0, 19.5, 21.0])
    want = 1e6 * sps.norm.cdf(18.0, loc=v.mean(), scale=v.std(ddof=1))
    assert math.isclose(r.expected_ppm, want, rel_tol=1e-12)


def test_handbook_three_sigma_values():
    # standard normal table (common practice): P(Z < -3) = 0.00135, so 1,350 ppm per side,
    # 2,700 ppm on both; P(Z > 4.5) = 3.4e-6 (the "3.4 ppm" of a 1.5-sd-shifted 6-sd process)
    lo, hi = normal_ppm_beyond(10.0, 2.0, lower=4.0, upper=16.0)
    assert math.isclose(lo, 1349.9, abs_tol=0.05) and math.isclose(hi, 1349.9, abs_tol=0.05)
    lo, hi = normal_ppm_beyond(0.0, 1.0, lower=None, upper=4.5)
    assert lo == 0.0 and math.isclose(hi, 3.4, abs_tol=0.05)


@settings(max_examples=60, deadline=None)
@given(
    mean=st.floats(-50, 50),
    sd=st.floats(0.01, 20),
    lower_z=st.floats(-12, 1),
    width_z=st.floats(0.1, 20),
)
def test_ppm_agrees_with_scipy_norm(mean, sd, lower_z, width_z):
    lower = mean + lower_z * sd
    upper = lower + width_z * sd
    lo, hi = normal_ppm_beyond(mean, sd, lower=lower, upper=upper)
    want_lo = 1e6 * sps.norm.cdf(lower, loc=mean, scale=sd)
    want_hi = 1e6 * sps.norm.sf(upper, loc=mean, scale=sd)
    assert math.isclose(lo, want_lo, rel_tol=1e-9, abs_tol=1e-300)
    assert math.isclose(hi, want_hi, rel_tol=1e-9, abs_tol=1e-300)


def test_model_uses_sample_mean_and_sd():
    rng = np.random.default_rng(7)
    v = rng.normal(25.0, 0.4, 60)
    r = beyond_limits(v, lower=24.0, upper=26.5)
    m, s = v.mean(), v.std(ddof=1)
    want = 1e6 * (sps.norm.cdf(24.0, m, s) + sps.norm.sf(26.5, m, s))
    assert math.isclose(r.expected_ppm, want, rel_tol=1e-10)
    assert math.isclose(r.expected_ppm_below + r.expected_ppm_above, r.expected_ppm)


@pytest.mark.parametrize("values", [[25.0], [25.0, 25.0, 25.0], []])
def test_no_model_without_spread(values):
    r = beyond_limits(values, lower=24.0, upper=26.0)
    assert r.expected_ppm is None and r.below == 0 and r.above == 0


def test_non_finite_values_are_left_out():
    r = beyond_limits([np.nan, 30.0, 25.0, 25.5], lower=24.0, upper=26.0)
    assert r.n == 3 and r.above == 1


def test_bad_model_inputs_raise():
    with pytest.raises(ValueError):
        normal_ppm_beyond(0.0, 0.0, lower=-1.0, upper=1.0)


def _frozen_finite(a):
    """A sample as the evaluation hands it on: read-only, owning its data, known finite."""
    from verify.stats._memo import freeze
    from verify.stats.samples import finite_values

    return finite_values(freeze(np.array(a, dtype=float)))


def test_many_at_once_is_one_at_a_time_bit_for_bit():
    # the reference is beyond_limits itself, called on each sample with its own limits
    from verify.stats import _memo
    from verify.stats.limits import beyond_limits_many

    rng = np.random.default_rng(5)
    samples, lower, upper, dist = [], [], [], []
    for i in range(60):
        n = (30, 30, 12, 2, 5)[i % 5]
        v = rng.normal(10.0, 0.01 + 0.02 * (i % 3), n)
        if i % 7 == 0:
            v = np.full(n, 10.0)  # no spread: the normal model's note
        lower.append(None if i % 4 == 1 else 9.97 + 0.001 * i)
        upper.append(None if i % 4 == 2 else 10.03 - 0.0005 * i)
        if i % 3 == 1 and n > 2:  # values on a limit are within it
            v[:2] = (lower[-1] or 10.0), (upper[-1] or 10.0)
        samples.append(_frozen_finite(v) if i % 11 else v.tolist())  # a list: plain route
        dist.append("any" if i % 13 == 5 else "lognormal" if i % 17 == 3 else "normal")
    try:
        many = beyond_limits_many(samples, lower=lower, upper=upper, distribution=dist)
        one = [beyond_limits(v, lower=lo, upper=hi, distribution=d)
               for v, lo, hi, d in zip(samples, lower, upper, dist, strict=True)]
    finally:
        _memo.forget()
    assert len(many) == len(one) == 60
    assert sum(r.total for r in one) > 0 and sum(r.note is not None for r in one) > 0
    for a, b in zip(many, one, strict=True):
        assert vars(a) == vars(b)  # equal floats: the same bits (none is NaN here)
        assert [type(x) for x in vars(a).values()] == [type(x) for x in vars(b).values()]


def test_many_at_once_reads_a_remembered_mean_and_sd_as_mean_sd_does():
    # the batch reads each sample's remembered summary (the memo's, by one lookup) where it is
    # known: the plain route is beyond_limits, whose mean_sd recalls the same tuple
    from verify.stats import _memo
    from verify.stats.core import mean_sd
    from verify.stats.limits import beyond_limits_many

    rng = np.random.default_rng(8)
    samples = [_frozen_finite(rng.normal(10.0, 0.02, 20)) for _ in range(6)]
    try:
        for v in samples[::2]:
            mean_sd(v)  # remembered for half of them: the others' computed in the batch
        lower, upper = [9.97] * 6, [10.02] * 6
        many = beyond_limits_many(samples, lower=lower, upper=upper, distribution=["normal"] * 6)
        _memo.forget()
        one = [beyond_limits(v, lower=9.97, upper=10.02) for v in samples]
    finally:
        _memo.forget()
    assert [vars(a) for a in many] == [vars(b) for b in one]
    assert sum(r.total for r in one) > 0
