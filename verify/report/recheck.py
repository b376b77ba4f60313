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

Every row has the columns of :data:`COLUMNS` (helper rows add the lot in column G). A string
starting with ``"="`` is a formula; all other cells are values or text (no text cell starts with
``"="``).

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
* The Holm step-down adjustment is rebuilt without sorting: the step of p_j is
  ``(m - SUMPRODUCT(--(P < p_j))) * p_j`` and the adjusted p_i is
  ``MIN(1, MAX((p_1 <= p_i) * step_1, ...))`` (one scalar term per step, which gnumeric
  evaluates too; beyond :data:`HOLM_SCALAR_TERMS` steps ``MIN(1, SUMPRODUCT(MAX((P <= p_i) *
  STEPS)))``), which equals the running maximum of the sorted steps, ties included.
* Criteria functions (AVERAGEIFS, MAXIFS, MINIFS) read ``*``, ``?`` and ``~`` as wildcards and
  a leading ``<``, ``>`` or ``=`` as an operator, and compare text without regard to case. Lot
  names are therefore written as ``"=" + name`` with the wildcards escaped by ``~``; where two
  lots of one block would still match each other (names that differ only in case, or that read
  as the same number) the lot means use ``SUMPRODUCT(EXACT(...))`` instead.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..model import CharacteristicResult, CheckResult, Evaluation, ProcessSummary
from .cells import XML_ILLEGAL
from .layout import LOT_COLUMN, VALUE_COLUMN, Block, MeasurementLayout, used_rows

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
    "recheck_rows",
]

TOLERANCE = 1e-9  # relative, on MAX(1, |engine|)
COLUMNS = (
    "Quantity",
    "Spreadsheet",
    "Engine",
    "Difference",
    "Agrees",
    "How the spreadsheet computes it",
)
TOLERANCE_CELL = "$B$3"
ALPHA_CELL = "$B$4"
SUMMARY_ROW = 5  # "rows that agree": COUNTIF over the Agrees column
HEADER_ROW = 7  # the column headings
FIRST_BODY_ROW = 8
# Largest number of helper rows (lot means, subgroup ranges, moving ranges) one block may add.
MAX_HELPER_ROWS = 5000
D2_CONSTANTS = (  # d2(n) for n = 2..25, the same tabled constants the engine uses (common practice)
    1.128, 1.693, 2.059, 2.326, 2.534, 2.704, 2.847, 2.970, 3.078, 3.173, 3.258, 3.336,
    3.407, 3.472, 3.532, 3.588, 3.640, 3.689, 3.735, 3.778, 3.819, 3.858, 3.895, 3.931,
)  # fmt: skip
D3_CONSTANTS = (  # d3(n) for n = 2..25, the engine's tabled constants (Burr's weights)
    0.853, 0.888, 0.880, 0.864, 0.848, 0.833, 0.820, 0.808, 0.797, 0.787, 0.778, 0.770,
    0.763, 0.756, 0.750, 0.744, 0.739, 0.733, 0.729, 0.724, 0.720, 0.716, 0.712, 0.708,
)  # fmt: skip


# --- the sheet builder ------------------------------------------------------------------------


def _number(x) -> float | int | None:
    """The engine's value as a cell value: None when absent or not a finite number."""
    if x is None or isinstance(x, bool):
        return None
    if isinstance(x, int):
        return x
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _text(s: str) -> str | None:
    """A text cell (None when empty): never starts with '=', which would make it a formula."""
    s = XML_ILLEGAL.sub("", s)
    if not s:
        return None
    return s if not s.startswith("=") else " " + s


class _Sheet:
    """Rows of the recheck sheet with their Excel row numbers (body rows start at a fixed row)."""

    def __init__(self, first_row: int):
        self.first_row = first_row
        self.rows: list[list] = []
        self.compared = 0
        self.pairs: dict[str, _Pairs | None] = {}  # paired-difference rows, once per characteristic
        self.current: tuple[str, str] = ("", "")  # (characteristic, check) being written
        self.family_p: dict[tuple[str, str], str] = {}  # p cells of the difference tests
        self.table: _Table | None = None  # set when the formulas can read by key
        self.helpers: list[list] = []  # helper rows, appended after the body
        self.samples: dict = {}  # (characteristic, process) -> _Helper of its used values

    @property
    def next_row(self) -> int:
        return self.first_row + len(self.rows)

    def add(self, *cells) -> int:
        self.rows.append(list(cells))
        return self.first_row + len(self.rows) - 1

    def blank(self) -> None:
        self.add()

    def heading(self, text: str) -> None:
        self.add(_text(text))

    def note(self, text: str) -> None:
        self.add(None, None, None, None, None, _text(text))

    def param(self, label: str, value: float, how: str) -> str:
        """A value the formulas take as given (a limit, a margin, a level)."""
        r = self.add(_text(label), float(value), None, None, None, _text(how))
        return f"$B${r}"

    def qty(self, label: str, formula: str, engine=None, how: str = "") -> str:
        """A recomputed quantity; compared with the engine's value when it has one."""
        r = self.next_row
        eng = _number(engine)
        if eng is None:
            self.add(_text(label), "=" + formula, None, None, None, _text(how))
        else:
            self.compared += 1
            self.add(
                _text(label),
                "=" + formula,
                eng,
                f"=B{r}-C{r}",
                f"=ABS(B{r}-C{r})<={TOLERANCE_CELL}*MAX(1,ABS(C{r}))",
                _text(how),
            )
        return f"$B${r}"

    def unavailable(self, label: str, why: str) -> None:
        self.add(_text(label), _text(f"not available: {why}"))


# --- sort-proof lookups -------------------------------------------------------------------------

# Up to this many measurement rows the formulas read the values through lookups by key
# (characteristic, process, production order), so sorting or filtering the measurements table
# changes nothing; beyond it (each lookup scans the table) they read fixed row ranges.
SORT_PROOF_MAX_ROWS = 20_000
HELPER_HEADING = "Values looked up from the measurements table"
ORDER_BASE = 1  # the measurements sheet counts production order from 1 (a reader's count)
_TOKEN = re.compile(r"\u27e6(\d+)\u27e7")  # a helper row's index, numbered once the body ends


def _tok(i: int) -> str:
    return f"\u27e6{i}\u27e7"


@dataclass(frozen=True)
class _Table:
    """The measurements table as whole columns, for lookups that survive a sort."""

    sheet: str
    last: int  # the last data row
    letters: Mapping[str, str]  # column key -> letter
    by_file: bool  # more than one source file: the file joins the key

    def col(self, key: str) -> str:
        letter = self.letters[key]
        return f"'{self.sheet}'!${letter}$2:${letter}${self.last}"

    def criteria(self, name: str, process: str) -> str:
        """The criteria pairs selecting the used values of one characteristic and process."""
        return (f"{self.col('characteristic')},{_criterion(name)},{self.col('process')},"
                f"{_string_literal('=' + process)},{self.col('used')},TRUE")


def _sort_proof_table(layout: MeasurementLayout) -> _Table | None:
    """The table when every lookup key is safe to use, else None (fixed ranges are used)."""
    from openpyxl.utils import get_column_letter

    from .layout import MEASUREMENT_HEADERS

    t = layout.table
    if len(layout.sheets) != 1 or len(t) == 0 or len(t) > SORT_PROOF_MAX_ROWS:
        return None
    names = [str(x) for x in dict.fromkeys(t["characteristic"].astype(str))]
    if not _criteria_safe(names) or any(n.startswith("=") for n in names):
        return None
    files = [str(x) for x in dict.fromkeys(t["source_file"].astype(str))]
    if len(files) > 1 and not _criteria_safe(files):
        return None
    used = t[t["used"]]
    if used.duplicated(["source_file", "characteristic", "process", "order"]).any():
        return None  # the key would not name one value
    letters = {key: get_column_letter(j) for j, (key, _) in enumerate(MEASUREMENT_HEADERS, 1)}
    return _Table(layout.sheets[0], len(t) + 1, letters, len(files) > 1)


@dataclass(frozen=True)
class _Helper:
    """Helper rows (appended after the body) holding one sample's values, looked up by key.

    Column B holds the value, column G the lot as text, in the engine's production order;
    ``ref`` mirrors :meth:`Block.ref` so the formulas read helpers as they read blocks.
    """

    first: int  # index into the helper rows
    last: int
    sheet: str = ""

    @property
    def count(self) -> int:
        return self.last - self.first + 1

    def ref(self, column: str = VALUE_COLUMN, lo: int = 0, hi: int = 0) -> str:
        c = "G" if column == LOT_COLUMN else "B"
        return f"${c}${_tok(self.first + lo)}:${c}${_tok(self.last + hi)}"


def _lookup(tbl: _Table, name: str, process: str, row) -> str:
    """SUMIFS of the one used value with this key: exact, since exactly one row matches."""
    f = (f"SUMIFS({tbl.col('value')},{tbl.criteria(name, process)},{tbl.col('order')},"
         f"{int(row['order']) + ORDER_BASE}")
    if tbl.by_file:
        f += f",{tbl.col('source_file')},{_criterion(str(row['source_file']))}"
    return f + ")"


def _lot_cell(lot: str) -> str | None:
    """A helper row's lot as the cell must hold it: a text starting with "=" is written as a
    formula giving that text (a plain cell starting with "=" would be a formula)."""
    lot = _as_written(lot)
    return "=" + _string_literal(lot) if lot.startswith("=") else (lot or None)


def _helper_rows(sh: _Sheet, name: str, process: str, rows: pd.DataFrame, label) -> _Helper:
    first = len(sh.helpers)
    for _, r in rows.iterrows():
        sh.helpers.append([_text(label(r)), "=" + _lookup(sh.table, name, process, r), None,
                           None, None, None, _lot_cell(str(r["lot"]))])
    return _Helper(first, len(sh.helpers) - 1)


def _used_block(sh: _Sheet, ev: Evaluation, layout: MeasurementLayout, name: str,
                process: str):
    """Where the used values of one characteristic and process are read from: sort-proof
    helper rows in production order when possible, else the block on the measurements sheet."""
    block = layout.used.get((name, process))
    if sh.table is None:
        return block
    key = (name, process)
    if key not in sh.samples:
        t = ev.measurements.table
        sel = t[(t["characteristic"] == name) & (t["process"] == process) & ~t["excluded"]]
        sel = sel.sort_values(["order", "source_row"], kind="stable")  # as the engine orders
        if sel.empty:
            sh.samples[key] = None
        else:
            sh.samples[key] = _helper_rows(
                sh, name, process, sel,
                lambda r: f"{name}, {process}, production order {int(r['order']) + ORDER_BASE}, "
                          f"source row {int(r['source_row'])}")
    return sh.samples[key]


# --- t distribution formulas ------------------------------------------------------------------


# Holm families up to this size write the adjusted p as MAX of scalar terms (portable to
# gnumeric); larger ones use one array formula (Excel's MAX takes at most 255 arguments)
HOLM_SCALAR_TERMS = 60


def _abs_diff(a: str, b: str) -> str:
    """|a - b| element by element inside SUMPRODUCT, with comparisons instead of ABS: gnumeric
    does not apply ABS to each element of an array there (it returns a wrong sum or #VALUE!),
    while comparisons and arithmetic work in Excel, LibreOffice and gnumeric alike."""
    return f"(({a})>({b}))*(({a})-({b}))+(({b})>({a}))*(({b})-({a}))"


def _beta_two_tail(t: str, df: str) -> str:
    # P(|T| >= |t|) = I_x(df/2, 1/2) with x = df / (df + t^2): exact for fractional df
    return f"_xlfn.BETA.DIST({df}/({df}+{t}^2),{df}/2,0.5,TRUE)"


# TDIST(x, df, tails) (x >= 0) is evaluated by Excel, LibreOffice and gnumeric alike; the newer
# T.DIST, T.DIST.RT and T.DIST.2T are unknown to gnumeric (#NAME?). A tail is subtracted from 1
# only where the result is at least 0.5, so no precision is lost in the far tails.


def _p_two(t: str, df: str, frac: bool) -> str:
    return _beta_two_tail(t, df) if frac else f"TDIST(ABS({t}),{df},2)"


def _p_below(t: str, df: str, frac: bool) -> str:
    """P(T <= t)."""
    if not frac:
        return f"IF({t}<0,TDIST(-({t}),{df},1),1-TDIST({t},{df},1))"
    b = _beta_two_tail(t, df)
    return f"IF({t}<0,0.5*{b},1-0.5*{b})"


def _p_above(t: str, df: str, frac: bool) -> str:
    """P(T >= t)."""
    if not frac:
        return f"IF({t}>0,TDIST({t},{df},1),1-TDIST(-({t}),{df},1))"
    b = _beta_two_tail(t, df)
    return f"IF({t}>0,0.5*{b},1-0.5*{b})"


def _p_side(t: str, df: str, frac: bool, alternative: str) -> str:
    """The p-value of ``t`` for ``alternative``: "greater", "less" or two-sided."""
    if alternative == "greater":
        return _p_above(t, df, frac)
    if alternative == "less":
        return _p_below(t, df, frac)
    return _p_two(t, df, frac)


def _t_quantile(two_tail: str, df: str, frac: bool) -> str:
    """The positive t whose two-sided tail probability is ``two_tail``."""
    if not frac:
        return f"_xlfn.T.INV.2T({two_tail},{df})"
    x = f"_xlfn.BETA.INV({two_tail},{df}/2,0.5)"
    return f"SQRT({df}*(1-{x})/{x})"


_HOW_P = {
    False: "TDIST (integer df; one tail, or two)",
    True: "regularised incomplete beta BETA.DIST(df/(df+t^2), df/2, 1/2) (fractional df)",
}
_HOW_Q = {
    False: "T.INV.2T (integer df)",
    True: "SQRT(df(1-x)/x), x = BETA.INV(tail, df/2, 1/2) (fractional df)",
}


# --- samples -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Sample:
    """Where one process's analysis units sit, and the cells holding their n, mean and sd."""

    process: str
    ref: str
    n: str
    mean: str
    sd: str


@dataclass(frozen=True)
class _Pairs:
    old: str
    new: str
    n: str
    mean: str
    sd: str


def _block_rows(layout: MeasurementLayout, name: str, process: str) -> pd.DataFrame:
    return used_rows(layout.table, _used_flags(layout.table, "used"), name, process)


_FLAGS: dict[tuple[int, str], tuple] = {}


def _used_flags(t: pd.DataFrame, column: str) -> np.ndarray:
    """The used-row flags of a table, one array per table (so the row groups are cached)."""
    hit = _FLAGS.get((id(t), column))
    if hit is None or hit[0] is not t:
        flags = t[column].to_numpy(dtype=bool)
        if column == "excluded":
            flags = ~flags
        if len(_FLAGS) >= 8:
            _FLAGS.clear()
        hit = _FLAGS[(id(t), column)] = (t, flags)
    return hit[1]


def _why_no_block(layout: MeasurementLayout, name: str, process: str) -> str:
    rows = _block_rows(layout, name, process)
    if rows.empty:
        return f"the {process} process has no used values"
    if rows["sheet"].nunique() > 1:
        return (
            f"the {process} process's used values span more than one measurements sheet, so no "
            "single range holds them"
        )
    return f"the {process} process's used values do not form one contiguous range"


def _string_literal(s: str) -> str:
    return '"' + s.replace('"', '""') + '"'


def _criterion(name: str) -> str:
    """An exact-match criterion for AVERAGEIFS / MAXIFS / MINIFS."""
    esc = name.replace("~", "~~").replace("*", "~*").replace("?", "~?")
    return _string_literal("=" + esc)


def _collision_key(name: str):
    try:
        v = float(name)
    except ValueError:
        return name.casefold()
    return ("number", v) if math.isfinite(v) else name.casefold()


def _criteria_safe(lots: list[str]) -> bool:
    """True when no two lots would match each other's criterion (case, numbers, length)."""
    keys = [_collision_key(x) for x in lots]
    return len(set(keys)) == len(keys) and all(len(_criterion(x)) <= 257 for x in lots)


def _as_written(lot: str) -> str:
    """The lot's text as the measurements sheet holds it (XML-illegal characters dropped)."""
    return XML_ILLEGAL.sub("", lot)


def _lot_names_problem(lots: list[str]) -> str | None:
    """Why these lot names cannot go into formulas, or None."""
    written = [_as_written(x) for x in lots]
    if len(set(written)) != len(written):
        return "two lot names differ only in characters a worksheet cannot hold"
    if any(len(x) > 255 for x in written):
        return "a lot name is longer than the 255 characters a formula's text may hold"
    return None


def _lots_of(rows: pd.DataFrame) -> list[str]:
    return [str(x) for x in dict.fromkeys(rows["lot"].astype(str))]


def _lot_means(
    sh: _Sheet, layout: MeasurementLayout, name: str, process: str, block: Block
) -> str | None:
    """Rows of lot means (one per lot); returns the range of their cells, or None."""
    rows = _block_rows(layout, name, process)
    lots = _lots_of(rows)
    if not lots:
        sh.unavailable(f"{process}: lot means", f"the {process} process has no used values")
        return None
    if len(lots) > MAX_HELPER_ROWS:
        sh.unavailable(
            f"{process}: lot means",
            f"{len(lots)} lots exceed the {MAX_HELPER_ROWS} helper rows this sheet allows",
        )
        return None
    problem = _lot_names_problem(lots)
    if problem is not None:
        sh.unavailable(f"{process}: lot means", problem)
        return None
    lots = [_as_written(x) for x in lots]
    values, lot_col = block.ref(VALUE_COLUMN), block.ref(LOT_COLUMN)
    safe = _criteria_safe(lots)
    how = (
        "AVERAGEIFS over the used values of this lot (exact-match criterion)"
        if safe
        else "SUMPRODUCT(EXACT(lot, name) * value) / SUMPRODUCT(EXACT(lot, name) * 1): lot "
        "names that criteria functions would confuse (case, numbers)"
    )
    first = sh.next_row
    for lot in lots:
        if safe:
            f = f"AVERAGEIFS({values},{lot_col},{_criterion(lot)})"
        else:
            lit = _string_literal(lot)
            f = f"SUMPRODUCT(EXACT({lot_col},{lit})*{values})/SUMPRODUCT(EXACT({lot_col},{lit})*1)"
        sh.qty(f"{process}: mean of lot {lot}", f, None, how)
    return f"$B${first}:$B${sh.next_row - 1}"


def _sample(
    sh: _Sheet,
    ev: Evaluation,
    layout: MeasurementLayout,
    c: CharacteristicResult,
    process: str,
    summary: ProcessSummary,
) -> _Sample | None:
    block = _used_block(sh, ev, layout, c.name, process)
    by_lot = ev.spec.unit_of_analysis == "lot"
    unit = "lot means" if by_lot else "values"
    if block is None:
        sh.unavailable(f"{process}: n, mean and sd", _why_no_block(layout, c.name, process))
        return None
    if by_lot:
        ref = _lot_means(sh, layout, c.name, process, block)
        if ref is None:
            return None
        where = f"the {process} lot means above"
    else:
        ref = block.ref(VALUE_COLUMN)
        where = (f"the {process} values looked up below" if isinstance(block, _Helper) else
                 f"{block.sheet}!{VALUE_COLUMN}{block.first}:{VALUE_COLUMN}{block.last}")
    n = sh.qty(
        f"{process}: n ({'lots' if by_lot else 'parts'})",
        f"COUNT({ref})",
        summary.n,
        f"COUNT of {where}",
    )
    mean = sh.qty(
        f"{process}: mean", f"AVERAGE({ref})", summary.mean, f"AVERAGE of the {process} {unit}"
    )
    sd = sh.qty(
        f"{process}: standard deviation",
        f"_xlfn.STDEV.S({ref})",
        summary.sd,
        f"STDEV.S (n - 1) of the {process} {unit}",
    )
    return _Sample(process, ref, n, mean, sd)


def _pairs(
    sh: _Sheet, ev: Evaluation, layout: MeasurementLayout, c: CharacteristicResult, engine_sd
) -> _Pairs | None:
    if c.name not in sh.pairs:
        sh.pairs[c.name] = _pair_rows(sh, ev, layout, c, engine_sd)
    return sh.pairs[c.name]


def _aligned(layout: MeasurementLayout, bo: Block, bn: Block) -> bool:
    """True when row i of both blocks holds the same non-empty pair key, each key once."""
    t = layout.table

    def keys(b: Block) -> list[str]:
        rows = t[(t["sheet"] == b.sheet) & (t["row"] >= b.first) & (t["row"] <= b.last)]
        return [str(k) for k in rows.sort_values("row")["pair"]]

    ko, kn = keys(bo), keys(bn)
    return ko == kn and len(ko) == bo.count and "" not in ko and len(set(ko)) == len(ko)


def _pair_rows(
    sh: _Sheet, ev: Evaluation, layout: MeasurementLayout, c: CharacteristicResult, engine_sd
) -> _Pairs | None:
    if sh.table is not None:
        return _pair_helpers(sh, ev, c, engine_sd)
    blocks = layout.paired.get(c.name)
    if blocks is None:
        sh.unavailable(
            "paired differences",
            "the matched pairs do not form two aligned ranges on one measurements sheet",
        )
        return None
    bo, bn = blocks
    if not _aligned(layout, bo, bn):
        sh.unavailable(
            "paired differences",
            "the rows of the matched old and new ranges do not carry the same pair keys in the "
            "same order",
        )
        return None
    o, n_ = bo.ref(VALUE_COLUMN), bn.ref(VALUE_COLUMN)
    where = (
        f"{bn.sheet}!{VALUE_COLUMN}{bn.first}:{VALUE_COLUMN}{bn.last} minus "
        f"{VALUE_COLUMN}{bo.first}:{VALUE_COLUMN}{bo.last}, aligned by pair key"
    )
    n = sh.qty("pairs: n", f"COUNT({n_})", c.pairs, f"COUNT of the matched new values ({where})")
    mean = sh.qty(
        "pairs: mean difference (new - old)",
        f"SUMPRODUCT({n_}-{o})/{n}",
        None,
        "SUMPRODUCT of the differences / n",
    )
    sd = sh.qty(
        "pairs: sd of the differences",
        f"SQRT(SUMPRODUCT(({n_}-{o}-{mean})^2)/({n}-1))",
        engine_sd,
        "SQRT(SUMPRODUCT((difference - mean)^2) / (n - 1))",
    )
    return _Pairs(o, n_, n, mean, sd)


def _pair_helpers(sh: _Sheet, ev: Evaluation, c: CharacteristicResult, engine_sd
                  ) -> _Pairs | None:
    """Matched pairs as two aligned runs of helper rows, each value looked up by its pair key
    (or, for keys a criterion cannot match exactly, by its production order)."""
    t = ev.measurements.table
    sel = t[(t["characteristic"] == c.name) & ~t["excluded"] & (t["pair"] != "")]
    sides = {p: sel[sel["process"] == p].set_index("pair", drop=False) for p in ("old", "new")}
    keys = sorted(set(sides["old"].index) & set(sides["new"].index))
    if not keys:
        sh.unavailable("paired differences", "no pair key has a used value on both sides")
        return None
    if 2 * len(keys) > MAX_HELPER_ROWS * 20:
        sh.unavailable("paired differences", "too many pairs for helper rows")
        return None
    by_key = _criteria_safe(keys) and not any(k.startswith("=") for k in keys)
    tbl = sh.table
    refs = {}
    for p in ("old", "new"):
        first = len(sh.helpers)
        for k in keys:
            r = sides[p].loc[k]
            if by_key:
                f = (f"SUMIFS({tbl.col('value')},{tbl.criteria(c.name, p)},{tbl.col('pair')},"
                     f"{_criterion(_as_written(k))})")
            else:
                f = _lookup(tbl, c.name, p, r)
            sh.helpers.append([_text(f"{c.name}, {p}, pair key {k}"), "=" + f, None, None, None,
                               None, _lot_cell(str(r["lot"]))])
        refs[p] = _Helper(first, len(sh.helpers) - 1).ref(VALUE_COLUMN)
    o, n_ = refs["old"], refs["new"]
    how = "looked up by pair key" if by_key else "looked up by production order"
    n = sh.qty("pairs: n", f"COUNT({n_})", c.pairs,
               f"COUNT of the matched new values ({how}, old and new aligned by key below)")
    mean = sh.qty(
        "pairs: mean difference (new - old)",
        f"SUMPRODUCT({n_}-{o})/{n}",
        None,
        "SUMPRODUCT of the differences / n",
    )
    sd = sh.qty(
        "pairs: sd of the differences",
        f"SQRT(SUMPRODUCT(({n_}-{o}-{mean})^2)/({n}-1))",
        engine_sd,
        "SQRT(SUMPRODUCT((difference - mean)^2) / (n - 1))",
    )
    return _Pairs(o, n_, n, mean, sd)


# --- location tests (target and shift) ---------------------------------------------------------


def _one_sided(
    sh: _Sheet, ch: CheckResult, side: str, bound: str, est: str, se: str, df: str, frac: bool
) -> tuple[str, str]:
    """t and p cells of TOST's one-sided test at one margin: "lower" tests H0 effect <= low
    (p from the upper tail), "upper" tests H0 effect >= high (p from the lower tail)."""
    lower = side == "lower"
    word, op, tail = ("low", "<=", ">=") if lower else ("high", ">=", "<=")
    t_engine, p_engine = (
        (ch.statistic_lower, ch.p_lower) if lower else (ch.statistic_upper, ch.p_upper)
    )
    t = sh.qty(
        f"t, {side} one-sided test", f"({est}-{bound})/{se}", t_engine, f"(estimate - {word}) / se"
    )
    p_formula = (_p_above if lower else _p_below)(t, df, frac)
    p = sh.qty(
        f"p, {side} one-sided test (H0: effect {op} {word})",
        p_formula,
        p_engine,
        f"P(T {tail} t): {_HOW_P[frac]}",
    )
    return t, p


def _location_test(
    sh: _Sheet,
    ch: CheckResult,
    side: str,
    est: str,
    se: str,
    df: str,
    frac: bool,
    cross=None,
) -> None:
    """t statistic, p-values, interval and critical value of a t-test or TOST on (est, se, df).

    ``cross`` is (two-sided formula, one-sided formula) from T.TEST, for a cross-check of p.
    """
    hp, hq = _HOW_P[frac], _HOW_Q[frac]
    if ch.margin is not None:
        low = sh.param("margin: low", ch.margin[0], "the spec's margin (lower end)")
        high = sh.param("margin: high", ch.margin[1], "the spec's margin (upper end)")
        p_cells = []
        if side in ("two-sided", "lower"):
            p_cells.append(_one_sided(sh, ch, "lower", low, est, se, df, frac))
        if side in ("two-sided", "upper"):
            p_cells.append(_one_sided(sh, ch, "upper", high, est, se, df, frac))
        if len(p_cells) == 2:
            (t_lo, p_lo), (t_hi, p_hi) = p_cells
            sh.qty(
                "t of the deciding test",
                f"IF({p_lo}>={p_hi},{t_lo},{t_hi})",
                ch.statistic,
                "the t of the larger one-sided p",
            )
            sh.qty(
                "p (TOST)",
                f"MAX({p_lo},{p_hi})",
                ch.p_value,
                "the larger of the two one-sided p-values",
            )
        else:
            t1, p1 = p_cells[0]
            sh.qty("t (non-inferiority)", t1, ch.statistic, "the harmful side's one-sided t")
            sh.qty("p (non-inferiority)", p1, ch.p_value, "the harmful side's one-sided p")
        crit = ("critical t (one-sided, alpha)", f"2*{ALPHA_CELL}")
        two_sided_ci, side_ci = True, "two-sided"
    else:
        alt = ch.alternative or "two-sided"
        t = sh.qty("t", f"{est}/{se}", ch.statistic, "estimate / se")
        if alt == "less":
            p = sh.qty("p (H1: effect < 0)", _p_below(t, df, frac), ch.p_value, f"P(T <= t): {hp}")
        elif alt == "greater":
            p = sh.qty("p (H1: effect > 0)", _p_above(t, df, frac), ch.p_value, f"P(T >= t): {hp}")
        else:
            p = sh.qty("p (two-sided)", _p_two(t, df, frac), ch.p_value, f"P(|T| >= |t|): {hp}")
        sh.family_p[sh.current] = p
        if cross is not None:
            two, one = cross
            if alt == "two-sided":
                f = two
            else:
                toward = f"{t}<0" if alt == "less" else f"{t}>0"
                f = f"IF({toward},{one},1-{one})"
            sh.qty(
                "p, cross-check with T.TEST",
                f,
                ch.p_value,
                "T.TEST on the same ranges (an independent route to the same p)",
            )
        if alt == "two-sided":
            crit = ("critical t (two-sided, alpha)", ALPHA_CELL)
        else:
            crit = ("critical t (one-sided, alpha)", f"2*{ALPHA_CELL}")
        two_sided_ci = alt == "two-sided"
        side_ci = alt
    if ch.ci_level is not None:
        level = sh.param("confidence level", ch.ci_level, "the level the engine reports")
        if two_sided_ci:
            q = sh.qty(
                "t quantile of the interval",
                _t_quantile(f"1-{level}", df, frac),
                None,
                f"two-sided tail 1 - level: {hq}",
            )
            sh.qty("interval: low", f"{est}-{q}*{se}", ch.ci_low, "estimate - quantile * se")
            sh.qty("interval: high", f"{est}+{q}*{se}", ch.ci_high, "estimate + quantile * se")
        else:
            q = sh.qty(
                "t quantile of the bound",
                _t_quantile(f"2*(1-{level})", df, frac),
                None,
                f"one-sided tail 1 - level: {hq}",
            )
            if side_ci == "less":
                sh.qty("upper bound", f"{est}+{q}*{se}", ch.ci_high, "estimate + quantile * se")
            else:
                sh.qty("lower bound", f"{est}-{q}*{se}", ch.ci_low, "estimate - quantile * se")
    if ch.p_adjusted is not None and ch.ci_level is not None and ch.margin is None:
        # a member of an adjusted family: its critical value is at alpha / m, the level of its
        # interval (1 - alpha / m)
        crit = ((crit[0].replace("alpha)", "alpha / m)"), f"(1-{level})") if two_sided_ci
                else (crit[0].replace("alpha)", "alpha / m)"), f"2*(1-{level})"))
    sh.qty(crit[0], _t_quantile(crit[1], df, frac), ch.critical_value, hq)


def _target(sh: _Sheet, c: CharacteristicResult, ch: CheckResult, samples) -> None:
    s = samples.get("new")
    if s is None:
        sh.unavailable("target check", "the new process's values are not available above")
        return
    if c.spec.target is None:
        sh.unavailable("target check", "the spec gives no target")
        return
    tgt = sh.param("target", c.spec.target, "the spec's target")
    est = sh.qty("estimate: mean - target", f"{s.mean}-{tgt}", ch.estimate, "new mean - target")
    se = sh.qty("standard error", f"{s.sd}/SQRT({s.n})", ch.standard_error, "sd / SQRT(n)")
    df = sh.qty("degrees of freedom", f"{s.n}-1", ch.df, "n - 1")
    _location_test(sh, ch, c.spec.side, est, se, df, frac=False)


def _shift(sh: _Sheet, ev, layout, c: CharacteristicResult, ch: CheckResult, samples) -> None:
    design = ch.design or (c.spec.checks.shift.design if c.spec.checks.shift else "welch")
    extra = ch.details_mapping()
    if design == "paired":
        pr = _pairs(sh, ev, layout, c, extra.get("sd"))
        if pr is None:
            return
        est = sh.qty(
            "estimate: mean difference (new - old)",
            pr.mean,
            ch.estimate,
            "the mean of the paired differences",
        )
        se = sh.qty(
            "standard error",
            f"{pr.sd}/SQRT({pr.n})",
            ch.standard_error,
            "sd of differences / SQRT(n)",
        )
        df = sh.qty("degrees of freedom", f"{pr.n}-1", ch.df, "pairs - 1")
        cross = (f"_xlfn.T.TEST({pr.new},{pr.old},2,1)", f"_xlfn.T.TEST({pr.new},{pr.old},1,1)")
        _location_test(sh, ch, c.spec.side, est, se, df, frac=False, cross=cross)
        return
    o, n = samples.get("old"), samples.get("new")
    if o is None or n is None:
        sh.unavailable("shift check", "the values of both processes are needed above")
        return
    est = sh.qty(
        "estimate: new mean - old mean",
        f"{n.mean}-{o.mean}",
        ch.estimate,
        "difference of the means",
    )
    if design == "pooled":
        sp = sh.qty(
            "pooled standard deviation",
            f"SQRT((({n.n}-1)*{n.sd}^2+({o.n}-1)*{o.sd}^2)/({n.n}+{o.n}-2))",
            extra.get("sd"),
            "SQRT(((n_new-1) sd_new^2 + (n_old-1) sd_old^2) / (n_new + n_old - 2))",
        )
        se = sh.qty(
            "standard error",
            f"{sp}*SQRT(1/{n.n}+1/{o.n})",
            ch.standard_error,
            "pooled sd * SQRT(1/n_new + 1/n_old)",
        )
        df = sh.qty("degrees of freedom", f"{n.n}+{o.n}-2", ch.df, "n_new + n_old - 2")
        frac, ttype = False, 2
    else:
        vn = sh.qty("new: variance of the mean", f"{n.sd}^2/{n.n}", None, "sd_new^2 / n_new")
        vo = sh.qty("old: variance of the mean", f"{o.sd}^2/{o.n}", None, "sd_old^2 / n_old")
        se = sh.qty(
            "standard error",
            f"SQRT({vn}+{vo})",
            ch.standard_error,
            "SQRT(sd_new^2/n_new + sd_old^2/n_old)",
        )
        df = sh.qty(
            "degrees of freedom (Welch-Satterthwaite)",
            f"({vn}+{vo})^2/({vn}^2/({n.n}-1)+{vo}^2/({o.n}-1))",
            ch.df,
            "(v_new + v_old)^2 / (v_new^2/(n_new-1) + v_old^2/(n_old-1))",
        )
        frac, ttype = True, 3
    cross = (f"_xlfn.T.TEST({n.ref},{o.ref},2,{ttype})", f"_xlfn.T.TEST({n.ref},{o.ref},1,{ttype})")
    _location_test(sh, ch, c.spec.side, est, se, df, frac=frac, cross=cross)


# --- spread --------------------------------------------------------------------------------


def _spread(sh: _Sheet, ev, layout, c: CharacteristicResult, ch: CheckResult, samples) -> None:
    extra = ch.details_mapping()
    method = (ch.method or "").lower()
    if "pitman" in method:
        _pitman_morgan(sh, ev, layout, c, ch)
        return
    if "within-lot" in method:
        _within_lot_spread(sh, layout, c, ch)
        return
    shift = c.spec.checks.shift
    sp = c.spec.checks.spread
    opted_out = sp is not None and sp.design == "independent" and sp.design_given
    if c.pairs is not None and shift is not None and shift.design == "paired" and not opted_out:
        # an F-test reported on paired data runs on the matched pairs only
        pr = _pairs(sh, ev, layout, c, None)
        if pr is None:
            return
        o, n = (_matched_sample(sh, pr, p) for p in ("old", "new"))
    else:
        o, n = samples.get("old"), samples.get("new")
    if o is None or n is None:
        sh.unavailable("spread check", "the values of both processes are needed above")
        return
    brown = "brown" in method
    f = sh.qty(
        "F ratio (variance new / variance old)",
        f"{n.sd}^2/{o.sd}^2",
        extra.get("F", None if brown else ch.statistic),
        "sd_new^2 / sd_old^2",
    )
    d1 = sh.qty("df, numerator", f"{n.n}-1", extra.get("df_num"), "n_new - 1")
    d2 = sh.qty(
        "df, denominator", f"{o.n}-1", extra.get("df_den", extra.get("df_denominator")), "n_old - 1"
    )
    _f_rows(sh, ch, f, d1, d2, descriptive=brown)
    if brown:
        _brown_forsythe(sh, ch, o, n)


def _f_rows(sh: _Sheet, ch: CheckResult, f: str, d1: str, d2: str, *, descriptive: bool,
            label: str = "sd ratio") -> None:
    """The sd ratio, the F-test's p-value and its interval from the F cell and its df cells.

    ``descriptive``: the F-test stands beside a Brown-Forsythe decision; its ratio and interval
    are compared with the engine's descriptive figures and its p-value is not the check's.
    """
    extra = ch.details_mapping()
    ratio = extra.get("sd_ratio_descriptive") if descriptive else ch.estimate
    sh.qty(f"{label} (new / old)", f"SQRT({f})", ratio, "SQRT(F)")
    if not descriptive:
        alt = ch.alternative or "greater"
        if alt == "greater":
            fp = f"_xlfn.F.DIST.RT({f},{d1},{d2})"
        elif alt == "less":
            fp = f"_xlfn.F.DIST({f},{d1},{d2},TRUE)"
        else:
            fp = f"MIN(1,2*MIN(_xlfn.F.DIST.RT({f},{d1},{d2}),_xlfn.F.DIST({f},{d1},{d2},TRUE)))"
        sh.family_p[sh.current] = sh.qty(
            f"p (F-test, {alt})", fp, ch.p_value, "F.DIST.RT / F.DIST (integer df)")
    if ch.ci_level is None:
        return
    low = extra.get("sd_ratio_low_descriptive") if descriptive else ch.ci_low
    high = extra.get("sd_ratio_high_descriptive") if descriptive else ch.ci_high
    what = " (descriptive)" if descriptive else ""
    level = sh.param("confidence level", ch.ci_level, "the level the engine reports")
    if _number(high) is not None:
        sh.qty(
            f"{label} interval{what}: low",
            f"SQRT({f}/_xlfn.F.INV.RT((1-{level})/2,{d1},{d2}))",
            low,
            "SQRT(F / F.INV.RT((1 - level)/2))",
        )
        sh.qty(
            f"{label} interval{what}: high",
            f"SQRT({f}/_xlfn.F.INV((1-{level})/2,{d1},{d2}))",
            high,
            "SQRT(F / F.INV((1 - level)/2))",
        )
    else:
        sh.qty(
            f"{label} lower bound{what}",
            f"SQRT({f}/_xlfn.F.INV.RT(1-{level},{d1},{d2}))",
            low,
            "SQRT(F / F.INV.RT(1 - level))",
        )


def _lot_components(sh: _Sheet, layout, c: CharacteristicResult, process: str
                    ) -> tuple[str, str] | None:
    """Within- and between-lot variance components of one process from per-lot helper rows;
    returns the cells of the within-lot df and the pooled within-lot variance."""
    block = sh.samples.get((c.name, process)) if sh.table is not None else layout.used.get(
        (c.name, process))
    if block is None:
        sh.unavailable(f"{process}: lot components", _why_no_block(layout, c.name, process))
        return None
    lots = _lots_of(_block_rows(layout, c.name, process))
    problem = _lot_names_problem(lots)
    if problem is None and 3 * len(lots) > MAX_HELPER_ROWS:
        problem = f"{len(lots)} lots need more than the {MAX_HELPER_ROWS} helper rows allowed"
    if problem is not None:
        sh.unavailable(f"{process}: lot components", problem)
        return None
    values, lot_col = block.ref(VALUE_COLUMN), block.ref(LOT_COLUMN)
    lits = [_string_literal(_as_written(x)) for x in lots]
    how_in = "SUMPRODUCT(--EXACT(lot, name), ...): this lot's used values"
    first_n = sh.next_row
    for lot, lit in zip(lots, lits, strict=True):
        sh.qty(f"{process} lot {lot}: n", f"SUMPRODUCT(--EXACT({lot_col},{lit}))", None, how_in)
    first_m = sh.next_row
    for i, (lot, lit) in enumerate(zip(lots, lits, strict=True)):
        sh.qty(f"{process} lot {lot}: mean",
               f"SUMPRODUCT(--EXACT({lot_col},{lit}),{values})/$B${first_n + i}", None, how_in)
    first_s = sh.next_row
    for i, (lot, lit) in enumerate(zip(lots, lits, strict=True)):
        sh.qty(f"{process} lot {lot}: sum of squares about its mean",
               f"SUMPRODUCT(--EXACT({lot_col},{lit}),({values}-$B${first_m + i})^2)", None,
               how_in)
    n_rng = f"$B${first_n}:$B${first_m - 1}"
    m_rng = f"$B${first_m}:$B${first_s - 1}"
    s_rng = f"$B${first_s}:$B${sh.next_row - 1}"
    k = len(lots)
    summary = c.processes.get(process)
    total = sh.qty(f"{process}: N (parts)", f"SUM({n_rng})", None, "SUM of the lot sizes")
    dfw = sh.qty(f"{process}: within-lot df, sum(n_i - 1)", f"{total}-{k}", None, "N - k")
    msw = sh.qty(f"{process}: pooled within-lot variance", f"SUM({s_rng})/{dfw}", None,
                 "sum of the lots' sums of squares / (N - k)")
    sh.qty(f"{process}: sd within lots", f"SQRT({msw})",
           None if summary is None else summary.sd_within_lot, "SQRT(MS_within)")
    grand = sh.qty(f"{process}: grand mean", f"SUMPRODUCT({n_rng},{m_rng})/{total}", None,
                   "size-weighted mean of the lot means")
    msb = sh.qty(f"{process}: between-lot mean square",
                 f"SUMPRODUCT({n_rng},({m_rng}-{grand})^2)/({k}-1)", None,
                 "sum n_i (mean_i - grand)^2 / (k - 1)")
    n0 = sh.qty(f"{process}: effective lot size n0",
                f"({total}-SUMPRODUCT({n_rng},{n_rng})/{total})/({k}-1)", None,
                "(N - sum n_i^2 / N) / (k - 1)")
    sh.qty(f"{process}: sd between lots", f"SQRT(MAX(0,({msb}-{msw})/{n0}))",
           None if summary is None else summary.sd_between_lot,
           "SQRT(MAX(0, (MS_between - MS_within) / n0)) (method of moments)")
    return dfw, msw


def _within_lot_spread(sh: _Sheet, layout, c: CharacteristicResult, ch: CheckResult) -> None:
    """unit_of_analysis lot: the pooled within-lot variances, compared by F."""
    extra = ch.details_mapping()
    old = _lot_components(sh, layout, c, "old")
    new = _lot_components(sh, layout, c, "new")
    if old is None or new is None:
        return
    f = sh.qty("F ratio (pooled within-lot variance new / old)", f"{new[1]}/{old[1]}",
               extra.get("F"), "MS_within new / MS_within old")
    sh.qty("df, numerator", new[0], extra.get("df_num"), "new: sum(n_i - 1)")
    sh.qty("df, denominator", old[0], extra.get("df_den"), "old: sum(n_i - 1)")
    _f_rows(sh, ch, f, new[0], old[0], descriptive=False, label="within-lot sd ratio")


def _matched_sample(sh: _Sheet, pr: _Pairs, process: str) -> _Sample:
    ref = pr.old if process == "old" else pr.new
    mean = sh.qty(f"matched {process}: mean", f"AVERAGE({ref})", None, "AVERAGE")
    sd = sh.qty(
        f"matched {process}: standard deviation",
        f"_xlfn.STDEV.S({ref})",
        None,
        "STDEV.S of the matched values",
    )
    return _Sample(process, ref, pr.n, mean, sd)


def _brown_forsythe(sh: _Sheet, ch: CheckResult, o: _Sample, n: _Sample) -> None:
    cells = {}
    for s in (o, n):
        med = sh.qty(f"{s.process}: median", f"MEDIAN({s.ref})", None, "MEDIAN")
        mad = sh.qty(
            f"{s.process}: mean absolute deviation from the median",
            f"SUMPRODUCT({_abs_diff(s.ref, med)})/{s.n}",
            None,
            "SUMPRODUCT(ABS(value - median)) / n",
        )
        ss = sh.qty(
            f"{s.process}: sum of squares of the absolute deviations",
            f"SUMPRODUCT(({_abs_diff(s.ref, med)}-{mad})^2)",
            None,
            "SUMPRODUCT((|value - median| - mean)^2)",
        )
        cells[s.process] = (mad, ss)
    (mo, so), (mn, sn) = cells["old"], cells["new"]
    df = sh.qty("Brown-Forsythe df", f"{n.n}+{o.n}-2", None, "n_new + n_old - 2")
    se = sh.qty(
        "Brown-Forsythe standard error",
        f"SQRT(({so}+{sn})/{df}*(1/{n.n}+1/{o.n}))",
        None,
        "pooled t-test on the absolute deviations",
    )
    est = sh.qty("Brown-Forsythe estimate: mean abs dev new - old", f"{mn}-{mo}", ch.estimate,
                 "the difference the test is about")
    t = sh.qty("Brown-Forsythe t", f"{est}/{se}", None, "(mean abs dev new - old) / se")
    sh.qty("Brown-Forsythe W = t^2", f"{t}^2", ch.statistic, "t^2")
    alt = ch.alternative or "greater"
    sh.family_p[sh.current] = sh.qty(
        f"p (Brown-Forsythe, {alt})", _p_side(t, df, False, alt), ch.p_value, _HOW_P[False])
    if ch.ci_level is not None and _number(ch.ci_low) is not None:
        level = sh.param("confidence level (Brown-Forsythe)", ch.ci_level,
                         "the level the engine reports")
        q = sh.qty("t quantile", _t_quantile(f"1-{level}", df, False), None, _HOW_Q[False])
        sh.qty("Brown-Forsythe interval: low", f"{est}-{q}*{se}", ch.ci_low, "estimate - t se")
        if _number(ch.ci_high) is not None:
            sh.qty("Brown-Forsythe interval: high", f"{est}+{q}*{se}", ch.ci_high,
                   "estimate + t se")


def _pitman_morgan(sh: _Sheet, ev, layout, c: CharacteristicResult, ch: CheckResult) -> None:
    pr = _pairs(sh, ev, layout, c, None)
    if pr is None:
        return
    o, n = pr.old, pr.new
    extra = ch.details_mapping()
    vn = sh.qty("paired new: variance", f"_xlfn.VAR.S({n})", None, "VAR.S of the matched new")
    vo = sh.qty("paired old: variance", f"_xlfn.VAR.S({o})", None, "VAR.S of the matched old")
    cov = sh.qty("covariance old, new", f"_xlfn.COVARIANCE.S({o},{n})", None, "COVARIANCE.S")
    r_on = sh.qty("correlation old, new", f"CORREL({o},{n})", extra.get("correlation"), "CORREL")
    sh.qty("sd ratio (new / old)", f"SQRT({vn}/{vo})", ch.estimate, "SQRT(var_new / var_old)")
    r = sh.qty(
        "correlation of differences and sums",
        f"({vn}-{vo})/SQRT(({vn}+{vo})^2-4*{cov}^2)",
        None,
        "(var_new - var_old) / SQRT((var_new + var_old)^2 - 4 cov^2)",
    )
    df = sh.qty("degrees of freedom", f"{pr.n}-2", ch.df, "pairs - 2")
    t = sh.qty(
        "t (Pitman-Morgan)", f"{r}*SQRT({df}/(1-{r}^2))", ch.statistic, "r * SQRT(df / (1 - r^2))"
    )
    alt = ch.alternative or "greater"
    sh.family_p[sh.current] = sh.qty(
        f"p (Pitman-Morgan, {alt})", _p_side(t, df, False, alt), ch.p_value, _HOW_P[False])
    if ch.ci_level is not None and _number(ch.ci_low) is not None:
        level = sh.param("confidence level", ch.ci_level, "the level the engine reports")
        q = sh.qty("t quantile", _t_quantile(f"1-{level}", df, False), None, _HOW_Q[False])
        k = sh.qty("K", f"1+2*(1-{r_on}^2)*{q}^2/{df}", None, "1 + 2 (1 - r^2) t^2 / df")
        ratio2 = f"{vn}/{vo}"
        sh.qty(
            "sd ratio interval: low",
            f"SQRT({ratio2}*({k}-SQRT({k}^2-1)))",
            ch.ci_low,
            "SQRT(F (K - SQRT(K^2 - 1)))",
        )
        if _number(ch.ci_high) is not None:
            sh.qty(
                "sd ratio interval: high",
                f"SQRT({ratio2}*({k}+SQRT({k}^2-1)))",
                ch.ci_high,
                "SQRT(F (K + SQRT(K^2 - 1)))",
            )


# --- capability ----------------------------------------------------------------------------


def _production_order(layout: MeasurementLayout, ev: Evaluation, name: str, process: str):
    """The used rows in the engine's production order and the same rows in sheet order."""
    t = ev.measurements.table
    sel = used_rows(t, _used_flags(t, "excluded"), name, process)
    sel = sel.sort_values(["order", "source_row"], kind="stable")  # as the engine orders them
    return sel, _block_rows(layout, name, process).sort_values(["sheet", "row"], kind="stable")


def _same_rows(a: pd.DataFrame, b: pd.DataFrame) -> bool:
    return len(a) == len(b) and bool(
        np.array_equal(a["source_row"].to_numpy(), b["source_row"].to_numpy())
        and np.array_equal(
            a["source_file"].astype(str).to_numpy(), b["source_file"].astype(str).to_numpy()
        )
    )


def _sheet_cells(sel: pd.DataFrame, lt: pd.DataFrame) -> list[tuple[str, int]] | None:
    """(sheet, row) of each row of ``sel`` (production order), found by file and source row."""
    where = {
        (str(f), int(r)): (str(sh), int(row))
        for f, r, sh, row in zip(
            lt["source_file"], lt["source_row"], lt["sheet"], lt["row"], strict=True
        )
    }
    if len(where) != len(lt):
        return None
    out = []
    for f, r in zip(sel["source_file"], sel["source_row"], strict=True):
        hit = where.get((str(f), int(r)))
        if hit is None:
            return None
        out.append(hit)
    return out


def _moving_range(sh: _Sheet, ev, layout, name: str, block: Block, n: str) -> str | None:
    """The cell holding the average moving range of the new values in production order."""
    if block.count < 2:
        sh.unavailable("average moving range", "fewer than 2 values")
        return None
    if isinstance(block, _Helper):  # the helper rows are in production order
        return sh.qty(
            "average moving range",
            "SUMPRODUCT("
            + _abs_diff(block.ref(VALUE_COLUMN, 1, 0), block.ref(VALUE_COLUMN, 0, -1))
            + f")/({n}-1)",
            None,
            "SUMPRODUCT(ABS(x[i+1] - x[i])) / (n - 1), the values looked up in production order",
        )
    sel, lt = _production_order(layout, ev, name, "new")
    if _same_rows(sel, lt):  # the block lists the values in production order
        a = Block(block.sheet, block.first + 1, block.last).ref(VALUE_COLUMN)
        b = Block(block.sheet, block.first, block.last - 1).ref(VALUE_COLUMN)
        return sh.qty(
            "average moving range",
            f"SUMPRODUCT({_abs_diff(a, b)})/({n}-1)",
            None,
            "SUMPRODUCT(ABS(x[i+1] - x[i])) / (n - 1), rows in production order",
        )
    if len(sel) - 1 > MAX_HELPER_ROWS:
        sh.unavailable(
            "average moving range",
            "the sheet's row order is not production order and the values are too "
            f"many for helper rows (more than {MAX_HELPER_ROWS})",
        )
        return None
    order = _sheet_cells(sel, lt)
    if order is None:
        sh.unavailable("average moving range", "the production order cannot be matched to rows")
        return None
    first = sh.next_row
    for i in range(1, len(order)):
        (s1, r1), (s0, r0) = order[i], order[i - 1]
        sh.qty(
            f"moving range {i}",
            f"ABS('{s1}'!${VALUE_COLUMN}${r1}-'{s0}'!${VALUE_COLUMN}${r0})",
            None,
            "consecutive values in production order (the sheet lists them by pair key)",
        )
    return sh.qty(
        "average moving range",
        f"AVERAGE($B${first}:$B${sh.next_row - 1})",
        None,
        "AVERAGE of the moving ranges above",
    )


def _subgroup_sigma(sh: _Sheet, layout, name: str, block: Block) -> tuple[str, str] | None:
    """Rows of range / d2(size) per lot and of Burr's weight per lot; their two ranges."""
    rows = _block_rows(layout, name, "new")
    lots = _lots_of(rows)
    problem = _lot_names_problem(lots)
    if problem is not None:
        sh.unavailable("within sigma from lot ranges", problem)
        return None
    if not _criteria_safe([_as_written(x) for x in lots]):
        sh.unavailable(
            "within sigma from lot ranges",
            "lot names differ only in case or read as the same number, which the "
            "criteria functions MAXIFS / MINIFS cannot tell apart",
        )
        return None
    counts = rows.groupby(rows["lot"].astype(str)).size()
    if 2 * len(lots) > MAX_HELPER_ROWS:
        sh.unavailable("within sigma from lot ranges", f"more than {MAX_HELPER_ROWS // 2} lots")
        return None
    if int(counts.max()) > len(D2_CONSTANTS) + 1:
        sh.unavailable(
            "within sigma from lot ranges",
            "a lot holds more than 25 values; its d2 constant comes from numerical "
            "integration, which the spreadsheet has no function for",
        )
        return None
    values, lot_col = block.ref(VALUE_COLUMN), block.ref(LOT_COLUMN)
    table = ",".join(repr(x) for x in D2_CONSTANTS)
    first = sh.next_row
    for lot in lots:
        if counts[lot] < 2:
            continue  # a lot of one value has no range (the engine leaves it out too)
        crit = _criterion(_as_written(lot))
        k = f"COUNTIFS({lot_col},{crit})"
        sh.qty(
            f"lot {lot}: range / d2(size)",
            f"(_xlfn.MAXIFS({values},{lot_col},{crit})-_xlfn.MINIFS({values},{lot_col},{crit}))"
            f"/CHOOSE({k}-1,{table})",
            None,
            "(MAXIFS - MINIFS) / d2(COUNTIFS), d2 from the tabled constants",
        )
    if sh.next_row == first:
        sh.unavailable("within sigma from lot ranges", "no lot holds 2 or more values")
        return None
    scaled = f"$B${first}:$B${sh.next_row - 1}"
    # Burr's weights d2(n)^2 / d3(n)^2, the reciprocal variances of the scaled ranges
    d3_table = ",".join(repr(x) for x in D3_CONSTANTS)
    first = sh.next_row
    for lot in lots:
        if counts[lot] < 2:
            continue
        k = f"COUNTIFS({lot_col},{_criterion(_as_written(lot))})"
        sh.qty(
            f"lot {lot}: weight d2^2 / d3^2",
            f"CHOOSE({k}-1,{table})^2/CHOOSE({k}-1,{d3_table})^2",
            None,
            "d2(size)^2 / d3(size)^2 from the tabled constants (Burr's weights)",
        )
    return scaled, f"$B${first}:$B${sh.next_row - 1}"


def _capability(sh: _Sheet, ev, layout, c: CharacteristicResult, ch: CheckResult) -> None:
    extra: Mapping = ch.details_mapping()
    block = _used_block(sh, ev, layout, c.name, "new")
    if block is None:
        sh.unavailable("capability", _why_no_block(layout, c.name, "new"))
        return
    ref = block.ref(VALUE_COLUMN)
    lsl = None if c.spec.lower is None else sh.param("lower limit", c.spec.lower, "the spec's")
    usl = None if c.spec.upper is None else sh.param("upper limit", c.spec.upper, "the spec's")
    if lsl is None and usl is None:
        sh.unavailable("capability", "the spec gives no limits")
        return
    n = sh.qty("new: n (parts)", f"COUNT({ref})", extra.get("n"), "COUNT of the new parts")
    m = sh.qty("new: mean (parts)", f"AVERAGE({ref})", extra.get("mean"), "AVERAGE")
    so = sh.qty("overall sigma", f"_xlfn.STDEV.S({ref})", extra.get("sigma_overall"), "STDEV.S")
    how = str(extra.get("sigma_method", ""))
    by_lot = c.spec.checks.capability is not None and c.spec.checks.capability.subgroup == "lot"
    if by_lot or ("subgroup" in how and "moving" not in how):
        found = _subgroup_sigma(sh, layout, c.name, block)
        if found is None:
            return
        ranges, weights = found
        sw = sh.qty(
            "within sigma",
            f"SUMPRODUCT({weights},{ranges})/SUM({weights})",
            extra.get("sigma_within"),
            "range / d2(size) over the lots, weighted d2^2 / d3^2 (the mean for equal sizes)",
        )
    else:
        mr = _moving_range(sh, ev, layout, c.name, block, n)
        if mr is None:
            return
        sw = sh.qty(
            "within sigma",
            f"{mr}/1.128",
            extra.get("sigma_within"),
            "average moving range / d2(2) = 1.128",
        )
    idx = {}
    for key, sigma, label in (("c", sw, "within"), ("p", so, "overall")):
        lo = hi = None
        if lsl is not None:
            lo = sh.qty(
                f"{key.upper()}pl ({label} sigma)",
                f"({m}-{lsl})/(3*{sigma})",
                extra.get(f"{key}pl"),
                "(mean - lower) / (3 sigma)",
            )
        if usl is not None:
            hi = sh.qty(
                f"{key.upper()}pu ({label} sigma)",
                f"({usl}-{m})/(3*{sigma})",
                extra.get(f"{key}pu"),
                "(upper - mean) / (3 sigma)",
            )
        if lsl is not None and usl is not None:
            sh.qty(
                f"{key.upper()}p ({label} sigma)",
                f"({usl}-{lsl})/(6*{sigma})",
                extra.get(f"{key}p"),
                "(upper - lower) / (6 sigma)",
            )
        both = [x for x in (lo, hi) if x is not None]
        engine = extra.get("cpk", ch.estimate) if key == "c" else extra.get("ppk")
        idx[key] = sh.qty(
            f"{key.upper()}pk ({label} sigma)",
            f"MIN({','.join(both)})",
            engine,
            "the smaller one-sided index",
        )
    if lsl is not None and usl is not None and c.spec.target is not None:
        tgt = sh.param("target", c.spec.target, "the spec's target")
        sh.qty(
            "Cpm",
            f"({usl}-{lsl})/(6*SQRT({sw}^2+({m}-{tgt})^2))",
            extra.get("cpm"),
            "(upper - lower) / (6 SQRT(sigma_within^2 + (mean - target)^2))",
        )
    # the bounds: Bissell's form on the df of the sigma behind the index (n - 1 for Ppk; the
    # effective df of the range-based within sigma for Cpk)
    if "moving" in how:
        nu = sh.qty(
            "effective df of the moving-range sigma",
            f"(4/PI())/(2*((({n}-1)*(2-4/PI())+2*MAX({n}-2,0)*(4/PI()*(SQRT(3)/2+PI()/12-1)))"
            f"/({n}-1)^2))",
            extra.get("bound_df") if extra.get("index", "cpk") == "cpk" else None,
            "E(MRbar)^2 / (2 Var(MRbar)), neighbouring moving ranges correlated",
        )
    elif extra.get("index", "cpk") == "cpk" and _number(extra.get("bound_df")) is not None:
        nu = sh.param("effective df of the subgroup-range sigma", extra["bound_df"],
                      "the engine's sum d2^2 / (2 d3^2) over the lots (Burr's weights)")
    else:
        nu = None
    cpk = idx["c"]
    if nu is not None:
        sh.qty(
            "Cpk lower 95% bound",
            f"{cpk}-_xlfn.NORM.S.INV(0.95)*SQRT(1/(9*{n})+{cpk}^2/(2*{nu}))",
            extra.get("cpk_lower_95", ch.ci_low),
            "Cpk - NORM.S.INV(0.95) SQRT(1/(9n) + Cpk^2/(2 nu)), nu the effective df",
        )
    if extra.get("index") == "ppk" and _number(extra.get("confidence")) is not None:
        conf = sh.param("confidence of the lower bound", extra["confidence"], "the spec's")
        ppk = idx["p"]
        sh.qty(
            "Ppk lower bound (Bissell)",
            f"{ppk}-_xlfn.NORM.S.INV({conf})*SQRT(1/(9*{n})+{ppk}^2/(2*({n}-1)))",
            extra.get("lower_bound"),
            "Ppk - NORM.S.INV(confidence) SQRT(1/(9n) + Ppk^2/(2(n-1)))",
        )
    elif nu is not None and _number(extra.get("confidence")) not in (None, 0.95):
        conf = sh.param("confidence of the lower bound", extra["confidence"], "the spec's")
        sh.qty(
            "Cpk lower bound at the spec's confidence",
            f"{cpk}-_xlfn.NORM.S.INV({conf})*SQRT(1/(9*{n})+{cpk}^2/(2*{nu}))",
            extra.get("lower_bound"),
            "Cpk - NORM.S.INV(confidence) SQRT(1/(9n) + Cpk^2/(2 nu))",
        )


# --- multiplicity ----------------------------------------------------------------------------


def _multiplicity(sh: _Sheet, ev: Evaluation) -> None:
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


# --- conformance -----------------------------------------------------------------------------


def _conformance(sh: _Sheet, ev, layout, c: CharacteristicResult, ch: CheckResult) -> None:
    """Tolerance limits mean -/+ k sd rebuilt from the new parts; the factor k is given as a
    value with its method (no spreadsheet function computes the noncentral t quantile or the
    Odeh/Owen integral)."""
    extra: Mapping = ch.details_mapping()
    block = _used_block(sh, ev, layout, c.name, "new")  # sort-proof when the table allows
    if block is None:
        sh.unavailable("conformance", _why_no_block(layout, c.name, "new"))
        return
    dist = extra.get("distribution", "normal")
    if dist == "weibull" or (dist != "normal" and extra.get("k") is None and dist != "any"):
        sh.unavailable("tolerance limits", "Weibull limits come from pivots taken from a "
                       "seeded simulation, which the spreadsheet cannot redo")
        return
    if extra.get("k") is None:
        sh.unavailable("tolerance factor", "distribution-free limits: the smallest and the "
                       "largest used value are the limits (MIN and MAX below)")
        ref = block.ref(VALUE_COLUMN)
        if ch.ci_low is not None:
            sh.qty("lower tolerance limit", f"MIN({ref})", ch.ci_low, "MIN of the new parts")
        if ch.ci_high is not None:
            sh.qty("upper tolerance limit", f"MAX({ref})", ch.ci_high, "MAX of the new parts")
        return
    ref = block.ref(VALUE_COLUMN)
    sh.qty("new: n (parts)", f"COUNT({ref})", extra.get("n"), "COUNT of the new parts")
    back = "{}"
    if dist == "normal":
        m = sh.qty("new: mean (parts)", f"AVERAGE({ref})", extra.get("mean"), "AVERAGE")
        sd = sh.qty("new: sd (parts)", f"_xlfn.STDEV.S({ref})", extra.get("sd_parts"),
                    "STDEV.S")
    else:
        # LN or a power of a whole range inside SUMPRODUCT is not evaluated as an array by
        # every spreadsheet (gnumeric gives #VALUE!): the lognormal mean is rebuilt as
        # LN(GEOMEAN), the transformed sd is given as the engine's value
        if dist == "lognormal":
            back = "EXP({})"
            m = sh.qty("new: mean of ln x", f"LN(GEOMEAN({ref}))", extra.get("mean"),
                       "LN(GEOMEAN(x)) = mean of ln x")
        else:
            lam_value = _fit_lambda(extra)
            if lam_value is None:
                sh.unavailable("tolerance limits", "the Box-Cox lambda is not recorded")
                return
            lam = sh.param("Box-Cox lambda", lam_value, "as estimated by the engine")
            back = f"({lam}*{{}}+1)^(1/{lam})"
            m = sh.param("new: mean of the transformed values", float(extra["mean"]),
                         "the engine's value, (x^lambda - 1) / lambda averaged")
        sd = sh.param("new: sd of the transformed values", float(extra["sd_parts"]),
                      "the engine's value (n - 1 divisor)")
    k = sh.param("tolerance factor k", float(extra["k"]),
                 f"{ch.method}; coverage {extra.get('coverage')}, confidence "
                 f"{extra.get('coverage_confidence')}, n as above (a value: the spreadsheet has no "
                 "function for it)")
    checks = []
    if ch.ci_low is not None:
        lo = sh.qty("lower tolerance limit", back.format(f"({m}-{k}*{sd})"), ch.ci_low,
                    "mean - k sd" + ("" if dist == "normal" else ", transformed back"))
        if c.spec.lower is not None:
            lsl = sh.param("lower limit", c.spec.lower, "the spec's")
            checks.append(f"{lo}>={lsl}")
    if ch.ci_high is not None:
        hi = sh.qty("upper tolerance limit", back.format(f"({m}+{k}*{sd})"), ch.ci_high,
                    "mean + k sd" + ("" if dist == "normal" else ", transformed back"))
        if c.spec.upper is not None:
            usl = sh.param("upper limit", c.spec.upper, "the spec's")
            checks.append(f"{hi}<={usl}")
    if checks:
        sh.qty("within the limits (1 = yes)", f"IF(AND({','.join(checks)}),1,0)",
               extra.get("within_limits"), "AND of the comparisons with the limits")


def _fit_lambda(extra: Mapping) -> float | None:
    lam = extra.get("box_cox_lambda")
    return None if lam is None else float(lam)


def _percentile_capability(sh: _Sheet, c: CharacteristicResult, ch: CheckResult) -> None:
    """Percentile indices rebuilt from the fitted quantiles (given as values: they come from
    the maximum-likelihood fit, which the spreadsheet does not redo)."""
    extra: Mapping = ch.details_mapping()
    xl = sh.param("fitted 0.135% quantile", extra["x_0_135"], str(extra.get("fit", "")))
    xm = sh.param("fitted median", extra["x_50"], "the same fit")
    xh = sh.param("fitted 99.865% quantile", extra["x_99_865"], "the same fit")
    both = []
    if c.spec.lower is not None:
        lsl = sh.param("lower limit", c.spec.lower, "the spec's")
        both.append(sh.qty("Ppl (percentile)", f"({xm}-{lsl})/({xm}-{xl})", extra.get("ppl"),
                           "(median - lower) / (median - X0.135%)"))
    if c.spec.upper is not None:
        usl = sh.param("upper limit", c.spec.upper, "the spec's")
        both.append(sh.qty("Ppu (percentile)", f"({usl}-{xm})/({xh}-{xm})", extra.get("ppu"),
                           "(upper - median) / (X99.865% - median)"))
    sh.qty("Ppk (percentile)", f"MIN({','.join(both)})", extra.get("ppk"),
           "the smaller one-sided index")


# --- the sheet ---------------------------------------------------------------------------------


def _characteristic(
    sh: _Sheet, ev: Evaluation, layout: MeasurementLayout, c: CharacteristicResult
) -> None:
    sh.heading(f"Characteristic: {c.name}" + (f" ({c.unit})" if c.unit else ""))
    if c.spec.pass_fail:
        from .pass_fail_recheck import recheck_pass_fail  # the pass-fail kind's own rows

        recheck_pass_fail(sh, ev, layout, c)
        sh.blank()
        return
    if ev.spec.unit_of_analysis == "lot":
        sh.note("unit of analysis: lot; the tests run on the lot means computed below")
    samples: dict[str, _Sample] = {}
    for process in ("old", "new"):
        summary = c.processes.get(process)
        if summary is None:
            continue
        s = _sample(sh, ev, layout, c, process, summary)
        if s is not None:
            samples[process] = s
    for ch in c.checks:
        if ch.check not in ("target", "shift", "spread", "capability", "conformance"):
            continue
        sh.heading(f"{ch.check} check: {ch.method}")
        sh.current = (c.name, ch.check)
        if ch.estimate is None and ch.p_value is None and ch.statistic is None:
            sh.note(f"the engine computed no numbers for this check: {ch.reason}")
            continue
        if ch.check == "target":
            _target(sh, c, ch, samples)
        elif ch.check == "shift":
            _shift(sh, ev, layout, c, ch, samples)
        elif ch.check == "spread":
            _spread(sh, ev, layout, c, ch, samples)
        elif ch.check == "conformance":
            _conformance(sh, ev, layout, c, ch)
        elif (ch.details_mapping()).get("distribution", "normal") != "normal":
            _percentile_capability(sh, c, ch)
        else:
            _capability(sh, ev, layout, c, ch)
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
    sh = _Sheet(FIRST_BODY_ROW)
    sh.table = _sort_proof_table(layout)
    if sh.table is None and len(layout.table):
        sh.note(f"These formulas read fixed row ranges of the measurements sheet (more than "
                f"{SORT_PROOF_MAX_ROWS:,} measurements, or names a lookup cannot match "
                "exactly): sort or filter a copy of the workbook, not this one")
    for c in evaluation.characteristics:
        _characteristic(sh, evaluation, layout, c)
    _multiplicity(sh, evaluation)
    body = sh.rows
    if sh.helpers:
        base = FIRST_BODY_ROW + len(body) + 3  # a blank row, the heading, the column names
        body = body + [
            [],
            [_text(f"{HELPER_HEADING} by characteristic, process and production order (or "
                   "pair key): the formulas above read these rows, so sorting or filtering the "
                   "measurements table changes none of the results (grouped: expand to see)")],
            ["Looked-up value", "Value", None, None, None, None, "Lot"],
        ] + sh.helpers

        def number(m: re.Match) -> str:
            return str(base + int(m.group(1)))

        body = [[_TOKEN.sub(number, v) if isinstance(v, str) else v for v in row]
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
