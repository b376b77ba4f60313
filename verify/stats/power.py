"""Power, detectable shift and sample size for the t-tests, TOST and non-inferiority.

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

Numerics: the noncentral t CDF comes from ``scipy.special.nctdtr``, which returns NaN in parts
of the far tails (with scipy 1.17 e.g. at x = -1.96, df = 50, noncentrality 20; other versions
at x = -1.9647, df = 499, noncentrality 11.18; statsmodels passes such NaNs on as powers,
e.g. for d = 1, n = 72, alpha = 0.01 one-sample). Where it does, we use
the reflection ``P(T <= x; d) = 1 - P(T <= -x; -d)`` and, if that fails too, integrate the
normal CDF over the distribution of the sample sd. A NaN never leaves this module.

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
from collections.abc import Callable, Iterable
from dataclasses import dataclass

import numpy as np
from scipy import integrate, optimize, special

from ._checks import check_harmful, check_margins, finite, number, positive
from .core import check_alternative, critical_value, t_cdf, t_quantile
from .errors import NotApplicableError
from .ttests import DESIGNS, check_design

#: The largest lot size a sample-size search will propose.
MAX_N = 100_000

_LOG_SQRT_2PI = 0.5 * math.log(2.0 * math.pi)

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


# --- the distribution of the sample sd and the noncentral t ---------------------------------


def _log_gamma_correction(h: float) -> float:
    """gammaln(h) - ((h - 1/2) log h - h + log sqrt(2 pi)), without cancellation for large h."""
    if h < 20.0:
        return float(special.gammaln(h)) - ((h - 0.5) * math.log(h) - h + _LOG_SQRT_2PI)
    # Stirling series (Abramowitz and Stegun 6.1.41); the next term is below 1e-17 for h >= 20
    r = 1.0 / (h * h)
    return (1 / 12 - r * (1 / 360 - r * (1 / 1260 - r * (1 / 1680 - r / 1188)))) / h


def _sd_ratio_logpdf(df: float) -> Callable[[float], float]:
    """Log density of S = sqrt(V / df), V chi-square on df (the sample sd over the true sd).

    The density is ``2 h^h s^(df-1) exp(-h s^2) / Gamma(h)`` with ``h = df / 2``. With
    Stirling's form of Gamma(h) and ``e = s - 1`` the large terms cancel analytically, so the
    log density keeps its accuracy for large df.
    """
    h = 0.5 * df
    k0 = _sd_ratio_log_constant(df)

    def logpdf(s: float) -> float:
        e = s - 1.0
        # (df - 1) log s - h s^2 + h  with  h - h s^2 = -h e (2 + e)
        return k0 - h * e * (2.0 + e) + (df - 1.0) * math.log1p(e)

    return logpdf


def _sd_ratio_log_constant(df: float) -> float:
    """log(2 h^h / Gamma(h)) - h with h = df / 2, by Stirling's form of Gamma(h)."""
    h = 0.5 * df
    return math.log(2.0) + 0.5 * math.log(h) - _LOG_SQRT_2PI - _log_gamma_correction(h)


def _sd_ratio_quantile(p: float, df: float, *, upper_tail: bool = False) -> float:
    """Quantile of S = sqrt(V / df): ``P(S <= s) = p``, or ``P(S > s) = p`` if upper_tail.

    Both tails are inverted directly, so tiny tail probabilities keep their accuracy.
    """
    h = 0.5 * df
    inv = special.gammainccinv if upper_tail else special.gammaincinv
    return math.sqrt(2.0 * float(inv(h, p)) / df)


def _expect_over_sd(
    g: Callable[[float], float],
    df: float,
    *,
    upper: float = math.inf,
    points: Iterable[float] = (),
) -> float:
    """E[g(S) ; S < upper] for S = sqrt(V / df), V chi-square on df, by adaptive quadrature.

    The range is cut to the central 1 - 2e-20 of S's distribution (the rest cannot matter
    for a probability) and split at its quartiles and at ``points`` so that steep parts of
    ``g`` are not missed.
    """
    logpdf = _sd_ratio_logpdf(df)
    s_lo = _sd_ratio_quantile(1e-20, df)
    s_hi = min(_sd_ratio_quantile(1e-20, df, upper_tail=True), upper)
    if not s_hi > s_lo:
        return 0.0
    cuts = {_sd_ratio_quantile(q, df) for q in (1e-9, 0.25, 0.5)}
    cuts.update(_sd_ratio_quantile(q, df, upper_tail=True) for q in (0.25, 1e-9))
    cuts.update(float(p) for p in points)
    inner = sorted(c for c in cuts if s_lo < c < s_hi)

    def integrand(s: float) -> float:
        return g(s) * math.exp(logpdf(s))

    edges = [s_lo, *inner, s_hi]
    total = 0.0
    for a, b in zip(edges[:-1], edges[1:], strict=True):
        value, _ = integrate.quad(integrand, a, b, epsabs=1e-14, epsrel=1e-11, limit=200)
        total += value
    return total


def _clip01(p: float) -> float:
    return min(1.0, max(0.0, p))


def _nct_cdf_by_integration(x: float, df: float, nc: float) -> float:
    """P(T <= x) for noncentral t as E[Phi(x S - nc)] over the sample sd ratio S."""
    if x == 0.0:
        return float(special.ndtr(-nc))
    points = []
    s_star = nc / x  # where x s - nc changes sign; the integrand is steep around it
    if s_star > 0.0:
        w = 1.0 / abs(x)
        points = [s_star - 8 * w, s_star - 2 * w, s_star, s_star + 2 * w, s_star + 8 * w]
    return _clip01(_expect_over_sd(lambda s: float(special.ndtr(x * s - nc)), df, points=points))


def nct_cdf(x: float, df: float, nc: float) -> float:
    """P(T <= x) for the noncentral t distribution, never NaN.

    Uses ``scipy.special.nctdtr``; where it fails (NaN far in the tails), the reflection
    ``1 - P(T <= -x; -nc)``, and failing that numerical integration.
    """
    v = float(special.nctdtr(df, nc, x))
    if math.isfinite(v) and 0.0 <= v <= 1.0:
        return v
    r = float(special.nctdtr(df, -nc, -x))
    if math.isfinite(r) and 0.0 <= r <= 1.0:
        return 1.0 - r
    return _nct_cdf_by_integration(x, df, nc)


def nct_sf(x: float, df: float, nc: float) -> float:
    """P(T > x) for the noncentral t distribution, as P(T <= -x) with noncentrality -nc."""
    return nct_cdf(-x, df, -nc)


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


def _tost_power_many(delta, lo, hi, taus: np.ndarray, dfs: np.ndarray, alpha) -> np.ndarray:
    """TOST power for several (tau, df) at once by fixed Gauss-Legendre quadrature.

    The same integral as the adaptive route: E[P(low + c tau S < est < high - c tau S)] over
    S, on the central 1 - 2e-20 of S's range (``delta``, ``lo``, ``hi`` and ``alpha`` may be
    arrays, one entry per case), cut at the quartiles and the 1e-9 quantiles of S
    and at the steep points ``z/c + k/c`` (k = -3, 0, 3) of the normal probabilities; a piece
    gets :data:`GL_POINTS` nodes (:data:`GL_TAIL_POINTS` in the outer 1e-9 tails), and all
    cases are evaluated in one pass.
    """
    taus = np.asarray(taus, dtype=float)
    dfs = np.asarray(dfs, dtype=float)
    h = 0.5 * dfs
    c = special.stdtrit(dfs, 1.0 - np.asarray(alpha, dtype=float))
    upper_z = (np.asarray(hi, dtype=float) - delta) / taus
    lower_z = (np.asarray(lo, dtype=float) - delta) / taus
    s_max = (upper_z - lower_z) / (2.0 * c)
    s_lo = np.sqrt(2.0 * special.gammaincinv(h, 1e-20) / dfs)
    s_hi = np.minimum(np.sqrt(2.0 * special.gammainccinv(h, 1e-20) / dfs), s_max)
    cuts = np.column_stack([
        np.sqrt(2.0 * special.gammaincinv(h, q) / dfs) for q in (1e-9, 0.25, 0.5)
    ] + [np.sqrt(2.0 * special.gammainccinv(h, q) / dfs) for q in (0.25, 1e-9)] + [
        z / c + k / c for z in (upper_z, -lower_z) for k in (-3.0, 0.0, 3.0)
    ])
    # the pieces of every case at once: its edges sorted, cuts outside (s_lo, s_hi) clipped
    # onto its ends, so that they (and repeated cuts) give empty pieces, which are dropped
    inner = np.clip(cuts, s_lo[:, None], s_hi[:, None])
    edges = np.sort(np.column_stack([s_lo, inner, s_hi]), axis=1)
    left, right = edges[:, :-1], edges[:, 1:]
    keep = (right > left) & (s_hi > s_lo)[:, None]  # s_hi <= s_lo: empty acceptance region
    tail = (right <= cuts[:, [0]]) | (left >= cuts[:, [4]])  # beyond the 1e-9 quantiles
    owner = np.broadcast_to(np.arange(taus.size)[:, None], left.shape)
    out = np.zeros(taus.size)
    k0_all = np.array([_sd_ratio_log_constant(float(d)) for d in dfs])
    for is_tail in (False, True):
        sel = keep & (tail == is_tail)
        if not sel.any():
            continue
        lefts, rights, case = left[sel], right[sel], owner[sel]
        gx, gw = (_GL_TAIL_X, _GL_TAIL_W) if is_tail else (_GL_X, _GL_W)
        # in t = log s the density's factor s^(df - 1) is smooth even for df near 1, where on
        # the s scale it bends sharply near 0
        log_l, log_r = np.log(lefts), np.log(rights)
        half = 0.5 * (log_r - log_l)
        t = (0.5 * (log_r + log_l))[:, None] + half[:, None] * gx  # pieces x nodes
        e = np.expm1(t)  # s - 1, accurate near s = 1
        nodes = 1.0 + e
        weights = half[:, None] * gw * nodes  # ds = s dt
        idx = np.asarray(case)
        k0 = k0_all[idx][:, None]
        hh, dd, cc = h[idx][:, None], dfs[idx][:, None], c[idx][:, None]
        logpdf = k0 - hh * e * (2.0 + e) + (dd - 1.0) * t  # as _sd_ratio_logpdf, log s = t
        g = special.ndtr(upper_z[idx][:, None] - cc * nodes) - special.ndtr(
            lower_z[idx][:, None] + cc * nodes)
        piece = np.add.reduce(g * np.exp(logpdf) * weights, axis=1)
        np.add.at(out, idx, piece)
    return np.clip(out, 0.0, 1.0)


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
    power: float = 0.8,
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

    hi = 4.0 * tau
    while gap(hi) < 0.0:
        hi *= 2.0
        if hi > 1e6 * tau:  # cannot happen for a proper t-test; guard the loop anyway
            raise NotApplicableError("no shift reaches the target power")
    return float(optimize.brentq(gap, 0.0, hi, xtol=1e-14 * tau, rtol=1e-12))


# --- sample size ----------------------------------------------------------------------------


@dataclass(frozen=True)
class SampleSize:
    """Smallest lot sizes that reach a target power.

    Attributes
    ----------
    n_new : int
        Size of the new lot (one-sample: the lot; paired: the number of pairs).
    n_old : int or None
        Size of the old lot: ``max(2, ceil(n_new / ratio))`` for two-sample designs, equal
        to ``n_new`` for paired, ``None`` for one-sample.
    power : float
        Power achieved at these sizes (at least ``target_power``; at ``n_new - 1`` it is
        below).
    target_power : float
    """

    n_new: int
    n_old: int | None
    power: float
    target_power: float


def _old_size(design: str, n_new: int, ratio: float) -> int | None:
    if design == "one-sample":
        return None
    if design == "paired":
        return n_new
    return max(2, math.ceil(n_new / ratio - 1e-9))


def _check_ratio(design: str, ratio: float) -> float:
    r = positive(ratio, "ratio")
    if design in ("one-sample", "paired") and r != 1.0:
        raise ValueError(f"ratio (n_new / n_old) applies only to two-sample designs, not {design}")
    return r


_NO_GUESS = object()


def _n_max(design: str, ratio: float) -> int:
    if design in ("one-sample", "paired"):
        return MAX_N
    # both n_new and n_old = ceil(n_new / ratio) must stay within MAX_N
    return max(2, min(MAX_N, math.floor(MAX_N * ratio + 1e-9)))


def _window(design: str, ratio: float, n0: int) -> list[int]:
    """The lot sizes around a guess whose exact power is computed together."""
    return list(range(max(2, n0 - WINDOW[0]), min(_n_max(design, ratio), n0 + WINDOW[1]) + 1))


def _smallest_n(
    power_at: Callable[[int, int | None], float],
    design: str,
    ratio: float,
    target: float,
    *,
    approx: Callable[[int, int | None], float] | None = None,
    many: Callable[[list[int]], list[float]] | None = None,
    guess: int | None | object = _NO_GUESS,
) -> SampleSize:
    """Smallest n_new (n_old following by ratio) with power >= target.

    Doubling then bisection (power rises with n), then a check that n_new - 1 falls short.
    With ``approx`` (a cheap approximation of ``power_at``), the search first runs on the
    approximation and then steps from its answer with the exact power, which usually costs two
    or three exact evaluations instead of a dozen; the answer is the same. With ``many`` (the
    exact power for a list of n_new in one vectorised pass), the lot sizes around the guess
    are evaluated together first; the stepping then reads them (and computes any other one
    singly), so the answer is again the same. ``guess`` gives the approximate search's answer
    when the caller has it already (None: it found none).
    """
    n_max = _n_max(design, ratio)

    def pw(n: int) -> float:
        return power_at(n, _old_size(design, n, ratio))

    if approx is not None:
        if guess is _NO_GUESS:
            try:
                n0 = _smallest_n(approx, design, ratio, target).n_new
            except NotApplicableError:
                n0 = None
        else:
            n0 = guess
        if n0 is not None:
            step_pw = pw
            if many is not None:
                window = _window(design, ratio, n0)
                known = dict(zip(window, many(window), strict=True))

                def step_pw(n: int) -> float:
                    return known[n] if n in known else pw(n)

            found = _step_to_smallest(step_pw, n0, target, n_max)
            if found is not None:
                n, p = found
                return SampleSize(n_new=n, n_old=_old_size(design, n, ratio), power=p,
                                  target_power=target)

    lo, hi = 1, 2  # lo falls short (or is below the minimum of 2); hi is the candidate
    p_hi = pw(hi)
    while p_hi < target:
        if hi >= n_max:
            raise NotApplicableError(
                f"more than {MAX_N} units per process would be needed to reach power {target:g}"
            )
        lo, hi = hi, min(2 * hi, n_max)
        p_hi = pw(hi)
    while hi - lo > 1:
        mid = (lo + hi) // 2
        p_mid = pw(mid)
        if p_mid >= target:
            hi, p_hi = mid, p_mid
        else:
            lo = mid
    # guard against a non-monotone step: make sure one fewer does not already suffice
    while hi > 2:
        p_prev = pw(hi - 1)
        if p_prev < target:
            break
        hi, p_hi = hi - 1, p_prev
    return SampleSize(n_new=hi, n_old=_old_size(design, hi, ratio), power=p_hi, target_power=target)


#: Lot sizes below and above the approximate answer whose exact power is computed together
#: (the shifted-t approximation tends to ask for one or two more than the exact power).
WINDOW = (2, 1)


def _step_to_smallest(pw, n0: int, target: float, n_max: int, steps: int = 12):
    """From a guess n0, walk with the exact power to the smallest n reaching ``target``:
    (n, power), or None when the guess was too far off (the caller then searches fully)."""
    n, p = n0, pw(n0)
    if p >= target:
        for _ in range(steps):
            if n <= 2:
                return n, p
            p_prev = pw(n - 1)
            if p_prev < target:
                return n, p
            n, p = n - 1, p_prev
        return None
    for _ in range(steps):
        if n >= n_max:
            return None
        n, p = n + 1, pw(n + 1)
        if p >= target:
            return n, p
    return None


def sample_size_t(
    shift: float,
    sd: float,
    *,
    design: str,
    alpha: float = 0.05,
    alternative: str = "two-sided",
    power: float = 0.8,
    ratio: float = 1.0,
    sd_old: float | None = None,
) -> SampleSize:
    """Smallest lot size at which the t-test detects ``shift`` with the target power.

    ``ratio = n_new / n_old`` for two-sample designs: the search runs over ``n_new`` and
    sets ``n_old = max(2, ceil(n_new / ratio))``.

    Raises
    ------
    NotApplicableError
        The shift is zero or points away from a one-sided alternative (no n reaches the
        power), or more than :data:`MAX_N` units per process would be needed.

    Examples
    --------
    >>> s = sample_size_t(1.0, 1.0, design="pooled")
    >>> s.n_new, s.n_old
    (17, 17)
    """
    check_design(design)
    check_alternative(alternative)
    a = _alpha(alpha)
    target = _target_power(power)
    delta = finite(shift, "shift")
    r = _check_ratio(design, ratio)
    positive(sd, "sd")
    if delta == 0.0:
        raise NotApplicableError("a zero shift cannot be detected at any sample size")
    if (alternative == "greater" and delta < 0.0) or (alternative == "less" and delta > 0.0):
        raise NotApplicableError(
            f"a shift of {delta:g} lies on the other side of the alternative {alternative!r}:"
            " no sample size detects it"
        )

    def power_at(n_new: int, n_old: int | None) -> float:
        return power_t(
            delta, sd, n_new, n_old, design=design, alpha=a, alternative=alternative, sd_old=sd_old
        )

    return _smallest_n(power_at, design, r, target)


def sample_size_tost(
    true_shift: float,
    sd: float,
    *,
    design: str,
    alpha: float = 0.05,
    low: float,
    high: float,
    power: float = 0.9,
    ratio: float = 1.0,
    sd_old: float | None = None,
) -> SampleSize:
    """Smallest lot size at which TOST shows equivalence with the target (exact) power.

    Raises
    ------
    NotApplicableError
        ``true_shift`` is not strictly inside ``(low, high)`` (equivalence cannot then be
        shown with power above alpha), or more than :data:`MAX_N` units would be needed.

    Examples
    --------
    >>> s = sample_size_tost(0.0, 1.0, design="pooled", low=-1.0, high=1.0)
    >>> s.n_new, s.power >= 0.9
    (23, True)
    """
    setup = _TostSize(true_shift, sd, design=design, alpha=alpha, low=low, high=high,
                      power=power, ratio=ratio, sd_old=sd_old)
    return _smallest_n(setup.power_at, design, setup.ratio, setup.target,
                       approx=setup.approx_at, many=setup.power_many)


class _TostSize:
    """A validated TOST sample-size question and its power functions."""

    def __init__(self, true_shift, sd, *, design, alpha, low, high, power, ratio, sd_old):
        check_design(design)
        self.a = _alpha(alpha, 0.5)
        self.target = _target_power(power)
        self.delta = finite(true_shift, "true_shift")
        self.lo, self.hi = check_margins(low, high)
        self.ratio = _check_ratio(design, ratio)
        self.s1 = positive(sd, "sd")
        self.design, self.sd, self.sd_old = design, sd, sd_old
        if design == "welch":
            self.s2 = self.s1 if sd_old is None else positive(sd_old, "sd_old")
        else:
            if sd_old is not None:  # as _plan refuses it
                raise ValueError("the pooled design assumes one common sd: leave sd_old out"
                                 if design == "pooled" else
                                 f"sd_old applies only to the welch design, not {design!r}")
            self.s2 = None
        if not self.lo < self.delta < self.hi:
            raise NotApplicableError(
                f"the true shift {self.delta:g} is not inside the equivalence margins "
                f"({self.lo:g}, {self.hi:g}): equivalence cannot be shown at any sample size"
            )

    def power_at(self, n_new: int, n_old: int | None) -> float:
        return power_tost(self.delta, self.sd, n_new, n_old, design=self.design, alpha=self.a,
                          low=self.lo, high=self.hi, sd_old=self.sd_old)

    def _tau_df(self, n_new: int, n_old: int | None) -> tuple[float, float]:
        # inputs validated once, in __init__: the arithmetic of _plan without its checks
        return _tau_df(self.design, self.s1, self.s2, n_new, n_old)

    def approx_at(self, n_new: int, n_old: int | None) -> float:
        """:func:`power_tost_shifted_t` (the same arithmetic, validated once)."""
        tau, df = self._tau_df(n_new, n_old)
        c = t_quantile(1.0 - self.a, df)
        return _clip01(t_cdf((self.hi - self.delta) / tau - c, df)
                       - t_cdf((self.lo - self.delta) / tau + c, df))

    def case(self, n: int) -> tuple:
        """(delta, low, high, tau, df, alpha) of the exact power at n_new = n."""
        tau, df = self._tau_df(n, _old_size(self.design, n, self.ratio))
        return self.delta, self.lo, self.hi, tau, df, self.a

    def power_many(self, ns: list[int]) -> list[float]:
        return [float(x) for x in _tost_power_cases([self.case(n) for n in ns])]

    def guess(self) -> int | None:
        """n_new by the shifted-t approximation (None where it finds none)."""
        try:
            return _smallest_n(self.approx_at, self.design, self.ratio, self.target).n_new
        except NotApplicableError:
            return None


def _tost_power_cases(cases: list[tuple]) -> np.ndarray:
    """Exact TOST power for cases (delta, low, high, tau, df, alpha) in one pass."""
    if not cases:
        return np.zeros(0)
    cols = np.array(cases, dtype=float).T
    return _tost_power_many(cols[0], cols[1], cols[2], cols[3], cols[4], cols[5])


def plan_tost_many(questions: list[dict]) -> list[tuple[float | None, SampleSize | None]]:
    """:func:`power_tost` and :func:`sample_size_tost` for many questions in one pass.

    Each question is a dict of the keyword arguments both take (``true_shift``, ``sd``,
    ``n_new``, ``n_old``, ``design``, ``alpha``, ``low``, ``high``, ``sd_old``) plus the target
    ``power`` and ``ratio`` of the sample-size search. Returns (power, sample size) per
    question, each equal to the one-at-a-time call's result, or None where that call raises a
    :class:`~verify.stats.errors.StatsError` or ``ValueError``. The exact powers of every
    question (its lot sizes and the lot sizes around each sample-size guess) are integrated
    together, which costs far less than one pass per question.
    """
    from .errors import StatsError

    cases: list[tuple] = []
    owners: list[tuple[int, int | None]] = []  # (question, n) per case; n None: the power
    sizes: list[tuple[int, _TostSize, int | None]] = []
    for i, q in enumerate(questions):
        try:
            a = _alpha(q["alpha"], 0.5)
            delta = finite(q["true_shift"], "true_shift")
            lo, hi = check_margins(q["low"], q["high"])
            tau, df = _plan(q["design"], q["sd"], q["n_new"], q["n_old"], q["sd_old"])
            cases.append((delta, lo, hi, tau, df, a))
            owners.append((i, None))
        except (StatsError, ValueError):
            pass
        try:
            setup = _TostSize(q["true_shift"], q["sd"], design=q["design"], alpha=q["alpha"],
                              low=q["low"], high=q["high"], power=q["power"],
                              ratio=q["ratio"], sd_old=q["sd_old"])
            n0 = setup.guess()
            if n0 is not None:
                for n in _window(q["design"], setup.ratio, n0):
                    cases.append(setup.case(n))
                    owners.append((i, n))
            sizes.append((i, setup, n0))
        except (StatsError, ValueError):
            pass
    values = _tost_power_cases(cases)
    powers: list[float | None] = [None] * len(questions)
    known: dict[int, dict[int, float]] = {}
    for (i, n), v in zip(owners, values.tolist(), strict=True):
        if n is None:
            powers[i] = v
        else:
            known.setdefault(i, {})[n] = v
    results: list[SampleSize | None] = [None] * len(questions)
    for i, setup, n0 in sizes:
        mine = known.get(i, {})
        try:
            results[i] = _smallest_n(setup.power_at, setup.design, setup.ratio, setup.target,
                                     approx=setup.approx_at,
                                     many=lambda ns, mine=mine: [mine[n] for n in ns],
                                     guess=n0)
        except (StatsError, ValueError):
            results[i] = None
    return list(zip(powers, results, strict=True))


def sample_size_noninferiority(
    true_shift: float,
    sd: float,
    *,
    design: str,
    alpha: float = 0.05,
    bound: float,
    harmful: str,
    power: float = 0.8,
    ratio: float = 1.0,
    sd_old: float | None = None,
) -> SampleSize:
    """Smallest lot size at which the non-inferiority test rejects with the target power.

    Raises
    ------
    NotApplicableError
        ``true_shift`` is on the harmful side of ``bound`` or on it, or more than
        :data:`MAX_N` units would be needed.
    """
    check_design(design)
    a = _alpha(alpha)
    target = _target_power(power)
    delta = finite(true_shift, "true_shift")
    b = finite(bound, "bound")
    check_harmful(harmful)
    r = _check_ratio(design, ratio)
    positive(sd, "sd")
    if (harmful == "lower" and not delta > b) or (harmful == "upper" and not delta < b):
        raise NotApplicableError(
            f"the true shift {delta:g} is not on the safe side of the bound {b:g}:"
            " non-inferiority cannot be shown at any sample size"
        )

    def power_at(n_new: int, n_old: int | None) -> float:
        return power_noninferiority(
            delta, sd, n_new, n_old, design=design, alpha=a, bound=b, harmful=harmful, sd_old=sd_old
        )

    return _smallest_n(power_at, design, r, target)


__all__ = [
    "DESIGNS",
    "MAX_N",
    "SampleSize",
    "detectable_shift",
    "nct_cdf",
    "nct_sf",
    "power_noninferiority",
    "power_t",
    "power_tost",
    "plan_tost_many",
    "power_tost_shifted_t",
    "sample_size_noninferiority",
    "sample_size_t",
    "sample_size_tost",
]
