"""_memo.freeze clears the writeable flag with ``setflags(write=False)``, the method the
flags object's setter calls (the plain route: ``x.flags.writeable = False``): every flag the
same either way, for an owner, a copied view, a 2-D and an empty array."""

from __future__ import annotations

import numpy as np
import pytest

from verify.stats import _memo

_FLAGS = ("C_CONTIGUOUS", "F_CONTIGUOUS", "OWNDATA", "WRITEABLE", "ALIGNED", "WRITEBACKIFCOPY")


def _plain_freeze(x: np.ndarray) -> np.ndarray:
    if not x.flags.owndata:
        x = x.copy()
    x.flags.writeable = False
    return x


@pytest.mark.parametrize("make", [
    lambda: np.arange(7.0),
    lambda: np.arange(12.0)[2:9],
    lambda: np.arange(12.0).reshape(3, 4),
    lambda: np.zeros(0),
    lambda: np.arange(5, dtype=np.int64),
])
def test_freeze_sets_the_flags_the_plain_route_sets(make):
    a, b = _memo.freeze(make()), _plain_freeze(make())
    assert {f: a.flags[f] for f in _FLAGS} == {f: b.flags[f] for f in _FLAGS}
    assert a.dtype == b.dtype and a.shape == b.shape and a.tobytes() == b.tobytes()
    assert not a.flags.writeable and a.flags.owndata and _memo.frozen(a)
    with pytest.raises(ValueError):
        a[...] = 0
