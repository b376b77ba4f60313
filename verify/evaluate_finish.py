"""Finishing for :func:`verify.evaluate.evaluate`: the batched planning figures, the
multiplicity family (formed, completed at its level, adjusted and decided through each draft's
family protocol), the sufficiency rule, review notes and the combined decision of each
characteristic.
"""

from __future__ import annotations

import numpy as np

from . import decide
from .checks import find as find_kind
from .checks import kind
from .checks.drafting import replaced
from .evaluate_gather import CANDIDATES, CharDraft, StreamDraft
from .model import CharacteristicResult, CheckResult, StreamResult
from .spec_model import Characteristic, Spec
from .stats import multiplicity
from .stats.core import mean_sd
from .stats.limits import BeyondLimits


def complete_batches(drafts: list[CharDraft]) -> None:
    """Let each kind's compute hook answer its batched questions (e.g. the TOST power and
    planned n of every characteristic in one vectorised pass) for the characteristics' own
    checks."""
    by_hook: dict = {}
    batching: dict = {}  # check name -> the list of its hook's drafts, or None (no batch)
    for d in drafts:
        for dr in d.checks:
            check = dr.result.check
            if check not in batching:
                mod = kind(check).hook("compute")
                batching[check] = (by_hook.setdefault(mod, [])
                                   if hasattr(mod, "complete_batch") else None)
            drs = batching[check]
            if drs is not None:
                drs.append(dr)
    for mod, drs in by_hook.items():
        mod.complete_batch(drs)


def adjust(drafts: list[CharDraft], method: str, alpha: float
           ) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Form the multiplicity family, complete its checks at the level it implies, adjust its
    p-values and decide them. Returns the family's and the left-out checks' names.

    The family is every computed check that HOLDs on significance (difference tests and spread
    tests) across characteristics; a check that cannot be computed is left out of it and counts
    nowhere (not in the adjustment, not in alpha / m).
    """
    # one pass over the members in their order (:func:`_members`): the family's drafts and
    # names, and the names of the checks left out of it
    family, names, excluded = [], [], []
    for label, dr in _members(drafts):
        if dr.finish is not None:
            family.append(dr)
            names.append(f"{label}: {dr.result.check}")
        elif dr.family:
            excluded.append(f"{label}: {dr.result.check}")
    names, excluded = tuple(names), tuple(excluded)
    if not family:
        return names, excluded
    adjusted = method != "none"
    m = len(family)
    eff_alpha = alpha / m if adjusted else alpha
    # each member's fields at the family's level, then its decision on the adjusted p-value,
    # into one copy of its result (a finish reads what its complete found, not the result)
    completed = [dr.complete(eff_alpha, m) for dr in family]
    ps = np.array([dr.family_p for dr in family])
    adj = multiplicity.adjust(ps, method) if adjusted else ps
    for dr, done, pa in zip(family, completed, adj.tolist(), strict=True):
        pa = float(pa)
        v = dr.finish(pa, adjusted)
        dr.harm_shown = v.outcome == "HOLD"
        # complete's dict (a new one each call, the Draft protocol's) takes the decision's
        # fields and is the copy's changes: what replaced(res, **{**done, ...}) gets, without
        # the merged dict
        done["outcome"], done["reason"] = v.outcome, v.reason
        done["p_adjusted"] = pa if adjusted else None
        dr.result = replaced(dr.result, **done)
        dr.finish = None
    return names, excluded


def _members(drafts: list[CharDraft]) -> list[tuple[str, object]]:
    """Every draft with the name the family lists it under: each characteristic's own checks,
    then each of its streams'."""
    out = []
    for d in drafts:
        name = d.ch.name
        out.extend([(name, dr) for dr in d.checks])
        for st in d.streams:
            label = f"{name} [stream {st.name}]"
            out.extend([(label, dr) for dr in st.checks])
    return out


def _beyond_words(ch: Characteristic, b: BeyondLimits) -> str:
    """ "2 parts beyond the specification limits (1 below 11.975, 1 above 12.025); ..." """
    sides = []
    if b.below:
        sides.append(f"{b.below} below {decide.fmt(ch.lower, 6)}")
    if b.above:
        sides.append(f"{b.above} above {decide.fmt(ch.upper, 6)}")
    part = "part" if b.total == 1 else "parts"
    text = f"{b.total} {part} beyond the specification limits ({', '.join(sides)} {ch.unit})"
    if b.expected_ppm is not None:
        text += f"; a {b.model} model expects {decide.fmt(b.expected_ppm, 3)} ppm beyond them"
    elif b.note is not None:
        text += f"; {b.note}"
    return text


def finish(spec: Spec, d: CharDraft) -> CharacteristicResult:
    """The characteristic's result: sufficiency applied, review notes, combined decision."""

    name = d.ch.name
    if d.shortfall is None:
        checks = [dr.result for dr in d.checks]
        so_far = []
    else:
        checks, so_far = [], []
        for dr in d.checks:
            res = dr.result
            so_far.append(f"{res.check} so far: {res.reason}")
            v = decide.while_pending(decide.Verdict(res.outcome, res.reason),
                                     harm_shown=dr.harm_shown, shortfall=d.shortfall)
            checks.append(replaced(res, outcome=v.outcome, reason=v.reason))
        if not checks:
            checks.append(CheckResult(check="sufficiency", method="count against min_n",
                                      hypothesis="the planned sample size is reached",
                                      alternative=None, margin=None, outcome="PENDING",
                                      reason=d.shortfall))
    review = [f"review: {name} ({dg.group}): {dg.note}" for dg in d.diagnostics if dg.flag]
    for process in CANDIDATES:
        summary = d.processes.get(process)
        beyond = summary.beyond_limits if summary is not None else None
        if beyond is not None and beyond.total:
            review.append(f"review: {name} ({process}): {_beyond_words(d.ch, beyond)}")
    for res in checks:
        k, review_of = _review_of(res.check)  # optional: notes after deciding
        if review_of is not None:
            notes = review_of(k, res, spec)
            if notes:  # (most checks have none: no list of none to extend by)
                review.extend([f"review: {name}: {note}" for note in notes])
    if d.final_shortfall is not None:
        review.append(f"review: {name}: final run with the plan cut short "
                      f"({d.final_shortfall})")
    if spec.min_n is None and d.counts:
        smallest = min(d.counts.values())
        review.append(f"review: {name}: no planned sample size (min_n) declared; the "
                      f"decision rests on n = {smallest}")
    if d.unmatched:
        review.append(f"review: {name}: {len(d.unmatched)} pair key(s) with one side only "
                      f"left out of the paired analysis: {', '.join(map(str, d.unmatched[:10]))}")
    # (a characteristic without data.stream sub-streams, the common case, skips the empty
    # loops over them: the same outcome and reasons)
    streams = tuple(_finish_stream(d, st) for st in d.streams) if d.streams else ()
    outcome = decide.combine([c.outcome for c in checks] + [st.decision for st in streams]
                             if streams else [c.outcome for c in checks])
    if outcome == "PENDING" and d.shortfall is not None:
        reasons = (d.shortfall, *so_far)
    else:
        own = tuple([f"{c.check}: {c.reason}" for c in checks if c.outcome == outcome])
        named = tuple([f"stream {st.name}: {c.check}: {c.reason}" for st in streams
                       for c in st.checks if c.outcome == outcome]) if streams else ()
        # a HOLD or PENDING stream leads the reasons, named: a bad cavity must not hide in the
        # pooled data; a PASS lists the characteristic's own checks first
        reasons = own + named if outcome == "PASS" else named + own
        reasons = reasons or ("no checks",)
    # by position, in the fields' order: name, unit, decision, reasons, review, processes,
    # checks, diagnostics, spec, pairs, unmatched_pairs, distribution, streams (a keyword
    # costs about 30 ns a field)
    return CharacteristicResult(
        d.ch.name, d.ch.unit, outcome, reasons, tuple(review), d.processes, tuple(checks),
        tuple(d.diagnostics), d.ch, d.pairs, d.unmatched, _distribution_record(d), streams)


_REVIEWS: dict[str, tuple] = {}  # check name -> (its kind, its rule hook's review or None)


def _review_of(check: str) -> tuple:
    """The kind of ``check`` and its rule hook's optional ``review`` (None for a check of no
    kind: sufficiency), looked up once per check name (the registry and its loaded hooks do
    not change while verify runs, as evaluate_diagnostics.companions has it)."""
    hit = _REVIEWS.get(check)
    if hit is None:
        k = find_kind(check)
        hit = _REVIEWS[check] = (k, None if k is None else getattr(k.hook("rule"), "review",
                                                                      None))
    return hit


def _finish_stream(d: CharDraft, st: StreamDraft) -> StreamResult:

    checks = []
    for dr in st.checks:
        res = dr.result
        if d.shortfall is not None:
            v = decide.while_pending(decide.Verdict(res.outcome, res.reason),
                                     harm_shown=dr.harm_shown, shortfall=d.shortfall)
            res = replaced(res, outcome=v.outcome, reason=v.reason)
        checks.append(res)
    n = int(st.values.size)
    mean = sd = None
    if n:
        _, mean, s = mean_sd(st.values)
        sd = s if n >= 2 else None
    return StreamResult(name=st.name, n=n, mean=mean, sd=sd,
                        decision=decide.combine(c.outcome for c in checks),
                        checks=tuple(checks))


def _distribution_record(d: CharDraft) -> dict:
    if d.inp.fit is not None:
        f = d.inp.fit
        return {"name": f.name, "parameters": dict(f.parameters), "loglik": f.loglik,
                "gof_method": f.gof_method, "gof_statistic": f.gof_statistic,
                "gof_pvalue": f.gof_pvalue}
    out: dict = {"name": d.ch.distribution}
    if d.inp.fit_error is not None:
        out["error"] = d.inp.fit_error
    return out
