"""Diagnostics for :func:`verify.evaluate.evaluate`: normality, outliers, lots, stability,
resolution, the stream effect and the declared model's fit of one measured characteristic,
and the companions each kind of check adds beside its test. They flag, they never decide.
"""

from __future__ import annotations

import numpy as np

from . import decide
from .checks import kind
from .checks.drafting import CANNOT_COMPUTE, diagnostic, finite, not_applicable
from .decide import fmt, p_eq
from .evaluate_gather import CharDraft
from .model import DiagnosticResult
from .spec_model import Characteristic, Spec
from .stats import diagnostics as diag
from .stats.lot_effect import METHOD as LOT_EFFECT_METHOD
from .stats.lot_effect import lot_effect_figures

RUN_LENGTH_FLAG = 8  # common practice: eight points in a row on one side of the centre line

# the diagnostics of every measured characteristic are built by position, ``extra`` given (an
# empty dict where there is none, the field's default): what ``drafting.diagnostic`` makes,
# without its call and keywords (about 16 a characteristic)
_Diagnostic = DiagnosticResult


def _lot_count_words(n_lots: int, n_values: int) -> str:
    if n_values == 0:
        return "no values measured"
    if n_lots < 3:
        lots = "1 lot" if n_lots == 1 else f"{n_lots} lots"
        return f"only {lots}: lot-to-lot variation is barely represented"
    return f"{n_lots} lots"


def diagnostics(spec: Spec, ch: Characteristic, d: CharDraft) -> list[DiagnosticResult]:
    """The diagnostics of one measured characteristic: they flag, never decide."""
    alpha = spec.alpha
    out: list[DiagnosticResult] = []
    groups = []
    data = d.data  # (a property: read once)
    ref, cand = data.reference, data.candidate
    if data.pairs is not None:
        pv = data.pairs
        groups.append(("differences", pv.new - pv.old))
    else:
        if ref.values is not None:
            groups.append((ref.name, ref.values))
        groups.append((cand.name, cand.values))
    for group, x in groups:
        try:
            sw = diag.shapiro_wilk(x)
            flag = sw.pvalue < alpha
            out.append(_Diagnostic(
                "normality", sw.method, group, flag,
                (f"{group} values depart from a normal distribution ({p_eq(sw.pvalue)})"
                 "; compare with the rank-test companion" if flag else
                 f"no departure from normality detected ({p_eq(sw.pvalue)})"),
                sw.statistic, sw.pvalue, {}))
        except CANNOT_COMPUTE as err:
            out.append(not_applicable("normality", "Shapiro-Wilk", group, err))
        sw_applies = out[-1].p_value is not None
        try:
            ad = diag.anderson_darling(x)
            # a companion to Shapiro-Wilk: it flags only where Shapiro-Wilk does not apply
            out.append(_Diagnostic(
                "normality", ad.method, group, ad.pvalue < alpha and not sw_applies,
                f"Anderson-Darling {p_eq(ad.pvalue)}", ad.statistic, ad.pvalue, {}))
        except CANNOT_COMPUTE as err:
            out.append(not_applicable("normality", "Anderson-Darling", group, err))
    part_groups = [(cand.name, cand.parts, cand.lots)]
    if ref.parts is not None:
        part_groups.insert(0, (ref.name, ref.parts, ref.lots))
    for group, x, lots in part_groups:
        try:
            g = diag.grubbs(x, alternative="two-sided")
            flag = g.pvalue < alpha
            lot = lots[g.index] if g.index < len(lots) else "?"
            out.append(_Diagnostic(
                "outliers", g.method, group, flag,
                (f"possible outlier {fmt(g.value)} in lot {lot} "
                 f"(G = {fmt(g.statistic)}, {p_eq(g.pvalue)}); "
                 "not removed: check the part and the record"
                 if flag else f"no outlier detected (G = {fmt(g.statistic)}, "
                 f"Bonferroni bound {p_eq(g.pvalue)})"),
                g.statistic, g.pvalue, {"value": g.value, "lot": str(lot)}))
        except CANNOT_COMPUTE as err:
            out.append(not_applicable("outliers", "Grubbs", group, err))
        n_lots = len(set(lots))
        out.append(_Diagnostic(
            "lot count", "count of lots", group, n_lots < 3,
            _lot_count_words(n_lots, x.size), float(n_lots), None, {}))
        if spec.unit_of_analysis == "part":
            try:
                # the figures of diag.lot_effect(x, lots) this diagnostic reads, without the
                # lot means and the result it would make (the same floats and errors)
                statistic, pvalue, icc, lots_tested = lot_effect_figures(x, lots)
                flag = pvalue < alpha
                out.append(_Diagnostic(
                    "lot effect", LOT_EFFECT_METHOD, group, flag,
                    (f"lots differ ({p_eq(pvalue)}, intraclass correlation "
                     f"{fmt(icc, 3)}): parts of one lot are not independent; "
                     "unit_of_analysis: lot would be the safer analysis" if flag else
                     f"no lot effect detected ({p_eq(pvalue)})"),
                    statistic, pvalue, {"icc": icc, "n_lots": lots_tested}))
            except CANNOT_COMPUTE as err:
                out.append(not_applicable("lot effect", "one-way ANOVA across lots", group, err))
        try:
            st = diag.individuals_chart(x)
            flag = bool(st.beyond) or st.longest_run >= RUN_LENGTH_FLAG
            parts = []
            if st.beyond:
                parts.append(f"{len(st.beyond)} point(s) beyond the control-chart limits")
            if st.longest_run >= RUN_LENGTH_FLAG:
                parts.append(f"a run of {st.longest_run} on one side of the centre line")
            out.append(_Diagnostic(
                "stability", "individuals chart (moving-range limits)", group, flag,
                ("not stable: " + ", ".join(parts)) if flag else
                f"in control (longest run {st.longest_run})",
                float(len(st.beyond)), None,
                {"centre": st.centre, "lcl": st.lcl, "ucl": st.ucl,
                 "longest_run": st.longest_run}))
        except CANNOT_COMPUTE as err:
            out.append(not_applicable("stability", "individuals chart", group, err))
    try:
        lower, upper = ch.lower, ch.upper  # (properties: read once)
        tol = (upper - lower) if (lower is not None and upper is not None) else None
        # (joined_parts(d), from the samples read above)
        rs = diag.resolution_of((cand.parts,) if ref.parts is None else (ref.parts, cand.parts),
                                tolerance=tol)
        coarse = rs.step_over_tenth_tolerance is not None and rs.step_over_tenth_tolerance > 1.0
        out.append(_Diagnostic(
            "resolution", "measurement resolution", "all", coarse,
            (f"coarse: the smallest step {decide.fmt_often(rs.step)} exceeds a tenth of the "
             "tolerance" if coarse else
             f"{rs.distinct} distinct values, smallest step {decide.fmt_often(rs.step)}"),
            finite(rs.step), None,
            {"distinct": rs.distinct, "step_over_tenth_tolerance":
             finite(rs.step_over_tenth_tolerance)}))
    except CANNOT_COMPUTE as err:
        out.append(not_applicable("resolution", "measurement resolution", "all", err))
    if len(d.streams) >= 2:
        out.append(_stream_effect(d, alpha))
    if d.inp.fit is not None:
        f = d.inp.fit
        bad = f.gof_pvalue < alpha
        out.append(diagnostic(
            "distribution fit", f.gof_method, "new", bad,
            (f"the declared {f.name} model does not fit the new parts: {f.words}" if bad
             else f"fitted {f.words}"),
            statistic=f.gof_statistic, p_value=f.gof_pvalue,
            extra={k: v for k, v in f.parameters}))
    elif d.inp.fit_error is not None:
        out.append(not_applicable("distribution fit", f"{ch.distribution} fit", "new",
                            d.inp.fit_error))
    out.extend(companions(d))
    return out


def joined_parts(d: CharDraft) -> tuple:
    """The part samples whose joined values the resolution diagnostic reads (the reference's
    first, where it has parts)."""
    ref, cand = d.data.reference, d.data.candidate
    return (cand.parts,) if ref.parts is None else (ref.parts, cand.parts)


_COMPANIONS: dict[str, tuple] = {}  # check name -> (its kind, its compute hook's companions)


def companions(d: CharDraft) -> list[DiagnosticResult]:
    """The companions of the characteristic's checks (e.g. a rank test beside a t-test), from
    each kind's compute hook, in the order of the checks. Each check name's kind and hook are
    looked up once (the registry and its loaded hooks do not change while verify runs)."""
    out: list[DiagnosticResult] = []
    for dr in d.checks:
        name = dr.result.check
        hit = _COMPANIONS.get(name)
        if hit is None:
            k = kind(name)
            hit = _COMPANIONS[name] = (k, getattr(k.hook("compute"), "companions", None))
        k, fn = hit
        if fn is not None:
            out.extend(fn(k, d.inp, dr))
    return out


def _stream_effect(d: CharDraft, alpha: float) -> DiagnosticResult:
    """Do the new streams differ among themselves? One-way ANOVA across the streams, with the
    stream furthest from the pooled new mean named."""
    values = np.concatenate([st.values for st in d.streams])
    labels = np.concatenate([np.full(st.values.size, st.name, dtype=object)
                             for st in d.streams])
    try:
        r = diag.lot_effect(values, labels)
    except CANNOT_COMPUTE as err:
        return not_applicable("stream effect", "one-way ANOVA across the new streams", "new", err)
    centre = float(np.mean(values))
    far = max((st for st in d.streams if st.values.size),
              key=lambda st: abs(float(np.mean(st.values)) - centre))
    flag = r.pvalue < alpha
    note = (f"the new streams differ ({decide.p_eq(r.pvalue)}); furthest from the pooled new "
            f"mean: stream {far.name} (mean {decide.fmt(float(np.mean(far.values)))})" if flag
            else f"no difference between the new streams detected ({decide.p_eq(r.pvalue)})")
    return diagnostic("stream effect", "one-way ANOVA across the new streams", "new",
    flag, note, statistic=r.statistic, p_value=r.pvalue,
                            extra={"streams": len(d.streams), "furthest": far.name})
