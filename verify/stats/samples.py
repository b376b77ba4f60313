"""Input helpers shared by the statistics modules: a sample as finite numbers
(:func:`finite_values`), group labels as integer codes (:func:`group_codes`) and values snapped
to a grid of significant digits so that float noise neither creates nor breaks a tie
(:func:`snap_to_grid`)."""

from __future__ import annotations

import math
from collections.abc import Hashable

import numpy as np

from . import _memo
from .errors import DegenerateDataError


def finite_values(x: object, what: str = "values") -> np.ndarray:
    """``x`` as a 1-D float array; DegenerateDataError when empty or not all finite (a
    read-only float sample found finite once is not checked again)."""
    if _memo.recall("finite", x) is not None:
        return x
    try:
        a = np.asarray(x, dtype=float)
    except (TypeError, ValueError) as exc:
        raise DegenerateDataError(f"the {what} must be numbers ({exc})") from None
    if a.ndim != 1:
        a = a.reshape(-1)
    if a.size == 0:
        raise DegenerateDataError(f"no {what}")
    if not math.isfinite(float(np.add.reduce(a))) and not np.isfinite(a).all():
        bad = int(np.count_nonzero(~np.isfinite(a)))
        raise DegenerateDataError(f"the {what} must be finite numbers ({bad} are NaN or infinite)")
    if a is x:  # (remembered only if frozen)
        _memo.remember("finite", a, True)
    return a


def group_codes(labels: object, n: int, what: str = "lot labels") -> tuple[list, np.ndarray]:
    """Labels in order of first appearance and an integer code per value.

    The codes of a tuple of text labels are remembered by content, read-only: the statistics
    of a sample's lots share them, and so do the characteristics measured on the same parts."""
    if type(labels) is tuple:
        # the same tuple object again (a stream's lots, read by several statistics): found by
        # identity, without hashing its labels; the entry holds the tuple, so its id stays its
        same = _CODES_OF.get(id(labels))
        hit = same[1] if same is not None and same[0] is labels else _CODES.get(labels)
        if hit is None:
            hit = _group_codes(labels, n, what)
            if all(type(v) is str for v in labels):  # equal only if the same text
                hit[1].flags.writeable = False
                if len(_CODES) >= 256:
                    _CODES.clear()
                    _CODES_OF.clear()
                _CODES[labels] = hit
                _CODES_OF[id(labels)] = (labels, hit)
            return list(hit[0]), hit[1]
        if same is None or same[0] is not labels:
            if len(_CODES_OF) >= _CODES_OF_MAX:
                _CODES_OF.clear()
            _CODES_OF[id(labels)] = (labels, hit)
        if hit[1].size != n:
            _group_codes(labels, n, what)  # raises: the labels do not match the values
        return list(hit[0]), hit[1]
    return _group_codes(labels, n, what)


_CODES: dict[tuple, tuple[list, np.ndarray]] = {}
_CODES_OF: dict[int, tuple[tuple, tuple[list, np.ndarray]]] = {}  # id -> (the tuple, its codes)
_CODES_OF_MAX = 4096  # a few tuples per characteristic: a large layout's, bounded


def forget() -> None:
    """Empty the remembered lot codes (an evaluation does when it ends, with the memo: the
    tuples they hold, a stream's lots each, are freed with its samples)."""
    _CODES.clear()
    _CODES_OF.clear()


def group_sizes(codes: np.ndarray, k: int) -> np.ndarray:
    """The count of each code 0..k-1, ``np.bincount(codes, minlength=k)``; for read-only
    codes (remembered by content: :func:`group_codes`) remembered, read-only, with them."""
    hit = _memo.recall("group_sizes", codes)
    if hit is not None and hit.size == k:
        return hit
    sizes = np.bincount(codes, minlength=k)
    if _memo.frozen(codes):
        sizes.flags.writeable = False
        _memo.remember("group_sizes", codes, sizes)
    return sizes


def _group_codes(labels: object, n: int, what: str) -> tuple[list, np.ndarray]:
    lab = list(labels) if not isinstance(labels, np.ndarray) else labels.tolist()
    if len(lab) != n:
        raise ValueError(f"{len(lab)} {what} for {n} values: give one label per value")
    order: dict[Hashable, int] = {}
    codes = np.empty(n, dtype=np.intp)
    for i, key in enumerate(lab):
        codes[i] = order.setdefault(key, len(order))
    return list(order), codes


def median(a: np.ndarray) -> float:
    """The median of a non-empty 1-D float array by partition: the middle value, or the mean
    of the two middle values, ``(lo + hi) / 2``, exactly as :func:`numpy.median` computes it
    (without its axis handling and NaN checks, which cost more than the partition at small n).
    """
    h = a.size // 2
    p = a.copy()  # np.partition's copy, partitioned in place without its wrapper
    if a.size % 2:
        p.partition(h)
        return float(p[h])
    p.partition((h - 1, h))
    return float((p[h - 1] + p[h]) / 2.0)


RESOLUTION_DIGITS = 12


def snap_to_grid(a: np.ndarray, digits: int = RESOLUTION_DIGITS) -> tuple[np.ndarray, float]:
    """Values as whole multiples of a quantum: ``digits`` significant digits of max |a|.

    Returns the multiples (floats holding whole numbers, below 10^digits in size, which float64
    holds exactly) and the quantum. Used so that float noise (0.1 + 0.2 versus 0.3) neither
    creates a distinct value nor breaks a tie. All-zero input gives quantum 1.
    """
    scale_ref = float(np.maximum.reduce(np.abs(a))) if a.size else 0.0
    if scale_ref == 0.0:
        return np.zeros_like(a, dtype=float), 1.0
    quantum = 10.0 ** (math.floor(math.log10(scale_ref)) - (digits - 1))
    if quantum < 1e-290:  # magnitudes near the float floor: leave the values as they are
        return a.astype(float), 1.0
    return np.round(a / quantum), quantum
