"""Equivalence (TOST) and non-inferiority t-tests.

Both are composed from one-sided t-tests on an effect (estimate, standard error, df), as
computed by :func:`verify.stats.ttests.effect`. Margins are given as bounds on the effect
itself (new minus old, or mean minus target), so asymmetric margins need nothing special.

TOST (two one-sided tests, Schuirmann 1987): equivalence within ``(low, high)`` is shown at
level alpha when both ``H0: effect <= low`` and ``H0: effect >= high`` are rejected at alpha,
which happens exactly when the ``1 - 2 alpha`` two-sided confidence interval lies inside
``(low, high)``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ._checks import HARMFUL_SIDES as HARMFUL_SIDES  # public here: the sides `harmful` takes
from ._checks import check_alpha, check_harmful, check_margins, finite
from ._frozen import fast_init
from .core import Interval, _ndtr, _stdtr, check_se_df, confidence_interval, t_cdf, t_sf
from .errors import DegenerateDataError
from .ttests import Effect, effect, effect_from_stats


def _check_alpha_tost(alpha: float) -> float:
    if not 0.0 < alpha < 0.5:
        raise ValueError(f"alpha must lie in (0, 0.5) for an equivalence interval, not {alpha}")
    return alpha


def _estimate(v: float) -> float:
    f = float(v)
    if not math.isfinite(f):
        raise DegenerateDataError(f"the estimate is not a finite number ({f})")
    return f


@fast_init
@dataclass(frozen=True)
class EquivalenceResult:
    """Result of a TOST equivalence test.

    Attributes
    ----------
    method : str
    estimate, standard_error, df : float
        The effect being tested (see :class:`verify.stats.ttests.Effect`).
    low, high : float
        The equivalence margins as bounds on the effect, ``low < high``.
    statistic_lower : float
        ``(estimate - low) / standard_error``, the statistic for ``H0: effect <= low``.
    statistic_upper : float
        ``(estimate - high) / standard_error``, the statistic for ``H0: effect >= high``.
    p_lower, p_upper : float
        One-sided p-values of those two null hypotheses.
    pvalue : float
        The larger of the two: equivalence is shown at level alpha when ``pvalue < alpha``.
    alternative : str
        Always ``"equivalence"`` (``low < effect < high``).
    """

    method: str
    estimate: float
    standard_error: float
    df: float
    low: float
    high: float
    statistic_lower: float
    statistic_upper: float
    p_lower: float
    p_upper: float
    pvalue: float
    alternative: str = "equivalence"

    @property
    def statistic(self) -> float:
        """The statistic of the one-sided test with the larger p-value."""
        return self.statistic_lower if self.p_lower >= self.p_upper else self.statistic_upper

    def confidence_interval(self, alpha: float = 0.05) -> Interval:
        """The two-sided interval at level ``1 - 2 alpha`` that matches TOST at ``alpha``."""
        _check_alpha_tost(alpha)
        return confidence_interval(
            self.estimate, self.standard_error, self.df, level=1.0 - 2.0 * alpha
        )


def tost_from_estimate(
    estimate: float,
    se: float,
    df: float,
    *,
    low: float,
    high: float,
    method: str = "TOST",
) -> EquivalenceResult:
    """TOST equivalence test from an estimate, its standard error and df.

    Parameters
    ----------
    estimate, se, df : float
        The effect and its standard error and degrees of freedom.
    low, high : float
        Margins as bounds on the effect; ``low < high``, either may be of any sign.

    Examples
    --------
    >>> r = tost_from_estimate(0.1, 0.2, 20, low=-0.6, high=0.6)
    >>> round(r.pvalue, 6)
    0.010617
    """
    est = _estimate(estimate)
    check_se_df(se, df)
    lo, hi = check_margins(low, high)
    t_lo, t_hi, p_lo, p_hi = tost_sides(est, se, df, lo, hi)
    # (the fields in their declared order: method, estimate, standard_error, df, low, high,
    # statistic_lower, statistic_upper, p_lower, p_upper, pvalue)
    return EquivalenceResult(method, est, float(se), float(df), lo, hi, t_lo, t_hi, p_lo, p_hi,
                             max(p_lo, p_hi))


def tost_sides(est: float, se: float, df: float, lo: float, hi: float
               ) -> tuple[float, float, float, float]:
    """The two one-sided tests of :func:`tost_from_estimate`, for arguments it has checked (or
    a caller has: a finite estimate, a positive finite standard error, a positive df, margins
    as :func:`~verify.stats._checks.check_margins` returns them): ``(statistic_lower,
    statistic_upper, p_lower, p_upper)``, the floats of its result's fields. A caller that
    needs only these numbers is spared the result and the checks made already."""
    t_lo = (est - lo) / se
    t_hi = (est - hi) / se
    # p_lo = t_sf(t_lo, df) (H0: effect <= low, rejected for large t) and p_hi =
    # t_cdf(t_hi, df) (H0: effect >= high, rejected for small t), the df read once
    if math.isinf(df):
        p_lo, p_hi = _ndtr(float(-t_lo)), _ndtr(float(t_hi))
    else:
        dff = float(df)
        p_lo, p_hi = _stdtr(dff, float(-t_lo)), _stdtr(dff, float(t_hi))
    return float(t_lo), float(t_hi), p_lo, p_hi


def tost_from_effect(eff: Effect, *, low: float, high: float) -> EquivalenceResult:
    """TOST on an :class:`~verify.stats.ttests.Effect`."""
    return tost_from_estimate(
        eff.estimate,
        eff.standard_error,
        eff.df,
        low=low,
        high=high,
        method=f"TOST equivalence ({eff.method})",
    )


def tost(
    design: str,
    new: object,
    old: object | None = None,
    *,
    target: float | None = None,
    low: float,
    high: float,
) -> EquivalenceResult:
    """TOST equivalence test from raw data.

    ``design``, ``new``, ``old`` and ``target`` are as in :func:`verify.stats.ttests.effect`;
    the margins ``low < high`` bound the effect (new minus old, or mean minus target).

    Examples
    --------
    >>> r = tost("welch", [5.1, 5.3, 5.2, 5.0, 5.2], old=[5.0, 5.2, 5.1, 5.1, 5.3],
    ...          low=-0.5, high=0.5)
    >>> r.pvalue < 0.001
    True
    """
    return tost_from_effect(effect(design, new, old, target=target), low=low, high=high)


def tost_from_stats(
    design: str,
    *,
    n_new: int,
    mean_new: float,
    sd_new: float,
    n_old: int | None = None,
    mean_old: float | None = None,
    sd_old: float | None = None,
    target: float | None = None,
    low: float,
    high: float,
) -> EquivalenceResult:
    """TOST from summary statistics (arguments as in :func:`verify.stats.ttests.effect_from_stats`;
    for paired data the new_* arguments describe the differences)."""
    eff = effect_from_stats(
        design,
        n_new=n_new,
        mean_new=mean_new,
        sd_new=sd_new,
        n_old=n_old,
        mean_old=mean_old,
        sd_old=sd_old,
        target=target,
    )
    return tost_from_effect(eff, low=low, high=high)


# --- non-inferiority ------------------------------------------------------------------------


@fast_init
@dataclass(frozen=True)
class NoninferiorityResult:
    """Result of a one-sided non-inferiority t-test.

    Attributes
    ----------
    method : str
    estimate, standard_error, df : float
    bound : float
        The margin as a bound on the effect: typically ``-m`` when the harmful side is lower
        and ``+m`` when it is upper.
    harmful : str
        ``"lower"``: H0 ``effect <= bound``, alternative ``"greater"``.
        ``"upper"``: H0 ``effect >= bound``, alternative ``"less"``.
    statistic : float
        ``(estimate - bound) / standard_error``.
    pvalue : float
        One-sided p-value of H0.
    alternative : str
        ``"greater"`` or ``"less"`` as above.
    """

    method: str
    estimate: float
    standard_error: float
    df: float
    bound: float
    harmful: str
    statistic: float
    pvalue: float
    alternative: str

    def confidence_bound(self, alpha: float = 0.05) -> Interval:
        """One-sided ``1 - alpha`` confidence bound on the effect, on the harmful side.

        Non-inferiority is shown at level alpha exactly when this bound clears ``bound``.
        """
        check_alpha(alpha)
        return confidence_interval(
            self.estimate,
            self.standard_error,
            self.df,
            level=1.0 - alpha,
            alternative=self.alternative,
        )

    def confidence_interval(self, level: float = 0.95) -> Interval:
        """One-sided confidence interval at ``level`` (same as ``confidence_bound(1 - level)``)."""
        return confidence_interval(
            self.estimate, self.standard_error, self.df, level=level, alternative=self.alternative
        )


def noninferiority_from_estimate(
    estimate: float,
    se: float,
    df: float,
    *,
    bound: float,
    harmful: str,
    method: str = "non-inferiority t-test",
) -> NoninferiorityResult:
    """Non-inferiority test from an estimate, its standard error and df.

    Examples
    --------
    >>> r = noninferiority_from_estimate(-0.1, 0.2, 20, bound=-0.6, harmful="lower")
    >>> r.alternative, round(r.statistic, 6), round(r.pvalue, 6)
    ('greater', 2.5, 0.010617)
    """
    est = _estimate(estimate)
    check_se_df(se, df)
    b = finite(bound, "bound")
    check_harmful(harmful)
    stat = (est - b) / se
    if harmful == "lower":
        alternative, p = "greater", t_sf(stat, df)
    else:
        alternative, p = "less", t_cdf(stat, df)
    return NoninferiorityResult(
        method=method,
        estimate=est,
        standard_error=float(se),
        df=float(df),
        bound=b,
        harmful=harmful,
        statistic=float(stat),
        pvalue=p,
        alternative=alternative,
    )


def noninferiority_from_effect(eff: Effect, *, bound: float, harmful: str) -> NoninferiorityResult:
    """Non-inferiority test on an :class:`~verify.stats.ttests.Effect`."""
    return noninferiority_from_estimate(
        eff.estimate,
        eff.standard_error,
        eff.df,
        bound=bound,
        harmful=harmful,
        method=f"non-inferiority ({eff.method})",
    )


def noninferiority(
    design: str,
    new: object,
    old: object | None = None,
    *,
    target: float | None = None,
    bound: float,
    harmful: str,
) -> NoninferiorityResult:
    """Non-inferiority test from raw data (arguments as in :func:`tost`)."""
    return noninferiority_from_effect(
        effect(design, new, old, target=target), bound=bound, harmful=harmful
    )


def noninferiority_from_stats(
    design: str,
    *,
    n_new: int,
    mean_new: float,
    sd_new: float,
    n_old: int | None = None,
    mean_old: float | None = None,
    sd_old: float | None = None,
    target: float | None = None,
    bound: float,
    harmful: str,
) -> NoninferiorityResult:
    """Non-inferiority test from summary statistics (as :func:`tost_from_stats`)."""
    eff = effect_from_stats(
        design,
        n_new=n_new,
        mean_new=mean_new,
        sd_new=sd_new,
        n_old=n_old,
        mean_old=mean_old,
        sd_old=sd_old,
        target=target,
    )
    return noninferiority_from_effect(eff, bound=bound, harmful=harmful)
