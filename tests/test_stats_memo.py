"""The evaluation's shortcuts give exactly what the plain routes give.

- A read-only sample's mean and sd, finiteness and one-way ANOVA are remembered
  (``verify.stats._memo``); the remembered answer must equal the plain computation bit for bit
  and a writeable array must never be remembered (it may change).
- The codes of a tuple of text lot labels are remembered by content.
- The TOST sample-size searches of many questions run in step (``sample_size_many._guesses``,
  ``_approx_many``, ``plan_tost_many``): each answer must equal the one-at-a-time search's.
- ``checks.drafting.replaced`` copies a frozen result as ``dataclasses.replace`` does.
- ``checks.drafting.diagnostic`` builds a DiagnosticResult as its constructor does.

The references are the plain routes of this package, themselves checked against published
values in tests/test_stats_*.py.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from scipy import special

from verify.checks import drafting
from verify.checks.drafting import diagnostic, not_applicable, replaced
from verify.model import CheckResult, DiagnosticResult
from verify.stats import _memo, nonparametric, sample_size, sample_size_many, samples
from verify.stats import variance_components as vc
from verify.stats.core import mean_sd
from verify.stats.diagnostics import lot_effect
from verify.stats.errors import DegenerateDataError, NotApplicableError
from verify.stats.samples import finite_values, group_codes


def _samples():
    rng = np.random.default_rng(17)
    yield rng.normal(10.0, 0.01, 30)
    yield np.round(rng.normal(10.0, 0.01, 30), 2)  # ties
    yield np.array([3.0, 3.0])  # n = 2, constant
    yield np.array([1.0, 2.0])  # n = 2
    yield np.full(7, 2.5)  # constant
    yield np.array([1e-300, 2e-300, 3e-300])
    yield rng.normal(0.0, 1e6, 101)


@pytest.mark.parametrize("x", list(_samples()))
def test_a_frozen_sample_gives_the_plain_mean_and_sd(x):
    plain = mean_sd(x.copy())
    frozen = _memo.freeze(x.copy())
    assert not frozen.flags.writeable
    first, second = mean_sd(frozen), mean_sd(frozen)
    assert first == plain and second == plain or (
        np.isnan(plain[2]) and first[:2] == plain[:2] and np.isnan(first[2]))
    assert finite_values(frozen) is frozen and finite_values(frozen) is frozen


def test_a_writeable_array_is_never_remembered():
    x = np.array([1.0, 2.0, 3.0, 4.0])
    assert mean_sd(x) == (4, 2.5, mean_sd(np.array([1.0, 2.0, 3.0, 4.0]))[2])
    x[0] = 9.0
    assert mean_sd(x)[1] == 4.5
    x[1] = np.nan
    with pytest.raises(DegenerateDataError):
        finite_values(x)


def test_a_frozen_sample_with_nan_is_refused_every_time():
    x = _memo.freeze(np.array([1.0, np.nan, 2.0]))
    for _ in range(2):
        with pytest.raises(DegenerateDataError):
            finite_values(x)
        with pytest.raises(DegenerateDataError):
            mean_sd(x)


def test_freeze_copies_a_view_and_keeps_an_owner():
    base = np.arange(6.0)
    view = base[1:4]
    frozen = _memo.freeze(view)
    assert frozen is not view and frozen.flags.owndata and not frozen.flags.writeable
    assert base.flags.writeable  # the original is left alone
    owner = np.arange(3.0)
    assert _memo.freeze(owner) is owner and not owner.flags.writeable
    assert not _memo.frozen(np.arange(3.0)) and not _memo.frozen([1.0, 2.0])


def test_lot_statistics_of_a_frozen_sample_equal_the_plain_ones():
    rng = np.random.default_rng(5)
    x = np.round(rng.normal(10.0, 0.01, 30), 3)
    lots = tuple(f"lot-{i // 7}" for i in range(30))
    plain_le = lot_effect(x.copy(), np.asarray(lots, dtype=object))
    plain_vc = vc.variance_components(x.copy(), list(lots))
    frozen = _memo.freeze(x.copy())
    for _ in range(2):  # the second time from the memo
        assert vc.variance_components(frozen, lots) == plain_vc
        got = lot_effect(frozen, lots)
        assert got == plain_le


@pytest.mark.parametrize("x", list(_samples()))
def test_sd_components_are_the_variance_components_sds(x):
    # the process summary's shortcut against the full result (its own sd properties), on a
    # frozen sample (the one-way analysis remembered) and a writeable one; the same errors
    lots = tuple(f"lot-{i % 3}" for i in range(x.size))
    for sample in (x.copy(), _memo.freeze(x.copy())):
        try:
            full = vc.variance_components(sample, lots)
        except (DegenerateDataError, vc.NotApplicableError) as err:
            with pytest.raises(type(err), match=str(err).split("(")[0]):
                vc.sd_components(sample, lots)
            continue
        got = vc.sd_components(sample, lots)
        assert got == (full.sd_within, full.sd_between, full.truncated)
        assert [type(g) for g in got] == [float, float, bool]
    _memo.forget()


def test_remembered_lot_codes_equal_the_plain_ones_and_stay_intact():
    lots = tuple(f"L{i % 4}" for i in range(12))
    labels, codes = group_codes(lots, 12)
    plain_labels, plain_codes = group_codes(list(lots), 12)
    assert labels == plain_labels and np.array_equal(codes, plain_codes)
    labels.append("spoilt")  # the caller's list is its own
    again_labels, again_codes = group_codes(tuple(lots), 12)  # an equal tuple: shared
    assert again_labels == plain_labels and again_codes is codes
    assert not codes.flags.writeable
    with pytest.raises(ValueError, match="give one label per value"):
        group_codes(lots, 11)
    # the same tuple object again is found by identity: the same codes, a list of its own
    first, second = group_codes(lots, 12), group_codes(lots, 12)
    assert first[1] is second[1] is codes and first[0] == second[0] == plain_labels
    assert first[0] is not second[0]
    # a tuple of other labels is never served another tuple's codes
    other = tuple(f"M{i % 3}" for i in range(12))
    assert group_codes(other, 12)[0] == ["M0", "M1", "M2"]
    assert group_codes(lots, 12)[0] == plain_labels
    # an evaluation's end empties them (the tuples they hold are its streams' lots)
    samples.forget()
    assert samples._CODES == {} and samples._CODES_OF == {}
    assert group_codes(lots, 12)[0] == plain_labels and group_codes(lots, 12)[1] is not codes


def test_labels_that_are_not_text_keep_their_own_objects():
    a = group_codes((1, 2, 1), 3)
    b = group_codes((1.0, 2.0, 1.0), 3)
    assert [type(v) for v in a[0]] == [int, int] and [type(v) for v in b[0]] == [float, float]


def _setups(seed: int, count: int):
    rng = np.random.default_rng(seed)
    out = []
    for i in range(count):
        design = ("one-sample", "paired", "pooled", "welch")[i % 4]
        two = design in ("pooled", "welch")
        try:
            out.append(sample_size._TostSize(
                float(rng.choice([0.0, 0.002, -0.006, 0.0099])), float(rng.uniform(1e-4, 0.03)),
                design=design, alpha=float(rng.choice([0.05, 0.01, 0.1])), low=-0.01,
                high=float(rng.choice([0.01, 0.02])), power=float(rng.choice([0.8, 0.9])),
                ratio=float(rng.choice([1.0, 0.5, 2.0])) if two else 1.0,
                sd_old=float(rng.uniform(1e-4, 0.03)) if design == "welch" else None))
        except Exception:  # a question no lot size answers: not a setup
            continue
    return out


def _bisection(q):
    """The plain search on the approximation: doubling, bisection, the one-fewer check."""
    try:
        return sample_size._smallest_n(q.approx_at, q.design, q.ratio, q.target).n_new
    except NotApplicableError:
        return None


def test_searches_in_step_give_each_guess_exactly():
    setups = _setups(11, 60)
    assert len(setups) > 40
    assert sample_size_many._guesses(setups) == [q.guess() for q in setups]


@pytest.mark.parametrize("seed", [11, 12, 13])
def test_window_guesses_equal_the_plain_search_on_the_approximation(seed):
    """The guesses read the approximation in a window around a normal-theory start; where the
    approximation rises with n they are the plain search's answers (doubling and bisection).
    The setups span every design, ratios 1/2..2, alphas 0.01..0.1 and lot sizes 2..thousands."""
    setups = _setups(seed, 200)
    plain = [_bisection(q) for q in setups]
    assert sample_size_many._guesses(setups) == plain
    sizes = [n for n in plain if n is not None]
    assert min(sizes) == 2 and max(sizes) > 1000


@pytest.mark.parametrize("moved", [-40.0, 25.0, 1e7])
def test_guesses_whose_window_misses_search_plainly(monkeypatch, moved):
    """A start far from the answer (below it, above it, beyond the largest lot size): no
    window holds the crossing, and every setup then searches by doubling and bisection."""
    setups = _setups(14, 60)
    starts = sample_size_many._normal_starts
    monkeypatch.setattr(sample_size_many, "_normal_starts",
                        lambda *arrays: np.maximum(2.0, starts(*arrays) + moved))
    fell_back = []
    bisections = sample_size_many._bisections
    monkeypatch.setattr(sample_size_many, "_bisections",
                        lambda table, which: fell_back.extend(which) or bisections(table, which))
    assert sample_size_many._guesses(setups) == [_bisection(q) for q in setups]
    assert len(fell_back) > len(setups) // 2
    # and one question alone (sample_size_tost's guess), its window moved the same way
    monkeypatch.setattr(sample_size, "_normal_starts",
                        lambda *arrays: np.maximum(2.0, starts(*arrays) + moved))
    assert [q.guess() for q in setups] == [_bisection(q) for q in setups]


def test_the_setup_table_gives_each_setups_own_floats():
    """The arrays of many setups (sample_size_many._Table): (tau, df), approximate powers and
    exact-power cases at many lot sizes equal each setup's own methods element by element, for
    every design and ratio (n_old by old_size)."""
    setups = _setups(5, 80)
    table = sample_size_many._Table(setups)
    rng = np.random.default_rng(6)
    idx = rng.integers(0, len(setups), 300)
    ns = [int(n) for n in rng.choice([2, 3, 4, 5, 7, 8, 13, 30, 31, 200, 5001], 300)]
    tau, df = table.tau_df(idx, ns)
    cases, crit = table.cases(idx, ns)
    approx = table.approx(idx, ns)
    for j, (i, n) in enumerate(zip(idx.tolist(), ns, strict=True)):
        q = setups[i]
        assert (tau[j], df[j]) == q._tau_df(n, sample_size.old_size(q.design, n, q.ratio))
        assert tuple(cases[:, j].tolist()) == q.case(n)
        assert crit[j] == float(special.stdtrit(df[j], 1.0 - q.a))
        assert approx[j] == q.approx_at(n, sample_size.old_size(q.design, n, q.ratio))
    assert {q.design for q in setups} == {"one-sample", "paired", "pooled", "welch"}


def test_approximate_powers_together_equal_one_at_a_time():
    setups = _setups(12, 40)
    ns = [2, 3, 5, 8, 13, 30, 200, 5000] * 5
    ns = ns[:len(setups)]
    together = sample_size_many._approx_many(setups, ns)
    singly = [q.approx_at(n, sample_size.old_size(q.design, n, q.ratio))
              for q, n in zip(setups, ns, strict=True)]
    assert together == singly


def test_tost_planning_together_equals_the_one_at_a_time_search_exactly():
    rng = np.random.default_rng(21)
    questions = []
    for i in range(40):
        design = ("one-sample", "paired", "pooled", "welch")[i % 4]
        n = int(rng.integers(2, 60))
        questions.append(dict(
            true_shift=float(rng.choice([0.0, 0.003, -0.008, 0.0195])),
            sd=float(rng.uniform(0.0005, 0.03)), n_new=n,
            n_old=None if design == "one-sample" else (n if design == "paired" else n + 2),
            design=design, alpha=0.05, low=-0.02, high=0.02, power=float(rng.choice([0.8, 0.9])),
            ratio=1.0, sd_old=float(rng.uniform(0.0005, 0.03)) if design == "welch" else None))
    together = sample_size_many.plan_tost_many(questions)
    for q, (pw, n_new) in zip(questions, together, strict=True):
        try:
            ref = sample_size.sample_size_tost(
                q["true_shift"], q["sd"], design=q["design"], alpha=q["alpha"], low=q["low"],
                high=q["high"], power=q["power"], ratio=q["ratio"], sd_old=q["sd_old"]).n_new
        except Exception:
            ref = None
        assert n_new == ref
        assert pw == sample_size.power_tost(q["true_shift"], q["sd"], q["n_new"], q["n_old"],
                                            design=q["design"], alpha=q["alpha"], low=q["low"],
                                            high=q["high"], sd_old=q["sd_old"])


@pytest.mark.parametrize("offset", [-3, -1, 2, 5])
def test_tost_planning_walks_up_and_down_from_any_guess(monkeypatch, offset):
    """The walks from the guesses integrate the size below each guess in their first round
    (the approximation usually asks for one or two more): from guesses moved below (walks
    that go up) or further above (walks that step down several times), every answer still
    equals the one-at-a-time search's."""
    rng = np.random.default_rng(31 + offset)
    questions = []
    for i in range(24):
        design = ("one-sample", "paired", "pooled", "welch")[i % 4]
        n = int(rng.integers(2, 40))
        questions.append(dict(
            true_shift=float(rng.choice([0.0, 0.004])), sd=float(rng.uniform(0.002, 0.02)),
            n_new=n, n_old=None if design == "one-sample" else n, design=design, alpha=0.05,
            low=-0.02, high=0.02, power=0.9, ratio=1.0,
            sd_old=float(rng.uniform(0.002, 0.02)) if design == "welch" else None))
    guesses = sample_size_many._guesses
    # (the hints of the unmoved guesses passed on: a walk may integrate sizes it never asks)
    monkeypatch.setattr(sample_size_many, "_guesses", lambda setups, table=None, near=None: [
        None if g is None else max(2, g + offset) for g in guesses(setups, table, near)])
    for q, (_, n_new) in zip(questions, sample_size_many.plan_tost_many(questions), strict=True):
        assert n_new == sample_size.sample_size_tost(
            q["true_shift"], q["sd"], design=q["design"], alpha=q["alpha"], low=q["low"],
            high=q["high"], power=q["power"], ratio=q["ratio"], sd_old=q["sd_old"]).n_new


def test_replaced_copies_as_dataclasses_replace_does():
    res = CheckResult(check="shift", method="t", hypothesis="h", alternative=None, margin=None,
                      outcome="PASS", reason="r", estimate=1.5)
    fast = replaced(res, outcome="HOLD", reason="because", p_value=0.01)
    assert fast == dataclasses.replace(res, outcome="HOLD", reason="because", p_value=0.01)
    assert type(fast) is CheckResult and res.outcome == "PASS"
    with pytest.raises(TypeError):
        replaced(res, no_such_field=1)


@pytest.mark.parametrize("args", [
    (("normality", "Shapiro-Wilk", "new", True, "departs"), {"statistic": 0.91, "p_value": 0.02}),
    (("lot count", "count of lots", "old", False, "3 lots"), {"statistic": 3.0}),
    (("outliers", "Grubbs", "new", False, "none"),
     {"statistic": 2.1, "p_value": 0.4, "extra": {"value": 25.1, "lot": "L7"}}),
    (("resolution", "measurement resolution", "all", False, "12 distinct values"), {}),
])
def test_diagnostic_builds_what_the_constructor_builds(args):
    positional, keywords = args
    fast = diagnostic(*positional, **keywords)
    plain = DiagnosticResult(*positional, **keywords)
    assert type(fast) is DiagnosticResult and fast == plain
    # the same fields in the same order (what dataclasses.asdict and the JSON writer walk)
    assert list(vars(fast).items()) == list(vars(plain).items())
    assert repr(fast) == repr(plain)
    with pytest.raises(dataclasses.FrozenInstanceError):
        fast.flag = not fast.flag  # still frozen
    if "extra" not in keywords:  # the default: a new empty dict per result, never shared
        assert fast.extra == {} and fast.extra is not diagnostic(*positional).extra


def test_diagnostic_falls_back_to_the_constructor_for_another_class(monkeypatch):
    # a class whose fields are not diagnostic()'s (or that validates) is always called
    @dataclasses.dataclass(frozen=True)
    class Checked:
        name: str
        method: str
        group: str
        flag: bool
        note: str
        statistic: float | None = None
        p_value: float | None = None
        extra: dict = dataclasses.field(default_factory=dict)

        def __post_init__(self):
            if not self.note:
                raise ValueError("a note is required")

    monkeypatch.setattr(drafting, "_DIAGNOSTIC_CLASS", [])
    monkeypatch.setattr("verify.model.DiagnosticResult", Checked)
    assert diagnostic("a", "b", "c", False, "d", p_value=0.5) == Checked("a", "b", "c", False, "d",
                                                                          p_value=0.5)
    with pytest.raises(ValueError, match="note"):
        diagnostic("a", "b", "c", False, "")


def test_not_applicable_is_an_unflagged_diagnostic_with_the_reason():
    got = not_applicable("stability", "individuals chart", "new", "2 values")
    assert got == DiagnosticResult(name="stability", method="individuals chart", group="new",
                                   flag=False, note="not applicable: 2 values")


@pytest.mark.parametrize(("counts", "total"), [
    (nonparametric.signed_rank_counts(9), 2**9),
    (nonparametric.signed_rank_counts(1), 2),
    (nonparametric.rank_sum_counts(4, 7), math.comb(11, 4)),
    (nonparametric.rank_sum_counts(30, 30), math.comb(60, 30)),
])
def test_exact_tails_from_running_sums_equal_the_summed_tails(counts, total):
    sums = nonparametric._running_sums(counts)
    top = len(counts) - 1
    for stat in [-3.0, -0.5, 0.0, 0.5, 1.0, 2.5, top / 2, top / 2 + 0.5, top - 1.0, top, top + 4.0]:
        for alt in ("two-sided", "less", "greater"):
            hi = nonparametric._tail_at_least(counts, math.floor(stat)) / total
            lo = nonparametric._tail_at_most(counts, math.ceil(stat)) / total
            want = hi if alt == "greater" else lo if alt == "less" else min(1.0, 2.0 * min(hi, lo))
            assert nonparametric._exact_p(sums, total, stat, alt) == want


def test_remembered_quantiles_equal_fresh_ones():
    from scipy import special

    from verify.stats.capability import _chi2_quantile
    from verify.stats.core import t_quantile

    for p, df in [(0.975, 29.0), (0.95, 57.3), (0.025, 2.0), (0.975, 29.0)]:
        assert t_quantile(p, df) == float(special.stdtrit(df, p))
        assert _chi2_quantile(p, df) == float(special.chdtri(df, 1.0 - p))
    with pytest.raises(ValueError):
        t_quantile(1.0, 5.0)


def test_an_evaluation_that_fails_leaves_nothing_remembered(tmp_path, monkeypatch):
    """The memo is emptied when an evaluation ends, also when it ends by an error (it holds
    the samples' arrays: a long-lived notebook must not keep them)."""
    import importlib

    from helpers_spec import write_case

    from verify.data import load_measurements
    from verify.spec import load_spec

    spec = load_spec(write_case(tmp_path))
    meas = load_measurements(spec)
    ev_module = importlib.import_module("verify.evaluate")

    def broken(spec, draft):
        assert _memo._CACHE, "the drafts ran on remembered samples"
        assert samples._CODES_OF, "and on remembered lot codes"
        raise RuntimeError("finishing failed")

    monkeypatch.setattr(ev_module, "finish", broken)
    with pytest.raises(RuntimeError, match="finishing failed"):
        ev_module.evaluate(spec, meas)
    assert _memo._CACHE == {}
    assert samples._CODES == {} and samples._CODES_OF == {}  # (they hold the streams' lots)


def test_group_sizes_are_bincount_and_remembered_only_for_read_only_codes():
    # the counts per lot code that the lot statistics share: np.bincount's, remembered (and
    # read-only) with codes that cannot change, recomputed for codes that can
    from verify.stats.samples import group_codes, group_sizes

    lots = ("B", "A", "B", "C", "A", "B")
    _, codes = group_codes(lots, len(lots))  # a tuple of text: remembered, read-only
    _memo.forget()
    first = group_sizes(codes, 3)
    assert first.tolist() == np.bincount(codes, minlength=3).tolist() == [3, 2, 1]
    assert group_sizes(codes, 3) is first and not first.flags.writeable
    loose = np.array([0, 1, 0, 2, 1, 0])
    again = group_sizes(loose, 4)
    assert again.tolist() == [3, 2, 1, 0] and group_sizes(loose, 4) is not again
    _memo.forget()


def test_topics_of_one_array_are_kept_apart_and_forgotten_together(monkeypatch):
    # the memo's contract (verify/stats/_memo.py): a frozen array's topics are independent,
    # any other input remembers nothing, forget() and the cap empty it
    a, b = _memo.freeze(np.arange(3.0)), _memo.freeze(np.arange(4.0))
    try:
        _memo.remember("mean_sd", a, "A1")
        _memo.remember("finite", a, True)
        _memo.remember("mean_sd", b, "B1")
        _memo.remember("mean_sd", a, "A2")  # a topic remembered again replaces the first
        assert (_memo.recall("mean_sd", a), _memo.recall("finite", a)) == ("A2", True)
        assert _memo.recall("mean_sd", b) == "B1" and _memo.recall("finite", b) is None
        assert _memo.recall("mean_sd", a.copy()) is None  # an equal array is another array
        w = np.arange(3.0)
        _memo.remember("mean_sd", w, "W")
        assert _memo.recall("mean_sd", w) is None  # writeable: never remembered
        monkeypatch.setattr(_memo, "MAX_ENTRIES", 2)
        _memo.remember("mean_sd", _memo.freeze(np.ones(2)), "C")  # a third array: cleared
        assert _memo.recall("mean_sd", a) is None and _memo.recall("mean_sd", b) is None
    finally:
        _memo.forget()
    assert _memo._CACHE == {}


def test_topics_is_the_memo_of_one_array_as_remember_and_recall_see_it(monkeypatch):
    # stats.batch adds what it computes of a sample to _memo.topics(sample); each entry must
    # be what remember() would have remembered and recall() must find it (the plain route)
    a, b = _memo.freeze(np.arange(3.0)), _memo.freeze(np.arange(4.0))
    try:
        _memo.remember("finite", a, True)
        t = _memo.topics(a)
        assert t == {"finite": True} and _memo.topics(a) is t  # the same entry each time
        t["mean_sd"] = "A1"
        assert _memo.recall("mean_sd", a) == "A1" and _memo.recall("finite", a) is True
        u = _memo.topics(b)  # an array not met yet: an empty entry of its own
        assert u == {} and _memo.recall("mean_sd", b) is None
        u["one_way"] = "B1"
        _memo.remember("mean_sd", b, "B2")
        assert u == {"one_way": "B1", "mean_sd": "B2"}
        with pytest.raises(ValueError, match="frozen"):
            _memo.topics(np.arange(3.0))  # writeable: never remembered
        monkeypatch.setattr(_memo, "MAX_ENTRIES", 2)
        _memo.topics(_memo.freeze(np.ones(2)))["x"] = 1  # a third array: the cap empties it
        assert _memo.recall("mean_sd", a) is None and len(_memo._CACHE) == 1
    finally:
        _memo.forget()
    assert _memo._CACHE == {}


def test_frozen_finds_a_remembered_array_by_the_memo_as_by_its_flags(monkeypatch):
    # the shortcut: an array the memo holds is frozen by one lookup; the plain route reads its
    # flags (read-only, owning its data), which say the same of every array remembered
    monkeypatch.setattr(_memo, "_CACHE", {})
    x = _memo.freeze(np.arange(4.0))
    writeable = np.arange(4.0)
    assert _memo.frozen(x) and not _memo.frozen(writeable)
    _memo.remember("mean_sd", x, (4, 1.5, 1.0))
    _memo.remember("mean_sd", writeable, (4, 1.5, 1.0))  # (never remembered)
    assert _memo.frozen(x) is (not x.flags.writeable and x.flags.owndata) is True
    assert not _memo.frozen(writeable) and _memo.recall("mean_sd", writeable) is None
    assert not _memo.frozen(x.tolist()) and not _memo.frozen(None)


def test_known_is_every_topic_recall_finds(monkeypatch):
    # the shortcut: one lookup for several topics of a sample; the plain route is recall(),
    # topic by topic
    monkeypatch.setattr(_memo, "_CACHE", {})
    a, b = _memo.freeze(np.arange(3.0)), _memo.freeze(np.arange(4.0))
    w = np.arange(3.0)
    _memo.remember("mean_sd", a, (3, 1.0, 1.0))
    _memo.remember("finite", a, True)
    _memo.remember("finite", w, True)  # (writeable: never remembered)
    assert _memo.known(b) is None and _memo.known(w) is None and _memo.known(None) is None
    assert _memo.known(a.copy()) is None  # an equal array is another array
    t = _memo.known(a)
    for topic in ("mean_sd", "finite", "one_way"):
        assert t.get(topic) == _memo.recall(topic, a)
    assert _memo.known(a) is _memo.topics(a)  # the memo's own entry
    _memo.forget()
    assert _memo.known(a) is None


def test_hold_is_freeze_with_the_array_known_to_the_memo(monkeypatch):
    # the shortcut: a gathered sample entered in the memo when frozen; the plain route is
    # freeze(), after which frozen() reads the flags and the first remember() enters it
    monkeypatch.setattr(_memo, "_CACHE", {})
    base = np.arange(6.0)
    for x in (np.arange(4.0), base[1:4]):  # one owning its data, one view (copied)
        held, plain = _memo.hold(x.copy() if x.base is None else x), _memo.freeze(x.copy())
        assert held.tobytes() == plain.tobytes() and held.dtype == plain.dtype
        assert not held.flags.writeable and held.flags.owndata
        assert _memo.frozen(held) and _memo.frozen(plain)
        assert _memo.known(held) == {} and _memo.known(plain) is None
        assert _memo.recall("mean_sd", held) is None
        _memo.remember("mean_sd", held, "H")
        assert _memo.hold(held) is held and _memo.recall("mean_sd", held) == "H"  # kept
    assert base.flags.writeable  # a view's base is left as it was
    monkeypatch.setattr(_memo, "MAX_ENTRIES", 2)
    _memo.hold(np.ones(3))  # a third array: the cap empties the memo first
    assert len(_memo._CACHE) == 1
