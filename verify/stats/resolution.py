"""Measurement resolution: the distinct values and the recording step against a
tenth of the tolerance."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from . import _memo
from ._frozen import fast_init
from .samples import RESOLUTION_DIGITS, finite_values, snap_to_grid


@fast_init
@dataclass(frozen=True)
class ResolutionResult:
    """How finely the values were recorded.

    Attributes
    ----------
    n : int
    distinct : int
        Number of distinct values.
    step : float or None
        Smallest positive difference between distinct sorted values (None when all are equal).
        Values are compared on a grid of 12 significant digits of the largest magnitude, so
        float noise such as 0.30000000000000004 does not count as a difference.
    tolerance : float or None
    step_over_tenth_tolerance : float or None
        step / (tolerance / 10): above 1 means the recording step is coarser than a tenth of
        the tolerance (the common-practice "ten to one" rule). None without a tolerance or step.
    """

    n: int
    distinct: int
    step: float | None
    tolerance: float | None
    step_over_tenth_tolerance: float | None

    method: str = "measurement resolution"


def resolution(
    x: Sequence[float] | np.ndarray, *, tolerance: float | None = None
) -> ResolutionResult:
    """Distinct values and the recording step, against a tenth of the tolerance.

    Examples
    --------
    >>> r = resolution([0.1, 0.2, 0.30000000000000004, 0.3], tolerance=2.0)
    >>> r.distinct, r.step, r.step_over_tenth_tolerance
    (3, 0.1, 0.5)
    """
    _check_tolerance(tolerance)
    n, distinct, step = _steps(x)
    return _result(n, distinct, step, tolerance)


def resolution_of(samples: tuple[np.ndarray, ...], *, tolerance: float | None = None
                  ) -> ResolutionResult:
    """:func:`resolution` of ``samples`` joined end to end; for read-only samples whose joined
    values were analysed with other characteristics' (:func:`verify.stats.batch.prefetch`),
    from that analysis."""
    _check_tolerance(tolerance)
    hit = _memo.recall("resolution", samples[0])
    # the batch remembered (the other samples, (n, distinct, step)) on the first sample: it
    # answers for exactly these samples (the same objects, in order). A tuple of the objects
    # compares its items by identity first, and arrays that are not the same object would
    # compare elementwise: hence the identity test of each (for the evaluation's one or two
    # samples, without a generator)
    if hit is not None and _same_objects(hit[0], samples):
        n, distinct, step = hit[1]
    else:
        n, distinct, step = _steps(samples[0] if len(samples) == 1 else np.concatenate(samples))
    return _result(n, distinct, step, tolerance)


def _same_objects(rest: tuple, samples: tuple) -> bool:
    """Whether ``rest`` holds the very objects ``samples[1:]`` holds, in order."""
    if len(rest) != len(samples) - 1:
        return False
    if len(rest) == 1:  # (the evaluation's case: the reference's parts, then the candidate's)
        return rest[0] is samples[1]
    return all(a is b for a, b in zip(rest, samples[1:], strict=True))


def _check_tolerance(tolerance: float | None) -> None:
    if tolerance is None or (type(tolerance) is float and 0.0 < tolerance < math.inf):
        return  # (a positive finite float: what the test below accepts, without its calls)
    if not (math.isfinite(tolerance) and tolerance > 0.0):
        raise ValueError(f"tolerance must be a positive finite number, not {tolerance}")


def _result(n: int, distinct: int, step: float | None, tolerance: float | None
            ) -> ResolutionResult:
    if step is None:
        return ResolutionResult(n, distinct, None, tolerance, None)
    ratio = None if tolerance is None else step / (tolerance / 10.0)
    return ResolutionResult(n, distinct, step, tolerance, ratio)


def _steps(x: Sequence[float] | np.ndarray) -> tuple[int, int, float | None]:
    """(n, distinct values, recording step or None) of the values ``x``."""
    a = finite_values(x)
    units, quantum = snap_to_grid(a)
    # np.unique(units) and the smallest gap of its sorted grid, without np.unique's wrapper
    # (which costs more than the sort at these sizes): in the sorted units each gap between
    # neighbouring distinct values is one nonzero difference of neighbours, the same
    # subtraction np.diff(np.unique(units)) makes, so distinct and step are unchanged
    s = np.sort(units)
    gaps = s[1:] - s[:-1]
    gaps = gaps[gaps != 0]
    distinct = int(gaps.size) + 1 if s.size else 0
    if distinct < 2:
        return int(a.size), distinct, None
    step_units = float(np.minimum.reduce(gaps))  # np.min(np.diff(np.unique(units)))
    return int(a.size), distinct, step_from_units(step_units, quantum)


def step_from_units(step_units: float, quantum: float) -> float:
    """The recording step in the values' unit: the smallest gap of the grid, times its
    quantum, to the grid's significant digits."""
    return float(f"{step_units * quantum:.{RESOLUTION_DIGITS}g}")
