"""The recheck sheet: the engine's numbers recomputed by the spreadsheet's own functions.

An auditor must be able to recompute every number of the decision inside the workbook, without
trusting verify. :func:`recheck_rows` writes, for each characteristic and each check, rows of
live formulas that start from the used values on the measurements sheet (the blocks of
:func:`verify.report.layout.measurement_layout`) and rebuild the counts, means, standard
deviations, the t statistics, degrees of freedom, p-values, intervals, the F ratio and the
capability indices with COUNT, AVERAGE, STDEV.S, TDIST, BETA.DIST and friends. Beside each
formula stand the engine's value, the difference and an agreement cell that is TRUE when
``|sheet - engine| <= tolerance * MAX(1, |engine|)``.

The values are read by key, not by row, so that an auditor may sort or filter the
measurements table: each used value is looked up once, into helper rows after the body, with
``SUMIFS`` over the whole table's columns (characteristic, process, Used = TRUE and the stored
production order, or the pair key for matched pairs, exactly one row matching each key), in the
engine's production order; lot means, lot sizes and lot ranges use criteria over the same
columns. Tables above :data:`SORT_PROOF_MAX_ROWS` rows (where a lookup per value would make a
spreadsheet crawl), or with names a criterion cannot match exactly, fall back to fixed row
ranges of the measurements sheet, and the sheet says so.

The sheet names no check: for each characteristic it runs the ``prepare`` hooks of the kinds
that apply to it (each distinct one once: the samples of both processes for measured
characteristics, the counts for pass-fail ones), then for each of its checks the ``recheck`` hook
of the check's kind (``verify/checks/<kind>/recheck.py``) when the engine computed numbers for
it (one of :data:`NUMBERS`, or of the hook module's own ``NUMBERS``; else a note says why not),
then the multiplicity block
(:mod:`verify.report.recheck_family`). The kinds build their rows from the toolkit:
:mod:`verify.report.recheck_sheet` (the sheet writer, its columns, :class:`Subject`),
:mod:`verify.report.formulas` (t, F and beta formulas, criteria),
:mod:`verify.report.recheck_lookup` (sort-proof lookups), :mod:`verify.report.recheck_blocks`
(samples, lot means, matched pairs) and :mod:`verify.report.recheck_within` (moving ranges, lot
ranges, lot variance components).
"""

from __future__ import annotations

import re

from ..checks import kinds
from ..model import Evaluation
from .layout import MeasurementLayout
from .recheck_family import multiplicity
from .recheck_lookup import HELPER_HEADING, TOKEN, TOKEN_MARK, sort_proof_table
from .recheck_sheet import (
    ALPHA_CELL,
    COLUMNS,
    FIRST_BODY_ROW,
    HEADER_ROW,
    MAX_HELPER_ROWS,
    SUMMARY_ROW,
    TOLERANCE,
    TOLERANCE_CELL,
    Prepare,
    Sheet,
    Subject,
    as_text,
    computed_nothing,
)

__all__ = [
    "COLUMNS",
    "TOLERANCE",
    "TOLERANCE_CELL",
    "ALPHA_CELL",
    "SUMMARY_ROW",
    "HEADER_ROW",
    "FIRST_BODY_ROW",
    "HELPER_HEADING",
    "MAX_HELPER_ROWS",
    "SORT_PROOF_MAX_ROWS",
    "recheck_rows",
]

# Up to this many measurement rows the formulas read the values through lookups by key
# (characteristic, process, production order), so sorting or filtering the measurements table
# changes nothing; beyond it (each lookup scans the table) they read fixed row ranges.
SORT_PROOF_MAX_ROWS = 20_000
# a check computed nothing (and its hook is not called) when it has none of these; a hook
# module may say otherwise with its own NUMBERS
NUMBERS = ("estimate", "p_value", "statistic")


def _measures(subject: Subject) -> str:
    """What the characteristic records: per-part pass/fail results (or per-lot counts), or
    measured values; the kinds of check whose ``measures`` match apply to it."""
    return "pass_fail" if subject.spec.pass_fail else "measured"


def _characteristic(sh: Sheet, on: Subject) -> None:
    c = on.result
    sh.heading(f"Characteristic: {c.name}" + (f" ({c.unit})" if c.unit else ""))
    applies = [k for k in kinds() if k.measures == _measures(on) and k.has_hook("recheck")]
    done: list[Prepare] = []
    for k in applies:  # rows shared by several kinds (the samples, the counts) once
        prepare = getattr(k.hook("recheck"), "prepare", None)
        if prepare is not None and prepare not in done:
            prepare(sh, on)
            done.append(prepare)
    by_name = {k.name: k for k in applies}
    for ch in c.checks:
        kind = by_name.get(ch.check)
        if kind is None:
            continue  # not a kind of check with formulas (e.g. the sufficiency of n)
        sh.heading(f"{ch.check} check: {ch.method}")
        sh.current = (c.name, ch.check)
        hook = kind.hook("recheck")
        if not computed_nothing(sh, ch, getattr(hook, "NUMBERS", NUMBERS)):
            hook.recheck(sh, on, ch)
    sh.blank()


def recheck_rows(evaluation: Evaluation, layout: MeasurementLayout) -> list[list]:
    """The rows of the recheck sheet, to be written from cell A1.

    Parameters
    ----------
    evaluation : Evaluation
        The engine's results; its numbers go in the "Engine" column.
    layout : MeasurementLayout
        From :func:`verify.report.layout.measurement_layout` for the same evaluation: the
        formulas reference its blocks of used values on the measurements sheet(s).

    Returns
    -------
    list of list
        One list per row (row 1 first), each of at most ``len(COLUMNS)`` cells (an empty list
        is an empty row). A string that starts with ``"="`` is a formula; None is an empty
        cell; other cells are values or text. Row
        :data:`SUMMARY_ROW` counts the agreeing rows; row :data:`HEADER_ROW` holds
        :data:`COLUMNS`.

    Examples
    --------
    >>> from tests.factory import make_evaluation  # doctest: +SKIP
    >>> ev = make_evaluation("welch")  # doctest: +SKIP
    >>> rows = recheck_rows(ev, measurement_layout(ev))  # doctest: +SKIP
    >>> rows[HEADER_ROW - 1][0]  # doctest: +SKIP
    'Quantity'
    """
    sh = Sheet(FIRST_BODY_ROW)
    sh.table = sort_proof_table(layout, SORT_PROOF_MAX_ROWS)
    if sh.table is None and len(layout.table):
        sh.note(f"These formulas read fixed row ranges of the measurements sheet (more than "
                f"{SORT_PROOF_MAX_ROWS:,} measurements, or names a lookup cannot match "
                "exactly): sort or filter a copy of the workbook, not this one")
    for c in evaluation.characteristics:
        _characteristic(sh, Subject(evaluation, layout, c))
    multiplicity(sh, evaluation)
    body = sh.rows
    if sh.helpers:
        base = FIRST_BODY_ROW + len(body) + 3  # a blank row, the heading, the column names
        body = body + [
            [],
            # (one line within the printed width: a longer one was cut at the page's edge)
            [as_text(f"{HELPER_HEADING}: the formulas above read these rows, so sorting or "
                     "filtering that table changes no result (grouped: expand to see them)")],
            ["Looked-up value", "Value", None, None, None, None, "Lot"],
        ] + sh.helpers

        def number(m: re.Match) -> str:
            return str(base + int(m.group(1)))

        sub, mark = TOKEN.sub, TOKEN_MARK  # (most texts hold no token: a scan, no call)
        body = [[sub(number, v) if isinstance(v, str) and mark in v else v for v in row]
                for row in body]
    last = FIRST_BODY_ROW + len(body) - 1
    head: list[list] = [
        ["Recheck: the engine's numbers recomputed by this spreadsheet's own functions"],
        [
            "Each row below recomputes one number from the used values on the measurements "
            "sheet with live formulas. Agrees is TRUE when |Spreadsheet - Engine| <= tolerance "
            "x MAX(1, |Engine|). Values without an engine number are intermediate steps."
        ],
        ["Tolerance (relative)", TOLERANCE, None, None, None, "applies to every Agrees cell"],
        ["alpha", float(evaluation.spec.alpha), None, None, None, "the spec's significance level"],
    ]
    if sh.compared:
        e_range = f"E{FIRST_BODY_ROW}:E{last}"
        head.append(
            [
                f"Rows that agree (of {sh.compared} compared)",
                f"=COUNTIF({e_range},TRUE)",
                sh.compared,
                f"=B{SUMMARY_ROW}-C{SUMMARY_ROW}",
                f"=B{SUMMARY_ROW}=C{SUMMARY_ROW}",
                "COUNTIF of TRUE in the Agrees column",
            ]
        )
    else:
        head.append(["Rows that agree", "nothing to compare"])
    head.append([])
    head.append(list(COLUMNS))
    if len(head) != FIRST_BODY_ROW - 1:  # internal layout contract, not input validation
        raise RuntimeError("recheck header rows out of step with FIRST_BODY_ROW")
    return head + body
