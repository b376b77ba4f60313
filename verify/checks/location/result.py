"""The location checks' typed result details (target and shift)."""

from __future__ import annotations

from dataclasses import dataclass

from ...model import CheckDetails


@dataclass(frozen=True)
class LocationDetails(CheckDetails):
    """The sizes and sd behind a target or shift test.

    Attributes
    ----------
    n_new : int
        Units of the candidate stream (parts, lots or pairs).
    n_old : int or None
        Units of the reference stream (None for a one-sample or paired test).
    sd : float
        The sd the standard error rests on (of the differences for pairs, pooled for a
        pooled design, the candidate's for one sample).
    """

    n_new: int
    n_old: int | None
    sd: float
