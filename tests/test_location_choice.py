"""The one map from (margin, side) to a location check's test.

Expected tests: the README's table "the check has | side | planned test" (section on
``verify plan``) and its rules table for target and shift: a margin with ``side: two-sided`` is
TOST equivalence, a margin with one harmful side is non-inferiority against that side's end of
the margin, no margin is the t-test in the harmful direction (a harmful lower value tests
"less"). The plan of a spec must follow the same map.
"""

from __future__ import annotations

import pytest

from verify.checks.location.choice import (
    DIFFERENCE,
    EQUIVALENCE,
    NON_INFERIORITY,
    TestChoice,
    choose_test,
)


@pytest.mark.parametrize(("margin", "side", "kind", "alternative", "bound"), [
    ((-0.5, 0.8), "two-sided", EQUIVALENCE, "two-sided", None),
    ((-0.5, 0.8), "lower", NON_INFERIORITY, "less", -0.5),
    ((-0.5, 0.8), "upper", NON_INFERIORITY, "greater", 0.8),
    (None, "two-sided", DIFFERENCE, "two-sided", None),
    (None, "lower", DIFFERENCE, "less", None),
    (None, "upper", DIFFERENCE, "greater", None),
])
def test_map_from_margin_and_side(margin, side, kind, alternative, bound):
    c = choose_test(margin, side)
    assert c == TestChoice(kind=kind, side=side, alternative=alternative,
                           low=None if margin is None else margin[0],
                           high=None if margin is None else margin[1])
    assert c.bound == bound
    assert c.harmful == (side if kind == NON_INFERIORITY else None)


def test_result_is_frozen():
    c = choose_test((-1.0, 1.0), "two-sided")
    with pytest.raises(AttributeError):
        c.kind = DIFFERENCE  # type: ignore[misc]


@pytest.mark.parametrize("side", ["both", "", "Lower", None])
def test_unknown_side_is_refused(side):
    with pytest.raises(ValueError, match="side must be one of"):
        choose_test(None, side)


@pytest.mark.parametrize(("margin", "side"), [
    ("0.5", "two-sided"), ("-0.4,0.9", "lower"), ("-0.4,0.9", "upper"), (None, "lower"),
])
def test_plan_follows_the_map(margin, side):
    """The standalone plan of a check plans the test the map chooses."""
    from verify.checks.location.plan import parse_margin, plan_standalone

    kw = {"margin": margin} if margin is not None else {"detect": 0.5}
    (row,) = plan_standalone(sd=1.0, design="pooled", side=side, **kw).rows_of("location")
    expected = choose_test(None if margin is None else parse_margin(margin), side)
    s = row.scenario
    assert (s.kind, s.low, s.high, s.bound, s.alternative) == (
        expected.kind, expected.low, expected.high, expected.bound, expected.alternative)
