"""The lot effect: one-way ANOVA of the values across lots with the intraclass
correlation."""

from __future__ import annotations

from collections.abc import Hashable, Sequence
from dataclasses import dataclass

import numpy as np

from . import _memo
from ._frozen import fast_init
from .errors import NotApplicableError
from .one_way import OneWay, one_way
from .samples import finite_values, group_codes, group_sizes

METHOD = "one-way ANOVA across lots"  # LotEffectResult.method


@fast_init
@dataclass(frozen=True)
class LotEffectResult:
    """One-way ANOVA across lots, with the share of variance between lots.

    Attributes
    ----------
    method : str
        ``"one-way ANOVA across lots"``.
    statistic : float
        F = MS_between / MS_within.
    df_between, df_within : int
        k - 1 and N - k.
    pvalue : float
    n_lots : int
    icc : float
        One-way random-effects intraclass correlation ICC(1) =
        (MSB - MSW) / (MSB + (n0 - 1) MSW), n0 = (N - sum n_i^2 / N) / (k - 1) (the effective
        lot size for unequal sizes). Clipped at 0: a negative estimate means no detectable
        lot-to-lot variation.
    var_between, var_within : float
        Variance components: max(0, (MSB - MSW) / n0) and MSW.
    n0 : float
    lot_labels : tuple
        Lots in order of first appearance.
    lot_means : tuple of float
    lot_sizes : tuple of int
    """

    method: str
    statistic: float
    df_between: int
    df_within: int
    pvalue: float
    n_lots: int
    icc: float
    var_between: float
    var_within: float
    n0: float
    lot_labels: tuple[Hashable, ...]
    lot_means: tuple[float, ...]
    lot_sizes: tuple[int, ...]

    @property
    def df(self) -> tuple[int, int]:
        return (self.df_between, self.df_within)


def lot_effect(values: Sequence[float] | np.ndarray, lots: Sequence[Hashable]) -> LotEffectResult:
    """One-way ANOVA of ``values`` across ``lots`` (one label per value).

    Raises
    ------
    NotApplicableError
        Fewer than 2 lots, or no lot with 2 or more values (no within-lot variation to compare
        with).
    DegenerateDataError
        Non-finite values, or no variation within any lot.

    Examples
    --------
    >>> r = lot_effect([1.0, 1.2, 2.0, 2.2, 3.0, 3.2], ["a", "a", "b", "b", "c", "c"])
    >>> r.df_between, r.df_within, round(r.statistic, 1)
    (2, 3, 100.0)
    """
    ow, k, label_tuple, size_tuple = _analysis(values, lots)
    msb, msw, n0 = ow.ms_between, ow.ms_within, ow.n0
    grand = float(ow.grand)
    # each lot mean as ow.grand + ow.means_centred computes it: one double addition per lot
    # (numpy's elementwise sum of a float and a float64 array is that same IEEE addition),
    # a Python float as .tolist() gives it
    means = tuple([grand + m for m in ow.means_centred.tolist()])
    # (the fields by position: method, statistic, df_between, df_within, pvalue, n_lots, icc,
    # var_between, var_within, n0, lot_labels, lot_means, lot_sizes)
    return LotEffectResult(METHOD, float(ow.statistic),
                           int(ow.df_between), int(ow.df_within), ow.pvalue, int(k), _icc(ow),
                           float(max(0.0, (msb - msw) / n0)), float(msw), float(n0),
                           label_tuple, means, size_tuple)


def lot_effect_figures(values: Sequence[float] | np.ndarray, lots: Sequence[Hashable]
                       ) -> tuple[float, float, float, int]:
    """``(statistic, pvalue, icc, n_lots)`` of :func:`lot_effect` (the same floats, and the
    same errors), for a caller that reads these figures alone, as the lot-effect diagnostic
    does: the lot means, the variance components and the result are not made."""
    ow, k, _, _ = _analysis(values, lots)
    return float(ow.statistic), ow.pvalue, _icc(ow), int(k)


def _icc(ow) -> float:
    """ICC(1) of the one-way analysis ``ow``, clipped at 0 (see LotEffectResult.icc)."""
    msb, msw = ow.ms_between, ow.ms_within
    return float(max(0.0, (msb - msw) / (msb + (ow.n0 - 1.0) * msw)))


def _analysis(values, lots) -> tuple[OneWay, int, tuple, tuple]:
    """The one-way analysis of ``values`` across ``lots``, the number of lots, and the labels
    and sizes of the lots as tuples; the errors lot_effect documents."""
    a = finite_values(values)
    labels, codes = group_codes(lots, a.size)
    # what the lots alone give (their count, sizes, labels and sizes as tuples), remembered
    # with their read-only codes: the characteristics measured on the same parts share one
    # codes array (samples.group_codes), so each layout of lots is looked at once. The
    # remembered entry is what the lines of _lots_alone give for these codes (the labels are
    # those group_codes found with them)
    lots_alone = _memo.recall("lot_effect_lots", codes)
    if lots_alone is None:
        lots_alone = _lots_alone(labels, codes)
        _memo.remember("lot_effect_lots", codes, lots_alone)  # (only read-only codes are)
    k, sizes, label_tuple, size_tuple = lots_alone
    return (one_way(a, codes, sizes, refused="lot effect cannot be tested"), k, label_tuple,
            size_tuple)


def _lots_alone(labels: list, codes: np.ndarray) -> tuple[int, np.ndarray, tuple, tuple]:
    """(k, the size of each lot, the labels as a tuple, the sizes as a tuple) of lots coded
    ``codes``; NotApplicableError for fewer than 2 lots or no lot of 2 values or more."""
    k = len(labels)
    if k < 2:
        raise NotApplicableError(f"a lot effect needs at least 2 lots, got {k}")
    sizes = group_sizes(codes, k)
    size_list = sizes.tolist()
    if max(size_list) < 2:
        raise NotApplicableError("no lot has 2 or more values, so within-lot variation is unknown")
    return k, sizes, tuple(labels), tuple(size_list)
