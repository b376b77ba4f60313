"""What every kind's ``compute`` hook receives and returns: named streams in, a draft out.

A characteristic's measurements reach the checks as named :class:`Stream` objects: one declared
reference (today the old process, ``"old"``) and the stream compared with it (today the new
process, ``"new"``, or one of its ``data.stream`` sub-streams). A :class:`Comparison` holds one
such pair; a check's arithmetic reads ``reference`` and ``candidate`` and never a process name,
so that more candidate streams need no change to the checks.

A compute hook returns a :class:`Draft`: the check's result before multiplicity, and, for a
check that belongs to the multiplicity family, its family p-value and the two callables that
finish it once the family is known (``complete`` and ``finish``).

Only the typed errors of the statistics layer that say the data cannot support the computation
(:data:`CANNOT_COMPUTE`) become a HOLD "cannot be computed"; anything else is a fault of verify
and propagates.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from ..stats._frozen import fast_init
from ..stats.errors import DegenerateDataError, NotApplicableError

if TYPE_CHECKING:  # annotations only: keep this module light
    import numpy as np

    from ..decide import Verdict
    from ..model import CheckResult
    from ..spec_model import Characteristic, Spec

# the errors that mean "these data cannot support this computation" (HOLD with the reason)
CANNOT_COMPUTE = (DegenerateDataError, NotApplicableError)


def finite(x) -> float | None:
    """``x`` as a float, or None where it is missing or not finite (no NaN flows on)."""
    if type(x) is float:  # (the common case: float(x) would be x itself)
        return x if _isfinite(x) else None
    if x is None:
        return None
    x = float(x)
    return x if _isfinite(x) else None


_isfinite = math.isfinite


@fast_init
@dataclass(frozen=True)
class Stream:
    """The used measurements of one named stream of one characteristic.

    Attributes
    ----------
    name : str
        ``"old"`` (the reference today), ``"new"``, or a ``data.stream`` value.
    values : numpy.ndarray or None
        The analysis units (parts, or lot means with ``unit_of_analysis: lot``) in production
        order; None for a reference stream without values.
    parts : numpy.ndarray or None
        The part values in production order; None for a reference stream without values.
    lots : tuple
        The lot of each part value.
    counts : object, optional
        Pass-fail characteristics: the stream's inspected and failed counts by lot
        (:class:`verify.evaluate_pass_fail.Counts`).
    """

    name: str
    values: np.ndarray | None
    parts: np.ndarray | None
    lots: tuple = ()
    counts: Any = None


@fast_init
@dataclass(frozen=True)
class Comparison:
    """A candidate stream against the declared reference stream.

    ``pairs`` holds the matched pairs when the location check runs on them (paired shift
    design), ``spread_pairs`` those the spread check runs on (``data.pair`` declared).
    """

    reference: Stream
    candidate: Stream
    pairs: Any = None
    spread_pairs: Any = None


@fast_init
@dataclass(frozen=True)
class CheckInput:
    """Everything a kind's ``compute.draft`` may read for one characteristic."""

    spec: Spec
    ch: Characteristic
    data: Comparison
    final: bool = False
    fit: Any = None  # distributions.DistributionFit of the candidate's parts (non-normal models)
    fit_error: str | None = None

    def config(self, name: str):
        """The spec's settings of the check called ``name`` for this characteristic."""
        return getattr(self.ch.checks, name)


@dataclass
class Draft:
    """A check computed but not yet decided (family members wait for multiplicity).

    Attributes
    ----------
    result : CheckResult
        The result as far as it is known.
    family_p : float or None
        The p-value that enters the multiplicity adjustment (family members only).
    harm_shown : bool
        The data show harm, not merely a lack of evidence (the check stays HOLD while planned
        data are still arriving).
    finish : callable or None
        ``finish(p_adjusted, adjusted) -> Verdict``: the decision once the family is adjusted.
        A draft with ``finish`` is a member of the family.
    complete : callable or None
        ``complete(alpha_used, family_size) -> dict``: the result's fields that depend on the
        level (interval, critical value, power), run once the family's size is known; a new
        dict each call (the evaluation adds the decision's fields to it).
    family : bool
        A test that HOLDs on significance: a member of the family unless it could not be
        computed (then listed apart).
    batch : dict or None
        A question its compute hook's ``complete_batch`` answers for all drafts at once.
    """

    result: CheckResult
    family_p: float | None = None
    harm_shown: bool = False
    finish: Callable[[float, bool], Verdict] | None = None
    complete: Callable[[float, int], dict] | None = None
    family: bool = False
    batch: dict | None = None


_FIELDS: dict[type, frozenset] = {}


def replaced(obj, **changes):
    """``dataclasses.replace`` for the frozen result dataclasses, without re-running
    ``__init__`` over every field (an evaluation replaces results thousands of times): a copy
    of ``obj``'s fields with ``changes``. Classes with ``__post_init__`` or ``__slots__`` go
    through ``dataclasses.replace``."""
    cls = type(obj)
    names = _FIELDS.get(cls)
    if names is None:
        from dataclasses import fields

        plain = not hasattr(cls, "__post_init__") and not hasattr(cls, "__slots__")
        names = _FIELDS[cls] = frozenset(f.name for f in fields(cls) if f.init) if plain \
            else frozenset()
    if not names or not names.issuperset(changes):
        from dataclasses import replace

        return replace(obj, **changes)
    new = object.__new__(cls)
    # a copy of obj's __dict__ (a key-sharing dict copies as one block) with the changes,
    # set as the copy's own: what updating its empty __dict__ with both gives, for less
    values = obj.__dict__.copy()
    values.update(changes)
    object.__setattr__(new, "__dict__", values)
    return new


_DIAGNOSTIC_CLASS: list = []  # [verify.model.DiagnosticResult], looked up on first use


def diagnostic(name: str, method: str, group: str, flag: bool, note: str,
               statistic: float | None = None, p_value: float | None = None,
               extra: dict | None = None):
    """``DiagnosticResult(name, method, group, flag, note, statistic, p_value, extra)``, with
    ``extra`` None a new empty dict, the field's default (the class fills its fields in one
    step: :func:`verify.stats._frozen.fast_init`)."""
    if not _DIAGNOSTIC_CLASS:
        from ..model import DiagnosticResult

        _DIAGNOSTIC_CLASS[:] = [DiagnosticResult]
    return _DIAGNOSTIC_CLASS[0](name, method, group, flag, note, statistic, p_value,
                                {} if extra is None else extra)


def not_applicable(name: str, method: str, group: str, err: object):
    """A diagnostic (or companion) that does not apply to these data: unflagged, with the
    reason in words."""
    return diagnostic(name, method, group, False, f"not applicable: {err}")


def cannot_compute(check: str, method: str, hypothesis: str, err: object, **fields) -> Draft:
    """A HOLD "cannot be computed: <reason>" draft for data that cannot support the check."""
    from ..model import CheckResult

    res = CheckResult(
        check=check, method=method, hypothesis=hypothesis, alternative=None, margin=None,
        outcome="HOLD", reason=f"cannot be computed: {err}", **fields,
    )
    return Draft(result=res)


def no_fit(check: str, inp: CheckInput, hypothesis: str) -> Draft:
    """HOLD: the declared non-normal model could not be fitted to the candidate's parts."""
    dist = inp.ch.distribution
    return cannot_compute(check, f"{dist} fit", hypothesis,
                          f"the {dist} fit of the new parts: {inp.fit_error}")
