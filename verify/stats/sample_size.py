"""Sample size: the smallest lot sizes at which a t-test, TOST or non-inferiority test reaches
a target power.

Every search follows one skeleton (:class:`_Search`): validate what all three share (design,
alpha, target power, ratio, sd), refuse a question no lot size can answer, then find the
smallest ``n_new`` (``n_old`` following by ``ratio``) whose power reaches the target, by the
power functions of :mod:`verify.stats.power_of_tests`. The target power defaults to
:data:`~verify.stats.power_of_tests.DEFAULT_POWER` in every search.

TOST searches first with the quick shifted-t approximation and then step with the exact power
from its answer, evaluating the lot sizes around it in one vectorised pass; the answer is the
same as the plain search's (tests hold them together).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy import special

from ._checks import check_harmful, check_margins, finite, positive
from ._frozen import fast_init
from .core import check_alternative, t_cdf, t_quantile
from .errors import NotApplicableError
from .noncentral import _clip01
from .power_of_tests import (
    DEFAULT_POWER,
    _alpha,
    _count,
    _target_power,
    _tau_df,
    _tost_power_many,
    power_noninferiority,
    power_t,
    power_tost,
)
from .ttests import check_design

#: The largest lot size a sample-size search will propose.
MAX_N = 100_000

#: Lot sizes below and above the approximate answer whose exact power is computed together
#: (the shifted-t approximation tends to ask for one or two more than the exact power).
WINDOW = (2, 1)


@fast_init
@dataclass(frozen=True)
class SampleSize:
    """Smallest lot sizes that reach a target power.

    Attributes
    ----------
    n_new : int
        Size of the new lot (one-sample: the lot; paired: the number of pairs).
    n_old : int or None
        Size of the old lot: ``max(2, ceil(n_new / ratio))`` for two-sample designs, equal
        to ``n_new`` for paired, ``None`` for one-sample.
    power : float
        Power achieved at these sizes (at least ``target_power``; at ``n_new - 1`` it is
        below).
    target_power : float
    """

    n_new: int
    n_old: int | None
    power: float
    target_power: float


#: Taken off n_new / ratio before rounding up, so that a ratio such as 1/3 does not ask for one
#: old unit too many through the division's rounding.
_RATIO_SLACK = 1e-9


def old_size(design: str, n_new: int, ratio: float) -> int | None:
    """The old lot's size for ``n_new`` units in the new one: none for one-sample, ``n_new``
    for paired (pairs), ``max(2, ceil(n_new / ratio))`` for two-sample designs."""
    if design == "one-sample":
        return None
    if design == "paired":
        return n_new
    return max(2, math.ceil(n_new / ratio - _RATIO_SLACK))


def old_sizes(n_new: np.ndarray, ratio: np.ndarray) -> np.ndarray:
    """:func:`old_size` of a two-sample design for many (n_new, ratio) at once, as floats:
    the same division, subtraction and ceiling element by element."""
    return np.maximum(2.0, np.ceil(n_new / ratio - _RATIO_SLACK))


def _check_ratio(design: str, ratio: float) -> float:
    r = positive(ratio, "ratio")
    if design in ("one-sample", "paired") and r != 1.0:
        raise ValueError(f"ratio (n_new / n_old) applies only to two-sample designs, not {design}")
    return r


_NO_GUESS = object()

#: The lot sizes whose approximate powers a TOST guess reads first: from one below to three
#: above its normal-theory start (the shifted-t approximation asks for up to three more than the
#: normal theory at small lot sizes, none more at large ones).
GUESS_WINDOW = (-1, 3)

_ONE, _POOLED, _WELCH = 0, 1, 2  # how a design's (tau, df) is computed


def _normal_starts(delta, lo, hi, alpha, target, kind, s1, s2, ratio) -> np.ndarray:
    """The normal-theory lot size of TOST questions given as arrays (``kind`` :data:`_ONE`,
    :data:`_POOLED` or :data:`_WELCH`; ``s2`` NaN but for welch): with the sd of the estimate
    tau, the power ``Phi((high - delta)/tau - z) + Phi((delta - low)/tau - z) - 1`` (z the
    normal quantile at 1 - alpha) equals the target where x = 1/tau solves it (Newton's method,
    from the root of the nearer margin's side alone, which lies above it), and the lot size
    follows from tau as the design's (tau, df) has it (n_old = n_new / ratio). A start only: the
    guesses read the approximation around it."""
    up, down = hi - delta, delta - lo
    z = special.ndtri(1.0 - alpha)
    x = (z + special.ndtri(0.5 * (1.0 + target))) / np.minimum(up, down)
    for _ in range(4):
        f = special.ndtr(up * x - z) + special.ndtr(down * x - z) - 1.0 - target
        slope = up * np.exp(-0.5 * (up * x - z) ** 2) + down * np.exp(-0.5 * (down * x - z) ** 2)
        x = np.maximum(x - f * math.sqrt(2.0 * math.pi) / slope, 0.5 * x)
    # (s2 is NaN but for welch, whose branch alone reads it)
    var = np.where(kind == _ONE, s1 * s1,
                   np.where(kind == _POOLED, s1 * s1 * (1.0 + ratio), s1 * s1 + s2 * s2 * ratio))
    n = var * x * x
    return np.where(np.isfinite(n), np.ceil(np.minimum(n, 4.0 * MAX_N)), 2.0)


def _guess_sizes(starts: np.ndarray, n_max: np.ndarray) -> np.ndarray:
    """Each start's window of lot sizes (:data:`GUESS_WINDOW`), clipped to [2, n_max] (sizes
    repeated at a clipped end are harmless), one row per start."""
    span = np.arange(GUESS_WINDOW[0], GUESS_WINDOW[1] + 1, dtype=float)
    return np.clip(starts[:, None] + span, 2.0, n_max[:, None]).astype(np.int64)


def _first_reaching(sizes: np.ndarray, powers: np.ndarray, target: np.ndarray):
    """(found, first): whether each row's window holds a size reaching the target just above
    one falling short (or at the smallest size, 2), and the column of its first such size."""
    reached = powers >= target[:, None]
    first = reached.argmax(axis=1)
    return reached.any(axis=1) & ((first > 0) | (sizes[:, 0] == 2)), first


def _n_max(design: str, ratio: float) -> int:
    if design in ("one-sample", "paired"):
        return MAX_N
    # both n_new and n_old = ceil(n_new / ratio) must stay within MAX_N
    return max(2, min(MAX_N, math.floor(MAX_N * ratio + 1e-9)))


def _window(design: str, ratio: float, n0: int) -> list[int]:
    """The lot sizes around a guess whose exact power is computed together."""
    return list(range(max(2, n0 - WINDOW[0]), min(_n_max(design, ratio), n0 + WINDOW[1]) + 1))


def _smallest_n(
    power_at: Callable[[int, int | None], float],
    design: str,
    ratio: float,
    target: float,
    *,
    approx: Callable[[int, int | None], float] | None = None,
    many: Callable[[list[int]], list[float]] | None = None,
    guess: int | None | object = _NO_GUESS,
) -> SampleSize:
    """Smallest n_new (n_old following by ratio) with power >= target.

    Doubling then bisection (power rises with n), then a check that n_new - 1 falls short.
    With ``approx`` (a cheap approximation of ``power_at``), the search first runs on the
    approximation and then steps from its answer with the exact power, which usually costs two
    or three exact evaluations instead of a dozen; the answer is the same. With ``many`` (the
    exact power for a list of n_new in one vectorised pass), the lot sizes around the guess
    are evaluated together first; the stepping then reads them (and computes any other one
    singly), so the answer is again the same. ``guess`` gives the approximate search's answer
    when the caller has it already (None: it found none).
    """
    n_max = _n_max(design, ratio)

    def pw(n: int) -> float:
        return power_at(n, old_size(design, n, ratio))

    if approx is not None:
        if guess is _NO_GUESS:
            try:
                n0 = _smallest_n(approx, design, ratio, target).n_new
            except NotApplicableError:
                n0 = None
        else:
            n0 = guess
        if n0 is not None:
            step_pw = pw
            if many is not None:
                window = _window(design, ratio, n0)
                known = dict(zip(window, many(window), strict=True))

                def step_pw(n: int) -> float:
                    return known[n] if n in known else pw(n)

            found = _step_to_smallest(step_pw, n0, target, n_max)
            if found is not None:
                n, p = found
                return SampleSize(n_new=n, n_old=old_size(design, n, ratio), power=p,
                                  target_power=target)

    search = _search(design, ratio, target)
    try:
        n = next(search)
        while True:
            n = search.send(pw(n))
    except StopIteration as stop:
        return stop.value


def _search(design: str, ratio: float, target: float):
    """The plain search as a generator: it yields each n_new whose power it needs, is sent
    that power, and returns the :class:`SampleSize` (so that many searches can run in step,
    their powers computed together: :func:`verify.stats.sample_size_many._bisections`)."""
    n_max = _n_max(design, ratio)
    lo, hi = 1, 2  # lo falls short (or is below the minimum of 2); hi is the candidate
    p_hi = yield hi
    while p_hi < target:
        if hi >= n_max:
            raise NotApplicableError(
                f"more than {MAX_N} units per process would be needed to reach power {target:g}"
            )
        lo, hi = hi, min(2 * hi, n_max)
        p_hi = yield hi
    while hi - lo > 1:
        mid = (lo + hi) // 2
        p_mid = yield mid
        if p_mid >= target:
            hi, p_hi = mid, p_mid
        else:
            lo = mid
    # guard against a non-monotone step: make sure one fewer does not already suffice
    while hi > 2:
        p_prev = yield hi - 1
        if p_prev < target:
            break
        hi, p_hi = hi - 1, p_prev
    return SampleSize(n_new=hi, n_old=old_size(design, hi, ratio), power=p_hi, target_power=target)


def _step_to_smallest(pw, n0: int, target: float, n_max: int, steps: int = 12):
    """From a guess n0, walk with the exact power to the smallest n reaching ``target``:
    (n, power), or None when the guess was too far off (the caller then searches fully)."""
    walk = _steps(n0, target, n_max, steps)
    try:
        n = next(walk)
        while True:
            n = walk.send(pw(n))
    except StopIteration as stop:
        return stop.value


def _steps(n0: int, target: float, n_max: int, steps: int = 12):
    """:func:`_step_to_smallest` as a generator (yields each n whose power it needs, is sent
    that power, returns its answer), so that many walks can run in step; each step is
    :func:`_walk` of the powers sent so far."""
    seen: dict[int, float] = {}
    while True:
        step = _walk(n0, target, n_max, seen, steps)
        if step is None or type(step) is tuple:  # the answer
            return step
        seen[step] = yield step


def _walk(n0: int, target: float, n_max: int, seen: dict[int, float], steps: int = 12):
    """The walk from n0 as far as the powers ``seen`` (n -> power) take it: the next n whose
    power it needs (an int), or its answer, (n, power) or None (the guess too far off). From
    n0 reaching the target it steps down while one fewer still reaches it (to 2 at least),
    else up until it reaches it (to n_max at most), ``steps`` steps at most. It reads only the
    powers on its path, so ``seen`` may hold others (those integrated in advance)."""
    if n0 not in seen:
        return n0
    n, p = n0, seen[n0]
    if p >= target:
        for _ in range(steps):
            if n <= 2:
                return n, p
            if n - 1 not in seen:
                return n - 1
            p_prev = seen[n - 1]
            if p_prev < target:
                return n, p
            n, p = n - 1, p_prev
        return None
    for _ in range(steps):
        if n >= n_max:
            return None
        if n + 1 not in seen:
            return n + 1
        n, p = n + 1, seen[n + 1]
        if p >= target:
            return n, p
    return None


class _Search:
    """The skeleton of every sample-size search: the validated inputs all tests share.

    ``alpha_upper`` is the largest alpha the test accepts (TOST: 0.5, its two one-sided tests
    at alpha each). A test adds its own inputs, refuses a question no n answers (a
    :class:`~verify.stats.errors.NotApplicableError` naming why), and hands its power at
    ``(n_new, n_old)`` to :meth:`smallest`.
    """

    def __init__(self, sd, *, design, alpha, power, ratio, sd_old, alpha_upper=1.0):
        check_design(design)
        self.design = design
        self.a = _alpha(alpha, alpha_upper)
        self.target = _target_power(power)
        self.ratio = _check_ratio(design, ratio)
        self.sd, self.sd_old = sd, sd_old
        self.s1 = positive(sd, "sd")

    def smallest(self, power_at, **faster) -> SampleSize:
        """The smallest sizes with ``power_at(n_new, n_old) >= target`` (see _smallest_n)."""
        return _smallest_n(power_at, self.design, self.ratio, self.target, **faster)


def sample_size_t(
    shift: float,
    sd: float,
    *,
    design: str,
    alpha: float = 0.05,
    alternative: str = "two-sided",
    power: float = DEFAULT_POWER,
    ratio: float = 1.0,
    sd_old: float | None = None,
) -> SampleSize:
    """Smallest lot size at which the t-test detects ``shift`` with the target power.

    ``ratio = n_new / n_old`` for two-sample designs: the search runs over ``n_new`` and
    sets ``n_old = max(2, ceil(n_new / ratio))``.

    Raises
    ------
    NotApplicableError
        The shift is zero or points away from a one-sided alternative (no n reaches the
        power), or more than :data:`MAX_N` units per process would be needed.

    Examples
    --------
    >>> s = sample_size_t(1.0, 1.0, design="pooled", power=0.8)
    >>> s.n_new, s.n_old
    (17, 17)
    """
    check_alternative(alternative)
    q = _Search(sd, design=design, alpha=alpha, power=power, ratio=ratio, sd_old=sd_old)
    delta = finite(shift, "shift")
    if delta == 0.0:
        raise NotApplicableError("a zero shift cannot be detected at any sample size")
    if (alternative == "greater" and delta < 0.0) or (alternative == "less" and delta > 0.0):
        raise NotApplicableError(
            f"a shift of {delta:g} lies on the other side of the alternative {alternative!r}:"
            " no sample size detects it"
        )

    def power_at(n_new: int, n_old: int | None) -> float:
        return power_t(delta, sd, n_new, n_old, design=design, alpha=q.a,
                       alternative=alternative, sd_old=sd_old)

    return q.smallest(power_at)


def sample_size_noninferiority(
    true_shift: float,
    sd: float,
    *,
    design: str,
    alpha: float = 0.05,
    bound: float,
    harmful: str,
    power: float = DEFAULT_POWER,
    ratio: float = 1.0,
    sd_old: float | None = None,
) -> SampleSize:
    """Smallest lot size at which the non-inferiority test rejects with the target power.

    Raises
    ------
    NotApplicableError
        ``true_shift`` is on the harmful side of ``bound`` or on it, or more than
        :data:`MAX_N` units would be needed.

    Examples
    --------
    >>> s = sample_size_noninferiority(0.0, 1.0, design="pooled", bound=-1.0,
    ...                                harmful="lower", power=0.9)
    >>> s.n_new, s.power >= 0.9
    (18, True)
    """
    q = _Search(sd, design=design, alpha=alpha, power=power, ratio=ratio, sd_old=sd_old)
    delta = finite(true_shift, "true_shift")
    b = finite(bound, "bound")
    check_harmful(harmful)
    if (harmful == "lower" and not delta > b) or (harmful == "upper" and not delta < b):
        raise NotApplicableError(
            f"the true shift {delta:g} is not on the safe side of the bound {b:g}:"
            " non-inferiority cannot be shown at any sample size"
        )

    def power_at(n_new: int, n_old: int | None) -> float:
        return power_noninferiority(delta, sd, n_new, n_old, design=design, alpha=q.a,
                                    bound=b, harmful=harmful, sd_old=sd_old)

    return q.smallest(power_at)


def sample_size_tost(
    true_shift: float,
    sd: float,
    *,
    design: str,
    alpha: float = 0.05,
    low: float,
    high: float,
    power: float = DEFAULT_POWER,
    ratio: float = 1.0,
    sd_old: float | None = None,
) -> SampleSize:
    """Smallest lot size at which TOST shows equivalence with the target (exact) power.

    Raises
    ------
    NotApplicableError
        ``true_shift`` is not strictly inside ``(low, high)`` (equivalence cannot then be
        shown with power above alpha), or more than :data:`MAX_N` units would be needed.

    Examples
    --------
    >>> s = sample_size_tost(0.0, 1.0, design="pooled", low=-1.0, high=1.0, power=0.9)
    >>> s.n_new, s.power >= 0.9
    (23, True)
    """
    q = _TostSize(true_shift, sd, design=design, alpha=alpha, low=low, high=high,
                  power=power, ratio=ratio, sd_old=sd_old)
    return q.smallest(q.power_at, approx=q.approx_at, many=q.power_many, guess=q.guess())


class _TostSize(_Search):
    """A validated TOST sample-size question and its power functions."""

    def __init__(self, true_shift, sd, *, design, alpha, low, high, power, ratio, sd_old):
        super().__init__(sd, design=design, alpha=alpha, power=power, ratio=ratio,
                         sd_old=sd_old, alpha_upper=0.5)
        self.delta = finite(true_shift, "true_shift")
        self.lo, self.hi = check_margins(low, high)
        if design == "welch":
            self.s2 = self.s1 if sd_old is None else positive(sd_old, "sd_old")
        else:
            if sd_old is not None:  # as _plan refuses it
                raise ValueError("the pooled design assumes one common sd: leave sd_old out"
                                 if design == "pooled" else
                                 f"sd_old applies only to the welch design, not {design!r}")
            self.s2 = None
        if not self.lo < self.delta < self.hi:
            raise NotApplicableError(
                f"the true shift {self.delta:g} is not inside the equivalence margins "
                f"({self.lo:g}, {self.hi:g}): equivalence cannot be shown at any sample size"
            )

    @classmethod
    def of_question(cls, q: dict) -> _TostSize:
        """``_TostSize(q["true_shift"], q["sd"], design=q["design"], ...)`` of a question dict
        (:func:`~verify.stats.sample_size_many.plan_tost_many`'s). Where every number is a plain
        float (``sd_old`` also None) and passes the checks, the attributes are set directly:
        each is the float the checks return for it (``float(v)`` of a float is ``v``). Any other
        question runs the constructor, which raises as it does (tests/test_plan_shortcuts.py
        holds the two together)."""
        delta, sd, a, lo, hi = q["true_shift"], q["sd"], q["alpha"], q["low"], q["high"]
        target, ratio, sd_old, design = q["power"], q["ratio"], q["sd_old"], q["design"]
        if (type(delta) is float and type(sd) is float and type(a) is float
                and type(lo) is float and type(hi) is float and type(target) is float
                and type(ratio) is float and 0.0 < a < 0.5 and 0.0 < target < 1.0
                and 0.0 < sd < math.inf and 0.0 < ratio < math.inf
                and -math.inf < lo < delta < hi < math.inf):
            if design == "welch":
                if sd_old is None:
                    s2 = sd
                elif type(sd_old) is float and 0.0 < sd_old < math.inf:
                    s2 = sd_old
                else:
                    s2 = _NO_GUESS
            elif sd_old is None and (design == "pooled" or (
                    ratio == 1.0 and design in ("one-sample", "paired"))):
                s2 = None
            else:
                s2 = _NO_GUESS
            if s2 is not _NO_GUESS:
                setup = object.__new__(cls)
                setup.__dict__.update(design=design, a=a, target=target, ratio=ratio, sd=sd,
                                      sd_old=sd_old, s1=sd, delta=delta, lo=lo, hi=hi, s2=s2)
                return setup
        return cls(delta, sd, design=design, alpha=a, low=lo, high=hi, power=target,
                   ratio=ratio, sd_old=sd_old)

    def power_at(self, n_new: int, n_old: int | None) -> float:
        return power_tost(self.delta, self.sd, n_new, n_old, design=self.design, alpha=self.a,
                          low=self.lo, high=self.hi, sd_old=self.sd_old)

    def _tau_df(self, n_new: int, n_old: int | None) -> tuple[float, float]:
        # inputs validated once, in __init__: the arithmetic of _plan without its checks
        return _tau_df(self.design, self.s1, self.s2, n_new, n_old)

    def approx_at(self, n_new: int, n_old: int | None) -> float:
        """:func:`power_tost_shifted_t` (the same arithmetic, validated once)."""
        tau, df = self._tau_df(n_new, n_old)
        c = t_quantile(1.0 - self.a, df)
        return _clip01(t_cdf((self.hi - self.delta) / tau - c, df)
                       - t_cdf((self.lo - self.delta) / tau + c, df))

    def own_case(self, n_new: object, n_old: object) -> tuple:
        """(delta, low, high, tau, df, alpha) of the power at the question's own lot sizes (those
        of :meth:`own_sizes`)."""
        tau, df = self._tau_df(*self.own_sizes(n_new, n_old))
        return self.delta, self.lo, self.hi, tau, df, self.a

    def own_sizes(self, n_new: object, n_old: object) -> tuple[int, int | None]:
        """The question's own (n_new, n_old) by the count checks of
        :func:`~verify.stats.power_of_tests._plan` (ValueError as there), its other checks made
        in __init__ already."""
        n1 = _count(n_new, "n_new")
        if self.design in ("one-sample", "paired"):
            if n_old is not None and (self.design == "one-sample"
                                      or _count(n_old, "n_old") != n1):
                raise ValueError(f"n_old does not fit the {self.design} design")
            n2 = None
        elif n_old is None:
            raise ValueError(f"the {self.design} design needs n_old")
        else:
            n2 = _count(n_old, "n_old")
        return n1, n2

    def case(self, n: int) -> tuple:
        """(delta, low, high, tau, df, alpha) of the exact power at n_new = n."""
        tau, df = self._tau_df(n, old_size(self.design, n, self.ratio))
        return self.delta, self.lo, self.hi, tau, df, self.a

    def power_many(self, ns: list[int]) -> list[float]:
        return [float(x) for x in _tost_power_cases([self.case(n) for n in ns])]

    def guess(self) -> int | None:
        """n_new by the shifted-t approximation (None where it finds none): the first size in
        the window around the normal-theory start that reaches the target just above one
        falling short, else the plain search on the approximation. The same guess as
        :func:`~verify.stats.sample_size_many.plan_tost_many`'s for many questions (the same
        array functions; its approximate powers are this one's, element by element)."""
        kind = _WELCH if self.design == "welch" else _POOLED if self.design == "pooled" else _ONE
        one = [np.array([float(v)]) for v in (
            self.delta, self.lo, self.hi, self.a, self.target, kind, self.s1,
            np.nan if self.s2 is None else self.s2, self.ratio)]
        sizes = _guess_sizes(_normal_starts(*one), np.array([_n_max(self.design, self.ratio)],
                                                            dtype=float))
        powers = np.array([[self.approx_at(n, old_size(self.design, n, self.ratio))
                            for n in sizes[0].tolist()]])
        found, first = _first_reaching(sizes, powers, one[4])
        if found[0]:
            return int(sizes[0, first[0]])
        try:
            return _smallest_n(self.approx_at, self.design, self.ratio, self.target).n_new
        except NotApplicableError:
            return None


def _tost_power_cases(cases: list[tuple]) -> np.ndarray:
    """Exact TOST power for cases (delta, low, high, tau, df, alpha) in one pass."""
    if not cases:
        return np.zeros(0)
    cols = np.array(cases, dtype=float).T
    return _tost_power_many(cols[0], cols[1], cols[2], cols[3], cols[4], cols[5])


__all__ = [
    "MAX_N",
    "SampleSize",
    "old_size",
    "sample_size_noninferiority",
    "sample_size_t",
    "sample_size_tost",
]
