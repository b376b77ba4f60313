"""Power and detectable shift of the t-tests, TOST and non-inferiority.

Planning quantities for the designs of :mod:`verify.stats.ttests`. ``sd`` is the true
(planning) standard deviation of one measurement, or of one paired difference for the paired
design; the estimate then has standard deviation ``tau = sd * sqrt(k)`` with ``k = 1/n``
(one-sample, paired; ``n_new`` is the number of values or pairs) or ``k = 1/n_new + 1/n_old``
(welch, pooled). Degrees of freedom are ``n - 1`` and ``n_new + n_old - 2``.

Welch: the power of the Welch test has no closed form. We use the usual approximation: the
Welch statistic is taken as noncentral t with noncentrality ``shift / tau`` and the
Welch-Satterthwaite df computed from the planning sds, ``tau^2 = sd^2/n_new + sd_old^2/n_old``
(``sd_old`` defaults to ``sd``). With equal sds and equal lot sizes this is exactly the pooled
calculation.

Noncentral t probabilities come from :mod:`verify.stats.noncentral` (never NaN); sample
sizes from :mod:`verify.stats.sample_size`.

The exact TOST power integrates over the distribution of the sample sd ``S`` (``S^2 / sd^2``
is chi-square on df divided by df): given ``S = s`` the estimate must fall in
``(low + c tau s, high - c tau s)``, ``c = t(1 - alpha, df)``, which has normal probability.
The integral runs by fixed Gauss-Legendre quadrature (:data:`GL_POINTS` nodes on each piece of
the range, cut at quantiles of ``S`` and where the normal probabilities are steep), evaluated
for many lot sizes in one vectorised pass; ``quadrature="adaptive"`` keeps the adaptive
``scipy.integrate.quad`` route, and tests hold the two together to 1e-12.
"""

from __future__ import annotations

import math
import numbers

import numpy as np
from scipy import special

from ._checks import check_harmful, check_margins, finite, number, positive
from .core import check_alternative, critical_value, t_cdf
from .errors import NotApplicableError
from .noncentral import _clip01, _expect_over_sd, _sd_ratio_log_constant, _t_upper, nct_cdf, nct_sf
from .ttests import check_design

#: The target power a planning question gets when its caller names none (common practice).
DEFAULT_POWER = 0.8

#: Gauss-Legendre nodes per piece of the TOST power integral. Each piece lies between
#: quantiles of the sd ratio or around a steep point of the integrand, where it is smooth, so
#: the rule converges fast; tests hold it to the adaptive route at 1e-12 over a grid of
#: designs, lot sizes, margins and shifts.
GL_POINTS = 40
_GL_X, _GL_W = np.polynomial.legendre.leggauss(GL_POINTS)
#: Nodes for a piece in the outer 1e-9 of the sd ratio's distribution: its share of the
#: integral is below 1e-9, so a relative error of 1e-4 there is far below 1e-12 overall.
GL_TAIL_POINTS = 16
_GL_TAIL_X, _GL_TAIL_W = np.polynomial.legendre.leggauss(GL_TAIL_POINTS)
QUADRATURES = ("gauss-legendre", "adaptive")


# --- validation -----------------------------------------------------------------------------


def _count(n: object, what: str) -> int:
    if type(n) is int and n >= 2:  # the common case, as the checks below would return it
        return n
    if isinstance(n, float) and n.is_integer():
        n = int(n)
    if isinstance(n, bool) or not isinstance(n, numbers.Integral):
        raise ValueError(f"{what} must be a whole number, not {n!r}")
    if n < 2:
        raise ValueError(f"{what} must be at least 2, got {n}")
    return int(n)


def _alpha(alpha: float, upper: float = 1.0) -> float:
    a = number(alpha, "alpha")
    if not 0.0 < a < upper:
        raise ValueError(f"alpha must lie in (0, {upper:g}), not {alpha!r}")
    return a


def _target_power(power: float) -> float:
    p = number(power, "the target power")
    if not 0.0 < p < 1.0:
        raise ValueError(f"the target power must lie in (0, 1), not {power!r}")
    return p


def _plan(
    design: str, sd: float, n_new: object, n_old: object | None, sd_old: float | None
) -> tuple[float, float]:
    """(tau, df): the sd of the estimate and the degrees of freedom of the test."""
    check_design(design)
    s1 = positive(sd, "sd")
    n1 = _count(n_new, "n_new")
    if design in ("one-sample", "paired"):
        if sd_old is not None:
            raise ValueError(f"sd_old applies only to the welch design, not {design!r}")
        if n_old is not None:
            if design == "one-sample":
                raise ValueError("the one-sample design has no old lot: leave n_old out")
            if _count(n_old, "n_old") != n1:
                raise ValueError("for paired data n_old must equal n_new (the number of pairs)")
        return _tau_df(design, s1, None, n1, None)
    if n_old is None:
        raise ValueError(f"the {design} design needs n_old")
    n2 = _count(n_old, "n_old")
    if design == "pooled":
        if sd_old is not None:
            raise ValueError("the pooled design assumes one common sd: leave sd_old out")
        return _tau_df(design, s1, None, n1, n2)
    s2 = s1 if sd_old is None else positive(sd_old, "sd_old")
    return _tau_df(design, s1, s2, n1, n2)


def _tau_df(design: str, s1: float, s2: float | None, n1: int, n2: int | None):
    """(tau, df) from validated inputs (see :func:`_plan`)."""
    if design in ("one-sample", "paired"):
        return s1 / math.sqrt(n1), float(n1 - 1)
    if design == "pooled":
        return s1 * math.sqrt(1.0 / n1 + 1.0 / n2), float(n1 + n2 - 2)
    a = s1 / math.sqrt(n1)
    b = s2 / math.sqrt(n2)
    tau = math.hypot(a, b)
    r = (a / tau) ** 2
    # Welch-Satterthwaite df from the planning sds
    df = 1.0 / (r * r / (n1 - 1) + (1.0 - r) * (1.0 - r) / (n2 - 1))
    return tau, df


# --- power ----------------------------------------------------------------------------------


def power_t(
    shift: float,
    sd: float,
    n_new: int,
    n_old: int | None = None,
    *,
    design: str,
    alpha: float = 0.05,
    alternative: str = "two-sided",
    sd_old: float | None = None,
) -> float:
    """Power of the t-test at level ``alpha`` when the true effect is ``shift``.

    Parameters
    ----------
    shift : float
        True effect (new minus old, or mean minus target), in measurement units.
    sd : float
        True sd of one measurement (paired: of one difference). For welch, the sd of the new
        lot, with ``sd_old`` that of the old lot (default: the same).
    n_new, n_old : int
        Lot sizes; one-sample and paired use ``n_new`` only (number of values or pairs).
    design : {"one-sample", "paired", "welch", "pooled"}
    alternative : {"two-sided", "less", "greater"}
        Two-sided power counts both rejection tails.

    Returns
    -------
    float
        Probability of rejecting H0 (effect 0). Welch uses the noncentral t with
        Welch-Satterthwaite df (see the module notes).

    Examples
    --------
    >>> round(power_t(1.0, 1.0, 30, design="one-sample"), 6)
    0.999564
    """
    check_alternative(alternative)
    a = _alpha(alpha)
    delta = finite(shift, "shift")
    tau, df = _plan(design, sd, n_new, n_old, sd_old)
    nc = delta / tau
    c = critical_value(df, a, alternative)
    if alternative == "greater":
        return nct_sf(c, df, nc)
    if alternative == "less":
        return nct_cdf(-c, df, nc)
    return _clip01(nct_sf(c, df, nc) + nct_cdf(-c, df, nc))


def power_tost(
    true_shift: float,
    sd: float,
    n_new: int,
    n_old: int | None = None,
    *,
    design: str,
    alpha: float = 0.05,
    low: float,
    high: float,
    sd_old: float | None = None,
    quadrature: str = "gauss-legendre",
) -> float:
    """Exact power of the TOST equivalence test with margins ``(low, high)``.

    The probability that both one-sided tests reject at ``alpha`` when the true effect is
    ``true_shift``, integrating over the distribution of the sample sd (exact for
    one-sample, paired and pooled; for welch, the sd of the estimate is taken as scaled
    chi on the Welch-Satterthwaite df, the same approximation as in :func:`power_t`).

    ``quadrature="gauss-legendre"`` (the default) uses the fixed rule of the module notes;
    ``"adaptive"`` the adaptive ``scipy.integrate.quad`` route (slower; the reference).

    Examples
    --------
    >>> p = power_tost(0.0, 1.0, 20, 20, design="pooled", low=-1.0, high=1.0)
    >>> 0.85 < p < 0.9
    True
    """
    a = _alpha(alpha, 0.5)
    delta = finite(true_shift, "true_shift")
    lo, hi = check_margins(low, high)
    if quadrature not in QUADRATURES:
        raise ValueError(f"quadrature must be one of {QUADRATURES}, not {quadrature!r}")
    tau, df = _plan(design, sd, n_new, n_old, sd_old)
    if quadrature == "gauss-legendre":
        return float(_tost_power_many(delta, lo, hi, np.array([tau]), np.array([df]), a)[0])
    c = critical_value(df, a, "greater")
    upper_z = (hi - delta) / tau
    lower_z = (lo - delta) / tau
    s_max = (upper_z - lower_z) / (2.0 * c)  # beyond this the acceptance region is empty

    def g(s: float) -> float:
        return float(special.ndtr(upper_z - c * s) - special.ndtr(lower_z + c * s))

    # the two normal CDFs are steep where their arguments cross 0
    w = 1.0 / c
    points = [z / c + k * w for z in (upper_z, -lower_z) for k in (-3.0, 0.0, 3.0)]
    return _clip01(_expect_over_sd(g, df, upper=s_max, points=points))


def _tost_power_many(delta, lo, hi, taus: np.ndarray, dfs: np.ndarray, alpha,
                     crit: np.ndarray | None = None) -> np.ndarray:
    """TOST power for several (tau, df) at once by fixed Gauss-Legendre quadrature.

    The same integral as the adaptive route: E[P(low + c tau S < est < high - c tau S)] over
    S, on the central 1 - 2e-20 of S's range (``delta``, ``lo``, ``hi`` and ``alpha`` may be
    arrays, one entry per case), cut at the quartiles and the 1e-9 quantiles of S
    and at the steep points ``z/c + k/c`` (k = -3, 0, 3) of the normal probabilities; a piece
    gets :data:`GL_POINTS` nodes (:data:`GL_TAIL_POINTS` in the outer 1e-9 tails), and all
    cases are evaluated in one pass (``crit``: ``stdtrit(dfs, 1 - alpha)`` if the caller has it).
    """
    return _tost_power_rule(delta, lo, hi, taus, dfs, alpha, (_GL_X, _GL_W),
                            (_GL_TAIL_X, _GL_TAIL_W), False, crit)


#: The nodes per piece (and in the outer tails) of the coarse rule
#: (:func:`_tost_power_coarse`).
COARSE_POINTS = 10
COARSE_TAIL_POINTS = 4
_COARSE = np.polynomial.legendre.leggauss(COARSE_POINTS)
_COARSE_TAIL = np.polynomial.legendre.leggauss(COARSE_TAIL_POINTS)

#: The quantiles of the sd ratio S the integral is cut at, as (probability, from above):
#: the exact rule's seven (its range, 1 - 2e-20 of S, and the 1e-9 tails, quartiles and
#: median), then the coarse rule's three more, which split the long stretches of the log
#: scale where the density of S rises like s^df (the lower tail at small df) and the upper
#: tail, so that few nodes per piece suffice there.
_QUANTILES = ((1e-20, False), (1e-9, False), (0.25, False), (0.5, False), (0.25, True),
              (1e-9, True), (1e-20, True), (1e-5, False), (1e-2, False), (1e-4, True))
_EXACT_CUTS, _COARSE_CUTS = 7, 10


def _tost_power_coarse(delta, lo, hi, taus: np.ndarray, dfs: np.ndarray, alpha,
                       crit: np.ndarray | None = None) -> np.ndarray:
    """:func:`_tost_power_many`'s integral with three more cuts (:data:`_QUANTILES`, those of
    the whole df at or below each case's: :func:`_coarse_rows`) and far fewer nodes per piece
    (:data:`COARSE_POINTS`, :data:`COARSE_TAIL_POINTS`): close to it (within
    :data:`~verify.stats.sample_size_many.DECISION_BAND` from df 2 on), not equal. Only for
    deciding whether a power reaches a target that lies well away from it; df of at least 2.
    ``crit``: ``stdtrit(dfs, 1 - alpha)`` where the caller has it (the same floats)."""
    return _tost_power_rule(delta, lo, hi, taus, dfs, alpha, _COARSE, _COARSE_TAIL, True, crit)


#: The sd ratio's quantiles (:data:`_QUANTILES`) and log constant per whole df up to this,
#: remembered (:func:`_sd_ratio_rows`): the one-sample, paired and pooled df are whole numbers
#: that recur in every evaluation (the lot sizes around each guess).
_TABLE_DF = 4096
_TABLE = np.empty((_TABLE_DF + 1, len(_QUANTILES) + 1))  # row d: df d, once _FILLED[d]
_FILLED = np.zeros(_TABLE_DF + 1, dtype=bool)


def _sd_ratio_columns(dfs: np.ndarray, ncuts: int) -> np.ndarray:
    """Per df: S = sqrt(V / df) at the first ``ncuts`` of :data:`_QUANTILES`, then the log
    constant of its density (:func:`~verify.stats.noncentral._sd_ratio_log_constant`)."""
    h = 0.5 * dfs
    cols = [np.sqrt(2.0 * (special.gammainccinv if upper else special.gammaincinv)(h, q) / dfs)
            for q, upper in _QUANTILES[:ncuts]]
    cols.append(np.array([_sd_ratio_log_constant(d) for d in dfs.tolist()]))
    return np.column_stack(cols)


def _table_rows(idx: np.ndarray) -> np.ndarray:
    """The rows of :data:`_TABLE` for whole df ``idx`` (at most :data:`_TABLE_DF`), computing
    those not yet there (a row is marked filled only once written, so a second thread reads
    a row whole or computes it again, to the same floats)."""
    need = idx[~_FILLED[idx]]
    if need.size:
        _TABLE[need] = _sd_ratio_columns(need.astype(float), len(_QUANTILES))
        _FILLED[need] = True
    return _TABLE[idx]


def _sd_ratio_rows(udf: np.ndarray, ncuts: int) -> np.ndarray:
    """:func:`_sd_ratio_columns` of distinct df, whole df up to :data:`_TABLE_DF` read from the
    table (filled as they first appear). The inversions and the arithmetic after them work
    element by element, so a remembered row equals the freshly computed one bit for bit."""
    out = np.empty((udf.size, ncuts + 1))
    whole = (udf <= _TABLE_DF) & (udf == np.floor(udf))
    if whole.any():
        rows = _table_rows(udf[whole].astype(np.intp))
        out[whole, :ncuts] = rows[:, :ncuts]
        out[whole, ncuts] = rows[:, -1]
    rest = ~whole
    if rest.any():
        out[rest] = _sd_ratio_columns(udf[rest], ncuts)
    return out


def _coarse_rows(dfs: np.ndarray) -> np.ndarray:
    """The coarse rule's cuts and log constant per case: the cuts those of the whole df below
    (from the table; a df above :data:`_TABLE_DF`: its own), which, S spreading more the
    fewer its df, cover at least the same range of S; the log constant for the df itself,
    computed directly (no Stirling series): what these change is within the coarse rule's
    measured error (tests/test_plan_walk_decisions.py)."""
    out = np.empty((dfs.size, len(_QUANTILES) + 1))
    below = np.floor(dfs)
    small = below <= _TABLE_DF
    if small.any():
        out[small, :-1] = _table_rows(below[small].astype(np.intp))[:, :-1]
    if not small.all():
        out[~small, :-1] = _sd_ratio_columns(dfs[~small], len(_QUANTILES))[:, :-1]
    h = 0.5 * dfs
    out[:, -1] = math.log(2.0) + h * np.log(h) - h - special.gammaln(h)
    return out


def _tost_power_rule(delta, lo, hi, taus, dfs, alpha, rule, tail_rule, coarse,
                     crit=None) -> np.ndarray:
    """The TOST power integral of :func:`_tost_power_many` with the Gauss-Legendre
    (nodes, weights) ``rule`` on each piece, ``tail_rule`` on the outer 1e-9 tails; cut at the
    exact rule's seven quantiles of :data:`_QUANTILES`, or with ``coarse`` at all ten
    (:func:`_coarse_rows`)."""
    taus = np.asarray(taus, dtype=float)
    dfs = np.asarray(dfs, dtype=float)
    h = 0.5 * dfs
    c = _t_upper(dfs, alpha) if crit is None else crit  # stdtrit(dfs, 1.0 - alpha)
    upper_z = (np.asarray(hi, dtype=float) - delta) / taus
    lower_z = (np.asarray(lo, dtype=float) - delta) / taus
    s_max = (upper_z - lower_z) / (2.0 * c)
    # the quantiles of S depend on df alone, and the cases share few distinct df (the lot sizes
    # around each guess, one df per design and size): each is inverted once (whole df once in
    # the process, _sd_ratio_rows), then spread out
    if coarse:
        per_case, ncuts = _coarse_rows(dfs), _COARSE_CUTS
    else:
        udf, back = np.unique(dfs, return_inverse=True)
        per_case, ncuts = _sd_ratio_rows(udf, _EXACT_CUTS)[back], _EXACT_CUTS
    s_lo = per_case[:, 0]
    s_hi = np.minimum(per_case[:, 6], s_max)
    cuts = np.column_stack([per_case[:, 1:6]] + [
        z / c + k / c for z in (upper_z, -lower_z) for k in (-3.0, 0.0, 3.0)
    ] + [per_case[:, 7:ncuts]])
    # the pieces of every case at once: its edges sorted, cuts outside (s_lo, s_hi) clipped
    # onto its ends, so that they (and repeated cuts) give empty pieces, which are dropped
    inner = np.clip(cuts, s_lo[:, None], s_hi[:, None])
    edges = np.sort(np.column_stack([s_lo, inner, s_hi]), axis=1)
    left, right = edges[:, :-1], edges[:, 1:]
    keep = (right > left) & (s_hi > s_lo)[:, None]  # s_hi <= s_lo: empty acceptance region
    tail = (right <= cuts[:, [0]]) | (left >= cuts[:, [4]])  # beyond the 1e-9 quantiles
    owner = np.broadcast_to(np.arange(taus.size)[:, None], left.shape)
    out = np.zeros(taus.size)
    k0_all = per_case[:, ncuts]
    # (a flat piece needs both margins beyond _NDTR_ONE sds of the estimate: cs > 0)
    flat_cases = ((upper_z >= _NDTR_ONE) & (lower_z <= -_NDTR_ONE)).any()
    for is_tail in (False, True):
        sel = keep & (tail == is_tail)
        if not sel.any():
            continue
        lefts, rights, case = left[sel], right[sel], owner[sel]
        gx, gw = tail_rule if is_tail else rule
        # in t = log s the density's factor s^(df - 1) is smooth even for df near 1, where on
        # the s scale it bends sharply near 0
        log_l, log_r = np.log(lefts), np.log(rights)
        half = 0.5 * (log_r - log_l)
        mid = 0.5 * (log_r + log_l)
        # per piece its case's constants, the nodes in blocks that stay in the processor's
        # cache (_piece_sums). Each piece's sum is its own row's and np.add.at adds them in
        # order, so neither the blocks nor which pieces are summed together change a float
        k0, hh, dm1 = k0_all[case], h[case], dfs[case] - 1.0
        cc, up, low = c[case], upper_z[case], lower_z[case]
        args = (mid, half, k0, hh, dm1, cc, up, low)
        flat = _flat_pieces(rights, cc, up, low) if flat_cases else None  # g 1.0 at all nodes
        if flat is not None and flat.any():
            sums, rest = np.empty(case.size), ~flat
            sums[flat] = _piece_sums(gx, gw, *(x[flat] for x in args[:5]))
            sums[rest] = _piece_sums(gx, gw, *(x[rest] for x in args))
        else:
            sums = _piece_sums(gx, gw, *args)
        np.add.at(out, case, sums)  # each case's pieces added in order, as one by one
    return np.clip(out, 0.0, 1.0)


#: From this argument on ``special.ndtr`` is 1.0 exactly (it rounds to 1.0 from 8.3 on), and
#: at minus it below 1.2e-19, which subtracted from 1.0 leaves 1.0.
_NDTR_ONE = 9.0


def _flat_pieces(rights, cc, up, low) -> np.ndarray:
    """Which pieces have g = ``ndtr(up - c s) - ndtr(low + c s)`` exactly 1.0 at every node:
    both arguments are beyond :data:`_NDTR_ONE` up to the piece's right end, where they are
    closest to 0 (a relative slack of 1e-9 for the nodes' rounding). Their sums are the
    density's alone (``1.0 * x`` is ``x``), so they skip g: the same floats (tests hold it)."""
    cs = cc * (rights * (1.0 + 1e-9))
    return ((up - cs >= _NDTR_ONE + 1e-9 * np.abs(up))
            & (low + cs <= -_NDTR_ONE - 1e-9 * np.abs(low)))


def _piece_sums(gx, gw, mid, half, k0, hh, dm1, cc=None, up=None, low=None) -> np.ndarray:
    """:func:`_pieces` of all pieces in blocks of about ``_BLOCK * GL_POINTS`` nodes (without
    ``cc``, ``up``, ``low``: g is 1.0)."""
    block = _BLOCK * GL_POINTS // gx.size
    out = np.empty(mid.size)
    for a in range(0, mid.size, block):
        b = a + block
        out[a:b] = _pieces(mid[a:b], half[a:b], gx, gw, k0[a:b], hh[a:b], dm1[a:b],
                           *(None if x is None else x[a:b] for x in (cc, up, low)))
    return out


#: Pieces of the TOST power integral evaluated together: their nodes' temporaries (pieces x
#: nodes floats) then stay in the processor's cache.
_BLOCK = 128


def _pieces(mid, half, gx, gw, k0, hh, dm1, cc=None, up=None, low=None) -> np.ndarray:
    """Each piece's Gauss-Legendre sum of g(s) f(s) on the log scale t = log s: nodes
    ``mid + half * gx``, weights ``half * gw * s``, f the sd ratio's density
    (``k0 - h e (2 + e) + (df - 1) t`` in logs, e = s - 1), g the normal probability of the
    acceptance region ``ndtr(up - c s) - ndtr(low + c s)``. Temporaries are reused in place;
    every element is the same float the plain expressions give."""
    col = np.newaxis
    t = half[:, col] * gx
    t += mid[:, col]
    e = np.expm1(t)  # s - 1, accurate near s = 1
    nodes = e + 1.0
    weights = half[:, col] * gw
    weights *= nodes  # ds = s dt
    logpdf = hh[:, col] * e
    logpdf *= e + 2.0  # h e (2 + e), grouped (h e) (2 + e)
    np.subtract(k0[:, col], logpdf, out=logpdf)
    t *= dm1[:, col]
    logpdf += t
    if cc is None:  # g is 1.0 at every node (_flat_pieces): g * f * w is f * w
        np.exp(logpdf, out=logpdf)
        logpdf *= weights
        return np.add.reduce(logpdf, axis=1)
    cs = nodes
    cs *= cc[:, col]
    g = np.subtract(up[:, col], cs)
    special.ndtr(g, out=g)
    cs += low[:, col]
    special.ndtr(cs, out=cs)
    g -= cs
    np.exp(logpdf, out=logpdf)
    g *= logpdf
    g *= weights
    return np.add.reduce(g, axis=1)


def power_tost_shifted_t(
    true_shift: float,
    sd: float,
    n_new: int,
    n_old: int | None = None,
    *,
    design: str,
    alpha: float = 0.05,
    low: float,
    high: float,
    sd_old: float | None = None,
) -> float:
    """Approximate TOST power by shifted central t distributions.

    ``F((high - shift)/tau - c) - F((low - shift)/tau + c)`` with F the central t CDF on df:
    the sample sd is treated as if it equalled the true sd in the acceptance limits. Quick,
    and close for large n, but it can be far off for small lots; :func:`power_tost` is exact.
    """
    a = _alpha(alpha, 0.5)
    delta = finite(true_shift, "true_shift")
    lo, hi = check_margins(low, high)
    tau, df = _plan(design, sd, n_new, n_old, sd_old)
    c = critical_value(df, a, "greater")
    p = t_cdf((hi - delta) / tau - c, df) - t_cdf((lo - delta) / tau + c, df)
    return _clip01(p)


def power_noninferiority(
    true_shift: float,
    sd: float,
    n_new: int,
    n_old: int | None = None,
    *,
    design: str,
    alpha: float = 0.05,
    bound: float,
    harmful: str,
    sd_old: float | None = None,
) -> float:
    """Power of the one-sided non-inferiority test against ``bound``.

    ``harmful="lower"``: H0 effect <= bound is rejected when ``(est - bound)/se > t(1-alpha)``;
    ``harmful="upper"``: H0 effect >= bound is rejected when ``(est - bound)/se < -t(1-alpha)``.
    Exact (noncentral t) except for welch (see the module notes).

    Examples
    --------
    >>> p = power_noninferiority(0.0, 1.0, 20, 20, design="pooled", bound=-1.0, harmful="lower")
    >>> round(p, 4)
    0.9279
    """
    a = _alpha(alpha)
    delta = finite(true_shift, "true_shift")
    b = finite(bound, "bound")
    check_harmful(harmful)
    tau, df = _plan(design, sd, n_new, n_old, sd_old)
    nc = (delta - b) / tau
    c = critical_value(df, a, "greater")
    if harmful == "lower":
        return nct_sf(c, df, nc)
    return nct_cdf(-c, df, nc)


def detectable_shift(
    sd: float,
    n_new: int,
    n_old: int | None = None,
    *,
    design: str,
    alpha: float = 0.05,
    alternative: str = "two-sided",
    power: float = DEFAULT_POWER,
    sd_old: float | None = None,
) -> float:
    """Smallest true shift the t-test detects with probability ``power``.

    Returned as a positive size: for ``alternative="less"`` it is the size of a downward
    shift, for ``"greater"`` and ``"two-sided"`` of an upward one (two-sided power is
    symmetric in the sign of the shift).

    Examples
    --------
    >>> d = detectable_shift(1.0, 30, design="one-sample")
    >>> round(power_t(d, 1.0, 30, design="one-sample"), 6)
    0.8
    """
    check_alternative(alternative)
    a = _alpha(alpha)
    target = _target_power(power)
    tau, _ = _plan(design, sd, n_new, n_old, sd_old)  # validates the inputs once
    sign = -1.0 if alternative == "less" else 1.0
    if target <= a:
        raise ValueError(
            f"the target power {target} must exceed alpha ({a}): a zero shift already has it"
        )

    def gap(size: float) -> float:
        return (
            power_t(
                sign * size,
                sd,
                n_new,
                n_old,
                design=design,
                alpha=a,
                alternative=alternative,
                sd_old=sd_old,
            )
            - target
        )

    from scipy import optimize  # here only (importing it costs ~0.15 s)

    hi = 4.0 * tau
    while gap(hi) < 0.0:
        hi *= 2.0
        if hi > 1e6 * tau:  # cannot happen for a proper t-test; guard the loop anyway
            raise NotApplicableError("no shift reaches the target power")
    return float(optimize.brentq(gap, 0.0, hi, xtol=1e-14 * tau, rtol=1e-12))


__all__ = [
    "DEFAULT_POWER",
    "detectable_shift",
    "power_noninferiority",
    "power_t",
    "power_tost",
    "power_tost_shifted_t",
]
