"""The TOST sample-size walks of many questions decide by a coarse integral away from the target.

``sample_size_many.plan_tost_many`` reads from each walk only the planned n_new; a walk compares
each power with its target and nothing else. Its lot sizes are integrated by the coarse rule
(``power_of_tests._tost_power_coarse``: more cuts, far fewer nodes), and exactly
(``_tost_power_many``) where the coarse value lies within ``DECISION_BAND`` of the target or
the coarse rule is not used (df below ``COARSE_MIN_DF``, alpha below ``COARSE_MIN_ALPHA``).
These tests hold that shortcut to the plain routes:

- the coarse rule stays well within the band of the exact one over a seeded sweep of cases of
  every design (the measurement behind the band is described at ``DECISION_BAND``);
- the planned n_new of every question equals ``sample_size_tost``'s, one at a time, also for
  targets set at or next to a lot size's exact power, where the exact rule must decide;
- the walks take as many rounds as with the exact powers throughout;
- the sd ratio's quantiles remembered per whole df (``power_of_tests._sd_ratio_rows``) equal
  the freshly computed ones bit for bit, and so does every exact power computed with them.

The references are the plain routes of this package, themselves checked against published
values and the adaptive quadrature in tests/test_stats_power*.py.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special

from verify.stats import power_of_tests, sample_size, sample_size_many
from verify.stats.errors import StatsError
from verify.stats.noncentral import _sd_ratio_log_constant

DESIGNS = ("one-sample", "paired", "pooled", "welch")


def _random_cases(rng: np.random.Generator, m: int) -> np.ndarray:
    """Columns (delta, low, high, tau, df, alpha) of ``m`` random cases: all designs, lot sizes
    2 to 40 for half of them and 2 to 1e5 for the others (so df from 1 to 2e5), alpha 0.001
    to 0.2, margins 0.3 to 300 sds of the estimate wide, symmetric or lopsided, shifts inside,
    near and outside them."""
    design = rng.integers(4, size=m)
    top = np.where(rng.random(m) < 0.5, 40.0, 1e5)
    n1 = np.floor(np.exp(rng.uniform(np.log(2.0), np.log(top + 1.0))))
    n2 = np.where(rng.random(m) < 0.5, n1,
                  np.floor(np.exp(rng.uniform(np.log(2.0), np.log(top + 1.0)))))
    s1 = np.exp(rng.uniform(-3.0, 1.0, m))
    s2 = s1 * np.exp(rng.uniform(-2.0, 2.0, m))
    tau, df = np.empty(m), np.empty(m)
    for i in range(m):
        d = DESIGNS[design[i]]
        tau[i], df[i] = power_of_tests._tau_df(
            d, float(s1[i]), float(s2[i]) if d == "welch" else None, int(n1[i]),
            None if d in ("one-sample", "paired") else int(n2[i]))
    alpha = np.exp(rng.uniform(np.log(0.001), np.log(0.2), m))
    hi = tau * np.exp(rng.uniform(np.log(0.3), np.log(300.0), m))
    lo = np.where(rng.random(m) < 0.5, -hi, -hi * np.exp(rng.uniform(-2.0, 2.0, m)))
    delta = lo + (hi - lo) * (0.5 + 0.5 * rng.uniform(-1.2, 1.2, m))
    return np.vstack([delta, lo, hi, tau, df, alpha])


def test_the_coarse_rule_stays_well_within_the_band_of_the_exact_one():
    cols = _random_cases(np.random.default_rng(2611), 20_000)
    used = (cols[4] >= sample_size_many.COARSE_MIN_DF) & (
        cols[5] >= sample_size_many.COARSE_MIN_ALPHA)
    cols = cols[:, used]
    exact = power_of_tests._tost_power_many(*cols)
    coarse = power_of_tests._tost_power_coarse(*cols)
    assert np.isfinite(coarse).all()
    assert 0.1 < np.mean((exact > 0.01) & (exact < 0.99))  # powers across the range
    assert np.abs(coarse - exact).max() < sample_size_many.DECISION_BAND / 100


def _question(rng: np.random.Generator) -> dict:
    design = DESIGNS[int(rng.integers(4))]
    sd = float(rng.uniform(0.002, 0.02))
    hi = float(rng.uniform(0.005, 0.04))
    lo = -hi if rng.random() < 0.5 else -float(rng.uniform(0.005, 0.04))
    n = int(rng.integers(2, 60))
    return dict(
        true_shift=float(lo + (hi - lo) * rng.uniform(0.02, 0.98)) if rng.random() < 0.8
        else float(rng.choice([0.0, 1.1 * hi])),  # (one outside the margins: no n)
        sd=sd, n_new=n,
        n_old=None if design == "one-sample" else (n if design == "paired" else n + 3),
        design=design, alpha=float(np.exp(rng.uniform(np.log(1e-4), np.log(0.2)))),
        low=lo, high=hi, power=float(rng.uniform(0.5, 0.99)),
        ratio=1.0 if design in ("one-sample", "paired") else float(rng.choice([1.0, 0.5, 2.0])),
        sd_old=float(rng.uniform(0.002, 0.02)) if design == "welch" else None)


def _planned_n(q: dict) -> int | None:
    """sample_size_tost's n_new, one question at a time (None where it raises)."""
    try:
        return sample_size.sample_size_tost(
            q["true_shift"], q["sd"], design=q["design"], alpha=q["alpha"], low=q["low"],
            high=q["high"], power=q["power"], ratio=q["ratio"], sd_old=q["sd_old"]).n_new
    except (StatsError, ValueError):
        return None


def _near_target(rng: np.random.Generator, count: int) -> list[dict]:
    """Questions whose target is a lot size's exact power, or lies just beside it (within the
    band), so that the exact rule must decide there."""
    out = []
    while len(out) < count:
        q = _question(rng)
        if not q["low"] < q["true_shift"] < q["high"]:
            continue
        n = _planned_n(q)
        if n is None or n < 3:
            continue
        m = n + int(rng.integers(-1, 2))  # the power at the plan, or one size either side
        old = sample_size.old_size(q["design"], m, q["ratio"])
        p = power_of_tests.power_tost(q["true_shift"], q["sd"], m, old, design=q["design"],
                                      alpha=q["alpha"], low=q["low"], high=q["high"],
                                      sd_old=q["sd_old"])
        nudge = float(rng.choice([0.0, 1e-12, -1e-12, 3e-5, -3e-5]))
        if 0.05 < p + nudge < 0.999:
            out.append(dict(q, power=p + nudge))
    return out


def test_planned_n_equals_the_one_at_a_time_search(monkeypatch):
    rng = np.random.default_rng(17)
    questions = [_question(rng) for _ in range(300)] + _near_target(rng, 120)
    undecided = []
    walk_powers = sample_size_many._walk_powers

    def spy(cols, targets, exact_cols, crit=None):
        values, own = walk_powers(cols, targets, exact_cols, crit)
        used = (cols[4] >= sample_size_many.COARSE_MIN_DF) & (
            cols[5] >= sample_size_many.COARSE_MIN_ALPHA)
        coarse = power_of_tests._tost_power_coarse(*cols[:, used])
        undecided.append(int((np.abs(coarse - targets[used])
                              <= sample_size_many.DECISION_BAND).sum()))
        return values, own

    monkeypatch.setattr(sample_size_many, "_walk_powers", spy)
    together = sample_size_many.plan_tost_many(questions)
    assert sum(undecided) > 10  # the near-target questions reached the exact rule
    for q, (pw, n_new) in zip(questions, together, strict=True):
        assert n_new == _planned_n(q)
        try:
            ref_pw = power_of_tests.power_tost(
                q["true_shift"], q["sd"], q["n_new"], q["n_old"], design=q["design"],
                alpha=q["alpha"], low=q["low"], high=q["high"], sd_old=q["sd_old"])
        except (StatsError, ValueError):
            ref_pw = None
        assert pw == ref_pw  # the power at the question's own lot sizes: exact, bit for bit
    assert sum(n is not None for _, n in together) > 300
    assert any(q["alpha"] < sample_size_many.COARSE_MIN_ALPHA for q in questions)


def test_the_walks_take_as_many_rounds_as_with_exact_powers(monkeypatch):
    """With the exact rule standing in for the coarse one every value a walk is sent is the
    exact power (the plain walk): the same answers in the same number of rounds, the cases the
    coarse rule cannot decide joining their round."""
    rng = np.random.default_rng(5)
    questions = [_question(rng) for _ in range(120)] + _near_target(rng, 30)
    rounds = []
    walk_powers = sample_size_many._walk_powers

    def counted(cols, targets, exact_cols, crit=None):
        rounds[-1] += 1
        return walk_powers(cols, targets, exact_cols, crit)

    monkeypatch.setattr(sample_size_many, "_walk_powers", counted)
    rounds.append(0)
    coarse = sample_size_many.plan_tost_many(questions)
    monkeypatch.setattr(sample_size_many, "_tost_power_coarse", power_of_tests._tost_power_many)
    rounds.append(0)
    plain = sample_size_many.plan_tost_many(questions)
    assert coarse == plain
    assert rounds[0] == rounds[1] >= 2


def test_a_question_far_from_its_target_decides_by_the_coarse_rule(monkeypatch):
    """Walk cases clear of the band never reach the exact rule: only the questions' own lot
    sizes are integrated exactly."""
    q = dict(true_shift=0.0, sd=0.01, n_new=10, n_old=10, design="pooled", alpha=0.05,
             low=-0.02, high=0.02, power=0.8, ratio=1.0, sd_old=None)
    exact_sizes = []
    many = sample_size_many._tost_power_many

    def spy(*cols):
        exact_sizes.append(np.asarray(cols[3]).size)
        return many(*cols)

    monkeypatch.setattr(sample_size_many, "_tost_power_many", spy)
    [(pw, n_new)] = sample_size_many.plan_tost_many([q])
    assert exact_sizes == [1]
    assert n_new == _planned_n(q)


def _fresh_rows(udf: np.ndarray) -> np.ndarray:
    """The sd ratio's seven quantiles and log constant as computed before they were remembered:
    each inversion over the distinct df at once, the log constant one df at a time."""
    uh = 0.5 * udf
    cols = [np.sqrt(2.0 * special.gammaincinv(uh, q) / udf) for q in (1e-20, 1e-9, 0.25, 0.5)]
    cols += [np.sqrt(2.0 * special.gammainccinv(uh, q) / udf) for q in (0.25, 1e-9, 1e-20)]
    cols.append(np.array([_sd_ratio_log_constant(d) for d in udf.tolist()]))
    return np.column_stack(cols)


@pytest.fixture()
def empty_table(monkeypatch):
    monkeypatch.setattr(power_of_tests, "_TABLE", np.full_like(power_of_tests._TABLE, np.nan))
    monkeypatch.setattr(power_of_tests, "_FILLED", np.zeros_like(power_of_tests._FILLED))


def test_remembered_sd_ratio_rows_equal_fresh_ones_bit_for_bit(empty_table):
    udf = np.unique(np.concatenate([np.arange(1.0, 60.0), [99.0, 4096.0, 4097.0, 2e5],
                                    [1.5, 7.25, 33.333333333333336, 5000.5]]))
    fresh = _fresh_rows(udf)
    first = power_of_tests._sd_ratio_rows(udf, 7)  # filling the table
    again = power_of_tests._sd_ratio_rows(udf, 7)  # read from it
    assert power_of_tests._FILLED.sum() == 61  # whole df up to 4096 only
    for rows in (first, again):
        assert rows.tobytes() == fresh.tobytes()
    part = power_of_tests._sd_ratio_rows(udf[::3], 7)
    assert part.tobytes() == fresh[::3].tobytes()


def test_exact_powers_are_the_same_with_the_table_filled_or_empty(monkeypatch, empty_table):
    cols = _random_cases(np.random.default_rng(8), 3000)
    first = power_of_tests._tost_power_many(*cols)
    again = power_of_tests._tost_power_many(*cols)
    assert first.tobytes() == again.tobytes()
    # and as without the table: every df computed fresh
    monkeypatch.setattr(power_of_tests, "_TABLE_DF", 0)
    assert power_of_tests._tost_power_many(*cols).tobytes() == first.tobytes()


@pytest.mark.parametrize("block", [1, 7, 10_000])
def test_the_block_size_of_the_pieces_changes_no_float(monkeypatch, block):
    """The pieces are evaluated in blocks of about _BLOCK * GL_POINTS nodes whatever the rule's
    nodes per piece: each piece's sum is its own row's and the pieces are added in order, so
    any block size gives the same powers bit for bit."""
    cols = _random_cases(np.random.default_rng(12), 400)
    exact = power_of_tests._tost_power_many(*cols)
    coarse = power_of_tests._tost_power_coarse(*cols[:, cols[4] >= 2.0])
    monkeypatch.setattr(power_of_tests, "_BLOCK", block)
    assert power_of_tests._tost_power_many(*cols).tobytes() == exact.tobytes()
    assert power_of_tests._tost_power_coarse(*cols[:, cols[4] >= 2.0]).tobytes() == \
        coarse.tobytes()
