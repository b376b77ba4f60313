"""Decision-table tests for every rule in verify.decide, with the borderline at alpha.

The rules are the project's own (issue 4's decision rules); the comparisons they make are the
usual significance conventions (common practice: reject when p < alpha, so p == alpha does not
reject).
"""

import pytest

from verify import decide
from verify.checks.capability import rule as capability_rule
from verify.checks.conformance import rule as conformance_rule
from verify.checks.location import rule as location_rule
from verify.checks.spread import rule as spread_rule

ALPHA = 0.05


@pytest.mark.parametrize("rule", [location_rule.TARGET_MARGIN, location_rule.SHIFT_MARGIN])
@pytest.mark.parametrize("side", ["two-sided", "lower", "upper"])
@pytest.mark.parametrize(
    "p, expected",
    [(0.001, "PASS"), (0.0499999, "PASS"), (ALPHA, "HOLD"), (0.0500001, "HOLD"), (0.7, "HOLD")],
)
def test_margin_rule_passes_only_below_alpha(rule, side, p, expected):
    v = rule.decide(pvalue=p, alpha=ALPHA, low=-0.5, high=0.5, ci=(-0.1, 0.2), unit="mm",
                    side=side)
    assert v.outcome == expected
    assert "90% interval -0.1..0.2" in v.reason
    if expected == "HOLD":
        assert v.reason.startswith("not shown")


def test_margin_rule_words_name_the_margin_and_side():
    v = location_rule.TARGET_MARGIN.decide(pvalue=0.2, alpha=ALPHA, low=-0.02, high=0.02,
                                    ci=(-0.01, 0.03), unit="mm", side="two-sided")
    assert v.reason.startswith("not shown within ±0.02 mm of target (90% interval -0.01..0.03")
    v = location_rule.SHIFT_MARGIN.decide(pvalue=0.2, alpha=ALPHA, low=-1.0, high=2.0,
                                   ci=(-0.5, 2.5), unit="N", side="lower")
    assert v.reason.startswith("not shown to be at most 1 N below the old process")


@pytest.mark.parametrize("rule", [location_rule.TARGET_DIFFERENCE, location_rule.SHIFT_DIFFERENCE])
@pytest.mark.parametrize("p, expected", [(0.0001, "HOLD"), (0.0499, "HOLD"), (ALPHA, "PASS"),
                                         (0.051, "PASS"), (0.9, "PASS")])
def test_difference_rule_holds_only_below_alpha(rule, p, expected):
    v = rule.decide(pvalue=p, alpha=ALPHA, estimate=0.3, unit="g", detectable=0.41,
                    adjusted=False)
    assert v.outcome == expected
    if expected == "PASS":
        assert "80% power is 0.41 g" in v.reason
    else:
        assert "detected in the harmful direction" in v.reason


def test_difference_rule_says_when_p_was_adjusted():
    v = location_rule.SHIFT_DIFFERENCE.decide(pvalue=0.2, alpha=ALPHA, estimate=0.3, unit="",
                                       detectable=None, adjusted=True)
    assert "adjusted p = 0.2000" in v.reason


@pytest.mark.parametrize("p, expected", [(0.01, "HOLD"), (ALPHA, "PASS"), (0.3, "PASS")])
def test_spread_rule(p, expected):
    v = spread_rule.SPREAD.decide(pvalue=p, alpha=ALPHA, ratio=1.4, ci=(1.05, 1.9), level=0.9,
                             method="F-test")
    assert v.outcome == expected
    assert "sd ratio new/old 1.4, 90% interval 1.05..1.9" in v.reason


@pytest.mark.parametrize("cpk, expected", [(1.2, "HOLD"), (1.3299, "HOLD"), (1.33, "PASS"),
                                           (2.0, "PASS")])
def test_capability_rule_at_the_border(cpk, expected):
    v = capability_rule.CAPABILITY.decide(cpk=cpk, lower_bound=1.1, min_cpk=1.33)
    assert v.outcome == expected
    assert "lower 95% bound 1.1" in v.reason


def test_sufficiency_shortfall_words_and_final():
    rule = decide.SUFFICIENCY
    assert rule.shortfall({"old": 40, "new": 12}, 30, final=False) == "new: 12 of 30 planned"
    assert rule.shortfall({"old": 40, "new": 12}, 30, final=True) is None
    assert rule.shortfall({"old": 40, "new": 30}, 30, final=False) is None
    assert rule.shortfall({"old": 4, "new": 12}, None, final=False) is None


def test_while_pending_keeps_harm_and_withholds_pass():
    short = "new: 12 of 30 planned"
    harm = decide.while_pending(decide.Verdict("HOLD", "shift detected"), harm_shown=True,
                                shortfall=short)
    assert harm.outcome == "HOLD"
    early_pass = decide.while_pending(decide.Verdict("PASS", "shown within"), harm_shown=False,
                                      shortfall=short)
    assert early_pass.outcome == "PENDING"
    assert early_pass.reason.startswith(short)
    not_yet = decide.while_pending(decide.Verdict("HOLD", "not shown within"), harm_shown=False,
                                   shortfall=short)
    assert not_yet.outcome == "PENDING"


@pytest.mark.parametrize(
    "outcomes, expected",
    [(["PASS", "PASS"], "PASS"), (["PASS", "PENDING"], "PENDING"), (["PENDING", "HOLD"], "HOLD"),
     (["HOLD", "PASS"], "HOLD"), ([], "PASS")],
)
def test_combination(outcomes, expected):
    assert decide.combine(outcomes) == expected


def test_rules_in_words_come_from_the_rule_objects():
    words = decide.rules_in_words(0.05, "holm")
    assert words[0] == location_rule.TARGET_MARGIN.describe(0.05)
    assert any("Holm" in w for w in words)
    assert any("intersection-union" in w for w in words)
    assert "alpha = 0.05" in words[0]
    assert len(words) == 11
    assert conformance_rule.CONFORMANCE.describe(0.05) in words


def test_caution_names_the_sign_off():
    assert "never replace" in decide.CAUTION
    assert "sign-off" in decide.CAUTION


@pytest.mark.parametrize(
    ("low", "high", "lower", "upper", "outcome", "words"),
    [
        (9.5, 10.5, 9.0, 11.0, "PASS", "lies within the limits 9..11"),
        (9.0, 10.5, 9.0, 11.0, "PASS", "lies within"),  # borderline: on the limit passes
        (8.99, 10.5, 9.0, 11.0, "HOLD", "below the lower limit 9"),
        (8.9, 11.2, 9.0, 11.0, "HOLD", "below the lower limit 9 and above the upper limit 11"),
        (None, 0.08, None, 0.1, "PASS", "within the upper limit 0.1"),
        (None, 0.1000001, None, 0.1, "HOLD", "above the upper limit 0.1"),
        (70.5, None, 70.0, None, "PASS", "within the lower limit 70"),
    ],
)
def test_conformance_rule_decision_table(low, high, lower, upper, outcome, words):
    v = conformance_rule.CONFORMANCE.decide(low=low, high=high, lower=lower, upper=upper,
                                  coverage=0.99, confidence=0.95, k=3.0, unit="mm")
    assert v.outcome == outcome and words in v.reason
    assert "99% of parts with 95% confidence" in v.reason


def _fmt_plain(x, digits=4):
    """fmt's earlier route, kept as the reference: the infinity test first, then zero, then
    the f-string with its format spec built per call (Python's format mini-language)."""
    import math

    if x is None:
        return "n/a"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    if x == 0:
        return "0"
    return f"{x:.{digits}g}"


def test_fmt_writes_what_the_plain_f_string_writes():
    import numpy as np
    from hypothesis import given, settings
    from hypothesis import strategies as st

    fixed = [None, 0, 0.0, -0.0, float("inf"), float("-inf"), float("nan"), 1, -7, 123456,
             0.012345, 1e-12, -3.14159e200, np.float64(2.5e-5), np.float64(0.0), np.int64(42),
             np.float64("inf"), True]
    for x in fixed:
        for digits in (1, 3, 4, 6, 12, 17, 20):
            assert decide.fmt(x, digits) == _fmt_plain(x, digits), (x, digits)
        assert decide.fmt(x) == _fmt_plain(x)

    @settings(max_examples=300, deadline=None)
    @given(st.one_of(st.floats(), st.integers(-10**20, 10**20)), st.integers(1, 20))
    def same(x, digits):
        assert decide.fmt(x, digits) == _fmt_plain(x, digits)

    same()


def _fmt_like_plain(*values):
    """fmt_like's earlier route, kept as the reference: the finite non-zero magnitudes in a
    list, the format spec built per call, the point looked for in the text and the zero found
    by reading the text back as a number."""
    import math

    finite = [abs(v) for v in values if v is not None and math.isfinite(v) and v != 0]
    if not finite:
        return [decide.fmt(v) for v in values]
    decimals = min(12, max(0, 3 - math.floor(math.log10(max(finite)))))
    out = []
    for v in values:
        if v is None or not math.isfinite(v):
            out.append(decide.fmt(v))
        else:
            text = f"{v:.{decimals}f}"
            if "." in text:
                text = text.rstrip("0").rstrip(".")
            out.append("0" if float(text) == 0 else text)
    return out


def test_fmt_like_writes_what_its_plain_route_writes():
    import numpy as np
    from hypothesis import given, settings
    from hypothesis import strategies as st

    fixed = [None, 0, 0.0, -0.0, float("inf"), float("-inf"), float("nan"), 1, -7, 123456,
             0.012345, 1e-12, -3.14159e200, np.float64(2.5e-5), np.float64(-0.0), np.int64(42),
             -0.4, 0.4, -0.00004, 0.00049, 9999.5, 0.99995, -1e-13, 5e-13]
    for a in fixed:
        assert decide.fmt_like(a) == _fmt_like_plain(a), a
        for b in fixed:
            assert decide.fmt_like(a, b) == _fmt_like_plain(a, b), (a, b)
    # texts that round to zero beside a larger value: "0" and "-0" both written "0"
    assert decide.fmt_like(-0.00004, 12.5) == ["0", "12.5"]

    values = st.one_of(st.none(), st.floats(), st.floats(-1e4, 1e4),
                       st.integers(-10**6, 10**6))

    @settings(max_examples=500, deadline=None)
    @given(st.lists(values, min_size=1, max_size=4))
    def same(vs):
        assert decide.fmt_like(*vs) == _fmt_like_plain(*vs)

    same()


def test_p_eq_writes_what_its_plain_route_writes():
    """p_eq's earlier route (the text of fmt_p after the name) as the reference."""

    def plain(p, name="p"):
        if p is not None and p < 1e-4:
            return f"{name} < 0.0001"
        return f"{name} = {decide.fmt_p(p)}"

    for p in (None, 0.0, 5e-5, 1e-4, 0.012345, 0.99995, 0.99999, 1.0, float("nan"), 3):
        for name in ("p", "adjusted p"):
            assert decide.p_eq(p, name) == plain(p, name), (p, name)
    assert decide.p_eq(0.012345) == "p = 0.0123"


def test_fmt_percent_writes_fmt_of_the_percentage():
    """fmt_percent remembers a float level's text: the first and any later call give
    fmt(100 * level), whatever the level's type."""
    import numpy as np

    levels = [0.9, 0.95, 0.99, 0.8, 1 - 2 * 0.05, 1 - 2 * 0.025, 0.0, -0.0, 1.0, 1, 0.999999,
              1e-9, np.float64(0.9), np.float32(0.95), 0.123456789]
    for _ in range(2):
        for level in levels:
            assert decide.fmt_percent(level) == decide.fmt(100 * level), level
    assert decide.fmt_percent(1 - 2 * 0.05) == "90"


def test_margin_words_remembered_equal_the_words_made_anew():
    """A float margin's words are remembered; every call gives the words _margin_words makes
    (and -0.0 and 0.0, equal as keys, give equal words)."""
    import numpy as np

    margins = [(-0.02, 0.02, "mm"), (-0.02, 0.02, ""), (-0.01, 0.03, "mm"), (-0.0, 0.5, "µm"),
               (0.0, 0.5, "µm"), (-1, 1, "mm"), (np.float64(-0.02), np.float64(0.02), "mm"),
               (-1e-12, 1e-12, "V"), (-0.1 - 0.2, 0.3, "")]
    for _ in range(2):
        for low, high, unit in margins:
            assert decide.margin_words(low, high, unit) == decide._margin_words(low, high, unit)
    assert decide.margin_words(-0.02, 0.02, "mm") == "±0.02 mm"
    assert decide.margin_words(-0.01, 0.03) == "-0.01..+0.03"


def test_fmt_often_writes_fmt_of_the_number():
    """fmt_often remembers a float's text: the first and any later call give fmt(x), whatever
    the number's type (-0.0 and 0.0, equal as keys, both write "0")."""
    import numpy as np

    numbers = [10.0, 0.02, -0.0, 0.0, 1.33, 0.0001, 1e-05, 123456.789, float("inf"),
               float("-inf"), float("nan"), None, 1, np.float64(0.0001), np.float32(1.33),
               np.int64(7), 2.5e300]
    for _ in range(2):
        for x in numbers:
            assert decide.fmt_often(x) == decide.fmt(x), x
