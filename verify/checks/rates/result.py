"""The pass-fail checks' typed result details."""

from __future__ import annotations

from dataclasses import dataclass

from ...model import CheckDetails


@dataclass(frozen=True)
class RateDetails(CheckDetails):
    """The failure rate's criterion and counts, its two-sided lower bound, and the parts the
    success-run plan needs at these failures."""

    max: float
    confidence: float
    failures_new: int
    n_new: int
    lower_bound: float
    parts_needed_at_these_failures: int


@dataclass(frozen=True)
class RateShiftDetails(CheckDetails):
    """The counts of both streams, and the margin when the spec declares one."""

    OMITTED_WHEN_NONE = ("margin",)

    failures_new: int
    n_new: int
    failures_old: int
    n_old: int
    margin: float | None = None
