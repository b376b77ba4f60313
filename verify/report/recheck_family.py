"""The multiplicity block of the recheck sheet: Holm or Bonferroni adjusted p-values.

The family is every check whose result carries an adjusted p-value; each kind's recheck hook
registers the cell of its rebuilt p-value with ``Sheet.family_member`` (kept under
(characteristic, check)), so this block names no check. The Holm step-down adjustment is
rebuilt without sorting: the step of p_j is ``(m - SUMPRODUCT(--(P < p_j))) * p_j`` and the
adjusted p_i is ``MIN(1, MAX((p_1 <= p_i) * step_1, ...))`` (one scalar term per step, which
gnumeric evaluates too; beyond :data:`HOLM_SCALAR_TERMS` steps
``MIN(1, SUMPRODUCT(MAX((P <= p_i) * STEPS)))``), which equals the running maximum of the
sorted steps, ties included.
"""

from __future__ import annotations

from ..model import Evaluation
from .recheck_sheet import Sheet

# Holm families up to this size write the adjusted p as MAX of scalar terms (portable to
# gnumeric); larger ones use one array formula (Excel's MAX takes at most 255 arguments)
HOLM_SCALAR_TERMS = 60


def multiplicity(sh: Sheet, ev: Evaluation) -> None:
    """Holm or Bonferroni adjusted p-values of the difference tests, from their p cells above."""
    method = ev.spec.multiplicity
    family = [
        (c.name, ch) for c in ev.characteristics for ch in c.checks if ch.p_adjusted is not None
    ]
    # the per-stream tests (data.stream) are members too; their p-values enter as the engine's
    # values, since this sheet does not rebuild the per-stream tests
    streams = [
        (f"{c.name} [stream {st.name}]", ch) for c in ev.characteristics for st in c.streams
        for ch in st.checks if ch.p_adjusted is not None
    ]
    if method not in ("holm", "bonferroni") or not (family or streams):
        return
    sh.heading(f"Multiplicity: {method} adjustment of the p-values of the family (difference "
               "and spread tests)")
    missing = [f"{name} {ch.check}" for name, ch in family if (name, ch.check) not in sh.family_p]
    if missing:
        sh.unavailable(
            "adjusted p-values", f"the p-value of {', '.join(missing)} is not rechecked above"
        )
        return
    first = sh.next_row
    p_cells = [
        sh.qty(f"p: {name}, {ch.check}", sh.family_p[(name, ch.check)], None, "the p-value above")
        for name, ch in family
    ]
    p_cells += [
        sh.param(f"p: {name}, {ch.check}", float(ch.p_value),
                 "the engine's p-value of the stream's test (a value: the per-stream tests "
                 "are not rebuilt on this sheet)")
        for name, ch in streams
    ]
    family = family + streams
    ps = f"$B${first}:$B${sh.next_row - 1}"
    m = sh.qty("m, the number of tests in the family", f"COUNT({ps})", len(family), "COUNT")
    if method == "bonferroni":
        for (name, ch), p in zip(family, p_cells, strict=True):
            sh.qty(
                f"adjusted p: {name}, {ch.check}", f"MIN(1,{m}*{p})", ch.p_adjusted, "MIN(1, m p)"
            )
        return
    first = sh.next_row
    for (name, ch), p in zip(family, p_cells, strict=True):
        sh.qty(
            f"Holm step: {name}, {ch.check}",
            f"({m}-SUMPRODUCT(--({ps}<{p})))*{p}",
            None,
            "(m - number of smaller p-values) p",
        )
    steps = f"$B${first}:$B${sh.next_row - 1}"
    step_cells = [f"$B${first + k}" for k in range(len(p_cells))]
    for (name, ch), p in zip(family, p_cells, strict=True):
        if len(p_cells) <= HOLM_SCALAR_TERMS:
            # one scalar term per step: gnumeric evaluates no MAX over an array inside
            # SUMPRODUCT (#VALUE!), Excel and LibreOffice evaluate both forms alike
            terms = ",".join(f"({q}<={p})*{st}" for q, st in zip(p_cells, step_cells,
                                                                   strict=True))
            formula = f"MIN(1,MAX({terms}))"
        else:
            formula = f"MIN(1,SUMPRODUCT(MAX(({ps}<={p})*{steps})))"
        sh.qty(
            f"adjusted p: {name}, {ch.check}",
            formula,
            ch.p_adjusted,
            "MIN(1, the largest step among p-values <= this one) (Holm 1979)",
        )
