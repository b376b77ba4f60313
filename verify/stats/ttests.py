"""t-tests for one lot against a target and for a new lot against an old one.

Each test computes only its effect (estimate, standard error, degrees of freedom) in
:func:`effect` or :func:`effect_from_stats` and hands it to the generic core
:func:`verify.stats.core.t_test_from_estimate`. Differences are always **new minus old**; the
one-sample estimate is **mean minus target**.

Designs
-------
``"one-sample"``
    One lot against a target value: estimate ``mean(x) - target``, se ``s / sqrt(n)``,
    df ``n - 1``.
``"paired"``
    The same parts measured before and after: d = new - old, estimate ``mean(d)``,
    se ``s_d / sqrt(n)``, df ``n - 1`` (n pairs).
``"welch"``
    Two independent lots, spreads not assumed equal: se ``sqrt(s_new^2/n_new + s_old^2/n_old)``
    with the Welch-Satterthwaite df.
``"pooled"``
    Two independent lots, equal spreads assumed: pooled sd
    ``sqrt(((n_new-1) s_new^2 + (n_old-1) s_old^2) / (n_new + n_old - 2))``,
    se ``s_p sqrt(1/n_new + 1/n_old)``, df ``n_new + n_old - 2``.
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass

import numpy as np

from . import _memo
from ._frozen import fast_init
from .core import (
    MAX_MAGNITUDE,
    TTestResult,
    check_alternative,
    mean_sd,
    require_spread,
    t_test_from_estimate,
)
from .errors import DegenerateDataError

# Largest magnitude of a measurement we accept: squared deviations must stay finite.
_LARGEST = MAX_MAGNITUDE  # as core.mean_sd: what passes one passes the other

DESIGNS: tuple[str, ...] = ("one-sample", "paired", "welch", "pooled")

METHODS: dict[str, str] = {
    "one-sample": "one-sample t-test",
    "paired": "paired t-test",
    "welch": "Welch two-sample t-test",
    "pooled": "pooled two-sample t-test",
}


def check_design(design: str) -> str:
    """Return ``design`` if it is one of :data:`DESIGNS`, else raise ValueError."""
    if design not in DESIGNS:
        raise ValueError(f"design must be one of {DESIGNS}, not {design!r}")
    return design


@fast_init
@dataclass(frozen=True)
class Effect:
    """The estimated effect of a design with its standard error and degrees of freedom.

    Attributes
    ----------
    design : str
        ``"one-sample"``, ``"paired"``, ``"welch"`` or ``"pooled"``.
    method : str
        Name of the t-test, e.g. ``"Welch two-sample t-test"``.
    estimate : float
        ``mean - target`` (one-sample), ``mean(new - old)`` (paired) or
        ``mean(new) - mean(old)`` (welch, pooled).
    standard_error : float
        Standard error of ``estimate``; always positive and finite.
    df : float
        Degrees of freedom (fractional for Welch).
    n_new : int
        Size of the new lot; for paired data the number of pairs.
    n_old : int or None
        Size of the old lot; ``None`` for one-sample; for paired data the number of pairs
        (equal to ``n_new``).
    sd : float
        The sd that enters the standard error, so that ``standard_error = sd * sqrt(k)``
        with ``k = 1/n`` (one-sample, paired) or ``k = 1/n_new + 1/n_old`` (two-sample):
        the sd of the values (one-sample), of the differences (paired), the pooled sd
        (pooled), and for Welch the *equivalent common sd*
        ``standard_error / sqrt(1/n_new + 1/n_old)``, which equals the pooled sd when the
        lots are of equal size. This is the sd to give to :mod:`verify.stats.power`.
    mean_new, sd_new : float or None
        Mean and sd of the new lot (the only lot for one-sample). ``None`` for paired
        summary statistics, where only the differences are known.
    mean_old, sd_old : float or None
        Mean and sd of the old lot; ``None`` for one-sample and for paired summary
        statistics.
    target : float or None
        The target (one-sample only).
    """

    design: str
    method: str
    estimate: float
    standard_error: float
    df: float
    n_new: int
    n_old: int | None
    sd: float
    mean_new: float | None = None
    sd_new: float | None = None
    mean_old: float | None = None
    sd_old: float | None = None
    target: float | None = None


# --- validation helpers ---------------------------------------------------------------------


def _as_values(x: object, what: str) -> np.ndarray:
    if x is None:
        raise ValueError(f"the {what} values are required for this design")
    if _memo.recall("mean_sd", x) is not None and x.ndim == 1:
        return x  # a sample whose mean and sd exist is finite and within +/-1e150 (MAX_MAGNITUDE)
    try:
        arr = np.asarray(x, dtype=float)
    except (TypeError, ValueError) as exc:
        raise DegenerateDataError(f"the {what} values must be numbers ({exc})") from None
    if arr.ndim != 1:
        raise ValueError(f"the {what} values must be a one-dimensional sequence")
    # one pass: the largest |value| is NaN or infinite exactly when a value is
    if arr.size and not float(np.maximum.reduce(np.abs(arr))) <= _LARGEST:
        if not np.isfinite(arr).all():
            raise DegenerateDataError(
                f"the {what} values must all be finite numbers (no NaN or inf)")
        # beyond this, squares of deviations overflow and no spread can be computed
        raise DegenerateDataError(f"the {what} values are too large (above {_LARGEST:g})")
    return arr


def _require_n(n: int, what: str) -> None:
    if n < 2:
        raise DegenerateDataError(f"{n} {what}: at least 2 are needed to estimate the spread")


def _as_count(n: object, what: str) -> int:
    if isinstance(n, bool) or not isinstance(n, numbers.Integral):
        if isinstance(n, float) and n.is_integer():
            n = int(n)
        else:
            raise ValueError(f"{what} must be a whole number, not {n!r}")
    n = int(n)
    if n < 2:
        raise DegenerateDataError(f"{what} is {n}: at least 2 are needed to estimate the spread")
    return n


def _as_finite(v: object, what: str) -> float:
    try:
        f = float(v)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise ValueError(f"{what} must be a number, not {v!r}") from None
    if not math.isfinite(f):
        raise DegenerateDataError(f"{what} must be a finite number, not {f}")
    return f


def _as_sd(v: object, what: str) -> float:
    f = _as_finite(v, what)
    if f < 0.0:
        raise ValueError(f"{what} must not be negative, got {f}")
    return f


def _finish(design: str, estimate: float, standard_error: float, df: float, n_new: int,
            n_old: int | None, sd: float, mean_new: float | None = None,
            sd_new: float | None = None, mean_old: float | None = None,
            sd_old: float | None = None, target: float | None = None) -> Effect:
    """Build the Effect, refusing a non-finite or zero standard error or a bad df (the fields
    are stored as given; the method is the design's)."""
    se = float(standard_error)
    est = float(estimate)
    dfl = float(df)
    if not math.isfinite(est) or not math.isfinite(se) or not math.isfinite(dfl):
        raise DegenerateDataError(
            "the values are too large to compute a mean difference and standard error"
        )
    if se <= 0.0:
        raise DegenerateDataError("the standard error is zero: the values have no spread")
    if dfl <= 0.0:
        raise DegenerateDataError(f"degrees of freedom must be positive, got {dfl}")
    return Effect(design, METHODS[design], estimate, standard_error, df, n_new, n_old, sd,
                  mean_new, sd_new, mean_old, sd_old, target)


def _welch_parts(n1: int, s1: float, n2: int, s2: float) -> tuple[float, float]:
    """Welch standard error and Welch-Satterthwaite df; raises if both spreads are zero."""
    a = s1 / math.sqrt(n1)
    b = s2 / math.sqrt(n2)
    se = math.hypot(a, b)
    if not se > 0.0:
        raise DegenerateDataError("both lots have zero spread (all values identical)")
    # Welch-Satterthwaite df, (a^2 + b^2)^2 / (a^4/(n1-1) + b^4/(n2-1)), written with the
    # share r of the variance from the new lot so that nothing over- or underflows.
    r = (a / se) ** 2
    df = 1.0 / (r * r / (n1 - 1) + (1.0 - r) * (1.0 - r) / (n2 - 1))
    return se, df


def _pooled_parts(n1: int, s1: float, n2: int, s2: float) -> tuple[float, float, float]:
    """Pooled sd, standard error and df."""
    df = n1 + n2 - 2
    scale = max(s1, s2)
    if not scale > 0.0:
        raise DegenerateDataError("both lots have zero spread (all values identical)")
    u1, u2 = s1 / scale, s2 / scale
    sp = scale * math.sqrt(((n1 - 1) * u1 * u1 + (n2 - 1) * u2 * u2) / df)
    return sp, sp * math.sqrt(1.0 / n1 + 1.0 / n2), float(df)


def _two_sample(
    design: str, n_new: int, m_new: float, s_new: float, n_old: int, m_old: float, s_old: float
) -> Effect:
    est = m_new - m_old
    if design == "welch":
        se, df = _welch_parts(n_new, s_new, n_old, s_old)
        sd = se / math.sqrt(1.0 / n_new + 1.0 / n_old)
    else:
        sd, se, df = _pooled_parts(n_new, s_new, n_old, s_old)
    return _finish(design, est, se, df, n_new, n_old, sd, m_new, s_new, m_old, s_old)


def two_sample_effect(
    design: str, n_new: int, m_new: float, s_new: float, n_old: int, m_old: float, s_old: float
) -> Effect:
    """The Welch or pooled :class:`Effect` of two samples from their sizes, means and sds as
    :func:`~verify.stats.core.mean_sd` gives them, for a caller that has checked the samples
    already (at least 2 finite values each, within +/-1e150, each with spread): the Effect
    :func:`effect` returns for those samples, without checking them again.

    Examples
    --------
    >>> e = two_sample_effect("pooled", 4, 10.25, 0.1290994, 4, 10.075, 0.0957427)
    >>> round(e.estimate, 6), e.df
    (0.175, 6.0)
    """
    check_design(design)
    if design not in ("welch", "pooled"):
        raise ValueError(f"two_sample_effect is for the welch or pooled design, not {design!r}")
    return _two_sample(design, n_new, m_new, s_new, n_old, m_old, s_old)


def one_sample_effect(n: int, m: float, s: float, target: float) -> Effect:
    """The one-sample :class:`Effect` of a sample from its size, mean and sd as
    :func:`~verify.stats.core.mean_sd` gives them, for a caller that has checked the sample
    already (at least 2 finite values within +/-1e150, with spread) and holds a finite float
    ``target``: the Effect ``effect("one-sample", x, target=target)`` returns for that sample,
    without checking it again (the same arithmetic, the same fields).

    Examples
    --------
    >>> e = one_sample_effect(4, 10.25, 0.1290994, 10.0)
    >>> round(e.estimate, 6), e.df
    (0.25, 3.0)
    """
    return _finish("one-sample", m - target, s / math.sqrt(n), float(n - 1), n, None, s, m, s,
                   None, None, target)


# --- effects --------------------------------------------------------------------------------


def effect(
    design: str,
    new: object,
    old: object | None = None,
    *,
    target: float | None = None,
) -> Effect:
    """Estimate, standard error and df of a design from raw measurements.

    Parameters
    ----------
    design : {"one-sample", "paired", "welch", "pooled"}
    new : array_like
        Measurements of the new lot (the only lot for one-sample).
    old : array_like, optional
        Measurements of the old lot; required for two-sample and paired designs. For paired
        data ``old[i]`` and ``new[i]`` belong to the same part and the effect is
        ``mean(new - old)``.
    target : float, optional
        Required for one-sample (estimate ``mean(new) - target``); not allowed otherwise.

    Raises
    ------
    DegenerateDataError
        Fewer than 2 values (pairs) per lot, non-finite values, or zero spread.
    ValueError
        Unknown design, missing or unexpected arguments, paired arrays of unequal length.

    Examples
    --------
    >>> e = effect("welch", [10.1, 10.3, 10.2, 10.4], old=[10.0, 10.1, 10.0, 10.2])
    >>> round(e.estimate, 6), round(e.df, 3)
    (0.175, 5.534)
    """
    check_design(design)
    x_new = _as_values(new, "new")
    if design == "one-sample":
        if old is not None:
            raise ValueError("a one-sample test takes one lot: pass old=None and a target")
        if target is None:
            raise ValueError("a one-sample test needs a target value")
        tgt = _as_finite(target, "target")
        _require_n(x_new.size, "values")
        n, m, s = mean_sd(x_new)
        require_spread(n, s)
        # (by position: mean_new=m, sd_new=s, mean_old=None, sd_old=None, target=tgt)
        return _finish(design, m - tgt, s / math.sqrt(n), float(n - 1), n, None, s, m, s, None,
                       None, tgt)
    if target is not None:
        raise ValueError(f"target applies only to the one-sample design, not {design!r}")
    x_old = _as_values(old, "old")
    if design == "paired":
        if x_old.size != x_new.size:
            raise ValueError(
                f"paired data need equal lengths: {x_new.size} new and {x_old.size} old values"
            )
        _require_n(x_new.size, "pairs")
        n, m, s = mean_sd(x_new - x_old)
        require_spread(n, s, "paired differences")
        _, m_new, s_new = mean_sd(x_new)
        _, m_old, s_old = mean_sd(x_old)
        return _finish(design, m, s / math.sqrt(n), float(n - 1), n, n, s,
                       m_new, s_new, m_old, s_old)
    _require_n(x_new.size, "new values")
    _require_n(x_old.size, "old values")
    n_new, m_new, s_new = mean_sd(x_new)
    n_old, m_old, s_old = mean_sd(x_old)
    return _two_sample(design, n_new, m_new, s_new, n_old, m_old, s_old)


def effect_from_stats(
    design: str,
    *,
    n_new: int,
    mean_new: float,
    sd_new: float,
    n_old: int | None = None,
    mean_old: float | None = None,
    sd_old: float | None = None,
    target: float | None = None,
) -> Effect:
    """Estimate, standard error and df of a design from summary statistics.

    Parameters
    ----------
    design : {"one-sample", "paired", "welch", "pooled"}
    n_new, mean_new, sd_new :
        Size, mean and sample sd (n - 1 divisor) of the new lot. **For paired data these are
        the number of pairs and the mean and sd of the differences new - old**; the old_*
        arguments must then be left out (``n_old`` may be given if equal to ``n_new``).
    n_old, mean_old, sd_old :
        The old lot (two-sample designs only).
    target : float, optional
        Required for one-sample; not allowed otherwise.

    Examples
    --------
    >>> e = effect_from_stats("pooled", n_new=10, mean_new=5.2, sd_new=0.3,
    ...                       n_old=12, mean_old=5.0, sd_old=0.4)
    >>> round(e.estimate, 6), e.df
    (0.2, 20.0)
    """
    check_design(design)
    n1 = _as_count(n_new, "n_new")
    m1 = _as_finite(mean_new, "mean_new")
    s1 = _as_sd(sd_new, "sd_new")
    if design in ("one-sample", "paired"):
        if design == "one-sample" and n_old is not None:
            raise ValueError("a one-sample test takes one lot: leave n_old out")
        if design == "paired" and n_old is not None and _as_count(n_old, "n_old") != n1:
            raise ValueError("for paired data n_old must equal n_new (the number of pairs)")
        if mean_old is not None or sd_old is not None:
            what = "differences" if design == "paired" else "lot"
            raise ValueError(
                f"{design}: give the summary of the {what} as n_new, mean_new, sd_new"
                " and leave mean_old and sd_old out"
            )
        if design == "one-sample":
            if target is None:
                raise ValueError("a one-sample test needs a target value")
            tgt: float | None = _as_finite(target, "target")
            est = m1 - tgt
        else:
            if target is not None:
                raise ValueError("target applies only to the one-sample design")
            tgt = None
            est = m1
        what = "paired differences" if design == "paired" else "values"
        require_spread(n1, s1, what)
        return _finish(design, est, s1 / math.sqrt(n1), float(n1 - 1), n1,
                       n1 if design == "paired" else None, s1,
                       mean_new=m1 if design == "one-sample" else None,
                       sd_new=s1 if design == "one-sample" else None, target=tgt)
    if target is not None:
        raise ValueError(f"target applies only to the one-sample design, not {design!r}")
    if n_old is None or mean_old is None or sd_old is None:
        raise ValueError(f"the {design} design needs n_old, mean_old and sd_old")
    n2 = _as_count(n_old, "n_old")
    m2 = _as_finite(mean_old, "mean_old")
    s2 = _as_sd(sd_old, "sd_old")
    return _two_sample(design, n1, m1, s1, n2, m2, s2)


# --- tests ----------------------------------------------------------------------------------


def t_test_from_effect(
    eff: Effect, *, alternative: str = "two-sided", null_value: float = 0.0
) -> TTestResult:
    """Run the t-test of an :class:`Effect` against ``null_value`` (the hypothesised effect)."""
    check_alternative(alternative)
    return t_test_from_estimate(
        eff.estimate,
        eff.standard_error,
        eff.df,
        null_value=_as_finite(null_value, "null_value"),
        alternative=alternative,
        method=eff.method,
    )


def t_test(
    design: str,
    new: object,
    old: object | None = None,
    *,
    target: float | None = None,
    alternative: str = "two-sided",
    null_value: float = 0.0,
) -> TTestResult:
    """The t-test of any design from raw data (see :func:`effect` for the arguments)."""
    check_alternative(alternative)
    return t_test_from_effect(
        effect(design, new, old, target=target), alternative=alternative, null_value=null_value
    )


def one_sample(x: object, *, target: float = 0.0, alternative: str = "two-sided") -> TTestResult:
    """One-sample t-test of ``mean(x) - target`` against 0.

    Examples
    --------
    >>> r = one_sample([9.9, 10.2, 10.1, 10.3, 10.0], target=10.0)
    >>> round(r.estimate, 6), r.df
    (0.1, 4.0)
    """
    return t_test("one-sample", x, target=target, alternative=alternative)


def paired(
    old: object, new: object, *, alternative: str = "two-sided", null_value: float = 0.0
) -> TTestResult:
    """Paired t-test of ``mean(new - old)`` against ``null_value``."""
    return t_test("paired", new, old, alternative=alternative, null_value=null_value)


def welch(
    old: object, new: object, *, alternative: str = "two-sided", null_value: float = 0.0
) -> TTestResult:
    """Welch two-sample t-test of ``mean(new) - mean(old)`` against ``null_value``."""
    return t_test("welch", new, old, alternative=alternative, null_value=null_value)


def pooled(
    old: object, new: object, *, alternative: str = "two-sided", null_value: float = 0.0
) -> TTestResult:
    """Pooled (equal-variance) two-sample t-test of ``mean(new) - mean(old)``."""
    return t_test("pooled", new, old, alternative=alternative, null_value=null_value)


def one_sample_from_stats(
    *, n: int, mean: float, sd: float, target: float = 0.0, alternative: str = "two-sided"
) -> TTestResult:
    """One-sample t-test from the lot's size, mean and sd (n - 1 divisor)."""
    eff = effect_from_stats("one-sample", n_new=n, mean_new=mean, sd_new=sd, target=target)
    return t_test_from_effect(eff, alternative=alternative)


def paired_from_stats(
    *, n: int, mean: float, sd: float, alternative: str = "two-sided", null_value: float = 0.0
) -> TTestResult:
    """Paired t-test from the number of pairs and the mean and sd of the differences new - old."""
    eff = effect_from_stats("paired", n_new=n, mean_new=mean, sd_new=sd)
    return t_test_from_effect(eff, alternative=alternative, null_value=null_value)


def welch_from_stats(
    *,
    n_old: int,
    mean_old: float,
    sd_old: float,
    n_new: int,
    mean_new: float,
    sd_new: float,
    alternative: str = "two-sided",
    null_value: float = 0.0,
) -> TTestResult:
    """Welch two-sample t-test from each lot's size, mean and sd."""
    eff = effect_from_stats(
        "welch",
        n_new=n_new,
        mean_new=mean_new,
        sd_new=sd_new,
        n_old=n_old,
        mean_old=mean_old,
        sd_old=sd_old,
    )
    return t_test_from_effect(eff, alternative=alternative, null_value=null_value)


def pooled_from_stats(
    *,
    n_old: int,
    mean_old: float,
    sd_old: float,
    n_new: int,
    mean_new: float,
    sd_new: float,
    alternative: str = "two-sided",
    null_value: float = 0.0,
) -> TTestResult:
    """Pooled two-sample t-test from each lot's size, mean and sd."""
    eff = effect_from_stats(
        "pooled",
        n_new=n_new,
        mean_new=mean_new,
        sd_new=sd_new,
        n_old=n_old,
        mean_old=mean_old,
        sd_old=sd_old,
    )
    return t_test_from_effect(eff, alternative=alternative, null_value=null_value)


def t_test_from_stats(
    design: str,
    *,
    n_new: int,
    mean_new: float,
    sd_new: float,
    n_old: int | None = None,
    mean_old: float | None = None,
    sd_old: float | None = None,
    target: float | None = None,
    alternative: str = "two-sided",
    null_value: float = 0.0,
) -> TTestResult:
    """The t-test of any design from summary statistics (see :func:`effect_from_stats`)."""
    check_alternative(alternative)
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
    return t_test_from_effect(eff, alternative=alternative, null_value=null_value)
