"""TOST power and sample size for many questions at once: the power at each question's own lot
sizes and the smallest lot sizes reaching its target power, for all characteristics of an
evaluation in one pass (:func:`plan_tost_many`).

Each answer equals the one-at-a-time call's (:func:`~verify.stats.power_of_tests.power_tost`,
:func:`~verify.stats.sample_size.sample_size_tost`). Each question's guess reads the shifted-t
approximation in a window around a normal-theory start, all windows computed together
(:func:`_guesses`; the few that miss search by bisection, in step); the walks from the guesses
run in step too, each round's powers integrated together, by a coarse rule where it decides
whether a power reaches the target as the exact one does (:func:`_walk_powers`).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import special

from ._checks import check_margins, finite
from .errors import NotApplicableError
from .noncentral import _t_upper
from .power_of_tests import _alpha, _plan, _tost_power_coarse, _tost_power_many
from .sample_size import (
    _ONE,
    _POOLED,
    _WELCH,
    _first_reaching,
    _guess_sizes,
    _n_max,
    _normal_starts,
    _search,
    _smallest_n,
    _TostSize,
    _walk,
    old_size,
    old_sizes,
)


def _approx_many(setups: list[_TostSize], ns: list[int]) -> list[float]:
    """:meth:`_TostSize.approx_at` of each setup at its n_new, the t distribution's functions
    called once for all (the same arithmetic element by element, so the same values)."""
    taus, dfs = [], []
    for q, n in zip(setups, ns, strict=True):
        tau, df = q._tau_df(n, old_size(q.design, n, q.ratio))
        taus.append(tau)
        dfs.append(df)
    df = np.array(dfs)
    if not np.isfinite(df).all():  # t_quantile and t_cdf switch to the normal there
        return [q.approx_at(n, old_size(q.design, n, q.ratio))
                for q, n in zip(setups, ns, strict=True)]
    tau = np.array(taus)
    c = special.stdtrit(df, np.array([1.0 - q.a for q in setups]))
    p = special.stdtr(df, np.array([q.hi - q.delta for q in setups]) / tau - c) \
        - special.stdtr(df, np.array([q.lo - q.delta for q in setups]) / tau + c)
    # _clip01 of each: min(1, max(0, p)), a NaN becoming 0 as there
    p = np.clip(p, 0.0, 1.0)
    p[np.isnan(p)] = 0.0
    return p.tolist()


class _Table:
    """Validated setups as arrays: their (tau, df), approximate powers and exact-power cases at
    many (setup, n_new) at once. Every element is the float the setup's own methods give: the
    same operations on the same floats, element by element (the Welch tau by math.hypot and
    its variance share's square by the float power, one at a time, as there)."""

    def __init__(self, setups: list[_TostSize]):
        self.setups = setups
        self.kind = np.array([_WELCH if q.design == "welch" else _POOLED if q.design == "pooled"
                              else _ONE for q in setups], dtype=np.int8)
        self.s1 = np.array([q.s1 for q in setups], dtype=float)
        self.s2 = np.array([q.s2 if q.design == "welch" else np.nan for q in setups],
                           dtype=float)
        self.ratio = np.array([q.ratio for q in setups], dtype=float)
        self.delta = np.array([q.delta for q in setups], dtype=float)
        self.lo = np.array([q.lo for q in setups], dtype=float)
        self.hi = np.array([q.hi for q in setups], dtype=float)
        self.a = np.array([q.a for q in setups], dtype=float)
        self.target = np.array([q.target for q in setups], dtype=float)
        # the guesses' windows (_guesses): their sizes and (tau, df, t quantile), rows by setup
        self.window: tuple[np.ndarray, ...] | None = None

    def tau_df(self, idx: np.ndarray, ns: list[int],
               olds: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
        """:meth:`_TostSize._tau_df` of setup ``idx[j]`` at n_new ``ns[j]`` (n_old by
        :func:`old_size`, or ``olds[j]`` as floats where given)."""
        n = np.array(ns, dtype=float)
        kind = self.kind[idx]
        tau, df = np.empty(n.size), np.empty(n.size)
        one = kind == _ONE  # one-sample and paired: s1 / sqrt(n), n - 1
        if one.any():
            tau[one] = self.s1[idx[one]] / np.sqrt(n[one])
            df[one] = n[one] - 1.0
        pooled = kind == _POOLED  # s1 sqrt(1/n1 + 1/n2), n1 + n2 - 2
        if pooled.any():
            n1 = n[pooled]
            n2 = old_sizes(n1, self.ratio[idx[pooled]]) if olds is None else olds[pooled]
            tau[pooled] = self.s1[idx[pooled]] * np.sqrt(1.0 / n1 + 1.0 / n2)
            df[pooled] = n1 + n2 - 2.0
        welch = kind == _WELCH
        if welch.any():
            rows, n1 = idx[welch], n[welch]
            n2 = old_sizes(n1, self.ratio[rows]) if olds is None else olds[welch]
            a = self.s1[rows] / np.sqrt(n1)
            b = self.s2[rows] / np.sqrt(n2)
            # math.hypot and the float power of power_of_tests._tau_df, element by element
            se = [math.hypot(x, y) for x, y in zip(a.tolist(), b.tolist(), strict=True)]
            r = np.array([(x / t) ** 2 for x, t in zip(a.tolist(), se, strict=True)])
            tau[welch] = se
            df[welch] = 1.0 / (r * r / (n1 - 1.0) + (1.0 - r) * (1.0 - r) / (n2 - 1.0))
        return tau, df

    def approx(self, idx: np.ndarray, ns: list[int], window: np.ndarray | None = None):
        """:func:`_approx_many` of setups ``idx`` at ``ns``; with ``window`` (the sizes ``ns``
        as rows, one per setup, ``idx`` their rows repeated) their (tau, df, t quantile) are
        kept for :meth:`cases`."""
        tau, df = self.tau_df(idx, ns)
        if not np.isfinite(df).all():  # t_quantile and t_cdf switch to the normal there
            return _approx_many([self.setups[i] for i in idx.tolist()], ns)
        c = _t_upper(df, self.a[idx])  # special.stdtrit(df, 1.0 - alpha), whole df remembered
        if window is not None:
            self.window = (window, *(x.reshape(window.shape) for x in (tau, df, c)))
        p = special.stdtr(df, (self.hi[idx] - self.delta[idx]) / tau - c) \
            - special.stdtr(df, (self.lo[idx] - self.delta[idx]) / tau + c)
        p = np.clip(p, 0.0, 1.0)  # _clip01 of each, a NaN becoming 0 as there
        p[np.isnan(p)] = 0.0
        return p.tolist()

    def cases(self, idx: np.ndarray, ns: list[int]) -> tuple[np.ndarray, np.ndarray]:
        """The columns (delta, low, high, tau, df, alpha) of :meth:`_TostSize.case` of setups
        ``idx`` at ``ns``, and their t quantiles ``stdtrit(df, 1 - alpha)``: those of sizes in
        the guesses' windows as computed there (the same functions of the same (setup, n), so
        the same floats), the others computed here."""
        tau, df, c = self._window_parts(idx, ns)
        return np.vstack([self.delta[idx], self.lo[idx], self.hi[idx], tau, df,
                          self.a[idx]]), c

    def own_cases(self, idx: np.ndarray, n_new: list[int], n_old: list[int | None]):
        """:meth:`_TostSize.own_case` of setups ``idx`` at their validated own sizes
        (:meth:`_TostSize.own_sizes`), as columns."""
        olds = np.array([np.nan if n is None else n for n in n_old], dtype=float)
        tau, df = self.tau_df(idx, n_new, olds)
        return np.vstack([self.delta[idx], self.lo[idx], self.hi[idx], tau, df, self.a[idx]])

    def _window_parts(self, idx: np.ndarray, ns: list[int]):
        """(tau, df, t quantile) of setups ``idx`` at ``ns``, read from the window where it
        holds the size (a clipped window repeats sizes: the column must hold n itself)."""
        if self.window is None or not idx.size:
            tau, df = self.tau_df(idx, ns)
            return tau, df, _t_upper(df, self.a[idx])
        sizes, w_tau, w_df, w_c = self.window
        n = np.array(ns, dtype=np.int64)
        col = n - sizes[idx, 0]
        col[(col < 0) | (col >= sizes.shape[1])] = 0
        held = sizes[idx, col] == n
        tau, df, c = w_tau[idx, col], w_df[idx, col], w_c[idx, col]
        if not held.all():
            rest = ~held
            rows = idx[rest]
            tau[rest], df[rest] = self.tau_df(rows, n[rest].tolist())
            c[rest] = _t_upper(df[rest], self.a[rows])
        return tau, df, c


def _guesses(setups: list[_TostSize], table: _Table | None = None,
             near: list[bool] | None = None) -> list[int | None]:
    """:meth:`_TostSize.guess` of every setup: the smallest n_new whose approximate power
    (:meth:`_TostSize.approx_at`) reaches the target. The approximate powers in a window around
    each setup's normal-theory start (:data:`~verify.stats.sample_size.GUESS_WINDOW`,
    :func:`~verify.stats.sample_size._normal_starts`) are computed together first; a setup
    whose window holds a size reaching the target just above one falling short (or at the
    smallest size, 2) takes it, the others search by doubling and bisection
    (:func:`_bisections`). Where the approximation rises with n, as it does wherever the tests
    have looked, both give the same size (tests hold them together); the guess only sets where
    the walks with the exact power start, and their answers do not depend on it.

    ``near`` (a list of False, one per setup) is set True for the guesses taken from a window
    whose target lies in the lower half of the approximation's last step (from the size below
    the guess to the guess): where the exact power, which runs above the approximation, is
    likely to reach the target one size lower already (only where a walk's first round looks)."""
    table = _Table(setups) if table is None else table  # (the caller's, of these setups)
    out: list[int | None] = [None] * len(setups)
    if not setups:
        return out
    rows = np.arange(len(setups))
    starts = _normal_starts(table.delta, table.lo, table.hi, table.a, table.target, table.kind,
                            table.s1, table.s2, table.ratio)
    n_max = np.array([_n_max(q.design, q.ratio) for q in setups], dtype=float)
    sizes = _guess_sizes(starts, n_max)
    powers = np.array(table.approx(np.repeat(rows, sizes.shape[1]), sizes.ravel().tolist(),
                                   sizes))
    found, first = _first_reaching(sizes, powers.reshape(sizes.shape), table.target)
    for i, j in zip(np.flatnonzero(found).tolist(), first[found].tolist(), strict=True):
        out[i] = int(sizes[i, j])
    if near is not None:
        grid = powers.reshape(sizes.shape)
        rows_found = np.flatnonzero(found & (first > 0))
        j = first[rows_found]
        below, at = grid[rows_found, j - 1], grid[rows_found, j]
        for i in rows_found[2.0 * (table.target[rows_found] - below) < at - below].tolist():
            near[i] = True
    missed = np.flatnonzero(~found).tolist()
    if missed:
        for i, n in zip(missed, _bisections(table, missed), strict=True):
            out[i] = n
    return out


def _bisections(table: _Table, which: list[int]) -> list[int | None]:
    """The plain searches of setups ``which`` on the approximation (doubling, bisection, the
    check that one fewer falls short: :func:`~verify.stats.sample_size._search`), run in step,
    each step's approximate powers computed together (:meth:`_Table.approx`)."""
    out: dict[int, int | None] = {}
    setups = table.setups
    searches = {i: _search(setups[i].design, setups[i].ratio, setups[i].target) for i in which}
    asked = {i: next(g) for i, g in searches.items()}
    # the powers each search was given: asked again (the last check that one fewer falls
    # short asks a size the bisection met), it is sent the same float without a new round
    known: dict[int, dict[int, float]] = {i: {} for i in searches}
    while asked:
        ids = list(asked)
        powers = table.approx(np.array(ids, dtype=np.intp), [asked[i] for i in ids])
        before, asked = asked, {}
        for i, p in zip(ids, powers, strict=True):
            seen = known[i]
            seen[before[i]] = p
            try:
                n = searches[i].send(p)
                while n in seen:
                    n = searches[i].send(seen[n])
                asked[i] = n
            except StopIteration as stop:
                out[i] = stop.value.n_new
            except NotApplicableError:
                out[i] = None
    return [out[i] for i in which]


#: The guard band of the walks' decisions by the coarse rule: a walk asks only whether the power
#: at a lot size reaches its target, so where the coarse integral
#: (:func:`~verify.stats.power_of_tests._tost_power_coarse`) lies farther than this from the
#: target, it answers as the exact one (:func:`~verify.stats.power_of_tests._tost_power_many`)
#: would; within it, the exact integral decides. Measured over three seeded sweeps of 100,000
#: random cases each (all four designs, lot sizes 2 to 1e5 so df from 2 to 2e5, alpha 0.001 to
#: 0.2, symmetric and lopsided margins 0.3 to 300 sds of the estimate wide, shifts inside, near
#: and outside them, powers from 0 to 1), the largest difference between the two rules where
#: the coarse one is used was 2.5e-7 (at df 2; 1.6e-9 from df 3, 4.1e-10 from df 10): the band
#: is 400 times that. tests/test_plan_walk_decisions.py holds the rule within a hundredth of it.
DECISION_BAND = 1e-4
#: The coarse rule is used from df 2 and alpha 0.001 on: below them its error grows (2e-4 at
#: df 1, where the density bends sharply on the log scale; 2.6e-6 at alpha below 0.001, where
#: the normal probabilities turn steeply), so those lot sizes are integrated exactly.
COARSE_MIN_DF = 2.0
COARSE_MIN_ALPHA = 1e-3


def _walk_powers(cols: np.ndarray, targets: np.ndarray, exact_cols: np.ndarray | None,
                 crit: np.ndarray | None = None):
    """Values to send the walks for the cases ``cols`` (each the power or a stand-in on the
    same side of its case's target), and the exact powers of ``exact_cols`` (the powers at the
    questions' own lot sizes), in one exact integration with the cases the coarse rule cannot
    decide: those of df below :data:`COARSE_MIN_DF` or alpha below :data:`COARSE_MIN_ALPHA`,
    and those within :data:`DECISION_BAND` of their target. A walk compares each value only
    with its target (``power >= target``), so it takes the same steps as with the exact
    powers, and the cases it cannot decide coarsely join the same round (no extra round).
    ``crit``: the cases' t quantiles, where the caller has them."""
    n = cols.shape[1]
    values = np.full(n, np.nan)
    coarse = (cols[4] >= COARSE_MIN_DF) & (cols[5] >= COARSE_MIN_ALPHA)
    if coarse.any():
        cheap = _tost_power_coarse(*cols[:, coarse],
                                   crit=None if crit is None else crit[coarse])
        values[coarse] = cheap
    # (a NaN compares as not decided)
    undecided = ~(np.abs(values - targets) > DECISION_BAND)
    exact = cols[:, undecided]
    lead = 0 if exact_cols is None else exact_cols.shape[1]
    if lead:
        exact = np.hstack([exact_cols, exact])
    if exact.shape[1]:
        got = _tost_power_many(*exact)
        values[undecided] = got[lead:]
        return values.tolist(), got[:lead].tolist()
    return values.tolist(), []


def plan_tost_many(questions: list[dict]) -> list[tuple[float | None, int | None]]:
    """The TOST power and planned lot size of many questions in one pass.

    Each question is a dict of the keyword arguments :func:`power_tost` and
    :func:`sample_size_tost` take (``true_shift``, ``sd``, ``n_new``, ``n_old``, ``design``,
    ``alpha``, ``low``, ``high``, ``sd_old``) plus the target ``power`` and ``ratio`` of the
    sample-size search. Returns per question (power at its own lot sizes, planned n_new): the
    power equal to :func:`power_tost`'s, the n_new to :func:`sample_size_tost`'s, each None where
    that call raises a :class:`~verify.stats.errors.StatsError` or ``ValueError``. The questions'
    guesses are computed together (:func:`_guesses`), then each step's powers (the walk from
    each guess, and the powers at the questions' own lot sizes) are integrated together, which
    costs far less than one pass per question and integrates only the lot sizes a walk asks
    for. The walks need only whether each power reaches the target: the coarse rule answers
    that away from the target, the exact one near it (:func:`_walk_powers`), so the planned
    n_new is the exact search's; the power it reaches there is not returned.
    """
    from .errors import StatsError

    cases: list[tuple | None] = []  # the powers at the questions' own lot sizes (None: a setup's)
    own_of: list[int] = []  # the question of each
    own_rows: list[int] = []  # the setups' own lot sizes, their cases computed together
    own_new: list[int] = []
    own_old: list[int | None] = []
    sizes: list[tuple[int, _TostSize]] = []
    setups: list[tuple[int, _TostSize]] = []
    for i, q in enumerate(questions):
        try:
            setup = _TostSize.of_question(q)
            setups.append((i, setup))
        except (StatsError, ValueError):
            setup = None
        try:
            if setup is not None:  # the power's inputs validated with the question's
                n_new, n_old = setup.own_sizes(q["n_new"], q["n_old"])
                own_rows.append(len(setups) - 1)
                own_new.append(n_new)
                own_old.append(n_old)
                cases.append(None)
            else:  # (e.g. a shift outside the margins: a power, but no sample size)
                a = _alpha(q["alpha"], 0.5)
                delta = finite(q["true_shift"], "true_shift")
                lo, hi = check_margins(q["low"], q["high"])
                tau, df = _plan(q["design"], q["sd"], q["n_new"], q["n_old"], q["sd_old"])
                cases.append((delta, lo, hi, tau, df, a))
            own_of.append(i)
        except (StatsError, ValueError):
            pass
    # every question's guess by the approximation, the searches run in step; then from each
    # guess the walks run in step too, each round's powers integrated together (the powers at
    # the questions' own lot sizes join the first round's exact integration)
    powers: list[float | None] = [None] * len(questions)
    table = _Table([s for _, s in setups])
    walks: dict[int, tuple] = {}  # question -> (its row in the table, guess, target, n_max)
    near = [False] * len(setups)  # the guesses whose walk likely steps two sizes down
    guesses = _guesses(table.setups, table, near)
    ask: dict[int, list[int]] = {}  # the lot sizes each walk's next round integrates
    for row, ((i, setup), n0) in enumerate(zip(setups, guesses, strict=True)):
        if n0 is not None:
            walks[i] = (row, n0, setup.target, _n_max(setup.design, setup.ratio))
            ask[i] = [n0, n0 - 1, n0 - 2] if near[row] and n0 > 3 else \
                [n0, n0 - 1] if n0 > 2 else [n0]
        sizes.append((i, setup))
    found: dict[int, tuple[int, float] | None] = {}  # (n, the value at n)
    # the first round's leading cases: the setups' (own_case, the same floats) computed together
    own = table.own_cases(np.array(own_rows, dtype=np.intp), own_new, own_old)
    if len(own_rows) < len(cases):  # and the others' as they came
        mixed = np.empty((6, len(cases)))
        by_setup = np.array([c is None for c in cases])
        mixed[:, by_setup] = own
        mixed[:, ~by_setup] = np.array([c for c in cases if c is not None], dtype=float).T
        own = mixed
    # the first round also takes the size below the guess, the walk's usual second step (the
    # approximation asks for one or two more than the exact power needs), and where the guess
    # is near (_guesses) the size below that, its usual third, so that the walks mostly end
    # after one round (on the benchmark's questions all of them: a second round costs about
    # as much as 90 more sizes in the first); each walk (_walk, the plain search's _steps
    # without its generator) reads the value of each size from the round that integrated it
    # (the same float either way), on the same side of the target as the exact power
    # (_walk_powers). Which sizes are integrated together changes no value a walk reads and
    # so no step it takes: the answers do not depend on it.
    known: dict[int, dict[int, float]] = {i: {} for i in walks}
    first = True
    while ask or first:
        ids = [i for i, ns in ask.items() for _ in ns]
        ns = [n for n_list in ask.values() for n in n_list]
        rows = np.array([walks[i][0] for i in ids], dtype=np.intp)
        cols, crit = table.cases(rows, ns)
        values, own_values = _walk_powers(cols, table.target[rows], own if first else None,
                                          crit)
        if first:
            for i, v in zip(own_of, own_values, strict=True):
                powers[i] = v
            first = False
        for i, n, v in zip(ids, ns, values, strict=True):
            known[i][n] = v
        nxt = {}
        for i in ask:
            _, n0, target, n_max = walks[i]
            step = _walk(n0, target, n_max, known[i])
            if step is None or type(step) is tuple:  # its answer
                found[i] = step
            else:
                nxt[i] = [step]
        ask = nxt
    results: list[int | None] = [None] * len(questions)
    for i, setup in sizes:
        hit = found.get(i)
        try:
            if hit is not None:
                results[i] = hit[0]
            else:  # no guess, or the guess too far off: the plain search with the exact power
                results[i] = _smallest_n(setup.power_at, setup.design, setup.ratio,
                                         setup.target).n_new
        except (StatsError, ValueError):
            results[i] = None
    return list(zip(powers, results, strict=True))


__all__ = ["COARSE_MIN_ALPHA", "COARSE_MIN_DF", "DECISION_BAND", "plan_tost_many"]
