"""Errors raised by the pure statistics layer.

The statistics layer never returns NaN for a quantity that cannot be computed; it raises one of
these instead, and the decision layer turns it into a HOLD (degenerate data) or a diagnostic
marked "not applicable", each with the reason in words.
"""

from __future__ import annotations


class StatsError(ValueError):
    """Base class for statistics errors."""


class DegenerateDataError(StatsError):
    """The data cannot support the computation: n too small, zero spread, non-finite values."""


class NotApplicableError(StatsError):
    """The method does not apply to these data (e.g. Shapiro-Wilk outside 3 <= n <= 5000)."""
