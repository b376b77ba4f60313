"""Unit tests of the recheck sheet's rows (no spreadsheet engine needed).

The formulas are evaluated by LibreOffice in ``test_recheck_libreoffice.py``; here we check their
shape: that they reference the measurements sheet's blocks of used values, that the "Engine"
column holds the Evaluation's own numbers, that the agreement cells are wired to the right
cells, that fractional df never reach the integer-truncating T.* functions, and that missing
blocks are declared, not faked.
"""

from __future__ import annotations

import math
import re
import textwrap
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tests.factory import make_evaluation
from verify.report import formulas, recheck_within
from verify.report.layout import LOT_COLUMN, VALUE_COLUMN, measurement_layout
from verify.report.recheck import (
    COLUMNS,
    FIRST_BODY_ROW,
    HEADER_ROW,
    SUMMARY_ROW,
    TOLERANCE,
    recheck_rows,
)

DESIGNS = ("welch", "pooled", "paired", "one-sample", "lot", "all")


def write_edge_specs(folder: Path) -> None:
    """edge.csv and two specs for paths the demos may not reach (used by the LibreOffice test)."""
    rng = np.random.default_rng(20240611)
    lines = ["lot,process,key,when,gap,width"]
    # pair keys deliberately out of production order (the sheet lists pairs by key)
    keys = [f"K{k:02d}" for k in rng.permutation(24)]
    lots_old = ["Lot*A", "lot?b", "LT~3"]
    lots_new = ["N-1", "n-1x", '"N2"']
    when = 0
    for i, key in enumerate(keys):
        gap_old = 5.0 + rng.normal(0, 0.05)
        lines.append(f"{lots_old[i % 3]},old,{key},{when},{gap_old:.4f},"
                     f"{10 + rng.normal(0, 0.2):.3f}")
        when += 1
        gap_new = gap_old + 0.01 + rng.normal(0, 0.03)
        # unequal new lot sizes (6, 6, 12): the lot-range sigma pools them with weights
        lines.append(f"{lots_new[(0, 1, 2, 2)[i % 4]]},new,{key},{when},{gap_new:.4f},"
                     f"{10.05 + rng.normal(0, 0.35):.3f}")
        when += 1
    (folder / "edge.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    (folder / "edge-paired.yaml").write_text(textwrap.dedent("""\
        format: verify/1
        title: Edge cases, paired rows out of key order
        data: {file: edge.csv, lot: lot, process: process, old: old, new: new, pair: key,
               order: when}
        characteristics:
          - name: gap
            unit: mm
            target: 5.0
            limits: [4.8, 5.2]
            side: lower
            checks:
              target: {margin: 0.05}
              shift: {margin: [-0.03, 0.05]}
              spread:
              capability:
          - name: width
            unit: mm
            target: 10
            limits: [9, 11]
            checks:
              shift: {design: welch}
              spread: {method: brown-forsythe, design: independent}
              capability: {subgroup: lot}
        """), encoding="utf-8")
    (folder / "edge-lots.yaml").write_text(textwrap.dedent("""\
        format: verify/1
        title: Edge cases, lot means with awkward lot names
        unit_of_analysis: lot
        multiplicity: holm
        data: {file: edge.csv, lot: lot, process: process, old: old, new: new}
        characteristics:
          - name: width
            unit: mm
            target: 10
            limits: [9, 11]
            side: upper
            checks:
              target:
              shift: {design: pooled}
              spread:
              capability: {index: ppk, min: 0.5, judge: lower_bound, confidence: 0.9}
        """), encoding="utf-8")


def evaluate_spec(spec_path: Path):
    """The real engine on a spec file."""
    from verify.data import load_measurements
    from verify.evaluate import evaluate
    from verify.spec import load_spec

    spec = load_spec(spec_path)
    return evaluate(spec, load_measurements(spec))


@pytest.fixture
def fixed_ranges(monkeypatch):
    """The formulas of a workbook too large for lookups: fixed ranges of the measurements
    sheet (issue 13 made lookups by key the rule; this path remains for large tables)."""
    import verify.report.recheck as recheck

    monkeypatch.setattr(recheck, "SORT_PROOF_MAX_ROWS", 0)


def rows_for(design: str, **kw):
    ev = make_evaluation(design, **kw)
    layout = measurement_layout(ev)
    return ev, layout, recheck_rows(ev, layout)


def cell(row: list, i: int):
    return row[i] if i < len(row) else None


def sections(rows: list[list]) -> dict:
    """{(characteristic, check or ""): [(excel_row, row), ...]} from the headings."""
    out: dict = {}
    char = check = None
    for r, row in enumerate(rows[FIRST_BODY_ROW - 1 :], start=FIRST_BODY_ROW):
        first = cell(row, 0)
        if isinstance(first, str) and first.startswith("Characteristic: "):
            char, check = first[len("Characteristic: ") :].rsplit(" (", 1)[0], ""
            out[(char, check)] = []
            continue
        if isinstance(first, str) and " check: " in first and cell(row, 1) is None:
            check = first.split(" check: ")[0]
            out[(char, check)] = []
            continue
        if char is not None and row:
            out[(char, check)].append((r, row))
    return out


def by_label(section) -> dict:
    return {row[0]: (r, row) for r, row in section if row[0] is not None}


def compared_rows(rows):
    return [
        (r, row)
        for r, row in enumerate(rows, start=1)
        if isinstance(cell(row, 4), str) and cell(row, 4).startswith("=ABS(")
    ]


# --- the header -------------------------------------------------------------------------------


def test_header_rows_give_columns_tolerance_alpha_and_the_agreement_count():
    ev, _, rows = rows_for("welch", alpha=0.04)
    assert rows[HEADER_ROW - 1] == list(COLUMNS)
    assert rows[2][:2] == ["Tolerance (relative)", TOLERANCE]
    assert rows[3][:2] == ["alpha", 0.04]
    summary = rows[SUMMARY_ROW - 1]
    n = len(compared_rows(rows))
    assert n > 0
    assert summary[1] == f"=COUNTIF(E{FIRST_BODY_ROW}:E{len(rows)},TRUE)"
    assert summary[2] == n
    assert summary[4] == f"=B{SUMMARY_ROW}=C{SUMMARY_ROW}"


@pytest.mark.parametrize("design", DESIGNS)
def test_agreement_cells_compare_their_own_row_against_the_tolerance_cell(design):
    _, _, rows = rows_for(design)
    got = compared_rows(rows)
    assert got
    for r, row in got:
        assert row[1].startswith("=")
        assert isinstance(row[2], int | float) and math.isfinite(row[2])
        assert row[3] == f"=B{r}-C{r}"
        assert row[4] == f"=ABS(B{r}-C{r})<=$B$3*MAX(1,ABS(C{r}))"


@pytest.mark.parametrize("design", DESIGNS)
def test_formulas_are_well_formed(design):
    _, _, rows = rows_for(design)
    for row in rows:
        for v in row:
            if not (isinstance(v, str) and v.startswith("=")):
                continue
            assert len(v) < 8192  # Excel's formula length limit
            bare = re.sub(r'"(?:[^"]|"")*"', '""', v)  # drop string literals
            bare = re.sub(r"'[^']*'!", "", bare)  # and quoted sheet names
            depth = 0
            for ch in bare:
                depth += (ch == "(") - (ch == ")")
                assert depth >= 0
            assert depth == 0, v
            # functions newer than Excel 2007 need their _xlfn. prefix (NOTES.md)
            for fn in ("STDEV.S", "T.DIST", "T.INV.2T", "T.TEST", "BETA.DIST", "BETA.INV",
                       "F.DIST", "F.INV", "VAR.S", "COVARIANCE.S", "NORM.S.INV", "MAXIFS",
                       "MINIFS"):
                for m in re.finditer(re.escape(fn), bare):
                    assert bare[max(0, m.start() - 6) : m.start()] == "_xlfn.", (fn, v)


# --- samples reference the used blocks; engine values are the Evaluation's ----------------------


@pytest.mark.parametrize("design", ["welch", "pooled", "one-sample", "all"])
def test_sample_rows_reference_the_used_blocks(design, fixed_ranges):
    ev, layout, rows = rows_for(design)
    secs = sections(rows)
    for c in ev.characteristics:
        rows_c = by_label(secs[(c.name, "")])
        for process, summary in c.processes.items():
            block = layout.used[(c.name, process)]
            ref = block.ref(VALUE_COLUMN)
            assert ref.startswith("'Measurements'!$E$")
            _, n_row = rows_c[f"{process}: n (parts)"]
            assert n_row[1:3] == [f"=COUNT({ref})", summary.n]
            _, mean_row = rows_c[f"{process}: mean"]
            assert mean_row[1:3] == [f"=AVERAGE({ref})", summary.mean]
            _, sd_row = rows_c[f"{process}: standard deviation"]
            assert sd_row[1:3] == [f"=_xlfn.STDEV.S({ref})", summary.sd]


@pytest.mark.parametrize("design", ["welch", "pooled", "paired", "one-sample"])
def test_engine_column_holds_the_check_results_numbers(design):
    ev, _, rows = rows_for(design)
    secs = sections(rows)
    c = ev.characteristics[0]
    for ch in c.checks:
        if ch.check not in ("target", "shift", "spread", "capability"):
            continue
        sec = by_label(secs[(c.name, ch.check)])
        engine = {label: row[2] for label, (_, row) in sec.items() if cell(row, 4)}
        if ch.check in ("target", "shift"):
            assert engine["standard error"] == ch.standard_error
            assert engine["critical t (one-sided, alpha)" if ch.margin else
                          next(k for k in engine if k.startswith("critical t"))] == (
                ch.critical_value)
            assert ch.estimate in engine.values()
            assert ch.df in engine.values()
            if ch.margin is not None:
                assert engine["p (TOST)"] == ch.p_value
                assert engine["p, lower one-sided test (H0: effect <= low)"] == ch.details.p_lower
                assert engine["p, upper one-sided test (H0: effect >= high)"] == ch.details.p_upper
                assert engine["interval: low"] == ch.ci_low
                assert engine["interval: high"] == ch.ci_high
            else:
                assert ch.p_value in engine.values()
        elif ch.check == "spread":
            assert engine["sd ratio (new / old)"] == ch.estimate
            assert engine["p (F-test, greater)"] == ch.p_value
        else:
            assert engine["Cpk (within sigma)"] == ch.estimate
            assert engine["within sigma"] == ch.details.sigma_within


def test_margin_rows_hold_the_margin_as_values_and_tost_uses_both_one_sided_tests():
    ev, _, rows = rows_for("welch")
    c = ev.characteristics[0]
    shift = next(ch for ch in c.checks if ch.check == "shift")
    sec = by_label(sections(rows)[(c.name, "shift")])
    (r_low, low), (r_high, high) = sec["margin: low"], sec["margin: high"]
    assert (low[1], high[1]) == shift.margin
    _, t_lo = sec["t, lower one-sided test"]
    assert f"$B${r_low}" in t_lo[1]
    _, t_hi = sec["t, upper one-sided test"]
    assert f"$B${r_high}" in t_hi[1]
    r_pl, _ = sec["p, lower one-sided test (H0: effect <= low)"]
    r_pu, _ = sec["p, upper one-sided test (H0: effect >= high)"]
    assert sec["p (TOST)"][1][1] == f"=MAX($B${r_pl},$B${r_pu})"


# --- the degrees-of-freedom pitfall ---------------------------------------------------------------


def _formulas(section) -> str:
    return " ".join(str(cell(row, 1)) for _, row in section)


@pytest.mark.parametrize("margin", [0.004, None])
def test_welch_p_values_and_quantiles_avoid_the_df_truncating_t_functions(margin):
    # Excel and LibreOffice truncate the df of TDIST, T.DIST*, T.INV.2T to an integer (checked in
    # LibreOffice by test_recheck_libreoffice.py); the fractional Welch df goes through BETA.*
    ev, _, rows = rows_for("welch", margin=margin)
    c = ev.characteristics[0]
    text = _formulas(sections(rows)[(c.name, "shift")])
    assert "_xlfn.BETA.DIST(" in text and "_xlfn.BETA.INV(" in text
    assert "_xlfn.T.DIST" not in text and "_xlfn.T.INV" not in text and "TDIST(" not in text
    if margin is None:  # T.TEST type 3 uses the fractional df: shown as a cross-check
        sec = by_label(sections(rows)[(c.name, "shift")])
        formula = sec["p, cross-check with T.TEST"][1][1]
        assert ",3)" in formula and "_xlfn.T.TEST(" in formula


@pytest.mark.parametrize("design", ["pooled", "paired", "one-sample"])
def test_integer_df_designs_use_the_t_functions(design):
    ev, _, rows = rows_for(design)
    c = ev.characteristics[0]
    check = "target" if design == "one-sample" else "shift"
    text = _formulas(sections(rows)[(c.name, check)])
    # TDIST rather than T.DIST*: gnumeric evaluates it too (tests/test_recheck_gnumeric.py)
    assert "TDIST(" in text and "_xlfn.T.DIST" not in text and "_xlfn.T.INV.2T(" in text
    assert "BETA" not in text


def test_paired_differences_come_from_the_aligned_blocks(fixed_ranges):
    ev, layout, rows = rows_for("paired", margin=None)
    c = ev.characteristics[0]
    old, new = layout.paired[c.name]
    assert old.count == new.count == c.pairs
    sec = by_label(sections(rows)[(c.name, "shift")])
    o, n = old.ref(VALUE_COLUMN), new.ref(VALUE_COLUMN)
    r_n, n_row = sec["pairs: n"]
    assert n_row[1:3] == [f"=COUNT({n})", c.pairs]
    assert sec["pairs: mean difference (new - old)"][1][1] == f"=SUMPRODUCT({n}-{o})/$B${r_n}"
    assert sec["p, cross-check with T.TEST"][1][1] == f"=_xlfn.T.TEST({n},{o},2,1)"


def test_capability_moving_range_runs_over_consecutive_rows_of_the_block(fixed_ranges):
    ev, layout, rows = rows_for("welch")
    c = ev.characteristics[0]
    b = layout.used[(c.name, "new")]
    sec = by_label(sections(rows)[(c.name, "capability")])
    mr = sec["average moving range"][1][1]
    # |x[i+1] - x[i]| written with comparisons (gnumeric applies no ABS over an array)
    later = f"('Measurements'!$E${b.first + 1}:$E${b.last})"
    earlier = f"('Measurements'!$E${b.first}:$E${b.last - 1})"
    assert f"({later}>{earlier})*({later}-{earlier})" in mr
    assert f"({earlier}>{later})*({earlier}-{later})" in mr
    assert sec["within sigma"][1][1].endswith("/1.128")


# --- lots -------------------------------------------------------------------------------------


def test_lot_means_use_averageifs_with_escaped_exact_criteria(fixed_ranges):
    lot_ids = ["HW*7", "HW?8", "HW~9", 'HW"10', "=HW11", ">12", "HW-13", "HW-14"]
    ev, layout, rows = rows_for("lot", lot_ids=lot_ids, n_old=4, n_new=4)
    c = ev.characteristics[0]
    sec = by_label(sections(rows)[(c.name, "")])
    block = layout.used[(c.name, "old")]
    means = {k: row for k, (_, row) in sec.items() if k.startswith("old: mean of lot ")}
    assert len(means) == len(c.processes["old"].lots) == 4
    expected = {"HW*7": '"=HW~*7"', "HW?8": '"=HW~?8"', "HW~9": '"=HW~~9"', 'HW"10': '"=HW""10"'}
    for lot, row in means.items():
        name = lot[len("old: mean of lot ") :]
        crit = expected.get(name, '"=' + name + '"')
        assert row[1] == (
            f"=AVERAGEIFS({block.ref(VALUE_COLUMN)},{block.ref(LOT_COLUMN)},{crit})"
        )
    r_first = min(r for k, (r, _) in sec.items() if k.startswith("old: mean of lot "))
    r_last = max(r for k, (r, _) in sec.items() if k.startswith("old: mean of lot "))
    assert sec["old: n (lots)"][1][1] == f"=COUNT($B${r_first}:$B${r_last})"


def test_lot_names_that_criteria_cannot_tell_apart_use_exact():
    ev, _, rows = rows_for("lot", lot_ids=["L1", "l1", "007", "7"], n_old=4, n_new=4)
    c = ev.characteristics[0]
    sec = by_label(sections(rows)[(c.name, "")])
    means = [row[1] for k, (_, row) in sec.items() if k.startswith("old: mean of lot ")]
    assert len(means) == 4
    assert all(f.startswith("=SUMPRODUCT(EXACT(") and "AVERAGEIFS" not in f for f in means)


@settings(max_examples=80, deadline=None)
@given(st.text(min_size=1, max_size=30).filter(lambda s: "\x00" not in s))
def test_criterion_round_trips_any_lot_name(name):
    crit = formulas.criterion(name)
    assert crit.startswith('"=') and crit.endswith('"')
    inner = crit[2:-1]
    assert re.fullmatch(r'(?:[^"]|"")*', inner)  # quotes come doubled
    unquoted = inner.replace('""', '"')
    # undo the ~ escapes: every wildcard character is preceded by ~
    out, i = [], 0
    while i < len(unquoted):
        ch = unquoted[i]
        if ch == "~":
            assert unquoted[i + 1] in "~*?"
            out.append(unquoted[i + 1])
            i += 2
        else:
            assert ch not in "*?"
            out.append(ch)
            i += 1
    assert "".join(out) == name


# --- text that looks like a formula ---------------------------------------------------------------


def test_no_text_cell_starts_with_an_equals_sign():
    ev, _, rows = rows_for("lot", name="=SUM(A1:A9)", lot_ids=["=1+1", "+A1", "@x", "-2"],
                           n_old=4, n_new=4)
    for row in rows:
        for i, v in enumerate(row):
            if isinstance(v, str) and v.startswith("="):
                assert i in (1, 3, 4), row  # only formula columns
                assert v not in ("=SUM(A1:A9)", "=1+1")
    assert any(
        isinstance(cell(row, 0), str) and "=SUM(A1:A9)" in row[0] for row in rows
    )


# --- what cannot be rechecked is said, not faked ------------------------------------------------


def test_blocks_that_span_sheets_give_not_available_rows():
    ev = make_evaluation("welch")
    layout = measurement_layout(ev, rows_per_sheet=20)  # every block crosses a sheet boundary
    assert layout.used[(ev.characteristics[0].name, "old")] is None
    rows = recheck_rows(ev, layout)
    na = [row for row in rows if isinstance(cell(row, 1), str)
          and row[1].startswith("not available: ")]
    assert na
    assert any("span more than one measurements sheet" in row[1] for row in na)
    for row in na:  # no number and no agreement cell beside a missing recheck
        assert cell(row, 2) is None and cell(row, 4) is None


def test_a_check_without_numbers_gets_a_note_instead_of_formulas():
    import dataclasses

    ev = make_evaluation("pooled")
    c = ev.characteristics[0]
    shift = next(ch for ch in c.checks if ch.check == "shift")
    empty = dataclasses.replace(
        shift, estimate=None, standard_error=None, statistic=None, df=None, p_value=None,
        ci_low=None, ci_high=None, critical_value=None, reason="cannot be computed: no values",
    )
    checks = tuple(empty if ch is shift else ch for ch in c.checks)
    ev = dataclasses.replace(ev, characteristics=(dataclasses.replace(c, checks=checks),))
    rows = recheck_rows(ev, measurement_layout(ev))
    sec = sections(rows)[(c.name, "shift")]
    assert len(sec) == 1
    assert "the engine computed no numbers" in sec[0][1][5]


# --- production order, multiplicity -------------------------------------------------------------


def test_moving_ranges_follow_production_order_when_the_sheet_lists_pairs_by_key(tmp_path,
                                                                               fixed_ranges):
    write_edge_specs(tmp_path)
    ev = evaluate_spec(tmp_path / "edge-paired.yaml")
    layout = measurement_layout(ev)
    rows = recheck_rows(ev, layout)
    c = ev.characteristic("gap")
    sec = sections(rows)[("gap", "capability")]
    ranges = [row[1] for _, row in sec if str(row[0]).startswith("moving range ")]
    t = layout.table
    new = t[(t["characteristic"] == "gap") & (t["process"] == "new") & t["used"]]
    in_order = new.sort_values(["order", "source_row"])["row"].tolist()
    assert in_order != sorted(in_order)  # the sheet's order (by pair key) is not production order
    expected = [
        f"=ABS('Measurements'!$E${b}-'Measurements'!$E${a})"
        for a, b in zip(in_order, in_order[1:], strict=False)
    ]
    assert ranges == expected
    assert c.processes["new"].n == len(in_order)


@pytest.mark.parametrize("method", ["holm", "bonferroni"])
def test_adjusted_p_values_are_recomputed_from_the_p_cells(method):
    ev, _, rows = rows_for("all", multiplicity=method)
    family = [(c.name, ch) for c in ev.characteristics for ch in c.checks
              if ch.p_adjusted is not None]
    assert len(family) >= 2
    sec = by_label(_multiplicity_rows(rows))
    for name, ch in family:
        r_p, _ = sec[f"p: {name}, {ch.check}"]
        _, adj = sec[f"adjusted p: {name}, {ch.check}"]
        assert adj[2] == ch.p_adjusted
        assert f"$B${r_p}" in adj[1]
        if method == "bonferroni":
            assert adj[1].startswith("=MIN(1,") and "*$B$" in adj[1]
        else:  # a small family: one scalar term per step (gnumeric evaluates it too)
            assert adj[1].startswith("=MIN(1,MAX(") and "SUMPRODUCT" not in adj[1]
            assert adj[1].count("<=") == len(family)
    _, m_row = sec["m, the number of tests in the family"]
    assert m_row[2] == len(family)


def _multiplicity_rows(rows):
    start = next(i for i, r in enumerate(rows, start=1)
                 if r and str(r[0]).startswith("Multiplicity: "))
    return [(r, row) for r, row in enumerate(rows[start:], start=start + 1) if row]


def test_lot_names_a_worksheet_cannot_hold_are_declared_not_available():
    ev, _, rows = rows_for("lot", lot_ids=["A\x01", "A", "B", "C"], n_old=4, n_new=4)
    na = [row for row in rows if len(row) > 1 and isinstance(row[1], str)
          and row[1].startswith("not available: ")]
    assert any("characters a worksheet cannot hold" in row[1] for row in na)


def test_d2_constants_are_the_engines():
    # the sheet's CHOOSE table must hold the same tabled d2(n) the engine divides by
    from verify.stats.diagnostics import D2_TABLE

    assert recheck_within.D2_CONSTANTS == tuple(D2_TABLE[n] for n in range(2, 26))


# --- sort-proof lookups (issue 13) ---------------------------------------------------------------


def _helpers(rows: list[list]) -> tuple[int, list[tuple[int, list]]]:
    start = next(i for i, r in enumerate(rows, 1)
                 if r and isinstance(r[0], str) and r[0].startswith("Values looked up"))
    return start, [(i, r) for i, r in enumerate(rows, 1) if i > start + 1 and r]


def test_values_are_looked_up_by_key_in_production_order():
    ev, layout, rows = rows_for("welch")
    c = ev.characteristics[0]
    _, helpers = _helpers(rows)
    t = ev.measurements.table
    used_new = t[(t["characteristic"] == c.name) & (t["process"] == "new") & ~t["excluded"]]
    mine = [(i, r) for i, r in helpers if r[0].startswith(f"{c.name}, new, ")]
    assert len(mine) == len(used_new)
    orders = [int(r[0].split("production order ")[1].split(",")[0]) for _, r in mine]
    # the engine's production order, counted from 1 as the measurements sheet shows it
    assert orders == [o + 1 for o in sorted(used_new["order"].tolist())]
    f = mine[0][1][1]
    # whole table columns and exact criteria: no fixed rows of the measurements sheet
    last = len(layout.table) + 1
    assert f.startswith(f"=SUMIFS('Measurements'!$E$2:$E${last},'Measurements'!$A$2:$A${last},")
    assert '"=new"' in f and f"$F$2:$F${last},TRUE" in f and f"$J$2:$J${last},{orders[0]})" in f
    # the n, mean and sd read the helper rows, not the measurements sheet
    first, last_h = mine[0][0], mine[-1][0]
    secs = sections(rows)
    n_row = by_label(secs[(c.name, "")])["new: n (parts)"][1]
    assert n_row[1] == f"=COUNT($B${first}:$B${last_h})"


def test_pairs_are_matched_by_pair_key():
    ev, _, rows = rows_for("paired", margin=None)
    c = ev.characteristics[0]
    _, helpers = _helpers(rows)
    old = [r for _, r in helpers if r[0].startswith(f"{c.name}, old, pair key ")]
    new = [r for _, r in helpers if r[0].startswith(f"{c.name}, new, pair key ")]
    assert len(old) == len(new) == c.pairs
    assert [r[0].split("pair key ")[1] for r in old] == [r[0].split("pair key ")[1] for r in new]
    assert all("'Measurements'!$D$2:" in r[1] for r in old + new)  # the pair-key column
