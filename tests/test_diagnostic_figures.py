"""The diagnostics' and companions' figure routes give exactly what the plain routes give.

The rank and spread companions read a few figures of their test (method, statistic, p-value,
zero differences) without its result object. Each is held here to the plain public route it
replaces, bit for bit: every value's type and, for floats, its exact binary value, or the same
error.
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

import numpy as np
import pytest

from tests.helpers_bits import field_bits
from verify.stats import _memo, batch, nonparametric, spread
from verify.stats.errors import StatsError

ALTERNATIVES = ("two-sided", "less", "greater")


def _hex(values):
    return [(type(v), v.hex() if isinstance(v, float) else v) for v in values]


def _outcome(fn, *args, **kw):
    """The figures ``fn`` gives as exact bits, or its error's type and words."""
    try:
        return _hex(fn(*args, **kw))
    except StatsError as err:
        return type(err), str(err)


def _samples():
    rng = np.random.default_rng(127)
    xs = [rng.normal(10.0, 0.01, 30) for _ in range(3)]
    xs += [np.round(rng.normal(10.0, 0.01, 30), 3) for _ in range(3)]  # ties
    xs += [np.round(rng.normal(10.0, 0.01, 30), 2)]  # many ties, values on the target
    xs += [np.round(rng.normal(0.0, 1.0, 7), 1) + 10.0, rng.normal(10.0, 0.01, 60)]
    xs += [np.full(30, 10.0), np.full(12, 10.5)]  # constant: all zero differences once
    return xs


def _frozen(xs):
    return [_memo.freeze(x.copy()) for x in xs]


@pytest.mark.parametrize("batched", [False, True])
@pytest.mark.parametrize("target", [10.0, 10.004, 10.5])
def test_signed_rank_about_figures_are_the_plain_test_s(batched, target):
    """(method, statistic, pvalue, n_zero) of the signed-rank test of x - target, or its
    error, whether the batch ranked x or not."""
    xs = _samples()
    frozen = _frozen(xs)
    _memo.forget()
    if batched:
        batch.prefetch_ranks([("signed_rank", f, target) for f in frozen])
        assert sum(_memo.recall("signed_rank", f) is not None for f in frozen) >= 6
    for x, f in zip(xs, frozen, strict=True):
        for alt in ALTERNATIVES:
            want = _outcome(lambda a, alt=alt: (lambda r: (r.method, r.statistic, r.pvalue,
                                                           r.n_zero))(
                nonparametric.wilcoxon_signed_rank(a - target, alternative=alt)), x.copy())
            assert _outcome(nonparametric.signed_rank_about_figures, f, target,
                            alternative=alt) == want
            assert _outcome(nonparametric.signed_rank_about_figures, x.copy(), target,
                            alternative=alt) == want
    _memo.forget()


@pytest.mark.parametrize("batched", [False, True])
def test_mann_whitney_figures_are_the_plain_test_s(batched):
    """(method, statistic, pvalue) of the Mann-Whitney test, or its error, whether the batch
    ranked the pair or not."""
    xs = _samples()
    pairs = [(xs[i], xs[j]) for i, j in ((0, 1), (3, 4), (6, 2), (7, 8), (9, 10), (9, 9),
                                          (8, 7), (5, 6))]
    frozen = [(_memo.freeze(a.copy()), _memo.freeze(b.copy())) for a, b in pairs]
    _memo.forget()
    if batched:
        batch.prefetch_ranks([("rank_sum", a, b) for a, b in frozen])
        assert sum(_memo.recall("rank_sum", a) is not None for a, _ in frozen) >= 4
    for (a, b), (fa, fb) in zip(pairs, frozen, strict=True):
        for alt in ALTERNATIVES:
            want = _outcome(lambda o, n, alt=alt: (lambda r: (r.method, r.statistic, r.pvalue))(
                nonparametric.mann_whitney(o, n, alternative=alt)), a.copy(), b.copy())
            assert _outcome(nonparametric.mann_whitney_figures, fa, fb, alternative=alt) == want
            assert _outcome(nonparametric.mann_whitney_figures, a.copy(), b.copy(),
                            alternative=alt) == want
    with pytest.raises(ValueError, match="alternative"):
        nonparametric.mann_whitney_figures(frozen[0][0], frozen[0][1], alternative="both")
    _memo.forget()


@pytest.mark.parametrize("batched", [False, True])
def test_brown_forsythe_figures_are_the_plain_test_s(batched):
    """(statistic, pvalue) of the Brown-Forsythe test, or its error, whether the batch summed
    the pair or not; its method is BROWN_FORSYTHE_METHOD."""
    xs = _samples()
    pairs = [(xs[i], xs[j]) for i, j in ((0, 1), (3, 4), (6, 2), (7, 8), (9, 10), (8, 7))]
    pairs += [(np.array([1.0, 2.0]), np.array([3.0, 5.0])),  # no error term
              (np.array([1.0]), np.array([3.0, 5.0, 6.0]))]  # too few values
    frozen = [(_memo.freeze(a.copy()), _memo.freeze(b.copy())) for a, b in pairs]
    _memo.forget()
    if batched:
        batch.prefetch_ranks([("brown_forsythe", a, b) for a, b in frozen])
        assert sum(_memo.recall("brown_forsythe", a) is not None for a, _ in frozen) >= 3
    for (a, b), (fa, fb) in zip(pairs, frozen, strict=True):
        for alt in ALTERNATIVES:
            want = _outcome(lambda o, n, alt=alt: (lambda r: (r.statistic, r.pvalue))(
                spread.brown_forsythe(o, n, alternative=alt)), a.copy(), b.copy())
            assert _outcome(spread.brown_forsythe_figures, fa, fb, alternative=alt) == want
            assert _outcome(spread.brown_forsythe_figures, a.copy(), b.copy(),
                            alternative=alt) == want
    assert spread.brown_forsythe(xs[0], xs[1]).method == spread.BROWN_FORSYTHE_METHOD
    _memo.forget()


# --- the companions, against their plain routes (each test's result object, fields read) ---

def _rank_companion_plain(kind, inp, dr):
    """The rank companion from the full result of the rank test on writeable copies."""
    from verify.checks.drafting import CANNOT_COMPUTE, not_applicable
    from verify.decide import p_eq
    from verify.model import DiagnosticResult

    res = dr.result
    if res.p_value is None:
        return []
    alpha, data, check = inp.spec.alpha, inp.data, kind.name
    alt = res.alternative if res.margin is None else "two-sided"
    try:
        if check == "target":
            rt = nonparametric.wilcoxon_signed_rank(
                np.array(data.candidate.values, dtype=float) - inp.ch.target, alternative=alt)
            group = data.candidate.name
        elif data.pairs is not None:
            pv = data.pairs
            rt = nonparametric.wilcoxon_signed_rank(pv.new - pv.old, alternative=alt)
            group = "differences"
        else:
            if data.reference.values is None:
                return []
            rt = nonparametric.mann_whitney(np.array(data.reference.values),
                                            np.array(data.candidate.values), alternative=alt)
            group = f"{data.reference.name} vs {data.candidate.name}"
    except CANNOT_COMPUTE as err:
        return [not_applicable("rank companion", f"rank test for the {check}", check, err)]
    disagree = False
    if res.margin is None:
        disagree = (rt.pvalue < alpha) != (res.p_value < alpha)
    ties = f", {rt.n_zero} zero difference(s)" if rt.n_zero else ""
    return [DiagnosticResult(
        "rank companion", rt.method, group, disagree,
        (f"{check}: the rank test disagrees with the t-test ({p_eq(rt.pvalue)})"
         if disagree else f"{check}: rank test {p_eq(rt.pvalue)}{ties}"),
        statistic=rt.statistic, p_value=rt.pvalue, extra={})]


def _spread_companion_plain(kind, inp, dr):
    """The spread companion from the full result of the other test on writeable copies."""
    from verify.checks.drafting import CANNOT_COMPUTE, not_applicable
    from verify.decide import p_eq
    from verify.model import DiagnosticResult

    spec = inp.spec
    ref, cand = inp.data.reference, inp.data.candidate
    usable = (inp.data.spread_pairs is None and spec.unit_of_analysis != "lot"
              and ref.values is not None)
    if not usable or dr.result.p_value is None:
        return []
    alpha = spec.alpha
    group = f"{ref.name} vs {cand.name}"
    old, new = np.array(ref.values), np.array(cand.values)
    try:
        other_bf = inp.config(kind.name).method != "brown-forsythe"
        o = (spread.brown_forsythe(old, new, alternative="greater") if other_bf
             else spread.f_test(old, new, alternative="greater"))
    except CANNOT_COMPUTE as err:
        return [not_applicable("spread companion", "spread companion", group, err)]
    disagree = (o.pvalue < alpha) != (dr.result.p_value < alpha)
    return [DiagnosticResult(
        "spread companion", o.method, group, disagree,
        (f"the {o.method} disagrees with the deciding spread test ({p_eq(o.pvalue)})"
         if disagree else f"{o.method} {p_eq(o.pvalue)}"),
        statistic=o.statistic, p_value=o.pvalue, extra={})]


def _layouts():
    sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "benchmarks"))
    from bench_evaluate import make_spec

    root = Path(__file__).resolve().parents[1]
    yield from sorted((root / "specs").glob("*.yaml"))
    with tempfile.TemporaryDirectory() as tmp:
        yield make_spec(Path(tmp), 12, seed=91)


def test_companions_are_their_plain_routes(monkeypatch):
    """Within evaluations (the batch's statistics remembered), each location and spread
    companion is what its plain route makes from the rank or spread test's full result."""
    from verify import evaluate_diagnostics
    from verify.checks import kind
    from verify.checks.location import compute as location
    from verify.checks.spread import compute as spread_compute
    from verify.data import load_measurements
    from verify.evaluate import evaluate
    from verify.spec import load_spec

    seen = {"location": 0, "spread": 0}
    original = evaluate_diagnostics.companions

    def checked(d):
        for dr in d.checks:
            name = dr.result.check
            k = kind(name)
            hook = getattr(k.hook("compute"), "companions", None)
            if hook is location.companions:
                got, want = hook(k, d.inp, dr), _rank_companion_plain(k, d.inp, dr)
                seen["location"] += bool(want)
            elif hook is spread_compute.companions:
                got, want = hook(k, d.inp, dr), _spread_companion_plain(k, d.inp, dr)
                seen["spread"] += bool(want)
            else:
                continue
            assert [field_bits(r) for r in got] == [field_bits(r) for r in want]
        return original(d)

    monkeypatch.setattr(evaluate_diagnostics, "companions", checked)
    for path in _layouts():
        spec = load_spec(path)
        evaluate(spec, load_measurements(spec))
    assert seen["location"] >= 24 and seen["spread"] >= 12


@pytest.mark.parametrize("p", [0.5, 1.0, 0.999999, 5e-324, 1e-300, 0.0, -0.0, -1e-17,
                               1.0000000000000002, 3.5, np.float64(0.25), np.float64(1.0),
                               np.float64(-0.0), 1, 0, True, float("inf"), float("-inf"),
                               float("nan")])
def test_clip_p_is_its_plain_route(p):
    """_clip_p returns a float in (0, 1] as it is; every value gives what float(), the
    finiteness test and min(1.0, max(0.0, p)) give: the same float bits, or the same error."""
    import math

    from verify.stats.errors import DegenerateDataError
    from verify.stats.nonparametric import _clip_p

    v = float(p)
    if not math.isfinite(v):
        with pytest.raises(DegenerateDataError, match="no finite p-value"):
            _clip_p(p)
        return
    got, want = _clip_p(p), min(1.0, max(0.0, v))
    assert type(got) is float and got.hex() == want.hex()
