"""The plan of ``verify plan`` as data: frozen dataclasses, no computation, no words.

A :class:`Plan` is a title, its inputs, and one :class:`PlanPart` per kind package whose
``plan`` hook planned something (``verify.checks.<package>.plan``); a part's rows are that
package's own frozen plan rows, shown by the same package's hooks. :class:`Options` holds the
command line's overrides; :class:`SpecPlanning` is what a ``plan`` hook gets to plan a spec.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from ..errors import UsageError

if TYPE_CHECKING:
    from ..model import Measurements
    from ..spec_model import Characteristic, Spec

DEFAULT_POWER = 0.9  # the wanted power of the standalone form (a spec has plan.power)
DEFAULT_ALPHA = 0.05
MAX_ALPHA = 0.2  # the spec format's upper bound for alpha


@dataclass(frozen=True)
class Options:
    """Planning options from the command line (None: not given).

    ``characteristics`` limits the plan to the named characteristics.
    """

    sd: float | None = None
    sd_diff: float | None = None
    power: float | None = None
    true_shift: float | None = None
    pair_correlation: float | None = None
    detect: float | None = None
    n: int | None = None
    characteristics: tuple[str, ...] = ()
    mean: float | None = None  # conformance: the assumed new-process mean
    allowed_failures: int = 0  # pass-fail rate checks
    rate_old: float | None = None  # pass-fail rate_shift: the old failure rate
    rate_detect: float | None = None  # pass-fail rate_shift without a margin


@dataclass(frozen=True)
class SpecPlanning:
    """What a kind's ``plan`` hook gets to plan the checks of a spec.

    Attributes
    ----------
    spec : Spec
    measurements : Measurements or None
        None when the data file does not exist yet (then the command line gives the sd).
    options : Options
    characteristics : tuple of Characteristic
        The characteristics to plan (all, or those ``--characteristic`` names), in spec order.
    power : float
        The wanted power (``--power``, else the spec's ``plan.power``).
    planned_elsewhere : bool
        Whether another kind package's hook has something to plan among ``characteristics``
        (a hook may word "nothing to plan" differently when the whole plan would be empty).
    """

    spec: Spec
    measurements: Measurements | None
    options: Options
    characteristics: tuple[Characteristic, ...]
    power: float
    planned_elsewhere: bool = False


@dataclass(frozen=True)
class PlanPart:
    """What one kind package planned.

    Attributes
    ----------
    package : str
        The kind package (``verify.checks.<package>``) whose ``plan`` hook made the part and
        whose ``plan`` and ``plan_sheet`` hooks show it.
    rows : tuple
        The package's own frozen plan rows, one per planned check.
    inputs : tuple of (input, value, where it came from)
        Inputs the part adds to the plan's list of inputs.
    method : tuple of str
        The part's method, in sentences.
    notes : tuple of str
        Sentences printed under its table.
    """

    package: str
    rows: tuple[Any, ...]
    inputs: tuple[tuple[str, str, str], ...] = ()
    method: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class Plan:
    """A whole plan: its inputs, a part per kind package that planned, the method in words.

    ``inputs`` holds (input, value, where it came from) triples for the workbook; ``method``
    and ``notes`` are the parts' sentences in order.
    """

    title: str
    source: str | None  # the spec file, or None for the standalone form
    stem: str  # file-name stem of the workbook
    inputs: tuple[tuple[str, str, str], ...]
    parts: tuple[PlanPart, ...]
    method: tuple[str, ...] = ()
    notes: tuple[str, ...] = field(default=())

    def part(self, package: str) -> PlanPart | None:
        """The part planned by ``package`` (None when it planned nothing)."""
        return next((p for p in self.parts if p.package == package), None)

    def rows_of(self, package: str) -> tuple[Any, ...]:
        """The rows ``package`` planned (empty when none)."""
        p = self.part(package)
        return () if p is None else p.rows


def validate_numbers(*, alpha: float | None = None, power: float | None = None,
                     ratio: float | None = None, sd: float | None = None,
                     sd_diff: float | None = None, r: float | None = None,
                     detect: float | None = None, n: int | None = None) -> None:
    """Refuse planning numbers out of range, all problems together (UsageError)."""
    problems = []

    def finite(x: float) -> bool:
        return isinstance(x, (int, float)) and math.isfinite(x)

    if alpha is not None and not (finite(alpha) and 0 < alpha <= MAX_ALPHA):
        problems.append(f"--alpha {alpha!r}: must satisfy 0 < alpha <= {MAX_ALPHA}")
    if power is not None and not (finite(power) and 0 < power < 1):
        problems.append(f"--power {power!r}: must lie strictly between 0 and 1")
    if (power is not None and alpha is not None and finite(power) and finite(alpha)
            and 0 < power <= alpha):
        problems.append(f"--power {power:g} must exceed alpha ({alpha:g}): a test rejects "
                        "that often by chance alone")
    for label, v in (("--ratio", ratio), ("--sd", sd), ("--sd-diff", sd_diff),
                     ("--detect", detect)):
        if v is not None and not (finite(v) and v > 0):
            problems.append(f"{label} {v!r}: must be a finite number greater than 0")
    if r is not None and not (finite(r) and -1 < r < 1):
        problems.append(f"--pair-correlation {r!r}: must lie strictly between -1 and 1")
    if n is not None and n < 2:
        problems.append(f"--n {n}: must be at least 2")
    if problems:
        raise UsageError(problems)


__all__ = ["DEFAULT_ALPHA", "DEFAULT_POWER", "MAX_ALPHA", "Options", "Plan", "PlanPart",
           "SpecPlanning", "validate_numbers"]
