"""The pass-fail checks' recheck rows: counts, rates and bounds as live formulas.

The counts come from the measurements sheet with criteria formulas over its columns
(characteristic, process, used), so they do not depend on the order of its rows: the parts
inspected are COUNTIFS of the per-part results (or SUMIFS of the per-lot inspected counts), the
failures SUMIFS of the results (1 failed, 0 passed) or of the failed counts. From them:

* the exact upper bound of the new rate, ``BETA.INV(C, x + 1, n - x)`` (Clopper-Pearson; 1 when
  every part failed);
* Newcombe's hybrid score interval for p_new - p_old: the Wilson limits of each rate with
  ``z = NORM.S.INV(1 - alpha)``, combined by square-and-add (Newcombe 1998, method 10);
* for ``method: score`` (Miettinen-Nurminen), the score statistic at the engine's upper limit,
  which must equal -z there (the limit is where the statistic crosses -z), with the restricted
  rates from the closed-form cubic (Farrington & Manning 1990);
* Fisher's one-sided exact p-value ``1 - HYPGEOM.DIST(x_new - 1, n_new, x_total, n_total,
  TRUE)``.

Which interval and which p-value the engine computed follows from the spec's ``rate_shift``
settings (``margin`` with ``method``, else ``test``). Functions newer than Excel 2007 carry
their ``_xlfn.`` prefix in the file.
"""

from __future__ import annotations

from openpyxl.utils import get_column_letter

from verify.checks.rates.result import RateDetails
from verify.model import CharacteristicResult, CheckResult
from verify.report.layout import MEASUREMENT_HEADERS, MeasurementLayout
from verify.report.recheck_sheet import Sheet, Subject

__all__ = ["prepare", "recheck"]

NUMBERS = ("estimate",)  # a pass-fail check computed nothing when it has no estimate
COUNTS = "counts"  # key of Subject.prepared: (n cell, x cell) by process, or None
FISHER = "fisher"  # rate_shift test: Fisher's exact test (else Boschloo's)
SCORE = "score"  # rate_shift method: the Miettinen-Nurminen score interval (else Newcombe)


def prepare(sh: Sheet, on: Subject) -> None:
    """The parts inspected, the failures and the rate of each process, written once per
    pass-fail characteristic before its checks."""
    on.prepared[COUNTS] = {p: _counts(sh, on.layout, on.result, p) for p in ("new", "old")}


def recheck(sh: Sheet, on: Subject, check: CheckResult) -> None:
    """Append the rows that rebuild one pass-fail check from the counts ``prepare`` wrote (see
    :func:`verify.checks.location.recheck.recheck` for the parameters)."""
    counts = on.prepared[COUNTS]
    if check.check == "rate":
        _rate(sh, check, counts["new"])
    elif counts["old"] is not None:
        _rate_shift(sh, on.result, check, counts["new"], counts["old"])


# the measurements sheet's columns, by their keys in layout.MEASUREMENT_HEADERS
_KEYS = [k for k, _ in MEASUREMENT_HEADERS]
CHAR_COL, PROC_COL, VALUE_COL, USED_COL = (
    get_column_letter(_KEYS.index(k) + 1) for k in ("characteristic", "process", "value", "used"))


def _ranges(layout: MeasurementLayout) -> list[tuple[str, int]]:
    """(sheet, last row) of every measurements sheet."""
    t = layout.table
    out = []
    for sheet in layout.sheets:
        rows = t.loc[t["sheet"] == sheet, "row"] if len(t) else []
        out.append((sheet, int(rows.max()) if len(rows) else 2))
    return out


def _criteria(layout: MeasurementLayout, fn: str, name: str, process: str) -> str:
    """COUNTIFS or SUMIFS of the used rows of (name, process), summed over the sheets."""
    parts = []
    for sheet, last in _ranges(layout):
        def col(c: str, sheet=sheet, last=last) -> str:
            return f"'{sheet}'!${c}$2:${c}${last}"

        crit = (f'{col(CHAR_COL)},"{name}",{col(PROC_COL)},"{process}",{col(USED_COL)},TRUE')
        parts.append(f"COUNTIFS({crit})" if fn == "count" else
                     f"SUMIFS({col(VALUE_COL)},{crit})")
    return "+".join(parts)


def _counts(sh, layout, c: CharacteristicResult, process: str) -> tuple[str, str] | None:
    p = c.processes.get(process)
    if p is None:
        return None
    ch = c.spec
    if ch.counts is None:
        n_formula = _criteria(layout, "count", ch.name, process)
        how_n = "COUNTIFS of the used per-part results"
    else:
        n_formula = _criteria(layout, "sum", ch.inspected_name, process)
        how_n = "SUMIFS of the used per-lot inspected counts"
    n = sh.qty(f"{process}: parts inspected n", n_formula, p.n, how_n)
    x = sh.qty(f"{process}: failures x", _criteria(layout, "sum", ch.name, process),
               p.failures, "SUMIFS of the used results (1 = failed) or failed counts")
    sh.qty(f"{process}: failure rate x / n", f"IF({n}>0,{x}/{n},0)", p.rate, "x / n")
    return n, x


def _rate(sh, ch: CheckResult, counts) -> None:
    n, x = counts
    d: RateDetails = ch.details
    conf = sh.param("confidence C", d.confidence, "the spec's rate.confidence")
    sh.param("max", d.max, "the spec's rate.max")
    sh.qty("exact upper bound of the new rate", f"IF({x}>={n},1,_xlfn.BETA.INV({conf},{x}+1,"
           f"{n}-{x}))", ch.ci_high, "BETA.INV(C, x + 1, n - x) (Clopper-Pearson)")


def _wilson(sh, process: str, n: str, x: str, z: str) -> tuple[str, str, str]:
    p = sh.qty(f"{process}: rate p", f"{x}/{n}", None, "x / n")
    core = f"{z}*SQRT({z}^2+4*{n}*{p}*(1-{p}))"
    den = f"(2*({n}+{z}^2))"
    lo = sh.qty(f"{process}: Wilson low", f"MAX(0,(2*{n}*{p}+{z}^2-{core})/{den})", None,
                "(2np + z^2 - z sqrt(z^2 + 4npq)) / (2(n + z^2))")
    hi = sh.qty(f"{process}: Wilson high", f"MIN(1,(2*{n}*{p}+{z}^2+{core})/{den})", None,
                "(2np + z^2 + z sqrt(z^2 + 4npq)) / (2(n + z^2))")
    return p, lo, hi


def _rate_shift(sh, c: CharacteristicResult, ch: CheckResult, new, old) -> None:
    (n1, x1), (n0, x0) = new, old
    conf = c.spec.checks.rate_shift
    fisher = conf.test == FISHER  # the test the engine ran (without a margin)
    score = conf.margin is not None and conf.method == SCORE  # the interval (with a margin)
    if ch.p_value is not None:
        p = sh.qty("Fisher one-sided p (new rate higher)",
                   f"IF({x1}=0,1,1-_xlfn.HYPGEOM.DIST({x1}-1,{n1},{x1}+{x0},{n1}+{n0},TRUE))",
                   ch.p_value if fisher else None,
                   "P(X >= x_new), X hypergeometric (Fisher's exact test)")
        sh.family_member(p)
        if not fisher:
            sh.note("Boschloo's p-value maximises over the nuisance rate: not recomputed here; "
                    "Fisher's p above is its conditional companion")
        if ch.ci_level is None:
            return
    level = ch.ci_level
    z = sh.qty("z = NORM.S.INV((1 + level) / 2)", f"_xlfn.NORM.S.INV((1+{level})/2)", None,
               f"the interval's level {level:g} is 1 - 2 alpha (alpha / m in a family)")
    p1, l1, u1 = _wilson(sh, "new", n1, x1, z)
    p0, l0, u0 = _wilson(sh, "old", n0, x0, z)
    d = sh.qty("difference p_new - p_old", f"{p1}-{p0}", ch.estimate, "new minus old")
    if not score:
        sh.qty("Newcombe interval low", f"{d}-SQRT(({p1}-{l1})^2+({u0}-{p0})^2)", ch.ci_low,
               "d - sqrt((p1 - l1)^2 + (u0 - p0)^2) (Newcombe 1998, method 10)")
        sh.qty("Newcombe interval high", f"{d}+SQRT(({u1}-{p1})^2+({p0}-{l0})^2)", ch.ci_high,
               "d + sqrt((u1 - p1)^2 + (p0 - l0)^2)")
        return
    if ch.ci_high is None or ch.ci_high >= 1:
        sh.note("the score interval's upper limit is 1: nothing to recompute")
        return
    delta = sh.param("engine's upper limit delta", ch.ci_high,
                     "the score statistic must equal -z here")
    th = sh.qty("theta = n_old / n_new", f"{n0}/{n1}", None, "")
    a = sh.qty("cubic a", f"1+{th}", None, "1 + theta")
    b = sh.qty("cubic b", f"-(1+{th}+{p1}+{th}*{p0}+{delta}*({th}+2))", None,
               "Farrington & Manning (1990)")
    c = sh.qty("cubic c", f"{delta}^2+{delta}*(2*{p1}+{th}+1)+{p1}+{th}*{p0}", None, "")
    dd = sh.qty("cubic d", f"-{p1}*{delta}*(1+{delta})", None, "")
    v = sh.qty("v", f"{b}^3/(27*{a}^3)-{b}*{c}/(6*{a}^2)+{dd}/(2*{a})", None, "")
    u = sh.qty("u", f"SIGN({v})*SQRT(MAX(0,{b}^2/(9*{a}^2)-{c}/(3*{a})))", None, "")
    w = sh.qty("w", f"(PI()+ACOS(MAX(-1,MIN(1,{v}/{u}^3))))/3", None, "")
    r1 = sh.qty("restricted new rate", f"MIN(1,MAX(0,2*{u}*COS({w})-{b}/(3*{a})))", None,
                "2u cos(w) - b / (3a)")
    r0 = sh.qty("restricted old rate", f"MIN(1,MAX(0,{r1}-{delta}))", None, "")
    var = sh.qty("score variance", f"({r1}*(1-{r1})/{n1}+{r0}*(1-{r0})/{n0})*({n1}+{n0})/"
                 f"({n1}+{n0}-1)", None, "times N / (N - 1) (Miettinen & Nurminen 1985)")
    sh.qty("score statistic at the upper limit + z (0 at the limit)",
           f"({d}-{delta})/SQRT({var})+{z}", 0.0, "(d - delta) / sqrt(variance) + z")
