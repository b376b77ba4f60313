"""Diagnostics that flag; they never remove data or decide.

Normality (Shapiro-Wilk, Anderson-Darling, normal probability-plot correlation), outliers
(Grubbs), lot effect (one-way ANOVA with the intraclass correlation), stability (individuals
chart limits from the average moving range, runs, lag-1 autocorrelation) and measurement
resolution. Each function returns numbers in a frozen result; the decision layer compares them
with its own thresholds.

The code lives by topic in :mod:`~verify.stats.normality`, :mod:`~verify.stats.outliers`,
:mod:`~verify.stats.lot_effect`, :mod:`~verify.stats.stability` and
:mod:`~verify.stats.resolution`; the helpers the statistics modules share in
:mod:`~verify.stats.samples` (:func:`finite_values`, :func:`group_codes`, :func:`snap_to_grid`)
and :mod:`~verify.stats.range_constants` (:func:`d2`, :func:`d3`). This module gathers their
names, so that ``from verify.stats.diagnostics import ...`` keeps working.
"""

from __future__ import annotations

from .lot_effect import LotEffectResult, lot_effect
from .normality import (
    NormalityResult,
    ProbabilityPlotResult,
    anderson_darling,
    probability_plot_correlation,
    shapiro_wilk,
)
from .outliers import GRUBBS_MIN_N, GrubbsResult, grubbs, grubbs_pvalue
from .range_constants import D2_TABLE, D3_TABLE, d2, d3, expected_range, range_sd
from .resolution import ResolutionResult, resolution, resolution_of
from .samples import RESOLUTION_DIGITS, finite_values, group_codes, snap_to_grid
from .stability import (
    AutocorrelationResult,
    StabilityResult,
    individuals_chart,
    lag1_autocorrelation,
)

__all__ = [
    "D2_TABLE", "D3_TABLE", "GRUBBS_MIN_N", "RESOLUTION_DIGITS",
    "AutocorrelationResult", "GrubbsResult", "LotEffectResult", "NormalityResult",
    "ProbabilityPlotResult", "ResolutionResult", "StabilityResult",
    "anderson_darling", "d2", "d3", "expected_range", "finite_values",
    "group_codes", "grubbs", "grubbs_pvalue", "individuals_chart", "lag1_autocorrelation",
    "lot_effect", "probability_plot_correlation", "range_sd", "resolution", "resolution_of",
    "shapiro_wilk",
    "snap_to_grid",
]
