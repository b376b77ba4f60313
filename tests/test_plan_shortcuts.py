"""Shortcuts of the TOST planning pass (``sample_size_many.plan_tost_many``) equal the plain
routes they replace, bit for bit.

``noncentral._t_upper`` remembers the t quantile ``stdtrit(df, 1 - alpha)`` of whole df per
alpha, which the guesses' approximate powers (``sample_size_many._Table.approx``) and every
power integral (``power_of_tests._tost_power_rule``) need; these tests hold every element to the
direct ``scipy.special.stdtrit`` call, for whole, fractional, large, infinite and NaN df, one
alpha or several, in whatever order the rows are first met.

``sample_size._TostSize.of_question`` sets a question's validated attributes directly where its
numbers are plain floats that pass the checks; these tests hold it to the constructor: the same
attributes (values and types) for valid questions, the same error for every invalid one.

``power_of_tests._flat_pieces`` marks the pieces of the power integral on which the acceptance
region's normal probability is 1.0 at every node, whose sums then skip it; these tests check the
bound it relies on and hold the exact and coarse integrals to the plain route over cases where
such pieces occur and where they do not.

``sample_size._walk`` is the walk from a guess as a function of the powers it has been given,
which ``plan_tost_many`` calls with the powers of sizes integrated in advance as well, and which
``sample_size._steps`` (the generator) now steps through; these tests hold both to the generator
they replace (kept here as the reference), ask for ask and answer for answer.

``sample_size_many._Table.cases`` reads the (tau, df, t quantile) of sizes in the guesses'
windows from there; these tests hold it to the same table without windows. Its ``own_cases``
computes the cases of the questions' own lot sizes together; these tests hold them to each
setup's ``own_case`` and the powers ``plan_tost_many`` returns to ``power_tost``'s.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special

from verify.stats import noncentral, power_of_tests, sample_size, sample_size_many
from verify.stats.errors import StatsError


def _same(a: np.ndarray, b: np.ndarray) -> bool:
    return a.shape == b.shape and a.tobytes() == b.tobytes()


@pytest.fixture
def fresh_quantiles(monkeypatch):
    """An empty memory of quantiles, so each test meets its df first."""
    monkeypatch.setattr(noncentral, "_CRIT", {})


@pytest.mark.parametrize("alpha", [0.001, 0.01, 0.05, 0.1, 1.0 / 3.0, 0.49])
def test_whole_df_equal_direct_call(fresh_quantiles, alpha):
    rng = np.random.default_rng(7)
    for _ in range(3):  # the first pass fills the memory, the others read it
        dfs = rng.integers(1, noncentral._CRIT_DF + 1, size=500).astype(float)
        dfs[:4] = [1.0, 2.0, float(noncentral._CRIT_DF), 29.0]
        assert _same(noncentral._t_upper(dfs, alpha), special.stdtrit(dfs, 1.0 - alpha))
        alphas = np.full(dfs.size, alpha)
        assert _same(noncentral._t_upper(dfs, alphas), special.stdtrit(dfs, 1.0 - alphas))


def test_mixed_df_and_alphas_equal_direct_call(fresh_quantiles):
    rng = np.random.default_rng(11)
    whole = rng.integers(1, 60, size=300).astype(float)
    frac = rng.uniform(0.5, 80.0, size=300)
    odd = np.array([0.5, 4096.5, 4097.0, 1e5, 2e5 + 0.25, np.inf, np.nan, 0.0, -1.0])
    for dfs in (np.concatenate([whole, frac, odd]), np.concatenate([frac, whole]),
                np.concatenate([odd, whole]), frac, odd):
        for alpha in (0.05, 0.025):
            got = noncentral._t_upper(dfs, np.full(dfs.size, alpha))
            assert _same(got, special.stdtrit(dfs, 1.0 - np.full(dfs.size, alpha)))
        alphas = rng.choice([0.05, 0.01, 0.2], size=dfs.size)  # several alphas: plain
        assert _same(noncentral._t_upper(dfs, alphas), special.stdtrit(dfs, 1.0 - alphas))
    empty = np.zeros(0)
    assert _same(noncentral._t_upper(empty, empty), special.stdtrit(empty, 1.0 - empty))


def test_memory_is_bounded(fresh_quantiles):
    dfs = np.arange(1.0, 50.0)
    for k in range(noncentral._CRIT_KEEP + 5):
        alpha = 0.01 + 0.02 * k
        assert _same(noncentral._t_upper(dfs, alpha), special.stdtrit(dfs, 1.0 - alpha))
    assert len(noncentral._CRIT) == noncentral._CRIT_KEEP


def test_power_integrals_unchanged_by_the_memory(fresh_quantiles, monkeypatch):
    """The exact and coarse integrals with remembered quantiles equal those computed with the
    direct call throughout (a second pass reads every whole df from the memory)."""
    rng = np.random.default_rng(3)
    m = 400
    dfs = np.where(rng.random(m) < 0.5, rng.integers(2, 200, size=m).astype(float),
                   rng.uniform(2.0, 300.0, size=m))
    taus = rng.uniform(0.05, 2.0, size=m)
    delta = rng.uniform(-0.5, 0.5, size=m)
    lo, hi = np.full(m, -1.0), np.full(m, 1.2)
    alpha = np.full(m, 0.05)
    rules = (power_of_tests._tost_power_many, power_of_tests._tost_power_coarse)
    remembered = [[f(delta, lo, hi, taus, dfs, alpha) for f in rules] for _ in range(2)]
    monkeypatch.setattr(power_of_tests, "_t_upper",
                        lambda d, a: special.stdtrit(d, 1.0 - np.asarray(a, dtype=float)))
    plain = [f(delta, lo, hi, taus, dfs, alpha) for f in rules]
    for got in remembered:
        assert all(_same(x, y) for x, y in zip(got, plain, strict=True))


_VALID = {"true_shift": 0.1, "sd": 0.5, "design": "welch", "alpha": 0.05, "low": -1.0,
          "high": 1.5, "power": 0.9, "ratio": 1.0, "sd_old": 0.7}


def _variants():
    """Valid questions of every design, and ones each check refuses (or that the direct route
    leaves to the constructor: ints, numpy floats, strings)."""
    out = []
    for design in ("one-sample", "paired", "pooled", "welch"):
        out.append(dict(_VALID, design=design, sd_old=None))
        out.append(dict(_VALID, design=design))
        out.append(dict(_VALID, design=design, ratio=0.5, sd_old=None))
        out.append(dict(_VALID, design=design, ratio=2.0))
    bad = {
        "true_shift": [-1.0, 1.5, 2.0, -3.0, np.nan, np.inf, -np.inf, 0, np.float64(0.1), "0.1",
                       None, True],
        "sd": [0.0, -0.5, np.nan, np.inf, 1, np.float64(0.5), "x", None],
        "design": ["two-sample", "", None, "Welch"],
        "alpha": [0.0, 0.5, 0.6, -0.1, np.nan, np.inf, 1, np.float64(0.05), "0.05", None],
        "low": [1.5, 2.0, 0.1, np.nan, -np.inf, -1, np.float64(-1.0), None],
        "high": [-1.0, 0.1, np.nan, np.inf, 2, np.float64(1.5), None],
        "power": [0.0, 1.0, 1.5, -0.2, np.nan, 1, np.float64(0.9), None],
        "ratio": [0.0, -1.0, np.nan, np.inf, 1, 2, np.float64(1.0), None, "1"],
        "sd_old": [0.0, -0.7, np.nan, np.inf, 1, np.float64(0.7), "x"],
    }
    for design in ("one-sample", "paired", "pooled", "welch"):
        for key, values in bad.items():
            for v in values:
                out.append({**_VALID, "design": design, "sd_old": None, key: v})
                out.append({**_VALID, "design": design, key: v})
    return out


def _made(make, q):
    try:
        setup = make(q)
    except (StatsError, ValueError, TypeError) as err:
        return type(err), str(err)
    return {k: (type(v), repr(v)) for k, v in sorted(vars(setup).items())}


def test_question_setups_equal_the_constructor():
    def plain(q):
        return sample_size._TostSize(q["true_shift"], q["sd"], design=q["design"],
                                     alpha=q["alpha"], low=q["low"], high=q["high"],
                                     power=q["power"], ratio=q["ratio"], sd_old=q["sd_old"])

    variants = _variants()
    made = [_made(sample_size._TostSize.of_question, q) for q in variants]
    assert made == [_made(plain, q) for q in variants]
    assert sum(isinstance(m, dict) for m in made) >= 16  # the valid ones were built
    assert sum(not isinstance(m, dict) for m in made) >= 100  # and the refusals checked


def test_normal_probability_is_one_beyond_the_flat_bound():
    """What ``power_of_tests._flat_pieces`` relies on: ``ndtr`` is 1.0 from ``_NDTR_ONE`` on,
    and at minus it so small that 1.0 minus it is 1.0."""
    bound = power_of_tests._NDTR_ONE
    x = np.concatenate([np.linspace(bound, 60.0, 400_001), [1e3, 1e300, np.inf],
                        bound + np.arange(1, 1000) * np.spacing(bound)])
    assert (special.ndtr(x) == 1.0).all()
    assert (1.0 - special.ndtr(-x) == 1.0).all()
    assert (special.ndtr(-x) < 2.0 ** -56).all()


def _high_and_low_power_cases(rng: np.random.Generator, m: int):
    """(delta, low, high, tau, df, alpha) of cases from margins a few sds of the estimate wide
    to hundreds (so the acceptance region's probability is 1.0 on parts of S's range, or on
    all of it), lopsided or not, shifts inside and near the margins, df 1 to 5000."""
    df = np.where(rng.random(m) < 0.5, rng.integers(1, 60, size=m).astype(float),
                  np.exp(rng.uniform(0.0, np.log(5000.0), size=m)))
    tau = np.exp(rng.uniform(np.log(1e-3), np.log(1.0), size=m))
    width = tau * np.exp(rng.uniform(np.log(2.0), np.log(400.0), size=m))
    share = np.where(rng.random(m) < 0.5, 0.5, rng.uniform(0.05, 0.95, size=m))
    low = -width * share
    high = width * (1.0 - share)
    delta = np.where(rng.random(m) < 0.3, 0.0, rng.uniform(low, high))
    alpha = rng.choice([0.001, 0.01, 0.05, 0.1, 0.2], size=m)
    return delta, low, high, tau, df, alpha


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_flat_pieces_leave_every_power_unchanged(monkeypatch, seed):
    """The exact and coarse integrals with the pieces of g = 1.0 summed without g equal the
    plain route (every piece through g) bit for bit, and such pieces do occur."""
    rng = np.random.default_rng(100 + seed)
    cases = _high_and_low_power_cases(rng, 1500)
    rules = (power_of_tests._tost_power_many, power_of_tests._tost_power_coarse)
    flat_seen = []
    real = power_of_tests._flat_pieces

    def counted(*args):
        flat = real(*args)
        flat_seen.append((int(flat.sum()), flat.size))
        return flat

    monkeypatch.setattr(power_of_tests, "_flat_pieces", counted)
    short = [f(*cases) for f in rules]
    assert sum(n for n, _ in flat_seen) > 0.1 * sum(m for _, m in flat_seen)
    assert any(n < m for n, m in flat_seen)  # and others go through g
    monkeypatch.setattr(power_of_tests, "_flat_pieces",
                        lambda rights, *rest: np.zeros(rights.size, dtype=bool))
    plain = [f(*cases) for f in rules]
    assert all(_same(x, y) for x, y in zip(short, plain, strict=True))
    one = [f(*(np.asarray(v)[:1] for v in cases)) for f in rules]  # one case alone as well
    assert all(_same(x, y[:1]) for x, y in zip(one, plain, strict=True))


def _reference_steps(n0: int, target: float, n_max: int, steps: int = 12):
    """The walk generator as it was before ``sample_size._walk`` (the reference)."""
    n = n0
    p = yield n0
    if p >= target:
        for _ in range(steps):
            if n <= 2:
                return n, p
            p_prev = yield n - 1
            if p_prev < target:
                return n, p
            n, p = n - 1, p_prev
        return None
    for _ in range(steps):
        if n >= n_max:
            return None
        n, p = n + 1, (yield n + 1)
        if p >= target:
            return n, p
    return None


def _drive(walk, power):
    asked = []
    try:
        n = next(walk)
        while True:
            asked.append(n)
            n = walk.send(power[n])
    except StopIteration as stop:
        return asked, stop.value


def _random_walk_questions(rng: np.random.Generator, m: int):
    """(n0, target, n_max, steps, power by n): powers rising, flat, falling back, with NaNs
    and ties at the target; guesses from 2 up, at and near n_max."""
    out = []
    for _ in range(m):
        n_max = int(rng.choice([2, 3, 5, 30, 100_000]))
        n0 = int(rng.integers(2, min(n_max, 40) + 1))
        target = float(rng.choice([0.5, 0.8, 0.9]))
        kind = rng.integers(4)
        ns = np.arange(0, 60)
        if kind == 0:  # rising through the target somewhere
            p = 1.0 / (1.0 + np.exp(-(ns - rng.uniform(0, 50)) / rng.uniform(0.3, 5.0)))
        elif kind == 1:  # rough: not monotone
            p = rng.uniform(0.0, 1.0, size=ns.size)
        elif kind == 2:  # values at the target exactly, and NaNs
            p = rng.choice([target, np.nextafter(target, 0.0), 1.0, 0.0, np.nan], size=ns.size)
        else:
            p = np.full(ns.size, rng.choice([0.0, 1.0, target]))
        steps = int(rng.choice([1, 2, 12]))
        out.append((n0, target, n_max, steps, dict(enumerate(p.tolist()))))
    return out


def test_walks_step_as_the_generator_did():
    rng = np.random.default_rng(5)
    for n0, target, n_max, steps, power in _random_walk_questions(rng, 4000):
        want = _drive(_reference_steps(n0, target, n_max, steps), power)
        assert _drive(sample_size._steps(n0, target, n_max, steps), power) == want
        # from powers of more sizes than it asks (integrated in advance): the same answer
        asked, answer = want
        extra = {n: power[n] for n in range(max(0, n0 - 3), n0 + 3) if n in power}
        seen = {**extra, **{n: power[n] for n in asked}}
        assert sample_size._walk(n0, target, n_max, seen, steps) == answer
        # and from only part of its path: the next size it asks
        for k in range(len(asked)):
            part = {n: power[n] for n in asked[:k]}
            assert sample_size._walk(n0, target, n_max, part, steps) == asked[k]


def test_window_parts_equal_those_computed_afresh():
    """Sizes in, next to and far from the windows (clipped at 2 and at n_max too), of every
    design: the same columns and t quantiles as a table that computes them all."""
    rng = np.random.default_rng(9)
    questions = []
    for k in range(60):
        design = ("one-sample", "paired", "pooled", "welch")[k % 4]
        ratio = 1.0 if design in ("one-sample", "paired") else float(rng.choice([1.0, 0.5, 3.0,
                                                                                  1e-4]))
        questions.append({**_VALID, "design": design, "ratio": ratio,
                          "sd": float(rng.uniform(0.05, 2.0)),
                          "true_shift": float(rng.uniform(-0.5, 0.5)),
                          "power": float(rng.choice([0.5, 0.8, 0.95])),
                          "alpha": float(rng.choice([0.05, 0.01])),
                          "sd_old": float(rng.uniform(0.05, 2.0)) if design == "welch" else None})
    setups = [sample_size._TostSize.of_question(q) for q in questions]
    windowed = sample_size_many._Table(setups)
    sample_size_many._guesses(setups, windowed)
    assert windowed.window is not None
    fresh = sample_size_many._Table(setups)
    sizes = windowed.window[0]
    rows, ns = [], []
    for r in range(len(setups)):
        for n in {*sizes[r].tolist(), int(sizes[r, 0]) - 1, int(sizes[r, -1]) + 1, 2, 3, 500}:
            if n >= 2:
                rows.append(r)
                ns.append(n)
    idx = np.array(rows, dtype=np.intp)
    got_cols, got_c = windowed.cases(idx, ns)
    want_cols, want_c = fresh.cases(idx, ns)
    assert _same(got_cols, want_cols) and _same(got_c, want_c)
    tau, df = fresh.tau_df(idx, ns)
    assert _same(got_c, special.stdtrit(df, 1.0 - fresh.a[idx]))
    empty = np.zeros(0, dtype=np.intp)
    assert all(_same(x, y) for x, y in zip(windowed.cases(empty, []), fresh.cases(empty, []),
                                           strict=True))


def _own_questions(rng: np.random.Generator, m: int) -> list[dict]:
    out = []
    for k in range(m):
        design = ("one-sample", "paired", "pooled", "welch")[k % 4]
        n = int(rng.integers(2, 300))
        n_old = None if design == "one-sample" else n if design == "paired" else \
            int(rng.integers(2, 300))
        out.append({**_VALID, "design": design, "n_new": n, "n_old": n_old,
                    "ratio": 1.0 if design in ("one-sample", "paired") else 0.5,
                    "sd": float(rng.uniform(0.05, 2.0)),
                    "true_shift": float(rng.uniform(-1.5, 2.0)),  # some outside the margins
                    "sd_old": float(rng.uniform(0.05, 2.0)) if design == "welch" else None})
    return out


def test_own_cases_together_equal_each_setups_own():
    rng = np.random.default_rng(21)
    questions = [q for q in _own_questions(rng, 200) if q["low"] < q["true_shift"] < q["high"]]
    setups = [sample_size._TostSize.of_question(q) for q in questions]
    sizes = [q.own_sizes(p["n_new"], p["n_old"]) for q, p in zip(setups, questions, strict=True)]
    table = sample_size_many._Table(setups)
    got = table.own_cases(np.arange(len(setups)), [a for a, _ in sizes], [b for _, b in sizes])
    want = np.array([q.own_case(p["n_new"], p["n_old"])
                     for q, p in zip(setups, questions, strict=True)], dtype=float).T
    assert _same(got, want)
    assert {q.design for q in setups} == {"one-sample", "paired", "pooled", "welch"}


def test_own_powers_of_setups_and_of_other_questions_equal_power_tost():
    """Questions with a setup and ones without (a shift outside the margins: a power but no
    sample size; bad lot sizes: neither), in one pass."""
    rng = np.random.default_rng(22)
    questions = _own_questions(rng, 60)
    questions[3] = {**questions[3], "n_new": 1}
    questions[6] = {**questions[6], "n_old": None}
    together = sample_size_many.plan_tost_many(questions)
    kinds = set()
    for q, (pw, _) in zip(questions, together, strict=True):
        try:
            want = power_of_tests.power_tost(
                q["true_shift"], q["sd"], q["n_new"], q["n_old"], design=q["design"],
                alpha=q["alpha"], low=q["low"], high=q["high"], sd_old=q["sd_old"])
        except (StatsError, ValueError):
            want = None
        assert pw == want
        kinds.add((want is None, q["low"] < q["true_shift"] < q["high"]))
    assert kinds >= {(False, True), (False, False), (True, True)}
