"""The process summaries computed together (``evaluate_gather.summarize``) against one stream
at a time.

The reference route is the plain one of this package: each stream's own ``_summary`` with its
extremes reduced alone (``np.minimum.reduce`` / ``np.maximum.reduce``) and its parts beyond
the limits from ``stats.limits.beyond_limits``; the summaries must be equal field for field,
every float the same bits.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from verify import evaluate_gather as eg
from verify.data import load_measurements
from verify.spec import load_spec
from verify.stats import _memo
from verify.stats.limits import beyond_limits
from verify.stats.samples import finite_values


def _same(a, b) -> bool:
    """Equal, with NaN equal to NaN and 0.0 told apart from -0.0."""
    if isinstance(a, float) and isinstance(b, float):
        return (math.isnan(a) and math.isnan(b)) or (a == b and math.copysign(1, a)
                                                     == math.copysign(1, b))
    return type(a) is type(b) and a == b


@pytest.mark.parametrize("name", ["bushing-supplier", "filler-paired", "housing-resin"])
def test_summaries_together_equal_each_alone_on_demo_specs(demo, name):
    spec = load_spec(demo / "specs" / f"{name}.yaml")
    meas = load_measurements(spec)
    try:
        drafts = [eg.gather(spec, meas, ch, False) for ch in spec.characteristics
                  if not ch.pass_fail]
        for d in drafts:  # known finite, as the evaluation's batched pass leaves them
            for st in d.shown.values():
                if st.parts.size:
                    finite_values(st.parts)
        eg.summarize(drafts)
        compared = 0
        for d in drafts:
            assert list(d.processes) == list(d.shown)
            for name_, st in d.shown.items():
                ch = d.ch
                beyond = None if ch.lower is None and ch.upper is None else beyond_limits(
                    st.parts, lower=ch.lower, upper=ch.upper, distribution=ch.distribution)
                alone = eg._summary(name_, st.values, st.lots, int(st.parts.size), st.parts,
                                    beyond)
                got = d.processes[name_]
                for field, want in vars(alone).items():
                    have = getattr(got, field)
                    if field == "beyond_limits" and want is not None:
                        assert vars(have) == vars(want)
                    else:
                        assert _same(have, want), (ch.name, name_, field, have, want)
                compared += 1
        assert compared >= 2 * len(drafts) - 1
    finally:
        _memo.forget()


def test_extremes_together_are_each_samples_own_signed_zeros_and_nan_included():
    rng = np.random.default_rng(3)
    samples = [rng.normal(0.0, 1.0, 8) for _ in range(6)]
    samples[1] = np.abs(samples[1])
    samples[1][:2] = (0.0, -0.0)  # the minimum is a zero: which one is the row's own
    samples[2] = np.abs(samples[2])
    samples[2][3] = 0.0
    samples[3][5] = np.nan
    samples[4] = -np.abs(samples[4])
    samples[4][0] = -0.0  # the maximum is a zero
    samples += [np.array([-0.0, 0.0, 1.0]), np.array([0.0, -0.0, 1.0]), np.array([]),
                np.array([2.0]), np.arange(3)]  # an int sample: not reduced together
    got = eg._extremes(samples)
    for v, e in zip(samples, got, strict=True):
        if e is None:  # left to the summary's own reduction
            continue
        assert _same(e[0], float(np.minimum.reduce(v)))
        assert _same(e[1], float(np.maximum.reduce(v)))
    assert got[0] is not None and got[5] is not None and got[8] is None and got[10] is None
    assert got[1] is None and got[3] is None and got[4] is None  # a zero or NaN extreme
