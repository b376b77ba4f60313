"""Within-process variation blocks of the recheck sheet: moving ranges in production order,
subgroup (lot) ranges with the tabled d2 / d3 constants, and lot variance components.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..model import CharacteristicResult, Evaluation
from .formulas import (
    abs_diff,
    as_written,
    criteria_safe,
    criterion,
    lot_names_problem,
    string_literal,
)
from .layout import (
    LOT_COLUMN,
    VALUE_COLUMN,
    Block,
    MeasurementLayout,
    used_positions,
)
from .recheck_blocks import block_rows, lots_of, why_no_block
from .recheck_lookup import Helper, used_flags
from .recheck_sheet import MAX_HELPER_ROWS, Sheet

D2_CONSTANTS = (  # d2(n) for n = 2..25, the same tabled constants the engine uses (common practice)
    1.128, 1.693, 2.059, 2.326, 2.534, 2.704, 2.847, 2.970, 3.078, 3.173, 3.258, 3.336,
    3.407, 3.472, 3.532, 3.588, 3.640, 3.689, 3.735, 3.778, 3.819, 3.858, 3.895, 3.931,
)  # fmt: skip
D3_CONSTANTS = (  # d3(n) for n = 2..25, the engine's tabled constants (Burr's weights)
    0.853, 0.888, 0.880, 0.864, 0.848, 0.833, 0.820, 0.808, 0.797, 0.787, 0.778, 0.770,
    0.763, 0.756, 0.750, 0.744, 0.739, 0.733, 0.729, 0.724, 0.720, 0.716, 0.712, 0.708,
)  # fmt: skip


def lot_components(sh: Sheet, layout, c: CharacteristicResult, process: str
                    ) -> tuple[str, str] | None:
    """Within- and between-lot variance components of one process from per-lot helper rows;
    returns the cells of the within-lot df and the pooled within-lot variance."""
    block = sh.samples.get((c.name, process)) if sh.table is not None else layout.used.get(
        (c.name, process))
    if block is None:
        sh.unavailable(f"{process}: lot components", why_no_block(layout, c.name, process))
        return None
    lots = lots_of(block_rows(layout, c.name, process))
    problem = lot_names_problem(lots)
    if problem is None and 3 * len(lots) > MAX_HELPER_ROWS:
        problem = f"{len(lots)} lots need more than the {MAX_HELPER_ROWS} helper rows allowed"
    if problem is not None:
        sh.unavailable(f"{process}: lot components", problem)
        return None
    values, lot_col = block.ref(VALUE_COLUMN), block.ref(LOT_COLUMN)
    lits = [string_literal(as_written(x)) for x in lots]
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


_ARRAYS: dict = {}


def _arrays(t: pd.DataFrame, *names: str) -> dict:
    """Columns of a table as arrays, made once per table: ``source_row``, ``order``, ``row``
    as they are, ``source_file`` as text, ``sheet`` as numpy text (its sort key)."""
    hit = _ARRAYS.get(id(t))
    if hit is None or hit[0] is not t:
        if len(_ARRAYS) >= 8:
            _ARRAYS.clear()
        hit = _ARRAYS[id(t)] = (t, {})
    cols = hit[1]
    for name in names:
        if name not in cols:
            if name == "source_file":
                cols[name] = t[name].astype(str).to_numpy()
            elif name == "sheet":
                cols[name] = t[name].to_numpy(dtype=str)
            else:
                cols[name] = t[name].to_numpy()
    return cols


def _production_order(layout: MeasurementLayout, ev: Evaluation, name: str, process: str):
    """The used rows in the engine's production order and the same rows in sheet order, as
    positions into the evaluation's table and the layout's table."""
    t = ev.measurements.table
    pos = used_positions(t, used_flags(t, "excluded")).get((name, process))
    if pos is None:
        pos = np.zeros(0, dtype=np.intp)
    lt = layout.table
    lpos = used_positions(lt, used_flags(lt, "used")).get((name, process))
    if lpos is None:
        lpos = np.zeros(0, dtype=np.intp)
    # stable sorts of the few rows by numpy keys (np.lexsort sorts by its last key first and
    # is stable): a pandas sort per characteristic costs more than the rows
    a = _arrays(t, "source_row", "order", "source_file")
    b = _arrays(lt, "row", "sheet", "source_row", "source_file")
    by_order = pos[np.lexsort((a["source_row"][pos], a["order"][pos]))]
    by_row = lpos[np.lexsort((b["row"][lpos], b["sheet"][lpos]))]
    return by_order, by_row


def _same_rows(ev: Evaluation, layout: MeasurementLayout, sel, lt) -> bool:
    """Whether the rows at positions ``sel`` (evaluation's table) and ``lt`` (layout's table)
    are the same source rows in the same order."""
    a = _arrays(ev.measurements.table, "source_row", "source_file")
    b = _arrays(layout.table, "source_row", "source_file")
    return len(sel) == len(lt) and bool(
        np.array_equal(a["source_row"][sel], b["source_row"][lt])
        and np.array_equal(a["source_file"][sel], b["source_file"][lt])
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


def moving_range(sh: Sheet, ev, layout, name: str, block: Block, n: str) -> str | None:
    """The cell holding the average moving range of the new values in production order."""
    if block.count < 2:
        sh.unavailable("average moving range", "fewer than 2 values")
        return None
    if isinstance(block, Helper):  # the helper rows are in production order
        return sh.qty(
            "average moving range",
            "SUMPRODUCT("
            + abs_diff(block.ref(VALUE_COLUMN, 1, 0), block.ref(VALUE_COLUMN, 0, -1))
            + f")/({n}-1)",
            None,
            "SUMPRODUCT(ABS(x[i+1] - x[i])) / (n - 1), the values looked up in production order",
        )
    sel_pos, lt_pos = _production_order(layout, ev, name, "new")
    if _same_rows(ev, layout, sel_pos, lt_pos):  # the block lists the values in production order
        a = Block(block.sheet, block.first + 1, block.last).ref(VALUE_COLUMN)
        b = Block(block.sheet, block.first, block.last - 1).ref(VALUE_COLUMN)
        return sh.qty(
            "average moving range",
            f"SUMPRODUCT({abs_diff(a, b)})/({n}-1)",
            None,
            "SUMPRODUCT(ABS(x[i+1] - x[i])) / (n - 1), rows in production order",
        )
    sel, lt = ev.measurements.table.iloc[sel_pos], layout.table.iloc[lt_pos]
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


def subgroup_sigma(sh: Sheet, layout, name: str, block: Block) -> tuple[str, str] | None:
    """Rows of range / d2(size) per lot and of Burr's weight per lot; their two ranges."""
    rows = block_rows(layout, name, "new")
    lots = lots_of(rows)
    problem = lot_names_problem(lots)
    if problem is not None:
        sh.unavailable("within sigma from lot ranges", problem)
        return None
    if not criteria_safe([as_written(x) for x in lots]):
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
        crit = criterion(as_written(lot))
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
        k = f"COUNTIFS({lot_col},{criterion(as_written(lot))})"
        sh.qty(
            f"lot {lot}: weight d2^2 / d3^2",
            f"CHOOSE({k}-1,{table})^2/CHOOSE({k}-1,{d3_table})^2",
            None,
            "d2(size)^2 / d3(size)^2 from the tabled constants (Burr's weights)",
        )
    return scaled, f"$B${first}:$B${sh.next_row - 1}"
