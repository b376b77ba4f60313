"""spec + measurements -> statistics -> decisions -> one :class:`~verify.model.Evaluation`.

This module wires the layers together and names no check: for each characteristic it gathers
the named streams (:mod:`verify.evaluate_gather`), drafts every kind of check that applies
through the kind's ``compute`` hook (:mod:`verify.checks`), adds the diagnostics
(:mod:`verify.evaluate_diagnostics`), then forms and adjusts the multiplicity family and
finishes each characteristic (:mod:`verify.evaluate_finish`). The numbers come from
:mod:`verify.stats`, the outcomes and their words from each kind's ``rule`` hook and
:mod:`verify.decide`.
"""

from __future__ import annotations

from . import collector, decide
from .checks.drafting import replaced
from .evaluate_diagnostics import diagnostics, joined_parts
from .evaluate_finish import adjust, complete_batches, finish
from .evaluate_gather import (
    CharDraft,
    compute_hook_fn,
    gather,
    samples_in_lots,
    sub_streams,
    summarize,
)
from .model import Evaluation, Measurements, RunInfo
from .spec_model import Characteristic, Spec
from .stats import _memo, batch, samples


def evaluate(
    spec: Spec, measurements: Measurements, *, final: bool = False, run: RunInfo | None = None
) -> Evaluation:
    """Evaluate every characteristic of ``spec`` on ``measurements``.

    Parameters
    ----------
    spec : Spec
        The validated spec from :func:`verify.spec.load_spec`.
    measurements : Measurements
        The tidy table from :func:`verify.data.load_measurements`.
    final : bool
        True when the trial is declared complete (``--final``): a shortfall against ``min_n``
        no longer makes a characteristic PENDING.
    run : RunInfo, optional
        Who ran it, when and with which software (see :mod:`verify.audit`).
    """
    if run is None:
        from .audit import run_info

        run = run_info(spec, measurements, command="(library call)")
    # a burst of small objects (results, sentences, drafts) that reference counting frees: the
    # cyclic collector's passes over everything the process holds would cost about a tenth of
    # the evaluation (one full pass per dozen evaluations, each walking pandas' and scipy's
    # state); it is paused here, as while a workbook is built (verify.collector), and its state
    # restored once the drafts are gone (the first collection then walks the result only)
    with collector.paused():
        return _evaluate(spec, measurements, final, run)


def _evaluate(spec: Spec, measurements: Measurements, final: bool, run: RunInfo) -> Evaluation:
    """:func:`evaluate` with the collector paused (its drafts freed when this returns)."""
    try:
        gathered = [gather_characteristic(spec, measurements, ch, final)
                    for ch in spec.characteristics]
        measured = [d for d in gathered if not d.ch.pass_fail]
        # the per-sample diagnostics of all characteristics' samples computed together: a layout
        # measures the same parts on every characteristic (the results are the one-sample ones),
        # and the one-way analyses of their lots, which the process summaries read
        batch.prefetch([x for d in measured for st in (d.data.reference, d.data.candidate)
                        for x in (st.values, st.parts)],
                       in_lots=[q for d in measured for q in samples_in_lots(d)])
        summarize(measured)
        # and the rank statistics the kinds' companions will ask for (their hooks say which),
        # with the resolutions of the joined parts (a rank-sum request of the same old and new
        # parts snaps and sorts the same joined values: its sort gives the resolution too)
        batch.prefetch_ranks([q for d in measured for k in d.applicable()
                              for q in _rank_requests(k, d.inp)],
                             joined=[joined_parts(d) for d in measured])
        drafts = [draft_characteristic(spec, measurements, d) for d in gathered]
        complete_batches(drafts)
        family, excluded = adjust(drafts, spec.multiplicity, spec.alpha)
        results = tuple(finish(spec, d) for d in drafts)
    finally:  # what the statistics remembered of this evaluation's samples, also on an error
        _memo.forget()
        samples.forget()
    decision = decide.combine(r.decision for r in results)
    # one line per characteristic not PASS: its leading reason (the full list stays with it)
    reasons = tuple(
        f"{r.name}: {r.decision} - {r.reasons[0]}"
        + (f" (+{len(r.reasons) - 1} more on its sheet)" if len(r.reasons) > 1 else "")
        for r in results if r.decision != "PASS"
    )
    review = tuple(note for r in results for note in r.review)
    return Evaluation(
        spec=spec,
        measurements=measurements,
        characteristics=results,
        decision=decision,
        reasons=reasons,
        review=review,
        rules=decide.rules_in_words(spec.alpha, spec.multiplicity,
                                    pass_fail=any(c.pass_fail for c in spec.characteristics)),
        caution=decide.CAUTION,
        final=final,
        run=run,
        family=family,
        family_excluded=excluded,
    )


def _rank_requests(kind, inp) -> list:
    fn = compute_hook_fn(kind, "rank_requests")
    return [] if fn is None else fn(kind, inp)


def gather_characteristic(spec: Spec, meas: Measurements, ch: Characteristic,
                          final: bool) -> CharDraft:
    """Gather one characteristic: its streams (or, pass-fail, its counts)."""
    if ch.pass_fail:
        from . import evaluate_pass_fail  # per-part results or per-lot counts

        return evaluate_pass_fail.gather(spec, meas, ch, final)
    return gather(spec, meas, ch, final)


def draft_characteristic(spec: Spec, meas: Measurements, d: CharDraft) -> CharDraft:
    """Draft every kind of check the gathered characteristic's spec declares, in the
    registry's order; the kinds that run per stream also run on each ``data.stream``
    sub-stream (their p-values join the multiplicity family)."""
    ch = d.ch
    if ch.pass_fail:
        from . import evaluate_pass_fail

        d.checks = [k.hook("compute").draft(k, d.inp) for k in d.applicable()]
        d.diagnostics = evaluate_pass_fail.diagnostics(spec, ch, d)
        return d
    kinds = d.applicable()
    d.checks = [compute_hook_fn(k, "draft")(k, d.inp) for k in kinds]
    if spec.data.stream is not None:
        per_stream = [k for k in kinds if getattr(k.hook("compute"), "PER_STREAM", False)]
        for st, inp in sub_streams(meas, d):
            for k in per_stream:
                dr = k.hook("compute").draft(k, inp)
                dr.result = replaced(dr.result,
                                    hypothesis=f"stream {st.name}: {dr.result.hypothesis}")
                st.checks.append(dr)
            d.streams.append(st)
    d.diagnostics = diagnostics(spec, ch, d)
    return d
