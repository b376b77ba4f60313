"""The drafts' and diagnostics' shortcuts give exactly what the routes they replaced give.

Each shortcut here skips work whose answer the caller already holds (a check made a line
earlier, a summary already read); the reference is the plain public route of
``verify.stats`` (itself checked against published values in tests/test_stats_*.py), and the
comparison is bit for bit: every field's type and, for floats, its exact binary value.
"""

from __future__ import annotations

import dataclasses
import math
import re

import numpy as np
import pytest

from tests.helpers_bits import field_bits
from verify.checks.drafting import Comparison, Stream
from verify.checks.location import compute as location
from verify.stats import _memo, equivalence, ttests
from verify.stats.core import mean_sd, require_spread
from verify.stats.errors import DegenerateDataError


def _pairs():
    rng = np.random.default_rng(24)
    yield rng.normal(10.0, 0.01, 30), rng.normal(10.002, 0.01, 30)
    yield rng.normal(10.0, 0.01, 30), rng.normal(10.0, 0.03, 12)
    yield np.round(rng.normal(5.0, 0.1, 9), 2), np.round(rng.normal(5.1, 0.1, 40), 2)
    yield np.array([1.0, 2.0]), np.array([3.0, 5.0])
    yield rng.normal(0.0, 1e6, 101), rng.normal(1e5, 3e6, 7)
    yield np.array([1e-300, 2e-300, 3e-300]), np.array([1e-300, 4e-300])  # refused
    yield np.array([1.0, np.nan, 2.0]), np.array([1.0, 2.0, 4.0])  # refused
    yield np.array([1.0, 2.0, 4.0]), np.array([1.0, 2.0, 1e200])  # refused


def _plain_two_sample_effect(design, old, new):
    """The draft's earlier route: each sample's spread checked, then ttests.effect."""
    n_old, _, sd_old = mean_sd(old) if old.size else (0, 0.0, math.nan)
    require_spread(n_old, sd_old, "old values")
    n_new, _, sd_new = mean_sd(new) if new.size else (0, 0.0, math.nan)
    require_spread(n_new, sd_new, "new values")
    return ttests.effect(design, new, old)


@pytest.mark.parametrize("design", ["welch", "pooled"])
@pytest.mark.parametrize("frozen", [False, True])
@pytest.mark.parametrize("old, new", list(_pairs()))
def test_two_sample_draft_effect_equals_the_plain_route(design, frozen, old, new):
    """The location draft checks each sample's spread itself and then builds the effect from
    the summaries it read (ttests.two_sample_effect): the Effect, or the error, of its earlier
    route through ttests.effect."""
    if frozen:
        old, new = _memo.freeze(old.copy()), _memo.freeze(new.copy())
    data = Comparison(reference=Stream("old", old, old), candidate=Stream("new", new, new))
    try:
        want = _plain_two_sample_effect(design, old, new)
    except DegenerateDataError as err:
        with pytest.raises(DegenerateDataError, match=re.escape(str(err))):
            location._effect(design, None, data)
        return
    assert field_bits(location._effect(design, None, data)) == field_bits(want)
    _memo.forget()


@pytest.mark.parametrize("bad", [np.array([2.0, 2.0, 2.0]), np.array([1.0]), np.array([])])
def test_two_sample_draft_effect_refuses_a_sample_without_spread(bad):
    """The draft's own checks come first, naming the process (unchanged by the shortcut)."""
    good = np.array([1.0, 2.0, 4.0])
    for old, new, which in ((bad, good, "old values"), (good, bad, "new values")):
        data = Comparison(reference=Stream("old", old, old), candidate=Stream("new", new, new))
        with pytest.raises(DegenerateDataError, match=which):
            location._effect("welch", None, data)


def test_two_sample_effect_is_for_two_samples_only():
    with pytest.raises(ValueError, match="welch or pooled"):
        ttests.two_sample_effect("paired", 3, 1.0, 1.0, 3, 1.0, 1.0)


def _checked_margins(low, high):
    """check_margins' checks, every one made: each margin a finite number, low < high."""
    from verify.stats._checks import finite

    lo, hi = finite(low, "low"), finite(high, "high")
    if not lo < hi:
        raise ValueError(f"the equivalence margins must satisfy low < high, got ({lo}, {hi})")
    return lo, hi


def _plain_tost(estimate, se, df, *, low, high, method="TOST"):
    """tost_from_estimate's earlier route: the margins through every check, the result
    built by keyword."""
    from verify.stats.core import check_se_df, t_cdf, t_sf

    est = equivalence._estimate(estimate)
    check_se_df(se, df)
    lo, hi = _checked_margins(low, high)
    t_lo = (est - lo) / se
    t_hi = (est - hi) / se
    p_lo = t_sf(t_lo, df)
    p_hi = t_cdf(t_hi, df)
    return equivalence.EquivalenceResult(
        method=method, estimate=est, standard_error=float(se), df=float(df), low=lo, high=hi,
        statistic_lower=float(t_lo), statistic_upper=float(t_hi), p_lower=p_lo, p_upper=p_hi,
        pvalue=max(p_lo, p_hi))


@pytest.mark.parametrize("low, high", [
    (-0.02, 0.02), (-0.5, 1.5), (0.1, 0.3), (-1, 1), (np.float64(-0.02), np.float64(0.02)),
    (-0.0, 0.02), (0.02, -0.02), (0.02, 0.02), (float("nan"), 0.02), (-0.02, float("inf")),
    (-float("inf"), 0.02), ("-0.02", "0.02")])
@pytest.mark.parametrize("estimate, se, df", [
    (0.001, 0.002, 57.3), (-0.3, 0.2, 20.0), (0.0, 1e-9, 29.0), (5.0, 0.5, float("inf")),
    (np.float64(0.004), np.float64(0.0021), np.float64(44.9))])
def test_tost_from_estimate_equals_its_plain_route(estimate, se, df, low, high):
    """The finite float margins skip check_margins' calls (they would return them as they
    are); any other margins still go through them: the result, or the error, is the plain
    route's. (check_margins itself against its checks: the next test.)"""
    try:
        want = _plain_tost(estimate, se, df, low=low, high=high, method="TOST (x)")
    except (ValueError, DegenerateDataError) as err:
        with pytest.raises(type(err), match=re.escape(str(err))):
            equivalence.tost_from_estimate(estimate, se, df, low=low, high=high,
                                           method="TOST (x)")
        return
    got = equivalence.tost_from_estimate(estimate, se, df, low=low, high=high, method="TOST (x)")
    assert field_bits(got) == field_bits(want)


@pytest.mark.parametrize("low, high", [
    (-0.02, 0.02), (-0.5, 1.5), (0.1, 0.3), (-1, 1), (np.float64(-0.02), np.float64(0.02)),
    (-0.0, 0.02), (0.02, -0.02), (0.02, 0.02), (float("nan"), 0.02), (-0.02, float("inf")),
    (-float("inf"), 0.02), ("-0.02", "0.02"), (None, 0.02), (True, 2.0)])
def test_check_margins_equals_its_checks(low, high):
    """Finite float margins in order are returned as they are, without the calls; any others
    go through every check: the same margins (types and signs included), or the same error."""
    from verify.stats._checks import check_margins

    try:
        want = _checked_margins(low, high)
    except ValueError as err:
        with pytest.raises(ValueError, match=re.escape(str(err))):
            check_margins(low, high)
        return
    got = check_margins(low, high)
    assert repr(got) == repr(want) and [type(v) for v in got] == [type(v) for v in want]


def _lot_samples():
    rng = np.random.default_rng(31)
    yield rng.normal(10.0, 0.01, 30), tuple(f"L{i // 10}" for i in range(30))
    yield rng.normal(-3.0, 2.0, 17), tuple("abcab"[i % 5] for i in range(17))
    yield np.round(rng.normal(1e6, 3.0, 40), 1), tuple(str(i % 7) for i in range(40))
    yield rng.normal(0.0, 1e-100, 12), tuple("xy"[i % 2] for i in range(12))


@pytest.mark.parametrize("route", ["plain", "frozen", "batched"])
@pytest.mark.parametrize("values, lots", list(_lot_samples()))
def test_lot_means_are_the_numpy_sums_of_grand_and_centred_means(route, values, lots):
    """lot_effect adds the grand mean to each centred lot mean in Python floats: the same
    IEEE double additions as numpy's ``ow.grand + ow.means_centred``, bit for bit, and
    Python floats as ``.tolist()`` gives them, whether the one-way analysis is computed
    there, remembered, or made with other samples' (stats.batch)."""
    from verify.stats import batch
    from verify.stats.lot_effect import lot_effect
    from verify.stats.one_way import one_way
    from verify.stats.samples import group_codes, group_sizes

    x = values if route == "plain" else _memo.freeze(values.copy())
    if route == "batched":  # with two more samples of its length, so that the rows are stacked
        others = [_memo.freeze(values[::-1].copy()), _memo.freeze(values * 2.0)]
        batch.prefetch([], in_lots=[(x, lots)] + [(o, lots) for o in others])
    labels, codes = group_codes(lots, x.size)
    ow = one_way(x, codes, group_sizes(codes, len(labels)), refused="-")
    want = tuple((ow.grand + ow.means_centred).tolist())
    got = lot_effect(x, lots).lot_means
    assert [type(v) for v in got] == [float] * len(want)
    assert [v.hex() for v in got] == [v.hex() for v in want]
    _memo.forget()


def test_companions_hooks_remembered_are_the_registrys():
    """evaluate_diagnostics.companions looks each check name's kind and companions hook up
    once: after evaluating the demo specs every remembered pair is the registry's own
    (kind(name) and its compute hook's ``companions``, or None where it has none)."""
    from pathlib import Path

    from verify import evaluate_diagnostics
    from verify.checks import kind
    from verify.data import load_measurements
    from verify.evaluate import evaluate
    from verify.spec import load_spec

    for p in sorted((Path(__file__).resolve().parents[1] / "specs").glob("*.yaml")):
        spec = load_spec(p)
        evaluate(spec, load_measurements(spec))
    remembered = evaluate_diagnostics._COMPANIONS
    assert {"target", "shift", "spread", "capability"} <= set(remembered)
    for name, (k, fn) in remembered.items():
        assert k is kind(name)
        assert fn is getattr(kind(name).hook("compute"), "companions", None)


@pytest.mark.parametrize("lower, upper", [(9.9, 10.1), (9.9, None), (None, 10.1), (9.0, 10.2)])
@pytest.mark.parametrize("values", [
    np.array([9.98, 10.02, 9.99, 10.01, 10.0, 9.97, 10.03, 10.0]),  # centred: cpl == cpu
    np.random.default_rng(8).normal(10.02, 0.02, 30)])
def test_capability_smaller_side_is_the_minimum_of_the_sides_given(values, lower, upper):
    """capability's Cpk and Ppk: min(lo, hi) of the sides given, the value the earlier route's
    min over the sides that exist gives (the lower side kept on a tie)."""
    from verify.stats.capability import capability

    r = capability(values, lower=lower, upper=upper, target=10.0)
    for k, lo, hi in ((r.cpk, r.cpl, r.cpu), (r.ppk, r.ppl, r.ppu)):
        want = min(v for v in (lo, hi) if v is not None)
        assert k.hex() == want.hex()


@pytest.mark.parametrize("frozen", [False, True])
@pytest.mark.parametrize("old, new", list(_pairs()))
def test_f_test_reads_a_remembered_summary_as_the_plain_route_computes_it(frozen, old, new):
    """f_test reads a remembered sample's summary without checking it for finiteness again:
    the result, or the error, of mean_sd(finite_values(...)) on each sample."""
    from verify.stats import spread
    from verify.stats.samples import finite_values

    if frozen:
        old, new = _memo.freeze(old.copy()), _memo.freeze(new.copy())
        for x in (old, new):
            try:
                mean_sd(x)  # remembered, as the evaluation's batched pass leaves it
            except DegenerateDataError:
                pass

    def plain():
        n_old, _, sd_old = mean_sd(finite_values(old, "old values"))
        n_new, _, sd_new = mean_sd(finite_values(new, "new values"))
        return spread.f_test_from_stats(n_old, sd_old, n_new, sd_new, alternative="greater")

    try:
        want = plain()
    except DegenerateDataError as err:
        with pytest.raises(DegenerateDataError, match=re.escape(str(err))):
            spread.f_test(old, new, alternative="greater")
        return
    assert field_bits(spread.f_test(old, new, alternative="greater")) == field_bits(want)
    _memo.forget()


_INF, _NAN = float("inf"), float("nan")
_DFS = [0.5, 1, 2.0, 3, 7.3, 29.0, 57.31, 1e6, 1e300, np.float64(44.9), 0.0, -1.0, _INF, _NAN]
_TS = [0.0, -0.0, 1e-300, -2.0, 1.5, -8.3, 37.5, -40.0, 1e300, -_INF, _INF, _NAN,
       np.float64(-0.3), 2]


def _same(a, b):
    return type(a) is float and (a.hex() == b.hex() or (math.isnan(a) and math.isnan(b)))


@pytest.mark.parametrize("df", _DFS)
def test_t_cdf_and_t_quantile_are_the_ufuncs_floats(df):
    """t_cdf and t_quantile call scipy.special.cython_special's stdtr, stdtrit, ndtr and
    ndtri: the floats of the scipy.special ufuncs of the same names (their earlier route),
    bit for bit, edge values included; and a Python float, as float(ufunc(...)) was."""
    from scipy import special

    from verify.stats.core import t_cdf, t_quantile

    rng = np.random.default_rng(17)
    ts = [*_TS, *rng.normal(0.0, 3.0, 200).tolist()]
    for t in ts:
        want = float(special.ndtr(t) if math.isinf(df) else special.stdtr(df, t))
        assert _same(t_cdf(t, df), want), (t, df)
    if not df > 0.0 or math.isnan(df):
        return
    t_quantile.cache_clear()
    for p in [1e-300, 0.001, 0.025, 0.5, 0.9, 0.95, 0.975, 0.999999,
              *rng.uniform(0.0, 1.0, 100).tolist()]:
        want = float(special.ndtri(p) if math.isinf(df) else special.stdtrit(df, p))
        assert _same(t_quantile(p, df), want), (p, df)


@pytest.mark.parametrize("estimate, se, df", [
    (0.001, 0.002, 57.3), (-0.3, 0.2, 20.0), (0.0, 1e-9, 29.0), (5.0, 0.5, float("inf")),
    (np.float64(0.004), np.float64(0.0021), np.float64(44.9))])
@pytest.mark.parametrize("level", [0.9, 1 - 2 * 0.05, 1 - 2 * 0.01, 0.5, 0.999])
def test_two_sided_interval_equals_confidence_interval(estimate, se, df, level):
    """The location draft's interval without the level's and the alternative's checks is the
    two-sided confidence_interval; its critical value t_quantile(1 - alpha, df) is
    critical_value(df, alpha, "greater")."""
    from verify.stats.core import (
        confidence_interval,
        critical_value,
        t_quantile,
        two_sided_interval,
    )

    got = two_sided_interval(estimate, se, df, level)
    want = confidence_interval(estimate, se, df, level=level)
    assert field_bits(got) == field_bits(want)
    alpha = (1 - level) / 2
    assert t_quantile(1.0 - alpha, df).hex() == critical_value(df, alpha, "greater").hex()


@pytest.mark.parametrize("check", ["target", "shift"])
@pytest.mark.parametrize("side, low, high, unit", [
    ("two-sided", -0.02, 0.02, "mm"), ("two-sided", -0.01, 0.03, ""), ("lower", -0.5, 1e300, "g"),
    ("upper", -1e300, 0.25, "mm"), ("two-sided", -1, 1, "mm"), ("lower", -0.0, 2.0, ""),
    ("two-sided", np.float64(-0.02), np.float64(0.02), "mm")])
def test_margin_rule_claim_remembered_is_its_words(check, side, low, high, unit):
    """The margin rule remembers its claim by (side, low, high, unit): asked twice, and
    after a different claim, it is the text _claim_words makes (the rule's earlier inline
    wording, kept there)."""
    from verify.checks.location import rule

    r = rule.MarginRule(check)
    want = rule._claim_words(check, side, low, high, unit)
    assert r._claim(side, low, high, unit) == want
    r._claim("two-sided", -7.0, 7.0, "um")
    assert r._claim(side, low, high, unit) == want
    for ci in ((low / 2, high / 2), (high + 1.0, high + 2.0), (low - 2.0, low - 1.0)):
        for p in (0.001, 0.5):
            got = r.decide(pvalue=p, alpha=0.05, low=low, high=high, ci=ci, unit=unit,
                           side=side)
            assert got == _plain_margin_decide(check, p, 0.05, low, high, ci, unit, side)


def _plain_margin_decide(check, pvalue, alpha, low, high, ci, unit, side):
    """MarginRule.decide's earlier route: the claim worded on every call."""
    from verify.checks.location.rule import MarginRule
    from verify.decide import Verdict, fmt, fmt_like, fmt_percent, margin_words, p_eq

    level = fmt_percent(1 - 2 * alpha)
    ref = "target" if check == "target" else "the old process"
    lo, hi = fmt_like(ci[0], ci[1])
    detail = f"({level}% interval {lo}..{hi}, {p_eq(pvalue)})"
    u = f" {unit}" if unit else ""
    if side == "two-sided":
        claim = f"within {margin_words(low, high, unit)} of {ref}"
    elif side == "lower":
        claim = f"at most {fmt(-low)}{u} below {ref}"
    else:
        claim = f"at most {fmt(high)}{u} above {ref}"
    if pvalue < alpha:
        return Verdict("PASS", f"shown {claim} {detail}")
    beyond = ("; the whole interval lies beyond the margin"
              if MarginRule.harm_shown(ci=ci, low=low, high=high, side=side) else "")
    if side == "two-sided":
        return Verdict("HOLD", f"not shown {claim} {detail}{beyond}")
    return Verdict("HOLD", f"not shown to be {claim} {detail}{beyond}")


def _evaluate_demo_specs():
    from pathlib import Path

    from verify.data import load_measurements
    from verify.evaluate import evaluate
    from verify.spec import load_spec

    out = []
    for p in sorted((Path(__file__).resolve().parents[1] / "specs").glob("*.yaml")):
        spec = load_spec(p)
        out.append(evaluate(spec, load_measurements(spec)).characteristics)
    return out


def test_diagnostics_built_by_position_are_the_keyword_routes(monkeypatch):
    """evaluate_diagnostics builds its diagnostics by position, ``extra`` an empty dict where
    it has none: the demo specs' evaluations are those of the earlier route, each diagnostic
    made by drafting.diagnostic with its statistic, p-value and extra by keyword (extra left
    to its default where empty)."""
    from verify import evaluate_diagnostics
    from verify.checks.drafting import diagnostic
    from verify.decide import p_eq

    fast = _evaluate_demo_specs()
    # each positional field in its place: a tested diagnostic's note states its own p-value
    seen = 0
    for chars in fast:
        for c in chars:
            for dg in c.diagnostics:
                if dg.name in ("normality", "outliers", "lot effect") and dg.p_value is not None:
                    assert p_eq(dg.p_value) in dg.note and isinstance(dg.extra, dict)
                    seen += 1
    assert seen > 20

    def by_keyword(name, method, group, flag, note, statistic, p_value, extra):
        return diagnostic(name, method, group, flag, note, statistic=statistic,
                          p_value=p_value, extra=extra or None)

    monkeypatch.setattr(evaluate_diagnostics, "_Diagnostic", by_keyword)
    assert repr(_evaluate_demo_specs()) == repr(fast)


@pytest.mark.parametrize("alternative", ["greater", "less", "two-sided"])
def test_f_pvalue_is_the_ufuncs_float(alternative):
    """spread._f_pvalue reads cython_special's fdtrc and fdtr: the p-value of its earlier
    route through the scipy.special ufuncs, bit for bit."""
    from scipy import special

    from verify.stats.spread import _f_pvalue

    rng = np.random.default_rng(23)
    for dfn, dfd in [(1, 1), (2, 5), (29, 29), (11, 49), (1000, 3)]:
        for f in [1e-300, 0.3, 1.0, 3.7, 1e300, *rng.exponential(1.5, 60).tolist()]:
            hi, lo = float(special.fdtrc(dfn, dfd, f)), float(special.fdtr(dfn, dfd, f))
            p = hi if alternative == "greater" else lo if alternative == "less" else \
                2.0 * min(lo, hi)
            assert _same(_f_pvalue(f, dfn, dfd, alternative), min(1.0, max(0.0, p)))


@pytest.mark.parametrize("alternative", ["greater", "less", "two-sided"])
def test_rank_normal_p_is_the_ufuncs_float(alternative):
    """nonparametric._normal_p reads cython_special's ndtr: the p-value of its earlier route
    through scipy.special.ndtr, bit for bit."""
    from scipy import special

    from verify.stats.nonparametric import _normal_p

    rng = np.random.default_rng(29)
    for z_num in [0.0, 0.5, -0.5, 3.0, -250.0, 1e6, *rng.normal(0.0, 40.0, 100).tolist()]:
        for se in [0.5, 13.2, 48.6, 1e-3]:
            if alternative == "greater":
                want = float(special.ndtr(-(z_num - 0.5) / se))
            elif alternative == "less":
                want = float(special.ndtr((z_num + 0.5) / se))
            else:
                z = (z_num - math.copysign(0.5, z_num) if z_num != 0 else 0.0) / se
                want = min(1.0, 2.0 * float(special.ndtr(-abs(z))))
            assert _same(_normal_p(z_num, se, alternative), want)


def test_rank_test_methods_made_once_are_the_worded_ones():
    """The rank tests' method texts, made once by (exact, zero method), are those the results
    worded on every call before."""
    from verify.stats import nonparametric as npar

    for exact in (True, False, np.True_, np.False_):
        how = "exact" if exact else "normal approximation, tie and continuity corrected"
        for zero_method in npar.ZERO_METHODS:
            zeros = ("zeros dropped" if zero_method == "wilcox"
                     else "zeros ranked then dropped (Pratt)")
            assert npar._SIGNED_RANK_METHODS[exact, zero_method] == \
                f"Wilcoxon signed-rank test ({zeros}; {how})"
        assert npar._RANK_SUM_METHODS[exact] == f"Mann-Whitney rank-sum test ({how})"
    rng = np.random.default_rng(3)
    for d in (rng.normal(0.2, 1.0, 12), np.round(rng.normal(0.2, 1.0, 60), 1)):
        for zm in npar.ZERO_METHODS:
            r = npar.wilcoxon_signed_rank(d, zero_method=zm)
            assert r.method == npar._SIGNED_RANK_METHODS[r.exact, zm]
        r = npar.mann_whitney(d, d + 0.3)
        assert r.method == npar._RANK_SUM_METHODS[r.exact]


def test_moving_range_df_remembered_is_its_arithmetic():
    """moving_range_df is remembered by n: each answer, asked again, is the bits of its own
    arithmetic (the function without the cache), and n < 2 is still refused."""
    from verify.stats.capability import moving_range_df

    for n in [2, 3, 7, 30, 30, 101, 2, 5000]:
        assert moving_range_df(n).hex() == moving_range_df.__wrapped__(n).hex()
    with pytest.raises(DegenerateDataError):
        moving_range_df(1)


def test_check_results_built_by_position_hold_each_field_in_its_place():
    """The location (with a margin), capability and spread drafts build their CheckResult by
    position: in the demo specs' evaluations each field holds what its name says (the
    interval around the estimate at 1 - 2 alpha, the critical value and p-value of the
    test, the index and its bound, the design, the power note), as the keyword route put
    them. (The golden comparison of every evaluation holds the values themselves.)"""
    from verify.stats.core import t_quantile

    seen = set()
    for chars in _evaluate_demo_specs():
        for c in chars:
            for res in c.checks:
                x = res.details
                if res.check in ("target", "shift") and res.margin is not None and x:
                    assert res.method.startswith(("TOST", "non-inferiority"))
                    assert res.design in ("one-sample", "paired", "welch", "pooled")
                    assert res.ci_low <= res.estimate <= res.ci_high
                    assert res.standard_error > 0 and res.df > 0
                    assert res.p_value in (x.p_lower, x.p_upper)
                    assert res.statistic in (x.statistic_lower, x.statistic_upper)
                    alpha = (1 - res.ci_level) / 2
                    assert res.critical_value == pytest.approx(t_quantile(1 - alpha, res.df))
                    assert res.power_note.startswith("power of this test if the true")
                    assert res.p_adjusted is None and res.detectable_shift is None
                    seen.add("location")
                elif res.check == "capability" and x is not None and res.ci_low is not None:
                    assert res.estimate in (x.cpk, x.ppk)
                    assert res.ci_low == x.lower_bound and res.ci_level == x.confidence
                    assert res.ci_high is None and res.design is None
                    assert res.power_note.startswith("no power figure")
                    # the details by position too: each field in its declared place
                    assert x.index in ("cpk", "ppk") and x.judge in ("estimate", "lower_bound")
                    assert isinstance(x.sigma_method, str) and isinstance(x.n, int)
                    assert x.cpk in (x.cpl, x.cpu) and (x.pp is None or x.ppk <= x.pp)
                    assert x.sigma_within > 0 and x.sigma_overall > 0 and x.bound_df > 0
                    assert x.min == c.spec.checks.capability.min and x.confidence < 1
                    assert x.cpk_lower_95 < x.cpk
                    seen.add("capability")
                elif res.check == "spread" and res.design == "two-sample":
                    assert res.alternative == "greater" and res.margin is None
                    assert res.statistic > 0 and 0 <= res.p_value <= 1 and res.df > 0
                    assert res.power_note.startswith("no power figure: the spec declares")
                    assert res.ci_low is not None and res.ci_level is not None
                    seen.add("spread")
    assert seen == {"location", "capability", "spread"}


def test_replaced_gives_dataclasses_replace_s_instance_as_its_own_copy():
    """replaced sets a changed copy of the result's __dict__ as the new result's own: equal,
    field for field and in the same order, to dataclasses.replace's, frozen, and sharing no
    dict with the result it copied (which keeps its fields)."""
    from verify.checks.drafting import replaced
    from verify.model import CheckResult

    res = CheckResult("shift", "t", "h", None, None, "PASS", "r", 1.5)
    for changes in ({"outcome": "HOLD", "reason": "because", "p_value": 0.01},
                    {"power": 0.9, "planned_n": 31}, {}):
        fast = replaced(res, **changes)
        plain = dataclasses.replace(res, **changes)
        assert type(fast) is CheckResult and fast == plain and repr(fast) == repr(plain)
        assert list(vars(fast).items()) == list(vars(plain).items())
        assert vars(fast) is not vars(res) and res.outcome == "PASS" and res.power is None
        with pytest.raises(dataclasses.FrozenInstanceError):
            fast.outcome = "PENDING"
