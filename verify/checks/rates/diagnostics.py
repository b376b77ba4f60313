"""The diagnostics of a pass-fail characteristic: failures by lot (a heterogeneity test,
flagged, never deciding) and zero-failure notes, per stream."""

from __future__ import annotations

from ...decide import fmt, p_eq, pct
from ...model import DiagnosticResult
from ...stats import rates
from ..drafting import CANNOT_COMPUTE, not_applicable


def diagnostics(spec, ch, d) -> list[DiagnosticResult]:
    """Failures by lot (a heterogeneity test, flagged, never deciding) and zero-failure
    notes, per stream."""
    out: list[DiagnosticResult] = []
    ref, cand = d.data.reference, d.data.candidate
    groups = [(s.name, s.counts) for s in ((ref, cand) if ref.counts.n else (cand,))]
    for group, c in groups:
        try:
            h = rates.lot_heterogeneity(c.failed, c.inspected)
            flag = h.pvalue < spec.alpha
            rough = ("; rough: some lot expects fewer than 5 failures"
                     if h.min_expected < 5 else "")
            out.append(DiagnosticResult(
                "failures by lot", h.method, group, flag,
                (f"lots differ in failure rate (chi-square {fmt(h.statistic)} on "
                 f"{h.df} df, {p_eq(h.pvalue)}{rough}): parts of one lot are not "
                 "independent; look for a lot-related cause" if flag else
                 f"no difference between lots detected ({p_eq(h.pvalue)}{rough})"),
                statistic=h.statistic, p_value=h.pvalue,
                extra={"df": h.df, "lots": h.lots, "min_expected": h.min_expected}))
        except CANNOT_COMPUTE as err:
            out.append(not_applicable("failures by lot", "chi-square test of equal rates "
                                      "across lots", group, err))
        if c.n and c.failures == 0:
            level = ch.checks.rate.confidence if ch.checks.rate is not None else 0.95
            upper = rates.clopper_pearson(0, c.n, level=level).high
            out.append(DiagnosticResult(
                "zero failures", "count of failures", group, True,
                (f"no failures among {c.n} parts: the rate is not shown to be zero, only at "
                 f"most {pct(upper, 3)} ({fmt(100 * level)}% upper bound)"
                 + ("; the old rate estimated as 0 makes any new failure look like an "
                    "increase" if group == ref.name else "")),
                statistic=0.0, extra={"upper_bound": upper, "confidence": level}))
    return out

