"""Adjusting p-values when several characteristics are tested together.

Holm's step-down method controls the family-wise error rate like Bonferroni and is never less
powerful; both are valid whatever the dependence between the tests.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

METHODS: tuple[str, ...] = ("holm", "bonferroni", "none")


def adjust(pvalues: Sequence[float] | np.ndarray, method: str) -> np.ndarray:
    """Adjusted p-values, in the input order, capped at 1.

    Parameters
    ----------
    pvalues : array_like
        p-values in [0, 1].
    method : {"holm", "bonferroni", "none"}
        ``"bonferroni"``: min(1, m p). ``"holm"`` (Holm, 1979): sort ascending, multiply the
        i-th smallest (i = 1..m) by m - i + 1, take the running maximum so the adjusted values
        keep the order of the raw ones, cap at 1. ``"none"``: a copy.

    Examples
    --------
    >>> adjust([0.01, 0.04, 0.03], "holm").tolist()
    [0.03, 0.06, 0.06]
    >>> adjust([0.01, 0.04, 0.03], "bonferroni").tolist()
    [0.03, 0.12, 0.09]
    """
    if method not in METHODS:
        raise ValueError(f"method must be one of {METHODS}, not {method!r}")
    p = np.array(pvalues, dtype=float).reshape(-1)
    if not np.all(np.isfinite(p)) or np.any((p < 0.0) | (p > 1.0)):
        raise ValueError("p-values must be finite numbers between 0 and 1")
    m = p.size
    if method == "none" or m == 0:
        return p
    if method == "bonferroni":
        return np.minimum(1.0, p * m)
    order = np.argsort(p, kind="stable")
    stepped = np.maximum.accumulate(p[order] * (m - np.arange(m)))
    out = np.empty(m)
    out[order] = np.minimum(1.0, stepped)
    return out
