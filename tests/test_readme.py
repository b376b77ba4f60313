"""The README tells the truth: its worked sample matches a fresh run, its Quick start has
exactly two commands, and it carries the caution."""

import math
import re
from pathlib import Path

import pytest

from verify.decide import CAUTION
from verify.runner import prepare
from verify.stats.core import t_quantile

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _worked_sample() -> dict[str, float]:
    block = README.split("<!-- worked-sample")[1].split("<!-- /worked-sample -->")[0]
    rows = {}
    for line in block.splitlines():
        m = re.match(r"^\|\s*(.+?)\s*\|\s*(-?[\d.]+)\s*\|$", line)
        if m:
            rows[m.group(1)] = float(m.group(2))
    return rows


def test_worked_sample_matches_a_fresh_run():
    ev = prepare(ROOT / "specs" / "filler-paired.yaml")
    c = ev.characteristic("seal_strength")
    shift = next(k for k in c.checks if k.check == "shift")
    rows = _worked_sample()
    # the README prints 6 significant digits
    expect = {
        "matched pairs n": c.pairs,
        "mean difference d (new - old)": shift.estimate,
        "sd of the differences": shift.details.sd,
        "standard error sd / sqrt(n)": shift.standard_error,
        "degrees of freedom n - 1": shift.df,
        't for H0 "shift <= -1": (d + 1) / se': shift.statistic,
        "one-sided p = P(T > t)": shift.p_value,
        "t(0.95, 38)": t_quantile(0.95, shift.df),
        "90% interval d ± t·se, low": shift.ci_low,
        "90% interval d ± t·se, high": shift.ci_high,
    }
    assert set(rows) == set(expect)
    for label, value in expect.items():
        assert rows[label] == pytest.approx(value, rel=5e-6), label
    assert c.decision == "HOLD" and ev.decision == "HOLD"
    # the hand computation in the prose: se = sd / sqrt(n), interval = d -/+ t * se
    assert math.isclose(rows["sd of the differences"] / math.sqrt(rows["matched pairs n"]),
                        rows["standard error sd / sqrt(n)"], rel_tol=1e-5)
    assert shift.reason in " ".join(README.split())


def test_quick_start_has_exactly_two_commands():
    m = re.search(r"^#+\s*quick\s*-?\s*start.*?$(.*?)^```[a-z]*\n(.*?)^```", README,
                  re.I | re.M | re.S)
    assert m is not None
    lines = [ln for ln in m.group(2).splitlines() if ln.strip() and not ln.startswith("#")]
    assert len(lines) == 2
    assert "verify run specs/" in lines[0]
    assert "pytest" in lines[1]


def test_readme_carries_the_caution():
    assert "never replace" in README and "sign-off" in README
    assert "never replace" in CAUTION
