"""Pass-fail characteristics: the gathering of their counts for :mod:`verify.evaluate`.

The counts of each named stream (inspected and failed parts by lot) reach the pass-fail kinds
of check (``verify/checks/rates``) on the streams' ``counts``; the checks' drafts live in that
package's ``compute`` hook, the characteristic's diagnostics in its ``diagnostics`` module.

A pass-fail characteristic's tidy rows hold 1.0 (failed) or 0.0 (passed) per part, or, with
per-lot counts, the failed count per lot row with the inspected count on rows named
``"<name> (inspected)"`` from the same source row.
"""

from __future__ import annotations

from .checks.drafting import CheckInput, Comparison, Stream
from .checks.rates.diagnostics import diagnostics  # noqa: F401 - failures by lot, per stream
from .evaluate_gather import CANDIDATES, REFERENCE, CharDraft, shows_reference, sufficiency
from .model import Measurements, ProcessSummary
from .pass_fail_counts import Counts, process_counts  # noqa: F401 - process_counts: public here
from .spec_model import Characteristic, Spec


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
