"""Formula builders of the recheck sheet: t, F and beta tails as spreadsheet text, and criteria.

Each function returns the text of a formula (without the leading ``"="``) from the cell
references it is given; none writes a cell.

Notes on the spreadsheet functions
----------------------------------
* Functions newer than Excel 2007 are written with their ``_xlfn.`` prefix (``_xlfn.STDEV.S``,
  ``_xlfn.T.INV.2T``, ...): that is how the file format stores them; Excel shows them plainly.
* Only functions that Excel, LibreOffice and gnumeric all evaluate are used: t tail
  probabilities come from TDIST (gnumeric has no T.DIST, T.DIST.RT, T.DIST.2T nor NORM.S.DIST;
  tests/test_recheck_gnumeric.py recalculates the demo workbooks in gnumeric).
* TDIST (like T.DIST*) and T.INV.2T truncate the degrees of freedom to an integer
  (Excel documents it; LibreOffice 7.4 does it too, see tests/test_recheck_libreoffice.py), and
  so does F.DIST.RT; every F test here has integer df. Where the df is fractional (Welch), the
  p-values come from the regularised incomplete beta function instead: the two-sided tail of
  |t| on df degrees of freedom is ``BETA.DIST(df / (df + t^2), df / 2, 1/2, TRUE)``, and the
  quantile with two-sided tail ``p`` is ``SQRT(df (1 - x) / x)`` with
  ``x = BETA.INV(p, df / 2, 1/2)`` (the standard relation between Student's t and the
  incomplete beta function). T.TEST type 3, which does use the fractional df, is shown beside
  the Welch p-value as a cross-check.
* Criteria functions (AVERAGEIFS, MAXIFS, MINIFS, SUMIFS) read ``*``, ``?`` and ``~`` as
  wildcards and a leading ``<``, ``>`` or ``=`` as an operator, and compare text without regard
  to case. Names are therefore written as ``"=" + name`` with the wildcards escaped by ``~``
  (:func:`criterion`); where two names of one block would still match each other (names that
  differ only in case, or that read as the same number, :func:`criteria_safe`) the formulas
  use ``SUMPRODUCT(EXACT(...))`` instead.
"""

from __future__ import annotations

import math

from .cells import XML_ILLEGAL


def abs_diff(a: str, b: str) -> str:
    """|a - b| element by element inside SUMPRODUCT, with comparisons instead of ABS: gnumeric
    does not apply ABS to each element of an array there (it returns a wrong sum or #VALUE!),
    while comparisons and arithmetic work in Excel, LibreOffice and gnumeric alike."""
    return f"(({a})>({b}))*(({a})-({b}))+(({b})>({a}))*(({b})-({a}))"


def beta_two_tail(t: str, df: str) -> str:
    # P(|T| >= |t|) = I_x(df/2, 1/2) with x = df / (df + t^2): exact for fractional df
    return f"_xlfn.BETA.DIST({df}/({df}+{t}^2),{df}/2,0.5,TRUE)"


# TDIST(x, df, tails) (x >= 0) is evaluated by Excel, LibreOffice and gnumeric alike; the newer
# T.DIST, T.DIST.RT and T.DIST.2T are unknown to gnumeric (#NAME?). A tail is subtracted from 1
# only where the result is at least 0.5, so no precision is lost in the far tails.


def p_two(t: str, df: str, frac: bool) -> str:
    return beta_two_tail(t, df) if frac else f"TDIST(ABS({t}),{df},2)"


def p_below(t: str, df: str, frac: bool) -> str:
    """P(T <= t)."""
    if not frac:
        return f"IF({t}<0,TDIST(-({t}),{df},1),1-TDIST({t},{df},1))"
    b = beta_two_tail(t, df)
    return f"IF({t}<0,0.5*{b},1-0.5*{b})"


def p_above(t: str, df: str, frac: bool) -> str:
    """P(T >= t)."""
    if not frac:
        return f"IF({t}>0,TDIST({t},{df},1),1-TDIST(-({t}),{df},1))"
    b = beta_two_tail(t, df)
    return f"IF({t}>0,0.5*{b},1-0.5*{b})"


def p_side(t: str, df: str, frac: bool, alternative: str) -> str:
    """The p-value of ``t`` for ``alternative``: "greater", "less" or two-sided."""
    if alternative == "greater":
        return p_above(t, df, frac)
    if alternative == "less":
        return p_below(t, df, frac)
    return p_two(t, df, frac)


def t_quantile(two_tail: str, df: str, frac: bool) -> str:
    """The positive t whose two-sided tail probability is ``two_tail``."""
    if not frac:
        return f"_xlfn.T.INV.2T({two_tail},{df})"
    x = f"_xlfn.BETA.INV({two_tail},{df}/2,0.5)"
    return f"SQRT({df}*(1-{x})/{x})"


def f_p_side(f: str, d1: str, d2: str, alternative: str) -> str:
    """The F-test's p-value of the ratio ``f`` on (d1, d2) df for ``alternative``: "greater"
    (the upper tail), "less" (the lower tail) or two-sided (twice the smaller tail)."""
    if alternative == "greater":
        return f"_xlfn.F.DIST.RT({f},{d1},{d2})"
    if alternative == "less":
        return f"_xlfn.F.DIST({f},{d1},{d2},TRUE)"
    return f"MIN(1,2*MIN(_xlfn.F.DIST.RT({f},{d1},{d2}),_xlfn.F.DIST({f},{d1},{d2},TRUE)))"


def bissell_lower(index: str, confidence: str, n: str, df: str) -> str:
    """The lower confidence bound of a capability index (Bissell 1990, with ``df`` the degrees
    of freedom of the sigma behind the index): ``index - z SQRT(1/(9n) + index^2/(2 df))``."""
    return f"{index}-_xlfn.NORM.S.INV({confidence})*SQRT(1/(9*{n})+{index}^2/(2*{df}))"


HOW_P = {
    False: "TDIST (integer df; one tail, or two)",
    True: "regularised incomplete beta BETA.DIST(df/(df+t^2), df/2, 1/2) (fractional df)",
}
HOW_Q = {
    False: "T.INV.2T (integer df)",
    True: "SQRT(df(1-x)/x), x = BETA.INV(tail, df/2, 1/2) (fractional df)",
}


def string_literal(s: str) -> str:
    return '"' + s.replace('"', '""') + '"'


def criterion(name: str) -> str:
    """An exact-match criterion for AVERAGEIFS / MAXIFS / MINIFS."""
    esc = name.replace("~", "~~").replace("*", "~*").replace("?", "~?")
    return string_literal("=" + esc)


def _collision_key(name: str):
    try:
        v = float(name)
    except ValueError:
        return name.casefold()
    return ("number", v) if math.isfinite(v) else name.casefold()


def criteria_safe(lots: list[str]) -> bool:
    """True when no two lots would match each other's criterion (case, numbers, length)."""
    keys = [_collision_key(x) for x in lots]
    return len(set(keys)) == len(keys) and all(len(criterion(x)) <= 257 for x in lots)


def as_written(lot: str) -> str:
    """The lot's text as the measurements sheet holds it (XML-illegal characters dropped)."""
    return XML_ILLEGAL.sub("", lot)


def lot_names_problem(lots: list[str]) -> str | None:
    """Why these lot names cannot go into formulas, or None."""
    written = [as_written(x) for x in lots]
    if len(set(written)) != len(written):
        return "two lot names differ only in characters a worksheet cannot hold"
    if any(len(x) > 255 for x in written):
        return "a lot name is longer than the 255 characters a formula's text may hold"
    return None


