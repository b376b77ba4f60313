"""The conformance check's typed result details."""

from __future__ import annotations

from dataclasses import dataclass

from ...model import CheckDetails


@dataclass(frozen=True)
class ConformanceDetails(CheckDetails):
    """The tolerance interval's coverage, confidence, factor and the parts behind it (for a
    fitted model ``mean`` and ``sd_parts`` are on the transformed scale)."""

    OMITTED_WHEN_NONE = ("fit", "box_cox_lambda", "n_required")

    coverage: float
    coverage_confidence: float
    k: float | None  # None for distribution-free limits
    side: str
    n: int
    mean: float
    sd_parts: float
    distribution: str
    within_limits: int  # 1 when the interval lies within the limits
    fit: str | None = None  # the fitted model in words (non-normal models)
    box_cox_lambda: float | None = None
    n_required: int | None = None  # distribution-free limits: the parts they need


@dataclass(frozen=True)
class ShortConformanceDetails(CheckDetails):
    """Too few parts for distribution-free limits: how many there are and how many they
    need."""

    coverage: float
    coverage_confidence: float
    side: str
    n: int
    n_required: int
    distribution: str
