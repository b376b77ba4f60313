"""The capability check's typed result details: a normal model's indices, or the percentile
indices of a fitted non-normal model."""

from __future__ import annotations

from dataclasses import dataclass

from ...model import CheckDetails
from ...stats._frozen import fast_init


@fast_init
@dataclass(frozen=True)
class CapabilityDetails(CheckDetails):
    """Cp, Cpk, Pp, Ppk, Cpm of the new parts with the sigmas behind them, and the criterion
    as declared and judged (``index``, ``judge``, ``min``, ``confidence``, ``lower_bound``)."""

    OMITTED_WHEN_NONE = ("min_cpk",)

    cp: float | None
    cpk: float
    cpl: float | None
    cpu: float | None
    pp: float | None
    ppk: float | None
    cpm: float | None
    sigma_within: float
    sigma_overall: float
    sigma_method: str
    mean: float
    n: int
    min_cpk: float | None  # the declared min when the index is Cpk (kept for older readers)
    cpk_lower_95: float | None
    index: str  # cpk | ppk
    judge: str  # estimate | lower_bound
    min: float
    confidence: float
    lower_bound: float | None
    bound_df: float | None


@dataclass(frozen=True)
class PercentileCapabilityDetails(CheckDetails):
    """The percentile indices of a fitted model (ISO 22514-2): the fitted 0.135%, 50% and
    99.865% quantiles, the expected ppm beyond each limit, and the criterion as judged."""

    pp: float | None
    ppl: float | None
    ppu: float | None
    ppk: float
    x_0_135: float
    x_50: float
    x_99_865: float
    distribution: str
    fit: str
    expected_ppm_below: float
    expected_ppm_above: float
    index: str
    judge: str
    min: float
    confidence: float
    lower_bound: float | None
    n: int
