"""The spread check's typed result details, one dataclass per design of the test."""

from __future__ import annotations

from dataclasses import dataclass

from ...model import CheckDetails
from ...stats._frozen import fast_init


@dataclass(frozen=True)
class PairedSpreadDetails(CheckDetails):
    """Pitman-Morgan on the matched pairs: the correlation of old and new, the pairs used."""

    correlation: float
    pairs: int


@dataclass(frozen=True)
class LotSpreadDetails(CheckDetails):
    """Pooled within-lot variances compared by F on sum(n_i - 1) df; the between-lot sds are
    reported beside it and do not decide."""

    df_num: int
    df_den: int
    F: float
    sd_within_lot_old: float | None
    sd_within_lot_new: float | None
    sd_between_lot_old: float | None
    sd_between_lot_new: float | None
    between_lot_ratio: float | None
    compared: str


@fast_init
@dataclass(frozen=True)
class TwoSampleSpreadDetails(CheckDetails):
    """The two samples: the F-test's df and statistic; with Brown-Forsythe deciding, its mean
    absolute deviations and the sd ratio with its interval as descriptive figures only."""

    OMITTED_WHEN_NONE = ("pairs_ignored", "mad_old", "mad_new", "sd_ratio_descriptive",
                         "sd_ratio_low_descriptive")

    df_num: float
    df_den: float
    F: float
    pairs_ignored: str | None = None  # the spec opted out of the paired test
    mad_old: float | None = None
    mad_new: float | None = None
    sd_ratio_descriptive: float | None = None
    sd_ratio_low_descriptive: float | None = None
    sd_ratio_high_descriptive: float | None = None

    def as_mapping(self) -> dict:
        out = super().as_mapping()
        if self.sd_ratio_low_descriptive is None:  # no descriptive interval (F-test decides)
            out.pop("sd_ratio_high_descriptive", None)
        return out
