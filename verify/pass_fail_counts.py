"""The counts of a pass-fail characteristic by process and lot, read from the tidy table.

Apart from the evaluation on purpose: ``verify check`` prints these counts without importing
the statistics or the evaluation. A pass-fail characteristic's tidy rows hold 1.0 (failed) or
0.0 (passed) per part, or, with per-lot counts, the failed count per lot row with the
inspected count on rows named ``"<name> (inspected)"`` from the same source row.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .model import Measurements
from .spec_model import Characteristic


@dataclass(frozen=True)
class Counts:
    """The used counts of one process: per lot and in total."""

    lots: tuple[str, ...]
    inspected: tuple[int, ...]
    failed: tuple[int, ...]

    @property
    def n(self) -> int:
        return int(sum(self.inspected))

    @property
    def failures(self) -> int:
        return int(sum(self.failed))


def process_counts(meas: Measurements, ch: Characteristic, process: str) -> Counts:
    """Inspected and failed parts of ``ch`` in ``process``, by lot (order of first appearance).

    Examples
    --------
    >>> c = process_counts(m, spec.characteristic("leak_test"), "new")  # doctest: +SKIP
    >>> c.failures <= c.n  # doctest: +SKIP
    True
    """
    t = meas.table
    used = ~t["excluded"].to_numpy(dtype=bool) & (t["process"].to_numpy(dtype=object) == process)
    chars = t["characteristic"].to_numpy(dtype=object)
    sel = used & (chars == ch.name)
    order = np.lexsort((t["source_row"].to_numpy()[sel], t["order"].to_numpy()[sel]))
    lots = t["lot"].to_numpy(dtype=object)[sel][order]
    failed = t["value"].to_numpy(dtype=float)[sel][order]
    if ch.counts is None:
        inspected = np.ones(failed.size)
    else:
        # the inspected count of each lot row sits on its own tidy row from the same source row
        isel = used & (chars == ch.inspected_name)
        by_row = dict(zip(t["source_row"].to_numpy()[isel].tolist(),
                          t["value"].to_numpy(dtype=float)[isel].tolist(), strict=True))
        rows = t["source_row"].to_numpy()[sel][order]
        inspected = np.array([by_row.get(r, 0.0) for r in rows.tolist()], dtype=float)
    acc: dict[str, list[float]] = {}
    for lot, n, x in zip(lots.tolist(), inspected.tolist(), failed.tolist(), strict=True):
        a = acc.setdefault(str(lot), [0.0, 0.0])
        a[0] += n
        a[1] += x
    return Counts(lots=tuple(acc), inspected=tuple(int(v[0]) for v in acc.values()),
                  failed=tuple(int(v[1]) for v in acc.values()))
