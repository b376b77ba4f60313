"""Work the drafts and diagnostics no longer repeat gives exactly what the plain routes give.

Each shortcut here reads an answer the evaluation holds already (margins and an effect checked
when they were made, the lots of a layout looked at once, a result's fields computed without
its object); the reference is the plain public route of ``verify.stats`` or ``verify.decide``,
and the comparison is bit for bit: every field's type and, for floats, its exact binary value.
"""

from __future__ import annotations

import math
import re
import tempfile
from pathlib import Path

import numpy as np
import pytest

from tests.helpers_bits import field_bits
from verify.stats import _memo, equivalence
from verify.stats.errors import DegenerateDataError, NotApplicableError


def _hex(values):
    return [(type(v), v.hex() if isinstance(v, float) else v) for v in values]


@pytest.mark.parametrize("low, high", [(-0.02, 0.02), (-0.5, 1.5), (0.1, 0.3), (-1e-300, 1e300)])
@pytest.mark.parametrize("estimate, se, df", [
    (0.001, 0.002, 57.3), (-0.3, 0.2, 20.0), (0.0, 1e-9, 29.0), (5.0, 0.5, math.inf),
    (0.019999, 0.0001, 2.5), (-7e5, 3e4, 1.0)])
def test_tost_sides_are_the_fields_of_tost_from_estimate(estimate, se, df, low, high):
    """equivalence.tost_sides gives (statistic_lower, statistic_upper, p_lower, p_upper) of
    tost_from_estimate's result, and its pvalue and statistic follow from them as the
    location draft takes them."""
    r = equivalence.tost_from_estimate(estimate, se, df, low=low, high=high)
    t_lo, t_hi, p_lo, p_hi = equivalence.tost_sides(estimate, se, df, low, high)
    assert _hex((t_lo, t_hi, p_lo, p_hi)) == _hex(
        (r.statistic_lower, r.statistic_upper, r.p_lower, r.p_upper))
    assert max(p_lo, p_hi).hex() == r.pvalue.hex()
    assert (t_lo if p_lo >= p_hi else t_hi).hex() == r.statistic.hex()


@pytest.mark.parametrize("level", [0.9, 0.95, 0.8, 1 - 2 * 0.025])
@pytest.mark.parametrize("estimate, se, df", [
    (0.001, 0.002, 57.3), (-0.3, 0.2, 20.0), (5.0, 0.5, math.inf), (1e-12, 3e-13, 1.5)])
def test_two_sided_bounds_are_the_confidence_interval_s(estimate, se, df, level):
    from verify.stats.core import confidence_interval, two_sided_bounds

    ci = confidence_interval(estimate, se, df, level=level)
    assert _hex(two_sided_bounds(estimate, se, df, level)) == _hex((ci.low, ci.high))


_NUMBERS = [0.001384, 1.094e-05, -0.0123, 12.5, -12.5, 0.0, -0.0, 1e-30, 3.0, 123456.789,
            -0.00049999, 0.99995, 9.99951, 1e15, -2.5e-13, math.inf, -math.inf, math.nan, None,
            2, 0, -7, np.float64(0.0042), np.float64(-1.5e-6)]


@pytest.mark.parametrize("a", _NUMBERS)
@pytest.mark.parametrize("b", _NUMBERS)
def test_fmt_like_pair_is_fmt_like_of_the_two(a, b):
    """decide.fmt_like_pair formats two finite non-zero floats itself and hands anything
    else to fmt_like: the texts of fmt_like(a, b), every pair of the awkward values."""
    from verify.decide import fmt_like, fmt_like_pair

    assert list(fmt_like_pair(a, b)) == fmt_like(a, b)


def test_fmt_like_pair_on_random_intervals():
    from verify.decide import fmt_like, fmt_like_pair

    rng = np.random.default_rng(5)
    for _ in range(3000):
        centre = float(rng.normal(0.0, 10.0 ** rng.integers(-9, 9)))
        half = abs(float(rng.normal(0.0, 10.0 ** rng.integers(-12, 9))))
        pair = (centre - half, centre + half)
        assert list(fmt_like_pair(*pair)) == fmt_like(*pair)


def _lot_samples():
    rng = np.random.default_rng(31)
    yield rng.normal(10.0, 0.01, 30), tuple(f"L{i // 10}" for i in range(30))
    yield rng.normal(-3.0, 2.0, 17), tuple("abcab"[i % 5] for i in range(17))
    yield np.round(rng.normal(1e6, 3.0, 40), 1), tuple(str(i % 7) for i in range(40))
    yield rng.normal(0.0, 1.0, 6), ("a", "b", "c", "d", "e", "f")  # refused: no lot of 2
    yield rng.normal(0.0, 1.0, 5), ("a",) * 5  # refused: one lot
    yield np.array([1.0, 1.0, 2.0, 2.0]), ("a", "a", "b", "b")  # refused: no variation within


@pytest.mark.parametrize("values, lots", list(_lot_samples()))
def test_lot_effect_with_its_lots_remembered_is_the_plain_route(values, lots):
    """lot_effect remembers what the lots alone give (their count, sizes and labels) with
    their read-only codes: every later sample in those lots, read-only or not, gets the result
    (or the error) of the plain route, which looks at the lots each time."""
    from verify.stats.lot_effect import lot_effect

    plain = values.copy()  # not read-only: nothing remembered of it
    try:
        want = lot_effect(plain, list(lots))  # a list: its codes are never remembered
    except (NotApplicableError, DegenerateDataError) as err:
        for x in (_memo.freeze(values.copy()), _memo.freeze(values * 2.0), values.copy()):
            with pytest.raises(type(err), match=re.escape(str(err))):
                lot_effect(x, lots)
        _memo.forget()
        return
    first, second = _memo.freeze(values.copy()), _memo.freeze(values.copy())
    # the lots looked at and remembered, then read back
    assert field_bits(lot_effect(first, lots)) == field_bits(want)
    assert field_bits(lot_effect(second, lots)) == field_bits(want)  # remembered
    assert field_bits(lot_effect(values.copy(), lots)) == field_bits(want)  # a writeable sample
    _memo.forget()


def test_lot_effect_lots_remembered_per_layout_of_lots():
    """Samples in different lots never share what one layout of lots gave."""
    from verify.stats.lot_effect import lot_effect

    rng = np.random.default_rng(8)
    x = _memo.freeze(rng.normal(0.0, 1.0, 12))
    y = _memo.freeze(rng.normal(0.0, 1.0, 12))
    a = tuple("aabbccaabbcc")
    b = tuple("xxxxyyyyzzzw")
    got = (lot_effect(x, a), lot_effect(y, b))
    _memo.forget()
    want = (lot_effect(x.copy(), list(a)), lot_effect(y.copy(), list(b)))
    assert [field_bits(r) for r in got] == [field_bits(r) for r in want]
    _memo.forget()


@pytest.mark.parametrize("tolerance", [None, 0.1, 2.0, 1e-300, 1, np.float64(0.5)])
def test_resolution_of_remembered_is_the_joined_resolution(tolerance):
    """resolution_of reads the batch's answer for exactly its samples (the same objects in
    order) and computes the joined samples otherwise: both give resolution() of the values
    joined end to end."""
    from verify.stats import batch
    from verify.stats.resolution import resolution, resolution_of

    rng = np.random.default_rng(12)
    rows = [tuple(_memo.freeze(np.round(rng.normal(10.0, 0.01, 30), 4)) for _ in range(2))
            for _ in range(3)]
    batch.prefetch([], joined=rows)
    for old, new in rows:
        assert _memo.recall("resolution", old) is not None
        want = resolution(np.concatenate((old, new)), tolerance=tolerance)
        assert field_bits(resolution_of((old, new), tolerance=tolerance)) == field_bits(want)
        # other objects than those remembered: computed, not read
        other = new.copy()
        assert field_bits(resolution_of((old, other), tolerance=tolerance)) == field_bits(want)
        assert field_bits(resolution_of((old,), tolerance=tolerance)) == field_bits(
            resolution(old, tolerance=tolerance))
        assert field_bits(resolution_of((old, new, new), tolerance=tolerance)) == field_bits(
            resolution(np.concatenate((old, new, new)), tolerance=tolerance))
    _memo.forget()


@pytest.mark.parametrize("tolerance", [0.0, -1.0, math.nan, math.inf, -math.inf, 0, -2])
def test_resolution_refuses_a_tolerance_as_before(tolerance):
    from verify.stats.resolution import resolution_of

    with pytest.raises(ValueError, match=re.escape(
            f"tolerance must be a positive finite number, not {tolerance}")):
        resolution_of((np.array([1.0, 2.0]),), tolerance=tolerance)


def _bench_results():
    """The benchmark layout's characteristics, evaluated (each location check with a margin:
    an equivalence test)."""
    import sys

    sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))
    from bench_evaluate import make_spec

    from verify.data import load_measurements
    from verify.evaluate import evaluate
    from verify.spec import load_spec

    with tempfile.TemporaryDirectory() as tmp:
        spec = load_spec(make_spec(Path(tmp), 12, seed=77))
        return spec, evaluate(spec, load_measurements(spec)).characteristics


def test_location_equivalence_draft_is_the_plain_tost_and_interval():
    """The location draft takes the TOST's statistics and p-values from tost_sides and the
    interval's bounds from two_sided_bounds: every field they fill is that of
    tost_from_estimate and confidence_interval on the same effect."""
    from verify.stats.core import confidence_interval, t_quantile

    spec, chars = _bench_results()
    seen = 0
    for c in chars:
        for res in c.checks:
            if res.check not in ("target", "shift") or res.alternative != "equivalence":
                continue
            low, high = res.margin
            r = equivalence.tost_from_estimate(res.estimate, res.standard_error, res.df,
                                               low=low, high=high, method=res.method)
            ci = confidence_interval(res.estimate, res.standard_error, res.df,
                                     level=1 - 2 * spec.alpha)
            d = res.details
            assert _hex((res.p_value, res.statistic, d.p_lower, d.p_upper, d.statistic_lower,
                         d.statistic_upper, res.ci_low, res.ci_high, res.ci_level)) == _hex(
                (r.pvalue, r.statistic, r.p_lower, r.p_upper, r.statistic_lower,
                 r.statistic_upper, ci.low, ci.high, ci.level))
            assert res.method.startswith("TOST (")
            assert res.critical_value.hex() == t_quantile(1.0 - spec.alpha, res.df).hex()
            seen += 1
    assert seen == 24


_ODD_VALUES = [1.5, -0.0, 0.0, 1e308, 5e-324, math.inf, -math.inf, math.nan, None, 3, -2, True,
               np.float64(2.5), np.float64(math.nan), np.float64(math.inf), np.int64(7),
               np.float32(0.1)]


@pytest.mark.parametrize("x", _ODD_VALUES)
def test_finite_of_a_float_is_its_plain_route(x):
    """drafting.finite returns a finite float as it is: what float(x) and the finiteness
    test give; any other value goes through them."""
    from verify.checks.drafting import finite

    want = None if x is None else float(x) if math.isfinite(float(x)) else None
    got = finite(x)
    assert type(got) is type(want) and (got is None or got.hex() == want.hex())


@pytest.mark.parametrize("x", _ODD_VALUES)
def test_capability_limit_of_a_float_is_its_plain_route(x):
    """capability._limit returns a finite float as it is, what its float() and finiteness
    test give; any other value goes through them (and a non-finite one is refused)."""
    from verify.stats.capability import _limit

    if x is None:
        assert _limit(x, "lower") is None
        return
    v = float(x)
    if not math.isfinite(v):
        with pytest.raises(ValueError, match=re.escape(
                f"lower must be a finite number or None, not {x}")):
            _limit(x, "lower")
        return
    got = _limit(x, "lower")
    assert type(got) is float and got.hex() == v.hex()


def test_one_sample_effect_by_position_is_the_keyword_route():
    """ttests.effect builds the one-sample Effect by position: each field where the keyword
    route puts it."""
    from verify.stats import ttests
    from verify.stats.core import mean_sd

    x = np.array([10.01, 9.98, 10.03, 10.0, 9.97, 10.02])
    n, m, s = mean_sd(x)
    want = ttests._finish("one-sample", m - 10.0, s / math.sqrt(n), float(n - 1), n, None, s,
                          mean_new=m, sd_new=s, target=10.0)
    assert field_bits(ttests.effect("one-sample", x, target=10.0)) == field_bits(want)


@pytest.mark.parametrize("frozen", [False, True])
@pytest.mark.parametrize("values, lots", list(_lot_samples()))
def test_lot_effect_figures_are_lot_effect_s(values, lots, frozen):
    """lot_effect_figures gives (statistic, pvalue, icc, n_lots) of lot_effect's result, or its
    error; the diagnostic names lot_effect's method."""
    from verify.stats.lot_effect import METHOD, lot_effect, lot_effect_figures

    x = _memo.freeze(values.copy()) if frozen else values.copy()
    try:
        r = lot_effect(values.copy(), list(lots))
    except (NotApplicableError, DegenerateDataError) as err:
        with pytest.raises(type(err), match=re.escape(str(err))):
            lot_effect_figures(x, lots)
        _memo.forget()
        return
    assert _hex(lot_effect_figures(x, lots)) == _hex((r.statistic, r.pvalue, r.icc, r.n_lots))
    assert r.method == METHOD
    _memo.forget()


def _one_samples():
    rng = np.random.default_rng(41)
    yield rng.normal(10.0, 0.01, 30), 10.0
    yield rng.normal(10.0, 0.01, 30), 10
    yield np.round(rng.normal(5.0, 0.1, 9), 2), -3.5
    yield np.array([1.0, 2.0]), 0.0
    yield rng.normal(0.0, 1e140, 101), 1e300
    yield np.array([2.0, 2.0, 2.0]), 1.0  # refused: no spread
    yield np.array([1.0]), 1.0  # refused: one value
    yield np.array([1.0, 2.0, 1e200]), 1.0  # refused: too large
    yield np.array([1.0, np.nan, 2.0]), 1.0  # refused: not finite
    yield np.array([1.0, 2.0, 4.0]), math.nan  # refused: the target
    yield np.array([1.0, 2.0, 4.0]), np.float64(2.0)


@pytest.mark.parametrize("frozen", [False, True])
@pytest.mark.parametrize("values, target", list(_one_samples()))
def test_one_sample_draft_effect_equals_ttests_effect(values, target, frozen):
    """The target check's draft builds the effect of a sample whose summary is remembered
    from that summary (ttests.one_sample_effect): the Effect, or the error, of
    ttests.effect("one-sample", ...) on the same sample."""
    from types import SimpleNamespace

    from verify.checks.drafting import Comparison, Stream
    from verify.checks.location import compute as location
    from verify.stats import ttests
    from verify.stats.core import mean_sd

    x = _memo.freeze(values.copy()) if frozen else values.copy()
    try:
        mean_sd(x)  # remembered where x is frozen, as the evaluation's batched pass does
    except DegenerateDataError:
        pass
    data = Comparison(reference=Stream("old", None, None), candidate=Stream("new", x, x))
    ch = SimpleNamespace(target=target)
    try:
        want = ttests.effect("one-sample", values.copy(), target=target)
    except (ValueError, DegenerateDataError) as err:
        with pytest.raises(type(err), match=re.escape(str(err))):
            location._effect("one-sample", ch, data)
        _memo.forget()
        return
    assert field_bits(location._effect("one-sample", ch, data)) == field_bits(want)
    _memo.forget()
