"""The one-way analysis of variance of values in groups (lots), shared by the lot-effect
diagnostic (:mod:`~verify.stats.lot_effect`) and the variance components
(:mod:`~verify.stats.variance_components`, whose docstring gives the sources): the sums of
squares on values centred on the grand mean (centring first keeps them accurate), the mean
squares, the effective group size n0 = (N - sum n_i^2 / N) / (k - 1) and the F-test."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special

from . import _memo
from ._frozen import fast_init
from .errors import DegenerateDataError


@fast_init
@dataclass(frozen=True)
class OneWay:
    """Mean squares and the F-test of a one-way layout.

    ``means_centred`` are the group means minus ``grand`` (in group-code order).
    """

    grand: float
    means_centred: np.ndarray
    df_between: int
    df_within: int
    ms_between: float
    ms_within: float
    n0: float
    statistic: float
    pvalue: float


def one_way(a: np.ndarray, codes: np.ndarray, sizes: np.ndarray, *, refused: str) -> OneWay:
    """The one-way ANOVA of ``a`` in the groups ``codes`` (0..k-1; ``sizes`` their counts).

    Raises DegenerateDataError "no variation within any lot (...), so the ``refused``" when
    every group's values are identical. The result for a read-only sample in read-only codes
    (a gathered sample in its lots) is remembered: the lot-effect diagnostic and the variance
    components of one sample share it.
    """
    hit = _memo.recall("one_way", a)
    if hit is not None and hit[0] is codes:
        return hit[1]
    ow = _one_way(a, codes, sizes, refused)
    if not codes.flags.writeable:
        _memo.remember("one_way", a, (codes, ow))  # (only a read-only a is remembered)
    return ow


def _one_way(a: np.ndarray, codes: np.ndarray, sizes: np.ndarray, refused: str) -> OneWay:
    k, n_total = len(sizes), a.size
    grand = float(np.add.reduce(a)) / n_total  # np.mean's arithmetic, without its wrapper
    centred = a - grand
    means_c = np.bincount(codes, weights=centred, minlength=k) / sizes
    resid = centred - means_c[codes]
    ss_within = float(np.dot(resid, resid))
    ss_between = float(np.dot(sizes, means_c**2))
    df_b, df_w = k - 1, n_total - k
    if not ss_within > 0.0:
        raise DegenerateDataError(
            f"no variation within any lot (every lot's values are identical), so the {refused}")
    msb, msw = ss_between / df_b, ss_within / df_w
    n0 = (n_total - float(np.dot(sizes, sizes)) / n_total) / df_b
    f = msb / msw
    p = float(special.fdtrc(df_b, df_w, f))
    return OneWay(grand, means_c, df_b, df_w, msb, msw, n0, f, min(1.0, max(0.0, p)))
