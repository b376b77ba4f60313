"""The location checks' plan as data: a :class:`Scenario` (one check with every input resolved)
and its :class:`PlanRow` (the smallest sufficient trial, the power at the size looked at, the
power curve)."""

from __future__ import annotations

from dataclasses import dataclass

from .choice import ALTERNATIVES, EQUIVALENCE, NON_INFERIORITY, TestChoice


@dataclass(frozen=True)
class Scenario:
    """One check to plan, with every input resolved.

    Attributes
    ----------
    characteristic : str or None
        The characteristic's name; None for the standalone form.
    check : str
        ``"target"`` (one-sample) or ``"shift"`` (new against old).
    kind : str
        ``"equivalence"`` (TOST), ``"non-inferiority"`` or ``"difference"`` (t-test).
    design : str
        ``"one-sample"``, ``"paired"``, ``"welch"`` or ``"pooled"``.
    side : str
        Which departure is harmful: ``"two-sided"``, ``"lower"`` or ``"upper"``.
    alpha, target_power : float
    sd : float
        Planning sd of one unit of analysis (paired: of one difference).
    sd_source : str
        Where the sd came from, in words.
    true_shift : float
        The assumed true effect: for margin checks the planning assumption, for difference
        tests the signed shift to detect (negative when ``side`` is lower).
    low, high : float or None
        The margin (equivalence and non-inferiority).
    margin_text : str or None
        The margin as written.
    detect : float or None
        The shift that must not go unseen (difference tests), a positive size.
    ratio : float
        ``n_new / n_old`` (two-sample designs; 1 otherwise).
    eval_n : int or None
        The lot size (new process) at which power and detectable shift are reported.
    eval_source : str
        Where ``eval_n`` came from ("min_n", "--n", or "n needed").
    unit : str
        The characteristic's unit ("" when unknown).
    unit_of_analysis : str
        ``"part"`` or ``"lot"`` (n counts lots).
    """

    characteristic: str | None
    check: str
    kind: str
    design: str
    side: str
    alpha: float
    target_power: float
    sd: float
    sd_source: str
    true_shift: float
    low: float | None = None
    high: float | None = None
    margin_text: str | None = None
    detect: float | None = None
    ratio: float = 1.0
    eval_n: int | None = None
    eval_source: str = "n needed"
    unit: str = ""
    unit_of_analysis: str = "part"

    @property
    def choice(self) -> TestChoice:
        """The test, as :func:`verify.checks.location.choice.choose_test` gives it."""
        return TestChoice(kind=self.kind, side=self.side, alternative=ALTERNATIVES[self.side],
                          low=self.low, high=self.high)

    @property
    def alternative(self) -> str:
        """The t-test alternative of the harmful direction (used for the detectable shift)."""
        return self.choice.alternative

    @property
    def bound(self) -> float | None:
        """The non-inferiority bound: the harmful side's end of the margin."""
        return self.choice.bound

    @property
    def test(self) -> str:
        """The test planned, in words: ``"TOST (welch)"``, ``"t-test (paired, less)"``."""
        if self.kind == EQUIVALENCE:
            return f"TOST ({self.design})"
        if self.kind == NON_INFERIORITY:
            return f"non-inferiority ({self.design}, harmful {self.side})"
        return f"t-test ({self.design}, {self.alternative})"


@dataclass(frozen=True)
class PowerPoint:
    """The power at one lot size."""

    n_new: int
    n_old: int | None
    power: float


@dataclass(frozen=True)
class PlanRow:
    """The plan for one check.

    Attributes
    ----------
    scenario : Scenario
    n_new, n_old : int or None
        The smallest lot sizes that reach the target power (None when no n reaches it:
        see ``note``). ``n_old`` is None for one-sample, equal to ``n_new`` for paired.
    power : float or None
        The power at ``n_new`` (at least the target).
    power_below : float or None
        The power at ``n_new - 1`` (below the target); None when ``n_new`` is 2.
    eval_n_new, eval_n_old : int or None
        The lot sizes at which ``power_at_eval`` and ``detectable_shift`` are given: the
        scenario's ``eval_n``, else the n needed (None when neither exists).
    power_at_eval : float or None
    detectable_shift : float or None
        Smallest true shift (a positive size, in the harmful direction) that the difference
        t-test at ``eval_n`` detects with the target power.
    curve : tuple of PowerPoint
        Power against n for the chart.
    note : str or None
        Why no n reaches the power, or another caveat.
    """

    scenario: Scenario
    n_new: int | None
    n_old: int | None
    power: float | None
    power_below: float | None
    eval_n_new: int | None
    eval_n_old: int | None
    power_at_eval: float | None
    detectable_shift: float | None
    curve: tuple[PowerPoint, ...]
    note: str | None = None

    @property
    def meets_target_at_eval(self) -> bool:
        return self.power_at_eval is not None and self.power_at_eval >= self.scenario.target_power


__all__ = ["PlanRow", "PowerPoint", "Scenario"]
