"""Which test a location check runs: the one place that maps (margin, side) to it.

``verify run`` (the location checks' computation) and ``verify plan`` (their planning) both
ask :func:`choose_test`, so that the test decided on is the test planned:

========================= =================== ===============================================
margin                    side                test
========================= =================== ===============================================
given                     ``two-sided``       equivalence: TOST against ``(low, high)``
given                     ``lower``/``upper`` non-inferiority: one-sided t-test against the
                                              harmful side's end of the margin
none                      any                 difference: the t-test in the harmful direction
========================= =================== ===============================================
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Literal

from ...stats._frozen import fast_init

TestKind = Literal["equivalence", "non-inferiority", "difference"]

EQUIVALENCE: TestKind = "equivalence"
NON_INFERIORITY: TestKind = "non-inferiority"
DIFFERENCE: TestKind = "difference"

#: The t-test alternative of each harmful side: a harmful lower value tests "less".
ALTERNATIVES = {"two-sided": "two-sided", "lower": "less", "upper": "greater"}


@fast_init
@dataclass(frozen=True)
class TestChoice:
    """The test of one location check.

    Attributes
    ----------
    kind : {"equivalence", "non-inferiority", "difference"}
        TOST, the one-sided non-inferiority t-test, or the difference t-test.
    side : {"two-sided", "lower", "upper"}
        Which departure is harmful.
    alternative : {"two-sided", "less", "greater"}
        The t-test alternative of the harmful direction (the difference test's alternative;
        for margin checks the direction of the detectable shift).
    low, high : float or None
        The margin (None for a difference test).
    """

    __test__ = False  # not a pytest test class, whatever its name

    kind: TestKind
    side: str
    alternative: str
    low: float | None = None
    high: float | None = None

    @property
    def bound(self) -> float | None:
        """The non-inferiority bound: the harmful side's end of the margin (else None)."""
        if self.kind != NON_INFERIORITY:
            return None
        return self.low if self.side == "lower" else self.high

    @property
    def harmful(self) -> str | None:
        """The harmful side of a non-inferiority test (``"lower"``/``"upper"``), else None."""
        return self.side if self.kind == NON_INFERIORITY else None


@lru_cache(maxsize=256)  # the same few (margin, side) for every characteristic of a layout
def choose_test(margin: tuple[float, float] | None, side: str) -> TestChoice:
    """The test a location check with ``margin`` and harmful ``side`` runs.

    Parameters
    ----------
    margin : (low, high) or None
        The check's margin (``low < 0 < high``), or None when it has none.
    side : {"two-sided", "lower", "upper"}
        The characteristic's harmful side.

    Returns
    -------
    TestChoice

    Raises
    ------
    ValueError
        ``side`` is not one of the three sides.

    Examples
    --------
    >>> choose_test((-0.5, 0.5), "two-sided").kind
    'equivalence'
    >>> c = choose_test((-0.5, 0.8), "upper")
    >>> c.kind, c.bound, c.alternative
    ('non-inferiority', 0.8, 'greater')
    >>> choose_test(None, "lower").alternative
    'less'
    """
    if side not in ALTERNATIVES:
        raise ValueError(f"side must be one of {', '.join(ALTERNATIVES)}, not {side!r}")
    alternative = ALTERNATIVES[side]
    if margin is None:
        return TestChoice(kind=DIFFERENCE, side=side, alternative=alternative)
    low, high = margin
    kind = EQUIVALENCE if side == "two-sided" else NON_INFERIORITY
    return TestChoice(kind=kind, side=side, alternative=alternative, low=low, high=high)


__all__ = ["ALTERNATIVES", "DIFFERENCE", "EQUIVALENCE", "NON_INFERIORITY", "TestChoice",
           "TestKind", "choose_test"]
