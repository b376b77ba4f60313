"""The per-sample diagnostics and rank statistics computed for many samples at once
(``verify.stats.batch``) equal the one-sample functions' results bit for bit, on random data and
on the edge cases (ties, long runs, an outlier, points beyond the chart limits, n = 2 and 3,
constant data, values at the centre line, zero differences, non-finite values, lengths with a
single sample).

The reference is the one-sample route of this package (``individuals_chart``,
``anderson_darling``, ``shapiro_wilk``, ``grubbs``, ``wilcoxon_signed_rank``,
``mann_whitney``), itself checked against published values and scipy in
tests/test_stats_diagnostics.py and tests/test_stats_nonparametric.py.
"""

from __future__ import annotations

import numpy as np
import pytest

from verify.stats import _memo, batch
from verify.stats.diagnostics import anderson_darling, grubbs, individuals_chart, shapiro_wilk
from verify.stats.errors import StatsError


def _plain(fn, x, **kw):
    try:
        return fn(np.array(x, dtype=float), **kw)  # a writeable copy: never remembered
    except StatsError as err:
        return type(err), str(err)


def _batched(fn, x, **kw):
    try:
        return fn(x, **kw)
    except StatsError as err:
        return type(err), str(err)


def _samples():
    rng = np.random.default_rng(2024)
    out = []
    for n in (30, 30, 30, 12, 12, 50):
        out.append(rng.normal(10.0, 0.01, n))
        out.append(np.round(rng.normal(10.0, 0.01, n), 2))  # many ties
    x = rng.normal(0.0, 1.0, 30)
    x[7] = 9.0  # an outlier beyond the chart limits
    out.append(x)
    out.append(np.r_[np.full(15, 1.0), np.full(15, 2.0)])  # two long runs
    out.append(np.r_[np.arange(10.0), np.full(20, 4.5)])  # values on the centre line
    out.append(np.array([1.0, 1.0, 1.0, 1.0, 2.0, 1.0, 1.0, 1.0]))
    out.append(np.full(30, 3.25))  # constant: refused by the one-sample route
    out.append(np.array([1.0, 2.0]))  # n = 2
    out.append(np.array([1.0, 2.0]))
    out.append(np.array([1.0, 2.0, 4.0]))  # n = 3
    out.append(np.array([5.0, 2.0, 4.0]))
    out.append(np.array([1.0, np.nan, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0]))  # refused
    out.append(np.array([1.0, np.inf, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0]))
    out.append(np.array([1e200, 2e200, 3e200, 4e200, 5e200, 6e200, 7e200, 8e200]))
    out.append(np.array([0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9]))  # a length alone
    out.append(rng.normal(0.0, 1e-9, 30) + 1e6)
    return out


def test_batched_diagnostics_equal_the_one_sample_ones():
    samples = _samples()
    frozen = [_memo.freeze(x.copy()) for x in samples]
    _memo.forget()
    batch.prefetch(frozen + [None, np.arange(5.0)])  # None and writeable arrays are skipped
    remembered = sum(_memo.recall("individuals_chart", x) is not None for x in frozen)
    assert remembered >= 15  # the batched route did run
    for x, f in zip(samples, frozen, strict=True):
        assert _batched(individuals_chart, f) == _plain(individuals_chart, x)
        assert _batched(anderson_darling, f) == _plain(anderson_darling, x)
        assert _batched(shapiro_wilk, f) == _plain(shapiro_wilk, x)
        assert _batched(grubbs, f) == _plain(grubbs, x)
        assert _batched(grubbs, f, alternative="greater") == _plain(grubbs, x,
                                                                   alternative="greater")
    _memo.forget()


@pytest.mark.parametrize("seed", range(5))
def test_batched_diagnostics_on_random_layouts(seed):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(3, 80))
    samples = [np.round(rng.normal(0.0, float(rng.uniform(0.001, 10.0)), n),
                        int(rng.integers(1, 6))) for _ in range(int(rng.integers(2, 40)))]
    frozen = [_memo.freeze(x.copy()) for x in samples]
    _memo.forget()
    batch.prefetch(frozen)
    for x, f in zip(samples, frozen, strict=True):
        assert _batched(individuals_chart, f) == _plain(individuals_chart, x)
        assert _batched(anderson_darling, f) == _plain(anderson_darling, x)
        assert _batched(shapiro_wilk, f) == _plain(shapiro_wilk, x)
        assert _batched(grubbs, f) == _plain(grubbs, x)
    _memo.forget()


def test_the_moving_range_the_capability_reads_is_the_charts():
    from verify.stats.capability import capability

    rng = np.random.default_rng(8)
    xs = [rng.normal(10.0, 0.01, 25) for _ in range(4)]
    plain = [capability(x.copy(), lower=9.95, upper=10.05, target=10.0) for x in xs]
    frozen = [_memo.freeze(x.copy()) for x in xs]
    _memo.forget()
    batch.prefetch(frozen)
    assert all(_memo.recall("mr_bar", f) is not None for f in frozen)
    assert [capability(f, lower=9.95, upper=10.05, target=10.0) for f in frozen] == plain
    _memo.forget()


def _rank_cases():
    rng = np.random.default_rng(99)
    xs = [rng.normal(10.0, 0.01, 30) for _ in range(4)]
    xs += [np.round(rng.normal(10.0, 0.01, 30), 3) for _ in range(4)]  # ties
    xs += [np.round(rng.normal(10.0, 0.01, 30), 2)]  # many ties, zero differences from 10
    xs += [np.full(30, 10.0), np.full(30, 10.5)]  # constant (all zero differences once)
    xs += [10.0 + np.r_[np.full(15, -0.01), np.full(15, 0.01)]]  # two tie groups
    return xs


@pytest.mark.parametrize("target", [10.0, 10.004, 0.0])
def test_batched_signed_ranks_equal_the_one_sample_route(target):
    from verify.stats.nonparametric import signed_rank_about, wilcoxon_signed_rank

    xs = _rank_cases()
    frozen = [_memo.freeze(x.copy()) for x in xs]
    _memo.forget()
    batch.prefetch_ranks([("signed_rank", f, target) for f in frozen]
                         + [("signed_rank", np.arange(4.0), 1.0), ("other", None, None)])
    assert sum(_memo.recall("signed_rank", f) is not None for f in frozen) >= 6
    for x, f in zip(xs, frozen, strict=True):
        for alt in ("two-sided", "less", "greater"):
            assert _batched(signed_rank_about, f, target=target, alternative=alt) == \
                _plain(wilcoxon_signed_rank, x - target, alternative=alt)
    _memo.forget()


def test_batched_signed_ranks_at_small_and_large_n():
    from verify.stats.nonparametric import signed_rank_about, wilcoxon_signed_rank

    rng = np.random.default_rng(4)
    for n in (2, 3, 7, 50):
        xs = [np.round(rng.normal(0.0, 1.0, n), 1) + 0.05 for _ in range(6)]
        frozen = [_memo.freeze(x.copy()) for x in xs]
        _memo.forget()
        batch.prefetch_ranks([("signed_rank", f, 0.0) for f in frozen])
        for x, f in zip(xs, frozen, strict=True):
            assert _batched(signed_rank_about, f, target=0.0) == _plain(wilcoxon_signed_rank, x)
    _memo.forget()


def test_batched_signed_ranks_with_zero_differences():
    """Rows with some values equal to the target are ranked in the batch too (their non-zero
    differences, grouped by how many), equal to the one-sample route, which drops the zeros
    before ranking; a row of zeros only is left to that route and its error."""
    from verify.stats.nonparametric import signed_rank_about, wilcoxon_signed_rank

    rng = np.random.default_rng(17)
    xs = []
    for zeros in (0, 1, 1, 2, 5, 29, 30):
        x = np.round(rng.normal(10.0, 0.01, 30), 4)
        x[rng.choice(30, zeros, replace=False)] = 10.0
        xs.append(x)
    xs.append(np.round(rng.normal(10.0, 0.01, 30), 2))  # ties and zeros together
    frozen = [_memo.freeze(x.copy()) for x in xs]
    _memo.forget()
    batch.prefetch_ranks([("signed_rank", f, 10.0) for f in frozen])
    batched = [_memo.recall("signed_rank", f) is not None for f in frozen]
    assert batched == [True] * 6 + [False, True]  # all but the row of zeros only
    for x, f in zip(xs, frozen, strict=True):
        for alt in ("two-sided", "less", "greater"):
            assert _batched(signed_rank_about, f, target=10.0, alternative=alt) == \
                _plain(wilcoxon_signed_rank, x - 10.0, alternative=alt)
    _memo.forget()


@pytest.mark.parametrize(("n_old", "n_new"), [(30, 30), (12, 20), (2, 3), (60, 55)])
def test_batched_rank_sums_equal_the_one_sample_route(n_old, n_new):
    from verify.stats.nonparametric import mann_whitney

    rng = np.random.default_rng(n_old * 100 + n_new)
    pairs = []
    for digits in (6, 3, 2, 2, 1):
        pairs.append((np.round(rng.normal(10.0, 0.01, n_old), digits),
                      np.round(rng.normal(10.003, 0.01, n_new), digits)))
    pairs.append((np.full(n_old, 4.0), np.full(n_new, 4.0)))  # identical: refused
    pairs.append((np.full(n_old, 4.0), np.full(n_new, 5.0)))
    frozen = [(_memo.freeze(a.copy()), _memo.freeze(b.copy())) for a, b in pairs]
    _memo.forget()
    batch.prefetch_ranks([("rank_sum", a, b) for a, b in frozen])
    assert sum(_memo.recall("rank_sum", a) is not None for a, _ in frozen) >= 5
    for (a, b), (fa, fb) in zip(pairs, frozen, strict=True):
        for alt in ("two-sided", "less", "greater"):
            assert _batched(mann_whitney, fa, new=fb, alternative=alt) == \
                _plain(mann_whitney, a, new=b.copy(), alternative=alt)
    _memo.forget()


@pytest.mark.parametrize(("n_old", "n_new"), [(30, 30), (12, 21), (2, 3), (60, 55), (2, 2)])
def test_batched_brown_forsythe_equals_the_one_sample_route(n_old, n_new):
    # the sums the Brown-Forsythe test reads (medians, absolute deviations, their means and
    # sum of squares) computed for many pairs together give the same test, bit for bit
    from verify.stats.spread import brown_forsythe

    rng = np.random.default_rng(n_old * 7 + n_new)
    pairs = []
    for digits in (6, 3, 2, 1):
        pairs.append((np.round(rng.normal(10.0, 0.01, n_old), digits),
                      np.round(rng.normal(10.003, 0.02, n_new), digits)))
    pairs.append((rng.normal(0.0, 1.0, n_old) * 1e-9 + 1e6, rng.normal(0.0, 3.0, n_new)))
    pairs.append((np.full(n_old, 4.0), np.full(n_new, 4.0)))  # no variation: refused
    bad = rng.normal(0.0, 1.0, n_old)
    bad[0] = np.nan
    pairs.append((bad, rng.normal(0.0, 1.0, n_new)))  # non-finite: left to the one route
    frozen = [(_memo.freeze(a.copy()), _memo.freeze(b.copy())) for a, b in pairs]
    _memo.forget()
    batch.prefetch_ranks([("brown_forsythe", a, b) for a, b in frozen])
    assert sum(_memo.recall("brown_forsythe", a) is not None for a, _ in frozen) == 6
    for (a, b), (fa, fb) in zip(pairs, frozen, strict=True):
        for alt in ("two-sided", "less", "greater"):
            assert _batched(brown_forsythe, fa, new=fb, alternative=alt) == \
                _plain(brown_forsythe, a, new=b.copy(), alternative=alt)
    _memo.forget()


@pytest.mark.parametrize("lot_sizes", [(10, 10, 10), (4, 7, 1, 9), (2, 2), (3,)])
def test_batched_one_way_equals_the_one_sample_route(lot_sizes):
    # the one-way analyses of many samples in the same lots, computed together, give the
    # lot-effect test and the variance components of each sample bit for bit
    from verify.stats.lot_effect import lot_effect
    from verify.stats.variance_components import sd_components, variance_components

    rng = np.random.default_rng(sum(lot_sizes))
    lots = tuple(f"L{i}" for i, size in enumerate(lot_sizes) for _ in range(size))
    n = len(lots)
    shift = np.repeat(rng.normal(0.0, 0.01, len(lot_sizes)), lot_sizes)
    samples = [np.round(10.0 + shift + rng.normal(0.0, 0.01, n), d) for d in (6, 4, 3, 2)]
    samples.append(rng.normal(0.0, 1e-9, n) + 1e6)
    samples.append(np.repeat(np.arange(float(len(lot_sizes))), lot_sizes))  # no within: refused
    bad = rng.normal(0.0, 1.0, n)
    bad[-1] = np.inf
    samples.append(bad)  # non-finite: left to the one-sample route
    frozen = [_memo.freeze(x.copy()) for x in samples]
    _memo.forget()
    batch.prefetch([], in_lots=[(f, lots) for f in frozen] + [(np.arange(float(n)), lots)])
    remembered = sum(_memo.recall("one_way", f) is not None for f in frozen)
    # (the lots without spread may keep a rounding residue, which both routes share)
    assert remembered >= 5 if len(lot_sizes) >= 2 else remembered == 0
    for x, f in zip(samples, frozen, strict=True):
        for fn in (lot_effect, variance_components, sd_components):
            assert _batched(fn, f, lots=lots) == _plain(fn, x, lots=list(lots))
    # the summaries' sds were remembered with the analyses, for the samples they are estimable
    # of (2 lots of 2 parts or more): the shortcut above was taken, not the one-sample route
    remembered = sum(_memo.recall("sd_components", f) is not None for f in frozen)
    assert remembered >= 5 if sum(size >= 2 for size in lot_sizes) >= 2 else remembered == 0
    _memo.forget()


def test_batched_means_and_sds_equal_the_one_sample_route():
    # the corrected two-pass mean and sd of every stacked sample, computed together, are the
    # floats core.mean_sd computes for the sample alone
    from verify.stats.core import _mean_sd

    samples = _samples()
    frozen = [_memo.freeze(np.array(x, dtype=float)) for x in samples]
    _memo.forget()
    batch.prefetch(frozen)
    found = 0
    for x, f in zip(samples, frozen, strict=True):
        hit = _memo.recall("mean_sd", f)
        if hit is not None:
            found += 1
            assert hit == _mean_sd(np.array(x, dtype=float))
    assert found >= 14
    _memo.forget()


def test_batched_resolution_equals_the_one_sample_route():
    # the resolution of two samples joined end to end, computed for many pairs together, is
    # the one-sample route's on the joined values (distinct values, step, its ratio)
    from verify.stats.resolution import resolution, resolution_of

    rng = np.random.default_rng(17)
    pairs = [(np.round(rng.normal(10.0, 0.01, 30), d), np.round(rng.normal(10.0, 0.01, 30), d))
             for d in (4, 3, 2, 1)]
    pairs.append((np.full(30, 2.5), np.full(30, 2.5)))  # one distinct value: no step
    pairs.append((np.zeros(30), np.zeros(30)))  # all zero: left to the one-sample route
    pairs.append((rng.normal(0.0, 1e-9, 30) + 1e6, rng.normal(0.0, 1e-9, 30) + 1e6))
    pairs.append((np.array([0.1, 0.2, 0.30000000000000004] * 10), np.full(30, 0.3)))
    bad = rng.normal(0.0, 1.0, 30)
    bad[3] = np.nan
    pairs.append((bad, rng.normal(0.0, 1.0, 30)))  # non-finite: the one-sample route's error
    frozen = [(_memo.freeze(a.copy()), _memo.freeze(b.copy())) for a, b in pairs]
    _memo.forget()
    batch.prefetch([], joined=[f for f in frozen] + [(frozen[0][1],)])
    assert sum(_memo.recall("resolution", a) is not None for a, _ in frozen) == 7
    for (a, b), f in zip(pairs, frozen, strict=True):
        for tol in (None, 0.1, 3.0):
            assert _batched(resolution_of, f, tolerance=tol) == \
                _plain(resolution, np.concatenate([a, b]), tolerance=tol)
    assert _batched(resolution_of, (frozen[0][1],), tolerance=0.1) == \
        _plain(resolution, pairs[0][1], tolerance=0.1)
    _memo.forget()


def test_resolution_read_off_the_rank_sums_equals_the_one_sample_route(monkeypatch):
    # the resolution of an (old, new) pair that is also a rank-sum request comes from that
    # request's snapped and sorted values (batch._answer_resolutions): it is the one-sample
    # route's on the joined values, for rows of ties, of one value, of signed zeros, and for
    # rows the rank sums leave out (non-finite, all zero: the one-sample route's own)
    from verify.stats import nonparametric
    from verify.stats.resolution import resolution, resolution_of

    rng = np.random.default_rng(29)
    pairs = [(np.round(rng.normal(10.0, 0.01, 20), d), np.round(rng.normal(10.0, 0.01, 20), d))
             for d in (4, 3, 2, 1, 2)]
    pairs.append((np.full(20, 2.5), np.full(20, 2.5)))  # one distinct value: no step
    pairs.append((np.zeros(20), np.zeros(20)))  # all zero: left to the one-sample route
    signed = np.round(rng.normal(0.0, 1.0, 20), 1)
    signed[::3] = -0.0
    pairs.append((signed, np.where(signed == 0.0, 0.0, -signed)))  # zeros of both signs
    pairs.append((np.array([0.1, 0.2, 0.30000000000000004] * 5 + [0.3] * 5), np.full(20, 0.3)))
    bad = rng.normal(0.0, 1.0, 20)
    bad[3] = np.inf
    pairs.append((bad, rng.normal(0.0, 1.0, 20)))  # non-finite: the one-sample route's error
    frozen = [(_memo.freeze(a.copy()), _memo.freeze(b.copy())) for a, b in pairs]
    spare = (_memo.freeze(rng.normal(5.0, 1.0, 20)), _memo.freeze(rng.normal(5.0, 1.0, 20)))
    apart = []  # the tuples whose resolution is computed apart (batch._resolution_rows)
    real = batch._resolution_rows

    def counting(rows, n):
        apart.extend(rows)
        return real(rows, n)

    monkeypatch.setattr(batch, "_resolution_rows", counting)
    _memo.forget()
    try:
        # every pair a rank-sum request but the spare, whose resolution is computed apart with
        # the rows the rank sums leave out (of one value; all zero or non-finite: those left to
        # the one-sample route)
        batch.prefetch_ranks([("rank_sum", a, b) for a, b in frozen],
                             joined=[*frozen, spare, (frozen[0][1],)])
        expected = [frozen[3][0], frozen[5][0], frozen[6][0], frozen[9][0], spare[0]]
        assert len(apart) == 5 and all(r[0] is x for r, x in zip(apart, expected, strict=True))
        assert sum(_memo.recall("resolution", a) is not None for a, _ in frozen) == 8
        assert _memo.recall("resolution", spare[0]) is not None
        for (a, b), f in zip([*pairs, spare], [*frozen, spare], strict=True):
            for tol in (None, 0.1, 3.0):
                assert _batched(resolution_of, f, tolerance=tol) == \
                    _plain(resolution, np.concatenate([a, b]), tolerance=tol)
        # the rank sums themselves are unchanged by it
        for (a, b), f in zip(pairs, frozen, strict=True):
            assert _batched(lambda pair: nonparametric.mann_whitney(*pair), f) == \
                _plain(lambda x, b=b: nonparametric.mann_whitney(x, np.array(b, dtype=float)), a)
    finally:
        _memo.forget()


@pytest.mark.parametrize("n", [3, 7, 8, 30, 90, 500])
@pytest.mark.parametrize("alternative", ["two-sided", "less", "greater"])
def test_grubbs_pvalues_equal_the_scalar_route(n, alternative):
    # the batched Grubbs p-values (one t-tail call for all statistics) are the floats
    # grubbs_pvalue gives statistic by statistic, up to G's largest possible value
    # (n - 1) / sqrt(n), where the tail is 0
    from verify.stats.outliers import grubbs_pvalue, grubbs_pvalues

    g_max = (n - 1) / np.sqrt(n)
    g = np.r_[np.linspace(0.0, g_max, 2001), g_max, np.nextafter(g_max, 0.0),
              np.random.default_rng(n).uniform(0.0, g_max, 500)]
    batched = grubbs_pvalues(g, n, alternative=alternative).tolist()
    assert batched == [grubbs_pvalue(v, n, alternative=alternative) for v in g.tolist()]
    with pytest.raises(ValueError):
        grubbs_pvalues(np.array([1.0, np.nan]), n)


def test_batched_medians_with_negative_zeros_keep_the_one_sample_sign():
    # a median that is a zero: which zero (+0.0 or -0.0) a selection finds depends on its
    # order of search when the values hold both, so the batched route gives such rows to the
    # one-sample route's median; repr tells -0.0 from 0.0 (== does not)
    from verify.stats.nonparametric import mann_whitney, signed_rank_about, wilcoxon_signed_rank
    from verify.stats.spread import brown_forsythe

    rng = np.random.default_rng(3)
    pairs = [(rng.choice([0.0, 0.01, -0.01], 30, p=[0.6, 0.2, 0.2]),
              rng.choice([0.0, -0.0, 0.01, -0.01], 30, p=[0.3, 0.3, 0.2, 0.2]))
             for _ in range(12)]
    pairs.append((np.round(rng.normal(0.0, 0.01, 30), 3), np.round(rng.normal(0.0, 0.01, 30), 3)))
    frozen = [(_memo.freeze(a.copy()), _memo.freeze(b.copy())) for a, b in pairs]
    _memo.forget()
    batch.prefetch_ranks([q for a, b in frozen for q in (
        ("rank_sum", a, b), ("brown_forsythe", a, b), ("signed_rank", b, 0.0))])
    assert all(_memo.recall("rank_sum", a) is not None for a, _ in frozen)
    assert all(_memo.recall("signed_rank", b) is not None for _, b in frozen)
    for (a, b), (fa, fb) in zip(pairs, frozen, strict=True):
        assert repr(_batched(mann_whitney, fa, new=fb)) == repr(_plain(mann_whitney, a, new=b))
        assert repr(_batched(signed_rank_about, fb, target=0.0)) == \
            repr(_plain(wilcoxon_signed_rank, b - 0.0))
        assert repr(_batched(brown_forsythe, fa, new=fb)) == \
            repr(_plain(brown_forsythe, a, new=b.copy()))
    _memo.forget()


def test_batched_one_way_of_samples_in_lots_with_equal_codes():
    # samples whose lots have other names but the same pattern (equal codes) are analysed
    # together; each is remembered with its own lots' codes (the object the one-sample route
    # holds, so the route finds it) and equals the one-sample route's analysis
    from verify.stats.lot_effect import lot_effect
    from verify.stats.samples import group_codes

    rng = np.random.default_rng(12)
    lots_a = tuple(f"A{i // 10}" for i in range(30))
    lots_b = tuple(f"B{i // 10}" for i in range(30))
    lots_c = tuple(f"C{i % 3}" for i in range(30))  # another pattern: analysed apart
    cases = [(np.round(rng.normal(10.0, 0.01, 30), 3), lots)
             for lots in (lots_a, lots_b, lots_a, lots_b, lots_c, lots_c)]
    frozen = [(_memo.freeze(x.copy()), lots) for x, lots in cases]
    _memo.forget()
    batch.prefetch([], in_lots=frozen)
    for (x, lots), (f, _) in zip(cases, frozen, strict=True):
        hit = _memo.recall("one_way", f)
        assert hit is not None and hit[0] is group_codes(lots, 30)[1]
        assert _batched(lot_effect, f, lots=lots) == _plain(lot_effect, x, lots=list(lots))
    _memo.forget()


@pytest.mark.parametrize("seed", range(3))
def test_batched_signed_ranks_rank_rows_with_any_number_of_zeros_together(seed):
    # rows with different numbers of zero differences and of ties among the others, ranked
    # in one pass with each row's zeros left out: each equals the one-sample route, which drops
    # the zeros first (its statistic, ties, exactness, standard error and p-values)
    from verify.stats.nonparametric import signed_rank_about, wilcoxon_signed_rank

    rng = np.random.default_rng(seed)
    n = int(rng.integers(5, 51))
    xs = []
    for _ in range(25):
        x = np.round(rng.normal(1.0, 0.02, n), int(rng.integers(1, 4)))
        x[rng.random(n) < rng.uniform(0.0, 0.5)] = 1.0  # zero differences from the target
        xs.append(x)
    frozen = [_memo.freeze(x.copy()) for x in xs]
    _memo.forget()
    batch.prefetch_ranks([("signed_rank", f, 1.0) for f in frozen])
    for x, f in zip(xs, frozen, strict=True):  # batched unless all differences are zero
        assert (_memo.recall("signed_rank", f) is not None) == bool(np.any(x != 1.0))
        for alt in ("two-sided", "less", "greater"):
            assert repr(_batched(signed_rank_about, f, target=1.0, alternative=alt)) == \
                repr(_plain(wilcoxon_signed_rank, x - 1.0, alternative=alt))
    _memo.forget()


def test_null_counts_by_arrays_equal_the_count_in_python_integers():
    # the exact null distributions of the rank tests counted on int64 arrays (sizes whose counts
    # fit) are the whole numbers of the one-coefficient-at-a-time count in Python integers
    # (itself checked against scipy in tests/test_stats_nonparametric.py); past the int64 bound
    # the Python count is used
    from verify.stats import nonparametric as npar

    for n in (0, 1, 2, 7, 13, 30, 50, 61):
        assert npar.signed_rank_counts(n) == npar._signed_rank_counts(n)
    for m, n in ((0, 5), (1, 1), (2, 3), (5, 10), (12, 30), (20, 29), (30, 30), (33, 33),
                 (34, 34)):
        assert npar.rank_sum_counts(m, n) == npar._rank_sum_counts(m, n)
        assert npar.rank_sum_counts(n, m) == npar._rank_sum_counts(m, n)


def test_shapiro_wilk_rows_when_the_routine_keeps_its_coefficients_to_itself(monkeypatch):
    """The batch hands the first row's Shapiro-Wilk coefficients to the other rows: scipy's
    routine fills them in place. A routine that did not (a future scipy working on a copy) must
    not leave the other rows reading zeros: each row then computes its own, and every W and
    p-value is still the one-sample route's."""
    from verify.stats import normality

    real = normality._swilk_routine()

    def on_a_copy(y, a, init):
        return real(y, a.copy(), init)

    rng = np.random.default_rng(12)
    samples = [rng.normal(10.0, 0.01, 30) for _ in range(6)]
    expected = [_plain(shapiro_wilk, x) for x in samples]
    monkeypatch.setattr(normality, "_swilk_routine", lambda: on_a_copy)
    frozen = [_memo.freeze(x.copy()) for x in samples]
    _memo.forget()
    batch.prefetch(frozen)
    assert all(_memo.recall("shapiro_wilk", f) is not None for f in frozen)
    assert [_batched(shapiro_wilk, f) for f in frozen] == expected
    _memo.forget()


def test_rank_sums_beyond_the_exact_tie_bound_go_to_the_one_sample_route(monkeypatch):
    """The batch adds the rank-sum tie term sum(t^3 - t) as exact integers, the one-sample
    route as floats: the same number only below 2^53, so rows of more than EXACT_TIES_N values
    are left to the one-sample route (here the bound is lowered to 50 to try it on small rows)
    and every result is still that route's."""
    from verify.stats.nonparametric import mann_whitney

    rng = np.random.default_rng(77)
    pairs = [(np.round(rng.normal(10.0, 0.01, 30), 2), np.round(rng.normal(10.0, 0.01, 30), 2))
             for _ in range(4)]
    expected = [_plain(mann_whitney, a, new=b) for a, b in pairs]
    frozen = [(_memo.freeze(a.copy()), _memo.freeze(b.copy())) for a, b in pairs]
    monkeypatch.setattr(batch, "EXACT_TIES_N", 50)
    _memo.forget()
    batch.prefetch_ranks([("rank_sum", a, b) for a, b in frozen])
    assert all(_memo.recall("rank_sum", a) is None for a, _ in frozen)
    assert [_batched(mann_whitney, a, new=b) for a, b in frozen] == expected
    monkeypatch.setattr(batch, "EXACT_TIES_N", 60)  # 30 + 30 values: batched again
    _memo.forget()
    batch.prefetch_ranks([("rank_sum", a, b) for a, b in frozen])
    assert all(_memo.recall("rank_sum", a) is not None for a, _ in frozen)
    assert [_batched(mann_whitney, a, new=b) for a, b in frozen] == expected
    _memo.forget()


def test_the_tie_term_is_exact_in_floats_up_to_the_bound():
    """Why EXACT_TIES_N is 200,000: the largest tie term of N values, one group of all N,
    N^3 - N, is below 2^53 there, so the float sum the one-sample route makes of any split into
    groups is the exact integer (and the next thousand values past the bound would not be)."""
    n = batch.EXACT_TIES_N
    assert n**3 - n < 2**53 < (n + 10_000) ** 3
    sizes = np.array([n // 2, n // 4, n // 8, n - n // 2 - n // 4 - n // 8], dtype=float)
    assert float(np.add.reduce(sizes**3 - sizes)) == sum(int(t) ** 3 - int(t) for t in sizes)


def test_rows_of_another_length_are_never_stacked():
    """The batch lays samples of one length end to end as rows (np.stack's array): a total
    that is not rows x length is an error, never rows cut across samples."""
    with pytest.raises(ValueError, match="differ in length"):
        batch._stack([np.arange(3.0), np.arange(4.0)], 2, 3)
    x = batch._stack([np.arange(3.0), np.arange(3.0) + 3.0], 2, 3)
    assert x.tolist() == np.stack([np.arange(3.0), np.arange(3.0) + 3.0]).tolist()
    # a row given in pieces (the resolution's parts of two processes, joined)
    y = batch._stack([np.arange(2.0), np.arange(1.0), np.arange(3.0)], 2, 3)
    assert y.tolist() == [[0.0, 1.0, 0.0], [0.0, 1.0, 2.0]]


@pytest.mark.parametrize("dtype", ["f8", "<f8", ">f8", "f4", "i8", object, np.float64,
                                   np.dtype(np.float64, metadata={"unit": "mm"})])
def test_the_float64_dtype_compares_as_the_scalar_type(dtype):
    # the shortcut: the batch compares a sample's dtype with a dtype made once; the plain route
    # compares it with np.float64 itself
    a = np.zeros(3, dtype=dtype)
    assert (a.dtype == batch.FLOAT64) is (a.dtype == np.float64)
    assert (a.dtype != batch.FLOAT64) is (a.dtype != np.float64)
