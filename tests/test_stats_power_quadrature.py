"""TOST power by fixed Gauss-Legendre quadrature against the adaptive route, and the vectorised
sample-size search against the one-at-a-time search.

The reference is our own adaptive route (``scipy.integrate.quad`` on the same integral,
``quadrature="adaptive"``), itself checked against simulation and statsmodels in
tests/test_stats_power.py; the two must agree to 1e-12 wherever quad converges (df >= 2).
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from verify.stats import power, power_of_tests, sample_size
from verify.stats.errors import StatsError

GRID = [
    # design, n_new, n_old, sd_old
    ("one-sample", 3, None, None),
    ("one-sample", 12, None, None),
    ("one-sample", 30, None, None),
    ("one-sample", 2000, None, None),
    ("paired", 3, 3, None),
    ("paired", 25, 25, None),
    ("pooled", 5, 7, None),
    ("pooled", 50_000, 50_000, None),
    ("welch", 8, 9, 0.013),
    ("welch", 30, 30, 0.011),
    ("welch", 3, 50, 0.05),
    ("welch", 400, 20, 0.03),
]
SHIFTS = (0.0, 0.005, 0.015, -0.019, 0.0199, -0.01)
SDS = (0.001, 0.004, 0.01, 0.02, 0.05, 0.2)


@pytest.mark.parametrize(("design", "n_new", "n_old", "sd_old"), GRID)
def test_gauss_legendre_matches_adaptive_quadrature(design, n_new, n_old, sd_old):
    worst = 0.0
    for shift in SHIFTS:
        for sd in SDS:
            kw = dict(design=design, low=-0.02, high=0.02, sd_old=sd_old)
            fixed = power.power_tost(shift, sd, n_new, n_old, **kw)
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # quad may warn about round-off, not ours
                adaptive = power.power_tost(shift, sd, n_new, n_old, quadrature="adaptive",
                                            **kw)
            worst = max(worst, abs(fixed - adaptive))
    assert worst < 1e-12


def test_gauss_legendre_converged_at_one_degree_of_freedom(monkeypatch):
    # df = 1 (two values) and Welch df near 1 are the hardest shapes (quad itself struggles
    # there): the rule must agree with a 200-node rule on the same pieces
    cases = [(sh, sd, 2, None, "one-sample", None) for sh in (0.0, 0.015) for sd in
             (0.001, 0.01, 0.05)] + [(0.0, 0.01, 2, 2, "welch", 0.02),
                                     (0.005, 0.01, 2, 2, "welch", 0.001)]

    def run():
        return np.array([power.power_tost(sh, sd, n, m, design=d, low=-0.02, high=0.02,
                                          sd_old=so) for sh, sd, n, m, d, so in cases])

    default = run()
    x, w = np.polynomial.legendre.leggauss(200)
    monkeypatch.setattr(power_of_tests, "_GL_X", x)
    monkeypatch.setattr(power_of_tests, "_GL_W", w)
    monkeypatch.setattr(power_of_tests, "_GL_TAIL_X", x)
    monkeypatch.setattr(power_of_tests, "_GL_TAIL_W", w)
    fine = run()
    assert np.max(np.abs(default - fine)) < 1e-12


def test_many_lot_sizes_in_one_pass_equal_one_at_a_time():
    ns = list(range(2, 60))
    taus, dfs = [], []
    for n in ns:
        tau, df = power_of_tests._plan("welch", 0.01, n, n + 3, 0.014)
        taus.append(tau)
        dfs.append(df)
    together = power_of_tests._tost_power_many(0.003, -0.02, 0.025, np.array(taus),
                                               np.array(dfs), 0.05)
    singly = [power.power_tost(0.003, 0.01, n, n + 3, design="welch", low=-0.02, high=0.025,
                               sd_old=0.014) for n in ns]
    np.testing.assert_allclose(together, singly, rtol=0, atol=1e-15)


@pytest.mark.parametrize("design", ["one-sample", "paired", "pooled", "welch"])
@pytest.mark.parametrize("shift", [0.0, 0.004, -0.012])
@pytest.mark.parametrize("sd", [0.003, 0.01, 0.03])
def test_sample_size_with_vectorised_window_equals_stepwise(design, shift, sd, monkeypatch):
    kw = dict(design=design, low=-0.02, high=0.02, power=0.9,
              sd_old=sd * 1.3 if design == "welch" else None)
    fast = power.sample_size_tost(shift, sd, **kw)
    # the one-at-a-time route: the exact power with adaptive quadrature, no window, and the
    # guess by the plain search on the approximation (doubling and bisection), not the window's
    orig = sample_size._smallest_n

    def stepwise(power_at, design_, ratio, target, *, approx=None, many=None, guess=None):
        def adaptive_at(n_new, n_old):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                return power.power_tost(shift, sd, n_new, n_old, design=design, low=-0.02,
                                        high=0.02, sd_old=kw["sd_old"], quadrature="adaptive")

        return orig(adaptive_at, design_, ratio, target, approx=approx)

    monkeypatch.setattr(sample_size, "_smallest_n", stepwise)
    slow = power.sample_size_tost(shift, sd, **kw)
    assert (fast.n_new, fast.n_old) == (slow.n_new, slow.n_old)
    assert fast.power == pytest.approx(slow.power, abs=1e-12)


def test_unknown_quadrature_is_refused():
    with pytest.raises(ValueError, match="quadrature"):
        power.power_tost(0.0, 1.0, 10, design="one-sample", low=-1, high=1, quadrature="simpson")


def _one_at_a_time(q):
    def attempt(fn, *args, **kw):
        try:
            return fn(*args, **kw)
        except (StatsError, ValueError):
            return None

    pw = attempt(power.power_tost, q["true_shift"], q["sd"], q["n_new"], q["n_old"],
                 design=q["design"], alpha=q["alpha"], low=q["low"], high=q["high"],
                 sd_old=q["sd_old"])
    size = attempt(power.sample_size_tost, q["true_shift"], q["sd"], design=q["design"],
                   alpha=q["alpha"], low=q["low"], high=q["high"], power=q["power"],
                   ratio=q["ratio"], sd_old=q["sd_old"])
    return pw, size


def test_many_questions_in_one_pass_equal_one_at_a_time():
    rng = np.random.default_rng(3)
    questions = []
    for design in ("one-sample", "paired", "pooled", "welch"):
        for _ in range(12):
            n = int(rng.integers(2, 80))
            questions.append(dict(
                true_shift=float(rng.choice([0.0, 0.003, -0.008])),
                sd=float(rng.uniform(0.002, 0.02)), n_new=n,
                n_old=None if design == "one-sample" else (n if design == "paired"
                                                           else int(rng.integers(2, 80))),
                design=design, alpha=float(rng.choice([0.05, 0.01])), low=-0.01,
                high=float(rng.choice([0.01, 0.02])), power=0.9,
                ratio=1.0 if design in ("one-sample", "paired") else float(
                    rng.choice([1.0, 0.5])),
                sd_old=float(rng.uniform(0.002, 0.02)) if design == "welch" else None))
    # questions that fail one way or another: the answer is None, as the call would raise
    questions.append(dict(questions[0], true_shift=0.05))  # outside the margins: no n
    questions.append(dict(questions[0], sd=-1.0))  # a bad sd: neither figure
    questions.append(dict(questions[-3], sd_old=0.01, design="pooled", n_old=5))
    # lot sizes the power refuses while the sample size stands: no power, a sample size
    by_design = {q["design"]: q for q in questions[:48]}
    questions += [dict(by_design["one-sample"], n_new=1),
                  dict(by_design["one-sample"], n_old=12),
                  dict(by_design["paired"], n_old=by_design["paired"]["n_new"] + 1),
                  dict(by_design["welch"], n_old=None),
                  dict(by_design["pooled"], n_new=7.5),
                  dict(by_design["pooled"], n_new=8.0)]  # a whole float counts
    together = power.plan_tost_many(questions)
    for q, (pw, n_new) in zip(questions, together, strict=True):
        ref_pw, ref_size = _one_at_a_time(q)
        assert (pw is None) == (ref_pw is None) and (n_new is None) == (ref_size is None)
        if pw is not None:
            assert pw == pytest.approx(ref_pw, abs=1e-15)
        if n_new is not None:  # (the planned n_new only: the power reached there is not kept)
            assert n_new == ref_size.n_new
    assert together[-9][1] is None and together[-8] == (None, None)
    assert [pw is None for pw, _ in together[-6:]] == [True] * 5 + [False]
    assert all(n_new is not None for _, n_new in together[-6:])
