"""The noncentral t distribution and the distribution of the sample sd, for the power.

Numerics: the noncentral t CDF comes from ``scipy.special.nctdtr``, which returns NaN in parts
of the far tails (with scipy 1.17 e.g. at x = -1.96, df = 50, noncentrality 20; other versions
at x = -1.9647, df = 499, noncentrality 11.18; statsmodels passes such NaNs on as powers,
e.g. for d = 1, n = 72, alpha = 0.01 one-sample). Where it does, we use
the reflection ``P(T <= x; d) = 1 - P(T <= -x; -d)`` and, if that fails too, integrate the
normal CDF over the distribution of the sample sd. A NaN never leaves this module.

The distribution of the sample sd over the true sd, ``S = sqrt(V / df)`` with ``V``
chi-square on df, is what the exact TOST power of :mod:`verify.stats.power_of_tests`
integrates over; its log density keeps its accuracy for large df (Stirling's form of Gamma).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable
from functools import lru_cache

import numpy as np
from scipy import special

_LOG_SQRT_2PI = 0.5 * math.log(2.0 * math.pi)


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


@lru_cache(maxsize=4096)  # a pure function of df, asked again for every case of that df
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

    from scipy import integrate  # the adaptive route only (importing it costs ~0.2 s)

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


#: The t quantiles ``stdtrit(df, p)`` of whole df up to :data:`_CRIT_DF`, remembered per
#: probability p (:func:`_t_upper`): the one-sample, paired and pooled df are whole numbers and
#: the questions of an evaluation share alpha, so the same quantile recurs in the guesses'
#: windows and the walks' rounds. At most :data:`_CRIT_KEEP` probabilities are kept.
_CRIT_DF = 4096
_CRIT: dict[float, tuple[np.ndarray, np.ndarray]] = {}  # p -> (filled, quantiles by df)
_CRIT_KEEP = 8


def _t_upper(dfs: np.ndarray, alpha) -> np.ndarray:
    """``special.stdtrit(dfs, 1.0 - alpha)`` element by element (``alpha`` a float or one per
    df), whole df up to :data:`_CRIT_DF` read from :data:`_CRIT` where all share one alpha.
    A remembered quantile is the float the same ufunc gave for the same (df, p) once before,
    so every element equals the direct call's (tests/test_plan_shortcuts.py)."""
    p = 1.0 - np.asarray(alpha, dtype=float)
    if p.ndim:
        if not p.size or p.min() != p.max():
            return special.stdtrit(dfs, p)
        p0 = float(p[0])
    else:
        p0 = float(p)
    whole = (dfs >= 1.0) & (dfs <= _CRIT_DF) & (dfs == np.floor(dfs))
    if not whole.any():
        return special.stdtrit(dfs, p)
    got = _CRIT.get(p0)
    if got is None:
        if len(_CRIT) >= _CRIT_KEEP:
            return special.stdtrit(dfs, p)
        got = _CRIT.setdefault(p0, (np.zeros(_CRIT_DF + 1, dtype=bool),
                                    np.empty(_CRIT_DF + 1)))
    filled, crit = got
    every = whole.all()
    idx = (dfs if every else dfs[whole]).astype(np.intp)
    need = idx[~filled[idx]]
    if need.size:  # (marked filled only once written: a second thread reads a whole row)
        crit[need] = special.stdtrit(need.astype(float), p0)
        filled[need] = True
    if every:
        return crit[idx]
    out = np.empty(dfs.shape)
    out[whole] = crit[idx]
    rest = ~whole
    out[rest] = special.stdtrit(dfs[rest], p0)
    return out


__all__ = ["nct_cdf", "nct_sf"]
