"""Per-sample memos: what a statistic derives from a sample alone (its n, mean and sd, that it
is finite), computed once per sample however many statistics read it.

An evaluation hands the same sample to a dozen statistics (t-test, spread, capability,
normality, outliers, stability, ...); each needs the mean and sd, each checks the values are
finite. Only a **read-only array that owns its data** is remembered, and on a contract: nobody
makes it writeable again while the memo holds it (numpy would allow that; the evaluation marks
the samples it gathers read-only and never does); any other input is computed every time. The
memo is one per process: an evaluation in another thread that ends empties it too, and this
one's statistics then compute again what they ask for (each recall checks the array's
identity, so none is given another's). The memo keeps one entry per array, the array itself (so
its id is never reused while the entry lives) with what was remembered of it by topic, and is
emptied when it reaches :data:`MAX_ENTRIES` arrays or an evaluation ends (:func:`forget`).
"""

from __future__ import annotations

import numpy as np

#: An evaluation remembers about 20 things per measured characteristic (its samples' means,
#: diagnostics, one-way analyses, rank statistics) of about two arrays, all made in its batched
#: pass before the checks read them: the cap must hold a large layout's whole pass, or the memo
#: empties midway and the checks compute again what was batched (a cap of 16384 things made a
#: 1,000-characteristic layout about 30% slower per characteristic). It only bounds a memo
#: nobody empties.
MAX_ENTRIES = 1 << 15

# id(array) -> (the array, {topic: what was remembered}): a recall is two lookups without a key
# to build, and forgetting an evaluation frees a few entries per characteristic
_CACHE: dict[int, tuple[object, dict[str, object]]] = {}


def frozen(x: object) -> bool:
    """Whether ``x`` is a float array that cannot change: read-only and owning its data. (An
    array the memo holds was so when first remembered and, by the memo's contract, still is:
    found by one lookup, without a new flags object; the batched pass asks about each sample
    a dozen times.)"""
    hit = _CACHE.get(id(x))
    if hit is not None and hit[0] is x:
        return True
    if type(x) is not np.ndarray:
        return False
    flags = x.flags  # (a new flags object on every access)
    return not flags.writeable and flags.owndata


def recall(topic: str, x: object):
    """The remembered ``topic`` of ``x``, or None. Only frozen arrays are ever remembered (and
    the entry holds the array, so that its id is not reused): any other ``x`` finds none."""
    hit = _CACHE.get(id(x))
    if hit is not None and hit[0] is x:
        return hit[1].get(topic)
    return None


def known(x: object) -> dict[str, object] | None:
    """Everything remembered of ``x`` by topic (the memo's own dict: read it, never change it),
    or None when nothing is: one lookup for a reader that wants several topics of a sample,
    ``known(x).get(topic)`` being ``recall(topic, x)``."""
    hit = _CACHE.get(id(x))
    if hit is not None and hit[0] is x:
        return hit[1]
    return None


def remember(topic: str, x: object, value: object) -> None:
    """Remember ``value`` as the ``topic`` of ``x`` if it is a frozen array (else nothing)."""
    hit = _CACHE.get(id(x))
    if hit is not None and hit[0] is x:  # (frozen when first remembered, as recall trusts)
        hit[1][topic] = value
        return
    if not frozen(x):
        return
    if len(_CACHE) >= MAX_ENTRIES:
        _CACHE.clear()
    _CACHE[id(x)] = (x, {topic: value})


def topics(x: np.ndarray) -> dict[str, object]:
    """What is remembered of the frozen array ``x``, by topic, as the memo's own dict (empty
    when nothing is yet): setting ``topics(x)[topic] = value`` is ``remember(topic, x, value)``,
    for a batch that remembers several things of each of its samples. ``x`` must be frozen
    (:func:`frozen`; ValueError otherwise)."""
    hit = _CACHE.get(id(x))
    if hit is not None and hit[0] is x:
        return hit[1]
    if not frozen(x):
        raise ValueError("only a frozen array (read-only, owning its data) is remembered")
    if len(_CACHE) >= MAX_ENTRIES:
        _CACHE.clear()
    found: dict[str, object] = {}
    _CACHE[id(x)] = (x, found)
    return found


def forget() -> None:
    """Empty the memo (an evaluation does when it is finished with its samples)."""
    _CACHE.clear()


def freeze(x: np.ndarray) -> np.ndarray:
    """``x`` made read-only (in place; an array that does not own its data is copied first),
    so that the statistics may remember what they derive from it."""
    if not x.flags.owndata:
        x = x.copy()
    # the flags object's setter calls this very method by name (x.flags.writeable = False,
    # the same flag cleared): called directly it costs a fraction, which matters once per
    # gathered sample
    x.setflags(write=False)
    return x


def hold(x: np.ndarray) -> np.ndarray:
    """:func:`freeze`, the frozen array entered in the memo at once (nothing remembered of it
    yet): the batched pass that meets each gathered sample first then finds it frozen by one
    lookup (:func:`frozen`, :func:`topics`), as its flags say it is, rather than reading its
    flags twice (a new flags object each time) before it remembers anything of it."""
    x = freeze(x)
    if id(x) not in _CACHE:
        if len(_CACHE) >= MAX_ENTRIES:
            _CACHE.clear()
        _CACHE[id(x)] = (x, {})
    return x
