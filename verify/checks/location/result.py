"""The location checks' typed result details (target and shift)."""

from __future__ import annotations

from dataclasses import dataclass

from ...model import CheckDetails
from ...stats._frozen import fast_init


@fast_init
@dataclass(frozen=True)
class LocationDetails(CheckDetails):
    """The sizes and sd behind a target or shift test, and with a margin its one-sided tests.

    Attributes
    ----------
    n_new : int
        Units of the candidate stream (parts, lots or pairs).
    n_old : int or None
        Units of the reference stream (None for a one-sample or paired test).
    sd : float
        The sd the standard error rests on (of the differences for pairs, pooled for a
        pooled design, the candidate's for one sample).
    p_lower, statistic_lower : float or None
        With a margin: the one-sided test against the margin's low end (H0: effect <= low);
        None where it is not run (side: upper, or no margin).
    p_upper, statistic_upper : float or None
        The same against the high end (H0: effect >= high).
    """

    # the one-sided tests are shown under their own names in the JSON and on the sheet
    SHOWN_APART = ("p_lower", "p_upper", "statistic_lower", "statistic_upper")

    n_new: int
    n_old: int | None
    sd: float
    p_lower: float | None = None
    p_upper: float | None = None
    statistic_lower: float | None = None
    statistic_upper: float | None = None
