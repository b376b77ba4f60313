"""Shared blocks of the recheck sheet: a process's sample, its lot means, the matched pairs.

Several kinds of check read the same numbers (the location tests and the F-test both start from
each process's n, mean and sd; the paired t-test and Pitman-Morgan from the matched pairs), so
these rows are written once per characteristic and their cells handed on: :func:`prepare_samples`
is the ``prepare`` hook of the measured kinds (the samples of both processes, before any check),
:func:`pairs` writes the paired differences once and returns the same cells afterwards.
"""

from __future__ import annotations

from dataclasses import dataclass

import pandas as pd

from ..model import CharacteristicResult, Evaluation, ProcessSummary
from .formulas import (
    as_written,
    criteria_safe,
    criterion,
    lot_names_problem,
    string_literal,
)
from .layout import LOT_COLUMN, VALUE_COLUMN, Block, MeasurementLayout, used_rows
from .recheck_lookup import Helper, lookup, lot_cell, used_block, used_flags
from .recheck_sheet import MAX_HELPER_ROWS, Sheet, Subject, as_text

SAMPLES = "samples"  # key of Subject.prepared: the samples of the processes, by process


@dataclass(frozen=True)
class Sample:
    """Where one process's analysis units sit, and the cells holding their n, mean and sd."""

    process: str
    ref: str
    n: str
    mean: str
    sd: str


@dataclass(frozen=True)
class Pairs:
    old: str
    new: str
    n: str
    mean: str
    sd: str


def block_rows(layout: MeasurementLayout, name: str, process: str) -> pd.DataFrame:
    return used_rows(layout.table, used_flags(layout.table, "used"), name, process)


def why_no_block(layout: MeasurementLayout, name: str, process: str) -> str:
    rows = block_rows(layout, name, process)
    if rows.empty:
        return f"the {process} process has no used values"
    if rows["sheet"].nunique() > 1:
        return (
            f"the {process} process's used values span more than one measurements sheet, so no "
            "single range holds them"
        )
    return f"the {process} process's used values do not form one contiguous range"


def lots_of(rows: pd.DataFrame) -> list[str]:
    return [str(x) for x in dict.fromkeys(rows["lot"].astype(str))]


def lot_means(
    sh: Sheet, layout: MeasurementLayout, name: str, process: str, block: Block
) -> str | None:
    """Rows of lot means (one per lot); returns the range of their cells, or None."""
    rows = block_rows(layout, name, process)
    lots = lots_of(rows)
    if not lots:
        sh.unavailable(f"{process}: lot means", f"the {process} process has no used values")
        return None
    if len(lots) > MAX_HELPER_ROWS:
        sh.unavailable(
            f"{process}: lot means",
            f"{len(lots)} lots exceed the {MAX_HELPER_ROWS} helper rows this sheet allows",
        )
        return None
    problem = lot_names_problem(lots)
    if problem is not None:
        sh.unavailable(f"{process}: lot means", problem)
        return None
    lots = [as_written(x) for x in lots]
    values, lot_col = block.ref(VALUE_COLUMN), block.ref(LOT_COLUMN)
    safe = criteria_safe(lots)
    how = (
        "AVERAGEIFS over the used values of this lot (exact-match criterion)"
        if safe
        else "SUMPRODUCT(EXACT(lot, name) * value) / SUMPRODUCT(EXACT(lot, name) * 1): lot "
        "names that criteria functions would confuse (case, numbers)"
    )
    first = sh.next_row
    for lot in lots:
        if safe:
            f = f"AVERAGEIFS({values},{lot_col},{criterion(lot)})"
        else:
            lit = string_literal(lot)
            f = f"SUMPRODUCT(EXACT({lot_col},{lit})*{values})/SUMPRODUCT(EXACT({lot_col},{lit})*1)"
        sh.qty(f"{process}: mean of lot {lot}", f, None, how)
    return f"$B${first}:$B${sh.next_row - 1}"


def sample(
    sh: Sheet,
    ev: Evaluation,
    layout: MeasurementLayout,
    c: CharacteristicResult,
    process: str,
    summary: ProcessSummary,
) -> Sample | None:
    block = used_block(sh, ev, layout, c.name, process)
    by_lot = ev.spec.unit_of_analysis == "lot"
    unit = "lot means" if by_lot else "values"
    if block is None:
        sh.unavailable(f"{process}: n, mean and sd", why_no_block(layout, c.name, process))
        return None
    if by_lot:
        ref = lot_means(sh, layout, c.name, process, block)
        if ref is None:
            return None
        where = f"the {process} lot means above"
    else:
        ref = block.ref(VALUE_COLUMN)
        where = (f"the {process} values looked up below" if isinstance(block, Helper) else
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
    return Sample(process, ref, n, mean, sd)


def pairs(
    sh: Sheet, ev: Evaluation, layout: MeasurementLayout, c: CharacteristicResult, engine_sd
) -> Pairs | None:
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
    sh: Sheet, ev: Evaluation, layout: MeasurementLayout, c: CharacteristicResult, engine_sd
) -> Pairs | None:
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
    return _differences(sh, c, o, n_, f"COUNT of the matched new values ({where})", engine_sd)


def _pair_helpers(sh: Sheet, ev: Evaluation, c: CharacteristicResult, engine_sd
                  ) -> Pairs | None:
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
    by_key = criteria_safe(keys) and not any(k.startswith("=") for k in keys)
    tbl = sh.table
    refs = {}
    for p in ("old", "new"):
        first = len(sh.helpers)
        for k in keys:
            r = sides[p].loc[k]
            if by_key:
                f = (f"SUMIFS({tbl.col('value')},{tbl.criteria(c.name, p)},{tbl.col('pair')},"
                     f"{criterion(as_written(k))})")
            else:
                f = lookup(tbl, c.name, p, r)
            sh.helpers.append([as_text(f"{c.name}, {p}, pair key {k}"), "=" + f, None, None, None,
                               None, lot_cell(str(r["lot"]))])
        refs[p] = Helper(first, len(sh.helpers) - 1).ref(VALUE_COLUMN)
    o, n_ = refs["old"], refs["new"]
    how = "looked up by pair key" if by_key else "looked up by production order"
    return _differences(
        sh, c, o, n_,
        f"COUNT of the matched new values ({how}, old and new aligned by key below)", engine_sd)


def _differences(sh: Sheet, c: CharacteristicResult, o: str, n_: str, how_n: str, engine_sd
                 ) -> Pairs:
    """The n, mean and sd of the paired differences from two aligned ranges (old, new)."""
    n = sh.qty("pairs: n", f"COUNT({n_})", c.pairs, how_n)
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
    return Pairs(o, n_, n, mean, sd)


def matched_sample(sh: Sheet, pr: Pairs, process: str) -> Sample:
    ref = pr.old if process == "old" else pr.new
    mean = sh.qty(f"matched {process}: mean", f"AVERAGE({ref})", None, "AVERAGE")
    sd = sh.qty(
        f"matched {process}: standard deviation",
        f"_xlfn.STDEV.S({ref})",
        None,
        "STDEV.S of the matched values",
    )
    return Sample(process, ref, pr.n, mean, sd)


def prepare_samples(sh: Sheet, on: Subject) -> None:
    """The n, mean and sd of each process's analysis units (parts, or lot means with
    ``unit_of_analysis: lot``), written once per measured characteristic before its checks;
    :func:`samples_of` hands their cells to the checks."""
    ev, c = on.evaluation, on.result
    if ev.spec.unit_of_analysis == "lot":
        sh.note("unit of analysis: lot; the tests run on the lot means computed below")
    samples: dict[str, Sample] = {}
    for process in ("old", "new"):
        summary = c.processes.get(process)
        if summary is None:
            continue
        s = sample(sh, ev, on.layout, c, process, summary)
        if s is not None:
            samples[process] = s
    on.prepared[SAMPLES] = samples


def samples_of(on: Subject) -> dict[str, Sample]:
    """The samples :func:`prepare_samples` wrote for this characteristic, by process."""
    return on.prepared.get(SAMPLES, {})
