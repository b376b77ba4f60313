"""Fitted distributions for characteristics that are not normal: lognormal, Weibull, Box-Cox.

Each fit is by maximum likelihood and gives its parameters, the log-likelihood, a
goodness-of-fit line, quantiles and the cdf. On top of a fit:

* percentile-based capability indices (the ISO 22514-2 percentile method): with the fitted
  0.135%, 50% and 99.865% quantiles X_l, X_m, X_u, Pp = (U - L) / (X_u - X_l),
  Ppu = (U - X_m) / (X_u - X_m), Ppl = (X_m - L) / (X_m - X_l), Ppk = the smaller one-sided
  index (:func:`percentile_indices`);
* the expected fraction beyond the limits from the fitted cdf (:func:`expected_beyond`);
* tolerance limits (:func:`tolerance_limits`): lognormal and Box-Cox by the exact normal
  tolerance factors on the transformed values (exact for the lognormal; for Box-Cox given the
  estimated lambda), Weibull from the pivotal quantity of the log-scale (smallest extreme value)
  maximum-likelihood estimates (Lawless, Statistical Models and Methods for Lifetime Data,
  ch. 5; cited from memory), whose distribution does not depend on the parameters and is
  taken from a seeded simulation of standard samples of the same size.

Fits:

* lognormal: mu = mean(ln x), sigma = sd(ln x) with divisor n (the MLE); goodness of fit:
  Shapiro-Wilk on ln x;
* Weibull (two parameters, origin 0): the shape b solves the profile score equation
  1/b + mean(ln x) - sum(x^b ln x) / sum(x^b) = 0, the scale is (mean x^b)^(1/b); goodness of
  fit: the Anderson-Darling A^2 against the fitted cdf, its p-value from a seeded simulation
  (A^2 with estimated parameters has a parameter-free null distribution for this family);
* Box-Cox: lambda maximises the profile log-likelihood
  -n/2 ln(var(y_lambda)) + (lambda - 1) sum(ln x) on [-5, 5], y the transformed values fitted
  by a normal (MLE); goodness of fit: Shapiro-Wilk on y (conditional on lambda).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import special

from . import tolerance
from .errors import DegenerateDataError, NotApplicableError

ArrayLike = Sequence[float] | np.ndarray
NAMES = ("normal", "lognormal", "weibull", "box-cox", "any")
SIMULATIONS = 4000  # standard samples behind the Weibull pivots and the A^2 p-value
SEED = 16_2026  # fixed: the same data give the same numbers on every run
Q_LOW, Q_MID, Q_HIGH = 0.00135, 0.5, 0.99865  # ISO 22514-2 percentile method


@dataclass(frozen=True)
class DistributionFit:
    """A maximum-likelihood fit and its goodness-of-fit line.

    ``parameters`` are (name, value) pairs: lognormal (meanlog, sdlog), Weibull (shape,
    scale), Box-Cox (lambda, mean, sd of the transformed values).
    """

    name: str
    n: int
    parameters: tuple[tuple[str, float], ...]
    loglik: float
    gof_method: str
    gof_statistic: float
    gof_pvalue: float

    def param(self, key: str) -> float:
        return dict(self.parameters)[key]

    def quantile(self, p: float) -> float:
        """The fitted p-quantile."""
        z = float(special.ndtri(p))
        if self.name == "lognormal":
            return math.exp(self.param("meanlog") + z * self.param("sdlog"))
        if self.name == "weibull":
            return self.param("scale") * (-math.log1p(-p)) ** (1.0 / self.param("shape"))
        return _box_cox_inverse(self.param("mean") + z * self.param("sd"), self.param("lambda"))

    def cdf(self, x: float) -> float:
        """The fitted P(X <= x)."""
        if self.name == "lognormal":
            if x <= 0:
                return 0.0
            return float(special.ndtr((math.log(x) - self.param("meanlog")) / self.param("sdlog")))
        if self.name == "weibull":
            if x <= 0:
                return 0.0
            return float(-math.expm1(-((x / self.param("scale")) ** self.param("shape"))))
        if x <= 0:
            return 0.0
        y = _box_cox(np.array([x]), self.param("lambda"))[0]
        return float(special.ndtr((y - self.param("mean")) / self.param("sd")))

    @property
    def words(self) -> str:
        """The fit in one line: parameters and the goodness-of-fit result."""
        ps = ", ".join(f"{k} {v:.6g}" for k, v in self.parameters)
        p = "< 0.0001" if self.gof_pvalue < 1e-4 else f"{self.gof_pvalue:.4f}"
        return f"{self.name} ({ps}); {self.gof_method}: statistic {self.gof_statistic:.4g}, p {p}"


def _positive(x: ArrayLike, name: str) -> np.ndarray:
    v = np.asarray(x, dtype=float)
    v = v[np.isfinite(v)]
    if v.size < 3:
        raise DegenerateDataError(f"a {name} fit needs at least 3 values, got {v.size}")
    if np.any(v <= 0):
        raise NotApplicableError(f"a {name} fit needs values above 0; the smallest is "
                                 f"{float(v.min()):g}")
    if np.ptp(v) == 0:
        raise DegenerateDataError("all values are equal: the spread is zero")
    return v


def _shapiro(y: np.ndarray) -> tuple[float, float]:
    from .normality import shapiro_wilk

    r = shapiro_wilk(y)
    return float(r.statistic), float(r.pvalue)


# --- lognormal ------------------------------------------------------------------------------


def fit_lognormal(x: ArrayLike) -> DistributionFit:
    """Lognormal maximum-likelihood fit (meanlog, sdlog with divisor n).

    Examples
    --------
    >>> f = fit_lognormal([1.0, 2.0, 4.0, 8.0])
    >>> round(f.param("meanlog"), 4), round(f.param("sdlog"), 4)
    (1.0397, 0.775)
    """
    v = _positive(x, "lognormal")
    y = np.log(v)
    mu = float(np.mean(y))
    sigma = float(np.sqrt(np.mean((y - mu) ** 2)))
    n = v.size
    loglik = float(-n * math.log(sigma * math.sqrt(2 * math.pi)) - np.sum(y)
                   - np.sum((y - mu) ** 2) / (2 * sigma**2))
    w, p = _shapiro(y)
    return DistributionFit("lognormal", n, (("meanlog", mu), ("sdlog", sigma)), loglik,
                           "Shapiro-Wilk on ln x", w, p)


# --- Weibull --------------------------------------------------------------------------------


def _weibull_shapes(logs: np.ndarray) -> np.ndarray:
    """The MLE shape of each row of ``logs`` (natural logs of positive values), by bisection
    on the profile score 1/b + mean(ln x) - sum(x^b ln x) / sum(x^b), which falls with b."""
    # scale-free form: centre the logs so that x^b stays finite for large b
    c = logs - logs.max(axis=-1, keepdims=True)
    mean_c = c.mean(axis=-1)
    lo = np.full(logs.shape[:-1], 1e-3)
    hi = np.full(logs.shape[:-1], 1e3)

    def score(b):
        e = np.exp(b[..., None] * c)
        return 1.0 / b + mean_c - (e * c).sum(axis=-1) / e.sum(axis=-1)

    for _ in range(80):  # geometric bisection: 80 halvings of [1e-3, 1e3] reach 1e-13 relative
        mid = np.sqrt(lo * hi)
        up = score(mid) > 0
        lo = np.where(up, mid, lo)
        hi = np.where(up, hi, mid)
    return np.sqrt(lo * hi)


def _weibull_mle(logs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    b = _weibull_shapes(logs)
    m = logs.max(axis=-1)
    scale = np.exp(m + np.log(np.mean(np.exp(b[..., None] * (logs - m[..., None])),
                                      axis=-1)) / b)
    return b, scale


def _anderson_darling(u: np.ndarray) -> np.ndarray:
    """A^2 of sorted fitted-cdf values u (rows)."""
    n = u.shape[-1]
    u = np.clip(u, 1e-300, 1 - 1e-16)
    i = np.arange(1, n + 1)
    return -n - np.mean((2 * i - 1) * (np.log(u) + np.log1p(-u[..., ::-1])), axis=-1)


@lru_cache(maxsize=64)
def _weibull_null(n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Standard-sample MLEs on the log scale (u*, b*) and A^2, for samples of size n."""
    rng = np.random.default_rng(SEED + n)
    logs = np.sort(np.log(rng.weibull(1.0, size=(SIMULATIONS, n))), axis=-1)
    shape, scale = _weibull_mle(logs)
    x = np.exp(logs)
    u = -np.expm1(-((x / scale[:, None]) ** shape[:, None]))
    return np.log(scale), 1.0 / shape, _anderson_darling(u)


def fit_weibull(x: ArrayLike) -> DistributionFit:
    """Two-parameter Weibull maximum-likelihood fit (shape, scale)."""
    v = np.sort(_positive(x, "Weibull"))
    logs = np.log(v)
    b, eta = _weibull_mle(logs)
    b, eta = float(b), float(eta)
    n = v.size
    z = (v / eta) ** b
    loglik = float(n * math.log(b / eta) + (b - 1) * np.sum(np.log(v / eta)) - np.sum(z))
    a2 = float(_anderson_darling(-np.expm1(-z)))
    null = _weibull_null(n)[2]
    p = float((1 + np.sum(null >= a2)) / (SIMULATIONS + 1))
    return DistributionFit("weibull", n, (("shape", b), ("scale", eta)), loglik,
                           f"Anderson-Darling A^2 against the fitted Weibull (p from "
                           f"{SIMULATIONS} seeded simulated samples)", a2, p)


# --- Box-Cox --------------------------------------------------------------------------------


def _box_cox(x: np.ndarray, lam: float) -> np.ndarray:
    if abs(lam) < 1e-12:
        return np.log(x)
    return np.expm1(lam * np.log(x)) / lam


def _box_cox_inverse(y: float, lam: float) -> float:
    if abs(lam) < 1e-12:
        return math.exp(y)
    base = lam * y + 1.0
    if base <= 0:
        return 0.0 if lam > 0 else math.inf  # beyond the transformation's range
    return base ** (1.0 / lam)


def fit_box_cox(x: ArrayLike) -> DistributionFit:
    """Box-Cox fit: lambda by profile maximum likelihood on [-5, 5], then a normal (MLE)."""
    from scipy.optimize import minimize_scalar

    v = _positive(x, "Box-Cox")
    logs = np.log(v)
    n = v.size

    def neg_profile(lam):
        y = _box_cox(v, lam)
        return 0.5 * n * math.log(np.var(y)) - (lam - 1) * logs.sum()

    lam = float(minimize_scalar(neg_profile, bounds=(-5.0, 5.0), method="bounded",
                                options={"xatol": 1e-10}).x)
    y = _box_cox(v, lam)
    mu, sd = float(np.mean(y)), float(np.std(y))
    if not sd > 0:
        raise DegenerateDataError("the transformed values have zero spread")
    loglik = float(-0.5 * n * (math.log(2 * math.pi * sd * sd) + 1) + (lam - 1) * logs.sum())
    w, p = _shapiro(y)
    return DistributionFit("box-cox", n, (("lambda", lam), ("mean", mu), ("sd", sd)), loglik,
                           "Shapiro-Wilk on the transformed values (given lambda)", w, p)


def fit(x: ArrayLike, name: str) -> DistributionFit:
    """Fit ``name`` (lognormal, weibull or box-cox) to ``x``."""
    fits = {"lognormal": fit_lognormal, "weibull": fit_weibull, "box-cox": fit_box_cox}
    if name not in fits:
        raise ValueError(f"no fit for distribution {name!r}: one of {sorted(fits)}")
    return fits[name](x)


# --- what a fit gives -------------------------------------------------------------------------


@dataclass(frozen=True)
class PercentileIndices:
    """Capability by the percentile method (ISO 22514-2) on a fitted distribution."""

    x_low: float  # fitted 0.135% quantile
    x_mid: float  # fitted median
    x_high: float  # fitted 99.865% quantile
    pp: float | None
    ppl: float | None
    ppu: float | None
    ppk: float
    method: str = "percentile method (ISO 22514-2): fitted 0.135%, 50%, 99.865% quantiles"


def percentile_indices(f: DistributionFit, *, lower: float | None,
                       upper: float | None) -> PercentileIndices:
    """Pp, Ppl, Ppu, Ppk from the fitted quantiles; a side without a limit has no index."""
    if lower is None and upper is None:
        raise ValueError("percentile indices need at least one limit")
    xl, xm, xh = f.quantile(Q_LOW), f.quantile(Q_MID), f.quantile(Q_HIGH)
    pp = (upper - lower) / (xh - xl) if lower is not None and upper is not None else None
    ppl = (xm - lower) / (xm - xl) if lower is not None else None
    ppu = (upper - xm) / (xh - xm) if upper is not None else None
    ppk = min(v for v in (ppl, ppu) if v is not None)
    return PercentileIndices(xl, xm, xh, pp, ppl, ppu, ppk)


def expected_beyond(f: DistributionFit, *, lower: float | None, upper: float | None
                    ) -> tuple[float, float]:
    """The fitted fractions below ``lower`` and above ``upper`` (0 where no limit)."""
    below = f.cdf(lower) if lower is not None else 0.0
    above = 1.0 - f.cdf(upper) if upper is not None else 0.0
    return below, above


@lru_cache(maxsize=256)
def _weibull_pivot(n: int, q: float, level: float) -> float:
    """The ``level`` quantile of Z = (u* - w_q) / b* over standard log-Weibull samples of
    size n, w_q = ln(-ln(1 - q)) the standard smallest-extreme-value q-quantile."""
    u, b, _ = _weibull_null(n)
    wq = math.log(-math.log1p(-q))
    return float(np.quantile((u - wq) / b, level))


def tolerance_limits(x: ArrayLike, f: DistributionFit, *, coverage: float, confidence: float,
                     side: str) -> tolerance.ToleranceResult:
    """Tolerance limits of a fitted non-normal distribution, on the original scale.

    Two-sided limits for the Weibull are the two one-sided bounds at coverage (1 + P) / 2 and
    confidence 1 - (1 - confidence) / 2 each (Bonferroni: conservative, named in ``method``).
    """
    p, g = tolerance._check_proportions(coverage, confidence)
    v = np.asarray(x, dtype=float)
    if f.name in ("lognormal", "box-cox"):
        lam = 0.0 if f.name == "lognormal" else f.param("lambda")
        y = _box_cox(_positive(v, f.name), lam)
        r = tolerance.normal_tolerance(y, coverage=p, confidence=g, side=side)
        back = (lambda t: math.exp(t)) if f.name == "lognormal" else (
            lambda t: _box_cox_inverse(t, lam))
        how = ("ln x" if f.name == "lognormal"
               else f"the Box-Cox transform, lambda {lam:.4g} as estimated")
        return tolerance.ToleranceResult(
            n=r.n, mean=r.mean, sd=r.sd, coverage=p, confidence=g, side=side, k=r.k,
            low=None if r.low is None else back(r.low),
            high=None if r.high is None else back(r.high),
            method=f"{r.method}, on {how}, limits transformed back")
    if f.name != "weibull":
        raise ValueError(f"no tolerance limits for {f.name!r} here")
    v = _positive(v, "Weibull")
    n = v.size
    u_hat, b_hat = math.log(f.param("scale")), 1.0 / f.param("shape")
    if side == "two-sided":
        p1, g1 = 0.5 + p / 2, 1.0 - (1.0 - g) / 2
        method = ("Weibull tolerance limits: two one-sided pivotal bounds at coverage "
                  f"{p1:g} and confidence {g1:g} each (Bonferroni), pivots from "
                  f"{SIMULATIONS} seeded simulated samples")
    else:
        p1, g1 = p, g
        method = (f"Weibull one-sided tolerance bound from the pivotal quantity of the MLEs, "
                  f"pivot from {SIMULATIONS} seeded simulated samples")
    low = high = None
    if side in ("two-sided", "lower"):
        # lower bound of the (1 - p1) quantile: y_q >= u - z_g b with P(Z <= z_g) = g
        low = math.exp(u_hat - _weibull_pivot(n, 1.0 - p1, g1) * b_hat)
    if side in ("two-sided", "upper"):
        # upper bound of the p1 quantile: y_p <= u - z_(1-g) b
        high = math.exp(u_hat - _weibull_pivot(n, p1, 1.0 - g1) * b_hat)
    from .core import mean_sd

    _, m, s = mean_sd(v)
    return tolerance.ToleranceResult(n=n, mean=m, sd=s, coverage=p, confidence=g, side=side,
                                     k=None, low=low, high=high, method=method)
