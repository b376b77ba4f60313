"""Pass-fail characteristics: the gathering of their counts for :mod:`verify.evaluate`.

The counts of each named stream (inspected and failed parts by lot) reach the pass-fail kinds
of check (``verify/checks/rates``) on the streams' ``counts``; the checks' drafts live in that
package's ``compute`` hook, the characteristic's diagnostics in its ``diagnostics`` module.

A pass-fail characteristic's tidy rows hold 1.0 (failed) or 0.0 (passed) per part, or, with
per-lot counts, the failed count per lot row with the inspected count on rows named
``"<name> (inspected)"`` from the same source row.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .checks.drafting import CheckInput, Comparison, Stream
from .evaluate_gather import CANDIDATES, REFERENCE, CharDraft, shows_reference, sufficiency
from .model import Measurements, ProcessSummary
from .spec_model import Characteristic, Spec


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


def _summary(process: str, c: Counts) -> ProcessSummary:
    n = c.n
    return ProcessSummary(
        process=process, n=n, mean=None, sd=None, lots=c.lots, n_parts=n,
        failures=c.failures, rate=(c.failures / n) if n else None,
        lot_counts=tuple(zip(c.lots, c.inspected, c.failed, strict=True)),
    )


def gather(spec: Spec, meas: Measurements, ch: Characteristic, final: bool) -> CharDraft:
    """The counts of one pass-fail characteristic as named streams (each carrying its
    :class:`Counts`), their summaries and the shortfall against min_n."""
    streams, summaries = {}, {}
    for name in (*CANDIDATES, REFERENCE):
        c = process_counts(meas, ch, name)
        streams[name] = Stream(name=name, values=None, parts=None, lots=c.lots, counts=c)
        summaries[name] = _summary(name, c)
    processes = {}
    if streams[REFERENCE].counts.n or shows_reference(ch):
        processes[REFERENCE] = summaries[REFERENCE]
    for name in CANDIDATES:
        processes[name] = summaries[name]
    (candidate,) = CANDIDATES
    data = Comparison(reference=streams[REFERENCE], candidate=streams[candidate])
    d = CharDraft(ch=ch, inp=CheckInput(spec=spec, ch=ch, data=data, final=final),
                  processes=processes)
    sufficiency(spec, d, {p: s.n for p, s in processes.items()}, final)
    return d
