"""Parts beyond the specification limits: the count seen and the fraction a model expects.

A part counts as beyond a limit when its value is strictly below the lower limit or strictly
above the upper one (a value on a limit is within it: common practice for drawing tolerances).
The expected fraction beyond the limits comes from a normal model with the sample mean and the
overall sample sd (n - 1) of the same values:

    ppm = 1e6 * (Phi((lower - mean) / sd) + Phi((mean - upper) / sd))

where Phi is the standard normal distribution function (``scipy.special.ndtr``, accurate far in
its lower tail, so both terms are written as lower tails). A side without a limit adds nothing.

With a declared non-normal ``distribution`` (lognormal, weibull, box-cox) the expected fraction
comes from that distribution fitted by maximum likelihood to the same values
(:func:`verify.stats.distributions.fit`, :func:`~verify.stats.distributions.expected_beyond`);
with ``any`` there is no model and no expected ppm (``note`` says so), as when a fit cannot be
made (``note`` gives the fit's error).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import special

from . import _memo, distributions
from ._frozen import fast_init
from .core import mean_sd
from .errors import DegenerateDataError, NotApplicableError

ArrayLike = Sequence[float] | np.ndarray


@fast_init
@dataclass(frozen=True)
class BeyondLimits:
    """Counts beyond each limit and the model's expectation.

    Attributes
    ----------
    n : int
        Finite values counted.
    below, above : int
        Values strictly below the lower limit, strictly above the upper limit (0 without one).
    expected_ppm : float or None
        Parts per million the model expects beyond the limits; None when the model is
        undefined (fewer than 2 values, zero spread, a fit that cannot be made) or when there
        is no model (``any``).
    expected_ppm_below, expected_ppm_above : float or None
        The same, per side (0.0 for a side without a limit).
    model : str
        The distribution behind ``expected_ppm``: normal, lognormal, weibull, box-cox, or any
        (no model).
    note : str or None
        Why ``expected_ppm`` is None, in words (None when it is a number).
    """

    n: int
    below: int
    above: int
    expected_ppm: float | None
    expected_ppm_below: float | None = None
    expected_ppm_above: float | None = None
    model: str = "normal"
    note: str | None = None

    @property
    def total(self) -> int:
        return self.below + self.above


def normal_ppm_beyond(
    mean: float, sd: float, *, lower: float | None, upper: float | None
) -> tuple[float, float]:
    """Parts per million below ``lower`` and above ``upper`` for a normal(mean, sd).

    Examples
    --------
    >>> below, above = normal_ppm_beyond(0.0, 1.0, lower=-3.0, upper=3.0)
    >>> round(below + above, 1)   # the familiar 0.27% beyond three sigma
    2699.8
    """
    if not (math.isfinite(mean) and math.isfinite(sd) and sd > 0):
        raise ValueError("mean must be finite and sd finite and positive")
    below = 0.0 if lower is None else 1e6 * float(special.ndtr((lower - mean) / sd))
    above = 0.0 if upper is None else 1e6 * float(special.ndtr((mean - upper) / sd))
    return below, above


def beyond_limits(
    values: ArrayLike, *, lower: float | None, upper: float | None,
    distribution: str = "normal",
) -> BeyondLimits:
    """Count values beyond the limits and the expected ppm of the declared distribution.

    Parameters
    ----------
    values : array_like
        Part values (non-finite values are left out).
    lower, upper : float or None
        The specification limits; None for a side without one.
    distribution : str
        The model of the expected ppm: normal (sample mean and sd), lognormal, weibull or
        box-cox (fitted to ``values`` by maximum likelihood), or any (no model: no ppm).

    Examples
    --------
    >>> r = beyond_limits([24.1, 25.0, 26.8, 25.2], lower=24.5, upper=26.5)
    >>> (r.below, r.above)
    (1, 1)
    """
    v = np.asarray(values, dtype=float)
    # (a read-only sample found finite before is the sample itself, its mean and sd known)
    if _memo.recall("finite", v) is None and (
            v.ndim != 1 or not np.logical_and.reduce(np.isfinite(v))):
        v = v[np.isfinite(v)]  # (all finite: the sample itself, whose mean and sd are known)
    below = int(np.count_nonzero(v < lower)) if lower is not None else 0
    above = int(np.count_nonzero(v > upper)) if upper is not None else 0
    if distribution not in distributions.NAMES:
        raise ValueError(f"distribution must be one of {distributions.NAMES}, "
                         f"got {distribution!r}")
    ppm = ppm_lo = ppm_hi = None
    note = None
    if distribution == "any":
        note = "distribution any: no model, so no expected ppm"
    elif distribution == "normal":
        if v.size >= 2:
            _, m, s = mean_sd(v)
            if s > 0:
                ppm_lo, ppm_hi = normal_ppm_beyond(m, s, lower=lower, upper=upper)
        if ppm_lo is None:
            note = "the normal model needs at least 2 values with a spread"
    else:
        try:
            f = distributions.fit(v, distribution)
        except (DegenerateDataError, NotApplicableError) as err:
            note = f"no {distribution} fit: {err}"
        else:
            lo, hi = distributions.expected_beyond(f, lower=lower, upper=upper)
            ppm_lo, ppm_hi = 1e6 * lo, 1e6 * hi
    if ppm_lo is not None:
        ppm = ppm_lo + ppm_hi
    return BeyondLimits(
        n=int(v.size),
        below=below,
        above=above,
        expected_ppm=ppm,
        expected_ppm_below=ppm_lo,
        expected_ppm_above=ppm_hi,
        model=distribution,
        note=note,
    )


def beyond_limits_many(
    samples: Sequence[ArrayLike], *, lower: Sequence[float | None],
    upper: Sequence[float | None], distribution: Sequence[str],
) -> list[BeyondLimits]:
    """:func:`beyond_limits` of each sample with its own limits and distribution (``lower``,
    ``upper`` and ``distribution`` as long as ``samples``), the same results computed together.

    An evaluation summarises two part samples per characteristic. The normal model's samples
    that are read-only and known finite (:mod:`verify.stats._memo`) are counted as rows of one
    array per sample size, and their tails come from one call of Phi on every row's
    standardised limits: elementwise the same comparisons, the same float64 arithmetic and the
    same ``ndtr`` as one sample at a time. Any other sample goes through
    :func:`beyond_limits` itself.

    Examples
    --------
    >>> a, b = beyond_limits_many([[24.1, 25.0, 26.8, 25.2], [1.0, 2.0, 3.0]],
    ...                           lower=[24.5, None], upper=[26.5, 2.5],
    ...                           distribution=["normal", "normal"])
    >>> (a.below, a.above), (b.below, b.above)
    ((1, 1), (0, 1))
    """
    out: list[BeyondLimits | None] = [None] * len(samples)
    by_size: dict[int, list[int]] = {}
    summaries: dict[int, tuple] = {}  # i -> mean_sd of samples[i], where the memo holds it
    for i, v in enumerate(samples):
        # what the memo knows of v, in one lookup (it knows only read-only arrays): known
        # finite, and its mean_sd (core.mean_sd's own recall) where remembered
        t = _memo.known(v) if distribution[i] == "normal" else None
        if t is not None and v.ndim == 1 and v.size >= 2 and t.get("finite") is not None:
            by_size.setdefault(v.size, []).append(i)
            if (ms := t.get("mean_sd")) is not None:
                summaries[i] = ms
        else:
            out[i] = beyond_limits(v, lower=lower[i], upper=upper[i],
                                   distribution=distribution[i])
    for n, rows in by_size.items():
        lo = [lower[i] for i in rows]
        hi = [upper[i] for i in rows]
        # np.stack's array, in one concatenation (np.stack makes a view of each row first)
        stacked = np.concatenate([samples[i] for i in rows]).reshape(len(rows), n)
        # a missing limit compares as NaN, which nothing is below or above (and counts 0)
        lo_arr = np.array([np.nan if x is None else x for x in lo], dtype=float)
        hi_arr = np.array([np.nan if x is None else x for x in hi], dtype=float)
        below = np.count_nonzero(stacked < lo_arr[:, None], axis=1)
        above = np.count_nonzero(stacked > hi_arr[:, None], axis=1)
        ms = [summaries.get(i) or mean_sd(samples[i]) for i in rows]
        m = np.array([x[1] for x in ms])
        s = np.array([x[2] for x in ms])
        # the standardised limits of every row, Phi of all of them at once: element by element
        # the floats of normal_ppm_beyond (a missing limit's NaN gives a tail of 0.0 instead);
        # rows without a spread (or not finite) are beyond_limits' own
        has_lo = np.array([x is not None for x in lo])
        has_hi = np.array([x is not None for x in hi])
        with np.errstate(divide="ignore", invalid="ignore"):
            tails = special.ndtr(np.concatenate(((lo_arr - m) / s, (m - hi_arr) / s)))
        ppm_lo = np.where(has_lo, 1e6 * tails[:m.size], 0.0)
        ppm_hi = np.where(has_hi, 1e6 * tails[m.size:], 0.0)
        fit = (s > 0.0) & np.isfinite(m) & np.isfinite(s)
        for r, (i, nb, na, ok, p_lo, p_hi, with_lo, with_hi) in enumerate(zip(
                rows, below.tolist(), above.tolist(), fit.tolist(), ppm_lo.tolist(),
                ppm_hi.tolist(), has_lo.tolist(), has_hi.tolist(), strict=True)):
            if not ok:  # no spread (or none finite): as beyond_limits says it, or raises
                out[i] = beyond_limits(samples[i], lower=lo[r], upper=hi[r])
                continue
            # by position, in the fields' order: n, below, above, expected_ppm (its below
            # and above), model, note
            out[i] = BeyondLimits(n, nb if with_lo else 0,
                                  na if with_hi else 0, p_lo + p_hi, p_lo, p_hi, "normal", None)
    return out
