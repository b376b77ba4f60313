"""Per-sample diagnostics of many samples at once, remembered for the one-sample calls.

A dimensional layout measures the same parts on every characteristic: an evaluation hands
hundreds of samples of one length to the same diagnostics. :func:`prefetch` stacks the
read-only samples (:mod:`verify.stats._memo`) of each length into one array and computes
the individuals chart, the Anderson-Darling test and the two-sided Grubbs test of every row
together; each row's result is remembered, and :func:`~verify.stats.stability.individuals_chart`,
:func:`~verify.stats.normality.anderson_darling` and :func:`~verify.stats.outliers.grubbs`
return it for that sample.

The results are the one-sample functions' own, bit for bit: the arithmetic is the same element
by element, every reduction runs along a row of a C-contiguous array (numpy then sums each
row exactly as it sums a 1-D array: pairwise, in the same order), and the scalar steps (the
p-values, the limits) are the same Python code on the same numbers. A sample the one-sample
function would refuse (too few values, no spread, non-finite values) is left to it, so that it
raises its own error. tests/test_stats_batch.py holds the two routes together.
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from . import _memo, nonparametric
from .core import MAX_MAGNITUDE
from .normality import NormalityResult, _ad_pvalue
from .one_way import OneWay
from .outliers import _GRUBBS_SIDE, GRUBBS_MIN_N, GrubbsResult, grubbs_pvalues
from .range_constants import D2_TABLE
from .resolution import step_from_units
from .samples import RESOLUTION_DIGITS, group_codes, median
from .stability import StabilityResult
from .variance_components import sds_of

MIN_ROWS = 2  # fewer samples of a length gain nothing from stacking
#: float64 as a dtype: ``a.dtype == FLOAT64`` is ``a.dtype == np.float64`` without making the
#: dtype from the scalar type on each comparison (about 0.1 us; the batch asks it of each
#: sample several times)
FLOAT64 = np.dtype(np.float64)
#: The most values a batched rank test ranks: its tie term sum(t^3 - t), an int64 here and a
#: float sum in the one-sample route, is the same number only while it stays below 2^53
#: (N^3 < 2^53 for N up to about 208,000); larger samples go to the one-sample route.
EXACT_TIES_N = 200_000


def prefetch(samples, in_lots=(), joined=()) -> None:
    """Compute and remember the per-sample diagnostics of every read-only sample given, the
    one-way analysis (:func:`~verify.stats.one_way.one_way`) of each read-only sample of
    ``in_lots`` (pairs of a sample and its lot labels, a tuple of text), and the resolution
    (:func:`~verify.stats.resolution.resolution_of`) of each tuple of read-only samples in
    ``joined``, joined end to end.

    Samples that are not read-only, or whose diagnostics are remembered already, are skipped;
    so are lengths with fewer than :data:`MIN_ROWS` samples.
    """
    _one_ways(in_lots)
    _resolutions(joined)
    by_n: dict[int, dict[int, np.ndarray]] = {}
    for x in {id(x): x for x in samples}.values():  # (a sample given twice is looked at once)
        if (x is None or not _memo.frozen(x) or x.ndim != 1 or x.dtype != FLOAT64
                or _memo.recall("individuals_chart", x) is not None):
            continue
        by_n.setdefault(x.size, {})[id(x)] = x
    for n, group in by_n.items():
        if len(group) >= MIN_ROWS and n >= 3:
            _stacked(list(group.values()), n)


def _stack(arrays: list[np.ndarray], k: int, n: int) -> np.ndarray:
    """1-D arrays end to end as ``k`` rows of ``n`` values, C-contiguous: np.stack's array for
    rows of one length, in one concatenation (np.stack makes a view of each row first); a row
    may be given in pieces, each row's pieces in turn. Another total is an error, never rows cut
    across samples."""
    joined = np.concatenate(arrays)
    if joined.size != k * n:
        raise ValueError(f"the rows to stack differ in length: {joined.size} values for {k} x {n}")
    return joined.reshape(k, n)


def _stacked(rows: list[np.ndarray], n: int) -> None:
    x = _stack(rows, len(rows), n)  # (k, n), C-contiguous
    # finite, within the magnitude mean_sd accepts, with a spread: what every diagnostic here
    # needs (anything else goes to the one-sample route and its error; NaN fails the tests)
    lo, hi = np.minimum.reduce(x, axis=1), np.maximum.reduce(x, axis=1)
    ok = (-MAX_MAGNITUDE <= lo) & (hi <= MAX_MAGNITUDE) & (lo != hi)
    if not ok.all():
        rows = [r for r, good in zip(rows, ok.tolist(), strict=True) if good]
        x, lo, hi = x[ok], lo[ok], hi[ok]
    if not rows:
        return
    # what is remembered of each row, added to in place (the rows are frozen: prefetch's)
    memo = [_memo.topics(r) for r in rows]
    for t, low, high in zip(memo, lo.tolist(), hi.tolist(), strict=True):
        # every value finite (a NaN or an infinity fails the bounds): what
        t["finite"] = True  # samples.finite_values checks
        # and the (minimum, maximum) the process summary shows (evaluate_gather._extremes: a
        # row's extremes are exact whatever the order of reduction but for a zero)
        if low != 0.0 and high != 0.0:
            t["extremes"] = (low, high)
    means, sds = _mean_sds(memo, x, n)
    m, s = np.array(means), np.array(sds)
    keep = np.isfinite(s) & (s > 0.0)
    if not keep.all():
        if np.count_nonzero(keep) < MIN_ROWS:
            return
        flags = keep.tolist()
        rows = [r for r, good in zip(rows, flags, strict=True) if good]
        memo = [t for t, good in zip(memo, flags, strict=True) if good]
        x, lo, hi, m, s = x[keep], lo[keep], hi[keep], m[keep], s[keep]
    elif len(rows) < MIN_ROWS:
        return
    _charts(rows, memo, x, m, lo, hi, n)
    if n <= 5000:
        _shapiro_wilk(memo, x, n)
    if n >= 8:
        _anderson_darling(memo, x, m, s, n)
    if n >= GRUBBS_MIN_N:
        _grubbs(memo, x, m, s, n)


def _mean_sds(memo: list[dict], x: np.ndarray, n: int) -> tuple[list, list]:
    """core.mean_sd of each row of ``x`` (finite, within core.MAX_MAGNITUDE, n >= 2), remembered
    for its sample (in ``memo``: what is remembered of each row), and the means and sds: the
    corrected two-pass sums along C-contiguous rows (as the 1-D sums add), the scalar steps in
    the same Python arithmetic. (A sample whose summary was remembered before gets the same
    floats again.)"""
    total = np.add.reduce(x, axis=1)
    m = total / n
    d = np.ascontiguousarray(x - m[:, None])
    m = m + np.add.reduce(d, axis=1) / n  # second-pass correction of the mean
    means = m.tolist()
    d = np.ascontiguousarray(x - m[:, None])
    squares = np.add.reduce(d * d, axis=1).tolist()
    sums = np.add.reduce(d, axis=1).tolist()
    # sm ** 2 in Python floats, as mean_sd squares it (a power, not a product)
    sds = [math.sqrt(max(sq - sm ** 2 / n, 0.0) / (n - 1))
           for sq, sm in zip(squares, sums, strict=True)]
    for t, mean, sd in zip(memo, means, sds, strict=True):
        t["mean_sd"] = (n, mean, sd)
    return means, sds


def _resolutions(joined) -> None:
    """resolution._steps of each tuple of read-only samples joined end to end, for the joined
    lengths met by several tuples computed together: each row snapped to its grid as
    samples.snap_to_grid snaps it, sorted, the nonzero gaps of neighbours counted and the
    smallest taken (a minimum is exact whatever the order). Rows that are not finite, or that
    snap_to_grid treats apart, are left to the one-sample route."""
    by_n: dict[int, dict[tuple, tuple]] = {}
    for parts in joined:
        size = 0
        for x in parts:
            if not (_memo.frozen(x) and x.ndim == 1 and x.dtype == FLOAT64):
                break
            size += x.size
        else:
            if parts and _memo.recall("resolution", parts[0]) is None:
                by_n.setdefault(size, {})[tuple(map(id, parts))] = parts
    for n, group in by_n.items():
        if len(group) >= MIN_ROWS and n >= 2:
            _resolution_rows(list(group.values()), n)


def _resolution_rows(rows: list[tuple], n: int) -> None:
    x = _stack([x for parts in rows for x in parts], len(rows), n)  # each row its parts joined
    units, ok, quanta = _snapped(x)
    ok &= np.logical_and.reduce(np.isfinite(x), axis=1)
    _remember_steps(rows, ok.tolist(), np.sort(units, axis=1), quanta)


def _remember_steps(rows: list[tuple], good: list[bool], s: np.ndarray, quanta: list) -> None:
    """The resolution of each tuple of ``rows`` that is ``good`` from its joined values snapped
    and sorted (``s``; the order of equal values changes no gap): the nonzero gaps counted and
    the smallest taken (exact whatever the order), remembered for the tuple's first sample."""
    n = s.shape[1]
    gaps = s[:, 1:] - s[:, :-1]
    nonzero = gaps != 0
    distinct = (np.add.reduce(nonzero, axis=1) + 1).tolist()
    smallest = np.minimum.reduce(np.where(nonzero, gaps, np.inf), axis=1).tolist()
    for parts, yes, count, step, quantum in zip(rows, good, distinct, smallest, quanta,
                                                strict=True):
        if yes:
            _memo.remember("resolution", parts[0], (parts[1:], (
                n, count, None if count < 2 else step_from_units(step, quantum))))


def _one_ways(in_lots) -> None:
    """one_way of each read-only sample in its lots, for the samples whose (remembered,
    read-only) lot codes are equal computed together (each remembered with its own codes, the
    object the one-sample route will hold): the same arithmetic element by
    element, the group sums accumulated in the order np.bincount adds them, each row's sums of
    squares by the dot np.dot computes on that row (as the one-sample route on the sample), the
    F tail once for all rows. Rows that are not finite, or without variation within the lots,
    are left to the one-sample route (and its error)."""
    by_codes: dict[bytes, tuple] = {}
    # the codes of each lots tuple and its group (by the codes' content), or None where the
    # one-sample route would not share them: group_codes remembers a tuple of text by content
    # (each tuple looked up once, by identity, the entry holding it so that its id stays its:
    # the gathering gives the streams of equal lots one tuple)
    codes_of: dict[int, tuple] = {}
    for x, lots in in_lots:
        if (not _memo.frozen(x) or x.ndim != 1 or x.dtype != FLOAT64 or type(lots) is not tuple
                or len(lots) != x.size or _memo.recall("one_way", x) is not None):
            continue
        hit = codes_of.get(id(lots))
        if hit is not None and hit[0] is lots:
            found = hit[1]
        else:
            try:
                codes = group_codes(lots, x.size)[1]
            except ValueError:
                codes = None
            if codes is not None and codes.flags.writeable:  # not remembered by content: the
                codes = None  # one-sample route would not share it
            found = None if codes is None else (
                codes, by_codes.setdefault(codes.tobytes(), (codes, {}))[1])
            codes_of[id(lots)] = (lots, found)
        if found is not None:
            found[1][id(x)] = (x, found[0])
    for codes, group in by_codes.values():
        if len(group) >= MIN_ROWS:
            _one_way_rows(list(group.values()), codes)


def _one_way_rows(rows: list[tuple[np.ndarray, np.ndarray]], codes: np.ndarray) -> None:
    """one_way._one_way of each sample of ``rows`` (pairs of a sample and its codes, equal to
    ``codes``), see there."""
    n_total = codes.size
    sizes = np.bincount(codes)
    k = sizes.size
    if k < 2 or n_total <= k:
        return  # no between or no within degrees of freedom: the one-sample route's case
    a = _stack([r[0] for r in rows], len(rows), n_total)
    ok = np.logical_and.reduce(np.isfinite(a), axis=1)
    if not ok.all():
        a = a[ok]
        rows = [r for r, good in zip(rows, ok.tolist(), strict=True) if good]
        if not rows:
            return
    m = len(rows)
    grand = np.add.reduce(a, axis=1) / n_total  # each row summed as the 1-D sample is
    centred = a - grand[:, None]
    # np.bincount adds each row's weights in order into its groups: one flat bincount with the
    # groups of row r offset by r * k adds the same values in the same order
    flat = (codes[None, :] + (k * np.arange(m))[:, None]).ravel()
    means_c = np.bincount(flat, weights=centred.ravel(), minlength=m * k).reshape(m, k) / sizes
    resid = centred - means_c[:, codes]
    df_b, df_w = k - 1, n_total - k
    n0 = (n_total - float(np.dot(sizes, sizes)) / n_total) / df_b
    # each row's sums of squares as np.dot sums them on that row: matmul of a (1, n) row by an
    # (n, 1) column calls the dot loop np.dot calls (the same BLAS dot, in the same order)
    ss_within = np.matmul(resid[:, None, :], resid[:, :, None])[:, 0, 0]
    ss_between = np.matmul(sizes.astype(float), (means_c**2)[:, :, None])[:, 0]
    keep = ss_within > 0.0  # else the one-sample route raises its own error
    if not keep.any():
        return
    msb, msw = ss_between / df_b, ss_within / df_w
    f = msb / np.where(keep, msw, 1.0)
    p = special.fdtrc(df_b, df_w, f).tolist()
    # the variance components' sds too where they are estimable (2 lots of 2 parts or more;
    # else variance_components.sd_components raises its own error)
    components = int(np.count_nonzero(sizes >= 2)) >= 2
    for r, ((x, own), good, grand_r, msb_r, msw_r, f_r, p_r) in enumerate(zip(
            rows, keep.tolist(), grand.tolist(), msb.tolist(), msw.tolist(), f.tolist(), p,
            strict=True)):
        if good:
            t = _memo.topics(x)  # (frozen: _one_ways')
            t["one_way"] = (own, OneWay(grand_r, means_c[r], df_b, df_w, msb_r, msw_r, n0, f_r,
                                        min(1.0, max(0.0, p_r))))
            if components:
                t["sd_components"] = (own, sds_of(msb_r, msw_r, n0))


def _charts(rows, memo, x, m, lo, hi, n) -> None:
    """individuals_chart of each row (see stability.individuals_chart): the limits in the same
    float arithmetic element by element, the runs of all rows numbered together."""
    mr = np.add.reduce(np.ascontiguousarray(np.abs(x[:, 1:] - x[:, :-1])), axis=1)
    mr_bar = mr / (n - 1)  # float(sum) / (n - 1)
    sigma = mr_bar / D2_TABLE[2]
    ucl, lcl = m + 3.0 * sigma, m - 3.0 * sigma
    sign = np.sign(x - m[:, None]).astype(int)
    # the run each value belongs to, numbered across all rows, and each run's length
    change = np.ones(sign.shape, dtype=bool)
    np.not_equal(sign[:, 1:], sign[:, :-1], out=change[:, 1:])
    run_id = np.cumsum(change.ravel()).reshape(sign.shape) - 1
    run_len = np.bincount(run_id.ravel())[run_id]
    run_len[sign == 0] = 0
    longest = run_len.max(axis=1).tolist()
    start = run_len.argmax(axis=1)
    above = (sign[np.arange(sign.shape[0]), start] > 0).tolist()
    # the points beyond the limits, looked for in the rows that reach beyond them
    outside = ((lo < lcl) | (hi > ucl)).tolist()
    for a, t, centre, mrb, sg, u, low, out, length, first, up in zip(
            rows, memo, m.tolist(), mr_bar.tolist(), sigma.tolist(), ucl.tolist(), lcl.tolist(),
            outside, longest, start.tolist(), above, strict=True):
        if not mrb > 0.0:
            continue  # the one-sample route raises its own error
        t["mr_bar"] = mrb
        beyond = tuple(np.flatnonzero((a > u) | (a < low)).tolist()) if out else ()
        t["individuals_chart"] = StabilityResult(
            n, centre, mrb, sg, u, low, beyond, length, ("above" if up else "below")
            if length else None, first if length else None)


def _shapiro_wilk(memo, x, n) -> None:
    """shapiro_wilk of each row (see normality._swilk): the rows sorted together, less each
    sample's own middle value, then scipy's routine row by row. The routine's coefficients
    depend on n alone: computed by the first row's call (``init`` 0, as the one-sample route
    calls it) and handed to the others (``init`` 1: the routine reads them and skips that
    step), which gives each row the W and p-value of its own call."""
    from .normality import _swilk_routine  # scipy's routine without importing scipy.stats

    swilk = _swilk_routine()
    if swilk is None:  # pragma: no cover - left to the one-sample route
        return
    y = np.sort(x, axis=1)
    y -= x[:, n // 2][:, None]
    coefficients = np.zeros(n // 2, dtype=np.float64)
    init = 0
    for r, t in enumerate(memo):
        w, pw, _ = swilk(y[r], coefficients, init)
        # the routine fills the coefficients in place (the first is about 0.4 and above): a
        # routine that did not would leave zeros, and every row then computes its own
        init = 1 if coefficients[0] > 0.0 else 0
        t["shapiro_wilk"] = NormalityResult(
            "Shapiro-Wilk normality test", float(w), float(min(1.0, max(0.0, float(pw)))), n)


def _anderson_darling(memo, x, m, s, n) -> None:
    """anderson_darling of each row (see normality.anderson_darling)."""
    w = np.sort((x - m[:, None]) / s[:, None], axis=1)
    i = np.arange(1, n + 1)
    terms = np.ascontiguousarray(
        (2 * i - 1) * (special.log_ndtr(w) + special.log_ndtr(-w[:, ::-1])))
    a2 = -n - np.add.reduce(terms, axis=1) / n  # element by element the one-sample floats
    a_star = a2 * (1.0 + 0.75 / n + 2.25 / n**2)
    method = "Anderson-Darling normality test (mean and sd estimated)"
    for t, stat, adj in zip(memo, a2.tolist(), a_star.tolist(), strict=True):
        t["anderson_darling"] = NormalityResult(method, stat, _ad_pvalue(adj), n, adj)


def _grubbs(memo, x, m, s, n) -> None:
    """The two-sided grubbs of each row (see outliers.grubbs): G and its p-value element by
    element in the same float arithmetic (:func:`~verify.stats.outliers.grubbs_pvalues`)."""
    idx = np.argmax(np.abs(x - m[:, None]), axis=1)
    value = x[np.arange(x.shape[0]), idx]
    g = np.abs(value - m) / s
    p = grubbs_pvalues(g, n, alternative="two-sided").tolist()
    method = f"Grubbs outlier test ({_GRUBBS_SIDE['two-sided']})"
    for t, gr, j, v, pr in zip(memo, g.tolist(), idx.tolist(), value.tolist(), p, strict=True):
        t["grubbs two-sided"] = GrubbsResult(method, gr, j, v, n, "two-sided", pr)


# --- rank tests ------------------------------------------------------------------------------


def prefetch_ranks(requests, joined=()) -> None:
    """Compute and remember the rank-test statistics of many samples together, and the
    resolutions of ``joined`` (see below).

    ``requests`` holds ``("signed_rank", x, target)`` (the signed-rank test of ``x - target``,
    zeros dropped: :func:`~verify.stats.nonparametric.signed_rank_about`) and
    ``("rank_sum", old, new)`` (:func:`~verify.stats.nonparametric.mann_whitney`), and
    ``("brown_forsythe", old, new)`` (the sums :func:`~verify.stats.spread.brown_forsythe` reads:
    the absolute deviations from each sample's median, their means and sum of squares), for
    read-only samples; anything else, and any row the one-sample route would treat apart
    (non-finite values, differences that are all zero, identical values, values near the
    float floor), is left to the one-sample route.

    ``joined``: as :func:`prefetch`'s; a pair that is also a rank-sum request's (old, new) is
    read off its joined values, snapped and sorted for the ranks, the others as prefetch does.
    """
    signed: dict[tuple, list] = {}
    pairs: dict[tuple, list] = {}
    spreads: dict[tuple, dict] = {}
    for kind, x, y in requests:
        if kind == "brown_forsythe":
            if (_memo.frozen(x) and _memo.frozen(y) and x.ndim == 1 and y.ndim == 1
                    and x.dtype == FLOAT64 and y.dtype == FLOAT64
                    and _memo.recall("brown_forsythe", x) is None):
                spreads.setdefault((x.size, y.size), {})[(id(x), id(y))] = (x, y)
            continue
        if kind == "signed_rank" and _memo.frozen(x) and x.ndim == 1 and x.dtype == FLOAT64:
            if _memo.recall("signed_rank", x) is None:
                signed.setdefault(x.size, {})[(id(x), float(y))] = (x, float(y))
        elif (kind == "rank_sum" and _memo.frozen(x) and _memo.frozen(y) and x.ndim == 1
              and y.ndim == 1 and x.dtype == FLOAT64 and y.dtype == FLOAT64):
            if _memo.recall("rank_sum", x) is None:
                pairs.setdefault((x.size, y.size), {})[(id(x), id(y))] = (x, y)
    for n, group in signed.items():
        if len(group) >= MIN_ROWS and 2 <= n <= nonparametric.EXACT_MAX_N:
            _signed_ranks(list(group.values()), n)
    # the resolutions a rank-sum row answers: its pair, joined, read-only and not yet known
    wanted = {(id(parts[0]), id(parts[1])) for parts in joined
              if len(parts) == 2 and _memo.recall("resolution", parts[0]) is None}
    for (n_old, n_new), group in pairs.items():
        if len(group) >= MIN_ROWS and n_old >= 1 and n_new >= 1 and n_old + n_new <= EXACT_TIES_N:
            _rank_sums(list(group.values()), n_old, n_new, wanted)
    _resolutions(joined)  # the others (those remembered above are skipped)
    for (n_old, n_new), group in spreads.items():
        if len(group) >= MIN_ROWS and n_old >= 2 and n_new >= 2:
            _brown_forsythe_sums(list(group.values()), n_old, n_new)


def _snapped(d: np.ndarray) -> tuple[np.ndarray, np.ndarray, list[float]]:
    """samples.snap_to_grid of each row, which rows it handles as the usual case (a positive
    finite largest magnitude, a quantum above the float floor) and each row's quantum (1.0 for
    the others)."""
    scale = np.maximum.reduce(np.abs(d), axis=1)
    good = (scale > 0.0) & (scale < math.inf)  # (NaN is neither)
    top = RESOLUTION_DIGITS - 1
    quanta = [10.0 ** (math.floor(math.log10(ref)) - top) if g else 1.0
              for ref, g in zip(scale.tolist(), good.tolist(), strict=True)]
    q = np.array(quanta)
    ok = good & (q >= 1e-290)
    if not ok.all():
        q[~ok] = 1.0
        quanta = q.tolist()
    return np.round(d / q[:, None]), ok, quanta


def _sorted_ranks(a: np.ndarray, *, skip_zeros: bool = False):
    """nonparametric.average_ranks of each row, in sorted order: where each sorted value sits
    in its row and in the rows laid end to end, its average rank (the one-sample route's float),
    and each row's tie counts: the groups of two or more equal values, the values in them, and
    sum(t^3 - t) over its groups of t equal values (an exact integer, below 2^53 for the row
    lengths batched: :data:`EXACT_TIES_N`); and the sorted values. The values of a group of
    equal ones share their average rank, so the order among them (which the one-sample route's
    stable sort fixes) changes no rank and no sum of ranks: the sort need not be stable.

    With ``skip_zeros`` (``a`` >= 0), the zeros are left out, as if each row held its non-zero
    values only: they sort first, so a value's rank among the others is its rank less the
    row's zeros (halves and whole numbers far below 2^53: exact), and their group is no tie."""
    k, width = a.shape
    order = np.argsort(a, axis=1)
    flat = order + (width * np.arange(k))[:, None]
    s = np.ascontiguousarray(a).ravel()[flat]
    new_value = np.ones((k, width), dtype=bool)
    np.not_equal(s[:, 1:], s[:, :-1], out=new_value[:, 1:])
    run_id = np.cumsum(new_value.ravel()).reshape(k, width) - 1
    size = np.bincount(run_id.ravel())[run_id]
    start = np.maximum.accumulate(np.where(new_value, np.arange(width), 0), axis=1)
    # a group of size t starting at 0-based position i holds ranks i+1 .. i+t: average
    # i + (t + 1) / 2, the same float as the one-sample route's
    ranks = start + (size + 1) / 2.0
    tied = size > 1
    if skip_zeros:
        counted = s != 0.0
        ranks -= (width - np.add.reduce(counted, axis=1))[:, None]
        tied &= counted
    first_of_tie = tied & new_value
    ties = (np.add.reduce(first_of_tie, axis=1).tolist(), np.add.reduce(tied, axis=1).tolist(),
            np.add.reduce(np.where(first_of_tie, size**3 - size, 0), axis=1))
    return order, flat, ranks, ties, s


def _row_medians(v: np.ndarray, *, row=None) -> list[float]:
    """samples.median of each row: order statistics, whatever selection finds them (one
    partition at the upper middle; the lower middle of an even row is the largest value below
    it). Partitions ``v`` in place when ``row`` is given: ``row(r)`` then makes row r again, in
    its order, for the only case where the selection matters (a middle value that is a zero in
    a row holding a -0.0: which zero is found depends on the order of the search, and such a
    row goes to samples.median as the one-sample route's array)."""
    width = v.shape[1]
    h = width // 2
    p = v if row is not None else v.copy()  # (np.partition's copy, without its wrapper)
    p.partition(h, axis=1)
    hi = p[:, h]
    if width % 2:
        mid = hi
        zero = hi == 0.0
    else:
        lo = np.maximum.reduce(p[:, :h], axis=1)
        # (lo + hi) / 2.0 of each row, element by element: the floats the one-sample route gives
        mid = (lo + hi) / 2.0
        zero = (lo == 0.0) | (hi == 0.0)
    out = mid.tolist()
    if zero.any():
        for r in np.flatnonzero(zero).tolist():
            if np.logical_or.reduce(np.signbit(p[r][p[r] == 0.0])):
                out[r] = median(row(r) if row is not None else v[r])
    return out


def _signed_ranks(rows: list[tuple[np.ndarray, float]], n: int) -> None:
    """nonparametric._signed_rank_core (zeros dropped) of each ``x - target``, for samples of
    one length: the rows ranked together, each row's zero differences left out of its ranks and
    ties (its non-zero differences ranked as the one-sample route ranks them after dropping the
    zeros); a row of zeros only is left to that route and its error."""
    x = _stack([r[0] for r in rows], len(rows), n)
    d = x - np.array([r[1] for r in rows])[:, None]  # x - target, element by element
    units, ok, _ = _snapped(d)
    ok &= np.logical_and.reduce(np.isfinite(d), axis=1)
    n_nonzero = np.add.reduce(units != 0, axis=1)
    ok &= n_nonzero > 0
    if not ok.any():
        return
    if not ok.all():
        d, units, n_nonzero = d[ok], units[ok], n_nonzero[ok]
        rows = [r for r, good in zip(rows, ok.tolist(), strict=True) if good]
    estimates = [None] * len(rows)
    if n * (n + 1) // 2 <= nonparametric.HL_MAX_PAIRS:  # the Walsh averages of all n
        i, j = nonparametric._upper_pairs(n)
        # (d_i + d_j) / 2.0 element by element, in place: the temporaries, each the size of all
        # rows' averages, cost more to allocate and touch than the arithmetic
        walsh = d[:, i]  # (fancy indexing: a new array)
        walsh += d[:, j]
        walsh /= 2.0
        estimates = _row_medians(walsh, row=lambda r: (d[r][i] + d[r][j]) / 2.0)
    # all rows ranked together, each row's zeros left out (as the one-sample route drops them)
    _, flat, ranks, (groups, tied_values, tie_term), _ = _sorted_ranks(np.abs(units),
                                                                       skip_zeros=True)
    # the ranks of the positive differences: halves far below 2^53, a sum exact in any order
    positive = units.ravel()[flat] > 0
    w_plus = np.add.reduce(np.where(positive, ranks, 0.0), axis=1).tolist()
    # nonparametric._signed_rank_core's mean and variance for m non-zero differences, and
    # _signed_rank_se, element by element (the tie term an exact integer either way: n <= 50)
    fm = n_nonzero.astype(float)
    mean = fm * (fm + 1.0) * 0.25
    var = fm * (fm + 1.0) * (2.0 * fm + 1.0)
    se = np.sqrt((var - tie_term / 2.0) / 24.0).tolist()
    for (x_r, target), m, w, g, t, mean_r, se_r, est in zip(
            rows, n_nonzero.tolist(), w_plus, groups, tied_values, mean.tolist(), se, estimates,
            strict=True):
        exact = g == 0  # m <= n <= EXACT_MAX_N
        _memo.remember("signed_rank", x_r, (target, nonparametric._SignedRank(
            w, m, n - m, g, t, exact, m, None if exact else mean_r, None if exact else se_r,
            est, "wilcox")))


def _rank_sums(rows: list[tuple[np.ndarray, np.ndarray]], n_old: int, n_new: int,
               wanted: set = frozenset()) -> None:
    """nonparametric._rank_sum_core of each (old, new), and the resolution of those whose
    ``(id(old), id(new))`` is in ``wanted``: the rows _resolution_rows would snap alike (finite,
    the usual case, not of one value), sorted here for the ranks: :func:`_remember_steps`."""
    old = _stack([r[0] for r in rows], len(rows), n_old)
    new = _stack([r[1] for r in rows], len(rows), n_new)
    both = np.concatenate((old, new), axis=1)
    units, ok, quanta = _snapped(both)
    ok &= np.logical_and.reduce(np.isfinite(both), axis=1)
    ok &= ~np.logical_and.reduce(units == units[:, :1], axis=1)  # identical: the one route
    answer = [good and (id(a), id(b)) in wanted
              for (a, b), good in zip(rows, ok.tolist(), strict=True)] if wanted else None
    if not ok.any():
        return
    if not ok.all():
        flags = ok.tolist()
        old, new, units = old[ok], new[ok], units[ok]
        rows = [r for r, good in zip(rows, flags, strict=True) if good]
        quanta = [q for q, good in zip(quanta, flags, strict=True) if good]
        if answer is not None:
            answer = [yes for yes, good in zip(answer, flags, strict=True) if good]
    order, _, ranks, (groups, tied_values, tie_term), s = _sorted_ranks(units)
    if answer is not None and any(answer):
        _remember_steps(rows, answer, s, quanta)
    # the new values' ranks: halves far below 2^53, a sum exact in any order
    rank_sums = np.add.reduce(np.where(order >= n_old, ranks, 0.0), axis=1)
    u_new = (rank_sums - n_new * (n_new + 1) / 2.0).tolist()
    # nonparametric._rank_sum_se of each row, the tie term an exact integer either way (below
    # 2^53: N <= EXACT_TIES_N)
    big_n = float(n_old + n_new)
    se = np.sqrt(n_old * n_new / 12.0
                 * ((big_n + 1.0) - tie_term / (big_n * (big_n - 1.0)))).tolist()
    estimates = [None] * len(rows)
    if n_old * n_new <= nonparametric.HL_MAX_PAIRS:
        estimates = _row_medians((new[:, :, None] - old[:, None, :]).reshape(len(rows), -1),
                                 row=lambda r: np.subtract.outer(new[r], old[r]).ravel())
    small = n_old < nonparametric.EXACT_MAX_N and n_new < nonparametric.EXACT_MAX_N
    for r, (a, b) in enumerate(rows):
        exact = groups[r] == 0 and small
        _memo.remember("rank_sum", a, (b, nonparametric._RankSum(
            u_new[r], n_old, n_new, groups[r], tied_values[r], exact, None if exact else se[r],
            estimates[r])))


def _brown_forsythe_sums(rows: list[tuple[np.ndarray, np.ndarray]], n_old: int,
                         n_new: int) -> None:
    """spread._brown_forsythe_sums of each (old, new): each sample's row median (as
    samples.median), the absolute deviations from it, their means and squared deviations
    summed along C-contiguous rows (as the 1-D sums add); rows with a non-finite value are left
    to the one-sample route and its error."""
    old = _stack([r[0] for r in rows], len(rows), n_old)
    new = _stack([r[1] for r in rows], len(rows), n_new)
    ok = (np.logical_and.reduce(np.isfinite(old), axis=1)
          & np.logical_and.reduce(np.isfinite(new), axis=1))
    if not ok.any():
        return
    if not ok.all():
        old, new = old[ok], new[ok]
        rows = [r for r, good in zip(rows, ok.tolist(), strict=True) if good]
    za = np.abs(old - np.array(_row_medians(old))[:, None])
    zb = np.abs(new - np.array(_row_medians(new))[:, None])
    ma = np.add.reduce(za, axis=1) / n_old  # float(sum) / n: the same division in float64
    mb = np.add.reduce(zb, axis=1) / n_new
    ss = (np.add.reduce(np.ascontiguousarray((za - ma[:, None]) ** 2), axis=1)
          + np.add.reduce(np.ascontiguousarray((zb - mb[:, None]) ** 2), axis=1))
    for (a, b), m_a, m_b, s2 in zip(rows, ma.tolist(), mb.tolist(), ss.tolist(), strict=True):
        _memo.remember("brown_forsythe", a, (b, (n_old, n_new, m_a, m_b, s2)))
