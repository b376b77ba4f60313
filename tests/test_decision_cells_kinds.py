"""Decision-page cells of the spread and conformance kinds, on the closure-mould demo.

- Under holm with a family of m tests, the spread test's interval is computed at alpha / m
  (DEVELOPERS.md, "Decisions"; the Bonferroni level, common practice), so its one-sided bound is
  at 1 - alpha / m: with alpha 0.05 and m = 10, 99.5%, which the cell must not round to 100%.
- The conformance cell shows the tolerance bound against the limit it is judged by, with the
  coverage and confidence it holds, rather than the mean of the parts.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from verify import evaluate, load_measurements, load_spec
from verify.report.hooks import report_hook

SPEC = Path(__file__).resolve().parents[1] / "specs" / "closure-mould.yaml"


@pytest.fixture(scope="module")
def evaluation():
    spec = load_spec(SPEC)
    return evaluate(spec, load_measurements(spec))


def _check(ev, characteristic: str, check: str):
    (c,) = [c for c in ev.characteristics if c.name == characteristic]
    (r,) = [r for r in c.checks if r.check == check]
    return c, r


def test_spread_cell_states_the_family_level_of_its_bound(evaluation):
    c, r = _check(evaluation, "cap_height", "spread")
    # the two-sided interval at 1 - 2 alpha / m = 0.99 (m = 10 tests in the family)
    assert r.ci_level == pytest.approx(1 - 2 * 0.05 / 10)
    text = report_hook("spread", "cell_text", c, r, evaluation, 4)
    assert "lower 99.5% bound" in text
    assert "100%" not in text


def test_conformance_cell_shows_the_tolerance_bound_against_the_limit(evaluation):
    c, r = _check(evaluation, "gate_vestige", "conformance")
    assert r.ci_low is None and r.ci_high is not None  # one upper limit: an upper bound
    text = report_hook("conformance", "cell_text", c, r, evaluation, 4)
    assert text.splitlines() == [f"upper bound {r.ci_high:.4f}", "(99% of parts, 95% conf.)",
                                 "limit 0.15"]
