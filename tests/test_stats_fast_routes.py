"""The fast routes of the statistics layer give exactly what the routes they replaced gave.

Each reference is the replaced code, kept here in its own words: ``numpy.median`` for the
partition median, the average ranks as ``scipy.stats.rankdata`` gives them, and the TOST power
of each case on its own (one case per call, so no quantile of the sd ratio is shared). Equality
is exact (the golden comparison of the demo outputs compares floats by their repr).
"""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from verify.stats import noncentral, power_of_tests, spread
from verify.stats.errors import DegenerateDataError
from verify.stats.nonparametric import average_ranks
from verify.stats.samples import median

SETTINGS = settings(max_examples=200, deadline=None)
floats = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False)


@SETTINGS
@given(st.lists(floats, min_size=1, max_size=60))
def test_partition_median_equals_numpy_median(values):
    a = np.asarray(values, dtype=float)
    assert median(a) == float(np.median(a))  # numpy's median: the replaced route


@SETTINGS
@given(st.lists(st.integers(-5, 5), min_size=2, max_size=30),
       st.lists(st.integers(-5, 5), min_size=2, max_size=30))
def test_brown_forsythe_centres_on_numpy_median(old, new):
    a, b = np.asarray(old, dtype=float) / 7.0, np.asarray(new, dtype=float) / 7.0
    za, zb = np.abs(a - np.median(a)), np.abs(b - np.median(b))  # the replaced centring
    try:
        r = spread.brown_forsythe(a, b)
    except DegenerateDataError:
        assert np.sum((za - np.mean(za)) ** 2) + np.sum((zb - np.mean(zb)) ** 2) == 0.0
        return
    assert r.mad_old == float(np.mean(za)) and r.mad_new == float(np.mean(zb))


@SETTINGS
@given(st.lists(floats, min_size=1, max_size=40, unique=True))
def test_average_ranks_without_ties_equal_rankdata(values):
    a = np.asarray(values, dtype=float)
    ranks, sizes = average_ranks(a)
    np.testing.assert_array_equal(ranks, stats.rankdata(a))  # scipy's average ranks
    np.testing.assert_array_equal(sizes, np.ones(a.size, dtype=int))


def test_average_ranks_of_nothing():
    ranks, sizes = average_ranks(np.empty(0))
    assert ranks.size == 0 and sizes.tolist() == [0]  # one empty group, as before


def test_tost_power_with_shared_df_equals_each_case_alone():
    # cases with repeated df (one-sample lot sizes met by several characteristics) and distinct
    # ones (Welch): computed together, each quantile of the sd ratio is inverted once per df
    cases = []
    for sd in (0.008, 0.01, 0.012):
        for n in (10, 28, 29, 30, 31):
            cases.append((0.001, -0.02, 0.02, *power_of_tests._plan("one-sample", sd, n, None,
                                                                   None), 0.05))
            cases.append((0.002, -0.02, 0.025, *power_of_tests._plan("welch", sd, n, n + 1,
                                                                    1.1 * sd), 0.05))
    cols = np.array(cases, dtype=float).T
    together = power_of_tests._tost_power_many(cols[0], cols[1], cols[2], cols[3], cols[4],
                                               cols[5])
    alone = [power_of_tests._tost_power_many(d, lo, hi, np.array([tau]), np.array([df]), a)[0]
             for d, lo, hi, tau, df, a in cases]
    assert together.tolist() == [float(x) for x in alone]


def test_tost_power_pieces_in_place_equal_the_plain_expressions():
    # _pieces evaluates the quadrature nodes in place; each piece's sum must be the float the
    # plain expressions (the integrand as the adaptive route writes it) give, bit for bit
    from scipy import special

    rng = np.random.default_rng(5)
    p = 50
    left = rng.uniform(0.05, 1.5, p)
    right = left + rng.uniform(0.01, 1.0, p)
    df = rng.uniform(1.5, 80.0, p)
    k0 = np.array([noncentral._sd_ratio_log_constant(d) for d in df])
    c = special.stdtrit(df, 0.95)
    up, low = rng.uniform(1.0, 9.0, p), rng.uniform(-9.0, -1.0, p)
    gx, gw = power_of_tests._GL_X, power_of_tests._GL_W
    log_l, log_r = np.log(left), np.log(right)
    half, mid = 0.5 * (log_r - log_l), 0.5 * (log_r + log_l)
    t = mid[:, None] + half[:, None] * gx
    e = np.expm1(t)
    nodes = 1.0 + e
    weights = half[:, None] * gw * nodes
    logpdf = k0[:, None] - (0.5 * df)[:, None] * e * (2.0 + e) + (df[:, None] - 1.0) * t
    g = special.ndtr(up[:, None] - c[:, None] * nodes) - special.ndtr(low[:, None]
                                                                      + c[:, None] * nodes)
    plain = np.add.reduce(g * np.exp(logpdf) * weights, axis=1)
    fast = power_of_tests._pieces(mid, half, gx, gw, k0, 0.5 * df, df - 1.0, c, up, low)
    assert fast.tolist() == plain.tolist()


def test_tost_power_is_the_same_whatever_the_block_of_pieces(monkeypatch):
    # the pieces are integrated in blocks (cache-sized); the sums per case are added in the
    # same order whatever the block, so the powers are the same floats
    cases = [(0.002, -0.02, 0.025, *power_of_tests._plan("welch", sd, n, n + 2, 1.2 * sd), 0.05)
             for sd in (0.006, 0.01, 0.014) for n in (5, 12, 30, 31, 90)]
    cols = np.array(cases, dtype=float).T
    results = []
    for block in (1, 7, 128, 10**6):
        monkeypatch.setattr(power_of_tests, "_BLOCK", block)
        results.append(power_of_tests._tost_power_many(*cols).tolist())
    assert all(r == results[0] for r in results)
